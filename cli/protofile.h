/* protofile.h (cli): reading a protocol file's bytes. Splitting and reading
 * the keys is the library's (kw_protocol_input_parse() in kw_plan_input.h,
 * built on libencode/protofile.h). */
#ifndef KW_CLI_PROTOFILE_H
#define KW_CLI_PROTOFILE_H

#include <stddef.h>

#include "kw_base.h"
#include "kw_plan_input.h"

/*! kw_protofile_load(): the bytes of the file at `path` ("-": standard
 * input; at most 1 MiB) into *buf (malloc'd, free with free(); *len bytes).
 * KW_EIO with "<path>: <why>" when it cannot be read, KW_EFORMAT when it is
 * larger than 1 MiB. */
kw_status kw_protofile_load(const char *path, char **buf, size_t *len);

/*! kw_protofile_read_into(): the protocol file at `path` (as
 * kw_protofile_load() reads it) through the library's parser into `in`
 * (kw_protocol_input_parse()); its errors as those calls give them. */
kw_status kw_protofile_read_into(kw_protocol_input *in, const char *path);

/*! kw_textfile_load(): the text of the file at `path` ("-": standard input;
 * a pipe or FIFO read as it comes) into *buf, NUL-terminated, from the
 * library's budgeted allocator (free with kw_free(); *len bytes before the
 * NUL), noted as an input of the run. KW_EIO with "<path>: <why>" when it
 * cannot be read, KW_EFORMAT "<path>: larger than <max> bytes", KW_ENOMEM
 * when the memory budget refuses it. */
kw_status kw_textfile_load(const char *path, size_t max, char **buf, size_t *len);

#endif
