/* sweep_plot.c: summary plots of a sweep (cairo): one figure per score
 * (summary_nrmse.png, summary_psnr_db.png, summary_ssim.png); one panel per
 * pattern (and per phantom / matrix / coils / SNR when those vary); in each
 * panel the score against the acceleration, one line per method variant
 * through the mean over seeds, with a bar from the smallest to the largest
 * value over seeds. */
#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cJSON.h>

#include "plot.h"
#include "outfile.h"
#include "sweep.h"
#include "fonts.h"

#define MAXP 32
#define MAXS 16
#define MAXA 33

static void text(cairo_t *cr, double x, double y, const char *s, double ax, double ay)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    cairo_move_to(cr, x - ax * e.width - e.x_bearing, y - ay * e.height - e.y_bearing);
    cairo_show_text(cr, s);
}

static double step_of(double span)
{
    double raw = span / 5, p = pow(10, floor(log10(raw))), m = raw / p;
    return (m < 1.5 ? 1 : m < 3.5 ? 2 : m < 7.5 ? 5 : 10) * p;
}

typedef struct cell {
    double lo, hi, sum;
    int n;
} cell;

typedef struct panel {
    char label[160];
    char series[MAXS][96];
    int ns;
    cell c[MAXS][MAXA]; /* by acceleration 1..32 */
} panel;

static const double palette[][3] = {{0.12, 0.47, 0.71}, {0.85, 0.37, 0.01},
                                    {0.17, 0.63, 0.17}, {0.84, 0.15, 0.16},
                                    {0.58, 0.40, 0.74}, {0.55, 0.34, 0.29},
                                    {0.89, 0.47, 0.76}, {0.5, 0.5, 0.5}};

static int varies(const kw_sweep *sw, int what)
{
    for (int g = 1; g < sw->ngroups; g++) {
        const kw_sweep_group *a = &sw->groups[0], *b = &sw->groups[g];
        if ((what == 0 && strcmp(a->phantom, b->phantom)) ||
            (what == 1 && a->matrix != b->matrix) || (what == 2 && a->coils != b->coils) ||
            (what == 3 && !(a->snr == b->snr || (isnan(a->snr) && isnan(b->snr)))) ||
            (what == 4 && a->fov_mm != b->fov_mm))
            return 1;
    }
    return 0;
}

static void panel_label(const kw_sweep *sw, const kw_sweep_group *g, char *b, size_t n)
{
    int k = snprintf(b, n, "%s", g->pat.kind);
    if (g->pat.acs >= 0)
        k += snprintf(b + k, n - (size_t)k, " acs %d", g->pat.acs);
    if (!isnan(g->pat.power))
        k += snprintf(b + k, n - (size_t)k, " power %g", g->pat.power);
    if (!isnan(g->pat.fraction))
        k += snprintf(b + k, n - (size_t)k, " fraction %g", g->pat.fraction);
    if (varies(sw, 0))
        k += snprintf(b + k, n - (size_t)k, ", %s", g->phantom);
    if (varies(sw, 1))
        k += snprintf(b + k, n - (size_t)k, ", %d^2", g->matrix);
    if (varies(sw, 4))
        k += snprintf(b + k, n - (size_t)k, ", FOV %g mm", g->fov_mm);
    if (varies(sw, 2))
        k += snprintf(b + k, n - (size_t)k, ", %d coils", g->coils);
    if (varies(sw, 3))
        snprintf(b + k, n - (size_t)k, ", SNR %g", g->snr);
}

static void series_label(const kw_sweep_row *r, char *b, size_t n)
{
    int k = snprintf(b, n, "%s", r->m.name);
    if (!isnan(r->m.lambda))
        k += snprintf(b + k, n - (size_t)k, " l=%g", r->m.lambda);
    if (r->m.iterations > 0)
        k += snprintf(b + k, n - (size_t)k, " it=%ld", r->m.iterations);
    if (r->m.combine[0])
        snprintf(b + k, n - (size_t)k, " %s", r->m.combine);
}

/* Under a panel's title: the legend's methods that have no result in this
 * panel (they failed, or were not run, for its pattern), so that the legend
 * common to the figure does not suggest them here. */
static void missing_note(cairo_t *cr, char gs[][96], int ngs, const panel *pn, double xc,
                         double y, double width)
{
    char note[400];
    int k = snprintf(note, sizeof note, "no result here: ");
    int any = 0;
    for (int g = 0; g < ngs; g++) {
        int s = 0;
        while (s < pn->ns && strcmp(pn->series[s], gs[g]))
            s++;
        if (s < pn->ns)
            continue;
        if (k > 0 && (size_t)k < sizeof note)
            k += snprintf(note + k, sizeof note - (size_t)k, "%s%s", any ? ", " : "", gs[g]);
        any = 1;
    }
    if (!any)
        return;
    cairo_text_extents_t e;
    cairo_text_extents(cr, note, &e);
    size_t n = strlen(note);
    while (e.x_advance > width && n > 20) { /* shorten to the panel's width */
        n--;
        memcpy(note + n - 3, "...", 4);
        cairo_text_extents(cr, note, &e);
    }
    cairo_save(cr);
    cairo_set_source_rgb(cr, 0.6, 0.1, 0.1);
    text(cr, xc, y, note, 0.5, 0.5);
    cairo_restore(cr);
}

static kw_status draw(const kw_sweep *sw, cJSON *const *rows, const char *metric,
                      const char *title, const char *path, panel *pn, int *np_out)
{
    int np = 0;
    memset(pn, 0, MAXP * sizeof *pn);
    double ymin = INFINITY, ymax = -INFINITY;
    int amin = 33, amax = 0;
    for (int r = 0; r < sw->nrows; r++) {
        if (!rows[r])
            continue;
        const cJSON *v = cJSON_GetObjectItemCaseSensitive(rows[r], metric);
        if (!cJSON_IsNumber(v) || !isfinite(v->valuedouble))
            continue;
        const kw_sweep_row *R = &sw->rows[r];
        const kw_sweep_group *g = &sw->groups[R->group];
        char pl[160], sl[96];
        panel_label(sw, g, pl, sizeof pl);
        series_label(R, sl, sizeof sl);
        int p = 0;
        while (p < np && strcmp(pn[p].label, pl))
            p++;
        if (p == np) {
            if (np == MAXP)
                continue;
            snprintf(pn[np++].label, sizeof pn[0].label, "%s", pl);
        }
        int s = 0;
        while (s < pn[p].ns && strcmp(pn[p].series[s], sl))
            s++;
        if (s == pn[p].ns) {
            if (s == MAXS)
                continue;
            snprintf(pn[p].series[pn[p].ns++], sizeof pn[0].series[0], "%s", sl);
        }
        cell *c = &pn[p].c[s][g->accel];
        double x = v->valuedouble;
        if (!c->n || x < c->lo)
            c->lo = x;
        if (!c->n || x > c->hi)
            c->hi = x;
        c->sum += x;
        c->n++;
        ymin = fmin(ymin, x);
        ymax = fmax(ymax, x);
        amin = g->accel < amin ? g->accel : amin;
        amax = g->accel > amax ? g->accel : amax;
    }
    *np_out = np;
    if (np == 0)
        return KW_OK;
    if (ymax - ymin < 1e-12) {
        ymin -= 0.5 * fabs(ymin) + 1e-3;
        ymax += 0.5 * fabs(ymax) + 1e-3;
    }
    double st = step_of(ymax - ymin);
    ymin = floor(ymin / st) * st;
    ymax = ceil(ymax / st) * st;
    if (amax == amin) {
        amin--;
        amax++;
    }
    /* one colour per method variant across the whole figure */
    static char gs[MAXS][96];
    int ngs = 0;
    for (int p = 0; p < np; p++)
        for (int si = 0; si < pn[p].ns; si++) {
            int k = 0;
            while (k < ngs && strcmp(gs[k], pn[p].series[si]))
                k++;
            if (k == ngs && ngs < MAXS)
                snprintf(gs[ngs++], sizeof gs[0], "%s", pn[p].series[si]);
        }
    int ncol = np < 4 ? np : 4, nrow = (np + ncol - 1) / ncol;
    const double PW = 380, PH = 300, ML = 62, MR = 14, MT = 40, MB = 44, TOP = 36, LEG = 30;
    int W = (int)(ncol * PW), H = (int)(TOP + nrow * PH + LEG);
    cairo_surface_t *s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, W, H);
    cairo_t *cr = cairo_create(s);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
    cairo_set_font_size(cr, 15);
    cairo_set_source_rgb(cr, 0, 0, 0);
    text(cr, W / 2.0, 18, title, 0.5, 0.5);
    for (int p = 0; p < np; p++) {
        double ox = (p % ncol) * PW, oy = TOP + (p / ncol) * PH;
        double x0 = ox + ML, x1 = ox + PW - MR, y0 = oy + MT, y1 = oy + PH - MB;
#define XP(a) (x0 + ((a) - amin + 0.5) / (amax - amin + 1.0) * (x1 - x0))
#define YP(v) (y1 - ((v) - ymin) / (ymax - ymin) * (y1 - y0))
        cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                               CAIRO_FONT_WEIGHT_BOLD);
        cairo_set_font_size(cr, 12);
        cairo_set_source_rgb(cr, 0, 0, 0);
        text(cr, (x0 + x1) / 2, oy + 14, pn[p].label, 0.5, 0.5);
        cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                               CAIRO_FONT_WEIGHT_NORMAL);
        cairo_set_font_size(cr, 10);
        missing_note(cr, gs, ngs, &pn[p], (x0 + x1) / 2, oy + 28, x1 - x0);
        cairo_set_line_width(cr, 1);
        for (double v = ymin; v <= ymax + st / 2; v += st) {
            cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
            cairo_move_to(cr, x0, YP(v));
            cairo_line_to(cr, x1, YP(v));
            cairo_stroke(cr);
            char b[32];
            snprintf(b, sizeof b, "%g", fabs(v) < st / 1e6 ? 0.0 : v);
            cairo_set_source_rgb(cr, 0, 0, 0);
            text(cr, x0 - 4, YP(v), b, 1, 0.5);
        }
        for (int a = amin; a <= amax; a++) {
            char b[16];
            snprintf(b, sizeof b, "%d", a);
            text(cr, XP(a), y1 + 8, b, 0.5, 0);
        }
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_rectangle(cr, x0, y0, x1 - x0, y1 - y0);
        cairo_stroke(cr);
        text(cr, (x0 + x1) / 2, y1 + 26, "acceleration R", 0.5, 0);
        cairo_save(cr);
        cairo_translate(cr, ox + 12, (y0 + y1) / 2);
        cairo_rotate(cr, -M_PI / 2);
        text(cr, 0, 0, metric, 0.5, 0.5);
        cairo_restore(cr);
        for (int si = 0; si < pn[p].ns; si++) {
            int k = 0;
            while (k < ngs && strcmp(gs[k], pn[p].series[si]))
                k++;
            const double *col = palette[k % 8];
            double dx = (si - (pn[p].ns - 1) / 2.0) * 4; /* bars side by side */
            cairo_set_source_rgb(cr, col[0], col[1], col[2]);
            cairo_set_line_width(cr, 1.6);
            int started = 0;
            for (int a = amin; a <= amax; a++) {
                const cell *c = &pn[p].c[si][a];
                if (!c->n)
                    continue;
                double x = XP(a) + dx, y = YP(c->sum / c->n);
                if (!started)
                    cairo_move_to(cr, x, y);
                else
                    cairo_line_to(cr, x, y);
                started = 1;
            }
            cairo_stroke(cr);
            cairo_set_line_width(cr, 1.2);
            for (int a = amin; a <= amax; a++) {
                const cell *c = &pn[p].c[si][a];
                if (!c->n)
                    continue;
                double x = XP(a) + dx;
                cairo_move_to(cr, x, YP(c->lo));
                cairo_line_to(cr, x, YP(c->hi));
                cairo_move_to(cr, x - 3, YP(c->lo));
                cairo_line_to(cr, x + 3, YP(c->lo));
                cairo_move_to(cr, x - 3, YP(c->hi));
                cairo_line_to(cr, x + 3, YP(c->hi));
                cairo_stroke(cr);
                cairo_arc(cr, x, YP(c->sum / c->n), 2.6, 0, 2 * M_PI);
                cairo_fill(cr);
            }
        }
#undef XP
#undef YP
    }
    /* the legend, one row under the panels */
    cairo_set_font_size(cr, 12);
    double lx = 20, ly = TOP + nrow * PH + LEG / 2;
    for (int k = 0; k < ngs; k++) {
        const double *col = palette[k % 8];
        cairo_set_source_rgb(cr, col[0], col[1], col[2]);
        cairo_rectangle(cr, lx, ly - 2, 22, 4);
        cairo_fill(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        text(cr, lx + 28, ly, gs[k], 0, 0.5);
        cairo_text_extents_t e;
        cairo_text_extents(cr, gs[k], &e);
        lx += 28 + e.x_advance + 26;
    }
    cairo_destroy(cr);
    kw_status st2 = kw_plot_write_png(s, path);
    cairo_surface_destroy(s);
    return st2;
}

kw_status kw_sweep_plot(const kw_sweep *sw, cJSON *const *rows, const char *out)
{
    static const char *const metric[] = {"nrmse", "psnr_db", "ssim"};
    static const char *const title[] = {
        "NRMSE against acceleration (line: mean over seeds; bar: min to max)",
        "PSNR (dB) against acceleration (line: mean over seeds; bar: min to max)",
        "SSIM against acceleration (line: mean over seeds; bar: min to max)"};
    panel *pn = malloc(MAXP * sizeof *pn);
    KW_FAIL_IF(!pn, KW_ENOMEM, "plot: out of memory");
    kw_status st = KW_OK;
    for (int m = 0; m < 3 && !st; m++) {
        char p[4200];
        snprintf(p, sizeof p, "%s/summary_%s.png", out, metric[m]);
        int np;
        st = draw(sw, rows, metric[m], title[m], p, pn, &np);
    }
    free(pn);
    kw_figure_release_fonts(); /* cairo's and fontconfig's caches, for leak checkers */
    return st;
}
