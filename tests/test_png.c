/* test_png.c: PNG writer round trips, read back with libpng's own decoder
 * (the simplified png_image API), and the automatic window. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "png.h"
#if defined(__has_include) && __has_include(<libpng16/png.h>)
#include <libpng16/png.h>
#else
#include <libpng/png.h>
#endif

static char dir[64];

static void setup(void)
{
    snprintf(dir, sizeof dir, "/tmp/kw_png_XXXXXX");
    cr_assert_not_null(mkdtemp(dir));
}

static void teardown(void)
{
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    cr_expect_eq(system(cmd), 0);
}

/* Read a PNG with libpng into the given format; returns malloc'd pixels. */
static void *read_back(const char *path, png_uint_32 format, png_uint_32 *w, png_uint_32 *h)
{
    png_image im;
    memset(&im, 0, sizeof im);
    im.version = PNG_IMAGE_VERSION;
    cr_assert(png_image_begin_read_from_file(&im, path), "%s: %s", path, im.message);
    im.format = format;
    void *buf = malloc(PNG_IMAGE_SIZE(im));
    cr_assert(png_image_finish_read(&im, NULL, buf, 0, NULL), "%s", im.message);
    *w = im.width;
    *h = im.height;
    return buf;
}

TestSuite(png, .init = setup, .fini = teardown);

Test(png, gray8_round_trip_with_window)
{
    /* Window 0..10: v -> round(v / 10 * 255). */
    float v[2][5] = {{0, 1, 2, 5, 10}, {-3, 10.5f, 4, 8, 9}};
    kw_array a = {.dtype = KW_F32, .ndim = 2, .dims = {2, 5}, .data = v};
    kw_png_opts o;
    kw_png_opts_default(&o);
    o.auto_window = 0;
    o.lo = 0;
    o.hi = 10;
    o.part = KW_PART_REAL;
    char path[128];
    snprintf(path, sizeof path, "%s/a.png", dir);
    cr_assert_eq(kw_png_write_array(path, &a, &o), KW_OK, "%s", kw_last_error());
    png_uint_32 w, h;
    uint8_t *px = read_back(path, PNG_FORMAT_GRAY, &w, &h);
    cr_assert_eq(w, 5);
    cr_assert_eq(h, 2);
    const uint8_t want[10] = {0, 26, 51, 128, 255, 0, 255, 102, 204, 230};
    for (int i = 0; i < 10; i++)
        cr_expect_eq(px[i], want[i], "pixel %d: %d != %d", i, px[i], want[i]);
    free(px);
}

Test(png, gray16_round_trip)
{
    float v[4] = {0, 1, 32768, 65535};
    kw_array a = {.dtype = KW_F32, .ndim = 1, .dims = {4}, .data = v};
    kw_png_opts o;
    kw_png_opts_default(&o);
    o.depth = 16;
    o.auto_window = 0;
    o.lo = 0;
    o.hi = 65535;
    char path[128];
    snprintf(path, sizeof path, "%s/b.png", dir);
    cr_assert_eq(kw_png_write_array(path, &a, &o), KW_OK, "%s", kw_last_error());
    png_uint_32 w, h;
    /* PNG_FORMAT_LINEAR_Y: 16-bit grey; libpng treats 16-bit files as linear,
     * so the samples come back unchanged. */
    uint16_t *px = read_back(path, PNG_FORMAT_LINEAR_Y, &w, &h);
    cr_assert_eq(w, 4);
    cr_assert_eq(h, 1);
    for (int i = 0; i < 4; i++)
        cr_expect_eq(px[i], (uint16_t)v[i], "pixel %d: %u", i, px[i]);
    free(px);
}

Test(png, rgb8_round_trip)
{
    uint8_t rgb[2 * 3 * 3];
    for (size_t i = 0; i < sizeof rgb; i++)
        rgb[i] = (uint8_t)(i * 13 + 7);
    char path[128];
    snprintf(path, sizeof path, "%s/c.png", dir);
    cr_assert_eq(kw_png_write_rgb8(path, rgb, 3, 2), KW_OK, "%s", kw_last_error());
    png_uint_32 w, h;
    uint8_t *px = read_back(path, PNG_FORMAT_RGB, &w, &h);
    cr_assert_eq(w, 3);
    cr_assert_eq(h, 2);
    cr_expect_eq(memcmp(px, rgb, sizeof rgb), 0);
    free(px);
}

Test(png, montage_of_a_stack)
{
    /* 3 slices of 2 x 2: grid of 2 columns, 2 rows; the fourth tile black. */
    uint8_t m[3][2][2] = {{{1, 0}, {0, 1}}, {{1, 1}, {1, 1}}, {{0, 1}, {1, 0}}};
    kw_array a = {.dtype = KW_U8, .ndim = 3, .dims = {3, 2, 2}, .data = m};
    char path[128];
    snprintf(path, sizeof path, "%s/m.png", dir);
    cr_assert_eq(kw_png_write_array(path, &a, NULL), KW_OK, "%s", kw_last_error());
    png_uint_32 w, h;
    uint8_t *px = read_back(path, PNG_FORMAT_GRAY, &w, &h);
    cr_assert_eq(w, 4);
    cr_assert_eq(h, 4);
    const uint8_t want[16] = {255, 0, 255, 255, 0, 255, 255, 255,
                              0, 255, 0, 0, 255, 0, 0, 0};
    for (int i = 0; i < 16; i++)
        cr_expect_eq(px[i], want[i], "pixel %d: %d != %d", i, px[i], want[i]);
    free(px);
}

Test(png, window_worked_example)
{
    /* numpy.percentile([1..10], 99.5), method 'linear' (Hyndman & Fan
     * definition 7), by hand: position (10 - 1) * 0.995 = 8.955, between the
     * 9th and 10th smallest (9 and 10): 9 + 0.955 * (10 - 9) = 9.955. */
    float v[10] = {7, 3, 10, 1, 9, 2, 8, 4, 6, 5};
    float lo, hi;
    cr_assert_eq(kw_png_window(v, 10, &lo, &hi), KW_OK);
    cr_expect_float_eq(hi, 9.955f, 1e-5f);
    cr_expect_eq(lo, 0.0f);
    float w[3] = {-4, 0, 4};
    /* (3 - 1) * 0.995 = 1.99 -> 0 + 0.99 * 4 = 3.96; the minimum -4 is lo. */
    cr_assert_eq(kw_png_window(w, 3, &lo, &hi), KW_OK);
    cr_expect_float_eq(hi, 3.96f, 1e-5f);
    cr_expect_eq(lo, -4.0f);
    cr_expect_eq(kw_png_window(v, 0, &lo, &hi), KW_EINVAL);
}

Test(png, failures_leave_no_file)
{
    float v[4] = {1, 2, 3, 4};
    kw_array a = {.dtype = KW_F32, .ndim = 2, .dims = {2, 2}, .data = v};
    kw_png_opts o;
    kw_png_opts_default(&o);
    o.depth = 12;
    char path[128];
    snprintf(path, sizeof path, "%s/d.png", dir);
    cr_expect_eq(kw_png_write_array(path, &a, &o), KW_EINVAL);
    cr_expect(strstr(kw_last_error(), "depth") != NULL);
    o.depth = 8;
    o.auto_window = 0;
    o.lo = 2;
    o.hi = 1;
    cr_expect_eq(kw_png_write_array(path, &a, &o), KW_EINVAL);
    cr_expect(strstr(kw_last_error(), "window") != NULL);
    cr_expect_neq(access(path, F_OK), 0);
    /* A full device: the write error is reported. */
    kw_png_opts_default(&o);
    cr_expect_eq(kw_png_write_array("/dev/full", &a, &o), KW_EIO);
    /* A missing directory. */
    snprintf(path, sizeof path, "%s/nope/d.png", dir);
    cr_expect_eq(kw_png_write_array(path, &a, &o), KW_EIO);
    /* Too wide for PNG writers. */
    kw_array wide = {.dtype = KW_F32, .ndim = 1, .dims = {2000000}, .data = v};
    snprintf(path, sizeof path, "%s/e.png", dir);
    cr_expect_eq(kw_png_write_array(path, &wide, &o), KW_EINVAL);
    cr_expect_neq(access(path, F_OK), 0);
}
