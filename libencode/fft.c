/* fft.c: centered unitary FFTs on FFTW (single precision, OpenMP threads).
 *
 * When every transformed axis has even length the centering shifts reduce to
 * sign flips: with k' = k - N/2 and n' = n - N/2,
 *   exp(-2 pi i k'n'/N) = exp(-2 pi i kn/N) (-1)^k (-1)^n (-1)^(N/2),
 * so the input is modulated by (-1)^n, transformed in place by one batched
 * plan, and the output modulated by (-1)^(k + N/2) / sqrt(N). Odd lengths take
 * the general path: a rolled copy into a one-transform scratch buffer.
 */
#include "fft_lock.h"
#include "kw_fft.h"

#include <pthread.h>
#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

struct kw_fft_plan {
    int rank;
    size_t d[3];     /* dims padded at the front with 1 to rank 3 */
    size_t n, batch; /* samples per transform, transforms */
    int even;        /* every transformed axis even: modulation path */
    float post_sign; /* (-1)^(sum N/2) for the even path */
    fftwf_plan fwd, inv;
    float complex *scratch; /* odd path: one transform */
    int nthreads;           /* OpenMP threads at create: the modulation's cap */
};

static int fft_nthreads = 1;
static int fft_ready;

static pthread_mutex_t planner_mu;
static pthread_once_t planner_once = PTHREAD_ONCE_INIT;

static void planner_init(void)
{
    pthread_mutexattr_t a;
    pthread_mutexattr_init(&a);
    pthread_mutexattr_settype(&a, PTHREAD_MUTEX_RECURSIVE);
    pthread_mutex_init(&planner_mu, &a);
    pthread_mutexattr_destroy(&a);
}

void kw_fft_planner_lock(void)
{
    pthread_once(&planner_once, planner_init);
    pthread_mutex_lock(&planner_mu);
}

void kw_fft_planner_unlock(void) { pthread_mutex_unlock(&planner_mu); }

static kw_status setup_locked(int nthreads);

kw_status kw_fft_setup(int nthreads)
{
    kw_fft_planner_lock();
    kw_status st = setup_locked(nthreads);
    kw_fft_planner_unlock();
    return st;
}

static kw_status setup_locked(int nthreads)
{
    if (nthreads <= 0) {
#ifdef _OPENMP
        nthreads = omp_get_max_threads();
#else
        nthreads = 1;
#endif
    }
    if (!fft_ready) {
        KW_FAIL_IF(!fftwf_init_threads(), KW_EINTERNAL,
                   "fft: FFTW threads failed to start");
        fft_ready = 1;
    }
    fft_nthreads = nthreads;
    return KW_OK;
}

int kw_fft_threads(void) { return fft_nthreads; }

int kw_fft_threads_ready(void) { return fft_ready; }

/* data[b, i, j, k] *= c * (-1)^(i + j + k) over batch blocks of d0 x d1 x d2
 * (d2 even: the even path). Each row is read as floats, two samples (four
 * floats, signs s s -s -s) a step, so that the loop vectorises; the products
 * are those of a complex sample times a real sign. */
static void modulate(float complex *data, size_t batch, const size_t *d, float c, int nt)
{
    const size_t d0 = d[0], d1 = d[1], half = d[2] / 2;
    const long long rows = (long long)(batch * d0 * d1);
#pragma omp parallel for num_threads(nt) schedule(static) if (nt > 1 && rows * (long long)d[2] > 65536)
    for (long long r = 0; r < rows; r++) {
        size_t j = (size_t)r % d1, i = ((size_t)r / d1) % d0;
        const float s = ((i + j) & 1) ? -c : c;
        float *restrict f = (float *)(data + (size_t)r * d[2]);
#pragma omp simd
        for (size_t k = 0; k < half; k++) {
            f[4 * k] *= s;
            f[4 * k + 1] *= s;
            f[4 * k + 2] *= -s;
            f[4 * k + 3] *= -s;
        }
    }
}

/* dst = roll(src, shift) on each axis of a d0 x d1 x d2 block. */
static void roll3(float complex *dst, const float complex *src, const size_t *d,
                  const size_t *shift)
{
    for (size_t i = 0; i < d[0]; i++) {
        size_t io = (i + shift[0]) % d[0];
        for (size_t j = 0; j < d[1]; j++) {
            size_t jo = (j + shift[1]) % d[1];
            const float complex *s = src + (i * d[1] + j) * d[2];
            float complex *o = dst + (io * d[1] + jo) * d[2];
            size_t s2 = shift[2] % d[2];
            memcpy(o + s2, s, (d[2] - s2) * sizeof *s);
            memcpy(o, s + (d[2] - s2), s2 * sizeof *s);
        }
    }
}

kw_status kw_fft_create(kw_fft_plan **plan, int rank, const size_t *dims,
                        size_t batch, unsigned flags)
{
    *plan = NULL;
    KW_FAIL_IF(rank < 1 || rank > 3, KW_EINVAL, "fft: rank %d (1 to 3)", rank);
    KW_FAIL_IF(batch < 1, KW_EINVAL, "fft: batch must be at least 1");
    kw_fft_plan *p = kw_alloc_n(1, sizeof *p);
    KW_FAIL_IF(!p, KW_ENOMEM, "fft: out of memory");
    p->rank = rank;
    p->d[0] = p->d[1] = p->d[2] = 1;
    p->n = 1;
    p->even = 1;
    int half = 0;
    int n_int[3];
    for (int i = 0; i < rank; i++) {
        size_t v = dims[i];
        if (v < 1 || v > (1u << 30) || p->n > SIZE_MAX / v) {
            kw_free(p);
            return kw_set_error(KW_EINVAL, "fft: axis %d has length %zu", i, v);
        }
        p->d[3 - rank + i] = v;
        n_int[i] = (int)v;
        p->n *= v;
        if (v % 2)
            p->even = 0;
        half += (int)(v / 2);
    }
    p->batch = batch;
    /* The modulation's threads: OpenMP's at create, at most the library's
     * setting once kw_fft_setup() has run (the FFTW plan's threads). */
#ifdef _OPENMP
    p->nthreads = omp_get_max_threads();
#else
    p->nthreads = 1;
#endif
    kw_fft_planner_lock();
    if (fft_ready && fft_nthreads < p->nthreads)
        p->nthreads = fft_nthreads;
    kw_fft_planner_unlock();
    p->post_sign = (half & 1) ? -1.0f : 1.0f;
    unsigned ff = kw_fft_rigor(flags & KW_FFT_MEASURE);
    size_t howmany = p->even ? batch : 1;
    if (howmany > (size_t)1 << 30 || p->n > (size_t)1 << 31) {
        kw_free(p);
        return kw_set_error(KW_ERANGE, "fft: transform too large");
    }
    size_t total = howmany * p->n;
    float complex *buf = kw_alloc(total * sizeof(float complex));
    if (!buf) {
        kw_free(p);
        return kw_set_error(KW_ENOMEM, "fft: cannot allocate %zu samples", total);
    }
    kw_fft_planner_lock();
    if (fft_ready)
        fftwf_plan_with_nthreads(fft_nthreads);
    p->fwd = fftwf_plan_many_dft(rank, n_int, (int)howmany, (fftwf_complex *)buf,
                                 NULL, 1, (int)p->n, (fftwf_complex *)buf, NULL, 1,
                                 (int)p->n, FFTW_FORWARD, ff);
    p->inv = fftwf_plan_many_dft(rank, n_int, (int)howmany, (fftwf_complex *)buf,
                                 NULL, 1, (int)p->n, (fftwf_complex *)buf, NULL, 1,
                                 (int)p->n, FFTW_BACKWARD, ff);
    kw_fft_planner_unlock();
    if (p->even)
        kw_free(buf);
    else
        p->scratch = buf;
    if (!p->fwd || !p->inv) {
        kw_fft_destroy(p);
        return kw_set_error(KW_EINTERNAL, "fft: FFTW could not make a plan");
    }
    *plan = p;
    return KW_OK;
}

static kw_status run(const kw_fft_plan *p, float complex *data, int forward)
{
    KW_FAIL_IF(!p || !data, KW_EINVAL, "fft: NULL plan or data");
    KW_FAIL_IF(fftwf_alignment_of((float *)data) != 0, KW_EINVAL,
               "fft: data must be 16-byte aligned");
    fftwf_plan fp = forward ? p->fwd : p->inv;
    float scale = (float)(1.0 / sqrt((double)p->n));
    if (p->even) {
        modulate(data, p->batch, p->d, 1.0f, p->nthreads);
        fftwf_execute_dft(fp, (fftwf_complex *)data, (fftwf_complex *)data);
        modulate(data, p->batch, p->d, p->post_sign * scale, p->nthreads);
        return KW_OK;
    }
    size_t pre[3], post[3];
    for (int i = 0; i < 3; i++) {
        post[i] = p->d[i] / 2;                /* fftshift */
        pre[i] = p->d[i] - p->d[i] / 2;       /* ifftshift */
    }
    for (size_t b = 0; b < p->batch; b++) {
        float complex *blk = data + b * p->n;
        roll3(p->scratch, blk, p->d, pre);
        fftwf_execute_dft(fp, (fftwf_complex *)p->scratch,
                          (fftwf_complex *)p->scratch);
        roll3(blk, p->scratch, p->d, post);
        for (size_t i = 0; i < p->n; i++)
            blk[i] *= scale;
    }
    return KW_OK;
}

kw_status kw_fft_forward(const kw_fft_plan *p, float complex *data)
{
    return run(p, data, 1);
}

kw_status kw_fft_inverse(const kw_fft_plan *p, float complex *data)
{
    return run(p, data, 0);
}

size_t kw_fft_size(const kw_fft_plan *p) { return p ? p->n : 0; }
size_t kw_fft_batch(const kw_fft_plan *p) { return p ? p->batch : 0; }

void kw_fft_destroy(kw_fft_plan *p)
{
    if (!p)
        return;
    kw_fft_planner_lock();
    if (p->fwd)
        fftwf_destroy_plan(p->fwd);
    if (p->inv)
        fftwf_destroy_plan(p->inv);
    kw_fft_planner_unlock();
    kw_free(p->scratch);
    kw_free(p);
}

char *kw_fft_wisdom_export(void)
{
    kw_fft_planner_lock();
    char *w = fftwf_export_wisdom_to_string();
    kw_fft_planner_unlock();
    return w;
}

static int reproducible;

void kw_fft_set_reproducible(int on)
{
    kw_fft_planner_lock();
    reproducible = on != 0;
    if (reproducible)
        fftwf_forget_wisdom();
    kw_fft_planner_unlock();
}

int kw_fft_reproducible(void)
{
    kw_fft_planner_lock();
    int r = reproducible;
    kw_fft_planner_unlock();
    return r;
}

unsigned kw_fft_rigor(int measure)
{
    kw_fft_planner_lock();
    unsigned f = measure && !reproducible ? FFTW_MEASURE : FFTW_ESTIMATE;
    kw_fft_planner_unlock();
    return f;
}

kw_status kw_fft_wisdom_import(const char *w)
{
    KW_FAIL_IF(!w, KW_EINVAL, "fft: NULL wisdom");
    kw_fft_planner_lock();
    if (reproducible) { /* measured plans must not come back through wisdom */
        kw_fft_planner_unlock();
        return KW_OK;
    }
    int ok = fftwf_import_wisdom_from_string(w);
    kw_fft_planner_unlock();
    KW_FAIL_IF(!ok, KW_EFORMAT, "fft: wisdom rejected by FFTW");
    return KW_OK;
}
