/* rssrecon.c: fused inverse FFT + root-sum-of-squares (see kw_rssrecon.h). */
#include "fft_lock.h"
#include "kw_rssrecon.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "kw_fft.h"

struct kw_rssrecon {
    int rank, nthreads, even;
    int seq;                  /* coils in order, one FFTW plan of nthreads threads */
    size_t d[3], n, coils;
    fftwf_plan plan;          /* one coil, out of place, unnormalised backward */
    float complex *scratch;   /* nthreads x n */
    size_t group, ngroups;    /* coils per group, groups (even path) */
    float *acc;               /* ngroups x n: each group's sum of |coil image|^2 */
    kw_fft_plan *generic;     /* odd sizes: centered transform in place */
};

kw_status kw_rssrecon_create(kw_rssrecon **out, int rank, const size_t *dims,
                             size_t coils, unsigned flags)
{
    *out = NULL;
    KW_FAIL_IF(rank < 2 || rank > 3, KW_EINVAL, "rss recon: rank %d (2 or 3)", rank);
    KW_FAIL_IF(coils < 1, KW_EINVAL, "rss recon: no coils");
    kw_rssrecon *r = kw_alloc_n(1, sizeof *r);
    KW_FAIL_IF(!r, KW_ENOMEM, "rss recon: out of memory");
    r->rank = rank;
    r->coils = coils;
    r->d[0] = r->d[1] = r->d[2] = 1;
    r->n = 1;
    r->even = 1;
    int ni[3];
    for (int i = 0; i < rank; i++) {
        if (dims[i] < 1 || dims[i] > (1u << 24)) {
            kw_free(r);
            return kw_set_error(KW_EINVAL, "rss recon: axis %d has length %zu", i, dims[i]);
        }
        r->d[3 - rank + i] = dims[i];
        ni[i] = (int)dims[i];
        r->n *= dims[i];
        r->even &= dims[i] % 2 == 0;
    }
    /* Coils are summed in fixed groups of `group` consecutive coils (at most
     * KW_RSS_GROUPS groups), then the groups in order: the grouping depends
     * on the coil count only, so the image is bit-identical for any number
     * of threads, and the threads take whole groups without waiting for
     * each other. */
    enum { KW_RSS_GROUPS = 8 };
    r->group = (coils + KW_RSS_GROUPS - 1) / KW_RSS_GROUPS;
    r->ngroups = (coils + r->group - 1) / r->group;
    r->nthreads = kw_fft_threads();
    if (r->nthreads < 1)
        r->nthreads = 1;
    /* One thread, or one coil: the coils in order, each transform threaded
     * by FFTW (the sequential path); else whole groups per thread. */
    r->seq = r->nthreads == 1 || r->ngroups == 1;
    if (!r->seq && (size_t)r->nthreads > r->ngroups)
        r->nthreads = (int)r->ngroups;
    kw_status st = KW_OK;
    if (!r->even) {
        /* Odd sizes: a centered transform of one coil at a time. */
        r->nthreads = 1;
        st = kw_fft_create(&r->generic, rank, dims, 1, flags);
        if (st)
            goto fail;
    }
    size_t nacc = !r->even ? 1 : r->seq ? (r->coils > 1 ? 2 : 1) : r->ngroups;
    r->scratch = kw_alloc((r->seq ? 1 : (size_t)r->nthreads) * r->n * sizeof(float complex));
    r->acc = kw_alloc(nacc * r->n * sizeof(float));
    KW_FAIL_GOTO(!r->scratch || !r->acc, st, KW_ENOMEM, fail, "rss recon: out of memory");
    if (r->even) {
        /* Plan on a scratch pair; executed later with fftwf_execute_dft on the
         * caller's input (same alignment) and a thread's scratch. The
         * coil-parallel path runs whole single-threaded transforms; the
         * sequential one FFTW's threads within each. */
        float complex *in = kw_alloc(r->n * sizeof(float complex));
        KW_FAIL_GOTO(!in, st, KW_ENOMEM, fail, "rss recon: out of memory");
        kw_fft_planner_lock();
        if (kw_fft_threads_ready())
            fftwf_plan_with_nthreads(r->seq ? r->nthreads : 1);
        r->plan = fftwf_plan_dft(rank, ni, (fftwf_complex *)in, (fftwf_complex *)r->scratch,
                                 FFTW_BACKWARD,
                                 kw_fft_rigor(flags & KW_FFT_MEASURE) |
                                     FFTW_PRESERVE_INPUT);
        if (kw_fft_threads_ready())
            fftwf_plan_with_nthreads(kw_fft_threads());
        kw_fft_planner_unlock();
        kw_free(in);
        KW_FAIL_GOTO(!r->plan, st, KW_EINTERNAL, fail, "rss recon: FFTW could not plan");
    }
    *out = r;
    return KW_OK;
fail:
    kw_rssrecon_destroy(r);
    return st;
}

/* a[i] = |s[i]|^2 (first) or a[i] += |s[i]|^2, s read as interleaved floats. */
static void add_power(float *restrict a, const float complex *s_, size_t n, int first)
{
    const float *restrict s = (const float *)s_;
    if (first) {
#pragma omp simd
        for (size_t i = 0; i < n; i++)
            a[i] = s[2 * i] * s[2 * i] + s[2 * i + 1] * s[2 * i + 1];
    } else {
#pragma omp simd
        for (size_t i = 0; i < n; i++)
            a[i] += s[2 * i] * s[2 * i] + s[2 * i + 1] * s[2 * i + 1];
    }
}

/* o[k] = sqrt((t[k] + (p[k] + |s[k]|^2)) * scale) over k < len, where t
 * (the sum of the finished groups) and p (the open group's sum) may be NULL:
 * the last coil's power, added in the order of the group sums. */
static void last_row(float *restrict o, const float *t, const float *p,
                     const float complex *s_, size_t len, float scale)
{
    const float *restrict s = (const float *)s_;
    if (!t && !p) {
#pragma omp simd
        for (size_t k = 0; k < len; k++)
            o[k] = sqrtf((s[2 * k] * s[2 * k] + s[2 * k + 1] * s[2 * k + 1]) * scale);
    } else if (!t) {
#pragma omp simd
        for (size_t k = 0; k < len; k++)
            o[k] = sqrtf((p[k] + (s[2 * k] * s[2 * k] + s[2 * k + 1] * s[2 * k + 1])) *
                                   scale);
    } else if (!p) {
#pragma omp simd
        for (size_t k = 0; k < len; k++)
            o[k] = sqrtf((t[k] + (s[2 * k] * s[2 * k] + s[2 * k + 1] * s[2 * k + 1])) *
                                   scale);
    } else {
#pragma omp simd
        for (size_t k = 0; k < len; k++)
            o[k] = sqrtf(
                (t[k] + (p[k] + (s[2 * k] * s[2 * k] + s[2 * k + 1] * s[2 * k + 1]))) * scale);
    }
}

/* The output shift as indexing: image row (i, j) reads transform row
 * (i + h0, j + h1) and, within it, index k reads k + h2 (modulo the sizes). */
static size_t src_row(const kw_rssrecon *r, size_t row)
{
    size_t d0 = r->d[0], d1 = r->d[1];
    size_t i = row / d1, j = row % d1;
    return ((i + d0 / 2) % d0) * d1 + (j + d1 / 2) % d1;
}

/* The last coil of the sequential path: its power joins the sums as the
 * image is written, shifted. */
static void finish_seq(kw_rssrecon *r, const float *t, const float *p,
                       const float complex *s, float *img, int nt)
{
    const size_t d2 = r->d[2], h2 = d2 / 2, rows = r->d[0] * r->d[1];
    const float scale = 1.0f / (float)r->n; /* unitary: |x/sqrt(n)|^2 */
#pragma omp parallel for num_threads(nt) schedule(static) if (nt > 1)
    for (long long row = 0; row < (long long)rows; row++) {
        size_t q = src_row(r, (size_t)row) * d2;
        float *o = img + (size_t)row * d2;
        last_row(o, t ? t + q + h2 : NULL, p ? p + q + h2 : NULL, s + q + h2, d2 - h2, scale);
        last_row(o + d2 - h2, t ? t + q : NULL, p ? p + q : NULL, s + q, h2, scale);
    }
}

/* The last coil of a group: t = p + |s|^2 (first group) or t += p + |s|^2,
 * p (the group's other coils) NULL when the group has one coil. */
static void fold_group(float *restrict t, const float *restrict p, const float complex *s_,
                       size_t n, int first)
{
    const float *restrict s = (const float *)s_;
    if (!p) {
        add_power(t, s_, n, first);
    } else if (first) {
#pragma omp simd
        for (size_t i = 0; i < n; i++)
            t[i] = p[i] + (s[2 * i] * s[2 * i] + s[2 * i + 1] * s[2 * i + 1]);
    } else {
#pragma omp simd
        for (size_t i = 0; i < n; i++)
            t[i] += p[i] + (s[2 * i] * s[2 * i] + s[2 * i + 1] * s[2 * i + 1]);
    }
}

/* One thread of FFTW's (or threads inside FFTW's plan), coils in order: the
 * open group's sum p, the finished groups' sum t (t = ((a0 + a1) + a2) ...,
 * the order of the coil-parallel path); a group's last coil goes straight
 * into t, and the last coil of all straight into the image. */
static void execute_seq(kw_rssrecon *r, const float complex *ksp, float *img)
{
    const size_t n = r->n;
    float *t = r->acc, *p = r->acc + n;
    float complex *s = r->scratch;
    for (size_t g = 0; g < r->ngroups; g++) {
        size_t c0 = g * r->group, c1 = c0 + r->group < r->coils ? c0 + r->group : r->coils;
        for (size_t c = c0; c < c1; c++) {
            fftwf_execute_dft(r->plan, (fftwf_complex *)(ksp + c * n), (fftwf_complex *)s);
            if (c + 1 == r->coils)
                finish_seq(r, g ? t : NULL, c == c0 ? NULL : p, s, img, r->nthreads);
            else if (c + 1 == c1)
                fold_group(t, c == c0 ? NULL : p, s, n, g == 0);
            else
                add_power(p, s, n, c == c0);
        }
    }
}

kw_status kw_rssrecon_execute(kw_rssrecon *r, const float complex *ksp, float *img)
{
    KW_FAIL_IF(!r || !ksp || !img, KW_EINVAL, "rss recon: NULL argument");
    const size_t n = r->n;
    if (!r->even) {
        memset(r->acc, 0, n * sizeof(float));
        for (size_t c = 0; c < r->coils; c++) {
            memcpy(r->scratch, ksp + c * n, n * sizeof(float complex));
            kw_status st = kw_fft_inverse(r->generic, r->scratch);
            if (st)
                return st;
            add_power(r->acc, r->scratch, n, 0);
        }
#pragma omp simd
        for (size_t i = 0; i < n; i++)
            img[i] = sqrtf(r->acc[i]);
        return KW_OK;
    }
    KW_FAIL_IF(fftwf_alignment_of((float *)ksp) != 0, KW_EINVAL,
               "rss recon: k-space must be 16-byte aligned");
    if (r->seq) {
        execute_seq(r, ksp, img);
        return KW_OK;
    }
    const size_t d2 = r->d[2], h2 = d2 / 2, rows = r->d[0] * r->d[1];
    const float scale = 1.0f / (float)n; /* unitary: |x/sqrt(n)|^2 */
    const int nt = r->nthreads;
    float *acc = r->acc;
    const size_t group = r->group, ngroups = r->ngroups;
#pragma omp parallel num_threads(nt)
    {
        int t = 0;
#ifdef _OPENMP
        t = omp_get_thread_num();
#endif
        float complex *s = r->scratch + (size_t)t * n;
#pragma omp for schedule(dynamic, 1)
        for (long long g = 0; g < (long long)ngroups; g++) {
            float *a = acc + (size_t)g * n;
            size_t c0 = (size_t)g * group, c1 = c0 + group < r->coils ? c0 + group : r->coils;
            for (size_t c = c0; c < c1; c++) {
                fftwf_execute_dft(r->plan, (fftwf_complex *)(ksp + c * n), (fftwf_complex *)s);
                add_power(a, s, n, c == c0);
            }
        }
        /* The group sums, in order, into group 0's row (each image row reads
         * its own transform row), then the shifted square root. */
#pragma omp for schedule(static)
        for (long long row = 0; row < (long long)rows; row++) {
            float *restrict src = acc + src_row(r, (size_t)row) * d2;
            for (size_t g = 1; g < ngroups; g++) {
                const float *restrict sg = src + g * n;
#pragma omp simd
                for (size_t k = 0; k < d2; k++)
                    src[k] += sg[k];
            }
            float *restrict o = img + (size_t)row * d2;
#pragma omp simd
            for (size_t k = 0; k < d2 - h2; k++)
                o[k] = sqrtf(src[k + h2] * scale);
#pragma omp simd
            for (size_t k = 0; k < h2; k++)
                o[d2 - h2 + k] = sqrtf(src[k] * scale);
        }
    }
    return KW_OK;
}

void kw_rssrecon_destroy(kw_rssrecon *r)
{
    if (!r)
        return;
    if (r->plan) {
        kw_fft_planner_lock();
        fftwf_destroy_plan(r->plan);
        kw_fft_planner_unlock();
    }
    kw_fft_destroy(r->generic);
    kw_free(r->scratch);
    kw_free(r->acc);
    kw_free(r);
}
