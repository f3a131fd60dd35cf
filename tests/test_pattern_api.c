/* test_pattern_api.c: the public pattern calls (libencode/kw_pattern.h,
 * recon/kw_pattern_analysis.h, kw_mask_fill in kw_sampling.h) driven from
 * C: options and defaults, mask layout and line counts (arithmetic), the
 * Poisson-disc minimum distance (Bridson 2007), the golden-angle step
 * (Winkelmann et al. 2007), parameter names of failures. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cJSON.h>

#include "kw_pattern.h"
#include "kw_pattern_analysis.h"
#include "kw_sampling.h"

static kw_pattern *make(const kw_pattern_options *o)
{
    kw_pattern *p = NULL;
    cr_assert_eq(kw_pattern_create(&p, o), KW_OK, "%s", kw_last_error());
    cr_assert_not_null(p);
    return p;
}

/* the defaults of `kweave pattern` (docs/patterns.md) */
Test(pattern_api, options_init_defaults)
{
    kw_pattern_options o;
    memset(&o, 0xab, sizeof o);
    kw_pattern_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    cr_expect_eq(o.kind, KW_PATTERN_FULL);
    cr_expect_eq(o.ndim, 2);
    cr_expect_eq(o.accel[0], 0.0);
    cr_expect_eq(o.acs[0], 0);
    cr_expect_eq(o.fraction, 1.0);
    cr_expect_eq(o.power, 3.0);
    cr_expect_eq(o.shift, 1);
    cr_expect_eq(o.seed, 0);
    cr_expect_eq(o.spokes, 0);
    cr_expect(isnan(o.te_s));
    cr_expect_eq(o.fov_m, 0.256);
    cr_expect_eq(o.gmax, 40e-3);
    cr_expect_eq(o.slew, 150.0);
    cr_expect_eq(o.raster, 10e-6);
    cr_expect_eq(o.max_readout_s, 10e-3);
    cr_expect_eq(o.shots, 1);
    kw_pattern_destroy(NULL); /* NULL-safe */
}

/* Uniform R = 2 with 24 ACS lines on 128 x 128: ky = i - 64; the even ky
 * give 64 lines, the ACS block ky = -12 .. 11 adds its 12 odd lines: 76
 * lines of 128 points (arithmetic). The analysis sees R = 128/76, a
 * contiguous block ky = -12 .. 12 (25 lines: ky = 12 is even), steps of
 * 2 between lines. */
Test(pattern_api, uniform_r2_acs24_line_count)
{
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_UNIFORM;
    o.dims[0] = 128; /* ny */
    o.dims[1] = 128; /* nx */
    o.accel[0] = 2;
    o.acs[0] = 24;
    kw_pattern *p = make(&o);
    const kw_pattern_info *in = kw_pattern_info_of(p);
    const uint8_t *m = kw_pattern_mask(p);
    cr_assert_eq(in->is_mask, 1);
    cr_assert_eq(in->shape[0], 128);
    cr_assert_eq(in->shape[1], 128);
    cr_expect_eq(in->plane, 0);
    size_t lines = 0, total = 0;
    for (size_t y = 0; y < 128; y++) {
        long ky = (long)y - 64;
        int want = ky % 2 == 0 || (ky >= -12 && ky < 12);
        lines += m[y * 128];
        for (size_t x = 0; x < 128; x++) {
            cr_expect_eq(m[y * 128 + x], want, "ky %ld x %zu", ky, x);
            total += m[y * 128 + x];
        }
    }
    cr_expect_eq(lines, 76);
    cr_expect_eq(total, 76 * 128);
    cr_expect_eq(in->sampled_points, 76);
    cr_expect(fabs(in->acceleration - 128.0 / 76.0) < 1e-12);
    /* ky = 12 is a lattice line next to the 24 asked (-12 .. 11): the mask
     * holds 25 fully sampled lines, and both reports say so */
    cr_expect_eq(in->acs_lines, 25.0);
    cr_expect_eq(in->acs_requested[0], 24);

    float *w = malloc(128 * 128 * sizeof *w);
    for (size_t i = 0; i < 128 * 128; i++)
        w[i] = m[i];
    kw_pattern_analysis a;
    cr_assert_eq(kw_pattern_analyse_mask(&a, w, 128, 128, 0), KW_OK, "%s", kw_last_error());
    cr_expect(fabs(a.acceleration - 128.0 / 76.0) < 1e-12);
    cr_expect_eq(a.acs_lines, 25.0);
    cr_expect_eq(a.gap_axis[0], 2.0);
    cr_expect_eq(a.max_gap, 2.0);
    cr_expect_eq(a.tpsf_levels, 4);
    kw_pattern_analysis_free(&a);
    kw_pattern_analysis_free(&a); /* idempotent */
    free(w);
    kw_pattern_destroy(p);
}

/* A 3-D matrix gives the ky-kz plane (nz, ny); kw_mask_fill() gives the
 * same plane repeated along x for dims (nz, ny, nx). */
Test(pattern_api, plane_and_mask_fill_layout)
{
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_LATTICE;
    o.ndim = 3;
    o.dims[0] = 16; /* nz */
    o.dims[1] = 32; /* ny */
    o.dims[2] = 8;  /* nx */
    o.accel[0] = 2; /* Rz */
    o.accel[1] = 2; /* Ry */
    o.accel[2] = 1;
    kw_pattern *p = make(&o);
    const kw_pattern_info *in = kw_pattern_info_of(p);
    cr_assert_eq(in->plane, 1);
    cr_assert_eq(in->shape[0], 16);
    cr_assert_eq(in->shape[1], 32);
    cr_expect_eq(in->sampled_points, 16 * 32 / 4);

    kw_mask_options mo;
    kw_mask_options_init(&mo);
    mo.kind = KW_MASK_LATTICE;
    mo.dims[1] = 32;
    mo.dims[0] = 16;
    mo.accel_y = mo.accel_z = 2;
    uint8_t *full = malloc(16 * 32 * 8);
    size_t d3[3] = {16, 32, 8};
    cr_assert_eq(kw_mask_fill(&mo, 3, d3, full, NULL), KW_OK, "%s", kw_last_error());
    for (size_t z = 0; z < 16; z++)
        for (size_t y = 0; y < 32; y++)
            for (size_t x = 0; x < 8; x++)
                cr_expect_eq(full[(z * 32 + y) * 8 + x], kw_pattern_mask(p)[z * 32 + y]);
    size_t bad[3] = {16, 31, 8};
    cr_expect_eq(kw_mask_fill(&mo, 3, bad, full, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "dims");
    free(full);
    kw_pattern_destroy(p);
}

/* Bridson 2007: no two samples of a Poisson-disc set lie closer than the
 * radius r. With power 0 the density is flat, so r = max(1, s) everywhere
 * (kw_poisson_radius) and every pair must be at least r apart. */
Test(pattern_api, poisson_minimum_distance)
{
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_POISSON;
    o.ndim = 3;
    o.dims[0] = 48;
    o.dims[1] = 48;
    o.dims[2] = 1;
    o.accel[0] = 2;
    o.accel[1] = 2;
    o.power = 0;
    o.seed = 7;
    kw_pattern *p = make(&o);
    kw_mask_options mo;
    kw_mask_options_init(&mo);
    mo.kind = KW_MASK_POISSON;
    mo.dims[0] = mo.dims[1] = 48;
    mo.accel_y = mo.accel_z = 2;
    mo.power = 0;
    mo.seed = 7;
    double s;
    cr_assert_eq(kw_mask_poisson_scale(&mo, &s), KW_OK);
    double r = kw_poisson_radius(&mo, s, 0, 0);
    cr_expect_eq(r, kw_poisson_radius(&mo, s, 24, 24)); /* flat */
    cr_expect(r > 1.0, "r %g", r);
    const uint8_t *m = kw_pattern_mask(p);
    size_t pts[48 * 48], n = 0;
    for (size_t i = 0; i < 48 * 48; i++)
        if (m[i])
            pts[n++] = i;
    cr_expect(n > 48 * 48 / 8, "%zu samples", n);
    double dmin = INFINITY;
    for (size_t a = 0; a < n; a++)
        for (size_t b = a + 1; b < n; b++) {
            double dy = (double)(pts[a] % 48) - (double)(pts[b] % 48);
            double dz = (double)(pts[a] / 48) - (double)(pts[b] / 48);
            double d = sqrt(dy * dy + dz * dz);
            dmin = d < dmin ? d : dmin;
        }
    cr_expect(dmin >= r, "closest pair %g < r %g", dmin, r);
    kw_pattern_destroy(p);
}

/* Winkelmann et al. 2007: successive spokes 180/phi = 111.246 deg apart
 * (mod 180). The direction of spoke s is that of its last sample. */
Test(pattern_api, golden_angle_step)
{
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_GOLDEN;
    o.dims[0] = o.dims[1] = 64;
    o.spokes = 12;
    kw_pattern *p = make(&o);
    const kw_pattern_info *in = kw_pattern_info_of(p);
    cr_assert_eq(in->is_mask, 0);
    cr_assert_eq(in->shape[0], 12 * 64);
    cr_assert_eq(in->shape[1], 2);
    cr_expect(fabs(in->angle_increment_deg - 111.246) < 5e-4, "%.6f", in->angle_increment_deg);
    const float *k = kw_pattern_trajectory(p);
    const float *t = kw_pattern_times(p);
    double prev = 0;
    for (size_t s = 0; s < 12; s++) {
        const float *e = k + (s * 64 + 63) * 2;
        double th = atan2(e[1], e[0]) * 180.0 / M_PI;
        if (s > 0) {
            double step = fmod(th - prev + 360.0, 180.0);
            cr_expect(fabs(step - 111.246) < 1e-3, "spoke %zu: step %.5f deg", s, step);
        }
        prev = th;
    }
    /* k = 0 (sample N/2) at te = N/2 dwell, dwell = 1 / (250 Hz x 64) */
    cr_expect(fabs(t[32] - 32.0 / (250.0 * 64.0)) < 1e-9, "t %g", t[32]);
    kw_pattern_destroy(p);
}

/* every failure names the options field in the library's words */
Test(pattern_api, bad_parameters_are_named)
{
    kw_pattern *p = (kw_pattern *)1;
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_UNIFORM;
    o.dims[0] = o.dims[1] = 64;
    cr_expect_eq(kw_pattern_create(&p, &o), KW_EINVAL); /* no accel */
    cr_expect_null(p);
    cr_expect_str_eq(kw_last_error_param(), "accel");
    o.accel[0] = 2;
    o.fraction = 0.4;
    cr_expect_eq(kw_pattern_create(&p, &o), KW_ERANGE);
    cr_expect_str_eq(kw_last_error_param(), "fraction");
    o.fraction = 1;
    o.acs[0] = 65;
    cr_expect_neq(kw_pattern_create(&p, &o), KW_OK);
    cr_expect_str_eq(kw_last_error_param(), "acs");

    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_RADIAL;
    o.dims[0] = 32;
    o.dims[1] = 64;
    cr_expect_eq(kw_pattern_create(&p, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "dims");
    o.dims[0] = 64;
    o.tiny = 2;
    cr_expect_eq(kw_pattern_create(&p, &o), KW_ERANGE);
    cr_expect_str_eq(kw_last_error_param(), "tiny");
    cr_expect_null(strstr(kw_last_error(), "--"), "%s", kw_last_error());
    o.tiny = 0;
    o.readout_oversampling = 5;
    cr_expect_eq(kw_pattern_create(&p, &o), KW_ERANGE);
    cr_expect_str_eq(kw_last_error_param(), "readout_oversampling");

    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_EPI;
    o.dims[0] = o.dims[1] = 64;
    o.fraction = 0.4;
    cr_expect_eq(kw_pattern_create(&p, &o), KW_ERANGE);
    cr_expect_str_eq(kw_last_error_param(), "fraction");
    o.fraction = 1;
    o.gmax = 0;
    cr_expect_eq(kw_pattern_create(&p, &o), KW_ERANGE);
    cr_expect_str_eq(kw_last_error_param(), "gmax");

    o.struct_size = 0; /* never initialised */
    cr_expect_eq(kw_pattern_create(&p, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect_eq(kw_pattern_create(&p, NULL), KW_EINVAL);
}

/* spiral and EPI come from the gradient design: whole readouts, times
 * rising along each readout */
Test(pattern_api, spiral_and_epi_shapes)
{
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_SPIRAL;
    o.dims[0] = o.dims[1] = 64;
    kw_pattern *p = make(&o);
    const kw_pattern_info *in = kw_pattern_info_of(p);
    cr_expect_eq(in->shape[1], 2);
    cr_expect_eq(in->readouts, (size_t)in->interleaves);
    cr_expect_eq(in->shape[0], in->readouts * in->readout_samples);
    cr_expect(in->spiral_readout_s <= 10e-3);
    const float *t = kw_pattern_times(p);
    for (size_t i = 1; i < in->readout_samples; i++)
        cr_expect(t[i] > t[i - 1]);
    kw_pattern_destroy(p);

    o.kind = KW_PATTERN_EPI;
    o.shots = 2;
    p = make(&o);
    in = kw_pattern_info_of(p);
    cr_expect_eq(in->shots, 2);
    cr_expect_eq(in->readout_samples, 64);
    cr_expect_eq(in->readouts, 64); /* full k-space, 32 lines per shot */
    cr_expect_eq(in->lines_per_shot, 32);
    kw_pattern_destroy(p);
}

static cJSON *parsed(char *text)
{
    cr_assert_not_null(text);
    cr_expect(text[strlen(text) - 1] == '\n');
    cJSON *j = cJSON_Parse(text);
    cr_assert_not_null(j, "not JSON: %s", text);
    kw_free(text);
    return j;
}

/* kw_pattern_info_json(): the sidecar of a mask and of a trajectory (the
 * times file, a name of the command's, left out); NULL refused. */
Test(pattern_api, info_json)
{
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_UNIFORM;
    o.dims[0] = o.dims[1] = 64;
    o.accel[0] = 2;
    o.acs[0] = 8;
    kw_pattern *p = make(&o);
    char *text = (char *)1;
    cr_expect_eq(kw_pattern_info_json(NULL, &text), KW_EINVAL);
    cr_expect_null(text);
    cr_expect_eq(kw_pattern_info_json(p, NULL), KW_EINVAL);
    cr_assert_eq(kw_pattern_info_json(p, &text), KW_OK, "%s", kw_last_error());
    cJSON *j = parsed(text);
    const kw_pattern_info *in = kw_pattern_info_of(p);
    cr_expect_str_eq(cJSON_GetObjectItem(j, "kind")->valuestring, "mask");
    cr_expect_str_eq(cJSON_GetObjectItem(j, "pattern_kind")->valuestring, "uniform");
    cr_expect_str_eq(cJSON_GetObjectItem(j, "plane")->valuestring, "ky-kx");
    cr_expect_float_eq(cJSON_GetObjectItem(j, "acceleration")->valuedouble, in->acceleration, 1e-12);
    cr_expect_eq(cJSON_GetObjectItem(j, "acs_lines")->valuedouble, in->acs_lines);
    cr_expect_eq(cJSON_GetObjectItem(j, "sampled_points")->valuedouble, (double)in->sampled_points);
    cr_expect_eq(cJSON_GetObjectItem(j, "seed")->valuedouble, 0);
    cJSON_Delete(j);
    kw_pattern_destroy(p);

    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_GOLDEN;
    o.dims[0] = o.dims[1] = 64;
    o.spokes = 12;
    p = make(&o);
    cr_assert_eq(kw_pattern_info_json(p, &text), KW_OK, "%s", kw_last_error());
    j = parsed(text);
    cr_expect_str_eq(cJSON_GetObjectItem(j, "kind")->valuestring, "trajectory");
    cr_expect_str_eq(cJSON_GetObjectItem(j, "pattern_kind")->valuestring, "golden");
    cr_expect_eq(cJSON_GetObjectItem(j, "spokes")->valuedouble, 12);
    cr_expect_eq(cJSON_GetArraySize(cJSON_GetObjectItem(j, "columns")), 2);
    cr_expect_null(cJSON_GetObjectItem(j, "times"));
    cr_expect(cJSON_IsNull(cJSON_GetObjectItem(j, "seed")));
    cJSON_Delete(j);
    kw_pattern_destroy(p);
}

/* kw_pattern_analysis_json(): the --json report of an analysis with its
 * name and kind; an analysis not made and NULL refused. */
Test(pattern_api, analysis_json)
{
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = KW_PATTERN_UNIFORM;
    o.dims[0] = o.dims[1] = 64;
    o.accel[0] = 2;
    o.acs[0] = 8;
    kw_pattern *p = make(&o);
    const kw_pattern_info *in = kw_pattern_info_of(p);
    float w[64 * 64];
    for (size_t i = 0; i < 64 * 64; i++)
        w[i] = kw_pattern_mask(p)[i];
    kw_pattern_analysis a;
    memset(&a, 0, sizeof a);
    char *text = (char *)1;
    cr_expect_eq(kw_pattern_analysis_json(&a, "m.npy", "uniform", &text), KW_EINVAL);
    cr_expect_null(text);
    cr_expect_eq(kw_pattern_analysis_json(NULL, "m.npy", "uniform", &text), KW_EINVAL);
    cr_assert_eq(kw_pattern_analyse_mask(&a, w, 64, 64, 0), KW_OK, "%s", kw_last_error());
    cr_expect_eq(kw_pattern_analysis_json(&a, "m.npy", "uniform", NULL), KW_EINVAL);
    cr_assert_eq(kw_pattern_analysis_json(&a, "m.npy", "uniform", &text), KW_OK, "%s",
                 kw_last_error());
    cJSON *j = parsed(text);
    cr_expect_str_eq(cJSON_GetObjectItem(j, "file")->valuestring, "m.npy");
    cr_expect_str_eq(cJSON_GetObjectItem(j, "pattern_kind")->valuestring, "uniform");
    cr_expect_str_eq(cJSON_GetObjectItem(j, "layout")->valuestring, "cartesian");
    cr_expect_float_eq(cJSON_GetObjectItem(j, "acceleration")->valuedouble, in->acceleration, 1e-12);
    cr_expect_float_eq(cJSON_GetObjectItem(j, "psf_peak_sidelobe")->valuedouble,
                       a.psf.peak_sidelobe, 1e-12);
    cr_expect_str_eq(cJSON_GetObjectItem(j, "psf_method")->valuestring, "fft");
    cr_expect_not_null(cJSON_GetObjectItem(j, "max_gap_dk_by_axis"));
    cJSON_Delete(j);
    cr_assert_eq(kw_pattern_analysis_json(&a, NULL, NULL, &text), KW_OK);
    j = parsed(text);
    cr_expect(cJSON_IsNull(cJSON_GetObjectItem(j, "file")));
    cr_expect(cJSON_IsNull(cJSON_GetObjectItem(j, "pattern_kind")));
    cJSON_Delete(j);
    kw_pattern_analysis_free(&a);
    kw_pattern_destroy(p);
}
