/* test_traj.c: radial trajectories against published angles and the
 * textbook Nyquist spoke count. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_traj.h"

/* Winkelmann et al. 2007: golden angle 111.246 deg = 180 deg / phi. */
Test(traj, golden_angle_is_180_over_phi)
{
    double phi = (1.0 + sqrt(5.0)) / 2.0;
    double deg = kw_traj_golden_angle(1) * 180.0 / M_PI;
    cr_expect(fabs(deg - 180.0 / phi) < 1e-12, "%.15f", deg);
    cr_expect(fabs(deg - 111.246) < 5e-4, "%.6f vs 111.246 (Winkelmann 2007)", deg);
}

/* Wundrak et al. 2016: psi_N = 180 / (phi + N - 1) deg; their values
 * 68.75 (N = 2), 49.75, 38.97, 32.04, 27.19, 23.63 (N = 7) (table recalled
 * from memory, to the 0.01 deg they print). */
Test(traj, tiny_golden_angles)
{
    const double want[] = {68.75, 49.75, 38.97, 32.04, 27.19, 23.63};
    for (int m = 2; m <= 7; m++) {
        double deg = kw_traj_golden_angle(m) * 180.0 / M_PI;
        cr_expect(fabs(deg - want[m - 2]) < 0.011, "psi_%d = %.4f", m, deg);
    }
    cr_expect(isnan(kw_traj_golden_angle(0)));
}

/* Textbook Nyquist criterion for radial sampling: pi/2 x N full spokes
 * (Bernstein, King & Zhou 2004, sec. 17.1). */
Test(traj, nyquist_spokes)
{
    cr_expect_eq(kw_traj_nyquist_spokes(256), 403); /* 402.12 -> 403 */
    cr_expect_eq(kw_traj_nyquist_spokes(128), 202); /* 201.06 -> 202 */
    cr_expect_eq(kw_traj_nyquist_spokes(2), 4);     /* 3.14 -> 4 */
}

/* The trajectory itself: spoke directions step by the golden angle, samples
 * one delta-k apart through k = 0, times with k = 0 at te. */
Test(traj, golden_trajectory_geometry)
{
    kw_traj_options o;
    kw_traj_options_init(&o);
    o.kind = KW_TRAJ_GOLDEN;
    o.n = 16;
    o.spokes = 21;
    o.tiny = 1;
    o.dwell_s = 4e-6;
    o.te_s = 2e-3;
    size_t ns;
    int nd;
    cr_assert_eq(kw_traj_size(&o, &ns, &nd), KW_OK);
    cr_assert_eq(ns, 16 * 21);
    cr_assert_eq(nd, 2);
    float *k = malloc(ns * 2 * sizeof *k), *t = malloc(ns * sizeof *t);
    cr_assert_eq(kw_traj_make(&o, k, t), KW_OK);
    double phi = (1.0 + sqrt(5.0)) / 2.0;
    for (size_t s = 0; s < 21; s++) {
        /* direction from sample N/2 (k = 0) to N/2 + 1 */
        const float *a = k + (s * 16 + 8) * 2, *b = k + (s * 16 + 9) * 2;
        cr_expect(fabsf(a[0]) < 1e-6f && fabsf(a[1]) < 1e-6f, "k = 0 at n = N/2");
        double th = atan2(b[1] - a[1], b[0] - a[0]);
        double want = fmod((double)s * M_PI / phi, M_PI);
        double d = fmod(th - want + 4 * M_PI, M_PI);
        if (d > M_PI / 2)
            d -= M_PI;
        cr_expect(fabs(d) < 1e-5, "spoke %zu: %.7f vs %.7f", s, th, want);
        cr_expect(fabsf(hypotf(b[0] - a[0], b[1] - a[1]) - 1.0f) < 1e-5f);
        cr_expect(fabsf(t[s * 16 + 8] - 2e-3f) < 1e-9f);
        cr_expect(fabsf(t[s * 16 + 9] - t[s * 16 + 8] - 4e-6f) < 1e-9f);
    }
    free(k);
    free(t);
}

Test(traj, stack_of_stars_partitions)
{
    kw_traj_options o;
    kw_traj_options_init(&o);
    o.kind = KW_TRAJ_STACK_OF_STARS;
    o.n = 8;
    o.nz = 4;
    o.spokes = 5;
    o.dwell_s = 1e-5;
    o.te_s = 1e-3;
    size_t ns;
    int nd;
    cr_assert_eq(kw_traj_size(&o, &ns, &nd), KW_OK);
    cr_assert_eq(nd, 3);
    float *k = malloc(ns * 3 * sizeof *k);
    cr_assert_eq(kw_traj_make(&o, k, NULL), KW_OK);
    for (size_t s = 0; s < ns; s++)
        cr_expect_eq(k[s * 3 + 2], (float)((long)(s / 40) - 2));
    /* uniform angles repeat on every partition */
    cr_expect_eq(k[(40 + 9) * 3], k[9 * 3]);
    free(k);
}

Test(traj, bad_input)
{
    kw_traj_options o;
    kw_traj_options_init(&o);
    o.kind = KW_TRAJ_RADIAL;
    o.n = 15;
    o.spokes = 5;
    o.dwell_s = 1e-5;
    o.te_s = 1e-3;
    size_t ns;
    int nd;
    cr_expect_eq(kw_traj_size(&o, &ns, &nd), KW_ERANGE); /* odd N */
    o.n = 16;
    o.spokes = 0;
    cr_expect_eq(kw_traj_size(&o, &ns, &nd), KW_ERANGE);
    o.spokes = 5;
    o.dwell_s = 0;
    cr_expect_eq(kw_traj_size(&o, &ns, &nd), KW_ERANGE);
    o.dwell_s = 1e-5;
    o.te_s = 1e-5; /* shorter than N/2 x dwell = 8e-5 */
    cr_expect_eq(kw_traj_size(&o, &ns, &nd), KW_ERANGE);
}

/* Readout oversampling F: F N samples per spoke at k_n = (n - F N/2) / F,
 * acquired dwell / F apart with k = 0 at te (the construction stated in
 * kw_traj.h, written out here independently). */
Test(traj, oversampled_readout_geometry)
{
    const size_t n = 16, S = 7;
    for (int f = 1; f <= 4; f++) {
        kw_traj_options o;
        kw_traj_options_init(&o);
        o.kind = KW_TRAJ_RADIAL;
        o.n = n;
        o.spokes = S;
        o.dwell_s = 8e-6;
        o.te_s = 3e-3;
        o.oversampling = f;
        size_t ns;
        int nd;
        cr_assert_eq(kw_traj_size(&o, &ns, &nd), KW_OK);
        cr_assert_eq(ns, (size_t)f * n * S);
        float *k = malloc(ns * 2 * sizeof *k), *t = malloc(ns * sizeof *t);
        cr_assert_eq(kw_traj_make(&o, k, t), KW_OK);
        for (size_t s = 0; s < S; s++) {
            double th = M_PI * (double)s / (double)S;
            for (size_t j = 0; j < (size_t)f * n; j++) {
                double kr = ((double)j - (double)f * (double)n / 2) / f;
                size_t i = s * (size_t)f * n + j;
                cr_expect(fabs(k[2 * i] - kr * cos(th)) < 1e-5, "F %d spoke %zu n %zu", f, s, j);
                cr_expect(fabs(k[2 * i + 1] - kr * sin(th)) < 1e-5);
                /* inside the NUFFT's [-N/2, N/2) */
                cr_expect(k[2 * i] >= -(float)n / 2 && k[2 * i] < (float)n / 2);
                double want = 3e-3 + ((double)j - (double)f * (double)n / 2) * 8e-6 / f;
                cr_expect(fabs(t[i] - want) < 1e-9, "t %g vs %g", t[i], want);
            }
        }
        /* the readout lasts N dwell whatever F: first to last sample
         * (F N - 1) dwell / F */
        cr_expect(fabs((t[f * n - 1] - t[0]) - ((double)f * n - 1) * 8e-6 / f) < 1e-9);
        free(k);
        free(t);
    }
    /* oversampling 0 means 1 */
    kw_traj_options a;
    kw_traj_options_init(&a);
    a.kind = KW_TRAJ_GOLDEN;
    a.n = 8;
    a.spokes = 3;
    a.tiny = 1;
    a.dwell_s = 1e-5;
    a.te_s = 1e-3;
    a.oversampling = 0;
    kw_traj_options b = a;
    b.oversampling = 1;
    float ka[48], kb[48];
    cr_assert_eq(kw_traj_make(&a, ka, NULL), KW_OK);
    cr_assert_eq(kw_traj_make(&b, kb, NULL), KW_OK);
    cr_expect_eq(memcmp(ka, kb, sizeof ka), 0);
}

/* The ramp weights are ring areas (plane geometry: the annulus between
 * r - dr/2 and r + dr/2 has area 2 pi r dr; the central disc of radius
 * dr/2 has pi dr^2 / 4), and their total is the disc of radius N/2,
 * pi N^2 / 4, plus pi dr^2 / 4 (the sum over the rings, worked out in
 * kw_traj.h) -- for every oversampling. */
Test(traj, oversampled_radial_weights_are_ring_areas)
{
    const size_t n = 32, S = 11;
    for (int f = 1; f <= 4; f++) {
        kw_traj_options o;
        kw_traj_options_init(&o);
        o.kind = KW_TRAJ_RADIAL;
        o.n = n;
        o.spokes = S;
        o.dwell_s = 1e-5;
        o.te_s = 1e-3;
        o.oversampling = f;
        size_t ns;
        int nd;
        cr_assert_eq(kw_traj_size(&o, &ns, &nd), KW_OK);
        float *k = malloc(ns * 2 * sizeof *k), *w = malloc(ns * sizeof *w);
        cr_assert_eq(kw_traj_make(&o, k, NULL), KW_OK);
        cr_assert_eq(kw_traj_radial_weights(&o, w), KW_OK);
        const double dr = 1.0 / f;
        const size_t rings = (size_t)f * n / 2 + 1; /* radii m dr, m = 0 .. F N/2 */
        double *area = calloc(rings, sizeof *area), total = 0;
        for (size_t i = 0; i < ns; i++) {
            double r = hypot(k[2 * i], k[2 * i + 1]);
            size_t m = (size_t)lround(r / dr);
            cr_assert(m < rings && fabs(r - (double)m * dr) < 1e-4);
            area[m] += w[i];
            total += w[i];
        }
        cr_expect(fabs(area[0] - M_PI * dr * dr / 4) < 1e-6 * M_PI * dr * dr);
        for (size_t m = 1; m + 1 < rings; m++) {
            double want = 2 * M_PI * ((double)m * dr) * dr;
            cr_expect(fabs(area[m] - want) < 1e-5 * want, "F %d ring %zu: %g vs %g", f, m,
                      area[m], want);
        }
        /* the edge ring |k| = N/2 is reached on one side of each spoke only */
        double edge = M_PI * ((double)n / 2) * dr;
        cr_expect(fabs(area[rings - 1] - edge) < 1e-5 * edge);
        double want = M_PI * (double)(n * n) / 4 + M_PI * dr * dr / 4;
        cr_expect(fabs(total - want) < 1e-6 * want, "F %d: sum %.8g vs %.8g", f, total, want);
        free(area);
        free(k);
        free(w);
    }
}

Test(traj, oversampling_out_of_range)
{
    kw_traj_options o;
    kw_traj_options_init(&o);
    o.kind = KW_TRAJ_RADIAL;
    o.n = 16;
    o.spokes = 5;
    o.dwell_s = 1e-5;
    o.te_s = 1e-3;
    o.oversampling = 5;
    size_t ns;
    int nd;
    float w[16 * 5 * 5];
    cr_expect_eq(kw_traj_size(&o, &ns, &nd), KW_ERANGE);
    cr_expect_eq(kw_traj_radial_weights(&o, w), KW_ERANGE);
    o.oversampling = -1;
    cr_expect_eq(kw_traj_size(&o, &ns, &nd), KW_ERANGE);
    o.oversampling = 4;
    cr_expect_eq(kw_traj_size(&o, &ns, &nd), KW_OK);
    cr_expect_eq(ns, 4 * 16 * 5);
}

/* The growable options (kw_base.h, docs/api.md "The object model"): init
 * fills the documented defaults and struct_size; a struct never initialised
 * is refused naming "options"; an older caller's shorter struct (one without
 * `oversampling`) gets the default F = 1 for the field it lacks. */
Test(traj, options_init_and_older_callers)
{
    kw_traj_options o;
    memset(&o, 0xa5, sizeof o);
    kw_traj_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    cr_expect_eq(o.kind, KW_TRAJ_RADIAL);
    cr_expect_eq(o.n, 0);
    cr_expect_eq(o.nz, 1);
    cr_expect_eq(o.spokes, 0);
    cr_expect_eq(o.tiny, 0);
    cr_expect_eq(o.dwell_s, 0.0);
    cr_expect_eq(o.te_s, 0.0);
    cr_expect_eq(o.oversampling, 1);

    o.n = 8;
    o.spokes = 3;
    o.dwell_s = 1e-5;
    o.te_s = 1e-3;
    size_t ns;
    int nd;
    float w[24];
    kw_traj_options zero = o;
    zero.struct_size = 0;
    cr_expect_eq(kw_traj_size(&zero, &ns, &nd), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect_eq(kw_traj_radial_weights(&zero, w), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect(isnan(kw_traj_angle(&zero, 1)));

    float k0[48], k[48], t0[24], t[24];
    cr_assert_eq(kw_traj_make(&o, k0, t0), KW_OK, "%s", kw_last_error());
    kw_traj_options old = o;
    old.oversampling = 2; /* beyond the older struct: must not be read */
    old.struct_size = offsetof(kw_traj_options, oversampling);
    cr_assert_eq(kw_traj_size(&old, &ns, &nd), KW_OK, "%s", kw_last_error());
    cr_expect_eq(ns, 24); /* F = 1: 8 samples x 3 spokes */
    cr_expect_eq(kw_traj_oversampling(&old), 1);
    cr_assert_eq(kw_traj_make(&old, k, t), KW_OK);
    cr_expect_eq(memcmp(k, k0, sizeof k), 0);
    cr_expect_eq(memcmp(t, t0, sizeof t), 0);
}
