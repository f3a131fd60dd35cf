/* _recon.c: kweave.Recon, kweave.recon() and kweave.recon_methods(): the
 * reconstruction object of recon/kw_recon.h, as `kweave recon` runs it.
 * A Recon is made for one k-space shape and geometry (trajectory, maps,
 * noise covariance, density weights, the sampling claims a sidecar would
 * carry) and run on k-space arrays of that shape, as often as wanted. The
 * checks and messages are the command's (cli/cmd_recon.c); the library's
 * parameter names come back as the keywords. The object owns copies of the
 * geometry's arrays (the library borrows them until destroy). One run at a
 * time per object (a lock); the GIL is released while the library works. */
#include "kwpy.h"

#include <math.h>
#include <pythread.h>
#include <stdio.h>
#include <string.h>

#include "kw_recon.h"

typedef struct recon_args {
    const char *method, *combine;
    PyObject *kernel, *dcf, *traj, *sens, *ncov, *weights, *accel, *image_shape;
    double lambda, stop, tolerance, oversampling;
    long iterations, replicas, seed, acs_lines;
    int keep_coils, complex_image, gfactor, estimate_sens;
    int s_rep, s_acs;
} recon_args;

typedef struct {
    PyObject_HEAD
    kw_recon *r;
    PyThread_type_lock lock;
    PyObject *shape;           /* the k-space shape as given (a tuple) */
    int ndim;                  /* ... as the library sees it */
    size_t dims[4];
    int noncart, want_gfactor;
    char method[32], combine[32]; /* the options' strings, kept for the library */
    PyArrayObject *traj, *sens, *ncov, *weights; /* owned copies */
    int sens_ndim;
    size_t sens_dims[4];
    size_t image_dims[3];
    kw_recon_sampling claims;
} ReconObject;

#define FAIL(name, ...) return kwpy_value_error(name, __VA_ARGS__), -1

/* ---- errors ------------------------------------------------------------------ */

/* A failure of a kw_recon call: the keyword the library's parameter stands
 * for, else `context` (the method) before the reason. */
static PyObject *recon_fail(kw_status st, const char *context)
{
    const char *p = kw_last_error_param();
    if (!*p)
        return kwpy_raise(st, context);
    char name[64], why[600];
    snprintf(name, sizeof name, "%s", strcmp(p, "image_dims") == 0 ? "image_shape" : p);
    snprintf(why, sizeof why, "%s", kw_last_error_reason());
    kw_set_error_param(st, name, "%s", why);
    return kwpy_raise(st, NULL);
}

/* ---- arrays -------------------------------------------------------------------- */

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
    kw_array k = {.dtype = elem == KWPY_C64 ? KW_C64 : KW_F32, .ndim = PyArray_NDIM(a),
                  .data = PyArray_DATA(a)};
    kwpy_dims(a, k.dims);
    kw_status st = kw_array_all_finite(&k);
    if (st) {
        Py_DECREF(a);
        return (PyArrayObject *)kwpy_raise(st, name);
    }
    return a;
}

/* k-space: complex (as the command, real data are refused), finite. */
static PyArrayObject *kspace_in(PyObject *obj)
{
    PyArrayObject *probe = (PyArrayObject *)PyArray_FROM_O(obj);
    if (!probe) {
        PyErr_Clear();
        return (PyArrayObject *)kwpy_value_error("kspace", "is not an array of numbers");
    }
    char kind = PyArray_DESCR(probe)->kind;
    if (kind != 'c') {
        Py_DECREF(probe);
        return (PyArrayObject *)kwpy_value_error("kspace", "k-space must be complex (complex64 or complex128)");
    }
    PyArrayObject *a = kwpy_array_in((PyObject *)probe, KWPY_C64, "kspace", 1, 4);
    Py_DECREF(probe);
    if (!a)
        return NULL;
    kw_array k = {.dtype = KW_C64, .ndim = PyArray_NDIM(a), .data = PyArray_DATA(a)};
    kwpy_dims(a, k.dims);
    kw_status st = kw_array_all_finite(&k);
    if (st) {
        Py_DECREF(a);
        return (PyArrayObject *)kwpy_raise(st, "kspace");
    }
    return a;
}

/* ---- the command's checks, in its order -------------------------------------------- */

static int parse_kernel(PyObject *obj, int k[2])
{
    char s[128];
    if (kwpy_str_value(obj, "kernel", "x", s, sizeof s) < 0)
        return -1;
    int a, b, n = 0;
    if (sscanf(s, "%dx%d%n", &a, &b, &n) != 2 || s[n] || a < 1 || b < 1 || a > 16 || b > 31)
        FAIL("kernel", "'%s' is not KYxKX with 1 <= KY <= 16, 1 <= KX <= 31", s);
    k[0] = a;
    k[1] = b;
    return 0;
}

/* The keywords -> the library's options; the checks that need no array. */
static int options(const recon_args *a, kw_recon_options *ro)
{
    kw_recon_options_init(ro);
    ro->method = a->method;
    ro->combine = a->combine;
    ro->lambda = a->lambda;
    ro->iterations = (int)a->iterations;
    ro->stop = a->stop;
    ro->tolerance = a->tolerance;
    ro->oversampling = a->oversampling;
    ro->replicas = (int)a->replicas;
    ro->seed = a->seed;
    ro->keep_coils = a->keep_coils;
    ro->complex_image = a->complex_image;
    ro->want_gfactor = a->gfactor;
    ro->estimate_sens = a->estimate_sens;
    if ((long)ro->iterations != a->iterations)
        FAIL("iterations", "is too large");
    if (a->kernel && parse_kernel(a->kernel, ro->kernel) < 0)
        return -1;
    if (a->s_rep && (a->replicas < 2 || a->replicas > 10000))
        FAIL("replicas", "must be 2 .. 10000");
    ro->dcf = KW_RECON_DCF_AUTO;
    if (a->dcf && PyUnicode_Check(a->dcf)) {
        const char *d = PyUnicode_AsUTF8(a->dcf);
        if (!d)
            return -1;
        if (strcmp(d, "radial") && strcmp(d, "pipe"))
            FAIL("dcf", "expected radial, pipe or an array of weights (one per sample)");
        if (a->weights)
            FAIL("dcf", "give dcf='%s' or weights (an array), not both", d);
        ro->dcf = strcmp(d, "radial") == 0 ? KW_RECON_DCF_RADIAL : KW_RECON_DCF_PIPE;
    } else if (a->dcf || a->weights) {
        if (a->dcf && a->weights)
            FAIL("dcf", "give dcf (an array) or weights, not both");
        ro->dcf = KW_RECON_DCF_GIVEN;
    }
    /* the options' own ranges, checked by the library before any array */
    kw_recon_options probe_o = *ro;
    probe_o.method = NULL;
    kw_recon *probe = NULL;
    size_t d[3] = {1, 2, 2};
    kw_recon_geometry g = {.ndim = 3, .dims = d};
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_recon_create(&probe, &g, &probe_o);
    kw_recon_destroy(probe);
    Py_END_ALLOW_THREADS
    if (st && strcmp(kw_last_error_param(), "kspace") != 0)
        return recon_fail(st, "recon"), -1;
    return 0;
}

/* The k-space shape (and the trajectory that makes it non-Cartesian). */
static int shape_in(ReconObject *self, PyObject *shape, const recon_args *a)
{
    PyObject *seq = PySequence_Fast(shape, "shape: a tuple of the k-space's sizes");
    if (!seq)
        return -1;
    Py_ssize_t nd = PySequence_Fast_GET_SIZE(seq);
    long v[4] = {0, 0, 0, 0};
    for (Py_ssize_t i = 0; i < nd && i < 4; i++) {
        PyObject *it = PySequence_Fast_GET_ITEM(seq, i);
        v[i] = PyBool_Check(it) || !PyIndex_Check(it) ? -2 : PyLong_AsLong(it);
        if (v[i] == -1 && PyErr_Occurred())
            return Py_DECREF(seq), -1;
        if (v[i] < 0) {
            Py_DECREF(seq);
            FAIL("kspace", "the shape must hold whole numbers >= 0");
        }
    }
    Py_DECREF(seq);
    self->shape = PyTuple_New(nd < 0 ? 0 : nd); /* as Python ints (more than 4: refused below) */
    for (Py_ssize_t i = 0; self->shape && i < nd; i++) {
        PyObject *x = PyLong_FromLong(i < 4 ? v[i] : 0);
        if (!x)
            Py_CLEAR(self->shape);
        else
            PyTuple_SET_ITEM(self->shape, i, x);
    }
    if (!self->shape)
        return -1;
    int off = 0;
    if (a->traj) {
        if (!(self->traj = array_owned(a->traj, KWPY_F32, "trajectory", 0, 8)))
            return -1;
        npy_intp *t = PyArray_DIMS(self->traj);
        if (PyArray_NDIM(self->traj) != 2 || t[1] < 1 || t[1] > 3)
            FAIL("trajectory", "must be real (samples, ndim) with ndim 1-3");
        self->noncart = 1;
        off = nd == 1;
        if (nd < 1 || nd > 2 || v[nd - 1] != t[0])
            FAIL("kspace", "non-Cartesian k-space must be (coils, samples) with %zu samples (the trajectory's)",
                 (size_t)t[0]);
    } else {
        off = nd == 2;
        if (nd < 2 || nd > 4)
            FAIL("kspace", "Cartesian k-space must be (ny, nx), (coils, ny, nx) or (coils, nz, ny, nx); got %zd dimensions",
                 nd);
    }
    self->ndim = (int)nd + off;
    self->dims[0] = 1;
    for (Py_ssize_t i = 0; i < nd; i++)
        self->dims[i + off] = (size_t)v[i];
    for (int i = 1; !self->noncart && i < self->ndim; i++)
        if (self->dims[i] < 2)
            FAIL("kspace", "axis %d has %zu samples (at least 2 needed)", i, self->dims[i]);
    if (self->dims[0] < 1 || self->dims[0] > 256)
        FAIL("kspace", "%zu coils (1 .. 256 supported)", self->dims[0]);
    return 0;
}

/* Maps and noise covariance. */
static int maps_in(ReconObject *self, const recon_args *a)
{
    const size_t nc = self->dims[0];
    if (a->sens) {
        if (!(self->sens = array_owned(a->sens, KWPY_C64, "sens", 1, 4)))
            return -1;
        self->sens_ndim = PyArray_NDIM(self->sens);
        kwpy_dims(self->sens, self->sens_dims);
        size_t *s = self->sens_dims;
        if (!self->noncart && self->sens_ndim == self->ndim - 1 && nc == 1) {
            for (int i = self->sens_ndim; i > 0; i--)
                s[i] = s[i - 1];
            s[0] = 1;
            self->sens_ndim++;
        }
        if (s[0] != nc)
            FAIL("sens", "must be complex with one map per coil (%zu coils)", nc);
        int ok = self->sens_ndim == self->ndim;
        for (int i = 0; ok && i < self->ndim; i++)
            ok = s[i] == self->dims[i];
        if (!self->noncart && !ok)
            FAIL("sens", "shape must equal the k-space shape (coils, [nz,] ny, nx)");
    }
    if (a->ncov) {
        if (!(self->ncov = array_owned(a->ncov, KWPY_C64, "noise_cov", 0, 8)))
            return -1;
        if (PyArray_NDIM(self->ncov) != 2 || (size_t)PyArray_DIM(self->ncov, 0) != nc ||
            (size_t)PyArray_DIM(self->ncov, 1) != nc)
            FAIL("noise_cov", "shape must be (%zu, %zu), one row and column per coil", nc, nc);
    }
    return 0;
}

static int check_method(ReconObject *self, const recon_args *a)
{
    const char *name = a->method ? a->method : self->noncart ? "grid" : "fft";
    if (kw_recon_method_check(name, self->noncart, NULL))
        FAIL("method", "%s", kw_last_error_reason());
    snprintf(self->method, sizeof self->method, "%s", name);
    return 0;
}

/* Non-Cartesian: the image shape, the caller's density weights. */
static int noncart_in(ReconObject *self, const recon_args *a)
{
    int nd = (int)PyArray_DIM(self->traj, 1);
    if (a->image_shape) {
        PyObject *seq = PySequence_Fast(a->image_shape, "image_shape: a tuple of sizes");
        if (!seq)
            return -1;
        int ok = PySequence_Fast_GET_SIZE(seq) == nd && (nd == 2 || nd == 3);
        for (int d = 0; ok && d < nd; d++) {
            PyObject *it = PySequence_Fast_GET_ITEM(seq, d);
            long v = PyBool_Check(it) || !PyIndex_Check(it) ? -1 : PyLong_AsLong(it);
            PyErr_Clear();
            ok = v >= 2 && v <= 65536;
            self->image_dims[d] = (size_t)v;
        }
        Py_DECREF(seq);
        if (!ok)
            FAIL("image_shape", "expected %d sizes 2..65536 (one per trajectory column, C order)", nd);
    }
    PyObject *w = a->weights ? a->weights : a->dcf && !PyUnicode_Check(a->dcf) ? a->dcf : NULL;
    if (!w)
        return 0;
    const char *name = a->weights ? "weights" : "dcf";
    if (!(self->weights = array_owned(w, KWPY_F32, name, 0, 8)))
        return -1;
    size_t n = (size_t)PyArray_SIZE(self->weights), ns = (size_t)PyArray_DIM(self->traj, 0);
    if (n != ns)
        FAIL(name, "must hold %zu real weights (one per sample), has %zu", ns, n);
    return 0;
}

/* The sidecar's claims: acceleration (a number, or per axis a list whose
 * product is the total) and acs_lines. */
static int claims_in(ReconObject *self, const recon_args *a)
{
    if (a->accel) {
        PyObject *seq = PySequence_Check(a->accel) ? PySequence_Fast(a->accel, "acceleration") : NULL;
        double prod = 1;
        int bad = PyErr_Occurred() != NULL;
        for (Py_ssize_t i = 0; !bad && i < (seq ? PySequence_Fast_GET_SIZE(seq) : 1); i++) {
            PyObject *it = seq ? PySequence_Fast_GET_ITEM(seq, i) : a->accel;
            bad = PyBool_Check(it) || !PyNumber_Check(it);
            double x = bad ? 0 : PyFloat_AsDouble(it);
            bad = bad || PyErr_Occurred();
            prod *= seq ? (int)x : x;
        }
        Py_XDECREF(seq);
        PyErr_Clear();
        if (bad)
            FAIL("acceleration", "is not a number or list");
        self->claims.acceleration = prod;
        self->claims.acceleration_per_axis = seq != NULL;
    }
    if (a->s_acs)
        self->claims.acs_lines = (int)a->acs_lines;
    return 0;
}

/* ---- the object ------------------------------------------------------------------------ */

static void recon_clear(ReconObject *self)
{
    kw_recon_destroy(self->r);
    self->r = NULL;
    Py_CLEAR(self->shape);
    Py_CLEAR(self->traj);
    Py_CLEAR(self->sens);
    Py_CLEAR(self->ncov);
    Py_CLEAR(self->weights);
    self->noncart = 0;
    memset(self->image_dims, 0, sizeof self->image_dims);
    memset(&self->claims, 0, sizeof self->claims);
}

static void recon_dealloc(ReconObject *self)
{
    if (self->r) { /* destroying plans is planning too */
        Py_BEGIN_ALLOW_THREADS
        kw_recon_destroy(self->r);
        Py_END_ALLOW_THREADS
        self->r = NULL;
    }
    recon_clear(self);
    if (self->lock)
        PyThread_free_lock(self->lock);
    Py_TYPE(self)->tp_free((PyObject *)self);
}

static int parse_keywords(PyObject *kwargs, recon_args *a)
{
    memset(a, 0, sizeof *a);
    a->lambda = a->stop = a->tolerance = a->oversampling = NAN;
    a->seed = 1;
    const kwpy_kw table[] = {
        {"method", KWPY_STR, &a->method, 0, NULL},
        {"combine", KWPY_STR, &a->combine, 0, NULL},
        {"kernel", KWPY_OBJ, &a->kernel, 0, NULL},
        {"lambda", KWPY_FLOAT, &a->lambda, 0, NULL},
        {"iterations", KWPY_INT, &a->iterations, 0, NULL},
        {"stop", KWPY_FLOAT, &a->stop, 0, NULL},
        {"tolerance", KWPY_FLOAT, &a->tolerance, 0, NULL},
        {"oversampling", KWPY_FLOAT, &a->oversampling, 0, NULL},
        {"replicas", KWPY_INT, &a->replicas, 0, &a->s_rep},
        {"seed", KWPY_INT, &a->seed, 0, NULL},
        {"keep-coils", KWPY_BOOL, &a->keep_coils, 0, NULL},
        {"complex", KWPY_BOOL, &a->complex_image, 0, NULL},
        {"dcf", KWPY_OBJ, &a->dcf, 0, NULL},
        {"gfactor", KWPY_BOOL, &a->gfactor, 0, NULL},
        {"estimate-sens", KWPY_BOOL, &a->estimate_sens, 0, NULL},
        {"trajectory", KWPY_OBJ, &a->traj, 0, NULL},
        {"sens", KWPY_OBJ, &a->sens, 0, NULL},
        {"noise-cov", KWPY_OBJ, &a->ncov, 0, NULL},
        {"weights", KWPY_OBJ, &a->weights, 0, NULL},
        {"acceleration", KWPY_OBJ, &a->accel, 0, NULL},
        {"acs-lines", KWPY_INT, &a->acs_lines, 0, &a->s_acs},
        {"image-shape", KWPY_OBJ, &a->image_shape, 0, NULL},
        {NULL, 0, NULL, 0, NULL}};
    return kwpy_parse_kwargs(kwargs, table, "Recon");
}

static int recon_init(ReconObject *self, PyObject *args, PyObject *kwargs)
{
    PyObject *shape;
    if (!PyArg_ParseTuple(args, "O:Recon", &shape))
        return -1;
    recon_args a;
    if (parse_keywords(kwargs, &a) < 0)
        return -1;
    if (self->r) { /* a run may be going on in another thread */
        PyErr_SetString(PyExc_TypeError, "Recon: already initialised");
        return -1;
    }
    if (!self->lock && !(self->lock = PyThread_allocate_lock())) {
        PyErr_NoMemory();
        return -1;
    }
    recon_clear(self);
    kw_recon_options ro;
    if (options(&a, &ro) < 0 || shape_in(self, shape, &a) < 0 || maps_in(self, &a) < 0 ||
        check_method(self, &a) < 0 || (self->noncart && noncart_in(self, &a) < 0) ||
        (!self->noncart && a.image_shape &&
         (kwpy_value_error("image_shape", "only for non-Cartesian data (give trajectory)"), 1)) ||
        (!self->noncart && claims_in(self, &a) < 0))
        return -1;
    ro.method = self->method;
    if (a.combine) { /* the library keeps the pointer: our copy, not the caller's str */
        snprintf(self->combine, sizeof self->combine, "%s", a.combine);
        ro.combine = self->combine;
    }
    self->want_gfactor = ro.want_gfactor;
    const kw_recon_sampling *claims = (a.accel || a.s_acs) && !self->noncart ? &self->claims : NULL;
    kw_recon_geometry g = {
        .ndim = self->ndim,
        .dims = self->dims,
        .trajectory = self->traj ? PyArray_DATA(self->traj) : NULL,
        .traj_ndim = self->traj ? (int)PyArray_DIM(self->traj, 1) : 0,
        .sens = self->sens ? PyArray_DATA(self->sens) : NULL,
        .sens_ndim = self->sens_ndim,
        .sens_dims = self->sens_dims,
        .noise_cov = self->ncov ? PyArray_DATA(self->ncov) : NULL,
        .image_dims = self->image_dims[0] ? self->image_dims : NULL,
        .weights = self->weights ? PyArray_DATA(self->weights) : NULL,
        .sampling = claims,
    };
    kw_status st;
    kw_recon *r = NULL;
    Py_BEGIN_ALLOW_THREADS
    st = kw_recon_create(&r, &g, &ro);
    Py_END_ALLOW_THREADS
    if (st)
        return recon_fail(st, self->method), -1;
    self->r = r;
    return 0;
}

static int ready(ReconObject *self)
{
    if (!self->r) {
        PyErr_SetString(PyExc_TypeError, "Recon: not initialised");
        return 0;
    }
    return 1;
}

/* What the run leaves beside the image, taken under the object's lock. */
typedef struct run_extras {
    char *json;
    kw_cfloat *sens;
    int sens_ndim;
    size_t sens_dims[4];
    float *w;
    size_t nw;
} run_extras;

/* Copies of the estimated maps and density weights (valid only until the
 * next execute), so that the lock is not held while Python runs. */
static kw_status extras_take(const kw_recon *r, run_extras *x)
{
    const kw_cfloat *s = kw_recon_estimated_sens(r, &x->sens_ndim, x->sens_dims);
    const float *w = kw_recon_density_weights(r, &x->nw);
    if (s) {
        size_t n = 1;
        for (int i = 0; i < x->sens_ndim; i++)
            n *= x->sens_dims[i];
        if (!(x->sens = kw_alloc(n * sizeof *s)))
            return kw_set_error(KW_ENOMEM, "out of memory");
        memcpy(x->sens, s, n * sizeof *s);
    }
    if (w && x->nw) {
        if (!(x->w = kw_alloc(x->nw * sizeof *w)))
            return kw_set_error(KW_ENOMEM, "out of memory");
        memcpy(x->w, w, x->nw * sizeof *w);
    }
    return KW_OK;
}

/* The estimated maps and density weights as new arrays (or None). */
static PyObject *extras_out(const run_extras *x, PyObject **weights)
{
    *weights = NULL;
    PyArrayObject *s = NULL, *w = NULL;
    if (x->sens && !(s = kwpy_array_new(KWPY_C64, x->sens_ndim, x->sens_dims)))
        return NULL;
    if (s)
        memcpy(PyArray_DATA(s), x->sens, (size_t)PyArray_NBYTES(s));
    if (x->w && !(w = kwpy_array_new(KWPY_F32, 1, &x->nw))) {
        Py_XDECREF(s);
        return NULL;
    }
    if (w)
        memcpy(PyArray_DATA(w), x->w, x->nw * sizeof(float));
    *weights = w ? (PyObject *)w : Py_NewRef(Py_None);
    return s ? (PyObject *)s : Py_NewRef(Py_None);
}

static PyObject *recon_run(ReconObject *self, PyObject *obj)
{
    if (!ready(self))
        return NULL;
    PyArrayObject *ks = kspace_in(obj);
    if (!ks)
        return NULL;
    int same = PyArray_NDIM(ks) == (int)PyTuple_GET_SIZE(self->shape);
    for (int i = 0; same && i < PyArray_NDIM(ks); i++)
        same = PyLong_AsSsize_t(PyTuple_GET_ITEM(self->shape, i)) == PyArray_DIM(ks, i);
    if (!same) {
        PyObject *got = PyObject_GetAttrString((PyObject *)ks, "shape");
        PyObject *gs = got ? PyObject_Repr(got) : NULL, *ws = gs ? PyObject_Repr(self->shape) : NULL;
        const char *g = ws ? PyUnicode_AsUTF8(gs) : NULL, *w = g ? PyUnicode_AsUTF8(ws) : NULL;
        if (w)
            kwpy_value_error("kspace", "has the shape %s; this Recon was made for %s", g, w);
        Py_XDECREF(got);
        Py_XDECREF(gs);
        Py_XDECREF(ws);
        Py_DECREF(ks);
        return NULL;
    }
    int nd, cplx, gnd;
    size_t d[4], gd[3];
    kw_recon_image_shape(self->r, &nd, d, &cplx);
    PyArrayObject *img = kwpy_array_new(cplx ? KWPY_C64 : KWPY_F32, nd, d), *gf = NULL;
    if (img && self->want_gfactor) {
        kw_recon_gfactor_shape(self->r, &gnd, gd);
        gf = kwpy_array_new(KWPY_F32, gnd, gd);
    }
    if (!img || (self->want_gfactor && !gf)) {
        Py_DECREF(ks);
        Py_XDECREF(img);
        return NULL;
    }
    kw_status st;
    run_extras x = {0};
    Py_BEGIN_ALLOW_THREADS
    PyThread_acquire_lock(self->lock, WAIT_LOCK);
    st = kw_recon_execute(self->r, PyArray_DATA(ks), PyArray_DATA(img), gf ? PyArray_DATA(gf) : NULL,
                          NULL, NULL);
    if (!st)
        st = kw_recon_report_json(self->r, &x.json);
    if (!st)
        st = extras_take(self->r, &x);
    PyThread_release_lock(self->lock);
    Py_END_ALLOW_THREADS
    Py_DECREF(ks);
    PyObject *fields = NULL, *sens = NULL, *weights = NULL, *report = NULL;
    if (st) {
        recon_fail(st, self->method);
    } else if ((sens = extras_out(&x, &weights))) {
        report = kwpy_json_dict(x.json); /* frees the text in any case */
        x.json = NULL;
    }
    if (report) {
        fields = Py_BuildValue("{s:O,s:O,s:O,s:O,s:O}", "image", img, "gfactor",
                               gf ? (PyObject *)gf : Py_None, "report", report, "sens", sens,
                               "weights", weights);
    }
    kw_free(x.json);
    kw_free(x.sens);
    kw_free(x.w);
    Py_DECREF(img);
    Py_XDECREF(gf);
    Py_XDECREF(sens);
    Py_XDECREF(weights);
    Py_XDECREF(report);
    return fields ? kwpy_namespace(fields) : NULL;
}

static PyObject *recon_get_shape(ReconObject *self, void *closure)
{
    (void)closure;
    return ready(self) ? Py_NewRef(self->shape) : NULL;
}

static PyObject *recon_get_image_shape(ReconObject *self, void *closure)
{
    (void)closure;
    if (!ready(self))
        return NULL;
    int nd, cplx;
    size_t d[4];
    kw_recon_image_shape(self->r, &nd, d, &cplx);
    PyObject *t = PyTuple_New(nd);
    for (int i = 0; t && i < nd; i++)
        PyTuple_SET_ITEM(t, i, PyLong_FromSize_t(d[i]));
    return t;
}

static PyObject *recon_get_method(ReconObject *self, void *closure)
{
    (void)closure;
    return ready(self) ? PyUnicode_FromString(self->method) : NULL;
}

static PyMethodDef recon_methods[] = {
    {"run", (PyCFunction)recon_run, METH_O,
     "run(kspace) -> namespace(image, gfactor, report, sens, weights): reconstruct k-space of\n"
     "the shape the Recon was made for (repeatable with new data)."},
    {NULL, NULL, 0, NULL}};

static PyGetSetDef recon_getset[] = {
    {"shape", (getter)recon_get_shape, NULL, "the k-space shape run() takes", NULL},
    {"image_shape", (getter)recon_get_image_shape, NULL, "the image shape run() returns", NULL},
    {"method", (getter)recon_get_method, NULL, "the method (fft or grid when not given)", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

static PyTypeObject ReconType = {
    PyVarObject_HEAD_INIT(NULL, 0).tp_name = "kweave.Recon",
    .tp_basicsize = sizeof(ReconObject),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_BASETYPE,
    .tp_doc = "Recon(shape, method=None, **options)\n\n"
              "The reconstruction of `kweave recon` (docs/python-acquire-recon.md) for k-space of\n"
              "`shape`: (coils, [nz,] ny, nx) or (ny, nx) Cartesian, (coils, samples) with\n"
              "trajectory=. Geometry: trajectory, sens, noise_cov, weights, acceleration,\n"
              "acs_lines, image_shape; options: method, combine, kernel, lambda, iterations,\n"
              "stop, tolerance, oversampling, replicas, seed, keep_coils, complex, dcf, gfactor,\n"
              "estimate_sens. run(kspace) reconstructs.",
    .tp_new = PyType_GenericNew,
    .tp_init = (initproc)recon_init,
    .tp_dealloc = (destructor)recon_dealloc,
    .tp_methods = recon_methods,
    .tp_getset = recon_getset,
};

static PyObject *py_recon(PyObject *self, PyObject *args, PyObject *kwargs)
{
    (void)self;
    PyObject *obj;
    if (!PyArg_ParseTuple(args, "O:recon", &obj))
        return NULL;
    PyArrayObject *arr = (PyArrayObject *)PyArray_FROM_O(obj);
    if (!arr) {
        PyErr_Clear();
        return kwpy_value_error("kspace", "is not an array of numbers");
    }
    PyObject *shape = PyObject_GetAttrString((PyObject *)arr, "shape");
    PyObject *cargs = shape ? PyTuple_Pack(1, shape) : NULL;
    Py_XDECREF(shape);
    PyObject *r = cargs ? PyObject_Call((PyObject *)&ReconType, cargs, kwargs) : NULL;
    Py_XDECREF(cargs);
    PyObject *out = r ? recon_run((ReconObject *)r, (PyObject *)arr) : NULL;
    Py_XDECREF(r);
    Py_DECREF(arr);
    return out;
}

static PyObject *py_recon_methods(PyObject *self, PyObject *noargs)
{
    (void)self;
    (void)noargs;
    PyObject *list = PyList_New(0);
    for (const kw_recon_method_info *m = kw_recon_methods(); list && m->name; m++) {
        PyObject *d = Py_BuildValue("{s:s,s:O,s:O,s:s}", "name", m->name, "cartesian",
                                    m->cartesian ? Py_True : Py_False, "noncartesian",
                                    m->noncartesian ? Py_True : Py_False, "summary", m->summary);
        if (!d || PyList_Append(list, d) < 0)
            Py_CLEAR(list);
        Py_XDECREF(d);
    }
    return list;
}

static PyMethodDef recon_functions[] = {
    {"recon", (PyCFunction)(void (*)(void))py_recon, METH_VARARGS | METH_KEYWORDS,
     "recon(kspace, **options) -> namespace(image, gfactor, report, sens, weights):\n"
     "Recon(kspace.shape, **options).run(kspace), what `kweave recon` computes."},
    {"recon_methods", py_recon_methods, METH_NOARGS,
     "recon_methods() -> list of dict(name, cartesian, noncartesian, summary): the methods."},
    {NULL, NULL, 0, NULL}};

int kwpy_add_recon(PyObject *m)
{
    if (PyType_Ready(&ReconType) < 0 || PyModule_AddObjectRef(m, "Recon", (PyObject *)&ReconType) < 0)
        return -1;
    return kwpy_add_functions(m, recon_functions);
}
