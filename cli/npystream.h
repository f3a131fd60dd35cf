/* npystream.h: .npy arrays read and written a block at a time, so that a
 * file far larger than memory can be processed piece by piece (multi-slice
 * reconstruction, docs/multislice.md).
 *
 * Reading: complex .npy only ('<c8', '>c8', '<c16', '>c16'; values come out
 * as float complex), format versions 1.0-3.0, C order. The header is checked
 * as cli/npy.c checks it (same dict keys, no Fortran order, no structured
 * dtype, no overflowing shape, and for a regular file the data length must be
 * exactly what the shape says). A regular file is read at any position
 * (fseeko); standard input ("-") or a pipe only forwards: a read behind the
 * current position is refused (kw_npyin_read returns KW_EINVAL).
 *
 * Writing: version 1.0 ('<c8' or '<f4'), the same header bytes as
 * kw_npy_write, through kw_outfile (a temporary file renamed into place by
 * kw_npyw_commit; kw_npyw_abort or a signal removes it). Blocks are written
 * in order, or anywhere when the target is seekable (a regular file). */
#ifndef KW_NPYSTREAM_H
#define KW_NPYSTREAM_H

#include <stdio.h>
#include <sys/types.h>

#include "kw_base.h"
#include "outfile.h"

typedef struct kw_npyr {
    FILE *fp;
    int own;          /* fp opened here (not stdin) */
    int seekable;     /* a regular file */
    int wide;         /* complex128 in the file */
    int big;          /* big-endian data */
    size_t isize;     /* bytes per element in the file */
    int ndim;
    size_t dims[KW_MAX_DIMS];
    size_t count;     /* elements */
    off_t data_off;   /* byte offset of the data */
    size_t pos;       /* next element a pipe delivers */
    unsigned char *buf;
    size_t bufcap;
} kw_npyr;

/*! kw_npyr_open(): open `path` ("-": standard input) and read its header. */
kw_status kw_npyr_open(kw_npyr *r, const char *path);

/*! kw_npyr_read(): `n` elements starting at element `first` (C order) into
 * `out`. On a pipe `first` must not lie behind what was already read. */
kw_status kw_npyr_read(kw_npyr *r, size_t first, size_t n, float complex *out);

/*! kw_npyr_close(): NULL-safe, idempotent. */
void kw_npyr_close(kw_npyr *r);

typedef struct kw_npyw {
    kw_outfile of;
    int seekable;
    size_t esize;     /* 8 (complex64) or 4 (float32) */
    size_t count;     /* elements the shape holds */
    size_t next;      /* elements written in order so far */
    size_t written;   /* elements written in all */
    off_t data_off;
    int open;
} kw_npyw;

/*! kw_npyw_open(): start `path` ("-": standard output) with the header of a
 * KW_C64 or KW_F32 array of the given shape. */
kw_status kw_npyw_open(kw_npyw *w, const char *path, kw_dtype dt, int ndim, const size_t *dims);

/*! kw_npyw_write(): `n` elements at element `first`. A target that cannot
 * seek (a pipe) takes blocks only in order. */
kw_status kw_npyw_write(kw_npyw *w, size_t first, const void *data, size_t n);

/*! kw_npyw_commit(): all elements must have been written; then the file is
 * renamed into place. Always leaves `w` closed. */
kw_status kw_npyw_commit(kw_npyw *w);

/*! kw_npyw_abort(): close and remove the temporary file (NULL-safe). */
void kw_npyw_abort(kw_npyw *w);

#endif
