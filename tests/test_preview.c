/* test_preview.c: kw_preview (recon/kw_preview.h): the registration on a
 * known sub-pixel move, the measured fat shift and EPI displacement against
 * the published formulas with CODATA 2018's gamma-bar, and bad input. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_plan_input.h"
#include "kw_preview.h"
#include "preview_int.h"

/* CODATA 2018: proton gamma / 2 pi = 42.577 478 518 MHz/T (NIST). */
#define GAMMA_BAR_CODATA 42.577478518e6

static void protocol_of(kw_protocol *p, const char *const *kv)
{
    kw_protocol_input *in = NULL;
    cr_assert_eq(kw_protocol_input_create(&in), KW_OK);
    for (; kv[0]; kv += 2)
        cr_assert_eq(kw_protocol_input_set(in, kv[0], kv[1]), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_protocol_input_finish(in, p), KW_OK, "%s", kw_last_error());
    kw_protocol_input_destroy(in);
}

static kw_preview *run(const kw_protocol *p)
{
    kw_preview_options o;
    kw_preview_options_init(&o);
    o.protocol = p;
    kw_preview *pv = NULL;
    cr_assert_eq(kw_preview_create(&pv, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_preview_execute(pv, NULL, NULL), KW_OK, "%s", kw_last_error());
    return pv;
}

/* A Gaussian blob (sigma 2.5 px: its spectrum is 1e-13 of the peak at the
 * band edge, so sampling it is as good as band-limited) moved by a known
 * sub-pixel amount: the registration finds the move. */
Test(preview, phase_correlation_finds_a_known_move)
{
    size_t ny = 32, nx = 40, n = ny * nx;
    kw_cfloat *a = kw_alloc_n(4 * n, sizeof *a);
    cr_assert(a);
    kw_cfloat *b = a + n, *fa = a + 2 * n, *fb = a + 3 * n;
    const double moves[3][2] = {{1.37, 0}, {0, -2.61}, {-0.25, 0.43}};
    for (int m = 0; m < 3; m++) {
        for (size_t r = 0; r < ny; r++)
            for (size_t c = 0; c < nx; c++) {
                double y = (double)r - 15.2, x = (double)c - 19.7, s2 = 2 * 2.5 * 2.5;
                double ya = y - moves[m][0], xa = x - moves[m][1];
                b[r * nx + c] = (float)exp(-(x * x + y * y) / s2);
                a[r * nx + c] = (float)exp(-(xa * xa + ya * ya) / s2);
            }
        cr_assert_eq(kw_preview_dft(a, ny, nx, fa), KW_OK);
        cr_assert_eq(kw_preview_dft(b, ny, nx, fb), KW_OK);
        for (int ax = 0; ax < 2; ax++) {
            double s = kw_preview_phase_shift(fa, fb, ny, nx, ax);
            cr_expect(fabs(s - moves[m][ax]) < 1e-3, "move %d axis %d: %.6f, expected %.6f", m,
                      ax, s, moves[m][ax]);
        }
    }
    kw_free(a);
}

/* Fat shift of Cartesian GRE at 1.5 T and 3 T for three bandwidths: within
 * 0.1 pixel of 3.4 ppm x gamma-bar B0 / (bandwidth per pixel), towards -x
 * (the chemical-shift displacement: Bernstein, King & Zhou 2004, "Handbook of
 * MRI Pulse Sequences"; 3.4 ppm: the planner's KW_FAT_WATER_PPM, common
 * practice, from memory; gamma-bar CODATA 2018). */
Test(preview, gre_fat_shift_at_two_fields_and_three_bandwidths, .timeout = 120)
{
    const char *fields[2] = {"1.5T", "3T"};
    const double b0[2] = {1.5, 3.0};
    const char *bws[3] = {"100Hz/pixel", "200Hz/pixel", "400Hz/pixel"};
    const double bw[3] = {100, 200, 400};
    for (int f = 0; f < 2; f++)
        for (int i = 0; i < 3; i++) {
            const char *kv[] = {"sequence", "gre", "matrix", "48", "fov", "240mm", "b0",
                                fields[f], "bandwidth", bws[i], NULL};
            kw_protocol p;
            protocol_of(&p, kv);
            kw_preview *pv = run(&p);
            const kw_preview_result *r = kw_preview_get_result(pv);
            cr_assert(r && r->neffects >= 1);
            const kw_preview_effect *e = &r->effects[0];
            double want = -3.4e-6 * GAMMA_BAR_CODATA * b0[f] / bw[i];
            cr_expect_str_eq(e->name, "fat_water_shift");
            cr_expect_str_eq(e->axis, "x");
            cr_expect(fabs(e->measured - want) <= 0.1, "%s %s: measured %.4f px, formula %.4f",
                      fields[f], bws[i], e->measured, want);
            cr_expect(fabs(e->predicted - want) <= 1e-9 * fabs(want));
            cr_expect(e->pass);
            kw_preview_destroy(pv);
        }
}

/* EPI: a 100 Hz bump moves its vial by N x echo spacing x 100 Hz rows
 * (Jezzard & Balaban 1995, MRM 34:65), down the picture; within 10%. */
Test(preview, epi_bump_displacement, .timeout = 120)
{
    const char *kv[] = {"sequence", "epi", "matrix", "48", "fov", "240mm", "b0", "3T",
                        "bandwidth", "2000Hz/pixel", NULL};
    kw_protocol p;
    protocol_of(&p, kv);
    kw_preview *pv = run(&p);
    const kw_preview_result *r = kw_preview_get_result(pv);
    /* fat, the bump, the edge's width and overshoot (no t2star: no blur) */
    cr_assert(r && r->neffects == 4);
    const kw_preview_effect *e = &r->effects[1];
    cr_expect_str_eq(e->name, "off_resonance_displacement");
    cr_expect_str_eq(e->axis, "y");
    double want = 48 * r->echo_spacing_s * 100.0;
    cr_expect(r->echo_spacing_s >= 48 / (2000.0 * 48) * 0.999, "echo spacing %g under the "
              "readout's duration", r->echo_spacing_s);
    cr_expect(fabs(e->measured - want) <= 0.1 * want, "measured %.4f, N esp df %.4f",
              e->measured, want);
    cr_expect(e->pass);
    cr_expect_str_eq(r->effects[2].name, "edge_width_10_90");
    cr_expect_str_eq(r->effects[3].name, "gibbs_overshoot");
    char *j = NULL;
    cr_assert_eq(kw_preview_report_json(pv, &j), KW_OK);
    cr_expect(strstr(j, "\"safety_caution\""));
    kw_free(j);
    kw_preview_destroy(pv);
}

Test(preview, bad_input_names_the_field)
{
    kw_preview *pv = (kw_preview *)1;
    kw_preview_options o;
    kw_preview_options_init(&o);
    cr_expect_eq(kw_preview_create(&pv, &o), KW_EINVAL);
    cr_expect_null(pv);
    cr_expect_str_eq(kw_last_error_param(), "protocol");
    kw_protocol p;
    const char *radial[] = {"sequence", "radial", "matrix", "32", NULL};
    protocol_of(&p, radial);
    o.protocol = &p;
    cr_expect_eq(kw_preview_create(&pv, &o), KW_ENOTSUP);
    cr_expect_str_eq(kw_last_error_param(), "sequence");
    const char *gre[] = {"sequence", "gre", "matrix", "32", NULL};
    protocol_of(&p, gre);
    o.bump_hz = -5;
    cr_expect_eq(kw_preview_create(&pv, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "bump_hz");
    o.bump_hz = 100;
    o.struct_size = 0;
    cr_expect_eq(kw_preview_create(&pv, &o), KW_EINVAL);
    char *j = (char *)1;
    cr_expect_eq(kw_preview_report_json(NULL, &j), KW_EINVAL);
    kw_preview_destroy(NULL);
}

/* The width routine on the plain sampling (all weights 1): the Dirichlet
 * kernel |sin(pi y) / (n sin(pi y / n))|, whose half-maximum point is found
 * here by bisection of the closed form (a naive reference); for large n it
 * tends to the sinc's FWHM 2 x 0.60335 = 1.2067 pixels (sin(pi x)/(pi x) =
 * 1/2 at x = 0.60335, worked by hand). */
Test(preview, fwhm_of_the_dirichlet_kernel)
{
    const size_t ns[3] = {16, 48, 255};
    for (int i = 0; i < 3; i++) {
        size_t n = ns[i];
        kw_cdouble c[256];
        for (size_t k = 0; k < n; k++)
            c[k] = 1;
        double lo = 0.1, hi = 0.99;
        for (int it = 0; it < 60; it++) {
            double y = (lo + hi) / 2;
            double d = fabs(sin(KW_PI * y) / ((double)n * sin(KW_PI * y / (double)n)));
            if (d > 0.5)
                lo = y;
            else
                hi = y;
        }
        double w = kw_preview_fwhm(c, n);
        cr_expect(fabs(w - 2 * lo) < 2e-4, "n %zu: %.6f, closed form %.6f", n, w, 2 * lo);
        cr_expect(fabs(w - 1.2067) < 0.01, "n %zu: %.6f", n, w);
    }
}
