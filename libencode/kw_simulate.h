/* kw_simulate.h: the forward simulation of an acquisition: exact k-space of an
 * analytic phantom at every sample (Cartesian grid, masked grid or arbitrary
 * trajectory), with coil sensitivities as low-order trigonometric series
 * (Guerquin-Kern et al. 2012), tissue contrast, relaxation and off-resonance
 * at each sample's time, and complex Gaussian noise with a coil covariance.
 *
 * Conventions: kw_phantom.h (k in cycles/FOV along the array axes; unitary
 * DFT scale). Sample times t are seconds after excitation. Off-resonance df
 * (Hz) multiplies a sample by exp(-i 2 pi df tau) with tau the phase time of
 * the sequence (kw_signal_phase_time()); with a Cartesian readout along x
 * whose k-space centre is at TE and dwell 1/BW, this moves an object by
 * +df/(BW/nx) pixels along +x (docs/simulator.md).
 *
 * Life cycle: kw_sim_create() checks and precomputes, kw_sim_execute() fills
 * the output without allocating, kw_sim_destroy() frees (NULL-safe).
 */
#ifndef KW_SIMULATE_H
#define KW_SIMULATE_H

#include "kw_base.h"
#include "kw_phantom.h"
#include "kw_tissue.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_sim_options {
    size_t struct_size;     /* sizeof, set by kw_sim_options_init() */
    const kw_phantom *phantom;
    size_t n[3];            /* matrix in C order (nz, ny, nx); nz = 1 (or 0) for 2-D */

    /* Sampling: a trajectory (nsamples x traj_ndim floats, cycles/FOV,
     * columns kx, ky(, kz)) or, when traj is NULL, the Cartesian grid of n
     * with an optional mask (prod(n) bytes, nonzero = sampled; NULL = all). */
    const float *traj;
    size_t nsamples;
    int traj_ndim;
    const uint8_t *mask;

    /* Timing. times: per-sample times (s; nsamples for a trajectory; for
     * Cartesian sampling nx values, one per readout column, or, with
     * times_per_sample, prod(n) values, e.g. an EPI train) or NULL; then
     * Cartesian samples get
     * t = TE + (ix - nx/2) / bandwidth_hz when bandwidth_hz > 0, and every
     * sample t = TE otherwise. */
    const double *times;
    int times_per_sample;
    double bandwidth_hz;    /* full receiver bandwidth across the FOV (1/dwell) */

    /* Contrast (used when the phantom carries tissues); tissue_values: the
     * caller's tissue values (KW_TISSUE_COUNT entries, kw_tissue_lookup())
     * or NULL for the table's. */
    kw_contrast contrast;
    const kw_tissue_values *tissue_values;
    double df_hz;           /* global off-resonance added to every shape (Hz) */
    /* Linear off-resonance (a field gradient): df(n) = sum_d g_d n_d / N_d Hz
     * at centred pixel index n (zero at the centre pixel N/2), g = df_grad_hz
     * in Hz per FOV along the array's x, y(, z). Exact at every sample: the
     * phase exp(-i 2 pi df(n) tau) moves the sample's k to k + g tau (the
     * Fourier shift theorem), tau the phase time of the sample. */
    double df_grad_hz[3];

    /* Coils: ncoils >= 1 with coil_coef = ncoils x (2L+1)^2 trigonometric
     * coefficients of order L = coil_order and period coil_period (FOV units),
     * c[(q + L)(2L + 1) + (p + L)] multiplying exp(i 2 pi (p u + q v)/period)
     * (u right, v down, FOV units); or ncoils = 0: one channel, sensitivity 1. */
    int ncoils;
    int coil_order;
    /* 3-D phantoms: order Lz along z; coil_coef then holds ncoils x
     * (2 Lz + 1)(2L+1)^2 coefficients of kw_coil_fit3's series (index
     * ((r + Lz)(2L + 1) + (q + L))(2L + 1) + (p + L), w = z/2 along the
     * array's z axis); at most 1024 per coil. Ignored for 2-D. */
    int coil_order_z;
    double coil_period;
    const kw_cdouble *coil_coef;

    /* Noise: noise_chol = lower Cholesky factor (ncoils x ncoils, row major,
     * or 1 x 1 for one channel) of the noise covariance; NULL: no noise.
     * Each sample gets chol z with z complex normal, E|z|^2 = 1. */
    const kw_cdouble *noise_chol;
    uint64_t seed;

    /* How the transforms are evaluated. 0 (default): Cartesian sampling with
     * coils and no field gradient takes the grid path (each shape's
     * transform evaluated once on the grids that the series' shifts need,
     * each coil's k-space the sum of shifted copies weighted by its
     * coefficients; docs/simulator.md), every other case the per-sample
     * path; 1: the per-sample path always (the reference: every sample's
     * transforms at every shifted frequency). The two agree within 1e-6 of
     * the largest sample (tests/ref/test_encode_fast.py). */
    int per_sample;
} kw_sim_options;

/*! kw_sim_options_init(): no phantom, every field zero (no coils, no
 * noise, PD contrast), struct_size = sizeof *o. */
KW_API void kw_sim_options_init(kw_sim_options *o);

typedef struct kw_sim kw_sim;

/*! kw_sim_create(): check the options and precompute the per-shape tissue
 * terms. The options' arrays must outlive the simulation. */
KW_API kw_status kw_sim_create(kw_sim **sim, const kw_sim_options *opt);

/*! kw_sim_output_count(): samples per coil written by execute (prod(n) for
 * Cartesian, nsamples for a trajectory); kw_sim_channels(): max(ncoils, 1). */
KW_API size_t kw_sim_output_count(const kw_sim *sim);
KW_API int kw_sim_channels(const kw_sim *sim);

/*! kw_sim_execute(): write channels x count samples (C order) into out.
 * Unsampled Cartesian points are zero. `progress` may be NULL. */
KW_API kw_status kw_sim_execute(kw_sim *sim, kw_cfloat *out,
                         kw_progress_fn progress, void *user);

/*! kw_sim_uses_grid(): 1 when kw_sim_execute takes the grid path (see
 * per_sample above), 0 when it evaluates every sample. */
KW_API int kw_sim_uses_grid(const kw_sim *sim);

/*! kw_sim_destroy(): free (NULL-safe). */
KW_API void kw_sim_destroy(kw_sim *sim);

/*! kw_sim_shape_signal(): the own signal of each shape at time t (complex:
 * contrast x relaxation x off-resonance phase), as kw_sim_execute uses it;
 * `own` holds nshapes values. */
KW_API void kw_sim_shape_signal(const kw_sim *sim, double t, kw_cdouble *own);

/*! kw_sim_image_weights(): the real per-shape additive weights of the image
 * at the echo (t = TE, no off-resonance phase): the "truth" that a perfect
 * reconstruction shows. */
KW_API void kw_sim_image_weights(const kw_sim *sim, double *w);

/* ---- field maps: time-segmented, on an oversampled grid -------------------
 *
 * An arbitrary off-resonance map df(x) (Hz) has no analytic spectrum, so its
 * effect is added as a perturbation computed on a fine grid: for a sample at
 * k with phase time tau,
 *   P(k, tau) = FT[m s (exp(-i 2 pi df tau) - 1)](k)
 *             ~ sum_l b_l(tau) FT[m s exp(-i 2 pi df tau_l)](k) - FT[m s](k)
 * (time segmentation with least-squares interpolators b_l(tau): Sutton,
 * Noll & Fessler 2003, IEEE TMI 22:178), m the image at the echo rasterised
 * on a grid `oversample` times finer than the matrix, s the coil's series,
 * each FT a centered FFT of the fine grid (whose integer frequencies include
 * the Cartesian samples; for a trajectory each FT is evaluated at the
 * samples' k by a NUFFT of tolerance 1e-6 on the fine grid). Shapes whose
 * relaxation and chemical shift differ are rasterised apart (one image m_c
 * per class of kw_sim_shape_classes()) and each class's perturbation is
 * multiplied by its own factor r_c(t) (relaxation and chemical-shift phase
 * at the sample's time), so P = sum_c r_c(t) FT[m_c s (exp(-i 2 pi df tau)
 * - 1)](k): exact apart from the time segmentation and the fine grid.
 * 2-D phantoms only; not together with df_grad_hz (add a linear field to
 * the map instead). */
typedef struct kw_fieldmap_options {
    size_t struct_size;      /* sizeof, set by kw_fieldmap_options_init() */
    const kw_sim *sim;       /* the simulation the perturbation is added to */
    const float *field_hz;   /* ny x nx field map at the pixel centres (Hz) */
    int oversample;          /* 4..16 */
    int segments;            /* time segments L (0: chosen from the field range) */
    /* Multi-slice: the object is the weighted sum of `nsections` 2-D cuts
     * (kw_phantom_section() of one 3-D phantom, the same shapes in the same
     * order as the simulation's phantom) with weights section_weights (the
     * slice profile's quadrature); 0: the simulation's own phantom. */
    int nsections;
    const kw_phantom *sections;
    const double *section_weights;
} kw_fieldmap_options;

/*! kw_fieldmap_options_init(): no simulation or map (the caller sets sim and
 * field_hz), oversample 4, segments 0 (chosen), nsections 0 (the
 * simulation's own phantom); struct_size = sizeof *o. kw_fieldmap_create()
 * copies the caller's struct over these defaults (kw_options_take(),
 * kw_base.h): struct_size 0 is refused naming "options"; a shorter struct
 * (an older caller) gets the defaults for the fields it lacks. */
KW_API void kw_fieldmap_options_init(kw_fieldmap_options *o);

typedef struct kw_fieldmap kw_fieldmap;

/*! kw_fieldmap_create(): plan the fine-grid FFT (or NUFFT), rasterise the
 * object and fit the interpolators. KW_ENOTSUP for 3-D. */
KW_API kw_status kw_fieldmap_create(kw_fieldmap **fm, const kw_fieldmap_options *opt);

/*! kw_fieldmap_execute(): add the perturbation to `out` (the output of
 * kw_sim_execute, before noise: run the simulation without noise, add this,
 * then kw_sim_add_noise()). */
KW_API kw_status kw_fieldmap_execute(kw_fieldmap *fm, kw_cfloat *out,
                              kw_progress_fn progress, void *user);

/*! kw_fieldmap_segments(): L used; kw_fieldmap_interp_error(): worst relative
 * RMS error of the interpolated phase exp(-i 2 pi df tau) over the object's
 * pixels and the readout's phase times. */
KW_API int kw_fieldmap_segments(const kw_fieldmap *fm);
KW_API double kw_fieldmap_interp_error(const kw_fieldmap *fm);

KW_API void kw_fieldmap_destroy(kw_fieldmap *fm);

/*! kw_sim_add_noise(): add the options' noise (noise_chol, seed) to `out`
 * (kw_sim_execute adds it itself when noise_chol is set; this is for callers
 * that add other terms first). */
KW_API kw_status kw_sim_add_noise(const kw_sim *sim, const kw_cdouble *noise_chol,
                           uint64_t seed, kw_cfloat *out);

/*! Accessors for sim_*.c: the options the simulation was made with. */
KW_API const kw_sim_options *kw_sim_get_options(const kw_sim *sim);

/*! kw_sim_sample_time(): the time (s after excitation) of Cartesian sample i
 * (readout column ix) or trajectory sample i, as kw_sim_execute uses it. */
KW_API double kw_sim_sample_time(const kw_sim_options *o, size_t i, size_t ix);

/*! kw_sim_shape_factor(): shape i's signal at time t per unit steady-state
 * amplitude (relaxation during the readout x off-resonance phase);
 * kw_sim_shape_steady(): the steady-state amplitude (contrast x density);
 * own signal = steady x factor. kw_sim_shape_classes(): group the shapes
 * whose factors are the same function of t (same relaxation and
 * off-resonance): cls[i] = class of shape i; returns the number of classes. */
KW_API kw_cdouble kw_sim_shape_factor(const kw_sim *sim, int i, double t);
KW_API double kw_sim_shape_steady(const kw_sim *sim, int i);
KW_API int kw_sim_shape_classes(const kw_sim *sim, int *cls);

#ifdef __cplusplus
}
#endif
#endif /* KW_SIMULATE_H */
