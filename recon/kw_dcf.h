/* kw_dcf.h: density compensation weights for non-Cartesian trajectories.
 *
 * Weights are in units of k-space area (or volume) per sample, in
 * (cycles/FOV)^ndim, so that a unit Cartesian grid has weight 1 and the
 * gridding reconstruction E^H W y keeps the image's scale.
 *
 * Threads: functions; kw_dcf_pipe() makes its own NUFFT plan (kw_nufft.h)
 * with opts->nthreads (default: omp_get_max_threads() at the call) and
 * allocates its own work space, so any thread may call it. Its result is
 * bit-identical for any thread count (no FFT is involved).
 */
#ifndef KW_DCF_H
#define KW_DCF_H

#include "kw_base.h"
#include "kw_nufft.h"

#ifdef __cplusplus
extern "C" {
#endif

/*! kw_dcf_radial(): the analytic weights of radial sampling (the "ramp"):
 * w_j = r_j dtheta_j dr, the part of the ring of radius r_j = |k_j| (in the
 * kx-ky plane) and width dr (the radial step) in the angular sector of the
 * sample's spoke direction (mod pi), halfway to the neighbouring directions
 * (uniform angles: 2 pi r dr / 2 Ns; golden-angle: unequal sectors),
 * shared among repeated directions; a sample at the centre
 * gets pi dr^2 / 6 / n_centre (Euler-Maclaurin end correction of the ring
 * sum, not the Voronoi disc pi dr^2/4: see dcf.c). Stack-of-stars in 3-D: columns x and y, times
 * the kz spacing. Exact for equally spaced spokes with equal samples.
 * traj: (ns, ndim) cycles/FOV. */
KW_API kw_status kw_dcf_radial(int ndim, size_t ns, const float *traj, float *w);

/*! kw_dcf_pipe(): the iterative weights of Pipe & Menon 1999 (Magn Reson
 * Med 41:179): w <- w / (C w), C the gridding kernel's self-convolution
 * (kw_nufft_convolve) with a wide kernel (W = 8, alpha = 2, whatever the
 * NUFFT's tolerance), starting from ones, `iterations` times (<= 0: 20).
 * `opts` (kw_nufft_options_init(), kw_nufft.h) gives the thread count only
 * (NULL: default); a struct never initialised is refused naming "options". */
KW_API kw_status kw_dcf_pipe(int ndim, const size_t *dims, size_t ns, const float *traj,
                      int iterations, const kw_nufft_options *opts, float *w);

#ifdef __cplusplus
}
#endif
#endif
