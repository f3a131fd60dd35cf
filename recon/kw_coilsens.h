/* kw_coilsens.h: what Cartesian k-space tells about its own sampling
 * (uniform acceleration, the autocalibration block, partial Fourier extent),
 * and coil sensitivities estimated from the autocalibration block.
 *
 * Axes are (z, y, x) = (d[0], d[1], d[2]); 2-D data have d[0] = 1. Index i
 * of an axis of length N stands for k = i - N/2 (docs/api.md). */
#ifndef KW_COILSENS_H
#define KW_COILSENS_H

#include <stdint.h>

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_cart_sampling {
    int accel[3];      /* uniform acceleration per axis; 1 = every line */
    int offset[3];     /* sampled lattice lines are offset + accel * j */
    size_t acs_lo[3];  /* the fully sampled block around k = 0 ...      */
    size_t acs_n[3];   /* ... its first index and length per axis (0: none) */
    size_t lo[3], hi[3]; /* first and last sampled index per axis */
    int partial[3];    /* 1: the sampled extent is asymmetric about k = 0 (by
                          more than a lattice step; irregular sampling: by at
                          least 1/16 of the axis) */
    int uniform;       /* 1: samples = lattice within the extent + ACS block */
    double fraction;   /* sampled points / all points */
} kw_cart_sampling;

/*! kw_cart_sampling_analyse(): read the sampling from a mask (1 = sampled,
 * npix = d[0] d[1] d[2] bytes). KW_EFORMAT when nothing is sampled. A mask
 * that is not a uniform lattice (random, Poisson-disc, shifted lattices)
 * is reported with uniform = 0 and accel[] = 1. */
KW_API kw_status kw_cart_sampling_analyse(const uint8_t *mask, const size_t d[3],
                                   kw_cart_sampling *s);

/*! kw_cart_mask(): the sampling mask of k-space (nc, npix): 1 where any coil
 * holds a nonzero sample (docs/api.md: unsampled points are zeros). */
KW_API void kw_cart_mask(const kw_cfloat *ksp, size_t nc, size_t npix, uint8_t *mask);

/*! kw_coilsens_walsh(): relative coil sensitivities (nc, npix) from the
 * autocalibration block of `ksp` (nc, npix): the block is Hann-windowed
 * along the axes where it is shorter than the matrix (common practice),
 * transformed to low-resolution coil images, and at every pixel the
 * dominant eigenvector of the local coil correlation matrix (5^2 or 5^3
 * neighbourhood) is taken as the sensitivity (Walsh, Gmitro & Marcellin
 * 2000, MRM 43:682): sum_c |s_c|^2 = 1, s_0 real >= 0. Pixels whose
 * low-resolution root-sum-of-squares is below `thresh` times its maximum are
 * set to zero (outside the object). KW_EINVAL when there is no block (fewer
 * than 4 lines along an accelerated axis). Allocates scratch and an FFT plan. */
KW_API kw_status kw_coilsens_walsh(const kw_cfloat *ksp, size_t nc, const size_t d[3],
                            const kw_cart_sampling *s, double thresh,
                            kw_cfloat *sens);

#ifdef __cplusplus
}
#endif
#endif /* KW_COILSENS_H */
