/* plot.c: timing diagram and k-space path of a plan, drawn with cairo. */
#include "plot.h"

#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "outfile.h"
#include "fonts.h"

static const char *const seq_label[] = {"gradient echo", "spin echo", "EPI", "radial", "spiral"};

/* ---- PNG through kw_outfile ---------------------------------------------------- */

static cairo_status_t png_sink(void *closure, const unsigned char *data, unsigned int len)
{
    FILE *fp = closure;
    return fwrite(data, 1, len, fp) == len ? CAIRO_STATUS_SUCCESS : CAIRO_STATUS_WRITE_ERROR;
}

kw_status kw_plot_write_png(cairo_surface_t *s, const char *path)
{
    cairo_surface_flush(s);
    KW_FAIL_IF(cairo_surface_status(s) != CAIRO_STATUS_SUCCESS, KW_EINTERNAL, "%s: cairo: %s",
               path, cairo_status_to_string(cairo_surface_status(s)));
    kw_outfile o;
    kw_status st = kw_outfile_open(&o, path);
    if (st)
        return st;
    cairo_status_t cs = cairo_surface_write_to_png_stream(s, png_sink, o.fp);
    if (cs != CAIRO_STATUS_SUCCESS) {
        kw_outfile_abort(&o);
        return kw_set_error(KW_EIO, "%s: %s", path, cairo_status_to_string(cs));
    }
    return kw_outfile_commit(&o);
}

/* "Nice" tick step: 1, 2 or 5 x 10^k, about `want` ticks over `span`. */
static double nice_step(double span, int want)
{
    double raw = span / want, p = pow(10, floor(log10(raw))), m = raw / p;
    return (m < 1.5 ? 1 : m < 3.5 ? 2 : m < 7.5 ? 5 : 10) * p;
}

static void text_at(cairo_t *cr, double x, double y, const char *s, double align_x,
                    double align_y)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    cairo_move_to(cr, x - align_x * e.width - e.x_bearing, y - align_y * e.height - e.y_bearing);
    cairo_show_text(cr, s);
}

/* ---- timing diagram --------------------------------------------------------------- */

enum { TW = 1400, ROWH = 130, TOP = 60, LEFT = 130, RIGHT = 30, BOTTOM = 70, NROW = 5 };

typedef struct frame {
    double t0, t1; /* s */
    double x0, x1; /* px */
    double gscale; /* T/m at full row half-height */
    double glimit; /* the amplitude limit: lobes above it are drawn red */
} frame;

static double tx(const frame *f, double t) { return f->x0 + (t - f->t0) / (f->t1 - f->t0) * (f->x1 - f->x0); }

static double row_mid(int row) { return TOP + (row + 0.5) * ROWH; }

/* A gradient value's height in its row; values beyond the scale (lobes
 * that break the limit by far) are drawn at the row's edge and labelled. */
static double gy(const frame *f, int row, double g)
{
    double c = fmax(-f->gscale, fmin(f->gscale, g));
    return row_mid(row) - c / f->gscale * (ROWH * 0.42);
}

static void lobe_path(cairo_t *cr, const frame *f, int row, double t0, const kw_trapezoid *l)
{
    double a = l->amplitude_T_per_m;
    cairo_move_to(cr, tx(f, t0), gy(f, row, 0));
    cairo_line_to(cr, tx(f, t0 + l->ramp_s), gy(f, row, a));
    cairo_line_to(cr, tx(f, t0 + l->ramp_s + l->flat_s), gy(f, row, a));
    cairo_line_to(cr, tx(f, t0 + 2 * l->ramp_s + l->flat_s), gy(f, row, 0));
    cairo_close_path(cr);
}

static void fill_lobe(cairo_t *cr, const frame *f, int row, double t0, const kw_trapezoid *l)
{
    int over = fabs(l->amplitude_T_per_m) > f->glimit * (1 + 1e-9);
    lobe_path(cr, f, row, t0, l);
    if (fabs(l->amplitude_T_per_m) > f->gscale) { /* off the scale: say how far */
        char b[64];
        snprintf(b, sizeof b, "%.1f mT/m (off the scale)", l->amplitude_T_per_m * 1e3);
        cairo_save(cr);
        cairo_set_source_rgb(cr, 0.6, 0.05, 0.05);
        cairo_set_font_size(cr, 11);
        double top = gy(f, row, l->amplitude_T_per_m);
        text_at(cr, tx(f, t0 + l->ramp_s + l->flat_s / 2), top + (l->amplitude_T_per_m > 0 ? -7 : 9),
                b, 0.5, 0.5);
        cairo_restore(cr);
        lobe_path(cr, f, row, t0, l);
    }
    if (over)
        cairo_set_source_rgba(cr, 0.9, 0.2, 0.2, 0.45);
    else
        cairo_set_source_rgba(cr, 0.2, 0.4, 0.8, 0.35);
    cairo_fill_preserve(cr);
    if (over)
        cairo_set_source_rgb(cr, 0.6, 0.05, 0.05);
    else
        cairo_set_source_rgb(cr, 0.1, 0.25, 0.6);
    cairo_set_line_width(cr, 1.2);
    cairo_stroke(cr);
}

static void adc_box(cairo_t *cr, const frame *f, double t0, double t1)
{
    double y = row_mid(4);
    cairo_rectangle(cr, tx(f, t0), y - ROWH * 0.25, fmax(tx(f, t1) - tx(f, t0), 1.0), ROWH * 0.5);
    cairo_set_source_rgba(cr, 0.1, 0.6, 0.2, 0.45);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.05, 0.4, 0.1);
    cairo_set_line_width(cr, 1);
    cairo_stroke(cr);
}

static void rf_pulse(cairo_t *cr, const frame *f, double t0, double t1, double tbw, double amp,
                     const char *label)
{
    /* a windowed sinc with TBW zero crossings: the shape is illustrative */
    double y0 = row_mid(0), h = ROWH * 0.4 * amp;
    int n = 200;
    for (int i = 0; i <= n; i++) {
        double u = (double)i / n - 0.5, x = KW_PI * tbw * u;
        double s = fabs(x) < 1e-9 ? 1 : sin(x) / x;
        s *= 0.54 + 0.46 * cos(2 * KW_PI * u);
        double px = tx(f, t0 + (t1 - t0) * ((double)i / n)), py = y0 - h * s;
        if (i == 0)
            cairo_move_to(cr, px, py);
        else
            cairo_line_to(cr, px, py);
    }
    cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
    cairo_set_line_width(cr, 1.5);
    cairo_stroke(cr);
    cairo_set_source_rgb(cr, 0.4, 0.05, 0.05);
    cairo_set_font_size(cr, 12);
    text_at(cr, tx(f, (t0 + t1) / 2), y0 - ROWH * 0.45, label, 0.5, 0);
}

kw_status kw_plot_timing(const char *path, const kw_plan_report *r)
{
    const kw_protocol *p = &r->protocol;
    const int H = TOP + NROW * ROWH + BOTTOM;
    cairo_surface_t *s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, TW, H);
    cairo_t *cr = cairo_create(s);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);

    frame f = {0, r->timeline_s, LEFT, TW - RIGHT, 0, p->gmax_T_per_m};
    /* amplitude scale: the limit, or the largest lobe up to 1.5 times the
     * limit; a lobe beyond that is drawn at the edge with its amplitude, so
     * that one absurd lobe does not flatten the others and the +/- limit
     * labels keep apart */
    double gmaxplot = p->gmax_T_per_m;
    for (int i = 0; i < r->nevents; i++)
        if (r->events[i].kind == KW_EV_LOBE)
            gmaxplot = fmax(gmaxplot, fabs(r->events[i].lobe.amplitude_T_per_m));
    f.gscale = fmin(gmaxplot, 1.5 * p->gmax_T_per_m) * 1.05;

    /* spiral waveform, EPI spec */
    double *sgx = NULL, *sgy = NULL;
    size_t sn = 0;
    kw_epi_info epi = {0};
    kw_gradient_limits lim = kw_plan_limits(p);
    if (p->sequence == KW_SEQ_SPIRAL) {
        kw_spiral_spec sp;
        kw_plan_spiral_spec(r, &sp);
        sn = r->spiral.readout_points + r->spiral.rampdown_points;
        sgx = malloc(sn * sizeof *sgx);
        sgy = malloc(sn * sizeof *sgy);
        if (!sgx || !sgy || kw_spiral_design(&sp, &lim, NULL, sgx, sgy, NULL, NULL)) {
            free(sgx), free(sgy);
            cairo_destroy(cr), cairo_surface_destroy(s);
            return kw_set_error(KW_ENOMEM, "plot: spiral waveform unavailable");
        }
    }
    if (p->sequence == KW_SEQ_EPI) {
        kw_epi_spec es;
        kw_plan_epi_spec(r, &es);
        kw_epi_size(&es, &lim, &epi);
    }

    /* title */
    char buf[256];
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_font_size(cr, 17);
    if (r->te_s < r->min_te_s) /* the TE asked for cannot be had: draw the minimum, say so */
        snprintf(buf, sizeof buf,
                 "kweave plan: %s %d-D, TE %.3f ms drawn (%.3f ms asked is below the minimum), "
                 "TR %.3f ms, %s", seq_label[p->sequence], p->ndim, r->min_te_s * 1e3,
                 r->te_s * 1e3, r->tr_s * 1e3, r->feasible ? "feasible" : "NOT feasible");
    else
        snprintf(buf, sizeof buf, "kweave plan: %s %d-D, TE %.3f ms, TR %.3f ms, %s",
                 seq_label[p->sequence], p->ndim, r->te_s * 1e3, r->tr_s * 1e3,
                 r->feasible ? "feasible" : "NOT feasible");
    text_at(cr, LEFT, 22, buf, 0, 0.5);
    cairo_set_font_size(cr, 12);
    snprintf(buf, sizeof buf,
             "gmax %.1f mT/m, slew %.0f T/m/s, raster %.0f us (dashed red: +/- gmax; red lobes break it). "
             "Hardware limits, not patient-safety limits (IEC 60601-2-33).",
             p->gmax_T_per_m * 1e3, p->slew_T_per_m_per_s, p->raster_s * 1e6);
    text_at(cr, LEFT, 44, buf, 0, 0.5);

    /* rows: labels, baselines, limits */
    static const char *const rowname[NROW] = {"RF", "G slice", "G phase", "G read", "ADC"};
    for (int row = 0; row < NROW; row++) {
        double y = row_mid(row);
        cairo_set_source_rgb(cr, 0.93, 0.93, 0.93);
        if (row % 2 == 0) {
            cairo_rectangle(cr, 0, TOP + row * ROWH, TW, ROWH);
            cairo_fill(cr);
        }
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_set_font_size(cr, 14);
        text_at(cr, 10, y, rowname[row], 0, 0.5);
        cairo_set_source_rgb(cr, 0.5, 0.5, 0.5);
        cairo_set_line_width(cr, 1);
        cairo_move_to(cr, LEFT, y);
        cairo_line_to(cr, TW - RIGHT, y);
        cairo_stroke(cr);
        if (row >= 1 && row <= 3) {
            /* amplitude axis with the limit */
            cairo_set_source_rgb(cr, 0, 0, 0);
            cairo_move_to(cr, LEFT, gy(&f, row, f.gscale));
            cairo_line_to(cr, LEFT, gy(&f, row, -f.gscale));
            cairo_stroke(cr);
            cairo_set_font_size(cr, 10);
            for (int sgn = -1; sgn <= 1; sgn++) {
                double g = sgn * p->gmax_T_per_m;
                snprintf(buf, sizeof buf, "%+.0f", g * 1e3);
                if (sgn == 0)
                    snprintf(buf, sizeof buf, "0");
                text_at(cr, LEFT - 6, gy(&f, row, g), buf, 1, 0.5);
                if (sgn) {
                    double dash[] = {6, 4};
                    cairo_set_dash(cr, dash, 2, 0);
                    cairo_set_source_rgb(cr, 0.85, 0.1, 0.1);
                    cairo_move_to(cr, LEFT, gy(&f, row, g));
                    cairo_line_to(cr, TW - RIGHT, gy(&f, row, g));
                    cairo_stroke(cr);
                    cairo_set_dash(cr, NULL, 0, 0);
                    cairo_set_source_rgb(cr, 0, 0, 0);
                }
            }
            text_at(cr, 10, y + 18, "mT/m", 0, 0.5);
        }
    }

    /* events */
    for (int i = 0; i < r->nevents; i++) {
        const kw_event *e = &r->events[i];
        switch (e->kind) {
        case KW_EV_LOBE: fill_lobe(cr, &f, (int)e->axis, e->t0, &e->lobe); break;
        case KW_EV_RF_EXCITE: rf_pulse(cr, &f, e->t0, e->t1, p->tbw, 0.5, "excitation"); break;
        case KW_EV_RF_REFOCUS: rf_pulse(cr, &f, e->t0, e->t1, p->tbw, 1.0, "refocusing"); break;
        case KW_EV_ADC: adc_box(cr, &f, e->t0, e->t1); break;
        case KW_EV_EPI_TRAIN: {
            double esp = epi.echo_spacing_s, fl = epi.readout.flat_s, rp = epi.readout.ramp_s;
            for (size_t m = 0; m < epi.lines_per_shot; m++) {
                kw_trapezoid l = epi.readout;
                if (m % 2)
                    l.amplitude_T_per_m = -l.amplitude_T_per_m;
                double ts = e->t0 + (double)m * esp;
                fill_lobe(cr, &f, KW_AX_READ, ts, &l);
                double w = p->matrix[0] / p->bandwidth_hz;
                adc_box(cr, &f, ts + rp + (fl - w) / 2, ts + rp + (fl + w) / 2);
                if (m + 1 < epi.lines_per_shot)
                    fill_lobe(cr, &f, KW_AX_PHASE, ts + epi.blip_start_s, &epi.blip);
            }
            break;
        }
        case KW_EV_SPIRAL: {
            for (int ax = 0; ax < 2; ax++) {
                const double *g = ax ? sgy : sgx;
                int row = ax ? KW_AX_PHASE : KW_AX_READ;
                cairo_move_to(cr, tx(&f, e->t0), gy(&f, row, 0));
                for (size_t j = 0; j < sn; j++) {
                    cairo_line_to(cr, tx(&f, e->t0 + (double)j * p->raster_s), gy(&f, row, g[j]));
                    cairo_line_to(cr, tx(&f, e->t0 + (double)(j + 1) * p->raster_s), gy(&f, row, g[j]));
                }
                cairo_set_source_rgb(cr, 0.1, 0.25, 0.6);
                cairo_set_line_width(cr, 1);
                cairo_stroke(cr);
            }
            break;
        }
        }
    }
    /* TE marker */
    double c = r->slice_select.ramp_s + r->rf_duration_s / 2;
    double te_l = fmax(r->te_s, r->min_te_s);
    double dash[] = {3, 3};
    cairo_set_dash(cr, dash, 2, 0);
    cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
    cairo_move_to(cr, tx(&f, c), TOP);
    cairo_line_to(cr, tx(&f, c), TOP + NROW * ROWH);
    cairo_move_to(cr, tx(&f, c + te_l), TOP);
    cairo_line_to(cr, tx(&f, c + te_l), TOP + NROW * ROWH);
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);
    cairo_set_font_size(cr, 12);
    snprintf(buf, sizeof buf, "TE %.3f ms", te_l * 1e3);
    text_at(cr, tx(&f, c + te_l) + 4, TOP + 12, buf, 0, 0.5);

    /* time axis */
    double yb = TOP + NROW * ROWH + 8;
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 1);
    cairo_move_to(cr, LEFT, yb);
    cairo_line_to(cr, TW - RIGHT, yb);
    cairo_stroke(cr);
    double step = nice_step(r->timeline_s * 1e3, 12);
    cairo_set_font_size(cr, 11);
    for (double t = 0; t <= r->timeline_s * 1e3 + 1e-9; t += step) {
        double x = tx(&f, t * 1e-3);
        cairo_move_to(cr, x, yb);
        cairo_line_to(cr, x, yb + 6);
        cairo_stroke(cr);
        snprintf(buf, sizeof buf, "%g", t);
        text_at(cr, x, yb + 16, buf, 0.5, 0.5);
    }
    cairo_set_font_size(cr, 13);
    text_at(cr, (LEFT + TW - RIGHT) / 2.0, yb + 40, "time (ms) from the start of the TR", 0.5, 0.5);

    free(sgx), free(sgy);
    cairo_destroy(cr);
    kw_status st = kw_plot_write_png(s, path);
    cairo_surface_destroy(s);
    kw_figure_release_fonts();
    return st;
}

/* ---- k-space path ------------------------------------------------------------------- */

enum { KW = 900, KM = 80 };

typedef struct kframe {
    double kmax; /* 1/m at the edge of the plot */
} kframe;

static double kx_px(const kframe *f, double k) { return KM + (k / f->kmax + 1) / 2 * (KW - 2 * KM); }
static double ky_px(const kframe *f, double k) { return KM + (1 - k / f->kmax) / 2 * (KW - 2 * KM); }

kw_status kw_plot_kspace(const char *path, const kw_plan_report *r)
{
    const kw_protocol *p = &r->protocol;
    cairo_surface_t *s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, KW, KW);
    cairo_t *cr = cairo_create(s);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    const double kmx = r->basic.k_max_per_m[0], kmy = r->basic.k_max_per_m[1];
    kframe f = {fmax(kmx, kmy) * 1.15};
    const double dkx = r->basic.delta_k_per_m[0], dky = r->basic.delta_k_per_m[1];
    const int nx = p->matrix[0], ny = p->matrix[1];
    kw_gradient_limits lim = kw_plan_limits(p);
    kw_status st = KW_OK;
    char buf[256];

    /* axes and the k-max box */
    cairo_set_source_rgb(cr, 0.6, 0.6, 0.6);
    cairo_set_line_width(cr, 1);
    cairo_move_to(cr, kx_px(&f, -f.kmax), ky_px(&f, 0));
    cairo_line_to(cr, kx_px(&f, f.kmax), ky_px(&f, 0));
    cairo_move_to(cr, kx_px(&f, 0), ky_px(&f, -f.kmax));
    cairo_line_to(cr, kx_px(&f, 0), ky_px(&f, f.kmax));
    cairo_stroke(cr);
    double dash[] = {6, 4};
    cairo_set_dash(cr, dash, 2, 0);
    cairo_set_source_rgb(cr, 0.85, 0.1, 0.1);
    if (p->sequence == KW_SEQ_RADIAL || p->sequence == KW_SEQ_SPIRAL)
        cairo_arc(cr, kx_px(&f, 0), ky_px(&f, 0), kx_px(&f, kmx) - kx_px(&f, 0), 0, 2 * KW_PI);
    else
        cairo_rectangle(cr, kx_px(&f, -kmx), ky_px(&f, kmy), kx_px(&f, kmx) - kx_px(&f, -kmx),
                        ky_px(&f, -kmy) - ky_px(&f, kmy));
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);

    cairo_set_line_width(cr, 1.2);
    switch (p->sequence) {
    case KW_SEQ_GRE:
    case KW_SEQ_SE: {
        int every = ny > 32 ? (ny + 31) / 32 : 1;
        for (int row = 0; row < ny; row++) {
            if (row % every && row != ny / 2)
                continue;
            double ky = (row - ny / 2) * dky;
            cairo_set_source_rgba(cr, 0.5, 0.5, 0.5, 0.6);
            cairo_move_to(cr, kx_px(&f, 0), ky_px(&f, 0));
            cairo_line_to(cr, kx_px(&f, -nx / 2 * dkx), ky_px(&f, ky));
            cairo_stroke(cr);
            cairo_set_source_rgb(cr, 0.1, 0.25, 0.7);
            cairo_move_to(cr, kx_px(&f, -nx / 2 * dkx), ky_px(&f, ky));
            cairo_line_to(cr, kx_px(&f, (nx - nx / 2 - 1) * dkx), ky_px(&f, ky));
            cairo_stroke(cr);
        }
        snprintf(buf, sizeof buf, "%d phase-encode lines (one in %d drawn); grey: prephasing",
                 ny, every);
        break;
    }
    case KW_SEQ_RADIAL: {
        int every = r->spokes > 64 ? (r->spokes + 63) / 64 : 1;
        cairo_set_source_rgb(cr, 0.1, 0.25, 0.7);
        for (int i = 0; i < r->spokes; i += every) {
            double a = KW_PI * i / r->spokes, k = nx / 2.0 * dkx;
            cairo_move_to(cr, kx_px(&f, -k * cos(a)), ky_px(&f, -k * sin(a)));
            cairo_line_to(cr, kx_px(&f, k * cos(a)), ky_px(&f, k * sin(a)));
            cairo_stroke(cr);
        }
        snprintf(buf, sizeof buf, "%d spokes (Nyquist %d; one in %d drawn)", r->spokes,
                 r->spokes_nyquist, every);
        break;
    }
    case KW_SEQ_EPI: {
        /* the path of kw_epi_design, drawn line by line (shot s acquires rows
         * first_row + s + shots m; even lines run +kx, odd lines -kx) */
        kw_epi_spec es;
        kw_plan_epi_spec(r, &es);
        kw_epi_info inf;
        if ((st = kw_epi_size(&es, &lim, &inf)))
            break;
        int shots = es.shots > 8 ? 8 : es.shots;
        const double xlo = -(nx / 2) * dkx, xhi = (nx - nx / 2 - 1) * dkx;
        for (int sh = shots - 1; sh >= 0; sh--) {
            if (sh == 0)
                cairo_set_source_rgb(cr, 0.1, 0.25, 0.7);
            else
                cairo_set_source_rgba(cr, 0.2, 0.6, 0.3, 0.6);
            for (size_t m = 0; m < inf.lines_per_shot; m++) {
                double ky = (inf.first_row + sh + es.shots * (int)m - ny / 2) * dky;
                double a = m % 2 ? xhi : xlo, b = m % 2 ? xlo : xhi;
                if (m == 0)
                    cairo_move_to(cr, kx_px(&f, a), ky_px(&f, ky));
                else
                    cairo_line_to(cr, kx_px(&f, a), ky_px(&f, ky)); /* the blip */
                cairo_line_to(cr, kx_px(&f, b), ky_px(&f, ky));
            }
            cairo_stroke(cr);
        }
        snprintf(buf, sizeof buf, "%d shot(s) x %zu lines (partial Fourier %.3g); blue: shot 1",
                 es.shots, inf.lines_per_shot, es.partial_fourier);
        break;
    }
    case KW_SEQ_SPIRAL: {
        /* interleaf 0 from its raster waveform (k = gamma-bar raster sum of G),
         * the others rotated by 2 pi i / interleaves */
        kw_spiral_spec sp;
        kw_plan_spiral_spec(r, &sp);
        size_t ng = r->spiral.readout_points;
        size_t ntot = ng + r->spiral.rampdown_points;
        double *gx = malloc(ntot * sizeof *gx), *gy = malloc(ntot * sizeof *gy);
        if (!gx || !gy) {
            free(gx), free(gy);
            st = kw_set_error(KW_ENOMEM, "plot: out of memory");
            break;
        }
        if ((st = kw_spiral_design(&sp, &lim, NULL, gx, gy, NULL, NULL))) {
            free(gx), free(gy);
            break;
        }
        int every = sp.interleaves > 16 ? (sp.interleaves + 15) / 16 : 1;
        const double c = KW_GAMMA_BAR_P * p->raster_s;
        for (int il = 0; il < sp.interleaves; il += every) {
            double ph = 2 * KW_PI * il / sp.interleaves, co = cos(ph), si = sin(ph);
            if (il == 0)
                cairo_set_source_rgb(cr, 0.1, 0.25, 0.7);
            else
                cairo_set_source_rgba(cr, 0.2, 0.6, 0.3, 0.7);
            double kx = 0, ky = 0;
            cairo_move_to(cr, kx_px(&f, 0), ky_px(&f, 0));
            for (size_t j = 0; j < ng; j++) {
                kx += c * gx[j];
                ky += c * gy[j];
                cairo_line_to(cr, kx_px(&f, co * kx - si * ky), ky_px(&f, si * kx + co * ky));
            }
            cairo_stroke(cr);
        }
        free(gx), free(gy);
        snprintf(buf, sizeof buf, "%d interleaves (one in %d drawn), %.2f ms each; blue: interleaf 1",
                 sp.interleaves, every, r->readout_per_interleave_s * 1e3);
        break;
    }
    }
    if (!st) {
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_set_font_size(cr, 17);
        char title[200];
        snprintf(title, sizeof title, "k-space path: %s, matrix %d x %d, FOV %.0f x %.0f mm",
                 seq_label[p->sequence], nx, ny, p->fov_m[0] * 1e3, p->fov_m[1] * 1e3);
        text_at(cr, KM, 25, title, 0, 0.5);
        cairo_set_font_size(cr, 13);
        text_at(cr, KM, 48, buf, 0, 0.5);
        /* tick labels in 1/m */
        double step = nice_step(f.kmax, 4);
        cairo_set_font_size(cr, 11);
        for (double k = -floor(f.kmax / step) * step; k <= f.kmax + 1e-9; k += step) {
            snprintf(buf, sizeof buf, "%g", fabs(k) < 1e-9 ? 0.0 : k);
            text_at(cr, kx_px(&f, k), KW - KM + 14, buf, 0.5, 0.5);
            text_at(cr, KM - 8, ky_px(&f, k), buf, 1, 0.5);
            cairo_move_to(cr, kx_px(&f, k), KW - KM);
            cairo_line_to(cr, kx_px(&f, k), KW - KM + 5);
            cairo_move_to(cr, KM - 5, ky_px(&f, k));
            cairo_line_to(cr, KM, ky_px(&f, k));
            cairo_stroke(cr);
        }
        cairo_rectangle(cr, KM, KM, KW - 2 * KM, KW - 2 * KM);
        cairo_stroke(cr);
        cairo_set_font_size(cr, 13);
        snprintf(buf, sizeof buf, "kx (1/m), readout; dashed red: k-max %.1f 1/m", kmx);
        text_at(cr, KW / 2.0, KW - KM + 38, buf, 0.5, 0.5);
        cairo_save(cr);
        cairo_translate(cr, 22, KW / 2.0);
        cairo_rotate(cr, -KW_PI / 2);
        text_at(cr, 0, 0, "ky (1/m), phase encode", 0.5, 0.5);
        cairo_restore(cr);
    }
    cairo_destroy(cr);
    if (!st)
        st = kw_plot_write_png(s, path);
    cairo_surface_destroy(s);
    kw_figure_release_fonts();
    return st;
}
