/* nc_solver.h: internals shared by cg.c, fista.c and admm.c (not public). */
#ifndef NC_SOLVER_H
#define NC_SOLVER_H

#include "kw_solvers.h"
#include "kw_wavelet.h"

struct kw_solver {
    kw_encoder *enc;
    kw_solver_options o;
    int ndim;
    size_t dims[3], n, ndata;
    double L;                      /* 0 until estimated */
    double ywy;                    /* y^H W y of the current data */
    kw_wavelet_plan *wav;          /* one slice */
    size_t slice, nslices;
    float complex *b, *v1, *v2, *v3, *v4, *v5, *v6; /* n each */
    float complex *g1, *g2, *g3;   /* ndim x n each (TV) */
    float complex *ybuf;           /* ndata */
    kw_iter_record *log;
    size_t nlog;
    int nthreads;                  /* OpenMP threads at create: the loops' cap */
    double *part;                  /* nthreads partial sums (nc_dot_re) */
};

/* vector helpers, double accumulation: Re a^H b over n samples, summed per
 * thread over fixed static blocks (at most s->nthreads threads), then the
 * partial sums in thread order: deterministic for the solver's thread count */
double nc_dot_re(kw_solver *s, const float complex *a, const float complex *b, size_t n);
double nc_norm(kw_solver *s, const float complex *a, size_t n);
/* b = E^H W y and ywy (uses s->ybuf) */
kw_status nc_rhs(kw_solver *s, const float complex *y);
/* R(x) for the regulariser (uses v6 / g3 as scratch) */
double nc_reg_value(kw_solver *s, const float complex *x);
/* Psi x and Psi^H c, slice by slice; in place allowed */
kw_status nc_wav_fwd(kw_solver *s, const float complex *x, float complex *c);
kw_status nc_wav_inv(kw_solver *s, const float complex *c, float complex *x);
/* coefficient i of the packed wavelet image lies in the coarsest
 * approximation band, which is not thresholded (it is not sparse) */
int nc_wav_approx(const kw_solver *s, size_t i);
int nc_report(kw_solver *s, kw_progress_fn fn, void *user, const char *stage,
              int iter, int niter, double objective, double change);

#endif
