/* kw_traj.h: radial non-Cartesian trajectories in cycles per FOV, with the
 * time of every sample.
 *
 * Units: k in cycles per FOV, so the Cartesian grid points are the integers
 * -N/2 .. N/2-1 (kw_base.h). A trajectory is (samples, ndim) float, columns
 * (kx, ky) in 2-D and (kx, ky, kz) for a stack of stars, samples ordered
 * readout after readout. Spoke s at angle theta_s (from +kx towards +ky)
 * carries F N samples k_n = (n - F N/2) / F (cos theta_s, sin theta_s),
 * n = 0..F N-1, F the readout oversampling (1..4): a full diameter through
 * k = 0 at n = F N/2, from -N/2 to N/2 - 1/F, samples 1/F cycle/FOV apart
 * (F = 1: like a Cartesian readout line; F = 2: the object is sampled over
 * twice the FOV along the spoke, so its projections do not wrap around).
 * Sample n of every readout is acquired at t_n = te + (n - F N/2) dwell / F
 * after the excitation (k = 0 at the echo time te), in seconds: `dwell` is
 * the time per image pixel (1 / (bandwidth per pixel x N)), the ADC samples
 * every dwell / F, so oversampling keeps the readout duration N dwell and
 * the readout gradient, and widens the receiver bandwidth F times (the
 * scanners' convention: common practice, no source).
 *
 * Angle schemes:
 *  - uniform: theta_s = s pi / S over 180 degrees (full spokes cover 360);
 *  - golden angle: theta_s = s psi_1, psi_1 = pi / phi = 111.246 degrees
 *    (Winkelmann et al. 2007, IEEE TMI 26:68), phi the golden ratio;
 *  - tiny golden angles: psi_m = pi / (phi + m - 1), m = 2, 3, ...
 *    (Wundrak et al. 2016, MRM 75:2372), psi_1 being the golden angle.
 * A stack of stars repeats the in-plane spokes on every Cartesian kz
 * partition (kz = -NZ/2 .. NZ/2-1, partition after partition); with a golden
 * scheme the angle keeps increasing from one partition to the next.
 */
#ifndef KW_TRAJ_H
#define KW_TRAJ_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

/* The golden ratio (1 + sqrt 5) / 2. */
#define KW_GOLDEN_RATIO 1.61803398874989484820

typedef enum kw_traj_kind {
    KW_TRAJ_RADIAL = 0,        /* uniform angles */
    KW_TRAJ_GOLDEN = 1,        /* golden or tiny golden angle (tiny >= 1) */
    KW_TRAJ_STACK_OF_STARS = 2 /* radial in kx-ky on each kz partition */
} kw_traj_kind;

typedef struct kw_traj_options {
    size_t struct_size; /* sizeof, set by kw_traj_options_init() */
    kw_traj_kind kind;
    size_t n;       /* in-plane matrix N: samples per spoke */
    size_t nz;      /* partitions (stack of stars); 1 otherwise */
    size_t spokes;  /* spokes per plane (per partition for a stack) */
    int tiny;       /* 0: uniform angles; m >= 1: increments psi_m */
    double dwell_s; /* time per image pixel, s (> 0): the time between
                     * samples is dwell_s / oversampling */
    double te_s;    /* time of k = 0 after the excitation, s (>= N/2 dwell) */
    int oversampling; /* readout oversampling F, 1..4 (0 is taken as 1): F N
                       * samples per spoke, 1/F cycle/FOV and dwell/F apart;
                       * dwell_s stays the time per image pixel */
} kw_traj_options;

/*! kw_traj_options_init(): uniform radial, n = 0, nz = 1, spokes = 0,
 * tiny = 0, dwell_s = te_s = 0, oversampling 1 (the caller sets n, spokes,
 * dwell_s and te_s); struct_size = sizeof *o. Every call below copies the
 * caller's struct over these defaults (kw_options_take(), kw_base.h): a
 * struct_size of 0 is refused naming "options"; a shorter struct (an older
 * caller) gets the defaults for the fields it lacks. */
KW_API void kw_traj_options_init(kw_traj_options *o);

/*! kw_traj_golden_angle(): psi_m = pi / (phi + m - 1) in radians for m >= 1
 * (m = 1: the golden angle 111.246 deg); NaN for m < 1. */
KW_API double kw_traj_golden_angle(int m);

/*! kw_traj_nyquist_spokes(): the number of full spokes that keeps the
 * azimuthal spacing at the edge of k-space (|k| = N/2) within one delta-k:
 * ceil(pi N / 2) (e.g. Bernstein, King & Zhou, Handbook of MRI Pulse
 * Sequences, 2004, sec. 17.1). */
KW_API size_t kw_traj_nyquist_spokes(size_t n);

/*! kw_traj_angle(): the angle theta (radians, in [0, pi)) of readout number
 * `r` (0-based, counted over the whole acquisition); NaN when the options
 * are refused. */
KW_API double kw_traj_angle(const kw_traj_options *o, size_t r);

/*! kw_traj_oversampling(): the readout oversampling F the options ask for
 * (oversampling 0 gives 1); 0 when the options are refused. */
KW_API int kw_traj_oversampling(const kw_traj_options *o);

/*! kw_traj_size(): samples and columns the options produce (F N spokes nz);
 * KW_EINVAL naming "options" for a struct not initialised; KW_ERANGE with a
 * reason, and kw_last_error_param() naming the field ("n",
 * "nz", "spokes", "tiny", "oversampling", "dwell_s", "te_s"), for absurd options (N < 2 or odd, no spokes,
 * dwell <= 0, oversampling outside 1..4, sizes that overflow or exceed 2^31
 * samples). */
KW_API kw_status kw_traj_size(const kw_traj_options *o, size_t *samples, int *ndim);

/*! kw_traj_make(): fill k[samples * ndim] (cycles/FOV) and t[samples]
 * (seconds; t may be NULL). Buffers are sized by kw_traj_size(). */
KW_API kw_status kw_traj_make(const kw_traj_options *o, float *k, float *t);

/*! kw_traj_radial_weights(): the area each sample of a full-spoke radial
 * trajectory represents, in delta-k^2, with the radial step dr = 1/F:
 * pi |k| dr / S at |k| > 0 (the ring of width dr through |k|, area
 * 2 pi |k| dr, shared by the 2 S half-spokes that cross it) and
 * pi dr^2 / (4 S) at k = 0 (the central disc of radius dr/2 shared by all S
 * spokes): the density compensation of Lauterbur-style projection
 * reconstruction (ramp), summing to pi N^2 / 4 + pi dr^2 / 4, about the disc
 * area. w has one value per sample of one plane (spokes * F n), in the
 * order of kw_traj_make(). */
KW_API kw_status kw_traj_radial_weights(const kw_traj_options *o, float *w);

#ifdef __cplusplus
}
#endif
#endif /* KW_TRAJ_H */
