/* kw_solvers.h: iterative reconstruction on an encoding operator
 * (kw_encoder.h): CG-SENSE, and compressed sensing by FISTA and ADMM.
 *
 * Problems, with N = E^H W E and b = E^H W y (W the encoder's data weights,
 * identity if none):
 *   CG-SENSE  N x = b by conjugate gradients (Pruessmann, Weiger, Boernert &
 *             Boesiger 2001, Magn Reson Med 46:638; Hestenes & Stiefel 1952)
 *   CS        min_x F(x) = 1/2 ||W^1/2 (E x - y)||^2 + lambda R(x)
 *             (Lustig, Donoho & Pauly 2007, Magn Reson Med 58:1182) with
 *             R = ||Psi x||_1 over the detail bands, Psi an orthogonal
 *             Daubechies wavelet (periodic; recon/kw_wavelet.h; 3-D: slice
 *             by slice; the coarsest approximation band is not penalised,
 *             common practice: it is not sparse), or
 *             R = TV(x) (recon/kw_tv.h),
 *             by FISTA (Beck & Teboulle 2009, SIAM J Imaging Sci 2:183) or
 *             ADMM (Boyd, Parikh, Chu, Peleato & Eckstein 2011, sec. 6).
 * Stopping: after `iterations`, or when ||x_k - x_k-1|| / ||x_k|| < stop
 * (CG: ||r_k|| / ||b|| < stop).
 *
 * Life cycle: kw_solver_create() allocates every vector (and the wavelet
 * plan); the solve calls allocate nothing and may be repeated. Each solve
 * records an iteration log (iteration, objective, change) and reports each
 * iteration through the progress callback (nonzero return: KW_ECANCELLED).
 *
 * Threads: a solver is sized for the threads at create; never runs more: its
 * inner products run at most the omp_get_max_threads() of kw_solver_create(),
 * whatever omp_set_num_threads() says later (the encoder and wavelet plans
 * keep their own counts, made at their create). The inner products add one
 * partial sum per thread in thread order, so a solve is bit-identical from
 * run to run for the same create-time count; other counts differ by
 * rounding (tests/test_threads.c). One solver per thread for the solves
 * (vectors, log and the encoder are written).
 */
#ifndef KW_SOLVERS_H
#define KW_SOLVERS_H

#include "kw_base.h"
#include "kw_encoder.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum kw_regulariser {
    KW_REG_NONE = 0,
    KW_REG_WAVELET = 1,
    KW_REG_TV = 2
} kw_regulariser;

/* The solver's options: kw_solver_options_init() fills the defaults (100
 * iterations, stop 1e-5, lambda 0, no regulariser, db4 on as many levels as
 * the sizes allow up to 4, rho L/2, 10 inner steps), then set what applies. */
typedef struct kw_solver_options {
    size_t struct_size; /* sizeof, set by kw_solver_options_init() */
    int iterations;     /* maximum (default 100; <= 0 also means 100) */
    double stop;        /* relative change/residual to stop at (default 1e-5;
                           <= 0 also means 1e-5) */
    double lambda;      /* regularisation weight, >= 0 (default 0) */
    kw_regulariser reg; /* default KW_REG_NONE */
    int wavelet_order;  /* Daubechies dbN, N in 1..4 (default 4; 0 also means 4) */
    int wavelet_levels; /* default 0: as many as the sizes allow, at most 4 */
    double rho;         /* ADMM penalty (default 0; <= 0: L/2, L = ||N||) */
    int inner;          /* TV prox dual steps (FISTA) / CG steps (ADMM)
                           (default 10; <= 0 also means 10) */
} kw_solver_options;

/*! kw_solver_options_init(): the defaults above, struct_size = sizeof *o. */
KW_API void kw_solver_options_init(kw_solver_options *o);

typedef struct kw_iter_record {
    int iter;          /* 1-based */
    double objective;  /* F(x_k) (CG: 1/2 x^H N x - Re x^H b, the quadratic) */
    double change;     /* ||x_k - x_k-1|| / ||x_k|| (CG: ||r_k|| / ||b||) */
} kw_iter_record;

typedef struct kw_solver kw_solver;

/*! kw_solver_create(): a solver for `enc` whose image has `ndim` axes
 * `dims` (as the encoder's), with `opts` (NULL: the defaults; a struct never
 * initialised, struct_size 0, is refused naming "options"). KW_ERANGE for a
 * negative lambda or a stop outside [0, 1); KW_ENOTSUP for a wavelet on
 * sizes not divisible by 2. */
KW_API kw_status kw_solver_create(kw_solver **s, kw_encoder *enc, int ndim,
                           const size_t *dims, const kw_solver_options *opts);

/*! kw_cg_sense(): x = N^-1 b from x's content as the start (zero it for
 * the usual start). y: the data (coils x nk). */
KW_API kw_status kw_cg_sense(kw_solver *s, const kw_cfloat *y, kw_cfloat *x,
                      kw_progress_fn progress, void *user);

/*! kw_fista() / kw_admm(): the CS problem above, from x's content. */
KW_API kw_status kw_fista(kw_solver *s, const kw_cfloat *y, kw_cfloat *x,
                   kw_progress_fn progress, void *user);
KW_API kw_status kw_admm(kw_solver *s, const kw_cfloat *y, kw_cfloat *x,
                  kw_progress_fn progress, void *user);

/*! kw_solver_log(): the last solve's records (valid until the next solve);
 * returns their count. */
KW_API size_t kw_solver_log(const kw_solver *s, const kw_iter_record **rec);

/*! kw_solver_lipschitz(): ||N|| estimated by power iteration (cached after
 * the first call; FISTA's step is 1/L). */
KW_API kw_status kw_solver_lipschitz(kw_solver *s, double *L);

/*! kw_solver_objective(): F(x) for the solver's problem and data y (one
 * normal-operator application). */
KW_API kw_status kw_solver_objective(kw_solver *s, const kw_cfloat *y,
                              const kw_cfloat *x, double *F);

/*! kw_solver_destroy(): free (NULL-safe). */
KW_API void kw_solver_destroy(kw_solver *s);

#ifdef __cplusplus
}
#endif
#endif
