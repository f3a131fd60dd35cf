/* test_sim_grid.c: the simulation's grid path (libencode/sim_grid.c) against
 * its per-sample path (kw_sim_options.per_sample = 1, the exact transform of
 * every shape at every shifted frequency of every sample): the same k-space
 * within 1e-6 of the largest sample, in 2-D and 3-D, with masks, time
 * classes, in bands when the memory is short, and the per-sample path when
 * even one band is refused. (Against closed forms outside the project:
 * tests/ref/test_encode_fast.py.) */
#include <complex.h>
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_phantom.h"
#include "kw_simulate.h"

/* Deterministic coil coefficients (a small linear congruential sequence),
 * decaying with the term index like a fit's. */
static void coefs(kw_cdouble *c, int n)
{
    unsigned s = 12345;
    for (int i = 0; i < n; i++) {
        s = s * 1103515245u + 12345u;
        double re = (double)(s >> 16 & 0x7fff) / 32768.0 - 0.5;
        s = s * 1103515245u + 12345u;
        double im = (double)(s >> 16 & 0x7fff) / 32768.0 - 0.5;
        c[i] = (re + I * im) / sqrt(1.0 + (double)(i % 245));
    }
}

/* Run one simulation; returns whether it took the grid path. */
static int run(kw_sim_options *o, int per_sample, kw_cfloat *out)
{
    o->per_sample = per_sample;
    kw_sim *s = NULL;
    cr_assert_eq(kw_sim_create(&s, o), KW_OK, "%s", kw_last_error());
    int grid = kw_sim_uses_grid(s);
    cr_assert_eq(kw_sim_execute(s, out, NULL, NULL), KW_OK, "%s", kw_last_error());
    kw_sim_destroy(s);
    return grid;
}

static double relmax(const kw_cfloat *a, const kw_cfloat *b, size_t n)
{
    double d = 0, m = 0;
    for (size_t i = 0; i < n; i++) {
        double e = cabs((double complex)a[i] - (double complex)b[i]), v = cabs((double complex)b[i]);
        d = e > d ? e : d;
        m = v > m ? v : m;
    }
    return d / m;
}

/* Grid against per-sample for one set of options: channels x count samples. */
static void compare(kw_sim_options *o, size_t total)
{
    kw_cfloat *a = kw_alloc_n(total, sizeof *a), *b = kw_alloc_n(total, sizeof *b);
    cr_assert(a && b);
    cr_expect_eq(run(o, 1, a), 0);
    cr_expect_eq(run(o, 0, b), 1);
    double r = relmax(b, a, total);
    cr_expect(r <= 1e-6, "grid vs per-sample: %g", r);
    kw_free(a);
    kw_free(b);
}

Test(sim_grid, shepp_logan_2d_masked)
{
    kw_phantom p;
    cr_assert_eq(kw_phantom_make(&p, "shepp-logan-modified"), KW_OK);
    enum { NY = 24, NX = 28, NC = 3, L = 3, T = (2 * L + 1) * (2 * L + 1) };
    kw_cdouble c[NC * T];
    coefs(c, NC * T);
    uint8_t mask[NY * NX];
    for (int i = 0; i < NY * NX; i++)
        mask[i] = (i / NX) % 3 == 0 || i % 7 == 0;
    kw_sim_options o;
    kw_sim_options_init(&o);
    o.phantom = &p;
    o.n[0] = 1, o.n[1] = NY, o.n[2] = NX;
    o.ncoils = NC, o.coil_order = L, o.coil_period = 1.5, o.coil_coef = c;
    o.mask = mask;
    compare(&o, (size_t)NC * NY * NX);
}

/* Tissue classes with their own relaxation and chemical shift during a
 * readout (bandwidth): one grid per class. */
Test(sim_grid, weave_gre_readout_classes)
{
    kw_phantom p;
    cr_assert_eq(kw_phantom_make(&p, "weave"), KW_OK);
    enum { N = 24, NC = 2, L = 2, T = (2 * L + 1) * (2 * L + 1) };
    kw_cdouble c[NC * T];
    coefs(c, NC * T);
    kw_sim_options o;
    kw_sim_options_init(&o);
    o.phantom = &p;
    o.n[0] = 1, o.n[1] = N, o.n[2] = N;
    o.ncoils = NC, o.coil_order = L, o.coil_period = 1.5, o.coil_coef = c;
    o.contrast = (kw_contrast){KW_CONTRAST_GRE, 3.0, 0.02, 0.1, 0, 0.5};
    o.bandwidth_hz = 20e3;
    o.df_hz = 30;
    compare(&o, (size_t)NC * N * N);
}

static void weave3d(kw_sim_options *o, kw_phantom *p, kw_cdouble *c)
{
    cr_assert_eq(kw_phantom_make(p, "weave3d"), KW_OK);
    kw_sim_options_init(o);
    o->phantom = p;
    o->n[0] = 8, o->n[1] = 10, o->n[2] = 12;
    o->ncoils = 2, o->coil_order = 2, o->coil_order_z = 1, o->coil_period = 1.5;
    coefs(c, 2 * 75);
    o->coil_coef = c;
    o->contrast = (kw_contrast){KW_CONTRAST_GRE, 3.0, 0.01, 0.05, 0, 0.4};
    o->bandwidth_hz = 30e3;
}

Test(sim_grid, weave3d)
{
    kw_phantom p;
    kw_sim_options o;
    kw_cdouble c[2 * 75];
    weave3d(&o, &p, c);
    compare(&o, 2 * 8 * 10 * 12);
}

/* A memory limit that refuses the whole grid: it is made in bands of
 * planes; one that refuses even one plane's band: the per-sample path. */
Test(sim_grid, bands_and_fallback_under_a_memory_limit)
{
    kw_phantom p;
    kw_sim_options o;
    kw_cdouble c[2 * 75];
    weave3d(&o, &p, c);
    const size_t total = 2 * 8 * 10 * 12;
    kw_cfloat *a = kw_alloc_n(total, sizeof *a), *b = kw_alloc_n(total, sizeof *b);
    cr_assert(a && b);
    cr_assert_eq(run(&o, 1, a), 0);
    /* the grid of every class at once: find its size */
    size_t before = kw_memory_in_use();
    kw_sim *s = NULL;
    o.per_sample = 0;
    cr_assert_eq(kw_sim_create(&s, &o), KW_OK);
    size_t whole = kw_memory_in_use() - before;
    kw_sim_destroy(s);
    kw_memory_set_limit(before + whole / 2);
    cr_expect_eq(run(&o, 0, b), 1);
    kw_memory_set_limit(0);
    double r = relmax(b, a, total);
    cr_expect(r <= 1e-6, "bands vs per-sample: %g", r);
    /* the per-sample path's own memory, and a little more */
    o.per_sample = 1;
    cr_assert_eq(kw_sim_create(&s, &o), KW_OK);
    size_t own = kw_memory_in_use() - before;
    kw_sim_destroy(s);
    cr_assert(own + 4096 < whole / 4, "%zu %zu", own, whole);
    memset(b, 0, total * sizeof *b);
    kw_memory_set_limit(before + own + 4096);
    cr_expect_eq(run(&o, 0, b), 0);
    kw_memory_set_limit(0);
    cr_expect(relmax(b, a, total) == 0, "the per-sample path when the grid is refused");
    kw_free(a);
    kw_free(b);
}
