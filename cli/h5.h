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

#include "kw_base.h"

/*! kw_h5_split(): if `spec` names a dataset of an HDF5 file (FILE.h5:/path,
 * FILE.hdf5:/path, FILE.mat:/path, any case), return the length of FILE and
 * set *dset to the dataset path (after the ':'); else return 0. */
size_t kw_h5_split(const char *spec, const char **dset);

/*! kw_h5_read(): read dataset `dset` of HDF5 file `file` into `out`
 * (allocated; free with kw_array_free). */
kw_status kw_h5_read(const char *file, const char *dset, kw_array *out);

#endif
