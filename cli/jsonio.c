/* jsonio.c: JSON reports and sidecars through cJSON. */
#define _POSIX_C_SOURCE 200809L
#include "jsonio.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "outfile.h"
#include "textfile.h"

kw_status kw_json_write(const char *path, const cJSON *root)
{
    char *txt = cJSON_Print(root);
    KW_FAIL_IF(!txt, KW_ENOMEM, "json: out of memory");
    size_t n = strlen(txt);
    kw_outfile o;
    kw_status st = kw_outfile_open(&o, path);
    if (st) {
        free(txt);
        return st;
    }
    int bad = fwrite(txt, 1, n, o.fp) != n || fputc('\n', o.fp) == EOF;
    free(txt);
    if (bad) {
        kw_outfile_abort(&o);
        return kw_set_error(KW_EIO, "%s: write failed", path);
    }
    return kw_outfile_commit(&o);
}

kw_status kw_json_parse(const char *buf, size_t len, cJSON **root)
{
    *root = NULL;
    const char *end = NULL;
    cJSON *r = cJSON_ParseWithLengthOpts(buf, len, &end, 0);
    if (!r) {
        size_t off = end ? (size_t)(end - buf) : 0;
        const char *e = cJSON_GetErrorPtr();
        if (e && e >= buf && e <= buf + len)
            off = (size_t)(e - buf);
        return kw_set_error(KW_EFORMAT, "not valid JSON (near byte %zu)", off);
    }
    /* Strict: one value, then only blanks (RFC 8259); a NUL byte or a second
     * value after it is refused, as Python's json module refuses it. */
    size_t at = end ? (size_t)(end - buf) : len;
    while (at < len && (buf[at] == ' ' || buf[at] == '\t' || buf[at] == '\n' || buf[at] == '\r'))
        at++;
    if (at < len) {
        cJSON_Delete(r);
        return kw_set_error(KW_EFORMAT, "not valid JSON: %s after the value (byte %zu)",
                            buf[at] == '\0' ? "a NUL byte" : "text", at);
    }
    *root = r;
    return KW_OK;
}

kw_status kw_json_read(const char *path, cJSON **root)
{
    *root = NULL;
    char *buf;
    size_t n;
    kw_status st = kw_textfile_load(path, (size_t)64 << 20, &buf, &n);
    if (st)
        return st;
    st = kw_json_parse(buf, n, root);
    kw_free(buf);
    if (st) {
        char why[200];
        snprintf(why, sizeof why, "%s", kw_last_error());
        st = kw_set_error(st, "%s: %s", path, why);
    }
    return st;
}

char *kw_sidecar_path(const char *npy_path)
{
    if (!npy_path || strcmp(npy_path, "-") == 0)
        return NULL;
    size_t n = strlen(npy_path);
    const char *slash = strrchr(npy_path, '/');
    const char *dot = strrchr(npy_path, '.');
    size_t stem = (dot && (!slash || dot > slash)) ? (size_t)(dot - npy_path) : n;
    char *s = malloc(stem + 6);
    if (!s)
        return NULL;
    memcpy(s, npy_path, stem);
    memcpy(s + stem, ".json", 6);
    return s;
}

kw_status kw_json_get_number(const cJSON *obj, const char *key, double *v)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(obj, key);
    KW_FAIL_IF(!it, KW_EFORMAT, "%s: missing", key);
    KW_FAIL_IF(!cJSON_IsNumber(it) || !isfinite(it->valuedouble), KW_EFORMAT,
               "%s: not a finite number", key);
    *v = it->valuedouble;
    return KW_OK;
}
