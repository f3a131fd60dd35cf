/* protofile.c (cli): a protocol file's bytes, for kw_protocol_input_parse(). */
#include "protofile.h"
#include "outfile.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

kw_status kw_protofile_load(const char *path, char **buf, size_t *len)
{
    enum { MAXBYTES = 1 << 20 };
    *buf = NULL;
    *len = 0;
    KW_FAIL_IF(!path || !*path, KW_EINVAL, "protocol: no file name");
    kw_status nst = kw_outfile_note_input(path);
    if (nst)
        return nst;
    FILE *f = strcmp(path, "-") == 0 ? stdin : fopen(path, "rb");
    KW_FAIL_IF(!f, KW_EIO, "%s: %s", path, strerror(errno));
    char *b = malloc(MAXBYTES + 1);
    if (!b) {
        if (f != stdin)
            fclose(f);
        return kw_set_error(KW_ENOMEM, "%s: out of memory", path);
    }
    size_t n = fread(b, 1, MAXBYTES + 1, f);
    int err = ferror(f);
    if (f != stdin)
        fclose(f);
    if (err) {
        free(b);
        return kw_set_error(KW_EIO, "%s: read error", path);
    }
    if (n > MAXBYTES) {
        free(b);
        return kw_set_error(KW_EFORMAT, "%s: larger than 1 MiB", path);
    }
    *buf = b;
    *len = n;
    return KW_OK;
}

kw_status kw_protofile_read_into(kw_protocol_input *in, const char *path)
{
    char *buf;
    size_t n;
    kw_status st = kw_protofile_load(path, &buf, &n);
    if (st)
        return st;
    st = kw_protocol_input_parse(in, buf, n);
    free(buf);
    return st;
}

kw_status kw_textfile_load(const char *path, size_t max, char **buf, size_t *len)
{
    *buf = NULL;
    *len = 0;
    KW_FAIL_IF(!path || !*path, KW_EINVAL, "no file name");
    kw_status st = kw_outfile_note_input(path);
    if (st)
        return st;
    FILE *f = strcmp(path, "-") == 0 ? stdin : fopen(path, "rb");
    KW_FAIL_IF(!f, KW_EIO, "%s: %s", path, strerror(errno));
    size_t cap = 1 << 16, n = 0;
    char *b = kw_alloc(cap);
    while (b) { /* grow by doubling until the end of the file */
        n += fread(b + n, 1, cap - 1 - n, f);
        if (n < cap - 1 || ferror(f) || n > max)
            break;
        char *nb = kw_alloc(cap * 2);
        if (nb)
            memcpy(nb, b, n);
        kw_free(b);
        b = nb;
        cap *= 2;
    }
    int err = ferror(f);
    if (f != stdin)
        fclose(f);
    if (!b)
        return kw_set_error(KW_ENOMEM, "%s: out of memory (the memory budget)", path);
    if (err || n > max) {
        kw_free(b);
        return err ? kw_set_error(KW_EIO, "%s: read error", path)
                   : kw_set_error(KW_EFORMAT, "%s: larger than %zu bytes", path, max);
    }
    b[n] = '\0';
    *buf = b;
    *len = n;
    return KW_OK;
}
