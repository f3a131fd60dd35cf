/* test_dcf.c: density compensation. References: the Voronoi area of radial
 * sampling from plane geometry (a ring of radius r and width dr has area
 * 2 pi r dr, shared by the 2 Ns samples of Ns full-diameter spokes:
 * w = pi r dr / Ns; the centre disc pi dr^2/4 shared by Ns), and the unit
 * weight of a Cartesian grid (the unitary DFT needs no compensation). */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>

#include "kw_dcf.h"

/* Ns spokes over [0, pi), N samples each at r = -N/2 .. N/2-1 */
static float *radial(size_t nspokes, size_t n)
{
    float *t = malloc(nspokes * n * 2 * sizeof *t);
    for (size_t s = 0; s < nspokes; s++) {
        double a = KW_PI * (double)s / (double)nspokes;
        for (size_t i = 0; i < n; i++) {
            double r = (double)i - (double)(n / 2);
            t[2 * (s * n + i)] = (float)(r * cos(a));
            t[2 * (s * n + i) + 1] = (float)(r * sin(a));
        }
    }
    return t;
}

Test(dcf, radial_matches_voronoi_area)
{
    size_t ns = 50, n = 32;
    float *t = radial(ns, n), *w = malloc(ns * n * sizeof *w);
    cr_assert_eq(kw_dcf_radial(2, ns * n, t, w), KW_OK, "%s", kw_last_error());
    double worst = 0;
    for (size_t j = 0; j < ns * n; j++) {
        double r = hypot(t[2 * j], t[2 * j + 1]);
        /* centre: pi dr^2/6 (Euler-Maclaurin, see dcf.c) */
        double ref = r < 1e-6 ? KW_PI / 6 / ns : KW_PI * r / ns;
        double e = fabs(w[j] - ref) / ref;
        if (e > worst)
            worst = e;
    }
    cr_expect(worst < 1e-5, "worst rel deviation %g", worst);
    free(t);
    free(w);
}

/* A trajectory integrated from sampled gradients (kweave waveform) puts its
 * centre samples a few 1e-6 cycles/FOV off k = 0 in float: they are still
 * the centre, and every weight stays the Voronoi one (before: the 3e-6
 * sample was taken for a first ring, dr = 6e-6, every weight ~1e-6 too
 * small). */
Test(dcf, radial_centre_off_by_rounding)
{
    size_t ns = 50, n = 32;
    float *t = radial(ns, n), *w = malloc(ns * n * sizeof *w);
    for (size_t s = 0; s < ns; s++) { /* the centre sample of each spoke */
        size_t j = s * n + n / 2;
        t[2 * j] = (float)(3e-6 * cos(0.7 * (double)s));
        t[2 * j + 1] = (float)(-2e-6 * sin(1.3 * (double)s));
    }
    cr_assert_eq(kw_dcf_radial(2, ns * n, t, w), KW_OK, "%s", kw_last_error());
    double worst = 0;
    for (size_t j = 0; j < ns * n; j++) {
        double r = hypot(t[2 * j], t[2 * j + 1]);
        double ref = r < 1e-4 ? KW_PI / 6 / ns : KW_PI * r / ns;
        double e = fabs(w[j] - ref) / ref;
        if (e > worst)
            worst = e;
    }
    cr_expect(worst < 1e-4, "worst rel deviation %g", worst);
    free(t);
    free(w);
}

/* A lattice of spacing 1/2 cycle/FOV has Voronoi cells of area 1/4. */
Test(dcf, pipe_fine_lattice_quarter)
{
    size_t d[2] = {24, 20}, nx = 40, ny = 48, np = 40 * 48;
    float *t = malloc(np * 2 * sizeof *t), *w = malloc(np * sizeof *w);
    for (size_t i = 0; i < np; i++) {
        t[2 * i] = (float)(0.5 * ((long)(i % nx) - (long)nx / 2));
        t[2 * i + 1] = (float)(0.5 * ((long)(i / nx) - (long)ny / 2));
    }
    kw_nufft_options o; /* only the thread count matters to the weights */
    kw_nufft_options_init(&o);
    o.tolerance = 1e-4;
    o.nthreads = 1;
    cr_assert_eq(kw_dcf_pipe(2, d, np, t, 10, &o, w), KW_OK, "%s", kw_last_error());
    kw_nufft_options bad = o;
    bad.struct_size = 0; /* never initialised */
    float w0 = w[0];
    cr_expect_eq(kw_dcf_pipe(2, d, np, t, 10, &bad, w), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect_eq(w[0], w0); /* untouched */
    for (size_t i = 0; i < np; i++)
        cr_expect(fabs(w[i] - 0.25) < 0.25 * 1e-2, "w[%zu] = %g", i, w[i]);
    free(t);
    free(w);
}

Test(dcf, pipe_radial_near_voronoi)
{
    size_t ns = 80, n = 48, d[2] = {48, 48};
    float *t = radial(ns, n), *w = malloc(ns * n * sizeof *w);
    cr_assert_eq(kw_dcf_pipe(2, d, ns * n, t, 20, NULL, w), KW_OK, "%s", kw_last_error());
    double worst = 0;
    for (size_t j = 0; j < ns * n; j++) {
        double r = hypot(t[2 * j], t[2 * j + 1]);
        if (r < 2 || r > n / 2 - 4) /* the kernel blurs the edge */
            continue;
        double ref = KW_PI * r / ns;
        double e = fabs(w[j] - ref) / ref;
        if (e > worst)
            worst = e;
    }
    /* measured: within 1.2% (W = 8 kernel) */
    cr_expect(worst < 0.02, "worst rel deviation %g", worst);
    free(t);
    free(w);
}

Test(dcf, bad_input)
{
    float t[4] = {0, 0, 0, 0}, w[2];
    cr_expect_eq(kw_dcf_radial(2, 2, t, w), KW_EINVAL);
    t[0] = NAN;
    cr_expect_eq(kw_dcf_radial(2, 2, t, w), KW_ENUMERIC);
}

/* Golden-angle spokes (increment pi (sqrt 5 - 1) / 2, Winkelmann et al.
 * 2007): unequal sectors, but on every ring the weights must add up to the
 * ring's area 2 pi r dr (plane geometry), and a wider sector weighs more. */
Test(dcf, radial_golden_ring_areas)
{
    size_t ns = 37, n = 16;
    float *t = malloc(ns * n * 2 * sizeof *t), *w = malloc(ns * n * sizeof *w);
    for (size_t s = 0; s < ns; s++) {
        double a = fmod((double)s * KW_PI * (sqrt(5.0) - 1.0) / 2.0, KW_PI);
        for (size_t i = 0; i < n; i++) {
            double r = (double)i - (double)(n / 2);
            t[2 * (s * n + i)] = (float)(r * cos(a));
            t[2 * (s * n + i) + 1] = (float)(r * sin(a));
        }
    }
    cr_assert_eq(kw_dcf_radial(2, ns * n, t, w), KW_OK, "%s", kw_last_error());
    for (int r = 1; r < (int)n / 2; r++) {
        double sum = 0, wmin = 1e9, wmax = 0;
        for (size_t j = 0; j < ns * n; j++)
            if (fabs(hypot(t[2 * j], t[2 * j + 1]) - r) < 1e-3) {
                sum += w[j];
                wmin = fmin(wmin, w[j]);
                wmax = fmax(wmax, w[j]);
            }
        cr_expect(fabs(sum - 2 * KW_PI * r) < 1e-4 * 2 * KW_PI * r, "ring %d: %g vs %g", r, sum,
                  2 * KW_PI * r);
        cr_expect(wmax > 1.2 * wmin, "golden-angle sectors should differ");
    }
    free(t);
    free(w);
}
