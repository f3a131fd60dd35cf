/* npy.c: NumPy .npy reader and writer.
 * Format: NEP 1 / numpy.lib.format: magic "\x93NUMPY", version (1,0) with a
 * 2-byte header length, (2,0) and (3,0) with 4 bytes; the header is a Python
 * dict literal {'descr': ..., 'fortran_order': ..., 'shape': (...)}. */
#define _POSIX_C_SOURCE 200809L
#include "npy.h"

#include <ctype.h>
#include <errno.h>
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "outfile.h"

static size_t npy_limit = KW_NPY_DEFAULT_LIMIT;

void kw_npy_set_limit(size_t bytes) { npy_limit = bytes ? bytes : KW_NPY_DEFAULT_LIMIT; }

typedef enum src_type { T_C8, T_C16, T_F4, T_F8, T_I2, T_U1, T_B1 } src_type;

typedef struct header {
    src_type type;
    int big;       /* big-endian data */
    size_t isize;  /* bytes per element in the file */
    int ndim;
    size_t dims[KW_MAX_DIMS];
    int fortran;   /* 'fortran_order': True: reordered to C order on reading */
} header;

/* ---- the header dict ------------------------------------------------------ */

static const char *skip_ws(const char *p, const char *end)
{
    while (p < end && (*p == ' ' || *p == '\t' || *p == '\n' || *p == '\r'))
        p++;
    return p;
}

/* A quoted Python string; returns pointer after it, or NULL. */
static const char *parse_str(const char *p, const char *end, char *out, size_t cap)
{
    if (p >= end || (*p != '\'' && *p != '"'))
        return NULL;
    char q = *p++;
    size_t k = 0;
    while (p < end && *p != q) {
        if (*p == '\\' || k + 1 >= cap)
            return NULL;
        out[k++] = *p++;
    }
    if (p >= end)
        return NULL;
    out[k] = '\0';
    return p + 1;
}

static kw_status parse_descr(const char *d, header *h)
{
    static const struct {
        const char *code;
        src_type t;
        size_t size;
    } codes[] = {{"c8", T_C8, 8}, {"c16", T_C16, 16}, {"f4", T_F4, 4}, {"f8", T_F8, 8},
                 {"i2", T_I2, 2}, {"u1", T_U1, 1},   {"b1", T_B1, 1}};
    char order = d[0];
    KW_FAIL_IF(order != '<' && order != '>' && order != '|' && order != '=',
               KW_EFORMAT, "dtype '%s' is not supported (complex64, complex128, "
               "float32, float64, int16, uint8, bool)", d);
    for (size_t i = 0; i < sizeof codes / sizeof codes[0]; i++) {
        if (strcmp(d + 1, codes[i].code) == 0) {
            h->type = codes[i].t;
            h->isize = codes[i].size;
            h->big = order == '>';
            KW_FAIL_IF(order == '|' && h->isize > 1, KW_EFORMAT,
                       "dtype '%s' has no byte order", d);
            return KW_OK;
        }
    }
    return kw_set_error(KW_EFORMAT,
                        "dtype '%s' is not supported (complex64, complex128, "
                        "float32, float64, int16, uint8, bool)", d);
}

static kw_status parse_shape(const char *p, const char *end, header *h,
                             const char **after)
{
    KW_FAIL_IF(p >= end || *p != '(', KW_EFORMAT, "header: 'shape' is not a tuple");
    p++;
    h->ndim = 0;
    for (;;) {
        p = skip_ws(p, end);
        KW_FAIL_IF(p >= end, KW_EFORMAT, "header: 'shape' is not closed");
        if (*p == ')') {
            p++;
            break;
        }
        KW_FAIL_IF(!isdigit((unsigned char)*p), KW_EFORMAT,
                   "header: 'shape' holds something other than whole numbers");
        KW_FAIL_IF(h->ndim >= KW_MAX_DIMS, KW_EFORMAT,
                   "header: 'shape' has more than %d dimensions", KW_MAX_DIMS);
        size_t v = 0;
        while (p < end && isdigit((unsigned char)*p)) {
            KW_FAIL_IF(v > (SIZE_MAX - 9) / 10, KW_EFORMAT,
                       "header: 'shape' dimension too large");
            v = v * 10 + (size_t)(*p++ - '0');
        }
        h->dims[h->ndim++] = v;
        p = skip_ws(p, end);
        if (p < end && *p == 'L') /* Python 2 long suffix */
            p++;
        p = skip_ws(p, end);
        if (p < end && *p == ',') {
            p++;
            continue;
        }
        KW_FAIL_IF(p >= end || *p != ')', KW_EFORMAT, "header: 'shape' is malformed");
    }
    *after = p;
    return KW_OK;
}

static kw_status parse_header(const char *txt, size_t len, header *h)
{
    const char *p = txt, *end = txt + len;
    int have_descr = 0, have_order = 0, have_shape = 0;
    p = skip_ws(p, end);
    KW_FAIL_IF(p >= end || *p != '{', KW_EFORMAT, "header: not a dictionary");
    p++;
    for (;;) {
        p = skip_ws(p, end);
        KW_FAIL_IF(p >= end, KW_EFORMAT, "header: dictionary not closed");
        if (*p == '}')
            break;
        char key[32], val[32];
        p = parse_str(p, end, key, sizeof key);
        KW_FAIL_IF(!p, KW_EFORMAT, "header: malformed key");
        p = skip_ws(p, end);
        KW_FAIL_IF(p >= end || *p != ':', KW_EFORMAT, "header: missing ':' after '%s'", key);
        p = skip_ws(p + 1, end);
        if (strcmp(key, "descr") == 0) {
            KW_FAIL_IF(p < end && *p == '[', KW_EFORMAT,
                       "dtype: structured arrays are not supported");
            p = parse_str(p, end, val, sizeof val);
            KW_FAIL_IF(!p, KW_EFORMAT, "header: 'descr' is not a string");
            kw_status st = parse_descr(val, h);
            if (st)
                return st;
            have_descr = 1;
        } else if (strcmp(key, "fortran_order") == 0) {
            if ((size_t)(end - p) >= 5 && strncmp(p, "False", 5) == 0) {
                p += 5;
            } else if ((size_t)(end - p) >= 4 && strncmp(p, "True", 4) == 0) {
                p += 4;
                h->fortran = 1;
            } else {
                return kw_set_error(KW_EFORMAT, "header: 'fortran_order' is not a bool");
            }
            have_order = 1;
        } else if (strcmp(key, "shape") == 0) {
            kw_status st = parse_shape(p, end, h, &p);
            if (st)
                return st;
            have_shape = 1;
        } else {
            return kw_set_error(KW_EFORMAT, "header: unknown key '%s'", key);
        }
        p = skip_ws(p, end);
        if (p < end && *p == ',') {
            p++;
            continue;
        }
        p = skip_ws(p, end);
        KW_FAIL_IF(p >= end || *p != '}', KW_EFORMAT, "header: malformed dictionary");
    }
    KW_FAIL_IF(!have_descr, KW_EFORMAT, "header: no 'descr'");
    KW_FAIL_IF(!have_order, KW_EFORMAT, "header: no 'fortran_order'");
    KW_FAIL_IF(!have_shape, KW_EFORMAT, "header: no 'shape'");
    return KW_OK;
}

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
    case T_C8:
        memcpy((float complex *)out->data + off, src, n * 8);
        break;
    case T_C16:
        for (i = 0; i < n; i++) {
            double re, im;
            memcpy(&re, src + 16 * i, 8);
            memcpy(&im, src + 16 * i + 8, 8);
            ((float complex *)out->data)[off + i] = (float)re + I * (float)im;
        }
        break;
    case T_F4:
        memcpy((float *)out->data + off, src, n * 4);
        break;
    case T_F8:
        for (i = 0; i < n; i++) {
            double v;
            memcpy(&v, src + 8 * i, 8);
            ((float *)out->data)[off + i] = (float)v;
        }
        break;
    case T_I2:
        for (i = 0; i < n; i++) {
            int16_t v;
            memcpy(&v, src + 2 * i, 2);
            ((float *)out->data)[off + i] = (float)v;
        }
        break;
    case T_U1:
        memcpy((uint8_t *)out->data + off, src, n);
        break;
    case T_B1:
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
    unsigned char *tmp = malloc(n * es);
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
    free(tmp);
    return KW_OK;
}

static kw_status read_stream(FILE *f, intmax_t remaining, kw_array *out)
{
    unsigned char pre[12];
    memset(out, 0, sizeof *out);
    size_t got = fread(pre, 1, 10, f);
    KW_FAIL_IF(got == 0, KW_EFORMAT, "empty file");
    KW_FAIL_IF(got < 10 || memcmp(pre, "\x93NUMPY", 6) != 0, KW_EFORMAT,
               "not a .npy file (bad magic)");
    int major = pre[6];
    size_t hlen;
    if (major == 1) {
        hlen = (size_t)pre[8] | (size_t)pre[9] << 8;
    } else if (major == 2 || major == 3) {
        KW_FAIL_IF(fread(pre + 10, 1, 2, f) != 2, KW_EFORMAT, "truncated header");
        hlen = (size_t)pre[8] | (size_t)pre[9] << 8 | (size_t)pre[10] << 16 |
               (size_t)pre[11] << 24;
    } else {
        return kw_set_error(KW_EFORMAT, "format version %d.%d is not supported",
                            major, pre[7]);
    }
    KW_FAIL_IF(hlen == 0 || hlen > (1u << 20), KW_EFORMAT,
               "header length %zu is not plausible", hlen);
    char *txt = malloc(hlen + 1);
    KW_FAIL_IF(!txt, KW_ENOMEM, "out of memory");
    if (fread(txt, 1, hlen, f) != hlen) {
        free(txt);
        return kw_set_error(KW_EFORMAT, "truncated header");
    }
    txt[hlen] = '\0';
    header h;
    memset(&h, 0, sizeof h);
    kw_status st = parse_header(txt, hlen, &h);
    free(txt);
    if (st)
        return st;
    kw_dtype dt = (h.type == T_C8 || h.type == T_C16) ? KW_C64
                  : (h.type == T_U1 || h.type == T_B1) ? KW_U8
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
    st = kw_array_alloc(out, dt, h.ndim, h.dims);
    if (st)
        return st;
    size_t n = kw_array_count(out);
    enum { CHUNK = 1 << 16 };
    unsigned char *buf = malloc(CHUNK * 16);
    if (!buf) {
        kw_array_free(out);
        return kw_set_error(KW_ENOMEM, "out of memory");
    }
    size_t done = 0;
    while (done < n) {
        size_t m = n - done < CHUNK ? n - done : CHUNK;
        size_t r = fread(buf, h.isize, m, f);
        if (r != m) {
            free(buf);
            kw_array_free(out);
            return kw_set_error(KW_EFORMAT,
                                "data: truncated (shape promises %zu values, file "
                                "holds %zu)", n, done + r);
        }
        if (h.big && h.isize > 1) {
            size_t w = (h.type == T_C8 || h.type == T_C16) ? h.isize / 2 : h.isize;
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
