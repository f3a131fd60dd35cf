/* analysis_json.h: the report of a pattern analysis as a cJSON object, for
 * kw_pattern_analysis_json() and `kweave pattern --json`. Not a public
 * header. */
#ifndef KW_ANALYSIS_JSON_H
#define KW_ANALYSIS_JSON_H

#include <cJSON.h>

#include "kw_pattern_analysis.h"

/* The report of `a` (names as kw_pattern_analysis_json()); NULL when out of
 * memory. */
cJSON *kw_pattern_analysis_json_build(const kw_pattern_analysis *a, const char *name,
                                      const char *kind);

#endif
