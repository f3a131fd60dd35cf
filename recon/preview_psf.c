/* preview_psf.c: the inserts imaged alone, and T2* blurring (kw_preview.h, docs/preview.md): the width of
 * the point-spread function along the axis the decay runs across (the EPI
 * train's rows; a Cartesian readout's columns), predicted from the decay
 * sampled at the planner's echo times and measured on a point insert. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "kw_simulate.h"
#include "preview_int.h"

/* One insert (a vial of weave) alone, with the protocol's timing: its image
 * (complex, (ny, nx)) and that image's DFT (kdft; the k-space on the
 * way). shape_df: the shape's own
 * extra off-resonance; field: a field map or NULL. */
kw_status kw_preview_insert(const kw_preview *p, const kw_shape *shape, double shape_df,
                              const float *field, const double *times, const uint8_t *mask,
                              kw_cfloat *img, kw_cfloat *kdft)
{
    size_t ny = (size_t)p->prot.matrix[1], nx = (size_t)p->prot.matrix[0];
    kw_phantom ph;
    memset(&ph, 0, sizeof ph);
    snprintf(ph.name, sizeof ph.name, "insert");
    ph.ndim = 2;
    ph.tissue = 1;
    ph.nshapes = 1;
    ph.shapes[0] = *shape;
    ph.shapes[0].parent = -1;
    ph.shapes[0].df_hz = shape_df;
    kw_sim_options so;
    kw_sim_options_init(&so);
    so.phantom = &ph;
    so.n[0] = 1;
    so.n[1] = ny;
    so.n[2] = nx;
    so.mask = mask;
    so.times = times;
    so.times_per_sample = times != NULL;
    so.bandwidth_hz = times ? 0 : p->bw;
    so.contrast = p->con;
    so.tissue_values = p->tvals;
    kw_sim *sim = NULL;
    kw_status st = kw_sim_create(&sim, &so);
    if (!st)
        st = kw_sim_execute(sim, kdft, NULL, NULL);
    if (!st && field) {
        kw_fieldmap_options fo;
        kw_fieldmap_options_init(&fo);
        fo.sim = sim;
        fo.field_hz = field;
        kw_fieldmap *fm = NULL;
        st = kw_fieldmap_create(&fm, &fo);
        if (!st)
            st = kw_fieldmap_execute(fm, kdft, NULL, NULL);
        kw_fieldmap_destroy(fm);
    }
    kw_sim_destroy(sim);
    if (!st)
        st = kw_preview_recon(kdft, ny, nx, 1, img);
    if (!st)
        st = kw_preview_dft(img, ny, nx, kdft);
    return st;
}

/* FWHM (pixels) of |p(y)| about y = 0, p(y) = sum_k c_k exp(i 2 pi (k -
 * n/2) y / n): the 1-D profile, continuous in y, of an image whose DFT along
 * the axis is c (the DFT's own interpolation). Half-maximum crossings are
 * found on a grid of 1/64 pixel, out to n/2 each side, and interpolated
 * linearly. NaN when |p(0)| is zero or no crossing is found. */
double kw_preview_fwhm(const kw_cdouble *c, size_t n)
{
    const double h = 1.0 / 64;
    double half = 0, w = 0;
    for (int side = -1; side <= 1; side += 2) {
        double prev = 0;
        for (long i = 0;; i++) {
            double y = side * h * (double)i;
            if (fabs(y) > (double)n / 2)
                return NAN;
            double re = 0, im = 0;
            for (size_t k = 0; k < n; k++) {
                double ph = 2 * KW_PI * ((double)k - (double)(n / 2)) * y / (double)n;
                double cr = creal(c[k]), ci = cimag(c[k]), co = cos(ph), si = sin(ph);
                re += cr * co - ci * si;
                im += cr * si + ci * co;
            }
            double a = hypot(re, im);
            if (i == 0) {
                if (!(a > 0))
                    return NAN;
                half = a / 2;
            } else if (a <= half) {
                w += h * ((double)i - 1 + (prev - half) / (prev - a));
                break;
            }
            prev = a;
        }
    }
    return w;
}

/* The decay's weights along the axis at the planner's own times: EPI row r
 * at TE + (r - ny/2) esp / shots for the rows of the train (the last ETL x
 * shots; partial Fourier leaves the first out), a readout's column c at TE
 * + (c - nx/2) / BW; w = kw_signal_decay() (GRE: exp(-t/T2*)). */
static void planned_weights(const kw_preview *p, double t2, double t2s, kw_cdouble *w, size_t n)
{
    const kw_plan_report *r = p->rep;
    int epi = p->prot.sequence == KW_SEQ_EPI;
    long first = epi ? (long)n - (long)r->echo_train_length * p->prot.shots : 0;
    for (size_t k = 0; k < n; k++) {
        double e = (double)k - (double)(n / 2);
        double t = epi ? r->te_s + e * r->echo_spacing_s / p->prot.shots
                       : r->te_s + e / r->basic.bandwidth_hz;
        w[k] = (long)k < first ? 0 : kw_signal_decay(&p->con, t2, t2s, t);
    }
}

/* The measured profile's DFT along the axis through the image centre (the
 * point's pixel (ny/2, nx/2)): c_k = sum over the other axis of the
 * image's DFT (the profile at the centre column or row). */
static void centre_line(const kw_cfloat *f, size_t ny, size_t nx, int axis, kw_cdouble *c)
{
    size_t n = axis == 0 ? ny : nx, m = axis == 0 ? nx : ny;
    for (size_t k = 0; k < n; k++) {
        kw_cdouble s = 0;
        for (size_t j = 0; j < m; j++)
            s += axis == 0 ? f[k * nx + j] : f[j * nx + k];
        c[k] = s;
    }
}

kw_status kw_preview_blur(kw_preview *p, const double *times, const uint8_t *mask,
                          kw_cfloat *buf, double *predicted, double *measured)
{
    size_t ny = (size_t)p->prot.matrix[1], nx = (size_t)p->prot.matrix[0];
    int axis = p->prot.sequence == KW_SEQ_EPI ? 0 : 1;
    size_t n = axis == 0 ? ny : nx;
    double t2s = p->prot.t2star_s, t2 = 2 * t2s;
    /* the point: a CSF disc of 0.02 pixel radius at the centre (its own
     * spectrum falls by 5e-4 at the band edge), with the protocol's T2* */
    kw_tissue_values tv[KW_TISSUE_COUNT];
    memset(tv, 0, sizeof tv);
    tv[KW_TISSUE_CSF] = (kw_tissue_values){1.0, 1.0, t2, t2s};
    kw_shape pt;
    memset(&pt, 0, sizeof pt);
    pt.kind = KW_SHAPE_ELLIPSE;
    pt.axes[0] = 0.02 * 2.0 / (double)nx;
    pt.axes[1] = 0.02 * 2.0 / (double)ny;
    pt.tissue = KW_TISSUE_CSF;
    pt.value = 1.0;
    p->tvals = tv;
    kw_status st = kw_preview_insert(p, &pt, 0.0, NULL, times, mask, buf, buf + ny * nx);
    p->tvals = NULL;
    if (st)
        return st;
    kw_cdouble *c = kw_alloc_n(2 * n, sizeof *c);
    KW_FAIL_IF(!c, KW_ENOMEM, "preview: out of memory");
    centre_line(buf + ny * nx, ny, nx, axis, c);
    *measured = kw_preview_fwhm(c, n);
    planned_weights(p, t2, t2s, c + n, n);
    *predicted = kw_preview_fwhm(c + n, n);
    kw_free(c);
    return KW_OK;
}

/* ---- the edge response: resolution and Gibbs ringing from the matrix ---------- */

/* Si(z) = integral_0^z sin(t)/t dt by its power series (z <= 5 here: the
 * terms fall below 1e-17 by n = 20). */
static double sine_integral(double z)
{
    double term = z, sum = z;
    for (int n = 1; n < 40; n++) {
        term *= -z * z / ((2.0 * n) * (2.0 * n + 1));
        sum += term / (2.0 * n + 1);
    }
    return sum;
}

/* The ideal band-limited edge (cutoff half the sampling rate, x in pixels)
 * 1/2 + Si(pi x) / pi: its 10-90% width 2 x90 with Si(pi x90)/pi = 0.4, and
 * its overshoot Si(pi)/pi - 1/2 (the Wilbraham-Gibbs overshoot, 8.95% of
 * the jump). */
void kw_preview_edge_ideal(double *width, double *overshoot)
{
    double lo = 0, hi = 1;
    for (int i = 0; i < 60; i++) {
        double m = (lo + hi) / 2;
        if (sine_integral(KW_PI * m) / KW_PI < 0.4)
            lo = m;
        else
            hi = m;
    }
    *width = 2 * lo;
    *overshoot = sine_integral(KW_PI) / KW_PI - 0.5;
}

/* |p(y)| of kw_preview_fwhm's profile at one y (pixels). */
static double profile_at(const kw_cdouble *c, size_t n, double y)
{
    double re = 0, im = 0;
    for (size_t k = 0; k < n; k++) {
        double ph = 2 * KW_PI * ((double)k - (double)(n / 2)) * y / (double)n;
        re += creal(c[k]) * cos(ph) - cimag(c[k]) * sin(ph);
        im += creal(c[k]) * sin(ph) + cimag(c[k]) * cos(ph);
    }
    return hypot(re, im);
}

/* The measured edge: a square of muscle (proton-density contrast, half-width
 * 0.5 phantom units: its right edge N/4 pixels right of the centre) imaged
 * alone on the protocol's grid, its profile along x through the centre row
 * over its plateau (the mean inside): the distance from the last
 * 90% point inside to the first 10% point outside, and the largest overshoot
 * within 3 pixels inside the edge. */
kw_status kw_preview_edge(kw_preview *p, kw_cfloat *buf, double *width, double *overshoot)
{
    size_t ny = (size_t)p->prot.matrix[1], nx = (size_t)p->prot.matrix[0];
    kw_tissue_values tv;
    kw_status st = kw_tissue_lookup(KW_TISSUE_MUSCLE, 3.0, NULL, &tv);
    if (st)
        return st;
    kw_shape sq;
    memset(&sq, 0, sizeof sq);
    sq.kind = KW_SHAPE_RECT;
    sq.axes[0] = sq.axes[1] = 0.5;
    sq.tissue = KW_TISSUE_MUSCLE;
    sq.value = tv.pd;
    kw_preview q = *p; /* proton-density contrast, no readout timing */
    q.con.seq = KW_CONTRAST_PD;
    q.con.b0_t = 3.0;
    q.bw = 0;
    q.tvals = NULL;
    if ((st = kw_preview_insert(&q, &sq, 0.0, NULL, NULL, NULL, buf, buf + ny * nx)))
        return st;
    kw_cdouble *c = kw_alloc_n(nx, sizeof *c);
    KW_FAIL_IF(!c, KW_ENOMEM, "preview: out of memory");
    centre_line(buf + ny * nx, ny, nx, 1, c);
    /* the plateau: the profile's mean over the inside, from the centre to 2
     * pixels short of the edge (the ringing of both edges averages out) */
    double e = (double)(nx / 4), plateau = 0, cnt = 0;
    for (double y = -(e - 2); y <= e - 2; y += 0.25, cnt++)
        plateau += profile_at(c, nx, y);
    double scale = cnt > 0 && plateau > 0 ? cnt / plateau : NAN;
    const double h = 1.0 / 64;
    double in90 = NAN, out10 = NAN, peak = 0, prev = NAN;
    for (double y = e; y > e - 3; y -= h) {
        double v = profile_at(c, nx, y) * scale;
        if (v >= 0.9 && isnan(in90)) /* between y + h (prev < 0.9) and y */
            in90 = y + h * (v - 0.9) / (v - prev);
        if (v > peak)
            peak = v;
        prev = v;
    }
    prev = NAN;
    for (double y = e; y < e + 3; y += h) {
        double v = profile_at(c, nx, y) * scale;
        if (v <= 0.1) {
            out10 = y - h * (0.1 - v) / (prev - v);
            break;
        }
        prev = v;
    }
    kw_free(c);
    *width = out10 - in90;
    *overshoot = peak - 1;
    return KW_OK;
}
