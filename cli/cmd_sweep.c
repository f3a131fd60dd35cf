/* cmd_sweep.c: `kweave sweep` (placeholder until the verb lands). */
#include "cli.h"

int kw_cmd_sweep(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("sweep", "this verb is not built yet");
}
