/* _acquire.c: kweave.Acquisition and kweave.acquire(): the simulated
 * acquisition of libencode/kw_acquire.h, as `kweave encode` makes it. The
 * keywords are the command's options ('_' for '-'), checked with the
 * command's rules and messages (cli/cmd_encode.c); the options that name
 * input files there take arrays here (mask, trajectory, times, sens,
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

#define MAX_EDGE 8192

/* The keywords as given (the command's enc_args). */
typedef struct acq_args {
    const char *phantom, *sequence;
    PyObject *matrix, *fov, *bandwidth, *field_grad, *flip, *tissue;
    PyObject *mask, *traj, *times, *sens, *ncov, *fmap, *max_memory;
    double snr, te, tr, ti, b0, df, coil_radius, coil_distance, coil_ring_gap, noise_corr;
    double slice_thk, slice_gap;
    long seed, coils, coil_order, coil_order_z, coil_rings, slices, slice_points;
    int s_ph, s_mx, s_fov, s_snr, s_seed, s_seq, s_te, s_tr, s_ti, s_flip, s_b0, s_bw, s_df;
    int s_coils, s_cr, s_cd, s_co, s_coz, s_crings, s_crgap, s_sens, s_pat, s_traj, s_times;
    int s_ncorr, s_ncov, s_fmap, s_fgrad, s_tissue, s_sl, s_slt, s_slg, s_slp, s_mem;
} acq_args;

typedef struct {
    PyObject_HEAD
    kw_acquisition *acq;
    PyThread_type_lock lock;
    /* what the options point to, owned here */
    PyArrayObject *traj, *sens, *fmap;
    uint8_t *mask;
    double *times;
    kw_cdouble *ncov;
    kw_tissue_values tissues[KW_TISSUE_COUNT];
} AcqObject;

/* ---- keyword values ------------------------------------------------------- */

/* One to `max` quantities of `kind`: "256mm,200mm", a number (SI) or a
 * sequence of str and numbers. Returns the count or -1 (InputError). */
static int unit_list(PyObject *v, kw_unit_kind kind, double *out, int max, const char *name)
{
    char why[200];
    if (PyUnicode_Check(v)) {
        const char *s = PyUnicode_AsUTF8(v);
        if (!s)
            return -1;
        int k = kw_unit_parse_list(s, kind, out, max, why, sizeof why);
        if (k < 0)
            kwpy_value_error(name, "%s", why);
        return k;
    }
    PyObject *seq = PySequence_Check(v) ? PySequence_Fast(v, name) : NULL;
    if (!seq && PyErr_Occurred())
        return -1;
    Py_ssize_t n = seq ? PySequence_Fast_GET_SIZE(seq) : 1;
    if (n < 1 || n > max) {
        Py_XDECREF(seq);
        if (max == 1)
            kwpy_value_error(name, "expected one value (got %zd)", n);
        else
            kwpy_value_error(name, "expected 1 to %d values (got %zd)", max, n);
        return -1;
    }
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *it = seq ? PySequence_Fast_GET_ITEM(seq, i) : v;
        const char *s = PyUnicode_Check(it) ? PyUnicode_AsUTF8(it) : NULL;
        if (s && kw_unit_parse(s, kind, &out[i], why, sizeof why)) {
            kwpy_value_error(name, "%s", why);
            s = NULL;
            n = -1;
        } else if (!s && !PyErr_Occurred() && (PyBool_Check(it) || !PyNumber_Check(it))) {
            kwpy_value_error(name, "must be a str with units, a number in %s, or a sequence of them",
                             kw_unit_name(kind));
            n = -1;
        } else if (!s && !PyErr_Occurred()) {
            out[i] = PyFloat_AsDouble(it);
        }
        if (n < 0 || PyErr_Occurred()) {
            Py_XDECREF(seq);
            return -1;
        }
    }
    Py_XDECREF(seq);
    return (int)n;
}

/* "256" / "256x192" / "64x64x16" -> n[0..2]; the number of values or -1. */
static int parse_matrix(const char *s, size_t n[3])
{
    int k = 0;
    const char *p = s;
    while (k < 3) {
        char *end;
        if (!(*p >= '0' && *p <= '9'))
            return -1;
        long v = strtol(p, &end, 10);
        if (end == p || v < 1 || v > MAX_EDGE)
            return -1;
        n[k++] = (size_t)v;
        if (*end == '\0')
            break;
        if (*end != 'x' && *end != 'X')
            return -1;
        p = end + 1;
    }
    if (*p && k == 3 && strpbrk(p, "xX"))
        return -1;
    return k;
}

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

/* ---- the command's checks (cli/cmd_encode.c), in its order ------------------ */

#define FAIL(name, ...) return kwpy_value_error(name, __VA_ARGS__), -1

/* Options given together that do not go together, and values that the
 * options struct reads as "not given". */
static int check_combinations(const acq_args *a)
{
    if ((a->s_slt || a->s_slg || a->s_slp) && !a->s_sl)
        FAIL("slices", "missing (slice options need slices=N)");
    if (a->s_sl && (a->slices < 1 || a->slices > 256))
        FAIL("slices", "must be 1..256");
    if (a->s_pat && a->s_traj)
        FAIL("mask", "give mask (Cartesian) or trajectory, not both");
    if (a->s_fmap && a->s_fgrad)
        FAIL("field_map", "give field_map or field_gradient, not both (add the linear field to the map)");
    if (a->s_coils && a->s_sens)
        FAIL("coils", "give coils (a ring of loops) or sens (maps), not both");
    if (a->s_coils && (a->coils < 1 || a->coils > 128))
        FAIL("coils", "must be 1..128 (got %ld)", a->coils);
    if ((a->s_cr || a->s_cd) && !a->s_coils)
        FAIL(a->s_cr ? "coil_radius" : "coil_distance", "only with coils");
    if ((a->s_cr && !(a->coil_radius > 0)) || (a->s_cd && !(a->coil_distance > 0)))
        FAIL(a->s_cr && !(a->coil_radius > 0) ? "coil_radius" : "coil_distance", "must be positive");
    if (a->s_co && (a->coil_order < 0 || a->coil_order > 8))
        FAIL("coil_order", "must be 0..8");
    if (a->s_coz && (a->coil_order_z < 0 || a->coil_order_z > 8))
        FAIL("coil_order_z", "must be 0..8");
    if ((a->s_coz || a->s_crings || a->s_crgap) && !a->s_coils && !a->s_sens)
        FAIL(a->s_coz ? "coil_order_z" : a->s_crings ? "coil_rings" : "coil_ring_gap",
             "only with coils or sens");
    if ((a->s_crings || a->s_crgap) && !a->s_coils)
        FAIL(a->s_crings ? "coil_rings" : "coil_ring_gap", "only with coils");
    if (a->s_crgap && !(a->coil_ring_gap > 0))
        FAIL("coil_ring_gap", "a positive length, with coil_rings=2");
    if (a->s_ncorr && !a->s_snr)
        FAIL("noise_corr", "needs snr (the noise level)");
    if (a->s_ncorr && a->s_ncov)
        FAIL("noise_corr", "give noise_corr or noise_cov, not both");
    static const char *const pos[] = {"te", "tr", "ti", "flip"};
    const double v[] = {a->te, a->tr, a->ti, 1.0};
    const int s[] = {a->s_te, a->s_tr, a->s_ti, 0};
    for (int i = 0; i < 4; i++)
        if (s[i] && !(v[i] > 0))
            FAIL(pos[i], "must be positive");
    return 0;
}

/* Grid, FOV, contrast, bandwidth and fields: the keywords -> options. */
static int args_grid(const acq_args *a, kw_acquisition_options *o)
{
    char txt[256], why[200];
    if (!a->s_ph)
        FAIL("phantom", "missing (shepp-logan, shepp-logan-modified, weave, weave3d)");
    o->phantom = a->phantom;
    if (!a->s_mx)
        FAIL("matrix", "missing (e.g. matrix=256 or \"256x192\")");
    size_t n[3] = {1, 1, 1};
    if (kwpy_str_value(a->matrix, "matrix", "x", txt, sizeof txt) < 0)
        return -1;
    int nm = parse_matrix(txt, n);
    if (nm < 0)
        FAIL("matrix", "'%s' is not NX[xNY[xNZ]] with whole numbers 1..%d", txt, MAX_EDGE);
    for (int i = 0; i < nm; i++)
        o->dims[2 - i] = n[i]; /* C order: (nz, ny, nx) */
    if (!a->s_fov)
        FAIL("fov", "missing (e.g. fov=\"256mm\")");
    double fov[3];
    int nf = unit_list(a->fov, KW_UNIT_LENGTH, fov, 3, "fov");
    if (nf < 0)
        return -1;
    for (int i = 0; i < nf; i++) {
        if (!(fov[i] > 0))
            FAIL("fov", "must be positive (got %g m)", fov[i]);
        o->fov_m[2 - i] = fov[i];
    }
    if (a->s_snr && !(a->snr > 0 && isfinite(a->snr)))
        FAIL("snr", "must be a positive number");
    if (a->s_seed && a->seed < 0)
        FAIL("seed", "must be >= 0");
    if (a->s_seq) {
        static const char *const names[] = {"pd", "gre", "se", "ir"};
        int k = 0;
        while (k < 4 && strcmp(a->sequence, names[k]) != 0)
            k++;
        if (k == 4)
            FAIL("sequence", "unknown sequence '%s' (pd, gre, se, ir)", a->sequence);
        o->sequence = (kw_contrast_kind)k;
    }
    if (a->s_bw) {
        double bw = 0;
        int bw_pp = 0;
        if (PyUnicode_Check(a->bandwidth)) {
            const char *s = PyUnicode_AsUTF8(a->bandwidth);
            if (!s)
                return -1;
            if (kw_unit_parse_bandwidth(s, &bw, &bw_pp, why, sizeof why))
                FAIL("bandwidth", "%s", why);
        } else if (unit_list(a->bandwidth, KW_UNIT_FREQUENCY, &bw, 1, "bandwidth") < 0) {
            return -1;
        }
        if (!(bw > 0))
            FAIL("bandwidth", "must be positive");
        o->bandwidth_hz = bw_pp ? bw * (double)n[0] : bw;
    }
    if (a->s_fgrad) {
        double g[3] = {0, 0, 0};
        int k = unit_list(a->field_grad, KW_UNIT_GRADIENT, g, 3, "field_gradient");
        if (k < 0)
            return -1;
        o->field_gradient_ndim = k;
        for (int d = 0; d < k; d++)
            o->field_gradient_t_per_m[2 - d] = g[d]; /* GX,GY[,GZ] -> (z, y, x) */
    }
    return 0;
}

/* flip: a str with a unit, or a number read as the command reads it
 * (degrees); then the remaining scalars. */
static int args_rest(const acq_args *a, kw_acquisition_options *o)
{
    if (a->s_flip) {
        char txt[128], why[200];
        double f;
        if (kwpy_str_value(a->flip, "flip", ",", txt, sizeof txt) < 0)
            return -1;
        if (kw_unit_parse(txt, KW_UNIT_ANGLE, &f, why, sizeof why))
            FAIL("flip", "%s", why);
        if (!(f > 0))
            FAIL("flip", "must be positive");
        o->flip_rad = f;
    }
    o->snr = a->s_snr ? a->snr : 0;
    o->seed = (uint64_t)a->seed;
    o->te_s = a->s_te ? a->te : 0;
    o->tr_s = a->s_tr ? a->tr : 0;
    o->ti_s = a->s_ti ? a->ti : 0;
    o->b0_t = a->b0;
    o->df_hz = a->s_df ? a->df : 0;
    o->coils = a->s_coils ? (int)a->coils : 0;
    o->coil_radius_m = a->s_cr ? a->coil_radius : 0;
    o->coil_distance_m = a->s_cd ? a->coil_distance : 0;
    o->coil_rings = a->s_crings ? (int)a->coil_rings : 1;
    o->coil_ring_gap_m = a->s_crgap ? a->coil_ring_gap : 0;
    o->coil_order = a->s_co ? (int)a->coil_order : -1;
    o->coil_order_z = a->s_coz ? (int)a->coil_order_z : -1;
    o->noise_corr = a->s_ncorr ? a->noise_corr : 0;
    if (a->s_sl) {
        o->slices = (int)a->slices;
        o->slice_thickness_m = a->s_slt ? a->slice_thk : 0;
        o->slice_gap_m = a->s_slg ? a->slice_gap : 0;
        o->slice_points = (int)a->slice_points;
    }
    /* as the command: half the physical memory unless max_memory is given */
    long pages = sysconf(_SC_PHYS_PAGES), psize = sysconf(_SC_PAGE_SIZE);
    double half = pages > 0 && psize > 0 ? 0.5 * (double)pages * (double)psize : (double)(16UL << 30);
    o->max_bytes = half < (double)(64UL << 20) ? (64UL << 20) : (size_t)half;
    if (a->s_mem) {
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
    if (a->s_pat) {
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
    if (a->s_times) {
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
    if (a->s_ncov) {
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
    if (a->s_traj) {
        if (!(self->traj = array_owned(a->traj, KWPY_F32, "trajectory", 2, 2)))
            return -1;
        if (!PyArray_DIM(self->traj, 0))
            FAIL("trajectory", "expected a real array (samples, 2|3) in cycles/FOV");
        o->traj = PyArray_DATA(self->traj);
        set_dims(o->traj_dims, NULL, self->traj);
    }
    if (a->s_fmap) {
        if (!(self->fmap = array_owned(a->fmap, KWPY_F32, "field_map", 2, 3)))
            return -1;
        o->field_map = PyArray_DATA(self->fmap);
        set_dims(o->field_map_dims, &o->field_map_ndim, self->fmap);
    }
    if (a->s_sens) {
        if (!(self->sens = array_owned(a->sens, KWPY_C64, "sens", 2, 4)))
            return -1;
        o->sens = PyArray_DATA(self->sens);
        set_dims(o->sens_dims, &o->sens_ndim, self->sens);
    }
    return 0;
}

/* ---- the object ------------------------------------------------------------------ */

/* The library's option names (kw_last_error_param()) -> the keywords. */
static const struct {
    const char *param, *keyword;
} param_map[] = {
    {"dims", "matrix"}, {"fov_m", "fov"}, {"te_s", "te"}, {"tr_s", "tr"}, {"ti_s", "ti"},
    {"flip_rad", "flip"}, {"b0_t", "b0"}, {"bandwidth_hz", "bandwidth"}, {"tissue_values", "tissue"},
    {"df_hz", "df"}, {"field_gradient_ndim", "field_gradient"},
    {"field_gradient_t_per_m", "field_gradient"}, {"coil_radius_m", "coil_radius"},
    {"coil_distance_m", "coil_distance"}, {"coil_ring_gap_m", "coil_ring_gap"},
    {"slice_thickness_m", "slice_thickness"}, {"slice_gap_m", "slice_gap"}, {"traj", "trajectory"},
    {"max_bytes", "max_memory"}, {"options", "acquire"}};

/* A failure of the acquisition, under the keyword's name. */
static PyObject *acq_fail(kw_status st)
{
    const char *p = kw_last_error_param();
    if (!*p)
        return kwpy_raise(st, NULL);
    const char *kw = p;
    for (size_t i = 0; i < sizeof param_map / sizeof param_map[0]; i++)
        if (strcmp(param_map[i].param, p) == 0)
            kw = param_map[i].keyword;
    char name[64], why[600];
    snprintf(name, sizeof name, "%s", kw);
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
    kw_acquisition_options dflt; /* the library's defaults, as the command takes them */
    kw_acquisition_options_init(&dflt);
    a->b0 = dflt.b0_t;
    a->slice_points = dflt.slice_points;
    const kwpy_kw table[] = {
        {"phantom", KWPY_STR, &a->phantom, 0, &a->s_ph},
        {"matrix", KWPY_OBJ, &a->matrix, 0, &a->s_mx},
        {"fov", KWPY_OBJ, &a->fov, 0, &a->s_fov},
        {"snr", KWPY_FLOAT, &a->snr, 0, &a->s_snr},
        {"seed", KWPY_INT, &a->seed, 0, &a->s_seed},
        {"sequence", KWPY_STR, &a->sequence, 0, &a->s_seq},
        {"te", KWPY_UNIT, &a->te, KW_UNIT_TIME, &a->s_te},
        {"tr", KWPY_UNIT, &a->tr, KW_UNIT_TIME, &a->s_tr},
        {"ti", KWPY_UNIT, &a->ti, KW_UNIT_TIME, &a->s_ti},
        {"flip", KWPY_OBJ, &a->flip, 0, &a->s_flip},
        {"b0", KWPY_UNIT, &a->b0, KW_UNIT_FIELD, &a->s_b0},
        {"bandwidth", KWPY_OBJ, &a->bandwidth, 0, &a->s_bw},
        {"df", KWPY_UNIT, &a->df, KW_UNIT_FREQUENCY, &a->s_df},
        {"coils", KWPY_INT, &a->coils, 0, &a->s_coils},
        {"coil-radius", KWPY_UNIT, &a->coil_radius, KW_UNIT_LENGTH, &a->s_cr},
        {"coil-distance", KWPY_UNIT, &a->coil_distance, KW_UNIT_LENGTH, &a->s_cd},
        {"coil-order", KWPY_INT, &a->coil_order, 0, &a->s_co},
        {"coil-order-z", KWPY_INT, &a->coil_order_z, 0, &a->s_coz},
        {"coil-rings", KWPY_INT, &a->coil_rings, 0, &a->s_crings},
        {"coil-ring-gap", KWPY_UNIT, &a->coil_ring_gap, KW_UNIT_LENGTH, &a->s_crgap},
        {"sens", KWPY_OBJ, &a->sens, 0, &a->s_sens},
        {"mask", KWPY_OBJ, &a->mask, 0, &a->s_pat},
        {"pattern", KWPY_OBJ, &a->mask, 0, &a->s_pat}, /* the command's name of the mask */
        {"trajectory", KWPY_OBJ, &a->traj, 0, &a->s_traj},
        {"times", KWPY_OBJ, &a->times, 0, &a->s_times},
        {"noise-corr", KWPY_FLOAT, &a->noise_corr, 0, &a->s_ncorr},
        {"noise-cov", KWPY_OBJ, &a->ncov, 0, &a->s_ncov},
        {"field-map", KWPY_OBJ, &a->fmap, 0, &a->s_fmap},
        {"field-gradient", KWPY_OBJ, &a->field_grad, 0, &a->s_fgrad},
        {"tissue", KWPY_OBJ, &a->tissue, 0, &a->s_tissue},
        {"slices", KWPY_INT, &a->slices, 0, &a->s_sl},
        {"slice-thickness", KWPY_UNIT, &a->slice_thk, KW_UNIT_LENGTH, &a->s_slt},
        {"slice-gap", KWPY_UNIT, &a->slice_gap, KW_UNIT_LENGTH, &a->s_slg},
        {"slice-points", KWPY_INT, &a->slice_points, 0, &a->s_slp},
        {"max-memory", KWPY_OBJ, &a->max_memory, 0, &a->s_mem},
        {NULL, 0, NULL, 0, NULL}};
    return kwpy_parse_kwargs(kwargs, table, "Acquisition");
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
    if (a.s_tissue) {
        if (tissue_values(a.tissue, self->tissues) < 0)
            return -1;
        o.tissue_values = self->tissues;
    }
    if (args_grid(&a, &o) < 0 || check_combinations(&a) < 0 || args_rest(&a, &o) < 0 ||
        arrays_converted(self, &a, &o) < 0 || arrays_kept(self, &a, &o) < 0)
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
