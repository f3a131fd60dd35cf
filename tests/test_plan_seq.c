/* test_plan_seq.c: the planner's sequences, limits and nearest feasible
 * protocol against cases worked by hand in the comments. Formulas as in the
 * Handbook of MRI Pulse Sequences (Bernstein, King & Zhou 2004), recalled
 * from memory: readout G = BW / (gamma-bar FOV), slice-select
 * G = (TBW / T_rf) / (gamma-bar slice), trapezoid A/G + G/S, triangle
 * 2 sqrt(A/S), spin echo TE = 2 max(90-to-180, 180-to-echo). */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_sequence.h"

#define REL(a, b, tol)                                                          \
    cr_expect(fabs((a) - (b)) <= (tol) * fabs(b), "%s = %.12g, expected %.12g", #a, \
              (double)(a), (double)(b))

/* 3 T, 40 mT/m, 200 T/m/s, 10 us raster, FOV 256 mm, 256 x 256, 64 kHz,
 * 2 ms pulse of TBW 4, 5 mm slice, no spoiler. */
static kw_protocol base(kw_sequence_kind s)
{
    kw_protocol p;
    kw_protocol_defaults(&p);
    p.sequence = s;
    p.slew_T_per_m_per_s = 200;
    p.bandwidth_hz = 64000;
    return p;
}

static kw_plan_report *plan(const kw_protocol *p)
{
    kw_plan_report *r = NULL;
    cr_assert_eq(kw_plan_create(&r, p), KW_OK, "%s", kw_last_error());
    return r;
}

static const kw_limit *limit(const kw_plan_report *r, const char *name)
{
    for (int i = 0; i < r->nlimits; i++)
        if (strcmp(r->limits[i].name, name) == 0)
            return &r->limits[i];
    return NULL;
}

Test(plan_seq, gre_hand_worked)
{
    /* readout G = 64000 / (42.577478518e6 * 0.256) = 5.871649 mT/m, ramp 29.4 us -> 30 us,
     *   flat 4 ms;
     * slice select G = (4 / 2 ms) / (42.577478518e6 * 0.005) = 9.394642 mT/m, ramp 47 us -> 50 us,
     *   lobe 2.1 ms, pulse centre c = 1.05 ms;
     * rephaser area 9.394642e-3 (1 ms + 25 us) = 9.6295e-6 T s/m > G^2/S = 8e-6: trapezoid
     *   A/G + G/S = 240.7 + 200 us -> 450 us;
     * prephaser area 5.871649e-3 (30 us + 4 ms) / 2 = 1.18314e-5: 295.8 + 200 us -> 500 us;
     * phase encode area (256/2) / (gamma-bar 0.256) = 1.17433e-5: 293.6 + 200 us -> 500 us;
     * min TE = 2.1 + 0.5 + 0.03 + 2.0 - 1.05 = 3.58 ms;
     * min TR = 2.1 + 0.5 + (0.03 + 4 + 0.03) + 0.5 (phase rewinder) = 7.16 ms. */
    kw_protocol p = base(KW_SEQ_GRE);
    kw_plan_report *r = plan(&p);
    REL(r->basic.readout_gradient_T_per_m, 5.871649e-3, 1e-6);
    REL(r->slice_gradient_T_per_m, 9.394642e-3, 1e-6);
    REL(r->slice_select.ramp_s, 50e-6, 1e-9);
    REL(kw_trapezoid_duration(&r->slice_rephaser), 450e-6, 1e-9);
    REL(kw_trapezoid_area(&r->slice_rephaser), -9.6295e-6, 1e-4);
    REL(kw_trapezoid_duration(&r->prephaser), 500e-6, 1e-9);
    REL(kw_trapezoid_area(&r->prephaser), -1.18314e-5, 1e-4);
    REL(kw_trapezoid_duration(&r->phase_encode), 500e-6, 1e-9);
    REL(fabs(kw_trapezoid_area(&r->phase_encode)), 128 / (KW_GAMMA_BAR_P * 0.256), 1e-9);
    REL(r->min_te_s, 3.58e-3, 1e-9);
    REL(r->min_tr_s, 7.16e-3, 1e-9);
    cr_expect(r->feasible);
    /* fat-water at 3 T: 3.4 ppm of 127.732 MHz = 434.3 Hz -> 434.3 / 250 = 1.737 pixels */
    REL(r->chemical_shift_pixels, 3.4e-6 * 127.732435554e6 / 250, 1e-9);
    REL(r->chemical_shift_mm, r->chemical_shift_pixels * 1.0, 1e-9);
    kw_plan_destroy(r);
}

Test(plan_seq, se_hand_worked)
{
    /* As gre_hand_worked, spin echo with 2-cycle crushers:
     * crusher area 2 / (gamma-bar 0.005) = 9.3946e-6 > 8e-6: 234.9 + 200 us -> 440 us;
     * 90-to-180 = (1 + 0.05) + 0.5 + 0.44 + (0.05 + 1) = 3.04 ms,
     * 180-to-echo = 1.05 + 0.44 + 0.03 + 2.0 = 3.52 ms: min TE = 2 * 3.52 = 7.04 ms;
     * min TR = 1.05 + 7.04 + 2.0 + 0.03 + 0.5 = 10.62 ms. */
    kw_protocol p = base(KW_SEQ_SE);
    kw_plan_report *r = plan(&p);
    REL(kw_trapezoid_duration(&r->crusher), 440e-6, 1e-9);
    REL(r->min_te_s, 7.04e-3, 1e-9);
    REL(r->min_tr_s, 10.62e-3, 1e-9);
    /* the prephaser has the readout's sign (the 180 inverts it) */
    cr_expect(r->prephaser.amplitude_T_per_m > 0);
    kw_plan_destroy(r);
}

Test(plan_seq, epi_hand_worked)
{
    /* FOV 240 mm, 64 x 64, 250 kHz (dwell 4 us): echo spacing 520 us, ky = 0
     * echo 16.9 ms into the train (test_gradient.c epi_hand_worked);
     * prephaser area 24.465e-3 (130 + 260 us) / 2 = 4.7707e-6: triangle 2 sqrt(A/S) = 308.9 -> 310 us,
     * phase prephaser 32 / (gamma-bar 0.24) = 3.1316e-6: triangle 250.3 -> 260 us,
     * slice rephaser 450 us: prep 450 us; effective TE = 2.1 + 0.45 + 16.9 - 1.05 = 18.4 ms;
     * distortion = ny x echo spacing = 64 * 520 us = 0.03328 pixels/Hz;
     * fat-water along phase: 434.29 Hz * 0.03328 = 14.45 pixels. */
    kw_protocol p = base(KW_SEQ_EPI);
    p.fov_m[0] = p.fov_m[1] = 0.24;
    p.matrix[0] = p.matrix[1] = 64;
    p.bandwidth_hz = 250000;
    kw_plan_report *r = plan(&p);
    REL(r->echo_spacing_s, 520e-6, 1e-9);
    cr_expect_eq(r->echo_train_length, 64);
    REL(r->min_te_s, 18.4e-3, 1e-9);
    REL(r->distortion_pixels_per_hz, 0.03328, 1e-9);
    REL(r->chemical_shift_phase_pixels, 14.45, 1e-3);
    /* multi-shot divides the distortion by the shots */
    p.shots = 4;
    kw_plan_report *r4 = plan(&p);
    REL(r4->distortion_pixels_per_hz, 64 * r4->echo_spacing_s / 4, 1e-12);
    cr_expect_eq(r4->echo_train_length, 16);
    kw_plan_destroy(r4);
    kw_plan_destroy(r);
}

Test(plan_seq, radial_spokes_nyquist)
{
    /* Nyquist for full spokes: N_spokes = pi/2 x N (Bernstein et al. 2004,
     * radial chapter; recalled from memory): N = 256 -> ceil(402.12) = 403. */
    kw_protocol p = base(KW_SEQ_RADIAL);
    kw_plan_report *r = plan(&p);
    cr_expect_eq(r->spokes_nyquist, 403);
    cr_expect_eq(r->spokes, 403);
    REL(r->total_sampling_time_s, 403 * 4e-3, 1e-12);
    kw_plan_destroy(r);
}

Test(plan_seq, spiral_interleaves)
{
    /* 240 mm, 128, 250 kHz: the fewest interleaves with a readout <= 10 ms,
     * designed under the limits; one fewer does not fit. */
    kw_protocol p = base(KW_SEQ_SPIRAL);
    p.fov_m[0] = p.fov_m[1] = 0.24;
    p.matrix[0] = p.matrix[1] = 128;
    p.bandwidth_hz = 250000;
    p.max_readout_s = 10e-3;
    kw_plan_report *r = plan(&p);
    cr_expect(r->feasible);
    cr_expect(r->readout_per_interleave_s <= 10e-3);
    kw_spiral_spec sp = {0.24, 128, r->interleaves - 1, 4e-6};
    kw_gradient_limits lim = kw_plan_limits(&p);
    kw_spiral_info inf;
    cr_assert_eq(kw_spiral_size(&sp, &lim, &inf), KW_OK);
    cr_expect(inf.readout_s > 10e-3, "%d interleaves already fit", r->interleaves - 1);
    /* amplitude-limited estimate nint ~ pi N^2 / (4 gamma-bar G FOV T) with G = 40 mT/m:
     * pi 16384 / (4 * 42.577e6 * 0.04 * 0.24 * 0.01) = 3.15: slew adds a little */
    cr_expect(r->interleaves >= 4 && r->interleaves <= 6, "%d", r->interleaves);
    /* spiral TE: from the pulse centre to the spiral start (k = 0) */
    REL(r->min_te_s, 1.05e-3 + kw_trapezoid_duration(&r->slice_rephaser), 1e-9);
    cr_expect(isnan(r->chemical_shift_pixels));
    /* explicit interleaves over the longest readout: infeasible, nearest count offered */
    p.interleaves = 1;
    kw_plan_report *r1 = plan(&p);
    cr_expect(!r1->feasible);
    cr_expect(r1->nearest.has_interleaves);
    cr_expect_eq(r1->nearest.interleaves, r->interleaves);
    kw_plan_destroy(r1);
    kw_plan_destroy(r);
}

Test(plan_seq, fat_water_common_practice)
{
    /* common practice, no source: about 220 Hz at 1.5 T and 440 Hz at 3 T */
    kw_protocol p = base(KW_SEQ_GRE);
    p.b0_t = 1.5;
    kw_plan_report *r = plan(&p);
    cr_expect(fabs(r->fat_water_hz - 220) < 0.03 * 220, "%g", r->fat_water_hz);
    kw_plan_destroy(r);
    p.b0_t = 3;
    r = plan(&p);
    cr_expect(fabs(r->fat_water_hz - 440) < 0.03 * 440, "%g", r->fat_water_hz);
    kw_plan_destroy(r);
}

Test(plan_seq, every_lobe_within_limits_and_areas)
{
    for (int s = KW_SEQ_GRE; s <= KW_SEQ_SPIRAL; s++)
        for (int d = 2; d <= 3; d++) {
            kw_protocol p = base((kw_sequence_kind)s);
            p.bandwidth_hz = 128000;
            p.spoiler_cycles = 4;
            if (d == 3) {
                p.ndim = 3;
                p.matrix[2] = 32;
                p.fov_m[2] = 0.064;
            }
            p.matrix[0] = p.matrix[1] = 128;
            kw_plan_report *r = plan(&p);
            cr_expect(r->feasible, "sequence %d, %d-D", s, d);
            for (int i = 0; i < r->nevents; i++) {
                const kw_event *e = &r->events[i];
                if (e->kind != KW_EV_LOBE)
                    continue;
                double a = fabs(e->lobe.amplitude_T_per_m);
                cr_expect(a <= p.gmax_T_per_m * (1 + 1e-9), "%s: %g", e->label, a);
                cr_expect(a / e->lobe.ramp_s <= p.slew_T_per_m_per_s * (1 + 1e-9), "%s", e->label);
                double n = kw_trapezoid_duration(&e->lobe) / p.raster_s;
                cr_expect(fabs(n - round(n)) < 1e-6, "%s off the raster", e->label);
            }
            /* areas: rephaser = -(half flat + ramp) of the slice select (- partition) */
            const kw_trapezoid *ss = &r->slice_select;
            double kz = d == 3 ? 16 / (KW_GAMMA_BAR_P * 0.064) : 0;
            REL(kw_trapezoid_area(&r->slice_rephaser),
                -ss->amplitude_T_per_m * (ss->flat_s + ss->ramp_s) / 2 - kz, 1e-6);
            REL(kw_trapezoid_area(&r->spoiler), 4 / (KW_GAMMA_BAR_P * r->slice_m) + kz, 1e-6);
            kw_plan_destroy(r);
        }
}

Test(plan_seq, thin_slice_infeasible_nearest)
{
    /* 0.5 mm with a 2 ms TBW-4 pulse needs 93.9 mT/m > 40 mT/m.
     * Thinnest slice: TBW / (T_rf gamma-bar gmax) = 4 / (2e-3 * 42.577478518e6 * 0.04)
     *   = 1.17433 mm -> 1.175 mm (rounded up to 1 um);
     * or shortest pulse for 0.5 mm: 4 / (gamma-bar 0.04 0.0005) = 4.6973 ms -> 4.70 ms. */
    kw_protocol p = base(KW_SEQ_GRE);
    p.slice_m = 0.5e-3;
    kw_plan_report *r = plan(&p);
    cr_expect(!r->feasible);
    const kw_limit *l = limit(r, "slice_select_gradient");
    cr_assert(l && !l->ok);
    REL(l->required, 93.94642e-3, 1e-6);
    cr_assert(r->nearest.has_slice);
    REL(r->nearest.slice_m, 1.175e-3, 1e-9);
    REL(r->nearest.rf_duration_s, 4.70e-3, 1e-9);
    cr_expect(r->nearest.has_combined);
    /* the nearest slice is feasible, 1 um thinner is not */
    p.slice_m = r->nearest.slice_m;
    kw_plan_report *ok = plan(&p);
    cr_expect(ok->feasible);
    p.slice_m -= 1e-6;
    kw_plan_report *no = plan(&p);
    cr_expect(!no->feasible);
    kw_plan_destroy(ok), kw_plan_destroy(no), kw_plan_destroy(r);
}

Test(plan_seq, readout_over_gmax_nearest)
{
    /* FOV 50 mm, 128, 32 kHz, gmax 10 mT/m: G = 32000 / (gamma-bar 0.05) = 15.03 mT/m.
     * Largest bandwidth: floor(gamma-bar 0.01 0.05) = floor(21288.74) = 21288 Hz;
     * at 250 Hz/pixel held: largest matrix floor(0.05 gamma-bar 0.01 / 250) = floor(85.15) = 85. */
    kw_protocol p = base(KW_SEQ_GRE);
    p.fov_m[0] = p.fov_m[1] = 0.05;
    p.matrix[0] = p.matrix[1] = 128;
    p.bandwidth_hz = 32000;
    p.gmax_T_per_m = 0.010;
    p.slice_m = 0.01;
    kw_plan_report *r = plan(&p);
    cr_expect(!r->feasible);
    cr_assert(r->nearest.has_bandwidth && r->nearest.has_matrix);
    REL(r->nearest.bandwidth_hz, 21288.0, 1e-12);
    cr_expect_eq(r->nearest.matrix_x, 85);
    /* the nearest bandwidth passes the readout limit, 1 Hz more does not */
    p.bandwidth_hz = 21288;
    kw_plan_report *ok = plan(&p);
    cr_expect(limit(ok, "readout_gradient")->ok);
    p.bandwidth_hz = 21290;
    kw_plan_report *no = plan(&p);
    cr_expect(!limit(no, "readout_gradient")->ok);
    kw_plan_destroy(ok), kw_plan_destroy(no), kw_plan_destroy(r);
}

Test(plan_seq, te_tr_too_short)
{
    /* GRE of gre_hand_worked: min TE 3.58 ms. TE 2 ms fails by 1.58 ms; with
     * TE 5 ms the min TR is 7.16 + 1.42 = 8.58 ms, so TR 8 ms fails too. */
    kw_protocol p = base(KW_SEQ_GRE);
    p.te_s = 2e-3;
    kw_plan_report *r = plan(&p);
    cr_expect(!r->feasible);
    const kw_limit *l = limit(r, "te");
    cr_assert(l && !l->ok);
    REL(l->required - l->available, 1.58e-3, 1e-9);
    cr_expect(r->nearest.has_te);
    REL(r->nearest.te_s, 3.58e-3, 1e-9);
    kw_plan_destroy(r);
    p.te_s = 5e-3;
    p.tr_s = 8e-3;
    r = plan(&p);
    REL(r->min_tr_s, 8.58e-3, 1e-9);
    cr_expect(!limit(r, "tr")->ok);
    REL(r->nearest.tr_s, 8.58e-3, 1e-9);
    cr_expect(r->nearest.has_combined);
    REL(r->nearest.combined.tr_s, 8.58e-3, 1e-9);
    kw_plan_destroy(r);
}

Test(plan_seq, relative_snr_proportionality)
{
    /* the usual proportionality SNR ~ voxel volume x sqrt(total sampling time)
     * (recalled from memory; e.g. Haacke et al. 1999): twice the slice doubles
     * it; half the bandwidth (twice the sampling time) gives sqrt(2). */
    kw_protocol p = base(KW_SEQ_GRE);
    kw_plan_report *a = plan(&p);
    p.slice_m = 10e-3;
    kw_plan_report *b = plan(&p);
    p.slice_m = 5e-3;
    p.bandwidth_hz = 32000;
    kw_plan_report *c = plan(&p);
    REL(b->snr_factor / a->snr_factor, 2.0, 1e-12);
    REL(c->snr_factor / a->snr_factor, sqrt(2.0), 1e-12);
    REL(a->total_sampling_time_s, 256 * 4e-3, 1e-12);
    kw_plan_destroy(a), kw_plan_destroy(b), kw_plan_destroy(c);
}

Test(plan_seq, t2star_ratio)
{
    kw_protocol p = base(KW_SEQ_GRE);
    p.t2star_s = 40e-3;
    kw_plan_report *r = plan(&p);
    REL(r->readout_to_t2star, 4e-3 / 40e-3, 1e-12);
    kw_plan_destroy(r);
    p.t2star_s = 0;
    r = plan(&p);
    cr_expect(isnan(r->readout_to_t2star));
    kw_plan_destroy(r);
}

Test(plan_seq, bad_protocols)
{
    kw_plan_report *r = NULL;
    kw_protocol p = base(KW_SEQ_EPI);
    p.shots = 3; /* does not divide 256 */
    cr_expect_eq(kw_plan_create(&r, &p), KW_EINVAL);
    cr_expect(strncmp(kw_last_error(), "shots:", 6) == 0, "%s", kw_last_error());
    p = base(KW_SEQ_SPIRAL);
    p.matrix[1] = 128;
    cr_expect_eq(kw_plan_create(&r, &p), KW_EINVAL);
    cr_expect(strncmp(kw_last_error(), "matrix:", 7) == 0, "%s", kw_last_error());
    p = base(KW_SEQ_GRE);
    p.partial_fourier = 0.4;
    cr_expect_eq(kw_plan_create(&r, &p), KW_EINVAL);
    p = base(KW_SEQ_GRE);
    p.slice_m = -1e-3;
    cr_expect_eq(kw_plan_create(&r, &p), KW_EINVAL);
    cr_expect(strncmp(kw_last_error(), "slice:", 6) == 0, "%s", kw_last_error());
    cr_expect_null(r);
    kw_plan_destroy(NULL);
}
