/* _waveform.c: kweave.waveform(g, **options) -> dict: what `kweave
 * waveform --json` reports (libencode/kw_waveform.h: limits, violations,
 * duty, moments, the nerve-stimulation estimate), with the trajectory at the
 * ADC samples and its times as `--trajectory` writes them and, when an
 * imperfection is given, the actual gradient's k-space as
 * `--trajectory-actual` writes it and the actual gradient itself. The
 * options are the command's (names, defaults, texts with units, messages);
 * the sidecar file's timing keys come as a dict (`sidecar=`), the
 * --estimate-delay file as an array (`estimate_delay=`). */
#include "kwpy.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_waveform.h"

/* The library's parameter names as the command's options (cli/cmd_waveform.c);
 * the waveform itself is `g` here (the command's --in). */
static const struct {
    const char *param, *option;
} PARAM_MAP[] = {
    {"waveform", "g"},          {"axes", "g"},     {"samples", "g"},   {"raster_s", "raster"},
    {"rf_centre_s", "rf-centre"}, {"rf_centres_s", "rf-centres"}, {"te_s", "te"},  {"tr_s", "tr"},     {"gmax", "gmax"},
    {"slew", "slew"},           {"fov_m", "fov"},  {"adc", "adc"},     {"pns_radius_m", "pns-radius"},
    {"delay_s", "delay"},       {"response_tau_s", "lowpass"}, {"response_amp", "eddy"},
    {"held", "held"},           {"girf", "girf"},  {"girf_freq_hz", "girf"}, {"girf_axes", "girf"},
    {NULL, NULL},
};

/* A failed library call: InputError "<option>: <reason>" (.param the option)
 * when its parameter is an option's, else the library's message after
 * "context: " (as the command's kw_cli_lib_status()). */
static PyObject *raise_lib(kw_status st, const char *context)
{
    const char *param = kw_last_error_param();
    for (int i = 0; param && *param && PARAM_MAP[i].param; i++) {
        if (strcmp(PARAM_MAP[i].param, param) != 0)
            continue;
        const char *why = kw_last_error_reason();
        kw_set_error_param(st, PARAM_MAP[i].option, "%s", why && *why ? why : kw_strerror(st));
        return kwpy_raise(st, NULL);
    }
    return kwpy_raise(st, context);
}

/* ---- options ---------------------------------------------------------------------------- */

typedef struct wf_kw {
    PyObject *g, *sidecar, *adc, *fov, *delay, *lowpass, *estimate, *girf, *rfs;
    const char *eddy;
    double raster, rf, te, tr;
    int s_raster, s_rf, s_te, s_tr, s_held;
} wf_kw;

/* One to `max` quantities: a str as the command's ("256mm,200mm"), a
 * number in SI, or a sequence of numbers and strs. The count, or -1 raised
 * naming `option`. */
static int unit_list_n(PyObject *v, const char *option, kw_unit_kind unit, double *out, int max)
{
    char why[200];
    if (PyUnicode_Check(v)) {
        const char *s = PyUnicode_AsUTF8(v);
        if (!s)
            return -1;
        int n = kw_unit_parse_list(s, unit, out, max, why, sizeof why);
        return n < 0 ? (kwpy_value_error(option, "%s", why), -1) : n;
    }
    PyObject *seq = PySequence_Check(v) ? PySequence_Fast(v, option) : NULL;
    if (PyErr_Occurred())
        return -1;
    Py_ssize_t n = seq ? PySequence_Fast_GET_SIZE(seq) : 1;
    if (n < 1 || n > max) {
        Py_XDECREF(seq);
        return (max == 3 ? kwpy_value_error(option, "one to 3 values (x, y, z), got %zd", n)
                         : kwpy_value_error(option, "one to %d values, got %zd", max, n)), -1;
    }
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *it = seq ? PySequence_Fast_GET_ITEM(seq, i) : v;
        int bad = 0;
        if (PyUnicode_Check(it)) {
            const char *s = PyUnicode_AsUTF8(it);
            bad = !s ? -1 : kw_unit_parse(s, unit, &out[i], why, sizeof why) ? 1 : 0;
        } else if (!PyBool_Check(it) && PyNumber_Check(it)) {
            out[i] = PyFloat_AsDouble(it);
            bad = out[i] == -1.0 && PyErr_Occurred() ? -1 : 0;
            if (!bad && !isfinite(out[i])) {
                snprintf(why, sizeof why, "%g is not a finite number", out[i]);
                bad = 1;
            }
        } else {
            snprintf(why, sizeof why, "must be a str with a unit or a number in %s", kw_unit_name(unit));
            bad = 1;
        }
        if (bad) {
            Py_XDECREF(seq);
            if (bad > 0)
                kwpy_value_error(option, "%s", why);
            return -1;
        }
    }
    Py_XDECREF(seq);
    return (int)n;
}

static int unit_list(PyObject *v, const char *option, kw_unit_kind unit, double out[3])
{
    return unit_list_n(v, option, unit, out, 3);
}

/* rf_centres: the command's --rf-centres ("100us,900us") or a sequence;
 * *out malloc'd (free()). The count, or -1 raised. */
static int rf_centres(PyObject *v, double **out)
{
    Py_ssize_t cap = 1;
    if (PyUnicode_Check(v)) {
        const char *s = PyUnicode_AsUTF8(v);
        for (; s && *s; s++)
            cap += *s == ',';
    } else if (PySequence_Check(v)) {
        cap = PySequence_Size(v);
        if (cap < 0)
            return -1;
    }
    if (cap < 1 || cap > 65536)
        return kwpy_value_error("rf-centres", "one to 65536 values, got %zd", cap), -1;
    *out = malloc((size_t)cap * sizeof **out);
    if (!*out)
        return PyErr_NoMemory(), -1;
    return unit_list_n(v, "rf-centres", KW_UNIT_TIME, *out, (int)cap);
}

/* delay (D[,DY,DZ], one value: every axis), lowpass (TAU[,...], amplitude
 * 1), eddy ("AMP:TAU[,...]"): one response term per axis, as the command's
 * --delay, --lowpass and --eddy. 0 or -1 raised. */
static int imperfections(const wf_kw *a, kw_waveform_options *o)
{
    double v[3];
    int n;
    if (a->delay) {
        if ((n = unit_list(a->delay, "delay", KW_UNIT_TIME, v)) < 0)
            return -1;
        for (int k = 0; k < 3; k++)
            o->delay_s[k] = n == 1 ? v[0] : k < n ? v[k] : 0;
    }
    if (a->lowpass) {
        if ((n = unit_list(a->lowpass, "lowpass", KW_UNIT_TIME, v)) < 0)
            return -1;
        for (int k = 0; k < 3; k++) {
            o->response_tau_s[k] = n == 1 ? v[0] : k < n ? v[k] : 0;
            o->response_amp[k] = o->response_tau_s[k] > 0 ? 1.0 : 0.0;
        }
    }
    if (!a->eddy)
        return 0;
    if (a->lowpass)
        return kwpy_value_error("eddy", "one response term per axis in this version: lowpass or eddy"), -1;
    char buf[256], why[160];
    if (strlen(a->eddy) >= sizeof buf)
        return kwpy_value_error("eddy", "too long"), -1;
    strcpy(buf, a->eddy);
    int k = 0;
    for (char *save = NULL, *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save), k++) {
        char *c = strchr(tok, ':'), *end;
        if (k >= 3 || !c)
            return kwpy_value_error("eddy", "'%s': expected AMP:TAU[,AMP:TAU,...] (e.g. 0.02:50us), one per axis",
                                    a->eddy), -1;
        *c = '\0';
        double amp = strtod(tok, &end);
        if (!*tok || *end || !(amp >= 0 && amp <= 1))
            return kwpy_value_error("eddy", "amplitude '%s': a number in [0, 1]", tok), -1;
        if (kw_unit_parse(c + 1, KW_UNIT_TIME, &o->response_tau_s[k], why, sizeof why))
            return kwpy_value_error("eddy", "time constant '%s': %s", c + 1, why), -1;
        o->response_amp[k] = amp;
    }
    for (int j = k; k == 1 && j < 3; j++) { /* one term: every axis */
        o->response_amp[j] = o->response_amp[0];
        o->response_tau_s[j] = o->response_tau_s[0];
    }
    return 0;
}

/* A dict (or list) as JSON text (json.dumps); a str passes as it is. New
 * reference to a str, or NULL raised. */
static PyObject *json_text(PyObject *v)
{
    if (PyUnicode_Check(v))
        return Py_NewRef(v);
    PyObject *json = PyImport_ImportModule("json");
    PyObject *s = json ? PyObject_CallMethod(json, "dumps", "O", v) : NULL;
    Py_XDECREF(json);
    return s;
}

/* The timing keys of `sidecar` (a dict as the sidecar file's JSON, or its
 * text) that the keywords did not give, as the command reads G.json. The
 * ADC windows into *adc (kw_alloc'd). 0 or -1 raised. */
static int read_sidecar(wf_kw *a, int *held, kw_waveform_adc **adc, size_t *nadc)
{
    PyObject *s = json_text(a->sidecar);
    const char *text = s ? PyUnicode_AsUTF8(s) : NULL;
    if (!text) {
        Py_XDECREF(s);
        if (PyErr_ExceptionMatches(PyExc_TypeError) || PyErr_ExceptionMatches(PyExc_ValueError)) {
            PyErr_Clear();
            kwpy_value_error("sidecar", "must be a dict of the timing keys (or its JSON text)");
        }
        return -1;
    }
    kw_waveform_timing t;
    kw_status st = kw_waveform_timing_parse(text, a->s_raster ? a->raster : 0, &t);
    Py_DECREF(s);
    if (st)
        return kwpy_raise(st, "sidecar"), -1;
    const double v[4] = {t.raster_s, t.rf_centre_s, t.te_s, t.tr_s};
    double *dst[4] = {&a->raster, &a->rf, &a->te, &a->tr};
    int *seen[4] = {&a->s_raster, &a->s_rf, &a->s_te, &a->s_tr};
    for (int k = 0; k < 4; k++)
        if (!isnan(v[k]) && !*seen[k]) {
            *dst[k] = v[k];
            *seen[k] = 1;
        }
    if (t.held >= 0 && !a->s_held)
        *held = t.held;
    if (t.adc && !a->adc) {
        *adc = t.adc;
        *nadc = t.nadc;
    } else {
        kw_free(t.adc);
    }
    return 0;
}

/* adc: the command's --adc text ("START:SAMPLES:DWELL[,...]",
 * kw_waveform_adc_parse()) or a list of windows as the sidecar's ({start_s
 * or start_sample, samples, dwell_s}). 0 or -1 raised. */
static int parse_adc(const wf_kw *a, double raster, kw_waveform_adc **adc, size_t *nadc)
{
    kw_waveform_adc *w = NULL;
    size_t n = 0;
    kw_status st;
    if (PyUnicode_Check(a->adc)) {
        const char *text = PyUnicode_AsUTF8(a->adc);
        if (!text)
            return -1;
        st = kw_waveform_adc_parse(text, raster, &w, &n);
    } else {
        if (!PyList_Check(a->adc) && !PyTuple_Check(a->adc))
            return kwpy_value_error("adc", "a str START:SAMPLES:DWELL[,...] or a list of windows "
                                           "{start_s or start_sample, samples, dwell_s}"), -1;
        PyObject *d = Py_BuildValue("{s:O}", "adc", a->adc);
        PyObject *s = d ? json_text(d) : NULL;
        Py_XDECREF(d);
        const char *text = s ? PyUnicode_AsUTF8(s) : NULL;
        if (!text) {
            Py_XDECREF(s);
            return -1;
        }
        kw_waveform_timing t;
        st = kw_waveform_timing_parse(text, a->s_raster ? a->raster : 0, &t);
        Py_DECREF(s);
        if (!st && !t.adc) {
            kw_free(t.adc);
            return kwpy_value_error("adc", "no windows"), -1;
        }
        w = st ? NULL : t.adc;
        n = st ? 0 : t.nadc;
    }
    if (st)
        return raise_lib(st, "adc"), -1;
    kw_free(*adc);
    *adc = w;
    *nadc = n;
    return 0;
}

/* g as the command reads its file: real numbers through float32, (samples,)
 * or (samples, axes), 1 to 3 axes; the command's messages. A new double
 * copy (kw_alloc'd) or NULL raised. */
static double *read_g(PyObject *obj, size_t *n, int *axes)
{
    if (!obj)
        return PyErr_SetString(PyExc_TypeError, "waveform() missing required argument 'g' (pos 1)"), NULL;
    PyArrayObject *a = kwpy_array_in(obj, KWPY_F32, "g", 0, NPY_MAXDIMS);
    if (!a)
        return NULL;
    int nd = PyArray_NDIM(a);
    if (nd != 1 && nd != 2) {
        Py_DECREF(a);
        return kwpy_value_error("g", "expected (samples, axes) or (samples,), got %d dimensions", nd), NULL;
    }
    if (nd == 2 && (PyArray_DIM(a, 1) < 1 || PyArray_DIM(a, 1) > 3)) {
        kwpy_value_error("g", "%zu axes; 1 to 3 (x, y, z) in the last dimension", (size_t)PyArray_DIM(a, 1));
        Py_DECREF(a);
        return NULL;
    }
    *n = (size_t)PyArray_DIM(a, 0);
    *axes = nd == 2 ? (int)PyArray_DIM(a, 1) : 1;
    size_t cnt = *n * (size_t)*axes;
    double *g = kw_alloc_n(cnt ? cnt : 1, sizeof *g);
    if (!g) {
        Py_DECREF(a);
        return (double *)PyErr_NoMemory();
    }
    const float *src = PyArray_DATA(a);
    for (size_t i = 0; i < cnt; i++)
        g[i] = src[i];
    Py_DECREF(a);
    return g;
}

/* ---- the delay estimate ------------------------------------------------------------------ */

/* estimate_delay: radial k-space (coils, samples) or (samples,), complex,
 * taken with the ADC windows as spokes (window s opposed to s + windows/2),
 * as the command's --estimate-delay file; the gradient delay by
 * kw_waveform_estimate_delay() (Peters et al. 2003). 0 or -1 raised. */
static int estimate_delay(PyObject *obj, const kw_waveform *w, const kw_waveform_options *o, double *est,
                          char *why, size_t cap)
{
    int same = o->nadc >= 2 && o->nadc % 2 == 0;
    for (size_t i = 1; same && i < o->nadc; i++)
        same = o->adc[i].samples == o->adc[0].samples && o->adc[i].dwell_s == o->adc[0].dwell_s;
    if (!same)
        return kwpy_value_error("estimate-delay", "needs an even number of ADC windows (spokes) of equal samples and "
                                "dwell, window s opposed to window s + windows/2"), -1;
    const size_t total = o->nadc * o->adc[0].samples;
    PyArrayObject *ks = NULL;
    PyObject *src = PyArray_FROM_O(obj);
    if (!src)
        PyErr_Clear();
    if (src && PyArray_ISCOMPLEX((PyArrayObject *)src))
        ks = kwpy_array_in(src, KWPY_C64, "estimate-delay", 0, NPY_MAXDIMS);
    Py_XDECREF(src);
    if (!ks && PyErr_Occurred())
        return -1;
    int nd = ks ? PyArray_NDIM(ks) : 0;
    if (!ks || (nd != 1 && nd != 2) || (size_t)PyArray_DIM(ks, nd - 1) != total) {
        Py_XDECREF(ks);
        return kwpy_value_error("estimate-delay", "expected complex k-space (coils, %zu) of the ADC windows' samples",
                                total), -1;
    }
    kw_status st, sa = KW_OK;
    const kw_cfloat *data = PyArray_DATA(ks);
    const size_t coils = nd == 2 ? (size_t)PyArray_DIM(ks, 0) : 1;
    const int axes = kw_waveform_summary_of(w)->axes;
    double *dir = kw_alloc_n(o->nadc * (size_t)axes, sizeof *dir);
    Py_BEGIN_ALLOW_THREADS
    st = kw_waveform_estimate_delay(data, coils, o->nadc, o->adc[0].samples, o->adc[0].dwell_s, est);
    /* per axis, as the command: NaN and the reason when the spokes'
     * directions cannot tell the axes apart */
    if (!st) {
        sa = dir ? kw_waveform_adc_directions(w, dir) : KW_ENOMEM;
        if (!sa)
            sa = kw_waveform_estimate_delay_axes(data, coils, o->nadc, o->adc[0].samples, o->adc[0].dwell_s, dir,
                                                 axes, est + 1);
        if (sa) {
            snprintf(why, cap, "%s", kw_last_error());
            for (int a = 0; a < axes; a++)
                est[1 + a] = NAN;
        }
    }
    Py_END_ALLOW_THREADS
    kw_free(dir);
    Py_DECREF(ks);
    if (st) { /* data, spokes, n: the file's */
        const char *reason = kw_last_error_reason();
        kw_set_error_param(st, "estimate-delay", "%s", reason && *reason ? reason : kw_strerror(st));
        return kwpy_raise(st, NULL), -1;
    }
    return 0;
}

/* ---- results --------------------------------------------------------------------------- */

static int put(PyObject *d, const char *key, PyObject *v)
{
    if (!v)
        return -1;
    int rc = PyDict_SetItemString(d, key, v);
    Py_DECREF(v);
    return rc;
}

/* The trajectory (actual 0: nominal, 1: the actual gradient's) as the
 * command's file: (adc_samples, max(2, axes)) float32 cycles/FOV (a 1-axis
 * waveform gets ky = 0), and the times (adc_samples,) float32, under
 * `key` and "times" (the nominal one only). None without ADC windows. */
static int put_trajectory(PyObject *d, const kw_waveform *w, int actual, const char *key)
{
    const kw_waveform_summary *s = kw_waveform_summary_of(w);
    const size_t ns = s->adc_samples, na = (size_t)s->axes, nc = na < 2 ? 2 : na;
    if (!ns)
        return put(d, key, Py_NewRef(Py_None)) < 0 || (!actual && put(d, "times", Py_NewRef(Py_None)) < 0)
                   ? -1 : 0;
    size_t kd[2] = {ns, nc};
    PyArrayObject *k = kwpy_array_new(KWPY_F32, 2, kd), *t = kwpy_array_new(KWPY_F32, 1, &ns);
    float *tmp = kw_alloc_n(ns * na, sizeof *tmp);
    if (!k || !t || !tmp) {
        Py_XDECREF(k);
        Py_XDECREF(t);
        kw_free(tmp);
        return PyErr_Occurred() ? -1 : (PyErr_NoMemory(), -1);
    }
    float *kt = PyArray_DATA(k), *tt = PyArray_DATA(t);
    kw_status st = actual ? kw_waveform_trajectory_actual(w, tmp, tt) : kw_waveform_trajectory(w, tmp, tt);
    for (size_t i = 0; !st && i < ns; i++)
        for (size_t c = 0; c < na; c++)
            kt[i * nc + c] = tmp[i * na + c];
    kw_free(tmp);
    if (st) {
        Py_DECREF(k);
        Py_DECREF(t);
        return raise_lib(st, actual ? "trajectory_actual" : "trajectory"), -1;
    }
    if (put(d, key, (PyObject *)k) < 0) {
        Py_DECREF(t);
        return -1;
    }
    if (actual) {
        Py_DECREF(t);
        return 0;
    }
    return put(d, "times", (PyObject *)t);
}

/* The actual gradient at the sample times, (samples, axes) float64 T/m. */
static int put_actual_gradient(PyObject *d, const kw_waveform *w)
{
    const kw_waveform_summary *s = kw_waveform_summary_of(w);
    npy_intp dims[2] = {(npy_intp)s->samples, (npy_intp)s->axes};
    PyArrayObject *a = (PyArrayObject *)PyArray_ZEROS(2, dims, NPY_FLOAT64, 0);
    if (!a)
        return -1;
    kw_status st = kw_waveform_actual(w, PyArray_DATA(a));
    if (st) {
        Py_DECREF(a);
        return raise_lib(st, "actual_gradient"), -1;
    }
    return put(d, "actual_gradient", (PyObject *)a);
}

/* The report (with the delay estimate when est is not NaN, as the
 * command's JSON), the trajectories and the actual gradient. */
static PyObject *result(const kw_waveform *w, int with_estimate, const double *est, const char *why)
{
    char *json = NULL;
    kw_status st = kw_waveform_report_json(w, &json);
    if (st)
        return raise_lib(st, "json");
    PyObject *d = kwpy_json_dict(json);
    if (!d)
        return NULL;
    int rc = 0;
    if (with_estimate) {
        PyObject *e = Py_BuildValue("{s:O,s:s}", "delay_s", Py_None, "method",
                                    "shift between opposed spokes' echoes (Peters et al. 2003), one delay "
                                    "for every axis");
        if (e && isfinite(est[0]) && put(e, "delay_s", PyFloat_FromDouble(est[0])) < 0)
            Py_CLEAR(e);
        const int axes = kw_waveform_summary_of(w)->axes;
        PyObject *pa = e ? PyList_New(axes) : NULL;
        for (int a = 0; pa && a < axes; a++) {
            PyObject *v = isnan(est[1 + a]) ? (Py_INCREF(Py_None), Py_None) : PyFloat_FromDouble(est[1 + a]);
            if (!v)
                Py_CLEAR(pa);
            else
                PyList_SET_ITEM(pa, a, v);
        }
        if (!pa || put(e, "per_axis_delay_s", pa) < 0 ||
            put(e, "per_axis_method", PyUnicode_FromString(*why ? why : "least squares of each pair's echo shift "
                "against sum over axes of delay x direction^2 (dx cos^2 + dy sin^2 in a plane)")) < 0)
            Py_CLEAR(e);
        rc = put(d, "delay_estimate", e);
    }
    if (!rc)
        rc = put_trajectory(d, w, 0, "trajectory");
    if (!rc && kw_waveform_has_imperfection(w))
        rc = put_trajectory(d, w, 1, "trajectory_actual") < 0 || put_actual_gradient(d, w) < 0 ? -1 : 0;
    if (rc < 0) {
        Py_DECREF(d);
        return NULL;
    }
    return d;
}

/* girf: the command's --girf table as an array, complex (frequencies,
 * 1 + axes), column 0 the frequency in Hz, then H per axis; split by the
 * library (kw_waveform_girf_split()) into *f and *h (kw_alloc'd). 0 or -1
 * raised with the command's messages. */
static int read_girf(PyObject *obj, int axes, double **f, kw_cdouble **h, size_t *nf, int *cross)
{
    PyArrayObject *t = NULL;
    PyObject *src = PyArray_FROM_O(obj);
    if (!src)
        PyErr_Clear();
    if (src && PyArray_ISCOMPLEX((PyArrayObject *)src))
        t = kwpy_array_in(src, KWPY_C64, "girf", 0, NPY_MAXDIMS);
    Py_XDECREF(src);
    if (!t && PyErr_Occurred())
        return -1;
    const size_t nd = (size_t)axes + 1, nx = (size_t)(axes * axes) + 1; /* per axis, or cross-axis terms */
    *cross = t && axes > 1 && PyArray_NDIM(t) == 2 && (size_t)PyArray_DIM(t, 1) == nx;
    if (!t || PyArray_NDIM(t) != 2 || ((size_t)PyArray_DIM(t, 1) != nd && !*cross)) {
        Py_XDECREF(t);
        return kwpy_value_error("girf", "expected complex (frequencies, %zu): the frequency in Hz, then H of each of "
                                "the waveform's %d axes (or (frequencies, %zu) with the cross-axis terms)", nd, axes,
                                nx), -1;
    }
    *nf = (size_t)PyArray_DIM(t, 0);
    kw_status st = kw_waveform_girf_split(PyArray_DATA(t), *nf, *cross ? axes * axes : axes, f, h);
    Py_DECREF(t);
    if (st)
        return raise_lib(st, "girf"), -1;
    return 0;
}

/* ---- the call ------------------------------------------------------------------------------ */

static PyObject *py_waveform(PyObject *self, PyObject *args, PyObject *kwargs)
{
    (void)self;
    wf_kw a = {0};
    kw_waveform_options o;
    kw_waveform_options_init(&o);
    double gmax = o.gmax, slew = o.slew, radius = o.pns_radius_m;
    int limit_vector = 0, held = 0;
    const kwpy_kw table[] = {
        {"g", KWPY_OBJ, &a.g, KW_UNIT_NONE, NULL},
        {"sidecar", KWPY_OBJ, &a.sidecar, KW_UNIT_NONE, NULL},
        {"raster", KWPY_UNIT, &a.raster, KW_UNIT_TIME, &a.s_raster},
        {"rf-centre", KWPY_UNIT, &a.rf, KW_UNIT_TIME, &a.s_rf},
        {"te", KWPY_UNIT, &a.te, KW_UNIT_TIME, &a.s_te},
        {"tr", KWPY_UNIT, &a.tr, KW_UNIT_TIME, &a.s_tr},
        {"adc", KWPY_OBJ, &a.adc, KW_UNIT_NONE, NULL},
        {"gmax", KWPY_UNIT, &gmax, KW_UNIT_GRADIENT, NULL},
        {"slew", KWPY_UNIT, &slew, KW_UNIT_SLEW, NULL},
        {"limit-vector", KWPY_BOOL, &limit_vector, KW_UNIT_NONE, NULL},
        {"held", KWPY_BOOL, &held, KW_UNIT_NONE, &a.s_held},
        {"fov", KWPY_OBJ, &a.fov, KW_UNIT_NONE, NULL},
        {"pns-radius", KWPY_UNIT, &radius, KW_UNIT_LENGTH, NULL},
        {"delay", KWPY_OBJ, &a.delay, KW_UNIT_NONE, NULL},
        {"lowpass", KWPY_OBJ, &a.lowpass, KW_UNIT_NONE, NULL},
        {"eddy", KWPY_STR, &a.eddy, KW_UNIT_NONE, NULL},
        {"estimate-delay", KWPY_OBJ, &a.estimate, KW_UNIT_NONE, NULL},
        {"girf", KWPY_OBJ, &a.girf, KW_UNIT_NONE, NULL},
        {"rf-centres", KWPY_OBJ, &a.rfs, KW_UNIT_NONE, NULL},
        {NULL, 0, NULL, 0, NULL},
    };
    Py_ssize_t npos = PyTuple_GET_SIZE(args);
    if (npos > 1)
        return PyErr_Format(PyExc_TypeError, "waveform() takes one positional argument (g), %zd given", npos);
    if (kwpy_parse_kwargs(kwargs, table, "waveform") < 0)
        return NULL;
    if (npos == 1) {
        if (a.g)
            return PyErr_Format(PyExc_TypeError, "waveform() got multiple values for 'g'");
        a.g = PyTuple_GET_ITEM(args, 0);
    }
    /* the command's order: the sidecar, --adc, --fov, the imperfections, --in */
    kw_waveform_adc *adc = NULL;
    size_t nadc = 0;
    double *g = NULL;
    size_t n = 0;
    int axes = 0;
    kw_waveform *w = NULL;
    PyObject *d = NULL;
    double *gf = NULL, *rfv = NULL;
    kw_cdouble *gh = NULL;
    int nrf = 0;
    if (a.rfs && a.rfs != Py_None && (nrf = rf_centres(a.rfs, &rfv)) < 0)
        goto done;
    o.nrf = (size_t)nrf;
    o.rf_centres_s = rfv;
    if (a.sidecar && read_sidecar(&a, &held, &adc, &nadc) < 0)
        goto done;
    if (a.adc && parse_adc(&a, a.s_raster ? a.raster : o.raster_s, &adc, &nadc) < 0)
        goto done;
    double fov[3];
    int nf = 0;
    if (a.fov && (nf = unit_list(a.fov, "fov", KW_UNIT_LENGTH, fov)) < 0)
        goto done;
    for (int k = 0; k < 3 && nf > 0; k++)
        o.fov_m[k] = fov[k < nf ? k : nf - 1];
    if (imperfections(&a, &o) < 0 || !(g = read_g(a.g, &n, &axes)))
        goto done;
    if (a.girf && a.girf != Py_None) {
        if (read_girf(a.girf, axes, &gf, &gh, &o.girf_nfreq, &o.girf_cross) < 0)
            goto done;
        o.girf_freq_hz = gf;
        o.girf = gh;
        o.girf_axes = axes;
    }
    if (a.s_raster)
        o.raster_s = a.raster;
    o.rf_centre_s = a.s_rf ? a.rf : nrf ? rfv[0] : NAN;
    o.te_s = a.s_te ? a.te : NAN;
    o.tr_s = a.s_tr ? a.tr : 0;
    o.gmax = gmax;
    o.slew = slew;
    o.limit_vector = limit_vector;
    o.held = held;
    o.pns_radius_m = radius;
    o.adc = adc;
    o.nadc = nadc;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_waveform_create(&w, g, n, axes, &o);
    Py_END_ALLOW_THREADS
    double est[4] = {NAN, NAN, NAN, NAN};
    char why[256] = "";
    if (st)
        raise_lib(st, "waveform");
    else if (!a.estimate || estimate_delay(a.estimate, w, &o, est, why, sizeof why) == 0)
        d = result(w, a.estimate != NULL, est, why);
done:
    kw_waveform_destroy(w);
    kw_free(g);
    kw_free(adc);
    kw_free(gf);
    kw_free(gh);
    free(rfv);
    return d;
}

static PyMethodDef waveform_methods[] = {
    {"waveform", (PyCFunction)(void (*)(void))py_waveform, METH_VARARGS | METH_KEYWORDS,
     "waveform(g, **options) -> dict: the report of `kweave waveform --json` for\n"
     "the gradient waveform g ((samples, axes) or (samples,) in T/m, axes x, y, z;\n"
     "read through float32 as the command reads its file): peaks, violations,\n"
     "RMS and duty, moments at the ADC centres and TE, the nerve-stimulation\n"
     "ESTIMATE, safety_caution; with \"trajectory\" (float32 (adc samples,\n"
     "max(2, axes)) cycles/FOV, as --trajectory writes) and \"times\" (s after\n"
     "the RF centre), None without ADC windows; with a delay, lowpass, eddy or girf\n"
     "term also \"trajectory_actual\" and \"actual_gradient\" (float64 T/m).\n"
     "Keywords as the command's options: raster (10us), rf_centre (required),\n"
     "te, tr, adc (\"START:SAMPLES:DWELL[,...]\" or a list of windows as the\n"
     "sidecar's), gmax (40mT/m), slew (150T/m/s), limit_vector, held, fov\n"
     "(256mm; up to 3), pns_radius (0.2m), delay, lowpass, eddy (\"AMP:TAU\");\n"
     "sidecar: a dict of the sidecar file's timing keys, the keywords override\n"
     "it. estimate_delay: radial k-space (coils, samples), complex, taken with\n"
     "the ADC windows as spokes: \"delay_estimate\" as the command's\n"
     "--estimate-delay. girf: the command's --girf table as an array, complex\n"
     "(frequencies, 1 + axes): column 0 the frequency in Hz, then H(f) per axis\n"
     "(Vannesjo et al. 2013). rf_centres: several excitations' RF centres as the\n"
     "command's --rf-centres (\"100us,900us\" or a list): moments and k restart at each.\n"
     "See docs/waveform.md."},
    {NULL, NULL, 0, NULL}};

int kwpy_add_waveform(PyObject *m) { return kwpy_add_functions(m, waveform_methods); }
