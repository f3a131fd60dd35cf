/* test_rssrecon.c: the fused FFT + root-sum-of-squares against the plain
 * path (kw_fft_inverse, then sqrt(sum |.|^2) in double), which is itself
 * checked against a direct DFT (test_fft.c) and numpy (tests/ref). */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_fft.h"
#include "kw_rng.h"
#include "kw_rssrecon.h"

static void check(int rank, size_t d0, size_t d1, size_t d2, size_t coils)
{
    size_t d[3] = {d0, d1, d2};
    size_t n = d0 * d1 * (rank == 3 ? d2 : 1);
    float complex *k = kw_alloc(coils * n * sizeof *k);
    float complex *w = kw_alloc(coils * n * sizeof *k);
    float *img = kw_alloc(n * sizeof *img);
    double *ref = calloc(n, sizeof *ref);
    kw_rng g;
    kw_rng_seed(&g, 11);
    for (size_t i = 0; i < coils * n; i++)
        w[i] = k[i] = (float)kw_rng_normal(&g) + I * (float)kw_rng_normal(&g);
    kw_fft_plan *p;
    cr_assert_eq(kw_fft_create(&p, rank, d, coils, 0), KW_OK);
    kw_fft_inverse(p, w);
    for (size_t c = 0; c < coils; c++)
        for (size_t i = 0; i < n; i++)
            ref[i] += pow(cabs(w[c * n + i]), 2);
    kw_rssrecon *r;
    cr_assert_eq(kw_rssrecon_create(&r, rank, d, coils, 0), KW_OK, "%s", kw_last_error());
    for (int rep = 0; rep < 2; rep++) { /* reusable, input untouched */
        cr_assert_eq(kw_rssrecon_execute(r, k, img), KW_OK);
        double num = 0, den = 0;
        for (size_t i = 0; i < n; i++) {
            num += pow(img[i] - sqrt(ref[i]), 2);
            den += ref[i];
        }
        cr_expect(sqrt(num / den) < 1e-6, "rank %d %zux%zux%zu: %g", rank, d0, d1, d2,
                  sqrt(num / den));
    }
    kw_rssrecon_destroy(r);
    kw_fft_destroy(p);
    kw_free(k);
    kw_free(w);
    kw_free(img);
    free(ref);
}

Test(rssrecon, even_2d) { check(2, 32, 48, 0, 5); }
Test(rssrecon, odd_2d) { check(2, 15, 17, 0, 3); }
Test(rssrecon, even_3d) { check(3, 8, 12, 16, 4); }
Test(rssrecon, one_coil) { check(2, 16, 16, 0, 1); }
Test(rssrecon, coil_groups) { check(2, 16, 32, 0, 17); } /* groups of 3 */
Test(rssrecon, two_threads)
{
    cr_assert_eq(kw_fft_setup(2), KW_OK);
    check(2, 32, 32, 0, 7);
    check(3, 8, 8, 8, 3);
    check(2, 16, 32, 0, 17);
    check(2, 64, 64, 0, 1); /* one coil through FFTW's threads */
}
Test(rssrecon, bad_args)
{
    kw_rssrecon *r;
    size_t d[2] = {8, 8};
    cr_expect_eq(kw_rssrecon_create(&r, 1, d, 2, 0), KW_EINVAL);
    cr_expect_eq(kw_rssrecon_create(&r, 2, d, 0, 0), KW_EINVAL);
    kw_rssrecon_destroy(NULL);
}

/* The image is the same bits for one thread (the sequential path: coils in
 * order) and two (whole coil groups per thread, or one coil through FFTW's
 * threads): the group sums are added in one order either way. */
static void same_bits(int rank, size_t d0, size_t d1, size_t d2, size_t coils)
{
    size_t d[3] = {d0, d1, d2};
    size_t n = d0 * d1 * (rank == 3 ? d2 : 1);
    float complex *k = kw_alloc(coils * n * sizeof *k);
    float *img[2] = {kw_alloc(n * sizeof(float)), kw_alloc(n * sizeof(float))};
    kw_rng g;
    kw_rng_seed(&g, 12);
    for (size_t i = 0; i < coils * n; i++)
        k[i] = (float)kw_rng_normal(&g) + I * (float)kw_rng_normal(&g);
    for (int t = 0; t < 2; t++) {
        cr_assert_eq(kw_fft_setup(t + 1), KW_OK);
        kw_rssrecon *r;
        cr_assert_eq(kw_rssrecon_create(&r, rank, d, coils, 0), KW_OK, "%s", kw_last_error());
        cr_assert_eq(kw_rssrecon_execute(r, k, img[t]), KW_OK);
        kw_rssrecon_destroy(r);
    }
    cr_expect(memcmp(img[0], img[1], n * sizeof(float)) == 0, "%zu coils: threads change bits",
              coils);
    kw_free(k);
    kw_free(img[0]);
    kw_free(img[1]);
}

Test(rssrecon, threads_same_bits)
{
    size_t coils[] = {1, 2, 3, 8, 9, 17, 32};
    for (size_t i = 0; i < sizeof coils / sizeof *coils; i++)
        same_bits(2, 32, 64, 0, coils[i]);
    same_bits(3, 8, 16, 32, 5);
    same_bits(3, 16, 16, 16, 1);
    same_bits(2, 256, 256, 0, 1);
}
