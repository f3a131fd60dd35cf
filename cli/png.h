/* png.h: pictures of arrays (libpng), written atomically.
 * A 2-D array is one picture (row 0 at the top); an array of 3 or more
 * dimensions is a montage of its 2-D slices (the last two axes), tiled in a
 * near-square grid. Complex arrays are shown by the part asked for. */
#ifndef KW_PNG_H
#define KW_PNG_H

#include <stdint.h>

#include "kw_base.h"

typedef enum kw_part {
    KW_PART_MAG = 0,
    KW_PART_PHASE,  /* -pi .. pi mapped to the full range */
    KW_PART_REAL,
    KW_PART_IMAG,
    KW_PART_LOGMAG  /* log(1 + |x| / (1e-3 max|x|)): k-space pictures */
} kw_part;

typedef struct kw_png_opts {
    int depth;       /* 8 (default) or 16 */
    int auto_window; /* 1: lo = 0 (min for real/imag/phase), hi = 99.5th percentile */
    float lo, hi;    /* window when auto_window == 0 */
    kw_part part;
} kw_png_opts;

/*! kw_png_opts_default(): depth 8, automatic window, magnitude. */
void kw_png_opts_default(kw_png_opts *o);

/*! kw_png_write_array(): picture of a KW_F32, KW_C64 or KW_U8 array. */
kw_status kw_png_write_array(const char *path, const kw_array *a,
                             const kw_png_opts *o);

/*! kw_png_write_rgb8(): an 8-bit RGB picture (w x h x 3 bytes, row 0 top). */
kw_status kw_png_write_rgb8(const char *path, const uint8_t *rgb, size_t w,
                            size_t h);

/* The values of a picture before they become pixels: kw_png_write_array()
 * and the figures (figure.h) share them, so both show the same window. */
typedef struct kw_png_values {
    size_t w, h;   /* one tile: the last two axes */
    size_t ns;     /* tiles (slices): the product of the other axes */
    float lo, hi;  /* the window (given, or the automatic one) */
    float *v;      /* ns * h * w values of the part shown (owned) */
} kw_png_values;

/*! kw_png_values_make(): the part asked for and its window; free the values
 * with kw_png_values_free(). */
kw_status kw_png_values_make(const kw_array *a, const kw_png_opts *o, kw_png_values *pv);

/*! kw_png_values_free(): release pv->v (pv itself is the caller's). */
void kw_png_values_free(kw_png_values *pv);

/*! kw_png_level(): a value's grey level 0..1 through the window (NaN: 0). */
double kw_png_level(const kw_png_values *pv, double val);

/*! kw_png_grid(): the bare montage's grid of `ns` tiles: ceil(sqrt(ns))
 * columns, as many rows as needed. */
void kw_png_grid(size_t ns, size_t *cols, size_t *rows);

/*! kw_png_window(): the automatic window of `n` values (0 .. 99.5th percentile
 * of the values; lo = minimum if any value is negative). */
kw_status kw_png_window(const float *v, size_t n, float *lo, float *hi);

#endif
