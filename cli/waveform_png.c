/* waveform_png.c: the picture of `kweave waveform` (cmd_waveform.c): G and
 * slew per axis against time with the limits, the runs over a limit in
 * red, the ADC windows, the RF centre and TE, and the actual gradient of
 * an imperfect system in blue (kw_waveform.h). */
#include <cairo.h>
#include <math.h>
#include <stdio.h>

#include "figure.h"
#include "fonts.h"
#include "plot.h"
#include "waveform_cli.h"

/* ---- the picture --------------------------------------------------------------------------- */


static void text_at(cairo_t *cr, double x, double y, const char *s, double ax, double ay)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    cairo_move_to(cr, x - ax * e.width - e.x_bearing, y - ay * e.height - e.y_bearing);
    cairo_show_text(cr, s);
}

enum { PW = 1200, PH = 150, PGAP = 46, PLEFT = 96, PRIGHT = 24, PTOP = 56, PBOTTOM = 60 };

typedef struct panel {
    double y0;     /* top, px */
    double lo, hi; /* value range */
    double t1;     /* ms, the time axis 0..t1 */
} panel;

static double px_t(const panel *p, double t_ms) { return PLEFT + t_ms / p->t1 * (PW - PLEFT - PRIGHT); }
static double px_v(const panel *p, double v) { return p->y0 + (p->hi - v) / (p->hi - p->lo) * PH; }

/* frame, value ticks, the limit lines (dashed red at +-lim), the label */
static void panel_frame(cairo_t *cr, const panel *p, double lim, const char *label)
{
    double ticks[16], step;
    size_t nt = kw_figure_ticks(p->lo, p->hi, 4, ticks, 16, &step);
    char buf[64];
    cairo_set_font_size(cr, 12);
    for (size_t i = 0; i < nt; i++) {
        double y = px_v(p, ticks[i]);
        cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
        cairo_move_to(cr, PLEFT, y);
        cairo_line_to(cr, PW - PRIGHT, y);
        cairo_stroke(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        kw_figure_tick_text(buf, sizeof buf, ticks[i], step);
        text_at(cr, PLEFT - 6, y, buf, 1.0, 0.5);
    }
    cairo_set_source_rgb(cr, 0.8, 0, 0);
    double dash[2] = {6, 4};
    cairo_set_dash(cr, dash, 2, 0);
    for (int sg = -1; sg <= 1; sg += 2) {
        cairo_move_to(cr, PLEFT, px_v(p, sg * lim));
        cairo_line_to(cr, PW - PRIGHT, px_v(p, sg * lim));
    }
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_rectangle(cr, PLEFT, p->y0, PW - PLEFT - PRIGHT, PH);
    cairo_stroke(cr);
    cairo_save(cr);
    cairo_translate(cr, 18, p->y0 + PH / 2.0);
    cairo_rotate(cr, -M_PI / 2);
    text_at(cr, 0, 0, label, 0.5, 0.5);
    cairo_restore(cr);
}

/* shaded ADC windows and the RF centre / TE lines (times in ms) */
static void panel_marks(cairo_t *cr, const panel *p, const kw_waveform_options *o)
{
    cairo_set_source_rgba(cr, 0.2, 0.6, 0.2, 0.18);
    for (size_t i = 0; i < o->nadc; i++) {
        double a0 = o->adc[i].start_s * 1e3,
               a1 = (o->adc[i].start_s + (double)o->adc[i].samples * o->adc[i].dwell_s) * 1e3;
        cairo_rectangle(cr, px_t(p, a0), p->y0, px_t(p, a1) - px_t(p, a0), PH);
        cairo_fill(cr);
    }
    double lines[2] = {o->rf_centre_s * 1e3, (o->rf_centre_s + o->te_s) * 1e3};
    for (int i = 0; i < 2; i++) {
        if (!isfinite(lines[i]))
            continue;
        cairo_set_source_rgb(cr, i == 0 ? 0.5 : 0.1, 0.1, i == 0 ? 0.6 : 0.7);
        cairo_move_to(cr, px_t(p, lines[i]), p->y0);
        cairo_line_to(cr, px_t(p, lines[i]), p->y0 + PH);
        cairo_stroke(cr);
    }
}

/* 1 when sample/interval i of `axis` lies in a violation of `lim` */
static int in_violation(const kw_waveform_violation *v, size_t nv, kw_waveform_limit lim, int axis,
                        size_t i)
{
    for (size_t k = 0; k < nv; k++)
        if (v[k].limit == lim && (v[k].axis == axis || v[k].axis == -1) && i >= v[k].first &&
            i <= v[k].last)
            return 1;
    return 0;
}

/* The curve of one panel: G (kind 0, mT/m) or slew (kind 1, T/m/s, a step
 * per interval), black, red where it breaks the limit. */
static void panel_curve(cairo_t *cr, const panel *p, const double *g, size_t n, int axes, int axis,
                        int kind, double h, const kw_waveform_violation *v, size_t nv, int held)
{
    cairo_set_line_width(cr, 1.2);
    for (int pass = 0; pass < 2; pass++) {
        cairo_set_source_rgb(cr, pass ? 0.85 : 0.05, pass ? 0.05 : 0.05, pass ? 0.05 : 0.05);
        for (size_t i = 0; i + 1 < n; i++) {
            double a = g[i * (size_t)axes + (size_t)axis], b = g[(i + 1) * (size_t)axes + (size_t)axis];
            int bad = kind == 0 ? in_violation(v, nv, KW_WAVEFORM_AMPLITUDE, axis, i) ||
                                      in_violation(v, nv, KW_WAVEFORM_AMPLITUDE, axis, i + 1)
                                : in_violation(v, nv, KW_WAVEFORM_SLEW, axis, i);
            if (bad != pass)
                continue;
            double t0 = (double)i * h * 1e3, t1 = (double)(i + 1) * h * 1e3;
            if (kind == 0) { /* held: a over the interval, then the step to b */
                cairo_move_to(cr, px_t(p, t0), px_v(p, a * 1e3));
                cairo_line_to(cr, px_t(p, t1), px_v(p, (held ? a : b) * 1e3));
                if (held)
                    cairo_line_to(cr, px_t(p, t1), px_v(p, b * 1e3));
            } else {
                double s = (b - a) / h, prev = s;
                if (i > 0)
                    prev = (a - g[(i - 1) * (size_t)axes + (size_t)axis]) / h;
                cairo_move_to(cr, px_t(p, t0), px_v(p, prev));
                cairo_line_to(cr, px_t(p, t0), px_v(p, s));
                cairo_line_to(cr, px_t(p, t1), px_v(p, s));
            }
            cairo_stroke(cr);
        }
    }
    cairo_set_line_width(cr, 1.0);
}

static void time_axis(cairo_t *cr, const panel *p, double ybottom)
{
    double ticks[32], step;
    size_t nt = kw_figure_ticks(0, p->t1, 8, ticks, 32, &step);
    char buf[64];
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_font_size(cr, 12);
    for (size_t i = 0; i < nt; i++) {
        kw_figure_tick_text(buf, sizeof buf, ticks[i], step);
        text_at(cr, px_t(p, ticks[i]), ybottom + 6, buf, 0.5, 0.0);
    }
    text_at(cr, (PLEFT + PW - PRIGHT) / 2.0, ybottom + 28, "time from the waveform's start (ms)", 0.5, 0.0);
}

/* the actual gradient (blue) over the nominal one's G panel */
static void panel_actual(cairo_t *cr, const panel *p, const double *ga, size_t n, int axes, int axis, double h)
{
    cairo_set_source_rgb(cr, 0.1, 0.3, 0.9);
    for (size_t i = 0; i < n; i++) {
        double x = px_t(p, (double)i * h * 1e3), y = px_v(p, ga[i * (size_t)axes + (size_t)axis] * 1e3);
        if (i == 0)
            cairo_move_to(cr, x, y);
        else
            cairo_line_to(cr, x, y);
    }
    cairo_stroke(cr);
}

kw_status kw_wf_write_png(const char *path, const double *g, size_t n, int axes, const kw_waveform *w,
                           const kw_waveform_options *o)
{
    double *ga = NULL;
    if (kw_waveform_has_imperfection(w)) {
        ga = kw_alloc_n(n * (size_t)axes, sizeof *ga);
        KW_FAIL_IF(!ga, KW_ENOMEM, "out of memory for the actual gradient");
        kw_waveform_actual(w, ga);
    }
    const kw_waveform_summary *s = kw_waveform_summary_of(w);
    size_t nv;
    const kw_waveform_violation *v = kw_waveform_violations(w, &nv);
    const int rows = 2 * axes;
    const int height = PTOP + rows * PH + (rows - 1) * PGAP + PBOTTOM;
    cairo_surface_t *sf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, PW, height);
    cairo_t *cr = cairo_create(sf);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_set_line_width(cr, 1.0);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_font_size(cr, 15);
    char title[256];
    snprintf(title, sizeof title, "gradient waveform: %zu samples, raster %g us; limits %g mT/m, %g T/m/s",
             s->samples, s->raster_s * 1e6, o->gmax * 1e3, o->slew);
    text_at(cr, PW / 2.0, 8, title, 0.5, 0.0);
    cairo_set_font_size(cr, 12);
    snprintf(title, sizeof title, "limits dashed red; over a limit in red; ADC windows green; RF centre "
             "(violet) and TE (blue) lines%s", ga ? "; actual G blue curve" : "");
    text_at(cr, PW / 2.0, 30, title, 0.5, 0.0);
    const char *an[3] = {"x", "y", "z"};
    panel p = {0, 0, 0, s->span_s * 1e3};
    double ybottom = 0;
    for (int r = 0; r < rows; r++) {
        const int axis = r / 2, kind = r % 2;
        const double lim = kind == 0 ? o->gmax * 1e3 : o->slew;
        const double peak = kind == 0 ? s->peak_g[axis] * 1e3 : s->peak_slew[axis];
        const double top = 1.1 * (peak > lim ? peak : lim);
        p.y0 = PTOP + r * (PH + PGAP);
        p.lo = -top;
        p.hi = top;
        char label[64];
        snprintf(label, sizeof label, kind == 0 ? "G%s (mT/m)" : "slew %s (T/m/s)", an[axis]);
        panel_marks(cr, &p, o);
        panel_frame(cr, &p, lim, label);
        panel_curve(cr, &p, g, n, axes, axis, kind, s->raster_s, v, nv, o->held);
        if (ga && kind == 0)
            panel_actual(cr, &p, ga, n, axes, axis, s->raster_s);
        ybottom = p.y0 + PH;
    }
    time_axis(cr, &p, ybottom);
    cairo_destroy(cr);
    kw_status st = kw_plot_write_png(sf, path);
    cairo_surface_destroy(sf);
    kw_figure_release_fonts();
    kw_free(ga);
    return st;
}
