/* test_linalg.c: Cholesky factorisation and solve against a hand-worked
 * example and against the defining identities (A = L L^H, A x = b). */
#include <criterion/criterion.h>
#include <complex.h>
#include <math.h>

#include "kw_linalg.h"
#include "kw_rng.h"

/* Worked by hand: A = [[4, 2i], [-2i, 5]] = L L^H with
 * L = [[2, 0], [-i, 2]]: 2*2 = 4; (-i)*2 = -2i; |-i|^2 + 2^2 = 5. */
Test(linalg, hand_example)
{
    double complex a[4] = {4, 2 * I, -2 * I, 5};
    cr_assert_eq(kw_chol(a, 2), KW_OK);
    cr_expect(cabs(a[0] - 2) < 1e-15);
    cr_expect(cabs(a[2] - (-I)) < 1e-15);
    cr_expect(cabs(a[3] - 2) < 1e-15);
    double complex b[2] = {4 + 2 * I, 5 - 2 * I}; /* A [1, 1]^T */
    kw_chol_solve(a, 2, b);
    cr_expect(cabs(b[0] - 1) < 1e-14 && cabs(b[1] - 1) < 1e-14);
}

Test(linalg, random_hermitian_solve)
{
    enum { N = 12 };
    double complex m[N * N], a[N * N], l[N * N], x[N], b[N];
    kw_rng r;
    kw_rng_seed(&r, 5);
    for (int i = 0; i < N * N; i++)
        m[i] = kw_rng_normal(&r) + I * kw_rng_normal(&r);
    for (int i = 0; i < N; i++) /* A = M M^H + I: Hermitian positive definite */
        for (int j = 0; j < N; j++) {
            double complex s = i == j;
            for (int k = 0; k < N; k++)
                s += m[i * N + k] * conj(m[j * N + k]);
            a[i * N + j] = l[i * N + j] = s;
        }
    for (int i = 0; i < N; i++)
        x[i] = b[i] = kw_rng_normal(&r) + I * kw_rng_normal(&r);
    cr_assert_eq(kw_chol(l, N), KW_OK);
    kw_chol_solve(l, N, b); /* b <- A^-1 x */
    double err = 0, nx = 0;
    for (int i = 0; i < N; i++) {
        double complex s = 0;
        for (int k = 0; k < N; k++)
            s += a[i * N + k] * b[k];
        err += pow(cabs(s - x[i]), 2);
        nx += pow(cabs(x[i]), 2);
    }
    cr_expect(sqrt(err / nx) < 1e-12, "residual %g", sqrt(err / nx));
}

Test(linalg, not_positive_definite)
{
    double complex a[4] = {1, 2, 2, 1}; /* eigenvalues 3 and -1 */
    cr_expect_eq(kw_chol(a, 2), KW_ENUMERIC);
}
