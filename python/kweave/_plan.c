/* _plan.c: kweave.plan(protocol=None, reference=None, **keys) -> dict: the
 * report `kweave plan --json` writes, over libencode/kw_plan_input.h (the
 * command's protocol keys, their texts with units, its messages) and
 * kw_plan_create(). The protocol files are read here (the library reads no
 * files), with the command's messages. */
#include "kwpy.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "kw_plan_input.h"
#include "kw_sequence.h"

#define PROTOCOL_MAX_BYTES (1 << 20) /* as the command's protocol files */

/* ---- values as the command line's texts -------------------------------------------------- */

/* the SI unit a number given for `key` is in (NULL: a count or a plain number) */
static kw_unit_kind key_unit(const char *key)
{
    static const struct {
        const char *key;
        kw_unit_kind unit;
    } units[] = {
        {"fov", KW_UNIT_LENGTH},        {"slice", KW_UNIT_LENGTH},
        {"bandwidth", KW_UNIT_FREQUENCY}, {"b0", KW_UNIT_FIELD},
        {"gmax", KW_UNIT_GRADIENT},     {"slew", KW_UNIT_SLEW},
        {"raster", KW_UNIT_TIME},       {"te", KW_UNIT_TIME},
        {"tr", KW_UNIT_TIME},           {"rf-duration", KW_UNIT_TIME},
        {"t2star", KW_UNIT_TIME},       {"max-readout", KW_UNIT_TIME},
        {"temperature", KW_UNIT_TEMPERATURE},
    };
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++)
        if (strcmp(units[i].key, key) == 0)
            return units[i].unit;
    return KW_UNIT_NONE;
}

/* One value as text: a str as is; an int as its digits, a float in its
 * shortest exact form, either followed by the key's SI unit ("0.256m"). */
static int one_text(PyObject *v, const char *key, char *buf, size_t n)
{
    if (PyUnicode_Check(v) || PyBool_Check(v))
        return kwpy_str_value(v, key, "", buf, n);
    if (PyIndex_Check(v)) { /* an int: its digits, and the key's SI unit */
        char digits[96];
        if (kwpy_str_value(v, key, "", digits, sizeof digits) < 0)
            return -1;
        int w = snprintf(buf, n, "%s%s", digits, kw_unit_name(key_unit(key)));
        return w < 0 || (size_t)w >= n ? (kwpy_value_error(key, "value too long"), -1) : 0;
    }
    if (!PyNumber_Check(v)) {
        kwpy_value_error(key, "must be a str with a unit or a number in SI units");
        return -1;
    }
    double x = PyFloat_AsDouble(v);
    if (x == -1.0 && PyErr_Occurred())
        return -1;
    char *num = PyOS_double_to_string(x, 'r', 0, 0, NULL);
    if (!num)
        return -1;
    int w = snprintf(buf, n, "%s%s", num, kw_unit_name(key_unit(key)));
    PyMem_Free(num);
    if (w < 0 || (size_t)w >= n) {
        kwpy_value_error(key, "value too long");
        return -1;
    }
    return 0;
}

/* `v` as the text of `key`: a sequence is joined, "x" for the matrix and ","
 * for the FOV (as "256x192", "256mm,192mm"); ints in a plain number's place
 * and a number of any key with a unit as SI. */
static int key_text(PyObject *v, const char *key, char *buf, size_t n)
{
    return kwpy_join_values(v, key, strcmp(key, "matrix") == 0 ? "x" : ",", one_text, buf, n);
}

/* ---- protocol files ---------------------------------------------------------------------- */

/* Read the protocol file `path` into `in` (messages as the command's,
 * under `context`: "protocol" or "reference"). 0 or -1 (raised). */
static int read_protocol(kw_protocol_input *in, PyObject *path, const char *context)
{
    PyObject *bytes = NULL;
    if (!PyUnicode_FSConverter(path, &bytes))
        return -1;
    const char *p = PyBytes_AS_STRING(bytes);
    if (!*p) {
        Py_DECREF(bytes);
        return kwpy_value_error(context, "protocol: no file name"), -1;
    }
    char *buf = NULL;
    size_t n = 0;
    int err = 0, open_errno = 0;
    Py_BEGIN_ALLOW_THREADS
    FILE *f = fopen(p, "rb");
    if (!f) {
        open_errno = errno;
    } else {
        buf = malloc(PROTOCOL_MAX_BYTES + 1);
        if (buf) {
            errno = 0;
            n = fread(buf, 1, PROTOCOL_MAX_BYTES + 1, f);
            err = ferror(f) ? (errno ? errno : EIO) : 0;
        }
        fclose(f);
    }
    Py_END_ALLOW_THREADS
    int rc = -1;
    if (open_errno)
        kwpy_value_error(context, "%s: %s", p, strerror(open_errno));
    else if (!buf)
        PyErr_NoMemory();
    else if (err)
        kwpy_value_error(context, "%s: cannot be read (%s)", p, /* as the command's */
                         err == EISDIR ? "is a directory" : strerror(err));
    else if (n > PROTOCOL_MAX_BYTES)
        kwpy_value_error(context, "%s: larger than 1 MiB", p);
    else {
        kw_status st = kw_protocol_input_parse(in, buf, n);
        rc = st ? (kwpy_raise(st, context), -1) : 0;
    }
    free(buf);
    Py_DECREF(bytes);
    return rc;
}

/* ---- the keys -------------------------------------------------------------------------- */

/* bandwidth: one text, or two (across the FOV and per pixel), replacing
 * the file's, as the command's --bandwidth given once or twice */
static int set_bandwidth(kw_protocol_input *in, PyObject *v)
{
    PyObject *items[2] = {v, NULL};
    Py_ssize_t count = 1;
    PyObject *seq = NULL;
    if (!PyUnicode_Check(v) && PySequence_Check(v)) {
        seq = PySequence_Fast(v, "bandwidth");
        if (!seq)
            return -1;
        count = PySequence_Fast_GET_SIZE(seq);
        if (count > 2 || count < 1) {
            Py_DECREF(seq);
            return kwpy_value_error("bandwidth", count ? "given more than twice"
                                                       : "missing value"), -1;
        }
        for (Py_ssize_t i = 0; i < count; i++)
            items[i] = PySequence_Fast_GET_ITEM(seq, i);
    }
    kw_status st = kw_protocol_input_clear(in, "bandwidth");
    int rc = st ? (kwpy_raise(st, NULL), -1) : 0;
    for (Py_ssize_t i = 0; i < count && rc == 0; i++) {
        char text[256];
        if (one_text(items[i], "bandwidth", text, sizeof text) < 0)
            rc = -1;
        else if ((st = kw_protocol_input_set(in, "bandwidth", text)))
            rc = (kwpy_raise(st, NULL), -1);
    }
    Py_XDECREF(seq);
    return rc;
}

/* the keywords onto `in`, in the order of kw_protocol_keys() (the command's) */
static int set_keys(kw_protocol_input *in, const char *const *keys, PyObject *const *vals)
{
    for (int k = 0; keys[k] && k < KWPY_PROTOCOL_KEYS; k++) {
        if (!vals[k])
            continue;
        if (strcmp(keys[k], "bandwidth") == 0) {
            if (set_bandwidth(in, vals[k]) < 0)
                return -1;
            continue;
        }
        char text[512];
        if (key_text(vals[k], keys[k], text, sizeof text) < 0)
            return -1;
        kw_status st = kw_protocol_input_set(in, keys[k], text);
        if (st)
            return kwpy_raise(st, NULL), -1;
    }
    return 0;
}

int kwpy_protocol_build(PyObject *path, const char *const *keys, PyObject *const *vals,
                        kw_protocol *p, const char *context)
{
    kw_protocol_input *in = NULL;
    kw_status st = kw_protocol_input_create(&in);
    if (st)
        return kwpy_raise(st, context), -1;
    int rc = path ? read_protocol(in, path, context) : 0;
    if (!rc && keys && set_keys(in, keys, vals) < 0)
        rc = -1;
    if (!rc && (st = kw_protocol_input_finish(in, p)))
        rc = (kwpy_raise(st, keys ? NULL : context), -1);
    kw_protocol_input_destroy(in);
    return rc;
}

int kwpy_protocol_call_parse(PyObject *args, PyObject *kwargs, const char *call,
                             const kwpy_kw *own, kwpy_protocol_call *c)
{
    memset(c, 0, sizeof *c);
    c->keys = kw_protocol_keys();
    kwpy_kw table[KWPY_CALL_OPTIONS + KWPY_PROTOCOL_KEYS + 3];
    int n = 0;
    table[n++] = (kwpy_kw){"protocol", KWPY_OBJ, &c->protocol, KW_UNIT_NONE, NULL};
    table[n++] = (kwpy_kw){"reference", KWPY_OBJ, &c->reference, KW_UNIT_NONE, NULL};
    for (int k = 0; own && own[k].name && k < KWPY_CALL_OPTIONS; k++)
        table[n++] = own[k];
    for (int k = 0; c->keys[k] && k < KWPY_PROTOCOL_KEYS; k++)
        table[n++] = (kwpy_kw){c->keys[k], KWPY_OBJ, &c->vals[k], KW_UNIT_NONE, NULL};
    table[n] = (kwpy_kw){NULL, 0, NULL, 0, NULL};
    Py_ssize_t npos = PyTuple_GET_SIZE(args);
    if (npos > 1) {
        PyErr_Format(PyExc_TypeError, "%s() takes one positional argument (protocol), %zd given",
                     call, npos);
        return -1;
    }
    if (kwpy_parse_kwargs(kwargs, table, call) < 0)
        return -1;
    if (npos == 1) {
        if (c->protocol) {
            PyErr_Format(PyExc_TypeError, "%s() got multiple values for 'protocol'", call);
            return -1;
        }
        PyObject *a = PyTuple_GET_ITEM(args, 0);
        c->protocol = a == Py_None ? NULL : a;
    }
    return 0;
}

/* ---- plan() -------------------------------------------------------------------------------- */

/* the reference protocol's SNR factor (0 when none) */
static int reference_factor(PyObject *reference, double *factor)
{
    *factor = 0;
    if (!reference)
        return 0;
    kw_protocol p;
    if (kwpy_protocol_build(reference, NULL, NULL, &p, "reference") < 0)
        return -1;
    kw_plan_report *r = NULL;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_plan_create(&r, &p);
    Py_END_ALLOW_THREADS
    if (st)
        return kwpy_raise(st, "reference"), -1;
    *factor = r->snr_factor;
    kw_plan_destroy(r);
    return 0;
}

static PyObject *py_plan(PyObject *self, PyObject *args, PyObject *kwargs)
{
    (void)self;
    kwpy_protocol_call c;
    if (kwpy_protocol_call_parse(args, kwargs, "plan", NULL, &c) < 0)
        return NULL;
    kw_protocol p;
    if (kwpy_protocol_build(c.protocol, c.keys, c.vals, &p, "protocol") < 0)
        return NULL;
    double ref = 0;
    if (reference_factor(c.reference, &ref) < 0)
        return NULL;
    kw_plan_report *r = NULL;
    kw_status st;
    Py_BEGIN_ALLOW_THREADS
    st = kw_plan_create(&r, &p);
    Py_END_ALLOW_THREADS
    if (st)
        return kwpy_raise(st, "plan");
    char *json = NULL;
    st = kw_plan_report_json(r, ref, &json);
    kw_plan_destroy(r);
    if (st)
        return kwpy_raise(st, "plan");
    return kwpy_json_dict(json);
}

static PyObject *py_protocol_keys(PyObject *self, PyObject *noargs)
{
    (void)self;
    (void)noargs;
    const char *const *keys = kw_protocol_keys();
    PyObject *t = PyList_New(0);
    for (int k = 0; t && keys[k]; k++) {
        char py[64];
        size_t i = 0;
        for (; keys[k][i] && i + 1 < sizeof py; i++)
            py[i] = keys[k][i] == '-' ? '_' : keys[k][i];
        py[i] = '\0';
        PyObject *s = PyUnicode_FromString(py);
        if (!s || PyList_Append(t, s) < 0) {
            Py_XDECREF(s);
            Py_CLEAR(t);
            break;
        }
        Py_DECREF(s);
    }
    if (!t)
        return NULL;
    PyObject *r = PyList_AsTuple(t);
    Py_DECREF(t);
    return r;
}

static PyMethodDef plan_methods[] = {
    {"plan", (PyCFunction)(void (*)(void))py_plan, METH_VARARGS | METH_KEYWORDS,
     "plan(protocol=None, reference=None, **keys) -> dict: the report of `kweave plan\n"
     "--json` (limits, timing, \"feasible\", \"safety_caution\"). `protocol`: a protocol\n"
     "file whose keys the keywords override; `reference`: a protocol file for\n"
     "\"relative_snr\". Keys as the command's options ('-' written '_'), values as\n"
     "texts with units (\"256mm\", \"3T\") or numbers in SI units; matrix=(256, 192),\n"
     "fov=(\"256mm\", \"192mm\"), bandwidth=\"32kHz\" or (\"32kHz\", \"125Hz/pixel\").\n"
     "An infeasible protocol returns its report with \"feasible\": False.\n"
     "See docs/python-pattern-plan.md."},
    {"protocol_keys", py_protocol_keys, METH_NOARGS,
     "protocol_keys() -> tuple: the keywords plan() takes besides protocol/reference."},
    {NULL, NULL, 0, NULL}};

int kwpy_add_plan(PyObject *m) { return kwpy_add_functions(m, plan_methods); }
