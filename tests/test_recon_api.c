/* test_recon_api.c: the public reconstruction object (recon/kw_recon.h)
 * driven from C on a small simulated case.
 *
 * Outside reference: the object itself. A known complex image rho (a disc
 * with a smooth phase) times four smooth complex coil maps s_c is encoded by
 * a direct centered unitary DFT in double written here (the definition of
 * kw_base.h / docs/api.md, independent of FFTW), so every reconstruction is
 * compared with the image that made the data: fully sampled fft + optimal
 * combination (Roemer et al. 1990: |sum conj(s) x| / sum |s|^2 = |rho|),
 * SENSE at R = 2 (Pruessmann et al. 1999: exact unfolding for noise-free
 * data and the true maps) and CG-SENSE (Pruessmann et al. 2001: converges to
 * the same least-squares solution). Bounds: float arithmetic for the direct
 * methods (NRMSE < 1e-4), the CG stopping rule for CG-SENSE (< 1e-2). */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cJSON.h>

#include "kw_recon.h"

#define NY 24
#define NX 20
#define NC 4
#define NP (NY * NX)

static float complex rho[NP];
static float complex sens[NC * NP];
static float complex ksp[NC * NP];

/* centered unitary DFT along one axis of length n (sign -1: forward) */
static void dft1(double complex *v, int n, int stride, int sign)
{
    double complex t[64];
    for (int k = 0; k < n; k++) {
        double complex s = 0;
        for (int j = 0; j < n; j++)
            s += v[j * stride] * cexp(sign * 2 * I * M_PI * (double)(k - n / 2) * (j - n / 2) / n);
        t[k] = s / sqrt(n);
    }
    for (int k = 0; k < n; k++)
        v[k * stride] = t[k];
}

static void simulate(void)
{
    for (int y = 0; y < NY; y++)
        for (int x = 0; x < NX; x++) {
            double u = (x - NX / 2 + 0.5) / (NX / 2), v = (y - NY / 2 + 0.5) / (NY / 2);
            double r2 = u * u + v * v;
            rho[y * NX + x] = r2 < 0.7 ? (float complex)((1.0 + 0.3 * u) * cexp(I * 0.5 * v)) : 0;
            for (int c = 0; c < NC; c++) {
                double cx = c & 1 ? 1.2 : -1.2, cy = c & 2 ? 1.2 : -1.2;
                double d2 = (u - cx) * (u - cx) + (v - cy) * (v - cy);
                sens[c * NP + y * NX + x] = (float complex)(exp(-d2 / 4) * cexp(I * (0.3 * c + 0.2 * u)));
            }
        }
    double complex *w = malloc(NP * sizeof *w);
    for (int c = 0; c < NC; c++) {
        for (int p = 0; p < NP; p++)
            w[p] = (double complex)sens[c * NP + p] * rho[p];
        for (int y = 0; y < NY; y++)
            dft1(w + y * NX, NX, 1, -1);
        for (int x = 0; x < NX; x++)
            dft1(w + x, NY, NX, -1);
        for (int p = 0; p < NP; p++)
            ksp[c * NP + p] = (float complex)w[p];
    }
    free(w);
}

static double nrmse(const float *img)
{
    double num = 0, den = 0;
    for (int p = 0; p < NP; p++) {
        num += pow(img[p] - cabsf(rho[p]), 2);
        den += pow(cabsf(rho[p]), 2);
    }
    return sqrt(num / den);
}

static const size_t kdims[3] = {NC, NY, NX};

static kw_recon_geometry geometry(const float complex *maps)
{
    kw_recon_geometry g;
    memset(&g, 0, sizeof g);
    g.ndim = 3;
    g.dims = kdims;
    g.sens = maps;
    g.sens_ndim = 3;
    g.sens_dims = kdims;
    return g;
}

/* every other ky line kept (R = 2, no calibration block) */
static void undersample(float complex *k)
{
    memcpy(k, ksp, sizeof ksp);
    for (int c = 0; c < NC; c++)
        for (int y = 1; y < NY; y += 2)
            memset(k + c * NP + y * NX, 0, NX * sizeof *k);
}

Test(recon_api, options_init)
{
    kw_recon_options o;
    memset(&o, 0xff, sizeof o);
    kw_recon_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    cr_expect_null(o.method);
    cr_expect(isnan(o.lambda) && isnan(o.stop) && isnan(o.tolerance) && isnan(o.oversampling));
    cr_expect_eq(o.seed, 1);
    cr_expect_eq(o.iterations, 0);
    cr_expect_eq(o.dcf, KW_RECON_DCF_AUTO);
    cr_expect_not_null(kw_recon_method_find("cg-sense"));
    cr_expect_null(kw_recon_method_find("nope"));
    int n = 0;
    for (const kw_recon_method_info *m = kw_recon_methods(); m->name; m++)
        n++;
    cr_expect_eq(n, 11);
    kw_recon_destroy(NULL);
}

/* An unknown method: the closest name for a near miss, and the whole list. */
Test(recon_api, method_check_suggests_and_lists)
{
    const kw_recon_method_info *info = NULL;
    cr_expect_eq(kw_recon_method_check("cs-tv", 1, &info), KW_OK);
    cr_expect_str_eq(info->name, "cs-tv");
    cr_expect_eq(kw_recon_method_check(NULL, 1, &info), KW_OK);
    cr_expect_str_eq(info->name, "grid");
    cr_expect_eq(kw_recon_method_check(NULL, 0, &info), KW_OK);
    cr_expect_str_eq(info->name, "fft");
    cr_expect_eq(kw_recon_method_check("sens", 0, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "method");
    cr_expect_str_eq(kw_last_error(), "method: unknown method 'sens'; did you mean 'sense'? (one of: "
                                      "fft, homodyne, pocs, sense, grappa, grid, cg-sense, "
                                      "cs-wavelet, cs-tv, cs-wavelet-admm, cs-tv-admm)");
    cr_expect_eq(kw_recon_method_check("zzzzzzz", 0, NULL), KW_EINVAL);
    cr_expect_null(strstr(kw_last_error(), "did you mean"));
    cr_expect_eq(kw_recon_method_check("grid", 0, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error(), "method: grid takes non-Cartesian data only (give a trajectory)");
    cr_expect_eq(kw_recon_method_check("sense", 1, NULL), KW_EINVAL);
}

Test(recon_api, fft_optimal)
{
    simulate();
    kw_recon_options o;
    kw_recon_options_init(&o);
    o.combine = "optimal";
    kw_recon_geometry g = geometry(sens);
    kw_recon *r;
    cr_assert_eq(kw_recon_create(&r, &g, &o), KW_OK, "%s", kw_last_error());
    int nd, cplx;
    size_t d[4];
    kw_recon_image_shape(r, &nd, d, &cplx);
    cr_assert(nd == 2 && d[0] == NY && d[1] == NX && !cplx);
    float img[NP];
    for (int rep = 0; rep < 2; rep++) { /* reusable */
        cr_assert_eq(kw_recon_execute(r, ksp, img, NULL, NULL, NULL), KW_OK, "%s", kw_last_error());
        cr_expect(nrmse(img) < 1e-4, "fft optimal NRMSE %g", nrmse(img));
    }
    const kw_recon_report *p = kw_recon_get_report(r);
    cr_expect_str_eq(p->combine, "optimal");
    cr_expect_eq(p->acceleration, 1);
    cr_expect_eq(p->sens_estimated, 0);
    kw_recon_destroy(r);
}

/* The set-up borrows the caller's k-space where a method only reads it
 * (no copy: issue 22's peak memory): the methods must leave it as it was,
 * bit for bit, over two runs (GRAPPA needs a calibration block these data
 * have not; it reads its k-space through the same set-up). */
Test(recon_api, kspace_left_untouched)
{
    simulate();
    static float complex k[NC * NP], keep[NC * NP];
    undersample(k);
    memcpy(keep, k, sizeof k);
    const char *methods[] = {"fft", "sense", "cg-sense", "cs-wavelet", "cs-tv"};
    for (size_t m = 0; m < sizeof methods / sizeof methods[0]; m++) {
        kw_recon_options o;
        kw_recon_options_init(&o);
        o.method = methods[m];
        o.iterations = 3;
        kw_recon_geometry g = geometry(sens);
        kw_recon *r;
        cr_assert_eq(kw_recon_create(&r, &g, &o), KW_OK, "%s: %s", methods[m], kw_last_error());
        static float complex img[NP * NC];
        for (int rep = 0; rep < 2; rep++)
            cr_assert_eq(kw_recon_execute(r, k, (void *)img, NULL, NULL, NULL), KW_OK, "%s: %s",
                         methods[m], kw_last_error());
        cr_expect_eq(memcmp(k, keep, sizeof k), 0, "%s changed the caller's k-space", methods[m]);
        kw_recon_destroy(r);
    }
}

Test(recon_api, sense_r2)
{
    simulate();
    float complex k[NC * NP];
    undersample(k);
    kw_recon_options o;
    kw_recon_options_init(&o);
    o.method = "sense";
    o.want_gfactor = 1;
    kw_recon_geometry g = geometry(sens);
    kw_recon *r;
    cr_assert_eq(kw_recon_create(&r, &g, &o), KW_OK, "%s", kw_last_error());
    float img[NP], gf[NP];
    cr_assert_eq(kw_recon_execute(r, k, img, gf, NULL, NULL), KW_OK, "%s", kw_last_error());
    cr_expect(nrmse(img) < 1e-4, "SENSE R=2 NRMSE %g", nrmse(img));
    const kw_recon_report *p = kw_recon_get_report(r);
    cr_expect_eq(p->acceleration, 2);
    cr_expect_eq(p->uniform, 1);
    cr_expect_str_eq(p->gfactor_analytic, "analytic (Pruessmann et al. 1999)");
    /* g >= 1 wherever defined (Pruessmann et al. 1999) */
    cr_expect(p->gfactor_max >= 1.0 && p->gfactor_mean >= 1.0 - 1e-5, "g mean %g max %g",
              p->gfactor_mean, p->gfactor_max);
    kw_recon_destroy(r);
}

Test(recon_api, cg_sense_r2)
{
    simulate();
    float complex k[NC * NP];
    undersample(k);
    kw_recon_options o;
    kw_recon_options_init(&o);
    o.method = "cg-sense";
    o.iterations = 100;
    kw_recon_geometry g = geometry(sens);
    kw_recon *r;
    cr_assert_eq(kw_recon_create(&r, &g, &o), KW_OK, "%s", kw_last_error());
    float img[NP];
    cr_assert_eq(kw_recon_execute(r, k, img, NULL, NULL, NULL), KW_OK, "%s", kw_last_error());
    cr_expect(nrmse(img) < 1e-2, "CG-SENSE R=2 NRMSE %g", nrmse(img));
    const kw_recon_report *p = kw_recon_get_report(r);
    cr_expect_str_eq(p->solver, "cg-sense");
    cr_expect(p->iterations >= 1 && p->iterations <= 100);
    cr_expect_str_eq(p->log_change_name, "residual");
    kw_recon_destroy(r);
}

Test(recon_api, errors_name_their_parameter)
{
    simulate();
    kw_recon_options o;
    kw_recon_options_init(&o);
    kw_recon_geometry g = geometry(sens);
    kw_recon *r = (kw_recon *)&o; /* must come back NULL */
    o.lambda = -1;
    cr_expect_eq(kw_recon_create(&r, &g, &o), KW_EINVAL);
    cr_expect_null(r);
    cr_expect_str_eq(kw_last_error_param(), "lambda");
    kw_recon_options_init(&o);
    o.kernel[0] = 40;
    cr_expect_eq(kw_recon_create(&r, &g, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "kernel");
    kw_recon_options_init(&o);
    o.method = "magic";
    cr_expect_eq(kw_recon_create(&r, &g, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "method");
    kw_recon_options_init(&o);
    o.struct_size = 0; /* never initialised */
    cr_expect_eq(kw_recon_create(&r, &g, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");

    /* SENSE at R = 2 without maps and without a calibration block */
    float complex k[NC * NP];
    undersample(k);
    kw_recon_options_init(&o);
    o.method = "sense";
    g = geometry(NULL);
    cr_assert_eq(kw_recon_create(&r, &g, &o), KW_OK, "%s", kw_last_error());
    float img[NP];
    cr_expect_eq(kw_recon_execute(r, k, img, NULL, NULL, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "sens");
    cr_expect_null(strstr(kw_last_error(), "--"), "no command-line words: %s", kw_last_error());
    kw_recon_destroy(r);

    /* a stated calibration block the data do not hold */
    kw_recon_sampling s = {0, 0, 24};
    g = geometry(sens);
    g.sampling = &s;
    cr_assert_eq(kw_recon_create(&r, &g, &o), KW_OK, "%s", kw_last_error());
    cr_expect_eq(kw_recon_execute(r, k, img, NULL, NULL, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "acs_lines");
    kw_recon_destroy(r);
}

/* kw_recon_report_json(): the report of the last execute as text: valid
 * JSON with the keys the command writes (less its file names), the numbers
 * of kw_recon_get_report(); refused before any execute and on NULL. */
Test(recon_api, report_json)
{
    simulate();
    float complex k[NC * NP];
    undersample(k);
    kw_recon_options o;
    kw_recon_options_init(&o);
    o.method = "sense";
    o.want_gfactor = 1;
    kw_recon_geometry g = geometry(sens);
    kw_recon *r;
    cr_assert_eq(kw_recon_create(&r, &g, &o), KW_OK, "%s", kw_last_error());
    char *text = (char *)1;
    cr_expect_eq(kw_recon_report_json(r, &text), KW_EINVAL);
    cr_expect_null(text);
    cr_expect_eq(kw_recon_report_json(NULL, &text), KW_EINVAL);
    cr_expect_eq(kw_recon_report_json(r, NULL), KW_EINVAL);
    float img[NP], gf[NP];
    cr_assert_eq(kw_recon_execute(r, k, img, gf, NULL, NULL), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_recon_report_json(r, &text), KW_OK, "%s", kw_last_error());
    size_t len = strlen(text);
    cr_expect(len > 2 && text[len - 1] == '\n');
    cJSON *j = cJSON_Parse(text);
    cr_assert_not_null(j, "not JSON: %s", text);
    const kw_recon_report *p = kw_recon_get_report(r);
    cr_expect_str_eq(cJSON_GetObjectItem(j, "kind")->valuestring, "recon");
    cr_expect_str_eq(cJSON_GetObjectItem(j, "method")->valuestring, "sense");
    cr_expect_str_eq(cJSON_GetObjectItem(j, "layout")->valuestring, "cartesian");
    cr_expect_str_eq(cJSON_GetObjectItem(j, "sens_source")->valuestring, "given");
    cr_expect_eq(cJSON_GetArraySize(cJSON_GetObjectItem(j, "kspace_shape")), 3);
    cr_expect_eq(cJSON_GetObjectItem(j, "coils")->valuedouble, NC);
    const cJSON *smp = cJSON_GetObjectItem(j, "sampling");
    cr_assert_not_null(smp);
    cr_expect_eq(cJSON_GetObjectItem(smp, "acceleration")->valuedouble, 2);
    cr_expect(cJSON_IsTrue(cJSON_GetObjectItem(smp, "uniform")));
    cr_expect_str_eq(cJSON_GetObjectItem(j, "gfactor_method")->valuestring, p->gfactor_analytic);
    const cJSON *shape = cJSON_GetObjectItem(j, "image_shape");
    cr_expect(cJSON_GetArraySize(shape) == 2 && cJSON_GetArrayItem(shape, 0)->valuedouble == NY &&
              cJSON_GetArrayItem(shape, 1)->valuedouble == NX);
    cr_expect_float_eq(cJSON_GetObjectItem(j, "gfactor_max")->valuedouble, p->gfactor_max, 1e-12);
    /* no file names: those are the command's */
    cr_expect_null(cJSON_GetObjectItem(j, "input"));
    cr_expect_null(cJSON_GetObjectItem(j, "gfactor_file"));
    cJSON_Delete(j);
    kw_free(text);
    kw_recon_destroy(r);
}
