/* figure.c: figures of arrays (figure.h): picture, grey bar, title, montage
 * with gaps and labels, drawn with cairo. The values and the window come
 * from png.c (kw_png_values_make), so a figure shows exactly the grey levels
 * of the bare picture; the pixels of the picture and of the bar are written
 * straight into the surface (no smoothing), the text and lines by cairo. */
#define _POSIX_C_SOURCE 200809L
#include "figure.h"
#include "fonts.h"

#include <cairo.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "plot.h"

enum {
    MARGIN = 12,      /* around everything */
    TITLE_H = 26,     /* the title line */
    TILE_LABEL_H = 18, /* a montage tile's label strip */
    GAP = 8,          /* between montage tiles */
    BAR_GAP = 16,     /* picture to bar */
    BAR_W = 16,       /* the bar */
    TICK = 5,         /* tick mark length */
    MAX_TICKS = 32
};

#define MAX_SIDE 8192 /* per side: a figure surface stays within 256 MiB */

void kw_figure_opts_default(kw_figure_opts *f)
{
    f->title = NULL;
    f->quantity = NULL;
    f->units = NULL;
    f->tile_label = NULL;
    f->tile_names = NULL;
    f->columns = 0;
}

/* ---- numbers ------------------------------------------------------------------ */

void kw_figure_grid(size_t ns, size_t *cols, size_t *rows)
{
    size_t best_c = 1, best_r = ns ? ns : 1, best_empty = SIZE_MAX, best_diff = SIZE_MAX;
    for (size_t c = 1; c <= (ns ? ns : 1); c++) {
        size_t r = (ns + c - 1) / c;
        if (r == 0)
            r = 1;
        if (c < r || c > (3 * r > 3 ? 3 * r : 3))
            continue;
        size_t empty = c * r - ns, diff = c - r;
        if (empty < best_empty || (empty == best_empty && diff < best_diff)) {
            best_c = c;
            best_r = r;
            best_empty = empty;
            best_diff = diff;
        }
    }
    if (best_empty == SIZE_MAX) /* cannot happen for ns >= 1; keep png.c's grid */
        kw_png_grid(ns, &best_c, &best_r);
    *cols = best_c;
    *rows = best_r;
}

static double nice_step(double span, int want)
{
    double raw = span / (want > 0 ? want : 1), p = pow(10, floor(log10(raw))), m = raw / p;
    return (m < 1.5 ? 1 : m < 3.5 ? 2 : m < 7.5 ? 5 : 10) * p;
}

size_t kw_figure_ticks(double lo, double hi, int want, double *ticks, size_t max, double *step)
{
    if (max == 0)
        return 0;
    if (!(hi > lo) || !isfinite(lo) || !isfinite(hi)) {
        ticks[0] = lo;
        *step = fabs(lo) > 0 ? fabs(lo) : 1;
        return 1;
    }
    double s = nice_step(hi - lo, want);
    double k0 = ceil(lo / s - 1e-9), k1 = floor(hi / s + 1e-9);
    size_t n = 0;
    for (double k = k0; k <= k1 && n < max; k++) {
        double v = k * s;
        ticks[n++] = fabs(v) < s * 1e-9 ? 0.0 : v;
    }
    *step = s;
    return n;
}

void kw_figure_tick_text(char *buf, size_t n, double v, double step)
{
    if (v == 0 || fabs(v) < fabs(step) * 1e-9) {
        snprintf(buf, n, "0");
        return;
    }
    double big = fabs(v);
    if (big >= 1e-3 && big < 1e6 && step >= 1e-4) {
        int dec = step >= 1 ? 0 : (int)ceil(-log10(step) - 1e-9);
        snprintf(buf, n, "%.*f", dec, v);
    } else { /* far from 1: significant digits down to the step's */
        int sig = (int)(floor(log10(big)) - floor(log10(step))) + 1;
        snprintf(buf, n, "%.*g", sig < 1 ? 1 : sig > 6 ? 6 : sig, v);
    }
}

double kw_figure_diff_multiplier(double ref_hi, double diff_hi)
{
    if (!(ref_hi > 0) || !(diff_hi > 0) || !isfinite(ref_hi) || !isfinite(diff_hi))
        return 1;
    double r = ref_hi / diff_hi;
    double p = pow(10, floor(log10(r))), m = r / p;
    double mult = (m >= 5 ? 5 : m >= 2 ? 2 : 1) * p;
    /* a rounding step at an exact power: never above the ratio */
    while (mult > r * (1 + 1e-12))
        mult /= 10;
    return mult;
}

int kw_figure_diff_title(char *buf, size_t n, double multiplier)
{
    if (multiplier == 1)
        return snprintf(buf, n, "|test| - |ref|, on the reference's grey scale");
    return snprintf(buf, n, "|test| - |ref| x %g (window 1/%g of the reference's)",
                    multiplier, multiplier);
}

/* ---- drawing ------------------------------------------------------------------ */

static const char *part_name(kw_part p)
{
    switch (p) {
    case KW_PART_PHASE: return "phase";
    case KW_PART_REAL: return "real part";
    case KW_PART_IMAG: return "imaginary part";
    case KW_PART_LOGMAG: return "log(1 + |x| / (0.001 max|x|))";
    default: return "magnitude";
    }
}

static double text_w(cairo_t *cr, const char *s)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    return e.x_advance;
}

/* s with its box's left edge at x (align 0), centre (0.5) or right (1), and
 * its vertical middle (of digit height) at y. */
static void text_at(cairo_t *cr, double x, double y, const char *s, double align)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    cairo_font_extents_t f;
    cairo_font_extents(cr, &f);
    cairo_move_to(cr, x - align * e.x_advance, y + (f.ascent - f.descent) / 2);
    cairo_show_text(cr, s);
}

/* The tile index as text: the flat index for a stack of 2-D slices, all the
 * leading indices ("1,3") for more dimensions. */
static void tile_name(char *b, size_t n, const kw_array *a, size_t s, const kw_figure_opts *fo)
{
    if (fo->tile_names) { /* the s-th comma-separated name */
        const char *t = fo->tile_names;
        for (size_t i = 0; i < s && t; i++) {
            t = strchr(t, ',');
            t = t ? t + 1 : NULL;
        }
        size_t len = t ? strcspn(t, ",") : 0;
        snprintf(b, n, "%.*s", (int)(len < n ? len : n - 1), t ? t : "");
        return;
    }
    const char *word = fo->tile_label;
    int lead = a->ndim - 2;
    char idx[96] = "";
    size_t rest = s, len = 0;
    size_t sub[KW_MAX_DIMS];
    for (int i = lead - 1; i >= 0; i--) {
        sub[i] = a->dims[i] ? rest % a->dims[i] : 0;
        rest = a->dims[i] ? rest / a->dims[i] : 0;
    }
    for (int i = 0; i < lead && len < sizeof idx; i++)
        len += (size_t)snprintf(idx + len, sizeof idx - len, i ? ",%zu" : "%zu", sub[i]);
    snprintf(b, n, "%s%s%s", word, word[0] ? " " : "", idx);
}

typedef struct layout {
    size_t cols, rows, k;     /* grid and magnification */
    int tw, th, label_h, gap; /* a tile's picture, its label strip, the gaps */
    int px, py, pw, ph;       /* the picture block */
    int bx, by0, by1;         /* the bar */
    int W, H;
    double tick_w;            /* widest tick label */
    char bar_text[320];
} layout;

static kw_status plan_layout(cairo_t *cr, layout *L, const kw_png_values *pv,
                             const kw_png_opts *po, const kw_figure_opts *fo, const double *ticks,
                             size_t nt, double step)
{
    size_t ns = pv->ns;
    if (ns > 1 && fo->columns > 0) {
        L->cols = fo->columns < ns ? fo->columns : ns;
        L->rows = (ns + L->cols - 1) / L->cols;
    } else if (ns > 1)
        kw_figure_grid(ns, &L->cols, &L->rows);
    else
        L->cols = L->rows = 1;
    size_t side = pv->w > pv->h ? pv->w : pv->h, target = ns > 1 ? 128 : 256;
    L->k = side < target ? target / side : 1;
    KW_FAIL_IF(pv->w * L->k > MAX_SIDE / L->cols || pv->h * L->k > MAX_SIDE / L->rows,
               KW_EINVAL, "shape: a figure of %zu x %zu tiles of %zu x %zu pixels is larger "
               "than figures allow (%d per side; draw the bare picture instead)", L->cols,
               L->rows, pv->w, pv->h, MAX_SIDE);
    L->tw = (int)(pv->w * L->k);
    L->th = (int)(pv->h * L->k);
    L->label_h = (ns > 1 && (fo->tile_label || fo->tile_names)) ? TILE_LABEL_H : 0;
    L->gap = ns > 1 ? GAP : 0;
    int title_h = (fo->title && fo->title[0]) ? TITLE_H : 0;
    L->px = MARGIN;
    L->py = MARGIN + title_h;
    L->pw = (int)L->cols * L->tw + ((int)L->cols - 1) * L->gap;
    L->ph = (int)L->rows * (L->th + L->label_h) + ((int)L->rows - 1) * L->gap;

    const char *q = fo->quantity ? fo->quantity : part_name(po->part);
    if (fo->units && fo->units[0])
        snprintf(L->bar_text, sizeof L->bar_text, "%s (%s)", q, fo->units);
    else
        snprintf(L->bar_text, sizeof L->bar_text, "%s", q);
    cairo_set_font_size(cr, 12);
    L->tick_w = 0;
    for (size_t i = 0; i < nt; i++) {
        char t[48];
        kw_figure_tick_text(t, sizeof t, ticks[i], step);
        double w = text_w(cr, t);
        if (w > L->tick_w)
            L->tick_w = w;
    }
    cairo_set_font_size(cr, 13);
    double bar_label_w = text_w(cr, L->bar_text);
    L->bx = L->px + L->pw + BAR_GAP;
    L->by0 = L->py + L->label_h;
    L->by1 = L->py + L->ph;
    if (L->by1 - L->by0 < (int)bar_label_w + 8) /* the label fits along the bar */
        L->by1 = L->by0 + (int)bar_label_w + 8;
    L->W = L->bx + BAR_W + TICK + 4 + (int)ceil(L->tick_w) + 10 + 16 + MARGIN;
    L->H = (L->by1 > L->py + L->ph ? L->by1 : L->py + L->ph) + MARGIN;
    if (title_h) { /* measured in the face it is drawn in */
        cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
        cairo_set_font_size(cr, 14);
        int tw = (int)ceil(text_w(cr, fo->title)) + 2 * MARGIN;
        if (tw > L->W)
            L->W = tw;
    }
    return KW_OK;
}

static void draw_text(cairo_t *cr, const layout *L, const kw_array *a, const kw_png_values *pv,
                      const kw_figure_opts *fo, const double *ticks, size_t nt, double step)
{
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_set_source_rgb(cr, 0, 0, 0);
    if (fo->title && fo->title[0]) {
        cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
        cairo_set_font_size(cr, 14);
        text_at(cr, MARGIN, MARGIN + TITLE_H / 2.0 - 3, fo->title, 0);
        cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                               CAIRO_FONT_WEIGHT_NORMAL);
    }
    if (L->label_h) {
        cairo_set_font_size(cr, 12);
        for (size_t s = 0; s < pv->ns; s++) {
            char b[160];
            tile_name(b, sizeof b, a, s, fo);
            int x0 = L->px + (int)(s % L->cols) * (L->tw + L->gap);
            int y0 = L->py + (int)(s / L->cols) * (L->th + L->label_h + L->gap);
            cairo_save(cr); /* a long label is cut at its tile's edge, never over the next */
            cairo_rectangle(cr, x0, y0, L->tw, L->label_h);
            cairo_clip(cr);
            text_at(cr, x0 + 1, y0 + L->label_h / 2.0, b, 0);
            cairo_restore(cr);
        }
    }
    /* bar outline, ticks and their values */
    cairo_set_line_width(cr, 1);
    cairo_rectangle(cr, L->bx - 0.5, L->by0 - 0.5, BAR_W + 1, L->by1 - L->by0 + 1);
    cairo_stroke(cr);
    cairo_set_font_size(cr, 12);
    double span = (double)pv->hi - (double)pv->lo;
    for (size_t i = 0; i < nt; i++) {
        double t = span > 0 ? (ticks[i] - pv->lo) / span : 0.5;
        double y = floor(L->by1 - t * (L->by1 - L->by0)) + 0.5;
        if (y > L->by1 - 0.5)
            y = L->by1 - 0.5;
        cairo_move_to(cr, L->bx + BAR_W + 0.5, y);
        cairo_line_to(cr, L->bx + BAR_W + 0.5 + TICK, y);
        cairo_stroke(cr);
        char b[48];
        kw_figure_tick_text(b, sizeof b, ticks[i], step);
        text_at(cr, L->bx + BAR_W + TICK + 4, y, b, 0);
    }
    cairo_set_font_size(cr, 13);
    cairo_save(cr);
    cairo_translate(cr, L->bx + BAR_W + TICK + 4 + ceil(L->tick_w) + 10 + 8,
                    (L->by0 + L->by1) / 2.0);
    cairo_rotate(cr, -KW_PI / 2);
    text_at(cr, 0, 0, L->bar_text, 0.5);
    cairo_restore(cr);
}

/* The picture's and the bar's pixels, straight into the surface. */
static void draw_pixels(cairo_surface_t *surf, const layout *L, const kw_png_values *pv)
{
    cairo_surface_flush(surf);
    unsigned char *data = cairo_image_surface_get_data(surf);
    int stride = cairo_image_surface_get_stride(surf);
    size_t w = pv->w, h = pv->h, k = L->k;
    for (size_t s = 0; s < pv->ns; s++) {
        int x0 = L->px + (int)(s % L->cols) * (L->tw + L->gap);
        int y0 = L->py + L->label_h + (int)(s / L->cols) * (L->th + L->label_h + L->gap);
        const float *src = pv->v + s * w * h;
        for (size_t y = 0; y < h * k; y++) {
            uint32_t *row = (uint32_t *)(data + (size_t)(y0 + (int)y) * (size_t)stride) + x0;
            for (size_t x = 0; x < w * k; x++) {
                uint32_t g = (uint32_t)lround(kw_png_level(pv, src[(y / k) * w + x / k]) * 255);
                row[x] = (g << 16) | (g << 8) | g;
            }
        }
    }
    double n = L->by1 - L->by0;
    for (int y = L->by0; y < L->by1; y++) {
        uint32_t g = (uint32_t)lround((1 - (y - L->by0 + 0.5) / n) * 255);
        uint32_t *row = (uint32_t *)(data + (size_t)y * (size_t)stride);
        for (int x = L->bx; x < L->bx + BAR_W; x++)
            row[x] = (g << 16) | (g << 8) | g;
    }
    cairo_surface_mark_dirty(surf);
}

kw_status kw_figure_write(const char *path, const kw_array *a, const kw_png_opts *po,
                          const kw_figure_opts *fo)
{
    kw_png_opts pdef;
    kw_figure_opts fdef;
    if (!po) {
        kw_png_opts_default(&pdef);
        po = &pdef;
    }
    if (!fo) {
        kw_figure_opts_default(&fdef);
        fo = &fdef;
    }
    KW_FAIL_IF(!path, KW_EINVAL, "figure: no file name");
    kw_png_opts o = *po;
    o.depth = 8; /* checked by kw_png_values_make; figures are 8-bit */
    kw_png_values pv;
    kw_status st = kw_png_values_make(a, &o, &pv);
    if (st)
        return st;
    double ticks[MAX_TICKS], step;
    size_t nt = kw_figure_ticks(pv.lo, pv.hi, 5, ticks, MAX_TICKS, &step);

    cairo_surface_t *probe = cairo_image_surface_create(CAIRO_FORMAT_RGB24, 1, 1);
    cairo_t *cr = cairo_create(probe);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    layout L;
    memset(&L, 0, sizeof L);
    st = plan_layout(cr, &L, &pv, &o, fo, ticks, nt, step);
    cairo_destroy(cr);
    cairo_surface_destroy(probe);
    if (!st) {
        cairo_surface_t *surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, L.W, L.H);
        cr = cairo_create(surf);
        cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                               CAIRO_FONT_WEIGHT_NORMAL);
        draw_text(cr, &L, a, &pv, fo, ticks, nt, step);
        cairo_destroy(cr);
        draw_pixels(surf, &L, &pv);
        st = kw_plot_write_png(surf, path);
        cairo_surface_destroy(surf);
    }
    kw_png_values_free(&pv);
    kw_figure_release_fonts();
    return st;
}
