/* main.c: the `kweave` command: verb dispatch, --version, --help. */
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "outfile.h"

typedef struct verb {
    const char *name;
    int (*run)(int argc, char **argv);
    const char *summary;
} verb;

static const verb verbs[] = {
    {"plan", kw_cmd_plan, "protocol -> sampling, timing and gradient-limit report"},
    {"pattern", kw_cmd_pattern, "make or analyse a sampling pattern / trajectory (+ PSF)"},
    {"encode", kw_cmd_encode, "simulate an acquisition of a phantom -> k-space + sidecar"},
    {"recon", kw_cmd_recon, "k-space -> image, by the method asked for or the right default"},
    {"score", kw_cmd_score, "compare an image with a reference: NRMSE, PSNR, SSIM"},
    {"render", kw_cmd_render, "any .npy -> PNG (magnitude, phase, montage, window)"},
    {"demo", kw_cmd_demo, "the whole chain on the built-in scenario, into one folder"},
    {NULL, NULL, NULL},
};

static void usage(FILE *f)
{
    fprintf(f, "usage: kweave VERB [options]   (kweave VERB --help for each)\n\n");
    for (const verb *v = verbs; v->name; v++)
        fprintf(f, "  %-8s %s\n", v->name, v->summary);
    fprintf(f, "\nExit codes: 0 done, 1 internal failure, 2 bad usage or input,"
               " 3 infeasible protocol (plan).\n");
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        usage(stderr);
        return KW_EXIT_USAGE;
    }
    if (strcmp(argv[1], "--version") == 0 || strcmp(argv[1], "version") == 0) {
        printf("kweave %s\n", KW_VERSION_STRING);
        return KW_EXIT_OK;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        usage(stdout);
        return KW_EXIT_OK;
    }
    kw_outfile_install_signal_handlers();
    for (const verb *v = verbs; v->name; v++)
        if (strcmp(argv[1], v->name) == 0)
            return v->run(argc - 1, argv + 1);
    return kw_cli_fail(argv[1], "unknown verb (kweave --help lists them)");
}
