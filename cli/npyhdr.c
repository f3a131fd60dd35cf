/* npyhdr.c: the .npy header (see npyhdr.h). */
#include "npyhdr.h"

#include <ctype.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

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

static kw_status parse_descr(const char *d, kw_npyhdr *h)
{
    static const struct {
        const char *code;
        kw_npy_type t;
        size_t size;
    } codes[] = {{"c8", KW_NPY_C8, 8}, {"c16", KW_NPY_C16, 16}, {"f4", KW_NPY_F4, 4}, {"f8", KW_NPY_F8, 8},
                 {"i2", KW_NPY_I2, 2}, {"u1", KW_NPY_U1, 1},   {"b1", KW_NPY_B1, 1}};
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

static kw_status parse_shape(const char *p, const char *end, kw_npyhdr *h,
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

kw_status kw_npyhdr_parse(const char *txt, size_t len, kw_npyhdr *h)
{
    const char *p = txt, *end = txt + len;
    int have_descr = 0, have_order = 0, have_shape = 0;
    memset(h, 0, sizeof *h);
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
    p = skip_ws(p + 1, end);
    KW_FAIL_IF(p < end && *p != '\0', KW_EFORMAT, "header: text after the dictionary");
    KW_FAIL_IF(!have_descr, KW_EFORMAT, "header: no 'descr'");
    KW_FAIL_IF(!have_order, KW_EFORMAT, "header: no 'fortran_order'");
    KW_FAIL_IF(!have_shape, KW_EFORMAT, "header: no 'shape'");
    return KW_OK;
}

kw_status kw_npyhdr_read(FILE *f, kw_npyhdr *h)
{
    unsigned char pre[12];
    memset(h, 0, sizeof *h);
    size_t got = fread(pre, 1, 10, f);
    KW_FAIL_IF(got == 0, KW_EFORMAT, "empty file");
    KW_FAIL_IF(got < 10 || memcmp(pre, "\x93NUMPY", 6) != 0, KW_EFORMAT,
               "not a .npy file (bad magic)");
    int major = pre[6];
    size_t hlen, pre_len = 10;
    if (major == 1) {
        hlen = (size_t)pre[8] | (size_t)pre[9] << 8;
    } else if (major == 2 || major == 3) {
        KW_FAIL_IF(fread(pre + 10, 1, 2, f) != 2, KW_EFORMAT, "truncated header");
        hlen = (size_t)pre[8] | (size_t)pre[9] << 8 | (size_t)pre[10] << 16 |
               (size_t)pre[11] << 24;
        pre_len = 12;
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
    kw_status st = kw_npyhdr_parse(txt, hlen, h);
    free(txt);
    h->data_off = pre_len + hlen;
    return st;
}
