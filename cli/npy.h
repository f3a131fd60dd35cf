/* npy.h: NumPy .npy arrays, read and written.
 *
 * Read: format versions 1.0, 2.0 and 3.0; little- or big-endian; dtypes
 * complex64, complex128 -> KW_C64; float32, float64, int16 -> KW_F32;
 * uint8 and bool -> KW_U8. Fortran-ordered arrays are read into C order
 * (the same array: a[i, j] keeps its place). Object arrays, structured dtypes
 * and shapes whose size disagrees with the file are refused (KW_EFORMAT) with
 * the field and the reason in kw_last_error(). Non-finite values are NOT
 * refused here: callers decide (kw_array_all_finite()).
 * Write: version 1.0 ('<c8', '<f4', '|u1'), C order, atomically.
 * "-" is standard input / standard output. */
#ifndef KW_NPY_H
#define KW_NPY_H

#include "kw_base.h"

/* Default ceiling for a declared array, in bytes (before allocation). */
#define KW_NPY_DEFAULT_LIMIT ((size_t)16 << 30)

/*! kw_npy_set_limit(): refuse arrays needing more than `bytes` (0: default). */
void kw_npy_set_limit(size_t bytes);

/*! kw_npy_read(): read `path` into `out` (allocated; free with kw_array_free). */
kw_status kw_npy_read(const char *path, kw_array *out);

/*! kw_npy_parse(): the same from a buffer in memory (used by the fuzzers). */
kw_status kw_npy_parse(const void *buf, size_t len, kw_array *out);

/*! kw_npy_write(): write `a` to `path` atomically. */
kw_status kw_npy_write(const char *path, const kw_array *a);

#endif
