/* npy.c: NumPy .npy reader and writer.
 * Format: NEP 1 / numpy.lib.format: magic "\x93NUMPY", version (1,0) with a
 * 2-byte header length, (2,0) and (3,0) with 4 bytes; the header is a Python
 * dict literal {'descr': ..., 'fortran_order': ..., 'shape': (...)}. */
#define _POSIX_C_SOURCE 200809L
#include "npy.h"

#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "npyhdr.h"
#include "outfile.h"

static size_t npy_limit = KW_NPY_DEFAULT_LIMIT;

void kw_npy_set_limit(size_t bytes) { npy_limit = bytes ? bytes : KW_NPY_DEFAULT_LIMIT; }

typedef kw_npyhdr header;

/* ---- data ------------------------------------------------------------------ */

static void swap_bytes(unsigned char *b, size_t n, size_t w)
{
    for (size_t i = 0; i < n; i++, b += w)
        for (size_t j = 0; j < w / 2; j++) {
            unsigned char t = b[j];
            b[j] = b[w - 1 - j];
            b[w - 1 - j] = t;
        }
}

/* Convert n file elements at src (native order by now) into out[off..]. */
static void convert(const header *h, const unsigned char *src, size_t n,
                    kw_array *out, size_t off)
{
    size_t i;
    switch (h->type) {
    case KW_NPY_C8:
        memcpy((float complex *)out->data + off, src, n * 8);
        break;
    case KW_NPY_C16:
        for (i = 0; i < n; i++) {
            double re, im;
            memcpy(&re, src + 16 * i, 8);
            memcpy(&im, src + 16 * i + 8, 8);
            ((float complex *)out->data)[off + i] = (float)re + I * (float)im;
        }
        break;
    case KW_NPY_F4:
        memcpy((float *)out->data + off, src, n * 4);
        break;
    case KW_NPY_F8:
        for (i = 0; i < n; i++) {
            double v;
            memcpy(&v, src + 8 * i, 8);
            ((float *)out->data)[off + i] = (float)v;
        }
        break;
    case KW_NPY_I2:
        for (i = 0; i < n; i++) {
            int16_t v;
            memcpy(&v, src + 2 * i, 2);
            ((float *)out->data)[off + i] = (float)v;
        }
        break;
    case KW_NPY_U1:
        memcpy((uint8_t *)out->data + off, src, n);
        break;
    case KW_NPY_B1:
        for (i = 0; i < n; i++)
            ((uint8_t *)out->data)[off + i] = src[i] ? 1 : 0;
        break;
    }
}

/* "(3, 4)" for the messages. */
static void format_shape(const header *h, char *buf, size_t cap)
{
    size_t k = (size_t)snprintf(buf, cap, "(");
    for (int i = 0; i < h->ndim && k < cap; i++)
        k += (size_t)snprintf(buf + k, cap - k, "%zu%s", h->dims[i],
                              (h->ndim == 1) ? "," : (i + 1 < h->ndim ? ", " : ""));
    if (k < cap)
        snprintf(buf + k, cap - k, ")");
}

/* "1.5 GiB", "512 MiB", "100 bytes". */
static const char *fmt_bytes(size_t n, char *buf, size_t cap)
{
    if (n >= ((size_t)1 << 40))
        snprintf(buf, cap, "%.3g TiB", (double)n / (double)((size_t)1 << 40));
    else if (n >= ((size_t)1 << 30))
        snprintf(buf, cap, "%.3g GiB", (double)n / (double)((size_t)1 << 30));
    else if (n >= ((size_t)1 << 20))
        snprintf(buf, cap, "%.3g MiB", (double)n / (double)((size_t)1 << 20));
    else if (n >= 1024)
        snprintf(buf, cap, "%.3g KiB", (double)n / 1024.0);
    else
        snprintf(buf, cap, "%zu bytes", n);
    return buf;
}

/* `remaining`: the length of the stream (the offset of its end, as ftell
 * counts) when known (a regular file or a buffer), -1 for a pipe. */
/* A Fortran-ordered array (first axis fastest, as np.save writes
 * np.fft.fftn(...) of a Fortran array) into C order, same shape: walks the
 * C-order destination and steps the Fortran source offset along. */
static kw_status fortran_to_c(kw_array *a)
{
    size_t n = kw_array_count(a), es = kw_dtype_size(a->dtype);
    if (a->ndim < 2 || n < 2)
        return KW_OK;
    unsigned char *tmp = kw_alloc_n(n, es);
    KW_FAIL_IF(!tmp, KW_ENOMEM, "out of memory reordering a Fortran-ordered array");
    size_t idx[KW_MAX_DIMS] = {0}, stride[KW_MAX_DIMS];
    stride[0] = 1;
    for (int k = 1; k < a->ndim; k++)
        stride[k] = stride[k - 1] * a->dims[k - 1];
    const unsigned char *src = a->data;
    size_t off = 0;
    for (size_t i = 0; i < n; i++) {
        memcpy(tmp + i * es, src + off * es, es);
        for (int k = a->ndim - 1; k >= 0; k--) {
            if (++idx[k] < a->dims[k]) {
                off += stride[k];
                break;
            }
            off -= stride[k] * (a->dims[k] - 1);
            idx[k] = 0;
        }
    }
    memcpy(a->data, tmp, n * es);
    kw_free(tmp);
    return KW_OK;
}

static kw_status read_stream(FILE *f, intmax_t remaining, kw_array *out)
{
    memset(out, 0, sizeof *out);
    header h;
    kw_status st = kw_npyhdr_read(f, &h);
    if (st)
        return st;
    kw_dtype dt = (h.type == KW_NPY_C8 || h.type == KW_NPY_C16) ? KW_C64
                  : (h.type == KW_NPY_U1 || h.type == KW_NPY_B1) ? KW_U8
                                                       : KW_F32;
    char shp[KW_MAX_DIMS * 22 + 4];
    format_shape(&h, shp, sizeof shp);
    /* Sizes are checked before anything is allocated: the product of the
     * shape must not overflow, the array must fit under the memory limit
     * (--max-memory), and when the length of the input is known the data
     * must be exactly as long as the shape says. */
    size_t bytes, file_bytes;
    if (kw_checked_bytes(h.dims, h.ndim, kw_dtype_size(dt), 0, &bytes) ||
        kw_checked_bytes(h.dims, h.ndim, h.isize, 0, &file_bytes))
        return kw_set_error(KW_EFORMAT, "shape: %s: the number of bytes overflows "
                            "(the header is corrupt or lies)", shp);
    if (bytes > npy_limit)
        return kw_set_error(KW_ENOMEM, "shape: %s needs %s of memory, above the "
                            "limit of %s (--max-memory)", shp,
                            fmt_bytes(bytes, (char[32]){0}, 32),
                            fmt_bytes(npy_limit, (char[32]){0}, 32));
    if (remaining >= 0) {
        long pos = ftell(f);
        if (pos >= 0 && (uintmax_t)pos <= (uintmax_t)remaining) {
            uintmax_t left = (uintmax_t)remaining - (uintmax_t)pos;
            if (left != file_bytes)
                return kw_set_error(KW_EFORMAT, "shape: %s promises %zu bytes of data "
                                    "but the file holds %ju (the header lies about "
                                    "the shape, or the file is truncated)", shp,
                                    file_bytes, left);
        }
    }
    /* A file's length was checked above, so its array is allocated whole. A
     * pipe's is not known: the array grows (doubling from 16 MiB) as the
     * data arrives, so a header that promises more than is sent costs what
     * was sent, not what was promised. */
    kw_array tmp;
    memset(&tmp, 0, sizeof tmp);
    tmp.dtype = dt;
    tmp.ndim = h.ndim;
    memcpy(tmp.dims, h.dims, sizeof tmp.dims);
    size_t n = kw_array_count(&tmp), es = kw_dtype_size(dt);
    size_t grow0 = ((size_t)16 << 20) / es;
    size_t cap = remaining >= 0 || n <= grow0 ? n : grow0;
    if (n && !(out->data = kw_alloc(cap * es)))
        return kw_set_error(KW_ENOMEM, "out of memory (%s)", fmt_bytes(cap * es, (char[32]){0}, 32));
    out->dtype = dt;
    out->ndim = h.ndim;
    memcpy(out->dims, h.dims, sizeof out->dims);
    enum { CHUNK = 1 << 16 };
    unsigned char *buf = malloc(CHUNK * 16);
    if (!buf) {
        kw_array_free(out);
        return kw_set_error(KW_ENOMEM, "out of memory");
    }
    size_t done = 0;
    while (done < n) {
        if (done == cap) {
            size_t nc = cap > n / 2 ? n : 2 * cap;
            void *nd = kw_alloc(nc * es);
            if (!nd) {
                free(buf);
                kw_array_free(out);
                return kw_set_error(KW_ENOMEM, "out of memory (%s)",
                                    fmt_bytes(nc * es, (char[32]){0}, 32));
            }
            memcpy(nd, out->data, done * es);
            kw_free(out->data);
            out->data = nd;
            cap = nc;
        }
        size_t m = n - done < CHUNK ? n - done : CHUNK;
        if (m > cap - done)
            m = cap - done;
        size_t r = fread(buf, h.isize, m, f);
        if (r != m) {
            free(buf);
            kw_array_free(out);
            return kw_set_error(KW_EFORMAT,
                                "data: truncated (shape promises %zu values, file "
                                "holds %zu)", n, done + r);
        }
        if (h.big && h.isize > 1) {
            size_t w = (h.type == KW_NPY_C8 || h.type == KW_NPY_C16) ? h.isize / 2 : h.isize;
            swap_bytes(buf, m * (h.isize / w), w);
        }
        convert(&h, buf, m, out, done);
        done += m;
    }
    free(buf);
    int extra = fgetc(f);
    if (extra != EOF) {
        kw_array_free(out);
        return kw_set_error(KW_EFORMAT, "data: more bytes than the shape says "
                                        "(the header lies about the shape)");
    }
    if (h.fortran && (st = fortran_to_c(out)))
        kw_array_free(out);
    return st;
}

/* Length of a regular file (positions are absolute), or -1 for a pipe. */
static intmax_t stream_size(FILE *f)
{
    struct stat sb;
    if (fstat(fileno(f), &sb) != 0 || !S_ISREG(sb.st_mode))
        return -1;
    return (intmax_t)sb.st_size;
}

kw_status kw_npy_read(const char *path, kw_array *out)
{
    memset(out, 0, sizeof *out);
    KW_FAIL_IF(!path || !*path, KW_EINVAL, "input: empty file name");
    if (strcmp(path, "-") == 0)
        return read_stream(stdin, stream_size(stdin), out);
    kw_status nst = kw_outfile_note_input(path);
    if (nst)
        return nst;
    FILE *f = fopen(path, "rb");
    KW_FAIL_IF(!f, KW_EIO, "%s: %s", path, strerror(errno));
    struct stat sb;
    if (fstat(fileno(f), &sb) == 0 && S_ISDIR(sb.st_mode)) {
        fclose(f);
        return kw_set_error(KW_EIO, "%s: is a directory, not a .npy file", path);
    }
    kw_status st = read_stream(f, stream_size(f), out);
    if (st == KW_OK && ferror(f)) {
        kw_array_free(out);
        st = kw_set_error(KW_EIO, "read error");
    }
    fclose(f);
    if (st) {
        char why[256];
        snprintf(why, sizeof why, "%s", kw_last_error());
        if (strcmp(why, "Is a directory") == 0 || errno == EISDIR)
            return kw_set_error(KW_EIO, "%s: is a directory", path);
        return kw_set_error(st, "%s: %s", path, why);
    }
    return KW_OK;
}

kw_status kw_npy_parse(const void *buf, size_t len, kw_array *out)
{
    memset(out, 0, sizeof *out);
    KW_FAIL_IF(len == 0, KW_EFORMAT, "empty file");
    FILE *f = fmemopen((void *)buf, len, "rb");
    KW_FAIL_IF(!f, KW_EIO, "cannot open memory stream");
    kw_status st = read_stream(f, (intmax_t)len, out);
    fclose(f);
    return st;
}

kw_status kw_npy_write(const char *path, const kw_array *a)
{
    const char *descr;
    switch (a->dtype) {
    case KW_C64: descr = "<c8"; break;
    case KW_F32: descr = "<f4"; break;
    case KW_U8: descr = "|u1"; break;
    default: return kw_set_error(KW_EINVAL, "npy: unknown dtype");
    }
    /* No inf or NaN leaves kweave in an array: a value beyond float range
     * means an input or option drove the result there (issue 18). */
    if (a->dtype != KW_U8 && kw_array_count(a)) {
        const float *v = a->data;
        size_t n = kw_array_count(a) * (a->dtype == KW_C64 ? 2 : 1), bad = 0;
        for (size_t i = 0; i < n; i++)
            bad += !isfinite(v[i]);
        if (bad)
            return kw_set_error(KW_ENUMERIC, "%s: %zu of %zu values of the result are not finite "
                                "(inf or NaN): an input or option drives it beyond float range; "
                                "nothing written", path, bad, n);
    }
    char shape[256] = "(";
    for (int i = 0; i < a->ndim; i++) {
        char d[32];
        snprintf(d, sizeof d, "%zu,%s", a->dims[i],
                 (i + 1 < a->ndim) ? " " : "");
        strcat(shape, d);
    }
    if (a->ndim > 1)
        shape[strlen(shape) - 1] = '\0'; /* numpy writes (3, 4) but (3,) */
    strcat(shape, ")");
    char hdr[512];
    int len = snprintf(hdr, sizeof hdr,
                       "{'descr': '%s', 'fortran_order': False, 'shape': %s, }",
                       descr, shape);
    /* Pad with spaces so that magic + header ends on a multiple of 64. */
    size_t total = 10 + (size_t)len + 1;
    size_t pad = (64 - total % 64) % 64;
    memset(hdr + len, ' ', pad);
    hdr[len + pad] = '\n';
    size_t hlen = (size_t)len + pad + 1;
    unsigned char pre[10] = {0x93, 'N', 'U', 'M', 'P', 'Y', 1, 0,
                             (unsigned char)(hlen & 0xff), (unsigned char)(hlen >> 8)};
    size_t n = kw_array_count(a), es = kw_dtype_size(a->dtype);
    kw_outfile o;
    kw_status st = kw_outfile_open(&o, path);
    if (st)
        return st;
    if (fwrite(pre, 1, 10, o.fp) != 10 || fwrite(hdr, 1, hlen, o.fp) != hlen ||
        (n && fwrite(a->data, es, n, o.fp) != n)) {
        kw_outfile_abort(&o);
        return kw_set_error(KW_EIO, "%s: write failed", path);
    }
    return kw_outfile_commit(&o);
}
