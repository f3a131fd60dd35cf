/* test_sim_signal.c: signal equations and the tissue table against worked
 * values computed by hand (the arithmetic is written out beside each). */
#include <criterion/criterion.h>
#include <math.h>

#include "kw_phantom.h"
#include "kw_simulate.h"
#include "kw_tissue.h"

/* Ernst angle: alpha_E = arccos(exp(-TR/T1)) (Ernst & Anderson 1966).
 * TR = 100 ms, T1 = 1000 ms: E1 = exp(-0.1) = 0.904837418;
 * arccos(0.904837418) = 25.1986 degrees. At the Ernst angle the spoiled
 * gradient-echo signal is sqrt((1 - E1)/(1 + E1)) = sqrt(0.095162582 /
 * 1.904837418) = sqrt(0.0499584) = 0.2235137 (pd = 1). */
Test(signal, ernst_angle_and_peak)
{
    double a = kw_ernst_angle(0.1, 1.0);
    cr_expect(fabs(a * 180 / KW_PI - 25.1986) < 1e-4, "ernst %g", a * 180 / KW_PI);
    kw_contrast c = {KW_CONTRAST_GRE, 3.0, 0.005, 0.1, 0, a};
    double s = kw_signal_steady(&c, 1.0, 1.0);
    cr_expect(fabs(s - 0.2235137) < 1e-6, "S(ernst) %g", s);
    /* and it is the maximum over the flip angle */
    for (double d = -0.05; d <= 0.05; d += 0.1) {
        c.flip_rad = a + d;
        cr_expect(kw_signal_steady(&c, 1.0, 1.0) < s);
    }
    /* 90 degrees: pd (1 - E1) = 0.095162582 */
    c.flip_rad = KW_PI / 2;
    cr_expect(fabs(kw_signal_steady(&c, 1.0, 1.0) - 0.095162582) < 1e-9);
}

/* Spin echo with the refocusing pulse (Bernstein, King & Zhou, Handbook of
 * MRI Pulse Sequences, 2004): pd (1 - 2 exp(-(TR - TE/2)/T1) + exp(-TR/T1))
 * exp(-TE/T2). T1 = 1 s, TR = 2 s, T2 = TE = 0.1 s: e^-1.95 = 0.1422741,
 * e^-2 = 0.1353353, 1 - 0.2845481 + 0.1353353 = 0.8507871; x e^-1
 * (0.3678794) = 0.3129871 (the TE << TR form gave 0.3180924). */
Test(signal, spin_echo)
{
    kw_contrast c = {KW_CONTRAST_SE, 3.0, 0.1, 2.0, 0, 0};
    double s = kw_signal_steady(&c, 1.0, 1.0) * kw_signal_decay(&c, 0.1, 0.05, 0.1);
    cr_expect(fabs(s - 0.3129871) < 1e-6, "SE %g", s);
    /* away from the echo the reversible part decays with 1/T2' = 1/T2* - 1/T2:
     * at t = TE + 10 ms, T2* = 50 ms, T2 = 100 ms: exp(-0.11/0.1) exp(-0.01 x 10)
     * = 0.332871 x 0.904837 = 0.301194 */
    cr_expect(fabs(kw_signal_decay(&c, 0.1, 0.05, 0.11) - 0.301194) < 1e-6);
    cr_expect(fabs(kw_signal_phase_time(&c, 0.11) - 0.01) < 1e-15);
}

/* The case of issue 19: CSF at 1.5 T (T1 = 4.0 s, kweave's table), TR
 * 2500 ms, TE 90 ms. Full form (Bernstein et al. 2004): e^-(2.455/4) =
 * 0.5413171, e^-(2.5/4) = 0.5352614, 1 - 1.0826342 + 0.5352614 = 0.4526272;
 * the TE << TR form 1 - 0.5352614 = 0.4647386 is 2.6% above it. */
Test(signal, spin_echo_csf_full_form)
{
    kw_contrast c = {KW_CONTRAST_SE, 1.5, 0.09, 2.5, 0, 0};
    double t1, t2, t2s;
    cr_assert_eq(kw_tissue_relax(KW_TISSUE_CSF, 1.5, &t1, &t2, &t2s), KW_OK);
    double s = kw_signal_steady(&c, 1.0, t1);
    cr_expect(fabs(s - 0.4526272) < 1e-6, "SE CSF %g", s);
    cr_expect(fabs(0.4647386 / s - 1 - 0.02676) < 1e-4, "short form off by %g", 0.4647386 / s - 1);
}

/* Inversion recovery with a spin-echo readout (the same handbook; derived in
 * tissue.c): pd (1 - 2 exp(-TI/T1) + 2 exp(-(TR - TE/2)/T1) - exp(-TR/T1)).
 * With TR >> T1 the null is at TI = T1 ln 2 (1 - 2 x 1/2 = 0); at TI = 0
 * (T1 = 1 s, TR = 2 s, TE = 10 ms): -1 + 2 e^-1.995 - e^-2 = -1 + 0.2720273
 * - 0.1353353 = -0.8633080. */
Test(signal, inversion_recovery)
{
    kw_contrast c = {KW_CONTRAST_IR, 3.0, 0.01, 100.0, log(2.0), 0};
    cr_expect(fabs(kw_signal_steady(&c, 1.0, 1.0)) < 1e-12);
    c.tr_s = 2.0;
    c.ti_s = 0.0;
    cr_expect(fabs(kw_signal_steady(&c, 1.0, 1.0) + 0.8633080) < 1e-6);
}

/* Gradient echo decays with T2* from the excitation: exp(-t/T2*);
 * t = 20 ms, T2* = 40 ms: e^-0.5 = 0.606531. */
Test(signal, gre_decay)
{
    kw_contrast c = {KW_CONTRAST_GRE, 3.0, 0.02, 0.1, 0, 0.3};
    cr_expect(fabs(kw_signal_decay(&c, 0.08, 0.04, 0.02) - 0.6065307) < 1e-6);
    cr_expect(fabs(kw_signal_phase_time(&c, 0.02) - 0.02) < 1e-15);
}

/* Tissue table: Stanisz et al. 2005 Table 1 values (recalled from memory);
 * the field strength must be one of the tabulated ones. */
Test(tissue, table_and_fields)
{
    double t1, t2, t2s;
    cr_assert_eq(kw_tissue_relax(KW_TISSUE_WHITE_MATTER, 3.0, &t1, &t2, &t2s), KW_OK);
    cr_expect(fabs(t1 - 1.084) < 1e-12 && fabs(t2 - 0.069) < 1e-12);
    cr_assert_eq(kw_tissue_relax(KW_TISSUE_GREY_MATTER, 1.5, &t1, &t2, &t2s), KW_OK);
    cr_expect(fabs(t1 - 1.124) < 1e-12 && fabs(t2 - 0.095) < 1e-12);
    cr_expect_eq(kw_tissue_relax(KW_TISSUE_MUSCLE, 2.0, &t1, &t2, &t2s), KW_ERANGE);
    for (int i = 0; i < KW_TISSUE_COUNT; i++) {
        const kw_tissue *t = kw_tissue_get(i);
        for (int f = 0; f < 2; f++) {
            cr_expect(t->t2s[f] < t->t2[f], "%s: T2* must be below T2", t->name);
            cr_expect(t->t2[f] < t->t1[f], "%s: T2 must be below T1", t->name);
        }
    }
    cr_expect_null(kw_tissue_get(KW_TISSUE_COUNT));
}

/* Fat: -3.4 ppm x 42.577478518 MHz/T x 3 T = -434.290 Hz (by hand:
 * 3.4 x 42.577478518 = 144.76343; x 3 = 434.2903). The simulator gives the
 * fat shape that off-resonance on top of the global one. */
Test(tissue, fat_frequency)
{
    double hz = KW_FAT_SHIFT_PPM * 1e-6 * KW_GAMMA_BAR_P * 3.0;
    cr_expect(fabs(hz + 434.2903) < 1e-3, "fat %g Hz", hz);
    kw_phantom p;
    kw_phantom_make(&p, "weave");
    kw_sim_options o;
    kw_sim_options_init(&o);
    o.phantom = &p;
    o.n[1] = o.n[2] = 8; /* (nz, ny, nx): nz 0 is 1 */
    o.contrast.seq = KW_CONTRAST_GRE;
    o.contrast.b0_t = 3.0;
    o.contrast.te_s = 0.005;
    o.contrast.tr_s = 0.02;
    o.contrast.flip_rad = 0.3;
    kw_sim *s = NULL;
    cr_assert_eq(kw_sim_create(&s, &o), KW_OK);
    double complex own[KW_PHANTOM_MAX_SHAPES];
    /* at t = 1/(434.2903 Hz) / 2 the fat phase is exp(+i pi) (fat is below
     * water: exp(-i 2 pi df t) with df < 0) and the water phase is 0 */
    double t = 0.5 / 434.2903;
    kw_sim_shape_signal(s, t, own);
    int fat = -1;
    for (int i = 0; i < p.nshapes; i++)
        if (p.shapes[i].tissue == KW_TISSUE_FAT)
            fat = i;
    cr_assert(fat >= 0);
    cr_expect(fabs(carg(own[fat]) - KW_PI) < 1e-6 || fabs(carg(own[fat]) + KW_PI) < 1e-6);
    cr_expect(fabs(carg(own[0])) < 1e-12);
    kw_sim_destroy(s);
}

/* kw_sim_options.n is in C order (nz, ny, nx): with n = (1, 6, 10) there are
 * 60 samples per coil, and the readout column ix of a Cartesian sample is
 * timed about nx / 2 = 5: t = TE + (ix - 5) / BW (kw_simulate.h). */
Test(signal, sim_matrix_is_c_order)
{
    kw_phantom p;
    kw_phantom_make(&p, "weave");
    kw_sim_options o;
    kw_sim_options_init(&o);
    o.phantom = &p;
    o.n[0] = 1;
    o.n[1] = 6;
    o.n[2] = 10;
    o.bandwidth_hz = 1000.0;
    o.contrast.b0_t = 3.0;
    o.contrast.te_s = 0.01;
    kw_sim *s = NULL;
    cr_assert_eq(kw_sim_create(&s, &o), KW_OK, "%s", kw_last_error());
    cr_expect_eq(kw_sim_output_count(s), 60);
    cr_expect(fabs(kw_sim_sample_time(&o, 0, 0) - (0.01 - 5e-3)) < 1e-15);
    cr_expect(fabs(kw_sim_sample_time(&o, 0, 5) - 0.01) < 1e-15);
    kw_sim_destroy(s);
    o.n[0] = 0; /* nz 0 is 1 */
    o.n[2] = 0;
    cr_expect_eq(kw_sim_create(&s, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "n");
}
