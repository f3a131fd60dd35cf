/* figure.h: an array's picture as a figure a reader can read on its own:
 * the picture (the same values and window as png.h's bare picture), a grey
 * bar beside it with tick values, the quantity and its units, a title, and
 * for stacks a montage whose tiles are separated by gaps and labelled
 * ("coil 0", "slice 2", ...). Drawn with cairo, written as an 8-bit RGB PNG
 * atomically (kw_outfile; "-" is standard output).
 *
 * Layout: white background, 12 px margins; a title line (if any) above; the
 * picture at an integer magnification (nearest neighbour) that brings a
 * single picture to at least 256 px, a montage tile to at least 128 px, on
 * its longer side; the bar (16 px wide, as tall as the picture) 16 px to its
 * right, lo at the bottom and hi at the top; ticks at 1, 2 or 5 x 10^k steps;
 * the bar's label "QUANTITY (UNITS)" written upwards at the far right.
 * Montage grid: kw_figure_grid(). */
#ifndef KW_FIGURE_H
#define KW_FIGURE_H

#include <stddef.h>

#include "png.h"

typedef struct kw_figure_opts {
    const char *title;      /* above the picture; NULL or "": none */
    const char *quantity;   /* beside the bar, e.g. "g-factor"; NULL: the part's name */
    const char *units;      /* "(UNITS)" after the quantity; NULL or "": none */
    const char *tile_label; /* montage tiles "WORD i" (i from 0, the index along the
                             * stack); NULL: tiles unlabelled; "": the index alone */
    const char *tile_names; /* "a,b,c": one name per tile, in stack order (instead of
                             * tile_label); the caller checks the count */
    size_t columns;         /* montage columns; 0: kw_figure_grid() */
} kw_figure_opts;

/*! kw_figure_opts_default(): no title, the part's name, no units, no tile labels. */
void kw_figure_opts_default(kw_figure_opts *f);

/*! kw_figure_write(): the figure of a KW_F32, KW_C64 or KW_U8 array into the
 * PNG `path`; `po` chooses the part and the window (its depth is not used:
 * figures are 8-bit). */
kw_status kw_figure_write(const char *path, const kw_array *a, const kw_png_opts *po,
                          const kw_figure_opts *fo);

/*! kw_figure_grid(): the montage grid of `ns` tiles: no empty tile where a
 * grid with columns >= rows and columns <= max(3, 3 rows) allows it (8 -> 4 x 2,
 * 6 -> 3 x 2, 10 -> 5 x 2), otherwise the fewest empty tiles (5 -> 3 x 2,
 * 7 -> 4 x 2); among equals the most nearly square. Empty tiles are left
 * as background. */
void kw_figure_grid(size_t ns, size_t *cols, size_t *rows);

/*! kw_figure_ticks(): tick values over [lo, hi] at a 1, 2 or 5 x 10^k step
 * giving about `want` ticks; writes at most `max` into `ticks`, returns how
 * many, and the step in *step. A flat window (hi <= lo) has the one tick lo. */
size_t kw_figure_ticks(double lo, double hi, int want, double *ticks, size_t max,
                       double *step);

/*! kw_figure_tick_text(): a tick value as text, with the digits `step` needs
 * (no "-0"). */
void kw_figure_tick_text(char *buf, size_t n, double v, double step);

/*! kw_figure_diff_multiplier(): the multiplier of a difference picture: the
 * largest 1, 2 or 5 x 10^k at most ref_hi / diff_hi, so that the window
 * +-ref_hi / multiplier holds the difference's 99.5th percentile of |d|
 * (diff_hi); 1 when diff_hi is 0 or either is not finite and positive. */
double kw_figure_diff_multiplier(double ref_hi, double diff_hi);

/*! kw_figure_diff_title(): the title of a difference picture:
 * "|test| - |ref| x M (window 1/M of the reference's)", or for M = 1
 * "|test| - |ref|, on the reference's grey scale". Returns snprintf's count. */
int kw_figure_diff_title(char *buf, size_t n, double multiplier);

#endif
