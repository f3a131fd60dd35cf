/* kw_rssrecon.h: the fused Cartesian multi-coil reconstruction
 *   image = sqrt(sum_c |centered unitary inverse DFT(k_c)|^2)
 * made for speed: the input k-space is read, never written; the coils are
 * split into at most 8 fixed groups of consecutive coils, each thread takes
 * whole groups, transforms their coils one by one out of place into its own
 * scratch image and adds the squared magnitudes into the group's sum; the
 * group sums are then added in order. The grouping depends on the coil count
 * only, so the image is bit-identical for any number of threads. For even sizes the
 * input checkerboard of the centering shift changes only the phase, which the
 * magnitude never sees, and the output shift becomes an index offset in the
 * accumulation (see fft.c for the identity), so no pass over the data is
 * spent on shifts. Odd sizes fall back on kw_fft.
 *
 * Threads: the plan is sized for the threads at create (kw_fft_threads(), at
 * most the number of groups; one for odd sizes) and never runs more, whatever
 * omp_set_num_threads() says later. One plan per thread for execute (the
 * scratch and group sums are the plan's). */
#ifndef KW_RSSRECON_H
#define KW_RSSRECON_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_rssrecon kw_rssrecon;

/*! kw_rssrecon_create(): plan for `coils` images of ny x nx (rank 2) or
 * nz x ny x nx (rank 3, dims = {nz, ny, nx}). flags: KW_FFT_ESTIMATE or
 * KW_FFT_MEASURE (kw_fft.h). Uses kw_fft_threads() threads. */
KW_API kw_status kw_rssrecon_create(kw_rssrecon **r, int rank, const size_t *dims,
                             size_t coils, unsigned flags);

/*! kw_rssrecon_execute(): ksp (coils, dims...) complex64, 16-byte aligned,
 * unchanged; img (dims...) float32 root-sum-of-squares. No allocation. */
KW_API kw_status kw_rssrecon_execute(kw_rssrecon *r, const kw_cfloat *ksp, float *img);

/*! kw_rssrecon_destroy(): NULL-safe. */
KW_API void kw_rssrecon_destroy(kw_rssrecon *r);

#ifdef __cplusplus
}
#endif
#endif
