/* jsonio.h: JSON files (cJSON): reports and the acquisition sidecar.
 * The sidecar of "dir/ks.npy" is "dir/ks.json": protocol, trajectory file,
 * coil maps file, noise, scale, seed, software version. */
#ifndef KW_JSONIO_H
#define KW_JSONIO_H

#include <cJSON.h>

#include "json_build.h" /* kw_json_add_vec and friends (library) */
#include "kw_base.h"

/*! kw_json_write(): write `root` (pretty-printed, trailing newline)
 * atomically; "-" is standard output. */
kw_status kw_json_write(const char *path, const cJSON *root);

/*! kw_json_read(): parse a JSON file (at most 64 MiB, read by
 * kw_textfile_load() through the memory budget); KW_EFORMAT with the byte offset of the
 * error; KW_EIO when it cannot be read. Free with cJSON_Delete. */
kw_status kw_json_read(const char *path, cJSON **root);

/*! kw_json_parse(): the same from memory (used by the fuzzers). */
kw_status kw_json_parse(const char *buf, size_t len, cJSON **root);

/*! kw_sidecar_path(): "x/ks.npy" -> "x/ks.json" (malloc'd; NULL for "-" or
 * when out of memory). */
char *kw_sidecar_path(const char *npy_path);

/*! kw_json_get_number(): read obj[key] as a finite number; KW_EFORMAT with
 * "<key>: ..." when missing or not a number. */
kw_status kw_json_get_number(const cJSON *obj, const char *key, double *v);

#endif
