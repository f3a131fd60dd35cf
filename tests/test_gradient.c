/* test_gradient.c: lobes, spiral and EPI under the hardware limits.
 * Closed forms from the Handbook of MRI Pulse Sequences (Bernstein, King &
 * Zhou 2004, trapezoid and triangle lobes; recalled from memory), worked by
 * hand in the comments. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>

#include "kw_gradient.h"

#define REL(a, b, tol)                                                          \
    cr_expect(fabs((a) - (b)) <= (tol) * fabs(b), "%s = %.12g, expected %.12g", #a, \
              (double)(a), (double)(b))

static const kw_gradient_limits LIM = {0.040, 200.0, 10e-6};

/* Area of raster points by the trapezoid rule (exact for piecewise linear). */
static double raster_area(const double *g, size_t n, double dt)
{
    double a = 0;
    for (size_t i = 0; i + 1 < n; i++)
        a += 0.5 * (g[i] + g[i + 1]) * dt;
    return a;
}

static void expect_within_limits(const double *g, size_t n, const kw_gradient_limits *l)
{
    for (size_t i = 0; i < n; i++) {
        cr_assert(fabs(g[i]) <= l->gmax_T_per_m * (1 + 1e-9), "|G| = %g at %zu", g[i], i);
        if (i)
            cr_assert(fabs(g[i] - g[i - 1]) / l->raster_s <= l->slew_T_per_m_per_s * (1 + 1e-9),
                      "slew %g at %zu", fabs(g[i] - g[i - 1]) / l->raster_s, i);
    }
}

Test(gradient, triangle_hand_worked)
{
    /* gmax 40 mT/m, slew 200 T/m/s: triangle while A <= G^2/S = 8e-6 T s/m.
     * A = 2e-6 T s/m: duration 2 sqrt(A/S) = 2 sqrt(1e-8) = 200 us = 20 rasters;
     * ramps 100 us, peak A / 100 us = 20 mT/m, slope 20e-3 / 1e-4 = 200 T/m/s. */
    kw_trapezoid t;
    cr_assert_eq(kw_trapezoid_for_area(2e-6, &LIM, &t), KW_OK);
    REL(kw_trapezoid_duration(&t), 200e-6, 1e-9);
    REL(t.ramp_s, 100e-6, 1e-9);
    cr_expect(t.flat_s < 1e-12);
    REL(t.amplitude_T_per_m, 0.020, 1e-9);
    REL(kw_trapezoid_area(&t), 2e-6, 1e-12);
}

Test(gradient, trapezoid_hand_worked)
{
    /* A = 20e-6 T s/m > 8e-6: ramps G/S = 0.04 / 200 = 200 us, flat
     * A/G - G/S = 500 us - 200 us = 300 us, total A/G + G/S = 700 us. */
    kw_trapezoid t;
    cr_assert_eq(kw_trapezoid_for_area(-20e-6, &LIM, &t), KW_OK);
    REL(kw_trapezoid_duration(&t), 700e-6, 1e-9);
    REL(t.ramp_s, 200e-6, 1e-9);
    REL(t.flat_s, 300e-6, 1e-9);
    REL(t.amplitude_T_per_m, -0.040, 1e-9);
    REL(kw_trapezoid_area(&t), -20e-6, 1e-12);
}

Test(gradient, raster_rounding_keeps_area_and_limits)
{
    /* Off-raster areas: the duration rounds up to the raster, never below the
     * continuous optimum, and the area stays exact within 1e-6 relative. */
    const kw_gradient_limits lims[2] = {{0.040, 200.0, 10e-6}, {0.080, 120.0, 4e-6}};
    for (int l = 0; l < 2; l++)
        for (int i = 1; i <= 60; i++) {
            double A = 1.37e-7 * pow(1.23, i) * (i % 2 ? 1 : -1);
            kw_trapezoid t;
            cr_assert_eq(kw_trapezoid_for_area(A, &lims[l], &t), KW_OK);
            double G = lims[l].gmax_T_per_m, S = lims[l].slew_T_per_m_per_s;
            double a = fabs(A);
            double tmin = a <= G * G / S ? 2 * sqrt(a / S) : a / G + G / S;
            double T = kw_trapezoid_duration(&t);
            cr_expect(T >= tmin * (1 - 1e-9) && T <= tmin + 3 * lims[l].raster_s,
                      "A %g: %g s vs optimum %g s", A, T, tmin);
            size_t n = kw_trapezoid_raster_count(&t, lims[l].raster_s);
            double *g = malloc(n * sizeof *g);
            cr_assert_eq(kw_trapezoid_raster(&t, lims[l].raster_s, g, n), KW_OK);
            cr_expect(g[0] == 0 && g[n - 1] == 0);
            REL(raster_area(g, n, lims[l].raster_s), A, 1e-6);
            expect_within_limits(g, n, &lims[l]);
            cr_expect_eq(kw_trapezoid_raster(&t, lims[l].raster_s, g, n - 1), KW_ERANGE);
            free(g);
        }
}

Test(gradient, flat_top_lobe)
{
    /* 5.871649 mT/m for 4 ms: ramp 5.871649e-3 / 200 = 29.4 us -> 30 us. */
    kw_trapezoid t;
    cr_assert_eq(kw_trapezoid_flat(5.871649e-3, 4e-3, &LIM, &t), KW_OK);
    REL(t.ramp_s, 30e-6, 1e-9);
    REL(t.flat_s, 4e-3, 1e-9);
    cr_expect_eq(kw_trapezoid_flat(NAN, 4e-3, &LIM, &t), KW_EINVAL);
    kw_gradient_limits bad = {0, 200, 1e-5};
    cr_expect_eq(kw_trapezoid_for_area(1e-6, &bad, &t), KW_EINVAL);
}

static void check_spiral(int N, double fov, int nint, double dwell, const kw_gradient_limits *l)
{
    kw_spiral_spec sp = {fov, N, nint, dwell};
    kw_spiral_info inf;
    cr_assert_eq(kw_spiral_size(&sp, l, &inf), KW_OK, "%s", kw_last_error());
    size_t ng = inf.readout_points + inf.rampdown_points;
    double *gx = malloc(ng * sizeof *gx), *gy = malloc(ng * sizeof *gy);
    float *tr = malloc(inf.samples * (size_t)nint * 2 * sizeof *tr);
    float *tm = malloc(inf.samples * sizeof *tm);
    kw_spiral_info inf2;
    cr_assert_eq(kw_spiral_design(&sp, l, &inf2, gx, gy, tr, tm), KW_OK);
    cr_expect_eq(inf2.samples, inf.samples);
    /* every raster step: |G| <= gmax, |dG/dt| <= slew (vector), from 0 and back to 0 */
    double px = 0, py = 0, kx = 0, ky = 0;
    const double gcap = fmin(l->gmax_T_per_m, 1.0 / (KW_GAMMA_BAR_P * fov * dwell));
    for (size_t j = 0; j < ng; j++) {
        cr_assert(hypot(gx[j], gy[j]) <= gcap * (1 + 1e-9), "|G| %g at %zu", hypot(gx[j], gy[j]), j);
        cr_assert(hypot(gx[j] - px, gy[j] - py) <= l->slew_T_per_m_per_s * l->raster_s * (1 + 1e-9),
                  "slew at %zu", j);
        px = gx[j], py = gy[j];
        if (j < inf.readout_points) {
            kx += KW_GAMMA_BAR_P * gx[j] * l->raster_s;
            ky += KW_GAMMA_BAR_P * gy[j] * l->raster_s;
        }
    }
    cr_expect(px == 0 && py == 0, "ramp-down ends at 0");
    /* k-max = N / (2 FOV) reached at the end of the readout */
    REL(hypot(kx, ky), N / (2 * fov), 1e-6);
    REL(inf.readout_s, inf.readout_points * l->raster_s, 1e-12);
    /* samples at the dwell; no sample beyond k-max (cycles per FOV: N/2) */
    double rmax = 0;
    for (size_t m = 0; m < inf.samples * (size_t)nint; m++)
        rmax = fmax(rmax, hypot(tr[2 * m], tr[2 * m + 1]));
    cr_expect(rmax <= N / 2.0 * (1 + 1e-5) && rmax >= N / 2.0 - 1, "rmax %g", rmax);
    REL(tm[inf.samples - 1], (inf.samples - 1) * dwell, 1e-6);
    /* Nyquist along the path: consecutive samples at most 1 cycle/FOV apart */
    for (size_t m = 1; m < inf.samples; m++)
        cr_assert(hypot(tr[2 * m] - tr[2 * m - 2], tr[2 * m + 1] - tr[2 * m - 1]) <= 1 + 1e-4);
    /* Archimedean: N / (2 nint) turns per interleaf (recalled from memory,
     * Bernstein et al. 2004, spiral chapter): unwrap the angle of interleaf 0. */
    double turns = 0, prev = 0;
    for (size_t m = 1; m < inf.samples; m++) {
        double a = atan2(tr[2 * m + 1], tr[2 * m]);
        double d = a - prev;
        while (d > KW_PI) d -= 2 * KW_PI;
        while (d < -KW_PI) d += 2 * KW_PI;
        if (m > 1)
            turns += d;
        prev = a;
    }
    turns /= 2 * KW_PI;
    cr_expect(fabs(turns - N / (2.0 * nint)) < 0.05 + 0.02 * N / (2.0 * nint), "turns %g vs %g",
              turns, N / (2.0 * nint));
    free(gx), free(gy), free(tr), free(tm);
}

Test(gradient, spiral_limits_and_kmax)
{
    check_spiral(256, 0.24, 16, 4e-6, &LIM);
    check_spiral(128, 0.22, 4, 2e-6, &(kw_gradient_limits){0.025, 100.0, 10e-6});
    check_spiral(64, 0.2, 1, 10e-6, &(kw_gradient_limits){0.04, 150.0, 4e-6}); /* sampling-limited */
}

Test(gradient, spiral_amplitude_limited_readout_matches_textbook)
{
    /* Amplitude-limited regime (slew very high): the path length of an
     * Archimedean spiral from 0 to k-max with nint interleaves is about
     * pi kmax^2 FOV / nint = pi N^2 / (4 FOV nint), so the readout is
     * T = pi N^2 / (4 gamma-bar G FOV nint) (derived by hand; the form of the
     * textbook estimate, Bernstein et al. 2004, spiral chapter, recalled from memory).
     * N 256, FOV 0.24 m, 8 interleaves, G 20 mT/m:
     *   pi 65536 / (4 * 42.577478518e6 * 0.02 * 0.24 * 8) = 31.48 ms. */
    kw_gradient_limits l = {0.020, 20000.0, 4e-6};
    kw_spiral_spec sp = {0.24, 256, 8, 1e-6};
    kw_spiral_info inf;
    cr_assert_eq(kw_spiral_size(&sp, &l, &inf), KW_OK);
    double T = KW_PI * 256.0 * 256.0 / (4 * KW_GAMMA_BAR_P * 0.020 * 0.24 * 8);
    REL(T, 31.48e-3, 1e-3);
    REL(inf.readout_s, T, 0.02);
}

Test(gradient, spiral_fewest_interleaves)
{
    /* The count the design picks is the fewest whose readout fits, and close
     * to the amplitude-limited estimate nint = pi N^2 / (4 gamma-bar G FOV T). */
    kw_gradient_limits l = {0.020, 20000.0, 4e-6};
    kw_spiral_spec sp = {0.24, 256, 1, 1e-6};
    int n = 0;
    kw_spiral_info inf;
    cr_assert_eq(kw_spiral_interleaves_for(&sp, &l, 10e-3, &n, &inf), KW_OK);
    double est = KW_PI * 256.0 * 256.0 / (4 * KW_GAMMA_BAR_P * 0.020 * 0.24 * 10e-3);
    cr_expect(n >= (int)ceil(est) && n <= (int)ceil(est) + 1, "n %d vs estimate %g", n, est);
    cr_expect(inf.readout_s <= 10e-3);
    sp.interleaves = n - 1;
    kw_spiral_info worse;
    cr_assert_eq(kw_spiral_size(&sp, &l, &worse), KW_OK);
    cr_expect(worse.readout_s > 10e-3);
}

Test(gradient, epi_hand_worked)
{
    /* FOV 240 mm, 64 x 64, dwell 4 us (250 kHz), gmax 40 mT/m, slew 200 T/m/s, 10 us raster:
     *   G = 1 / (42.577478518e6 * 0.24 * 4e-6) = 24.465 mT/m
     *   ramp 24.465e-3 / 200 = 122.3 us -> 130 us; flat 64 * 4 us = 256 us -> 260 us
     *   blip area 1 / (gamma-bar 0.24) = 9.786e-8 T s/m: triangle 2 sqrt(A/S) = 44.2 us
     *   -> 50 us (2-step ramps, 163 T/m/s) < 2 ramps, so
     *   echo spacing = 260 + 260 = 520 us; train 130 + 63 * 520 + 260 + 130 = 33 280 us;
     *   ky = 0 echo (row 32) at 130 + 32 * 520 + 130 = 16 900 us. */
    kw_epi_spec sp = {{0.24, 0.24}, {64, 64}, 4e-6, 1, 1.0};
    kw_epi_info inf;
    cr_assert_eq(kw_epi_size(&sp, &LIM, &inf), KW_OK, "%s", kw_last_error());
    REL(inf.readout.amplitude_T_per_m, 24.465e-3, 1e-4);
    REL(inf.readout.ramp_s, 130e-6, 1e-9);
    REL(inf.readout.flat_s, 260e-6, 1e-9);
    REL(kw_trapezoid_duration(&inf.blip), 50e-6, 1e-9);
    REL(inf.echo_spacing_s, 520e-6, 1e-9);
    REL(inf.train_s, 33280e-6, 1e-9);
    REL(inf.center_time_s, 16900e-6, 1e-9);
    cr_expect_eq(inf.lines_per_shot, 64u);
    /* trajectory: every Cartesian point exactly once; ky = 0 at the centre time */
    float *tr = malloc(inf.samples_per_shot * 2 * sizeof *tr), *tm = malloc(inf.samples_per_shot * sizeof *tm);
    cr_assert_eq(kw_epi_design(&sp, &LIM, NULL, tr, tm), KW_OK);
    int *hit = calloc(64 * 64, sizeof *hit);
    for (size_t i = 0; i < inf.samples_per_shot; i++) {
        int x = (int)tr[2 * i] + 32, y = (int)tr[2 * i + 1] + 32;
        cr_assert(x >= 0 && x < 64 && y >= 0 && y < 64);
        hit[y * 64 + x]++;
        if (x == 32 && y == 32)
            REL(tm[i], inf.center_time_s, 1e-6);
    }
    for (int i = 0; i < 64 * 64; i++)
        cr_assert_eq(hit[i], 1);
    free(hit), free(tr), free(tm);
}

Test(gradient, epi_multishot_partial_fourier)
{
    /* 128 rows, 4 shots, partial Fourier 5/8: ceil(0.625 * 128) = 80 rows,
     * a multiple of 4, so 20 lines per shot starting at row 48; the centre
     * row 64 is 16 rows in: shot 0, line 4. */
    kw_epi_spec sp = {{0.24, 0.24}, {128, 128}, 4e-6, 4, 0.625};
    kw_epi_info inf;
    cr_assert_eq(kw_epi_size(&sp, &LIM, &inf), KW_OK);
    cr_expect_eq(inf.lines_per_shot, 20u);
    cr_expect_eq(inf.first_row, 48);
    cr_expect_eq(inf.center_shot, 0);
    REL(inf.center_time_s, inf.readout.ramp_s + 4 * inf.echo_spacing_s + inf.readout.flat_s / 2, 1e-12);
    /* blip area = 4 / (gamma-bar FOVy) */
    REL(kw_trapezoid_area(&inf.blip), 4 / (KW_GAMMA_BAR_P * 0.24), 1e-9);
    sp.shots = 3;
    cr_expect_eq(kw_epi_size(&sp, &LIM, &inf), KW_EINVAL);
}

/* Integrate the EPI gradient waveform (readout lobes, blips, prephasers) on
 * the raster and compare k at every sample time with kw_epi_design's
 * trajectory: the trajectory is what the waveform plays. */
static void check_epi_waveform(const kw_epi_spec *sp, const kw_gradient_limits *l)
{
    kw_epi_info inf;
    cr_assert_eq(kw_epi_size(sp, l, &inf), KW_OK, "%s", kw_last_error());
    const double dt = l->raster_s;
    size_t n = (size_t)llround(inf.train_s / dt) + 2;
    double *gr = calloc(n, sizeof *gr), *gp = calloc(n, sizeof *gp);
    size_t nl = kw_trapezoid_raster_count(&inf.readout, dt), nb = kw_trapezoid_raster_count(&inf.blip, dt);
    double *lobe = malloc(nl * sizeof *lobe), *blip = malloc(nb * sizeof *blip);
    cr_assert_eq(kw_trapezoid_raster(&inf.readout, dt, lobe, nl), KW_OK);
    cr_assert_eq(kw_trapezoid_raster(&inf.blip, dt, blip, nb), KW_OK);
    for (size_t m = 0; m < inf.lines_per_shot; m++) {
        double e = fmod(m * inf.echo_spacing_s / dt, 1.0), b = fmod(inf.blip_start_s / dt, 1.0);
        cr_assert(fmin(e, 1 - e) < 1e-6 && fmin(b, 1 - b) < 1e-6, "lobe off the raster");
        size_t o = (size_t)llround(m * inf.echo_spacing_s / dt);
        for (size_t i = 0; i < nl; i++)
            gr[o + i] += (m % 2 ? -1 : 1) * lobe[i];
        if (m + 1 < inf.lines_per_shot) {
            size_t ob = o + (size_t)llround(inf.blip_start_s / dt);
            for (size_t i = 0; i < nb; i++)
                gp[ob + i] += blip[i];
        }
    }
    /* the whole train keeps the limits at every raster step */
    expect_within_limits(gr, n, l);
    expect_within_limits(gp, n, l);
    /* cumulative areas at the raster points */
    double *ar = calloc(n, sizeof *ar), *ap = calloc(n, sizeof *ap);
    for (size_t i = 1; i < n; i++) {
        ar[i] = ar[i - 1] + 0.5 * (gr[i - 1] + gr[i]) * dt;
        ap[i] = ap[i - 1] + 0.5 * (gp[i - 1] + gp[i]) * dt;
    }
    size_t ns = inf.samples_per_shot * (size_t)sp->shots;
    float *tr = malloc(2 * ns * sizeof *tr), *tm = malloc(ns * sizeof *tm);
    cr_assert_eq(kw_epi_design(sp, l, NULL, tr, tm), KW_OK);
    const double G = inf.readout.amplitude_T_per_m;
    const double pre_r = -G * (inf.readout.ramp_s + inf.readout.flat_s) / 2;
    double worst = 0;
    for (int s = 0; s < sp->shots; s++)
        for (size_t j = 0; j < inf.samples_per_shot; j++) {
            size_t at = (size_t)s * inf.samples_per_shot + j;
            double t = tm[at] / dt;
            size_t i = (size_t)floor(t);
            double f = t - (double)i;
            double gti = gr[i] + (gr[i + 1] - gr[i]) * f, gtp = gp[i] + (gp[i + 1] - gp[i]) * f;
            double kr = ar[i] + 0.5 * (gr[i] + gti) * f * dt, kp = ap[i] + 0.5 * (gp[i] + gtp) * f * dt;
            double kx = KW_GAMMA_BAR_P * (pre_r + kr) * sp->fov_m[0];
            double ky = (inf.first_row + s - sp->matrix[1] / 2) + KW_GAMMA_BAR_P * kp * sp->fov_m[1];
            worst = fmax(worst, fmax(fabs(kx - tr[2 * at]), fabs(ky - tr[2 * at + 1])));
        }
    /* float times: 1e-3 cycles per FOV */
    cr_expect(worst < 1e-3, "trajectory and waveform differ by %g cycles/FOV", worst);
    free(gr), free(gp), free(lobe), free(blip), free(ar), free(ap), free(tr), free(tm);
}

Test(gradient, epi_trajectory_is_what_the_waveform_plays)
{
    kw_epi_spec a = {{0.24, 0.24}, {64, 64}, 4e-6, 1, 1.0};
    check_epi_waveform(&a, &LIM);
    kw_epi_spec b = {{0.22, 0.20}, {96, 80}, 4e-6, 4, 0.75};
    check_epi_waveform(&b, &(kw_gradient_limits){0.030, 120.0, 4e-6});
    kw_epi_spec c = {{0.30, 0.30}, {65, 66}, 10e-6, 2, 0.9}; /* odd nx */
    check_epi_waveform(&c, &LIM);
}
