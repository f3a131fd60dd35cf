/* _module.c: the kweave extension module: errors, arrays, keyword tables,
 * JSON text as dicts; the parts (_nufft.c, _score.c, _recon.c, _acquire.c,
 * _pattern.c, _plan.c, _preview.c, _waveform.c) add their calls. */
#define KWPY_MODULE_MAIN
#include "kwpy.h"

#include <stdarg.h>
#include <stdlib.h>
#include <stdio.h>
#include <string.h>

#include <fftw3.h>
#include <pythread.h>

#include "kw_fft.h"

PyObject *kwpy_Error;
PyObject *kwpy_InputError;

/* ---- errors ------------------------------------------------------------------ */

static PyObject *error_class(kw_status st)
{
    switch (st) {
    case KW_EINVAL:
    case KW_EFORMAT:
    case KW_ERANGE:
    case KW_EINFEASIBLE:
    case KW_ENUMERIC:
    case KW_ENOTSUP:
        return kwpy_InputError;
    case KW_ENOMEM:
        return PyExc_MemoryError;
    case KW_ECANCELLED:
        return PyExc_KeyboardInterrupt;
    default:
        return kwpy_Error;
    }
}

/* Raise cls(text) with .param (NULL: None) and .status; NULL. Takes `text`. */
static PyObject *raise_text(PyObject *cls, PyObject *text, const char *param, kw_status st)
{
    if (!text)
        return NULL;
    PyObject *exc = PyObject_CallOneArg(cls, text);
    Py_DECREF(text);
    if (!exc)
        return NULL;
    if (cls == kwpy_InputError || cls == kwpy_Error) {
        PyObject *p = param && *param ? PyUnicode_FromString(param) : Py_NewRef(Py_None);
        PyObject *s = PyUnicode_FromString(kw_strerror(st));
        int bad = !p || !s || PyObject_SetAttrString(exc, "param", p) < 0 ||
                  PyObject_SetAttrString(exc, "status", s) < 0;
        Py_XDECREF(p);
        Py_XDECREF(s);
        if (bad) {
            Py_DECREF(exc);
            return NULL;
        }
    }
    PyErr_SetObject(cls, exc);
    Py_DECREF(exc);
    return NULL;
}

PyObject *kwpy_raise(kw_status st, const char *context)
{
    const char *msg = kw_last_error();
    if (!msg || !*msg)
        msg = kw_strerror(st);
    PyObject *text = context ? PyUnicode_FromFormat("%s: %s", context, msg)
                             : PyUnicode_FromString(msg);
    return raise_text(error_class(st), text, kw_last_error_param(), st);
}

PyObject *kwpy_option_error(kw_status st, const char *option)
{
    const char *why = kw_last_error_reason();
    PyObject *text = PyUnicode_FromFormat("%s: %s", option, why && *why ? why : kw_strerror(st));
    return raise_text(kwpy_InputError, text, option, st);
}

PyObject *kwpy_value_error(const char *field, const char *fmt, ...)
{
    char why[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(why, sizeof why, fmt, ap);
    va_end(ap);
    return raise_text(kwpy_InputError, PyUnicode_FromFormat("%s: %s", field, why), field,
                      KW_EINVAL);
}

/* ---- arrays -------------------------------------------------------------------- */

static int elem_typenum(kwpy_elem e)
{
    return e == KWPY_C64 ? NPY_COMPLEX64 : e == KWPY_F32 ? NPY_FLOAT32 : NPY_UINT8;
}

PyArrayObject *kwpy_array_in(PyObject *obj, kwpy_elem elem, const char *name, int min_ndim,
                             int max_ndim)
{
    if (!obj || obj == Py_None)
        return (PyArrayObject *)kwpy_value_error(name, "missing (an array is needed)");
    PyArrayObject *src = (PyArrayObject *)PyArray_FROM_O(obj);
    if (!src) {
        PyErr_Clear();
        return (PyArrayObject *)kwpy_value_error(name, "is not an array of numbers");
    }
    char kind = PyArray_DESCR(src)->kind;
    int nd = PyArray_NDIM(src);
    if (kind == 'c' && elem != KWPY_C64) {
        Py_DECREF(src);
        return (PyArrayObject *)kwpy_value_error(
            name, "complex values where real ones are expected (pass .real or abs())");
    }
    if (kind != 'b' && kind != 'i' && kind != 'u' && kind != 'f' && kind != 'c') {
        PyObject *r = PyObject_Repr((PyObject *)PyArray_DESCR(src));
        const char *d = r ? PyUnicode_AsUTF8(r) : NULL;
        kwpy_value_error(name, "%s is not a numeric dtype", d ? d : "the dtype");
        Py_XDECREF(r);
        Py_DECREF(src);
        return NULL;
    }
    if (nd < min_ndim || nd > max_ndim) {
        Py_DECREF(src);
        if (min_ndim == max_ndim)
            return (PyArrayObject *)kwpy_value_error(name, "has %d axes; %d expected", nd,
                                                     min_ndim);
        return (PyArrayObject *)kwpy_value_error(name, "has %d axes; %d to %d expected", nd,
                                                 min_ndim, max_ndim);
    }
    PyArray_Descr *want = PyArray_DescrFromType(elem_typenum(elem));
    PyArrayObject *out = (PyArrayObject *)PyArray_FromAny(
        (PyObject *)src, want, 0, 0, NPY_ARRAY_IN_ARRAY | NPY_ARRAY_FORCECAST, NULL);
    Py_DECREF(src);
    return out;
}

PyArrayObject *kwpy_array_new(kwpy_elem elem, int ndim, const size_t *dims)
{
    npy_intp d[8];
    for (int i = 0; i < ndim && i < 8; i++)
        d[i] = (npy_intp)dims[i];
    return (PyArrayObject *)PyArray_ZEROS(ndim, d, elem_typenum(elem), 0);
}

void kwpy_dims(PyArrayObject *a, size_t *dims)
{
    for (int i = 0; i < PyArray_NDIM(a) && i < 8; i++)
        dims[i] = (size_t)PyArray_DIM(a, i);
}

/* ---- keyword tables ------------------------------------------------------------ */

/* "rf_duration" -> "rf-duration"; a trailing '_' dropped ("lambda_"). */
static void option_name(const char *py, char *buf, size_t n)
{
    size_t i = 0;
    for (; py[i] && i + 1 < n; i++)
        buf[i] = py[i] == '_' ? '-' : py[i];
    buf[i] = '\0';
    if (i > 1 && buf[i - 1] == '-')
        buf[i - 1] = '\0';
}

static size_t edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > 63 || lb > 63)
        return 99;
    size_t row[64];
    for (size_t j = 0; j <= lb; j++)
        row[j] = j;
    for (size_t i = 1; i <= la; i++) {
        size_t prev = row[0];
        row[0] = i;
        for (size_t j = 1; j <= lb; j++) {
            size_t cur = row[j];
            size_t best = prev + (a[i - 1] != b[j - 1]);
            if (row[j] + 1 < best)
                best = row[j] + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            row[j] = best;
            prev = cur;
        }
    }
    return row[lb];
}

static int unknown_keyword(const char *call, const char *key, const kwpy_kw *table)
{
    char opt[64];
    option_name(key, opt, sizeof opt);
    const char *best = NULL;
    size_t bd = 3;
    for (const kwpy_kw *k = table; k->name; k++) {
        size_t d = edit_distance(opt, k->name);
        if (d < bd) {
            bd = d;
            best = k->name;
        }
    }
    if (best) {
        char py[64];
        size_t i = 0;
        for (; best[i] && i + 1 < sizeof py; i++)
            py[i] = best[i] == '-' ? '_' : best[i];
        py[i] = '\0';
        PyErr_Format(PyExc_TypeError, "%s() got an unexpected keyword argument '%s' (did you mean '%s'?)",
                     call, key, py);
    } else {
        PyErr_Format(PyExc_TypeError, "%s() got an unexpected keyword argument '%s'", call, key);
    }
    return -1;
}

static int set_one(const kwpy_kw *k, PyObject *v)
{
    switch (k->kind) {
    case KWPY_STR:
        if (!PyUnicode_Check(v)) {
            kwpy_value_error(k->name, "must be a str");
            return -1;
        }
        *(const char **)k->dest = PyUnicode_AsUTF8(v);
        return *(const char **)k->dest ? 0 : -1;
    case KWPY_INT: {
        if (PyBool_Check(v) || !PyIndex_Check(v)) {
            kwpy_value_error(k->name, "must be a whole number");
            return -1;
        }
        PyObject *i = PyNumber_Index(v);
        if (!i)
            return -1;
        int overflow = 0;
        long x = PyLong_AsLongAndOverflow(i, &overflow);
        Py_DECREF(i);
        if (overflow) {
            kwpy_value_error(k->name, "is too large");
            return -1;
        }
        if (x == -1 && PyErr_Occurred())
            return -1;
        *(long *)k->dest = x;
        return 0;
    }
    case KWPY_UNIT:
        if (PyUnicode_Check(v)) {
            const char *s = PyUnicode_AsUTF8(v);
            if (!s)
                return -1;
            char why[200];
            double si;
            if (kw_unit_parse(s, k->unit, &si, why, sizeof why)) {
                kwpy_value_error(k->name, "%s", why);
                return -1;
            }
            *(double *)k->dest = si;
            return 0;
        }
        /* a number in SI */
        /* fall through */
    case KWPY_FLOAT: {
        if (PyBool_Check(v) || PyUnicode_Check(v) || !PyNumber_Check(v)) {
            kwpy_value_error(k->name, k->kind == KWPY_UNIT ? "must be a str with a unit or a number in %s"
                                                            : "must be a number%s",
                             k->kind == KWPY_UNIT ? kw_unit_name(k->unit) : "");
            return -1;
        }
        double x = PyFloat_AsDouble(v);
        if (x == -1.0 && PyErr_Occurred())
            return -1;
        *(double *)k->dest = x;
        return 0;
    }
    case KWPY_BOOL: {
        int t = PyObject_IsTrue(v);
        if (t < 0)
            return -1;
        *(int *)k->dest = t;
        return 0;
    }
    case KWPY_OBJ:
        *(PyObject **)k->dest = v;
        return 0;
    }
    return 0;
}

int kwpy_parse_kwargs(PyObject *kwargs, const kwpy_kw *table, const char *call)
{
    if (!kwargs)
        return 0;
    PyObject *key, *value;
    Py_ssize_t pos = 0;
    while (PyDict_Next(kwargs, &pos, &key, &value)) {
        const char *ks = PyUnicode_AsUTF8(key);
        if (!ks)
            return -1;
        char opt[64];
        option_name(ks, opt, sizeof opt);
        const kwpy_kw *k = table;
        while (k->name && strcmp(k->name, opt) != 0)
            k++;
        if (!k->name)
            return unknown_keyword(call, ks, table);
        if (value == Py_None)
            continue;
        if (set_one(k, value) < 0)
            return -1;
        if (k->seen)
            *k->seen = 1;
    }
    return 0;
}

static int one_text(PyObject *obj, const char *name, char *buf, size_t n)
{
    int w;
    if (PyUnicode_Check(obj)) {
        const char *s = PyUnicode_AsUTF8(obj);
        if (!s)
            return -1;
        w = snprintf(buf, n, "%s", s);
    } else if (PyBool_Check(obj)) {
        w = snprintf(buf, n, "%d", obj == Py_True);
    } else if (PyIndex_Check(obj)) {
        PyObject *s = PyObject_Str(obj);
        const char *t = s ? PyUnicode_AsUTF8(s) : NULL;
        w = t ? snprintf(buf, n, "%s", t) : -1;
        Py_XDECREF(s);
        if (w < 0)
            return -1;
    } else if (PyNumber_Check(obj)) {
        double x = PyFloat_AsDouble(obj);
        if (x == -1.0 && PyErr_Occurred())
            return -1;
        w = snprintf(buf, n, "%.17g", x);
    } else {
        kwpy_value_error(name, "must be a str or a number");
        return -1;
    }
    if (w < 0 || (size_t)w >= n) {
        kwpy_value_error(name, "value too long");
        return -1;
    }
    return 0;
}

int kwpy_join_values(PyObject *obj, const char *name, const char *sep,
                     int (*one)(PyObject *, const char *, char *, size_t), char *buf, size_t n)
{
    if (PyUnicode_Check(obj) || !PySequence_Check(obj))
        return one(obj, name, buf, n);
    Py_ssize_t len = PySequence_Length(obj);
    if (len < 0)
        return -1;
    size_t used = 0;
    buf[0] = '\0';
    for (Py_ssize_t i = 0; i < len; i++) {
        PyObject *it = PySequence_GetItem(obj, i);
        if (!it)
            return -1;
        char text[128];
        int rc = one(it, name, text, sizeof text);
        Py_DECREF(it);
        if (rc < 0)
            return -1;
        int w = snprintf(buf + used, n - used, "%s%s", i ? sep : "", text);
        if (w < 0 || (size_t)w >= n - used) {
            kwpy_value_error(name, "value too long");
            return -1;
        }
        used += (size_t)w;
    }
    return 0;
}

int kwpy_str_value(PyObject *obj, const char *name, const char *sep, char *buf, size_t n)
{
    return kwpy_join_values(obj, name, sep, one_text, buf, n);
}

/* One number (or str) of a key's value: the digits of an int, the shortest
 * exact form of a float, with `unit` after a number (NULL: none). */
static int param_one(PyObject *v, const char *unit, const char *name, char *buf, size_t n)
{
    if (PyUnicode_Check(v))
        return one_text(v, name, buf, n);
    if (PyBool_Check(v) || !PyNumber_Check(v)) {
        kwpy_value_error(name, "must be a str or a number");
        return -1;
    }
    char *num;
    if (PyIndex_Check(v)) {
        PyObject *s = PyObject_Str(v);
        const char *t = s ? PyUnicode_AsUTF8(s) : NULL;
        num = t ? PyMem_Malloc(strlen(t) + 1) : NULL;
        if (num)
            strcpy(num, t);
        Py_XDECREF(s);
    } else {
        double x = PyFloat_AsDouble(v);
        if (x == -1.0 && PyErr_Occurred())
            return -1;
        num = PyOS_double_to_string(x, 'r', 0, 0, NULL);
    }
    if (!num)
        return PyErr_Occurred() ? -1 : (PyErr_NoMemory(), -1);
    int w = snprintf(buf, n, "%s%s", num, unit ? unit : "");
    PyMem_Free(num);
    if (w < 0 || (size_t)w >= n) {
        kwpy_value_error(name, "value too long");
        return -1;
    }
    return 0;
}

int kwpy_param_text(PyObject *v, const kw_param_key *k, const char *name, char *buf, size_t n)
{
    const char *unit = NULL;
    char sep = 0;
    switch (k->type) {
    case KW_PARAM_FLAG: {
        int t = PyUnicode_Check(v) ? -2 : PyObject_IsTrue(v);
        if (t == -1)
            return -1;
        if (t == -2)
            return one_text(v, name, buf, n);
        return snprintf(buf, n, "%d", t) < 0 ? -1 : 0;
    }
    case KW_PARAM_NAME:
        if (!PyUnicode_Check(v)) {
            kwpy_value_error(name, "must be a str");
            return -1;
        }
        return one_text(v, name, buf, n);
    case KW_PARAM_WHOLE:
        if (!PyUnicode_Check(v) && (PyBool_Check(v) || !PyIndex_Check(v))) {
            kwpy_value_error(name, "must be a whole number");
            return -1;
        }
        break;
    case KW_PARAM_QUANTITY:
    case KW_PARAM_QUANTITIES: unit = k->unit == KW_UNIT_ANGLE ? "" : kw_unit_name(k->unit); break;
    case KW_PARAM_BANDWIDTH: unit = "Hz"; break;
    default: break;
    }
    sep = k->type == KW_PARAM_SIZES || k->type == KW_PARAM_NUMBERS ? 'x'
          : k->type == KW_PARAM_QUANTITIES                       ? ','
                                                                 : 0;
    if (!sep || PyUnicode_Check(v) || !PySequence_Check(v))
        return param_one(v, unit, name, buf, n);
    Py_ssize_t len = PySequence_Length(v);
    if (len < 0)
        return -1;
    size_t used = 0;
    buf[0] = '\0';
    for (Py_ssize_t i = 0; i < len; i++) {
        PyObject *it = PySequence_GetItem(v, i);
        char one[128];
        int rc = it ? param_one(it, unit, name, one, sizeof one) : -1;
        Py_XDECREF(it);
        if (rc < 0)
            return -1;
        int w = snprintf(buf + used, n - used, "%s%s", i ? (char[]){sep, 0} : "", one);
        if (w < 0 || (size_t)w >= n - used) {
            kwpy_value_error(name, "value too long");
            return -1;
        }
        used += (size_t)w;
    }
    return 0;
}

/* ---- JSON ------------------------------------------------------------------------ */

PyObject *kwpy_json_dict(char *text)
{
    PyObject *json = PyImport_ImportModule("json");
    if (!json) {
        kw_free(text);
        return NULL;
    }
    PyObject *r = PyObject_CallMethod(json, "loads", "s", text);
    Py_DECREF(json);
    kw_free(text);
    return r;
}

PyObject *kwpy_namespace(PyObject *fields)
{
    if (!fields)
        return NULL;
    PyObject *types = PyImport_ImportModule("types");
    PyObject *cls = types ? PyObject_GetAttrString(types, "SimpleNamespace") : NULL;
    Py_XDECREF(types);
    PyObject *empty = cls ? PyTuple_New(0) : NULL;
    PyObject *r = empty ? PyObject_Call(cls, empty, fields) : NULL;
    Py_XDECREF(empty);
    Py_XDECREF(cls);
    Py_DECREF(fields);
    return r;
}

int kwpy_add_functions(PyObject *m, PyMethodDef *defs)
{
    return PyModule_AddFunctions(m, defs);
}

/* ---- the module ------------------------------------------------------------------ */

static PyObject *py_version(PyObject *self, PyObject *noargs)
{
    (void)self;
    (void)noargs;
    return PyUnicode_FromString(kw_version());
}

static PyObject *py_wisdom_export(PyObject *self, PyObject *noargs)
{
    (void)self;
    (void)noargs;
    char *w;
    Py_BEGIN_ALLOW_THREADS
    w = kw_fft_wisdom_export();
    Py_END_ALLOW_THREADS
    if (!w)
        return PyErr_NoMemory();
    PyObject *r = PyUnicode_FromString(w);
    free(w);
    return r;
}

static PyObject *py_wisdom_import(PyObject *self, PyObject *arg)
{
    (void)self;
    const char *s = PyUnicode_Check(arg) ? PyUnicode_AsUTF8(arg) : NULL;
    if (!s)
        return PyErr_Occurred() ? NULL : kwpy_value_error("wisdom", "must be a str");
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_fft_wisdom_import(s);
    Py_END_ALLOW_THREADS
    if (st)
        return kwpy_raise(st, "wisdom");
    Py_RETURN_NONE;
}

static PyObject *py_fft_threads(PyObject *self, PyObject *noargs)
{
    (void)self;
    (void)noargs;
    return PyLong_FromLong(kw_fft_threads());
}

static PyMethodDef module_methods[] = {
    {"version", py_version, METH_NOARGS, "version() -> str: the library's version."},
    {"fft_wisdom_export", py_wisdom_export, METH_NOARGS,
     "fft_wisdom_export() -> str: FFTW's accumulated wisdom (as the command's cache file)."},
    {"fft_wisdom_import", py_wisdom_import, METH_O,
     "fft_wisdom_import(text): merge wisdom made by fft_wisdom_export() or the command's cache\n"
     "(KWEAVE_WISDOM); with the same wisdom the command and the package plan alike."},
    {"fft_threads", py_fft_threads, METH_NOARGS,
     "fft_threads() -> int: the thread count FFT plans are made with (one per core)."},
    {NULL, NULL, 0, NULL}};

static struct PyModuleDef module_def = {
    PyModuleDef_HEAD_INIT, "_kweave",
    "libkweave for numpy: MRI k-space encoding and reconstruction (see docs/python.md).", -1,
    module_methods, NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__kweave(void);

PyMODINIT_FUNC PyInit__kweave(void)
{
    import_array();
    /* As the command: FFTW's threads on, one per core as OpenMP sees them. */
    if (!kw_fft_threads_ready() && kw_fft_setup(0) != KW_OK)
        return kwpy_raise(KW_EINTERNAL, "fft");
    /* The calls run without the GIL, and creates and executes make FFTW
     * plans: FFTW's planner, not thread-safe by itself, takes a lock. */
    fftwf_make_planner_thread_safe();
    PyObject *m = PyModule_Create(&module_def);
    if (!m)
        return NULL;
    kwpy_Error = PyErr_NewExceptionWithDoc(
        "kweave.Error", "A failure reported by libkweave (the message is the library's).",
        PyExc_RuntimeError, NULL);
    PyObject *bases = kwpy_Error ? PyTuple_Pack(2, kwpy_Error, PyExc_ValueError) : NULL;
    kwpy_InputError = bases ? PyErr_NewExceptionWithDoc(
                                  "kweave.InputError",
                                  "Bad input: a parameter or array the library refuses "
                                  "(.param names it).",
                                  bases, NULL)
                            : NULL;
    Py_XDECREF(bases);
    if (!kwpy_InputError || PyModule_AddObjectRef(m, "Error", kwpy_Error) < 0 ||
        PyModule_AddObjectRef(m, "InputError", kwpy_InputError) < 0 ||
        PyModule_AddStringConstant(m, "SAFETY_CAUTION", kw_safety_caution()) < 0 ||
        PyModule_AddStringConstant(m, "__version__", kw_version()) < 0 ||
        kwpy_add_nufft(m) < 0 || kwpy_add_score(m) < 0 || kwpy_add_recon(m) < 0 ||
        kwpy_add_acquire(m) < 0 || kwpy_add_pattern(m) < 0 || kwpy_add_plan(m) < 0 ||
        kwpy_add_preview(m) < 0 || kwpy_add_waveform(m) < 0) {
        Py_DECREF(m);
        return NULL;
    }
    return m;
}
