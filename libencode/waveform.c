/* waveform.c: kw_waveform (kw_waveform.h): the checks of the input, the
 * gradient moments by exact integration of the piecewise-linear waveform,
 * the k-space trajectory at the ADC samples, the accessors. */
#include <math.h>
#include <string.h>

#include "defaults.h"
#include "waveform_int.h"

static const char *const AXIS_NAME[3] = {"x", "y", "z"};

void kw_waveform_options_init(kw_waveform_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->raster_s = KWD_RASTER_S;
    o->rf_centre_s = NAN;
    o->te_s = NAN;
    o->gmax = KWD_GMAX_T_PER_M;
    o->slew = KWD_SLEW_T_PER_M_PER_S;
    o->limit_vector = 0;
    o->tr_s = 0;
    for (int a = 0; a < 3; a++)
        o->fov_m[a] = KWD_FOV_M;
    o->adc = NULL;
    o->nadc = 0;
    o->pns_radius_m = KW_PNS_RADIUS_M;
    o->pns_rheobase = KW_PNS_RHEOBASE_T_PER_S;
    o->pns_chronaxie_s = KW_PNS_CHRONAXIE_S;
    o->pns_fraction = KW_PNS_FRACTION;
}

/* ---- integration ---------------------------------------------------------------- */

/* G on `axis` at time tau (after the waveform's start) within interval i. */
static double g_at(const struct kw_waveform *w, int axis, size_t i, double tau)
{
    const double h = w->o.raster_s;
    const double ga = w->g[i * (size_t)w->axes + (size_t)axis];
    if (w->o.held)
        return ga;
    const double gb = w->g[(i + 1) * (size_t)w->axes + (size_t)axis];
    return ga + (gb - ga) * (tau - (double)i * h) / h;
}

static double upow(double u, int m)
{
    return m == 0 ? 1.0 : m == 1 ? u : u * u;
}

/* integral over [ta, tb] (inside interval i) of G(tau) (tau - t_rf)^m:
 * the integrand is a polynomial of degree m + 1 <= 3 there, which
 * Simpson's rule integrates exactly. */
static double seg(const struct kw_waveform *w, int axis, int m, size_t i, double ta, double tb, double trf)
{
    const double ga = g_at(w, axis, i, ta), gb = g_at(w, axis, i, tb);
    const double ua = ta - trf, ub = tb - trf, um = 0.5 * (ua + ub);
    return (tb - ta) / 6.0 * (ga * upow(ua, m) + 2.0 * (ga + gb) * upow(um, m) + gb * upow(ub, m));
}

/* intervals: n - 1 between linear samples, n held ones */
static size_t intervals(const struct kw_waveform *w)
{
    return w->o.held ? w->n : w->n - 1;
}

/* the interval holding tau (clamped to the first and last) */
static size_t interval_of(const struct kw_waveform *w, double tau)
{
    double f = floor(tau / w->o.raster_s);
    if (!(f > 0))
        return 0;
    if (f >= (double)intervals(w))
        return intervals(w) - 1;
    return (size_t)f;
}

static double *cum_of(const struct kw_waveform *w, int m, int axis)
{
    return w->cum + ((size_t)m * (size_t)w->axes + (size_t)axis) * (w->n + 1);
}

/* cum[m][axis][i] = M_m from the RF centre of sample i's segment (the last
 * centre at or before it; the first one before it: negative) to sample i.
 * The sample that starts the interval holding a later centre belongs to
 * the segment before; moment() integrates from that centre directly. */
static void build_cumulative(struct kw_waveform *w)
{
    const double h = w->o.raster_s;
    for (size_t j = 0; j < w->nrf; j++) {
        const double trf = w->rf[j];
        const size_t r = interval_of(w, trf);
        const size_t end = j + 1 < w->nrf ? interval_of(w, w->rf[j + 1]) : intervals(w);
        for (int m = 0; m < 3; m++)
            for (int a = 0; a < w->axes; a++) {
                double *c = cum_of(w, m, a);
                if (j == 0)
                    c[r] = -seg(w, a, m, r, (double)r * h, trf, trf);
                if (r + 1 <= end)
                    c[r + 1] = seg(w, a, m, r, trf, (double)(r + 1) * h, trf);
                for (size_t i = r + 1; i < end; i++)
                    c[i + 1] = c[i] + seg(w, a, m, i, (double)i * h, (double)(i + 1) * h, trf);
                for (size_t i = r; j == 0 && i > 0; i--)
                    c[i - 1] = c[i] - seg(w, a, m, i - 1, (double)(i - 1) * h, (double)i * h, trf);
            }
    }
}

/* M_m on `axis` from the RF centre of tau's segment to tau (after the
 * waveform's start). */
static double moment(const struct kw_waveform *w, int m, int axis, double tau)
{
    const size_t i = interval_of(w, tau), j = kw_waveform_segment_of(w, tau);
    const double trf = w->rf[j], ti = (double)i * w->o.raster_s;
    if (j > 0 && ti <= trf) /* the interval holds the centre: from there */
        return seg(w, axis, m, i, trf, tau, trf);
    return cum_of(w, m, axis)[i] + seg(w, axis, m, i, ti, tau, trf);
}

static void moments(const struct kw_waveform *w, double t_after_rf, kw_waveform_moments *mo)
{
    memset(mo, 0, sizeof *mo);
    mo->t_s = t_after_rf;
    const double tau = w->o.rf_centre_s + t_after_rf;
    for (int a = 0; a < w->axes; a++) {
        mo->m0[a] = moment(w, 0, a, tau);
        mo->m1[a] = moment(w, 1, a, tau);
        mo->m2[a] = moment(w, 2, a, tau);
    }
}

/* ---- checks ------------------------------------------------------------------- */

static kw_status check_samples(const double *g, size_t n, int axes)
{
    KW_FAIL_PARAM(!g, KW_EINVAL, "waveform", "no samples given");
    KW_FAIL_PARAM(axes < 1 || axes > 3, KW_EINVAL, "axes", "%d axes; 1 to 3 (x, y, z)", axes);
    KW_FAIL_PARAM(n < 2, KW_EINVAL, "samples", "%zu samples; at least 2", n);
    KW_FAIL_PARAM(n > ((size_t)1 << 31), KW_ERANGE, "samples", "%zu samples; at most 2^31", n);
    for (size_t i = 0; i < n; i++)
        for (int a = 0; a < axes; a++)
            KW_FAIL_PARAM(!isfinite(g[i * (size_t)axes + (size_t)a]), KW_ENUMERIC, "waveform",
                          "sample %zu, axis %s: not a finite number", i, AXIS_NAME[a]);
    return KW_OK;
}

/* 1 when x is a whole multiple of h, to 1e-6 of h */
static int on_raster(double x, double h)
{
    return fabs(x / h - nearbyint(x / h)) <= 1e-6;
}

static kw_status check_rf(const kw_waveform_options *o, double span)
{
    if (!o->nrf)
        return KW_OK;
    KW_FAIL_PARAM(!o->rf_centres_s, KW_EINVAL, "rf_centres_s", "%zu centres but none given", o->nrf);
    KW_FAIL_PARAM(o->nrf > (1u << 16), KW_ERANGE, "rf_centres_s", "%zu centres; at most 65536", o->nrf);
    for (size_t j = 0; j < o->nrf; j++) {
        const double t = o->rf_centres_s[j];
        KW_FAIL_PARAM(!isfinite(t) || t < 0 || t > span, KW_ERANGE, "rf_centres_s",
                      "centre %zu: %g s lies outside the waveform (0 .. %g s)", j, t, span);
        KW_FAIL_PARAM(j > 0 && !(t > o->rf_centres_s[j - 1]), KW_EINVAL, "rf_centres_s",
                      "centre %zu: %.9g s after %.9g s; must increase strictly", j, t, o->rf_centres_s[j - 1]);
    }
    return KW_OK;
}

static kw_status check_adc(const kw_waveform_options *o, double span)
{
    const double h = o->raster_s;
    KW_FAIL_PARAM(o->nadc && !o->adc, KW_EINVAL, "adc", "%zu windows but none given", o->nadc);
    for (size_t i = 0; i < o->nadc; i++) {
        const kw_waveform_adc *a = &o->adc[i];
        KW_FAIL_PARAM(!a->samples, KW_EINVAL, "adc", "window %zu: no samples", i);
        KW_FAIL_PARAM(a->samples > ((size_t)1 << 28), KW_ERANGE, "adc", "window %zu: %zu samples; at most 2^28",
                      i, a->samples);
        KW_FAIL_PARAM(!(a->dwell_s > 0) || !isfinite(a->dwell_s), KW_ERANGE, "adc",
                      "window %zu: dwell %g s must be positive", i, a->dwell_s);
        KW_FAIL_PARAM(!isfinite(a->start_s) || a->start_s < 0, KW_ERANGE, "adc",
                      "window %zu: start %g s must be finite and >= 0", i, a->start_s);
        const double len = (double)a->samples * a->dwell_s;
        KW_FAIL_PARAM(!on_raster(a->start_s, h), KW_EINVAL, "adc",
                      "window %zu: start %.9g s is not a whole number of rasters (%g s)", i,
                      a->start_s, h);
        KW_FAIL_PARAM(!on_raster(len, h), KW_EINVAL, "adc",
                      "window %zu: duration %zu x %.9g s = %.9g s is not a whole number of rasters (%g s)",
                      i, a->samples, a->dwell_s, len, h);
        KW_FAIL_PARAM(a->start_s + len > span * (1 + 1e-12) + 1e-6 * h, KW_ERANGE, "adc",
                      "window %zu: ends at %.9g s, after the waveform's last sample (%.9g s)", i,
                      a->start_s + len, span);
        KW_FAIL_PARAM(a->start_s < o->rf_centre_s, KW_ERANGE, "adc",
                      "window %zu: starts at %.9g s, before the RF centre (%.9g s)", i, a->start_s,
                      o->rf_centre_s);
        for (size_t j = 1; j < o->nrf; j++) {
            const double t = o->rf_centres_s[j], last = a->start_s + (double)(a->samples - 1) * a->dwell_s;
            KW_FAIL_PARAM(t > a->start_s && t <= last, KW_EINVAL, "adc",
                          "window %zu: the RF centre %zu (%.9g s) lies within it (%.9g .. %.9g s); k restarts "
                          "there", i, j, t, a->start_s, last);
        }
    }
    return KW_OK;
}

static kw_status check_options(kw_waveform_options *o, size_t n)
{
    KW_FAIL_PARAM(!(o->raster_s > 0) || !isfinite(o->raster_s) || o->raster_s > 1.0, KW_ERANGE,
                  "raster_s", "%g s; must lie in (0, 1] s", o->raster_s);
    if (o->nrf && o->rf_centres_s) { /* the first centre is rf_centre_s */
        KW_FAIL_PARAM(!isnan(o->rf_centre_s) && o->rf_centre_s != o->rf_centres_s[0], KW_EINVAL, "rf_centres_s",
                      "the first centre %.9g s is not the RF centre %.9g s", o->rf_centres_s[0], o->rf_centre_s);
        o->rf_centre_s = o->rf_centres_s[0];
    }
    const double span = (double)(o->held ? n : n - 1) * o->raster_s;
    KW_FAIL_PARAM(isnan(o->rf_centre_s), KW_EINVAL, "rf_centre_s", "not given: the moments and k-space "
                  "are counted from the RF centre");
    KW_FAIL_PARAM(!isfinite(o->rf_centre_s) || o->rf_centre_s < 0 || o->rf_centre_s > span, KW_ERANGE,
                  "rf_centre_s", "%g s lies outside the waveform (0 .. %g s)", o->rf_centre_s, span);
    KW_FAIL_PARAM(!isnan(o->te_s) && (!isfinite(o->te_s) || o->te_s < 0 ||
                                       o->rf_centre_s + o->te_s > span * (1 + 1e-12)),
                  KW_ERANGE, "te_s", "%g s after the RF centre lies outside the waveform", o->te_s);
    KW_FAIL_PARAM(!(o->gmax > 0) || !isfinite(o->gmax), KW_ERANGE, "gmax", "must be positive");
    KW_FAIL_PARAM(!(o->slew > 0) || !isfinite(o->slew), KW_ERANGE, "slew", "must be positive");
    KW_FAIL_PARAM(!(o->tr_s >= 0) || !isfinite(o->tr_s), KW_ERANGE, "tr_s", "must be >= 0");
    for (int a = 0; a < 3; a++)
        KW_FAIL_PARAM(!(o->fov_m[a] > 0) || !isfinite(o->fov_m[a]), KW_ERANGE, "fov_m",
                      "axis %s: must be positive", AXIS_NAME[a]);
    KW_FAIL_PARAM(!(o->pns_radius_m > 0) || !isfinite(o->pns_radius_m), KW_ERANGE, "pns_radius_m",
                  "must be positive");
    KW_FAIL_PARAM(!(o->pns_rheobase > 0) || !isfinite(o->pns_rheobase), KW_ERANGE, "pns_rheobase",
                  "must be positive");
    KW_FAIL_PARAM(!(o->pns_chronaxie_s >= 0) || !isfinite(o->pns_chronaxie_s), KW_ERANGE,
                  "pns_chronaxie_s", "must be >= 0");
    KW_FAIL_PARAM(!(o->pns_fraction > 0) || !isfinite(o->pns_fraction), KW_ERANGE, "pns_fraction",
                  "must be positive");
    kw_status st = kw_waveform_actual_check(o, span);
    if (!st)
        st = check_rf(o, span);
    return st ? st : check_adc(o, span);
}

/* ---- create / destroy / accessors --------------------------------------------------- */

void kw_waveform_destroy(kw_waveform *w)
{
    if (!w)
        return;
    kw_free(w->adc);
    kw_free(w->g);
    kw_free(w->cum);
    kw_free(w->viol);
    kw_free(w->ramps);
    kw_free(w->adcm);
    kw_free(w->lp);
    kw_free(w->f0);
    kw_free(w->ga);
    kw_free(w->gaf);
    kw_free(w->rf);
    kw_free(w);
}

static kw_status fill(struct kw_waveform *w, const double *g)
{
    const size_t na = (size_t)w->axes;
    w->g = kw_alloc_n(w->n * na, sizeof *w->g);
    w->cum = kw_alloc_n(3 * na * (w->n + 1), sizeof *w->cum);
    KW_FAIL_IF(!w->g || !w->cum, KW_ENOMEM, "waveform: out of memory for %zu samples", w->n);
    memcpy(w->g, g, w->n * na * sizeof *g);
    if (w->o.nadc) {
        w->adc = kw_alloc_n(w->o.nadc, sizeof *w->adc);
        w->adcm = kw_alloc_n(w->o.nadc, sizeof *w->adcm);
        KW_FAIL_IF(!w->adc || !w->adcm, KW_ENOMEM, "adc: out of memory");
        memcpy(w->adc, w->o.adc, w->o.nadc * sizeof *w->adc);
    }
    w->o.adc = w->adc;
    w->nrf = w->o.nrf ? w->o.nrf : 1;
    w->rf = kw_alloc_n(w->nrf, sizeof *w->rf);
    KW_FAIL_IF(!w->rf, KW_ENOMEM, "waveform: out of memory for %zu RF centres", w->nrf);
    if (w->o.nrf)
        memcpy(w->rf, w->o.rf_centres_s, w->nrf * sizeof *w->rf);
    else
        w->rf[0] = w->o.rf_centre_s;
    w->o.rf_centres_s = NULL; /* the caller's array is not kept */
    build_cumulative(w);
    kw_waveform_summary *s = &w->sum;
    s->samples = w->n;
    s->axes = w->axes;
    s->raster_s = w->o.raster_s;
    s->span_s = (double)intervals(w) * w->o.raster_s;
    s->tr_s = w->o.tr_s > 0 ? w->o.tr_s : s->span_s;
    s->gamma_bar = KW_GAMMA_BAR_P;
    for (size_t i = 0; i < w->o.nadc; i++) {
        const kw_waveform_adc *a = &w->adc[i];
        s->adc_samples += a->samples;
        double centre = a->start_s + 0.5 * (double)a->samples * a->dwell_s;
        moments(w, centre - w->o.rf_centre_s, &w->adcm[i]);
    }
    /* the GIRF first: the delay and the response term act on its output */
    kw_status st = kw_waveform_girf_prepare(w);
    if (!st)
        st = kw_waveform_actual_prepare(w);
    return st ? st : kw_waveform_check_limits(w);
}

kw_status kw_waveform_create(kw_waveform **out, const double *g, size_t samples, int axes,
                             const kw_waveform_options *opts)
{
    KW_FAIL_PARAM(!out, KW_EINVAL, "waveform", "no place for the result");
    *out = NULL;
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    kw_status st = kw_options_take(&o, sizeof o, opts, "options");
    if (st)
        return st;
    if ((st = check_samples(g, samples, axes)) || (st = check_options(&o, samples)) ||
        (st = kw_waveform_girf_check(&o, axes)))
        return st;
    struct kw_waveform *w = kw_alloc(sizeof *w);
    KW_FAIL_IF(!w, KW_ENOMEM, "waveform: out of memory");
    w->o = o;
    w->n = samples;
    w->axes = axes;
    if ((st = fill(w, g))) {
        kw_waveform_destroy(w);
        return st;
    }
    *out = w;
    return KW_OK;
}

const kw_waveform_summary *kw_waveform_summary_of(const kw_waveform *w)
{
    return w ? &w->sum : NULL;
}

const kw_waveform_violation *kw_waveform_violations(const kw_waveform *w, size_t *n)
{
    if (n)
        *n = w ? w->nviol : 0;
    return w ? w->viol : NULL;
}

const kw_waveform_ramp *kw_waveform_ramps(const kw_waveform *w, size_t *n)
{
    if (n)
        *n = w ? w->nramps : 0;
    return w ? w->ramps : NULL;
}

const kw_waveform_moments *kw_waveform_adc_moments(const kw_waveform *w, size_t *n)
{
    if (n)
        *n = w ? w->o.nadc : 0;
    return w ? w->adcm : NULL;
}

kw_status kw_waveform_moments_at(const kw_waveform *w, double t_s, kw_waveform_moments *m)
{
    KW_FAIL_PARAM(!w || !m, KW_EINVAL, "waveform", "NULL argument");
    const double tau = w->o.rf_centre_s + t_s;
    KW_FAIL_PARAM(!isfinite(t_s) || tau < -1e-9 * w->o.raster_s || tau > w->sum.span_s * (1 + 1e-12),
                  KW_ERANGE, "t_s", "%g s after the RF centre lies outside the waveform", t_s);
    moments(w, t_s, m);
    return KW_OK;
}

kw_status kw_waveform_trajectory(const kw_waveform *w, float *k, float *t)
{
    KW_FAIL_PARAM(!w || !k, KW_EINVAL, "waveform", "NULL argument");
    KW_FAIL_PARAM(!w->o.nadc, KW_EINVAL, "adc", "no ADC window: no samples to place in k-space");
    size_t j = 0;
    for (size_t i = 0; i < w->o.nadc; i++) {
        const kw_waveform_adc *a = &w->adc[i];
        for (size_t s = 0; s < a->samples; s++, j++) {
            const double tau = a->start_s + (double)s * a->dwell_s;
            for (int ax = 0; ax < w->axes; ax++)
                k[j * (size_t)w->axes + (size_t)ax] =
                    (float)(KW_GAMMA_BAR_P * moment(w, 0, ax, tau) * w->o.fov_m[ax]);
            if (t)
                t[j] = (float)(tau - w->o.rf_centre_s);
        }
    }
    return KW_OK;
}

kw_status kw_waveform_adc_directions(const kw_waveform *w, double *dir)
{
    KW_FAIL_PARAM(!w || !dir, KW_EINVAL, "waveform", "NULL argument");
    KW_FAIL_PARAM(!w->o.nadc, KW_EINVAL, "adc", "no ADC window");
    for (size_t j = 0; j < w->o.nadc; j++) {
        const kw_waveform_adc *a = &w->adc[j];
        const double tau = a->start_s + 0.5 * (double)a->samples * a->dwell_s;
        const size_t i = interval_of(w, tau);
        for (int ax = 0; ax < w->axes; ax++)
            dir[j * (size_t)w->axes + (size_t)ax] = g_at(w, ax, i, tau);
    }
    return KW_OK;
}
