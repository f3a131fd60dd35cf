/* cg.c: the solver object (kw_solvers.h), shared helpers, CG-SENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#ifdef _OPENMP
#include <omp.h>
#endif

#include "kw_tv.h"
#include "nc_solver.h"

/* Re a^H b over floats [lo, hi) of a and b: eight partial sums in double,
 * float j into sum j mod 8, added pairwise at the end (a fixed order that
 * the compiler can keep in vector registers, not one chain of dependent
 * additions). */
static double dot_span(const float *restrict x, const float *restrict y, size_t lo, size_t hi)
{
    double l0 = 0, l1 = 0, l2 = 0, l3 = 0, l4 = 0, l5 = 0, l6 = 0, l7 = 0;
    size_t i = lo;
    for (; i + 8 <= hi; i += 8) {
        l0 += (double)x[i] * y[i];
        l1 += (double)x[i + 1] * y[i + 1];
        l2 += (double)x[i + 2] * y[i + 2];
        l3 += (double)x[i + 3] * y[i + 3];
        l4 += (double)x[i + 4] * y[i + 4];
        l5 += (double)x[i + 5] * y[i + 5];
        l6 += (double)x[i + 6] * y[i + 6];
        l7 += (double)x[i + 7] * y[i + 7];
    }
    double t[8] = {l0, l1, l2, l3, l4, l5, l6, l7};
    for (int j = 0; i < hi; i++, j++)
        t[j] += (double)x[i] * y[i];
    return ((t[0] + t[1]) + (t[2] + t[3])) + ((t[4] + t[5]) + (t[6] + t[7]));
}

/* Thread t of nt: floats [m t / nt, m (t + 1) / nt), rounded down to a
 * multiple of 8 (the last block ends at m). */
static size_t span_at(size_t m, int t, int nt)
{
    if (t >= nt)
        return m;
    return (size_t)((unsigned long long)m * (unsigned)t / (unsigned)nt) & ~(size_t)7;
}

double nc_dot_re(kw_solver *sv, const float complex *a, const float complex *b, size_t n)
{
    const float *x = (const float *)a, *y = (const float *)b;
    const size_t m = 2 * n;
    const int nt = n > 65536 ? sv->nthreads : 1;
    if (nt <= 1)
        return dot_span(x, y, 0, m);
    /* One partial sum per thread over its own block, added in thread order:
     * the result depends on the thread count only (bit-identical from run
     * to run). */
    double *part = sv->part;
#pragma omp parallel num_threads(nt)
    {
        int t = 0, nth = 1;
#ifdef _OPENMP
        t = omp_get_thread_num();
        nth = omp_get_num_threads();
#endif
        /* fewer threads than asked: the blocks of the missing ones too */
        for (int q = t; q < nt; q += nth)
            part[q] = dot_span(x, y, span_at(m, q, nt), span_at(m, q + 1, nt));
    }
    double s = 0;
    for (int t = 0; t < nt; t++)
        s += part[t];
    return s;
}

double nc_norm(kw_solver *sv, const float complex *a, size_t n)
{
    return sqrt(nc_dot_re(sv, a, a, n));
}

kw_status nc_rhs(kw_solver *s, const float complex *y)
{
    const float *w = kw_encoder_weights(s->enc);
    size_t nk = kw_encoder_kpoints(s->enc);
    double ywy = 0;
    for (size_t i = 0; i < s->ndata; i++) {
        float wi = w ? w[i % nk] : 1.0f;
        KW_FAIL_IF(!isfinite(crealf(y[i])) || !isfinite(cimagf(y[i])), KW_ENUMERIC,
                   "k-space: sample %zu is not finite", i);
        s->ybuf[i] = wi * y[i];
        ywy += (double)wi * ((double)crealf(y[i]) * crealf(y[i]) +
                             (double)cimagf(y[i]) * cimagf(y[i]));
    }
    s->ywy = ywy;
    return kw_encoder_adjoint(s->enc, s->ybuf, s->b);
}

kw_status nc_wav_fwd(kw_solver *s, const float complex *x, float complex *c)
{
    for (size_t q = 0; q < s->nslices; q++) {
        kw_status st = kw_wavelet_forward_c(s->wav, x + q * s->slice, c + q * s->slice);
        if (st)
            return st;
    }
    return KW_OK;
}

kw_status nc_wav_inv(kw_solver *s, const float complex *c, float complex *x)
{
    for (size_t q = 0; q < s->nslices; q++) {
        kw_status st = kw_wavelet_inverse_c(s->wav, c + q * s->slice, x + q * s->slice);
        if (st)
            return st;
    }
    return KW_OK;
}

int nc_wav_approx(const kw_solver *s, size_t i)
{
    int L = kw_wavelet_levels(s->wav);
    size_t nx = s->dims[s->ndim - 1], ny = s->dims[s->ndim - 2];
    size_t p = i % s->slice;
    return (p / nx) < (ny >> L) && (p % nx) < (nx >> L);
}

double nc_reg_value(kw_solver *s, const float complex *x)
{
    if (s->o.reg == KW_REG_TV)
        return kw_tv_value(s->ndim, s->dims, x, s->g3);
    if (s->o.reg == KW_REG_WAVELET) {
        if (nc_wav_fwd(s, x, s->v6))
            return NAN;
        double r = 0;
        for (size_t i = 0; i < s->n; i++)
            if (!nc_wav_approx(s, i))
                r += cabsf(s->v6[i]);
        return r;
    }
    return 0.0;
}

int nc_report(kw_solver *s, kw_progress_fn fn, void *user, const char *stage, int iter,
              int niter, double objective, double change)
{
    if (s->nlog < (size_t)s->o.iterations) {
        kw_iter_record *r = &s->log[s->nlog++];
        r->iter = iter;
        r->objective = objective;
        r->change = change;
    }
    if (!fn)
        return 0;
    /* CG reports its relative residual, FISTA and ADMM the relative change of
     * the image: the report names them so ("log_change_name") and so does
     * the progress line. */
    kw_progress p = {stage, iter, niter, change,
                     strcmp(stage, "cg-sense") == 0 ? "residual" : "change"};
    return fn(user, &p);
}

void kw_solver_destroy(kw_solver *s)
{
    if (!s)
        return;
    kw_wavelet_destroy(s->wav);
    float complex *bufs[] = {s->b, s->v1, s->v2, s->v3, s->v4, s->v5, s->v6,
                             s->g1, s->g2, s->g3, s->ybuf};
    for (size_t i = 0; i < sizeof bufs / sizeof *bufs; i++)
        kw_free(bufs[i]);
    kw_free(s->log);
    kw_free(s->part);
    kw_free(s);
}

void kw_solver_options_init(kw_solver_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->iterations = 100;
    o->stop = 1e-5;
    o->reg = KW_REG_NONE;
    o->wavelet_order = 4;
    o->inner = 10;
}

kw_status kw_solver_create(kw_solver **out, kw_encoder *enc, int ndim, const size_t *dims,
                           const kw_solver_options *opts)
{
    KW_FAIL_IF(!out || !enc || !dims, KW_EINVAL, "solver: NULL argument");
    *out = NULL;
    KW_FAIL_IF(ndim != 2 && ndim != 3, KW_EINVAL, "solver: %d dimensions", ndim);
    kw_solver_options o;
    kw_solver_options_init(&o);
    if (opts) {
        kw_status ost = kw_options_take(&o, sizeof o, opts, "options");
        if (ost)
            return ost;
    }
    KW_FAIL_PARAM(!(o.lambda >= 0) || !isfinite(o.lambda), KW_ERANGE, "lambda",
                  "%g (must be >= 0)", o.lambda);
    KW_FAIL_PARAM(!(o.stop < 1) || o.stop != o.stop, KW_ERANGE, "stop",
                  "%g (must be below 1)", o.stop);
    KW_FAIL_PARAM(o.iterations > 100000, KW_ERANGE, "iterations", "%d (at most 100000)",
                  o.iterations);
    if (o.iterations <= 0)
        o.iterations = 100;
    if (o.stop <= 0)
        o.stop = 1e-5;
    if (o.inner <= 0)
        o.inner = 10;
    if (o.wavelet_order == 0)
        o.wavelet_order = 4;
    kw_solver *s = kw_alloc_n(1, sizeof *s);
    KW_FAIL_IF(!s, KW_ENOMEM, "solver: out of memory");
    s->enc = enc;
    s->o = o;
    s->ndim = ndim;
    s->n = 1;
    for (int d = 0; d < ndim; d++) {
        s->dims[d] = dims[d];
        s->n *= dims[d];
    }
    kw_status st = KW_OK;
    KW_FAIL_GOTO(s->n != kw_encoder_image_size(enc), st, KW_EINVAL, fail,
                 "solver: image size %zu differs from the encoder's %zu", s->n,
                 kw_encoder_image_size(enc));
    s->ndata = kw_encoder_coils(enc) * kw_encoder_kpoints(enc);
    if (o.reg == KW_REG_WAVELET) {
        size_t ny = dims[ndim - 2], nx = dims[ndim - 1];
        int lv = o.wavelet_levels;
        if (lv <= 0) {
            lv = kw_wavelet_max_levels(ny, nx);
            if (lv > 4)
                lv = 4;
        }
        KW_FAIL_GOTO(lv < 1, st, KW_ENOTSUP, fail,
                     "wavelet: image %zu x %zu has an odd side", ny, nx);
        st = kw_wavelet_create(&s->wav, o.wavelet_order, ny, nx, lv);
        if (st)
            goto fail;
        s->slice = ny * nx;
        s->nslices = s->n / s->slice;
    }
    size_t nb = s->n * sizeof(float complex);
    s->b = kw_alloc(nb);
    s->v1 = kw_alloc(nb);
    s->v2 = kw_alloc(nb);
    s->v3 = kw_alloc(nb);
    s->v4 = kw_alloc(nb);
    s->v5 = kw_alloc(nb);
    s->v6 = kw_alloc(nb);
    s->ybuf = kw_alloc(s->ndata * sizeof(float complex));
    s->log = kw_alloc_n((size_t)o.iterations, sizeof *s->log);
#ifdef _OPENMP
    s->nthreads = omp_get_max_threads();
#else
    s->nthreads = 1;
#endif
    s->part = kw_alloc_n((size_t)s->nthreads, sizeof *s->part);
    KW_FAIL_GOTO(!s->b || !s->v1 || !s->v2 || !s->v3 || !s->v4 || !s->v5 || !s->v6 ||
                     !s->ybuf || !s->log || !s->part,
                 st, KW_ENOMEM, fail, "solver: out of memory");
    {
        s->g1 = kw_alloc((size_t)ndim * nb);
        s->g2 = kw_alloc((size_t)ndim * nb);
        s->g3 = kw_alloc((size_t)ndim * nb);
        KW_FAIL_GOTO(!s->g1 || !s->g2 || !s->g3, st, KW_ENOMEM, fail,
                     "solver: out of memory");
    }
    *out = s;
    return KW_OK;
fail:
    kw_solver_destroy(s);
    return st;
}

size_t kw_solver_log(const kw_solver *s, const kw_iter_record **rec)
{
    if (!s) {
        if (rec)
            *rec = NULL;
        return 0;
    }
    if (rec)
        *rec = s->log;
    return s->nlog;
}

/* Power iteration on N (Hermitian, PSD): 30 steps from a fixed pseudo-random
 * start, then 5% headroom since it converges from below (common practice,
 * no source). */
kw_status kw_solver_lipschitz(kw_solver *s, double *L)
{
    KW_FAIL_IF(!s || !L, KW_EINVAL, "solver: NULL argument");
    if (s->L > 0) {
        *L = s->L;
        return KW_OK;
    }
    uint32_t r = 12345u;
    for (size_t i = 0; i < s->n; i++) {
        r = r * 1664525u + 1013904223u;
        float a = (float)(r >> 8) / 16777216.0f - 0.5f;
        r = r * 1664525u + 1013904223u;
        float b = (float)(r >> 8) / 16777216.0f - 0.5f;
        s->v1[i] = a + I * b;
    }
    double lam = 0;
    for (int it = 0; it < 30; it++) {
        double nv = nc_norm(s, s->v1, s->n);
        KW_FAIL_IF(!(nv > 0), KW_ENUMERIC, "solver: the normal operator is zero");
        float inv = (float)(1.0 / nv);
        for (size_t i = 0; i < s->n; i++)
            s->v1[i] *= inv;
        kw_status st = kw_encoder_normal(s->enc, s->v1, s->v2);
        if (st)
            return st;
        lam = nc_norm(s, s->v2, s->n);
        float complex *t = s->v1;
        s->v1 = s->v2;
        s->v2 = t;
    }
    KW_FAIL_IF(!(lam > 0) || !isfinite(lam), KW_ENUMERIC,
               "solver: the normal operator is zero or not finite");
    s->L = 1.05 * lam;
    *L = s->L;
    return KW_OK;
}

kw_status kw_solver_objective(kw_solver *s, const float complex *y,
                              const float complex *x, double *F)
{
    KW_FAIL_IF(!s || !y || !x || !F, KW_EINVAL, "solver: NULL argument");
    kw_status st = nc_rhs(s, y);
    if (st)
        return st;
    st = kw_encoder_normal(s->enc, x, s->v5);
    if (st)
        return st;
    *F = 0.5 * nc_dot_re(s, x, s->v5, s->n) - nc_dot_re(s, x, s->b, s->n) + 0.5 * s->ywy +
         s->o.lambda * nc_reg_value(s, x);
    return KW_OK;
}

/* CG's update in one pass: x += a p, r -= a Ap, and the sums r^H r, then
 * Re x^H b + Re x^H r of the updated vectors (for the objective), chunk by
 * chunk while the chunk is in cache. Sums as nc_dot_re (eight partial sums
 * per chunk, chunks and then threads added in order): deterministic for the
 * thread count. */
enum { CG_CHUNK = 1024, CG_MAXT = 64 };

static void cg_span(float complex *x, float complex *r, const float complex *p,
                    const float complex *Ap, const float complex *b, float a, size_t lo,
                    size_t hi, double *sums)
{
    double rr = 0, xbr = 0;
    for (size_t c0 = lo; c0 < hi; c0 += CG_CHUNK) {
        size_t c1 = c0 + CG_CHUNK < hi ? c0 + CG_CHUNK : hi;
        for (size_t i = c0; i < c1; i++) {
            x[i] += a * p[i];
            r[i] -= a * Ap[i];
        }
        const float *xf = (const float *)x, *rf = (const float *)r, *bf = (const float *)b;
        rr += dot_span(rf, rf, 2 * c0, 2 * c1);
        xbr += dot_span(xf, bf, 2 * c0, 2 * c1) + dot_span(xf, rf, 2 * c0, 2 * c1);
    }
    sums[0] = rr;
    sums[1] = xbr;
}

static void cg_update(kw_solver *s, float complex *x, float complex *r, const float complex *p,
                      const float complex *Ap, float a, double *rr, double *xbr)
{
    const size_t n = s->n;
    int nt = n > 65536 ? s->nthreads : 1;
    if (nt > CG_MAXT)
        nt = CG_MAXT;
    double part[2 * CG_MAXT];
    if (nt <= 1) {
        cg_span(x, r, p, Ap, s->b, a, 0, n, part);
    } else {
#pragma omp parallel num_threads(nt)
        {
            int t = 0, nth = 1;
#ifdef _OPENMP
            t = omp_get_thread_num();
            nth = omp_get_num_threads();
#endif
            for (int q = t; q < nt; q += nth)
                cg_span(x, r, p, Ap, s->b, a, span_at(2 * n, q, nt) / 2,
                        span_at(2 * n, q + 1, nt) / 2, part + 2 * q);
        }
    }
    *rr = *xbr = 0;
    for (int t = 0; t < (nt > 1 ? nt : 1); t++) {
        *rr += part[2 * t];
        *xbr += part[2 * t + 1];
    }
}

kw_status kw_cg_sense(kw_solver *s, const float complex *y, float complex *x,
                      kw_progress_fn progress, void *user)
{
    KW_FAIL_IF(!s || !y || !x, KW_EINVAL, "cg: NULL argument");
    s->nlog = 0;
    kw_status st = nc_rhs(s, y);
    if (st)
        return st;
    float complex *r = s->v1, *p = s->v2, *Ap = s->v3;
    const size_t n = s->n;
    st = kw_encoder_normal(s->enc, x, Ap);
    if (st)
        return st;
    for (size_t i = 0; i < n; i++)
        p[i] = r[i] = s->b[i] - Ap[i];
    double bn = nc_norm(s, s->b, n);
    if (!(bn > 0))
        return KW_OK; /* b = 0: x = 0 solves it if N is regular; keep x */
    double rr = nc_dot_re(s, r, r, n);
    for (int it = 1; it <= s->o.iterations; it++) {
        if (sqrt(rr) / bn < s->o.stop)
            break;
        st = kw_encoder_normal(s->enc, p, Ap);
        if (st)
            return st;
        double pAp = nc_dot_re(s, p, Ap, n);
        /* N = E^H W E (+ lambda) is positive semi-definite by construction:
         * at the first step a p^H N p <= 0 is a real fault; later it is the
         * search direction lost to float rounding after the residual has
         * stalled (CG at 1000 iterations on noise): stop there, keeping the
         * best x float allows, rather than fail the run. */
        KW_FAIL_IF(!(pAp > 0) && it == 1, KW_ENUMERIC,
                   "cg: the normal operator is not positive definite (p^H N p = %g)", pAp);
        if (!(pAp > 0))
            break;
        float a = (float)(rr / pAp);
        double rr_new, xbr;
        cg_update(s, x, r, p, Ap, a, &rr_new, &xbr);
        /* 1/2 ||W^1/2 (E x - y)||^2 = 1/2 y^H W y - 1/2 Re x^H (b + r) */
        double obj = 0.5 * s->ywy - 0.5 * xbr;
        if (nc_report(s, progress, user, "cg-sense", it, s->o.iterations, obj,
                      sqrt(rr_new) / bn))
            return kw_set_error(KW_ECANCELLED, "cg: cancelled");
        float beta = (float)(rr_new / rr);
        for (size_t i = 0; i < n; i++)
            p[i] = r[i] + beta * p[i];
        rr = rr_new;
    }
    return KW_OK;
}
