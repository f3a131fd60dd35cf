/* fuzz_units.c: libFuzzer target for the units parser (kw_unit_parse for
 * every kind, kw_unit_parse_bandwidth) and the --max-memory size parser. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "kw_units.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > 4096)
        return 0;
    char *s = malloc(size + 1);
    if (!s)
        return 0;
    memcpy(s, data, size);
    s[size] = '\0';
    char why[160];
    double v;
    for (int k = KW_UNIT_NONE; k <= KW_UNIT_PPM; k++) {
        why[0] = '\0';
        kw_status st = kw_unit_parse(s, (kw_unit_kind)k, &v, why, sizeof why);
        if (st == KW_OK && !isfinite(v))
            __builtin_trap(); /* NaN and Inf are refused */
        if (st != KW_OK && why[0] == '\0')
            __builtin_trap(); /* every refusal says why */
    }
    int pp;
    why[0] = '\0';
    kw_status st = kw_unit_parse_bandwidth(s, &v, &pp, why, sizeof why);
    if (st == KW_OK && !isfinite(v))
        __builtin_trap();
    if (st != KW_OK && why[0] == '\0')
        __builtin_trap();
    size_t b;
    (void)kw_cli_parse_bytes(s, &b, why, sizeof why);
    /* Tiny reason buffers must not overflow. */
    char tiny[4];
    (void)kw_unit_parse(s, KW_UNIT_LENGTH, &v, tiny, sizeof tiny);
    (void)kw_unit_parse_bandwidth(s, &v, &pp, tiny, sizeof tiny);
    free(s);
    return 0;
}
