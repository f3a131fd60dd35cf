/* cmd_demo.c: `kweave demo` (placeholder until the verb lands). */
#include "cli.h"

int kw_cmd_demo(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("demo", "this verb is not built yet");
}
