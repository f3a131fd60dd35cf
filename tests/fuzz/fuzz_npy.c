/* fuzz_npy.c: libFuzzer target for the .npy reader (kw_npy_parse).
 * Any input must give KW_OK with a consistent array or a clean error with a
 * reason; never a crash, a leak or a huge allocation. */
#include <stdint.h>
#include <string.h>

#include "npy.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    kw_npy_set_limit((size_t)64 << 20); /* lying shapes must be refused, not allocated */
    kw_array a;
    kw_clear_error();
    kw_status st = kw_npy_parse(data, size, &a);
    if (st == KW_OK) {
        /* Touch every element so the sanitizers see the whole buffer. */
        size_t n = kw_array_count(&a) * kw_dtype_size(a.dtype);
        volatile unsigned char sum = 0;
        for (size_t i = 0; i < n; i++)
            sum ^= ((const unsigned char *)a.data)[i];
        (void)sum;
        (void)kw_array_all_finite(&a);
    } else if (kw_last_error()[0] == '\0') {
        __builtin_trap(); /* every refusal must say why */
    }
    kw_array_free(&a);
    return 0;
}
