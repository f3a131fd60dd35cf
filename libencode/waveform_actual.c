/* waveform_actual.c: the gradient an imperfect system plays (kw_waveform.h,
 * "Actual gradient"): a delay and one first-order term per axis, with the
 * response y (y' = (G - y) / tau) and its integral in closed form on every
 * interval of the piecewise-linear waveform (or of the held one: a
 * constant on every interval), so that the actual k-space is exact. */
#include <math.h>
#include <string.h>

#include "waveform_int.h"

kw_status kw_waveform_actual_check(const kw_waveform_options *o, double span)
{
    for (int a = 0; a < 3; a++) {
        KW_FAIL_PARAM(!isfinite(o->delay_s[a]) || fabs(o->delay_s[a]) > span, KW_ERANGE, "delay_s",
                      "axis %d: %g s; at most the waveform's span (%g s) either way", a, o->delay_s[a],
                      span);
        KW_FAIL_PARAM(!(o->response_tau_s[a] >= 0) || !isfinite(o->response_tau_s[a]) ||
                          o->response_tau_s[a] > 1.0,
                      KW_ERANGE, "response_tau_s", "axis %d: %g s; must lie in [0, 1] s", a,
                      o->response_tau_s[a]);
        KW_FAIL_PARAM(!(o->response_amp[a] >= 0 && o->response_amp[a] <= 1), KW_ERANGE, "response_amp",
                      "axis %d: %g; must lie in [0, 1]", a, o->response_amp[a]);
        KW_FAIL_PARAM(o->response_amp[a] > 0 && o->response_tau_s[a] == 0, KW_EINVAL, "response_tau_s",
                      "axis %d: a response term of amplitude %g needs a time constant", a,
                      o->response_amp[a]);
    }
    return KW_OK;
}

/* Sample i of axis a of the waveform the delay and the response term act
 * on: the GIRF's output when there is one (the cascade, see
 * kw_waveform.h), else the nominal samples. */
static double gs(const struct kw_waveform *w, int a, size_t i)
{
    return (w->ga ? w->ga : w->g)[i * (size_t)w->axes + (size_t)a];
}

/* 1 when a delay or a response term is set on some axis */
static int has_term(const struct kw_waveform *w)
{
    for (int a = 0; a < w->axes; a++)
        if (w->o.delay_s[a] != 0 || w->o.response_amp[a] != 0)
            return 1;
    return 0;
}

/* The response over [t_i, t_i + d] (d <= raster) from y0 at t_i: y at the
 * end and its integral. x = ga + s t is the input there. Closed form of
 * y' = (x - y) / tau: y = ga + s t - s tau (1 - E) + (y0 - ga) E,
 * E = exp(-t / tau). */
static void lp_step(double ga, double s, double y0, double tau, double d, double *y, double *iy)
{
    const double om = -expm1(-d / tau), e = 1.0 - om; /* 1 - E, E */
    *y = ga + s * d - s * tau * om + (y0 - ga) * e;
    *iy = ga * d + 0.5 * s * d * d + (y0 - ga) * tau * om - s * tau * (d - tau * om);
}

/* intervals: n - 1 between linear samples, n held ones; the tables hold
 * their nb = intervals + 1 boundaries */
static size_t nint(const struct kw_waveform *w) { return w->o.held ? w->n : w->n - 1; }
static double *lp_y(const struct kw_waveform *w, int a) { return w->lp + (size_t)a * (nint(w) + 1); }
static double *lp_int(const struct kw_waveform *w, int a)
{
    return w->lp + ((size_t)w->axes + (size_t)a) * (nint(w) + 1);
}
static double *f0_of(const struct kw_waveform *w, int a) { return w->f0 + (size_t)a * (nint(w) + 1); }

/* the input on interval i of axis a: its value at the start and its slope
 * (0 when held) */
static void piece(const struct kw_waveform *w, int a, size_t i, double *g0, double *s)
{
    *g0 = gs(w, a, i);
    *s = w->o.held ? 0.0 : (gs(w, a, i + 1) - *g0) / w->o.raster_s;
}

kw_status kw_waveform_actual_prepare(struct kw_waveform *w)
{
    const size_t na = (size_t)w->axes, ni = nint(w), nb = ni + 1;
    const double h = w->o.raster_s;
    w->lp = kw_alloc_n(2 * na * nb, sizeof *w->lp);
    w->f0 = kw_alloc_n(na * nb, sizeof *w->f0);
    KW_FAIL_IF(!w->lp || !w->f0, KW_ENOMEM, "waveform: out of memory for the actual gradient");
    for (int a = 0; a < w->axes; a++) {
        double *f = f0_of(w, a), *y = lp_y(w, a), *iy = lp_int(w, a);
        const double tau = w->o.response_tau_s[a];
        f[0] = 0;
        y[0] = tau > 0 ? 0 : gs(w, a, 0); /* y is 0 before the waveform */
        iy[0] = 0;
        for (size_t i = 0; i < ni; i++) {
            double ga, sl;
            piece(w, a, i, &ga, &sl);
            /* exact for a held or a linear piece */
            f[i + 1] = f[i] + (w->o.held ? h * ga : 0.5 * h * (ga + gs(w, a, i + 1)));
            if (tau > 0) {
                double yy, ii;
                lp_step(ga, sl, y[i], tau, h, &yy, &ii);
                y[i + 1] = yy;
                iy[i + 1] = iy[i] + ii;
            } else {
                y[i + 1] = w->o.held ? ga : gs(w, a, i + 1);
                iy[i + 1] = f[i + 1];
            }
        }
    }
    return KW_OK;
}

/* G, its integral from the start, y and its integral at time x on axis a
 * (G = 0 outside the waveform; y decays after it). */
static void eval(const struct kw_waveform *w, int a, double x, double *g, double *f, double *y, double *iy)
{
    const double h = w->o.raster_s, span = (double)nint(w) * h, tau = w->o.response_tau_s[a];
    const size_t last = nint(w);
    if (x <= 0) {
        *g = *f = *y = *iy = 0;
        return;
    }
    if (x >= span) {
        const double d = x - span;
        *g = 0;
        *f = f0_of(w, a)[last];
        const double y0 = lp_y(w, a)[last];
        if (tau > 0) {
            const double om = -expm1(-d / tau);
            *y = y0 * (1.0 - om);
            *iy = lp_int(w, a)[last] + y0 * tau * om;
        } else {
            *y = 0;
            *iy = lp_int(w, a)[last];
        }
        return;
    }
    size_t i = (size_t)floor(x / h);
    if (i >= last)
        i = last - 1;
    double ga, s;
    piece(w, a, i, &ga, &s);
    const double d = x - (double)i * h;
    *g = ga + s * d;
    *f = f0_of(w, a)[i] + ga * d + 0.5 * s * d * d;
    if (tau > 0) {
        double yy, ii;
        lp_step(ga, s, lp_y(w, a)[i], tau, d, &yy, &ii);
        *y = yy;
        *iy = lp_int(w, a)[i] + ii;
    } else {
        *y = *g;
        *iy = *f;
    }
}

int kw_waveform_has_imperfection(const kw_waveform *w)
{
    if (!w)
        return 0;
    return w->ga || has_term(w);
}

/* integral of the actual gradient on axis a from the start to t */
static double actual_integral(const struct kw_waveform *w, int a, double t)
{
    if (w->ga && !has_term(w) && !w->o.held)
        return kw_waveform_girf_integral(w, a, t);
    const double al = w->o.response_amp[a];
    double g, f, y, iy;
    eval(w, a, t - w->o.delay_s[a], &g, &f, &y, &iy);
    return (1.0 - al) * f + al * iy;
}

kw_status kw_waveform_actual(const kw_waveform *w, double *g)
{
    KW_FAIL_PARAM(!w || !g, KW_EINVAL, "waveform", "NULL argument");
    const double h = w->o.raster_s;
    if (w->o.held) { /* the mean over [t_i, t_i+1): held, the exact k at every boundary */
        for (int a = 0; a < w->axes; a++) {
            double prev = actual_integral(w, a, 0);
            for (size_t i = 0; i < w->n; i++) {
                const double next = actual_integral(w, a, (double)(i + 1) * h);
                g[i * (size_t)w->axes + (size_t)a] = (next - prev) / h;
                prev = next;
            }
        }
        return KW_OK;
    }
    if (w->ga && !has_term(w)) {
        memcpy(g, w->ga, w->n * (size_t)w->axes * sizeof *g);
        return KW_OK;
    }
    for (size_t i = 0; i < w->n; i++)
        for (int a = 0; a < w->axes; a++) {
            const double al = w->o.response_amp[a];
            double gv, f, y, iy;
            eval(w, a, (double)i * h - w->o.delay_s[a], &gv, &f, &y, &iy);
            g[i * (size_t)w->axes + (size_t)a] = (1.0 - al) * gv + al * y;
        }
    return KW_OK;
}

kw_status kw_waveform_trajectory_actual(const kw_waveform *w, float *k, float *t)
{
    KW_FAIL_PARAM(!w || !k, KW_EINVAL, "waveform", "NULL argument");
    KW_FAIL_PARAM(!w->o.nadc, KW_EINVAL, "adc", "no ADC window: no samples to place in k-space");
    double ref[3] = {0, 0, 0};
    size_t seg = 0;
    for (int a = 0; a < w->axes; a++)
        ref[a] = actual_integral(w, a, w->rf[0]);
    size_t j = 0;
    for (size_t i = 0; i < w->o.nadc; i++) {
        const kw_waveform_adc *ad = &w->adc[i];
        for (size_t s = 0; s < ad->samples; s++, j++) {
            const double tau = ad->start_s + (double)s * ad->dwell_s;
            const size_t sg = kw_waveform_segment_of(w, tau);
            for (int a = 0; sg != seg && a < w->axes; a++) /* k restarts at each RF centre */
                ref[a] = actual_integral(w, a, w->rf[sg]);
            seg = sg;
            for (int a = 0; a < w->axes; a++)
                k[j * (size_t)w->axes + (size_t)a] =
                    (float)(KW_GAMMA_BAR_P * (actual_integral(w, a, tau) - ref[a]) * w->o.fov_m[a]);
            if (t)
                t[j] = (float)(tau - w->o.rf_centre_s);
        }
    }
    return KW_OK;
}
