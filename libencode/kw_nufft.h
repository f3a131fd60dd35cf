/* kw_nufft.h: the non-uniform FFT in 2-D and 3-D, both directions.
 *
 * Definition (docs/api.md's centered unitary DFT, evaluated off the grid): for
 * an image x of shape dims (C order: (ny, nx) or (nz, ny, nx)), pixel index
 * i_d standing for n_d = i_d - floor(N_d/2), and a trajectory point k_j in
 * cycles per FOV (k_j[d] in [-N_d/2, N_d/2), columns in x, y(, z) order),
 *   forward  y_j = 1/sqrt(prod N) sum_n x[n] exp(-2 pi i sum_d k_jd n_d / N_d)
 *   adjoint  x[n] = 1/sqrt(prod N) sum_j y_j exp(+2 pi i sum_d k_jd n_d / N_d)
 * so that on a Cartesian trajectory (integers -N/2..N/2-1) the forward
 * transform equals kw_fft_forward and the adjoint equals kw_fft_inverse.
 *
 * Method: gridding with a Kaiser-Bessel kernel (Jackson et al. 1991) with
 * beta from Beatty, Nishimura & Pauly 2005, on a grid oversampled by
 * alpha in [1.25, 2], deapodised by the kernel's exact Fourier transform.
 * The kernel width is chosen from the requested tolerance (relative l2 error,
 * 1e-2 .. 1e-6; see docs/noncartesian.md for the measured table).
 *
 * Life cycle: kw_nufft_create() checks and sorts the trajectory into tiles,
 * precomputes every kernel weight, makes the FFTW plans and every buffer;
 * kw_nufft_forward()/kw_nufft_adjoint() then run any batch of coils, any
 * number of times, without allocating (OpenMP threads over tiles; no two
 * threads write the same grid point: tiles are processed in 2^ndim colour
 * classes whose halos do not overlap). A plan is used by one caller at a time.
 *
 * Threads: the plan records its thread count at create (opts->nthreads, or
 * omp_get_max_threads() then; kw_nufft_get_info() reports it), sizes its
 * per-thread spreading buffers and its FFTW plans for it, and every parallel
 * loop of forward, adjoint and convolve runs num_threads of that count: sized
 * for the threads at create; never runs more, whatever omp_set_num_threads()
 * says later. Spreading adds the tiles colour by colour and interpolation
 * writes each sample once, so results depend on the create-time count only
 * through FFTW's plan (bit-identical for the same plan; tests/test_threads.c).
 * One plan per thread for execute.
 */
#ifndef KW_NUFFT_H
#define KW_NUFFT_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_nufft_plan kw_nufft_plan;

/* The plan's options: kw_nufft_options_init() fills the defaults (tolerance
 * 1e-3, oversampling 2, OpenMP's default thread count, FFTW_ESTIMATE), then
 * set what applies. */
typedef struct kw_nufft_options {
    size_t struct_size;  /* sizeof, set by kw_nufft_options_init() */
    double tolerance;    /* requested relative l2 error, 1e-6 .. 1e-2 (default
                            1e-3; 0 also means 1e-3) */
    double oversampling; /* grid oversampling alpha in [1.25, 2] (default 2;
                            0 also means 2) */
    int nthreads;        /* OpenMP threads (default 0; <= 0: OpenMP's default) */
    int measure;         /* nonzero: FFTW_MEASURE plans (default 0: FFTW_ESTIMATE) */
} kw_nufft_options;

/*! kw_nufft_options_init(): the defaults above, struct_size = sizeof *o. */
KW_API void kw_nufft_options_init(kw_nufft_options *o);

/*! kw_nufft_create(): plan for an image of `ndim` (2 or 3) axes `dims` (C
 * order) and `nsamples` points `traj` (nsamples x ndim floats, cycles/FOV,
 * column 0 = x = last image axis). `opts` may be NULL (defaults); a struct
 * never initialised (struct_size 0) is refused naming "options". The
 * trajectory is copied. Fails with KW_ERANGE for a point outside
 * [-N/2, N/2) or a tolerance/oversampling out of range, KW_ENUMERIC for
 * NaN/Inf coordinates. */
KW_API kw_status kw_nufft_create(kw_nufft_plan **plan, int ndim, const size_t *dims,
                          size_t nsamples, const float *traj,
                          const kw_nufft_options *opts);

/*! kw_nufft_forward(): image -> samples for `batch` coils: img is
 * (batch, dims...), ksp is (batch, nsamples). */
KW_API kw_status kw_nufft_forward(kw_nufft_plan *plan, const kw_cfloat *img,
                           kw_cfloat *ksp, size_t batch);

/*! kw_nufft_adjoint(): samples -> image (the exact adjoint of forward). */
KW_API kw_status kw_nufft_adjoint(kw_nufft_plan *plan, const kw_cfloat *ksp,
                           kw_cfloat *img, size_t batch);

/* What the plan chose. */
typedef struct kw_nufft_info {
    int ndim;
    size_t dims[3];     /* image (C order) */
    size_t grid[3];     /* oversampled grid (C order) */
    double oversampling;/* requested alpha (grid[d] >= alpha * dims[d]) */
    int width;          /* kernel width W in grid points */
    double beta;        /* Kaiser-Bessel shape */
    double tolerance;   /* as requested */
    size_t nsamples;
    size_t ntiles;
    int nthreads;
} kw_nufft_info;

/*! kw_nufft_get_info(): fill `info` from a plan. */
KW_API kw_status kw_nufft_get_info(const kw_nufft_plan *plan, kw_nufft_info *info);

/*! kw_nufft_params(): the kernel width and beta the plan would choose for a
 * tolerance and an oversampling factor (both validated). */
KW_API kw_status kw_nufft_params(double tolerance, double oversampling, int *width,
                          double *beta);

/*! kw_nufft_convolve(): out_j = sum_l in_l c(k_j - k_l), c the kernel
 * convolved with itself through the oversampled grid, scaled so that a
 * fully sampled Cartesian trajectory of ones gives ~1 (no FFT; used by the
 * density compensation of Pipe & Menon 1999). One coil; in and out may not
 * alias. */
KW_API kw_status kw_nufft_convolve(kw_nufft_plan *plan, const kw_cfloat *in,
                            kw_cfloat *out);

/*! kw_nufft_destroy(): free (NULL-safe). */
KW_API void kw_nufft_destroy(kw_nufft_plan *plan);

/*! kw_ndft_forward()/kw_ndft_adjoint(): the same transforms evaluated
 * directly in double (O(samples x pixels)): the exact reference for tests
 * and small problems. One coil. */
KW_API kw_status kw_ndft_forward(int ndim, const size_t *dims, size_t nsamples,
                          const float *traj, const kw_cfloat *img,
                          kw_cfloat *ksp);
KW_API kw_status kw_ndft_adjoint(int ndim, const size_t *dims, size_t nsamples,
                          const float *traj, const kw_cfloat *ksp,
                          kw_cfloat *img);

#ifdef __cplusplus
}
#endif
#endif /* KW_NUFFT_H */
