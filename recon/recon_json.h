/* recon_json.h: the report of a reconstruction as a cJSON object, for
 * kw_recon_report_json() and `kweave recon --json` (which writes its file
 * names at the slots). Not a public header. */
#ifndef KW_RECON_JSON_H
#define KW_RECON_JSON_H

#include "json_slot.h"
#include "kw_recon.h"

/* The keys a method run adds to the report, from `p`, in the order the
 * command has always written them. Slots: "dcf" (weights given by the
 * caller; default "dcf": "given"), "dcf_file" (after "dcf"), "sens_file"
 * (after a set-up estimate's "sens_source"). */
void kw_recon_json_add_method(cJSON *j, const kw_recon_report *p, kw_json_slot_fn fn,
                              void *user);

/* The report of the last execute of `r` (kw_recon_report_json()). Slots:
 * "input" (after "method"), "sens_source" (maps not estimated; default
 * "given" or "none"), those of kw_recon_json_add_method(), "gfactor_file"
 * (after "gfactor_max"). NULL when out of memory. */
cJSON *kw_recon_json_build(const kw_recon *r, kw_json_slot_fn fn, void *user);

#endif
