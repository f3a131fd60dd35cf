/* kw_metrics.h: image quality against a reference: NRMSE, PSNR, SSIM.
 *
 * All three compare magnitudes (|test| against |ref|), computed in double:
 *   nrmse   = ||test - ref||_2 / ||ref||_2
 *   psnr_db = 20 log10(max|ref| / RMSE),  RMSE = sqrt(mean((test - ref)^2))
 *   ssim    = mean SSIM of Wang, Bovik, Sheikh & Simoncelli 2004 (IEEE TIP
 *             13(4):600-612): Gaussian window sigma 1.5 (11 taps per axis),
 *             K1 = 0.01, K2 = 0.03, L = max|ref| - min|ref|, population
 *             (co)variances, averaged over the pixels whose whole window lies
 *             inside the image (the 5-pixel border is left out).
 * Images of 1 to 3 dimensions: the window is separable along every axis of
 * length >= 11; along a shorter axis the window is not applied (each slice
 * on its own), so a (nz, ny, nx) stack with nz < 11 is scored slice by slice.
 */
#ifndef KW_METRICS_H
#define KW_METRICS_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_scores {
    double nrmse;   /* dimensionless */
    double psnr_db; /* dB; +inf when the images are equal */
    double ssim;    /* -1 .. 1; NaN when the image is too small (see above) */
} kw_scores;

/*! kw_metrics_compute(): scores of `test` against `ref`, both KW_F32 or
 * KW_C64 of the same shape (1-3 dims, or more with leading axes treated as a
 * batch of images). Allocates its own scratch (a one-off call, not a compute
 * loop). KW_EFORMAT on shape mismatch, KW_ENUMERIC on non-finite values or
 * an all-zero reference. */
KW_API kw_status kw_metrics_compute(const kw_array *ref, const kw_array *test,
                             kw_scores *out);

/*! kw_metrics_ssim(): mean SSIM of two real images given as doubles
 * (ndim 1-3, C order, dims[]), with the data range L; the per-pixel SSIM map
 * (same shape) is written to `map` unless it is NULL. KW_ERANGE when no axis
 * is at least 11 samples long; KW_ENUMERIC when L <= 0. */
KW_API kw_status kw_metrics_ssim(const double *ref, const double *test, int ndim,
                          const size_t *dims, double data_range, double *map,
                          double *mean);

/*! kw_metrics_json(): the scores as `kweave score --json` writes them, as
 * JSON text (kw_alloc'd, free with kw_free(); ends with a newline): keys
 * "nrmse", "psnr_db", "ssim", in that order, null where not finite (the
 * PSNR of equal images). The command adds "ref" and "test" (the file
 * names). KW_EINVAL on NULL. */
KW_API kw_status kw_metrics_json(const kw_scores *s, char **json);

#ifdef __cplusplus
}
#endif
#endif /* KW_METRICS_H */
