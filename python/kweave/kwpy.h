/* kwpy.h: what the parts of the kweave Python extension share: numpy
 * arrays in and out, keyword tables with the command's option names and
 * units, library errors raised as Python exceptions, JSON text as dicts.
 * The extension only converts: every computation is a libkweave call. */
#ifndef KWPY_H
#define KWPY_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>

#define NPY_NO_DEPRECATED_API NPY_1_7_API_VERSION
#define PY_ARRAY_UNIQUE_SYMBOL kwpy_ARRAY_API
#ifndef KWPY_MODULE_MAIN
#define NO_IMPORT_ARRAY
#endif
#include <numpy/arrayobject.h>

#include "kw_base.h"
#include "kw_params.h"
#include "kw_protocol.h"
#include "kw_units.h"

/* ---- errors ---------------------------------------------------------------- */

/* kweave.Error (RuntimeError) and kweave.InputError (Error, ValueError). */
extern PyObject *kwpy_Error;
extern PyObject *kwpy_InputError;

/*! kwpy_raise(): raise the exception for a failed library call, carrying
 * kw_last_error() (prefixed "context: " when context is not NULL) and the
 * attributes .status (kw_strerror name) and .param (kw_last_error_param(),
 * or None). Bad input (EINVAL, EFORMAT, ERANGE, EINFEASIBLE, ENUMERIC,
 * ENOTSUP) raises InputError, ENOMEM MemoryError, ECANCELLED
 * KeyboardInterrupt, the rest Error. Returns NULL. */
PyObject *kwpy_raise(kw_status st, const char *context);

/*! kwpy_option_error(): raise InputError("<option>: <reason>") for a failed
 * library call whose parameter maps to `option` (kw_last_error_reason()),
 * with .param = option and .status = the library's. Returns NULL. */
PyObject *kwpy_option_error(kw_status st, const char *option);

/*! kwpy_value_error(): raise InputError("<field>: <why>"); returns NULL. */
PyObject *kwpy_value_error(const char *field, const char *fmt, ...);

/* ---- arrays ---------------------------------------------------------------- */

typedef enum kwpy_elem { KWPY_C64, KWPY_F32, KWPY_U8 } kwpy_elem;

/*! kwpy_array_in(): `obj` as a C-contiguous array of `elem` with ndim in
 * [min_ndim, max_ndim]: the same object (no copy) when it already is one,
 * else a converted copy. Numbers of any numeric dtype are accepted (bool,
 * integers, floats, and complex where complex is wanted); complex into a
 * real array, objects, strings and other dtypes are refused naming `name`.
 * Returns a new reference or NULL with InputError set. */
PyArrayObject *kwpy_array_in(PyObject *obj, kwpy_elem elem, const char *name, int min_ndim,
                             int max_ndim);

/*! kwpy_array_new(): a new zeroed C-contiguous array of elem and dims. */
PyArrayObject *kwpy_array_new(kwpy_elem elem, int ndim, const size_t *dims);

/*! kwpy_dims(): the shape of `a` as size_t[] (at most 8 axes). */
void kwpy_dims(PyArrayObject *a, size_t *dims);

/* ---- keyword tables ------------------------------------------------------- */

typedef enum kwpy_kind {
    KWPY_STR,   /* const char *: a str (valid while the call runs) */
    KWPY_INT,   /* long: an integer (bool refused) */
    KWPY_FLOAT, /* double: a plain number */
    KWPY_UNIT,  /* double, SI: a str with a unit ("256mm") or a number in SI */
    KWPY_BOOL,  /* int: a truth value */
    KWPY_OBJ    /* PyObject *: borrowed (arrays, lists) */
} kwpy_kind;

/* One keyword: `name` is the command's option name ("rf-duration"); the
 * Python keyword is the same with '_' for '-' ("rf_duration"); a trailing
 * '_' is also accepted ("lambda_"). `seen` (optional) is set to 1 when
 * given; None counts as not given. */
typedef struct kwpy_kw {
    const char *name;
    kwpy_kind kind;
    void *dest;
    kw_unit_kind unit;
    int *seen;
} kwpy_kw;

/*! kwpy_parse_kwargs(): apply `kwargs` (may be NULL) to the table; unknown
 * keywords raise TypeError naming `call` and the closest known keyword.
 * Returns 0, or -1 with an exception set. */
int kwpy_parse_kwargs(PyObject *kwargs, const kwpy_kw *table, const char *call);

/*! kwpy_str_value(): `obj` as the text the command line would carry (str
 * as is, int and float in full precision, a sequence joined by `sep`), in
 * buf. Returns 0, or -1 with InputError naming `name`. */
int kwpy_str_value(PyObject *obj, const char *name, const char *sep, char *buf, size_t n);

/*! kwpy_join_values(): `obj` as text: a str or a single value through
 * `one`, a sequence as its items through `one` joined by `sep` (each item
 * at most 127 characters). Returns 0, or -1 with InputError naming `name`. */
int kwpy_join_values(PyObject *obj, const char *name, const char *sep,
                     int (*one)(PyObject *, const char *, char *, size_t), char *buf, size_t n);

/*! kwpy_param_text(): `v` as the text of the library's key `k`
 * (kw_params.h) as the command line would carry it: a str as is; a flag's
 * truth as "1"/"0"; an int as its digits; a float in its shortest exact
 * form; a number of a quantity followed by its SI unit (an angle: degrees,
 * no unit); a sequence joined by 'x' (sizes, numbers) or ',' (quantities).
 * Returns 0, or -1 with InputError naming `name`. */
int kwpy_param_text(PyObject *v, const kw_param_key *k, const char *name, char *buf, size_t n);

/* ---- JSON ------------------------------------------------------------------ */

/*! kwpy_json_dict(): json.loads(text), then kw_free(text); NULL on error. */
PyObject *kwpy_json_dict(char *text);

/*! kwpy_namespace(): types.SimpleNamespace(**fields) (the calls' results:
 * attribute access, a readable repr); steals `fields`; NULL on error. */
PyObject *kwpy_namespace(PyObject *fields);

/* FFTW planning: the library holds its own lock around FFTW's planner
 * (libencode/fft_lock.h), so the parts call it from any thread with the GIL
 * released; each object's own lock keeps one call at a time per object. */

/* ---- protocols (_plan.c) ---------------------------------------------------- */

/*! kwpy_protocol_build(): the protocol of the file `path` (may be NULL) with
 * the keywords vals[k] (NULL: not given) for the keys `keys` (NULL: none)
 * applied over it, as `kweave plan` reads its options; errors name
 * `context` ("protocol", "reference") or the key. 0, or -1 raised. */
int kwpy_protocol_build(PyObject *path, const char *const *keys, PyObject *const *vals,
                        kw_protocol *p, const char *context);

/* The most protocol keys (kw_protocol_keys()) and own options of a call. */
#define KWPY_PROTOCOL_KEYS 32
#define KWPY_CALL_OPTIONS 24

/*! kwpy_protocol_call: what a call taking a protocol was given: the
 * protocol file (one positional argument or protocol=; NULL: none), the
 * reference file (NULL: none), and a value (NULL: not given) for each of
 * the protocol keys `keys` (kw_protocol_keys()). Borrowed references. */
typedef struct kwpy_protocol_call {
    PyObject *protocol, *reference;
    const char *const *keys;
    PyObject *vals[KWPY_PROTOCOL_KEYS];
} kwpy_protocol_call;

/*! kwpy_protocol_call_parse(): `call`'s arguments (one positional protocol,
 * keywords protocol=, reference=, the call's own options `own` (a table
 * ending with a NULL name, at most KWPY_CALL_OPTIONS; may be NULL) and the
 * protocol keys) into *c and the tables' destinations. 0, or -1 raised
 * (TypeError as Python's own calls). */
int kwpy_protocol_call_parse(PyObject *args, PyObject *kwargs, const char *call,
                             const kwpy_kw *own, kwpy_protocol_call *c);

/* ---- the parts -------------------------------------------------------------- */

/* Each part adds its functions and types to the module; 0 or -1. */
int kwpy_add_nufft(PyObject *m);
int kwpy_add_score(PyObject *m);
int kwpy_add_recon(PyObject *m);
int kwpy_add_acquire(PyObject *m);
int kwpy_add_pattern(PyObject *m);
int kwpy_add_plan(PyObject *m);
int kwpy_add_preview(PyObject *m);
int kwpy_add_waveform(PyObject *m);

/*! kwpy_add_functions(): add a NULL-terminated PyMethodDef table. */
int kwpy_add_functions(PyObject *m, PyMethodDef *defs);

#endif
