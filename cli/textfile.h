/* textfile.h (cli): the one reader of whole text inputs (protocol files,
 * JSON sidecars and specs, waveform tables), from a path or standard input,
 * through the library's memory budget. */
#ifndef KW_CLI_TEXTFILE_H
#define KW_CLI_TEXTFILE_H

#include <stddef.h>

#include "kw_base.h"

/*! kw_textfile_load(): the text of the file at `path` ("-": standard input;
 * a pipe or FIFO read as it comes) into *buf, NUL-terminated, from the
 * library's budgeted allocator (free with kw_free(); *len bytes before the
 * NUL), noted as an input of the run. KW_EIO with "<path>: <why>" when it
 * cannot be opened or read (a directory: "cannot be read (is a directory)"),
 * KW_EFORMAT "<path>: larger than <max>" (in MiB where `max` is a whole
 * number of MiB), KW_ENOMEM when the memory budget refuses it. */
kw_status kw_textfile_load(const char *path, size_t max, char **buf, size_t *len);

#endif
