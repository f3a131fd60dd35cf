/* test_waveform.c: the check of a programmer's own gradient waveform
 * (kw_waveform.h) against closed forms: trapezoid moments, a
 * flow-compensated readout, limit violations located to the raster sample,
 * the k-space of a readout, the nerve-stimulation estimate and bad input. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_waveform.h"

#define H 10e-6 /* raster, s */

#define REL(a, b, tol)                                                                     \
    cr_expect(fabs((a) - (b)) <= (tol) * fabs(b), "%s = %.15g, expected %.15g", #a, \
              (double)(a), (double)(b))

/* A trapezoid of amplitude amp on `axis` of g (n samples, axes columns):
 * ramp up from sample s to s + r, flat to s + r + f, down to s + 2r + f
 * (corners on the raster). */
static void trap(double *g, int axes, int axis, size_t s, size_t r, size_t f, double amp)
{
    for (size_t k = 0; k <= 2 * r + f; k++) {
        double v = k <= r ? amp * (double)k / (double)r
                   : k <= r + f ? amp
                   : amp * (double)(2 * r + f - k) / (double)r;
        g[(s + k) * (size_t)axes + (size_t)axis] += v;
    }
}

static kw_waveform *make(const double *g, size_t n, int axes, kw_waveform_options *o)
{
    kw_waveform *w = NULL;
    kw_status st = kw_waveform_create(&w, g, n, axes, o);
    cr_assert_eq(st, KW_OK, "%s", kw_last_error());
    return w;
}

/* Trapezoid moments. Closed forms worked by integrating the three pieces
 * (ramp, flat top, ramp) of a trapezoid starting at t0 after the RF centre
 * (Bernstein, King & Zhou, Handbook of MRI Pulse Sequences, 2004, sec. 9.1,
 * gradient moments; from memory): M0 = A (r + f); M1 = M0 (t0 + r + f/2)
 * (area times centroid of a symmetric lobe); about its start
 * M2' = A [r^3/4 + ((r+f)^3 - r^3)/3 + (T^4/12 - T a^3/3 + a^4/4)/r],
 * a = r + f, T = 2r + f, moved to the RF centre by
 * M2 = M2' + 2 t0 M1' + t0^2 M0 with M1' = M0 (r + f/2). */
Test(waveform, trapezoid_moments_closed_form)
{
    const size_t n = 200, s = 30, r = 15, f = 40;
    const double A = 25e-3;
    double *g = calloc(n, sizeof *g);
    trap(g, 1, 0, s, r, f, A);
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 10 * H;
    kw_waveform *w = make(g, n, 1, &o);
    const double t0 = (double)(s - 10) * H, rr = (double)r * H, ff = (double)f * H;
    const double a = rr + ff, T = 2 * rr + ff;
    const double m0 = A * (rr + ff), m1s = m0 * (rr + ff / 2);
    const double m2s = A * (rr * rr * rr / 4 + (a * a * a - rr * rr * rr) / 3 +
                            (T * T * T * T / 12 - T * a * a * a / 3 + a * a * a * a / 4) / rr);
    kw_waveform_moments m;
    /* after the lobe (and at the last sample: nothing changes past it) */
    for (int k = 0; k < 2; k++) {
        double t = k == 0 ? t0 + T : (double)(n - 1 - 10) * H;
        cr_assert_eq(kw_waveform_moments_at(w, t, &m), KW_OK, "%s", kw_last_error());
        REL(m.m0[0], m0, 1e-12);
        REL(m.m1[0], m1s + t0 * m0, 1e-12);
        REL(m.m2[0], m2s + 2 * t0 * m1s + t0 * t0 * m0, 1e-12);
    }
    /* halfway up the first ramp: the triangle A/2 over r/2: area A r / 8 */
    cr_assert_eq(kw_waveform_moments_at(w, t0 + rr / 2, &m), KW_OK);
    REL(m.m0[0], A * rr / 8, 1e-12);
    /* before the lobe, nothing; at the RF centre, nothing */
    cr_assert_eq(kw_waveform_moments_at(w, 0, &m), KW_OK);
    cr_expect(m.m0[0] == 0 && m.m1[0] == 0 && m.m2[0] == 0);
    kw_waveform_destroy(w);
    free(g);
}

/* Flow-compensated readout: two prephaser lobes whose amplitudes null M0
 * and M1 at the echo (the readout's centre), solved from the closed forms
 * (area x centroid, Bernstein et al. 2004, sec. 9.1; the readout's ramp is
 * a triangle of centroid 2/3 of its duration). The integrator must give
 * M0 = M1 = 0 at TE to rounding, and M1 != 0 without the compensation. */
Test(waveform, flow_compensated_readout_has_no_m1_at_te)
{
    const size_t rf = 20, r = 10, f1 = 20, f2 = 20, fr = 128;
    const size_t s1 = 40, s2 = s1 + 2 * r + f1, s3 = s2 + 2 * r + f2, n = s3 + 2 * r + fr + 20;
    const double Gr = 10e-3;
    const double rr = r * H;
    const double c1 = (double)(s1 - rf) * H + rr + f1 * H / 2, c2 = (double)(s2 - rf) * H + rr + f2 * H / 2;
    const double area1 = rr + f1 * H, area2 = rr + f2 * H; /* per unit amplitude */
    const double t3 = (double)(s3 - rf) * H, te = t3 + rr + fr * H / 2;
    const double m0r = Gr * (rr / 2 + fr * H / 2);
    const double m1r = Gr * rr / 2 * (t3 + 2 * rr / 3) + Gr * fr * H / 2 * (t3 + rr + fr * H / 4);
    /* a1 area1 + a2 area2 = -m0r; a1 area1 c1 + a2 area2 c2 = -m1r */
    const double det = area1 * area2 * (c2 - c1);
    const double a1 = (-m0r * area2 * c2 + m1r * area2) / det;
    const double a2 = (-m1r * area1 + m0r * area1 * c1) / det;
    double *g = calloc(n, sizeof *g);
    trap(g, 1, 0, s1, r, f1, a1);
    trap(g, 1, 0, s2, r, f2, a2);
    trap(g, 1, 0, s3, r, fr, Gr);
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = rf * H;
    o.te_s = te;
    o.gmax = 1.0; /* the lobes are steep: limits aside here */
    o.slew = 1e4;
    kw_waveform *w = make(g, n, 1, &o);
    kw_waveform_moments m;
    cr_assert_eq(kw_waveform_moments_at(w, te, &m), KW_OK);
    cr_expect(fabs(m.m0[0]) < 1e-13 * m0r, "M0 at TE %g vs readout half %g", m.m0[0], m0r);
    cr_expect(fabs(m.m1[0]) < 1e-12 * m1r, "M1 at TE %g vs readout half %g", m.m1[0], m1r);
    kw_waveform_destroy(w);
    /* the plain prephaser (one lobe of area -m0r) leaves M1 != 0 */
    memset(g, 0, n * sizeof *g);
    trap(g, 1, 0, s1, r, f1, -m0r / area1);
    trap(g, 1, 0, s3, r, fr, Gr);
    w = make(g, n, 1, &o);
    cr_assert_eq(kw_waveform_moments_at(w, te, &m), KW_OK);
    cr_expect(fabs(m.m0[0]) < 1e-13 * m0r);
    cr_expect(fabs(m.m1[0]) > 0.1 * m1r, "M1 %g", m.m1[0]);
    kw_waveform_destroy(w);
    free(g);
}

/* Violations at known samples: amplitude 50 mT/m over ramps of 10 samples
 * (5 mT/m per sample; slew 500 T/m/s) on y, a 40 mT/m limit: samples
 * s+9 .. s+2r+f-9 are over (s+8 is exactly 40 mT/m, at the limit), by
 * 10 mT/m; every ramp interval is over the slew limit (150) by 350. */
Test(waveform, violations_located_to_the_sample)
{
    const size_t n = 120, s = 20, r = 10, f = 30;
    double *g = calloc(2 * n, sizeof *g);
    trap(g, 2, 1, s, r, f, -50e-3);
    trap(g, 2, 0, 5, 10, 0, 10e-3); /* x: within the limits (100 T/m/s) */
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 0;
    kw_waveform *w = make(g, n, 2, &o);
    size_t nv;
    const kw_waveform_violation *v = kw_waveform_violations(w, &nv);
    cr_assert_eq(nv, 3);
    cr_expect_eq(v[0].limit, KW_WAVEFORM_AMPLITUDE);
    cr_expect_eq(v[0].axis, 1);
    cr_expect_eq(v[0].first, s + 9);
    cr_expect_eq(v[0].last, s + 2 * r + f - 9);
    REL(v[0].start_s, (s + 9) * H, 1e-12);
    REL(v[0].excess, 10e-3, 1e-9);
    for (int k = 1; k <= 2; k++) {
        cr_expect_eq(v[k].limit, KW_WAVEFORM_SLEW);
        cr_expect_eq(v[k].axis, 1);
        REL(v[k].peak, 500.0, 1e-9);
        REL(v[k].excess, 350.0, 1e-9);
    }
    cr_expect_eq(v[1].first, s);
    cr_expect_eq(v[1].last, s + r - 1);
    cr_expect_eq(v[2].first, s + r + f);
    cr_expect_eq(v[2].last, s + 2 * r + f - 1);
    REL(v[2].end_s, (s + 2 * r + f) * H, 1e-12);
    const kw_waveform_summary *su = kw_waveform_summary_of(w);
    REL(su->peak_g[1], 50e-3, 1e-12);
    cr_expect_eq(su->peak_g_at[1], s + r);
    REL(su->peak_slew[0], 100.0, 1e-9);
    cr_expect(su->starts_at_zero && su->ends_at_zero);
    kw_waveform_destroy(w);
    /* the vector sum: x and y at 30 mT/m together: |G| = 42.4 mT/m over,
     * each axis within */
    memset(g, 0, 2 * n * sizeof *g);
    trap(g, 2, 0, 10, 30, 20, 30e-3); /* slew 100 T/m/s, vector 141 */
    trap(g, 2, 1, 10, 30, 20, 30e-3);
    o.limit_vector = 1;
    w = make(g, n, 2, &o);
    v = kw_waveform_violations(w, &nv);
    cr_assert_eq(nv, 1);
    cr_expect_eq(v[0].axis, -1);
    /* sqrt(2) x 30 mT/m x k/30 > 40 mT/m from k = 29 (41.0); k = 28: 39.6;
     * up-ramp samples 39, 40, the flat top to 60, down-ramp 61 (k = 29) */
    cr_expect_eq(v[0].first, 10 + 29);
    cr_expect_eq(v[0].last, 10 + 30 + 20 + 1);
    REL(v[0].peak, sqrt(2.0) * 30e-3, 1e-12);
    kw_waveform_destroy(w);
    free(g);
}

/* k-space of a readout: G = 1 / (gamma_bar FOV dwell) steps k by one
 * cycle/FOV per ADC sample (k = gamma_bar integral G dt, FOV times); a
 * prephaser of half the readout's area puts k = 0 at the window's centre,
 * sample n/2. Times after the RF centre. */
Test(waveform, readout_kspace_steps_one_cycle_per_fov)
{
    const size_t rf = 5, r = 10, fr = 128, fp = fr / 2 - r / 2;
    const size_t s1 = 10, s2 = s1 + 2 * r + fp, n = s2 + 2 * r + fr + 5;
    const double fov = 0.256, dwell = H;
    const double Gr = 1.0 / (KW_GAMMA_BAR_P * fov * dwell); /* 9.18 mT/m */
    double *g = calloc(n, sizeof *g);
    trap(g, 1, 0, s1, r, fp, -Gr);
    trap(g, 1, 0, s2, r, fr, Gr);
    kw_waveform_adc adc = {(double)(s2 + r) * H, dwell, fr};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = rf * H;
    o.fov_m[0] = fov;
    o.adc = &adc;
    o.nadc = 1;
    kw_waveform *w = make(g, n, 1, &o);
    float *k = malloc(fr * sizeof *k), *t = malloc(fr * sizeof *t);
    cr_assert_eq(kw_waveform_trajectory(w, k, t), KW_OK);
    for (size_t j = 0; j < fr; j++) {
        cr_expect(fabsf(k[j] - ((float)j - (float)fr / 2)) < 1e-4f, "k[%zu] = %g", j, k[j]);
        cr_expect(fabs(t[j] - ((double)(s2 + r + j) * H - rf * H)) < 1e-9, "t[%zu]", j);
    }
    size_t na;
    const kw_waveform_moments *am = kw_waveform_adc_moments(w, &na);
    cr_assert_eq(na, 1);
    cr_expect(fabs(am[0].m0[0]) < 1e-12 * Gr * fr * H, "M0 at the ADC centre %g", am[0].m0[0]);
    REL(am[0].t_s, (double)(s2 + r + fr / 2) * H - rf * H, 1e-12);
    kw_waveform_destroy(w);
    free(k);
    free(t);
    free(g);
}

/* Nerve-stimulation estimate: dB/dt = slew x radius; the strength-duration
 * limit 0.8 x 20 T/s x (1 + 0.36 ms / t) (IEC 60601-2-33 normal mode,
 * values from memory), worked by hand at three ramp times:
 * 0.1 ms: 16 x 4.6 = 73.6 T/s; 0.2 ms: 16 x 2.8 = 44.8; 0.5 ms: 16 x 1.72
 * = 27.52. */
Test(waveform, pns_estimate_against_the_formula)
{
    REL(kw_waveform_pns_limit(0.1e-3, 20, 0.36e-3, 0.8), 73.6, 1e-12);
    REL(kw_waveform_pns_limit(0.2e-3, 20, 0.36e-3, 0.8), 44.8, 1e-12);
    REL(kw_waveform_pns_limit(0.5e-3, 20, 0.36e-3, 0.8), 27.52, 1e-12);
    cr_expect(isnan(kw_waveform_pns_limit(0, 20, 0.36e-3, 0.8)));
    const size_t ramps[3] = {10, 20, 50};
    const double lim[3] = {73.6, 44.8, 27.52};
    for (int k = 0; k < 3; k++) {
        /* 15 mT/m over r rasters: slew 15e-3 / (r 10 us) */
        const size_t r = ramps[k], n = 2 * r + 10 + 20;
        double *g = calloc(n, sizeof *g);
        trap(g, 1, 0, 10, r, 10, 15e-3);
        kw_waveform_options o;
        kw_waveform_options_init(&o);
        o.rf_centre_s = 0;
        kw_waveform *w = make(g, n, 1, &o);
        size_t nr;
        const kw_waveform_ramp *rp = kw_waveform_ramps(w, &nr);
        cr_assert_eq(nr, 2);
        const double slew = 15e-3 / ((double)r * H);
        for (size_t i = 0; i < 2; i++) {
            REL(rp[i].duration_s, (double)r * H, 1e-12);
            REL(rp[i].slew, slew, 1e-9);
            REL(rp[i].dbdt, slew * 0.2, 1e-9);
            REL(rp[i].limit, lim[k], 1e-12);
            REL(rp[i].percent, 100 * slew * 0.2 / lim[k], 1e-9);
        }
        cr_expect_eq(rp[0].first, 10);
        cr_expect_eq(rp[1].first, 10 + r + 10);
        REL(kw_waveform_summary_of(w)->pns_percent_max, 100 * slew * 0.2 / lim[k], 1e-9);
        kw_waveform_destroy(w);
        free(g);
    }
}

/* RMS gradient: a trapezoid of 20 mT/m, ramps r, flat f over a repetition
 * T: integral of G^2 = A^2 (f + 2r/3) (the ramp's t^2 integrates to r/3). */
Test(waveform, rms_gradient_closed_form)
{
    const size_t n = 100, r = 10, f = 30;
    double *g = calloc(n, sizeof *g);
    trap(g, 1, 0, 20, r, f, 20e-3);
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 0;
    o.tr_s = 5e-3;
    kw_waveform *w = make(g, n, 1, &o);
    REL(kw_waveform_summary_of(w)->rms_g[0], sqrt(20e-3 * 20e-3 * (f * H + 2.0 * r * H / 3) / 5e-3), 1e-12);
    kw_waveform_destroy(w);
    free(g);
}

static void expect_refused(const double *g, size_t n, int axes, const kw_waveform_options *o,
                           kw_status want, const char *param)
{
    kw_waveform *w = (kw_waveform *)1;
    kw_status st = kw_waveform_create(&w, g, n, axes, o);
    cr_expect_eq(st, want, "status %d (%s)", st, kw_last_error());
    cr_expect_str_eq(kw_last_error_param(), param, "%s", kw_last_error());
    cr_expect_null(w);
}

Test(waveform, bad_input_names_the_field)
{
    double g[40] = {0};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    expect_refused(g, 10, 1, &o, KW_EINVAL, "rf_centre_s"); /* no RF centre */
    o.rf_centre_s = 0;
    expect_refused(g, 10, 4, &o, KW_EINVAL, "axes");
    expect_refused(g, 1, 1, &o, KW_EINVAL, "samples");
    g[7] = NAN;
    expect_refused(g, 10, 1, &o, KW_ENUMERIC, "waveform");
    cr_expect(strstr(kw_last_error(), "sample 7") != NULL, "%s", kw_last_error());
    g[7] = INFINITY;
    expect_refused(g, 10, 1, &o, KW_ENUMERIC, "waveform");
    g[7] = 0;
    kw_waveform_adc adc = {15e-6, 4e-6, 5}; /* starts between rasters */
    o.adc = &adc;
    o.nadc = 1;
    expect_refused(g, 40, 1, &o, KW_EINVAL, "adc");
    adc.start_s = 20e-6;
    adc.samples = 6; /* 24 us: not a whole number of 10 us */
    expect_refused(g, 40, 1, &o, KW_EINVAL, "adc");
    adc.samples = 5; /* 20 us */
    kw_waveform *w = make(g, 40, 1, &o);
    kw_waveform_destroy(w);
    adc.samples = 100; /* past the end */
    expect_refused(g, 40, 1, &o, KW_ERANGE, "adc");
    o.nadc = 0;
    o.rf_centre_s = 1.0;
    expect_refused(g, 40, 1, &o, KW_ERANGE, "rf_centre_s");
    o.rf_centre_s = 0;
    o.raster_s = 0;
    expect_refused(g, 40, 1, &o, KW_ERANGE, "raster_s");
    o.struct_size = 0;
    expect_refused(g, 40, 1, &o, KW_EINVAL, "options");
}

Test(waveform, report_json_has_the_caution)
{
    double g[30] = {0};
    trap(g, 1, 0, 2, 5, 5, 10e-3);
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 0;
    kw_waveform *w = make(g, 30, 1, &o);
    char *js = NULL;
    cr_assert_eq(kw_waveform_report_json(w, &js), KW_OK);
    cr_expect(strstr(js, "\"safety_caution\"") != NULL);
    cr_expect(strstr(js, "\"estimate\":\ttrue") != NULL, "%s", js);
    kw_free(js);
    kw_waveform_destroy(w);
}

/* The readout of readout_kspace_steps_one_cycle_per_fov with an imperfect
 * gradient on x; returns the object, fills the nominal and actual k and
 * the actual samples (g_act, n values). */
static kw_waveform *readout_with(double delay, double tau, double amp, float *kn, float *ka,
                                 double *g_act, size_t *n_out, size_t *adc0)
{
    const size_t r = 10, fr = 128, fp = fr / 2 - r / 2;
    const size_t s1 = 10, s2 = s1 + 2 * r + fp, n = s2 + 2 * r + fr + 20;
    const double Gr = 1.0 / (KW_GAMMA_BAR_P * 0.256 * H);
    double *g = calloc(n, sizeof *g);
    trap(g, 1, 0, s1, r, fp, -Gr);
    trap(g, 1, 0, s2, r, fr, Gr);
    kw_waveform_adc adc = {(double)(s2 + r) * H, H, fr};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 5 * H;
    o.adc = &adc;
    o.nadc = 1;
    o.delay_s[0] = delay;
    o.response_tau_s[0] = tau;
    o.response_amp[0] = amp;
    kw_waveform *w = make(g, n, 1, &o);
    cr_assert_eq(kw_waveform_trajectory(w, kn, NULL), KW_OK);
    cr_assert_eq(kw_waveform_trajectory_actual(w, ka, NULL), KW_OK);
    cr_assert_eq(kw_waveform_actual(w, g_act), KW_OK);
    *n_out = n;
    *adc0 = s2 + r;
    free(g);
    return w;
}

/* A pure delay d moves the readout's k by gamma_bar G d per FOV: with one
 * cycle/FOV per 10 us, a 2 us delay shifts the echo by 0.2 samples
 * (k_actual(t) = k_nominal(t - d)); a delay of one raster moves the samples
 * by one. */
Test(waveform, delay_shifts_the_echo)
{
    float kn[128], ka[128];
    double ga[400];
    size_t n, a0;
    kw_waveform *w = readout_with(2e-6, 0, 0, kn, ka, ga, &n, &a0);
    cr_expect(kw_waveform_has_imperfection(w));
    /* sample 0 at the flat top's start: t - d lies on the ramp, whose last
     * 2 us hold 0.2 (1 - 0.01) = 0.198 cycles/FOV (G = Gr (1 - t'/100 us)) */
    cr_expect(fabsf(ka[0] - (kn[0] - 0.198f)) < 1e-4f, "k[0]: %g vs %g - 0.198", ka[0], kn[0]);
    for (size_t j = 1; j < 128; j++)
        cr_expect(fabsf(ka[j] - (kn[j] - 0.2f)) < 1e-4f, "k[%zu]: %g vs %g - 0.2", j, ka[j], kn[j]);
    kw_waveform_destroy(w);
    w = readout_with(H, 0, 0, kn, ka, ga, &n, &a0);
    double *gn = calloc(n, sizeof *gn);
    cr_assert_eq(kw_waveform_actual(w, gn), KW_OK);
    kw_waveform_destroy(w);
    w = readout_with(0, 0, 0, kn, ka, gn, &n, &a0);
    cr_expect(!kw_waveform_has_imperfection(w));
    for (size_t i = 1; i < n; i++)
        cr_expect(fabs(ga[i] - gn[i - 1]) < 1e-15, "sample %zu", i);
    for (size_t j = 0; j < 128; j++) /* two integrators, float output */
        cr_expect(fabsf(kn[j] - ka[j]) < 1e-5f, "k[%zu]: %g vs %g", j, kn[j], ka[j]);
    kw_waveform_destroy(w);
    free(gn);
}

/* First-order low-pass (amplitude 1, tau = 20 us): on the first ramp (slew
 * s from rest at t0) the response is s (t - tau (1 - e^{-t/tau})), the
 * textbook first-order response to a ramp; and since tau y' = G - y, the
 * area held back is tau y: k_nominal - k_actual = gamma_bar FOV tau y(t)
 * at every ADC sample. An eddy-current term (amplitude 0.05, tau 50 us)
 * holds back alpha tau y, y = (G_act - (1 - alpha) G) / alpha. */
Test(waveform, lowpass_and_eddy_lag_closed_form)
{
    float kn[128], ka[128];
    double ga[400], gn[400];
    size_t n, a0;
    const double fov = 0.256;
    const double Gr = 1.0 / (KW_GAMMA_BAR_P * fov * H), s = Gr / (10 * H);
    const double tau = 20e-6;
    kw_waveform *w = readout_with(0, tau, 1, kn, ka, ga, &n, &a0);
    for (size_t i = 10; i <= 20; i++) { /* the prephaser's ramp, down from sample 10 */
        const double t = (double)(i - 10) * H;
        const double want = -s * (t - tau * (1 - exp(-t / tau)));
        cr_expect(fabs(ga[i] - want) <= 1e-12 * Gr, "sample %zu: %.15g vs %.15g", i, ga[i], want);
    }
    for (size_t j = 0; j < 128; j++) {
        const double lag = KW_GAMMA_BAR_P * fov * tau * ga[a0 + j];
        cr_expect(fabs((kn[j] - ka[j]) - lag) < 2e-5, "k[%zu]: %g - %g vs lag %g", j, kn[j], ka[j], lag);
    }
    kw_waveform_destroy(w);
    const double al = 0.05, te = 50e-6;
    w = readout_with(0, te, al, kn, ka, ga, &n, &a0);
    kw_waveform_destroy(w);
    w = readout_with(0, 0, 0, kn, kn, gn, &n, &a0);
    kw_waveform_destroy(w);
    w = readout_with(0, te, al, kn, ka, ga, &n, &a0);
    for (size_t j = 0; j < 128; j++) {
        const double y = (ga[a0 + j] - (1 - al) * gn[a0 + j]) / al;
        const double lag = KW_GAMMA_BAR_P * fov * al * te * y;
        cr_expect(fabs((kn[j] - ka[j]) - lag) < 2e-5, "k[%zu]: %g - %g vs lag %g", j, kn[j], ka[j], lag);
    }
    kw_waveform_destroy(w);
}

Test(waveform, imperfection_fields_are_checked)
{
    double g[40] = {0};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 0;
    o.response_amp[1] = 0.1;
    expect_refused(g, 20, 2, &o, KW_EINVAL, "response_tau_s");
    o.response_amp[1] = 1.5;
    o.response_tau_s[1] = 1e-5;
    expect_refused(g, 20, 2, &o, KW_ERANGE, "response_amp");
    o.response_amp[1] = 0;
    o.delay_s[0] = NAN;
    expect_refused(g, 20, 2, &o, KW_ERANGE, "delay_s");
}

/* kweave's own EPI train written as a waveform and imported back: its
 * k-space at the ADC samples is the trajectory kw_pattern makes for that
 * shot (the planner's grid points, kw_gradient.h), within float rounding
 * and the prephasers' area rounding (kw_trapezoid_for_area: 1e-6
 * relative), and the sample times are the pattern's plus the prephasers'
 * time. */
Test(waveform, epi_design_imported_back_is_the_pattern)
{
    for (int shots = 1; shots <= 2; shots++) {
        kw_pattern_options po;
        kw_pattern_options_init(&po);
        po.kind = KW_PATTERN_EPI;
        po.ndim = 2;
        po.dims[0] = po.dims[1] = 32;
        po.dwell_s = 10e-6;
        po.shots = shots;
        kw_pattern *p = NULL;
        cr_assert_eq(kw_pattern_create(&p, &po), KW_OK, "%s", kw_last_error());
        size_t n = 0, na = 0;
        const int shot = shots - 1;
        cr_assert_eq(kw_waveform_epi(&po, shot, NULL, &n, NULL, &na), KW_OK, "%s", kw_last_error());
        double *g = calloc(n * 2, sizeof *g);
        kw_waveform_adc *adc = calloc(na, sizeof *adc);
        cr_assert_eq(kw_waveform_epi(&po, shot, g, &n, adc, &na), KW_OK, "%s", kw_last_error());
        const kw_pattern_info *in = kw_pattern_info_of(p);
        const size_t per_shot = in->shape[0] / (size_t)shots;
        cr_assert_eq(na * 32, per_shot);
        kw_waveform_options o;
        kw_waveform_options_init(&o);
        o.rf_centre_s = 0;
        o.adc = adc;
        o.nadc = na;
        kw_waveform *w = make(g, n, 2, &o);
        float *k = malloc(per_shot * 2 * sizeof *k), *t = malloc(per_shot * sizeof *t);
        cr_assert_eq(kw_waveform_trajectory(w, k, t), KW_OK);
        const float *kp = kw_pattern_trajectory(p) + (size_t)shot * per_shot * 2;
        const float *tp = kw_pattern_times(p) + (size_t)shot * per_shot;
        const double off = adc[0].start_s - (double)tp[0];
        double worst = 0;
        for (size_t i = 0; i < per_shot * 2; i++)
            worst = fmax(worst, fabs((double)k[i] - (double)kp[i]));
        cr_expect(worst < 1e-4, "shots %d: |k - k_pattern| up to %g cycles/FOV", shots, worst);
        for (size_t i = 0; i < per_shot; i++)
            cr_expect(fabs((double)t[i] - ((double)tp[i] + off)) < 1e-8, "t[%zu]", i);
        cr_expect(kw_waveform_summary_of(w)->violations == 0);
        free(k);
        free(t);
        kw_waveform_destroy(w);
        free(g);
        free(adc);
        kw_pattern_destroy(p);
    }
}

/* Peters et al. 2003 on noise-free data: an off-centre Gaussian blob of
 * width sigma (FOV units) has the k-space 2 pi sigma^2
 * exp(-2 pi^2 sigma^2 |k|^2) e^{-2 pi i k.r0} (the Fourier pair of a
 * Gaussian); 2 S spokes over 360 degrees sampled where a delay d puts them,
 * k_n = (n - N/2 - d / dwell) u: the estimate recovers d within 0.2 us
 * (the bound) for d = 2 us, -3 us and 0. */
Test(waveform, delay_estimate_opposed_spokes)
{
    const size_t S = 16, N = 64, coils = 2;
    const double dwell = 10e-6, sigma = 0.05, r0[2] = {0.12, -0.07};
    const double delays[3] = {2e-6, -3e-6, 0};
    kw_cfloat *d = malloc(coils * 2 * S * N * sizeof *d);
    for (int t = 0; t < 3; t++) {
        const double delta = delays[t] / dwell;
        for (size_t c = 0; c < coils; c++)
            for (size_t s = 0; s < 2 * S; s++) {
                const double th = KW_PI * (double)s / (double)S;
                for (size_t i = 0; i < N; i++) {
                    const double r = (double)i - (double)N / 2 - delta;
                    const double kx = r * cos(th), ky = r * sin(th);
                    const double mag = 2 * KW_PI * sigma * sigma *
                                       exp(-2 * KW_PI * KW_PI * sigma * sigma * (kx * kx + ky * ky));
                    const double ph = -2 * KW_PI * (kx * r0[0] + ky * r0[1]) + 0.3 * (double)c;
                    d[(c * 2 * S + s) * N + i] = (float)(mag * cos(ph)) + I * (float)(mag * sin(ph));
                }
            }
        double est = NAN;
        cr_assert_eq(kw_waveform_estimate_delay(d, coils, 2 * S, N, dwell, &est), KW_OK, "%s", kw_last_error());
        cr_expect(fabs(est - delays[t]) < 0.2e-6, "delay %g s estimated as %g s", delays[t], est);
        cr_expect(fabs(est - delays[t]) < 0.02e-6, "delay %g s estimated as %g s", delays[t], est);
    }
    double est;
    cr_expect_eq(kw_waveform_estimate_delay(d, coils, 2 * S - 1, N, dwell, &est), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "spokes");
    free(d);
}

/* Per-axis delays (kw_waveform_estimate_delay_axes()): the same analytic
 * Gaussian, each sample where per-axis delays put it: axis a plays
 * G u_a (t - d_a), so sample i of a spoke along u (one cycle/FOV per
 * dwell) lies at k_a = (i - N/2) u_a - d_a u_a / dwell (the opposed spoke,
 * -u, gets the opposite offset). The fit recovers dx = 2 us, dy = -1 us
 * within 0.2 us (the bound of the task; measured closer: 0.02 us is held
 * too), and the isotropic estimate of the same data is near the mean
 * effective delay (dx + dy) / 2 = 0.5 us (the average of dx cos^2 + dy
 * sin^2 over the circle). A 3-axis call on in-plane spokes gives dz NaN;
 * every spoke at 45 degrees cannot tell dx from dy ("dir"). */
static void gaussian_spokes(kw_cfloat *d, size_t coils, size_t S, size_t N, const double *dd, double *dir)
{
    const double sigma = 0.05, r0[2] = {0.12, -0.07};
    for (size_t c = 0; c < coils; c++)
        for (size_t s = 0; s < 2 * S; s++) {
            const double th = KW_PI * (double)s / (double)S, ux = cos(th), uy = sin(th);
            if (dir) {
                dir[s * 2] = 1e-3 * ux; /* a 1 mT/m readout along u */
                dir[s * 2 + 1] = 1e-3 * uy;
            }
            for (size_t i = 0; i < N; i++) {
                const double r = (double)i - (double)N / 2;
                const double kx = r * ux - dd[0] * ux, ky = r * uy - dd[1] * uy;
                const double mag = 2 * KW_PI * sigma * sigma *
                                   exp(-2 * KW_PI * KW_PI * sigma * sigma * (kx * kx + ky * ky));
                const double ph = -2 * KW_PI * (kx * r0[0] + ky * r0[1]) + 0.3 * (double)c;
                d[(c * 2 * S + s) * N + i] = (float)(mag * cos(ph)) + I * (float)(mag * sin(ph));
            }
        }
}

Test(waveform, delay_estimate_per_axis)
{
    const size_t S = 16, N = 64, coils = 2;
    const double dwell = 10e-6, truth[2] = {2e-6, -1e-6}, dd[2] = {truth[0] / dwell, truth[1] / dwell};
    kw_cfloat *d = malloc(coils * 2 * S * N * sizeof *d);
    double dir[2 * 2 * 16], est[3], iso = NAN;
    gaussian_spokes(d, coils, S, N, dd, dir);
    cr_assert_eq(kw_waveform_estimate_delay_axes(d, coils, 2 * S, N, dwell, dir, 2, est), KW_OK, "%s",
                 kw_last_error());
    for (int a = 0; a < 2; a++) {
        cr_expect(fabs(est[a] - truth[a]) < 0.2e-6, "axis %d: %g s estimated as %g s", a, truth[a], est[a]);
        cr_expect(fabs(est[a] - truth[a]) < 0.02e-6, "axis %d: %g s estimated as %g s", a, truth[a], est[a]);
    }
    cr_assert_eq(kw_waveform_estimate_delay(d, coils, 2 * S, N, dwell, &iso), KW_OK);
    cr_expect(fabs(iso - 0.5e-6) < 0.1e-6, "isotropic estimate %g s, expected near 0.5 us", iso);
    /* three axes, spokes in the x-y plane: z has no spoke */
    double dir3[3 * 2 * 16];
    for (size_t s = 0; s < 2 * S; s++) {
        dir3[3 * s] = dir[2 * s];
        dir3[3 * s + 1] = dir[2 * s + 1];
        dir3[3 * s + 2] = 0;
    }
    cr_assert_eq(kw_waveform_estimate_delay_axes(d, coils, 2 * S, N, dwell, dir3, 3, est), KW_OK, "%s",
                 kw_last_error());
    cr_expect(fabs(est[0] - truth[0]) < 0.02e-6 && fabs(est[1] - truth[1]) < 0.02e-6 && isnan(est[2]));
    /* every spoke at 45 degrees: dx and dy cannot be told apart */
    for (size_t s = 0; s < 2 * S; s++)
        dir[2 * s] = dir[2 * s + 1] = 1;
    cr_expect_eq(kw_waveform_estimate_delay_axes(d, coils, 2 * S, N, dwell, dir, 2, est), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "dir");
    dir[0] = dir[1] = 0;
    cr_expect_eq(kw_waveform_estimate_delay_axes(d, coils, 2 * S, N, dwell, dir, 2, est), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "dir");
    cr_expect_eq(kw_waveform_estimate_delay_axes(d, coils, 2 * S, N, dwell, NULL, 2, est), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "dir");
    cr_expect_eq(kw_waveform_estimate_delay_axes(d, coils, 2 * S, N, dwell, dir, 4, est), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "axes");
    cr_expect_eq(kw_waveform_estimate_delay_axes(d, coils, 2 * S - 1, N, dwell, dir, 2, est), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "spokes");
    d[5] = NAN;
    for (size_t s = 0; s < 2 * S; s++)
        dir[2 * s] = 1, dir[2 * s + 1] = (double)s;
    cr_expect_eq(kw_waveform_estimate_delay_axes(d, coils, 2 * S, N, dwell, dir, 2, est), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "data");
    free(d);
}

/* kw_waveform_adc_directions(): the gradient at each window's centre, a
 * trapezoid's flat top (linear between samples) */
Test(waveform, adc_directions_are_the_gradient_at_the_centre)
{
    double g[2 * 40] = {0};
    trap(g, 2, 0, 2, 4, 20, 10e-3);
    trap(g, 2, 1, 2, 4, 20, -5e-3);
    kw_waveform_adc adc[2] = {{6 * H, H, 20}, {6 * H, 2 * H, 10}};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 0;
    o.adc = adc;
    o.nadc = 2;
    kw_waveform *w = make(g, 40, 2, &o);
    double dir[4];
    cr_assert_eq(kw_waveform_adc_directions(w, dir), KW_OK);
    for (int j = 0; j < 2; j++) {
        cr_expect(fabs(dir[2 * j] - 10e-3) < 1e-15, "window %d x: %g", j, dir[2 * j]);
        cr_expect(fabs(dir[2 * j + 1] + 5e-3) < 1e-15, "window %d y: %g", j, dir[2 * j + 1]);
    }
    kw_waveform_destroy(w);
}

/* The allocation budget (kw_base.h; as tests/test_memory.c does for the
 * other objects): without a limit everything kw_alloc'd comes back; under
 * every limit from nothing up to the unlimited peak, create and the report
 * either succeed or fail with KW_ENOMEM, and nothing is held afterwards. */
static kw_status budget_run(const double *g, size_t n, const kw_waveform_options *o)
{
    kw_waveform *w = NULL;
    kw_status st = kw_waveform_create(&w, g, n, 2, o);
    char *js = NULL;
    if (!st)
        st = kw_waveform_report_json(w, &js);
    kw_free(js);
    kw_waveform_destroy(w);
    return st;
}

Test(waveform, allocation_budget)
{
    const size_t n = 300;
    double *g = calloc(2 * n, sizeof *g);
    trap(g, 2, 0, 10, 20, 50, 45e-3);
    trap(g, 2, 1, 100, 5, 30, -20e-3);
    kw_waveform_adc adc[2] = {{1e-3, 5e-6, 40}, {2e-3, 10e-6, 30}};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 50e-6;
    o.te_s = 1.5e-3;
    o.adc = adc;
    o.nadc = 2;
    o.response_tau_s[0] = 20e-6;
    o.response_amp[0] = 1;
    kw_memory_set_limit(0);
    const size_t base = kw_memory_in_use();
    kw_memory_reset_peak();
    cr_assert_eq(budget_run(g, n, &o), KW_OK, "%s", kw_last_error());
    cr_expect_eq(kw_memory_in_use(), base);
    const size_t peak = kw_memory_peak() - base;
    for (size_t lim = 0; lim <= peak + 64; lim += 256) {
        kw_memory_set_limit(base + lim);
        kw_status st = budget_run(g, n, &o);
        cr_expect(st == KW_OK || st == KW_ENOMEM, "limit %zu: status %d", lim, st);
        kw_memory_set_limit(0);
        cr_expect_eq(kw_memory_in_use(), base, "limit %zu: bytes held afterwards", lim);
    }
    free(g);
}

/* Text inputs: a table with a header, comments and mixed separators; the
 * ADC windows with units or sample indices. */
Test(waveform, text_inputs)
{
    double *g = NULL;
    size_t n = 0;
    int axes = 0;
    cr_assert_eq(kw_waveform_table_parse("x, y  # T/m\n0,0\n1e-3;-2e-3\n\n2e-3\t-4e-3 # top\n0 0\n", &g, &n, &axes),
                 KW_OK, "%s", kw_last_error());
    cr_expect_eq(n, 4);
    cr_expect_eq(axes, 2);
    const double want[8] = {0, 0, 1e-3, -2e-3, 2e-3, -4e-3, 0, 0};
    for (int i = 0; i < 8; i++)
        cr_expect(g[i] == want[i], "g[%d] = %g", i, g[i]);
    kw_free(g);
    cr_expect_eq(kw_waveform_table_parse("0,0\n1\n", &g, &n, &axes), KW_EFORMAT);
    cr_expect_str_eq(kw_last_error_param(), "waveform");
    cr_expect(strstr(kw_last_error(), "line 2") != NULL, "%s", kw_last_error());
    cr_expect_eq(kw_waveform_table_parse("0,0,0,0\n", &g, &n, &axes), KW_EFORMAT);
    cr_expect_eq(kw_waveform_table_parse("# nothing\n", &g, &n, &axes), KW_EFORMAT);
    kw_waveform_adc *adc = NULL;
    cr_assert_eq(kw_waveform_adc_parse("1.2ms:256:4us,30:10:10us", H, &adc, &n), KW_OK, "%s", kw_last_error());
    cr_expect_eq(n, 2);
    REL(adc[0].start_s, 1.2e-3, 1e-12);
    cr_expect_eq(adc[0].samples, 256);
    REL(adc[0].dwell_s, 4e-6, 1e-12);
    REL(adc[1].start_s, 30 * H, 1e-12); /* a sample index */
    kw_free(adc);
    cr_expect_eq(kw_waveform_adc_parse("1.2ms:256", H, &adc, &n), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "adc");
    cr_expect_eq(kw_waveform_adc_parse("1.2:256:4us", H, &adc, &n), KW_EINVAL); /* no unit, not whole */
    cr_expect_eq(kw_waveform_adc_parse("1ms:0:4us", H, &adc, &n), KW_EINVAL);
}

/* Held samples (the planner's spiral convention, kw_gradient.h): a value A
 * held over m rasters from t0 is a rectangle: M0 = A m h, M1 = M0 (t0 +
 * m h / 2) (area x centroid, Bernstein et al. 2004, sec. 9.1); RMS over
 * the span n h: |A| sqrt(m / n). */
Test(waveform, held_samples_are_rectangles)
{
    const size_t n = 50, s0 = 10, m = 7;
    double g[50] = {0};
    for (size_t i = s0; i < s0 + m; i++)
        g[i] = 12e-3;
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 2 * H;
    o.held = 1;
    kw_waveform *w = make(g, n, 1, &o);
    kw_waveform_moments mo;
    const double t0 = (double)(s0 - 2) * H, M0 = 12e-3 * (double)m * H;
    cr_assert_eq(kw_waveform_moments_at(w, (double)(n - 2) * H, &mo), KW_OK, "%s", kw_last_error());
    REL(mo.m0[0], M0, 1e-12);
    REL(mo.m1[0], M0 * (t0 + (double)m * H / 2), 1e-12);
    REL(kw_waveform_summary_of(w)->span_s, (double)n * H, 1e-12);
    REL(kw_waveform_summary_of(w)->rms_g[0], 12e-3 * sqrt((double)m / (double)n), 1e-12);
    /* halfway through the third held value: 2.5 rasters */
    cr_assert_eq(kw_waveform_moments_at(w, t0 + 2.5 * H, &mo), KW_OK);
    REL(mo.m0[0], 12e-3 * 2.5 * H, 1e-12);
    /* M0 to the end: exactly the sum of G dt (the closed form of a held
     * sequence) */
    cr_assert_eq(kw_waveform_moments_at(w, (double)n * H - 2 * H, &mo), KW_OK);
    REL(mo.m0[0], 12e-3 * H * (double)m, 1e-13);
    kw_waveform_destroy(w);
}

/* kweave's own spiral written as a waveform (held samples) and imported
 * back: its k-space at the ADC samples is the pattern's trajectory of that
 * interleaf (within float rounding; the pattern moves samples landing on
 * +N/2 inside by one float step). */
Test(waveform, spiral_design_imported_back_is_the_pattern)
{
    kw_pattern_options po;
    kw_pattern_options_init(&po);
    po.kind = KW_PATTERN_SPIRAL;
    po.ndim = 2;
    po.dims[0] = po.dims[1] = 32;
    po.dwell_s = 10e-6;
    po.interleaves = 4;
    kw_pattern *p = NULL;
    cr_assert_eq(kw_pattern_create(&p, &po), KW_OK, "%s", kw_last_error());
    const kw_pattern_info *in = kw_pattern_info_of(p);
    const size_t per = in->readout_samples;
    for (int il = 0; il < 4; il += 3) {
        size_t n = 0, na = 0;
        cr_assert_eq(kw_waveform_spiral(&po, il, NULL, &n, NULL, &na), KW_OK, "%s", kw_last_error());
        double *g = calloc(2 * n, sizeof *g);
        kw_waveform_adc adc;
        cr_assert_eq(kw_waveform_spiral(&po, il, g, &n, &adc, &na), KW_OK, "%s", kw_last_error());
        cr_assert_eq(adc.samples, per);
        kw_waveform_options o;
        kw_waveform_options_init(&o);
        o.rf_centre_s = 0;
        o.held = 1;
        o.adc = &adc;
        o.nadc = 1;
        kw_waveform *w = make(g, n, 2, &o);
        float *k = malloc(per * 2 * sizeof *k), *t = malloc(per * sizeof *t);
        cr_assert_eq(kw_waveform_trajectory(w, k, t), KW_OK);
        const float *kp = kw_pattern_trajectory(p) + (size_t)il * per * 2, *tp = kw_pattern_times(p);
        double worst = 0;
        for (size_t i = 0; i < 2 * per; i++)
            worst = fmax(worst, fabs((double)k[i] - (double)kp[i]));
        cr_expect(worst < 1e-4, "interleaf %d: |k - k_pattern| up to %g cycles/FOV", il, worst);
        for (size_t i = 0; i < per; i++)
            cr_expect(fabsf(t[i] - tp[i]) < 1e-9f, "t[%zu]", i);
        cr_expect(kw_waveform_summary_of(w)->violations == 0);
        free(k);
        free(t);
        free(g);
        kw_waveform_destroy(w);
    }
    kw_pattern_destroy(p);
}

/* ---- the actual gradient through a sampled transfer function (GIRF) ---- */

/* A readout of one cycle/FOV per 10 us on raster h = 10 us / up (prephaser,
 * then the readout; ramps of 100 us), the ADC on the flat top every 10 us,
 * run once with a delay / first-order term (closed form) and once with the
 * GIRF table (f, hv: (nf) for the one axis). Returns the largest
 * difference of the actual samples (relative to the readout's amplitude)
 * and of the actual k (cycles/FOV); *dk_nom the largest of k_actual -
 * k_nominal of the GIRF run. */
static void girf_cascade(size_t up, double delay, double tau, double amp, const double *f, const kw_cdouble *hv,
                         size_t nf, double gdelay, double gtau, double gamp, double *dg, double *dk, double *dk_nom)
{
    const double h = H / (double)up;
    const size_t r = 10 * up, fr = 128 * up, fp = fr / 2 - r / 2;
    const size_t s1 = 10 * up, s2 = s1 + 2 * r + fp, n = s2 + 2 * r + fr + 20 * up;
    const double Gr = 1.0 / (KW_GAMMA_BAR_P * 0.256 * H);
    double *g = calloc(n, sizeof *g), *g1 = calloc(n, sizeof *g1), *g2 = calloc(n, sizeof *g2);
    float k1[128], k2[128], kn[128];
    trap(g, 1, 0, s1, r, fp, -Gr);
    trap(g, 1, 0, s2, r, fr, Gr);
    kw_waveform_adc adc = {(double)(s2 + r) * h, H, 128};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.raster_s = h;
    o.rf_centre_s = 5 * H;
    o.adc = &adc;
    o.nadc = 1;
    o.delay_s[0] = delay;
    o.response_tau_s[0] = tau;
    o.response_amp[0] = amp;
    kw_waveform *w = make(g, n, 1, &o);
    cr_assert_eq(kw_waveform_actual(w, g1), KW_OK);
    cr_assert_eq(kw_waveform_trajectory_actual(w, k1, NULL), KW_OK);
    kw_waveform_destroy(w);
    kw_waveform_options_init(&o);
    o.raster_s = h;
    o.rf_centre_s = 5 * H;
    o.adc = &adc;
    o.nadc = 1;
    o.girf_freq_hz = f;
    o.girf = hv;
    o.girf_nfreq = nf;
    o.girf_axes = 1;
    o.delay_s[0] = gdelay;
    o.response_tau_s[0] = gtau;
    o.response_amp[0] = gamp;
    w = make(g, n, 1, &o);
    cr_expect(kw_waveform_has_imperfection(w));
    cr_assert_eq(kw_waveform_actual(w, g2), KW_OK);
    cr_assert_eq(kw_waveform_trajectory_actual(w, k2, NULL), KW_OK);
    cr_assert_eq(kw_waveform_trajectory(w, kn, NULL), KW_OK);
    kw_waveform_destroy(w);
    *dg = *dk = *dk_nom = 0;
    for (size_t i = 0; i < n; i++)
        *dg = fmax(*dg, fabs(g1[i] - g2[i]) / Gr);
    for (size_t j = 0; j < 128; j++) {
        *dk = fmax(*dk, fabs((double)k1[j] - (double)k2[j]));
        *dk_nom = fmax(*dk_nom, fabs((double)k2[j] - (double)kn[j]));
    }
    free(g);
    free(g1);
    free(g2);
}

/* the GIRF alone against the closed-form delay / first-order low-pass */
static void girf_vs_closed(size_t up, double delay, double tau, const double *f, const kw_cdouble *hv,
                           size_t nf, double *dg, double *dk, double *dk_nom)
{
    girf_cascade(up, delay, tau, tau > 0 ? 1 : 0, f, hv, nf, 0, 0, 0, dg, dk, dk_nom);
}

/* the table: nf frequencies 0 .. fmax, H(f) = exp(-i 2 pi f d) /
 * (1 + i 2 pi f tau) (tau 0: a pure delay; both 0: H = 1) */
static void girf_table(double fmax, size_t nf, double d, double tau, double *f, kw_cdouble *hv)
{
    for (size_t j = 0; j < nf; j++) {
        f[j] = fmax * (double)j / (double)(nf - 1);
        const double ph = -2 * M_PI * f[j] * d;
        const kw_cdouble e = cos(ph) + I * sin(ph);
        hv[j] = e / (1.0 + I * 2 * M_PI * f[j] * tau);
    }
}

#define GIRF_NF 20004
static double gf[GIRF_NF];
static kw_cdouble gh[GIRF_NF];

/* H = 1 to the raster's Nyquist frequency (50 kHz): the nominal samples
 * back to double rounding (the DFT there and back), and the actual k the
 * nominal one within float output rounding. */
Test(waveform, girf_identity_is_the_nominal_waveform)
{
    double dg, dk, dn;
    girf_table(50e3, 2, 0, 0, gf, gh);
    girf_vs_closed(1, 0, 0, gf, gh, 2, &dg, &dk, &dn);
    cr_expect(dg < 1e-12, "G: %g of the amplitude", dg);
    cr_expect(dn < 1e-5, "k: %g cycles/FOV from the nominal", dn);
}

/* H = exp(-i 2 pi f d) against the closed-form delay (G(t - d), linear
 * between samples). d = 2 rasters: the DFT shifts the zero-padded samples
 * by exactly 2, so the only difference is the linear interpolation of the
 * phase ramp between table points 10 Hz apart, which shortens the unit
 * phasor by at most (2 pi d df)^2 / 8 = 2e-7 (chord of an arc); bound 5e-7
 * of the amplitude, k within float output rounding (|k| <= 64: 5e-5).
 * d = 2 us (a fifth of a raster): the GIRF delays the band-limited
 * interpolant of the samples, the closed form the piecewise-linear one;
 * they part at the ramps' corners (a kink; measured 7.7e-3 of the
 * amplitude, bound 1e-2) and their integrals agree closer (k within 2e-3
 * cycles/FOV, measured 1.6e-3); both move the echo by gamma_bar G d / dk
 * = 0.2 samples (k_actual - k_nominal = -0.2 on the flat top, within the
 * same 2e-3). */
Test(waveform, girf_pure_delay_matches_the_delay)
{
    double dg, dk, dn;
    girf_table(50e3, 5001, 20e-6, 0, gf, gh);
    girf_vs_closed(1, 20e-6, 0, gf, gh, 5001, &dg, &dk, &dn);
    cr_expect(dg < 5e-7, "G: %g of the amplitude", dg);
    cr_expect(dk < 5e-5, "k: %g cycles/FOV", dk);
    cr_expect(fabs(dn - 2.0) < 5e-5, "echo moved by %g samples, expected 2", dn);
    girf_table(50e3, 5001, 2e-6, 0, gf, gh);
    girf_vs_closed(1, 2e-6, 0, gf, gh, 5001, &dg, &dk, &dn);
    cr_expect(dg < 1e-2, "G: %g of the amplitude", dg);
    cr_expect(dk < 2e-3, "k: %g cycles/FOV", dk);
    cr_expect(fabs(dn - 0.2) < 2e-3, "echo moved by %g samples, expected 0.2", dn);
}

/* H = 1 / (1 + i 2 pi f tau), the first-order low-pass (textbook transfer
 * function of tau y' = G - y), tau = 20 us, against the closed form of the
 * same low-pass on the piecewise-linear waveform. The GIRF filters the
 * samples' band-limited interpolant within the raster's Nyquist band, the
 * closed form the continuous waveform: a sampling difference that falls
 * with the raster (measured 3.6e-3 of the amplitude at 10 us, 1.1e-3 at
 * 5 us, k 4.3e-4 and 7.6e-5 cycles/FOV; bounds 5e-3, 1.5e-3, 1e-3, 2e-4),
 * and the k lag tau G gamma_bar FOV = 2 cycles/FOV on the flat top. */
Test(waveform, girf_lowpass_matches_the_lowpass)
{
    double dg, dk, dn, prev = 1;
    const double bg[3] = {5e-3, 1.5e-3, 1.5e-3}, bk[3] = {1e-3, 2e-4, 2e-4};
    for (size_t up = 1, q = 0; up <= 4; up *= 2, q++) {
        girf_table(50e3 * (double)up, 5001 * up, 0, 20e-6, gf, gh);
        girf_vs_closed(up, 0, 20e-6, gf, gh, 5001 * up, &dg, &dk, &dn);
        cr_expect(dg < bg[q], "raster %g us: G %g of the amplitude", 10.0 / (double)up, dg);
        cr_expect(dk < bk[q], "raster %g us: k %g cycles/FOV", 10.0 / (double)up, dk);
        cr_expect(dg < prev, "raster %g us: %g not below %g", 10.0 / (double)up, dg, prev);
        cr_expect(fabs(dn - 2.0) < 1e-3, "lag %g cycles/FOV, expected 2", dn);
        prev = dg;
    }
}

/* The GIRF with a delay and a response term: the cascade (kw_waveform.h,
 * "Actual gradient: cascade"). The systems are linear and time-invariant,
 * so their product H(f) e^{-i 2 pi f d} ((1 - a) + a / (1 + i 2 pi f tau))
 * does not depend on the order; the library applies the GIRF to the
 * samples, then the closed-form terms to its output.
 * (1) H = 1 to 50 kHz with a 2 us delay gives the 2 us delay alone: the
 * GIRF returns the samples to 1e-12 of the amplitude (the identity test
 * above) and the same closed form acts on both, so the samples agree to
 * 1e-12 and k within float output rounding (|k| <= 64 cycles/FOV: 1e-5).
 * (2) H = e^{-i 2 pi f d} (d = 20 us, two rasters, a 10 Hz table) with a
 * 20 us low-pass gives the closed-form 20 us delay with the same low-pass:
 * the GIRF's samples are the delayed ones within 5e-7 of the amplitude
 * (the phase ramp's interpolation, girf_pure_delay_matches_the_delay), and
 * the first-order response is a contraction in the largest value (its
 * impulse response e^{-t/tau}/tau is positive with unit area), so the
 * results stay within the same 5e-7; k within 5e-5 (float output). The
 * same with an eddy-current term (amplitude 0.05, 50 us) and with the
 * delay on the GIRF's side and the low-pass in the table turned round
 * (H = 1 / (1 + i 2 pi f tau) with --delay 20 us against the closed-form
 * delay and low-pass): the latter within the low-pass's sampling
 * difference (girf_lowpass_matches_the_lowpass: bound 5e-3, k 1e-3). */
Test(waveform, girf_cascade_with_delay_and_response)
{
    double dg, dk, dn;
    girf_table(50e3, 2, 0, 0, gf, gh);
    girf_cascade(1, 2e-6, 0, 0, gf, gh, 2, 2e-6, 0, 0, &dg, &dk, &dn);
    cr_expect(dg < 1e-12, "H = 1 + delay: G %g of the amplitude", dg);
    cr_expect(dk < 1e-5, "H = 1 + delay: k %g cycles/FOV", dk);
    cr_expect(fabs(dn - 0.2) < 2e-3, "H = 1 + delay: echo moved by %g samples, expected 0.2", dn);
    girf_table(50e3, 5001, 20e-6, 0, gf, gh);
    girf_cascade(1, 20e-6, 20e-6, 1, gf, gh, 5001, 0, 20e-6, 1, &dg, &dk, &dn);
    cr_expect(dg < 5e-7, "GIRF delay + low-pass: G %g of the amplitude", dg);
    cr_expect(dk < 5e-5, "GIRF delay + low-pass: k %g cycles/FOV", dk);
    cr_expect(fabs(dn - 4.0) < 1e-3, "delay 2 + lag 2 cycles/FOV: %g", dn);
    girf_cascade(1, 20e-6, 50e-6, 0.05, gf, gh, 5001, 0, 50e-6, 0.05, &dg, &dk, &dn);
    cr_expect(dg < 5e-7, "GIRF delay + eddy: G %g of the amplitude", dg);
    cr_expect(dk < 5e-5, "GIRF delay + eddy: k %g cycles/FOV", dk);
    girf_table(50e3, 5001, 0, 20e-6, gf, gh);
    girf_cascade(1, 20e-6, 20e-6, 1, gf, gh, 5001, 20e-6, 0, 0, &dg, &dk, &dn);
    cr_expect(dg < 5e-3, "GIRF low-pass + delay: G %g of the amplitude", dg);
    cr_expect(dk < 1e-3, "GIRF low-pass + delay: k %g cycles/FOV", dk);
}

Test(waveform, girf_fields_are_checked)
{
    double g[40] = {0};
    double f[3] = {0, 1e3, 2e3};
    kw_cdouble hv[6] = {1, 1, 1, 1, 1, 1};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 0;
    o.girf_freq_hz = f;
    o.girf = hv;
    o.girf_nfreq = 3;
    o.girf_axes = 1;
    expect_refused(g, 20, 2, &o, KW_EINVAL, "girf_axes");
    o.girf_axes = 2;
    f[2] = 1e3;
    expect_refused(g, 20, 2, &o, KW_EINVAL, "girf_freq_hz");
    f[2] = NAN;
    expect_refused(g, 20, 2, &o, KW_EINVAL, "girf_freq_hz");
    f[2] = 2e3;
    f[0] = -1;
    expect_refused(g, 20, 2, &o, KW_EINVAL, "girf_freq_hz");
    f[0] = 0;
    hv[4] = NAN;
    expect_refused(g, 20, 2, &o, KW_ENUMERIC, "girf");
    hv[4] = 1;
    o.girf_nfreq = 1;
    expect_refused(g, 20, 2, &o, KW_EINVAL, "girf");
    o.girf_nfreq = 3;
    o.girf = NULL;
    expect_refused(g, 20, 2, &o, KW_EINVAL, "girf");
    o.girf = hv;
    kw_waveform *w = make(g, 20, 2, &o);
    cr_expect(kw_waveform_has_imperfection(w));
    kw_waveform_destroy(w);
}

/* The GIRF under a sweep of allocation budgets (every refusal frees what
 * the call took), and kw_waveform_girf_split() of a complex table. */
Test(waveform, girf_allocation_budget_and_split)
{
    const size_t n = 300;
    double *g = calloc(2 * n, sizeof *g);
    trap(g, 2, 0, 10, 20, 50, 45e-3);
    trap(g, 2, 1, 100, 5, 30, -20e-3);
    kw_cfloat table[3 * 3] = {0, 1, 2, 1e3, 0.5f + 0.25f * I, 3, 2e3, 0.25f, -1};
    double *f = NULL;
    kw_cdouble *hv = NULL;
    cr_assert_eq(kw_waveform_girf_split(table, 3, 2, &f, &hv), KW_OK, "%s", kw_last_error());
    cr_expect(f[0] == 0 && f[1] == 1e3 && f[2] == 2e3);
    cr_expect(hv[0] == 1 && hv[1] == 0.5 + 0.25 * I && hv[2] == 0.25); /* axis x */
    cr_expect(hv[3] == 2 && hv[4] == 3 && hv[5] == -1);                /* axis y */
    kw_waveform_adc adc = {1e-3, 5e-6, 40};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 50e-6;
    o.adc = &adc;
    o.nadc = 1;
    o.girf_freq_hz = f;
    o.girf = hv;
    o.girf_nfreq = 3;
    o.girf_axes = 2;
    kw_memory_set_limit(0);
    const size_t base = kw_memory_in_use();
    kw_memory_reset_peak();
    cr_assert_eq(budget_run(g, n, &o), KW_OK, "%s", kw_last_error());
    const size_t peak = kw_memory_peak() - base;
    for (size_t lim = 0; lim <= peak + 64; lim += 512) {
        kw_memory_set_limit(base + lim);
        kw_status st = budget_run(g, n, &o);
        cr_expect(st == KW_OK || st == KW_ENOMEM, "limit %zu: status %d", lim, st);
        kw_memory_set_limit(0);
        cr_expect_eq(kw_memory_in_use(), base, "limit %zu: bytes held afterwards", lim);
    }
    kw_free(f);
    kw_free(hv);
    table[6] = 2e3f + 1e-3f * I;
    cr_expect_eq(kw_waveform_girf_split(table, 3, 2, &f, &hv), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "girf");
    cr_expect(strstr(kw_last_error(), "row 2") != NULL, "%s", kw_last_error());
    cr_expect_null(f);
    cr_expect_null(hv);
    free(g);
}

/* The actual gradient of a held waveform (each value held over its
 * raster), in closed form, against references worked here independently:
 * a delay of one raster moves the held values by one; a delay of a fifth
 * of a raster makes the mean over [t_i, t_i+1) 0.8 g_i + 0.2 g_(i-1); a
 * first-order low-pass (tau 20 us) follows the exact zero-order-hold
 * recursion y_(i+1) = g_i + (y_i - g_i) e^(-h/tau) (the textbook step
 * response 1 - e^(-t/tau) of each held step), its mean over an interval
 * g_i + (y_i - g_i) (tau / h) (1 - e^(-h/tau)); the actual k at the ADC
 * samples is the integral of those; the GIRF H = 1 with a 2 us delay is
 * the delay alone, the GIRF of a 2-raster delay the 20 us delay. The
 * actual samples of a held waveform are means, differences of the exact
 * integral at the boundaries divided by the raster: equal to the
 * references to 1e-13 of the amplitude (double rounding of those
 * differences); k within float32 output rounding (2e-5 cycles/FOV). */
static void held_actual(const double *g, size_t n, double d, double tau, const double *f, const kw_cdouble *hv,
                        size_t nf, double *ga, float *k)
{
    kw_waveform_adc adc = {5 * H, H, 50};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 2 * H;
    o.held = 1;
    o.adc = &adc;
    o.nadc = 1;
    o.delay_s[0] = d;
    o.response_tau_s[0] = tau;
    o.response_amp[0] = tau > 0 ? 1 : 0;
    o.girf_freq_hz = f;
    o.girf = hv;
    o.girf_nfreq = nf;
    o.girf_axes = f ? 1 : 0;
    kw_waveform *w = make(g, n, 1, &o);
    cr_expect(kw_waveform_has_imperfection(w));
    cr_assert_eq(kw_waveform_actual(w, ga), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_waveform_trajectory_actual(w, k, NULL), KW_OK, "%s", kw_last_error());
    kw_waveform_destroy(w);
}

/* k at ADC sample j (time (5 + j) H, RF centre 2 H) of held means ga */
static double held_k(const double *ga, size_t j)
{
    double m0 = 0;
    for (size_t i = 2; i < 5 + j; i++)
        m0 += ga[i] * H;
    return KW_GAMMA_BAR_P * m0 * 0.256;
}

Test(waveform, held_actual_gradient_closed_form)
{
    enum { N = 60 };
    double g[N], ga[N], ref[N];
    float k[50];
    for (size_t i = 0; i < N; i++)
        g[i] = i < 3 || i > N - 4 ? 0 : 10e-3 * sin(0.3 * (double)i) + 4e-3;
    const double top = 14e-3;
    held_actual(g, N, H, 0, NULL, NULL, 0, ga, k);
    for (size_t i = 0; i < N; i++)
        cr_expect(fabs(ga[i] - (i ? g[i - 1] : 0)) < 1e-13 * top, "delay H, sample %zu: %.17g", i, ga[i] - (i ? g[i - 1] : 0));
    held_actual(g, N, 0.2 * H, 0, NULL, NULL, 0, ga, k);
    for (size_t i = 0; i < N; i++)
        ref[i] = 0.8 * g[i] + 0.2 * (i ? g[i - 1] : 0);
    for (size_t i = 0; i < N; i++)
        cr_expect(fabs(ga[i] - ref[i]) < 1e-13 * top, "delay 2 us, sample %zu: %g vs %g", i, ga[i], ref[i]);
    for (size_t j = 0; j < 50; j++)
        cr_expect(fabs(k[j] - held_k(ref, j)) < 2e-5, "delay 2 us, k[%zu]: %g vs %g", j, k[j], held_k(ref, j));
    const double tau = 20e-6, e = exp(-H / tau);
    held_actual(g, N, 0, tau, NULL, NULL, 0, ga, k);
    double y = 0;
    for (size_t i = 0; i < N; i++) {
        ref[i] = g[i] + (y - g[i]) * tau / H * (1 - e);
        y = g[i] + (y - g[i]) * e;
    }
    for (size_t i = 0; i < N; i++)
        cr_expect(fabs(ga[i] - ref[i]) < 1e-13 * top, "low-pass, sample %zu: %g vs %g", i, ga[i], ref[i]);
    for (size_t j = 0; j < 50; j++)
        cr_expect(fabs(k[j] - held_k(ref, j)) < 2e-5, "low-pass, k[%zu]: %g vs %g", j, k[j], held_k(ref, j));
    /* the GIRF: H = 1 with a 2 us delay, and a 2-raster delay table */
    double gd[N];
    float kd[50];
    held_actual(g, N, 0.2 * H, 0, NULL, NULL, 0, gd, kd);
    girf_table(50e3, 2, 0, 0, gf, gh);
    held_actual(g, N, 0.2 * H, 0, gf, gh, 2, ga, k);
    for (size_t i = 0; i < N; i++)
        cr_expect(fabs(ga[i] - gd[i]) < 1e-12 * top, "H = 1 + delay, sample %zu", i);
    for (size_t j = 0; j < 50; j++)
        cr_expect(fabsf(k[j] - kd[j]) < 2e-5f, "H = 1 + delay, k[%zu]", j);
    held_actual(g, N, 2 * H, 0, NULL, NULL, 0, gd, kd);
    girf_table(50e3, 5001, 2 * H, 0, gf, gh);
    held_actual(g, N, 0, 0, gf, gh, 5001, ga, k);
    for (size_t i = 0; i < N; i++)
        cr_expect(fabs(ga[i] - gd[i]) < 5e-7 * top, "GIRF delay, sample %zu: %g vs %g", i, ga[i], gd[i]);
}

/* Several RF centres (two excitations of the same prephaser + readout
 * block, the second starting L samples later): k restarts at each centre,
 * so the second window's k equals the first's (to float rounding), where
 * the running integral would carry the first block's net area (+A/2, 32
 * cycles/FOV here); the moments at each window's centre, counted from its
 * own centre, are equal (a shift in time of G and of the origin together
 * leaves M0, M1, M2 unchanged: substitute tau' = tau - L raster in the
 * definition, Bernstein et al. sec. 9.1); the echo of the first block has
 * M0 = 0 (prephaser -A/2 over the first half of the readout, A/2). With a
 * 2 us delay the actual k of both windows is the same too. Bad centres and
 * a window that holds the second centre are refused. */
Test(waveform, several_rf_centres_restart_k)
{
    const size_t r = 10, fr = 64, fp = fr / 2 - r / 2, s1 = 10, s2 = s1 + 2 * r + fp;
    const size_t L = s2 + 2 * r + fr + 20, n = 2 * L;
    const double Gr = 1.0 / (KW_GAMMA_BAR_P * 0.256 * H);
    double *g = calloc(n, sizeof *g);
    for (size_t b = 0; b < 2; b++) {
        trap(g, 1, 0, b * L + s1, r, fp, -Gr);
        trap(g, 1, 0, b * L + s2, r, fr, Gr);
    }
    kw_waveform_adc adc[2] = {{(double)(s2 + r) * H, H, fr}, {(double)(L + s2 + r) * H, H, fr}};
    const double rf[2] = {5 * H, (double)(L + 5) * H};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centres_s = rf;
    o.nrf = 2;
    o.adc = adc;
    o.nadc = 2;
    o.delay_s[0] = 2e-6;
    kw_waveform *w = make(g, n, 1, &o);
    float k[2 * 64], ka[2 * 64];
    cr_assert_eq(kw_waveform_trajectory(w, k, NULL), KW_OK);
    cr_assert_eq(kw_waveform_trajectory_actual(w, ka, NULL), KW_OK);
    for (size_t j = 0; j < fr; j++) {
        cr_expect(fabsf(k[j] - ((float)j - 32.0f)) < 1e-4f, "k[%zu] = %g", j, k[j]);
        cr_expect(fabsf(k[fr + j] - k[j]) < 1e-5f, "second window k[%zu]: %g vs %g", j, k[fr + j], k[j]);
        cr_expect(fabsf(ka[fr + j] - ka[j]) < 1e-5f, "second window actual k[%zu]: %g vs %g", j, ka[fr + j], ka[j]);
        /* sample 0: t - d on the ramp, 0.198 (delay_shifts_the_echo) */
        cr_expect(fabsf(ka[j] - (k[j] - (j ? 0.2f : 0.198f))) < 1e-4f, "actual k[%zu]: %g vs %g", j, ka[j], k[j]);
    }
    size_t na;
    const kw_waveform_moments *m = kw_waveform_adc_moments(w, &na);
    cr_assert_eq(na, 2);
    cr_expect(fabs(m[0].m0[0]) < 1e-12 * Gr * H, "M0 at the first echo %g", m[0].m0[0]);
    REL(m[1].m0[0] + 1.0, m[0].m0[0] + 1.0, 1e-15);
    REL(m[1].m1[0], m[0].m1[0], 1e-9);
    REL(m[1].m2[0], m[0].m2[0], 1e-9);
    cr_expect(fabs(m[1].t_s - m[0].t_s - (double)L * H) < 1e-15, "t_s counted from the first centre");
    char *js = NULL;
    cr_assert_eq(kw_waveform_report_json(w, &js), KW_OK);
    cr_expect(strstr(js, "\"rf_centres_s\"") != NULL);
    kw_free(js);
    kw_waveform_destroy(w);
    /* bad centres */
    double bad[2] = {rf[1], rf[0]};
    o.rf_centres_s = bad;
    expect_refused(g, n, 1, &o, KW_EINVAL, "rf_centres_s");
    bad[0] = rf[0];
    bad[1] = (double)n * H;
    expect_refused(g, n, 1, &o, KW_ERANGE, "rf_centres_s");
    bad[1] = NAN;
    expect_refused(g, n, 1, &o, KW_ERANGE, "rf_centres_s");
    o.rf_centres_s = rf;
    o.rf_centre_s = 6 * H;
    expect_refused(g, n, 1, &o, KW_EINVAL, "rf_centres_s");
    o.rf_centre_s = rf[0];
    kw_waveform_adc across = {(double)L * H, H, 10};
    o.adc = &across;
    o.nadc = 1;
    expect_refused(g, n, 1, &o, KW_EINVAL, "adc");
    o.adc = adc;
    o.nadc = 2;
    o.rf_centres_s = NULL;
    expect_refused(g, n, 1, &o, KW_EINVAL, "rf_centres_s");
    free(g);
}

/* The gradient-echo plan's lobes written as a waveform (kw_waveform_plan())
 * and imported back: at TE (the ADC window's centre) M0 on x is 0 (the
 * prephaser's area is minus half the readout's: A_p + A_r / 2 = 0, the
 * planner's design), M0 on y the phase encode's area, which is the
 * k-space definition's ky = -N/2 cycles/FOV: -N / (2 gamma_bar FOV)
 * (CODATA gamma_bar), M0 on z the slice select's area after the RF centre
 * (amplitude x (flat - rf / 2 + ramp / 2), the trapezoid's closed form,
 * Bernstein et al. sec. 9.1) plus the rephaser's, 0; TE is the plan's. A
 * spin echo is refused ("kind"). */
Test(waveform, plan_lobes_imported_back)
{
    kw_protocol p;
    kw_protocol_defaults(&p);
    p.matrix[0] = p.matrix[1] = 256;
    p.bandwidth_hz = 100e3;
    kw_plan_report *r = NULL;
    cr_assert_eq(kw_plan_create(&r, &p), KW_OK, "%s", kw_last_error());
    size_t n = 0;
    cr_assert_eq(kw_waveform_plan(r, NULL, &n, NULL, NULL, NULL), KW_OK, "%s", kw_last_error());
    double *g = calloc(3 * n, sizeof *g), rf = 0, te = 0;
    kw_waveform_adc adc;
    size_t small = n - 1;
    cr_expect_eq(kw_waveform_plan(r, g, &small, &adc, &rf, &te), KW_ERANGE);
    cr_assert_eq(kw_waveform_plan(r, g, &n, &adc, &rf, &te), KW_OK, "%s", kw_last_error());
    cr_expect(fabs(te - r->te_s) < 1e-12, "TE %g vs the plan's %g", te, r->te_s);
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.raster_s = p.raster_s;
    o.rf_centre_s = rf;
    o.adc = &adc;
    o.nadc = 1;
    kw_waveform *w = make(g, n, 3, &o);
    kw_waveform_moments m;
    cr_assert_eq(kw_waveform_moments_at(w, te, &m), KW_OK);
    const double ar = kw_trapezoid_area(&r->readout);
    cr_expect(fabs(kw_trapezoid_area(&r->prephaser) + ar / 2) < 1e-12 * fabs(ar));
    cr_expect(fabs(m.m0[0]) < 1e-9 * fabs(ar), "M0 x at TE %g (readout area %g)", m.m0[0], ar);
    REL(m.m0[1], kw_trapezoid_area(&r->phase_encode), 1e-9);
    REL(m.m0[1], -128.0 / (KW_GAMMA_BAR_P * p.fov_m[1]), 1e-9);
    const kw_trapezoid *ss = &r->slice_select;
    const double after = ss->amplitude_T_per_m * (ss->flat_s - r->rf_duration_s / 2 + ss->ramp_s / 2);
    cr_expect(fabs(after + kw_trapezoid_area(&r->slice_rephaser)) < 1e-9 * fabs(after));
    cr_expect(fabs(m.m0[2]) < 1e-9 * fabs(after), "M0 z at TE %g", m.m0[2]);
    kw_waveform_destroy(w);
    kw_plan_destroy(r);
    free(g);
    p.sequence = KW_SEQ_SE;
    cr_assert_eq(kw_plan_create(&r, &p), KW_OK);
    cr_expect_eq(kw_waveform_plan(r, NULL, &n, NULL, NULL, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "kind");
    kw_plan_destroy(r);
}

/* Cross-axis GIRF terms (girf_cross): with H_xx = H_yy = 1 and H_yx = 0.1,
 * H_xy = 0 to the Nyquist frequency the actual y is G_y + 0.1 G_x and x is
 * G_x (linearity of the sum over inputs; 1e-12 of the amplitude, the DFT
 * there and back); a cross table whose off-diagonal terms are 0 is the
 * per-axis table (the same result to 1e-15 of the amplitude). A table of
 * the wrong count of columns is refused by kw_waveform_girf_split(). */
Test(waveform, girf_cross_axis_terms)
{
    enum { N = 80 };
    double g[2 * N], ga[2 * N], gb[2 * N];
    for (size_t i = 0; i < N; i++) {
        const double t = (double)i / (N - 1);
        g[2 * i] = 20e-3 * sin(KW_PI * t) * sin(KW_PI * t);
        g[2 * i + 1] = 10e-3 * sin(2 * KW_PI * t) * sin(KW_PI * t);
    }
    double f[2] = {0, 50e3};
    kw_cdouble hc[8] = {1, 1, 0, 0, 0.1, 0.1, 1, 1}; /* xx, xy, yx, yy (2 rows each) */
    kw_cdouble hd[4] = {1, 1, 1, 1};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centre_s = 0;
    o.girf_freq_hz = f;
    o.girf = hc;
    o.girf_nfreq = 2;
    o.girf_axes = 2;
    o.girf_cross = 1;
    kw_waveform *w = make(g, N, 2, &o);
    cr_assert_eq(kw_waveform_actual(w, ga), KW_OK);
    kw_waveform_destroy(w);
    for (size_t i = 0; i < N; i++) {
        cr_expect(fabs(ga[2 * i] - g[2 * i]) < 1e-12 * 20e-3, "x sample %zu", i);
        cr_expect(fabs(ga[2 * i + 1] - (g[2 * i + 1] + 0.1 * g[2 * i])) < 1e-12 * 20e-3, "y sample %zu: %g vs %g",
                  i, ga[2 * i + 1], g[2 * i + 1] + 0.1 * g[2 * i]);
    }
    hc[4] = hc[5] = 0;
    w = make(g, N, 2, &o);
    cr_assert_eq(kw_waveform_actual(w, ga), KW_OK);
    kw_waveform_destroy(w);
    o.girf = hd;
    o.girf_cross = 0;
    w = make(g, N, 2, &o);
    cr_assert_eq(kw_waveform_actual(w, gb), KW_OK);
    kw_waveform_destroy(w);
    for (size_t i = 0; i < 2 * N; i++)
        cr_expect(fabs(ga[i] - gb[i]) < 1e-15 * 20e-3, "sample %zu: %g vs %g", i / 2, ga[i], gb[i]);
    kw_cfloat table[2 * 6] = {0};
    double *ff = NULL;
    kw_cdouble *hh = NULL;
    cr_expect_eq(kw_waveform_girf_split(table, 2, 5, &ff, &hh), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "girf");
    cr_assert_eq(kw_waveform_girf_split(table, 2, 4, &ff, &hh), KW_OK);
    kw_free(ff);
    kw_free(hh);
}

/* The allocation budget with this version's additions together: two RF
 * centres, a held waveform, a cross-axis GIRF, a delay and a low-pass on
 * it (every refusal frees what the call took). */
Test(waveform, allocation_budget_cascade_and_centres)
{
    const size_t n = 300;
    double *g = calloc(2 * n, sizeof *g);
    trap(g, 2, 0, 10, 20, 50, 45e-3);
    trap(g, 2, 1, 100, 5, 30, -20e-3);
    double f[3] = {0, 1e3, 50e3}, rf[2] = {50e-6, 900e-6};
    kw_cdouble hv[12] = {1, 1, 1, 0, 0.1, 0, 0, 0.1, 0, 1, 1, 1};
    kw_waveform_adc adc = {1e-3, 5e-6, 40};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    o.rf_centres_s = rf;
    o.nrf = 2;
    o.held = 1;
    o.te_s = 1e-3;
    o.adc = &adc;
    o.nadc = 1;
    o.girf_freq_hz = f;
    o.girf = hv;
    o.girf_nfreq = 3;
    o.girf_axes = 2;
    o.girf_cross = 1;
    o.delay_s[1] = 3e-6;
    o.response_tau_s[0] = 20e-6;
    o.response_amp[0] = 1;
    kw_memory_set_limit(0);
    const size_t base = kw_memory_in_use();
    kw_memory_reset_peak();
    cr_assert_eq(budget_run(g, n, &o), KW_OK, "%s", kw_last_error());
    const size_t peak = kw_memory_peak() - base;
    for (size_t lim = 0; lim <= peak + 64; lim += 512) {
        kw_memory_set_limit(base + lim);
        kw_status st = budget_run(g, n, &o);
        cr_expect(st == KW_OK || st == KW_ENOMEM, "limit %zu: status %d", lim, st);
        kw_memory_set_limit(0);
        cr_expect_eq(kw_memory_in_use(), base, "limit %zu: bytes held afterwards", lim);
    }
    free(g);
}
