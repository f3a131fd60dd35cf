/* textfile.c (cli): whole text inputs read through the memory budget. */
#include "textfile.h"
#include "outfile.h"

#include <errno.h>
#include <stdio.h>
#include <string.h>

static kw_status too_large(const char *path, size_t max)
{
    const size_t mib = (size_t)1 << 20;
    if (max >= mib && max % mib == 0)
        return kw_set_error(KW_EFORMAT, "%s: larger than %zu MiB", path, max / mib);
    return kw_set_error(KW_EFORMAT, "%s: larger than %zu bytes", path, max);
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
    errno = 0;
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
    int err = ferror(f) ? (errno ? errno : EIO) : 0;
    if (f != stdin)
        fclose(f);
    if (!b)
        return kw_set_error(KW_ENOMEM, "%s: out of memory (the memory budget)", path);
    if (err || n > max) {
        kw_free(b);
        if (!err)
            return too_large(path, max);
        return kw_set_error(KW_EIO, "%s: cannot be read (%s)", path,
                            err == EISDIR ? "is a directory" : strerror(err));
    }
    b[n] = '\0';
    *buf = b;
    *len = n;
    return KW_OK;
}
