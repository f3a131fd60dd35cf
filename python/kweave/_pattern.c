/* _pattern.c: kweave.pattern(kind, **options), what `kweave pattern --kind
 * K` makes (libencode/kw_pattern.h), and kweave.analyse(pattern, **options),
 * what `kweave pattern --analyse F --json J` reports
 * (recon/kw_pattern_analysis.h). The options go through the library's
 * kw_pattern_input (its keys, checks and messages, as the command's); the
 * analysis's keywords are those of cli/pattern_read.c; the figures, arrays
 * and sidecar are the library's. */
#include "kwpy.h"

#include <math.h>
#include <stdint.h>
#include <string.h>

#include "kw_pattern.h"
#include "kw_pattern_analysis.h"

/* ---- pattern(): the options ------------------------------------------------------------ */

/* The library's messages as the command's ("not used by --kind radial"):
 * the package's words are the command's here. */
static const kw_param_spelling SPELLING = {"--", '-', " ", NULL};

#define MAX_KEYS 32

/* A failure of kw_pattern_create(): under the key of the field at fault. */
static PyObject *pattern_fail(kw_status st, const char *context)
{
    const char *key = kw_pattern_input_key_of(kw_last_error_param());
    return key ? kwpy_option_error(st, key) : kwpy_raise(st, context);
}

/* The keywords onto the library's input, in the order of its keys (the
 * command's), then its rules into *o. 0 or -1 (raised). */
static int pattern_options(const char *kind, PyObject *const *vals, kw_pattern_options *o)
{
    const kw_param_key *keys = kw_pattern_input_keys();
    kw_pattern_input *in = NULL;
    kw_status st = kw_pattern_input_create(&in);
    if (st)
        return kwpy_raise(st, "pattern"), -1;
    int rc = 0;
    for (int k = 0; keys[k].name && k < MAX_KEYS && !rc; k++) {
        char text[512];
        const char *t = k == 0 ? kind : text;
        if (k > 0 && !vals[k])
            continue;
        if (k > 0 && kwpy_param_text(vals[k], &keys[k], keys[k].name, text, sizeof text) < 0)
            rc = -1;
        else if (t && (st = kw_pattern_input_set(in, keys[k].name, t)))
            rc = (kwpy_raise(st, NULL), -1);
    }
    if (!rc && (st = kw_pattern_input_finish(in, &SPELLING, o)))
        rc = (kwpy_raise(st, NULL), -1);
    kw_pattern_input_destroy(in);
    return rc;
}

/* ---- pattern(): the results -------------------------------------------------------------- */

static int put_array(PyObject *d, const char *key, kwpy_elem e, int ndim, const size_t *dims,
                     const void *src, size_t elem_size)
{
    PyArrayObject *a = kwpy_array_new(e, ndim, dims);
    if (!a)
        return -1;
    size_t n = elem_size;
    for (int i = 0; i < ndim; i++)
        n *= dims[i];
    if (src && n)
        memcpy(PyArray_DATA(a), src, n);
    int rc = PyDict_SetItemString(d, key, (PyObject *)a);
    Py_DECREF(a);
    return rc;
}

static int put_info(PyObject *d, const kw_pattern *p)
{
    char *json = NULL;
    kw_status st = kw_pattern_info_json(p, &json);
    if (st)
        return kwpy_raise(st, "info"), -1;
    PyObject *info = kwpy_json_dict(json);
    if (!info)
        return -1;
    int rc = PyDict_SetItemString(d, "info", info);
    Py_DECREF(info);
    return rc;
}

static PyObject *pattern_result(const kw_pattern *p)
{
    const kw_pattern_info *in = kw_pattern_info_of(p);
    PyObject *d = PyDict_New();
    if (!d)
        return NULL;
    int rc;
    if (in->is_mask) {
        rc = put_array(d, "mask", KWPY_U8, 2, in->shape, kw_pattern_mask(p), 1);
        if (!rc)
            rc = put_array(d, "density", KWPY_F32, 2, in->density_shape, kw_pattern_density(p),
                           sizeof(float));
    } else {
        rc = put_array(d, "trajectory", KWPY_F32, 2, in->shape, kw_pattern_trajectory(p),
                       sizeof(float));
        if (!rc)
            rc = put_array(d, "times", KWPY_F32, 1, in->shape, kw_pattern_times(p),
                           sizeof(float));
    }
    if (!rc)
        rc = put_info(d, p);
    if (rc) {
        Py_DECREF(d);
        return NULL;
    }
    return kwpy_namespace(d);
}

static PyObject *py_pattern(PyObject *self, PyObject *args, PyObject *kwargs)
{
    (void)self;
    const kw_param_key *keys = kw_pattern_input_keys();
    PyObject *vals[MAX_KEYS] = {0};
    kwpy_kw table[MAX_KEYS + 1];
    int n = 0;
    for (; keys[n].name && n < MAX_KEYS; n++)
        table[n] = (kwpy_kw){keys[n].name, KWPY_OBJ, &vals[n], KW_UNIT_NONE, NULL};
    table[n] = (kwpy_kw){NULL, 0, NULL, 0, NULL};
    Py_ssize_t npos = PyTuple_GET_SIZE(args);
    if (npos > 1)
        return PyErr_Format(PyExc_TypeError, "pattern() takes one positional argument (kind), "
                                             "%zd given", npos);
    if (kwpy_parse_kwargs(kwargs, table, "pattern") < 0)
        return NULL;
    PyObject *kobj = vals[0]; /* keys[0] is "kind" */
    if (npos == 1) {
        if (kobj)
            return PyErr_Format(PyExc_TypeError, "pattern() got multiple values for 'kind'");
        kobj = PyTuple_GET_ITEM(args, 0);
    }
    const char *kind = NULL;
    if (kobj) {
        if (!PyUnicode_Check(kobj))
            return kwpy_value_error("kind", "must be a str");
        if (!(kind = PyUnicode_AsUTF8(kobj)))
            return NULL;
    }
    kw_pattern_options o;
    if (pattern_options(kind, vals, &o) < 0)
        return NULL;
    const int grad = o.kind == KW_PATTERN_SPIRAL || o.kind == KW_PATTERN_EPI;
    kw_pattern *p = NULL;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_pattern_create(&p, &o);
    Py_END_ALLOW_THREADS
    if (st)
        return pattern_fail(st, kw_pattern_kind_is_mask(o.kind) ? "pattern"
                                : grad ? kind : "trajectory");
    PyObject *r = pattern_result(p);
    kw_pattern_destroy(p);
    return r;
}

/* ---- analyse(): the input and what its sidecar tells --------------------------------- */

typedef struct an_opts {
    PyObject *info;
    const char *kind, *name;
    long matrix, readout_samples, ros, psf_size;
    int plane;
    int seen_matrix, seen_readout, seen_ros, seen_plane;
} an_opts;

/* info["key"] as text (borrowed, valid while info lives) or NULL */
static const char *info_str(PyObject *info, const char *key)
{
    PyObject *v = info ? PyDict_GetItemString(info, key) : NULL;
    return v && PyUnicode_Check(v) ? PyUnicode_AsUTF8(v) : NULL;
}

/* info["key"] (or info["key"][0] when `first`) as a number: 1, or 0 if absent
 * or not a number */
static int info_num(PyObject *info, const char *key, int first, double *x)
{
    PyObject *v = info ? PyDict_GetItemString(info, key) : NULL;
    if (v && first)
        v = PyList_Check(v) && PyList_GET_SIZE(v) > 0 ? PyList_GET_ITEM(v, 0) : NULL;
    if (!v || PyBool_Check(v) || !(PyFloat_Check(v) || PyLong_Check(v)))
        return 0;
    *x = PyFloat_AsDouble(v);
    if (*x == -1.0 && PyErr_Occurred()) {
        PyErr_Clear();
        return 0;
    }
    return 1;
}

/* The readout oversampling F of a radial-family trajectory (as
 * cli/pattern_read.c): info's "readout_oversampling" (or the keyword) when
 * given, else readout_samples / matrix; checked against the samples. */
static int radial_oversampling(const an_opts *g, PyArrayObject *arr, kw_pattern_traj_desc *ti)
{
    double fv;
    long f;
    int have = g->seen_ros ? (fv = (double)g->ros, 1)
                           : info_num(g->info, "readout_oversampling", 0, &fv);
    if (have) {
        if (fv != floor(fv) || !(fv >= 1 && fv <= 4))
            return kwpy_value_error("readout_oversampling", "must be a whole number in 1..4"), -1;
        f = (long)fv;
    } else {
        if (ti->readout % ti->n != 0 || ti->readout / ti->n > 4)
            return kwpy_value_error("readout_samples", "%zu is not F x the matrix %zu (F = 1..4)",
                                    ti->readout, ti->n), -1;
        f = (long)(ti->readout / ti->n);
    }
    const size_t samples = (size_t)PyArray_DIM(arr, 0), c = (size_t)PyArray_DIM(arr, 1);
    if (ti->readout != (size_t)f * ti->n)
        return kwpy_value_error("readout_samples", "%zu differs from %ld x the matrix %zu",
                                ti->readout, f, ti->n), -1;
    if (samples < ti->readout)
        return kwpy_value_error("readout_samples", "%zu samples per readout, the file holds %zu",
                                ti->readout, samples), -1;
    const float *k = PyArray_DATA(arr);
    const size_t j = ti->readout / 2;
    double dx = (double)k[(j + 1) * c] - k[j * c], dy = (double)k[(j + 1) * c + 1] - k[j * c + 1];
    double step = sqrt(dx * dx + dy * dy);
    if (!(fabs(step * (double)f - 1.0) < 1e-3))
        return kwpy_value_error("readout_oversampling", "samples are %g cycle/FOV apart along a "
                                "readout, not 1/%ld", step, f), -1;
    ti->oversampling = (int)f;
    return 0;
}

static kw_status analyse_trajectory(const an_opts *g, const char *pk, PyArrayObject *arr,
                                    kw_pattern_analysis *a, int *raised)
{
    kw_pattern_traj_desc ti = {0};
    double nn, rs;
    int have_n = g->seen_matrix ? (nn = (double)g->matrix, 1) : info_num(g->info, "matrix", 1, &nn);
    int have_r = g->seen_readout ? (rs = (double)g->readout_samples, 1)
                                 : info_num(g->info, "readout_samples", 0, &rs);
    *raised = 1;
    if (!have_n || !have_r || !(rs >= 1) || rs > 1e9 || rs != floor(rs))
        return kwpy_value_error("pattern", "a trajectory needs its sidecar (info) with \"matrix\" "
                                "and \"readout_samples\""), KW_EINVAL;
    if (!(nn >= 2 && nn <= 4096 && nn == floor(nn)))
        return kwpy_value_error("matrix", "sidecar matrix %g outside 2..4096", nn), KW_EINVAL;
    ti.n = (size_t)nn;
    ti.readout = (size_t)rs;
    PyObject *shape = g->info ? PyDict_GetItemString(g->info, "shape") : NULL;
    if (shape && PyList_Check(shape) && PyList_GET_SIZE(shape) == 2) {
        double s0 = PyFloat_AsDouble(PyList_GET_ITEM(shape, 0));
        double s1 = PyFloat_AsDouble(PyList_GET_ITEM(shape, 1));
        if (PyErr_Occurred()) /* not numbers: no shape to agree with */
            PyErr_Clear(), s0 = s1 = -1;
        if (s0 != (double)PyArray_DIM(arr, 0) || s1 != (double)PyArray_DIM(arr, 1))
            return kwpy_value_error("pattern", "shape (%zd, %zd) differs from the sidecar's",
                                    (Py_ssize_t)PyArray_DIM(arr, 0),
                                    (Py_ssize_t)PyArray_DIM(arr, 1)), KW_EINVAL;
    }
    ti.radial = pk && (strcmp(pk, "radial") == 0 || strcmp(pk, "golden") == 0 ||
                       strcmp(pk, "stack-of-stars") == 0);
    ti.weights = ti.radial                             ? KW_PATTERN_WEIGHTS_RADIAL
                 : (pk && strcmp(pk, "spiral") == 0) ? KW_PATTERN_WEIGHTS_PIPE
                                                     : KW_PATTERN_WEIGHTS_NONE;
    if (ti.radial && radial_oversampling(g, arr, &ti) < 0)
        return KW_EINVAL;
    ti.psf_size = g->psf_size > 0 ? (size_t)g->psf_size : 0;
    *raised = 0;
    kw_status st;
    const float *k = PyArray_DATA(arr);
    size_t samples = (size_t)PyArray_DIM(arr, 0);
    int nd = (int)PyArray_DIM(arr, 1);
    Py_BEGIN_ALLOW_THREADS
    st = kw_pattern_analyse_trajectory(a, k, samples, nd, &ti, NULL, NULL);
    Py_END_ALLOW_THREADS
    return st;
}

static kw_status analyse_mask(const an_opts *g, PyArrayObject *arr, int u8,
                              kw_pattern_analysis *a, int *raised)
{
    *raised = 1;
    if (PyArray_NDIM(arr) != 2 || PyArray_DIM(arr, 0) < 1 || PyArray_DIM(arr, 1) < 1)
        return kwpy_value_error("pattern", "a mask must be 2-D: (ny, nx) or (nz, ny), got %d "
                                "dimensions", PyArray_NDIM(arr)), KW_EINVAL;
    const size_t rows = (size_t)PyArray_DIM(arr, 0), cols = (size_t)PyArray_DIM(arr, 1);
    const size_t n = rows * cols;
    float *w = PyMem_Malloc(n * sizeof *w);
    if (!w)
        return PyErr_NoMemory(), KW_ENOMEM;
    for (size_t i = 0; i < n; i++) {
        float v = u8 ? (float)((const uint8_t *)PyArray_DATA(arr))[i]
                     : ((const float *)PyArray_DATA(arr))[i];
        if (v < 0) {
            PyMem_Free(w);
            return kwpy_value_error("pattern", "negative weight %g at index %zu", v, i), KW_EINVAL;
        }
        w[i] = u8 ? (v > 0) : v;
    }
    const char *plane = info_str(g->info, "plane");
    int is_plane = 0;
    if (g->seen_plane) {
        is_plane = g->plane;
    } else if (plane) {
        is_plane = strcmp(plane, "kz-ky") == 0;
    } else { /* rows constant along x: ky lines */
        for (size_t y = 0; y < rows && !is_plane; y++)
            for (size_t x = 1; x < cols; x++)
                if (w[y * cols + x] != w[y * cols]) {
                    is_plane = 1;
                    break;
                }
    }
    *raised = 0;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_pattern_analyse_mask(a, w, rows, cols, is_plane);
    Py_END_ALLOW_THREADS
    PyMem_Free(w);
    return st;
}

/* the dtype class of `obj`: 'c' complex, 'u' uint8/bool, 'f' other real;
 * 0 with InputError when it is no array of numbers */
static char input_class(PyObject *obj)
{
    PyArrayObject *probe = (PyArrayObject *)PyArray_FROM_O(obj);
    if (!probe) {
        PyErr_Clear();
        kwpy_value_error("pattern", "is not an array of numbers");
        return 0;
    }
    PyArray_Descr *d = PyArray_DESCR(probe);
    char kind = d->kind;
    int u8 = kind == 'b' || (kind == 'u' && d->elsize == 1);
    Py_DECREF(probe);
    if (kind == 'c')
        return kwpy_value_error("pattern", "a pattern is uint8 or float32, not complex"), 0;
    if (kind != 'b' && kind != 'i' && kind != 'u' && kind != 'f')
        return kwpy_value_error("pattern", "is not an array of numbers"), 0;
    return u8 ? 'u' : 'f';
}

/* mask (analyse_mask) or trajectory, as cli/pattern_read.c decides */
static int is_trajectory(PyArrayObject *arr, const char *skind)
{
    if (skind)
        return strcmp(skind, "trajectory") == 0;
    if (PyArray_TYPE(arr) != NPY_FLOAT32 || PyArray_NDIM(arr) != 2 ||
        (PyArray_DIM(arr, 1) != 2 && PyArray_DIM(arr, 1) != 3))
        return 0;
    const float *v = PyArray_DATA(arr);
    for (npy_intp i = 0; i < PyArray_SIZE(arr); i++)
        if (v[i] < 0)
            return 1;
    return 0;
}

/* ---- analyse(): the report --------------------------------------------------------------- */

static PyObject *analysis_result(const kw_pattern_analysis *a, const char *name, const char *pk)
{
    char *json = NULL;
    kw_status st = kw_pattern_analysis_json(a, name, pk, &json);
    if (st)
        return kwpy_raise(st, "analyse");
    PyObject *d = kwpy_json_dict(json);
    if (!d)
        return NULL;
    if (put_array(d, "psf", KWPY_C64, 2, a->psfdims, a->psfbuf, sizeof(kw_cfloat)) < 0) {
        Py_DECREF(d);
        return NULL;
    }
    return d;
}

static PyObject *analyse_array(const an_opts *g, PyObject *obj)
{
    char cls = input_class(obj);
    if (!cls)
        return NULL;
    const char *skind = info_str(g->info, "kind");
    const char *pk = g->kind ? g->kind : info_str(g->info, "pattern_kind");
    if (!skind && g->kind) { /* a kind of pattern() tells mask or trajectory */
        int k = 0;
        while (kw_pattern_kind_name((kw_pattern_kind)k) &&
               strcmp(kw_pattern_kind_name((kw_pattern_kind)k), g->kind) != 0)
            k++;
        if (kw_pattern_kind_name((kw_pattern_kind)k))
            skind = kw_pattern_kind_is_mask((kw_pattern_kind)k) ? "mask" : "trajectory";
    }
    PyArrayObject *arr = kwpy_array_in(obj, cls == 'u' ? KWPY_U8 : KWPY_F32, "pattern", 0, 8);
    if (!arr)
        return NULL;
    if (cls != 'u') {
        kw_array ka = {.dtype = KW_F32, .ndim = 1, .dims = {(size_t)PyArray_SIZE(arr)},
                       .data = PyArray_DATA(arr)};
        kw_status st = kw_array_all_finite(&ka);
        if (st) {
            Py_DECREF(arr);
            return kwpy_raise(st, "pattern");
        }
    }
    if (skind && strcmp(skind, "mask") != 0 && strcmp(skind, "trajectory") != 0) {
        Py_DECREF(arr);
        return kwpy_value_error("pattern", "sidecar kind \"%s\" is not a mask or trajectory",
                                skind);
    }
    kw_pattern_analysis a;
    memset(&a, 0, sizeof a);
    int raised = 0;
    kw_status st;
    if (cls != 'u' && is_trajectory(arr, skind)) {
        if (PyArray_NDIM(arr) != 2 || (PyArray_DIM(arr, 1) != 2 && PyArray_DIM(arr, 1) != 3) ||
            PyArray_DIM(arr, 0) < 2) {
            Py_DECREF(arr);
            return kwpy_value_error("pattern", "a trajectory must be float32 of shape "
                                    "(samples, 2 or 3)");
        }
        st = analyse_trajectory(g, pk, arr, &a, &raised);
    } else if (skind && strcmp(skind, "trajectory") == 0) {
        st = KW_EINVAL;
        raised = 1;
        kwpy_value_error("pattern", "a trajectory must be float32 of shape (samples, 2 or 3)");
    } else {
        st = analyse_mask(g, arr, cls == 'u', &a, &raised);
    }
    Py_DECREF(arr);
    PyObject *r = NULL;
    if (st && !raised)
        kwpy_raise(st, "pattern");
    else if (!st)
        r = analysis_result(&a, g->name, pk);
    kw_pattern_analysis_free(&a);
    return r;
}

static PyObject *py_analyse(PyObject *self, PyObject *args, PyObject *kwargs)
{
    (void)self;
    an_opts g;
    memset(&g, 0, sizeof g);
    PyObject *obj = NULL;
    const kwpy_kw table[] = {
        {"pattern", KWPY_OBJ, &obj, KW_UNIT_NONE, NULL},
        {"info", KWPY_OBJ, &g.info, KW_UNIT_NONE, NULL},
        {"kind", KWPY_STR, &g.kind, KW_UNIT_NONE, NULL},
        {"name", KWPY_STR, &g.name, KW_UNIT_NONE, NULL},
        {"matrix", KWPY_INT, &g.matrix, KW_UNIT_NONE, &g.seen_matrix},
        {"readout-samples", KWPY_INT, &g.readout_samples, KW_UNIT_NONE, &g.seen_readout},
        {"readout-oversampling", KWPY_INT, &g.ros, KW_UNIT_NONE, &g.seen_ros},
        {"plane", KWPY_BOOL, &g.plane, KW_UNIT_NONE, &g.seen_plane},
        {"psf-size", KWPY_INT, &g.psf_size, KW_UNIT_NONE, NULL},
        {NULL, 0, NULL, 0, NULL}};
    Py_ssize_t npos = PyTuple_GET_SIZE(args);
    if (npos > 1)
        return PyErr_Format(PyExc_TypeError, "analyse() takes one positional argument, %zd given",
                            npos);
    if (kwpy_parse_kwargs(kwargs, table, "analyse") < 0)
        return NULL;
    if (npos == 1) {
        if (obj)
            return PyErr_Format(PyExc_TypeError, "analyse() got multiple values for 'pattern'");
        obj = PyTuple_GET_ITEM(args, 0);
    }
    if (!obj)
        return PyErr_Format(PyExc_TypeError, "analyse() missing the pattern");
    if (g.info && !PyDict_Check(g.info))
        return kwpy_value_error("info", "must be a dict (the sidecar)");
    if (g.psf_size && (g.psf_size < 8 || g.psf_size > 512))
        return kwpy_value_error("psf-size", "%ld outside 8..512", g.psf_size);
    /* the namespace of pattern(): its array and its sidecar */
    PyObject *held = NULL, *held_info = NULL;
    if (!PyArray_Check(obj) && PyObject_HasAttrString(obj, "info")) {
        held = PyObject_HasAttrString(obj, "mask") ? PyObject_GetAttrString(obj, "mask")
                                                  : PyObject_GetAttrString(obj, "trajectory");
        if (!held)
            return NULL;
        if (!g.info) {
            held_info = PyObject_GetAttrString(obj, "info");
            if (!held_info) {
                Py_DECREF(held);
                return NULL;
            }
            g.info = PyDict_Check(held_info) ? held_info : NULL;
        }
        obj = held;
    }
    PyObject *r = analyse_array(&g, obj);
    Py_XDECREF(held);
    Py_XDECREF(held_info);
    return r;
}

static PyMethodDef pattern_methods[] = {
    {"pattern", (PyCFunction)(void (*)(void))py_pattern, METH_VARARGS | METH_KEYWORDS,
     "pattern(kind, matrix=..., **options) -> namespace: the sampling pattern of\n"
     "`kweave pattern --kind KIND` (options as the command's, '-' written '_').\n"
     "Masks: .mask (uint8), .density (float32); trajectories: .trajectory\n"
     "(float32 (samples, ndim), cycles/FOV), .times (float32, s); .info: the sidecar.\n"
     "See docs/python-pattern-plan.md."},
    {"analyse", (PyCFunction)(void (*)(void))py_analyse, METH_VARARGS | METH_KEYWORDS,
     "analyse(pattern, info=None, **options) -> dict: the report of `kweave pattern\n"
     "--analyse F --json J` for a mask (ny, nx) / (nz, ny) or a trajectory (samples, ndim)\n"
     "with its sidecar `info` (or the namespace pattern() returns), and the PSF\n"
     "(complex64) under \"psf\". See docs/python-pattern-plan.md."},
    {NULL, NULL, 0, NULL}};

int kwpy_add_pattern(PyObject *m) { return kwpy_add_functions(m, pattern_methods); }
