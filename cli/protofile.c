/* protofile.c (cli): a protocol file's bytes, for kw_protocol_input_parse(). */
#include "protofile.h"

kw_status kw_protofile_load(const char *path, char **buf, size_t *len)
{
    *buf = NULL;
    *len = 0;
    KW_FAIL_IF(!path || !*path, KW_EINVAL, "protocol: no file name");
    return kw_textfile_load(path, (size_t)1 << 20, buf, len);
}

kw_status kw_protofile_read_into(kw_protocol_input *in, const char *path)
{
    char *buf;
    size_t n;
    kw_status st = kw_protofile_load(path, &buf, &n);
    if (st)
        return st;
    st = kw_protocol_input_parse(in, buf, n);
    kw_free(buf);
    return st;
}
