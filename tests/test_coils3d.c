/* test_coils3d.c: two rings of loops and the 3-D series fit. References: the
 * on-axis field of a loop, B = mu0 I R^2 / (2 (R^2 + z^2)^(3/2)) (textbook
 * magnetostatics), for the z dependence of a loop's own axis; the fit of an
 * exact series must return its coefficients. */
#include <complex.h>
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>

#include "kw_coils.h"

/* One ring, in the plane z = 0: the 3-D sensitivity at z = 0 is the 2-D one. */
Test(coils3d, plane_equals_2d)
{
    kw_coil_ring ring = {6, 0.06, 0.3, {0.24, 0.24}, 1, 0.0, 0.2};
    double complex a[6], b[6];
    cr_assert_eq(kw_coil_ring_sens(&ring, 0.3, -0.4, a), KW_OK);
    cr_assert_eq(kw_coil_ring_sens3(&ring, 0.3, -0.4, 0.0, b), KW_OK);
    for (int c = 0; c < 6; c++)
        cr_expect(cabs(a[c] - b[c]) <= 1e-14 * cabs(a[c]) + 1e-300, "coil %d", c);
}

/* Two rings of one loop each, gap 0.1 m: at the centre the two loops are
 * at (0.3, 0, -0.05) and (-0.3, 0, +0.05) (the second turned by pi). By
 * symmetry both give the same |s| at the origin, and each is stronger on
 * its own side of z = 0: |s_0(z = -a)| > |s_0(z = +a)|. */
Test(coils3d, two_rings_symmetry)
{
    kw_coil_ring ring = {1, 0.06, 0.3, {0.24, 0.24}, 2, 0.1, 0.2};
    cr_assert_eq(kw_coil_ring_channels(&ring), 2);
    double complex s[2], lo[2], hi[2];
    cr_assert_eq(kw_coil_ring_sens3(&ring, 0, 0, 0, s), KW_OK);
    cr_expect(fabs(cabs(s[0]) - cabs(s[1])) < 1e-12);
    /* root-sum-of-squares 1 at the centre */
    cr_expect(fabs(cabs(s[0]) * cabs(s[0]) + cabs(s[1]) * cabs(s[1]) - 1) < 1e-12);
    cr_assert_eq(kw_coil_ring_sens3(&ring, 0, 0, -0.5, lo), KW_OK);
    cr_assert_eq(kw_coil_ring_sens3(&ring, 0, 0, 0.5, hi), KW_OK);
    cr_expect(cabs(lo[0]) > cabs(hi[0]) && cabs(hi[1]) > cabs(lo[1]));
    cr_expect(fabs(cabs(lo[0]) - cabs(hi[1])) < 1e-12 * cabs(lo[0]));
}

/* Along the loop's own axis (x axis for loop 0 of one ring, its centre at
 * x = d): |s| ~ B_axis(d - x) = mu0 R^2 / (2 (R^2 + (d - x)^2)^(3/2)). The
 * ratio of two points removes the normalisation. */
Test(coils3d, on_axis_ratio)
{
    double R = 0.05, d = 0.25;
    kw_coil_ring ring = {1, R, d, {0.2, 0.2}, 1, 0.0, 0.2};
    double complex a, b;
    /* x = +-0.5 of the half FOV: +-0.05 m */
    cr_assert_eq(kw_coil_ring_sens3(&ring, 0.5, 0, 0, &a), KW_OK);
    cr_assert_eq(kw_coil_ring_sens3(&ring, -0.5, 0, 0, &b), KW_OK);
    double za = d - 0.05, zb = d + 0.05;
    double want = pow((R * R + zb * zb) / (R * R + za * za), 1.5);
    cr_expect(fabs(cabs(a) / cabs(b) - want) < 1e-10 * want, "%g vs %g", cabs(a) / cabs(b), want);
}

/* An exact series of orders (1, 1) on 12 x 10 x 8 voxels: the fit returns
 * its coefficients and a zero residual. */
Test(coils3d, fit_recovers_series)
{
    const size_t nx = 12, ny = 10, nz = 8, nv = nx * ny * nz;
    const int L = 1, Lz = 1, P = 27;
    const double period = 1.5;
    double complex c0[27];
    for (int i = 0; i < P; i++)
        c0[i] = cos(1.0 + i) + I * sin(0.3 * i * i);
    float complex *m = malloc(nv * sizeof *m);
    cr_assert(m);
    for (size_t k = 0; k < nz; k++)
        for (size_t r = 0; r < ny; r++)
            for (size_t x = 0; x < nx; x++) {
                double u = ((double)x - nx / 2) / nx, v = ((double)r - ny / 2) / ny,
                       w = ((double)k - nz / 2) / nz;
                double complex f = 0;
                for (int zr = -Lz; zr <= Lz; zr++)
                    for (int q = -L; q <= L; q++)
                        for (int p = -L; p <= L; p++)
                            f += c0[((zr + Lz) * 3 + (q + L)) * 3 + (p + L)] *
                                 cexp(2.0 * I * KW_PI * (p * u + q * v + zr * w) / period);
                m[(k * ny + r) * nx + x] = (float complex)f;
            }
    double complex c[27];
    double res = 1;
    const size_t dims[3] = {nz, ny, nx}; /* C order */
    cr_assert_eq(kw_coil_fit3(m, 1, dims, NULL, L, Lz, period, c, &res), KW_OK);
    for (int i = 0; i < P; i++)
        cr_expect(cabs(c[i] - c0[i]) < 1e-5, "coef %d: %g", i, cabs(c[i] - c0[i]));
    cr_expect(res < 1e-6, "residual %g", res);
    free(m);
}

/* The ring's fov is in C order (y, x): a ring with fov (0.2, 0.4) m sees
 * the phantom point x = 0.5 at 0.5 * 0.5 * 0.4 = 0.1 m, as a ring with fov
 * (0.2, 0.2) sees x = 1; and y = 0.5 at 0.05 m, as that ring sees y = 0.5. */
Test(coils3d, fov_is_y_then_x)
{
    kw_coil_ring wide = {4, 0.06, 0.3, {0.2, 0.4}, 1, 0.0, 0.2};
    kw_coil_ring square = {4, 0.06, 0.3, {0.2, 0.2}, 1, 0.0, 0.2};
    double complex a[4], b[4];
    cr_assert_eq(kw_coil_ring_sens(&wide, 0.5, 0.0, a), KW_OK);
    cr_assert_eq(kw_coil_ring_sens(&square, 1.0, 0.0, b), KW_OK);
    for (int c = 0; c < 4; c++)
        cr_expect(cabs(a[c] - b[c]) <= 1e-14 * cabs(b[c]), "x: coil %d", c);
    cr_assert_eq(kw_coil_ring_sens(&wide, 0.0, 0.5, a), KW_OK);
    cr_assert_eq(kw_coil_ring_sens(&square, 0.0, 0.5, b), KW_OK);
    for (int c = 0; c < 4; c++)
        cr_expect(cabs(a[c] - b[c]) <= 1e-14 * cabs(b[c]), "y: coil %d", c);
}
