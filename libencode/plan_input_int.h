/* plan_input_int.h: the hidden side of kw_plan_input.h, for the command line
 * (not a public header; nothing here is exported from the shared library). */
#ifndef KW_PLAN_INPUT_INT_H
#define KW_PLAN_INPUT_INT_H

#include <cJSON.h>

#include "kw_plan_input.h"

/*! kw_protocol_sequence_name(): "gre", "se", "epi", "radial", "spiral"
 * ("?" out of range). */
const char *kw_protocol_sequence_name(kw_sequence_kind s);

/*! kw_plan_report_cjson(): the tree kw_plan_report_json() prints (NULL when
 * out of memory); free with cJSON_Delete(). */
cJSON *kw_plan_report_cjson(const kw_plan_report *r, double ref_snr_factor);

/* ---- the simulator's dialect of protocol files (`kweave encode`) ------------
 * `kweave encode` reads the planner's protocol files with rules of its own,
 * kept as they were when it had a parser of its own:
 *   - parse records the texts only, in file order: no value is read and
 *     unknown keys are kept (at most 40 keys: "too many keys"); every key,
 *     bandwidth too, at most once ("<key>: given more than once");
 *   - kw_protocol_input_encode_fill() then reads the planner's keys the
 *     simulator does not take itself, without a line number: counts are
 *     1 to 1000000 ("<key>: '<text>' is not a whole number >= 1"), t2star
 *     need not be positive, and a key that is not the planner's nor in
 *     `skip` is "<key>: unknown key". */

/*! kw_protocol_input_encode_dialect(): switch an empty input to the
 * simulator's dialect. */
void kw_protocol_input_encode_dialect(kw_protocol_input *in);

/*! kw_protocol_input_encode_fill(): the recorded keys, other than those in
 * `skip` (NULL-terminated), read over *p in file order. */
kw_status kw_protocol_input_encode_fill(const kw_protocol_input *in, const char *const *skip,
                                        kw_protocol *p);

#endif
