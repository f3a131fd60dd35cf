/* test_fft.c: the centered unitary FFT against a direct DFT in double
 * (DEVELOPERS.md: naive reference, odd and prime sizes) and its properties. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_fft.h"

/* Direct centered unitary DFT of one block in double: index i of an axis of
 * length N stands for i - floor(N/2). */
static void naive(const float complex *x, double complex *y, int rank,
                  const size_t *d, int sign)
{
    size_t D[3] = {1, 1, 1};
    for (int i = 0; i < rank; i++)
        D[3 - rank + i] = d[i];
    size_t n = D[0] * D[1] * D[2];
    for (size_t k = 0; k < n; k++) {
        long k0 = (long)(k / (D[1] * D[2])) - (long)(D[0] / 2);
        long k1 = (long)((k / D[2]) % D[1]) - (long)(D[1] / 2);
        long k2 = (long)(k % D[2]) - (long)(D[2] / 2);
        double complex acc = 0;
        for (size_t m = 0; m < n; m++) {
            long m0 = (long)(m / (D[1] * D[2])) - (long)(D[0] / 2);
            long m1 = (long)((m / D[2]) % D[1]) - (long)(D[1] / 2);
            long m2 = (long)(m % D[2]) - (long)(D[2] / 2);
            double ph = (double)k0 * m0 / D[0] + (double)k1 * m1 / D[1] +
                        (double)k2 * m2 / D[2];
            acc += x[m] * cexp(sign * 2 * KW_PI * I * ph);
        }
        y[k] = acc / sqrt((double)n);
    }
}

static void check_size(int rank, size_t d0, size_t d1, size_t d2, size_t batch)
{
    size_t d[3] = {d0, d1, d2};
    kw_fft_plan *p;
    cr_assert_eq(kw_fft_create(&p, rank, d, batch, KW_FFT_ESTIMATE), KW_OK, "%s",
                 kw_last_error());
    size_t n = kw_fft_size(p);
    float complex *x = kw_alloc(n * batch * sizeof *x);
    float complex *orig = kw_alloc(n * batch * sizeof *x);
    double complex *ref = malloc(n * sizeof *ref);
    srand(7);
    for (size_t i = 0; i < n * batch; i++)
        orig[i] = x[i] = (rand() / (float)RAND_MAX - 0.5f) + I * (rand() / (float)RAND_MAX - 0.5f);
    for (int dir = 0; dir < 2; dir++) {
        for (size_t i = 0; i < n * batch; i++)
            x[i] = orig[i];
        cr_assert_eq(dir ? kw_fft_inverse(p, x) : kw_fft_forward(p, x), KW_OK);
        for (size_t b = 0; b < batch; b++) {
            naive(orig + b * n, ref, rank, d, dir ? +1 : -1);
            double num = 0, den = 0;
            for (size_t i = 0; i < n; i++) {
                num += pow(cabs(x[b * n + i] - ref[i]), 2);
                den += pow(cabs(ref[i]), 2);
            }
            cr_expect(sqrt(num / den) < 1e-5, "rank %d dims %zu %zu %zu dir %d: rel err %g",
                      rank, d0, d1, d2, dir, sqrt(num / den));
        }
    }
    /* round trip and Parseval (unitary) */
    for (size_t i = 0; i < n * batch; i++)
        x[i] = orig[i];
    kw_fft_forward(p, x);
    double e0 = 0, e1 = 0;
    for (size_t i = 0; i < n * batch; i++) {
        e0 += pow(cabs(orig[i]), 2);
        e1 += pow(cabs(x[i]), 2);
    }
    cr_expect(fabs(e1 - e0) / e0 < 1e-5, "Parseval: %g vs %g", e1, e0);
    kw_fft_inverse(p, x);
    double err = 0;
    for (size_t i = 0; i < n * batch; i++)
        err += pow(cabs(x[i] - orig[i]), 2);
    cr_expect(sqrt(err / e0) < 1e-6, "round trip %g", sqrt(err / e0));
    kw_free(x);
    kw_free(orig);
    free(ref);
    kw_fft_destroy(p);
}

Test(fft, even_sizes) { check_size(1, 16, 0, 0, 3); check_size(2, 8, 12, 0, 2); check_size(3, 4, 6, 8, 2); }
Test(fft, odd_and_prime_sizes) { check_size(1, 7, 0, 0, 2); check_size(2, 5, 13, 0, 2); check_size(3, 3, 5, 7, 1); }
Test(fft, mixed_even_odd) { check_size(2, 6, 9, 0, 3); check_size(3, 2, 3, 4, 1); }

Test(fft, delta_at_centre_is_flat)
{
    /* The image-space delta at index N/2 (x = 0) has flat k-space 1/sqrt(N). */
    size_t d[2] = {8, 8};
    kw_fft_plan *p;
    kw_fft_create(&p, 2, d, 1, KW_FFT_ESTIMATE);
    float complex *x = kw_alloc(64 * sizeof *x);
    x[4 * 8 + 4] = 1;
    kw_fft_forward(p, x);
    for (int i = 0; i < 64; i++)
        cr_expect(cabsf(x[i] - 0.125f) < 1e-6f);
    kw_free(x);
    kw_fft_destroy(p);
}

Test(fft, bad_arguments)
{
    kw_fft_plan *p;
    size_t d[2] = {8, 0};
    cr_expect_eq(kw_fft_create(&p, 2, d, 1, 0), KW_EINVAL);
    cr_expect_null(p);
    cr_expect_eq(kw_fft_create(&p, 4, d, 1, 0), KW_EINVAL);
    cr_expect_eq(kw_fft_create(&p, 1, d, 0, 0), KW_EINVAL);
    kw_fft_destroy(NULL);
}

/* Reproducible mode (kw_fft_set_reproducible): measured plans are not made and
 * wisdom is not taken in, so a measured plan equals an estimated one bit for
 * bit; the setting reads back and can be turned off again. */
Test(fft, reproducible_mode_plans_without_timing)
{
    const size_t d[2] = {48, 40};
    size_t n = d[0] * d[1];
    float complex *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    cr_assert(a && b);
    for (size_t i = 0; i < n; i++)
        a[i] = b[i] = (float)((i * 37) % 101) - 50.0f + I * (float)((i * 11) % 23);
    kw_fft_set_reproducible(1);
    cr_assert_eq(kw_fft_reproducible(), 1);
    char *w = kw_fft_wisdom_export();
    cr_assert_not_null(w);
    cr_assert_eq(kw_fft_wisdom_import(w), KW_OK); /* accepted, not used */
    free(w);
    kw_fft_plan *pm = NULL, *pe = NULL;
    cr_assert_eq(kw_fft_create(&pm, 2, d, 1, KW_FFT_MEASURE), KW_OK);
    cr_assert_eq(kw_fft_create(&pe, 2, d, 1, KW_FFT_ESTIMATE), KW_OK);
    cr_assert_eq(kw_fft_forward(pm, a), KW_OK);
    cr_assert_eq(kw_fft_forward(pe, b), KW_OK);
    cr_assert(memcmp(a, b, n * sizeof *a) == 0);
    kw_fft_destroy(pm);
    kw_fft_destroy(pe);
    kw_fft_set_reproducible(0);
    cr_assert_eq(kw_fft_reproducible(), 0);
    free(a);
    free(b);
}
