/* test_rng.c: the seeded generator. */
#include <criterion/criterion.h>
#include <math.h>

#include "kw_rng.h"

/* Determinism: the same seed gives the same stream (the stream itself is
 * checked against an independent transcription of the published algorithm in
 * tests/ref/test_rng_ref.py). */
Test(rng, same_seed_same_stream)
{
    kw_rng a, b;
    kw_rng_seed(&a, 42);
    kw_rng_seed(&b, 42);
    for (int i = 0; i < 1000; i++)
        cr_assert_eq(kw_rng_u64(&a), kw_rng_u64(&b));
    kw_rng_seed(&b, 43);
    cr_expect_neq(kw_rng_u64(&a), kw_rng_u64(&b));
}

Test(rng, normal_moments)
{
    /* Mean 0, variance 1: for n = 200000 the standard error of the mean is
     * 1/sqrt(n) = 0.0022 and of the variance sqrt(2/n) = 0.0032; 5 sigma. */
    kw_rng r;
    kw_rng_seed(&r, 7);
    double s = 0, s2 = 0;
    const int n = 200000;
    for (int i = 0; i < n; i++) {
        double x = kw_rng_normal(&r);
        s += x;
        s2 += x * x;
    }
    double m = s / n, v = s2 / n - m * m;
    cr_expect(fabs(m) < 5 * 0.0022, "mean %g", m);
    cr_expect(fabs(v - 1) < 5 * 0.0032, "variance %g", v);
}

Test(rng, below_is_in_range_and_uniform)
{
    kw_rng r;
    kw_rng_seed(&r, 1);
    int counts[7] = {0};
    for (int i = 0; i < 70000; i++) {
        uint64_t v = kw_rng_below(&r, 7);
        cr_assert(v < 7);
        counts[v]++;
    }
    /* Each bin ~ 10000 +- 95 (binomial sd); 5 sd. */
    for (int i = 0; i < 7; i++)
        cr_expect(abs(counts[i] - 10000) < 480, "bin %d: %d", i, counts[i]);
}
