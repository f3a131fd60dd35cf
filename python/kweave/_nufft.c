/* _nufft.c: kweave.Nufft: the non-uniform FFT of libkweave (kw_nufft.h) as
 * an operator object with forward() and adjoint() on numpy arrays; the
 * scipy LinearOperator view is made in Python (kweave/__init__.py). One
 * call at a time per object (a lock); the GIL is released while it runs. */
#include "kwpy.h"

#include <pythread.h>
#include <string.h>

#include "kw_nufft.h"

typedef struct {
    PyObject_HEAD
    kw_nufft_plan *plan;
    PyThread_type_lock lock;
    int ndim;
    size_t dims[3];
    size_t nsamples;
} NufftObject;

static void nufft_dealloc(NufftObject *self)
{
    if (self->plan) { /* the library locks its planner (destroying plans) */
        Py_BEGIN_ALLOW_THREADS
        kw_nufft_destroy(self->plan);
        Py_END_ALLOW_THREADS
    }
    if (self->lock)
        PyThread_free_lock(self->lock);
    Py_TYPE(self)->tp_free((PyObject *)self);
}

static int nufft_init(NufftObject *self, PyObject *args, PyObject *kwargs)
{
    static char *names[] = {"trajectory", "shape", "tolerance", "oversampling", "threads",
                            "measure", NULL};
    PyObject *to, *so;
    double tol = 1e-3, os = 2.0;
    int threads = 0, measure = 0;
    if (!PyArg_ParseTupleAndKeywords(args, kwargs, "OO|ddip:Nufft", names, &to, &so, &tol, &os,
                                     &threads, &measure))
        return -1;
    if (self->plan) {
        PyErr_SetString(PyExc_TypeError, "Nufft: already initialised");
        return -1;
    }
    PyObject *seq = PySequence_Fast(so, "shape: a tuple (ny, nx) or (nz, ny, nx)");
    if (!seq)
        return -1;
    Py_ssize_t nd = PySequence_Fast_GET_SIZE(seq);
    if (nd != 2 && nd != 3) {
        Py_DECREF(seq);
        kwpy_value_error("shape", "has %zd sizes; (ny, nx) or (nz, ny, nx) expected", nd);
        return -1;
    }
    for (Py_ssize_t i = 0; i < nd; i++) {
        long v = PyLong_AsLong(PySequence_Fast_GET_ITEM(seq, i));
        if (v == -1 && PyErr_Occurred()) {
            Py_DECREF(seq);
            return -1;
        }
        if (v < 1) {
            Py_DECREF(seq);
            kwpy_value_error("shape", "sizes must be positive (got %ld)", v);
            return -1;
        }
        self->dims[i] = (size_t)v;
    }
    Py_DECREF(seq);
    self->ndim = (int)nd;
    PyArrayObject *tr = kwpy_array_in(to, KWPY_F32, "trajectory", 2, 2);
    if (!tr)
        return -1;
    if (PyArray_DIM(tr, 1) != nd) {
        Py_DECREF(tr);
        kwpy_value_error("trajectory", "has %ld columns; %zd (one per image axis, x first) expected",
                         (long)PyArray_DIM(tr, 1), nd);
        return -1;
    }
    self->nsamples = (size_t)PyArray_DIM(tr, 0);
    kw_nufft_options o;
    kw_nufft_options_init(&o);
    o.tolerance = tol;
    o.oversampling = os;
    o.nthreads = threads;
    o.measure = measure;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_nufft_create(&self->plan, self->ndim, self->dims, self->nsamples, PyArray_DATA(tr), &o);
    Py_END_ALLOW_THREADS
    Py_DECREF(tr);
    if (st)
        return kwpy_raise(st, NULL), -1;
    self->lock = PyThread_allocate_lock();
    if (!self->lock) {
        PyErr_NoMemory();
        return -1;
    }
    return 0;
}

static int ready(NufftObject *self)
{
    if (!self->plan) {
        PyErr_SetString(PyExc_TypeError, "Nufft: not initialised");
        return 0;
    }
    return 1;
}

/* Run forward (dir 0) or adjoint (dir 1) on `obj`. */
static PyObject *apply(NufftObject *self, PyObject *obj, int dir)
{
    if (!ready(self))
        return NULL;
    const char *name = dir ? "kspace" : "image";
    int core = dir ? 1 : self->ndim; /* axes of one coil */
    PyArrayObject *in = kwpy_array_in(obj, KWPY_C64, name, core, core + 1);
    if (!in)
        return NULL;
    int nd = PyArray_NDIM(in), batched = nd == core + 1;
    size_t batch = batched ? (size_t)PyArray_DIM(in, 0) : 1;
    for (int i = 0; i < core; i++) {
        size_t want = dir ? self->nsamples : self->dims[i];
        size_t got = (size_t)PyArray_DIM(in, i + batched);
        if (got != want) {
            Py_DECREF(in);
            return kwpy_value_error(name, "axis %d has %zu points; the operator's %s is %zu", i + batched,
                                    got, dir ? "sample count" : "image size", want);
        }
    }
    size_t od[4];
    int ond = 0;
    if (batched)
        od[ond++] = batch;
    if (dir) {
        for (int i = 0; i < self->ndim; i++)
            od[ond++] = self->dims[i];
    } else {
        od[ond++] = self->nsamples;
    }
    PyArrayObject *out = kwpy_array_new(KWPY_C64, ond, od);
    if (!out) {
        Py_DECREF(in);
        return NULL;
    }
    kw_status st = KW_OK;
    if (batch > 0) {
        Py_BEGIN_ALLOW_THREADS
        PyThread_acquire_lock(self->lock, WAIT_LOCK);
        st = dir ? kw_nufft_adjoint(self->plan, PyArray_DATA(in), PyArray_DATA(out), batch)
                 : kw_nufft_forward(self->plan, PyArray_DATA(in), PyArray_DATA(out), batch);
        PyThread_release_lock(self->lock);
        Py_END_ALLOW_THREADS
    }
    Py_DECREF(in);
    if (st) {
        Py_DECREF(out);
        return kwpy_raise(st, NULL);
    }
    return (PyObject *)out;
}

static PyObject *nufft_forward(NufftObject *self, PyObject *obj) { return apply(self, obj, 0); }
static PyObject *nufft_adjoint(NufftObject *self, PyObject *obj) { return apply(self, obj, 1); }

static PyObject *nufft_get_shape(NufftObject *self, void *closure)
{
    (void)closure;
    if (!ready(self))
        return NULL;
    return self->ndim == 2 ? Py_BuildValue("(nn)", (Py_ssize_t)self->dims[0], (Py_ssize_t)self->dims[1])
                           : Py_BuildValue("(nnn)", (Py_ssize_t)self->dims[0],
                                           (Py_ssize_t)self->dims[1], (Py_ssize_t)self->dims[2]);
}

static PyObject *nufft_get_nsamples(NufftObject *self, void *closure)
{
    (void)closure;
    if (!ready(self))
        return NULL;
    return PyLong_FromSize_t(self->nsamples);
}

static PyObject *nufft_get_info(NufftObject *self, void *closure)
{
    (void)closure;
    if (!ready(self))
        return NULL;
    kw_nufft_info in;
    kw_status st = kw_nufft_get_info(self->plan, &in);
    if (st)
        return kwpy_raise(st, NULL);
    PyObject *grid = in.ndim == 2 ? Py_BuildValue("(nn)", (Py_ssize_t)in.grid[0], (Py_ssize_t)in.grid[1])
                                  : Py_BuildValue("(nnn)", (Py_ssize_t)in.grid[0],
                                                  (Py_ssize_t)in.grid[1], (Py_ssize_t)in.grid[2]);
    if (!grid)
        return NULL;
    return Py_BuildValue("{s:N,s:d,s:i,s:d,s:d,s:n,s:i}", "grid", grid, "oversampling",
                         in.oversampling, "width", in.width, "beta", in.beta, "tolerance",
                         in.tolerance, "tiles", (Py_ssize_t)in.ntiles, "threads", in.nthreads);
}

static PyMethodDef nufft_methods[] = {
    {"forward", (PyCFunction)nufft_forward, METH_O,
     "forward(image) -> kspace: image (shape) or (coils,) + shape -> (samples,) or (coils, samples)."},
    {"adjoint", (PyCFunction)nufft_adjoint, METH_O,
     "adjoint(kspace) -> image: the exact adjoint of forward()."},
    {NULL, NULL, 0, NULL}};

static PyGetSetDef nufft_getset[] = {
    {"shape", (getter)nufft_get_shape, NULL, "image shape (C order)", NULL},
    {"nsamples", (getter)nufft_get_nsamples, NULL, "number of trajectory points", NULL},
    {"info", (getter)nufft_get_info, NULL,
     "what the plan chose: grid, oversampling, width, beta, tolerance, tiles, threads", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

static PyTypeObject NufftType = {
    PyVarObject_HEAD_INIT(NULL, 0).tp_name = "kweave.Nufft",
    .tp_basicsize = sizeof(NufftObject),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_BASETYPE,
    .tp_doc = "Nufft(trajectory, shape, tolerance=1e-3, oversampling=2.0, threads=0, measure=False)\n\n"
              "The centred unitary NUFFT (docs/api.md): trajectory (samples, ndim) in cycles/FOV,\n"
              "column 0 = x; shape (ny, nx) or (nz, ny, nx). forward(image) and adjoint(kspace)\n"
              "take one coil or a leading coil axis.",
    .tp_new = PyType_GenericNew,
    .tp_init = (initproc)nufft_init,
    .tp_dealloc = (destructor)nufft_dealloc,
    .tp_methods = nufft_methods,
    .tp_getset = nufft_getset,
};

int kwpy_add_nufft(PyObject *m)
{
    if (PyType_Ready(&NufftType) < 0)
        return -1;
    return PyModule_AddObjectRef(m, "Nufft", (PyObject *)&NufftType);
}
