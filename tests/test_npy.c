/* test_npy.c: the .npy reader's size checks (before allocation) and a round
 * trip through a file. numpy itself is the reference in
 * tests/ref/test_npy_numpy.py; these are the edge cases. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "npy.h"

/* A version 1.0 file with header `dict` and `ndata` data bytes (zeros). */
static size_t make_npy(unsigned char *buf, size_t cap, const char *dict, size_t ndata)
{
    size_t hl = strlen(dict) + 1; /* + newline */
    size_t pad = (64 - (10 + hl) % 64) % 64;
    hl += pad;
    cr_assert(10 + hl + ndata <= cap);
    memcpy(buf, "\x93NUMPY\x01\x00", 8);
    buf[8] = (unsigned char)(hl & 0xff);
    buf[9] = (unsigned char)(hl >> 8);
    memcpy(buf + 10, dict, strlen(dict));
    memset(buf + 10 + strlen(dict), ' ', pad);
    buf[10 + hl - 1] = '\n';
    memset(buf + 10 + hl, 0, ndata);
    return 10 + hl + ndata;
}

Test(npy, parse_good_and_lying_shapes)
{
    unsigned char buf[512];
    kw_array a;
    size_t n = make_npy(buf, sizeof buf,
                        "{'descr': '<f4', 'fortran_order': False, 'shape': (3, 4), }", 48);
    cr_assert_eq(kw_npy_parse(buf, n, &a), KW_OK, "%s", kw_last_error());
    cr_expect_eq(a.dtype, KW_F32);
    cr_expect_eq(a.ndim, 2);
    cr_expect_eq(a.dims[0], 3);
    cr_expect_eq(a.dims[1], 4);
    kw_array_free(&a);

    /* Shape says 12 x 4 values, data holds 48 bytes: refused, nothing kept. */
    n = make_npy(buf, sizeof buf,
                 "{'descr': '<f4', 'fortran_order': False, 'shape': (12, 4), }", 48);
    cr_expect_eq(kw_npy_parse(buf, n, &a), KW_EFORMAT);
    cr_expect(strstr(kw_last_error(), "promises 192 bytes") != NULL, "%s", kw_last_error());
    cr_expect_null(a.data);

    /* Product overflows size_t. */
    n = make_npy(buf, sizeof buf,
                 "{'descr': '<c8', 'fortran_order': False, 'shape': "
                 "(4294967296, 4294967296, 2), }", 0);
    cr_expect_eq(kw_npy_parse(buf, n, &a), KW_EFORMAT);
    cr_expect(strstr(kw_last_error(), "overflows") != NULL, "%s", kw_last_error());
}

Test(npy, memory_limit_names_the_size)
{
    unsigned char buf[256];
    kw_array a;
    /* 1024 x 1024 complex64 = 8 MiB needed, limit 1 MiB. */
    size_t n = make_npy(buf, sizeof buf,
                        "{'descr': '<c8', 'fortran_order': False, 'shape': (1024, 1024), }", 0);
    kw_npy_set_limit((size_t)1 << 20);
    cr_expect_eq(kw_npy_parse(buf, n, &a), KW_ENOMEM);
    kw_npy_set_limit(0);
    cr_expect(strstr(kw_last_error(), "needs 8 MiB") != NULL, "%s", kw_last_error());
    cr_expect(strstr(kw_last_error(), "limit of 1 MiB") != NULL, "%s", kw_last_error());
    cr_expect_null(a.data);
}

Test(npy, round_trip_through_a_file)
{
    float v[6] = {1, -2, 3.5f, 0, 1e-30f, 7};
    kw_array a = {.dtype = KW_F32, .ndim = 2, .dims = {2, 3}, .data = v};
    char path[] = "/tmp/kw_npy_XXXXXX";
    int fd = mkstemp(path);
    cr_assert(fd >= 0);
    close(fd);
    cr_assert_eq(kw_npy_write(path, &a), KW_OK, "%s", kw_last_error());
    kw_array b;
    cr_assert_eq(kw_npy_read(path, &b), KW_OK, "%s", kw_last_error());
    unlink(path);
    cr_expect_eq(b.ndim, 2);
    cr_expect_eq(b.dims[1], 3);
    cr_expect_eq(memcmp(b.data, v, sizeof v), 0);
    kw_array_free(&b);
}
