/* png.c: pictures of arrays through libpng, written atomically (kw_outfile).
 *
 * Grey-scale PNG, 8-bit (default) or 16-bit. A value v is mapped through the
 * window [lo, hi] as round(clamp((v - lo) / (hi - lo), 0, 1) * max), max 255
 * or 65535; NaN maps to 0. The automatic window is 0 .. the 99.5th percentile
 * of the values shown (lo is the minimum when a value is negative); the
 * percentile is numpy.percentile's default ("linear") definition: with the n
 * finite values sorted, position (n - 1) * 0.995, linear interpolation
 * between its neighbours (numpy.percentile documentation, method 'linear',
 * Hyndman & Fan 1996 definition 7). Phase pictures use the fixed window
 * -pi .. pi. A KW_U8 array holding only 0 and 1 (a sampling mask) is shown
 * black and white; other KW_U8 values are shown as they are (0..255).
 *
 * An array of 3 or more dimensions is a montage of its 2-D slices (the last
 * two axes), in C order, left to right then top to bottom, on a grid of
 * ceil(sqrt(S)) columns and ceil(S / columns) rows; unused tiles are black.
 * One window is used for the whole montage, so slices compare. */
#define _POSIX_C_SOURCE 200809L
#include "png.h" /* ours (cli/png.h); libpng's own header below */

/* -Icli puts our png.h ahead of libpng's, so name libpng's by its directory. */
#if defined(__has_include)
#if __has_include(<libpng16/png.h>)
#include <libpng16/png.h>
#else
#include <libpng/png.h>
#endif
#else
#include <libpng16/png.h>
#endif

#include <math.h>
#include <setjmp.h>
#include <stdlib.h>
#include <string.h>

#include "outfile.h"

/* libpng refuses (when writing too) pictures wider or taller than its
 * default user limit, PNG_USER_WIDTH_MAX / PNG_USER_HEIGHT_MAX (1000000). */
#define KW_PNG_MAX_SIDE 1000000u

void kw_png_opts_default(kw_png_opts *o)
{
    o->depth = 8;
    o->auto_window = 1;
    o->lo = o->hi = 0;
    o->part = KW_PART_MAG;
}

/* ---- percentile ------------------------------------------------------------ */

static void swapf(float *a, float *b)
{
    float t = *a;
    *a = *b;
    *b = t;
}

/* The k-th smallest of v[0..n) (0-based); reorders v. Quickselect with a
 * median-of-three pivot and a three-way partition, so that pictures with many
 * equal values (black backgrounds, masks) stay linear in time. */
static float select_kth(float *v, size_t n, size_t k)
{
    size_t left = 0, right = n; /* half-open [left, right) holds index k */
    while (right - left > 1) {
        size_t mid = left + (right - left) / 2;
        float a = v[left], b = v[mid], c = v[right - 1];
        float pivot = (a < b) ? ((b < c) ? b : (a < c ? c : a))
                              : ((a < c) ? a : (b < c ? c : b));
        /* Dutch national flag: [left, lt) < pivot, [lt, i) == pivot,
         * [gt, right) > pivot. */
        size_t lt = left, i = left, gt = right;
        while (i < gt) {
            if (v[i] < pivot)
                swapf(&v[lt++], &v[i++]);
            else if (v[i] > pivot)
                swapf(&v[i], &v[--gt]);
            else
                i++;
        }
        if (k < lt)
            right = lt;
        else if (k >= gt)
            left = gt;
        else
            return pivot;
    }
    return v[k];
}

/* numpy.percentile(x, q) (method 'linear') of the finite values of v[0..n),
 * using `work` (n floats) as scratch. Returns the count of finite values. */
static size_t percentile(const float *v, size_t n, double q, float *work, double *out)
{
    size_t m = 0;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i]))
            work[m++] = v[i];
    if (m == 0) {
        *out = 0;
        return 0;
    }
    double pos = (double)(m - 1) * q / 100.0;
    size_t k = (size_t)floor(pos);
    double frac = pos - (double)k;
    double a = select_kth(work, m, k);
    double b = a;
    if (frac > 0 && k + 1 < m) {
        /* After selection, [k+1, m) holds values >= a: its minimum is the
         * (k+1)-th smallest. */
        float mn = work[k + 1];
        for (size_t i = k + 2; i < m; i++)
            if (work[i] < mn)
                mn = work[i];
        b = mn;
    }
    /* numpy's _lerp: a + (b - a) * t, in double. */
    *out = a + (b - a) * frac;
    return m;
}

kw_status kw_png_window(const float *v, size_t n, float *lo, float *hi)
{
    KW_FAIL_IF(!v || n == 0, KW_EINVAL, "window: no values");
    float *work = kw_alloc_n(n, sizeof *work);
    KW_FAIL_IF(!work, KW_ENOMEM, "window: out of memory for %zu values", n);
    double p;
    size_t m = percentile(v, n, 99.5, work, &p);
    kw_free(work);
    float mn = 0;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i]) && v[i] < mn)
            mn = v[i];
    *lo = mn;
    *hi = (m == 0) ? 0.0f : (float)p;
    return KW_OK;
}

/* ---- values of the part asked for ---------------------------------------- */

static kw_status part_values(const kw_array *a, kw_part part, float *v, size_t n)
{
    if (a->dtype == KW_U8) {
        const uint8_t *x = a->data;
        for (size_t i = 0; i < n; i++)
            v[i] = (float)x[i];
        return KW_OK;
    }
    if (a->dtype == KW_F32) {
        const float *x = a->data;
        double mx = 0;
        for (size_t i = 0; i < n; i++) {
            float r = x[i];
            switch (part) {
            case KW_PART_MAG:
            case KW_PART_LOGMAG: v[i] = fabsf(r); break;
            case KW_PART_PHASE: v[i] = isnan(r) ? r : (r < 0 ? (float)KW_PI : 0.0f); break;
            case KW_PART_REAL: v[i] = r; break;
            case KW_PART_IMAG: v[i] = isnan(r) ? r : 0.0f; break;
            }
            if (isfinite(v[i]) && v[i] > mx)
                mx = v[i];
        }
        if (part == KW_PART_LOGMAG)
            for (size_t i = 0; i < n; i++)
                v[i] = mx > 0 ? (float)log1p(v[i] / (1e-3 * mx)) : 0.0f;
        return KW_OK;
    }
    if (a->dtype == KW_C64) {
        const float complex *x = a->data;
        double mx = 0;
        for (size_t i = 0; i < n; i++) {
            switch (part) {
            case KW_PART_MAG:
            case KW_PART_LOGMAG: v[i] = cabsf(x[i]); break;
            case KW_PART_PHASE: v[i] = cargf(x[i]); break;
            case KW_PART_REAL: v[i] = crealf(x[i]); break;
            case KW_PART_IMAG: v[i] = cimagf(x[i]); break;
            }
            if (isfinite(v[i]) && v[i] > mx)
                mx = v[i];
        }
        if (part == KW_PART_LOGMAG)
            for (size_t i = 0; i < n; i++)
                v[i] = mx > 0 ? (float)log1p((double)v[i] / (1e-3 * mx)) : 0.0f;
        return KW_OK;
    }
    return kw_set_error(KW_EINVAL, "picture: unsupported array type %d", (int)a->dtype);
}

/* ---- libpng plumbing --------------------------------------------------------- */

typedef struct png_err {
    jmp_buf jmp;
    char msg[160];
} png_err;

static void on_png_error(png_structp png, png_const_charp msg)
{
    png_err *e = png_get_error_ptr(png);
    snprintf(e->msg, sizeof e->msg, "%s", msg ? msg : "libpng error");
    longjmp(e->jmp, 1);
}

static void on_png_warning(png_structp png, png_const_charp msg)
{
    (void)png;
    (void)msg; /* libpng warnings are not failures; the CLI stays quiet */
}

/* Write `rows` (h rows of w * channels * depth/8 bytes, big-endian samples
 * for 16-bit) to `path` atomically. */
static kw_status write_png(const char *path, const unsigned char *pix, size_t w,
                           size_t h, int depth, int color)
{
    KW_FAIL_IF(w == 0 || h == 0, KW_EINVAL, "%s: empty picture (%zu x %zu)", path, w, h);
    KW_FAIL_IF(w > KW_PNG_MAX_SIDE || h > KW_PNG_MAX_SIDE, KW_EINVAL,
               "%s: picture of %zu x %zu pixels is larger than PNG writers "
               "accept (%u per side)", path, w, h, KW_PNG_MAX_SIDE);
    size_t chans = color == PNG_COLOR_TYPE_RGB ? 3 : 1;
    size_t stride = w * chans * (size_t)(depth / 8);

    kw_outfile out;
    kw_status st = kw_outfile_open(&out, path);
    if (st)
        return st;
    png_bytep *rowp = malloc(h * sizeof *rowp);
    if (!rowp) {
        kw_outfile_abort(&out);
        return kw_set_error(KW_ENOMEM, "%s: out of memory", path);
    }
    for (size_t y = 0; y < h; y++)
        rowp[y] = (png_bytep)(pix + y * stride);

    png_err err; /* written through `e` only: valid after longjmp */
    png_err *e = &err;
    e->msg[0] = '\0';
    png_structp png = png_create_write_struct(PNG_LIBPNG_VER_STRING, e,
                                              on_png_error, on_png_warning);
    png_infop info = png ? png_create_info_struct(png) : NULL;
    if (!png || !info) {
        png_destroy_write_struct(&png, &info);
        free(rowp);
        kw_outfile_abort(&out);
        return kw_set_error(KW_ENOMEM, "%s: cannot start the PNG writer", path);
    }
    if (setjmp(e->jmp)) {
        png_destroy_write_struct(&png, &info);
        free(rowp);
        kw_outfile_abort(&out);
        return kw_set_error(KW_EIO, "%s: PNG write failed: %s", path, e->msg);
    }
    png_init_io(png, out.fp);
    png_set_IHDR(png, info, (png_uint_32)w, (png_uint_32)h, depth, color,
                 PNG_INTERLACE_NONE, PNG_COMPRESSION_TYPE_DEFAULT,
                 PNG_FILTER_TYPE_DEFAULT);
    png_write_info(png, info);
    png_write_image(png, rowp);
    png_write_end(png, info);
    png_destroy_write_struct(&png, &info);
    free(rowp);
    return kw_outfile_commit(&out);
}

/* ---- public ---------------------------------------------------------------- */

kw_status kw_png_write_rgb8(const char *path, const uint8_t *rgb, size_t w, size_t h)
{
    KW_FAIL_IF(!path || !rgb, KW_EINVAL, "picture: no data");
    KW_FAIL_IF(w && h > SIZE_MAX / 3 / w, KW_ENOMEM, "%s: picture size overflows", path);
    return write_png(path, rgb, w, h, 8, PNG_COLOR_TYPE_RGB);
}

void kw_png_grid(size_t ns, size_t *cols, size_t *rows)
{
    size_t c = (size_t)ceil(sqrt((double)ns));
    while (c * c < ns) /* guard against sqrt rounding */
        c++;
    while (c > 1 && (c - 1) * (c - 1) >= ns)
        c--;
    *cols = c;
    *rows = (ns + c - 1) / c;
}

void kw_png_values_free(kw_png_values *pv)
{
    if (pv) {
        kw_free(pv->v);
        pv->v = NULL;
    }
}

/* Tile geometry: slices of (h, w), ns of them. */
static kw_status tile_shape(const kw_array *a, size_t *w, size_t *h, size_t *ns)
{
    KW_FAIL_IF(!a || a->ndim < 0 || a->ndim > KW_MAX_DIMS, KW_EINVAL,
               "picture: %d dimensions", a ? a->ndim : 0);
    *w = a->ndim >= 1 ? a->dims[a->ndim - 1] : 1;
    *h = a->ndim >= 2 ? a->dims[a->ndim - 2] : 1;
    *ns = 1;
    for (int i = 0; i + 2 < a->ndim; i++) {
        KW_FAIL_IF(a->dims[i] && *ns > SIZE_MAX / a->dims[i], KW_ENOMEM,
                   "shape: too many slices");
        *ns *= a->dims[i];
    }
    KW_FAIL_IF(*w == 0 || *h == 0 || *ns == 0, KW_EINVAL,
               "shape: the array is empty, nothing to draw");
    return KW_OK;
}

kw_status kw_png_values_make(const kw_array *a, const kw_png_opts *o, kw_png_values *pv)
{
    kw_png_opts def;
    if (!o) {
        kw_png_opts_default(&def);
        o = &def;
    }
    KW_FAIL_IF(!pv, KW_EINVAL, "picture: no output");
    memset(pv, 0, sizeof *pv);
    KW_FAIL_IF(!a || (!a->data && kw_array_count(a)), KW_EINVAL, "picture: no data");
    KW_FAIL_IF(o->depth != 8 && o->depth != 16, KW_EINVAL,
               "depth: %d bits is not supported (8 or 16)", o->depth);
    KW_FAIL_IF(o->part < KW_PART_MAG || o->part > KW_PART_LOGMAG, KW_EINVAL,
               "part: unknown part %d", (int)o->part);
    KW_FAIL_IF(a->ndim < 0 || a->ndim > KW_MAX_DIMS, KW_EINVAL,
               "picture: %d dimensions", a->ndim);
    if (!o->auto_window)
        KW_FAIL_IF(!isfinite(o->lo) || !isfinite(o->hi) || !(o->hi > o->lo), KW_EINVAL,
                   "window: %g:%g is not a window (HI must be above LO, both finite)",
                   (double)o->lo, (double)o->hi);

    size_t w, h, ns;
    kw_status st = tile_shape(a, &w, &h, &ns);
    if (st)
        return st;
    size_t n = ns * w * h;
    float *v = kw_alloc_n(n, sizeof *v);
    KW_FAIL_IF(!v, KW_ENOMEM, "picture: out of memory for %zu values", n);
    st = part_values(a, o->part, v, n);
    if (st) {
        kw_free(v);
        return st;
    }

    float lo, hi;
    if (!o->auto_window) {
        lo = o->lo;
        hi = o->hi;
    } else if (a->dtype == KW_U8) {
        float mx = 0;
        for (size_t i = 0; i < n; i++)
            if (v[i] > mx)
                mx = v[i];
        lo = 0;
        hi = mx <= 1 ? 1.0f : 255.0f; /* a 0/1 mask: black and white */
    } else if (o->part == KW_PART_PHASE) {
        lo = (float)-KW_PI;
        hi = (float)KW_PI;
    } else {
        st = kw_png_window(v, n, &lo, &hi);
        if (st) {
            kw_free(v);
            return st;
        }
    }
    pv->w = w;
    pv->h = h;
    pv->ns = ns;
    pv->lo = lo;
    pv->hi = hi;
    pv->v = v;
    return KW_OK;
}

double kw_png_level(const kw_png_values *pv, double val)
{
    double span = (double)pv->hi - (double)pv->lo;
    double t;
    if (isnan(val))
        t = 0;
    else if (!(span > 0)) /* a flat picture: all at or above hi */
        t = val > pv->lo ? 1.0 : 0.0;
    else
        t = (val - pv->lo) / span;
    return t < 0 ? 0 : (t > 1 ? 1 : t);
}

kw_status kw_png_write_array(const char *path, const kw_array *a, const kw_png_opts *o)
{
    kw_png_opts def;
    if (!o) {
        kw_png_opts_default(&def);
        o = &def;
    }
    KW_FAIL_IF(!path || !a || (!a->data && kw_array_count(a)), KW_EINVAL, "picture: no data");
    KW_FAIL_IF(o->depth != 8 && o->depth != 16, KW_EINVAL,
               "depth: %d bits is not supported (8 or 16)", o->depth);
    size_t w, h, ns, cols, rows;
    kw_status st = tile_shape(a, &w, &h, &ns);
    if (st)
        return st;
    kw_png_grid(ns, &cols, &rows);
    KW_FAIL_IF(w > KW_PNG_MAX_SIDE / cols || h > KW_PNG_MAX_SIDE / rows, KW_EINVAL,
               "shape: a picture of %zu x %zu tiles of %zu x %zu pixels is larger "
               "than PNG writers accept (%u per side)", cols, rows, w, h, KW_PNG_MAX_SIDE);
    kw_png_values pv;
    if ((st = kw_png_values_make(a, o, &pv)))
        return st;
    size_t W = cols * w, H = rows * h;
    size_t bps = (size_t)o->depth / 8;
    unsigned char *pix = kw_alloc_n(W * H, bps);
    if (!pix) {
        kw_png_values_free(&pv);
        return kw_set_error(KW_ENOMEM, "%s: out of memory for a %zu x %zu picture",
                            path, W, H);
    }
    double maxval = o->depth == 16 ? 65535.0 : 255.0;
    for (size_t s = 0; s < ns; s++) {
        size_t x0 = (s % cols) * w, y0 = (s / cols) * h;
        const float *src = pv.v + s * w * h;
        for (size_t y = 0; y < h; y++) {
            unsigned char *row = pix + ((y0 + y) * W + x0) * bps;
            for (size_t x = 0; x < w; x++) {
                unsigned q = (unsigned)lround(kw_png_level(&pv, src[y * w + x]) * maxval);
                if (bps == 2) {
                    row[2 * x] = (unsigned char)(q >> 8); /* PNG is big-endian */
                    row[2 * x + 1] = (unsigned char)(q & 0xff);
                } else {
                    row[x] = (unsigned char)q;
                }
            }
        }
    }
    kw_png_values_free(&pv);
    st = write_png(path, pix, W, H, o->depth, PNG_COLOR_TYPE_GRAY);
    kw_free(pix);
    return st;
}
