/* pattern_report.c: the reports of `kweave pattern`: the analysis as text
 * and JSON, the PSF picture, the --compare table and picture. The figures
 * come from recon/kw_pattern_analysis.h. */
#define _POSIX_C_SOURCE 200809L
#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis_json.h"
#include "cli.h"
#include "figure.h"
#include "pattern_cli.h"
#include "png.h"
#include "report_names.h"
#include "fonts.h"

#define PSF_DB_FLOOR -60.0 /* picture window: common practice, no source */

/* ---- reports -------------------------------------------------------------------------- */

/* the library's report (recon/analysis_json.h) */
cJSON *kw_pattern_cli_json(const kw_pattern_report *p)
{
    return kw_pattern_analysis_json_build(&p->r, p->name, p->kind);
}

/* A row of the text report: the label (report_names.h, the JSON's names)
 * with `more` after it, in a column of 24. */
static void label(FILE *f, const char *name, const char *more)
{
    char buf[64];
    snprintf(buf, sizeof buf, "%s%s", name, more);
    fprintf(f, "  %-24s", buf);
}

void kw_pattern_cli_text(FILE *f, const kw_pattern_report *p)
{
    const kw_pattern_analysis *a = &p->r;
    fprintf(f, "pattern %s (%s, %s %zux%zu)\n", p->name, p->kind[0] ? p->kind : "unknown kind",
            a->cartesian ? "Cartesian" : "non-Cartesian", a->dims[0], a->dims[1]);
    if (a->cartesian) {
        label(f, RN_LABEL(AN_ACCELERATION), "");
        fprintf(f, "%.3f (%s %.4f)\n", a->acceleration, RN_LABEL(AN_SAMPLED_FRACTION),
                a->sampled_fraction);
        if (a->plane) {
            label(f, RN_LABEL(AN_ACS_BLOCK), "");
            fprintf(f, "%zu x %zu (%g readout lines)\n", a->acs_block[1], a->acs_block[0],
                    a->acs_lines);
        } else {
            label(f, RN_LABEL(AN_ACS_LINES), "");
            fprintf(f, "%g\n", a->acs_lines);
        }
        label(f, RN_LABEL(AN_MAX_GAP), "");
        fprintf(f, "%g delta-k\n", a->max_gap);
    } else {
        if (a->weights == KW_PATTERN_WEIGHTS_RADIAL) {
            label(f, RN_LABEL(AN_SPOKES), "");
            fprintf(f, "%zu per plane (%s: %g)\n", a->spokes, RN_LABEL(AN_NYQUIST_SPOKES),
                    a->nyquist_spokes);
            label(f, RN_LABEL(AN_ACCELERATION), "");
            fprintf(f, "%.3f (pi N/2 over spokes); %s %.4f of the N x N grid\n",
                    a->acceleration, RN_LABEL(AN_SAMPLED_FRACTION), a->sampled_fraction);
        } else {
            label(f, RN_LABEL(AN_READOUTS), "");
            fprintf(f, "%zu\n", a->spokes);
            if (isfinite(a->acceleration)) {
                label(f, RN_LABEL(AN_ACCELERATION), "");
                fprintf(f, "%.3f (grid points over samples)\n", a->acceleration);
            }
            label(f, RN_LABEL(AN_SAMPLED_FRACTION), "");
            fprintf(f, "%.4f of the N x N grid\n", a->sampled_fraction);
        }
        label(f, RN_LABEL(AN_MAX_GAP), "");
        fprintf(f, "%.3f delta-k\n", a->max_gap);
    }
    label(f, RN_LABEL(AN_FWHM), "");
    fprintf(f, "%.2f pixels", a->fwhm_main);
    fprintf(f, " (%s %.2f, %s %.2f)\n", a->axes[0], a->psf.fwhm[0], a->axes[1], a->psf.fwhm[1]);
    label(f, RN_LABEL(AN_PEAK_SIDELOBE), "");
    fprintf(f, "%.4f of the peak (%.1f dB) at %s %+ld, %s %+ld px\n",
            a->psf.peak_sidelobe, 20 * log10(a->psf.peak_sidelobe > 0 ? a->psf.peak_sidelobe : 1e-30),
            a->axes[0], a->psf.sidelobe_at[0], a->axes[1], a->psf.sidelobe_at[1]);
    label(f, RN_LABEL(AN_ENERGY_OUTSIDE), "");
    fprintf(f, "%.4f\n", a->psf.energy_outside);
    if (a->tpsf_levels) {
        label(f, RN_LABEL(AN_TPSF), " (db4)");
        fprintf(f, "%.4f (by level, finest first:", a->tpsf_max);
        for (int l = 0; l < a->tpsf_levels; l++)
            fprintf(f, " %.4f", a->tpsf[l]);
        fprintf(f, ")\n");
    }
    if (!a->cartesian)
        fprintf(f, "  PSF by direct NDFT on %zu x %zu pixels%s\n", a->psfdims[0], a->psfdims[1],
                a->weights == KW_PATTERN_WEIGHTS_RADIAL ? ", radial area weights"
                : a->weights == KW_PATTERN_WEIGHTS_PIPE ? ", Pipe-Menon weights" : ", unit weights");
}

/* |psf| in dB over the peak, floored at PSF_DB_FLOOR, mapped to 0..1 */
static float *psf_db(const kw_pattern_analysis *a)
{
    size_t n = a->psfdims[0] * a->psfdims[1];
    float *v = kw_alloc(n * sizeof *v);
    if (!v)
        return NULL;
    for (size_t i = 0; i < n; i++) {
        double m = cabs((double complex)a->psfbuf[i]) / a->psf.peak;
        double db = m > 0 ? 20 * log10(m) : PSF_DB_FLOOR;
        if (db < PSF_DB_FLOOR)
            db = PSF_DB_FLOOR;
        v[i] = (float)((db - PSF_DB_FLOOR) / -PSF_DB_FLOOR);
    }
    return v;
}

kw_status kw_pattern_cli_gray_png(const char *path, const float *v, size_t h, size_t w)
{
    kw_array arr = {.dtype = KW_F32, .ndim = 2, .dims = {h, w}, .data = (void *)v};
    kw_png_opts o;
    kw_png_opts_default(&o);
    o.auto_window = 0;
    o.lo = 0;
    o.hi = 1;
    o.part = KW_PART_REAL;
    return kw_png_write_array(path, &arr, &o);
}

/* The PSF picture: |PSF| in dB over its peak, 0 (white) to PSF_DB_FLOOR
 * (black, and everything below), with its dB bar. */
int kw_pattern_cli_psf_png(const char *path, const kw_pattern_report *p)
{
    const kw_pattern_analysis *a = &p->r;
    float *v = psf_db(a);
    if (!v)
        return kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory"), "psf");
    size_t n = a->psfdims[0] * a->psfdims[1];
    for (size_t i = 0; i < n; i++) /* back from 0..1 to dB */
        v[i] = (float)(PSF_DB_FLOOR + (double)v[i] * -PSF_DB_FLOOR);
    kw_array arr = {.dtype = KW_F32, .ndim = 2, .dims = {a->psfdims[0], a->psfdims[1]},
                    .data = v};
    kw_png_opts o;
    kw_png_opts_default(&o);
    o.auto_window = 0;
    o.lo = (float)PSF_DB_FLOOR;
    o.hi = 0;
    o.part = KW_PART_REAL;
    char title[320];
    snprintf(title, sizeof title, "|PSF| of %s (%.0f dB and below: black)", p->name,
             PSF_DB_FLOOR);
    kw_figure_opts fo;
    kw_figure_opts_default(&fo);
    fo.title = title;
    fo.quantity = "|PSF|";
    fo.units = "dB re peak";
    kw_status st = kw_figure_write(path, &arr, &o, &fo);
    kw_free(v);
    return st ? kw_cli_status(st, "psf") : -1;
}

/* ---- compare: one picture and one table -------------------------------------------------- */

#define PANEL 256
#define LABEL 28

/* draw a gray picture (values 0..1, h x w) scaled into a PANEL square */
static void draw_panel(cairo_t *cr, const float *v, size_t h, size_t w, double x0, double y0)
{
    int stride = cairo_format_stride_for_width(CAIRO_FORMAT_RGB24, (int)w);
    unsigned char *buf = kw_alloc_n((size_t)stride * h, 1);
    if (!buf)
        return;
    for (size_t y = 0; y < h; y++) {
        uint32_t *row = (uint32_t *)(buf + y * (size_t)stride);
        for (size_t x = 0; x < w; x++) {
            float t = v[y * w + x];
            unsigned g = (unsigned)lround(255.0 * (t < 0 ? 0 : t > 1 ? 1 : t));
            row[x] = (g << 16) | (g << 8) | g;
        }
    }
    cairo_surface_t *s = cairo_image_surface_create_for_data(buf, CAIRO_FORMAT_RGB24, (int)w,
                                                             (int)h, stride);
    cairo_save(cr);
    cairo_translate(cr, x0, y0);
    double sc = (double)PANEL / (double)(h > w ? h : w);
    cairo_scale(cr, sc, sc);
    cairo_set_source_surface(cr, s, 0, 0);
    cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
    cairo_paint(cr);
    cairo_restore(cr);
    cairo_surface_destroy(s);
    kw_free(buf);
}

int kw_pattern_cli_compare_png(const char *path, const kw_pattern_report *as, int n)
{
    const int pad = 8;
    int W = n * (PANEL + pad) + pad, H = 2 * (PANEL + LABEL) + pad + LABEL;
    cairo_surface_t *surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, W, H);
    cairo_t *cr = cairo_create(surf);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, 13);
    for (int i = 0; i < n; i++) {
        double x0 = pad + i * (PANEL + pad);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_move_to(cr, x0, 18);
        cairo_show_text(cr, as[i].name);
        const kw_pattern_analysis *a = &as[i].r;
        draw_panel(cr, a->picture, a->pic_h, a->pic_w, x0, LABEL);
        float *db = psf_db(a);
        if (db) {
            draw_panel(cr, db, a->psfdims[0], a->psfdims[1], x0, 2 * LABEL + PANEL);
            kw_free(db);
        }
        char line[128];
        cairo_set_source_rgb(cr, 0, 0, 0);
        snprintf(line, sizeof line, "R %.2f  FWHM %.2f px  PSR %.3f", a->acceleration,
                 a->fwhm_main, a->psf.peak_sidelobe);
        cairo_move_to(cr, x0, LABEL + PANEL + 18);
        cairo_show_text(cr, line);
    }
    cairo_move_to(cr, pad, H - 10);
    cairo_show_text(cr, "top: pattern (mask rows = ky; trajectory kx right, ky up); "
                        "bottom: |PSF| in dB, 0 (white) to -60 (black)");
    cairo_surface_flush(surf);
    const unsigned char *data = cairo_image_surface_get_data(surf);
    int stride = cairo_image_surface_get_stride(surf);
    uint8_t *rgb = kw_alloc_n((size_t)W * (size_t)H, 3);
    kw_status st = KW_OK;
    if (!rgb || !data) {
        st = kw_set_error(KW_ENOMEM, "out of memory");
    } else {
        for (int y = 0; y < H; y++)
            for (int x = 0; x < W; x++) {
                uint32_t p = ((const uint32_t *)(data + (size_t)y * (size_t)stride))[x];
                uint8_t *q = rgb + ((size_t)y * (size_t)W + (size_t)x) * 3;
                q[0] = (uint8_t)(p >> 16);
                q[1] = (uint8_t)(p >> 8);
                q[2] = (uint8_t)p;
            }
        st = kw_png_write_rgb8(path, rgb, (size_t)W, (size_t)H);
    }
    kw_free(rgb);
    cairo_destroy(cr);
    cairo_surface_destroy(surf);
    kw_figure_release_fonts();
    return st ? kw_cli_status(st, "png") : -1;
}

static void fmt_num(char *b, size_t n, const char *fmt, double v)
{
    if (isfinite(v))
        snprintf(b, n, fmt, v);
    else
        snprintf(b, n, "n/a");
}

void kw_pattern_cli_compare_table(FILE *f, const kw_pattern_report *as, int n)
{
    fprintf(f, "| Pattern | Kind | R | Sampled | ACS | Max gap (dk) | PSF FWHM (px) | "
               "Peak sidelobe | Sidelobe at (px) | Energy outside main lobe | "
               "TPSF incoherence (db4) |\n");
    fprintf(f, "|---|---|---:|---:|---:|---:|---:|---:|---|---:|---:|\n");
    for (int i = 0; i < n; i++) {
        const kw_pattern_report *p = &as[i];
        const kw_pattern_analysis *a = &p->r;
        char r[32], s[32], acs[32], g[32], fw[32], ps[32], eo[32], tp[32];
        fmt_num(r, sizeof r, "%.2f", a->acceleration);
        fmt_num(s, sizeof s, "%.3f", a->sampled_fraction);
        if (a->cartesian && a->plane && a->acs_lines > 0)
            snprintf(acs, sizeof acs, "%zux%zu", a->acs_block[1], a->acs_block[0]);
        else
            fmt_num(acs, sizeof acs, "%.0f", a->acs_lines);
        fmt_num(g, sizeof g, "%.2f", a->max_gap);
        fmt_num(fw, sizeof fw, "%.2f", a->fwhm_main);
        fmt_num(ps, sizeof ps, "%.3f", a->psf.peak_sidelobe);
        fmt_num(eo, sizeof eo, "%.3f", a->psf.energy_outside);
        fmt_num(tp, sizeof tp, "%.3f", a->tpsf_max);
        fprintf(f, "| %s | %s | %s | %s | %s | %s | %s | %s | %s %+ld, %s %+ld | %s | %s |\n",
                p->name, p->kind[0] ? p->kind : "?", r, s, acs, g, fw, ps, a->axes[0],
                a->psf.sidelobe_at[0], a->axes[1], a->psf.sidelobe_at[1], eo, tp);
    }
}

