/* fuzz_json.c: libFuzzer target for the JSON sidecar reader (kw_json_parse)
 * and the accessors the verbs use on a sidecar (kw_json_get_number). */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "jsonio.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    cJSON *root = NULL;
    kw_clear_error();
    kw_status st = kw_json_parse((const char *)data, size, &root);
    if (st != KW_OK) {
        if (root || kw_last_error()[0] == '\0')
            __builtin_trap();
        return 0;
    }
    static const char *keys[] = {"noise_sigma", "snr", "seed", "coils", "acceleration",
                                 "acs_lines", "b0_t", "bandwidth_hz", "te_s", "tr_s"};
    double v;
    for (size_t i = 0; i < sizeof keys / sizeof keys[0]; i++)
        (void)kw_json_get_number(root, keys[i], &v);
    const cJSON *proto = cJSON_GetObjectItemCaseSensitive(root, "protocol");
    if (cJSON_IsObject(proto))
        for (size_t i = 0; i < sizeof keys / sizeof keys[0]; i++)
            (void)kw_json_get_number(proto, keys[i], &v);
    /* Round trip: what was parsed prints and parses again. */
    char *txt = cJSON_PrintUnformatted(root);
    if (txt) {
        cJSON *again = NULL;
        if (kw_json_parse(txt, strlen(txt), &again) != KW_OK)
            __builtin_trap();
        cJSON_Delete(again);
        free(txt);
    }
    cJSON_Delete(root);
    return 0;
}
