/* cmd_waveform.c: `kweave waveform`: a sequence programmer's own gradient
 * waveform (.npy (samples, axes) in T/m) checked by the library
 * (kw_waveform.h): limits, violations, duty, moments, k-space, a
 * nerve-stimulation estimate; the report as text, JSON and a picture, the
 * trajectory as a kweave trajectory (.npy + times + sidecar). The timing
 * (raster, RF centre, TE, ADC windows) comes from the options or from a
 * JSON sidecar (docs/waveform.md). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "arrayio.h"
#include "cli.h"
#include "defaults.h"
#include "jsonio.h"
#include "kw_waveform.h"
#include "npy.h"
#include "outfile.h"
#include "protofile.h"
#include "waveform_cli.h"

static const char USAGE[] =
    "usage: kweave waveform --in G.npy [--rf-centre T] [--raster T] [--adc START:N:DWELL[,...]]\n"
    "                       [--te T] [--gmax G] [--slew S] [--fov L[,LY[,LZ]]]\n"
    "                       [--json F] [--trajectory K.npy] [--png F] [--delay D] [--lowpass T | --eddy A:T]\n"
    "                       [--girf H.npy] [--trajectory-actual K.npy] [--estimate-delay KS.npy]\n"
    "\n"
    "Checks a gradient waveform of your own: G.npy is float32/float64 (samples, axes)\n"
    "in T/m (or G.csv / G.txt, a table of one sample a line), axes x, y, z (1 to 3),\n"
    "sample i at i x raster, linear in between.\n"
    "Reports peak amplitude and slew per axis and of the vector sum, every run of\n"
    "samples over a limit, the RMS gradient, the moments M0, M1, M2 at every ADC\n"
    "centre and at TE (from the RF centre), and an ESTIMATE of nerve stimulation:\n"
    "dB/dt = slew x radius per ramp against 0.8 x 20 T/s x (1 + 0.36 ms / ramp)\n"
    "(IEC 60601-2-33 normal mode; values from memory). The trajectory\n"
    "k = gamma_bar x integral G dt in cycles/FOV at the ADC samples is a kweave\n"
    "trajectory that `encode --trajectory` and `recon` take. Timing keys may come\n"
    "from a sidecar G.json (raster_s, rf_centre_s, te_s, tr_s, adc: [{start_s or\n"
    "start_sample, samples, dwell_s}]); options override it. See docs/waveform.md.";

typedef struct wf_args {
    const char *in, *sidecar, *json, *traj, *times, *png, *adc, *fov;
    const char *delay, *lowpass, *eddy, *traj_actual, *estimate, *girf, *rfs;
    double raster, rf, te, tr, gmax, slew, radius;
    int s_raster, s_rf, s_te, s_tr, s_sidecar, limit_vector, held;
} wf_args;

static const kw_cli_param PARAM_MAP[] = {
    {"waveform", "in"},     {"axes", "in"},   {"samples", "in"},   {"raster_s", "raster"},
    {"rf_centre_s", "rf-centre"}, {"te_s", "te"}, {"tr_s", "tr"}, {"gmax", "gmax"},
    {"slew", "slew"},       {"fov_m", "fov"}, {"adc", "adc"},      {"pns_radius_m", "pns-radius"},
    {"delay_s", "delay"},   {"response_tau_s", "lowpass"}, {"response_amp", "eddy"}, {"held", "held"},
    {"girf", "girf"},       {"girf_freq_hz", "girf"}, {"girf_axes", "girf"}, {"rf_centres_s", "rf-centres"},
    {NULL, NULL},
};

/* ---- input ---------------------------------------------------------------------------- */

/* The sidecar (--sidecar, or G.json beside --in when it exists): the keys
 * the options did not give (kw_waveform_timing_parse()). */
static int read_sidecar(wf_args *a, kw_waveform_adc **adc, size_t *nadc)
{
    char *path = a->s_sidecar ? strdup(a->sidecar) : kw_array_sidecar_path(a->in);
    if (!path)
        return -1;
    FILE *f = a->s_sidecar ? NULL : fopen(path, "rb");
    if (f)
        fclose(f);
    else if (!a->s_sidecar) /* none beside the waveform: the options alone */
        return free(path), -1;
    cJSON *j = NULL;
    kw_status st = kw_json_read(path, &j);
    free(path);
    if (st)
        return kw_cli_status(st, "sidecar");
    char *text = cJSON_PrintUnformatted(j);
    cJSON_Delete(j);
    kw_waveform_timing t;
    st = text ? kw_waveform_timing_parse(text, a->s_raster ? a->raster : 0, &t) : KW_ENOMEM;
    cJSON_free(text);
    if (st)
        return kw_cli_status(st, "sidecar");
    const double v[4] = {t.raster_s, t.rf_centre_s, t.te_s, t.tr_s};
    double *dst[4] = {&a->raster, &a->rf, &a->te, &a->tr};
    int *seen[4] = {&a->s_raster, &a->s_rf, &a->s_te, &a->s_tr};
    for (int k = 0; k < 4; k++)
        if (!isnan(v[k]) && !*seen[k]) {
            *dst[k] = v[k];
            *seen[k] = 1;
        }
    if (t.held >= 0 && !a->held)
        a->held = t.held;
    if (t.adc && !a->adc) {
        *adc = calloc(t.nadc ? t.nadc : 1, sizeof **adc);
        if (!*adc) {
            kw_free(t.adc);
            return kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory"), "adc");
        }
        memcpy(*adc, t.adc, t.nadc * sizeof **adc);
        *nadc = t.nadc;
    }
    kw_free(t.adc);
    return -1;
}

/* --adc through the library (kw_waveform_adc_parse()); the windows copied
 * to a malloc'd list as the sidecar's are. */
static int parse_adc(const char *text, double raster, kw_waveform_adc **out, size_t *n)
{
    kw_waveform_adc *w = NULL;
    kw_status st = kw_waveform_adc_parse(text, raster, &w, n);
    if (st)
        return kw_cli_lib_status(st, "adc", PARAM_MAP);
    free(*out);
    *out = malloc(*n * sizeof **out);
    if (*out)
        memcpy(*out, w, *n * sizeof **out);
    kw_free(w);
    return *out ? -1 : kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory"), "adc");
}

/* A text table (.csv, .txt): the file's text through kw_waveform_table_parse(). */
static int read_table(const char *path, double **g, size_t *n, int *axes)
{
    char *text = NULL;
    size_t len = 0;
    kw_status st = kw_textfile_load(path, (size_t)1 << 30, &text, &len);
    if (st)
        return kw_cli_status(st, "in");
    st = kw_waveform_table_parse(text, g, n, axes);
    kw_free(text);
    return st ? kw_cli_lib_status(st, "in", PARAM_MAP) : -1;
}

/* --girf H.npy: complex (frequencies, 1 + axes), split by the library
 * (kw_waveform_girf_split()); f and h kw_alloc'd. */
static int read_girf(const char *path, int axes, double **f, kw_cdouble **h, size_t *nf, int *cross)
{
    kw_array a = {0};
    kw_status st = kw_array_read_complex(path, &a);
    if (st)
        return kw_cli_status(st, "girf");
    int rc = -1;
    const size_t nd = (size_t)axes + 1, nx = (size_t)(axes * axes) + 1; /* per axis, or cross-axis terms */
    *cross = axes > 1 && a.ndim == 2 && a.dims[1] == nx;
    if (a.dtype != KW_C64 || a.ndim != 2 || (a.dims[1] != nd && !*cross))
        rc = kw_cli_fail("girf", "expected complex (frequencies, %zu): the frequency in Hz, then H of each of "
                         "the waveform's %d axes (or (frequencies, %zu) with the cross-axis terms)", nd, axes, nx);
    else if ((st = kw_waveform_girf_split(a.data, *nf = a.dims[0], *cross ? axes * axes : axes, f, h)))
        rc = kw_cli_lib_status(st, "girf", PARAM_MAP);
    kw_array_free(&a);
    return rc;
}

/* The waveform (samples, axes) as doubles: .npy / HDF5, or a text table. */
static int read_waveform(const char *path, double **g, size_t *n, int *axes)
{
    const char *dot = strrchr(path, '.');
    if (dot && (strcmp(dot, ".csv") == 0 || strcmp(dot, ".txt") == 0))
        return read_table(path, g, n, axes);
    kw_array a = {0};
    kw_status st = kw_array_read(path, &a);
    if (st)
        return kw_cli_status(st, "in");
    int rc = -1;
    if (a.dtype != KW_F32)
        rc = kw_cli_fail("in", "expected real numbers (float32 or float64) in T/m");
    else if (a.ndim != 1 && a.ndim != 2)
        rc = kw_cli_fail("in", "expected (samples, axes) or (samples,), got %d dimensions", a.ndim);
    else if (a.ndim == 2 && (a.dims[1] < 1 || a.dims[1] > 3))
        rc = kw_cli_fail("in", "%zu axes; 1 to 3 (x, y, z) in the last dimension", a.dims[1]);
    if (rc >= 0) {
        kw_array_free(&a);
        return rc;
    }
    *n = a.dims[0];
    *axes = a.ndim == 2 ? (int)a.dims[1] : 1;
    size_t cnt = kw_array_count(&a);
    *g = kw_alloc_n(cnt ? cnt : 1, sizeof **g);
    if (!*g) {
        kw_array_free(&a);
        return kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory for %zu samples", cnt), "in");
    }
    const float *src = a.data;
    for (size_t i = 0; i < cnt; i++)
        (*g)[i] = src[i];
    kw_array_free(&a);
    return -1;
}

/* ---- outputs ---------------------------------------------------------------------------- */

static char *times_path(const char *out)
{
    size_t n = strlen(out), stem = n > 4 && strcmp(out + n - 4, ".npy") == 0 ? n - 4 : n;
    char *s = malloc(stem + 11);
    if (s)
        snprintf(s, stem + 11, "%.*s_times.npy", (int)stem, out);
    return s;
}

static const char *base_name(const char *p)
{
    const char *s = strrchr(p, '/');
    return s ? s + 1 : p;
}

/* The trajectory (samples, max(2, axes)) in cycles/FOV (a 1-axis waveform
 * gets ky = 0), its times after the RF centre and its sidecar. */
static int write_trajectory(const wf_args *a, const kw_waveform *w, const char *path, const char *times,
                            int actual)
{
    const char *what = actual ? "trajectory-actual" : "trajectory";
    const kw_waveform_summary *s = kw_waveform_summary_of(w);
    const size_t ns = s->adc_samples, na = (size_t)s->axes, nc = na < 2 ? 2 : na;
    if (!ns)
        return kw_cli_fail(what, "no ADC window (--adc or the sidecar's adc): no samples");
    float *k = kw_alloc_n(ns * na, sizeof *k), *kc = kw_alloc_n(ns * nc, sizeof *kc),
          *t = kw_alloc_n(ns, sizeof *t);
    char *tp = times ? strdup(times) : times_path(path), *sp = kw_sidecar_path(path);
    kw_status st = !k || !kc || !t || !tp ? kw_set_error(KW_ENOMEM, "out of memory") : KW_OK;
    if (!st)
        st = actual ? kw_waveform_trajectory_actual(w, k, t) : kw_waveform_trajectory(w, k, t);
    for (size_t i = 0; !st && i < ns; i++)
        for (size_t c = 0; c < na; c++)
            kc[i * nc + c] = k[i * na + c];
    kw_array ka = {.dtype = KW_F32, .ndim = 2, .dims = {ns, nc}, .data = kc};
    kw_array ta = {.dtype = KW_F32, .ndim = 1, .dims = {ns}, .data = t};
    if (!st)
        st = kw_npy_write(path, &ka);
    if (!st)
        st = kw_npy_write(tp, &ta);
    char *js = NULL;
    if (!st && sp)
        st = kw_waveform_trajectory_json(w, actual, base_name(tp), a->in, &js);
    if (!st && sp)
        st = kw_outfile_write_all(sp, js, strlen(js));
    kw_free(js);
    kw_free(k);
    kw_free(kc);
    kw_free(t);
    free(tp);
    free(sp);
    return st ? kw_cli_status(st, what) : -1;
}

/* ---- the text report ---------------------------------------------------------------------- */

static void print_moments(const char *what, const kw_waveform_moments *m, int axes)
{
    const char *an[3] = {"x", "y", "z"};
    printf("%s at %.6g ms after the RF centre:\n", what, m->t_s * 1e3);
    for (int a = 0; a < axes; a++)
        printf("  %s  M0 %+.6e T s/m   M1 %+.6e T s^2/m   M2 %+.6e T s^3/m\n", an[a], m->m0[a],
               m->m1[a], m->m2[a]);
}

static const char *axis_word(int a)
{
    return a == 0 ? "x" : a == 1 ? "y" : a == 2 ? "z" : "vector";
}

static void print_pns(const kw_waveform *w, const kw_waveform_options *o)
{
    const kw_waveform_summary *s = kw_waveform_summary_of(w);
    size_t nr, over = 0;
    const kw_waveform_ramp *r = kw_waveform_ramps(w, &nr);
    for (size_t i = 0; i < nr; i++)
        over += r[i].percent > 100.0;
    printf("nerve stimulation (ESTIMATE): dB/dt = slew x %g m against %g x %g T/s x (1 + %g ms / ramp)\n",
           o->pns_radius_m, o->pns_fraction, o->pns_rheobase, o->pns_chronaxie_s * 1e3);
    printf("  (IEC 60601-2-33 normal operating mode; radius and limit values recalled from memory)\n");
    if (nr) {
        const kw_waveform_ramp *b = &r[s->pns_worst];
        printf("  worst ramp: %s intervals %zu..%zu (%.6g us): slew %.6g T/m/s, dB/dt %.6g T/s, "
               "limit %.6g T/s: %.1f %%\n", axis_word(b->axis), b->first, b->last, b->duration_s * 1e6,
               b->slew, b->dbdt, b->limit, b->percent);
    }
    printf("  %zu ramps, %zu over 100 %%. An estimate only: stimulation depends on the coil, the subject\n"
           "  and the position; the scanner's own supervision and IEC 60601-2-33 govern.\n", nr, over);
}

static void print_report(const kw_waveform *w, const kw_waveform_options *o)
{
    const kw_waveform_summary *s = kw_waveform_summary_of(w);
    const char *an[3] = {"x", "y", "z"};
    printf("waveform: %zu samples x %d axes, raster %g us, span %.6g ms, RF centre at %.6g ms\n",
           s->samples, s->axes, s->raster_s * 1e6, s->span_s * 1e3, o->rf_centre_s * 1e3);
    for (int a = 0; a < s->axes; a++)
        printf("axis %s: peak |G| %.4f mT/m (sample %zu), peak slew %.2f T/m/s (interval %zu), "
               "RMS %.4f mT/m (%.1f %% of gmax)\n", an[a], s->peak_g[a] * 1e3, s->peak_g_at[a],
               s->peak_slew[a], s->peak_slew_at[a], s->rms_g[a] * 1e3, 100 * s->rms_g[a] / o->gmax);
    printf("vector: peak |G| %.4f mT/m (sample %zu), peak slew %.2f T/m/s (interval %zu), RMS %.4f mT/m "
           "over %.6g ms\n", s->peak_g_vector * 1e3, s->peak_g_vector_at, s->peak_slew_vector,
           s->peak_slew_vector_at, s->rms_g_vector * 1e3, s->tr_s * 1e3);
    if (o->held)
        printf("held samples: slew is raster-limited, (G[i+1] - G[i]) / raster, the step between held values "
               "spread over one raster\n");
    printf("starts at zero: %s; ends at zero: %s; ADC windows on the raster: yes\n",
           s->starts_at_zero ? "yes" : "NO", s->ends_at_zero ? "yes" : "NO");
    size_t nv;
    const kw_waveform_violation *v = kw_waveform_violations(w, &nv);
    printf("limits %g mT/m, %g T/m/s%s: %s\n", o->gmax * 1e3, o->slew,
           o->limit_vector ? " (per axis and vector)" : " (per axis)",
           nv ? "BROKEN" : "within");
    for (size_t i = 0; i < nv; i++) {
        const int amp = v[i].limit == KW_WAVEFORM_AMPLITUDE;
        printf("  %s %s %s %zu..%zu (%.6g .. %.6g ms): peak %.6g %s, %.6g %s over\n",
               amp ? "amplitude" : "slew", axis_word(v[i].axis), amp ? "samples" : "intervals",
               v[i].first, v[i].last, v[i].start_s * 1e3, v[i].end_s * 1e3,
               amp ? v[i].peak * 1e3 : v[i].peak, amp ? "mT/m" : "T/m/s",
               amp ? v[i].excess * 1e3 : v[i].excess, amp ? "mT/m" : "T/m/s");
    }
    size_t na;
    const kw_waveform_moments *m = kw_waveform_adc_moments(w, &na);
    for (size_t i = 0; i < na && i < 4; i++) {
        char what[96];
        snprintf(what, sizeof what, "ADC window %zu (%zu samples x %g us) centre", i, o->adc[i].samples,
                 o->adc[i].dwell_s * 1e6);
        print_moments(what, &m[i], s->axes);
    }
    if (na > 4)
        printf("... and %zu more ADC windows (all of them in the JSON report)\n", na - 4);
    kw_waveform_moments e;
    if (!isnan(o->te_s) && kw_waveform_moments_at(w, o->te_s, &e) == KW_OK)
        print_moments("echo (TE)", &e, s->axes);
    if (o->nrf > 1) {
        printf("%zu RF centres (ms):", o->nrf);
        for (size_t k = 0; k < o->nrf; k++)
            printf(" %.6g", o->rf_centres_s[k] * 1e3);
        printf("; moments and k restart from 0 at each\n");
        for (size_t k = 1; !isnan(o->te_s) && k < o->nrf; k++) {
            char what[64];
            snprintf(what, sizeof what, "echo (TE) of excitation %zu", k);
            if (kw_waveform_moments_at(w, o->rf_centres_s[k] - o->rf_centres_s[0] + o->te_s, &e) == KW_OK)
                print_moments(what, &e, s->axes);
        }
    }
    int terms = 0;
    for (int a = 0; a < s->axes; a++)
        terms |= o->delay_s[a] != 0 || o->response_amp[a] != 0;
    if (o->girf_nfreq)
        printf("actual gradient: through the GIRF's transfer function, %zu frequencies (Vannesjo et al. 2013; "
               "H = 0 beyond the last)%s\n", o->girf_nfreq, terms ? ", then the terms below" : "");
    if (terms)
        for (int a = 0; a < s->axes; a++)
            printf("actual gradient, axis %s: delay %g us, response term amplitude %g, time constant %g us\n",
                   an[a], o->delay_s[a] * 1e6, o->response_amp[a], o->response_tau_s[a] * 1e6);
    print_pns(w, o);
    printf("\n%s\n", KW_SAFETY_CAUTION);
}

/* ---- delay estimate ---------------------------------------------------------------------------- */

static const kw_cli_param DELAY_MAP[] = {
    {"data", "estimate-delay"}, {"spokes", "estimate-delay"}, {"n", "estimate-delay"}, {NULL, NULL},
};

/* The per-axis delays (kw_waveform_estimate_delay_axes()) with the
 * spokes' directions from the nominal gradient at the windows' centres;
 * NaN where the directions cannot tell the axes apart (*why says so). */
static void estimate_axes(const kw_array *ks, const kw_waveform *w, const kw_waveform_options *o, double *est,
                          char *why, size_t cap)
{
    const int axes = kw_waveform_summary_of(w)->axes;
    double *dir = kw_alloc_n(o->nadc * (size_t)axes, sizeof *dir);
    kw_status st = dir ? kw_waveform_adc_directions(w, dir) : KW_ENOMEM;
    if (!st)
        st = kw_waveform_estimate_delay_axes(ks->data, ks->ndim == 2 ? ks->dims[0] : 1, o->nadc, o->adc[0].samples,
                                             o->adc[0].dwell_s, dir, axes, est);
    if (st) {
        snprintf(why, cap, "%s", kw_last_error());
        for (int a = 0; a < axes; a++)
            est[a] = NAN;
    }
    kw_free(dir);
}

/* --estimate-delay KS.npy: radial data (coils, samples) acquired with this
 * waveform's ADC windows as spokes, window s opposed to s + windows/2:
 * est[0] one delay for every axis, est[1 + a] the delay of axis a. */
static int estimate_delay(const char *path, const kw_waveform *w, const kw_waveform_options *o, double *est,
                          char *why, size_t cap)
{
    int same = o->nadc >= 2 && o->nadc % 2 == 0;
    for (size_t i = 1; same && i < o->nadc; i++)
        same = o->adc[i].samples == o->adc[0].samples && o->adc[i].dwell_s == o->adc[0].dwell_s;
    if (!same)
        return kw_cli_fail("estimate-delay", "needs an even number of ADC windows (spokes) of equal samples and "
                           "dwell, window s opposed to window s + windows/2");
    kw_array ks = {0};
    kw_status st = kw_array_read_complex(path, &ks);
    if (st)
        return kw_cli_status(st, "estimate-delay");
    const size_t total = o->nadc * o->adc[0].samples;
    int rc = -1;
    if (ks.dtype != KW_C64 || (ks.ndim != 1 && ks.ndim != 2) || ks.dims[ks.ndim - 1] != total)
        rc = kw_cli_fail("estimate-delay", "expected complex k-space (coils, %zu) of the ADC windows' samples", total);
    else if ((st = kw_waveform_estimate_delay(ks.data, ks.ndim == 2 ? ks.dims[0] : 1, o->nadc, o->adc[0].samples,
                                              o->adc[0].dwell_s, est)))
        rc = kw_cli_lib_status(st, "estimate-delay", DELAY_MAP);
    else
        estimate_axes(&ks, w, o, est + 1, why, cap);
    kw_array_free(&ks);
    return rc;
}

/* The report's JSON with the delay estimate added ("-" or a file). */
static kw_status write_json(const char *path, const char *js, const double *est, int axes, const char *why)
{
    if (isnan(est[0]))
        return strcmp(path, "-") == 0 ? (fputs(js, stdout) < 0 ? KW_EIO : KW_OK)
                                      : kw_outfile_write_all(path, js, strlen(js));
    cJSON *j = cJSON_Parse(js);
    KW_FAIL_IF(!j, KW_ENOMEM, "json: out of memory");
    cJSON *d = cJSON_CreateObject();
    kw_json_add_number_or_null(d, "delay_s", est[0]);
    cJSON_AddStringToObject(d, "method", "shift between opposed spokes' echoes (Peters et al. 2003), one delay for every axis");
    cJSON *pa = cJSON_AddArrayToObject(d, "per_axis_delay_s");
    for (int a = 0; pa && a < axes; a++)
        cJSON_AddItemToArray(pa, isnan(est[1 + a]) ? cJSON_CreateNull() : cJSON_CreateNumber(est[1 + a]));
    cJSON_AddStringToObject(d, "per_axis_method", *why ? why : "least squares of each pair's echo shift against "
                            "sum over axes of delay x direction^2 (dx cos^2 + dy sin^2 in a plane)");
    cJSON_AddItemToObject(j, "delay_estimate", d);
    kw_status st = kw_json_write(path, j);
    cJSON_Delete(j);
    return st;
}

/* ---- the verb ------------------------------------------------------------------------------- */

/* --delay D[,DY,DZ] (one value: every axis), --lowpass TAU[,...] (amplitude
 * 1), --eddy AMP:TAU[,...]: one response term per axis. */
static int parse_imperfections(const wf_args *a, kw_waveform_options *o)
{
    char why[160];
    double v[3];
    int n;
    if (a->delay) {
        if ((n = kw_unit_parse_list(a->delay, KW_UNIT_TIME, v, 3, why, sizeof why)) < 0)
            return kw_cli_fail("delay", "%s", why);
        for (int k = 0; k < 3; k++)
            o->delay_s[k] = n == 1 ? v[0] : k < n ? v[k] : 0;
    }
    if (a->lowpass) {
        if ((n = kw_unit_parse_list(a->lowpass, KW_UNIT_TIME, v, 3, why, sizeof why)) < 0)
            return kw_cli_fail("lowpass", "%s", why);
        for (int k = 0; k < 3; k++) {
            o->response_tau_s[k] = n == 1 ? v[0] : k < n ? v[k] : 0;
            o->response_amp[k] = o->response_tau_s[k] > 0 ? 1.0 : 0.0;
        }
    }
    if (!a->eddy)
        return -1;
    if (a->lowpass)
        return kw_cli_fail("eddy", "one response term per axis in this version: --lowpass or --eddy");
    char buf[256];
    if (strlen(a->eddy) >= sizeof buf)
        return kw_cli_fail("eddy", "too long");
    strcpy(buf, a->eddy);
    int k = 0;
    for (char *save = NULL, *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save), k++) {
        char *c = strchr(tok, ':'), *end;
        if (k >= 3 || !c)
            return kw_cli_fail("eddy", "'%s': expected AMP:TAU[,AMP:TAU,...] (e.g. 0.02:50us), one per axis", a->eddy);
        *c = '\0';
        double amp = strtod(tok, &end);
        if (!*tok || *end || !(amp >= 0 && amp <= 1))
            return kw_cli_fail("eddy", "amplitude '%s': a number in [0, 1]", tok);
        if (kw_unit_parse(c + 1, KW_UNIT_TIME, &o->response_tau_s[k], why, sizeof why))
            return kw_cli_fail("eddy", "time constant '%s': %s", c + 1, why);
        o->response_amp[k] = amp;
    }
    for (int j = k; k == 1 && j < 3; j++) { /* one term: every axis */
        o->response_amp[j] = o->response_amp[0];
        o->response_tau_s[j] = o->response_tau_s[0];
    }
    return -1;
}

/* --rf-centres T1,T2,...: the RF centres of several excitations (malloc'd) */
static int parse_rf_centres(const char *s, double **v, size_t *n)
{
    size_t cap = 1;
    for (const char *c = s; *c; c++)
        cap += *c == ',';
    *v = malloc(cap * sizeof **v);
    if (!*v)
        return kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory"), "rf-centres");
    char why[160];
    int k = kw_unit_parse_list(s, KW_UNIT_TIME, *v, (int)cap, why, sizeof why);
    if (k < 0)
        return kw_cli_fail("rf-centres", "%s", why);
    *n = (size_t)k;
    return -1;
}

static int parse_fov(const char *s, double fov[3])
{
    char why[160];
    double v[3];
    int n = kw_unit_parse_list(s, KW_UNIT_LENGTH, v, 3, why, sizeof why);
    if (n < 0)
        return kw_cli_fail("fov", "%s", why);
    for (int a = 0; a < 3; a++)
        fov[a] = v[a < n ? a : n - 1];
    return -1;
}

static int run(wf_args *a)
{
    double *g = NULL;
    size_t n = 0, nadc = 0;
    int axes = 0;
    kw_waveform_adc *adc = NULL;
    kw_waveform *w = NULL;
    double *gf = NULL;
    kw_cdouble *gh = NULL;
    double *rfs = NULL;
    char *js = NULL;
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    int rc = read_sidecar(a, &adc, &nadc);
    if (rc < 0 && a->adc)
        rc = parse_adc(a->adc, a->s_raster ? a->raster : KWD_RASTER_S, &adc, &nadc);
    if (rc < 0 && a->fov)
        rc = parse_fov(a->fov, o.fov_m);
    if (rc < 0 && a->rfs)
        rc = parse_rf_centres(a->rfs, &rfs, &o.nrf);
    o.rf_centres_s = rfs;
    if (rc < 0)
        rc = parse_imperfections(a, &o);
    if (rc < 0)
        rc = read_waveform(a->in, &g, &n, &axes);
    if (rc < 0 && a->girf && (rc = read_girf(a->girf, axes, &gf, &gh, &o.girf_nfreq, &o.girf_cross)) < 0) {
        o.girf_freq_hz = gf;
        o.girf = gh;
        o.girf_axes = axes;
    }
    if (rc >= 0)
        goto done;
    if (a->s_raster)
        o.raster_s = a->raster;
    o.rf_centre_s = a->s_rf ? a->rf : o.nrf ? rfs[0] : NAN;
    o.te_s = a->s_te ? a->te : NAN;
    o.tr_s = a->s_tr ? a->tr : 0;
    o.gmax = a->gmax;
    o.slew = a->slew;
    o.limit_vector = a->limit_vector;
    o.held = a->held;
    o.pns_radius_m = a->radius;
    o.adc = adc;
    o.nadc = nadc;
    kw_status st = kw_waveform_create(&w, g, n, axes, &o);
    if (st) {
        rc = kw_cli_lib_status(st, "waveform", PARAM_MAP);
        goto done;
    }
    double est[4] = {NAN, NAN, NAN, NAN};
    char why[256] = "";
    if (a->estimate && (rc = estimate_delay(a->estimate, w, &o, est, why, sizeof why)) >= 0)
        goto done;
    if (a->traj && (rc = write_trajectory(a, w, a->traj, a->times, 0)) >= 0)
        goto done;
    if (a->traj_actual && (rc = write_trajectory(a, w, a->traj_actual, NULL, 1)) >= 0)
        goto done;
    if (a->png && (st = kw_wf_write_png(a->png, g, n, axes, w, &o)) && (rc = kw_cli_status(st, "png")) >= 0)
        goto done;
    if (a->json) {
        if ((st = kw_waveform_report_json(w, &js)) || (st = write_json(a->json, js, est, axes, why))) {
            rc = kw_cli_status(st, "json");
            goto done;
        }
    }
    if (!a->json || strcmp(a->json, "-") != 0) {
        print_report(w, &o);
        if (!isnan(est[0])) {
            printf("gradient delay estimated from %s (shift between opposed spokes' echoes, Peters et al. 2003; "
                   "one delay for every axis): %.4f us\n", a->estimate, est[0] * 1e6);
            printf("per axis (least squares of each pair's echo shift = dx cos^2 + dy sin^2 [+ dz ...]):");
            for (int k = 0; k < axes; k++) {
                if (isnan(est[1 + k]))
                    printf(" %c -", "xyz"[k]);
                else
                    printf(" %c %.4f us", "xyz"[k], est[1 + k] * 1e6);
            }
            if (*why)
                printf(" (%s)", why);
            printf("\n");
        }
    }
    rc = KW_EXIT_OK;
done:
    kw_free(js);
    kw_waveform_destroy(w);
    kw_free(g);
    free(adc);
    kw_free(gf);
    kw_free(gh);
    free(rfs);
    return rc;
}

int kw_cmd_waveform(int argc, char **argv)
{
    wf_args a = {0};
    a.gmax = KWD_GMAX_T_PER_M;
    a.slew = KWD_SLEW_T_PER_M_PER_S;
    a.radius = KW_PNS_RADIUS_M;
    const kw_opt table[] = {
        {"in", KW_OPT_STRING, &a.in, 0, NULL, "gradient waveform .npy (samples, axes) in T/m, axes x, y, z, or a .csv/.txt table (required)"},
        {"sidecar", KW_OPT_STRING, &a.sidecar, 0, &a.s_sidecar,
         "timing keys .json (default: the .json beside --in when there is one)"},
        {"raster", KW_OPT_UNIT, &a.raster, KW_UNIT_TIME, &a.s_raster, "time between samples (default " KWD_RASTER_TEXT ")"},
        {"rf-centre", KW_OPT_UNIT, &a.rf, KW_UNIT_TIME, &a.s_rf,
         "time of the RF centre after the first sample (required, or rf_centre_s in the sidecar)"},
        {"rf-centres", KW_OPT_STRING, &a.rfs, 0, NULL,
         "several excitations: their RF centres T1,T2,... after the first sample; moments and k restart at each "
         "(the first is --rf-centre when both are given; default: --rf-centre alone)"},
        {"te", KW_OPT_UNIT, &a.te, KW_UNIT_TIME, &a.s_te, "echo time after the RF centre: moments there (default: none)"},
        {"tr", KW_OPT_UNIT, &a.tr, KW_UNIT_TIME, &a.s_tr, "repetition time for the RMS gradient (default: the waveform's span)"},
        {"adc", KW_OPT_STRING, &a.adc, 0, NULL,
         "ADC windows START:SAMPLES:DWELL[,...], START a time after the first sample or a sample index (default: none)"},
        {"gmax", KW_OPT_UNIT, &a.gmax, KW_UNIT_GRADIENT, NULL, "amplitude limit per axis (default " KWD_GMAX_TEXT ")"},
        {"slew", KW_OPT_UNIT, &a.slew, KW_UNIT_SLEW, NULL, "slew-rate limit per axis (default " KWD_SLEW_TEXT ")"},
        {"limit-vector", KW_OPT_FLAG, &a.limit_vector, 0, NULL, "hold the vector sums against the limits too (default: per axis)"},
        {"held", KW_OPT_FLAG, &a.held, 0, NULL, "each sample held over one raster (default: linear between samples)"},
        {"fov", KW_OPT_STRING, &a.fov, KW_UNIT_LENGTH, NULL, "field of view L[,LY[,LZ]] of the trajectory's cycles/FOV (default " KWD_FOV_TEXT ")"},
        {"pns-radius", KW_OPT_UNIT, &a.radius, KW_UNIT_LENGTH, NULL,
         "distance from the isocentre for dB/dt (default 0.2m, IEC 60601-2-33 whole-body, from memory)"},
        {"json", KW_OPT_STRING, &a.json, 0, NULL, "JSON report (- for stdout; default: none)"},
        {"trajectory", KW_OPT_STRING, &a.traj, 0, NULL,
         "write k at the ADC samples (.npy (samples, 2|3) cycles/FOV) + times + sidecar (default: none)"},
        {"times", KW_OPT_STRING, &a.times, 0, NULL, "sample times file (default TRAJECTORY_times.npy)"},
        {"delay", KW_OPT_STRING, &a.delay, KW_UNIT_TIME, NULL,
         "gradient delay D[,DY,DZ] of the actual system (one value: every axis; default 0)"},
        {"lowpass", KW_OPT_STRING, &a.lowpass, KW_UNIT_TIME, NULL,
         "first-order low-pass time constant TAU[,TY,TZ] of the actual system (default: none)"},
        {"eddy", KW_OPT_STRING, &a.eddy, 0, NULL,
         "eddy-current term AMP:TAU[,...] per axis, e.g. 0.02:50us (one: every axis; default: none)"},
        {"trajectory-actual", KW_OPT_STRING, &a.traj_actual, 0, NULL,
         "write the actual gradient's k-space (.npy) + times + sidecar, as --trajectory (default: none)"},
        {"girf", KW_OPT_STRING, &a.girf, 0, NULL, "measured gradient impulse response: complex .npy (frequencies, "
         "1 + axes), column 0 the frequency in Hz, then H(f) per axis (Vannesjo et al. 2013; default: none)"},
        {"png", KW_OPT_STRING, &a.png, 0, NULL, "picture of G and slew per axis with the limits (default: none)"},
        {"estimate-delay", KW_OPT_STRING, &a.estimate, 0, NULL,
         "radial k-space .npy (coils, samples) taken with these ADC windows as spokes (window s opposed to s + "
         "windows/2): estimate the gradient delay (Peters et al. 2003; default: none)"},
        {NULL, 0, NULL, 0, NULL, NULL},
    };
    int rc = kw_opts_parse(argc, argv, table, USAGE, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (!a.in)
        return kw_cli_fail("in", "missing (--in G.npy)");
    if (a.times && !a.traj)
        return kw_cli_fail("times", "only with --trajectory");
    if (a.traj_actual && !a.delay && !a.lowpass && !a.eddy && !a.girf)
        return kw_cli_fail("trajectory-actual", "needs an imperfection: --delay, --lowpass, --eddy or --girf");
    return run(&a);
}
