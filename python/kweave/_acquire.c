/* _acquire.c: kweave.Acquisition and kweave.acquire(): the simulated
 * acquisition of libencode/kw_acquire.h, as `kweave encode` makes it. The
 * keywords are the command's options ('_' for '-'), read and checked by
 * the library's kw_acquisition_input (the command's rules and messages); the
 * options that name input files there take arrays here (mask, trajectory, times, sens,
 * field_map, noise_cov) and tissue takes a dict. The object owns copies of
 * its arrays (the library borrows them until destroy). One run at a time
 * per object (a lock); the GIL is released while the library works. */
#include "kwpy.h"

#include <math.h>
#include <pythread.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "kw_acquire.h"

#define MAX_KEYS 40

/* The keywords as given: the library's keys (kw_acquisition_input_keys(),
 * vals[] in their order), the mask under its own name too, max_memory. */
typedef struct acq_args {
    PyObject *vals[MAX_KEYS];
    PyObject *max_memory;
    int nkeys;
    /* the arrays among vals[] */
    PyObject *mask, *traj, *times, *sens, *ncov, *fmap, *tissue;
} acq_args;

/* The library's messages in the package's words: no dashes, '_' for '-',
 * name=value, the command's pattern is the mask. */
static const char *const RENAME[] = {"pattern", "mask", NULL};
static const kw_param_spelling SPELLING = {"", '_', "=", RENAME};

/* the keyword of the library's key */
static const char *keyword(const char *key, char *buf, size_t n)
{
    if (strcmp(key, "pattern") == 0)
        return "mask";
    size_t i = 0;
    for (; key[i] && i + 1 < n; i++)
        buf[i] = key[i] == '-' ? '_' : key[i];
    buf[i] = '\0';
    return buf;
}

/* InputError for the input's refusal, under the keyword of its key. */
static PyObject *raise_key(kw_status st)
{
    char name[64], why[600];
    snprintf(why, sizeof why, "%s", kw_last_error_reason());
    kw_set_error_param(st, keyword(kw_last_error_param(), name, sizeof name), "%s", why);
    return kwpy_raise(st, NULL);
}

typedef struct {
    PyObject_HEAD
    kw_acquisition *acq;
    PyThread_type_lock lock;
    /* what the options point to, owned here */
    PyArrayObject *traj, *sens, *fmap;
    PyObject *phantom; /* its name (str) */
    uint8_t *mask;
    double *times;
    kw_cdouble *ncov;
    kw_tissue_values tissues[KW_TISSUE_COUNT];
} AcqObject;

/* tissue={name: {pd, t1_s, t2_s, t2star_s}} as the command's --tissue JSON. */
static int tissue_values(PyObject *d, kw_tissue_values *v)
{
    if (!PyDict_Check(d)) {
        kwpy_value_error("tissue", "expected a dict of tissues {name: {pd, t1_s, t2_s, t2star_s}}");
        return -1;
    }
    PyObject *name, *vals;
    Py_ssize_t pos = 0;
    while (PyDict_Next(d, &pos, &name, &vals)) {
        const char *tn = PyUnicode_Check(name) ? PyUnicode_AsUTF8(name) : "?";
        if (!tn)
            return -1;
        int id = -1;
        for (int i = 0; i < KW_TISSUE_COUNT; i++)
            if (strcmp(tn, kw_tissue_get(i)->name) == 0)
                id = i;
        if (id < 0) {
            kwpy_value_error("tissue", "unknown tissue '%s' (white-matter, grey-matter, csf, muscle, "
                             "liver, blood, fat)", tn);
            return -1;
        }
        if (!PyDict_Check(vals)) {
            kwpy_value_error("tissue", "%s: expected a dict of values", tn);
            return -1;
        }
        static const char *const keys[4] = {"pd", "t1_s", "t2_s", "t2star_s"};
        double *dst[4] = {&v[id].pd, &v[id].t1_s, &v[id].t2_s, &v[id].t2s_s};
        static const double hi[4] = {2.0, 100.0, 100.0, 100.0};
        PyObject *key, *x;
        Py_ssize_t kp = 0;
        while (PyDict_Next(vals, &kp, &key, &x)) {
            const char *ks = PyUnicode_Check(key) ? PyUnicode_AsUTF8(key) : "?";
            if (!ks)
                return -1;
            int j = 0;
            while (j < 4 && strcmp(ks, keys[j]) != 0)
                j++;
            if (j == 4) {
                kwpy_value_error("tissue", "%s: unknown key '%s' (pd, t1_s, t2_s, t2star_s)", tn, ks);
                return -1;
            }
            double y = PyBool_Check(x) || !PyNumber_Check(x) ? NAN : PyFloat_AsDouble(x);
            if (PyErr_Occurred())
                return -1;
            if (!isfinite(y) || !(y > 0) || y > hi[j]) {
                kwpy_value_error("tissue", "%s: %s must be a number in (0, %g]%s", tn, keys[j], hi[j],
                                 j ? " seconds" : "");
                return -1;
            }
            *dst[j] = y;
        }
        int nt = (v[id].t1_s > 0) + (v[id].t2_s > 0) + (v[id].t2s_s > 0);
        if (nt != 0 && nt != 3) {
            kwpy_value_error("tissue", "%s: give t1_s, t2_s and t2star_s together (or none)", tn);
            return -1;
        }
    }
    return 0;
}

/* ---- the keywords through the library's input -------------------------------- */

#define FAIL(name, ...) return kwpy_value_error(name, __VA_ARGS__), -1

/* The keywords onto the input, in the order of its keys (the command's). */
static int set_keys(kw_acquisition_input *in, const acq_args *a)
{
    const kw_param_key *keys = kw_acquisition_input_keys();
    for (int k = 0; k < a->nkeys; k++) {
        PyObject *v = a->vals[k];
        if (!v)
            continue;
        char text[512], name[64];
        const char *kw = keyword(keys[k].name, name, sizeof name);
        if (keys[k].type == KW_PARAM_ARRAY)
            snprintf(text, sizeof text, "%s", kw); /* given: the array is used below */
        else if (kwpy_param_text(v, &keys[k], kw, text, sizeof text) < 0)
            return -1;
        kw_status st = kw_acquisition_input_set(in, keys[k].name, text);
        if (st)
            return raise_key(st), -1;
    }
    return 0;
}

/* max_memory: as the command, half the physical memory unless given */
static int max_memory(const acq_args *a, kw_acquisition_options *o)
{
    long pages = sysconf(_SC_PHYS_PAGES), psize = sysconf(_SC_PAGE_SIZE);
    double half = pages > 0 && psize > 0 ? 0.5 * (double)pages * (double)psize : (double)(16UL << 30);
    o->max_bytes = half < (double)(64UL << 20) ? (64UL << 20) : (size_t)half;
    if (a->max_memory) {
        if (PyBool_Check(a->max_memory) || !PyLong_Check(a->max_memory))
            FAIL("max_memory", "must be a whole number of bytes");
        unsigned long long b = PyLong_AsUnsignedLongLong(a->max_memory);
        if (PyErr_Occurred()) {
            PyErr_Clear();
            FAIL("max_memory", "must be a positive whole number of bytes");
        }
        if (b == 0)
            FAIL("max_memory", "must be a positive whole number of bytes");
        o->max_bytes = (size_t)b;
    }
    return 0;
}

/* ---- arrays ----------------------------------------------------------------- */

/* A finite array of elem, owned: a copy when the caller's object is used. */
static PyArrayObject *array_owned(PyObject *obj, kwpy_elem elem, const char *name, int lo, int hi)
{
    PyArrayObject *a = kwpy_array_in(obj, elem, name, lo, hi);
    if (!a)
        return NULL;
    if ((PyObject *)a == obj || PyArray_BASE(a) || !PyArray_CHKFLAGS(a, NPY_ARRAY_OWNDATA)) {
        PyArrayObject *c = (PyArrayObject *)PyArray_NewCopy(a, NPY_CORDER);
        Py_DECREF(a);
        if (!c)
            return NULL;
        a = c;
    }
    kw_array k = {.dtype = elem == KWPY_C64 ? KW_C64 : elem == KWPY_F32 ? KW_F32 : KW_U8,
                  .ndim = PyArray_NDIM(a), .data = PyArray_DATA(a)};
    kwpy_dims(a, k.dims);
    kw_status st = kw_array_all_finite(&k);
    if (st) {
        Py_DECREF(a);
        return (PyArrayObject *)kwpy_raise(st, name);
    }
    return a;
}

static void set_dims(size_t *dst, int *ndim, PyArrayObject *a)
{
    if (ndim)
        *ndim = PyArray_NDIM(a);
    kwpy_dims(a, dst);
}

/* mask (nonzero = sampled), times (seconds, as double), noise_cov (as
 * complex double): converted as the command converts its files. */
static int arrays_converted(AcqObject *self, const acq_args *a, kw_acquisition_options *o)
{
    if (a->mask) {
        PyArrayObject *m = array_owned(a->mask, KWPY_F32, "mask", 1, 3);
        if (!m)
            return -1;
        size_t cnt = (size_t)PyArray_SIZE(m);
        self->mask = malloc(cnt ? cnt : 1);
        for (size_t i = 0; self->mask && i < cnt; i++)
            self->mask[i] = ((const float *)PyArray_DATA(m))[i] != 0.0f;
        set_dims(o->mask_dims, &o->mask_ndim, m);
        Py_DECREF(m);
        if (!self->mask)
            return PyErr_NoMemory(), -1;
        o->mask = self->mask;
    }
    if (a->times) {
        PyArrayObject *t = array_owned(a->times, KWPY_F32, "times", 1, 2);
        if (!t)
            return -1;
        size_t cnt = (size_t)PyArray_SIZE(t);
        self->times = malloc((cnt ? cnt : 1) * sizeof *self->times);
        for (size_t i = 0; self->times && i < cnt; i++)
            self->times[i] = ((const float *)PyArray_DATA(t))[i];
        set_dims(o->times_dims, &o->times_ndim, t);
        Py_DECREF(t);
        if (!self->times)
            return PyErr_NoMemory(), -1;
        o->times = self->times;
    }
    if (a->ncov) {
        PyArrayObject *c = array_owned(a->ncov, KWPY_C64, "noise_cov", 2, 2);
        if (!c)
            return -1;
        size_t cnt = (size_t)PyArray_SIZE(c);
        self->ncov = malloc((cnt ? cnt : 1) * sizeof *self->ncov);
        for (size_t i = 0; self->ncov && i < cnt; i++)
            self->ncov[i] = ((const kw_cfloat *)PyArray_DATA(c))[i];
        set_dims(o->noise_cov_dims, NULL, c);
        Py_DECREF(c);
        if (!self->ncov)
            return PyErr_NoMemory(), -1;
        o->noise_cov = self->ncov;
    }
    return 0;
}

/* trajectory, field_map, sens: used as they are (owned copies). */
static int arrays_kept(AcqObject *self, const acq_args *a, kw_acquisition_options *o)
{
    if (a->traj) {
        if (!(self->traj = array_owned(a->traj, KWPY_F32, "trajectory", 2, 2)))
            return -1;
        if (!PyArray_DIM(self->traj, 0))
            FAIL("trajectory", "expected a real array (samples, 2|3) in cycles/FOV");
        o->traj = PyArray_DATA(self->traj);
        set_dims(o->traj_dims, NULL, self->traj);
    }
    if (a->fmap) {
        if (!(self->fmap = array_owned(a->fmap, KWPY_F32, "field_map", 2, 3)))
            return -1;
        o->field_map = PyArray_DATA(self->fmap);
        set_dims(o->field_map_dims, &o->field_map_ndim, self->fmap);
    }
    if (a->sens) {
        if (!(self->sens = array_owned(a->sens, KWPY_C64, "sens", 2, 4)))
            return -1;
        o->sens = PyArray_DATA(self->sens);
        set_dims(o->sens_dims, &o->sens_ndim, self->sens);
    }
    return 0;
}

/* ---- the object ------------------------------------------------------------------ */

/* A failure of the acquisition, under the keyword's name. */
static PyObject *acq_fail(kw_status st)
{
    const char *p = kw_last_error_param();
    if (!*p)
        return kwpy_raise(st, NULL);
    const char *key = kw_acquisition_input_key_of(p);
    char buf[64], why[600];
    const char *name = key                           ? keyword(key, buf, sizeof buf)
                       : strcmp(p, "max_bytes") == 0 ? "max_memory"
                       : strcmp(p, "options") == 0   ? "acquire"
                                                     : p;
    snprintf(why, sizeof why, "%s%s", kw_last_error_reason(),
             strcmp(p, "max_bytes") == 0 ? " (max_memory)" : "");
    kw_set_error_param(st, name, "%s", why);
    return kwpy_raise(st, NULL);
}

static void acq_clear(AcqObject *self)
{
    kw_acquisition_destroy(self->acq);
    self->acq = NULL;
    Py_CLEAR(self->traj);
    Py_CLEAR(self->sens);
    Py_CLEAR(self->fmap);
    Py_CLEAR(self->phantom);
    free(self->mask);
    free(self->times);
    free(self->ncov);
    self->mask = NULL;
    self->times = NULL;
    self->ncov = NULL;
    memset(self->tissues, 0, sizeof self->tissues);
}

static void acq_dealloc(AcqObject *self)
{
    if (self->acq) { /* destroying plans is planning too */
        Py_BEGIN_ALLOW_THREADS
        kw_acquisition_destroy(self->acq);
        Py_END_ALLOW_THREADS
        self->acq = NULL;
    }
    acq_clear(self);
    if (self->lock)
        PyThread_free_lock(self->lock);
    Py_TYPE(self)->tp_free((PyObject *)self);
}

static int parse_keywords(PyObject *kwargs, acq_args *a)
{
    memset(a, 0, sizeof *a);
    const kw_param_key *keys = kw_acquisition_input_keys();
    kwpy_kw table[MAX_KEYS + 3];
    int n = 0, pattern = 0;
    for (; keys[n].name && n < MAX_KEYS; n++) {
        table[n] = (kwpy_kw){keys[n].name, KWPY_OBJ, &a->vals[n], 0, NULL};
        if (strcmp(keys[n].name, "pattern") == 0)
            pattern = n;
    }
    a->nkeys = n;
    table[n++] = (kwpy_kw){"mask", KWPY_OBJ, &a->vals[pattern], 0, NULL};
    table[n++] = (kwpy_kw){"max-memory", KWPY_OBJ, &a->max_memory, 0, NULL};
    table[n] = (kwpy_kw){NULL, 0, NULL, 0, NULL};
    if (kwpy_parse_kwargs(kwargs, table, "Acquisition") < 0)
        return -1;
    static const char *const arrays[] = {"pattern", "trajectory", "times", "sens", "noise-cov",
                                         "field-map", "tissue"};
    PyObject **dst[] = {&a->mask, &a->traj, &a->times, &a->sens, &a->ncov, &a->fmap, &a->tissue};
    for (int k = 0; k < a->nkeys; k++)
        for (int i = 0; i < 7; i++)
            if (strcmp(keys[k].name, arrays[i]) == 0)
                *dst[i] = a->vals[k];
    return 0;
}

/* The keywords through the library's input into `o`. */
static int acq_options(AcqObject *self, const acq_args *a, kw_acquisition_options *o)
{
    kw_acquisition_input *in = NULL;
    kw_status st = kw_acquisition_input_create(&in);
    if (st)
        return kwpy_raise(st, NULL), -1;
    int rc = set_keys(in, a);
    if (!rc && a->tissue) {
        rc = tissue_values(a->tissue, self->tissues);
        o->tissue_values = self->tissues;
    }
    if (!rc && (st = kw_acquisition_input_finish(in, &SPELLING, o)))
        rc = (raise_key(st), -1);
    /* o->phantom points into the input: the name the library keeps */
    if (!rc && !(self->phantom = PyUnicode_FromString(o->phantom)))
        rc = -1;
    kw_acquisition_input_destroy(in);
    if (rc)
        return -1;
    o->phantom = PyUnicode_AsUTF8(self->phantom);
    if (max_memory(a, o) < 0 || arrays_converted(self, a, o) < 0 || arrays_kept(self, a, o) < 0)
        return -1;
    return 0;
}

static int acq_init(AcqObject *self, PyObject *args, PyObject *kwargs)
{
    if (PyTuple_GET_SIZE(args) != 0) {
        PyErr_SetString(PyExc_TypeError, "Acquisition() takes keyword arguments only");
        return -1;
    }
    acq_args a;
    if (parse_keywords(kwargs, &a) < 0)
        return -1;
    if (self->acq) { /* a run may be going on in another thread */
        PyErr_SetString(PyExc_TypeError, "Acquisition: already initialised");
        return -1;
    }
    if (!self->lock && !(self->lock = PyThread_allocate_lock())) {
        PyErr_NoMemory();
        return -1;
    }
    acq_clear(self);
    kw_acquisition_options o;
    kw_acquisition_options_init(&o);
    if (acq_options(self, &a, &o) < 0)
        return -1;
    kw_status st;
    kw_acquisition *acq = NULL;
    Py_BEGIN_ALLOW_THREADS
    st = kw_acquisition_create(&acq, &o);
    Py_END_ALLOW_THREADS
    if (st)
        return acq_fail(st), -1;
    self->acq = acq;
    return 0;
}

static int ready(AcqObject *self)
{
    if (!self->acq) {
        PyErr_SetString(PyExc_TypeError, "Acquisition: not initialised");
        return 0;
    }
    return 1;
}

/* The library's sidecar keys of the acquisition as a dict. */
static PyObject *info_dict(AcqObject *self)
{
    char *json = NULL;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    PyThread_acquire_lock(self->lock, WAIT_LOCK);
    st = kw_acquisition_info_json(self->acq, &json);
    PyThread_release_lock(self->lock);
    Py_END_ALLOW_THREADS
    if (st)
        return kwpy_raise(st, NULL);
    return kwpy_json_dict(json);
}

/* The noise covariance the command writes beside multi-coil noisy data
 * (complex64), or None. */
static PyObject *noise_cov_out(const kw_acquisition_info *in)
{
    if (!in->noisy || in->coils <= 0 || !in->noise_cov)
        Py_RETURN_NONE;
    size_t d[2] = {(size_t)in->channels, (size_t)in->channels};
    PyArrayObject *c = kwpy_array_new(KWPY_C64, 2, d);
    if (!c)
        return NULL;
    kw_cfloat *p = PyArray_DATA(c);
    for (size_t i = 0; i < d[0] * d[1]; i++)
        p[i] = (kw_cfloat)in->noise_cov[i];
    return (PyObject *)c;
}

static PyObject *acq_run(AcqObject *self, PyObject *noargs)
{
    (void)noargs;
    if (!ready(self))
        return NULL;
    const kw_acquisition_info *in = kw_acquisition_info_get(self->acq);
    PyArrayObject *ks = kwpy_array_new(KWPY_C64, in->kspace_ndim, in->kspace_dims);
    PyArrayObject *truth = ks ? kwpy_array_new(KWPY_F32, in->truth_ndim, in->truth_dims) : NULL;
    PyArrayObject *maps = truth && in->maps_ndim ? kwpy_array_new(KWPY_C64, in->maps_ndim, in->maps_dims)
                                                 : NULL;
    PyObject *fields = NULL;
    if (!truth || (in->maps_ndim && !maps))
        goto done;
    kw_status st;
    char *json = NULL;
    Py_BEGIN_ALLOW_THREADS
    PyThread_acquire_lock(self->lock, WAIT_LOCK);
    st = kw_acquisition_execute(self->acq, PyArray_DATA(ks), PyArray_DATA(truth),
                                maps ? PyArray_DATA(maps) : NULL, NULL, NULL);
    if (!st)
        st = kw_acquisition_info_json(self->acq, &json);
    PyThread_release_lock(self->lock);
    Py_END_ALLOW_THREADS
    if (st) {
        acq_fail(st);
        goto done;
    }
    PyObject *info = kwpy_json_dict(json);
    PyObject *cov = info ? noise_cov_out(in) : NULL;
    if (!cov) {
        Py_XDECREF(info);
        goto done;
    }
    fields = Py_BuildValue("{s:O,s:O,s:O,s:N,s:N}", "kspace", ks, "truth", truth, "maps",
                           maps ? (PyObject *)maps : Py_None, "noise_cov", cov, "info", info);
done:
    Py_XDECREF(ks);
    Py_XDECREF(truth);
    Py_XDECREF(maps);
    return fields ? kwpy_namespace(fields) : NULL;
}

static PyObject *acq_get_info(AcqObject *self, void *closure)
{
    (void)closure;
    return ready(self) ? info_dict(self) : NULL;
}

static PyObject *acq_get_shape(AcqObject *self, void *closure)
{
    (void)closure;
    if (!ready(self))
        return NULL;
    const kw_acquisition_info *in = kw_acquisition_info_get(self->acq);
    PyObject *t = PyTuple_New(in->kspace_ndim);
    for (int i = 0; t && i < in->kspace_ndim; i++)
        PyTuple_SET_ITEM(t, i, PyLong_FromSize_t(in->kspace_dims[i]));
    return t;
}

static PyMethodDef acq_methods[] = {
    {"run", (PyCFunction)acq_run, METH_NOARGS,
     "run() -> namespace(kspace, truth, maps, noise_cov, info): simulate (repeatable; the\n"
     "noise is seeded, so every run gives the same bytes)."},
    {NULL, NULL, 0, NULL}};

static PyGetSetDef acq_getset[] = {
    {"info", (getter)acq_get_info, NULL, "the sidecar's keys (the library's) as a dict", NULL},
    {"shape", (getter)acq_get_shape, NULL, "the k-space shape run() returns", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

static PyTypeObject AcqType = {
    PyVarObject_HEAD_INIT(NULL, 0).tp_name = "kweave.Acquisition",
    .tp_basicsize = sizeof(AcqObject),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_BASETYPE,
    .tp_doc = "Acquisition(phantom=..., matrix=..., fov=..., **options)\n\n"
              "The simulated acquisition of `kweave encode` (docs/python-acquire-recon.md): the\n"
              "command's options as keywords ('_' for '-'), quantities as str with units or SI\n"
              "numbers; mask, trajectory, times, sens, field_map, noise_cov take arrays and\n"
              "tissue a dict. run() simulates.",
    .tp_new = PyType_GenericNew,
    .tp_init = (initproc)acq_init,
    .tp_dealloc = (destructor)acq_dealloc,
    .tp_methods = acq_methods,
    .tp_getset = acq_getset,
};

static PyObject *py_acquire(PyObject *self, PyObject *args, PyObject *kwargs)
{
    (void)self;
    PyObject *a = PyObject_Call((PyObject *)&AcqType, args, kwargs);
    if (!a)
        return NULL;
    PyObject *r = acq_run((AcqObject *)a, NULL);
    Py_DECREF(a);
    return r;
}

static PyMethodDef acquire_functions[] = {
    {"acquire", (PyCFunction)(void (*)(void))py_acquire, METH_VARARGS | METH_KEYWORDS,
     "acquire(**options) -> namespace(kspace, truth, maps, noise_cov, info):\n"
     "Acquisition(**options).run(), what `kweave encode` writes."},
    {NULL, NULL, 0, NULL}};

int kwpy_add_acquire(PyObject *m)
{
    if (PyType_Ready(&AcqType) < 0 || PyModule_AddObjectRef(m, "Acquisition", (PyObject *)&AcqType) < 0)
        return -1;
    return kwpy_add_functions(m, acquire_functions);
}
