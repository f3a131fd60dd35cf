/* kw_encoder.h: the encoding operator E = (sampling) F (coil sensitivities),
 * its adjoint E^H and the normal operator E^H W E, for Cartesian (masked)
 * and non-Cartesian sampling, 2-D and 3-D.
 *
 * Image x: dims (C order, (ny, nx) or (nz, ny, nx)), kw_cfloat.
 * Data y: (coils, nk), nk = prod(dims) for Cartesian data (the full k-space
 * grid; unsampled points are zero), nk = nsamples for a trajectory.
 *   (E x)_c = M F (S_c x)      F: centered unitary DFT (kw_fft.h), M: mask
 *   (E x)_c = F_nu (S_c x)     F_nu: the NUFFT of kw_nufft.h
 *   E^H y   = sum_c conj(S_c) F^H (M y_c)
 *   N x     = E^H W E x        W: optional non-negative data weights per k
 *                              point / sample (shared by the coils)
 * For non-Cartesian sampling N is applied by Toeplitz embedding (Wajer &
 * Pruessmann 2001; Fessler, Lee, Olafsson, Shi & Noll 2005, IEEE TSP 53:3393):
 * F_nu^H W F_nu is a convolution with T[d] = 1/prod(N) sum_j w_j
 * exp(2 pi i k_j.d/N), |d_i| < N_i, embedded in a circulant on the grid of
 * twice the size, so one coil costs two FFTs of 2^ndim prod(N) points.
 *
 * Life cycle: create copies sensitivities, mask, weights and trajectory,
 * plans every transform and allocates every buffer; forward/adjoint/normal
 * then allocate nothing. One caller at a time per encoder.
 */
#ifndef KW_ENCODER_H
#define KW_ENCODER_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_encoder kw_encoder;

/* Everything but the image shape: filled with the defaults by
 * kw_encoder_options_init() (one coil of ones, fully sampled Cartesian, no
 * weights, NUFFT defaults), then set what applies. The arrays are copied by
 * kw_encoder_create(). */
typedef struct kw_encoder_options {
    size_t struct_size;        /* set by kw_encoder_options_init() */
    size_t ncoils;             /* coils (default 1) */
    const kw_cfloat *sens;     /* ncoils x prod(dims) maps, or NULL: one coil of ones */
    const uint8_t *mask;       /* Cartesian: prod(dims) bytes, nonzero = sampled;
                                  NULL = all */
    size_t nsamples;           /* non-Cartesian: samples of `trajectory` */
    const float *trajectory;   /* nsamples x ndim, cycles/FOV (kw_nufft.h), or
                                  NULL: Cartesian */
    const float *weights;      /* W: nk floats >= 0, or NULL */
    double tolerance;          /* NUFFT tolerance (0: 1e-3); see kw_nufft.h */
    double oversampling;       /* NUFFT oversampling (0: chosen) */
    int nthreads;              /* <= 0: OpenMP's default */
    int measure;               /* FFTW_MEASURE plans */
    int direct_normal;         /* non-Cartesian: E^H W E as adjoint(forward) instead
                                  of Toeplitz embedding (for checks) */
} kw_encoder_options;

/*! kw_encoder_options_init(): the defaults, struct_size set. */
KW_API void kw_encoder_options_init(kw_encoder_options *o);

/*! kw_encoder_create(): E for an image of `ndim` (2 or 3) axes `dims` (C
 * order) with the coils, maps, sampling and weights of `options` (NULL: the
 * defaults). Errors name the field at fault (kw_last_error_param():
 * "ncoils", "sens", "mask", "nsamples", "options", ...). */
KW_API kw_status kw_encoder_create(kw_encoder **enc, int ndim, const size_t *dims,
                                   const kw_encoder_options *options);

/*! kw_encoder_forward(): y = E x. x: prod(dims); y: ncoils x nk. */
KW_API kw_status kw_encoder_forward(kw_encoder *enc, const kw_cfloat *x,
                             kw_cfloat *y);

/*! kw_encoder_adjoint(): x = E^H y (no weights). */
KW_API kw_status kw_encoder_adjoint(kw_encoder *enc, const kw_cfloat *y,
                             kw_cfloat *x);

/*! kw_encoder_normal(): out = E^H W E x (x and out may not alias). */
KW_API kw_status kw_encoder_normal(kw_encoder *enc, const kw_cfloat *x,
                            kw_cfloat *out);

/*! Sizes: image samples prod(dims), k points per coil nk, coils, and the
 * weights (NULL when none were given). */
KW_API size_t kw_encoder_image_size(const kw_encoder *enc);
KW_API size_t kw_encoder_kpoints(const kw_encoder *enc);
KW_API size_t kw_encoder_coils(const kw_encoder *enc);
KW_API const float *kw_encoder_weights(const kw_encoder *enc);

/*! kw_encoder_destroy(): free (NULL-safe). */
KW_API void kw_encoder_destroy(kw_encoder *enc);

#ifdef __cplusplus
}
#endif
#endif /* KW_ENCODER_H */
