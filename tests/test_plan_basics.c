/* test_plan_basics.c: the Cartesian numbers of `kweave plan` against
 * CODATA 2018 and worked examples computed by hand. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_protocol.h"

#define REL(a, b, tol)                                                         \
    cr_expect(fabs((a) - (b)) <= (tol) * fabs(b), "%s = %.12g, expected %.12g", #a, \
              (double)(a), (double)(b))

Test(plan_basics, larmor_codata_2018)
{
    /* CODATA 2018 recommended value: gamma_p / 2pi = 42.577 478 518 MHz/T
     * (NIST, physics.nist.gov/cuu, "proton gyromagnetic ratio in MHz/T").
     * 1.5 T -> 63.866 217 777 MHz; 3 T -> 127.732 435 554 MHz. */
    REL(kw_larmor_hz(1.5), 63.866217777e6, 1e-11);
    REL(kw_larmor_hz(3.0), 127.732435554e6, 1e-11);
    /* gamma_p = 2.675 221 8744e8 rad/s/T (CODATA 2018): gamma/2pi must match. */
    REL(KW_GAMMA_P / (2 * KW_PI), KW_GAMMA_BAR_P, 1e-9);
}

Test(plan_basics, polarization_2T_298K_about_7_per_million)
{
    /* Common practice (no source): the proton polarization at 2 T and room
     * temperature is "about 7 parts per million". Worked by hand:
     * gamma hbar B0 = 2.6752218744e8 * 1.054571817e-34 * 2 = 5.64241e-26 J,
     * 2 k T = 2 * 1.380649e-23 * 298 = 8.22867e-21 J, ratio 6.8570e-6;
     * tanh(x) = x to 1e-11 here. */
    double p = kw_polarization(2.0, 298.0);
    REL(p, 6.8570e-6, 2e-4);
    cr_expect(p > 6.5e-6 && p < 7.5e-6);
    /* Linear in B0 and 1/T in this regime. */
    REL(kw_polarization(4.0, 298.0), 2 * p, 1e-9);
    REL(kw_polarization(2.0, 596.0), p / 2, 1e-9);
}

Test(plan_basics, worked_example_256mm_256_250Hz_per_pixel)
{
    /* Worked by hand: FOV 256 mm, 256 x 256, 250 Hz/pixel.
     *   bandwidth across the FOV = 250 * 256 = 64 000 Hz
     *   dwell = 1 / 64 000 Hz = 15.625 us; readout = 256 * 15.625 us = 4 ms
     *   pixel = 1 mm; delta-k = 1 / 0.256 m = 3.90625 /m; k-max = 256 / (2 * 0.256) = 500 /m
     *   readout gradient G = BW / (gamma-bar * FOV) = 64 000 / (42.577478518e6 * 0.256)
     *                      = 64 000 / 10 899 834.5 = 5.871649e-3 T/m (5.87 mT/m). */
    kw_protocol p;
    kw_protocol_defaults(&p);
    p.bandwidth_hz = 250.0 * 256;
    kw_plan_basic b;
    cr_assert_eq(kw_plan_basics(&p, &b), KW_OK, "%s", kw_last_error());
    REL(b.bandwidth_hz, 64000.0, 1e-15);
    REL(b.dwell_s, 15.625e-6, 1e-12);
    REL(b.readout_duration_s, 4e-3, 1e-12);
    REL(b.bandwidth_per_pixel_hz, 250.0, 1e-15);
    REL(b.pixel_size_m[0], 1e-3, 1e-12);
    REL(b.delta_k_per_m[1], 3.90625, 1e-12);
    REL(b.k_max_per_m[0], 500.0, 1e-12);
    REL(b.readout_gradient_T_per_m, 5.871649e-3, 1e-6);
    cr_expect(b.readout_fits);
}

Test(plan_basics, worked_example_anisotropic_and_infeasible)
{
    /* FOV 200 x 150 mm, 320 x 240, 32 kHz across the FOV:
     *   dwell = 31.25 us, readout = 320 * 31.25 us = 10 ms, 100 Hz/pixel,
     *   pixel 0.625 mm both ways, k-max = 320 / 0.4 = 800 /m,
     *   G = 32 000 / (42.577478518e6 * 0.2) = 3.757855e-3 T/m.
     * With gmax = 3 mT/m the readout no longer fits. */
    kw_protocol p;
    kw_protocol_defaults(&p);
    p.fov_m[0] = 0.2;
    p.fov_m[1] = 0.15;
    p.matrix[0] = 320;
    p.matrix[1] = 240;
    p.bandwidth_hz = 32000;
    p.gmax_T_per_m = 3e-3;
    kw_plan_basic b;
    cr_assert_eq(kw_plan_basics(&p, &b), KW_OK, "%s", kw_last_error());
    REL(b.dwell_s, 31.25e-6, 1e-12);
    REL(b.readout_duration_s, 10e-3, 1e-12);
    REL(b.bandwidth_per_pixel_hz, 100.0, 1e-12);
    REL(b.pixel_size_m[1], 0.625e-3, 1e-12);
    REL(b.k_max_per_m[0], 800.0, 1e-12);
    REL(b.k_max_per_m[1], 800.0, 1e-12);
    REL(b.readout_gradient_T_per_m, 3.757855e-3, 1e-6);
    cr_expect(!b.readout_fits);
}

Test(plan_basics, bad_protocols_name_the_field)
{
    kw_protocol p;
    kw_plan_basic b;
    kw_protocol_defaults(&p);
    p.fov_m[0] = 0;
    cr_expect_eq(kw_plan_basics(&p, &b), KW_EINVAL);
    cr_expect(strncmp(kw_last_error(), "fov:", 4) == 0, "%s", kw_last_error());
    kw_protocol_defaults(&p);
    p.matrix[1] = -3;
    cr_expect_eq(kw_plan_basics(&p, &b), KW_EINVAL);
    cr_expect(strncmp(kw_last_error(), "matrix:", 7) == 0, "%s", kw_last_error());
    kw_protocol_defaults(&p);
    p.bandwidth_hz = NAN;
    cr_expect_eq(kw_plan_basics(&p, &b), KW_EINVAL);
    cr_expect(strncmp(kw_last_error(), "bandwidth:", 10) == 0, "%s", kw_last_error());
    kw_protocol_defaults(&p);
    p.temperature_k = -1;
    cr_expect_eq(kw_plan_basics(&p, &b), KW_EINVAL);
    cr_expect(strncmp(kw_last_error(), "temperature:", 12) == 0, "%s", kw_last_error());
    kw_protocol_defaults(&p);
    p.gmax_T_per_m = 0;
    cr_expect_eq(kw_plan_basics(&p, &b), KW_EINVAL);
    cr_expect(strncmp(kw_last_error(), "gmax:", 5) == 0, "%s", kw_last_error());
}
