/* test_sense.c: SENSE and GRAPPA life cycle and bad arguments; SENSE at
 * R = 1 equals the optimal combination S^H m / S^H S (Pruessmann et al.
 * 1999; Roemer et al. 1990). The numpy comparisons are in tests/ref/. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_combine.h"
#include "kw_fft.h"
#include "kw_grappa.h"
#include "kw_sense.h"

/* The options of the calls below: init, then the fields a test sets. */
static kw_status sense_make(kw_sense **se, size_t nc, const size_t d[3], const int acc[3],
                            const int off[3], double lambda)
{
    kw_sense_options o;
    kw_sense_options_init(&o);
    for (int a = 0; a < 3; a++) {
        o.accel[a] = acc[a];
        o.offset[a] = off[a];
    }
    o.lambda = lambda;
    return kw_sense_create(se, nc, d, &o);
}

/* GRAPPA options accelerated along y only, lattice offset 0. */
static kw_grappa_options gopts(int ry, const size_t acs_lo[3], const size_t acs_n[3],
                               const int kernel[3], double lambda)
{
    kw_grappa_options o;
    kw_grappa_options_init(&o);
    o.accel[1] = ry;
    for (int a = 0; a < 3; a++) {
        o.acs_lo[a] = acs_lo[a];
        o.acs_n[a] = acs_n[a];
        o.kernel[a] = kernel[a];
    }
    o.lambda = lambda;
    return o;
}

Test(sense, r1_is_optimal_combination)
{
    enum { NC = 3, NY = 8, NX = 6, NP = NY * NX };
    size_t d[3] = {1, NY, NX};
    int acc[3] = {1, 1, 1}, off[3] = {0, 0, 0};
    float complex *m = kw_alloc(NC * NP * sizeof *m), *s = kw_alloc(NC * NP * sizeof *s);
    float complex *k = kw_alloc(NC * NP * sizeof *k), *img = kw_alloc(NP * sizeof *img),
                  *opt = kw_alloc(NP * sizeof *opt);
    for (int c = 0; c < NC; c++)
        for (int p = 0; p < NP; p++) {
            s[c * NP + p] = (float)(1 + c + 0.1 * p) + I * (float)(0.2 * c - 0.05 * p);
            m[c * NP + p] = s[c * NP + p] * (float)(1 + p % 5) + 0.01f * (float)((c * 7 + p) % 3);
            k[c * NP + p] = m[c * NP + p];
        }
    kw_fft_plan *f;
    cr_assert_eq(kw_fft_create(&f, 2, d + 1, NC, KW_FFT_ESTIMATE), KW_OK);
    kw_fft_forward(f, k);
    kw_fft_destroy(f);
    kw_sense *se;
    cr_assert_eq(sense_make(&se, NC, d, acc, off, 0.0), KW_OK, "%s", kw_last_error());
    float g[NP];
    cr_assert_eq(kw_sense_execute(se, k, s, img, g), KW_OK);
    kw_combine_optimal(m, s, NC, NP, opt);
    for (int p = 0; p < NP; p++) {
        cr_expect(cabsf(img[p] - opt[p]) < 1e-4f * cabsf(opt[p]) + 1e-5f, "pixel %d", p);
        cr_expect(fabsf(g[p] - 1) < 1e-5f, "g at R = 1 is 1, got %g", g[p]);
    }
    kw_sense_destroy(se);
    kw_sense_destroy(NULL);
    kw_free(m);
    kw_free(s);
    kw_free(k);
    kw_free(img);
    kw_free(opt);
}

Test(sense, bad_arguments)
{
    kw_sense *se;
    size_t d[3] = {1, 30, 8};
    int acc[3] = {1, 4, 1}, off[3] = {0, 0, 0};
    cr_expect_eq(sense_make(&se, 8, d, acc, off, 0.0), KW_EINVAL); /* 4 does not divide 30 */
    acc[1] = 3;
    cr_expect_eq(sense_make(&se, 2, d, acc, off, 0.0), KW_EINVAL); /* R > coils */
    cr_expect_eq(sense_make(&se, 8, d, acc, off, -1.0), KW_EINVAL);
}

Test(grappa, block_too_small)
{
    kw_grappa *g;
    size_t d[3] = {1, 32, 16};
    kw_grappa_options o = gopts(2, (size_t[3]){0, 15, 0}, (size_t[3]){1, 3, 16},
                                (int[3]){1, 2, 5}, 1e-4);
    cr_expect_eq(kw_grappa_create(&g, 8, d, &o), KW_EINVAL);
    o.acs_lo[1] = 10;
    o.acs_n[1] = 12;
    cr_assert_eq(kw_grappa_create(&g, 8, d, &o), KW_OK, "%s", kw_last_error());
    cr_expect_eq(kw_grappa_unknowns(g), 8 * 2 * 5);
    /* bases b with b, b + 2 and b + 1 inside 10..21: 10..19, times 12 readout positions */
    cr_expect_eq(kw_grappa_fit_count(g), 10 * 12);
    kw_grappa_destroy(g);
    kw_grappa_destroy(NULL);
}

/* Failures name the library's parameter (kw_last_error_param(), kw_base.h)
 * and no command-line option: the CLI maps the name to its option. */
static void expect_param(const char *param)
{
    cr_expect_str_eq(kw_last_error_param(), param, "%s", kw_last_error());
    cr_expect(strstr(kw_last_error(), "--") == NULL, "a CLI option in \"%s\"", kw_last_error());
}

Test(sense, errors_name_the_parameter)
{
    /* ny = 2, R = 2, offset 1 = ny/2: both phases (1/R) w^-l are exactly
     * 1/2; four coils of ones make E^H E = [[1, 1], [1, 1]] exactly, whose
     * Cholesky factorisation meets a zero pivot (lambda 0) */
    enum { NC = 4, NY = 2, NX = 4, NP = NY * NX };
    size_t d[3] = {1, NY, NX};
    int acc[3] = {1, 2, 1}, off[3] = {0, 1, 0};
    kw_sense *se;
    cr_expect_eq(sense_make(&se, NC, d, acc, off, -1.0), KW_EINVAL);
    expect_param("lambda");
    cr_expect_eq(sense_make(&se, 1, d, acc, off, 0.0), KW_EINVAL); /* R 2 > 1 coil */
    expect_param("accel");
    acc[2] = 3; /* does not divide 4 */
    cr_expect_eq(sense_make(&se, NC, d, acc, off, 0.0), KW_EINVAL);
    expect_param("accel");
    acc[2] = 1;
    float complex *k = kw_alloc(NC * NP * sizeof *k), *s = kw_alloc(NC * NP * sizeof *s);
    float complex *img = kw_alloc(NP * sizeof *img);
    for (int i = 0; i < NC * NP; i++) {
        s[i] = 1.0f;
        k[i] = (i / NX) % 2 ? 1.0f + 0.1f * (float)(i % 7) : 0.0f;
    }
    cr_assert_eq(sense_make(&se, NC, d, acc, off, 0.0), KW_OK, "%s", kw_last_error());
    cr_expect_eq(kw_sense_execute(se, k, s, img, NULL), KW_ENUMERIC);
    expect_param("lambda");
    kw_sense_destroy(se);
    kw_free(k);
    kw_free(s);
    kw_free(img);
}

Test(grappa, errors_name_the_parameter)
{
    kw_grappa *g;
    size_t d[3] = {1, 32, 16};
    kw_grappa_options o = gopts(2, (size_t[3]){0, 15, 0}, (size_t[3]){1, 3, 16},
                                (int[3]){1, 2, 5}, 1e-4);
    cr_expect_eq(kw_grappa_create(&g, 8, d, &o), KW_EINVAL); /* block too small */
    expect_param("acs_lines");
    o.lambda = -1;
    cr_expect_eq(kw_grappa_create(&g, 8, d, &o), KW_EINVAL);
    expect_param("lambda");
    o.lambda = 1e-4;
    o.kernel[1] = 0;
    cr_expect_eq(kw_grappa_create(&g, 8, d, &o), KW_EINVAL);
    expect_param("kernel");
    o.kernel[1] = 2;
    o.acs_lo[1] = 10;
    o.acs_n[1] = 12;
    o.kernel[2] = 16; /* 8 coils x 2 x 16 = 256 weights, 10 x 1 fitting positions */
    cr_expect_eq(kw_grappa_create(&g, 8, d, &o), KW_EINVAL);
    expect_param("acs_lines");
    o.kernel[2] = 5;
    cr_assert_eq(kw_grappa_create(&g, 8, d, &o), KW_OK, "%s", kw_last_error());
    float complex *k = kw_alloc(8 * 32 * 16 * sizeof *k); /* zeros: an empty block */
    cr_expect_eq(kw_grappa_calibrate(g, k), KW_ENUMERIC);
    expect_param("acs_lines");
    kw_grappa_destroy(g);
    kw_free(k);
}

/* Coil maps and k-space with no structure that matters: a fixed pattern. */
static void fill_pattern(float complex *v, size_t n, unsigned seed)
{
    for (size_t i = 0; i < n; i++) {
        seed = seed * 1664525u + 1013904223u;
        float re = (float)(seed >> 8) / 16777216.0f - 0.5f;
        seed = seed * 1664525u + 1013904223u;
        v[i] = re + I * ((float)(seed >> 8) / 16777216.0f - 0.5f);
    }
}

/* The growable options struct (kw_base.h): init gives the documented
 * defaults; NULL and an uninitialised struct are refused naming "options";
 * a struct from an older caller (struct_size short of lambda, the last
 * field) creates and takes the default lambda 0, although the lambda that
 * lies unread past its struct_size (-1) would be refused. */
Test(sense, options_struct_size)
{
    kw_sense_options o;
    memset(&o, 0x5a, sizeof o);
    kw_sense_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    for (int a = 0; a < 3; a++) {
        cr_expect_eq(o.accel[a], 1);
        cr_expect_eq(o.offset[a], 0);
    }
    cr_expect_eq(o.lambda, 0.0);
    enum { NC = 4, NY = 8, NX = 6, NP = NY * NX };
    size_t d[3] = {1, NY, NX};
    kw_sense *se = (kw_sense *)&o;
    cr_expect_eq(kw_sense_create(&se, NC, d, NULL), KW_EINVAL);
    expect_param("options");
    cr_expect(se == NULL);
    o.struct_size = 0; /* never initialised */
    cr_expect_eq(kw_sense_create(&se, NC, d, &o), KW_EINVAL);
    expect_param("options");
    float complex *k = kw_alloc(NC * NP * sizeof *k), *s = kw_alloc(NC * NP * sizeof *s);
    float complex *ref = kw_alloc(NP * sizeof *ref), *img = kw_alloc(NP * sizeof *img);
    fill_pattern(k, NC * NP, 3);
    fill_pattern(s, NC * NP, 4);
    for (int c = 0; c < NC; c++)
        for (int y = 1; y < NY; y += 2)
            memset(k + (c * NY + y) * NX, 0, NX * sizeof *k);
    kw_sense_options_init(&o);
    o.accel[1] = 2;
    cr_assert_eq(kw_sense_create(&se, NC, d, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_sense_execute(se, k, s, ref, NULL), KW_OK, "%s", kw_last_error());
    kw_sense_destroy(se);
    o.lambda = -1;
    cr_expect_eq(kw_sense_create(&se, NC, d, &o), KW_EINVAL); /* read when all there */
    expect_param("lambda");
    o.struct_size = offsetof(kw_sense_options, lambda);
    cr_assert_eq(kw_sense_create(&se, NC, d, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_sense_execute(se, k, s, img, NULL), KW_OK, "%s", kw_last_error());
    kw_sense_destroy(se);
    cr_expect(memcmp(img, ref, NP * sizeof *img) == 0,
              "an older caller's unfolding differs from lambda 0's");
    kw_free(k);
    kw_free(s);
    kw_free(ref);
    kw_free(img);
}

/* The same for GRAPPA: an older caller (struct_size short of lambda) gets
 * the default 1e-4, bit for bit, not the -1 that lies unread. */
Test(grappa, options_struct_size)
{
    kw_grappa_options o;
    memset(&o, 0x5a, sizeof o);
    kw_grappa_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    for (int a = 0; a < 3; a++) {
        cr_expect_eq(o.accel[a], 1);
        cr_expect_eq(o.offset[a], 0);
        cr_expect_eq(o.acs_lo[a], 0);
        cr_expect_eq(o.acs_n[a], 0);
    }
    cr_expect(o.kernel[0] == 1 && o.kernel[1] == 2 && o.kernel[2] == 5);
    cr_expect_eq(o.lambda, 1e-4);
    enum { NC = 4, NY = 32, NX = 16, NP = NY * NX };
    size_t d[3] = {1, NY, NX};
    kw_grappa *g = (kw_grappa *)&o;
    cr_expect_eq(kw_grappa_create(&g, NC, d, NULL), KW_EINVAL);
    expect_param("options");
    cr_expect(g == NULL);
    o.struct_size = 0; /* never initialised */
    cr_expect_eq(kw_grappa_create(&g, NC, d, &o), KW_EINVAL);
    expect_param("options");
    float complex *k = kw_alloc(NC * NP * sizeof *k);
    float complex *ref = kw_alloc(NC * NP * sizeof *ref), *out = kw_alloc(NC * NP * sizeof *out);
    fill_pattern(k, NC * NP, 7);
    for (int c = 0; c < NC; c++)
        for (int y = 1; y < NY; y += 2)
            if (y < 10 || y >= 22)
                memset(k + (c * NY + y) * NX, 0, NX * sizeof *k);
    o = gopts(2, (size_t[3]){0, 10, 0}, (size_t[3]){1, 12, NX}, (int[3]){1, 2, 5}, 1e-4);
    cr_assert_eq(kw_grappa_create(&g, NC, d, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_grappa_calibrate(g, k), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_grappa_execute(g, k, ref), KW_OK, "%s", kw_last_error());
    kw_grappa_destroy(g);
    o.lambda = -1;
    cr_expect_eq(kw_grappa_create(&g, NC, d, &o), KW_EINVAL); /* read when all there */
    expect_param("lambda");
    o.struct_size = offsetof(kw_grappa_options, lambda);
    cr_assert_eq(kw_grappa_create(&g, NC, d, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_grappa_calibrate(g, k), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_grappa_execute(g, k, out), KW_OK, "%s", kw_last_error());
    kw_grappa_destroy(g);
    cr_expect(memcmp(out, ref, NC * NP * sizeof *out) == 0,
              "an older caller's synthesis differs from lambda 1e-4's");
    kw_free(k);
    kw_free(ref);
    kw_free(out);
}
