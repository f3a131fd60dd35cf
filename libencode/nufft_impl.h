/* nufft_impl.h: internals shared by nufft.c (plan and execution) and
 * nufft_kernel.c (the kernel and the exact NDFT); not a public header. */
#ifndef NUFFT_IMPL_H
#define NUFFT_IMPL_H

#include <math.h>
#include <stddef.h>

#include "kw_nufft.h"

#define NUFFT_MAX_W 16

/* Kernel table: values every 1/NUFFT_TAB grid point over [-W/2 - 2h,
 * W/2 + 2h], read by cubic Lagrange interpolation; the error, ~h^4 |phi''''|
 * / 24 < 1e-11 relative to phi(0) for W <= 16, is far below single
 * precision, and a weight costs a dozen flops instead of a Bessel series. */
#define NUFFT_TAB 2048

/* I0 to full double precision (Abramowitz & Stegun 9.6.10). */
double nufft_bessel_i0(double x);
/* The kernel table: W * NUFFT_TAB + 5 values (malloc'd; NULL when out of
 * memory). */
float *nufft_kb_table(int W, double beta, double i0b);
/* The kernel's Fourier transform at nu cycles per grid point. */
double nufft_kb_phi_hat(double nu, int W, double beta, double i0b);
/* Smallest even n >= x whose factors are 2, 3, 5, 7 (FFTW's fast sizes). */
size_t nufft_nice_size(double x);

static inline float nufft_kb_lookup(const float *tab, int W, double t)
{
    if (fabs(t) > 0.5 * W)
        return 0.0f;
    double u = (t + 0.5 * W) * NUFFT_TAB + 2.0;
    int i = (int)u;
    double f = u - i;
    double c0 = -f * (f - 1) * (f - 2) / 6, c1 = (f + 1) * (f - 1) * (f - 2) / 2;
    double c2 = -(f + 1) * f * (f - 2) / 2, c3 = (f + 1) * f * (f - 1) / 6;
    return (float)(c0 * tab[i - 1] + c1 * tab[i] + c2 * tab[i + 1] + c3 * tab[i + 2]);
}

#endif
