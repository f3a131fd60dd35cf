/* cmd_plan.c: `kweave plan` (placeholder until the verb lands). */
#include "cli.h"

int kw_cmd_plan(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("plan", "this verb is not built yet");
}
