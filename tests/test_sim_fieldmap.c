/* test_sim_fieldmap.c: the field-map perturbation's options (kw_simulate.h).
 * The perturbation's values are checked against the CLI's outputs in
 * tests/ref/test_encode_offres.py; here the growable options convention
 * (kw_base.h, docs/api.md "The object model"). */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_phantom.h"
#include "kw_simulate.h"

#define N 16

/* Add the perturbation of `fo` to zeroed k-space out[N * N]. */
static kw_status perturb(const kw_fieldmap_options *fo, kw_cfloat *out)
{
    memset(out, 0, N * N * sizeof *out);
    kw_fieldmap *fm = NULL;
    kw_status st = kw_fieldmap_create(&fm, fo);
    if (!st)
        st = kw_fieldmap_execute(fm, out, NULL, NULL);
    kw_fieldmap_destroy(fm);
    return st;
}

/* init fills the documented defaults and struct_size; a struct never
 * initialised is refused naming "options"; an older caller's struct that
 * ends before `nsections` gets the defaults (the simulation's own phantom)
 * for the fields it lacks, whatever the caller's memory holds there. */
Test(fieldmap, options_init_and_older_callers)
{
    kw_fieldmap_options fo;
    memset(&fo, 0xa5, sizeof fo);
    kw_fieldmap_options_init(&fo);
    cr_expect_eq(fo.struct_size, sizeof fo);
    cr_expect_null(fo.sim);
    cr_expect_null(fo.field_hz);
    cr_expect_eq(fo.oversample, 4);
    cr_expect_eq(fo.segments, 0);
    cr_expect_eq(fo.nsections, 0);
    cr_expect_null(fo.sections);
    cr_expect_null(fo.section_weights);

    kw_phantom p;
    cr_assert_eq(kw_phantom_make(&p, "weave"), KW_OK);
    kw_sim_options so;
    kw_sim_options_init(&so);
    so.phantom = &p;
    so.n[1] = so.n[2] = N; /* (nz, ny, nx) */
    so.bandwidth_hz = 32000.0;
    so.contrast.b0_t = 3.0;
    so.contrast.te_s = 0.005;
    kw_sim *sim = NULL;
    cr_assert_eq(kw_sim_create(&sim, &so), KW_OK, "%s", kw_last_error());
    float field[N * N];
    for (int i = 0; i < N * N; i++)
        field[i] = (float)(40.0 * ((i % N) - N / 2) / N + 10.0);
    fo.sim = sim;
    fo.field_hz = field;

    static kw_cfloat ref[N * N], got[N * N];
    kw_fieldmap_options zero = fo;
    zero.struct_size = 0;
    cr_expect_eq(perturb(&zero, got), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");

    cr_assert_eq(perturb(&fo, ref), KW_OK, "%s", kw_last_error());
    double e = 0;
    for (int i = 0; i < N * N; i++)
        e += cabsf(ref[i]);
    cr_expect(e > 0, "the field map perturbs nothing");

    kw_fieldmap_options old = fo;
    old.nsections = 7; /* beyond the older struct: must not be read */
    old.struct_size = offsetof(kw_fieldmap_options, nsections);
    cr_assert_eq(perturb(&old, got), KW_OK, "%s", kw_last_error());
    cr_expect_eq(memcmp(got, ref, sizeof ref), 0);
    kw_sim_destroy(sim);
}
