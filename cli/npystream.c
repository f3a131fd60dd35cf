/* npystream.c: block-wise .npy reading and writing (see npystream.h).
 *
 * The .npy layout (NEP 1, numpy.lib.format): magic "\x93NUMPY", a version
 * byte pair, a little-endian header length (2 bytes for 1.0, 4 bytes for 2.0
 * and 3.0), then a Python dict literal with exactly the keys 'descr',
 * 'fortran_order' and 'shape'; cli/npyhdr.c parses it for both readers. */
#include "npystream.h"
#include "npyhdr.h"
#include "outfile.h"

#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

/* ---- reading ----------------------------------------------------------------- */

static kw_status open_header(kw_npyr *r)
{
    kw_npyhdr h;
    kw_status st = kw_npyhdr_read(r->fp, &h);
    if (st)
        return st;
    KW_FAIL_IF(h.type != KW_NPY_C8 && h.type != KW_NPY_C16, KW_EFORMAT,
               "dtype: multi-slice k-space must be complex64 or complex128");
    KW_FAIL_IF(h.fortran, KW_EFORMAT, "fortran_order: slice-by-slice reading "
               "needs C order (save np.ascontiguousarray(a))");
    r->isize = h.isize;
    r->wide = h.type == KW_NPY_C16;
    r->big = h.big;
    r->ndim = h.ndim;
    memcpy(r->dims, h.dims, sizeof r->dims);
    size_t bytes;
    KW_FAIL_IF(kw_checked_bytes(r->dims, r->ndim, r->isize, 0, &bytes), KW_EFORMAT,
               "shape: the number of bytes overflows (the header is corrupt or lies)");
    r->count = bytes / r->isize;
    r->data_off = (off_t)h.data_off;
    struct stat sb;
    r->seekable = fstat(fileno(r->fp), &sb) == 0 && S_ISREG(sb.st_mode);
    if (r->seekable && (uintmax_t)sb.st_size != (uintmax_t)r->data_off + bytes)
        return kw_set_error(KW_EFORMAT, "shape: promises %zu bytes of data but the file holds %jd "
                            "(the header lies about the shape, or the file is truncated)",
                            bytes, (intmax_t)sb.st_size - (intmax_t)r->data_off);
    return KW_OK;
}

kw_status kw_npyr_open(kw_npyr *r, const char *path)
{
    memset(r, 0, sizeof *r);
    KW_FAIL_IF(!path || !*path, KW_EINVAL, "input: empty file name");
    if (strcmp(path, "-") == 0) {
        r->fp = stdin;
    } else {
        kw_status nst = kw_outfile_note_input(path);
        if (nst)
            return nst;
        r->fp = fopen(path, "rb");
        KW_FAIL_IF(!r->fp, KW_EIO, "%s: %s", path, strerror(errno));
        r->own = 1;
        struct stat sb;
        if (fstat(fileno(r->fp), &sb) == 0 && S_ISDIR(sb.st_mode)) {
            kw_npyr_close(r);
            return kw_set_error(KW_EIO, "%s: is a directory, not a .npy file", path);
        }
    }
    kw_status st = open_header(r);
    if (st) {
        char why[512];
        snprintf(why, sizeof why, "%s", kw_last_error());
        kw_npyr_close(r);
        return kw_set_error(st, "%s: %s", path, why);
    }
    return KW_OK;
}

kw_status kw_npyr_read(kw_npyr *r, size_t first, size_t n, float complex *out)
{
    KW_FAIL_IF(!r->fp, KW_EINVAL, "in: not open");
    KW_FAIL_IF(first > r->count || n > r->count - first, KW_EINVAL,
               "in: elements %zu..%zu lie outside the array (%zu)", first, first + n, r->count);
    if (r->seekable) {
        KW_FAIL_IF(fseeko(r->fp, r->data_off + (off_t)(first * r->isize), SEEK_SET) != 0, KW_EIO,
                   "in: seek failed: %s", strerror(errno));
    } else {
        KW_FAIL_IF(first < r->pos, KW_EINVAL,
                   "in: a pipe reads forwards only (element %zu wanted, %zu already passed)",
                   first, r->pos);
        unsigned char skip[4096];
        while (r->pos < first) {
            size_t m = (first - r->pos) * r->isize;
            m = m < sizeof skip ? m / r->isize : sizeof skip / r->isize;
            KW_FAIL_IF(fread(skip, r->isize, m, r->fp) != m, KW_EFORMAT,
                       "data: truncated (the stream ended before the shape's %zu values)", r->count);
            r->pos += m;
        }
    }
    enum { CHUNK = 1 << 14 };
    if (!r->buf) {
        r->bufcap = CHUNK;
        r->buf = malloc(CHUNK * 16);
        KW_FAIL_IF(!r->buf, KW_ENOMEM, "in: out of memory");
    }
    for (size_t done = 0; done < n;) {
        size_t m = n - done < r->bufcap ? n - done : r->bufcap;
        size_t got = fread(r->buf, r->isize, m, r->fp);
        KW_FAIL_IF(got != m, KW_EFORMAT, "data: truncated (the stream ended before the shape's %zu values)",
                   r->count);
        if (r->big) { /* swap each real and imaginary part */
            size_t w = r->isize / 2;
            for (size_t i = 0; i < 2 * m; i++) {
                unsigned char *b = r->buf + i * w;
                for (size_t j = 0; j < w / 2; j++) {
                    unsigned char t = b[j];
                    b[j] = b[w - 1 - j];
                    b[w - 1 - j] = t;
                }
            }
        }
        if (r->wide) {
            for (size_t i = 0; i < m; i++) {
                double re, im;
                memcpy(&re, r->buf + 16 * i, 8);
                memcpy(&im, r->buf + 16 * i + 8, 8);
                out[done + i] = (float)re + I * (float)im;
            }
        } else {
            memcpy(out + done, r->buf, m * 8);
        }
        done += m;
    }
    r->pos = first + n;
    if (!r->seekable && r->pos == r->count && fgetc(r->fp) != EOF)
        return kw_set_error(KW_EFORMAT, "data: more bytes than the shape says (the header lies about the shape)");
    return KW_OK;
}

void kw_npyr_close(kw_npyr *r)
{
    if (!r)
        return;
    if (r->own && r->fp)
        fclose(r->fp);
    free(r->buf);
    memset(r, 0, sizeof *r);
}

/* ---- writing ----------------------------------------------------------------- */

kw_status kw_npyw_open(kw_npyw *w, const char *path, kw_dtype dt, int ndim, const size_t *dims)
{
    memset(w, 0, sizeof *w);
    KW_FAIL_IF(dt != KW_C64 && dt != KW_F32, KW_EINVAL, "out: only complex64 or float32 are streamed");
    KW_FAIL_IF(ndim < 1 || ndim > KW_MAX_DIMS, KW_EINVAL, "out: %d dimensions", ndim);
    w->esize = dt == KW_C64 ? 8 : 4;
    size_t bytes;
    KW_FAIL_IF(kw_checked_bytes(dims, ndim, w->esize, 0, &bytes), KW_EINVAL, "out: size overflows");
    w->count = bytes / w->esize;
    /* the header exactly as kw_npy_write writes it: numpy's own spelling of
     * the shape ("(3,)" but "(3, 4)") and padding to a multiple of 64 bytes */
    char hdr[512];
    int len = snprintf(hdr, sizeof hdr, "{'descr': '%s', 'fortran_order': False, 'shape': (",
                       dt == KW_C64 ? "<c8" : "<f4");
    for (int i = 0; i < ndim; i++)
        len += snprintf(hdr + len, sizeof hdr - (size_t)len, "%zu%s", dims[i],
                        ndim == 1 ? "," : i + 1 < ndim ? ", " : "");
    len += snprintf(hdr + len, sizeof hdr - (size_t)len, "), }");
    size_t pad = (64 - (10 + (size_t)len + 1) % 64) % 64;
    memset(hdr + len, ' ', pad);
    hdr[(size_t)len + pad] = '\n';
    size_t hlen = (size_t)len + pad + 1;
    unsigned char pre[10] = {0x93, 'N', 'U', 'M', 'P', 'Y', 1, 0, (unsigned char)(hlen & 0xff),
                             (unsigned char)(hlen >> 8)};
    kw_status st = kw_outfile_open(&w->of, path);
    if (st)
        return st;
    w->open = 1;
    if (fwrite(pre, 1, 10, w->of.fp) != 10 || fwrite(hdr, 1, hlen, w->of.fp) != hlen) {
        kw_npyw_abort(w);
        return kw_set_error(KW_EIO, "%s: write failed", path);
    }
    w->data_off = (off_t)(10 + hlen);
    struct stat sb;
    w->seekable = fstat(fileno(w->of.fp), &sb) == 0 && S_ISREG(sb.st_mode) &&
                  ftello(w->of.fp) == w->data_off;
    return KW_OK;
}

kw_status kw_npyw_write(kw_npyw *w, size_t first, const void *data, size_t n)
{
    KW_FAIL_IF(!w->open, KW_EINVAL, "out: not open");
    KW_FAIL_IF(first > w->count || n > w->count - first, KW_EINVAL,
               "out: elements %zu..%zu lie outside the array (%zu)", first, first + n, w->count);
    if (first != w->next) {
        KW_FAIL_IF(!w->seekable, KW_EINVAL,
                   "out: this target cannot seek: blocks must come in order");
        KW_FAIL_IF(fseeko(w->of.fp, w->data_off + (off_t)(first * w->esize), SEEK_SET) != 0,
                   KW_EIO, "out: seek failed: %s", strerror(errno));
    }
    const float *v = data;
    for (size_t i = 0; i < n * (w->esize / 4); i++)
        KW_FAIL_IF(!isfinite(v[i]), KW_ENUMERIC, "out: a value of the result is not finite "
                   "(inf or NaN): an input or option drives it beyond float range");
    KW_FAIL_IF(n && fwrite(data, w->esize, n, w->of.fp) != n, KW_EIO, "out: write failed: %s",
               strerror(errno));
    w->next = first + n;
    w->written += n;
    return KW_OK;
}

kw_status kw_npyw_commit(kw_npyw *w)
{
    KW_FAIL_IF(!w->open, KW_EINVAL, "out: not open");
    if (w->written != w->count) {
        size_t a = w->written, b = w->count;
        kw_npyw_abort(w);
        return kw_set_error(KW_EINVAL, "out: %zu of %zu values written", a, b);
    }
    w->open = 0;
    return kw_outfile_commit(&w->of);
}

void kw_npyw_abort(kw_npyw *w)
{
    if (!w || !w->open)
        return;
    kw_outfile_abort(&w->of);
    w->open = 0;
}
