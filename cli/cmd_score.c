/* cmd_score.c: `kweave score --ref A.npy --test B.npy [--json F] [--diff D.png]`:
 * NRMSE, PSNR and SSIM of |B| against |A| (definitions in kw_metrics.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "arrayio.h"
#include "cli.h"
#include "figure.h"
#include "jsonio.h"
#include "kw_metrics.h"
#include "npy.h"
#include "png.h"

static const char USAGE[] =
    "usage: kweave score --ref A.npy --test B.npy [--json F] [--diff D.png]\n"
    "\n"
    "Compares the magnitude of B with the magnitude of A:\n"
    "  nrmse   = ||B - A|| / ||A||\n"
    "  psnr_db = 20 log10(max|A| / RMSE)\n"
    "  ssim    = mean SSIM (Wang et al. 2004; Gaussian window sigma 1.5,\n"
    "            K1 = 0.01, K2 = 0.03, data range max|A| - min|A|)";

/* The difference picture: |test| - |ref| (d, n values) on a grey scale
 * symmetric about 0 (mid-grey), +-W with W = the reference's own window
 * (the 99.5th percentile of |ref|, as `render` draws it) divided by the
 * multiplier of kw_figure_diff_multiplier(), which brings the difference's
 * 99.5th percentile of |d| inside the window; the title states it. */
static kw_status write_diff(const char *path, const kw_array *ref, const kw_array *d)
{
    size_t n = kw_array_count(d);
    float *mag = kw_alloc_n(n, sizeof *mag);
    KW_FAIL_IF(!mag, KW_ENOMEM, "out of memory for %zu values", n);
    const float *dv = d->data;
    for (size_t i = 0; i < n; i++)
        mag[i] = ref->dtype == KW_C64 ? cabsf(((const float complex *)ref->data)[i])
                                      : fabsf(((const float *)ref->data)[i]);
    float lo, ref_hi, diff_hi;
    kw_status st = kw_png_window(mag, n, &lo, &ref_hi);
    if (!st) {
        for (size_t i = 0; i < n; i++)
            mag[i] = fabsf(dv[i]);
        st = kw_png_window(mag, n, &lo, &diff_hi);
    }
    kw_free(mag);
    if (st)
        return st;
    double mult = kw_figure_diff_multiplier(ref_hi, diff_hi);
    double w = ref_hi > 0 ? ref_hi / mult : (diff_hi > 0 ? diff_hi : 1);
    kw_png_opts po;
    kw_png_opts_default(&po);
    po.part = KW_PART_REAL;
    po.auto_window = 0;
    po.lo = (float)-w;
    po.hi = (float)w;
    char title[160];
    kw_figure_diff_title(title, sizeof title, mult);
    kw_figure_opts fo;
    kw_figure_opts_default(&fo);
    fo.title = title;
    fo.quantity = "|test| - |ref|";
    fo.units = "image units";
    fo.tile_label = d->ndim >= 3 ? "slice" : NULL;
    return kw_figure_write(path, d, &po, &fo);
}

static int load(const char *path, const char *field, kw_array *a)
{
    kw_status st = kw_array_read(path, a);
    if (st)
        return kw_cli_status(st, field);
    if (a->dtype == KW_U8)
        return kw_cli_fail(field, "must be float or complex, not a mask");
    if (kw_array_all_finite(a))
        return kw_cli_fail(field, "%s", kw_last_error());
    return -1;
}

/* The least-squares ratio s of |B| to |A| (|B| ~ s |A|): <|B|,|A|> / <|A|,|A|>. */
static double intensity_ratio(const kw_array *a, const kw_array *b)
{
    double ab = 0, aa = 0;
    size_t n = kw_array_count(a);
    for (size_t i = 0; i < n; i++) {
        double x = a->dtype == KW_C64 ? cabsf(((float complex *)a->data)[i]) : fabsf(((float *)a->data)[i]);
        double y = b->dtype == KW_C64 ? cabsf(((float complex *)b->data)[i]) : fabsf(((float *)b->data)[i]);
        ab += x * y;
        aa += x * x;
    }
    return aa > 0 ? ab / aa : NAN;
}

/* Threshold of the note: the ratio off 1 by more than 20% (common practice,
 * no source: well beyond what noise or a method's bias moves it). */
#define SCALE_NOTE 0.2

/* The ratio, one note on stderr when it is far from 1, and with --fit-scale
 * B divided by it (so the scores are of the shapes, not the scales). */
static double check_scale(const kw_array *a, kw_array *b, int fit)
{
    double r = intensity_ratio(a, b);
    if (!(r > 0) || !isfinite(r))
        return r;
    if (!fit && fabs(r - 1) > SCALE_NOTE)
        fprintf(stderr, "kweave: note: the test image is %.3g times the reference in intensity (least-squares "
                "ratio); images made with estimated coil maps are in the scale of a root-sum-of-squares image, "
                "not the object's (docs/cartesian.md, \"Intensity scale\"); --fit-scale scores test / %.3g\n",
                r, r);
    if (fit) {
        size_t n = kw_array_count(b);
        for (size_t i = 0; i < n; i++)
            if (b->dtype == KW_C64)
                ((float complex *)b->data)[i] /= (float)r;
            else
                ((float *)b->data)[i] /= (float)r;
    }
    return r;
}

int kw_cmd_score(int argc, char **argv)
{
    const char *refp = NULL, *testp = NULL, *json = NULL, *diff = NULL;
    int fit = 0;
    const kw_opt table[] = {
        {"ref", KW_OPT_STRING, &refp, 0, NULL, "reference image .npy (or FILE.h5:/dataset) (required)"},
        {"test", KW_OPT_STRING, &testp, 0, NULL, "image to score .npy (or FILE.h5:/dataset) (required)"},
        {"json", KW_OPT_STRING, &json, 0, NULL, "JSON report (keys nrmse, psnr_db, ssim; - for stdout; default: none)"},
        {"diff", KW_OPT_STRING, &diff, 0, NULL, "picture of |test| - |ref| (.png) with its grey bar and multiplier (default: none)"},
        {"fit-scale", KW_OPT_FLAG, &fit, 0, NULL,
         "score test / s, s the least-squares intensity ratio (default: as given)"},
        {NULL, 0, NULL, 0, NULL, NULL},
    };
    int rc = kw_opts_parse(argc, argv, table, USAGE, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (!refp)
        return kw_cli_fail("ref", "missing (--ref A.npy)");
    if (!testp)
        return kw_cli_fail("test", "missing (--test B.npy)");
    if (refp && testp && strcmp(refp, "-") == 0 && strcmp(testp, "-") == 0)
        return kw_cli_fail("test", "only one of --ref and --test can be standard input");
    kw_array a = {0}, b = {0}, d = {0};
    cJSON *root = NULL;
    int code = KW_EXIT_OK;
    if ((rc = load(refp, "ref", &a)) >= 0 || (rc = load(testp, "test", &b)) >= 0) {
        code = rc;
        goto done;
    }
    kw_scores s;
    double ratio = NAN;
    kw_status st = kw_metrics_compute(&a, &b, &s);
    if (!st) { /* the shapes agree: the ratio, and the scores again of test / ratio */
        ratio = check_scale(&a, &b, fit);
        if (fit && ratio > 0 && isfinite(ratio))
            st = kw_metrics_compute(&a, &b, &s);
    }
    if (st) {
        /* shape mismatch names the test image; an all-zero reference the ref */
        code = kw_cli_status(st, st == KW_EFORMAT ? "test" : "ref");
        goto done;
    }
    if (diff) {
        if ((st = kw_array_alloc(&d, KW_F32, a.ndim, a.dims))) {
            code = kw_cli_status(st, "diff");
            goto done;
        }
        size_t n = kw_array_count(&a);
        float *o = d.data;
        for (size_t i = 0; i < n; i++) {
            float x = a.dtype == KW_C64 ? cabsf(((float complex *)a.data)[i]) : fabsf(((float *)a.data)[i]);
            float y = b.dtype == KW_C64 ? cabsf(((float complex *)b.data)[i]) : fabsf(((float *)b.data)[i]);
            o[i] = y - x;
        }
        if ((st = write_diff(diff, &a, &d))) {
            code = kw_cli_status(st, "diff");
            goto done;
        }
    }
    root = cJSON_CreateObject();
    kw_json_add_scores(root, s.nrmse, s.psnr_db, s.ssim);
    cJSON_AddStringToObject(root, "ref", refp);
    cJSON_AddStringToObject(root, "test", testp);
    kw_json_add_number_or_null(root, "intensity_ratio", ratio);
    if (fit)
        cJSON_AddBoolToObject(root, "scale_fitted", 1);
    if (json && (st = kw_json_write(json, root))) {
        code = kw_cli_status(st, "json");
        goto done;
    }
    if (!json || strcmp(json, "-") != 0)
        printf("nrmse   %.6f\npsnr_db %.3f\nssim    %.6f\n", s.nrmse, s.psnr_db, s.ssim);
done:
    cJSON_Delete(root);
    kw_array_free(&a);
    kw_array_free(&b);
    kw_array_free(&d);
    return code;
}
