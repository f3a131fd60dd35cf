/* waveform_check.c: the hardware figures of a kw_waveform: peak amplitude
 * and slew per axis and of the vector sum, every run over a limit, the RMS
 * gradient, and the ramps of the nerve-stimulation estimate. */
#include <math.h>
#include <string.h>

#include "waveform_int.h"

double kw_waveform_pns_limit(double t_eff_s, double rheobase, double chronaxie_s, double fraction)
{
    if (!(t_eff_s > 0) || !isfinite(t_eff_s) || !isfinite(rheobase) || !isfinite(chronaxie_s) ||
        !isfinite(fraction))
        return NAN;
    /* IEC 60601-2-33 strength-duration form (from memory): a hyperbola in
     * the stimulus duration, rheobase x (1 + chronaxie / t). */
    return fraction * rheobase * (1.0 + chronaxie_s / t_eff_s);
}

/* |G| (kind 0, at sample i) or |slew| (kind 1, over interval i) on `axis`,
 * -1 meaning the vector sum. */
static double value(const struct kw_waveform *w, int kind, int axis, size_t i)
{
    const size_t na = (size_t)w->axes;
    const double *g0 = w->g + i * na;
    if (axis >= 0)
        return kind == 0 ? fabs(g0[axis]) : fabs(g0[na + (size_t)axis] - g0[axis]) / w->o.raster_s;
    double s = 0;
    for (size_t a = 0; a < na; a++) {
        double v = kind == 0 ? g0[a] : (g0[na + a] - g0[a]) / w->o.raster_s;
        s += v * v;
    }
    return sqrt(s);
}

static void peaks(struct kw_waveform *w)
{
    kw_waveform_summary *s = &w->sum;
    for (int kind = 0; kind < 2; kind++) {
        const size_t count = kind == 0 ? w->n : w->n - 1;
        for (int a = -1; a < w->axes; a++) {
            double best = -1;
            size_t at = 0;
            for (size_t i = 0; i < count; i++) {
                double v = value(w, kind, a, i);
                if (v > best) {
                    best = v;
                    at = i;
                }
            }
            if (a < 0 && kind == 0) {
                s->peak_g_vector = best;
                s->peak_g_vector_at = at;
            } else if (a < 0) {
                s->peak_slew_vector = best;
                s->peak_slew_vector_at = at;
            } else if (kind == 0) {
                s->peak_g[a] = best;
                s->peak_g_at[a] = at;
            } else {
                s->peak_slew[a] = best;
                s->peak_slew_at[a] = at;
            }
        }
    }
}

/* RMS gradient over the repetition: the integral of G^2 over each interval
 * of the piecewise-linear waveform is h/3 (a^2 + ab + b^2), exactly (h a^2
 * for a held value). */
static void rms(struct kw_waveform *w)
{
    kw_waveform_summary *s = &w->sum;
    const size_t na = (size_t)w->axes;
    double total = 0;
    for (size_t a = 0; a < na; a++) {
        double acc = 0;
        if (w->o.held) { /* each value held over one raster */
            for (size_t i = 0; i < w->n; i++)
                acc += 3.0 * w->g[i * na + a] * w->g[i * na + a];
        } else {
            for (size_t i = 0; i + 1 < w->n; i++) {
                double ga = w->g[i * na + a], gb = w->g[(i + 1) * na + a];
                acc += ga * ga + ga * gb + gb * gb;
            }
        }
        acc *= w->o.raster_s / 3.0;
        total += acc;
        s->rms_g[a] = sqrt(acc / s->tr_s);
    }
    s->rms_g_vector = sqrt(total / s->tr_s);
    int z0 = 1, z1 = 1;
    for (size_t a = 0; a < na; a++) {
        z0 &= w->g[a] == 0.0;
        z1 &= w->g[(w->n - 1) * na + a] == 0.0;
    }
    s->starts_at_zero = z0;
    s->ends_at_zero = z1;
}

/* The runs over the limit of `kind` on `axis` into out (NULL: count only);
 * returns their count. */
static size_t runs(const struct kw_waveform *w, int kind, int axis, kw_waveform_violation *out)
{
    const size_t count = kind == 0 ? w->n : w->n - 1;
    const double lim = kind == 0 ? w->o.gmax : w->o.slew;
    const double h = w->o.raster_s;
    size_t nrun = 0;
    for (size_t i = 0; i < count;) {
        if (!(value(w, kind, axis, i) > lim * (1.0 + WF_LIMIT_MARGIN))) {
            i++;
            continue;
        }
        size_t j = i;
        double peak = 0;
        while (j < count && value(w, kind, axis, j) > lim * (1.0 + WF_LIMIT_MARGIN)) {
            double v = value(w, kind, axis, j);
            peak = v > peak ? v : peak;
            j++;
        }
        if (out) {
            kw_waveform_violation *v = &out[nrun];
            v->limit = kind == 0 ? KW_WAVEFORM_AMPLITUDE : KW_WAVEFORM_SLEW;
            v->axis = axis;
            v->first = i;
            v->last = j - 1;
            v->start_s = (double)i * h;
            v->end_s = (double)(kind == 0 ? j - 1 : j) * h;
            v->peak = peak;
            v->limit_value = lim;
            v->excess = peak - lim;
        }
        nrun++;
        i = j;
    }
    return nrun;
}

static size_t all_runs(const struct kw_waveform *w, kw_waveform_violation *out)
{
    size_t n = 0;
    for (int kind = 0; kind < 2; kind++)
        for (int a = w->o.limit_vector ? -1 : 0; a < w->axes; a++)
            n += runs(w, kind, a, out ? out + n : NULL);
    return n;
}

/* A slew under this fraction of the limit counts as none (a flat top read
 * from a float32 file; common practice, no source). */
#define RAMP_FLOOR 1e-6

static int slew_sign(const struct kw_waveform *w, int axis, size_t i)
{
    const size_t na = (size_t)w->axes;
    double d = (w->g[(i + 1) * na + (size_t)axis] - w->g[i * na + (size_t)axis]) / w->o.raster_s;
    return d > RAMP_FLOOR * w->o.slew ? 1 : d < -RAMP_FLOOR * w->o.slew ? -1 : 0;
}

/* The ramps (runs of one slew sign) on `axis` into out (NULL: count). */
static size_t ramps(const struct kw_waveform *w, int axis, kw_waveform_ramp *out)
{
    const kw_waveform_options *o = &w->o;
    const double h = o->raster_s;
    size_t nr = 0;
    for (size_t i = 0; i + 1 < w->n;) {
        int sg = slew_sign(w, axis, i);
        if (!sg) {
            i++;
            continue;
        }
        size_t j = i;
        double peak = 0;
        while (j + 1 < w->n && slew_sign(w, axis, j) == sg) {
            double v = value(w, 1, axis, j);
            peak = v > peak ? v : peak;
            j++;
        }
        if (out) {
            kw_waveform_ramp *r = &out[nr];
            r->axis = axis;
            r->first = i;
            r->last = j - 1;
            r->start_s = (double)i * h;
            r->duration_s = (double)(j - i) * h;
            r->slew = peak;
            r->dbdt = peak * o->pns_radius_m;
            r->limit = kw_waveform_pns_limit(r->duration_s, o->pns_rheobase, o->pns_chronaxie_s,
                                             o->pns_fraction);
            r->percent = 100.0 * r->dbdt / r->limit;
        }
        nr++;
        i = j;
    }
    return nr;
}

kw_status kw_waveform_check_limits(struct kw_waveform *w)
{
    kw_waveform_summary *s = &w->sum;
    peaks(w);
    rms(w);
    w->nviol = all_runs(w, NULL);
    if (w->nviol) {
        w->viol = kw_alloc_n(w->nviol, sizeof *w->viol);
        KW_FAIL_IF(!w->viol, KW_ENOMEM, "waveform: out of memory for %zu violations", w->nviol);
        all_runs(w, w->viol);
    }
    size_t nr = 0;
    for (int a = 0; a < w->axes; a++)
        nr += ramps(w, a, NULL);
    w->nramps = nr;
    if (nr) {
        w->ramps = kw_alloc_n(nr, sizeof *w->ramps);
        KW_FAIL_IF(!w->ramps, KW_ENOMEM, "waveform: out of memory for %zu ramps", nr);
        nr = 0;
        for (int a = 0; a < w->axes; a++)
            nr += ramps(w, a, w->ramps + nr);
    }
    s->violations = w->nviol;
    s->ramps = w->nramps;
    s->pns_percent_max = 0;
    s->pns_worst = 0;
    for (size_t i = 0; i < w->nramps; i++)
        if (w->ramps[i].percent > s->pns_percent_max) {
            s->pns_percent_max = w->ramps[i].percent;
            s->pns_worst = i;
        }
    return KW_OK;
}
