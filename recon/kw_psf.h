/* kw_psf.h: point-spread functions of sampling patterns and their figures.
 *
 * PSF: the image of a point object sampled by the pattern, without density
 * weighting beyond the weights given:
 *     psf(x) = (1/P) sum_k w(k) exp(+2 pi i k.x / N)
 * over the transformed axes (P = prod N: the full grid), centred (x = 0 at
 * index N/2), i.e. numpy's fftshift(ifftn(ifftshift(w))). A fully sampled
 * grid gives a unit delta; uniform undersampling by R gives R replicas of
 * height 1/R spaced N/R apart. Non-Cartesian: the same sum over the samples
 * k_s (cycles/FOV) with weights w_s (the area each sample stands for, in
 * delta-k^2), evaluated directly (NDFT) on an M x M grid of pixels.
 *
 * Figures (kw_psf_measure), for the magnitude |psf|, on every axis longer
 * than 1:
 *  - peak: |psf| at x = 0;
 *  - FWHM (pixels): width where |psf| falls to half the peak on a line
 *    through x = 0 along that axis; kw_psf_measure() interpolates linearly
 *    between grid pixels, kw_psf_fwhm_cartesian() / kw_psf_fwhm_ndft()
 *    measure the continuous PSF (what the CLI reports);
 *  - main lobe: the points strictly inside the ellipse whose semi-axis on
 *    each axis is the distance d_a to the first local minimum of |psf| from
 *    x = 0 along that axis (the smaller of the two sides);
 *  - peak sidelobe: the largest |psf| outside the main lobe over the peak,
 *    and its offset in pixels (ties: the nearer, then the positive offset);
 *  - energy outside the main lobe: 1 - sum_main |psf|^2 / sum_all |psf|^2.
 *
 * Transform point spread (Lustig, Donoho & Pauly 2007, MRM 58:1182, sec.
 * "Transform point spread function"): TPSF(i; j) = e_j* W F* M F W* e_i with
 * W the orthogonal wavelet transform (kw_wavelet.h), F the unitary DFT and M
 * the sampling weights. kw_tpsf reports, per wavelet level l, the coherence
 * max_{j != i} |TPSF(i; j)| / |TPSF(i; i)| for i the centre coefficient of
 * the level's diagonal band: 1 for uniform undersampling (coherent aliasing),
 * small for incoherent random patterns.
 *
 * Threads: kw_psf_plan and kw_tpsf_plan own an FFT plan (and a wavelet plan
 * and a buffer for kw_tpsf): sized for the threads at create; never runs
 * more (kw_fft.h, kw_wavelet.h); one plan per thread for execute. Their
 * loops are elementwise: bit-identical for any thread count. kw_psf_ndft()
 * allocates its own work space: any thread may call it at any time.
 */
#ifndef KW_PSF_H
#define KW_PSF_H

#include "kw_base.h"
#include "kw_fft.h"
#include "kw_wavelet.h"

#ifdef __cplusplus
extern "C" {
#endif

#define KW_PSF_MAX_RANK 3

typedef struct kw_psf_metrics {
    int rank;
    size_t dims[KW_PSF_MAX_RANK];
    double peak;                      /* |psf(0)| */
    double fwhm[KW_PSF_MAX_RANK];     /* pixels; NaN on axes of length 1 */
    double lobe[KW_PSF_MAX_RANK];     /* main-lobe semi-axis d_a, pixels */
    double peak_sidelobe;             /* ratio to the peak; 0 if none */
    long sidelobe_at[KW_PSF_MAX_RANK];/* offset from x = 0, pixels */
    double energy_outside;            /* fraction in [0, 1] */
} kw_psf_metrics;

typedef struct kw_psf_plan kw_psf_plan;

/*! kw_psf_create(): plan Cartesian PSFs of rank 1..3 over dims (C order). */
KW_API kw_status kw_psf_create(kw_psf_plan **plan, int rank, const size_t *dims);

/*! kw_psf_execute(): psf[prod dims] from the weights w[prod dims] (a 0/1
 * mask or float weights, k = 0 at index N/2 on every axis). No allocation. */
KW_API kw_status kw_psf_execute(const kw_psf_plan *plan, const float *w, kw_cfloat *psf);

/*! kw_psf_destroy(): NULL-safe. */
KW_API void kw_psf_destroy(kw_psf_plan *plan);

/*! kw_psf_ndft(): the non-Cartesian PSF on an m x m pixel grid (pixel size
 * FOV/n, so k in cycles/FOV and x in pixels of an n-point matrix), from the
 * first two columns of k[samples * stride] and weights w (NULL: all 1), by
 * the direct sum in double precision (allocates its own work space: an
 * analysis call, not an inner loop). `progress` may be NULL. */
KW_API kw_status kw_psf_ndft(const float *k, size_t stride, const float *w, size_t samples,
                      size_t n, size_t m, kw_cfloat *psf,
                      kw_progress_fn progress, void *user);

/*! kw_psf_measure(): the figures above for a centred PSF. */
KW_API kw_status kw_psf_measure(const kw_cfloat *psf, int rank, const size_t *dims,
                         kw_psf_metrics *m);

typedef struct kw_tpsf_plan kw_tpsf_plan;

/*! kw_tpsf_create(): plan the transform point spread of ny x nx weights with
 * the dbN wavelet (`order`) over `levels` levels (sizes divisible by
 * 2^levels). */
KW_API kw_status kw_tpsf_create(kw_tpsf_plan **plan, size_t ny, size_t nx, int order, int levels);

/*! kw_tpsf_execute(): coherence[l - 1] for l = 1 .. levels (finest first),
 * from the weights w[ny * nx] (k = 0 at the centre). No allocation. */
KW_API kw_status kw_tpsf_execute(const kw_tpsf_plan *plan, const float *w, double *coherence);

/*! kw_tpsf_destroy(): NULL-safe. */
KW_API void kw_tpsf_destroy(kw_tpsf_plan *plan);

/*! kw_psf_fwhm_cartesian(): the FWHM of |psf| on the line through x = 0
 * along each axis, measured on the continuous PSF (the DFT of the weights
 * evaluated at fractional offsets, crossing found by bisection to 1e-9
 * pixel), in pixels; NaN on axes of length 1, N when it never falls to
 * half. A full grid gives the FWHM of the Dirichlet kernel sin(pi y) /
 * (N sin(pi y / N)), 1.207 pixels for large N. */
KW_API kw_status kw_psf_fwhm_cartesian(const float *w, int rank, const size_t *dims, double *fwhm);

/*! kw_psf_fwhm_ndft(): the same for a non-Cartesian PSF (pixels of an
 * n-point matrix), fwhm[0] along y (k column 1) and fwhm[1] along x. */
KW_API kw_status kw_psf_fwhm_ndft(const float *k, size_t stride, const float *w, size_t samples,
                           size_t n, double *fwhm);

/*! kw_mask_gap(): the largest gap of a Cartesian pattern w[ny * nx] (w > 0:
 * sampled), in delta-k: the side of the largest sample-free square (in the
 * chessboard metric) whose centre lies on the half-step grid and is enclosed
 * by samples along its row or along its column. For lines every R-th ky this is R
 * (the step between neighbouring samples); a full grid gives 1, a 2x2
 * lattice 2; the unsampled edges of partial Fourier and of an elliptical
 * cut-off do not count. 0 when nothing is sampled. */
KW_API kw_status kw_mask_gap(const float *w, size_t ny, size_t nx, double *gap);

#ifdef __cplusplus
}
#endif
#endif /* KW_PSF_H */
