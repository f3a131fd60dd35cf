/* cmd_encode.c: `kweave encode` (placeholder until the verb lands). */
#include "cli.h"

int kw_cmd_encode(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("encode", "this verb is not built yet");
}
