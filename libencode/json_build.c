/* json_build.c: JSON building shared by the library's report writers. */
#include <math.h>
#include <string.h>

#include "json_build.h"

cJSON *kw_json_add_vec(cJSON *obj, const char *key, const double *v, int n)
{
    cJSON *a = cJSON_AddArrayToObject(obj, key);
    if (!a)
        return NULL;
    for (int i = 0; i < n; i++)
        cJSON_AddItemToArray(a, cJSON_CreateNumber(v[i]));
    return a;
}

cJSON *kw_json_add_number_or_null(cJSON *obj, const char *key, double v)
{
    return isfinite(v) ? cJSON_AddNumberToObject(obj, key, v) : cJSON_AddNullToObject(obj, key);
}

void kw_json_add_scores(cJSON *obj, double nrmse, double psnr_db, double ssim)
{
    kw_json_add_number_or_null(obj, "nrmse", nrmse);
    kw_json_add_number_or_null(obj, "psnr_db", psnr_db);
    kw_json_add_number_or_null(obj, "ssim", ssim);
}

kw_status kw_json_text(cJSON *root, char **text)
{
    *text = NULL;
    if (!root)
        return kw_set_error(KW_ENOMEM, "out of memory building the JSON report");
    char *s = cJSON_Print(root);
    cJSON_Delete(root);
    if (!s)
        return kw_set_error(KW_ENOMEM, "out of memory printing the JSON report");
    size_t n = strlen(s);
    char *out = kw_alloc(n + 2);
    if (!out) {
        cJSON_free(s);
        return kw_set_error(KW_ENOMEM, "out of memory printing the JSON report");
    }
    memcpy(out, s, n);
    out[n] = '\n';
    out[n + 1] = '\0';
    cJSON_free(s);
    *text = out;
    return KW_OK;
}
