/* pattern_json.h: the sidecar of a pattern as a cJSON object, for
 * kw_pattern_info_json() and `kweave pattern` (which writes the name of the
 * times file at the "times" slots). Not a public header. */
#ifndef KW_PATTERN_JSON_H
#define KW_PATTERN_JSON_H

#include "json_slot.h"
#include "kw_pattern.h"

/* The sidecar of `p`, keys in the order of the file. Slots (trajectories):
 * "times" (spiral and EPI: after te_s) and "times_end" (every trajectory:
 * before the final "seed"). NULL when out of memory. */
cJSON *kw_pattern_json_build(const kw_pattern *p, kw_json_slot_fn fn, void *user);

#endif
