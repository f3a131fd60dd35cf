/* metrics.c: NRMSE, PSNR and SSIM (see kw_metrics.h for the definitions).
 * SSIM: Wang Z, Bovik AC, Sheikh HR, Simoncelli EP, "Image quality
 * assessment: from error visibility to structural similarity", IEEE Trans
 * Image Process 13(4):600-612, 2004; Gaussian window of standard deviation
 * 1.5 samples, 11 taps, normalised to unit sum. */
#include "kw_metrics.h"
#include "json_build.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#define SSIM_RADIUS 5
#define SSIM_SIGMA 1.5
#define SSIM_K1 0.01
#define SSIM_K2 0.03

static size_t mirror(long i, size_t n)
{
    /* half-sample symmetric extension (d c b a | a b c d); only reached for
     * border pixels, which the mean leaves out. */
    long N = (long)n;
    while (i < 0 || i >= N) {
        if (i < 0)
            i = -i - 1;
        if (i >= N)
            i = 2 * N - i - 1;
    }
    return (size_t)i;
}

/* Filter `v` (dims d[0..2], C order) in place along `axis` with `w`. */
static void filter_axis(double *v, const size_t *d, int axis, const double *w,
                        double *line)
{
    size_t n = d[axis];
    size_t stride = 1;
    for (int a = axis + 1; a < 3; a++)
        stride *= d[a];
    size_t outer = 1;
    for (int a = 0; a < axis; a++)
        outer *= d[a];
    for (size_t o = 0; o < outer; o++)
        for (size_t s = 0; s < stride; s++) {
            double *base = v + o * n * stride + s;
            for (size_t i = 0; i < n; i++)
                line[i] = base[i * stride];
            for (size_t i = 0; i < n; i++) {
                double acc = 0;
                for (int t = -SSIM_RADIUS; t <= SSIM_RADIUS; t++)
                    acc += w[t + SSIM_RADIUS] * line[mirror((long)i + t, n)];
                base[i * stride] = acc;
            }
        }
}

kw_status kw_metrics_ssim(const double *ref, const double *test, int ndim,
                          const size_t *dims, double data_range, double *map,
                          double *mean)
{
    KW_FAIL_IF(!ref || !test || !dims || !mean, KW_EINVAL, "ssim: NULL argument");
    KW_FAIL_IF(ndim < 1 || ndim > 3, KW_EINVAL, "ssim: %d dimensions (1-3 supported)", ndim);
    KW_FAIL_IF(!(data_range > 0) || !isfinite(data_range), KW_ENUMERIC,
               "ssim: data range %g is not positive (constant reference)", data_range);
    size_t d[3] = {1, 1, 1};
    for (int i = 0; i < ndim; i++)
        d[3 - ndim + i] = dims[i];
    size_t n = d[0] * d[1] * d[2];
    KW_FAIL_IF(n == 0, KW_EINVAL, "ssim: empty image");
    int use[3];
    int any = 0;
    for (int a = 0; a < 3; a++) {
        use[a] = d[a] >= 2 * SSIM_RADIUS + 1;
        any |= use[a];
    }
    KW_FAIL_IF(!any, KW_ERANGE, "ssim: image smaller than the 11-sample window");

    double w[2 * SSIM_RADIUS + 1], ws = 0;
    for (int t = -SSIM_RADIUS; t <= SSIM_RADIUS; t++)
        ws += w[t + SSIM_RADIUS] = exp(-0.5 * t * t / (SSIM_SIGMA * SSIM_SIGMA));
    for (int t = 0; t < 2 * SSIM_RADIUS + 1; t++)
        w[t] /= ws;

    size_t maxd = d[0] > d[1] ? d[0] : d[1];
    maxd = maxd > d[2] ? maxd : d[2];
    double *buf = kw_alloc_n(5 * n + maxd, sizeof *buf);
    KW_FAIL_IF(!buf, KW_ENOMEM, "ssim: out of memory");
    double *mx = buf, *my = buf + n, *sxx = buf + 2 * n, *syy = buf + 3 * n,
           *sxy = buf + 4 * n, *line = buf + 5 * n;
    for (size_t i = 0; i < n; i++) {
        mx[i] = ref[i];
        my[i] = test[i];
        sxx[i] = ref[i] * ref[i];
        syy[i] = test[i] * test[i];
        sxy[i] = ref[i] * test[i];
    }
    for (int a = 0; a < 3; a++)
        if (use[a])
            for (int k = 0; k < 5; k++)
                filter_axis(buf + (size_t)k * n, d, a, w, line);

    const double c1 = (SSIM_K1 * data_range) * (SSIM_K1 * data_range);
    const double c2 = (SSIM_K2 * data_range) * (SSIM_K2 * data_range);
    double sum = 0;
    size_t cnt = 0;
    for (size_t z = 0; z < d[0]; z++)
        for (size_t y = 0; y < d[1]; y++)
            for (size_t x = 0; x < d[2]; x++) {
                size_t i = (z * d[1] + y) * d[2] + x;
                double ux = mx[i], uy = my[i];
                double vx = sxx[i] - ux * ux, vy = syy[i] - uy * uy;
                double vxy = sxy[i] - ux * uy;
                double s = (2 * ux * uy + c1) * (2 * vxy + c2) /
                           ((ux * ux + uy * uy + c1) * (vx + vy + c2));
                if (map)
                    map[i] = s;
                size_t c[3] = {z, y, x};
                int inside = 1;
                for (int a = 0; a < 3; a++)
                    if (use[a] && (c[a] < SSIM_RADIUS || c[a] >= d[a] - SSIM_RADIUS))
                        inside = 0;
                if (inside) {
                    sum += s;
                    cnt++;
                }
            }
    kw_free(buf);
    *mean = sum / (double)cnt;
    return KW_OK;
}

static double mag_at(const kw_array *a, size_t i)
{
    if (a->dtype == KW_C64)
        return cabsf(((const float complex *)a->data)[i]);
    return fabs((double)((const float *)a->data)[i]);
}

kw_status kw_metrics_compute(const kw_array *ref, const kw_array *test,
                             kw_scores *out)
{
    KW_FAIL_IF(!ref || !test || !out, KW_EINVAL, "metrics: NULL argument");
    KW_FAIL_IF((ref->dtype != KW_F32 && ref->dtype != KW_C64) ||
                   (test->dtype != KW_F32 && test->dtype != KW_C64),
               KW_EFORMAT, "metrics: images must be float32 or complex64");
    KW_FAIL_IF(ref->ndim != test->ndim, KW_EFORMAT,
               "shape: reference has %d dimensions, test %d", ref->ndim, test->ndim);
    for (int i = 0; i < ref->ndim; i++)
        KW_FAIL_IF(ref->dims[i] != test->dims[i], KW_EFORMAT,
                   "shape: axis %d is %zu in the reference, %zu in the test", i,
                   ref->dims[i], test->dims[i]);
    KW_FAIL_IF(ref->ndim < 1, KW_EFORMAT, "shape: a scalar is not an image");
    size_t n = kw_array_count(ref);
    KW_FAIL_IF(n == 0, KW_EFORMAT, "shape: empty image");
    kw_status st = kw_array_all_finite(ref);
    if (st)
        return st;
    if ((st = kw_array_all_finite(test)))
        return st;

    double *r = kw_alloc_n(2 * n, sizeof *r);
    KW_FAIL_IF(!r, KW_ENOMEM, "metrics: out of memory");
    double *t = r + n;
    double num = 0, den = 0, rmax = 0, rmin = INFINITY;
    for (size_t i = 0; i < n; i++) {
        r[i] = mag_at(ref, i);
        t[i] = mag_at(test, i);
        num += (t[i] - r[i]) * (t[i] - r[i]);
        den += r[i] * r[i];
        rmax = r[i] > rmax ? r[i] : rmax;
        rmin = r[i] < rmin ? r[i] : rmin;
    }
    if (!(den > 0)) {
        kw_free(r);
        return kw_set_error(KW_ENUMERIC, "ref: the reference image is all zero");
    }
    out->nrmse = sqrt(num / den);
    double rmse = sqrt(num / (double)n);
    out->psnr_db = rmse > 0 ? 20.0 * log10(rmax / rmse) : INFINITY;

    /* SSIM over the last min(ndim, 3) axes; leading axes are a batch. */
    int sd = ref->ndim < 3 ? ref->ndim : 3;
    const size_t *dims = ref->dims + (ref->ndim - sd);
    size_t per = 1;
    for (int i = 0; i < sd; i++)
        per *= dims[i];
    size_t nb = n / per;
    double acc = 0;
    out->ssim = NAN;
    st = KW_OK;
    if (rmax - rmin > 0) {
        for (size_t b = 0; b < nb && st == KW_OK; b++) {
            double m;
            st = kw_metrics_ssim(r + b * per, t + b * per, sd, dims, rmax - rmin, NULL, &m);
            acc += m;
        }
        if (st == KW_ERANGE) { /* too small for the window: SSIM not defined */
            kw_clear_error();
            st = KW_OK;
        } else if (st == KW_OK) {
            out->ssim = acc / (double)nb;
        }
    }
    kw_free(r);
    return st;
}

kw_status kw_metrics_json(const kw_scores *s, char **json)
{
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL output pointer");
    *json = NULL;
    KW_FAIL_PARAM(!s, KW_EINVAL, "scores", "NULL scores");
    cJSON *root = cJSON_CreateObject();
    if (root)
        kw_json_add_scores(root, s->nrmse, s->psnr_db, s->ssim);
    return kw_json_text(root, json);
}
