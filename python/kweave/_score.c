/* _score.c: kweave.score(ref, test) -> dict, as `kweave score --json`
 * (kw_metrics_compute, kw_metrics_json: the keys nrmse, psnr_db, ssim, None
 * where not finite). */
#include "kwpy.h"

#include "kw_metrics.h"

/* ref/test: complex data as complex64, anything else real as float32. */
static PyArrayObject *image_in(PyObject *obj, const char *name, kw_array *a)
{
    PyArrayObject *probe = (PyArrayObject *)PyArray_FROM_O(obj);
    if (!probe) {
        PyErr_Clear();
        return (PyArrayObject *)kwpy_value_error(name, "is not an array of numbers");
    }
    int cplx = PyArray_DESCR(probe)->kind == 'c';
    Py_DECREF(probe);
    PyArrayObject *arr = kwpy_array_in(obj, cplx ? KWPY_C64 : KWPY_F32, name, 1, KW_MAX_DIMS);
    if (!arr)
        return NULL;
    a->dtype = cplx ? KW_C64 : KW_F32;
    a->ndim = PyArray_NDIM(arr);
    kwpy_dims(arr, a->dims);
    a->data = PyArray_DATA(arr);
    kw_status st = kw_array_all_finite(a);
    if (st) {
        Py_DECREF(arr);
        return (PyArrayObject *)kwpy_raise(st, name);
    }
    return arr;
}

static PyObject *py_score(PyObject *self, PyObject *args, PyObject *kwargs)
{
    (void)self;
    static char *names[] = {"ref", "test", NULL};
    PyObject *ro, *to;
    if (!PyArg_ParseTupleAndKeywords(args, kwargs, "OO:score", names, &ro, &to))
        return NULL;
    kw_array a = {0}, b = {0};
    PyArrayObject *ra = image_in(ro, "ref", &a);
    if (!ra)
        return NULL;
    PyArrayObject *ta = image_in(to, "test", &b);
    if (!ta) {
        Py_DECREF(ra);
        return NULL;
    }
    kw_scores s;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_metrics_compute(&a, &b, &s);
    Py_END_ALLOW_THREADS
    Py_DECREF(ra);
    Py_DECREF(ta);
    if (st) /* as the command: a shape mismatch names the test, the rest the ref */
        return kwpy_raise(st, st == KW_EFORMAT ? "test" : "ref");
    char *json = NULL;
    if ((st = kw_metrics_json(&s, &json)))
        return kwpy_raise(st, NULL);
    return kwpy_json_dict(json);
}

static PyMethodDef score_methods[] = {
    {"score", (PyCFunction)(void (*)(void))py_score, METH_VARARGS | METH_KEYWORDS,
     "score(ref, test) -> dict: NRMSE, PSNR (dB) and SSIM of |test| against |ref|,\n"
     "the keys of `kweave score --json` (nrmse, psnr_db, ssim; None where not finite)."},
    {NULL, NULL, 0, NULL}};

int kwpy_add_score(PyObject *m) { return kwpy_add_functions(m, score_methods); }
