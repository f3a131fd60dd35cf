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
