/* kw_plan_input.h: a protocol assembled from `key = value` texts with units,
 * as `kweave plan` reads its options and protocol files, and the planner's
 * report as JSON text. What the command does is these calls, so that every
 * front end (C callers, bindings) reads a protocol and reports a plan alike,
 * with the same messages.
 *
 * The keys are the option names of `kweave plan` without the dashes; values
 * are texts with units as on the command line ("256mm,192mm", "256x192",
 * "250Hz/pixel", "3T", "40mT/m", "5ms"); see docs/planner.md.
 *
 * Precedence (how the command combines its sources, and how a caller can):
 *   - kw_protocol_input_set() of a key replaces that key's earlier value,
 *     whichever source gave it: set after parse lets the caller's values
 *     override the file's (the command sets its options after the file).
 *   - bandwidth has two forms, across the FOV ("32kHz") and per pixel
 *     ("250Hz/pixel"); each may be set once, and both together must agree at
 *     finish. A second value of the same form is an error ("given more than
 *     once"); to replace the bandwidth from a higher-priority source, call
 *     kw_protocol_input_clear(in, "bandwidth") first, then set one or both
 *     forms (the command does this when its options give a bandwidth).
 *   - Within one protocol text each key may appear once (bandwidth once per
 *     form); a repeat is an error.
 *   - Keys not set keep the defaults of kw_protocol_defaults() (bandwidth
 *     250 Hz/pixel of the final matrix).
 *
 * Errors: KW_EINVAL with kw_last_error() "<key>: <reason>" (exactly the line
 * `kweave plan` prints after "kweave: error: ") and kw_last_error_param() =
 * the key. Errors of a protocol text are prefixed "line N: " (the parameter
 * is then not named apart).
 *
 * Threads: an input object belongs to one thread at a time; the functions
 * keep no other state (the error text is per thread, as everywhere). */
#ifndef KW_PLAN_INPUT_H
#define KW_PLAN_INPUT_H

#include <stddef.h>

#include "kw_base.h"
#include "kw_protocol.h"
#include "kw_sequence.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_protocol_input kw_protocol_input; /* opaque */

/*! kw_protocol_input_create(): an empty input: every key at the defaults of
 * `kweave plan` (kw_protocol_defaults()). Destroy with
 * kw_protocol_input_destroy() (NULL-safe). */
KW_API kw_status kw_protocol_input_create(kw_protocol_input **in);
KW_API void kw_protocol_input_destroy(kw_protocol_input *in);

/*! kw_protocol_keys(): the keys, NULL-terminated, in the order of the
 * command's help: "sequence", "fov", "matrix", "bandwidth", "b0", "gmax",
 * "slew", "raster", "temperature", "te", "tr", "rf-duration", "tbw",
 * "slice", "spoiler", "crusher", "t2star", "shots", "partial-fourier",
 * "interleaves", "max-readout", "spokes", "averages". Static storage. */
KW_API const char *const *kw_protocol_keys(void);

/*! kw_protocol_input_set(): set `key` from its text with units. Checks the
 * value itself (unit, sign, range of counts); what depends on other keys
 * (fov against matrix, the two bandwidths) is checked at finish. On error
 * the input is unchanged. An unknown key is KW_EINVAL "<key>: unknown key",
 * with " (did you mean '<known>'?)" when one is a near miss. */
KW_API kw_status kw_protocol_input_set(kw_protocol_input *in, const char *key,
                                       const char *value);

/*! kw_protocol_input_get(): the text last set for `key` (*value; NULL when
 * the key is not set and holds its default). For bandwidth, the last form
 * set. The pointer stays valid until the key is set or cleared again, or the
 * input destroyed. KW_EINVAL for an unknown key. */
KW_API kw_status kw_protocol_input_get(const kw_protocol_input *in, const char *key,
                                       const char **value);

/*! kw_protocol_input_clear(): back to the default for `key` (both forms of
 * bandwidth), as if never set. KW_EINVAL for an unknown key. */
KW_API kw_status kw_protocol_input_clear(kw_protocol_input *in, const char *key);

/*! kw_protocol_input_parse(): a protocol file's text of `len` bytes (need
 * not be NUL-terminated): `key = value` lines, `#` comments, blank lines;
 * each applied with kw_protocol_input_set() in file order. Errors carry
 * "line N: " (a malformed line is KW_EFORMAT; a bad key or value KW_EINVAL).
 * Each key once per text (bandwidth once per form). On error the keys of
 * the lines before stay set. */
KW_API kw_status kw_protocol_input_parse(kw_protocol_input *in, const char *text, size_t len);

/*! kw_protocol_input_finish(): the whole checked and turned into *p: the
 * fov and matrix axes combined (one FOV for all axes, a 3-D matrix needs
 * one or three FOVs), the bandwidth from its forms (default 250 Hz/pixel),
 * then kw_protocol_check(). *p is written only on success. */
KW_API kw_status kw_protocol_input_finish(const kw_protocol_input *in, kw_protocol *p);

/*! kw_plan_report_json(): the report `kweave plan --json` writes, byte for
 * byte (same keys, order and numbers, with "safety_caution"), as text ending
 * in a newline, allocated with kw_alloc() (free with kw_free()).
 * `ref_snr_factor`: the snr_factor of a reference protocol's report for
 * "relative_snr" (0: none, which writes null), as the command's reference
 * protocol. KW_ENOMEM when out of memory (*json NULL then). */
KW_API kw_status kw_plan_report_json(const kw_plan_report *r, double ref_snr_factor, char **json);

#ifdef __cplusplus
}
#endif

#endif
