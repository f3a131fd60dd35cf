/* cmd_pattern.c: `kweave pattern` (placeholder until the verb lands). */
#include "cli.h"

int kw_cmd_pattern(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("pattern", "this verb is not built yet");
}
