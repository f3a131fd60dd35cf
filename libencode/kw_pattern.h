/* kw_pattern.h: every sampling pattern of `kweave pattern` as one library
 * call: Cartesian masks (full, partial Fourier, uniform, variable-density
 * random, Poisson disc, CAIPIRINHA lattice) and trajectories (radial, golden
 * angle and tiny golden angle, stack of stars, spiral and EPI from the
 * planner's gradient design), with the metadata a sidecar records.
 *
 * Object model: kw_pattern_create(&p, &options) validates the options, makes
 * the pattern and keeps it; the accessors return pointers into the object
 * (valid until kw_pattern_destroy(p), which accepts NULL). The object owns
 * every output, so the caller allocates nothing (no size query needed);
 * kw_pattern_info() gives the shapes.
 *
 * Arrays (C order, slowest axis first):
 *  - masks: uint8 0/1. A 2-D matrix (dims = {ny, nx}) gives (ny, nx):
 *    whole readout rows along x, a line every sampled ky. A 3-D matrix
 *    (dims = {nz, ny, nx}) gives the ky-kz plane (nz, ny) (the readout x is
 *    always fully sampled). Index i of an axis of n points is k = i - n/2.
 *    The sampling probability (random kind: the Bernoulli probability; other
 *    kinds: the mask) has shape (1, ny) in 2-D and (nz, ny) in 3-D;
 *  - trajectories: (samples, ndim) float in cycles/FOV, columns (kx, ky) or
 *    (kx, ky, kz), readout after readout; times (samples) float, seconds.
 *
 * Errors: KW_EINVAL / KW_ERANGE / KW_EINFEASIBLE with kw_last_error_param()
 * naming the field of kw_pattern_options at fault ("dims", "accel", "acs",
 * "fraction", "power", "shift", "spokes", "tiny", "readout_oversampling",
 * "dwell_s", "te_s", "fov_m", "gmax", "slew", "raster", "interleaves",
 * "shots", "kind", "ellipse"); failures of the gradient design (spiral, EPI)
 * keep the planner's reason.
 *
 * Thread safety: calls on different objects may run concurrently; an object
 * is read-only after create, so its accessors may be used from any thread.
 */
#ifndef KW_PATTERN_H
#define KW_PATTERN_H

#include <stdint.h>

#include "kw_base.h"
#include "kw_params.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum kw_pattern_kind {
    KW_PATTERN_FULL = 0,          /* every point */
    KW_PATTERN_PARTIAL = 1,       /* partial Fourier along ky (fraction < 1) */
    KW_PATTERN_UNIFORM = 2,       /* every R-th line through k = 0 */
    KW_PATTERN_RANDOM = 3,        /* variable-density random (Lustig 2007) */
    KW_PATTERN_POISSON = 4,       /* variable-density Poisson disc (Bridson 2007) */
    KW_PATTERN_LATTICE = 5,       /* sheared lattice, CAIPIRINHA (Breuer 2006) */
    KW_PATTERN_RADIAL = 6,        /* radial, uniform angles */
    KW_PATTERN_GOLDEN = 7,        /* radial, (tiny) golden angle */
    KW_PATTERN_STACK_OF_STARS = 8,/* radial in kx-ky on every kz partition */
    KW_PATTERN_SPIRAL = 9,        /* interleaved spiral, gradient-limited */
    KW_PATTERN_EPI = 10           /* echo-planar, gradient-limited */
} kw_pattern_kind;

/*! kw_pattern_kind_name(): "full", "partial", ... "epi" (NULL if unknown);
 * kw_pattern_kind_is_mask(): 1 for the Cartesian kinds. */
KW_API const char *kw_pattern_kind_name(kw_pattern_kind k);
KW_API int kw_pattern_kind_is_mask(kw_pattern_kind k);

typedef struct kw_pattern_options {
    size_t struct_size;   /* sizeof, set by kw_pattern_options_init() */
    kw_pattern_kind kind; /* default KW_PATTERN_FULL */
    int ndim;             /* 2 or 3 (default 2) */
    size_t dims[3];       /* matrix, C order: {ny, nx} or {nz, ny, nx} (default
                           * 0: the caller sets it) */
    /* Cartesian masks */
    double accel[3];      /* per axis of dims (C order); the readout (last) axis
                           * must be 1. uniform/lattice: whole numbers; random/
                           * poisson: the target R is the product. 0 on every
                           * axis (default): not given (uniform, random,
                           * poisson and lattice then fail, naming "accel") */
    size_t acs[3];        /* ACS block per axis of dims (0: none; 3-D with
                           * acs[0] = 0 and acs[1] > 0: a square block) */
    double fraction;      /* partial Fourier fraction of ky, (0.5, 1] (1) */
    int ellipse;          /* 3-D: drop ky-kz corners outside the ellipse (0) */
    double power;         /* density exponent d of (1 - r)^d (3) */
    long shift;           /* lattice: ky shift per sampled kz row (1) */
    uint64_t seed;        /* random, poisson (0) */
    /* radial family */
    size_t spokes;        /* per plane (0: Nyquist, ceil(pi N / 2)) */
    int tiny;             /* golden: order m >= 1 (0: 1 for golden, none else) */
    int readout_oversampling; /* F, 1..4 (0 or 1: none) */
    /* times */
    double dwell_s;       /* radial: time per image pixel (0: 1 / (250 Hz N));
                           * spiral/EPI: ADC dwell (0: 4 us) */
    double te_s;          /* time of k = 0 after the excitation (NaN: radial
                           * N/2 x dwell; spiral/EPI times from the readout /
                           * train start) */
    /* spiral / EPI gradient design */
    double fov_m;         /* 0.256 */
    double gmax;          /* T/m, 40e-3 */
    double slew;          /* T/m/s, 150 */
    double raster;        /* s, 10e-6 */
    int interleaves;      /* spiral (0: the fewest whose readout <= max_readout_s) */
    double max_readout_s; /* spiral, 10e-3 */
    int shots;            /* EPI (1) */
} kw_pattern_options;

/*! kw_pattern_options_init(): the defaults of `kweave pattern` (above) and
 * o->struct_size = sizeof *o. */
KW_API void kw_pattern_options_init(kw_pattern_options *o);

/* What the sidecar of a pattern records (NaN / 0 where it does not apply). */
typedef struct kw_pattern_info {
    kw_pattern_kind kind;
    int is_mask;             /* 1: mask(), 0: trajectory() and times() */
    int ndim;                /* of the output array */
    size_t shape[2];         /* mask (rows, cols) or trajectory (samples, ndim) */
    int plane;               /* mask: 1 = ky-kz plane (nz, ny), 0 = ky lines */
    size_t density_shape[2]; /* mask: (1 or nz, ny) */
    double acceleration;     /* mask: points / sampled; radial: pi N/2 / spokes */
    double accel_requested[2]; /* mask: (Ry, Rz) */
    size_t acs_requested[2]; /* mask: (ACS ky, ACS kz) */
    double acs_lines;        /* mask: the ACS block it holds, measured as the analysis
                                measures it: ky lines (2-D), points (3-D); may
                                exceed the request (a lattice line next to it) */
    size_t sampled_points;   /* mask */
    /* trajectories */
    size_t readout_samples, readouts;
    size_t spokes, partitions, nyquist_spokes;
    int oversampling;
    int tiny;                /* golden order (0: uniform angles) */
    double angle_increment_deg;
    double dwell_s;          /* ADC: time between samples */
    double dwell_per_pixel_s, readout_duration_s;
    double te_s;             /* NaN: spiral/EPI without te_s */
    int interleaves, shots, lines_per_shot;
    double spiral_readout_s, gmax_design, slew_design;
    double echo_spacing_s, train_s, center_time_s, epi_fraction;
    double fov_m, gmax, slew, raster;
    const char *times_origin; /* "excitation", "readout start", ... */
} kw_pattern_info;

typedef struct kw_pattern kw_pattern;

/*! kw_pattern_create(): validate `o` (copied with kw_options_take) and make
 * the pattern. Deterministic: the same options give the same bytes on every
 * machine. *p is NULL on failure. */
KW_API kw_status kw_pattern_create(kw_pattern **p, const kw_pattern_options *o);

/*! kw_pattern_info(): the metadata (owned by p). */
KW_API const kw_pattern_info *kw_pattern_info_of(const kw_pattern *p);

/*! kw_pattern_mask(): the mask (info shape), NULL for trajectories;
 * kw_pattern_density(): the sampling probability (info density_shape). */
KW_API const uint8_t *kw_pattern_mask(const kw_pattern *p);
KW_API const float *kw_pattern_density(const kw_pattern *p);

/*! kw_pattern_trajectory() / kw_pattern_times(): (samples, ndim) in
 * cycles/FOV and (samples) in seconds; NULL for masks. */
KW_API const float *kw_pattern_trajectory(const kw_pattern *p);
KW_API const float *kw_pattern_times(const kw_pattern *p);

/*! kw_pattern_info_json(): the sidecar `kweave pattern` writes beside the
 * pattern, as JSON text (kw_alloc'd, free with kw_free(); ends with a
 * newline), without the names of files: for a trajectory the command adds
 * "times" (the times file) before the final "seed" and, for spiral and EPI,
 * also before "times_origin". A mask: kweave_version, kind ("mask"), layout
 * ("cartesian"), pattern_kind, plane, shape, matrix (x first), acceleration,
 * accel_requested, acs_lines, acs_requested, fraction, ellipse,
 * density_power (random, poisson), shift (lattice), seed, sampled_points.
 * A trajectory: kweave_version, kind ("trajectory"), layout
 * ("noncartesian"), pattern_kind, shape, columns, units, then radial:
 * matrix, spokes, partitions, readout_samples, readout_oversampling,
 * readouts, nyquist_spokes, acceleration, angle_increment_deg,
 * tiny_golden_order, dwell_s, dwell_per_pixel_s, readout_duration_s, te_s;
 * spiral/EPI: matrix, fov_m, readout_samples, readouts, the design's
 * figures, dwell_s, gmax_T_per_m, slew_T_per_m_per_s, raster_s, te_s,
 * times_origin; last "seed": null. NaN figures are null. KW_EINVAL on NULL. */
KW_API kw_status kw_pattern_info_json(const kw_pattern *p, char **json);

/*! kw_pattern_destroy(): NULL-safe. */
KW_API void kw_pattern_destroy(kw_pattern *p);

/* ---- the options as named parameters (kw_params.h) ------------------------------
 * kw_pattern_input: the options of `kweave pattern` as `key` and text, read
 * as the command reads them, with its rules and messages; what the command
 * and the Python package's pattern() do. Keys (kw_pattern_input_keys()):
 * kind, matrix ("256x192", "64x64x16"), accel ("4", "2x2"), acs ("24",
 * "24x16"), fraction, ellipse ("1"/"0"), power, shift, spokes, tiny,
 * readout-oversampling, dwell ("4us"), fov ("256mm"), gmax ("40mT/m"), slew
 * ("150T/m/s"), raster ("10us"), interleaves, shots, te ("2ms"), seed.
 *
 * Errors: KW_EINVAL with kw_last_error_param() = the key at fault
 * ("<key>: <reason>", the command's line after "kweave: error: ").
 * kw_pattern_input_set() checks the text's form (kind and matrix names,
 * the lists, numbers, units, seed >= 0); kw_pattern_input_finish() the
 * rules between keys, in the command's order: kind and matrix required,
 * keys the kind does not use, counts of 1 and more (0 is the library's
 * default and is refused when given), dwell > 0, acs blocks in 3-D,
 * fraction required by partial. Then kw_pattern_create() checks the values
 * and names fields of kw_pattern_options: kw_pattern_input_key_of() maps
 * them back to keys.
 *
 * Threads: an input belongs to one thread at a time. */
typedef struct kw_pattern_input kw_pattern_input; /* opaque */

/*! kw_pattern_input_create(): an empty input (every key not given);
 * kw_pattern_input_destroy() frees it (NULL-safe). */
KW_API kw_status kw_pattern_input_create(kw_pattern_input **in);
KW_API void kw_pattern_input_destroy(kw_pattern_input *in);

/*! kw_pattern_input_keys(): the keys in the command's order, each with
 * its form, unit and a line of help with its default; ends with a NULL
 * name. Static storage. */
KW_API const kw_param_key *kw_pattern_input_keys(void);

/*! kw_pattern_input_set(): `key` from `text` (replacing an earlier value
 * of the key). On error the input is unchanged. An unknown key is
 * "<key>: unknown key", with " (did you mean '<known>'?)" for a near miss;
 * an empty text "<key>: empty value". */
KW_API kw_status kw_pattern_input_set(kw_pattern_input *in, const char *key, const char *text);

/*! kw_pattern_input_clear(): `key` back to not given. */
KW_API kw_status kw_pattern_input_clear(kw_pattern_input *in, const char *key);

/*! kw_pattern_input_given(): 1 when `key` was set (ellipse: set to 1). */
KW_API int kw_pattern_input_given(const kw_pattern_input *in, const char *key);

/*! kw_pattern_input_finish(): the rules between the keys, then *o filled:
 * kw_pattern_options_init()'s defaults with the keys given (written only
 * on success). `sp` spells the keys the messages name ("not used by --kind
 * radial" for the command's {"--", '-', " ", NULL}); NULL: "kind=radial". */
KW_API kw_status kw_pattern_input_finish(const kw_pattern_input *in, const kw_param_spelling *sp,
                                         kw_pattern_options *o);

/*! kw_pattern_input_key_of(): the key of a field of kw_pattern_options
 * that kw_pattern_create() names in kw_last_error_param() ("dims" ->
 * "matrix", "dwell_s" -> "dwell"); NULL for another name. */
KW_API const char *kw_pattern_input_key_of(const char *field);

#ifdef __cplusplus
}
#endif
#endif /* KW_PATTERN_H */
