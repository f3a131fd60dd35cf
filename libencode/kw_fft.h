/* kw_fft.h: batched, centered, unitary FFTs over the last 1-3 axes.
 *
 * The transform is docs/api.md's plain transform: k = 0 (and x = 0) at index
 * floor(N/2) of each axis, scaled by 1/sqrt(N) both ways, so that
 *   kw_fft_inverse == fftshift(ifftn(ifftshift(x), norm="ortho"))
 *   kw_fft_forward == fftshift(fftn(ifftshift(x), norm="ortho"))
 * over the transformed axes (checked against numpy in tests/ref/).
 *
 * Life cycle (DEVELOPERS.md: plan once, execute many): kw_fft_create() makes every
 * FFTW plan; kw_fft_forward()/kw_fft_inverse() run in place on any buffer of
 * batch x prod(dims) samples without allocating (buffers must be 16-byte
 * aligned, which malloc and kw_alloc guarantee); kw_fft_destroy() frees.
 * Planning is not thread-safe (FFTW's rule): make plans from one thread.
 *
 * Threads: a plan is sized for the threads at create and never runs more:
 * FFTW's threads are fixed in the plan (kw_fft_setup()), and the centering
 * modulation runs at most the OpenMP threads of create (omp_get_max_threads())
 * and, once kw_fft_setup() has run, at most kw_fft_threads() of create,
 * whatever omp_set_num_threads() says later. The modulation is elementwise,
 * so the result depends on the FFTW plan only. Execute on one plan from one
 * thread at a time (odd sizes use the plan's scratch): one plan per thread
 * for execute.
 */
#ifndef KW_FFT_H
#define KW_FFT_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_fft_plan kw_fft_plan;

enum {
    KW_FFT_ESTIMATE = 0, /* quick plans (tests, one-off calls) */
    KW_FFT_MEASURE = 1   /* FFTW_MEASURE: slower to plan, faster to run */
};

/*! kw_fft_setup(): once per process before any plan: enables FFTW's threads
 * with `nthreads` (<= 0: one per core as OpenMP sees them). Not thread-safe. */
KW_API kw_status kw_fft_setup(int nthreads);

/*! kw_fft_threads(): the thread count plans are made with. */
KW_API int kw_fft_threads(void);

/*! kw_fft_threads_ready(): nonzero once kw_fft_setup() has run (FFTW's
 * threads are initialised); before that every plan is single-threaded. */
KW_API int kw_fft_threads_ready(void);

/*! kw_fft_create(): plan `batch` transforms of rank 1..3 over contiguous
 * blocks of shape dims[0..rank-1]. flags: KW_FFT_ESTIMATE or KW_FFT_MEASURE. */
KW_API kw_status kw_fft_create(kw_fft_plan **plan, int rank, const size_t *dims,
                        size_t batch, unsigned flags);

/*! kw_fft_forward(): centered unitary forward DFT (image -> k-space), in
 * place over batch x prod(dims) samples. */
KW_API kw_status kw_fft_forward(const kw_fft_plan *plan, kw_cfloat *data);

/*! kw_fft_inverse(): centered unitary inverse DFT (k-space -> image). */
KW_API kw_status kw_fft_inverse(const kw_fft_plan *plan, kw_cfloat *data);

/*! kw_fft_size(): samples per transform (prod(dims)); kw_fft_batch(): batch. */
KW_API size_t kw_fft_size(const kw_fft_plan *plan);
KW_API size_t kw_fft_batch(const kw_fft_plan *plan);

/*! kw_fft_destroy(): free the plan (NULL-safe). */
KW_API void kw_fft_destroy(kw_fft_plan *plan);

/*! kw_fft_wisdom_export(): FFTW wisdom as a string (free with free()), or
 * NULL. kw_fft_wisdom_import(): merge a string made by it; KW_EFORMAT if
 * FFTW rejects it. The caller does the file I/O. */
KW_API char *kw_fft_wisdom_export(void);
KW_API kw_status kw_fft_wisdom_import(const char *wisdom);

/*! kw_fft_set_reproducible(): nonzero: from now on every FFTW plan the library
 * makes (FFT, NUFFT, encoder, root-sum-of-squares) is made by FFTW_ESTIMATE,
 * which times nothing, and the wisdom held is forgotten and no more is
 * imported (FFTW would otherwise use a measured plan from wisdom), so that
 * results are the same bits on every run of one build on one machine,
 * whatever the load, the cache or the process; plans run somewhat slower.
 * Zero: the callers' choice of KW_FFT_MEASURE holds again. Process-wide;
 * call it before making objects. kw_fft_reproducible(): the setting. */
KW_API void kw_fft_set_reproducible(int on);
KW_API int kw_fft_reproducible(void);

#ifdef __cplusplus
}
#endif
#endif /* KW_FFT_H */
