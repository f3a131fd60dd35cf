/* grappa.c: GRAPPA calibration and synthesis (Griswold et al. 2002, MRM
 * 47:1202; see kw_grappa.h for the kernel geometry). */
#include "kw_grappa.h"
#include "kw_linalg.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

struct kw_grappa {
    size_t nc, d[3], npix;
    kw_grappa_options o;
    int blo[3];          /* first source offset b per axis */
    size_t ns, ncols;    /* source points, nc * ns */
    int ntgt;            /* R - 1 target offsets */
    size_t fit_lo[3], fit_n[3], nfit;
    double complex *aha; /* ncols x ncols */
    double complex *ahb; /* ncols x nc (one target at a time) */
    double complex *row; /* ncols */
    float complex *w;    /* ntgt x nc x ncols */
    float complex *src;  /* nthreads x ncols */
    int nthreads;        /* the threads src is sized for (at create) */
};

size_t kw_grappa_fit_count(const kw_grappa *g) { return g ? g->nfit : 0; }
size_t kw_grappa_unknowns(const kw_grappa *g) { return g ? g->ncols : 0; }

void kw_grappa_destroy(kw_grappa *g)
{
    if (!g)
        return;
    kw_free(g->aha);
    kw_free(g->ahb);
    kw_free(g->row);
    kw_free(g->w);
    kw_free(g->src);
    kw_free(g);
}

void kw_grappa_options_init(kw_grappa_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    for (int a = 0; a < 3; a++)
        o->accel[a] = 1;
    o->kernel[0] = 1;
    o->kernel[1] = 2;
    o->kernel[2] = 5;
    o->lambda = 1e-4; /* common practice, no source */
}

kw_status kw_grappa_create(kw_grappa **out, size_t nc, const size_t d[3],
                           const kw_grappa_options *caller)
{
    KW_FAIL_IF(!out || !d || nc == 0, KW_EINVAL, "grappa: NULL argument");
    *out = NULL;
    kw_grappa_options local;
    kw_grappa_options_init(&local);
    kw_status ost = kw_options_take(&local, sizeof local, caller, "options");
    if (ost)
        return ost;
    const kw_grappa_options *o = &local;
    KW_FAIL_PARAM(!(o->lambda >= 0) || !isfinite(o->lambda), KW_EINVAL, "lambda", "must be >= 0");
    kw_grappa *g = kw_alloc_n(1, sizeof *g);
    KW_FAIL_IF(!g, KW_ENOMEM, "grappa: out of memory");
    g->nc = nc;
    g->o = *o;
    g->npix = d[0] * d[1] * d[2];
    g->ns = 1;
    int rtot = 1;
    kw_status st = KW_OK;
    for (int a = 0; a < 3; a++) {
        g->d[a] = d[a];
        int R = o->accel[a], K = d[a] > 1 ? o->kernel[a] : 1;
        g->o.kernel[a] = K;
        g->o.offset[a] = R > 0 ? ((o->offset[a] % R) + R) % R : 0;
        if (R < 1 || K < 1) {
            st = kw_set_error_param(KW_EINVAL, "kernel", "sizes and accelerations must be >= 1");
            break;
        }
        rtot *= R;
        g->blo[a] = -((K - 1) / 2);
        g->ns *= (size_t)K;
        /* bases whose sources and targets all lie in the block */
        long lo = (long)o->acs_lo[a], hi = lo + (long)o->acs_n[a] - 1;
        long bmin = lo - (long)R * g->blo[a];
        long bmax = hi - (long)R * (g->blo[a] + K - 1);
        if (hi - (R - 1) < bmax)
            bmax = hi - (R - 1);
        if (o->acs_n[a] == 0 || bmax < bmin) {
            st = kw_set_error_param(KW_EINVAL, "acs_lines",
                                    "the autocalibration block (%zu points along axis %d) "
                                    "is too small for a kernel of %d sources at R = %d",
                                    o->acs_n[a], a, K, R);
            break;
        }
        g->fit_lo[a] = (size_t)bmin;
        g->fit_n[a] = (size_t)(bmax - bmin + 1);
    }
    if (st) {
        kw_grappa_destroy(g);
        return st;
    }
    g->ntgt = rtot - 1;
    g->ncols = nc * g->ns;
    g->nfit = g->fit_n[0] * g->fit_n[1] * g->fit_n[2];
    if (g->nfit < g->ncols) {
        size_t nfit = g->nfit, ncols = g->ncols;
        kw_grappa_destroy(g);
        return kw_set_error_param(KW_EINVAL, "acs_lines",
                                  "the autocalibration block gives %zu fitting positions "
                                  "for %zu weights per coil; use a larger block or a smaller "
                                  "kernel",
                                  nfit, ncols);
    }
#ifdef _OPENMP
    g->nthreads = omp_get_max_threads();
#else
    g->nthreads = 1;
#endif
    g->aha = kw_alloc_n(g->ncols * g->ncols, sizeof *g->aha);
    g->ahb = kw_alloc_n(g->ncols * nc, sizeof *g->ahb);
    g->row = kw_alloc_n(g->ncols, sizeof *g->row);
    g->w = kw_alloc_n((size_t)(g->ntgt > 0 ? g->ntgt : 1) * nc * g->ncols, sizeof *g->w);
    g->src = kw_alloc_n((size_t)g->nthreads * g->ncols, sizeof *g->src);
    if (!g->aha || !g->ahb || !g->row || !g->w || !g->src) {
        kw_grappa_destroy(g);
        return kw_set_error(KW_ENOMEM, "grappa: out of memory");
    }
    *out = g;
    return KW_OK;
}

/* Gather the sources of `base` (coordinates may be outside: zeros). */
static void gather(const kw_grappa *g, const float complex *ksp, const long base[3],
                   float complex *v)
{
    const size_t *d = g->d;
    size_t i = 0;
    for (size_t c = 0; c < g->nc; c++)
        for (int bz = 0; bz < g->o.kernel[0]; bz++)
            for (int by = 0; by < g->o.kernel[1]; by++)
                for (int bx = 0; bx < g->o.kernel[2]; bx++) {
                    long z = base[0] + (long)g->o.accel[0] * (g->blo[0] + bz);
                    long y = base[1] + (long)g->o.accel[1] * (g->blo[1] + by);
                    long x = base[2] + (long)g->o.accel[2] * (g->blo[2] + bx);
                    int in = z >= 0 && y >= 0 && x >= 0 && z < (long)d[0] && y < (long)d[1] &&
                             x < (long)d[2];
                    v[i++] = in ? ksp[c * g->npix + ((size_t)z * d[1] + (size_t)y) * d[2] + (size_t)x] : 0;
                }
}

static void tgt_offset(const kw_grappa *g, int t, int o[3])
{
    int l = t + 1; /* skip the all-zero offset */
    o[0] = l / (g->o.accel[1] * g->o.accel[2]);
    o[1] = (l / g->o.accel[2]) % g->o.accel[1];
    o[2] = l % g->o.accel[2];
}

kw_status kw_grappa_calibrate(kw_grappa *g, const float complex *ksp)
{
    KW_FAIL_IF(!g || !ksp, KW_EINVAL, "grappa: NULL argument");
    size_t n = g->ncols, nc = g->nc;
    const size_t *d = g->d;
    memset(g->aha, 0, n * n * sizeof *g->aha);
    float complex *v = g->src;
    for (size_t f = 0; f < g->nfit; f++) {
        long base[3] = {(long)(g->fit_lo[0] + f / (g->fit_n[1] * g->fit_n[2])),
                        (long)(g->fit_lo[1] + (f / g->fit_n[2]) % g->fit_n[1]),
                        (long)(g->fit_lo[2] + f % g->fit_n[2])};
        gather(g, ksp, base, v);
        for (size_t i = 0; i < n; i++) {
            double complex ci = conj(v[i]);
            for (size_t j = 0; j <= i; j++)
                g->aha[i * n + j] += ci * v[j];
        }
    }
    double tr = 0;
    for (size_t i = 0; i < n; i++) {
        tr += creal(g->aha[i * n + i]);
        for (size_t j = i + 1; j < n; j++)
            g->aha[i * n + j] = conj(g->aha[j * n + i]);
    }
    KW_FAIL_PARAM(!(tr > 0), KW_ENUMERIC, "acs_lines", "the autocalibration block is empty");
    double lam = g->o.lambda * tr / (double)n;
    for (size_t i = 0; i < n; i++)
        g->aha[i * n + i] += lam;
    KW_FAIL_PARAM(kw_chol(g->aha, n) != KW_OK, KW_ENUMERIC, "acs_lines",
                  "the calibration is singular; a regularisation weight lambda > 0 makes "
                  "it solvable");
    double complex *L = g->aha;
    for (int t = 0; t < g->ntgt; t++) {
        int o[3];
        tgt_offset(g, t, o);
        memset(g->ahb, 0, n * nc * sizeof *g->ahb);
        for (size_t f = 0; f < g->nfit; f++) {
            long base[3] = {(long)(g->fit_lo[0] + f / (g->fit_n[1] * g->fit_n[2])),
                            (long)(g->fit_lo[1] + (f / g->fit_n[2]) % g->fit_n[1]),
                            (long)(g->fit_lo[2] + f % g->fit_n[2])};
            gather(g, ksp, base, v);
            size_t tp = ((size_t)(base[0] + o[0]) * d[1] + (size_t)(base[1] + o[1])) * d[2] +
                        (size_t)(base[2] + o[2]);
            for (size_t c = 0; c < nc; c++) {
                double complex b = ksp[c * g->npix + tp];
                for (size_t i = 0; i < n; i++)
                    g->ahb[c * n + i] += conj(v[i]) * b;
            }
        }
        for (size_t c = 0; c < nc; c++) {
            const double complex *x = g->ahb + c * n;
            kw_chol_solve(L, n, g->ahb + c * n);
            for (size_t i = 0; i < n; i++)
                g->w[((size_t)t * nc + c) * n + i] = (float complex)x[i];
        }
    }
    return KW_OK;
}

kw_status kw_grappa_execute(kw_grappa *g, const float complex *ksp, float complex *out)
{
    KW_FAIL_IF(!g || !ksp || !out, KW_EINVAL, "grappa: NULL argument");
    size_t nc = g->nc, npix = g->npix, n = g->ncols;
    const size_t *d = g->d;
    if (out != ksp)
        memcpy(out, ksp, nc * npix * sizeof *out);
    /* bases: lattice positions from offset - R (so that every point has one) */
    long nb[3], b0[3];
    for (int a = 0; a < 3; a++) {
        long R = g->o.accel[a];
        b0[a] = g->o.offset[a] - (g->o.offset[a] > 0 ? R : 0);
        nb[a] = ((long)d[a] - b0[a] + R - 1) / R;
    }
    long total = nb[0] * nb[1] * nb[2];
    /* num_threads: never more threads than src was sized for at create */
#pragma omp parallel for num_threads(g->nthreads) schedule(dynamic, 32)
    for (long q = 0; q < total; q++) {
        int tid = 0;
#ifdef _OPENMP
        tid = omp_get_thread_num();
#endif
        float complex *v = g->src + (size_t)tid * n;
        long base[3] = {b0[0] + g->o.accel[0] * (q / (nb[1] * nb[2])),
                        b0[1] + g->o.accel[1] * ((q / nb[2]) % nb[1]),
                        b0[2] + g->o.accel[2] * (q % nb[2])};
        int gathered = 0;
        for (int t = 0; t < g->ntgt; t++) {
            int o[3];
            tgt_offset(g, t, o);
            long z = base[0] + o[0], y = base[1] + o[1], x = base[2] + o[2];
            if (z < 0 || y < 0 || x < 0 || z >= (long)d[0] || y >= (long)d[1] || x >= (long)d[2])
                continue;
            size_t tp = ((size_t)z * d[1] + (size_t)y) * d[2] + (size_t)x;
            int sampled = 0;
            for (size_t c = 0; c < nc && !sampled; c++)
                sampled = ksp[c * npix + tp] != 0;
            if (sampled)
                continue;
            if (!gathered) {
                gather(g, ksp, base, v);
                gathered = 1;
            }
            for (size_t c = 0; c < nc; c++) {
                const float complex *w = g->w + ((size_t)t * nc + c) * n;
                double complex s = 0;
                for (size_t i = 0; i < n; i++)
                    s += w[i] * v[i];
                out[c * npix + tp] = (float complex)s;
            }
        }
    }
    return KW_OK;
}
