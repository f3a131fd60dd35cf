/* fista.c: FISTA for the compressed-sensing problem of kw_solvers.h
 * (Beck & Teboulle 2009, SIAM J Imaging Sci 2:183, Algorithm FISTA with
 * constant step 1/L). One application of N per iteration: the gradient at
 * the extrapolated point z = x_k + beta (x_k - x_k-1) comes from linearity,
 * N z = N x_k + beta (N x_k - N x_k-1), and N x_k also gives F(x_k). */
#include <math.h>
#include <string.h>

#include "kw_tv.h"
#include "nc_solver.h"

/* c <- c max(0, 1 - t/|c|) except on the coarsest approximation band;
 * returns the sum of |c| over the thresholded coefficients after shrinking */
static double soft(const kw_solver *sv, float complex *c, size_t n, float t)
{
    double s = 0;
    for (size_t i = 0; i < n; i++) {
        if (nc_wav_approx(sv, i))
            continue;
        float a = cabsf(c[i]);
        if (a <= t) {
            c[i] = 0;
        } else {
            c[i] *= 1.0f - t / a;
            s += a - t;
        }
    }
    return s;
}

kw_status kw_fista(kw_solver *s, const float complex *y, float complex *x,
                   kw_progress_fn progress, void *user)
{
    KW_FAIL_IF(!s || !y || !x, KW_EINVAL, "fista: NULL argument");
    double L;
    kw_status st = kw_solver_lipschitz(s, &L);
    if (st)
        return st;
    s->nlog = 0;
    st = nc_rhs(s, y);
    if (st)
        return st;
    const size_t n = s->n;
    const float mu = (float)(s->o.lambda / L), step = (float)(1.0 / L);
    float complex *xp = s->v1, *Nx = s->v2, *Nxp = s->v3, *v = s->v4, *c = s->v5;
    st = kw_encoder_normal(s->enc, x, Nx);
    if (st)
        return st;
    memcpy(xp, x, n * sizeof *x);
    memcpy(Nxp, Nx, n * sizeof *x);
    if (s->o.reg == KW_REG_TV)
        memset(s->g1, 0, (size_t)s->ndim * n * sizeof *x);
    double t = 1.0;
    for (int it = 1; it <= s->o.iterations; it++) {
        double tn = 0.5 * (1.0 + sqrt(1.0 + 4.0 * t * t));
        float beta = (float)((t - 1.0) / tn);
        for (size_t i = 0; i < n; i++) {
            float complex z = x[i] + beta * (x[i] - xp[i]);
            float complex Nz = Nx[i] + beta * (Nx[i] - Nxp[i]);
            v[i] = z - step * (Nz - s->b[i]);
        }
        memcpy(xp, x, n * sizeof *x);
        float complex *tmp = Nxp;
        Nxp = Nx;
        Nx = tmp;
        double reg = 0;
        if (s->o.reg == KW_REG_WAVELET) {
            if ((st = nc_wav_fwd(s, v, c)))
                return st;
            reg = soft(s, c, n, mu); /* ||Psi x||_1 of the new x */
            if ((st = nc_wav_inv(s, c, x)))
                return st;
        } else if (s->o.reg == KW_REG_TV) {
            kw_tv_prox(s->ndim, s->dims, v, mu, s->o.inner, s->g1, s->g2, x);
            reg = kw_tv_value(s->ndim, s->dims, x, s->g3);
        } else {
            memcpy(x, v, n * sizeof *x);
        }
        if ((st = kw_encoder_normal(s->enc, x, Nx)))
            return st;
        double F = 0.5 * nc_dot_re(s, x, Nx, n) - nc_dot_re(s, x, s->b, n) + 0.5 * s->ywy +
                   s->o.lambda * reg;
        double dx = 0;
        for (size_t i = 0; i < n; i++) {
            float complex d = x[i] - xp[i];
            dx += (double)crealf(d) * crealf(d) + (double)cimagf(d) * cimagf(d);
        }
        double xn = nc_norm(s, x, n);
        double change = xn > 0 ? sqrt(dx) / xn : 0.0;
        KW_FAIL_IF(!isfinite(F), KW_ENUMERIC, "fista: the objective is not finite");
        if (nc_report(s, progress, user, "fista", it, s->o.iterations, F, change))
            return kw_set_error(KW_ECANCELLED, "fista: cancelled");
        if (change < s->o.stop)
            break;
        t = tn;
    }
    return KW_OK;
}
