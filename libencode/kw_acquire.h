/* kw_acquire.h: a simulated acquisition as one library object: an analytic
 * phantom + coils + contrast + timing + off-resonance + noise + a Cartesian
 * mask or a trajectory -> k-space, the truth image, the coil maps and the
 * metadata that describes them (docs/api-acquire.md, docs/simulator.md).
 *
 * Life cycle: kw_acquisition_options_init() fills the defaults (those of
 * `kweave encode`), kw_acquisition_create() checks every option, plans the
 * protocol's timing, reports the working set, builds and fits the coil maps,
 * rasterises the truth and sets the noise level; kw_acquisition_execute()
 * writes the k-space (and copies the truth and maps) into the caller's
 * arrays; kw_acquisition_destroy() frees (NULL-safe).
 *
 * Arrays: C order, slowest axis first; every size is given as a dims array
 * in that order: grid (nz, ny, nx), FOV (z, y, x). k-space is (coils, [nz or
 * slices,] ny, nx) for Cartesian sampling (the coil axis only with coils),
 * (channels, samples) for a trajectory; the truth (ny, nx), (nz, ny, nx) or
 * (slices, ny, nx); coil maps (coils, ny, nx), (coils, nz, ny, nx) or, for
 * multi-slice with a ring of loops, (coils, slices, ny, nx). Units SI.
 *
 * Errors: every call returns kw_status; when one option is at fault,
 * kw_last_error_param() names its field in this header ("dims", "te_s",
 * "coil_order", "mask", "max_bytes" ...).
 *
 * Threads: an acquisition object is used by one thread at a time; distinct
 * objects may run in parallel (create plans FFTs: call it from one thread,
 * as every FFTW planner). The arrays the options point to must stay valid
 * and unchanged until kw_acquisition_destroy().
 */
#ifndef KW_ACQUIRE_H
#define KW_ACQUIRE_H

#include "kw_base.h"
#include "kw_params.h"
#include "kw_phantom.h"
#include "kw_protocol.h"
#include "kw_tissue.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_acquisition_options {
    size_t struct_size;      /* sizeof, set by kw_acquisition_options_init() */

    /* ---- object and grid ---- */
    const char *phantom;     /* a name of kw_phantom_names() (required) */
    size_t dims[3];          /* (nz, ny, nx): nx required; ny 0: nx; nz 0:
                              * nx for a 3-D phantom, 1 for a 2-D one */
    double fov_m[3];         /* (z, y, x): x required; 0: the next faster
                              * axis's value */

    /* ---- contrast and timing ---- */
    kw_contrast_kind sequence; /* default KW_CONTRAST_PD */
    double te_s;             /* 0: not given (the shortest TE the readout allows) */
    double tr_s;             /* 0: not given (required for gre, se, ir) */
    double ti_s;             /* inversion time (ir only) */
    double flip_rad;         /* flip angle (gre only) */
    double b0_t;             /* default 3 T */
    double bandwidth_hz;     /* receiver bandwidth across the FOV (1/dwell);
                              * 0: every Cartesian sample at TE */
    /* The caller's tissue values (KW_TISSUE_COUNT entries, zero = the
     * table's; kw_tissue_lookup()) or NULL. */
    const kw_tissue_values *tissue_values;

    /* ---- off-resonance ---- */
    double df_hz;            /* added everywhere (Hz) */
    int field_gradient_ndim; /* 0: none; else the phantom's ndim */
    double field_gradient_t_per_m[3]; /* (z, y, x): a 2-D phantom uses [1], [2];
                              * at most 0.1 T/m; zero at the FOV centre */
    const float *field_map;  /* Hz at the pixel centres, (ny, nx), or for
                              * multi-slice (slices, ny, nx); NULL: none */
    int field_map_ndim;
    size_t field_map_dims[3];

    /* ---- coils: a ring of loops, or the caller's maps, or neither ---- */
    int coils;               /* loops per ring, 1..128; 0: no ring */
    double coil_radius_m;    /* 0: FOV x / 4 */
    double coil_distance_m;  /* 0: 0.75 max(FOV x, FOV y) */
    int coil_rings;          /* 1 (default) or 2 */
    double coil_ring_gap_m;  /* two rings: 0 = FOV z / 2 */
    int coil_order;          /* series order 0..8; -1 (default): 4, 3-D: 3 */
    int coil_order_z;        /* 3-D: 0..8; -1 (default): 2 */
    const kw_cfloat *sens;   /* maps (coils, [nz,] ny, nx) or one ([nz,] ny, nx) */
    int sens_ndim;
    size_t sens_dims[4];

    /* ---- noise ---- */
    double snr;              /* mean object |truth| / noise sigma; 0: no noise
                              * (unless noise_cov is given) */
    double noise_corr;       /* correlation between every pair of coils */
    const kw_cdouble *noise_cov; /* (channels, channels) Hermitian: its shape
                              * (snr sets the level) or, without snr, the level */
    size_t noise_cov_dims[2];
    uint64_t seed;           /* noise seed (default 0) */

    /* ---- multi-slice 2-D of a 3-D phantom ---- */
    int slices;              /* 0: none; 1..256 slices centred on z = 0 */
    double slice_thickness_m; /* rectangular through-slice profile */
    double slice_gap_m;
    int slice_points;        /* Gauss-Legendre points per slice, 1..32 (8) */

    /* ---- sampling: a Cartesian mask or a trajectory (or full grid) ---- */
    const uint8_t *mask;     /* nonzero = sampled: (ny, nx), (ny,) or 3-D (nz, ny, nx) */
    int mask_ndim;
    size_t mask_dims[3];
    const float *traj;       /* (samples, ndim) in cycles/FOV, columns kx, ky(, kz) */
    size_t traj_dims[2];
    const double *times;     /* sample times (s after excitation): (samples,)
                              * for a trajectory; (nx,) or (ny, nx) Cartesian */
    int times_ndim;
    size_t times_dims[2];

    /* ---- a protocol of the planner (kw_plan_create) or NULL: its
     * sequence gives the timing (minimum TE, TR, EPI echo spacing and
     * partial Fourier); the fields above override its fov, matrix,
     * bandwidth, b0, te and tr. Its bandwidth_hz 0 (and no bandwidth
     * above) means the planner's default, 250 Hz/pixel x the readout
     * matrix. ---- */
    const kw_protocol *protocol;

    size_t max_bytes;        /* working-set limit (0: none): create fails
                              * with KW_ENOMEM naming "max_bytes" above it */

    /* ---- added later (growable: new fields at the end) ---- */
    /* Coil maps of a ring of loops: the largest pointwise misfit allowed
     * between the fitted series and the loops' field, relative to the local
     * magnitude, over the object (the pixels a shape covers) where the coil
     * is at least 10% of its peak there (kw_coil_fit_error()). The series
     * order left at its default (coil_order, coil_order_z -1) is raised
     * from 4 (3-D: 3 and 2 along z) until the fit meets it, up to 8 (3-D:
     * within 1024 terms); KW_EINVAL naming "coil_tolerance" where none does.
     * -1 (default): 0.01 for 2-D maps (single or multi-slice); for 3-D maps
     * none (orders 3 and 2: a misfit of about 6%; 1% needs orders 5 and 3,
     * 3.5 times the terms and the encoding time). 0: no check (the default
     * orders). An order given is kept as given (the misfit is reported, not
     * checked); the caller's maps are fitted at the order as set, their
     * misfit reported likewise. */
    double coil_tolerance;
    /* 1: every sample's transforms evaluated at the sample (the reference
     * path of kw_sim_options' per_sample); 0 (default): the grid path where
     * it applies (Cartesian with coils, no field gradient); the same k-space
     * within 1e-6 of its largest sample (docs/simulator.md). */
    int per_sample;
} kw_acquisition_options;

/*! kw_acquisition_options_init(): the defaults of `kweave encode` (no
 * phantom, grid or FOV: those are required), struct_size = sizeof *o. */
KW_API void kw_acquisition_options_init(kw_acquisition_options *o);

typedef struct kw_acquisition kw_acquisition;

/* A tissue the data were made with and where its values came from. */
typedef struct kw_acquisition_tissue {
    int id;                  /* kw_tissue_id */
    kw_tissue_values values;
    int from_caller;         /* 1: options.tissue_values; 0: the table */
} kw_acquisition_tissue;

/* Everything the acquisition resolved: the metadata a sidecar records.
 * Arrays are C order like the options; pointers are owned by the object. */
typedef struct kw_acquisition_info {
    const char *phantom;     /* its name */
    int ndim;                /* the image grid: 2 or 3 (multi-slice: 2) */
    size_t dims[3];          /* (nz, ny, nx), nz = 1 for 2-D */
    double fov_m[3];         /* (z, y, x) */
    int noncartesian;        /* 1: a trajectory */
    int kspace_ndim;
    size_t kspace_dims[4];
    int truth_ndim;
    size_t truth_dims[3];
    int maps_ndim;           /* 0: no coil maps */
    size_t maps_dims[4];
    int coils;               /* coil maps (0: one channel of sensitivity 1) */
    int channels;            /* max(coils, 1) */

    kw_contrast contrast;    /* te_s, tr_s as used (tr_s 0: none) */
    double bandwidth_hz;     /* 0: none */
    double readout_duration_s;
    double fat_shift_hz;
    double df_hz;
    int field_gradient_ndim;
    double field_gradient_t_per_m[3];   /* (z, y, x) */
    double field_gradient_hz_per_fov[3];

    int noisy;               /* noise was added */
    double noise_sigma;      /* per sample (0 without noise) */
    const kw_cdouble *noise_cov; /* (channels, channels), scaled; NULL without noise */
    uint64_t seed;
    double acceleration;     /* sampled fraction's inverse (0: full grid or trajectory) */
    long acs_lines;          /* fully sampled rows through ky = 0 (-1: none) */

    int protocol;            /* a protocol was given: */
    double min_te_s;
    int feasible;
    int epi;                 /* the timing is an EPI train: */
    double echo_spacing_s;
    int shots;
    double partial_fourier;
    int first_row;
    int rows_acquired;
    double distortion_pixels_per_hz;

    int field_map;           /* a field map was applied: */
    int field_map_oversampling;
    int field_map_segments;
    double field_map_interp_error;

    int coil_ring;           /* 1: ring of loops, 0: the caller's maps */
    double coil_radius_m, coil_distance_m, coil_ring_gap_m;
    int coil_rings, loops_per_ring;
    int coil_order, coil_order_z;
    double coil_period;      /* of the series, in FOV units */
    const double *fit_residual; /* per coil (relative RMS over the object) */

    int slices;              /* multi-slice: */
    double slice_thickness_m, slice_gap_m;
    const double *slice_centres_m;
    int slice_points;
    int maps_per_slice;

    int ntissues;
    kw_acquisition_tissue tissues[KW_TISSUE_COUNT];

    size_t working_set_bytes; /* estimate checked against max_bytes */

    /* added later (growable: new fields at the end) */
    double snr;              /* options.snr (0: not given) */
    int tissue_values_given; /* options.tissue_values was given */
    const double *fit_max_error; /* per coil: largest pointwise misfit of the
                              * series relative to the map's magnitude, over
                              * the object where the coil is >= 10% of its
                              * peak there (multi-slice: the worst slice) */
    double coil_tolerance;   /* what the order was chosen to meet (0: none) */
} kw_acquisition_info;

/*! kw_acquisition_create(): check the options (copied with
 * kw_options_take), plan, estimate the working set (against max_bytes,
 * before any large array), make and fit the coil maps, rasterise the truth
 * and set the noise. *a = NULL on failure. */
KW_API kw_status kw_acquisition_create(kw_acquisition **a, const kw_acquisition_options *o);

/*! kw_acquisition_info_get(): the metadata (valid until destroy; noise
 * level, residuals and field-map figures are known after create). */
KW_API const kw_acquisition_info *kw_acquisition_info_get(const kw_acquisition *a);

/*! kw_acquisition_kspace_count(), _truth_count(), _maps_count(): elements
 * of the caller's output arrays (products of the info's dims; maps 0 when
 * there are none). */
KW_API size_t kw_acquisition_kspace_count(const kw_acquisition *a);
KW_API size_t kw_acquisition_truth_count(const kw_acquisition *a);
KW_API size_t kw_acquisition_maps_count(const kw_acquisition *a);

/*! kw_acquisition_execute(): simulate: k-space into `kspace` (required,
 * kspace_count values), the truth into `truth` and the coil maps (the
 * fitted series the data are exact for) into `maps` when not NULL. Noise is
 * seeded: the same options give the same bytes. `progress` may be NULL. */
KW_API kw_status kw_acquisition_execute(kw_acquisition *a, kw_cfloat *kspace, float *truth,
                                        kw_cfloat *maps, kw_progress_fn progress, void *user);

/*! kw_acquisition_info_json(): the sidecar `kweave encode` writes beside
 * its k-space, as JSON text (kw_alloc'd, free with kw_free(); ends with a
 * newline), without the keys that name files: the command adds those
 * ("tissue_file" after "tissues"; "trajectory", "sens", "noise_cov",
 * "pattern" before "acceleration"; "times" after "acs_lines"; in
 * "protocol": "file" and "plan_sequence" before "min_te_s", "field_map"
 * before "field_map_oversampling"), and names its own option as the
 * "source" where this text has "source": "caller" (a tissue of
 * options.tissue_values).
 * The text holds, in order: kweave_version, kind ("kspace"), layout, shape
 * (of the k-space), matrix and fov_m (x first), phantom, tissues (with the
 * caller's tissue values or a phantom of tissues: species, pd, t1_s, t2_s,
 * t2star_s, source), slices (multi-slice), coils, snr (null: none),
 * noise_sigma, seed, scale, acceleration, acs_lines (null: none), protocol
 * (sequence, b0_t, te_s, tr_s, ti_s, flip_deg, the readout's bandwidth and
 * fat shift, df_hz, field gradients, the planned timing, field-map
 * figures), coil_model (with coils), noise_definition, snr_definition.
 * The field-map figures are known after execute. KW_EINVAL on NULL. */
KW_API kw_status kw_acquisition_info_json(const kw_acquisition *a, char **json);

/*! kw_acquisition_destroy(): free (NULL-safe). */
KW_API void kw_acquisition_destroy(kw_acquisition *a);

/* ---- the options as named parameters (kw_params.h) ------------------------------
 * kw_acquisition_input: the options of `kweave encode` as `key` and text,
 * read as the command reads them, with its rules and messages; what the
 * command and the Python package's Acquisition do. Keys
 * (kw_acquisition_input_keys()): phantom, matrix ("256", "64x64x16"), fov
 * ("256mm", "256mm,192mm"), snr, seed, sequence (pd gre se ir), te, tr, ti
 * ("10ms"), flip ("15deg", "15"), b0 ("3T"), bandwidth ("32kHz",
 * "250Hz/pixel"), df ("50Hz"), coils, coil-radius, coil-distance,
 * coil-order, coil-order-z, coil-rings, coil-ring-gap, noise-corr,
 * field-gradient ("20uT/m,0"), slices, slice-thickness, slice-gap,
 * slice-points; and the arrays the caller points the options to (sens,
 * pattern = options.mask, trajectory, times, noise-cov, field-map, tissue
 * = options.tissue_values): setting one of those (any text) declares it
 * given, for the rules between options; finish leaves their fields alone.
 *
 * Errors: KW_EINVAL with kw_last_error_param() = the key at fault
 * ("<key>: <reason>"). set() checks the text (forms, units, snr > 0,
 * seed >= 0, the sequence's name, bandwidth > 0); finish() applies a
 * protocol's keys, then requires phantom, matrix and fov, then the rules
 * between the options in the command's order (slices, pattern or
 * trajectory, field map or gradient, coils or sens and the coils' ranges,
 * noise-corr, te/tr/ti/flip > 0). kw_acquisition_create() then names
 * fields of the options: kw_acquisition_input_key_of() maps them to keys.
 *
 * Threads: an input belongs to one thread at a time. */
typedef struct kw_acquisition_input kw_acquisition_input; /* opaque */

/*! kw_acquisition_input_create() / _destroy() (NULL-safe). */
KW_API kw_status kw_acquisition_input_create(kw_acquisition_input **in);
KW_API void kw_acquisition_input_destroy(kw_acquisition_input *in);

/*! kw_acquisition_input_keys(): the keys in the command's order, each with
 * its form, unit and a line of help with its default; ends with a NULL
 * name. Static storage. */
KW_API const kw_param_key *kw_acquisition_input_keys(void);

/*! kw_acquisition_input_set(): `key` from `text` (replacing an earlier
 * value). On error the input is unchanged; an unknown key is "<key>:
 * unknown key" (with a near miss: " (did you mean '<known>'?)"). */
KW_API kw_status kw_acquisition_input_set(kw_acquisition_input *in, const char *key,
                                          const char *text);

/*! kw_acquisition_input_clear(): `key` back to not given;
 * kw_acquisition_input_given(): 1 when it was set. */
KW_API kw_status kw_acquisition_input_clear(kw_acquisition_input *in, const char *key);
KW_API int kw_acquisition_input_given(const kw_acquisition_input *in, const char *key);

/*! kw_acquisition_input_protocol(): a protocol file's text of `len` bytes
 * (kweave plan's keys, kw_plan_input.h), read as `kweave encode --protocol`
 * reads it: at finish its sequence (gre, epi, radial, spiral: gre contrast;
 * se: se), fov, matrix, bandwidth, b0, te, tr, flip and ti fill the keys not
 * set, and the planner's other keys make options.protocol (timing; kept in
 * the input). Errors name "protocol" ("protocol: line 3: ..."). Replaces
 * an earlier protocol. */
KW_API kw_status kw_acquisition_input_protocol(kw_acquisition_input *in, const char *text,
                                               size_t len);

/*! kw_acquisition_input_protocol_text(): the protocol's text for `key`
 * ("sequence": the planner's sequence), NULL when it has none. Valid until
 * the protocol is replaced or the input destroyed. */
KW_API const char *kw_acquisition_input_protocol_text(const kw_acquisition_input *in,
                                                      const char *key);

/*! kw_acquisition_input_finish(): the protocol's keys, the rules, then the
 * keys given into *o, which the caller filled with
 * kw_acquisition_options_init() (and may have pointed to its arrays):
 * fields of keys not given keep their values; phantom and protocol point
 * into the input (valid until it is destroyed or set again). *o is
 * written only on success. `sp` spells the keys the messages name (the
 * command's {"--", '-', " ", NULL}: "give --pattern (Cartesian) or
 * --trajectory"); NULL: "key=value". */
KW_API kw_status kw_acquisition_input_finish(kw_acquisition_input *in,
                                             const kw_param_spelling *sp,
                                             kw_acquisition_options *o);

/*! kw_acquisition_input_key_of(): the key of a field of
 * kw_acquisition_options that kw_acquisition_create() names ("dims" ->
 * "matrix", "mask" -> "pattern", "coil_radius_m" -> "coil-radius"); NULL
 * for another name (max_bytes, options). */
KW_API const char *kw_acquisition_input_key_of(const char *field);

#ifdef __cplusplus
}
#endif
#endif /* KW_ACQUIRE_H */
