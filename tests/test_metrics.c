/* test_metrics.c: NRMSE, PSNR and SSIM on cases with closed-form answers
 * (the scikit-image comparison is tests/ref/test_score_skimage.py). */
#include <criterion/criterion.h>
#include <math.h>

#include <string.h>

#include <cJSON.h>

#include "kw_metrics.h"

static kw_array img(size_t ny, size_t nx)
{
    kw_array a;
    size_t d[2] = {ny, nx};
    cr_assert_eq(kw_array_alloc(&a, KW_F32, 2, d), KW_OK);
    return a;
}

/* test = 2 ref: ||test - ref|| / ||ref|| = 1 exactly; RMSE = rms(ref). */
Test(metrics, scaled_copy)
{
    kw_array a = img(20, 24), b = img(20, 24);
    float *x = a.data, *y = b.data;
    double ss = 0, mx = 0;
    for (size_t i = 0; i < 480; i++) {
        x[i] = (float)(1 + (i % 7));
        y[i] = 2 * x[i];
        ss += x[i] * x[i];
        mx = fmax(mx, x[i]);
    }
    kw_scores s;
    cr_assert_eq(kw_metrics_compute(&a, &b, &s), KW_OK);
    cr_expect_float_eq(s.nrmse, 1.0, 1e-12);
    cr_expect_float_eq(s.psnr_db, 20 * log10(mx / sqrt(ss / 480)), 1e-9);
    kw_array_free(&a);
    kw_array_free(&b);
}

/* SSIM of an image with itself is 1 (Wang et al. 2004, eq. 13 with x = y);
 * with a constant offset c of a constant image: luminance term only,
 * (2 mu (mu + c) + C1) / (mu^2 + (mu + c)^2 + C1). */
Test(metrics, ssim_closed_forms)
{
    size_t d[2] = {16, 16};
    double r[256], t[256], m;
    for (int i = 0; i < 256; i++) {
        r[i] = (i % 16) * 0.25 + 1;
        t[i] = r[i];
    }
    cr_assert_eq(kw_metrics_ssim(r, t, 2, d, 3.75, NULL, &m), KW_OK);
    cr_expect_float_eq(m, 1.0, 1e-12);
    for (int i = 0; i < 256; i++) {
        r[i] = 2;
        t[i] = 2.5;
    }
    double L = 4, c1 = pow(0.01 * L, 2);
    cr_assert_eq(kw_metrics_ssim(r, t, 2, d, L, NULL, &m), KW_OK);
    cr_expect_float_eq(m, (2 * 2 * 2.5 + c1) / (4 + 6.25 + c1), 1e-12);
}

Test(metrics, bad_input)
{
    kw_array a = img(12, 12), b = img(12, 11);
    kw_scores s;
    cr_expect_eq(kw_metrics_compute(&a, &b, &s), KW_EFORMAT);
    kw_array_free(&b);
    b = img(12, 12);
    cr_expect_eq(kw_metrics_compute(&a, &b, &s), KW_ENUMERIC); /* zero reference */
    ((float *)a.data)[0] = NAN;
    cr_expect_eq(kw_metrics_compute(&a, &b, &s), KW_ENUMERIC);
    kw_array_free(&a);
    kw_array_free(&b);
    double v[4] = {1, 2, 3, 4}, m;
    size_t d[2] = {2, 2};
    cr_expect_eq(kw_metrics_ssim(v, v, 2, d, 3, NULL, &m), KW_ERANGE); /* below the window */
}

/* kw_metrics_json(): the three scores under the report's keys, infinite
 * PSNR as null; NULL refused. */
Test(metrics, json)
{
    kw_scores s = {0.125, 18.0, 0.5};
    char *text = NULL;
    cr_assert_eq(kw_metrics_json(&s, &text), KW_OK, "%s", kw_last_error());
    cr_expect(text[strlen(text) - 1] == '\n');
    cJSON *j = cJSON_Parse(text);
    cr_assert_not_null(j);
    cr_expect_eq(cJSON_GetArraySize(j), 3);
    cr_expect_str_eq(j->child->string, "nrmse");
    cr_expect_eq(cJSON_GetObjectItem(j, "nrmse")->valuedouble, 0.125);
    cr_expect_eq(cJSON_GetObjectItem(j, "psnr_db")->valuedouble, 18.0);
    cr_expect_eq(cJSON_GetObjectItem(j, "ssim")->valuedouble, 0.5);
    cJSON_Delete(j);
    kw_free(text);
    s.psnr_db = INFINITY;
    cr_assert_eq(kw_metrics_json(&s, &text), KW_OK);
    j = cJSON_Parse(text);
    cr_expect(cJSON_IsNull(cJSON_GetObjectItem(j, "psnr_db")));
    cJSON_Delete(j);
    kw_free(text);
    text = (char *)1;
    cr_expect_eq(kw_metrics_json(NULL, &text), KW_EINVAL);
    cr_expect_null(text);
    cr_expect_eq(kw_metrics_json(&s, NULL), KW_EINVAL);
}
