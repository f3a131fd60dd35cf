/* npyhdr.h: the one parser of .npy headers, used by both readers (cli/npy.c,
 * whole arrays; cli/npystream.c, block by block).
 *
 * The layout (NEP 1, numpy.lib.format): magic "\x93NUMPY", a version byte
 * pair, a little-endian header length (2 bytes for 1.0, 4 bytes for 2.0 and
 * 3.0), then a Python dict literal with exactly the keys 'descr',
 * 'fortran_order' and 'shape', padded with blanks. Nothing but blanks may
 * follow the dict (numpy evaluates the whole text as one literal and refuses
 * anything after it). */
#ifndef KW_NPYHDR_H
#define KW_NPYHDR_H

#include <stdio.h>

#include "kw_base.h"

typedef enum kw_npy_type { KW_NPY_C8, KW_NPY_C16, KW_NPY_F4, KW_NPY_F8, KW_NPY_I2, KW_NPY_U1, KW_NPY_B1 } kw_npy_type;

typedef struct kw_npyhdr {
    kw_npy_type type;
    int big;       /* big-endian data */
    size_t isize;  /* bytes per element in the file */
    int ndim;
    size_t dims[KW_MAX_DIMS];
    int fortran;   /* 'fortran_order': True */
    size_t data_off; /* bytes before the data (prelude + header) */
} kw_npyhdr;

/* kw_npyhdr_parse(): the dict text (`len` bytes) into `h`. */
kw_status kw_npyhdr_parse(const char *txt, size_t len, kw_npyhdr *h);

/* kw_npyhdr_read(): read the prelude and the header from `f`, which stands at
 * the start of the file; leaves `f` at the first data byte. */
kw_status kw_npyhdr_read(FILE *f, kw_npyhdr *h);

#endif
