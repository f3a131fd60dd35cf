/* test_params.c: the named-parameter inputs of patterns and acquisitions
 * (kw_pattern_input in kw_pattern.h, kw_acquisition_input in kw_acquire.h):
 * every key takes its documented forms, bad text is refused naming the key,
 * and setting by text gives the options a caller would set by hand. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_acquire.h"
#include "kw_pattern.h"

static const kw_param_spelling CMD = {"--", '-', " ", NULL};

static kw_pattern_input *pin(const char *const *kv)
{
    kw_pattern_input *in = NULL;
    cr_assert_eq(kw_pattern_input_create(&in), KW_OK);
    for (; kv && kv[0]; kv += 2)
        cr_assert_eq(kw_pattern_input_set(in, kv[0], kv[1]), KW_OK, "%s: %s", kv[0],
                     kw_last_error());
    return in;
}

/* a bad text: refused with the key named, the input unchanged */
static void pattern_refused(const char *key, const char *text, const char *reason)
{
    kw_pattern_input *in = pin(NULL);
    cr_expect_neq(kw_pattern_input_set(in, key, text), KW_OK, "%s '%s'", key, text);
    cr_expect_str_eq(kw_last_error_param(), key);
    if (reason)
        cr_expect(strstr(kw_last_error_reason(), reason), "%s", kw_last_error());
    cr_expect_eq(kw_pattern_input_given(in, key), 0);
    kw_pattern_input_destroy(in);
}

Test(params, pattern_keys_listed)
{
    const kw_param_key *k = kw_pattern_input_keys();
    int n = 0;
    for (; k[n].name; n++)
        cr_expect(k[n].help && *k[n].help, "%s has no help", k[n].name);
    cr_expect_eq(n, 20);
    cr_expect_str_eq(k[0].name, "kind");
    cr_expect_str_eq(k[1].name, "matrix");
    cr_expect_eq(k[1].type, KW_PARAM_SIZES);
}

Test(params, pattern_text_equals_fields)
{
    const char *kv[] = {"kind", "uniform", "matrix", "64x48x16", "accel", "2x3", "acs", "24x8",
                        "ellipse", "1", "shift", "2", "seed", "7", NULL};
    kw_pattern_input *in = pin(kv);
    kw_pattern_options got, want;
    cr_assert_eq(kw_pattern_input_finish(in, NULL, &got), KW_OK, "%s", kw_last_error());
    kw_pattern_options_init(&want);
    want.kind = KW_PATTERN_UNIFORM;
    want.ndim = 3;
    want.dims[0] = 16, want.dims[1] = 48, want.dims[2] = 64;
    want.accel[0] = 3, want.accel[1] = 2, want.accel[2] = 1; /* RYxRZ into (z, y, x) */
    want.acs[0] = 8, want.acs[1] = 24;
    want.ellipse = 1;
    want.shift = 2;
    want.seed = 7;
    cr_expect_eq(memcmp(&got, &want, sizeof got), 0);
    kw_pattern_input_destroy(in);

    const char *kv2[] = {"kind", "spiral", "matrix", "64", "fov", "200mm", "gmax", "30mT/m",
                         "slew", "120T/m/s", "raster", "10us", "dwell", "4us", "interleaves", "4",
                         "te", "2ms", NULL};
    in = pin(kv2);
    cr_assert_eq(kw_pattern_input_finish(in, NULL, &got), KW_OK, "%s", kw_last_error());
    kw_pattern_options_init(&want);
    want.kind = KW_PATTERN_SPIRAL;
    want.dims[0] = 64, want.dims[1] = 64;
    want.fov_m = 0.2, want.gmax = 30e-3, want.slew = 120, want.raster = 10e-6;
    want.dwell_s = 4e-6, want.interleaves = 4, want.te_s = 2e-3;
    cr_expect_eq(got.kind, want.kind);
    cr_expect_eq(got.dims[0], 64);
    cr_expect(fabs(got.fov_m - want.fov_m) < 1e-15 && fabs(got.gmax - want.gmax) < 1e-15);
    cr_expect(fabs(got.raster - want.raster) < 1e-18 && fabs(got.dwell_s - want.dwell_s) < 1e-18);
    cr_expect_eq(got.slew, 120.0);
    cr_expect_eq(got.interleaves, 4);
    cr_expect(fabs(got.te_s - 2e-3) < 1e-18);
    kw_pattern_input_destroy(in);
}

Test(params, pattern_bad_text_names_the_key)
{
    pattern_refused("kind", "nope", "unknown kind 'nope'");
    pattern_refused("matrix", "64y64", "is not of the form AxB");
    pattern_refused("matrix", "64.5", "sizes must be whole numbers");
    pattern_refused("matrix", "64x", "ends with x");
    pattern_refused("accel", "0", "must be positive");
    pattern_refused("acs", "1x2x3", "more than 2 parts");
    pattern_refused("fraction", "abc", NULL);
    pattern_refused("ellipse", "maybe", NULL);
    pattern_refused("shift", "1.5", "is not a whole number");
    pattern_refused("seed", "-1", "must be >= 0");
    pattern_refused("dwell", "4", NULL); /* no unit */
    pattern_refused("gmax", "40", NULL);
    pattern_refused("te", "", "empty value");
    kw_pattern_input *in = pin(NULL);
    cr_expect_neq(kw_pattern_input_set(in, "spoke", "3"), KW_OK);
    cr_expect_str_eq(kw_last_error(), "spoke: unknown key (did you mean 'spokes'?)");
    kw_pattern_input_destroy(in);
}

/* the rules between keys, with the command's messages */
Test(params, pattern_rules_spelled)
{
    kw_pattern_options o;
    const char *a[] = {"kind", "radial", "matrix", "64", "accel", "2", NULL};
    kw_pattern_input *in = pin(a);
    cr_expect_neq(kw_pattern_input_finish(in, &CMD, &o), KW_OK);
    cr_expect_str_eq(kw_last_error(), "accel: not used by --kind radial (set --spokes)");
    cr_expect_neq(kw_pattern_input_finish(in, NULL, &o), KW_OK);
    cr_expect_str_eq(kw_last_error(), "accel: not used by kind=radial (set spokes)");
    kw_pattern_input_destroy(in);
    const char *b[] = {"kind", "partial", "matrix", "64", NULL};
    in = pin(b);
    cr_expect_neq(kw_pattern_input_finish(in, &CMD, &o), KW_OK);
    cr_expect_str_eq(kw_last_error(), "fraction: required for --kind partial");
    cr_expect_eq(kw_pattern_input_set(in, "fraction", "0.75"), KW_OK);
    cr_expect_eq(kw_pattern_input_finish(in, &CMD, &o), KW_OK);
    cr_expect_eq(o.fraction, 0.75);
    kw_pattern_input_destroy(in);
    const char *c[] = {"kind", "golden", "matrix", "64", "tiny", "0", NULL};
    in = pin(c);
    cr_expect_neq(kw_pattern_input_finish(in, &CMD, &o), KW_OK);
    cr_expect_str_eq(kw_last_error(), "tiny: 0 outside 1..1000");
    kw_pattern_input_destroy(in);
    in = pin(NULL);
    cr_expect_neq(kw_pattern_input_finish(in, &CMD, &o), KW_OK);
    cr_expect_str_eq(kw_last_error_param(), "kind");
    kw_pattern_input_destroy(in);
    cr_expect_str_eq(kw_pattern_input_key_of("dwell_s"), "dwell");
    cr_expect_str_eq(kw_pattern_input_key_of("readout_oversampling"), "readout-oversampling");
    cr_expect_null(kw_pattern_input_key_of("json"));
}

/* ---- acquisitions ----------------------------------------------------------------- */

static kw_acquisition_input *ain(const char *const *kv)
{
    kw_acquisition_input *in = NULL;
    cr_assert_eq(kw_acquisition_input_create(&in), KW_OK);
    for (; kv && kv[0]; kv += 2)
        cr_assert_eq(kw_acquisition_input_set(in, kv[0], kv[1]), KW_OK, "%s: %s", kv[0],
                     kw_last_error());
    return in;
}

static void acq_refused(const char *key, const char *text, const char *reason)
{
    kw_acquisition_input *in = ain(NULL);
    cr_expect_neq(kw_acquisition_input_set(in, key, text), KW_OK, "%s '%s'", key, text);
    cr_expect_str_eq(kw_last_error_param(), key);
    if (reason)
        cr_expect(strstr(kw_last_error_reason(), reason), "%s", kw_last_error());
    cr_expect_eq(kw_acquisition_input_given(in, key), 0);
    kw_acquisition_input_destroy(in);
}

Test(params, acquisition_text_equals_fields)
{
    const char *kv[] = {"phantom", "weave3d", "matrix", "32x24x16", "fov", "256mm,200mm,128mm",
                        "snr", "20", "seed", "3", "sequence", "gre", "te", "5ms", "tr", "20ms",
                        "flip", "15", "b0", "1.5T", "bandwidth", "250Hz/pixel", "df", "20Hz",
                        "coils", "4", "coil-radius", "60mm", "coil-order", "3", "coil-order-z", "1",
                        "coil-rings", "2", "coil-ring-gap", "40mm", "noise-corr", "0.2",
                        "field-gradient", "20uT/m,0", NULL};
    kw_acquisition_input *in = ain(kv);
    kw_acquisition_options got, want;
    kw_acquisition_options_init(&got);
    cr_assert_eq(kw_acquisition_input_finish(in, NULL, &got), KW_OK, "%s", kw_last_error());
    kw_acquisition_options_init(&want);
    cr_expect_str_eq(got.phantom, "weave3d");
    want.phantom = got.phantom;
    want.dims[0] = 16, want.dims[1] = 24, want.dims[2] = 32;
    want.fov_m[0] = 0.128, want.fov_m[1] = 0.2, want.fov_m[2] = 0.256;
    want.snr = 20, want.seed = 3, want.sequence = KW_CONTRAST_GRE;
    want.te_s = 5e-3, want.tr_s = 20e-3, want.flip_rad = 15 * M_PI / 180, want.b0_t = 1.5;
    want.bandwidth_hz = 250.0 * 32, want.df_hz = 20;
    want.coils = 4, want.coil_radius_m = 0.06, want.coil_order = 3, want.coil_order_z = 1;
    want.coil_rings = 2, want.coil_ring_gap_m = 0.04, want.noise_corr = 0.2;
    want.field_gradient_ndim = 2, want.field_gradient_t_per_m[2] = 20e-6;
    const double g[] = {got.fov_m[0], got.fov_m[1], got.fov_m[2], got.te_s, got.tr_s,
                        got.flip_rad, got.b0_t, got.bandwidth_hz, got.df_hz, got.coil_radius_m,
                        got.coil_ring_gap_m, got.noise_corr, got.field_gradient_t_per_m[2]};
    const double w[] = {want.fov_m[0], want.fov_m[1], want.fov_m[2], want.te_s, want.tr_s,
                        want.flip_rad, want.b0_t, want.bandwidth_hz, want.df_hz,
                        want.coil_radius_m, want.coil_ring_gap_m, want.noise_corr,
                        want.field_gradient_t_per_m[2]};
    for (int i = 0; i < 13; i++)
        cr_expect(fabs(g[i] - w[i]) <= 1e-12 * fabs(w[i]), "%d: %g vs %g", i, g[i], w[i]);
    cr_expect(got.dims[0] == 16 && got.dims[1] == 24 && got.dims[2] == 32);
    cr_expect(got.coils == 4 && got.coil_order == 3 && got.coil_order_z == 1 &&
              got.coil_rings == 2 && got.seed == 3 && got.snr == 20);
    cr_expect(got.sequence == KW_CONTRAST_GRE && got.field_gradient_ndim == 2);
    kw_acquisition_input_destroy(in);
}

Test(params, acquisition_bad_text_names_the_key)
{
    acq_refused("matrix", "0", "is not NX[xNY[xNZ]]");
    acq_refused("matrix", "99999", NULL);
    acq_refused("fov", "-1mm", "must be positive");
    acq_refused("snr", "-3", "must be a positive number");
    acq_refused("snr", "nan", "is not a number");
    acq_refused("seed", "-1", "must be >= 0");
    acq_refused("sequence", "xx", "unknown sequence 'xx' (one of: pd, gre, se, ir)");
    acq_refused("bandwidth", "-3kHz", "must be positive");
    acq_refused("te", "5", NULL);
    acq_refused("coils", "two", "is not a whole number");
    acq_refused("field-gradient", "20", NULL);
    acq_refused("phantom", "", "empty value");
}

Test(params, acquisition_rules_spelled)
{
    static const char *const rename[] = {"pattern", "mask", NULL};
    const kw_param_spelling py = {"", '_', "=", rename};
    const char *a[] = {"phantom", "weave", "matrix", "32", "fov", "256mm", "pattern", "m.npy",
                       "trajectory", "t.npy", NULL};
    kw_acquisition_input *in = ain(a);
    kw_acquisition_options o;
    kw_acquisition_options_init(&o);
    cr_expect_neq(kw_acquisition_input_finish(in, &CMD, &o), KW_OK);
    cr_expect_str_eq(kw_last_error(), "pattern: give --pattern (Cartesian) or --trajectory, not both");
    cr_expect_neq(kw_acquisition_input_finish(in, &py, &o), KW_OK);
    cr_expect_str_eq(kw_last_error_reason(), "give mask (Cartesian) or trajectory, not both");
    cr_expect_eq(kw_acquisition_input_clear(in, "trajectory"), KW_OK);
    cr_expect_eq(kw_acquisition_input_set(in, "coil-ring-gap", "0mm"), KW_OK);
    cr_expect_eq(kw_acquisition_input_set(in, "coils", "2"), KW_OK);
    cr_expect_eq(kw_acquisition_input_set(in, "coil-rings", "2"), KW_OK);
    cr_expect_neq(kw_acquisition_input_finish(in, &py, &o), KW_OK);
    cr_expect_str_eq(kw_last_error(), "coil-ring-gap: a positive length, with coil_rings=2");
    kw_acquisition_input_destroy(in);
    const char *b[] = {"phantom", "weave", "fov", "256mm", NULL};
    in = ain(b);
    cr_expect_neq(kw_acquisition_input_finish(in, &CMD, &o), KW_OK);
    cr_expect_str_eq(kw_last_error(), "matrix: missing (e.g. --matrix 256)");
    kw_acquisition_input_destroy(in);
    cr_expect_str_eq(kw_acquisition_input_key_of("mask"), "pattern");
    cr_expect_str_eq(kw_acquisition_input_key_of("coil_radius_m"), "coil-radius");
    cr_expect_null(kw_acquisition_input_key_of("max_bytes"));
}

/* a protocol's keys fill the keys not set; the caller's win */
Test(params, acquisition_protocol)
{
    const char text[] = "sequence = epi\nfov = 256mm\nmatrix = 32\nte = 30ms\ntr = 100ms\n"
                        "shots = 2\n";
    const char *a[] = {"phantom", "weave", "te", "40ms", NULL};
    kw_acquisition_input *in = ain(a);
    cr_assert_eq(kw_acquisition_input_protocol(in, text, sizeof text - 1), KW_OK, "%s",
                 kw_last_error());
    cr_expect_str_eq(kw_acquisition_input_protocol_text(in, "sequence"), "epi");
    kw_acquisition_options o;
    kw_acquisition_options_init(&o);
    cr_assert_eq(kw_acquisition_input_finish(in, NULL, &o), KW_OK, "%s", kw_last_error());
    cr_expect_eq(o.dims[2], 32);
    cr_expect(fabs(o.te_s - 40e-3) < 1e-15 && fabs(o.tr_s - 0.1) < 1e-15);
    cr_expect_eq(o.sequence, KW_CONTRAST_GRE);
    cr_assert_not_null(o.protocol);
    cr_expect_eq(o.protocol->sequence, KW_SEQ_EPI);
    cr_expect_eq(o.protocol->shots, 2);
    const char bad[] = "sequence = foo\n";
    cr_assert_eq(kw_acquisition_input_protocol(in, bad, sizeof bad - 1), KW_OK);
    cr_expect_neq(kw_acquisition_input_finish(in, NULL, &o), KW_OK);
    cr_expect_str_eq(kw_last_error(), "protocol: sequence: unknown sequence 'foo' (one of: gre, se, epi, radial, spiral)");
    const char junk[] = "no equals sign\n";
    cr_expect_neq(kw_acquisition_input_protocol(in, junk, sizeof junk - 1), KW_OK);
    cr_expect_str_eq(kw_last_error_param(), "protocol");
    kw_acquisition_input_destroy(in);
}
