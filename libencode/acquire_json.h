/* acquire_json.h: the sidecar of an acquisition as a cJSON object, for
 * kw_acquisition_info_json() and `kweave encode` (which writes its file
 * names at the slots). Not a public header. */
#ifndef KW_ACQUIRE_JSON_H
#define KW_ACQUIRE_JSON_H

#include "json_slot.h"
#include "kw_acquire.h"

/* The sidecar of `in`, keys in the order of the file. Slots (root object
 * unless said): "tissue_file" (after "tissues"), "tissue_source" (in each
 * tissue given by the caller; default "source": "caller"), "trajectory",
 * "sens", "noise_cov", "pattern", "times", and in "protocol":
 * "protocol_file" (before min_te_s, with a protocol) and "field_map" (before
 * field_map_oversampling). NULL when out of memory. */
cJSON *kw_acquisition_json_build(const kw_acquisition_info *in, kw_json_slot_fn fn, void *user);

#endif
