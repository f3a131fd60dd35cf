/* test_wavelet.c: properties of the 2-D Daubechies transform. The match with
 * PyWavelets coefficient by coefficient is in tests/ref/test_wavelet_pywt.py. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>

#include "kw_rng.h"
#include "kw_wavelet.h"

static double norm2(const float *v, size_t n)
{
    double s = 0;
    for (size_t i = 0; i < n; i++)
        s += (double)v[i] * v[i];
    return s;
}

/* Orthonormal filters (Daubechies 1992, eq. 6.1.x: sum h = sqrt 2,
 * sum h[n] h[n+2k] = delta_k): the defining conditions of the table. */
Test(wavelet, filters_are_orthonormal)
{
    for (int order = 1; order <= 4; order++) {
        double h[8];
        int n;
        cr_assert_eq(kw_wavelet_filter(order, h, &n), KW_OK);
        cr_assert_eq(n, 2 * order);
        double s = 0;
        for (int i = 0; i < n; i++)
            s += h[i];
        cr_expect(fabs(s - sqrt(2.0)) < 1e-14, "db%d sum %.17g", order, s);
        for (int k = 0; 2 * k < n; k++) {
            double d = 0;
            for (int i = 0; i + 2 * k < n; i++)
                d += h[i] * h[i + 2 * k];
            cr_expect(fabs(d - (k == 0)) < 1e-14, "db%d shift %d: %.3g", order, k, d);
        }
    }
}

/* Perfect reconstruction and energy preservation (Parseval for an
 * orthonormal basis), real and complex, in place and out of place. */
Test(wavelet, round_trip_and_energy)
{
    const size_t sizes[][2] = {{64, 64}, {32, 48}, {16, 8}, {8, 8}};
    kw_rng r;
    kw_rng_seed(&r, 3);
    for (int order = 1; order <= 4; order++)
        for (size_t t = 0; t < sizeof sizes / sizeof sizes[0]; t++) {
            size_t ny = sizes[t][0], nx = sizes[t][1], n = ny * nx;
            int L = kw_wavelet_max_levels(ny, nx);
            kw_wavelet_plan *p;
            cr_assert_eq(kw_wavelet_create(&p, order, ny, nx, L), KW_OK);
            float *x = malloc(n * sizeof *x), *c = malloc(n * sizeof *c);
            float complex *z = malloc(n * sizeof *z), *zc = malloc(n * sizeof *zc);
            for (size_t i = 0; i < n; i++) {
                x[i] = (float)kw_rng_normal(&r);
                z[i] = (float)kw_rng_normal(&r) + I * (float)kw_rng_normal(&r);
            }
            cr_assert_eq(kw_wavelet_forward(p, x, c), KW_OK);
            double e0 = norm2(x, n), e1 = norm2(c, n);
            cr_expect(fabs(e1 - e0) < 1e-5 * e0, "db%d %zux%zu energy %g vs %g", order, ny, nx, e1, e0);
            cr_assert_eq(kw_wavelet_inverse(p, c, c), KW_OK); /* in place */
            double err = 0;
            for (size_t i = 0; i < n; i++)
                err += (double)(c[i] - x[i]) * (c[i] - x[i]);
            cr_expect(sqrt(err / e0) < 1e-6, "db%d round trip %g", order, sqrt(err / e0));
            cr_assert_eq(kw_wavelet_forward_c(p, z, zc), KW_OK);
            cr_assert_eq(kw_wavelet_inverse_c(p, zc, zc), KW_OK);
            err = 0;
            double ez = 0;
            for (size_t i = 0; i < n; i++) {
                err += cabsf(zc[i] - z[i]) * cabsf(zc[i] - z[i]);
                ez += cabsf(z[i]) * cabsf(z[i]);
            }
            cr_expect(sqrt(err / ez) < 1e-6, "complex round trip %g", sqrt(err / ez));
            free(x);
            free(c);
            free(z);
            free(zc);
            kw_wavelet_destroy(p);
        }
}

/* Haar worked by hand: a 2x2 image [a b; c d] with h = (1,1)/sqrt2 and
 * b = (1,-1)/sqrt2 gives approximation (a+b+c+d)/2, top-right (high-pass
 * along x) (a-b+c-d)/2, bottom-left (high-pass along y) (a+b-c-d)/2 and
 * diagonal (a-b-c+d)/2; pywt.dwt2 gives the same (tests/ref). */
Test(wavelet, haar_2x2_by_hand)
{
    kw_wavelet_plan *p;
    cr_assert_eq(kw_wavelet_create(&p, 1, 2, 2, 1), KW_OK);
    float x[4] = {1, 2, 3, 5}, c[4];
    cr_assert_eq(kw_wavelet_forward(p, x, c), KW_OK);
    cr_expect(fabsf(c[0] - 11.0f / 2) < 1e-6f);      /* (1+2+3+5)/2 */
    cr_expect(fabsf(c[1] - (1 - 2 + 3 - 5) / 2.0f) < 1e-6f); /* along x */
    cr_expect(fabsf(c[2] - (1 + 2 - 3 - 5) / 2.0f) < 1e-6f); /* along y */
    cr_expect(fabsf(c[3] - (1 - 2 - 3 + 5) / 2.0f) < 1e-6f); /* diagonal */
    kw_wavelet_destroy(p);
}

Test(wavelet, bad_input)
{
    kw_wavelet_plan *p = (kw_wavelet_plan *)1;
    cr_expect_eq(kw_wavelet_create(&p, 5, 8, 8, 1), KW_EINVAL);
    cr_expect_null(p);
    cr_expect_eq(kw_wavelet_create(&p, 0, 8, 8, 1), KW_EINVAL);
    cr_expect_eq(kw_wavelet_create(&p, 2, 12, 8, 3), KW_EINVAL); /* 12 / 8 */
    cr_expect_eq(kw_wavelet_create(&p, 2, 0, 8, 1), KW_EINVAL);
    cr_expect_eq(kw_wavelet_create(&p, 2, 8, 8, -1), KW_EINVAL);
    cr_expect_eq(kw_wavelet_max_levels(12, 8), 2);
    cr_expect_eq(kw_wavelet_max_levels(7, 8), 0);
    kw_wavelet_destroy(NULL);
}
