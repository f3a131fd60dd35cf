/* protofile.h (cli): reading a protocol file's bytes. Splitting and reading
 * the keys is the library's (kw_protocol_input_parse() in kw_plan_input.h,
 * built on libencode/protofile.h). */
#ifndef KW_CLI_PROTOFILE_H
#define KW_CLI_PROTOFILE_H

#include <stddef.h>

#include "kw_base.h"
#include "kw_plan_input.h"
#include "textfile.h"

/*! kw_protofile_load(): the bytes of the file at `path` ("-": standard
 * input; at most 1 MiB) into *buf, NUL-terminated (kw_textfile_load(): the
 * budgeted allocator, free with kw_free(); *len bytes). KW_EIO with
 * "<path>: <why>" when it cannot be read, KW_EFORMAT when it is larger than
 * 1 MiB. */
kw_status kw_protofile_load(const char *path, char **buf, size_t *len);

/*! kw_protofile_read_into(): the protocol file at `path` (as
 * kw_protofile_load() reads it) through the library's parser into `in`
 * (kw_protocol_input_parse()); its errors as those calls give them. */
kw_status kw_protofile_read_into(kw_protocol_input *in, const char *path);

#endif
