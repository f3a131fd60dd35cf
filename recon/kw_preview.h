/* kw_preview.h: "what would I see": the planner's predictions for a protocol
 * checked against a simulated acquisition of the same protocol, measured on
 * the reconstructed image (docs/preview.md, docs/api-preview.md).
 *
 * What it does: kw_preview_create() plans the protocol (kw_plan_create) and
 * keeps the planner's predictions; kw_preview_execute() simulates the
 * protocol's acquisition with its time effects on (the planner's TE, TR,
 * dwell and EPI echo train; chemical shift of fat, a field bump, T2* decay;
 * kw_acquisition with options.protocol), reconstructs it (kw_recon: the
 * plain FFT, which suits a fully sampled Cartesian grid; zero filling for a
 * partial-Fourier train) and measures on the image each effect the plan
 * predicts:
 *   - fat-water shift (pixels, signed) along the readout (x) for GRE and
 *     SE, along the phase direction (y) for EPI: the fat vial of the "weave"
 *     object, imaged alone, registered against the same vial with its
 *     chemical shift cancelled (shape df_hz = +3.4 ppm of the Larmor
 *     frequency), everything else (timing, decay, reconstruction) equal;
 *   - off-resonance displacement (pixels, signed) of a field bump (bump_hz
 *     on a plateau over one vial, raised-cosine edge, zero elsewhere:
 *     simulated through the field-map path, kw_fieldmap): along x for GRE and
 *     SE, along y for EPI, registered against the same vial without the bump;
 *   - T2* blurring (protocols with t2star_s; GRE and EPI): the FWHM of a
 *     point's profile along y (EPI) or x (GRE), against the FWHM of the
 *     Fourier transform of exp(-t/T2*) sampled at the planner's echo times;
 *   - with a reference protocol: the SNR ratio (protocol / reference)
 *     measured by pseudo-replicas against the planner's ratio of
 *     snr_factor (voxel volume x sqrt(total sampling time)); the noise
 *     model is in docs/preview.md;
 *   - the edge response along x of a square insert (proton-density
 *     contrast): its 10-90% width (pixels) and its Gibbs overshoot (a
 *     fraction of the jump), against the ideal band-limited edge 1/2 +
 *     Si(pi x)/pi.
 * Registration: phase correlation (Kuglin & Hines 1975): the cross-power
 * spectrum R(k) = F[a](k) conj(F[b](k)) of the two images (centered unitary
 * DFT) has, for a = b moved by s pixels along an axis of N pixels, the phase
 * -2 pi k s / N (the DFT shift theorem); s is read from the weighted mean
 * phase step between neighbouring k along that axis,
 *     s = -N/(2 pi) arg sum_k R(k) conj(R(k - 1)),
 * unambiguous for |s| < N/2 and sub-pixel (no peak interpolation).
 * Predictions (the planner's, kw_sequence.h): fat moves by
 * chemical_shift_pixels = 3.4e-6 gamma-bar B0 / (bandwidth per pixel)
 * towards -x (readout), or chemical_shift_phase_pixels towards -y (EPI: rows
 * grow downwards, fat moves up); a bump of f Hz moves the vial by f /
 * (bandwidth per pixel) towards +x, or f x distortion_pixels_per_hz towards
 * +y in rows (down the picture) for EPI. Signs: a positive off-resonance moves
 * the image towards later sample times (kw_simulate.h).
 *
 * Scope: 2-D Cartesian protocols (gre, se, epi); radial, spiral and 3-D
 * protocols are refused with KW_ENOTSUP naming "sequence" or "ndim".
 *
 * Life cycle: kw_preview_options_init(), kw_preview_create(), then
 * kw_preview_execute() once (a second call recomputes the same result),
 * kw_preview_get_result(), kw_preview_report_json(), kw_preview_destroy()
 * (NULL-safe).
 *
 * Errors: kw_last_error_param() names the field at fault: "protocol",
 * "sequence", "ndim", "matrix", "b0_t", "bump_hz", "flip_rad", "fat_tolerance_px",
 * "bump_tolerance", "blur_tolerance", "reference", "replicas", "snr_tolerance", "edge_tolerance" (or a field of the protocol, from kw_protocol_check).
 *
 * Threads: one object is used by one thread at a time; create plans FFTs
 * (call it from one thread, as every FFTW planner); execute makes
 * short-lived acquisitions and reconstructions (it plans too).
 */
#ifndef KW_PREVIEW_H
#define KW_PREVIEW_H

#include "kw_base.h"
#include "kw_protocol.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_preview_options {
    size_t struct_size;      /* sizeof, set by kw_preview_options_init() */
    const kw_protocol *protocol; /* required; copied at create */
    double bump_hz;          /* field bump on one vial (Hz), default 100;
                              * 0: no bump and no displacement measured */
    double flip_rad;         /* GRE and EPI contrast (the protocol has no
                              * flip angle): default 15 degrees */
    double fat_tolerance_px; /* |measured - predicted| allowed, pixels
                              * (default 0.1) */
    double bump_tolerance;   /* allowed as a fraction of the predicted
                              * displacement (default 0.10) */
    double blur_tolerance;   /* allowed as a fraction of the predicted
                              * T2* blur width (default 0.15) */
    const kw_protocol *reference; /* a second protocol (2-D gre, se or epi)
                              * for the SNR ratio, or NULL; copied at create */
    int replicas;            /* pseudo-replicas per protocol (default 50; 2..10000) */
    uint64_t seed;           /* their noise seed (default 1) */
    double snr_tolerance;    /* allowed as a fraction of the predicted ratio
                              * (default 0.10) */
    double edge_tolerance;   /* the edge's 10-90% width: a fraction of the
                              * prediction; its overshoot: this x 0.1 of the
                              * jump (default 0.05) */
} kw_preview_options;

/*! kw_preview_options_init(): the defaults above, no protocol,
 * struct_size = sizeof *o. */
KW_API void kw_preview_options_init(kw_preview_options *o);

#define KW_PREVIEW_MAX_EFFECTS 8 /* at most 6 so far */

/* One effect: predicted by the planner, measured on the image, in `unit`.
 * Shifts are signed along the axis: +x = columns to the right, +y = ROWS DOWNWARDS
 * (the array's row index; phantom y points up). */
typedef struct kw_preview_effect {
    const char *name;        /* "fat_water_shift", "off_resonance_displacement",
                              * "t2star_blur" (a width: not signed),
                              * "edge_width_10_90", "gibbs_overshoot",
                              * "snr_ratio" */
    const char *axis;        /* "x" (readout, columns), "y" (phase, rows) or
                              * "" (the SNR ratio) */
    const char *unit;        /* "pixels", "ratio" (snr_ratio) or "fraction"
                              * (gibbs_overshoot: of the edge's jump) */
    double predicted;
    double measured;
    double difference;    /* measured - predicted */
    double tolerance;     /* |difference| allowed */
    const char *tolerance_rule; /* how the tolerance was set, in words */
    const char *source;      /* the formula's source, in words */
    int pass;                /* |difference| <= tolerance */
    double centre_px[2];     /* (row, column) of the insert's true centre */
    double radius_px[2];     /* its semi-axes (rows, columns) */
} kw_preview_effect;

typedef struct kw_preview_result {
    int sequence;            /* kw_sequence_kind */
    double b0_t, larmor_hz, fat_water_hz;
    double bandwidth_per_pixel_hz;
    double echo_spacing_s;   /* EPI, else 0 */
    double distortion_pixels_per_hz; /* EPI (rows per Hz), else 0 */
    double te_s, tr_s, flip_rad;
    double bump_hz;
    size_t dims[2];          /* image (ny, nx) */
    double pixel_m[2];       /* (y, x) */
    const float *image;      /* the scenario's magnitude image (ny, nx): the
                              * whole "weave" object with fat and the bump;
                              * owned by the object, valid until destroy */
    int neffects;
    kw_preview_effect effects[KW_PREVIEW_MAX_EFFECTS];
    int all_pass;
    int feasible;            /* the planner's verdict on the hardware limits
                              * (kweave plan lists them); simulated either way */
} kw_preview_result;

typedef struct kw_preview kw_preview;

/*! kw_preview_create(): copy the options (kw_options_take), check and plan
 * the protocol. *p = NULL on failure. */
KW_API kw_status kw_preview_create(kw_preview **p, const kw_preview_options *o);

/*! kw_preview_execute(): simulate, reconstruct, measure (see above).
 * `progress` may be NULL. */
KW_API kw_status kw_preview_execute(kw_preview *p, kw_progress_fn progress, void *user);

/*! kw_preview_get_result(): the result of the last execute (NULL before
 * one); valid until the next execute or destroy. */
KW_API const kw_preview_result *kw_preview_get_result(const kw_preview *p);

/*! kw_preview_report_json(): the result as JSON text (kw_alloc'd, free
 * with kw_free(); ends with a newline): kweave_version, kind ("preview"),
 * protocol {sequence, b0_t, larmor_hz, fat_water_hz, matrix [nx, ny],
 * fov_m [x, y], bandwidth_per_pixel_hz, te_s, tr_s, flip_deg,
 * echo_spacing_s, distortion_pixels_per_hz, feasible}, scenario {phantom, bump_hz,
 * registration}, effects [{name, axis, unit, predicted, measured,
 * difference, tolerance, tolerance_rule, source, verdict ("pass" or
 * "fail"), centre_px [row, column]}], all_pass, safety_caution. KW_EINVAL before execute. */
KW_API kw_status kw_preview_report_json(const kw_preview *p, char **json);

/*! kw_preview_destroy(): free (NULL-safe). */
KW_API void kw_preview_destroy(kw_preview *p);

#ifdef __cplusplus
}
#endif
#endif /* KW_PREVIEW_H */
