/* test_files.c: the command's HDF5 names (cli/h5.h), the trailing axis of 2
 * (cli/arrayio.h) and the bytes of the NIfTI-1 header (cli/nifti.h). h5py
 * and nibabel are the references in tests/ref/test_hdf5_input.py and
 * tests/ref/test_nifti_output.py; these are the edge cases. */
#include <criterion/criterion.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "arrayio.h"
#include "h5.h"
#include "nifti.h"

Test(files, hdf5_names)
{
    const char *d = NULL;
    cr_expect_eq(kw_h5_split("scan.h5:/k/space", &d), 7);
    cr_expect_str_eq(d, "/k/space");
    cr_expect_eq(kw_h5_split("dir.x/a.HDF5:ks", &d), 12);
    cr_expect_str_eq(d, "ks");
    cr_expect_eq(kw_h5_split("m.mat:/a.h5", &d), 5); /* the first FILE.ext: */
    cr_expect_str_eq(d, "/a.h5");
    cr_expect_eq(kw_h5_split("alone.h5", &d), 8); /* no dataset named */
    cr_expect_str_eq(d, "");
    cr_expect_eq(kw_h5_split("ks.npy", &d), 0);
    cr_expect_eq(kw_h5_split(".h5:/x", &d), 0); /* no file name */
    cr_expect_eq(kw_h5_split("a.h5x:/x", &d), 0);
    cr_expect(!kw_array_is_hdf5("-"));
}

Test(files, pairs_become_complex_in_place)
{
    float v[12] = {0};
    kw_array a = {.dtype = KW_F32, .ndim = 3, .dims = {2, 3, 2}, .data = v};
    cr_assert_eq(kw_array_pairs_to_complex(&a), 0);
    cr_expect_eq(a.dtype, KW_C64);
    cr_expect_eq(a.ndim, 2);
    cr_expect_eq(a.dims[1], 3);
    kw_array b = {.dtype = KW_F32, .ndim = 2, .dims = {2, 3}, .data = v};
    cr_expect_eq(kw_array_pairs_to_complex(&b), -1);
    kw_array c = {.dtype = KW_F32, .ndim = 1, .dims = {2}, .data = v};
    cr_expect_eq(kw_array_pairs_to_complex(&c), -1); /* one complex scalar is not an array */
}

static int32_t get32(const unsigned char *h, size_t o)
{
    return (int32_t)((uint32_t)h[o] | (uint32_t)h[o + 1] << 8 | (uint32_t)h[o + 2] << 16 | (uint32_t)h[o + 3] << 24);
}

static int get16(const unsigned char *h, size_t o) { return (int16_t)(h[o] | h[o + 1] << 8); }

static float getf(const unsigned char *h, size_t o)
{
    int32_t u = get32(h, o);
    float f;
    memcpy(&f, &u, 4);
    return f;
}

Test(files, nifti_header_bytes)
{
    kw_cfloat v[2 * 3 * 4];
    for (int i = 0; i < 24; i++)
        v[i] = (float)i;
    kw_array a = {.dtype = KW_C64, .ndim = 3, .dims = {2, 3, 4}, .data = v}; /* (coils, ny, nx) */
    kw_nifti_geom g = {.known = 1, .voxel_mm = {2.5, 3, 4}, .origin_mm = {-5, 3, 0}};
    char path[] = "/tmp/kw_nii_XXXXXX";
    int fd = mkstemp(path);
    cr_assert(fd >= 0);
    close(fd);
    cr_assert_eq(kw_nifti_write(path, &a, 2, &g), KW_OK, "%s", kw_last_error());
    unsigned char h[352 + sizeof v];
    FILE *f = fopen(path, "rb");
    cr_assert(f);
    size_t n = fread(h, 1, sizeof h, f);
    int extra = fgetc(f);
    fclose(f);
    unlink(path);
    cr_assert_eq(n, sizeof h);
    cr_expect_eq(extra, EOF);
    cr_expect_eq(get32(h, 0), 348);
    int dim[8] = {4, 4, 3, 1, 2, 1, 1, 1};
    for (int i = 0; i < 8; i++)
        cr_expect_eq(get16(h, 40 + 2 * (size_t)i), dim[i], "dim[%d]", i);
    cr_expect_eq(get16(h, 70), 32);
    cr_expect_eq(get16(h, 72), 64);
    cr_expect_eq(getf(h, 76), -1.0f); /* qfac */
    cr_expect_eq(getf(h, 80), 2.5f);
    cr_expect_eq(getf(h, 84), 3.0f);
    cr_expect_eq(getf(h, 88), 4.0f);
    cr_expect_eq(getf(h, 108), 352.0f);
    cr_expect_eq(h[123], 2); /* mm */
    cr_expect_eq(get16(h, 252), 1);
    cr_expect_eq(get16(h, 254), 1);
    cr_expect_eq(getf(h, 296 + 4), -3.0f); /* srow_y[1]: the row index runs down */
    cr_expect_eq(memcmp(h + 344, "n+1\0", 4), 0);
    cr_expect_eq(memcmp(h + 352, v, sizeof v), 0);
}

Test(files, nifti_refuses_what_it_cannot_hold)
{
    float v[4] = {0};
    kw_nifti_geom g = {0};
    kw_array a = {.dtype = KW_F32, .ndim = 1, .dims = {4}, .data = v};
    cr_expect_eq(kw_nifti_write("/tmp/kw_never.nii", &a, 1, &g), KW_EINVAL);
    kw_array b = {.dtype = KW_F32, .ndim = 2, .dims = {2, 2}, .data = v};
    cr_expect_eq(kw_nifti_write("-", &b, 2, &g), KW_EINVAL);
    cr_expect_eq(access("/tmp/kw_never.nii", F_OK), -1);
}
