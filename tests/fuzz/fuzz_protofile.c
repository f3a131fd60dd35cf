/* fuzz_protofile.c: libFuzzer target for the protocol-file parser
 * (kw_protofile_parse, libencode/protofile.c) and everything a protocol file
 * reaches: each input is (1) split into `key = value` lines with the
 * parser's promises checked, (2) read in `kweave encode`'s dialect
 * (kw_protocol_input_encode_fill, libencode/plan_input_int.h) and (3) handed
 * to `kweave plan --protocol FILE` itself (kw_cmd_plan), which reads it with
 * kw_protocol_input_parse(), checks the protocol and writes its report. Any
 * input must end in a report or a clean error; never a crash or a leak. */
#define _POSIX_C_SOURCE 200809L
#include <fcntl.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "plan_input_int.h"
#include "protofile.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static kw_status check_line(void *user, const char *key, const char *value, int line)
{
    int *count = user;
    /* The parser promises: key of a-z 0-9 - _, at most the maximum length;
     * value trimmed and non-empty; lines counted from 1 and increasing. */
    size_t kl = strlen(key), vl = strlen(value);
    if (kl == 0 || kl > KW_PROTOFILE_MAX_KEY || vl == 0 || vl > KW_PROTOFILE_MAX_LINE)
        __builtin_trap();
    for (size_t i = 0; i < kl; i++) {
        char c = key[i];
        if (!((c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') || c == '-' || c == '_'))
            __builtin_trap();
    }
    if (value[0] == ' ' || value[0] == '\t' || value[vl - 1] == ' ' || value[vl - 1] == '\t')
        __builtin_trap();
    if (line <= *count)
        __builtin_trap();
    *count = line;
    return KW_OK;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static char path[64];
    static int devnull = -1;
    if (devnull < 0) {
        devnull = open("/dev/null", O_WRONLY);
        snprintf(path, sizeof path, "/tmp/kw_fuzz_proto_%ld.txt", (long)getpid());
    }
    int last = 0;
    kw_clear_error();
    kw_status st = kw_protofile_parse((const char *)data, size, check_line, &last);
    if (st != KW_OK && kw_last_error()[0] == '\0')
        __builtin_trap();
    kw_protocol_input *in = NULL;
    if (kw_protocol_input_create(&in) == KW_OK) {
        static const char *const own[] = {"sequence", "fov", "matrix", "bandwidth", "b0",
                                          "te", "tr", "flip", "ti", NULL};
        kw_protocol p;
        kw_protocol_defaults(&p);
        kw_protocol_input_encode_dialect(in);
        if (kw_protocol_input_parse(in, (const char *)data, size) == KW_OK &&
            kw_protocol_input_encode_fill(in, own, &p) != KW_OK && kw_last_error()[0] == '\0')
            __builtin_trap();
        kw_protocol_input_destroy(in);
    }
    if (size > (1u << 16))
        return 0;
    FILE *f = fopen(path, "wb");
    if (!f)
        return 0;
    if (size)
        fwrite(data, 1, size, f);
    fclose(f);
    char a0[] = "plan", a1[] = "--protocol", a3[] = "--quiet";
    char *argv[] = {a0, a1, path, a3, NULL};
    /* The verb prints its report on stdout: send it nowhere meanwhile. */
    fflush(stdout);
    int saved = dup(STDOUT_FILENO);
    if (devnull >= 0)
        dup2(devnull, STDOUT_FILENO);
    int rc = kw_cmd_plan(4, argv);
    fflush(stdout);
    if (saved >= 0) {
        dup2(saved, STDOUT_FILENO);
        close(saved);
    }
    if (rc < 0 || rc > 3)
        __builtin_trap(); /* documented exit codes only */
    unlink(path);
    return 0;
}
