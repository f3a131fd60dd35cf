/* cmd_score.c: `kweave score` (placeholder until the verb lands). */
#include "cli.h"

int kw_cmd_score(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("score", "this verb is not built yet");
}
