/* arrayio.h: the arrays the command reads, whatever file they come in:
 * NumPy .npy (cli/npy.h) or one dataset of an HDF5 file named
 * FILE.h5:/path/to/dataset (.hdf5 and MATLAB v7.3 .mat too; cli/h5.h).
 * The result is the same kw_array either way: KW_C64, KW_F32 (or KW_U8 from
 * .npy), C order, its size checked against --max-memory before allocation. */
#ifndef KW_ARRAYIO_H
#define KW_ARRAYIO_H

#include "kw_base.h"

/*! kw_array_is_hdf5(): 1 if `spec` names an HDF5 file (by its extension). */
int kw_array_is_hdf5(const char *spec);

/*! kw_array_sidecar_path(): the JSON sidecar beside the array `spec`
 * names: KS.json for KS.npy, FILE.json for a dataset FILE.h5:/path
 * (malloc'd; NULL for "-"). */
char *kw_array_sidecar_path(const char *spec);

/*! kw_array_read(): read the array `spec` names into `out` (allocated; free
 * with kw_array_free). "-" is standard input (.npy). */
kw_status kw_array_read(const char *spec, kw_array *out);

/*! kw_array_read_complex(): kw_array_read() for an array that must be
 * complex: an HDF5 dataset stored as real numbers with a trailing axis of 2
 * (real, imaginary) becomes the complex array without that axis (HDF5 has no
 * complex type; .npy has, so a .npy array is returned as it is). */
kw_status kw_array_read_complex(const char *spec, kw_array *out);

/*! kw_array_pairs_to_complex(): a KW_F32 array whose last axis is 2 becomes,
 * in place, the KW_C64 array without that axis; 0 done, -1 not such an array. */
int kw_array_pairs_to_complex(kw_array *a);

/*! kw_array_h5_target(): for an output named FILE.h5[:/dataset] (or
 * .hdf5): *file = FILE (malloc'd) and *dset the dataset, `dflt` when none
 * is named; the name checked (kw_h5_check_name(), KW_EINVAL). *file =
 * NULL when `spec` is not HDF5. MATLAB .mat is not written. */
kw_status kw_array_h5_target(const char *spec, const char *dflt, char **file, const char **dset);

#endif
