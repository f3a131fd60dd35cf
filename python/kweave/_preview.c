/* _preview.c: kweave.preview(protocol=None, reference=None, **keys) -> dict:
 * the report `kweave preview --json` writes (recon/kw_preview.h), with the
 * scenario's image as a numpy array under "image". The protocol is read as
 * plan() reads it (kwpy_protocol_build: the command's protocol keys, texts
 * with units, its messages); a reference protocol adds the SNR ratio and,
 * as the command does, its own effects under "reference_preview". */
#include "kwpy.h"

#include <string.h>

#include "kw_plan_input.h"
#include "kw_preview.h"

#define MAX_KEYS 32

/* One preview run of protocol p (reference r, may be NULL): its report as a
 * dict with "image"; NULL raised. */
static PyObject *one_run(const kw_preview_options *base, const kw_protocol *p,
                         const kw_protocol *r, const char *context)
{
    kw_preview_options o = *base;
    o.protocol = p;
    o.reference = r;
    kw_preview *pv = NULL;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_preview_create(&pv, &o);
    if (!st)
        st = kw_preview_execute(pv, NULL, NULL);
    Py_END_ALLOW_THREADS
    if (st) {
        kw_preview_destroy(pv);
        return kwpy_raise(st, context);
    }
    char *json = NULL;
    st = kw_preview_report_json(pv, &json);
    if (st) {
        kw_preview_destroy(pv);
        return kwpy_raise(st, context);
    }
    PyObject *d = kwpy_json_dict(json);
    const kw_preview_result *res = kw_preview_get_result(pv);
    PyArrayObject *img = d && res ? kwpy_array_new(KWPY_F32, 2, res->dims) : NULL;
    if (img)
        memcpy(PyArray_DATA(img), res->image, res->dims[0] * res->dims[1] * sizeof(float));
    kw_preview_destroy(pv);
    if (!img || PyDict_SetItemString(d, "image", (PyObject *)img) < 0) {
        Py_XDECREF(img);
        Py_XDECREF(d);
        return NULL;
    }
    Py_DECREF(img);
    return d;
}

static PyObject *py_preview(PyObject *self, PyObject *args, PyObject *kwargs)
{
    (void)self;
    const char *const *keys = kw_protocol_keys();
    PyObject *vals[MAX_KEYS] = {0};
    PyObject *protocol = NULL, *reference = NULL;
    kw_preview_options o;
    kw_preview_options_init(&o);
    long replicas = o.replicas, seed = (long)o.seed;
    int s_rep = 0, s_seed = 0;
    kwpy_kw table[MAX_KEYS + 16];
    int n = 0;
    table[n++] = (kwpy_kw){"protocol", KWPY_OBJ, &protocol, KW_UNIT_NONE, NULL};
    table[n++] = (kwpy_kw){"reference", KWPY_OBJ, &reference, KW_UNIT_NONE, NULL};
    table[n++] = (kwpy_kw){"bump", KWPY_UNIT, &o.bump_hz, KW_UNIT_FREQUENCY, NULL};
    table[n++] = (kwpy_kw){"flip", KWPY_UNIT, &o.flip_rad, KW_UNIT_ANGLE, NULL};
    table[n++] = (kwpy_kw){"fat-tolerance", KWPY_FLOAT, &o.fat_tolerance_px, KW_UNIT_NONE, NULL};
    table[n++] = (kwpy_kw){"bump-tolerance", KWPY_FLOAT, &o.bump_tolerance, KW_UNIT_NONE, NULL};
    table[n++] = (kwpy_kw){"blur-tolerance", KWPY_FLOAT, &o.blur_tolerance, KW_UNIT_NONE, NULL};
    table[n++] = (kwpy_kw){"replicas", KWPY_INT, &replicas, KW_UNIT_NONE, &s_rep};
    table[n++] = (kwpy_kw){"seed", KWPY_INT, &seed, KW_UNIT_NONE, &s_seed};
    table[n++] = (kwpy_kw){"snr-tolerance", KWPY_FLOAT, &o.snr_tolerance, KW_UNIT_NONE, NULL};
    table[n++] = (kwpy_kw){"edge-tolerance", KWPY_FLOAT, &o.edge_tolerance, KW_UNIT_NONE, NULL};
    for (int k = 0; keys[k] && k < MAX_KEYS; k++)
        table[n++] = (kwpy_kw){keys[k], KWPY_OBJ, &vals[k], KW_UNIT_NONE, NULL};
    table[n] = (kwpy_kw){NULL, 0, NULL, 0, NULL};
    Py_ssize_t npos = PyTuple_GET_SIZE(args);
    if (npos > 1)
        return PyErr_Format(PyExc_TypeError,
                            "preview() takes one positional argument (protocol), %zd given", npos);
    if (kwpy_parse_kwargs(kwargs, table, "preview") < 0)
        return NULL;
    if (npos == 1) {
        if (protocol)
            return PyErr_Format(PyExc_TypeError, "preview() got multiple values for 'protocol'");
        protocol = PyTuple_GET_ITEM(args, 0) == Py_None ? NULL : PyTuple_GET_ITEM(args, 0);
    }
    if (s_rep && (replicas < 2 || replicas > 10000)) /* the command's messages */
        return kwpy_value_error("replicas", "must be 2 .. 10000 (got %ld)", replicas);
    if (s_seed && seed < 0)
        return kwpy_value_error("seed", "must be >= 0 (got %ld)", seed);
    o.replicas = (int)replicas;
    o.seed = (uint64_t)seed;
    kw_protocol p, r;
    if (kwpy_protocol_build(protocol, keys, vals, &p, "protocol") < 0)
        return NULL;
    if (reference && kwpy_protocol_build(reference, NULL, NULL, &r, "reference") < 0)
        return NULL;
    PyObject *d = one_run(&o, &p, reference ? &r : NULL, NULL);
    if (!d || !reference)
        return d;
    PyObject *rd = one_run(&o, &r, NULL, "reference"); /* its own effects, side by side */
    if (!rd || PyDict_SetItemString(d, "reference_preview", rd) < 0) {
        Py_XDECREF(rd);
        Py_DECREF(d);
        return NULL;
    }
    Py_DECREF(rd);
    return d;
}

static PyMethodDef preview_methods[] = {
    {"preview", (PyCFunction)(void (*)(void))py_preview, METH_VARARGS | METH_KEYWORDS,
     "preview(protocol=None, reference=None, **keys) -> dict: the report of `kweave\n"
     "preview --json` (the planner's predictions for the protocol measured on a\n"
     "simulated image: \"effects\" with predicted, measured, difference, tolerance,\n"
     "verdict; \"all_pass\"; \"safety_caution\"), with the scenario's magnitude image\n"
     "under \"image\" (float32, ny x nx). `protocol`: a protocol file whose keys the\n"
     "keywords override (the keys of plan()); `reference`: a protocol file: the SNR\n"
     "ratio by pseudo-replicas, and its own report under \"reference_preview\".\n"
     "bump (field bump, \"100Hz\"), flip, replicas, seed and the tolerances as\n"
     "the command's options. See docs/preview.md."},
    {NULL, NULL, 0, NULL}};

int kwpy_add_preview(PyObject *m) { return kwpy_add_functions(m, preview_methods); }
