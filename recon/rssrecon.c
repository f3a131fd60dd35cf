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
    if ((size_t)r->nthreads > r->ngroups)
        r->nthreads = (int)r->ngroups;
    if (r->nthreads < 1)
        r->nthreads = 1;
    kw_status st = KW_OK;
    if (!r->even) {
        /* Odd sizes: a centered transform of one coil at a time. */
        r->nthreads = 1;
        st = kw_fft_create(&r->generic, rank, dims, 1, flags);
        if (st)
            goto fail;
    }
    r->scratch = kw_alloc((size_t)r->nthreads * r->n * sizeof(float complex));
    r->acc = kw_alloc((r->even ? r->ngroups : 1) * r->n * sizeof(float));
    KW_FAIL_GOTO(!r->scratch || !r->acc, st, KW_ENOMEM, fail, "rss recon: out of memory");
    if (r->even) {
        /* Plan on a scratch pair; executed later with fftwf_execute_dft on the
         * caller's input (same alignment) and a thread's scratch. Each thread
         * runs a whole single-threaded transform: parallelism is over coils. */
        float complex *in = kw_alloc(r->n * sizeof(float complex));
        KW_FAIL_GOTO(!in, st, KW_ENOMEM, fail, "rss recon: out of memory");
        kw_fft_planner_lock();
        if (kw_fft_threads_ready())
            fftwf_plan_with_nthreads(1);
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
            for (size_t i = 0; i < n; i++) {
                float complex v = r->scratch[i];
                r->acc[i] += crealf(v) * crealf(v) + cimagf(v) * cimagf(v);
            }
        }
        for (size_t i = 0; i < n; i++)
            img[i] = (float)sqrt(r->acc[i]);
        return KW_OK;
    }
    KW_FAIL_IF(fftwf_alignment_of((float *)ksp) != 0, KW_EINVAL,
               "rss recon: k-space must be 16-byte aligned");
    const size_t d0 = r->d[0], d1 = r->d[1], d2 = r->d[2];
    const size_t h0 = d0 / 2, h1 = d1 / 2, h2 = d2 / 2;
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
                if (c == c0)
                    for (size_t i = 0; i < n; i++)
                        a[i] = crealf(s[i]) * crealf(s[i]) + cimagf(s[i]) * cimagf(s[i]);
                else
                    for (size_t i = 0; i < n; i++)
                        a[i] += crealf(s[i]) * crealf(s[i]) + cimagf(s[i]) * cimagf(s[i]);
            }
        }
        /* The output shift: image index (i, j, k) reads transform index
         * (i + h0, j + h1, k + h2) modulo the sizes. */
#pragma omp for schedule(static)
        for (long long row = 0; row < (long long)(d0 * d1); row++) {
            size_t i = (size_t)row / d1, j = (size_t)row % d1;
            size_t si = (i + h0) % d0, sj = (j + h1) % d1;
            const float *src = acc + (si * d1 + sj) * d2;
            float *o = img + (size_t)row * d2;
            for (size_t k = 0; k < d2; k++) {
                size_t sk = k + h2 < d2 ? k + h2 : k + h2 - d2;
                float v = src[sk];
                for (size_t g = 1; g < ngroups; g++)
                    v += src[g * n + sk];
                o[k] = sqrtf(v * scale);
            }
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
