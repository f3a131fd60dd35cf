/* admm.c: ADMM for the compressed-sensing problem of kw_solvers.h (Boyd,
 * Parikh, Chu, Peleato & Eckstein 2011, Found Trends Mach Learn 3:1, sec. 3.1
 * scaled form and sec. 6.4 for l1 / total variation): split z = A x with
 * A = Psi (wavelet) or A = D (finite differences, TV):
 *   x <- argmin 1/2 ||W^1/2 (E x - y)||^2 + rho/2 ||A x - z + u||^2
 *        i.e. (N + rho A^H A) x = b + rho A^H (z - u), by warm-started CG
 *   z <- shrink(A x + u, lambda/rho)  (complex soft threshold; isotropic
 *        group shrinkage over the gradient's axes for TV)
 *   u <- u + A x - z. */
#include <math.h>
#include <string.h>

#include "kw_tv.h"
#include "nc_solver.h"

/* out = (N + rho A^H A) p; uses g3 (TV) */
static kw_status apply_m(kw_solver *s, double rho, const float complex *p,
                         float complex *out, float complex *tmp)
{
    kw_status st = kw_encoder_normal(s->enc, p, out);
    if (st)
        return st;
    const size_t n = s->n;
    if (s->o.reg == KW_REG_TV) {
        kw_tv_grad(s->ndim, s->dims, p, s->g3);
        kw_tv_grad_adjoint(s->ndim, s->dims, s->g3, tmp);
        for (size_t i = 0; i < n; i++)
            out[i] += (float)rho * tmp[i];
    } else {
        for (size_t i = 0; i < n; i++)
            out[i] += (float)rho * p[i];
    }
    return KW_OK;
}

kw_status kw_admm(kw_solver *s, const float complex *y, float complex *x,
                  kw_progress_fn progress, void *user)
{
    KW_FAIL_IF(!s || !y || !x, KW_EINVAL, "admm: NULL argument");
    KW_FAIL_IF(s->o.reg == KW_REG_NONE, KW_EINVAL, "admm: needs a regulariser");
    double rho = s->o.rho;
    kw_status st;
    if (rho <= 0) {
        double L;
        if ((st = kw_solver_lipschitz(s, &L)))
            return st;
        rho = 0.5 * L; /* common practice, no source */
    }
    s->nlog = 0;
    if ((st = nc_rhs(s, y)))
        return st;
    const size_t n = s->n;
    const int tv = s->o.reg == KW_REG_TV;
    const size_t nz = tv ? (size_t)s->ndim * n : n;
    float complex *r = s->v1, *p = s->v2, *Ap = s->v3, *rhs = s->v4, *tmp = s->v5,
                  *xold = s->v6;
    float complex *z = s->g1, *u = s->g2, *ax = s->g3;
    /* z = A x, u = 0 */
    if (tv)
        kw_tv_grad(s->ndim, s->dims, x, z);
    else if ((st = nc_wav_fwd(s, x, z)))
        return st;
    memset(u, 0, nz * sizeof *u);
    const float th = (float)(s->o.lambda / rho);
    for (int it = 1; it <= s->o.iterations; it++) {
        /* rhs = b + rho A^H (z - u) */
        for (size_t i = 0; i < nz; i++)
            ax[i] = z[i] - u[i];
        if (tv)
            kw_tv_grad_adjoint(s->ndim, s->dims, ax, tmp);
        else if ((st = nc_wav_inv(s, ax, tmp)))
            return st;
        for (size_t i = 0; i < n; i++)
            rhs[i] = s->b[i] + (float)rho * tmp[i];
        memcpy(xold, x, n * sizeof *x);
        /* CG on (N + rho A^H A) x = rhs, warm start */
        if ((st = apply_m(s, rho, x, Ap, tmp)))
            return st;
        for (size_t i = 0; i < n; i++)
            p[i] = r[i] = rhs[i] - Ap[i];
        double rr = nc_dot_re(s, r, r, n);
        for (int k = 0; k < s->o.inner && rr > 0; k++) {
            if ((st = apply_m(s, rho, p, Ap, tmp)))
                return st;
            double pap = nc_dot_re(s, p, Ap, n);
            if (!(pap > 0))
                break;
            float a = (float)(rr / pap);
            for (size_t i = 0; i < n; i++) {
                x[i] += a * p[i];
                r[i] -= a * Ap[i];
            }
            double rn = nc_dot_re(s, r, r, n);
            float b = (float)(rn / rr);
            for (size_t i = 0; i < n; i++)
                p[i] = r[i] + b * p[i];
            rr = rn;
        }
        /* z = shrink(A x + u), u += A x - z */
        if (tv)
            kw_tv_grad(s->ndim, s->dims, x, ax);
        else if ((st = nc_wav_fwd(s, x, ax)))
            return st;
        if (tv) {
            for (size_t i = 0; i < n; i++) {
                double q = 0;
                for (int d = 0; d < s->ndim; d++) {
                    float complex w = ax[(size_t)d * n + i] + u[(size_t)d * n + i];
                    z[(size_t)d * n + i] = w;
                    q += (double)crealf(w) * crealf(w) + (double)cimagf(w) * cimagf(w);
                }
                float a = (float)sqrt(q);
                float f = a > th ? 1.0f - th / a : 0.0f;
                for (int d = 0; d < s->ndim; d++)
                    z[(size_t)d * n + i] *= f;
            }
        } else {
            for (size_t i = 0; i < n; i++) {
                float complex w = ax[i] + u[i];
                float a = cabsf(w);
                z[i] = nc_wav_approx(s, i) ? w : a > th ? w * (1.0f - th / a) : 0.0f;
            }
        }
        for (size_t i = 0; i < nz; i++)
            u[i] += ax[i] - z[i];
        double dx = 0;
        for (size_t i = 0; i < n; i++) {
            float complex d = x[i] - xold[i];
            dx += (double)crealf(d) * crealf(d) + (double)cimagf(d) * cimagf(d);
        }
        double xn = nc_norm(s, x, n);
        double change = xn > 0 ? sqrt(dx) / xn : 0.0;
        if ((st = kw_encoder_normal(s->enc, x, tmp)))
            return st;
        double F = 0.5 * nc_dot_re(s, x, tmp, n) - nc_dot_re(s, x, s->b, n) + 0.5 * s->ywy +
                   s->o.lambda * nc_reg_value(s, x);
        KW_FAIL_IF(!isfinite(F), KW_ENUMERIC, "admm: the objective is not finite");
        if (nc_report(s, progress, user, "admm", it, s->o.iterations, F, change))
            return kw_set_error(KW_ECANCELLED, "admm: cancelled");
        if (change < s->o.stop)
            break;
    }
    return KW_OK;
}
