/* h5.c: one HDF5 dataset into a kw_array (see h5.h). */
#include "h5.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#include <cJSON.h>
#include <hdf5.h>

#include "cli.h"
#include "outfile.h"

static const char *const H5_EXTS[] = {".h5", ".hdf5", ".mat"};

size_t kw_h5_split(const char *spec, const char **dset)
{
    size_t n = strlen(spec), best = 0;
    const size_t ne = sizeof H5_EXTS / sizeof H5_EXTS[0];
    for (size_t e = 0; e < ne; e++) { /* the first FILE.ext: */
        size_t m = strlen(H5_EXTS[e]);
        for (size_t i = 1; i + m < n && (!best || i + m < best); i++)
            if (spec[i + m] == ':' && strncasecmp(spec + i, H5_EXTS[e], m) == 0) {
                best = i + m;
                break;
            }
    }
    if (best) {
        *dset = spec + best + 1;
        return best;
    }
    for (size_t e = 0; e < ne; e++) { /* the file alone: the dataset is not named */
        size_t m = strlen(H5_EXTS[e]);
        if (n > m && strcasecmp(spec + n - m, H5_EXTS[e]) == 0) {
            *dset = spec + n;
            return n;
        }
    }
    return 0;
}

/* The names at the file's top level, for the message when none is given. */
static herr_t list_one(hid_t g, const char *name, const H5L_info_t *info, void *user)
{
    (void)g;
    (void)info;
    char *buf = user;
    size_t len = strlen(buf);
    if (len > 160)
        return 1;
    snprintf(buf + len, 200 - len, "%s/%s", len ? ", " : "", name);
    return 0;
}

/* Every prefix of the path must be a link: H5Lexists fails on a missing group. */
static int path_exists(hid_t f, const char *dset)
{
    char buf[1024];
    size_t n = strlen(dset);
    if (n == 0 || n >= sizeof buf)
        return 0;
    memcpy(buf, dset, n + 1);
    for (size_t i = 1; i <= n; i++) {
        if (buf[i] != '/' && buf[i] != '\0')
            continue;
        char c = buf[i];
        buf[i] = '\0';
        int ok = (i == 1 && buf[0] == '/') || H5Lexists(f, buf, H5P_DEFAULT) > 0;
        buf[i] = c;
        if (!ok)
            return 0;
    }
    return 1;
}

static const char *class_name(H5T_class_t c)
{
    switch (c) {
    case H5T_STRING: return "a string";
    case H5T_BITFIELD: return "a bit field";
    case H5T_OPAQUE: return "opaque";
    case H5T_REFERENCE: return "a reference";
    case H5T_ENUM: return "an enumeration";
    case H5T_VLEN: return "variable-length";
    case H5T_ARRAY: return "an array type";
    case H5T_TIME: return "a time";
    default: return "not numeric";
    }
}

static int numeric(H5T_class_t c) { return c == H5T_INTEGER || c == H5T_FLOAT; }

/* The memory type for the file's type `ft`: native float, or a compound of
 * two native floats under the file's member names (libhdf5 matches members
 * by name). *cplx = 1 for the compound. */
static kw_status mem_type(hid_t ft, const char *what, hid_t *mt, int *cplx)
{
    H5T_class_t cl = H5Tget_class(ft);
    *cplx = 0;
    if (numeric(cl)) {
        *mt = H5Tcopy(H5T_NATIVE_FLOAT);
        return *mt < 0 ? kw_set_error(KW_EFORMAT, "%s: libhdf5 failed to make a type", what) : KW_OK;
    }
    if (cl != H5T_COMPOUND)
        return kw_set_error(KW_EFORMAT, "%s: the type is %s, not numeric (integer, float or a "
                            "complex compound)", what, class_name(cl));
    int nm = H5Tget_nmembers(ft);
    char *names[2] = {NULL, NULL};
    int re = -1, im = -1, bad = nm != 2;
    for (int i = 0; i < nm && i < 2; i++) {
        names[i] = H5Tget_member_name(ft, (unsigned)i);
        H5T_class_t mc = H5Tget_member_class(ft, (unsigned)i);
        if (!names[i] || !numeric(mc))
            bad = 1;
        else if (!strcmp(names[i], "r") || !strcmp(names[i], "real"))
            re = i;
        else if (!strcmp(names[i], "i") || !strcmp(names[i], "imag"))
            im = i;
    }
    bad = bad || re < 0 || im < 0 || (strcmp(names[re], "r") == 0) != (strcmp(names[im], "i") == 0);
    kw_status st = KW_OK;
    if (bad) {
        st = kw_set_error(KW_EFORMAT, "%s: a compound of %d member%s; complex values must be a compound of "
                          "two numbers named r and i, or real and imag", what, nm, nm == 1 ? "" : "s");
    } else if ((*mt = H5Tcreate(H5T_COMPOUND, 2 * sizeof(float))) < 0 ||
               H5Tinsert(*mt, names[re], 0, H5T_NATIVE_FLOAT) < 0 ||
               H5Tinsert(*mt, names[im], sizeof(float), H5T_NATIVE_FLOAT) < 0) {
        st = kw_set_error(KW_EFORMAT, "%s: libhdf5 failed to make a type", what);
    } else {
        *cplx = 1;
    }
    for (int i = 0; i < 2; i++)
        if (names[i])
            H5free_memory(names[i]);
    return st;
}

/* The dataspace's shape into out->dims; the byte count checked. */
static kw_status shape(hid_t d, const char *what, size_t esize, kw_array *out)
{
    hid_t sp = H5Dget_space(d);
    kw_status st = KW_OK;
    hsize_t hd[KW_MAX_DIMS];
    int nd = sp < 0 ? -1 : H5Sget_simple_extent_ndims(sp);
    if (nd < 1 || H5Sget_simple_extent_type(sp) != H5S_SIMPLE) {
        st = kw_set_error(KW_EFORMAT, "%s: a scalar or empty dataset, not an array", what);
    } else if (nd > KW_MAX_DIMS) {
        st = kw_set_error(KW_EFORMAT, "%s: %d dimensions (at most %d)", what, nd, KW_MAX_DIMS);
    } else if (H5Sget_simple_extent_dims(sp, hd, NULL) != nd) {
        st = kw_set_error(KW_EFORMAT, "%s: libhdf5 could not read the shape", what);
    } else {
        out->ndim = nd;
        for (int i = 0; i < nd; i++) {
            out->dims[i] = (size_t)hd[i];
            if ((hsize_t)out->dims[i] != hd[i])
                st = kw_set_error(KW_EFORMAT, "%s: axis %d is too long", what, i);
        }
        size_t bytes = 0, limit = kw_cli_memory_limit();
        if (!st && kw_checked_bytes(out->dims, nd, esize, 0, &bytes))
            st = kw_set_error(KW_EFORMAT, "%s: the number of bytes overflows", what);
        else if (!st && bytes > limit)
            st = kw_set_error(KW_ENOMEM, "%s: needs %.1f MiB of memory, above the limit of %.1f MiB "
                              "(--max-memory)", what, (double)bytes / 1048576.0, (double)limit / 1048576.0);
        else if (!st && bytes == 0)
            st = kw_set_error(KW_EFORMAT, "%s: the array is empty", what);
    }
    if (sp >= 0)
        H5Sclose(sp);
    return st;
}

static kw_status read_dataset(hid_t f, const char *file, const char *dset, kw_array *out)
{
    char what[1200];
    snprintf(what, sizeof what, "%s:%s", file, dset);
    if (!path_exists(f, dset))
        return kw_set_error(KW_EFORMAT, "%s: no dataset '%s' in the file", what, dset);
    hid_t d = H5Dopen2(f, dset, H5P_DEFAULT);
    if (d < 0)
        return kw_set_error(KW_EFORMAT, "%s: '%s' is not a dataset (a group?)", what, dset);
    hid_t ft = H5Dget_type(d), mt = -1;
    int cplx = 0;
    kw_array a = {0};
    kw_status st = ft < 0 ? kw_set_error(KW_EFORMAT, "%s: libhdf5 could not read the type", what)
                          : mem_type(ft, what, &mt, &cplx);
    if (!st)
        st = shape(d, what, cplx ? sizeof(kw_cfloat) : sizeof(float), &a);
    if (!st)
        st = kw_array_alloc(out, cplx ? KW_C64 : KW_F32, a.ndim, a.dims);
    if (!st && H5Dread(d, mt, H5S_ALL, H5S_ALL, H5P_DEFAULT, out->data) < 0) {
        kw_array_free(out);
        st = kw_set_error(KW_EFORMAT, "%s: libhdf5 could not read the data (corrupt or truncated file?)", what);
    }
    if (mt >= 0)
        H5Tclose(mt);
    if (ft >= 0)
        H5Tclose(ft);
    H5Dclose(d);
    return st;
}

kw_status kw_h5_read(const char *file, const char *dset, kw_array *out)
{
    memset(out, 0, sizeof *out);
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL);
    if (access(file, R_OK) != 0)
        return kw_set_error(KW_EIO, "%s: %s", file, strerror(errno));
    kw_status nst = kw_outfile_note_input(file);
    if (nst)
        return nst;
    hid_t f = H5Fopen(file, H5F_ACC_RDONLY, H5P_DEFAULT);
    if (f < 0)
        return kw_set_error(KW_EFORMAT, "%s: not an HDF5 file (MATLAB .mat files must be v7.3)", file);
    kw_status st;
    if (!dset[0]) {
        char names[200] = "";
        hsize_t idx = 0;
        H5Literate(f, H5_INDEX_NAME, H5_ITER_INC, &idx, list_one, names);
        st = kw_set_error(KW_EINVAL, "%s: name the dataset as %s:/path (the file holds %s)", file, file,
                          names[0] ? names : "nothing at its top level");
    } else {
        char path[1024];
        snprintf(path, sizeof path, "%s%s", dset[0] == '/' ? "" : "/", dset);
        st = read_dataset(f, file, path, out);
    }
    H5Fclose(f);
    return st;
}

/* ---- writing ------------------------------------------------------------ */

kw_status kw_h5_check_name(const char *dset)
{
    size_t n = strlen(dset);
    KW_FAIL_IF(n == 0 || n > 512, KW_EINVAL, "the dataset name is empty or too long");
    KW_FAIL_IF(dset[0] != '/', KW_EINVAL, "the dataset '%s' must start with / (e.g. FILE.h5:/image)", dset);
    KW_FAIL_IF(n == 1 || dset[n - 1] == '/' || strstr(dset, "//"), KW_EINVAL,
               "the dataset '%s' has an empty part (give a name between each /)", dset);
    for (const char *p = dset; *p; p++)
        KW_FAIL_IF((unsigned char)*p < 0x20 || *p == '\\', KW_EINVAL,
                   "the dataset '%s' holds a control character or a backslash", dset);
    KW_FAIL_IF(strstr(dset, "/./") || strstr(dset, "/../") || !strcmp(dset + n - 2, "/.") ||
               (n >= 3 && !strcmp(dset + n - 3, "/..")), KW_EINVAL, "the dataset '%s' has a part . or ..", dset);
    return KW_OK;
}

static void h5w_close(kw_h5w *w)
{
    if (w->mtype >= 0)
        H5Tclose((hid_t)w->mtype);
    if (w->dset >= 0)
        H5Dclose((hid_t)w->dset);
    if (w->file >= 0)
        H5Fclose((hid_t)w->file);
    w->mtype = w->dset = w->file = -1;
}

void kw_h5w_abort(kw_h5w *w)
{
    if (!w->open)
        return;
    h5w_close(w);
    kw_outfile_abort(&w->of);
    w->open = 0;
}

kw_status kw_h5w_open(kw_h5w *w, const char *file, const char *dset, kw_dtype dt, int ndim, const size_t *dims)
{
    memset(w, 0, sizeof *w);
    w->file = w->dset = w->mtype = -1;
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL);
    kw_status st = kw_h5_check_name(dset);
    if (st)
        return st;
    KW_FAIL_IF(dt != KW_F32 && dt != KW_C64, KW_EINVAL, "%s: HDF5 output is float32 or complex64", file);
    KW_FAIL_IF(ndim < 1 || ndim > KW_MAX_DIMS, KW_EINVAL, "%s: %d axes", file, ndim);
    if ((st = kw_outfile_open(&w->of, file)))
        return st;
    w->open = 1;
    if (!w->of.tmp) { /* standard output, a device or a FIFO */
        kw_h5w_abort(w);
        return kw_set_error(KW_EINVAL, "%s: an HDF5 file must be a regular file", file);
    }
    w->ndim = ndim;
    w->dtype = dt;
    hsize_t hd[KW_MAX_DIMS];
    for (int i = 0; i < ndim; i++)
        hd[i] = w->dims[i] = dims[i];
    /* kweave's complex: the compound h5py writes for numpy's complex64 */
    hid_t mt = dt == KW_C64 ? H5Tcreate(H5T_COMPOUND, 2 * sizeof(float)) : H5Tcopy(H5T_NATIVE_FLOAT);
    w->mtype = mt;
    if (mt >= 0 && dt == KW_C64 &&
        (H5Tinsert(mt, "r", 0, H5T_NATIVE_FLOAT) < 0 || H5Tinsert(mt, "i", sizeof(float), H5T_NATIVE_FLOAT) < 0))
        mt = -1;
    hid_t f = mt < 0 ? -1 : H5Fcreate(w->of.tmp, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
    w->file = f;
    hid_t sp = f < 0 ? -1 : H5Screate_simple(ndim, hd, NULL);
    hid_t lcpl = sp < 0 ? -1 : H5Pcreate(H5P_LINK_CREATE);
    if (lcpl >= 0 && H5Pset_create_intermediate_group(lcpl, 1) >= 0)
        w->dset = H5Dcreate2(f, dset, mt, sp, lcpl, H5P_DEFAULT, H5P_DEFAULT);
    if (lcpl >= 0)
        H5Pclose(lcpl);
    if (sp >= 0)
        H5Sclose(sp);
    if (w->dset < 0) {
        kw_h5w_abort(w);
        return kw_set_error(KW_EIO, "%s: libhdf5 could not create the dataset '%s'", file, dset);
    }
    return KW_OK;
}

/* One attribute of `n` values (0: a scalar) of native type `t`. */
static kw_status h5w_attr(kw_h5w *w, const char *name, hid_t t, const void *v, int n)
{
    hsize_t hn = (hsize_t)n;
    hid_t sp = n > 0 ? H5Screate_simple(1, &hn, NULL) : H5Screate(H5S_SCALAR);
    hid_t a = sp < 0 ? -1 : H5Acreate2((hid_t)w->dset, name, t, sp, H5P_DEFAULT, H5P_DEFAULT);
    herr_t e = a < 0 ? -1 : H5Awrite(a, t, v);
    if (a >= 0)
        H5Aclose(a);
    if (sp >= 0)
        H5Sclose(sp);
    KW_FAIL_IF(e < 0, KW_EIO, "%s: libhdf5 could not write the attribute '%s'", w->of.path, name);
    return KW_OK;
}

kw_status kw_h5w_attr_f64(kw_h5w *w, const char *name, const double *v, int n)
{
    return h5w_attr(w, name, H5T_NATIVE_DOUBLE, v, n);
}

kw_status kw_h5w_attr_i64(kw_h5w *w, const char *name, const long long *v, int n)
{
    return h5w_attr(w, name, H5T_NATIVE_LLONG, v, n);
}

kw_status kw_h5w_attr_str(kw_h5w *w, const char *name, const char *v)
{
    hid_t t = H5Tcopy(H5T_C_S1);
    kw_status st;
    /* variable length: h5py reads it as a str, not bytes */
    if (t < 0 || H5Tset_size(t, H5T_VARIABLE) < 0 || H5Tset_cset(t, H5T_CSET_UTF8) < 0)
        st = kw_set_error(KW_EIO, "%s: libhdf5 could not make a string type", w->of.path);
    else
        st = h5w_attr(w, name, t, &v, 0);
    if (t >= 0)
        H5Tclose(t);
    return st;
}

kw_status kw_h5w_write(kw_h5w *w, size_t first, const void *data, size_t n)
{
    KW_FAIL_IF(!w->open, KW_EINVAL, "HDF5 output: not open");
    /* in blocks of the last two axes (one axis: the whole array) */
    int nd = w->ndim, inner = nd >= 2 ? 2 : 1;
    size_t blk = 1;
    for (int i = nd - inner; i < nd; i++)
        blk *= w->dims[i];
    KW_FAIL_IF(first % blk || n % blk, KW_EINVAL, "HDF5 output: a write of part of a plane");
    size_t esize = w->dtype == KW_C64 ? sizeof(kw_cfloat) : sizeof(float);
    hid_t fs = H5Dget_space((hid_t)w->dset);
    hsize_t cnt[KW_MAX_DIMS], start[KW_MAX_DIMS], bn = blk;
    hid_t ms = H5Screate_simple(1, &bn, NULL);
    herr_t e = fs < 0 || ms < 0 ? -1 : 0;
    for (size_t b = 0; e >= 0 && b < n / blk; b++) {
        size_t idx = first / blk + b;
        for (int i = nd - 1; i >= 0; i--) {
            if (i >= nd - inner) {
                start[i] = 0;
                cnt[i] = w->dims[i];
            } else {
                start[i] = idx % w->dims[i];
                idx /= w->dims[i];
                cnt[i] = 1;
            }
        }
        e = H5Sselect_hyperslab(fs, H5S_SELECT_SET, start, NULL, cnt, NULL);
        if (e >= 0)
            e = H5Dwrite((hid_t)w->dset, (hid_t)w->mtype, ms, fs, H5P_DEFAULT,
                         (const char *)data + b * blk * esize);
    }
    if (ms >= 0)
        H5Sclose(ms);
    if (fs >= 0)
        H5Sclose(fs);
    KW_FAIL_IF(e < 0, KW_EIO, "%s: libhdf5 could not write the data (disk full?)", w->of.path);
    return KW_OK;
}

kw_status kw_h5w_commit(kw_h5w *w)
{
    KW_FAIL_IF(!w->open, KW_EINVAL, "HDF5 output: not open");
    H5Tclose((hid_t)w->mtype);
    H5Dclose((hid_t)w->dset);
    int bad = H5Fclose((hid_t)w->file) < 0; /* flushes */
    w->mtype = w->dset = w->file = -1;
    if (bad) {
        char what[512];
        snprintf(what, sizeof what, "%s", w->of.path);
        kw_h5w_abort(w);
        return kw_set_error(KW_EIO, "%s: libhdf5 could not write the file (disk full?)", what);
    }
    w->open = 0;
    return kw_outfile_commit(&w->of); /* renames the finished file into place */
}

kw_status kw_h5_write(const char *file, const char *dset, const kw_array *a, kw_status (*attrs)(kw_h5w *, void *),
                      void *user)
{
    kw_h5w w;
    kw_status st = kw_h5w_open(&w, file, dset, a->dtype, a->ndim, a->dims);
    if (st)
        return st;
    if ((attrs && (st = attrs(&w, user))) || (st = kw_h5w_write(&w, 0, a->data, kw_array_count(a)))) {
        kw_h5w_abort(&w);
        return st;
    }
    return kw_h5w_commit(&w);
}

/* Attributes from a sidecar: every top-level number, boolean, string and list
 * of numbers as a typed attribute of its own name, and the whole sidecar as
 * the JSON text attribute "kweave_sidecar". */
kw_status kw_h5w_attrs_json(kw_h5w *w, void *sidecar)
{
    const cJSON *js = sidecar, *it;
    kw_status st = KW_OK;
    cJSON_ArrayForEach(it, js) {
        if (st || !it->string)
            break;
        if (cJSON_IsNumber(it)) {
            st = kw_h5w_attr_f64(w, it->string, &it->valuedouble, 0);
        } else if (cJSON_IsBool(it)) {
            long long b = cJSON_IsTrue(it);
            st = kw_h5w_attr_i64(w, it->string, &b, 0);
        } else if (cJSON_IsString(it)) {
            st = kw_h5w_attr_str(w, it->string, it->valuestring);
        } else if (cJSON_IsArray(it)) {
            double v[16];
            int n = 0, all = 1;
            const cJSON *e;
            cJSON_ArrayForEach(e, it) {
                if (!cJSON_IsNumber(e) || n == 16) {
                    all = 0;
                    break;
                }
                v[n++] = e->valuedouble;
            }
            if (all && n > 0)
                st = kw_h5w_attr_f64(w, it->string, v, n);
        }
    }
    if (st)
        return st;
    char *text = cJSON_PrintUnformatted(js);
    if (!text)
        return kw_set_error(KW_ENOMEM, "out of memory");
    st = kw_h5w_attr_str(w, "kweave_sidecar", text);
    cJSON_free(text);
    return st;
}
