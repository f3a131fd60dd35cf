/* waveform_design.c: kweave's own EPI train (kw_pattern's epi kind, from the
 * planner's design, kw_gradient.h), spiral, and the gradient-echo plan's
 * lobes (kw_sequence.h) as a gradient waveform with its ADC windows, in the format kw_waveform checks, so that the two paths check
 * each other (kw_waveform_epi(), kw_waveform.h). */
#include <math.h>
#include <string.h>

#include "kw_gradient.h"
#include "kw_pattern.h"
#include "kw_sequence.h"
#include "kw_waveform.h"

/* add the lobe t (sign sg) on `axis` of g (n rows, 2 columns) from row r0 */
static kw_status put_lobe(double *g, size_t n, int axis, size_t r0, const kw_trapezoid *t, double sg,
                          double raster, double *buf, size_t cap)
{
    const size_t c = kw_trapezoid_raster_count(t, raster);
    KW_FAIL_IF(c > cap || r0 + c > n, KW_EINTERNAL, "epi waveform: lobe of %zu points past the end", c);
    kw_status st = kw_trapezoid_raster(t, raster, buf, cap);
    if (st)
        return st;
    for (size_t i = 0; i < c; i++)
        g[(r0 + i) * 2 + (size_t)axis] += sg * buf[i];
    return KW_OK;
}

/* add the lobe t on `axis` of g (n rows, 3 columns) from row r0 */
static kw_status put_lobe3(double *g, size_t n, int axis, size_t r0, const kw_trapezoid *t, double raster,
                           double *buf, size_t cap)
{
    const size_t c = kw_trapezoid_raster_count(t, raster);
    KW_FAIL_IF(c > cap || r0 + c > n, KW_EINTERNAL, "plan waveform: lobe of %zu points past the end", c);
    kw_status st = kw_trapezoid_raster(t, raster, buf, cap);
    for (size_t i = 0; !st && i < c; i++)
        g[(r0 + i) * 3 + (size_t)axis] += buf[i];
    return st;
}

static size_t steps(double t, double raster)
{
    return (size_t)llround(t / raster);
}

/* The layout: the prephasers from row 0, the train from row p0. */
typedef struct epi_plan {
    kw_epi_info ei;
    kw_gradient_limits lim;
    kw_trapezoid pre[2];
    size_t p0, n, lines, nx;
    double dwell;
} epi_plan;

static kw_status plan(const kw_pattern_options *o, int shot, epi_plan *pl)
{
    kw_pattern *p = NULL;
    kw_status st = kw_pattern_create(&p, o);
    if (st)
        return st;
    const kw_pattern_info *in = kw_pattern_info_of(p);
    const int epi = in->kind == KW_PATTERN_EPI;
    const int n = (int)in->readout_samples, shots = in->shots;
    kw_epi_spec es = {{in->fov_m, in->fov_m}, {n, n}, in->dwell_s, shots, in->epi_fraction};
    pl->lim.gmax_T_per_m = in->gmax;
    pl->lim.slew_T_per_m_per_s = in->slew;
    pl->lim.raster_s = in->raster;
    kw_pattern_destroy(p);
    KW_FAIL_PARAM(!epi, KW_EINVAL, "kind", "only the epi kind is written as a waveform here");
    KW_FAIL_PARAM(shot < 0 || shot >= shots, KW_ERANGE, "shot", "%d outside 0..%d", shot, shots - 1);
    if ((st = kw_epi_size(&es, &pl->lim, &pl->ei)))
        return st;
    const double h = pl->lim.raster_s;
    const kw_trapezoid *ro = &pl->ei.readout;
    /* k at the first line's echo: kx = 0 after -(ramp + flat)/2 x amplitude,
     * ky = first_row + shot - ny/2 cycles/FOV (kw_gradient.h) */
    const double ax = -(ro->ramp_s + ro->flat_s) / 2 * ro->amplitude_T_per_m;
    const double ay = (double)(pl->ei.first_row + shot - n / 2) / (KW_GAMMA_BAR_P * es.fov_m[1]);
    for (int a = 0; a < 2; a++) {
        double area = a == 0 ? ax : ay;
        if (area == 0)
            memset(&pl->pre[a], 0, sizeof pl->pre[a]);
        else if ((st = kw_trapezoid_for_area(area, &pl->lim, &pl->pre[a])))
            return st;
    }
    size_t c0 = pl->pre[0].amplitude_T_per_m != 0 ? kw_trapezoid_raster_count(&pl->pre[0], h) : 1;
    size_t c1 = pl->pre[1].amplitude_T_per_m != 0 ? kw_trapezoid_raster_count(&pl->pre[1], h) : 1;
    pl->p0 = c0 > c1 ? c0 : c1;
    pl->lines = pl->ei.lines_per_shot;
    pl->nx = (size_t)n;
    pl->dwell = es.dwell_s;
    pl->n = pl->p0 + steps((double)(pl->lines - 1) * pl->ei.echo_spacing_s, h) +
            kw_trapezoid_raster_count(ro, h) + 1;
    return KW_OK;
}

kw_status kw_waveform_epi(const kw_pattern_options *o, int shot, double *g, size_t *samples,
                          kw_waveform_adc *adc, size_t *nadc)
{
    KW_FAIL_PARAM(!o || !samples || !nadc, KW_EINVAL, "options", "NULL argument");
    epi_plan pl;
    kw_status st = plan(o, shot, &pl);
    if (st)
        return st;
    const size_t cap = *samples, acap = *nadc;
    *samples = pl.n;
    *nadc = pl.lines;
    if (!g)
        return KW_OK;
    KW_FAIL_PARAM(cap < pl.n || acap < pl.lines || !adc, KW_ERANGE, "samples",
                  "room for %zu samples and %zu windows needed", pl.n, pl.lines);
    const double h = pl.lim.raster_s;
    const kw_trapezoid *ro = &pl.ei.readout;
    memset(g, 0, pl.n * 2 * sizeof *g);
    double *buf = kw_alloc_n(pl.n, sizeof *buf);
    KW_FAIL_IF(!buf, KW_ENOMEM, "epi waveform: out of memory");
    for (int a = 0; a < 2 && !st; a++)
        if (pl.pre[a].amplitude_T_per_m != 0)
            st = put_lobe(g, pl.n, a, 0, &pl.pre[a], 1.0, h, buf, pl.n);
    for (size_t m = 0; m < pl.lines && !st; m++) {
        const double t0 = (double)m * pl.ei.echo_spacing_s;
        st = put_lobe(g, pl.n, 0, pl.p0 + steps(t0, h), ro, m % 2 ? -1.0 : 1.0, h, buf, pl.n);
        if (!st && m + 1 < pl.lines)
            st = put_lobe(g, pl.n, 1, pl.p0 + steps(t0 + pl.ei.blip_start_s, h), &pl.ei.blip, 1.0, h, buf,
                          pl.n);
        /* the samples of kw_epi_design(): forward lines from tc - nx/2
         * dwell, reversed ones from tc - (nx/2 - 1) dwell */
        const double tc = (double)pl.p0 * h + ro->ramp_s + t0 + ro->flat_s / 2;
        const double first = (double)(pl.nx / 2) - (m % 2 ? 1.0 : 0.0);
        adc[m].start_s = tc - first * pl.dwell;
        adc[m].dwell_s = pl.dwell;
        adc[m].samples = pl.nx;
    }
    kw_free(buf);
    return st;
}

kw_status kw_waveform_spiral(const kw_pattern_options *o, int interleaf, double *g, size_t *samples,
                             kw_waveform_adc *adc, size_t *nadc)
{
    KW_FAIL_PARAM(!o || !samples || !nadc, KW_EINVAL, "options", "NULL argument");
    kw_pattern *p = NULL;
    kw_status st = kw_pattern_create(&p, o);
    if (st)
        return st;
    const kw_pattern_info *in = kw_pattern_info_of(p);
    const int spiral = in->kind == KW_PATTERN_SPIRAL, il = in->interleaves;
    kw_spiral_spec sp = {in->fov_m, (int)(o->dims[o->ndim - 1]), il, in->dwell_s};
    kw_gradient_limits lim = {in->gmax, in->slew, in->raster};
    kw_pattern_destroy(p);
    KW_FAIL_PARAM(!spiral, KW_EINVAL, "kind", "only the spiral kind here");
    KW_FAIL_PARAM(interleaf < 0 || interleaf >= il, KW_ERANGE, "interleaf", "%d outside 0..%d", interleaf, il - 1);
    kw_spiral_info si;
    if ((st = kw_spiral_size(&sp, &lim, &si)))
        return st;
    const size_t n = si.readout_points + si.rampdown_points, cap = *samples, acap = *nadc;
    *samples = n;
    *nadc = 1;
    if (!g)
        return KW_OK;
    KW_FAIL_PARAM(cap < n || acap < 1 || !adc, KW_ERANGE, "samples", "room for %zu samples and 1 window needed", n);
    double *gx = kw_alloc_n(2 * n, sizeof *gx), *gy = gx ? gx + n : NULL;
    KW_FAIL_IF(!gx, KW_ENOMEM, "spiral waveform: out of memory");
    st = kw_spiral_design(&sp, &lim, NULL, gx, gy, NULL, NULL);
    /* interleaf i is interleaf 0 turned by 2 pi i / interleaves (kw_gradient.h) */
    const double phi = 2 * KW_PI * interleaf / il, c = cos(phi), s = sin(phi);
    for (size_t i = 0; !st && i < n; i++) {
        g[2 * i] = c * gx[i] - s * gy[i];
        g[2 * i + 1] = s * gx[i] + c * gy[i];
    }
    kw_free(gx);
    adc[0].start_s = 0;
    adc[0].dwell_s = sp.dwell_s;
    adc[0].samples = si.samples;
    return st;
}

/* 1 when x is a whole number of rasters h (to 1e-6 of h) */
static int on_grid(double x, double h)
{
    return fabs(x / h - nearbyint(x / h)) <= 1e-6;
}

kw_status kw_waveform_plan(const kw_plan_report *r, double *g, size_t *samples, kw_waveform_adc *adc,
                           double *rf_centre_s, double *te_s)
{
    KW_FAIL_PARAM(!r || !samples, KW_EINVAL, "options", "NULL argument");
    KW_FAIL_PARAM(r->protocol.sequence != KW_SEQ_GRE, KW_EINVAL, "kind",
                  "only the (Cartesian) gradient-echo plan's lobes are written as a waveform in this version");
    const double h = r->protocol.raster_s;
    const size_t n = (size_t)llround(r->timeline_s / h) + 1, cap = *samples;
    *samples = n;
    if (!g)
        return KW_OK;
    KW_FAIL_PARAM(cap < n || !adc || !rf_centre_s || !te_s, KW_ERANGE, "samples", "room for %zu samples needed",
                  n);
    memset(g, 0, n * 3 * sizeof *g);
    double *buf = kw_alloc_n(n, sizeof *buf);
    KW_FAIL_IF(!buf, KW_ENOMEM, "plan waveform: out of memory");
    kw_status st = KW_OK;
    int have_rf = 0, have_adc = 0;
    for (int e = 0; e < r->nevents && !st; e++) {
        const kw_event *ev = &r->events[e];
        if (ev->kind == KW_EV_RF_EXCITE) {
            *rf_centre_s = 0.5 * (ev->t0 + ev->t1);
            have_rf = 1;
        } else if (ev->kind == KW_EV_ADC) {
            adc->start_s = ev->t0;
            adc->dwell_s = r->dwell_s;
            adc->samples = (size_t)llround((ev->t1 - ev->t0) / r->dwell_s);
            have_adc = 1;
        } else if (ev->kind == KW_EV_LOBE) {
            const int axis = ev->axis == KW_AX_READ ? 0 : ev->axis == KW_AX_PHASE ? 1 : 2;
            KW_FAIL_IF(!on_grid(ev->t0, h), KW_EINTERNAL, "plan waveform: lobe '%s' starts off the raster",
                       ev->label);
            st = put_lobe3(g, n, axis, (size_t)llround(ev->t0 / h), &ev->lobe, h, buf, n);
        }
    }
    kw_free(buf);
    if (st)
        return st;
    KW_FAIL_IF(!have_rf || !have_adc, KW_EINTERNAL, "plan waveform: no excitation or no ADC window");
    KW_FAIL_PARAM(!on_grid(adc->start_s, h) || !on_grid((double)adc->samples * adc->dwell_s, h), KW_EINVAL, "adc",
                  "the plan's ADC window (%.9g s, %zu x %.9g s) is not a whole number of rasters (%g s): "
                  "choose a bandwidth whose readout (matrix x dwell) is", adc->start_s, adc->samples,
                  adc->dwell_s, h);
    *te_s = adc->start_s + 0.5 * (double)adc->samples * adc->dwell_s - *rf_centre_s;
    return KW_OK;
}
