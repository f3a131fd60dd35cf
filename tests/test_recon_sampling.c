/* test_recon_sampling.c: the sampling read from Cartesian masks
 * (kw_cart_sampling_analyse), on masks built by hand with known answers. */
#include <criterion/criterion.h>
#include <stdlib.h>
#include <string.h>

#include "kw_coilsens.h"

static uint8_t *lines(size_t nz, size_t ny, size_t nx, int rz, int oz, int ry, int oy,
                      size_t acs_z, size_t acs_y)
{
    uint8_t *m = calloc(nz * ny * nx, 1);
    for (size_t z = 0; z < nz; z++)
        for (size_t y = 0; y < ny; y++) {
            int lat = (int)(z % (size_t)rz) == oz && (int)(y % (size_t)ry) == oy;
            int acs = (nz == 1 || (z >= nz / 2 - acs_z / 2 && z < nz / 2 + acs_z / 2)) &&
                      y >= ny / 2 - acs_y / 2 && y < ny / 2 + acs_y / 2;
            if (lat || acs)
                memset(m + (z * ny + y) * nx, 1, nx);
        }
    return m;
}

Test(sampling, uniform_1d_with_block)
{
    size_t d[3] = {1, 96, 40};
    uint8_t *m = lines(1, 96, 40, 1, 0, 3, 1, 0, 24);
    kw_cart_sampling s;
    cr_assert_eq(kw_cart_sampling_analyse(m, d, &s), KW_OK);
    cr_expect_eq(s.accel[1], 3);
    cr_expect_eq(s.offset[1], 1);
    cr_expect_eq(s.accel[2], 1);
    cr_expect(s.uniform);
    /* the block is the 24 lines 36..59 plus, at most, an adjacent lattice line */
    cr_expect(s.acs_n[1] >= 24 && s.acs_n[1] <= 25, "acs %zu", s.acs_n[1]);
    cr_expect(!s.partial[1]);
    free(m);
}

Test(sampling, uniform_2d_lattice)
{
    size_t d[3] = {20, 32, 8};
    uint8_t *m = lines(20, 32, 8, 2, 0, 2, 0, 12, 12);
    kw_cart_sampling s;
    cr_assert_eq(kw_cart_sampling_analyse(m, d, &s), KW_OK);
    cr_expect_eq(s.accel[0], 2);
    cr_expect_eq(s.accel[1], 2);
    cr_expect(s.uniform);
    cr_expect_eq(s.acs_n[0], 12);
    cr_expect_eq(s.acs_n[1], 12);
    free(m);
}

Test(sampling, irregular_and_partial)
{
    size_t d[3] = {1, 64, 16};
    uint8_t *m = lines(1, 64, 16, 1, 0, 1, 0, 0, 0);
    /* partial Fourier 5/8: first 24 lines missing */
    memset(m, 0, 24 * 16);
    kw_cart_sampling s;
    cr_assert_eq(kw_cart_sampling_analyse(m, d, &s), KW_OK);
    cr_expect(s.partial[1]);
    cr_expect_eq(s.lo[1], 24);
    cr_expect_eq(s.hi[1], 63);
    cr_expect(!s.partial[2]);
    /* a few irregular extra lines: not a lattice */
    memset(m, 0, 64 * 16);
    int rows[] = {3, 9, 10, 30, 31, 32, 33, 50, 61};
    for (size_t i = 0; i < sizeof rows / sizeof *rows; i++)
        memset(m + rows[i] * 16, 1, 16);
    cr_assert_eq(kw_cart_sampling_analyse(m, d, &s), KW_OK);
    cr_expect(!s.uniform);
    cr_expect_eq(s.accel[1], 1);
    memset(m, 0, 64 * 16);
    cr_expect_eq(kw_cart_sampling_analyse(m, d, &s), KW_EFORMAT);
    free(m);
}
