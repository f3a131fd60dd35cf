/* encoder.c: E, E^H and E^H W E (kw_encoder.h). */
#include "fft_lock.h"
#include "kw_encoder.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "kw_fft.h"
#include "kw_nufft.h"

struct kw_encoder {
    int ndim;
    size_t dims[3], npix, ncoils, nk;
    int noncart, direct;
    float complex *sens;   /* ncoils x npix, NULL: one coil of ones */
    uint8_t *mask;         /* Cartesian, NULL: all */
    float *weights;        /* nk, NULL: ones */
    float complex *cbuf;   /* ncoils x npix */
    kw_fft_plan *fft;      /* Cartesian with an odd axis: batched over coils */
    /* Cartesian, every axis even: one coil at a time through raw FFTW plans
     * in place on cbuf's first coil, the centering folded into the passes */
    fftwf_plan cfwd, cinv;
    /* the normal operator's pair out of place, cbuf -> obuf -> cbuf (FFTW
     * may then skip the copies an in-place transform needs); obuf is cbuf's
     * second coil, or its own buffer for one coil */
    fftwf_plan nfwd, ninv;
    float complex *obuf, *obuf_own;
    float cscale;          /* (-1)^(sum N/2) / sqrt(npix): kw_fft.h's factor */
    size_t rowlen, nrows;  /* last axis, and the rows of it in one image */
    int nthreads;          /* the passes' threads */
    kw_nufft_plan *nufft;  /* non-Cartesian */
    /* Toeplitz embedding (non-Cartesian) */
    size_t big[3], nbig;   /* 2 dims */
    float complex *lambda; /* eigenvalues of the circulant / nbig */
    float complex *tbuf;   /* nbig */
    fftwf_plan tfwd, tinv;
    float complex *ybuf;   /* direct normal: ncoils x nk */
};

size_t kw_encoder_image_size(const kw_encoder *e) { return e ? e->npix : 0; }
size_t kw_encoder_kpoints(const kw_encoder *e) { return e ? e->nk : 0; }
size_t kw_encoder_coils(const kw_encoder *e) { return e ? e->ncoils : 0; }
const float *kw_encoder_weights(const kw_encoder *e) { return e ? e->weights : NULL; }

void kw_encoder_destroy(kw_encoder *e)
{
    if (!e)
        return;
    kw_free(e->sens);
    kw_free(e->mask);
    kw_free(e->weights);
    kw_free(e->cbuf);
    kw_free(e->obuf_own);
    kw_fft_destroy(e->fft);
    kw_nufft_destroy(e->nufft);
    kw_fft_planner_lock();
    if (e->cfwd)
        fftwf_destroy_plan(e->cfwd);
    if (e->cinv)
        fftwf_destroy_plan(e->cinv);
    if (e->nfwd)
        fftwf_destroy_plan(e->nfwd);
    if (e->ninv)
        fftwf_destroy_plan(e->ninv);
    kw_fft_planner_unlock();
    kw_free(e->lambda);
    kw_free(e->tbuf);
    kw_free(e->ybuf);
    kw_fft_planner_lock();
    if (e->tfwd)
        fftwf_destroy_plan(e->tfwd);
    if (e->tinv)
        fftwf_destroy_plan(e->tinv);
    kw_fft_planner_unlock();
    kw_free(e);
}

/* The circulant's eigenvalues for F_nu^H W F_nu (see kw_encoder.h). */
static kw_status toeplitz_setup(kw_encoder *e, const float *traj,
                                const kw_nufft_options *no)
{
    const int nd = e->ndim;
    e->nbig = 1;
    for (int d = 0; d < nd; d++) {
        e->big[d] = 2 * e->dims[d];
        e->nbig *= e->big[d];
    }
    e->lambda = kw_alloc(e->nbig * sizeof(float complex));
    e->tbuf = kw_alloc(e->nbig * sizeof(float complex));
    float *t2 = kw_alloc_n(e->nk * nd, sizeof(float));
    float complex *w = kw_alloc_n(e->nk, sizeof(float complex));
    float complex *timg = kw_alloc(e->nbig * sizeof(float complex));
    kw_nufft_plan *p2 = NULL;
    kw_status st = KW_OK;
    if (!e->lambda || !e->tbuf || !t2 || !w || !timg) {
        st = kw_set_error(KW_ENOMEM, "encoder: out of memory for the Toeplitz kernel");
        goto done;
    }
    /* T on the doubled image through the adjoint NUFFT of the weights on the
     * trajectory 2k: adjoint = prod(2N)^-1/2 sum_j w_j exp(2 pi i (2k).d/(2N)) */
    for (size_t j = 0; j < e->nk * nd; j++)
        t2[j] = 2.0f * traj[j];
    for (size_t j = 0; j < e->nk; j++)
        w[j] = e->weights ? e->weights[j] : 1.0f;
    st = kw_nufft_create(&p2, nd, e->big, e->nk, t2, no);
    if (st)
        goto done;
    st = kw_nufft_adjoint(p2, w, timg, 1);
    if (st)
        goto done;
    double c = sqrt((double)e->nbig) / (double)e->npix;
    /* circulant C[d mod 2N] = T[d], |d| < N; the entry d = -N is never used by
     * a zero-padded product and is set to 0 (keeps C Hermitian). Image index
     * i of the doubled grid stands for d = i - N. */
    size_t B[3] = {1, 1, 1}, N[3] = {1, 1, 1};
    for (int d = 0; d < nd; d++) {
        B[3 - nd + d] = e->big[d];
        N[3 - nd + d] = e->dims[d];
    }
    for (size_t i0 = 0; i0 < B[0]; i0++)
        for (size_t i1 = 0; i1 < B[1]; i1++)
            for (size_t i2 = 0; i2 < B[2]; i2++) {
                size_t src = (i0 * B[1] + i1) * B[2] + i2;
                size_t ii[3] = {i0, i1, i2}, dst = 0;
                int edge = 0;
                for (int d = 0; d < 3; d++) {
                    long dd = B[d] == 1 ? 0 : (long)ii[d] - (long)N[d];
                    if (B[d] > 1 && dd == -(long)N[d])
                        edge = 1;
                    size_t m = (size_t)(dd < 0 ? dd + (long)B[d] : dd);
                    dst = dst * B[d] + m;
                }
                e->lambda[dst] = edge ? 0.0f : (float complex)(c * timg[src]);
            }
    {
        int n_int[3];
        for (int d = 0; d < nd; d++)
            n_int[d] = (int)e->big[d];
        unsigned ff = kw_fft_rigor(no->measure);
        /* threads only where they pay: small grids stay on one */
        int nth = no->nthreads > 0 ? no->nthreads : kw_fft_threads();
        kw_fft_planner_lock();
        fftwf_plan_with_nthreads(e->nbig >= 65536 ? nth : 1);
        fftwf_plan pl = fftwf_plan_dft(nd, n_int, (fftwf_complex *)e->lambda,
                                       (fftwf_complex *)e->lambda, FFTW_FORWARD,
                                       FFTW_ESTIMATE);
        /* plan on tbuf first: MEASURE overwrites its array */
        e->tfwd = fftwf_plan_dft(nd, n_int, (fftwf_complex *)e->tbuf,
                                 (fftwf_complex *)e->tbuf, FFTW_FORWARD, ff);
        e->tinv = fftwf_plan_dft(nd, n_int, (fftwf_complex *)e->tbuf,
                                 (fftwf_complex *)e->tbuf, FFTW_BACKWARD, ff);
        fftwf_plan_with_nthreads(kw_fft_threads());
        if (!pl || !e->tfwd || !e->tinv) {
            if (pl)
                fftwf_destroy_plan(pl);
            kw_fft_planner_unlock();
            st = kw_set_error(KW_EINTERNAL, "encoder: FFTW could not make a plan");
            goto done;
        }
        fftwf_execute(pl);
        fftwf_destroy_plan(pl);
        kw_fft_planner_unlock();
        float inv = 1.0f / (float)e->nbig; /* FFTW's backward is unnormalised */
        for (size_t i = 0; i < e->nbig; i++)
            e->lambda[i] *= inv;
    }
done:
    kw_nufft_destroy(p2);
    kw_free(t2);
    kw_free(w);
    kw_free(timg);
    return st;
}

/* ---- Cartesian, every axis even: the centering folded into the passes ----
 *
 * kw_fft.h's centered unitary transform on an even grid is
 *   F_c = g D F D,   F_c^H = g D B D,   g = (-1)^(sum N/2) / sqrt(npix)
 * with F, B FFTW's unnormalised forward and backward transforms and D the
 * checkerboard diag((-1)^(i + j + k)) (fft.c). So for one coil
 *   F_c^H M W F_c = g^2 D B D M W D F D = (1/npix) D B (M W) F D
 * since D commutes with the diagonal M W and D D = I: of the four sign
 * passes the middle two cancel, g^2 = 1/npix joins the weights, and the
 * outer two are folded into the sensitivity passes (one sign per row,
 * alternating along the row: rows have even length). The result is that of
 * the batched path up to float rounding (the scale is applied once instead
 * of twice; bit for bit where 1/sqrt(npix) is a power of two and no weights
 * are given). The coils go one at a time through one coil's buffer, which
 * stays in cache between the passes. */

/* The checkerboard's sign at the start of row r: (-1)^(i + j). */
static float row_sign(const kw_encoder *e, size_t r)
{
    const size_t d1 = e->ndim == 3 ? e->dims[1] : e->nrows;
    return (((r % d1) + (r / d1)) & 1) ? -1.0f : 1.0f;
}

/* u = g (-1)^k s_k x_k along a row of n (even) samples; s NULL: ones. */
static void row_sx(float *restrict u, const float *restrict s, const float *restrict x,
                   size_t n, float g)
{
    const size_t h = n / 2;
    if (!s) {
#pragma omp simd
        for (size_t k = 0; k < h; k++) {
            u[4 * k] = g * x[4 * k];
            u[4 * k + 1] = g * x[4 * k + 1];
            u[4 * k + 2] = -g * x[4 * k + 2];
            u[4 * k + 3] = -g * x[4 * k + 3];
        }
        return;
    }
#pragma omp simd
    for (size_t k = 0; k < h; k++) {
        const float *a = s + 4 * k, *b = x + 4 * k;
        float r0 = a[0] * b[0] - a[1] * b[1], i0 = a[0] * b[1] + a[1] * b[0];
        float r1 = a[2] * b[2] - a[3] * b[3], i1 = a[2] * b[3] + a[3] * b[2];
        u[4 * k] = g * r0;
        u[4 * k + 1] = g * i0;
        u[4 * k + 2] = -g * r1;
        u[4 * k + 3] = -g * i1;
    }
}

/* acc (+)= conj(s_k) (g (-1)^k b_k) along a row (first: acc = 0 + ..., the
 * sums of the pixel-outer combination before, in the same order); s NULL:
 * acc = g (-1)^k b_k. */
static void row_acc(float *restrict acc, const float *restrict s, const float *restrict b,
                    size_t n, float g, int first)
{
    const size_t h = n / 2;
    if (!s) {
        row_sx(acc, NULL, b, n, g);
        return;
    }
    const float z = 0.0f;
#pragma omp simd
    for (size_t k = 0; k < h; k++) {
        const float *a = s + 4 * k;
        float b0 = g * b[4 * k], b1 = g * b[4 * k + 1];
        float b2 = -g * b[4 * k + 2], b3 = -g * b[4 * k + 3];
        float *o = acc + 4 * k;
        float o0 = first ? z : o[0], o1 = first ? z : o[1];
        float o2 = first ? z : o[2], o3 = first ? z : o[3];
        o[0] = o0 + (a[0] * b0 + a[1] * b1);
        o[1] = o1 + (a[0] * b1 - a[1] * b0);
        o[2] = o2 + (a[2] * b2 + a[3] * b3);
        o[3] = o3 + (a[2] * b3 - a[3] * b2);
    }
}

/* Masked copy along a row: o = g (-1)^k (m_k ? in_k : 0) (after = 0), or
 * o = m_k ? g (-1)^k in_k : 0 (after = 1); m NULL: all. */
static void row_mask(float *restrict o, const uint8_t *restrict m, const float *restrict in,
                     size_t n, float g, int after)
{
    const size_t h = n / 2;
    if (!m) {
        row_sx(o, NULL, in, n, g);
        return;
    }
    const float z = 0.0f;
#pragma omp simd
    for (size_t k = 0; k < h; k++) {
        int m0 = m[2 * k] != 0, m1 = m[2 * k + 1] != 0;
        float v0 = m0 ? in[4 * k] : z, v1 = m0 ? in[4 * k + 1] : z;
        float v2 = m1 ? in[4 * k + 2] : z, v3 = m1 ? in[4 * k + 3] : z;
        float w0 = g * v0, w1 = g * v1, w2 = -g * v2, w3 = -g * v3;
        o[4 * k] = after ? (m0 ? w0 : z) : w0;
        o[4 * k + 1] = after ? (m0 ? w1 : z) : w1;
        o[4 * k + 2] = after ? (m1 ? w2 : z) : w2;
        o[4 * k + 3] = after ? (m1 ? w3 : z) : w3;
    }
}

/* u *= (mask ? 1 : 0) (weights or 1) / npix over rows [r0, r1). */
static void rows_weigh(const kw_encoder *e, float *restrict u, size_t r0, size_t r1)
{
    const size_t lo = r0 * e->rowlen, hi = r1 * e->rowlen;
    const float inv = (float)(1.0 / (double)e->npix), z = 0.0f;
    const uint8_t *restrict m = e->mask;
    const float *restrict w = e->weights;
    if (!w && !m) {
#pragma omp simd
        for (size_t k = 2 * lo; k < 2 * hi; k++)
            u[k] *= inv;
    } else if (!w) {
#pragma omp simd
        for (size_t k = lo; k < hi; k++) {
            float f = m[k] ? inv : z;
            u[2 * k] *= f;
            u[2 * k + 1] *= f;
        }
    } else {
#pragma omp simd
        for (size_t k = lo; k < hi; k++) {
            float f = (!m || m[k]) ? w[k] * inv : z;
            u[2 * k] *= f;
            u[2 * k + 1] *= f;
        }
    }
}

enum { PASS_SX, PASS_ACC, PASS_WEIGH, PASS_MASK_IN, PASS_MASK_OUT };

/* One elementwise pass over the rows of coil c, split over the threads:
 * dst/src per pass as above (image-sized arrays; src of PASS_WEIGH unused);
 * g: the factor beside the checkerboard. */
static void cart_pass(const kw_encoder *e, int pass, size_t c, float complex *dst,
                      const float complex *src, float g, int first)
{
    const size_t n = e->rowlen;
    const float *s = e->sens ? (const float *)(e->sens + c * e->npix) : NULL;
    const long long rows = (long long)e->nrows;
    const int nt = e->nthreads;
#pragma omp parallel for num_threads(nt) schedule(static) if (nt > 1 && e->npix > 65536)
    for (long long rr = 0; rr < rows; rr++) {
        const size_t r = (size_t)rr, off = r * n;
        float *o = (float *)(dst + off);
        const float *in = (const float *)(src + off);
        const float gr = g * row_sign(e, r);
        switch (pass) {
        case PASS_SX:
            row_sx(o, s ? s + 2 * off : NULL, in, n, gr);
            break;
        case PASS_ACC:
            row_acc(o, s ? s + 2 * off : NULL, in, n, gr, first);
            break;
        case PASS_WEIGH:
            rows_weigh(e, (float *)dst, r, r + 1);
            break;
        default:
            row_mask(o, e->mask ? e->mask + off : NULL, in, n, gr, pass == PASS_MASK_OUT);
            break;
        }
    }
}

/* The raw plans on cbuf (first coil) for an even grid, or kw_fft's batched
 * plan for a grid with an odd axis. */
static kw_status cart_setup(kw_encoder *e, const kw_encoder_options *o)
{
    int even = 1, half = 0, n_int[3];
    for (int d = 0; d < e->ndim; d++) {
        even &= e->dims[d] % 2 == 0;
        half += (int)(e->dims[d] / 2);
        n_int[d] = (int)e->dims[d];
    }
    if (!even)
        return kw_fft_create(&e->fft, e->ndim, e->dims, e->ncoils,
                             o->measure ? KW_FFT_MEASURE : KW_FFT_ESTIMATE);
    e->rowlen = e->dims[e->ndim - 1];
    e->nrows = e->npix / e->rowlen;
    e->cscale = ((half & 1) ? -1.0f : 1.0f) * (float)(1.0 / sqrt((double)e->npix));
    /* threads: the caller's, else OpenMP's capped by the library's setting */
#ifdef _OPENMP
    e->nthreads = omp_get_max_threads();
#else
    e->nthreads = 1;
#endif
    if (kw_fft_threads_ready() && kw_fft_threads() < e->nthreads)
        e->nthreads = kw_fft_threads();
    if (o->nthreads > 0)
        e->nthreads = o->nthreads;
    if (e->ncoils > 1) {
        e->obuf = e->cbuf + e->npix;
    } else {
        e->obuf = e->obuf_own = kw_alloc(e->npix * sizeof(float complex));
        KW_FAIL_IF(!e->obuf, KW_ENOMEM, "encoder: out of memory");
    }
    unsigned ff = kw_fft_rigor(o->measure);
    fftwf_complex *b = (fftwf_complex *)e->cbuf, *ob = (fftwf_complex *)e->obuf;
    kw_fft_planner_lock();
    if (kw_fft_threads_ready())
        fftwf_plan_with_nthreads(e->nthreads);
    e->cfwd = fftwf_plan_dft(e->ndim, n_int, b, b, FFTW_FORWARD, ff);
    e->cinv = fftwf_plan_dft(e->ndim, n_int, b, b, FFTW_BACKWARD, ff);
    e->nfwd = fftwf_plan_dft(e->ndim, n_int, b, ob, FFTW_FORWARD, ff | FFTW_DESTROY_INPUT);
    e->ninv = fftwf_plan_dft(e->ndim, n_int, ob, b, FFTW_BACKWARD, ff | FFTW_DESTROY_INPUT);
    if (kw_fft_threads_ready())
        fftwf_plan_with_nthreads(kw_fft_threads());
    kw_fft_planner_unlock();
    KW_FAIL_IF(!e->cfwd || !e->cinv || !e->nfwd || !e->ninv, KW_EINTERNAL,
               "encoder: FFTW could not make a plan");
    return KW_OK;
}

/* The raw plan on coil c's slot of cbuf (slot 0: the planned array; any
 * other runs in place where FFTW allows, else through slot 0, which the
 * callers have used up by then). */
static void cart_exec(kw_encoder *e, fftwf_plan p, size_t c)
{
    float complex *b = e->cbuf + c * e->npix;
    if (c == 0) {
        fftwf_execute(p);
    } else if (fftwf_alignment_of((float *)b) == fftwf_alignment_of((float *)e->cbuf)) {
        fftwf_execute_dft(p, (fftwf_complex *)b, (fftwf_complex *)b);
    } else {
        memcpy(e->cbuf, b, e->npix * sizeof *b);
        fftwf_execute(p);
        memcpy(b, e->cbuf, e->npix * sizeof *b);
    }
}

/* y_c = M g D F D S_c x. x is read whole before y is written (x and y may
 * overlap, as with the batched path). */
static void cart_forward(kw_encoder *e, const float complex *x, float complex *y)
{
    for (size_t c = 0; c < e->ncoils; c++)
        cart_pass(e, PASS_SX, c, e->cbuf + c * e->npix, x, 1.0f, 0);
    for (size_t c = 0; c < e->ncoils; c++) {
        cart_exec(e, e->cfwd, c);
        cart_pass(e, PASS_MASK_OUT, c, y + c * e->npix, e->cbuf + c * e->npix, e->cscale, 0);
    }
}

/* x = sum_c conj(S_c) g D B D M y_c; y is read whole before x is written. */
static void cart_adjoint(kw_encoder *e, const float complex *y, float complex *x)
{
    for (size_t c = 0; c < e->ncoils; c++)
        cart_pass(e, PASS_MASK_IN, c, e->cbuf + c * e->npix, y + c * e->npix, 1.0f, 0);
    for (size_t c = 0; c < e->ncoils; c++) {
        cart_exec(e, e->cinv, c);
        cart_pass(e, PASS_ACC, c, x, e->cbuf + c * e->npix, e->cscale, c == 0);
    }
}

/* out = sum_c conj(S_c) D B (M W / npix) F D S_c x, coil by coil. */
static void cart_normal(kw_encoder *e, const float complex *x, float complex *out)
{
    for (size_t c = 0; c < e->ncoils; c++) {
        cart_pass(e, PASS_SX, c, e->cbuf, x, 1.0f, 0);
        fftwf_execute(e->nfwd);
        cart_pass(e, PASS_WEIGH, c, e->obuf, NULL, 1.0f, 0);
        fftwf_execute(e->ninv);
        cart_pass(e, PASS_ACC, c, out, e->cbuf, 1.0f, c == 0);
    }
}

void kw_encoder_options_init(kw_encoder_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->ncoils = 1;
}

kw_status kw_encoder_create(kw_encoder **enc, int ndim, const size_t *dims,
                            const kw_encoder_options *options)
{
    KW_FAIL_IF(!enc, KW_EINVAL, "encoder: NULL pointer");
    *enc = NULL;
    kw_encoder_options eo;
    kw_encoder_options_init(&eo);
    if (options) {
        kw_status ost = kw_options_take(&eo, sizeof eo, options, "options");
        if (ost)
            return ost;
    }
    const kw_encoder_options *opts = &eo;
    size_t ncoils = eo.ncoils, nsamples = eo.nsamples;
    const float complex *sens = eo.sens;
    const uint8_t *mask = eo.mask;
    const float *traj = eo.trajectory, *weights = eo.weights;
    KW_FAIL_IF(ndim != 2 && ndim != 3, KW_EINVAL, "encoder: %d dimensions (2 or 3)", ndim);
    KW_FAIL_IF(!dims, KW_EINVAL, "encoder: NULL dims");
    KW_FAIL_PARAM(ncoils < 1, KW_EINVAL, "ncoils", "at least one");
    KW_FAIL_PARAM(!sens && ncoils != 1, KW_EINVAL, "sens", "needed for %zu coils", ncoils);
    KW_FAIL_PARAM(traj && mask, KW_EINVAL, "mask", "a mask applies to Cartesian data only");
    KW_FAIL_PARAM(traj && nsamples == 0, KW_EINVAL, "nsamples", "no samples with a trajectory");
    kw_encoder *e = kw_alloc_n(1, sizeof *e);
    KW_FAIL_IF(!e, KW_ENOMEM, "encoder: out of memory");
    kw_status st = KW_OK;
    e->ndim = ndim;
    e->npix = 1;
    for (int d = 0; d < ndim; d++) {
        KW_FAIL_GOTO(dims[d] < 1 || dims[d] > 65536, st, KW_ERANGE, fail,
                     "encoder: image axis %d has length %zu", d, dims[d]);
        e->dims[d] = dims[d];
        e->npix *= dims[d];
    }
    e->ncoils = ncoils;
    e->noncart = traj != NULL;
    e->nk = traj ? nsamples : e->npix;
    e->direct = opts->direct_normal;
    if (sens) {
        e->sens = kw_alloc(ncoils * e->npix * sizeof(float complex));
        KW_FAIL_GOTO(!e->sens, st, KW_ENOMEM, fail, "encoder: out of memory for sens");
        memcpy(e->sens, sens, ncoils * e->npix * sizeof(float complex));
        for (size_t i = 0; i < ncoils * e->npix; i++)
            KW_FAIL_GOTO(!isfinite(crealf(sens[i])) || !isfinite(cimagf(sens[i])), st,
                         KW_ENUMERIC, fail, "sens: value %zu is not finite", i);
    }
    if (mask) {
        e->mask = kw_alloc_n(e->npix, 1);
        KW_FAIL_GOTO(!e->mask, st, KW_ENOMEM, fail, "encoder: out of memory");
        memcpy(e->mask, mask, e->npix);
    }
    if (weights) {
        e->weights = kw_alloc_n(e->nk, sizeof(float));
        KW_FAIL_GOTO(!e->weights, st, KW_ENOMEM, fail, "encoder: out of memory");
        for (size_t j = 0; j < e->nk; j++) {
            KW_FAIL_GOTO(!(weights[j] >= 0) || !isfinite(weights[j]), st, KW_ERANGE,
                         fail, "weights: value %zu is negative or not finite", j);
            e->weights[j] = weights[j];
        }
    }
    e->cbuf = kw_alloc(ncoils * e->npix * sizeof(float complex));
    KW_FAIL_GOTO(!e->cbuf, st, KW_ENOMEM, fail, "encoder: out of memory");
    kw_nufft_options no;
    kw_nufft_options_init(&no);
    no.tolerance = opts->tolerance; /* 0: the NUFFT's default, as documented */
    no.oversampling = opts->oversampling;
    no.nthreads = opts->nthreads;
    no.measure = opts->measure;
    if (!e->noncart) {
        st = cart_setup(e, opts);
        if (st)
            goto fail;
    } else {
        st = kw_nufft_create(&e->nufft, ndim, dims, nsamples, traj, &no);
        if (st)
            goto fail;
        if (e->direct) {
            e->ybuf = kw_alloc(ncoils * e->nk * sizeof(float complex));
            KW_FAIL_GOTO(!e->ybuf, st, KW_ENOMEM, fail, "encoder: out of memory");
        } else {
            st = toeplitz_setup(e, traj, &no);
            if (st)
                goto fail;
        }
    }
    *enc = e;
    return KW_OK;
fail:
    kw_encoder_destroy(e);
    return st;
}

/* cbuf[c] = S_c x */
static void apply_sens(kw_encoder *e, const float complex *x)
{
    const size_t n = e->npix;
    for (size_t c = 0; c < e->ncoils; c++) {
        float *o = (float *)(e->cbuf + c * n);
        const float *xf = (const float *)x;
        if (!e->sens) {
            memcpy(o, xf, n * sizeof(float complex));
            continue;
        }
        const float *s = (const float *)(e->sens + c * n);
        for (size_t i = 0; i < n; i++) {
            float sr = s[2 * i], si = s[2 * i + 1], xr = xf[2 * i], xi = xf[2 * i + 1];
            o[2 * i] = sr * xr - si * xi;
            o[2 * i + 1] = sr * xi + si * xr;
        }
    }
}

/* x = sum_c conj(S_c) cbuf[c] */
static void combine_sens(const kw_encoder *e, float complex *x)
{
    const size_t n = e->npix;
    float *xf = (float *)x;
    if (!e->sens) {
        memcpy(x, e->cbuf, n * sizeof(float complex));
        return;
    }
    for (size_t i = 0; i < n; i++) {
        float ar = 0, ai = 0;
        for (size_t c = 0; c < e->ncoils; c++) {
            const float *s = (const float *)(e->sens + c * n + i);
            const float *b = (const float *)(e->cbuf + c * n + i);
            ar += s[0] * b[0] + s[1] * b[1];
            ai += s[0] * b[1] - s[1] * b[0];
        }
        xf[2 * i] = ar;
        xf[2 * i + 1] = ai;
    }
}

kw_status kw_encoder_forward(kw_encoder *e, const float complex *x, float complex *y)
{
    KW_FAIL_IF(!e || !x || !y, KW_EINVAL, "encoder: NULL argument");
    if (e->cfwd) {
        cart_forward(e, x, y);
        return KW_OK;
    }
    apply_sens(e, x);
    if (e->noncart)
        return kw_nufft_forward(e->nufft, e->cbuf, y, e->ncoils);
    kw_status st = kw_fft_forward(e->fft, e->cbuf);
    if (st)
        return st;
    for (size_t c = 0; c < e->ncoils; c++)
        for (size_t k = 0; k < e->npix; k++)
            y[c * e->npix + k] = (!e->mask || e->mask[k]) ? e->cbuf[c * e->npix + k] : 0.0f;
    return KW_OK;
}

kw_status kw_encoder_adjoint(kw_encoder *e, const float complex *y, float complex *x)
{
    KW_FAIL_IF(!e || !x || !y, KW_EINVAL, "encoder: NULL argument");
    kw_status st;
    if (e->cfwd) {
        cart_adjoint(e, y, x);
        return KW_OK;
    }
    if (e->noncart) {
        st = kw_nufft_adjoint(e->nufft, y, e->cbuf, e->ncoils);
    } else {
        for (size_t c = 0; c < e->ncoils; c++)
            for (size_t k = 0; k < e->npix; k++)
                e->cbuf[c * e->npix + k] =
                    (!e->mask || e->mask[k]) ? y[c * e->npix + k] : 0.0f;
        st = kw_fft_inverse(e->fft, e->cbuf);
    }
    if (st)
        return st;
    combine_sens(e, x);
    return KW_OK;
}

/* One coil through the circulant: buf <- S_c x embedded, FFT, *lambda, IFFT. */
static void toeplitz_coil(kw_encoder *e, const float complex *sx, float complex *out)
{
    size_t B[3] = {1, 1, 1}, N[3] = {1, 1, 1};
    const int nd = e->ndim;
    for (int d = 0; d < nd; d++) {
        B[3 - nd + d] = e->big[d];
        N[3 - nd + d] = e->dims[d];
    }
    memset(e->tbuf, 0, e->nbig * sizeof(float complex));
    for (size_t i0 = 0; i0 < N[0]; i0++)
        for (size_t i1 = 0; i1 < N[1]; i1++)
            memcpy(e->tbuf + (i0 * B[1] + i1) * B[2], sx + (i0 * N[1] + i1) * N[2],
                   N[2] * sizeof(float complex));
    fftwf_execute(e->tfwd);
    float *t = (float *)e->tbuf;
    const float *l = (const float *)e->lambda;
    for (size_t i = 0; i < e->nbig; i++) {
        float a = t[2 * i], b = t[2 * i + 1];
        t[2 * i] = a * l[2 * i] - b * l[2 * i + 1];
        t[2 * i + 1] = a * l[2 * i + 1] + b * l[2 * i];
    }
    fftwf_execute(e->tinv);
    for (size_t i0 = 0; i0 < N[0]; i0++)
        for (size_t i1 = 0; i1 < N[1]; i1++)
            memcpy(out + (i0 * N[1] + i1) * N[2], e->tbuf + (i0 * B[1] + i1) * B[2],
                   N[2] * sizeof(float complex));
}

kw_status kw_encoder_normal(kw_encoder *e, const float complex *x, float complex *out)
{
    KW_FAIL_IF(!e || !x || !out, KW_EINVAL, "encoder: NULL argument");
    KW_FAIL_IF(x == out, KW_EINVAL, "encoder: normal() input and output alias");
    kw_status st;
    if (e->cfwd) {
        cart_normal(e, x, out);
        return KW_OK;
    }
    apply_sens(e, x);
    if (e->noncart && e->direct) {
        st = kw_nufft_forward(e->nufft, e->cbuf, e->ybuf, e->ncoils);
        if (st)
            return st;
        if (e->weights)
            for (size_t c = 0; c < e->ncoils; c++)
                for (size_t j = 0; j < e->nk; j++)
                    e->ybuf[c * e->nk + j] *= e->weights[j];
        st = kw_nufft_adjoint(e->nufft, e->ybuf, e->cbuf, e->ncoils);
        if (st)
            return st;
    } else if (e->noncart) {
        for (size_t c = 0; c < e->ncoils; c++)
            toeplitz_coil(e, e->cbuf + c * e->npix, e->cbuf + c * e->npix);
    } else {
        st = kw_fft_forward(e->fft, e->cbuf);
        if (st)
            return st;
        for (size_t c = 0; c < e->ncoils; c++)
            for (size_t k = 0; k < e->npix; k++) {
                float w = (!e->mask || e->mask[k]) ? 1.0f : 0.0f;
                if (e->weights)
                    w *= e->weights[k];
                e->cbuf[c * e->npix + k] *= w;
            }
        st = kw_fft_inverse(e->fft, e->cbuf);
        if (st)
            return st;
    }
    combine_sens(e, out);
    return KW_OK;
}
