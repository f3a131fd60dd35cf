/* h5.h: one dataset of an HDF5 file read into a kw_array (libhdf5's C API).
 * The command's business only: libkweave never sees HDF5 (cli/arrayio.h
 * picks this reader or the .npy one from the name).
 *
 * A dataset is named "FILE.h5:/path/to/dataset" (also .hdf5, and .mat:
 * MATLAB v7.3 files are HDF5 with a 512-byte user block, read the same way).
 * Types, converted by libhdf5 to the native float the result holds:
 *   - integer or float (int16, float32, float64, ...): KW_F32, the same shape;
 *   - a compound of exactly two integer or float members named r and i (what
 *     h5py writes for numpy's complex) or real and imag (MATLAB's complex):
 *     KW_C64, the same shape.
 * Anything else (strings, references, enums, arrays, compounds with other
 * members, a scalar or empty dataspace) is refused with KW_EFORMAT and one
 * line naming the dataset and the reason. A complex array stored as a
 * trailing axis of 2 comes out as that real array; the caller that wants
 * complex makes it so (kw_array_pairs_to_complex in cli/arrayio.h). Arrays
 * are C-ordered in HDF5 as in kweave, so the shape is the file's. The size
 * is checked against kw_cli_memory_limit() (--max-memory) before anything is
 * allocated. libhdf5's own error printing is switched off. */
#ifndef KW_H5_H
#define KW_H5_H

#include <stdint.h>

#include "kw_base.h"
#include "outfile.h"

/*! kw_h5_split(): if `spec` names a dataset of an HDF5 file (FILE.h5:/path,
 * FILE.hdf5:/path, FILE.mat:/path, any case), return the length of FILE and
 * set *dset to the dataset path (after the ':'); else return 0. */
size_t kw_h5_split(const char *spec, const char **dset);

/*! kw_h5_read(): read dataset `dset` of HDF5 file `file` into `out`
 * (allocated; free with kw_array_free). */
kw_status kw_h5_read(const char *file, const char *dset, kw_array *out);

/* Writing: a new file holding one dataset (groups on its path made), its
 * attributes on the dataset. KW_F32 as 32-bit floats; KW_C64 as a compound
 * of two 32-bit floats named r and i (what h5py writes for numpy's
 * complex64, and what kw_h5_read() reads back). The file is made under a
 * temporary name beside the target and renamed into place by
 * kw_h5w_commit() (cli/outfile.h); kw_h5w_abort() removes it. */
typedef struct kw_h5w {
    int64_t file, dset, mtype; /* hid_t (libhdf5 >= 1.10), -1 when closed */
    kw_outfile of;
    int open, ndim;
    size_t dims[KW_MAX_DIMS];
    kw_dtype dtype;
} kw_h5w;

/*! kw_h5_check_name(): a dataset path to write: "/a[/b...]", no empty,
 * "." or ".." part, no control character or backslash; KW_EINVAL if not. */
kw_status kw_h5_check_name(const char *dset);

/*! kw_h5w_open(): create `file` (a regular file) with the dataset `dset`
 * of `dims` (C order) and type `dt` (KW_F32 or KW_C64). */
kw_status kw_h5w_open(kw_h5w *w, const char *file, const char *dset, kw_dtype dt, int ndim, const size_t *dims);

/*! Attributes of the dataset: `n` 64-bit floats or integers (n = 0: one,
 * a scalar), or a UTF-8 string. */
kw_status kw_h5w_attr_f64(kw_h5w *w, const char *name, const double *v, int n);
kw_status kw_h5w_attr_i64(kw_h5w *w, const char *name, const long long *v, int n);
kw_status kw_h5w_attr_str(kw_h5w *w, const char *name, const char *v);

/*! kw_h5w_write(): elements [first, first + n) in C order; first and n are
 * whole planes (multiples of the product of the last two axes). */
kw_status kw_h5w_write(kw_h5w *w, size_t first, const void *data, size_t n);

/*! kw_h5w_commit(): close the file and rename it into place (on failure it
 * is removed). kw_h5w_abort(): remove it (idempotent). */
kw_status kw_h5w_commit(kw_h5w *w);
void kw_h5w_abort(kw_h5w *w);

/*! kw_h5_write(): the whole array `a` as dataset `dset` of a new `file`,
 * with the attributes `attrs(w, user)` writes (NULL: none). */
kw_status kw_h5_write(const char *file, const char *dset, const kw_array *a, kw_status (*attrs)(kw_h5w *, void *),
                      void *user);

/*! kw_h5w_attrs_json(): for kw_h5_write: the sidecar `sidecar` (a cJSON
 * object) as attributes: its top-level numbers, booleans, strings and lists
 * of up to 16 numbers, each under its own name, and the whole sidecar as the
 * JSON text "kweave_sidecar". */
kw_status kw_h5w_attrs_json(kw_h5w *w, void *sidecar);

#endif
