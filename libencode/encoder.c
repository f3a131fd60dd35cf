/* encoder.c: E, E^H and E^H W E (kw_encoder.h). */
#include "fft_lock.h"
#include "kw_encoder.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

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
    kw_fft_plan *fft;      /* Cartesian: batched over coils */
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
    kw_fft_destroy(e->fft);
    kw_nufft_destroy(e->nufft);
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
        st = kw_fft_create(&e->fft, ndim, dims, ncoils,
                           opts->measure ? KW_FFT_MEASURE : KW_FFT_ESTIMATE);
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
