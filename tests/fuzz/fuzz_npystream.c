/* fuzz_npystream.c: libFuzzer target for the block-wise .npy reader
 * (cli/npystream.c: kw_npyr_open, kw_npyr_read), which multi-slice recon
 * uses on files far larger than memory. Each input is a file's bytes (in a
 * memfd, opened by its /proc path as the command opens a file); the header
 * goes through the one parser both readers share (cli/npyhdr.c), then every
 * element is read in blocks of 256, forwards and once more backwards (the
 * reader seeks on a regular file). Any input must end in data or a clean
 * error with a reason; never a crash, a leak or a read past the file. */
#define _GNU_SOURCE
#include <complex.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>

#include "npystream.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static int fd = -1;
    static char path[64];
    if (fd < 0) {
        fd = memfd_create("kw_fuzz_npystream", 0);
        if (fd < 0)
            return 0;
        snprintf(path, sizeof path, "/proc/self/fd/%d", fd);
    }
    if (ftruncate(fd, 0) != 0 || lseek(fd, 0, SEEK_SET) != 0)
        return 0;
    if (size && write(fd, data, size) != (ssize_t)size)
        return 0;
    kw_clear_error();
    kw_npyr r;
    kw_status st = kw_npyr_open(&r, path);
    if (st) {
        if (kw_last_error()[0] == '\0')
            __builtin_trap(); /* a refusal carries its reason */
        return 0;
    }
    /* the header promised exactly the bytes the file holds */
    if (r.count * r.isize + (size_t)r.data_off != size)
        __builtin_trap();
    float complex buf[256];
    for (size_t i = 0; i < r.count; i += 256) {
        size_t m = r.count - i < 256 ? r.count - i : 256;
        if (kw_npyr_read(&r, i, m, buf) != KW_OK)
            __builtin_trap(); /* a checked file reads whole */
    }
    for (size_t i = r.count; i > 0;) {
        size_t m = i < 256 ? i : 256;
        i -= m;
        if (kw_npyr_read(&r, i, m, buf) != KW_OK)
            __builtin_trap();
    }
    kw_npyr_close(&r);
    return 0;
}
