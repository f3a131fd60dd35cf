/* partial_fourier.c: homodyne (Noll, Nishimura & Macovski 1991) and POCS
 * (Haacke, Lindskog & Lin 1991) partial Fourier reconstruction; see kw_pf.h.
 * POCS alternates the projections onto two closed convex sets (Youla & Webb
 * 1982, IEEE TMI 1:81): the images with the estimated phase and the images
 * that agree with the measured k-space. */
#include "kw_pf.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_fft.h"

struct kw_pf {
    size_t batch, d[3], npix;
    size_t lo[3], hi[3], h[3];
    int partial[3];
    kw_fft_plan *plan;
    float *hw;            /* homodyne weight (npix) */
    float *lw;            /* low-resolution window (npix) */
    float complex *phase; /* e^{i phi} (batch, npix) */
    float complex *work;  /* (batch, npix) */
};

void kw_pf_destroy(kw_pf *p)
{
    if (!p)
        return;
    kw_fft_destroy(p->plan);
    kw_free(p->hw);
    kw_free(p->lw);
    kw_free(p->phase);
    kw_free(p->work);
    kw_free(p);
}

void kw_pf_fraction(const kw_pf *p, double frac[3])
{
    for (int a = 0; a < 3; a++)
        frac[a] = p->partial[a] ? (double)(p->hi[a] - p->lo[a] + 1) / (double)p->d[a] : 1.0;
}

kw_status kw_pf_create(kw_pf **out, size_t batch, const size_t d[3],
                       const size_t lo[3], const size_t hi[3])
{
    KW_FAIL_IF(!out || !d || !lo || !hi || batch == 0, KW_EINVAL, "partial Fourier: NULL argument");
    *out = NULL;
    kw_pf *p = kw_alloc_n(1, sizeof *p);
    KW_FAIL_IF(!p, KW_ENOMEM, "partial Fourier: out of memory");
    p->batch = batch;
    p->npix = d[0] * d[1] * d[2];
    int any = 0;
    kw_status st = KW_OK;
    for (int a = 0; a < 3; a++) {
        p->d[a] = d[a];
        p->lo[a] = lo[a];
        p->hi[a] = hi[a];
        size_t c = d[a] / 2;
        if (lo[a] > c || hi[a] < c || hi[a] >= d[a]) {
            st = kw_set_error(KW_EINVAL, "partial Fourier: the samples along axis %d miss k = 0", a);
            break;
        }
        size_t l = c - lo[a], r = hi[a] - c;
        p->h[a] = l < r ? l : r;
        p->partial[a] = d[a] > 1 && (l > r + 1 || r > l + 1);
        if (p->partial[a] && p->h[a] < 2) {
            st = kw_set_error(KW_EINVAL, "partial Fourier: no symmetric band around k = 0 along axis %d", a);
            break;
        }
        any |= p->partial[a];
    }
    if (!st && !any)
        st = kw_set_error(KW_EINVAL, "partial Fourier: the data are not partial Fourier "
                                     "(the sampled extent is symmetric about k = 0)");
    if (st) {
        kw_pf_destroy(p);
        return st;
    }
    int rank = d[0] > 1 ? 3 : 2;
    st = kw_fft_create(&p->plan, rank, rank == 3 ? d : d + 1, batch, KW_FFT_ESTIMATE);
    p->hw = kw_alloc(p->npix * sizeof *p->hw);
    p->lw = kw_alloc(p->npix * sizeof *p->lw);
    p->phase = kw_alloc(batch * p->npix * sizeof *p->phase);
    p->work = kw_alloc(batch * p->npix * sizeof *p->work);
    if (st || !p->hw || !p->lw || !p->phase || !p->work) {
        kw_pf_destroy(p);
        return st ? st : kw_set_error(KW_ENOMEM, "partial Fourier: out of memory");
    }
    for (size_t q = 0; q < p->npix; q++) {
        size_t c3[3] = {q / (d[1] * d[2]), (q / d[2]) % d[1], q % d[2]};
        double hw = 1, lw = 1;
        for (int a = 0; a < 3; a++) {
            long k = (long)c3[a] - (long)(d[a] / 2);
            if (c3[a] < p->lo[a] || c3[a] > p->hi[a]) {
                hw = lw = 0;
                break;
            }
            if (!p->partial[a])
                continue;
            long h = (long)p->h[a];
            int upper = (p->hi[a] - d[a] / 2) > (d[a] / 2 - p->lo[a]); /* extra side */
            long ks = upper ? k : -k;
            if (ks > h)
                hw *= 2;
            else if (ks >= -h)
                hw *= 1.0 + (double)ks / (double)(h + 1);
            else
                hw = 0;
            if (k < -h || k > h)
                lw = 0;
            else
                lw *= 0.5 + 0.5 * cos(KW_PI * (double)k / (double)(h + 1));
        }
        p->hw[q] = (float)hw;
        p->lw[q] = (float)lw;
    }
    *out = p;
    return KW_OK;
}

static kw_status estimate_phase(kw_pf *p, const float complex *ksp)
{
    size_t n = p->npix;
    for (size_t b = 0; b < p->batch; b++)
        for (size_t q = 0; q < n; q++)
            p->phase[b * n + q] = p->lw[q] * ksp[b * n + q];
    kw_status st = kw_fft_inverse(p->plan, p->phase);
    if (st)
        return st;
    for (size_t i = 0; i < p->batch * n; i++) {
        float m = cabsf(p->phase[i]);
        p->phase[i] = m > 0 ? p->phase[i] / m : 1.0f;
    }
    return KW_OK;
}

kw_status kw_pf_homodyne(kw_pf *p, const float complex *ksp, float complex *img)
{
    KW_FAIL_IF(!p || !ksp || !img, KW_EINVAL, "homodyne: NULL argument");
    kw_status st = estimate_phase(p, ksp);
    if (st)
        return st;
    size_t n = p->npix;
    for (size_t b = 0; b < p->batch; b++)
        for (size_t q = 0; q < n; q++)
            img[b * n + q] = p->hw[q] * ksp[b * n + q];
    if ((st = kw_fft_inverse(p->plan, img)))
        return st;
    for (size_t i = 0; i < p->batch * n; i++) {
        float re = crealf(img[i] * conjf(p->phase[i]));
        img[i] = re * p->phase[i];
    }
    return KW_OK;
}

kw_status kw_pf_pocs(kw_pf *p, const float complex *ksp, float complex *img,
                     int iters, double stop, int *done)
{
    KW_FAIL_IF(!p || !ksp || !img || iters < 1, KW_EINVAL, "pocs: bad argument");
    kw_status st = estimate_phase(p, ksp);
    if (st)
        return st;
    size_t n = p->npix, tot = p->batch * n;
    memcpy(img, ksp, tot * sizeof *img);
    if ((st = kw_fft_inverse(p->plan, img)))
        return st;
    int it = 0;
    for (it = 1; it <= iters; it++) {
        /* Projection onto the convex set {r e^{i phi}: r real} (a subspace):
         * Re(x e^{-i phi}) e^{i phi}. Haacke's update |x| e^{i phi} is not a
         * projection; where the low-resolution phase is off by pi (Gibbs
         * lobes near edges) it flips the sign of the image, and on
         * band-limited data its error grows with iterations (issue 19). */
        for (size_t i = 0; i < tot; i++)
            p->work[i] = crealf(img[i] * conjf(p->phase[i])) * p->phase[i];
        if ((st = kw_fft_forward(p->plan, p->work)))
            return st;
        for (size_t b = 0; b < p->batch; b++)
            for (size_t q = 0; q < n; q++)
                if (p->lw[q] > 0 || p->hw[q] > 0) /* inside the sampled box */
                    p->work[b * n + q] = ksp[b * n + q];
        if ((st = kw_fft_inverse(p->plan, p->work)))
            return st;
        double num = 0, den = 0;
        for (size_t i = 0; i < tot; i++) {
            float complex dlt = p->work[i] - img[i];
            num += (double)crealf(dlt * conjf(dlt));
            den += (double)crealf(p->work[i] * conjf(p->work[i]));
            img[i] = p->work[i];
        }
        if (den > 0 && sqrt(num / den) < stop)
            break;
    }
    if (done)
        *done = it > iters ? iters : it;
    return KW_OK;
}
