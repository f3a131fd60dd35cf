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
    const kw_phantom *phantom;
    size_t n[3];            /* matrix nx, ny, nz (nz = 1 for 2-D) */

    /* Sampling: a trajectory (nsamples x traj_ndim floats, cycles/FOV,
     * columns kx, ky(, kz)) or, when traj is NULL, the Cartesian grid of n
     * with an optional mask (prod(n) bytes, nonzero = sampled; NULL = all). */
    const float *traj;
    size_t nsamples;
    int traj_ndim;
    const uint8_t *mask;

    /* Timing. times: per-sample times (s; nsamples for a trajectory, nx for a
     * Cartesian readout along x) or NULL; then Cartesian samples get
     * t = TE + (ix - nx/2) / bandwidth_hz when bandwidth_hz > 0, and every
     * sample t = TE otherwise. */
    const double *times;
    double bandwidth_hz;    /* full receiver bandwidth across the FOV (1/dwell) */

    /* Contrast (used when the phantom carries tissues). */
    kw_contrast contrast;
    double df_hz;           /* global off-resonance added to every shape (Hz) */

    /* Coils: ncoils >= 1 with coil_coef = ncoils x (2L+1)^2 trigonometric
     * coefficients of order L = coil_order and period coil_period (FOV units),
     * c[(q + L)(2L + 1) + (p + L)] multiplying exp(i 2 pi (p u + q v)/period)
     * (u right, v down, FOV units); or ncoils = 0: one channel, sensitivity 1. */
    int ncoils;
    int coil_order;
    double coil_period;
    const double complex *coil_coef;

    /* Noise: noise_chol = lower Cholesky factor (ncoils x ncoils, row major,
     * or 1 x 1 for one channel) of the noise covariance; NULL: no noise.
     * Each sample gets chol z with z complex normal, E|z|^2 = 1. */
    const double complex *noise_chol;
    uint64_t seed;
} kw_sim_options;

typedef struct kw_sim kw_sim;

/*! kw_sim_create(): check the options and precompute the per-shape tissue
 * terms. The options' arrays must outlive the simulation. */
kw_status kw_sim_create(kw_sim **sim, const kw_sim_options *opt);

/*! kw_sim_output_count(): samples per coil written by execute (prod(n) for
 * Cartesian, nsamples for a trajectory); kw_sim_channels(): max(ncoils, 1). */
size_t kw_sim_output_count(const kw_sim *sim);
int kw_sim_channels(const kw_sim *sim);

/*! kw_sim_execute(): write channels x count samples (C order) into out.
 * Unsampled Cartesian points are zero. `progress` may be NULL. */
kw_status kw_sim_execute(kw_sim *sim, float complex *out,
                         kw_progress_fn progress, void *user);

/*! kw_sim_destroy(): free (NULL-safe). */
void kw_sim_destroy(kw_sim *sim);

/*! kw_sim_shape_signal(): the own signal of each shape at time t (complex:
 * contrast x relaxation x off-resonance phase), as kw_sim_execute uses it;
 * `own` holds nshapes values. */
void kw_sim_shape_signal(const kw_sim *sim, double t, double complex *own);

/*! kw_sim_image_weights(): the real per-shape additive weights of the image
 * at the echo (t = TE, no off-resonance phase): the "truth" that a perfect
 * reconstruction shows. */
void kw_sim_image_weights(const kw_sim *sim, double *w);

#ifdef __cplusplus
}
#endif
#endif /* KW_SIMULATE_H */
