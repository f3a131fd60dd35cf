/* kw_wavelet.h: multilevel 2-D orthogonal Daubechies wavelet transform with
 * periodic boundaries (single precision; real or complex data).
 *
 * The transform is orthonormal: the forward transform preserves energy and the
 * inverse is its transpose, so inverse(forward(x)) == x to rounding. It matches
 * PyWavelets coefficient by coefficient:
 *     c = pywt.wavedec2(x, 'dbN', mode='periodization', level=L)
 *     packed, _ = pywt.coeffs_to_array(c)
 * (checked in tests/ref/test_wavelet_pywt.py to 1e-5 relative).
 *
 * Packed coefficient layout (the same shape as the image, ny x nx, C order):
 * with h = ny / 2^l and w = nx / 2^l at level l = 1 (finest) .. L (coarsest),
 *     [0:h,   0:w]    approximation (only for l = L): top-left corner
 *     [0:h,   w:2w]   detail, high-pass along x (columns), low-pass along y
 *                     (pywt 'ad', the "vertical" detail cV)
 *     [h:2h,  0:w]    detail, high-pass along y (rows), low-pass along x
 *                     (pywt 'da', the "horizontal" detail cH)
 *     [h:2h,  w:2w]   diagonal detail (pywt 'dd')
 * so the coarsest bands sit in the top-left corner and level 1 fills the
 * outer three quarters.
 *
 * One level along a line of even length N, with Daubechies' scaling filter
 * h[0..F-1] (F = 2 x order; Daubechies 1992, "Ten Lectures on Wavelets",
 * Table 6.1) and the quadrature-mirror filter b[m] = (-1)^m h[F-1-m]:
 *     a[k] = sum_m h[m] x[(2k + 1 - F/2 + m) mod N]    k = 0 .. N/2-1
 *     d[k] = sum_m b[m] x[(2k + 1 - F/2 + m) mod N]
 * (the index origin is pywt's for mode='periodization').
 *
 * Life cycle (DEVELOPERS.md): kw_wavelet_create() checks the sizes and allocates
 * one scratch image; execute calls do not allocate. One plan must not run two
 * transforms at the same time (the scratch is shared): use one plan per
 * thread. Every dimension must be divisible by 2^levels.
 *
 * Threads: the plan is sized for the threads at create and never runs more
 * (its loops run at most omp_get_max_threads() of create, whatever
 * omp_set_num_threads() says later). Each coefficient is computed by one
 * thread in a fixed order: bit-identical for any thread count. One plan per
 * thread for execute.
 */
#ifndef KW_WAVELET_H
#define KW_WAVELET_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_wavelet_plan kw_wavelet_plan;

/* Supported Daubechies orders: db1 (Haar) .. db4. */
#define KW_WAVELET_MIN_ORDER 1
#define KW_WAVELET_MAX_ORDER 4

/*! kw_wavelet_filter(): the scaling (low-pass reconstruction) filter of dbN,
 * `order` = N, written to h[0 .. 2N-1] (sum sqrt(2), unit norm); *len = 2N.
 * It equals pywt.Wavelet('dbN').rec_lo; pywt's dec_lo is its reverse.
 * KW_EINVAL for an unsupported order. */
KW_API kw_status kw_wavelet_filter(int order, double *h, int *len);

/*! kw_wavelet_max_levels(): the largest L such that ny and nx are both
 * divisible by 2^L (at most 30). 0 when either is odd. */
KW_API int kw_wavelet_max_levels(size_t ny, size_t nx);

/*! kw_wavelet_create(): plan a `levels`-level transform of ny x nx images
 * with the dbN wavelet (`order` = N in 1..4). `levels` = 0 is the identity.
 * KW_EINVAL when a size is not divisible by 2^levels or the order is
 * unsupported; KW_ENOMEM when the scratch cannot be allocated. */
KW_API kw_status kw_wavelet_create(kw_wavelet_plan **plan, int order, size_t ny,
                            size_t nx, int levels);

/*! kw_wavelet_forward(): real image (ny x nx) -> packed coefficients
 * (ny x nx). `in` and `out` may be the same buffer. */
KW_API kw_status kw_wavelet_forward(const kw_wavelet_plan *plan, const float *in,
                             float *out);

/*! kw_wavelet_inverse(): packed coefficients -> real image. In place allowed. */
KW_API kw_status kw_wavelet_inverse(const kw_wavelet_plan *plan, const float *in,
                             float *out);

/*! kw_wavelet_forward_c() / kw_wavelet_inverse_c(): the same for complex
 * data: the real and imaginary parts are transformed independently (the
 * filters are real). In place allowed. */
KW_API kw_status kw_wavelet_forward_c(const kw_wavelet_plan *plan,
                               const kw_cfloat *in, kw_cfloat *out);
KW_API kw_status kw_wavelet_inverse_c(const kw_wavelet_plan *plan,
                               const kw_cfloat *in, kw_cfloat *out);

/*! kw_wavelet_levels(), kw_wavelet_order(): what the plan was made with. */
KW_API int kw_wavelet_levels(const kw_wavelet_plan *plan);
KW_API int kw_wavelet_order(const kw_wavelet_plan *plan);

/*! kw_wavelet_destroy(): free the plan (NULL-safe). */
KW_API void kw_wavelet_destroy(kw_wavelet_plan *plan);

#ifdef __cplusplus
}
#endif
#endif /* KW_WAVELET_H */
