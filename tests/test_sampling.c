/* test_sampling.c: Cartesian masks: geometry, reproducibility, Poisson-disc
 * distances, variable density against its target, bad input. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_sampling.h"

static uint8_t *make(const kw_mask_options *o)
{
    uint8_t *m = malloc(o->dims[1] * o->dims[0]);
    cr_assert_eq(kw_mask_make(o, m, NULL), KW_OK, "%s", kw_last_error());
    return m;
}

/* Uniform R: every R-th line through k = 0 (index N/2) plus the ACS block
 * [N/2 - A/2, N/2 - A/2 + A) (definition, kw_sampling.h). */
Test(sampling, uniform_lines_and_acs)
{
    kw_mask_options o;
    kw_mask_options_init(&o);
    o.kind = KW_MASK_UNIFORM;
    o.dims[1] = 64;
    o.accel_y = 4;
    uint8_t *m = make(&o);
    for (size_t i = 0; i < 64; i++)
        cr_expect_eq(m[i], ((long)i - 32) % 4 == 0, "line %zu", i);
    free(m);
    o.acs_y = 10;
    m = make(&o);
    for (size_t i = 0; i < 64; i++)
        cr_expect_eq(m[i], ((long)i - 32) % 4 == 0 || (i >= 27 && i < 37), "line %zu", i);
    free(m);
}

Test(sampling, partial_fourier_and_ellipse)
{
    kw_mask_options o;
    kw_mask_options_init(&o);
    o.dims[1] = 64;
    o.fraction = 0.625; /* keep the last 40 of 64 lines */
    uint8_t *m = make(&o);
    for (size_t i = 0; i < 64; i++)
        cr_expect_eq(m[i], i >= 24);
    free(m);
    kw_mask_options_init(&o);
    o.dims[1] = 32;
    o.dims[0] = 16;
    o.ellipse = 1;
    m = make(&o);
    size_t n = 0;
    for (size_t i = 0; i < 32 * 16; i++)
        n += m[i];
    /* points of the 32 x 16 grid inside the inscribed ellipse: close to its
     * area pi/4 x 512 = 402 (lattice-point count, +- the perimeter ~ 40) */
    cr_expect(n > 362 && n < 442, "%zu inside", n);
    cr_expect_eq(m[0], 0); /* corner */
    cr_expect_eq(m[8 * 32 + 16], 1); /* centre */
    free(m);
}

/* CAIPIRINHA lattice (Breuer et al. 2006): 2x2 with shift 1 samples one
 * point in four, and sampled kz rows alternate their ky offset. */
Test(sampling, lattice_shift)
{
    kw_mask_options o;
    kw_mask_options_init(&o);
    o.kind = KW_MASK_LATTICE;
    o.dims[1] = 16;
    o.dims[0] = 8;
    o.accel_y = 2;
    o.accel_z = 2;
    o.shift = 1;
    uint8_t *m = make(&o);
    size_t n = 0;
    for (size_t z = 0; z < 8; z++)
        for (size_t y = 0; y < 16; y++) {
            long ky = (long)y - 8, kz = (long)z - 4;
            int want = kz % 2 == 0 && ((ky - kz / 2) % 2 + 2) % 2 == 0;
            cr_expect_eq(m[z * 16 + y], want, "z %zu y %zu", z, y);
            n += m[z * 16 + y];
        }
    cr_expect_eq(n, 32);
    free(m);
}

Test(sampling, same_seed_same_mask)
{
    kw_mask_options o;
    kw_mask_options_init(&o);
    o.dims[1] = 48;
    o.dims[0] = 40;
    o.accel_y = 5;
    o.acs_y = 8;
    for (int kind = KW_MASK_RANDOM; kind <= KW_MASK_POISSON; kind++) {
        o.kind = (kw_mask_kind)kind;
        o.seed = 11;
        uint8_t *a = make(&o), *b = make(&o);
        cr_expect_eq(memcmp(a, b, 48 * 40), 0);
        o.seed = 12;
        uint8_t *c = make(&o);
        cr_expect_neq(memcmp(a, c, 48 * 40), 0);
        free(a);
        free(b);
        free(c);
    }
}

/* Poisson-disc (Bridson 2007): no two samples closer than the requested
 * radius. With power 0 the radius is one constant s everywhere; with a
 * variable radius no pair is closer than the smaller of its two radii. */
Test(sampling, poisson_minimum_distance)
{
    for (int variable = 0; variable <= 1; variable++) {
        kw_mask_options o;
        kw_mask_options_init(&o);
        o.kind = KW_MASK_POISSON;
        o.dims[1] = 64;
        o.dims[0] = 48;
        o.accel_y = variable ? 4 : 6;
        o.power = variable ? 2 : 0;
        o.seed = 5;
        double s;
        cr_assert_eq(kw_mask_poisson_scale(&o, &s), KW_OK);
        uint8_t *m = make(&o);
        size_t n = 0, pts[64 * 48];
        for (size_t i = 0; i < 64 * 48; i++)
            if (m[i])
                pts[n++] = i;
        double worst = INFINITY;
        for (size_t a = 0; a < n; a++)
            for (size_t b = a + 1; b < n; b++) {
                double dy = (double)(pts[a] % 64) - (double)(pts[b] % 64);
                double dz = (double)(pts[a] / 64) - (double)(pts[b] / 64);
                double d = sqrt(dy * dy + dz * dz);
                double ra = kw_poisson_radius(&o, s, pts[a] % 64, pts[a] / 64);
                double rb = kw_poisson_radius(&o, s, pts[b] % 64, pts[b] / 64);
                double r = ra < rb ? ra : rb;
                if (d / r < worst)
                    worst = d / r;
            }
        cr_expect(worst >= 1.0 - 1e-12, "closest pair at %.4f of its radius", worst);
        /* the acceleration asked for, within 5 % (bisection on the radius;
         * tolerance ours, no source). A constant radius on a grid reaches
         * only a few counts (grid distances are square roots of integers),
         * so the target is checked for the variable-density pattern only. */
        double R = 64.0 * 48.0 / (double)n;
        if (variable)
            cr_expect(fabs(R - o.accel_y) < 0.05 * o.accel_y, "R %.3f for %g", R, o.accel_y);
        else
            cr_expect(s > 1.5, "constant radius %g", s);
        free(m);
    }
}

/* Variable-density random sampling (Lustig et al. 2007): each point is a
 * Bernoulli draw with probability p = min(1, c (1 - rho)^d), c chosen so the
 * expected count is N / R. Over many seeds the sampled frequency of every
 * ring of points must match the mean target p within 5 standard errors of
 * the binomial mean (statistical tolerance). */
Test(sampling, random_density_matches_target)
{
    kw_mask_options o;
    kw_mask_options_init(&o);
    o.kind = KW_MASK_RANDOM;
    o.dims[1] = 32;
    o.dims[0] = 32;
    o.accel_y = 4;
    o.acs_y = 6;
    o.power = 2;
    const size_t n = 32 * 32;
    const int seeds = 300;
    uint8_t *m = malloc(n);
    float *p = malloc(n * sizeof *p);
    double *freq = calloc(n, sizeof *freq);
    double psum = 0;
    for (int s = 0; s < seeds; s++) {
        o.seed = (uint64_t)s;
        cr_assert_eq(kw_mask_make(&o, m, p), KW_OK);
        for (size_t i = 0; i < n; i++)
            freq[i] += m[i];
    }
    for (size_t i = 0; i < n; i++)
        psum += p[i];
    /* p is stored as float: 1024 roundings of 6e-8 relative each */
    cr_expect(fabs(psum - 256.0) < 1e-3, "expected count %.6f, want N/R = 256", psum);
    /* rings of width 2 delta-k */
    for (int ring = 0; ring < 12; ring++) {
        double want = 0, var = 0, got = 0;
        int cnt = 0;
        for (size_t i = 0; i < n; i++) {
            double y = (double)(i % 32) - 16, z = (double)(i / 32) - 16;
            if ((int)(sqrt(y * y + z * z) / 2) != ring)
                continue;
            want += p[i];
            var += p[i] * (1 - p[i]);
            got += freq[i] / seeds;
            cnt++;
        }
        double se = sqrt(var / seeds);
        cr_expect(fabs(got - want) <= 5 * se + 1e-9, "ring %d: %.3f vs %.3f (se %.3f)", ring,
                  got, want, se);
    }
    free(m);
    free(p);
    free(freq);
}

Test(sampling, bad_input)
{
    kw_mask_options o;
    kw_mask_options_init(&o);
    o.kind = KW_MASK_UNIFORM;
    o.dims[1] = 64;
    uint8_t m[64 * 64];
    o.accel_y = 65;
    cr_expect_eq(kw_mask_make(&o, m, NULL), KW_ERANGE);
    cr_expect(strstr(kw_last_error(), "accel") != NULL);
    o.accel_y = 2.5;
    cr_expect_eq(kw_mask_make(&o, m, NULL), KW_ERANGE);
    o.accel_y = 2;
    o.acs_y = 65;
    cr_expect_eq(kw_mask_make(&o, m, NULL), KW_ERANGE);
    cr_expect(strstr(kw_last_error(), "acs") != NULL);
    o.acs_y = 0;
    o.fraction = 0.5;
    cr_expect_eq(kw_mask_make(&o, m, NULL), KW_ERANGE);
    o.fraction = 1.01;
    cr_expect_eq(kw_mask_make(&o, m, NULL), KW_ERANGE);
    o.fraction = 1;
    o.kind = KW_MASK_RANDOM;
    o.accel_y = 8;
    o.acs_y = 20; /* 20 ACS lines > 64 / 8 */
    cr_expect_eq(kw_mask_make(&o, m, NULL), KW_EINFEASIBLE);
    o.kind = KW_MASK_LATTICE;
    o.acs_y = 0;
    cr_expect_eq(kw_mask_make(&o, m, NULL), KW_EINVAL); /* needs 3-D */
}

/* The growable options (kw_base.h, docs/api.md "The object model"): init
 * fills the documented defaults and struct_size; a struct never initialised
 * is refused naming "options"; an older caller's shorter struct (one without
 * `seed`) gets the default seed 0 for the field it lacks. */
Test(sampling, options_init_and_older_callers)
{
    kw_mask_options o;
    memset(&o, 0xa5, sizeof o);
    kw_mask_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    cr_expect_eq(o.kind, KW_MASK_FULL);
    cr_expect_eq(o.dims[0], 1);
    cr_expect_eq(o.dims[1], 0);
    cr_expect_eq(o.accel_y, 1.0);
    cr_expect_eq(o.accel_z, 1.0);
    cr_expect_eq(o.acs_y, 0);
    cr_expect_eq(o.acs_z, 0);
    cr_expect_eq(o.fraction, 1.0);
    cr_expect_eq(o.ellipse, 0);
    cr_expect_eq(o.power, 3.0);
    cr_expect_eq(o.shift, 1);
    cr_expect_eq(o.seed, 0);

    o.kind = KW_MASK_RANDOM;
    o.dims[1] = 64;
    o.accel_y = 3;
    o.acs_y = 8;
    uint8_t m[64], m0[64];
    kw_mask_options zero = o;
    zero.struct_size = 0;
    cr_expect_eq(kw_mask_make(&zero, m, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect_eq(kw_mask_fill(&zero, 2, (size_t[]){64, 4}, m, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect(isnan(kw_mask_density(&zero, 0, 0)));
    cr_expect_eq(kw_mask_allowed(&zero, 0, 0), 0);

    cr_assert_eq(kw_mask_make(&o, m0, NULL), KW_OK, "%s", kw_last_error()); /* seed 0 */
    kw_mask_options old = o;
    old.seed = 12345; /* beyond the older struct: must not be read */
    old.struct_size = offsetof(kw_mask_options, seed);
    cr_assert_eq(kw_mask_make(&old, m, NULL), KW_OK, "%s", kw_last_error());
    cr_expect_eq(memcmp(m, m0, sizeof m), 0);
    cr_expect_eq(kw_mask_density(&old, 5, 0), kw_mask_density(&o, 5, 0));
}
