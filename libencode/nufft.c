/* nufft.c: non-uniform FFT by gridding on an oversampled grid.
 *
 * Kernel: Kaiser-Bessel, phi(t) = I0(beta sqrt(1 - (2t/W)^2)) / I0(beta) for
 * |t| <= W/2 grid points (Jackson, Meyer, Nishimura & Macovski 1991), with
 *   beta = pi sqrt((W/alpha)^2 (alpha - 1/2)^2 - 0.8)
 * (Beatty, Nishimura & Pauly 2005, IEEE TMI 24:799, eq. 5). Its exact
 * Fourier transform, for nu in cycles per grid point,
 *   Phi(nu) = W sinh(sqrt(beta^2 - (pi W nu)^2)) / sqrt(beta^2 - (pi W nu)^2) / I0(beta)
 * (sin and sqrt of the negated argument past the zero) divides the image
 * (deapodisation), checked by quadrature in tests/test_nufft.c.
 *
 * Grid: M_d >= alpha N_d, even and a product of 2, 3, 5, 7. Image pixel n
 * (centred) sits at grid index n mod M; a factor (-1)^n moves k = 0 to grid
 * index M/2, so a sample k (cycles/FOV) sits at g = k M/N + M/2 in [0, M).
 *
 * Forward:  x * (-1)^n / (sqrt(prod N) prod_d Phi(n_d/M_d)) -> zero-padded grid
 *           -> FFT -> interpolate y_j = sum_m G[m] prod_d phi(g_jd - m_d).
 * Adjoint:  spread H[m] = sum_j y_j prod_d phi(g_jd - m_d) -> inverse FFT ->
 *           crop, times the same factors. This is the exact adjoint of the
 *           forward as implemented (same weights, same factors).
 *
 * Tiles: samples are sorted by the tile holding their first kernel point;
 * a tile's samples touch only the tile grown by W - 1 points ("halo").
 * Spreading accumulates in a per-thread double buffer over the halo and adds
 * it into the grid; tiles are run in colour classes (parity of the tile index
 * along each split axis, an even number of tiles per axis, each at least W
 * wide) so the halos of tiles run at once never overlap: no write races.
 */
#include "fft_lock.h"
#include "nufft_impl.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_fft.h"

#ifdef _OPENMP
#include <omp.h>
#endif

#define NUFFT_PREFETCH 16

struct kw_nufft_plan {
    int ndim, W, nthreads;
    int par;             /* worth starting threads (large problems) */
    double alpha, beta, tol;
    size_t N[3], M[3];   /* C order; unused axes 1 */
    size_t nsamples;
    size_t mtotal;       /* prod M */
    /* tiles */
    size_t nt[3];        /* tiles per axis */
    size_t *bound[3];    /* nt[d] + 1 boundaries per axis */
    size_t ext[3];       /* halo buffer extent per axis (max tile + W - 1) */
    size_t ntiles;
    size_t *tile_start;  /* ntiles + 1 offsets into the sorted samples */
    size_t *colour_tiles;/* tiles listed colour by colour */
    size_t colour_start[9];
    int ncolours;
    /* sorted samples */
    uint32_t *perm;      /* sorted position -> original sample index */
    uint16_t *off;       /* (nsamples, ndim) first kernel point in its tile */
    float *w;            /* (nsamples, ndim, W) kernel weights */
    /* image factors per axis: (-1)^n / Phi(n/M) (axis 0 also 1/sqrt(prod N)) */
    float *deap[3];
    /* buffers */
    float complex *grid; /* prod M */
    double *tbuf;        /* nthreads x 2 x prod ext */
    size_t tbuf_len;     /* doubles per thread */
    fftwf_plan fwd, inv;
};

/* ---- plan ------------------------------------------------------------------ */

static int plan_threads(int want)
{
    if (want > 0)
        return want;
#ifdef _OPENMP
    return omp_get_max_threads();
#else
    return 1;
#endif
}

/* Check the arguments and choose the kernel, before anything is allocated. */
static kw_status check_args(int ndim, const size_t *dims, size_t nsamples, const float *traj,
                            const kw_nufft_options *opts, double *tol_out, double *alpha_out,
                            int *W, double *beta)
{
    KW_FAIL_IF(ndim != 2 && ndim != 3, KW_EINVAL, "nufft: %d dimensions (2 or 3)", ndim);
    KW_FAIL_IF(!dims, KW_EINVAL, "nufft: NULL dims");
    KW_FAIL_IF(nsamples > 0 && !traj, KW_EINVAL, "trajectory: NULL");
    KW_FAIL_IF(nsamples >= UINT32_MAX, KW_ERANGE, "trajectory: %zu samples (at most 2^32 - 2)",
               nsamples);
    double tol = opts->tolerance > 0 ? opts->tolerance : 1e-3;
    KW_FAIL_IF(!(opts->tolerance >= 0), KW_ERANGE, "tolerance: not a number >= 0");
    double alpha = opts->oversampling;
    KW_FAIL_IF(alpha != alpha, KW_ERANGE, "oversampling: not a number");
    if (alpha == 0)
        alpha = 2.0; /* fastest for MRI's dense sampling (docs/noncartesian.md) */
    kw_status st = kw_nufft_params(tol, alpha, W, beta);
    if (st)
        return st;
    for (int d = 0; d < ndim; d++) {
        KW_FAIL_IF(dims[d] < 2 || dims[d] > 65536, KW_ERANGE,
                   "nufft: image axis %d has length %zu (2 to 65536)", d, dims[d]);
    }
    for (size_t j = 0; j < nsamples; j++) {
        for (int c = 0; c < ndim; c++) {
            float k = traj[j * ndim + c];
            double half = (double)dims[ndim - 1 - c] / 2.0;
            KW_FAIL_IF(!isfinite(k), KW_ENUMERIC,
                       "trajectory: sample %zu coordinate %d is not finite", j, c);
            KW_FAIL_IF(k < -half || k >= half, KW_ERANGE,
                       "trajectory: sample %zu coordinate %d = %g outside [-%g, %g)", j,
                       c, (double)k, half, half);
        }
    }
    *tol_out = tol;
    *alpha_out = alpha;
    return KW_OK;
}

/* Image and grid sizes (axes padded at the front to 3) and the image
 * factors. Returns 0, or -1 when out of memory. */
static int plan_axes(kw_nufft_plan *p, const size_t *dims, double i0b)
{
    const int ndim = p->ndim, W = p->W;
    p->mtotal = 1;
    double ntot = 1;
    for (int d = 0; d < 3; d++)
        p->N[d] = p->M[d] = 1;
    const int D0 = 3 - ndim; /* first real axis; axes are padded at the front */
    for (int d = 0; d < ndim; d++) {
        p->N[D0 + d] = dims[d];
        size_t m = nufft_nice_size(p->alpha * (double)dims[d]);
        if (m < (size_t)2 * W)
            m = nufft_nice_size(2.0 * W);
        p->M[D0 + d] = m;
        p->mtotal *= m;
        ntot *= (double)dims[d];
    }
    p->par = p->nthreads > 1 && p->mtotal + p->nsamples > 32768;
    /* image factors */
    for (int d = 0; d < 3; d++) {
        p->deap[d] = kw_alloc_n(p->N[d], sizeof(float));
        if (!p->deap[d])
            return -1;
        if (d < D0) {
            p->deap[d][0] = 1.0f;
            continue;
        }
        for (size_t i = 0; i < p->N[d]; i++) {
            long n = (long)i - (long)(p->N[d] / 2);
            double v = 1.0 / nufft_kb_phi_hat((double)n / (double)p->M[d], W, p->beta, i0b);
            if (n & 1)
                v = -v;
            if (d == D0)
                v /= sqrt(ntot);
            p->deap[d][i] = (float)v;
        }
    }
    return 0;
}

/* Tiles: an even number per axis, each at least max(W, 16 or 8) wide.
 * Returns 0, or -1 when out of memory. */
static int plan_tiles(kw_nufft_plan *p)
{
    const int W = p->W, D0 = 3 - p->ndim;
    size_t tmin = p->ndim == 2 ? 16 : 8;
    if (tmin < (size_t)W)
        tmin = (size_t)W;
    p->ntiles = 1;
    p->ncolours = 1;
    for (int d = 0; d < 3; d++) {
        size_t nt = p->M[d] / tmin;
        nt &= ~(size_t)1;
        if (nt < 2)
            nt = 1;
        p->nt[d] = nt;
        p->bound[d] = kw_alloc_n(nt + 1, sizeof(size_t));
        if (!p->bound[d])
            return -1;
        size_t maxw = 0;
        for (size_t t = 0; t <= nt; t++)
            p->bound[d][t] = t * p->M[d] / nt;
        for (size_t t = 0; t < nt; t++)
            if (p->bound[d][t + 1] - p->bound[d][t] > maxw)
                maxw = p->bound[d][t + 1] - p->bound[d][t];
        p->ext[d] = d >= D0 ? maxw + (size_t)W - 1 : 1;
        p->ntiles *= nt;
        if (nt > 1)
            p->ncolours *= 2;
    }
    return 0;
}

/* Sample j's tile (tile_of[j]) and the tile counts in tile_start[t + 1];
 * tmap[d][m]: the tile holding grid index m on axis d. */
static void count_tiles(kw_nufft_plan *p, const float *traj, size_t *const tmap[3],
                        size_t *tile_of)
{
    const int ndim = p->ndim, W = p->W, D0 = 3 - ndim;
    for (size_t j = 0; j < p->nsamples; j++) {
        size_t t = 0;
        for (int d = 0; d < ndim; d++) {
            const int D = D0 + d;
            double g = (double)traj[j * ndim + (ndim - 1 - d)] * (double)p->M[D] /
                           (double)p->N[D] + (double)(p->M[D] / 2);
            long m0 = (long)ceil(g - 0.5 * W);
            long mw = m0 % (long)p->M[D];
            if (mw < 0)
                mw += (long)p->M[D];
            t = t * p->nt[D] + tmap[D][mw];
        }
        tile_of[j] = t;
        p->tile_start[t + 1]++;
    }
}

/* Each sample's offset in its tile and its kernel weights, at its sorted
 * position tile_of[j]. */
static void sample_weights(kw_nufft_plan *p, const float *traj, size_t *const tmap[3],
                           const size_t *tile_of, const float *tab)
{
    const int ndim = p->ndim, W = p->W, D0 = 3 - ndim;
    const size_t nsamples = p->nsamples;
#pragma omp parallel for num_threads(p->nthreads) schedule(static) if (p->par)
    for (size_t j = 0; j < nsamples; j++) {
        size_t s = tile_of[j];
        p->perm[s] = (uint32_t)j;
        for (int d = 0; d < ndim; d++) {
            const int D = D0 + d;
            double g = (double)traj[j * ndim + (ndim - 1 - d)] * (double)p->M[D] /
                           (double)p->N[D] + (double)(p->M[D] / 2);
            long m0 = (long)ceil(g - 0.5 * W);
            long mw = m0 % (long)p->M[D];
            if (mw < 0)
                mw += (long)p->M[D];
            size_t t = tmap[D][mw];
            p->off[s * ndim + d] = (uint16_t)((size_t)mw - p->bound[D][t]);
            float *wd = p->w + (s * ndim + d) * W;
            for (int k = 0; k < W; k++)
                wd[k] = nufft_kb_lookup(tab, W, g - (double)(m0 + k));
        }
    }
}

/* Sort the samples by tile (counting sort) and precompute every weight.
 * Returns 0, or -1 when out of memory. */
static int plan_sort(kw_nufft_plan *p, const float *traj, double i0b)
{
    const size_t nsamples = p->nsamples, ns1 = nsamples ? nsamples : 1;
    const int ndim = p->ndim, W = p->W;
    p->tile_start = kw_alloc_n(p->ntiles + 1, sizeof(size_t));
    p->colour_tiles = kw_alloc_n(p->ntiles, sizeof(size_t));
    p->perm = kw_alloc_n(ns1, sizeof(uint32_t));
    p->off = kw_alloc_n(ns1 * ndim, sizeof(uint16_t));
    p->w = kw_alloc_n(ns1 * (size_t)ndim * W, sizeof(float));
    size_t *tile_of = kw_alloc_n(ns1, sizeof(size_t));
    size_t *next = kw_alloc_n(p->ntiles ? p->ntiles : 1, sizeof(size_t));
    size_t *tmap[3] = {NULL, NULL, NULL};
    float *tab = NULL;
    int rc = -1;
    if (!p->tile_start || !p->colour_tiles || !tile_of || !next || !p->perm || !p->off || !p->w)
        goto done;
    for (int d = 0; d < 3; d++) {
        tmap[d] = kw_alloc_n(p->M[d], sizeof(size_t));
        if (!tmap[d])
            goto done;
        for (size_t t = 0; t < p->nt[d]; t++)
            for (size_t m = p->bound[d][t]; m < p->bound[d][t + 1]; m++)
                tmap[d][m] = t;
    }
    count_tiles(p, traj, tmap, tile_of);
    for (size_t t = 0; t < p->ntiles; t++)
        p->tile_start[t + 1] += p->tile_start[t];
    /* tile id -> sorted position, in place */
    memcpy(next, p->tile_start, p->ntiles * sizeof(size_t));
    for (size_t j = 0; j < nsamples; j++)
        tile_of[j] = next[tile_of[j]]++;
    tab = nufft_kb_table(W, p->beta, i0b);
    if (!tab)
        goto done;
    sample_weights(p, traj, tmap, tile_of, tab);
    rc = 0;
done:
    kw_free(tab);
    kw_free(tile_of);
    kw_free(next);
    for (int d = 0; d < 3; d++)
        kw_free(tmap[d]);
    return rc;
}

/* Colour classes: tiles listed by the parity of their index along each
 * split axis. */
static void plan_colours(kw_nufft_plan *p)
{
    size_t pos = 0;
    for (int c = 0; c < 8; c++) {
        p->colour_start[c] = pos;
        for (size_t t = 0; t < p->ntiles; t++) {
            size_t r = t;
            int col = 0;
            for (int d = 2; d >= 0; d--) {
                size_t td = r % p->nt[d];
                r /= p->nt[d];
                if (p->nt[d] > 1)
                    col |= (int)(td & 1) << d;
            }
            if (col == c)
                p->colour_tiles[pos++] = t;
        }
    }
    p->colour_start[8] = pos;
}

/* The oversampled grid's FFTW plans (p->grid allocated). */
static kw_status plan_fft(kw_nufft_plan *p, const kw_nufft_options *opts)
{
    const int ndim = p->ndim, D0 = 3 - ndim;
    int n_int[3];
    for (int d = 0; d < ndim; d++)
        n_int[d] = (int)p->M[D0 + d];
    unsigned ff = kw_fft_rigor(opts->measure);
    kw_fft_planner_lock();
    if (p->nthreads > 1) {
        kw_status st = kw_fft_setup(kw_fft_threads());
        if (st) {
            kw_fft_planner_unlock();
            return st;
        }
    }
    /* threads only where they pay: small grids stay on one */
    fftwf_plan_with_nthreads(p->par ? p->nthreads : 1);
    p->fwd = fftwf_plan_dft(ndim, n_int, (fftwf_complex *)p->grid,
                            (fftwf_complex *)p->grid, FFTW_FORWARD, ff);
    p->inv = fftwf_plan_dft(ndim, n_int, (fftwf_complex *)p->grid,
                            (fftwf_complex *)p->grid, FFTW_BACKWARD, ff);
    fftwf_plan_with_nthreads(kw_fft_threads());
    kw_fft_planner_unlock();
    KW_FAIL_IF(!p->fwd || !p->inv, KW_EINTERNAL, "nufft: FFTW could not make a plan");
    return KW_OK;
}

void kw_nufft_options_init(kw_nufft_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->tolerance = 1e-3;
    o->oversampling = 2.0;
}

kw_status kw_nufft_create(kw_nufft_plan **plan, int ndim, const size_t *dims,
                          size_t nsamples, const float *traj,
                          const kw_nufft_options *caller)
{
    KW_FAIL_IF(!plan, KW_EINVAL, "nufft: NULL plan pointer");
    *plan = NULL;
    kw_nufft_options local;
    kw_nufft_options_init(&local);
    if (caller) {
        kw_status ost = kw_options_take(&local, sizeof local, caller, "options");
        if (ost)
            return ost;
    }
    const kw_nufft_options *opts = &local;
    double tol = 0, alpha = 0, beta = 0;
    int W = 0;
    kw_status st = check_args(ndim, dims, nsamples, traj, opts, &tol, &alpha, &W, &beta);
    if (st)
        return st;
    kw_nufft_plan *p = kw_alloc_n(1, sizeof *p);
    KW_FAIL_IF(!p, KW_ENOMEM, "nufft: out of memory");
    p->ndim = ndim;
    p->W = W;
    p->beta = beta;
    p->alpha = alpha;
    p->tol = tol;
    p->nsamples = nsamples;
    p->nthreads = plan_threads(opts->nthreads);
    double i0b = nufft_bessel_i0(beta);
    if (plan_axes(p, dims, i0b) || plan_tiles(p) || plan_sort(p, traj, i0b))
        goto fail;
    plan_colours(p);
    /* buffers (the spreading buffer: one per thread of the plan) */
    p->tbuf_len = 2 * p->ext[0] * p->ext[1] * p->ext[2];
    p->tbuf = kw_alloc((size_t)p->nthreads * p->tbuf_len * sizeof(double));
    p->grid = kw_alloc(p->mtotal * sizeof(float complex));
    if (!p->tbuf || !p->grid)
        goto fail;
    if ((st = plan_fft(p, opts)))
        goto fail_st;
    *plan = p;
    return KW_OK;
fail:
    st = kw_set_error(KW_ENOMEM, "nufft: out of memory for %zu samples", nsamples);
fail_st:
    kw_nufft_destroy(p);
    return st;
}

void kw_nufft_destroy(kw_nufft_plan *p)
{
    if (!p)
        return;
    kw_fft_planner_lock();
    if (p->fwd)
        fftwf_destroy_plan(p->fwd);
    if (p->inv)
        fftwf_destroy_plan(p->inv);
    kw_fft_planner_unlock();
    for (int d = 0; d < 3; d++) {
        kw_free(p->bound[d]);
        kw_free(p->deap[d]);
    }
    kw_free(p->tile_start);
    kw_free(p->colour_tiles);
    kw_free(p->perm);
    kw_free(p->off);
    kw_free(p->w);
    kw_free(p->tbuf);
    kw_free(p->grid);
    kw_free(p);
}

kw_status kw_nufft_get_info(const kw_nufft_plan *p, kw_nufft_info *info)
{
    KW_FAIL_IF(!p || !info, KW_EINVAL, "nufft: NULL plan or info");
    memset(info, 0, sizeof *info);
    info->ndim = p->ndim;
    for (int d = 0; d < p->ndim; d++) {
        info->dims[d] = p->N[3 - p->ndim + d];
        info->grid[d] = p->M[3 - p->ndim + d];
    }
    info->oversampling = p->alpha;
    info->width = p->W;
    info->beta = p->beta;
    info->tolerance = p->tol;
    info->nsamples = p->nsamples;
    info->ntiles = p->ntiles;
    info->nthreads = p->nthreads;
    return KW_OK;
}

/* ---- execution --------------------------------------------------------------- */

static int thread_id(void)
{
#ifdef _OPENMP
    return omp_get_thread_num();
#else
    return 0;
#endif
}

/* Grid index of image pixel i on axis d. */
static inline size_t img_to_grid(const kw_nufft_plan *p, int d, size_t i)
{
    long n = (long)i - (long)(p->N[d] / 2);
    return (size_t)(n < 0 ? n + (long)p->M[d] : n);
}

/* Place the deapodised image into the zeroed grid (store = 0), or crop the
 * grid into the image with the same factors (store = 1). */
static void image_grid(kw_nufft_plan *p, float complex *x, int store)
{
    if (!store)
        memset(p->grid, 0, p->mtotal * sizeof(float complex));
    const size_t N0 = p->N[0], N1 = p->N[1], N2 = p->N[2];
    const size_t M1 = p->M[1], M2 = p->M[2];
    const float *d0 = p->deap[0], *d1 = p->deap[1], *d2 = p->deap[2];
    const long long rows = (long long)(N0 * N1);
    const long h2 = (long)(N2 / 2);
#pragma omp parallel for num_threads(p->nthreads) schedule(static) if (p->par)
    for (long long r = 0; r < rows; r++) {
        size_t i0 = (size_t)r / N1, i1 = (size_t)r % N1;
        size_t g0 = img_to_grid(p, 0, i0), g1 = img_to_grid(p, 1, i1);
        float *xf = (float *)(x + (size_t)r * N2);
        float *gf = (float *)(p->grid + (g0 * M1 + g1) * M2);
        const float f = d0[i0] * d1[i1];
        /* pixels n = i - N2/2 < 0 sit at the top of the grid row */
        for (size_t i = 0; i < N2; i++) {
            long n = (long)i - h2;
            size_t gi = (size_t)(n < 0 ? n + (long)M2 : n);
            float c = f * d2[i];
            if (store) {
                xf[2 * i] = gf[2 * gi] * c;
                xf[2 * i + 1] = gf[2 * gi + 1] * c;
            } else {
                gf[2 * gi] = xf[2 * i] * c;
                gf[2 * gi + 1] = xf[2 * i + 1] * c;
            }
        }
    }
}

/* Tile t's position: first grid index and extent (tile + halo) per axis. */
static void tile_box(const kw_nufft_plan *p, size_t t, size_t *b, size_t *e)
{
    size_t r = t;
    for (int d = 2; d >= 0; d--) {
        size_t td = r % p->nt[d];
        r /= p->nt[d];
        b[d] = p->bound[d][td];
        e[d] = d >= 3 - p->ndim ? p->bound[d][td + 1] - b[d] + (size_t)p->W - 1 : 1;
    }
}

/* Interpolate the samples of tile t from the grid (forward). */
static void interp_tile(const kw_nufft_plan *p, size_t t, float *buf,
                        float complex *y)
{
    size_t b[3], e[3];
    tile_box(p, t, b, e);
    const size_t *M = p->M;
    const size_t E1 = p->ext[1], E2 = p->ext[2];
    /* copy the halo box (with periodic wrap) into buf, rows of length E_last */
    const float *g = (const float *)p->grid;
    for (size_t a0 = 0; a0 < e[0]; a0++) {
        size_t g0 = (b[0] + a0) % M[0];
        for (size_t a1 = 0; a1 < e[1]; a1++) {
            size_t g1 = (b[1] + a1) % M[1];
            const float *row = g + 2 * (g0 * M[1] + g1) * M[2];
            float *dst = buf + 2 * (a0 * E1 + a1) * E2;
            size_t first = M[2] - b[2] < e[2] ? M[2] - b[2] : e[2];
            memcpy(dst, row + 2 * b[2], 2 * first * sizeof(float));
            for (size_t a2 = first; a2 < e[2]; a2++) {
                size_t g2 = (b[2] + a2) % M[2];
                dst[2 * a2] = row[2 * g2];
                dst[2 * a2 + 1] = row[2 * g2 + 1];
            }
        }
    }
    const int W = p->W;
    float *yf = (float *)y;
    if (p->ndim == 2) {
        /* 2-D: buffer is (E1 rows) x E2, axis 0 of the image is axis 1 here */
        for (size_t s = p->tile_start[t]; s < p->tile_start[t + 1]; s++) {
            const float *wy = p->w + s * 2 * W, *wx = wy + W;
            const float *base = buf + 2 * ((size_t)p->off[2 * s] * E2 + p->off[2 * s + 1]);
            double sr = 0, si = 0;
            for (int a = 0; a < W; a++) {
                const float *row = base + 2 * (size_t)a * E2;
                float rr = 0, ri = 0;
                for (int c = 0; c < W; c++) {
                    rr += row[2 * c] * wx[c];
                    ri += row[2 * c + 1] * wx[c];
                }
                sr += (double)rr * wy[a];
                si += (double)ri * wy[a];
            }
            size_t j = p->perm[s];
            yf[2 * j] = (float)sr;
            yf[2 * j + 1] = (float)si;
        }
    } else {
        for (size_t s = p->tile_start[t]; s < p->tile_start[t + 1]; s++) {
            const float *wz = p->w + s * 3 * W, *wy = wz + W, *wx = wy + W;
            const uint16_t *o = p->off + 3 * s;
            const float *base = buf + 2 * (((size_t)o[0] * E1 + o[1]) * E2 + o[2]);
            double sr = 0, si = 0;
            for (int a = 0; a < W; a++) {
                double pr = 0, pi = 0;
                for (int bb = 0; bb < W; bb++) {
                    const float *row = base + 2 * ((size_t)a * E1 * E2 + (size_t)bb * E2);
                    float rr = 0, ri = 0;
                    for (int c = 0; c < W; c++) {
                        rr += row[2 * c] * wx[c];
                        ri += row[2 * c + 1] * wx[c];
                    }
                    pr += (double)rr * wy[bb];
                    pi += (double)ri * wy[bb];
                }
                sr += pr * wz[a];
                si += pi * wz[a];
            }
            size_t j = p->perm[s];
            yf[2 * j] = (float)sr;
            yf[2 * j + 1] = (float)si;
        }
    }
}

/* Spread the samples of tile t into buf (double) and add buf into the grid. */
static void spread_tile(kw_nufft_plan *p, size_t t, double *buf,
                        const float complex *y)
{
    size_t b[3], e[3];
    tile_box(p, t, b, e);
    const size_t *M = p->M;
    const size_t E1 = p->ext[1], E2 = p->ext[2];
    const int W = p->W;
    const float *yf = (const float *)y;
    if (p->tile_start[t] == p->tile_start[t + 1])
        return;
    for (size_t a0 = 0; a0 < e[0]; a0++)
        for (size_t a1 = 0; a1 < e[1]; a1++)
            memset(buf + 2 * (a0 * E1 + a1) * E2, 0, 2 * e[2] * sizeof(double));
    if (p->ndim == 2) {
        for (size_t s = p->tile_start[t]; s < p->tile_start[t + 1]; s++) {
            const float *wy = p->w + s * 2 * W, *wx = wy + W;
            double *base = buf + 2 * ((size_t)p->off[2 * s] * E2 + p->off[2 * s + 1]);
            size_t j = p->perm[s];
            /* the gather through perm misses the cache for random
             * trajectories: ask for a later sample's value early */
            if (s + NUFFT_PREFETCH < p->tile_start[t + 1])
                __builtin_prefetch(yf + 2 * (size_t)p->perm[s + NUFFT_PREFETCH]);
            double vr = yf[2 * j], vi = yf[2 * j + 1];
            double wxd[NUFFT_MAX_W];
            for (int c = 0; c < W; c++)
                wxd[c] = wx[c];
            for (int a = 0; a < W; a++) {
                double *row = base + 2 * (size_t)a * E2;
                double ar = vr * wy[a], ai = vi * wy[a];
                for (int c = 0; c < W; c++) {
                    row[2 * c] += ar * wxd[c];
                    row[2 * c + 1] += ai * wxd[c];
                }
            }
        }
    } else {
        for (size_t s = p->tile_start[t]; s < p->tile_start[t + 1]; s++) {
            const float *wz = p->w + s * 3 * W, *wy = wz + W, *wx = wy + W;
            const uint16_t *o = p->off + 3 * s;
            double *base = buf + 2 * (((size_t)o[0] * E1 + o[1]) * E2 + o[2]);
            size_t j = p->perm[s];
            if (s + NUFFT_PREFETCH < p->tile_start[t + 1])
                __builtin_prefetch(yf + 2 * (size_t)p->perm[s + NUFFT_PREFETCH]);
            double vr = yf[2 * j], vi = yf[2 * j + 1];
            double wxd[NUFFT_MAX_W];
            for (int c = 0; c < W; c++)
                wxd[c] = wx[c];
            for (int a = 0; a < W; a++) {
                double zr = vr * wz[a], zi = vi * wz[a];
                for (int bb = 0; bb < W; bb++) {
                    double *row = base + 2 * ((size_t)a * E1 * E2 + (size_t)bb * E2);
                    double ar = zr * wy[bb], ai = zi * wy[bb];
                    for (int c = 0; c < W; c++) {
                        row[2 * c] += ar * wxd[c];
                        row[2 * c + 1] += ai * wxd[c];
                    }
                }
            }
        }
    }
    float *g = (float *)p->grid;
    for (size_t a0 = 0; a0 < e[0]; a0++) {
        size_t g0 = (b[0] + a0) % M[0];
        for (size_t a1 = 0; a1 < e[1]; a1++) {
            size_t g1 = (b[1] + a1) % M[1];
            float *row = g + 2 * (g0 * M[1] + g1) * M[2];
            const double *src = buf + 2 * (a0 * E1 + a1) * E2;
            size_t a2 = 0, g2 = b[2];
            while (a2 < e[2]) {
                size_t run = M[2] - g2 < e[2] - a2 ? M[2] - g2 : e[2] - a2;
                for (size_t q = 0; q < run; q++) {
                    row[2 * (g2 + q)] += (float)src[2 * (a2 + q)];
                    row[2 * (g2 + q) + 1] += (float)src[2 * (a2 + q) + 1];
                }
                a2 += run;
                g2 = 0;
            }
        }
    }
}

kw_status kw_nufft_forward(kw_nufft_plan *p, const float complex *img,
                           float complex *ksp, size_t batch)
{
    KW_FAIL_IF(!p || (!img && batch) || (!ksp && batch), KW_EINVAL,
               "nufft: NULL argument");
    size_t nimg = p->N[0] * p->N[1] * p->N[2];
    for (size_t c = 0; c < batch; c++) {
        image_grid(p, (float complex *)(uintptr_t)(img + c * nimg), 0);
        fftwf_execute_dft(p->fwd, (fftwf_complex *)p->grid, (fftwf_complex *)p->grid);
        float complex *y = ksp + c * p->nsamples;
        const long long nt = (long long)p->ntiles;
#pragma omp parallel for num_threads(p->nthreads) schedule(dynamic, 4) if (p->par)
        for (long long t = 0; t < nt; t++)
            interp_tile(p, (size_t)t, (float *)(p->tbuf + (size_t)thread_id() * p->tbuf_len), y);
    }
    return KW_OK;
}

kw_status kw_nufft_adjoint(kw_nufft_plan *p, const float complex *ksp,
                           float complex *img, size_t batch)
{
    KW_FAIL_IF(!p || (!img && batch) || (!ksp && batch), KW_EINVAL,
               "nufft: NULL argument");
    size_t nimg = p->N[0] * p->N[1] * p->N[2];
    for (size_t c = 0; c < batch; c++) {
        memset(p->grid, 0, p->mtotal * sizeof(float complex));
        const float complex *y = ksp + c * p->nsamples;
        for (int col = 0; col < 8; col++) {
            const long long lo = (long long)p->colour_start[col];
            const long long hi = (long long)p->colour_start[col + 1];
#pragma omp parallel for num_threads(p->nthreads) schedule(dynamic, 2) if (p->par)
            for (long long q = lo; q < hi; q++)
                spread_tile(p, p->colour_tiles[q],
                            p->tbuf + (size_t)thread_id() * p->tbuf_len, y);
        }
        fftwf_execute_dft(p->inv, (fftwf_complex *)p->grid, (fftwf_complex *)p->grid);
        image_grid(p, img + c * nimg, 1);
    }
    return KW_OK;
}

/* ---- kernel convolution for density compensation ------------------------ */

kw_status kw_nufft_convolve(kw_nufft_plan *p, const float complex *in,
                            float complex *out)
{
    KW_FAIL_IF(!p || !in || !out, KW_EINVAL, "nufft: NULL argument");
    memset(p->grid, 0, p->mtotal * sizeof(float complex));
    for (int col = 0; col < 8; col++) {
        const long long lo = (long long)p->colour_start[col];
        const long long hi = (long long)p->colour_start[col + 1];
#pragma omp parallel for num_threads(p->nthreads) schedule(dynamic, 2) if (p->par)
        for (long long q = lo; q < hi; q++)
            spread_tile(p, p->colour_tiles[q], p->tbuf + (size_t)thread_id() * p->tbuf_len,
                        in);
    }
    const long long nt = (long long)p->ntiles;
#pragma omp parallel for num_threads(p->nthreads) schedule(dynamic, 4) if (p->par)
    for (long long t = 0; t < nt; t++)
        interp_tile(p, (size_t)t, (float *)(p->tbuf + (size_t)thread_id() * p->tbuf_len), out);
    /* Scale: a dense sampling of density rho (samples per unit k area)
     * receives rho prod_d [sum_m phi(x - m)] Phi(0)/a_d, a_d = M_d/N_d grid
     * points per cycle/FOV, and sum_m phi(x - m) = Phi(0) up to the
     * kernel's stop-band aliases (Poisson summation): K = prod Phi(0)^2/a_d.
     * A coarse lattice (spacing a_d >= 1 grid point) aliases the main lobe
     * and deviates by a few per cent (tests/test_dcf.c). */
    double i0b = nufft_bessel_i0(p->beta), K = 1.0;
    double ph0 = nufft_kb_phi_hat(0.0, p->W, p->beta, i0b);
    for (int d = 3 - p->ndim; d < 3; d++)
        K *= ph0 * ph0 * (double)p->N[d] / (double)p->M[d];
    float s = (float)(1.0 / K);
    for (size_t j = 0; j < p->nsamples; j++)
        out[j] *= s;
    return KW_OK;
}
