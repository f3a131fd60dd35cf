/* wavelet.c: multilevel 2-D orthogonal Daubechies wavelets, periodic
 * boundaries. Daubechies, "Ten Lectures on Wavelets" (SIAM 1992), Table 6.1
 * gives the scaling filters; the index origin follows PyWavelets' mode
 * 'periodization' so the packed coefficients agree with pywt (see
 * kw_wavelet.h and tests/ref/test_wavelet_pywt.py). */
#include "kw_wavelet.h"

#include <math.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#define KW_WAVELET_MAX_TAPS (2 * KW_WAVELET_MAX_ORDER)

struct kw_wavelet_plan {
    int order, taps, levels;
    size_t ny, nx;
    double lo[KW_WAVELET_MAX_TAPS]; /* h[m] */
    double hi[KW_WAVELET_MAX_TAPS]; /* b[m] = (-1)^m h[F-1-m] */
    float *scratch;                 /* 2 x ny x nx floats (complex fits) */
    int nthreads;                   /* OpenMP threads at create: the loops' cap */
};

/* Daubechies 1992, Table 6.1 (normalised to sum sqrt(2)); db1 and db2 in
 * closed form, db3 and db4 as tabulated. Verified against
 * pywt.Wavelet('dbN').rec_lo in tests/ref/test_wavelet_pywt.py. */
static const double db3_h[6] = {
    0.3326705529500825, 0.8068915093110924, 0.4598775021184914,
    -0.1350110200102546, -0.0854412738820267, 0.0352262918857095};
static const double db4_h[8] = {
    0.2303778133088964, 0.7148465705529154, 0.6308807679298587,
    -0.0279837694168599, -0.1870348117190931, 0.0308413818355607,
    0.0328830116668852, -0.0105974017850690};

kw_status kw_wavelet_filter(int order, double *h, int *len)
{
    KW_FAIL_IF(!h || !len, KW_EINVAL, "wavelet: NULL argument");
    switch (order) {
    case 1:
        h[0] = h[1] = 1.0 / sqrt(2.0);
        break;
    case 2: {
        /* (1 + sqrt3, 3 + sqrt3, 3 - sqrt3, 1 - sqrt3) / (4 sqrt2) */
        const double s3 = sqrt(3.0), d = 4.0 * sqrt(2.0);
        h[0] = (1 + s3) / d;
        h[1] = (3 + s3) / d;
        h[2] = (3 - s3) / d;
        h[3] = (1 - s3) / d;
        break;
    }
    case 3:
        memcpy(h, db3_h, sizeof db3_h);
        break;
    case 4:
        memcpy(h, db4_h, sizeof db4_h);
        break;
    default:
        return kw_set_error(KW_EINVAL, "wavelet: order %d not supported (db%d..db%d)",
                            order, KW_WAVELET_MIN_ORDER, KW_WAVELET_MAX_ORDER);
    }
    *len = 2 * order;
    return KW_OK;
}

int kw_wavelet_max_levels(size_t ny, size_t nx)
{
    int l = 0;
    while (l < 30 && ny > 0 && nx > 0 && ny % ((size_t)2 << l) == 0 &&
           nx % ((size_t)2 << l) == 0)
        l++;
    return l;
}

kw_status kw_wavelet_create(kw_wavelet_plan **plan, int order, size_t ny,
                            size_t nx, int levels)
{
    KW_FAIL_IF(!plan, KW_EINVAL, "wavelet: NULL plan pointer");
    *plan = NULL;
    KW_FAIL_IF(ny == 0 || nx == 0, KW_EINVAL, "wavelet: empty image %zux%zu", ny, nx);
    KW_FAIL_IF(levels < 0, KW_EINVAL, "wavelet: levels %d < 0", levels);
    KW_FAIL_IF(levels > kw_wavelet_max_levels(ny, nx), KW_EINVAL,
               "wavelet: %d levels need both sizes divisible by 2^%d (got %zux%zu)",
               levels, levels, ny, nx);
    double h[KW_WAVELET_MAX_TAPS];
    int taps;
    kw_status st = kw_wavelet_filter(order, h, &taps);
    if (st)
        return st;
    size_t bytes;
    size_t dims[3] = {2, ny, nx};
    st = kw_checked_bytes(dims, 3, sizeof(float), 0, &bytes);
    if (st)
        return st;
    kw_wavelet_plan *p = kw_alloc(sizeof *p);
    KW_FAIL_IF(!p, KW_ENOMEM, "wavelet: out of memory");
    p->scratch = kw_alloc(bytes);
    if (!p->scratch) {
        kw_free(p);
        return kw_set_error(KW_ENOMEM, "wavelet: out of memory (%zu bytes)", bytes);
    }
    p->order = order;
    p->taps = taps;
    p->levels = levels;
#ifdef _OPENMP
    p->nthreads = omp_get_max_threads();
#else
    p->nthreads = 1;
#endif
    p->ny = ny;
    p->nx = nx;
    for (int m = 0; m < taps; m++) {
        p->lo[m] = h[m];
        p->hi[m] = (m % 2 ? -1.0 : 1.0) * h[taps - 1 - m];
    }
    *plan = p;
    return KW_OK;
}

void kw_wavelet_destroy(kw_wavelet_plan *plan)
{
    if (!plan)
        return;
    kw_free(plan->scratch);
    kw_free(plan);
}

int kw_wavelet_levels(const kw_wavelet_plan *plan) { return plan ? plan->levels : 0; }
int kw_wavelet_order(const kw_wavelet_plan *plan) { return plan ? plan->order : 0; }

/* Wrapped index (base + m) mod n for a possibly negative base. */
static inline size_t wrap(long v, size_t n)
{
    long r = v % (long)n;
    return (size_t)(r < 0 ? r + (long)n : r);
}

/* Columns are filtered a block of KW_WB contiguous floats (columns times
 * components) at a time, so that the inner loops run along rows and
 * vectorise; every element's sum keeps the order of the taps. */
enum { KW_WB = 64 };

/* One row of the analysis along x: taps at 2k + off + m, wrapped at the
 * edges only. */
static void analyse_row(const kw_wavelet_plan *p, const float *xr, float *sr, size_t w,
                        int nc)
{
    const int F = p->taps;
    const long off = 1 - F / 2;
    const size_t w2 = w / 2;
    for (size_t k = 0; k < w2; k++) {
        long b0 = (long)(2 * k) + off;
        int inside = b0 >= 0 && b0 + F <= (long)w;
        for (int c = 0; c < nc; c++) {
            double a = 0, d = 0;
            if (inside) {
                const float *v0 = xr + (size_t)b0 * nc + c;
                for (int m = 0; m < F; m++) {
                    double v = v0[(size_t)m * nc];
                    a += p->lo[m] * v;
                    d += p->hi[m] * v;
                }
            } else {
                for (int m = 0; m < F; m++) {
                    double v = xr[wrap(b0 + m, w) * nc + c];
                    a += p->lo[m] * v;
                    d += p->hi[m] * v;
                }
            }
            sr[k * nc + c] = (float)a;
            sr[(w2 + k) * nc + c] = (float)d;
        }
    }
}

/* One analysis level over the active h x w block of `x` (row stride nx,
 * nc floats per element), using `s` (same layout) as scratch. */
static void analyse_level(const kw_wavelet_plan *p, float *x, float *s,
                          size_t h, size_t w, int nc)
{
    const size_t nx = p->nx, rs = nx * (size_t)nc, wn = w * (size_t)nc;
    const int F = p->taps;
    const long off = 1 - F / 2;
    const size_t h2 = h / 2;
    /* rows: x -> s */
#pragma omp parallel for num_threads(p->nthreads) schedule(static) if (h * w > 65536)
    for (size_t r = 0; r < h; r++)
        analyse_row(p, x + r * rs, s + r * rs, w, nc);
    /* columns: s -> x, output rows k and h2 + k from input rows 2k + off + m */
#pragma omp parallel for num_threads(p->nthreads) schedule(static) if (h * w > 65536)
    for (size_t k = 0; k < h2; k++) {
        for (size_t i0 = 0; i0 < wn; i0 += KW_WB) {
            const size_t len = wn - i0 < KW_WB ? wn - i0 : KW_WB;
            double a[KW_WB], d[KW_WB];
            for (size_t i = 0; i < len; i++)
                a[i] = d[i] = 0;
            for (int m = 0; m < F; m++) {
                const float *restrict v = s + wrap((long)(2 * k) + off + m, h) * rs + i0;
                const double lo = p->lo[m], hi = p->hi[m];
#pragma omp simd
                for (size_t i = 0; i < len; i++) {
                    a[i] += lo * v[i];
                    d[i] += hi * v[i];
                }
            }
            float *restrict xa = x + k * rs + i0, *restrict xd = x + (h2 + k) * rs + i0;
#pragma omp simd
            for (size_t i = 0; i < len; i++) {
                xa[i] = (float)a[i];
                xd[i] = (float)d[i];
            }
        }
    }
}

/* The transpose of analyse_level (the synthesis of an orthogonal bank). */
static void synthesise_level(const kw_wavelet_plan *p, float *x, float *s,
                             size_t h, size_t w, int nc)
{
    const size_t nx = p->nx, rs = nx * (size_t)nc, wn = w * (size_t)nc;
    const int F = p->taps;
    const long off = 1 - F / 2;
    const size_t w2 = w / 2, h2 = h / 2;
    /* columns: x -> s (scatter, in the order k then m for every element;
     * each block of columns is independent) */
#pragma omp parallel for num_threads(p->nthreads) schedule(static) if (h * w > 65536)
    for (size_t i0 = 0; i0 < wn; i0 += KW_WB) {
        const size_t len = wn - i0 < KW_WB ? wn - i0 : KW_WB;
        for (size_t r = 0; r < h; r++)
            memset(s + r * rs + i0, 0, len * sizeof(float));
        for (size_t k = 0; k < h2; k++) {
            const float *restrict xa = x + k * rs + i0, *restrict xd = x + (h2 + k) * rs + i0;
            for (int m = 0; m < F; m++) {
                float *restrict o = s + wrap((long)(2 * k) + off + m, h) * rs + i0;
                const double lo = p->lo[m], hi = p->hi[m];
#pragma omp simd
                for (size_t i = 0; i < len; i++)
                    o[i] += (float)(lo * xa[i] + hi * xd[i]);
            }
        }
    }
    /* rows: s -> x */
#pragma omp parallel for num_threads(p->nthreads) schedule(static) if (h * w > 65536)
    for (size_t r = 0; r < h; r++) {
        float *xr = x + r * rs;
        const float *sr = s + r * rs;
        for (size_t i = 0; i < w * (size_t)nc; i++)
            xr[i] = 0.0f;
        for (size_t k = 0; k < w2; k++) {
            long b0 = (long)(2 * k) + off;
            int inside = b0 >= 0 && b0 + F <= (long)w;
            for (int c = 0; c < nc; c++) {
                const float a = sr[k * nc + c];
                const float d = sr[(w2 + k) * nc + c];
                if (inside) {
                    float *o = xr + (size_t)b0 * nc + c;
                    for (int m = 0; m < F; m++)
                        o[(size_t)m * nc] += (float)(p->lo[m] * a + p->hi[m] * d);
                } else {
                    for (int m = 0; m < F; m++)
                        xr[wrap(b0 + m, w) * nc + c] += (float)(p->lo[m] * a + p->hi[m] * d);
                }
            }
        }
    }
}

static kw_status run(const kw_wavelet_plan *p, const float *in, float *out,
                     int nc, int inverse)
{
    KW_FAIL_IF(!p || !in || !out, KW_EINVAL, "wavelet: NULL argument");
    if (in != out)
        memcpy(out, in, p->ny * p->nx * (size_t)nc * sizeof(float));
    if (!inverse) {
        for (int l = 0; l < p->levels; l++)
            analyse_level(p, out, p->scratch, p->ny >> l, p->nx >> l, nc);
    } else {
        for (int l = p->levels - 1; l >= 0; l--)
            synthesise_level(p, out, p->scratch, p->ny >> l, p->nx >> l, nc);
    }
    return KW_OK;
}

kw_status kw_wavelet_forward(const kw_wavelet_plan *plan, const float *in, float *out)
{
    return run(plan, in, out, 1, 0);
}

kw_status kw_wavelet_inverse(const kw_wavelet_plan *plan, const float *in, float *out)
{
    return run(plan, in, out, 1, 1);
}

kw_status kw_wavelet_forward_c(const kw_wavelet_plan *plan, const float complex *in,
                               float complex *out)
{
    return run(plan, (const float *)in, (float *)out, 2, 0);
}

kw_status kw_wavelet_inverse_c(const kw_wavelet_plan *plan, const float complex *in,
                               float complex *out)
{
    return run(plan, (const float *)in, (float *)out, 2, 1);
}
