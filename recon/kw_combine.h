/* kw_combine.h: noise prewhitening and coil combination.
 *
 * Coil data are (ncoil, npix) blocks, C order, kw_cfloat. Sensitivities
 * have the same layout. Every routine works in place or into caller buffers
 * and allocates nothing except where stated.
 *
 * Prewhitening: with the coil noise covariance Psi = L L^H (Cholesky), the
 * data L^-1 m have identity noise covariance (Pruessmann et al. 2001, MRM
 * 46:638, appendix; Roemer et al. 1990). Sensitivities must be whitened with
 * the same L^-1 before they are used on whitened data.
 */
#ifndef KW_COMBINE_H
#define KW_COMBINE_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum kw_combine_mode {
    KW_COMBINE_RSS = 0,  /* root-sum-of-squares */
    KW_COMBINE_OPTIMAL,  /* Roemer et al. 1990, MRM 16:192: S^H m / S^H S */
    KW_COMBINE_ADAPTIVE  /* Walsh, Gmitro & Marcellin 2000, MRM 43:682 */
} kw_combine_mode;

/*! kw_prewhiten_matrix(): from the noise covariance `cov` (ncoil x ncoil,
 * Hermitian positive definite) the whitening matrix W = L^-1 (lower
 * triangular, ncoil x ncoil, written to `w`). KW_ENUMERIC when `cov` is not
 * positive definite or not Hermitian (relative tolerance 1e-4). */
KW_API kw_status kw_prewhiten_matrix(const kw_cfloat *cov, size_t ncoil,
                              kw_cfloat *w);

/*! kw_prewhiten_apply(): data (ncoil, npts) <- W data, in place. */
KW_API void kw_prewhiten_apply(const kw_cfloat *w, size_t ncoil, size_t npts,
                        kw_cfloat *data);

/*! kw_combine_rss(): out[p] = sqrt(sum_c |m_c(p)|^2). */
KW_API void kw_combine_rss(const kw_cfloat *coil, size_t ncoil, size_t npix,
                    float *out);

/*! kw_combine_optimal(): the SNR-optimal combination of Roemer et al. 1990
 * for whitened data and whitened sensitivities:
 * out[p] = sum_c conj(S_c) m_c / sum_c |S_c|^2, 0 where sum_c |S_c|^2 = 0.
 * The result is the object in the intensity scale of the sensitivities. */
KW_API void kw_combine_optimal(const kw_cfloat *coil, const kw_cfloat *sens,
                        size_t ncoil, size_t npix, kw_cfloat *out);

/*! kw_combine_adaptive(): adaptive combination after Walsh et al. 2000: at
 * every pixel the weights are the dominant eigenvector v of the signal
 * correlation matrix sum m m^H over a (2r+1)^ndim neighbourhood of the
 * whitened coil images; out = v^H m, with the phase of v fixed so that
 * v_0 is real and non-negative. `dims` = (nz, ny, nx) (nz = 1 for 2-D).
 * `vec` (ncoil x npix, may be NULL) receives the unit-norm weight vectors:
 * these are the relative sensitivities of the Walsh eigenvector method.
 * Allocates its own scratch (ncoil^2 doubles per thread). */
KW_API kw_status kw_combine_adaptive(const kw_cfloat *coil, size_t ncoil,
                              const size_t dims[3], int radius,
                              kw_cfloat *out, kw_cfloat *vec);

#ifdef __cplusplus
}
#endif
#endif /* KW_COMBINE_H */
