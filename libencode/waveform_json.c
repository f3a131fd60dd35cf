/* waveform_json.c: the report of a kw_waveform as JSON text
 * (kw_waveform_report_json(), keys in kw_waveform.h). */
#include <math.h>
#include <string.h>

#include "json_build.h"
#include "waveform_int.h"

#define add_num kw_json_add_number_or_null

static const char *axis_name(int a)
{
    return a == 0 ? "x" : a == 1 ? "y" : a == 2 ? "z" : "vector";
}

static void add_moments(cJSON *o, const kw_waveform_moments *m, int axes)
{
    kw_json_add_vec(o, "m0_T_s_per_m", m->m0, axes);
    kw_json_add_vec(o, "m1_T_s2_per_m", m->m1, axes);
    kw_json_add_vec(o, "m2_T_s3_per_m", m->m2, axes);
}

static void add_peaks(cJSON *j, const kw_waveform_summary *s, const kw_waveform_options *o)
{
    const int na = s->axes;
    double at[3], duty[3];
    kw_json_add_vec(j, "peak_G_T_per_m", s->peak_g, na);
    for (int a = 0; a < na; a++)
        at[a] = (double)s->peak_g_at[a];
    kw_json_add_vec(j, "peak_G_sample", at, na);
    add_num(j, "peak_G_vector_T_per_m", s->peak_g_vector);
    add_num(j, "peak_G_vector_sample", (double)s->peak_g_vector_at);
    kw_json_add_vec(j, "peak_slew_T_per_m_per_s", s->peak_slew, na);
    for (int a = 0; a < na; a++)
        at[a] = (double)s->peak_slew_at[a];
    kw_json_add_vec(j, "peak_slew_interval", at, na);
    add_num(j, "peak_slew_vector_T_per_m_per_s", s->peak_slew_vector);
    add_num(j, "peak_slew_vector_interval", (double)s->peak_slew_vector_at);
    kw_json_add_vec(j, "rms_G_T_per_m", s->rms_g, na);
    add_num(j, "rms_G_vector_T_per_m", s->rms_g_vector);
    for (int a = 0; a < na; a++)
        duty[a] = 100.0 * s->rms_g[a] / o->gmax;
    kw_json_add_vec(j, "duty_percent", duty, na);
}

static void add_violations(cJSON *j, const struct kw_waveform *w)
{
    cJSON *arr = cJSON_AddArrayToObject(j, "violations");
    for (size_t i = 0; arr && i < w->nviol; i++) {
        const kw_waveform_violation *v = &w->viol[i];
        cJSON *o = cJSON_CreateObject();
        if (!o)
            return;
        cJSON_AddStringToObject(o, "limit", v->limit == KW_WAVEFORM_AMPLITUDE ? "amplitude" : "slew");
        cJSON_AddStringToObject(o, "axis", axis_name(v->axis));
        add_num(o, "first", (double)v->first);
        add_num(o, "last", (double)v->last);
        add_num(o, "start_s", v->start_s);
        add_num(o, "end_s", v->end_s);
        add_num(o, "peak", v->peak);
        add_num(o, "limit_value", v->limit_value);
        add_num(o, "excess", v->excess);
        cJSON_AddItemToArray(arr, o);
    }
}

static void add_adc(cJSON *j, const struct kw_waveform *w)
{
    cJSON *arr = cJSON_AddArrayToObject(j, "adc");
    for (size_t i = 0; arr && i < w->o.nadc; i++) {
        const kw_waveform_adc *a = &w->adc[i];
        cJSON *o = cJSON_CreateObject();
        if (!o)
            return;
        add_num(o, "start_s", a->start_s);
        add_num(o, "dwell_s", a->dwell_s);
        add_num(o, "samples", (double)a->samples);
        add_num(o, "centre_s", w->adcm[i].t_s);
        add_moments(o, &w->adcm[i], w->axes);
        cJSON_AddItemToArray(arr, o);
    }
    if (isnan(w->o.te_s)) {
        cJSON_AddNullToObject(j, "echo");
        return;
    }
    kw_waveform_moments m;
    if (kw_waveform_moments_at(w, w->o.te_s, &m) == KW_OK) {
        cJSON *e = cJSON_AddObjectToObject(j, "echo");
        if (e) {
            add_num(e, "t_s", m.t_s);
            add_moments(e, &m, w->axes);
        }
    }
}

/* Several RF centres: their times and the moments at TE after each (those
 * whose echo lies inside the waveform), times after the first centre. */
static void add_rf_centres(cJSON *j, const struct kw_waveform *w)
{
    if (w->nrf < 2)
        return;
    kw_json_add_vec(j, "rf_centres_s", w->rf, (int)w->nrf);
    cJSON *arr = cJSON_AddArrayToObject(j, "echoes");
    for (size_t k = 0; arr && !isnan(w->o.te_s) && k < w->nrf; k++) {
        kw_waveform_moments m;
        if (kw_waveform_moments_at(w, w->rf[k] - w->rf[0] + w->o.te_s, &m) != KW_OK)
            continue;
        cJSON *e = cJSON_CreateObject();
        if (!e)
            return;
        add_num(e, "rf_centre_s", w->rf[k]);
        add_num(e, "t_s", m.t_s);
        add_moments(e, &m, w->axes);
        cJSON_AddItemToArray(arr, e);
    }
}

static cJSON *ramp_json(const kw_waveform_ramp *r)
{
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    cJSON_AddStringToObject(o, "axis", axis_name(r->axis));
    add_num(o, "first", (double)r->first);
    add_num(o, "last", (double)r->last);
    add_num(o, "start_s", r->start_s);
    add_num(o, "duration_s", r->duration_s);
    add_num(o, "slew_T_per_m_per_s", r->slew);
    add_num(o, "dbdt_T_per_s", r->dbdt);
    add_num(o, "limit_T_per_s", r->limit);
    add_num(o, "percent", r->percent);
    return o;
}

static void add_pns(cJSON *j, const struct kw_waveform *w)
{
    const kw_waveform_options *o = &w->o;
    cJSON *p = cJSON_AddObjectToObject(j, "pns");
    if (!p)
        return;
    cJSON_AddBoolToObject(p, "estimate", 1);
    add_num(p, "radius_m", o->pns_radius_m);
    add_num(p, "rheobase_T_per_s", o->pns_rheobase);
    add_num(p, "chronaxie_s", o->pns_chronaxie_s);
    add_num(p, "fraction", o->pns_fraction);
    cJSON_AddStringToObject(p, "source",
                            "dB/dt = slew x radius against fraction x rheobase x (1 + chronaxie / t_eff), "
                            "t_eff the ramp duration: the strength-duration limit of IEC 60601-2-33 for "
                            "the normal operating mode; defaults recalled from memory");
    cJSON_AddStringToObject(p, "caution",
                            "an estimate only: stimulation depends on the coil, the subject and the "
                            "position; the scanner's own supervision and IEC 60601-2-33 govern; "
                            "research and planning use only");
    add_num(p, "percent_max", w->sum.pns_percent_max);
    if (w->nramps)
        cJSON_AddItemToObject(p, "worst", ramp_json(&w->ramps[w->sum.pns_worst]));
    else
        cJSON_AddNullToObject(p, "worst");
    cJSON *arr = cJSON_AddArrayToObject(p, "ramps");
    for (size_t i = 0; arr && i < w->nramps; i++)
        cJSON_AddItemToArray(arr, ramp_json(&w->ramps[i]));
}

/* the GIRF's band (only when one is given: the keys of other reports stay) */
static void add_girf(cJSON *j, const struct kw_waveform *w)
{
    cJSON *g = cJSON_AddObjectToObject(j, "girf");
    if (!g)
        return;
    add_num(g, "frequencies", (double)w->o.girf_nfreq);
    kw_json_add_vec(g, "band_Hz", w->girf_band, 2);
    cJSON_AddStringToObject(g, "beyond_band", "H = 0");
    cJSON_AddStringToObject(g, "method", "GIRF as a sampled transfer function (Vannesjo et al. 2013)");
    if (w->o.girf_cross)
        cJSON_AddBoolToObject(g, "cross_axis", 1);
}

kw_status kw_waveform_report_json(const kw_waveform *w, char **json)
{
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL argument");
    *json = NULL;
    KW_FAIL_PARAM(!w, KW_EINVAL, "waveform", "NULL argument");
    const kw_waveform_summary *s = &w->sum;
    const kw_waveform_options *o = &w->o;
    cJSON *j = cJSON_CreateObject();
    if (j) {
        cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
        cJSON_AddStringToObject(j, "kind", "waveform");
        add_num(j, "samples", (double)s->samples);
        add_num(j, "axes", s->axes);
        add_num(j, "raster_s", s->raster_s);
        add_num(j, "span_s", s->span_s);
        add_num(j, "tr_s", s->tr_s);
        add_num(j, "rf_centre_s", o->rf_centre_s);
        add_num(j, "te_s", o->te_s);
        add_num(j, "gmax_T_per_m", o->gmax);
        add_num(j, "slew_T_per_m_per_s", o->slew);
        cJSON_AddBoolToObject(j, "limit_vector", o->limit_vector != 0);
        cJSON_AddBoolToObject(j, "held", o->held != 0);
        if (o->held)
            cJSON_AddStringToObject(j, "slew_model", WF_HELD_SLEW);
        add_peaks(j, s, o);
        cJSON_AddBoolToObject(j, "starts_at_zero", s->starts_at_zero);
        cJSON_AddBoolToObject(j, "ends_at_zero", s->ends_at_zero);
        /* every ADC window was checked onto the raster at create */
        cJSON_AddBoolToObject(j, "raster_ok", 1);
        cJSON_AddBoolToObject(j, "within_limits", w->nviol == 0);
        add_violations(j, w);
        add_adc(j, w);
        add_rf_centres(j, w);
        add_num(j, "gamma_bar_Hz_per_T", s->gamma_bar);
        kw_json_add_vec(j, "fov_m", o->fov_m, s->axes);
        if (kw_waveform_has_imperfection(w)) {
            cJSON *ac = cJSON_AddObjectToObject(j, "actual");
            if (ac) {
                kw_json_add_vec(ac, "delay_s", o->delay_s, s->axes);
                kw_json_add_vec(ac, "response_tau_s", o->response_tau_s, s->axes);
                kw_json_add_vec(ac, "response_amp", o->response_amp, s->axes);
                if (w->ga)
                    add_girf(ac, w);
            }
        } else {
            cJSON_AddNullToObject(j, "actual");
        }
        add_pns(j, w);
        cJSON_AddStringToObject(j, "safety_caution", KW_SAFETY_CAUTION);
    }
    return kw_json_text(j, json);
}

/* ---- the timing sidecar ------------------------------------------------------------- */

static kw_status timing_number(const cJSON *j, const char *key, double *v)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(j, key);
    *v = NAN;
    if (!it || cJSON_IsNull(it))
        return KW_OK;
    KW_FAIL_PARAM(!cJSON_IsNumber(it) || !isfinite(it->valuedouble), KW_EFORMAT, key, "not a number");
    *v = it->valuedouble;
    return KW_OK;
}

static kw_status timing_adc(const cJSON *arr, double raster, kw_waveform_timing *t)
{
    KW_FAIL_PARAM(!cJSON_IsArray(arr), KW_EFORMAT, "adc",
                  "expected a list of {start_s or start_sample, samples, dwell_s}");
    size_t cnt = (size_t)cJSON_GetArraySize(arr), k = 0;
    t->adc = kw_alloc_n(cnt ? cnt : 1, sizeof *t->adc);
    KW_FAIL_IF(!t->adc, KW_ENOMEM, "adc: out of memory");
    const cJSON *it;
    cJSON_ArrayForEach(it, arr) {
        const cJSON *ss = cJSON_GetObjectItemCaseSensitive(it, "start_s"),
                    *si = cJSON_GetObjectItemCaseSensitive(it, "start_sample"),
                    *ns = cJSON_GetObjectItemCaseSensitive(it, "samples"),
                    *dw = cJSON_GetObjectItemCaseSensitive(it, "dwell_s");
        long long v = 0, nn = 0;
        int bad = !cJSON_IsNumber(ns) || kw_checked_whole(ns->valuedouble, 1, 1LL << 28, &nn) ||
                  !cJSON_IsNumber(dw) || !isfinite(dw->valuedouble) ||
                  cJSON_IsNumber(ss) == cJSON_IsNumber(si) ||
                  (cJSON_IsNumber(ss) && !isfinite(ss->valuedouble)) ||
                  (cJSON_IsNumber(si) && kw_checked_whole(si->valuedouble, 0, 1LL << 40, &v));
        KW_FAIL_PARAM(bad, KW_EFORMAT, "adc",
                      "adc[%zu]: expected start_s (s) or start_sample (a whole number), samples (>= 1) "
                      "and dwell_s (s)", k);
        t->adc[k].start_s = cJSON_IsNumber(ss) ? ss->valuedouble : (double)v * raster;
        t->adc[k].samples = (size_t)nn;
        t->adc[k].dwell_s = dw->valuedouble;
        k++;
    }
    t->nadc = k;
    return KW_OK;
}

static kw_status timing_read(const cJSON *j, double raster_s, kw_waveform_timing *t)
{
    KW_FAIL_PARAM(!cJSON_IsObject(j), KW_EFORMAT, "json", "expected a JSON object");
    kw_status st;
    if ((st = timing_number(j, "raster_s", &t->raster_s)) || (st = timing_number(j, "rf_centre_s", &t->rf_centre_s)) ||
        (st = timing_number(j, "te_s", &t->te_s)) || (st = timing_number(j, "tr_s", &t->tr_s)))
        return st;
    const cJSON *hd = cJSON_GetObjectItemCaseSensitive(j, "held");
    t->held = -1;
    if (hd && !cJSON_IsNull(hd)) {
        KW_FAIL_PARAM(!cJSON_IsBool(hd), KW_EFORMAT, "held", "expected true or false");
        t->held = cJSON_IsTrue(hd);
    }
    const cJSON *arr = cJSON_GetObjectItemCaseSensitive(j, "adc");
    if (!arr || cJSON_IsNull(arr))
        return KW_OK;
    double r = raster_s > 0 ? raster_s : t->raster_s > 0 ? t->raster_s : 10e-6;
    return timing_adc(arr, r, t);
}

kw_status kw_waveform_timing_parse(const char *json, double raster_s, kw_waveform_timing *t)
{
    KW_FAIL_PARAM(!t, KW_EINVAL, "timing", "NULL argument");
    memset(t, 0, sizeof *t);
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL argument");
    cJSON *j = cJSON_Parse(json);
    KW_FAIL_PARAM(!j, KW_EFORMAT, "json", "not JSON");
    kw_status st = timing_read(j, raster_s, t);
    cJSON_Delete(j);
    if (st) {
        kw_free(t->adc);
        memset(t, 0, sizeof *t);
    }
    return st;
}

/* ---- a trajectory's sidecar ------------------------------------------------------------ */

kw_status kw_waveform_trajectory_json(const kw_waveform *w, int actual, const char *times_name,
                                      const char *source, char **json)
{
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL argument");
    *json = NULL;
    KW_FAIL_PARAM(!w || !times_name || !source, KW_EINVAL, "waveform", "NULL argument");
    const kw_waveform_options *o = &w->o;
    const int na = w->axes, nc = na < 2 ? 2 : na;
    cJSON *j = cJSON_CreateObject();
    if (j) {
        cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
        cJSON_AddStringToObject(j, "kind", "trajectory");
        cJSON_AddStringToObject(j, "layout", "noncartesian");
        cJSON_AddStringToObject(j, "pattern_kind", "waveform");
        double sh[2] = {(double)w->sum.adc_samples, (double)nc};
        kw_json_add_vec(j, "shape", sh, 2);
        const char *cols[3] = {"kx", "ky", "kz"};
        cJSON_AddItemToObject(j, "columns", cJSON_CreateStringArray(cols, nc));
        cJSON_AddStringToObject(j, "units", "cycles/FOV");
        add_num(j, "readouts", (double)o->nadc);
        kw_json_add_vec(j, "fov_m", o->fov_m, na);
        add_num(j, "raster_s", o->raster_s);
        add_num(j, "gamma_bar_Hz_per_T", w->sum.gamma_bar);
        cJSON_AddStringToObject(j, "waveform", source);
        cJSON_AddStringToObject(j, "times", times_name);
        cJSON_AddStringToObject(j, "times_origin", "RF centre");
        cJSON_AddStringToObject(j, "gradient", actual ? "actual" : "nominal");
        if (actual) {
            kw_json_add_vec(j, "delay_s", o->delay_s, na);
            kw_json_add_vec(j, "response_tau_s", o->response_tau_s, na);
            kw_json_add_vec(j, "response_amp", o->response_amp, na);
            if (w->ga)
                add_girf(j, w);
        }
        cJSON_AddStringToObject(j, "safety_caution", KW_SAFETY_CAUTION);
    }
    return kw_json_text(j, json);
}
