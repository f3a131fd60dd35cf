/* json_build.h: the library's own JSON building (cJSON), shared by the
 * report and sidecar writers of libencode/ and recon/ and by the command
 * line. Not a public header: the public calls hand JSON out as text
 * (kw_json_text()), so that callers need no cJSON. */
#ifndef KW_JSON_BUILD_H
#define KW_JSON_BUILD_H

#include <cJSON.h>

#include "kw_base.h"

/*! kw_json_add_vec(): add a JSON number array of n doubles under `key`. */
cJSON *kw_json_add_vec(cJSON *obj, const char *key, const double *v, int n);

/*! kw_json_add_number_or_null(): obj[key] = v, or null when v is NaN/Inf
 * (JSON has no NaN: a PSNR of identical images is infinite). */
cJSON *kw_json_add_number_or_null(cJSON *obj, const char *key, double v);

/*! kw_json_add_scores(): the three image scores under their report keys
 * "nrmse", "psnr_db", "ssim" (null where not finite). */
void kw_json_add_scores(cJSON *obj, double nrmse, double psnr_db, double ssim);

/*! kw_json_text(): `root` printed (pretty, as the command writes files, with
 * a trailing newline) into *text, allocated with kw_alloc() (free with
 * kw_free()); deletes `root` in every case. KW_ENOMEM when root is NULL
 * (a failed build) or printing fails; *text is NULL then. */
kw_status kw_json_text(cJSON *root, char **text);

#endif
