/* test_traj.c: radial trajectories against published angles and the
 * textbook Nyquist spoke count. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>

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
    kw_traj_opts o = {.kind = KW_TRAJ_GOLDEN, .n = 16, .nz = 1, .spokes = 21, .tiny = 1,
                      .dwell_s = 4e-6, .te_s = 2e-3};
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
    kw_traj_opts o = {.kind = KW_TRAJ_STACK_OF_STARS, .n = 8, .nz = 4, .spokes = 5,
                      .dwell_s = 1e-5, .te_s = 1e-3};
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
    kw_traj_opts o = {.kind = KW_TRAJ_RADIAL, .n = 15, .nz = 1, .spokes = 5, .dwell_s = 1e-5,
                      .te_s = 1e-3};
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
