/* cmd_preview.c: `kweave preview`: the planner's predictions for a protocol
 * (options or a protocol file, as `kweave plan` reads them) checked against
 * a simulated acquisition of the same protocol (kw_preview.h): text report
 * on stdout, --json FILE|- and --png FILE (the image with each effect
 * marked). Exit 0 when the run completes (the verdicts are in the report),
 * 2 bad input. */
#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "figure.h"
#include "jsonio.h"
#include "kw_plan_input.h"
#include "kw_preview.h"
#include "outfile.h"
#include "plot.h"
#include "protofile.h"
#include "fonts.h"

#define MAX_KEYS 32

static const kw_cli_param param_map[] = {
    {"bump_hz", "bump"},
    {"flip_rad", "flip"},
    {"fat_tolerance_px", "fat-tolerance"},
    {"bump_tolerance", "bump-tolerance"},
    {"snr_tolerance", "snr-tolerance"},
    {"edge_tolerance", "edge-tolerance"},
    {"replicas", "replicas"},
    {"reference", "reference"},
    {"blur_tolerance", "blur-tolerance"},
    {"ndim", "matrix"},
    {"b0_t", "b0"},
    {"sequence", "sequence"},
    {"matrix", "matrix"},
    {NULL, NULL}};

static const char *const seq_label[] = {"gradient echo", "spin echo", "EPI", "radial", "spiral"};

/* ---- text ----------------------------------------------------------------------- */

static void report_text(const kw_preview_result *r)
{
    printf("kweave preview: %s, 2-D, %zu x %zu, pixel %.3f x %.3f mm, B0 %.4g T (Larmor %.6f "
           "MHz)\n", seq_label[r->sequence], r->dims[1], r->dims[0], r->pixel_m[1] * 1e3,
           r->pixel_m[0] * 1e3, r->b0_t, r->larmor_hz / 1e6);
    printf("  bandwidth %.2f Hz/pixel, TE %.4f ms, TR %.4f ms", r->bandwidth_per_pixel_hz,
           r->te_s * 1e3, r->tr_s * 1e3);
    if (r->flip_rad > 0)
        printf(", flip %.4g deg", r->flip_rad * 180 / KW_PI);
    printf("; fat-water %.2f Hz (3.4 ppm)\n", r->fat_water_hz);
    if (!r->feasible)
        printf("  NOTE: the protocol breaks a hardware limit (kweave plan lists which); simulated "
               "as planned\n");
    if (r->sequence == 2)
        printf("  EPI echo spacing %.4f ms: %.5f pixels/Hz along y\n", r->echo_spacing_s * 1e3,
               r->distortion_pixels_per_hz);
    printf("  scenario: the weave object simulated with the protocol's timing (fat, T2* decay");
    if (r->bump_hz > 0)
        printf(", a %.4g Hz field bump on the CSF vial", r->bump_hz);
    printf("), reconstructed by FFT\n");
    for (int i = 0; i < r->neffects; i++)
        if (strcmp(r->effects[i].name, "t2star_blur") == 0)
            printf("  T2* blur: the point-spread function's FWHM (pixels) along %s of a point at "
                   "the centre with the protocol's T2*\n", r->effects[i].axis);
    printf("Effects (shifts signed: +x = right along the columns, +y = down along the rows)\n");
    printf("  %-28s %4s %6s %11s %11s %11s %10s  %s\n", "effect", "axis", "unit", "predicted",
           "measured", "difference", "tolerance", "verdict");
    for (int i = 0; i < r->neffects; i++) {
        const kw_preview_effect *e = &r->effects[i];
        printf("  %-28s %4s %6s %+11.4f %+11.4f %+11.4f %10.4f  %s\n", e->name,
               e->axis[0] ? e->axis : "-", e->unit, e->predicted, e->measured, e->difference, e->tolerance,
               e->pass ? "pass" : "FAIL");
    }
    for (int i = 0; i < r->neffects; i++)
        printf("  %s: predicted by %s; tolerance %s\n", r->effects[i].name, r->effects[i].source,
               r->effects[i].tolerance_rule);
    printf("  measured by phase correlation (Kuglin & Hines 1975) of the insert imaged alone with "
           "and without the effect\n");
    printf("All within tolerance: %s\n", r->all_pass ? "yes" : "NO");
}

/* ---- the picture ------------------------------------------------------------------ */


static int cmp_float(const void *a, const void *b)
{
    float x = *(const float *)a, y = *(const float *)b;
    return (x > y) - (x < y);
}

/* The grey window: 0 .. the 99.5th percentile of the image. */
static double window_hi(const float *im, size_t n)
{
    float *s = malloc(n * sizeof *s);
    if (!s)
        return 1;
    memcpy(s, im, n * sizeof *s);
    qsort(s, n, sizeof *s, cmp_float);
    double hi = s[(size_t)(0.995 * (double)(n - 1))];
    free(s);
    return hi > 0 ? hi : 1;
}

enum { MARG = 14, TITLE = 30, BARW = 16, FIG_W_MIN = 720 };

typedef struct fig {
    cairo_t *cr;
    double x0, y0, mag;      /* picture origin and magnification */
    size_t ny, nx;
} fig;

static void ellipse(cairo_t *cr, double cx, double cy, double rx, double ry)
{
    cairo_new_path(cr);
    cairo_save(cr);
    cairo_translate(cr, cx, cy);
    cairo_scale(cr, rx, ry);
    cairo_arc(cr, 0, 0, 1, 0, 2 * KW_PI);
    cairo_restore(cr);
}

static const double colours[2][3] = {{1.0, 0.55, 0.0}, {0.1, 0.8, 1.0}};

/* The effects marked on the picture: the two shifts of an insert. */
static int marked(const kw_preview_effect *e)
{
    return strcmp(e->name, "fat_water_shift") == 0 ||
           strcmp(e->name, "off_resonance_displacement") == 0;
}

/* Each effect: its insert's true outline (dashed), its measured place
 * (solid) and an arrow between the centres, on the picture. */
static void draw_marks(const fig *f, const kw_preview_result *r)
{
    cairo_t *cr = f->cr;
    for (int i = 0; i < r->neffects && i < 2; i++) {
        const kw_preview_effect *e = &r->effects[i];
        if (!marked(e))
            continue;
        double dy = e->axis[0] == 'y' ? e->measured : 0, dx = e->axis[0] == 'x' ? e->measured : 0;
        /* pixel (row, col) is centred at (col + 0.5, row + 0.5) picture pixels */
        double cx = f->x0 + (e->centre_px[1] + 0.5) * f->mag, cy = f->y0 + (e->centre_px[0] + 0.5) * f->mag;
        double rx = e->radius_px[1] * f->mag, ry = e->radius_px[0] * f->mag;
        cairo_set_source_rgb(cr, colours[i][0], colours[i][1], colours[i][2]);
        cairo_set_line_width(cr, 1.5);
        double dash[2] = {5, 4};
        cairo_set_dash(cr, dash, 2, 0);
        ellipse(cr, cx, cy, rx, ry);
        cairo_stroke(cr);
        cairo_set_dash(cr, NULL, 0, 0);
        ellipse(cr, cx + dx * f->mag, cy + dy * f->mag, rx, ry);
        cairo_stroke(cr);
        double ex = cx + dx * f->mag, ey = cy + dy * f->mag, len = hypot(ex - cx, ey - cy);
        if (len > 3) {
            cairo_move_to(cr, cx, cy);
            cairo_line_to(cr, ex, ey);
            cairo_stroke(cr);
            double ux = (ex - cx) / len, uy = (ey - cy) / len, h = len < 12 ? len / 2 : 6;
            cairo_move_to(cr, ex, ey);
            cairo_line_to(cr, ex - h * ux - h * 0.6 * uy, ey - h * uy + h * 0.6 * ux);
            cairo_line_to(cr, ex - h * ux + h * 0.6 * uy, ey - h * uy - h * 0.6 * ux);
            cairo_close_path(cr);
            cairo_fill(cr);
        }
        char b[16];
        snprintf(b, sizeof b, "%d", i + 1);
        cairo_set_font_size(cr, 14);
        cairo_move_to(cr, cx + rx + 4, cy - ry);
        cairo_show_text(cr, b);
        cairo_new_path(cr);
    }
}

/* The grey bar with ticks at bx, as tall as the picture (the window 0..hi). */
static void draw_bar(cairo_t *cr, double bx, double y0, double ph, double hi)
{
    for (int k = 0; k < (int)ph; k++) {
        double g = 1.0 - (double)k / ph;
        cairo_set_source_rgb(cr, g, g, g);
        cairo_rectangle(cr, bx, y0 + k, BARW, 1);
        cairo_fill(cr);
    }
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 1);
    cairo_rectangle(cr, bx + 0.5, y0 + 0.5, BARW, ph);
    cairo_stroke(cr);
    double ticks[16], step;
    size_t nt = kw_figure_ticks(0, hi, 5, ticks, 16, &step);
    cairo_set_font_size(cr, 11);
    for (size_t i = 0; i < nt; i++) {
        double y = y0 + ph - ticks[i] / hi * ph;
        char b[32];
        kw_figure_tick_text(b, sizeof b, ticks[i], step);
        cairo_move_to(cr, bx + BARW, y);
        cairo_line_to(cr, bx + BARW + 5, y);
        cairo_stroke(cr);
        cairo_move_to(cr, bx + BARW + 8, y + 4);
        cairo_show_text(cr, b);
    }
    cairo_save(cr);
    cairo_move_to(cr, bx + BARW + 52, y0 + ph / 2 + 70);
    cairo_rotate(cr, -KW_PI / 2);
    cairo_show_text(cr, "magnitude (signal / water PD)");
    cairo_restore(cr);
}

/* A scale bar in mm under the picture (a round length near a quarter of
 * the FOV) and the axes' names. */
static void draw_scalebar(const fig *f, const kw_preview_result *r)
{
    cairo_t *cr = f->cr;
    double ph = (double)f->ny * f->mag;
    static const double lens[] = {5, 10, 20, 50, 100, 200, 500};
    double fov_mm = (double)f->nx * r->pixel_m[1] * 1e3, len = lens[0];
    for (int i = 0; i < 7; i++)
        if (lens[i] <= fov_mm / 4)
            len = lens[i];
    double px = len / (r->pixel_m[1] * 1e3) * f->mag, y = f->y0 + ph + 16;
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 3);
    cairo_move_to(cr, f->x0, y);
    cairo_line_to(cr, f->x0 + px, y);
    cairo_stroke(cr);
    char b[64];
    snprintf(b, sizeof b, "%.0f mm", len);
    cairo_set_font_size(cr, 12);
    cairo_move_to(cr, f->x0 + px + 8, y + 4);
    cairo_show_text(cr, b);
    cairo_move_to(cr, f->x0 + px + 60, y + 4);
    cairo_show_text(cr, "x: readout, y: phase");
}

/* `text` in lines no wider than w from (x, y), `lh` apart; returns the y
 * under the last line. */
static double draw_wrapped(cairo_t *cr, const char *c, double x, double y, double w, double lh)
{
    char line[512];
    cairo_text_extents_t te;
    while (*c) {
        size_t n = 0, cut = 0;
        for (; c[n] && n + 1 < sizeof line; n++) {
            if (c[n] != ' ')
                continue;
            memcpy(line, c, n);
            line[n] = 0;
            cairo_text_extents(cr, line, &te);
            if (te.x_advance > w)
                break;
            cut = n;
        }
        if (!c[n] || n + 1 >= sizeof line) {
            memcpy(line, c, n);
            line[n] = 0;
            cairo_text_extents(cr, line, &te);
            if (te.x_advance <= w || !cut)
                cut = n;
        }
        memcpy(line, c, cut);
        line[cut] = 0;
        cairo_move_to(cr, x, y);
        cairo_show_text(cr, line);
        y += lh;
        c += cut;
        while (*c == ' ')
            c++;
    }
    return y;
}

/* The legend: each effect of r (numbered as marked, after `head`). */
static double draw_effects(cairo_t *cr, const kw_preview_result *r, const char *head, double x,
                           double y, double w)
{
    cairo_set_font_size(cr, 12);
    for (int i = 0; i < r->neffects; i++) {
        const kw_preview_effect *e = &r->effects[i];
        char b[256];
        const char *u = strcmp(e->unit, "pixels") == 0 ? " px"
                        : strcmp(e->name, "gibbs_overshoot") == 0 ? " of the jump" : "";
        const char *what = strcmp(e->name, "fat_water_shift") == 0 ? "fat-water shift"
                           : strcmp(e->name, "t2star_blur") == 0   ? "T2* blur (PSF FWHM)"
                           : strcmp(e->name, "snr_ratio") == 0     ? "SNR / the reference's"
                           : strcmp(e->name, "edge_width_10_90") == 0 ? "edge 10-90% width"
                           : strcmp(e->name, "gibbs_overshoot") == 0  ? "Gibbs overshoot"
                                                                   : "field-bump shift";
        const char *along = e->axis[0] == 'x'                     ? " along x"
                            : e->axis[0] != 'y'                   ? ""
                            : strcmp(e->name, "t2star_blur") == 0 ? " along y"
                                                                  : " along y (down)";
        snprintf(b, sizeof b, "%s%d  %s%s: predicted %+.3f%s, measured %+.3f%s, difference "
                 "%+.3f%s (tolerance %.3f%s): %s", head, i + 1, what, along, e->predicted, u,
                 e->measured, u, e->difference, u, e->tolerance, u, e->pass ? "pass" : "FAIL");
        if (i < 2 && marked(e))
            cairo_set_source_rgb(cr, colours[i][0] * 0.8, colours[i][1] * 0.6, colours[i][2] * 0.8);
        else
            cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
        y = draw_wrapped(cr, b, x, y, w, 16);
    }
    return y;
}

/* The notes under the legend, then the caution. */
static double draw_notes(cairo_t *cr, double x, double y, double w)
{
    cairo_set_font_size(cr, 12);
    cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
    y = draw_wrapped(cr, "dashed: the insert's true place; solid: where the image shows it "
                         "(arrow: the measured shift)", x, y, w, 16);
    cairo_set_font_size(cr, 10);
    return draw_wrapped(cr, KW_SAFETY_CAUTION, x, y + 4, w, 13);
}

/* One picture at f (nearest neighbour, window 0..hi) with its label above. */
static void draw_picture(cairo_surface_t *s, const fig *f, const kw_preview_result *r, double hi,
                         const char *label)
{
    double pw = (double)f->nx * f->mag, ph = (double)f->ny * f->mag;
    cairo_surface_flush(s);
    unsigned char *data = cairo_image_surface_get_data(s);
    int stride = cairo_image_surface_get_stride(s);
    for (size_t yy = 0; yy < (size_t)ph; yy++) {
        uint32_t *row = (uint32_t *)(data + (size_t)stride * (yy + (size_t)f->y0));
        for (size_t xx = 0; xx < (size_t)pw; xx++) {
            double v = r->image[(size_t)((double)yy / f->mag) * f->nx +
                                (size_t)((double)xx / f->mag)] / hi;
            unsigned g = (unsigned)(255.0 * (v < 0 ? 0 : v > 1 ? 1 : v) + 0.5);
            row[xx + (size_t)f->x0] = (g << 16) | (g << 8) | g;
        }
    }
    cairo_surface_mark_dirty(s);
    char t[160];
    snprintf(t, sizeof t, "%s%s, %zu x %zu, %.0f Hz/pixel", label, seq_label[r->sequence],
             f->nx, f->ny, r->bandwidth_per_pixel_hz);
    if (r->sequence == 2)
        snprintf(t, sizeof t, "%sEPI, %zu x %zu, echo spacing %.3f ms", label, f->nx, f->ny,
                 r->echo_spacing_s * 1e3);
    cairo_set_source_rgb(f->cr, 0, 0, 0);
    cairo_set_font_size(f->cr, 13);
    cairo_move_to(f->cr, f->x0, f->y0 - 6);
    cairo_show_text(f->cr, t);
    draw_marks(f, r);
    draw_scalebar(f, r);
}

static double magnification(const kw_preview_result *r)
{
    size_t side = r->dims[0] > r->dims[1] ? r->dims[0] : r->dims[1];
    return side >= 384 ? 1 : ceil(384.0 / (double)side);
}

/* The picture of r (and of the reference q beside it, when given). */
static kw_status write_png(const char *path, const kw_preview_result *r,
                           const kw_preview_result *q)
{
    fig f = {NULL, MARG, MARG + TITLE + 20, magnification(r), r->dims[0], r->dims[1]};
    fig g = f;
    double pw = (double)f.nx * f.mag, ph = (double)f.ny * f.mag, hi = window_hi(r->image, f.ny * f.nx);
    double right = MARG + pw;
    if (q) {
        g.mag = magnification(q);
        g.ny = q->dims[0];
        g.nx = q->dims[1];
        g.x0 = MARG + pw + 40;
        right = g.x0 + (double)g.nx * g.mag;
        if ((double)g.ny * g.mag > ph)
            ph = (double)g.ny * g.mag;
        double h2 = window_hi(q->image, g.ny * g.nx);
        hi = h2 > hi ? h2 : hi;
    }
    int W = (int)(right + 16 + BARW + 70 + MARG);
    if (W < FIG_W_MIN)
        W = FIG_W_MIN;
    int nlines = r->neffects + (q ? q->neffects + 1 : 0);
    int H = (int)(f.y0 + ph + 30 + 32 * nlines + 20 + 13 * 5 + MARG);
    cairo_surface_t *s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, W, H);
    cairo_t *cr = cairo_create(s);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    f.cr = g.cr = cr;
    char title[160];
    snprintf(title, sizeof title, "kweave preview at %.3g T: the planner's predictions on the "
             "simulated image", r->b0_t);
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_font_size(cr, 15);
    cairo_move_to(cr, MARG, MARG + 17);
    cairo_show_text(cr, title);
    draw_picture(s, &f, r, hi, q ? "protocol: " : "");
    if (q)
        draw_picture(s, &g, q, hi, "reference: ");
    draw_bar(cr, right + 16, f.y0, ph, hi);
    double y = draw_effects(cr, r, "", MARG, f.y0 + ph + 44, W - 2 * MARG);
    if (q) {
        cairo_set_source_rgb(cr, 0, 0, 0);
        y = draw_wrapped(cr, "reference (right):", MARG, y + 4, W - 2 * MARG, 16);
        y = draw_effects(cr, q, "ref ", MARG, y, W - 2 * MARG);
    }
    draw_notes(cr, MARG, y, W - 2 * MARG);
    cairo_destroy(cr);
    kw_status st = kw_plot_write_png(s, path);
    cairo_surface_destroy(s);
    kw_figure_release_fonts();
    return st;
}

/* ---- the verb --------------------------------------------------------------------- */

/* The quantity of a protocol key's text, for its placeholder in the help. */
static kw_unit_kind key_unit(const char *key)
{
    static const struct {
        const char *key;
        kw_unit_kind unit;
    } units[] = {{"fov", KW_UNIT_LENGTH},        {"slice", KW_UNIT_LENGTH},
                 {"b0", KW_UNIT_FIELD},          {"gmax", KW_UNIT_GRADIENT},
                 {"slew", KW_UNIT_SLEW},         {"raster", KW_UNIT_TIME},
                 {"te", KW_UNIT_TIME},           {"tr", KW_UNIT_TIME},
                 {"rf-duration", KW_UNIT_TIME},  {"t2star", KW_UNIT_TIME},
                 {"max-readout", KW_UNIT_TIME},  {"temperature", KW_UNIT_TEMPERATURE}};
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++)
        if (strcmp(units[i].key, key) == 0)
            return units[i].unit;
    return KW_UNIT_NONE;
}

/* The two protocols side by side: each effect's prediction and
 * measurement for the protocol and for the reference (its own run). */
static void side_by_side(const kw_preview_result *r, const kw_preview_result *q)
{
    printf("Side by side (protocol | reference; predicted / measured)\n");
    printf("  %-28s %4s %25s   %25s\n", "effect", "axis", "protocol", "reference");
    for (int i = 0; i < r->neffects; i++) {
        const kw_preview_effect *e = &r->effects[i], *g = NULL;
        for (int j = 0; j < q->neffects; j++)
            if (strcmp(q->effects[j].name, e->name) == 0)
                g = &q->effects[j];
        char a[64], b[64];
        snprintf(a, sizeof a, "%+.4f / %+.4f", e->predicted, e->measured);
        if (g)
            snprintf(b, sizeof b, "%+.4f / %+.4f%s", g->predicted, g->measured,
                     strcmp(g->axis, e->axis) ? (g->axis[0] == 'x' ? " (x)" : " (y)") : "");
        else
            snprintf(b, sizeof b, "%s", strcmp(e->name, "snr_ratio") == 0 ? "1 (itself)" : "-");
        printf("  %-28s %4s %25s   %25s\n", e->name, e->axis[0] ? e->axis : "-", a, b);
    }
}

/* The JSON: the protocol's report, with the reference's own report under
 * "reference_preview" when there is one. */
static kw_status write_json(const char *path, kw_preview *pv, kw_preview *rv)
{
    char *text = NULL, *rtext = NULL;
    kw_status st = kw_preview_report_json(pv, &text);
    if (!st && !rv) {
        st = kw_outfile_write_all(path, text, strlen(text));
        kw_free(text);
        return st;
    }
    if (!st)
        st = kw_preview_report_json(rv, &rtext);
    cJSON *root = NULL, *ref = NULL;
    if (!st)
        st = kw_json_parse(text, strlen(text), &root);
    if (!st)
        st = kw_json_parse(rtext, strlen(rtext), &ref);
    if (!st && !cJSON_AddItemToObject(root, "reference_preview", ref)) {
        cJSON_Delete(ref);
        st = kw_set_error(KW_ENOMEM, "out of memory");
    }
    if (!st)
        st = kw_json_write(path, root);
    cJSON_Delete(root);
    kw_free(text);
    kw_free(rtext);
    return st;
}

/* One preview made and run; an exit code (or -1) and *out. */
static int make_run(const kw_preview_options *o, const char *what, kw_preview **out)
{
    kw_status st = kw_preview_create(out, o);
    if (!st)
        st = kw_preview_execute(*out, kw_cli_progress, NULL);
    kw_cli_progress_done();
    if (st) {
        kw_preview_destroy(*out);
        *out = NULL;
        return kw_cli_lib_status(st, what, param_map);
    }
    return -1;
}

static int run(const kw_protocol *p, const kw_preview_options *base, const char *json,
               const char *png)
{
    kw_preview_options o = *base;
    o.protocol = p;
    kw_preview *pv = NULL, *rv = NULL;
    int rc = make_run(&o, "preview", &pv);
    if (rc >= 0)
        return rc;
    if (base->reference) { /* the reference's own effects, for the side by side */
        kw_preview_options ro = *base;
        ro.protocol = base->reference;
        ro.reference = NULL;
        if ((rc = make_run(&ro, "reference", &rv)) >= 0) {
            kw_preview_destroy(pv);
            return rc;
        }
    }
    const kw_preview_result *r = kw_preview_get_result(pv);
    kw_status st = json ? write_json(json, pv, rv) : KW_OK;
    if (st) {
        rc = kw_cli_status(st, "json");
    } else if (png && (st = write_png(png, r, rv ? kw_preview_get_result(rv) : NULL))) {
        rc = kw_cli_status(st, "png");
    } else {
        if (!json || strcmp(json, "-") != 0) {
            report_text(r);
            if (rv)
                side_by_side(r, kw_preview_get_result(rv));
            printf("\n%s\n", KW_SAFETY_CAUTION);
        }
        rc = KW_EXIT_OK;
    }
    kw_preview_destroy(pv);
    kw_preview_destroy(rv);
    return rc;
}

int kw_cmd_preview(int argc, char **argv)
{
    const char *const *keys = kw_protocol_keys();
    int nk = 0;
    while (keys[nk] && nk < MAX_KEYS)
        nk++;
    const char *val[MAX_KEYS] = {0};
    int seen[MAX_KEYS] = {0};
    char help[MAX_KEYS][80];
    const char *protocol = NULL, *json = NULL, *png = NULL, *reference = NULL;
    long replicas = 50, seed = 1;
    kw_preview_options o;
    kw_preview_options_init(&o);
    kw_opt table[MAX_KEYS + 16];
    int t = 0;
    table[t++] = (kw_opt){"protocol", KW_OPT_STRING, &protocol, KW_UNIT_NONE, NULL,
                          "protocol file of key = value lines, as kweave plan reads it (options "
                          "override it; default: none, plan's defaults)"};
    for (int k = 0; k < nk; k++) {
        snprintf(help[k], sizeof help[k], "as kweave plan --%s (default: plan's)", keys[k]);
        table[t++] = (kw_opt){keys[k], KW_OPT_STRING, &val[k], key_unit(keys[k]), &seen[k],
                              help[k]};
    }
    table[t++] = (kw_opt){"bump", KW_OPT_UNIT, &o.bump_hz, KW_UNIT_FREQUENCY, NULL,
                          "field bump on the CSF vial (default 100Hz; 0Hz: none)"};
    table[t++] = (kw_opt){"flip", KW_OPT_UNIT, &o.flip_rad, KW_UNIT_ANGLE, NULL,
                          "flip angle of the GRE and EPI contrast (default 15deg)"};
    table[t++] = (kw_opt){"fat-tolerance", KW_OPT_DOUBLE, &o.fat_tolerance_px, KW_UNIT_NONE, NULL,
                          "fat shift: allowed |measured - predicted| in pixels (default 0.1)"};
    table[t++] = (kw_opt){"bump-tolerance", KW_OPT_DOUBLE, &o.bump_tolerance, KW_UNIT_NONE, NULL,
                          "bump displacement: allowed fraction of the prediction (default 0.1)"};
    table[t++] = (kw_opt){"blur-tolerance", KW_OPT_DOUBLE, &o.blur_tolerance, KW_UNIT_NONE, NULL,
                          "T2* blur width: allowed fraction of the prediction (default 0.15; "
                          "measured when the protocol gives t2star)"};
    table[t++] = (kw_opt){"reference", KW_OPT_STRING, &reference, KW_UNIT_NONE, NULL,
                          "protocol file of a reference protocol: the SNR ratio measured by "
                          "pseudo-replicas (default: none)"};
    table[t++] = (kw_opt){"replicas", KW_OPT_INT, &replicas, KW_UNIT_NONE, NULL,
                          "pseudo-replicas per protocol for the SNR (default 50)"};
    table[t++] = (kw_opt){"seed", KW_OPT_INT, &seed, KW_UNIT_NONE, NULL,
                          "noise seed of the pseudo-replicas (default 1)"};
    table[t++] = (kw_opt){"snr-tolerance", KW_OPT_DOUBLE, &o.snr_tolerance, KW_UNIT_NONE, NULL,
                          "SNR ratio: allowed fraction of the prediction (default 0.1)"};
    table[t++] = (kw_opt){"edge-tolerance", KW_OPT_DOUBLE, &o.edge_tolerance, KW_UNIT_NONE, NULL,
                          "edge: allowed fraction of the 10-90% width; x 0.1 of the jump for the "
                          "overshoot (default 0.05)"};
    table[t++] = (kw_opt){"json", KW_OPT_STRING, &json, KW_UNIT_NONE, NULL,
                          "write the report as JSON (- for stdout, in place of the text; default: "
                          "not written)"};
    table[t++] = (kw_opt){"png", KW_OPT_STRING, &png, KW_UNIT_NONE, NULL,
                          "the image with each effect marked, PNG FILE (default: not written)"};
    table[t] = (kw_opt){NULL, 0, NULL, 0, NULL, NULL};
    static const kw_opt_arg args[] = {{"sequence", "WORD"}, {"bandwidth", "BANDWIDTH"},
                                      {"shots", "N"}, {"interleaves", "N"}, {"spokes", "N"},
                                      {"averages", "N"}, {"tbw", "X"}, {"spoiler", "X"},
                                      {"crusher", "X"}, {"partial-fourier", "X"},
                                      {"fat-tolerance", "X"}, {"bump-tolerance", "X"}, {"blur-tolerance", "X"}, {"edge-tolerance", "X"}, {"snr-tolerance", "X"},
                                      {NULL, NULL}};
    kw_opts_set_args(args);
    int rc = kw_opts_parse(argc, argv, table,
                           "usage: kweave preview [--protocol FILE] [plan options] [--bump HZ] "
                           "[--json FILE] [--png FILE]\n"
                           "Simulates the protocol's acquisition of the weave object and checks "
                           "the planner's predictions on the image: fat shift, off-resonance "
                           "displacement, T2* blur, edge width and ringing, SNR against a "
                           "reference.",
                           NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (replicas < 2 || replicas > 10000)
        return kw_cli_fail("--replicas", "must be 2 .. 10000 (got %ld)", replicas);
    if (seed < 0)
        return kw_cli_fail("--seed", "must be >= 0 (got %ld)", seed);
    o.replicas = (int)replicas;
    o.seed = (uint64_t)seed;
    kw_protocol ref;
    if (reference) {
        kw_protocol_input *ri = NULL;
        kw_status rs = kw_protocol_input_create(&ri);
        if (!rs)
            rs = kw_protofile_read_into(ri, reference);
        if (!rs)
            rs = kw_protocol_input_finish(ri, &ref);
        kw_protocol_input_destroy(ri);
        if (rs)
            return kw_cli_status(rs, "--reference");
        o.reference = &ref;
    }
    kw_protocol_input *in = NULL;
    kw_status st = kw_protocol_input_create(&in);
    if (st)
        return kw_cli_status(st, NULL);
    kw_protocol p;
    if (protocol && (st = kw_protofile_read_into(in, protocol))) {
        kw_protocol_input_destroy(in);
        return kw_cli_status(st, "protocol");
    }
    for (int k = 0; !st && k < nk; k++)
        if (seen[k]) {
            if (strcmp(keys[k], "bandwidth") == 0)
                st = kw_protocol_input_clear(in, "bandwidth");
            if (!st)
                st = kw_protocol_input_set(in, keys[k], val[k]);
        }
    if (!st)
        st = kw_protocol_input_finish(in, &p);
    kw_protocol_input_destroy(in);
    if (st)
        return kw_cli_status(st, NULL);
    return run(&p, &o, json, png);
}
