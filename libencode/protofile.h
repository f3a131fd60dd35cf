/* protofile.h: protocol files of our own: one `key = value` per line, values
 * with units as on the command line (`fov = 256mm,192mm`, `gmax = 40mT/m`),
 * `#` starts a comment, blank lines are ignored. Keys are the option names of
 * `kweave plan` without the leading "--". Which keys exist is the caller's
 * business (the callback); this parser only splits lines. Not a public header:
 * kw_protocol_input_parse() (kw_plan_input.h) is the public call. */
#ifndef KW_PROTOFILE_H
#define KW_PROTOFILE_H

#include <stddef.h>

#include "kw_base.h"

/* Longest line (bytes, without the newline) and longest key. */
#define KW_PROTOFILE_MAX_LINE 1024
#define KW_PROTOFILE_MAX_KEY 64

/* Called once per `key = value` line, in file order. `key` is lower-case
 * letters, digits, '-' and '_'; `value` is trimmed and non-empty. Return
 * KW_OK to go on; any other status stops the parse (set the reason with
 * kw_set_error: the parser prefixes "line N: "). */
typedef kw_status (*kw_protofile_fn)(void *user, const char *key, const char *value, int line);

/*! kw_protofile_parse(): parse `len` bytes at `buf` (need not be
 * NUL-terminated). Returns KW_OK, the callback's status, or KW_EFORMAT with
 * "line N: <why>" in kw_last_error() for a malformed line (no '=', empty key
 * or value, bad characters in the key, a NUL byte, an overlong line). Never
 * reads outside [buf, buf + len). */
kw_status kw_protofile_parse(const char *buf, size_t len, kw_protofile_fn fn, void *user);

#endif
