/* linalg.c: Cholesky factorisation and solve (Golub & Van Loan, Matrix
 * Computations, 4th ed., algorithm 4.2.1, complex Hermitian form). */
#include "kw_linalg.h"

#include <math.h>

kw_status kw_chol(double complex *a, size_t n)
{
    for (size_t j = 0; j < n; j++) {
        double d = creal(a[j * n + j]);
        for (size_t k = 0; k < j; k++)
            d -= creal(a[j * n + k] * conj(a[j * n + k]));
        KW_FAIL_IF(!(d > 0), KW_ENUMERIC, "matrix not positive definite (pivot %zu)", j);
        d = sqrt(d);
        a[j * n + j] = d;
        for (size_t i = j + 1; i < n; i++) {
            double complex s = a[i * n + j];
            for (size_t k = 0; k < j; k++)
                s -= a[i * n + k] * conj(a[j * n + k]);
            a[i * n + j] = s / d;
        }
    }
    return KW_OK;
}

void kw_chol_solve(const double complex *l, size_t n, double complex *b)
{
    for (size_t i = 0; i < n; i++) {
        double complex s = b[i];
        for (size_t k = 0; k < i; k++)
            s -= l[i * n + k] * b[k];
        b[i] = s / creal(l[i * n + i]);
    }
    for (size_t i = n; i-- > 0;) {
        double complex s = b[i];
        for (size_t k = i + 1; k < n; k++)
            s -= conj(l[k * n + i]) * b[k];
        b[i] = s / creal(l[i * n + i]);
    }
}
