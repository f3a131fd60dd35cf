/* test_coil_tolerance.c: the series order of a ring's coil maps chosen to
 * meet a pointwise tolerance (issue 19). References: the misfit written out
 * by hand on four values; the acquisition's maps against the loops' field
 * evaluated here with kw_coil_ring_sens() (the library's Biot-Savart,
 * checked against the closed forms in tests/ref/test_coil_field.py). */
#include <complex.h>
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_acquire.h"
#include "kw_coils.h"

/* map (1, 2, 0.05, 10), fit (1.01, 2.1, 0.5, 10): the peak is 10, the 10%
 * floor 1 leaves out 0.05; misfits 0.01, 0.05, 0 -> 0.05. Without the
 * second voxel (weight 0): 0.01. Floor 0: the third voxel's |0.45| / 0.05 = 9. */
Test(coil_tolerance, fit_error_by_hand)
{
    const kw_cfloat map[4] = {1, 2, 0.05f, 10}, fit[4] = {1.01f, 2.1f, 0.5f, 10};
    const size_t dims[3] = {1, 1, 4};
    const float w[4] = {1, 0, 1, 1};
    double e = -1;
    cr_assert_eq(kw_coil_fit_error(map, fit, dims, NULL, 0.1, &e), KW_OK);
    cr_expect(fabs(e - 0.05) < 1e-6, "%g", e);
    cr_assert_eq(kw_coil_fit_error(map, fit, dims, w, 0.1, &e), KW_OK);
    cr_expect(fabs(e - 0.01) < 1e-6, "%g", e);
    cr_assert_eq(kw_coil_fit_error(map, fit, dims, NULL, 0.0, &e), KW_OK);
    cr_expect(fabs(e - 9.0) < 1e-5, "%g", e);
    cr_expect_eq(kw_coil_fit_error(map, fit, dims, NULL, 1.0, &e), KW_EINVAL);
}

static void opts(kw_acquisition_options *o, int coils)
{
    kw_acquisition_options_init(o);
    o->phantom = "weave";
    o->dims[2] = 96;
    o->fov_m[2] = 0.24;
    o->coils = coils;
}

/* The largest misfit of the maps `execute` returns against the ring's field
 * (kw_coil_ring_sens, the acquisition's default geometry: radius FOV/4,
 * distance 0.75 FOV) over the truth's support where the coil is >= 10% of
 * its peak there. */
static double misfit(kw_acquisition *a, int coils, int n)
{
    const size_t np = (size_t)n * n;
    kw_cfloat *ks = malloc(kw_acquisition_kspace_count(a) * sizeof *ks);
    kw_cfloat *maps = malloc(kw_acquisition_maps_count(a) * sizeof *maps);
    float *truth = malloc(kw_acquisition_truth_count(a) * sizeof *truth);
    kw_cdouble *ref = malloc(np * coils * sizeof *ref);
    cr_assert(ks && maps && truth && ref);
    cr_assert_eq(kw_acquisition_execute(a, ks, truth, maps, NULL, NULL), KW_OK);
    kw_coil_ring ring = {coils, 0.06, 0.18, {0.24, 0.24}, 1, 0.0, 0.0};
    for (int r = 0; r < n; r++)
        for (int c = 0; c < n; c++) {
            kw_cdouble v[16];
            cr_assert_eq(kw_coil_ring_sens(&ring, (c - n / 2) * 2.0 / n, (n / 2 - r) * 2.0 / n, v),
                         KW_OK);
            for (int k = 0; k < coils; k++)
                ref[(size_t)k * np + r * n + c] = v[k];
        }
    double worst = 0;
    for (int k = 0; k < coils; k++) {
        double peak = 0;
        for (size_t p = 0; p < np; p++)
            if (truth[p] != 0 && cabs(ref[k * np + p]) > peak)
                peak = cabs(ref[k * np + p]);
        for (size_t p = 0; p < np; p++) {
            double m = cabs(ref[k * np + p]);
            if (truth[p] != 0 && m >= 0.1 * peak) {
                double e = cabs((kw_cdouble)maps[k * np + p] - ref[k * np + p]) / m;
                worst = e > worst ? e : worst;
            }
        }
    }
    free(ks);
    free(maps);
    free(truth);
    free(ref);
    return worst;
}

/* Default: 1% in 2-D. Order 4 misses it (about 1.4% near the coils), the
 * order found meets it, and the recorded misfit is the one measured here
 * against the loops' field. */
Test(coil_tolerance, default_meets_one_percent)
{
    kw_acquisition_options o;
    opts(&o, 8);
    kw_acquisition *a = NULL;
    cr_assert_eq(kw_acquisition_create(&a, &o), KW_OK, "%s", kw_last_error());
    const kw_acquisition_info *in = kw_acquisition_info_get(a);
    cr_expect_gt(in->coil_order, 4);
    cr_expect_eq(in->coil_tolerance, 0.01);
    double rec = 0;
    for (int c = 0; c < 8; c++) {
        cr_expect_leq(in->fit_max_error[c], 0.01);
        rec = in->fit_max_error[c] > rec ? in->fit_max_error[c] : rec;
    }
    double got = misfit(a, 8, 96);
    cr_expect_leq(got, 0.01, "misfit %g against the loops' field", got);
    cr_expect(fabs(got - rec) < 0.02 * rec + 1e-5, "measured %g, recorded %g", got, rec);
    kw_acquisition_destroy(a);

    o.coil_tolerance = 0; /* no check: the default order 4 */
    cr_assert_eq(kw_acquisition_create(&a, &o), KW_OK, "%s", kw_last_error());
    in = kw_acquisition_info_get(a);
    cr_expect_eq(in->coil_order, 4);
    cr_expect_eq(in->coil_tolerance, 0);
    got = misfit(a, 8, 96);
    cr_expect_gt(got, 0.01, "order 4: %g", got);
    kw_acquisition_destroy(a);

    o.coil_tolerance = -1;
    o.coil_order = 3; /* an order given is kept, its misfit reported */
    cr_assert_eq(kw_acquisition_create(&a, &o), KW_OK, "%s", kw_last_error());
    in = kw_acquisition_info_get(a);
    cr_expect_eq(in->coil_order, 3);
    cr_expect_eq(in->coil_tolerance, 0);
    cr_expect_gt(in->fit_max_error[0], 0.01);
    kw_acquisition_destroy(a);
}

/* A tolerance no order up to 8 meets is refused, naming the field; so is
 * one outside [0, 1). */
Test(coil_tolerance, refused)
{
    kw_acquisition_options o;
    opts(&o, 4);
    o.coil_tolerance = 1e-7;
    kw_acquisition *a = NULL;
    cr_expect_eq(kw_acquisition_create(&a, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "coil_tolerance");
    cr_expect(strstr(kw_last_error(), "order 8") != NULL, "%s", kw_last_error());
    cr_expect(a == NULL);
    o.coil_tolerance = 1.5;
    cr_expect_eq(kw_acquisition_create(&a, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "coil_tolerance");
    o.coil_tolerance = NAN;
    cr_expect_eq(kw_acquisition_create(&a, &o), KW_EINVAL);
}
