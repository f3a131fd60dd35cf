/* h5.c: one HDF5 dataset into a kw_array (see h5.h). */
#include "h5.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#include <hdf5.h>

#include "cli.h"

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
