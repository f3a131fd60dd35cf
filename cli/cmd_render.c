/* cmd_render.c: `kweave render` (placeholder until the verb lands). */
#include "cli.h"

int kw_cmd_render(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("render", "this verb is not built yet");
}
