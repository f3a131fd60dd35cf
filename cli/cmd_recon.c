/* cmd_recon.c: `kweave recon` (placeholder until the verb lands). */
#include "cli.h"

int kw_cmd_recon(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("recon", "this verb is not built yet");
}
