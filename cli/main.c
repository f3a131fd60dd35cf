/* main.c: the `kweave` command: verb dispatch, --version, --help. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"
#include "kw_fft.h"
#include "outfile.h"

typedef struct verb {
    const char *name;
    int (*run)(int argc, char **argv);
    const char *summary;
    int chained; /* runs other verbs on its own outputs: files land as made */
} verb;

static const verb verbs[] = {
    {"plan", kw_cmd_plan, "protocol -> sampling, timing and gradient-limit report", 0},
    {"pattern", kw_cmd_pattern, "make or analyse a sampling pattern / trajectory (+ PSF)", 0},
    {"encode", kw_cmd_encode, "simulate an acquisition of a phantom -> k-space + sidecar", 0},
    {"recon", kw_cmd_recon, "k-space -> image, by the method asked for or the right default", 0},
    {"score", kw_cmd_score, "compare an image with a reference: NRMSE, PSNR, SSIM", 0},
    {"preview", kw_cmd_preview, "protocol -> simulated image: the planner's fat shift and distortion checked on it", 0},
    {"waveform", kw_cmd_waveform, "check a gradient waveform of your own: limits, moments, k-space, dB/dt estimate", 0},
    {"render", kw_cmd_render, "any .npy -> PNG (magnitude, phase, montage, window)", 0},
    {"sweep", kw_cmd_sweep, "run a grid of undersampling experiments from a JSON spec (local or MPI)", 1},
    {"demo", kw_cmd_demo, "the whole chain on the built-in scenario, into one folder", 1},
    {NULL, NULL, NULL, 0},
};

static void usage(FILE *f)
{
    fprintf(f, "usage: kweave VERB [options]   (kweave VERB --help for each)\n\n");
    for (const verb *v = verbs; v->name; v++)
        fprintf(f, "  %-8s %s\n", v->name, v->summary);
    fprintf(f, "\nExit codes: 0 done, 1 internal failure, 2 bad usage or input,"
               " 3 infeasible protocol (plan).\n");
}

/* FFTW wisdom cache: FFTW_MEASURE plans cost 0.1-0.4 s to make; wisdom kept
 * between runs makes them nearly free. KWEAVE_WISDOM=off disables the cache,
 * KWEAVE_WISDOM=FILE points it elsewhere; the default is
 * $XDG_CACHE_HOME/kweave/fftw-wisdom (or ~/.cache/kweave/fftw-wisdom). */
static char *wisdom_path(int make_dir)
{
    const char *env = getenv("KWEAVE_WISDOM");
    if (env && strcmp(env, "off") == 0)
        return NULL;
    if (env && *env)
        return strdup(env);
    const char *base = getenv("XDG_CACHE_HOME");
    char dir[4096];
    if (base && *base) {
        snprintf(dir, sizeof dir, "%s/kweave", base);
    } else {
        const char *home = getenv("HOME");
        if (!home || !*home)
            return NULL;
        snprintf(dir, sizeof dir, "%s/.cache", home);
        if (make_dir)
            mkdir(dir, 0755);
        snprintf(dir, sizeof dir, "%s/.cache/kweave", home);
    }
    if (make_dir && mkdir(dir, 0755) != 0 && errno != EEXIST)
        return NULL;
    size_t n = strlen(dir) + 16;
    char *p = malloc(n);
    if (p)
        snprintf(p, n, "%s/fftw-wisdom", dir);
    return p;
}

static char *wisdom_load(void)
{
    char *path = wisdom_path(0);
    if (!path)
        return NULL;
    FILE *f = fopen(path, "rb");
    free(path);
    if (!f)
        return NULL;
    char *buf = malloc(1 << 20);
    size_t n = buf ? fread(buf, 1, (1 << 20) - 1, f) : 0;
    fclose(f);
    if (!buf)
        return NULL;
    buf[n] = '\0';
    /* A damaged cache is ignored (and replaced on exit), never fatal. */
    if (kw_fft_wisdom_import(buf) != KW_OK)
        buf[0] = '\0';
    kw_clear_error();
    return buf;
}

static void wisdom_save(const char *before)
{
    if (kw_fft_reproducible()) /* its plans are unmeasured: keep the cache */
        return;
    char *now = kw_fft_wisdom_export();
    if (now && (!before || strcmp(before, now) != 0)) {
        char *path = wisdom_path(1);
        if (path)
            kw_outfile_write_all(path, now, strlen(now)); /* best effort */
        free(path);
    }
    free(now);
}

static int run_verb(const verb *v, int argc, char **argv)
{
    if (kw_fft_setup(0) != KW_OK)
        return kw_cli_status(KW_EINTERNAL, "fft");
    char *before = wisdom_load();
    /* All or nothing: the run's files are renamed into place together, and
     * only when the run succeeded (an infeasible plan is still a report). */
    if (!v->chained)
        kw_outfile_group_begin();
    int rc = v->run(argc, argv);
    int ok = rc == KW_EXIT_OK || rc == KW_EXIT_INFEASIBLE;
    /* A report lost on its way out (stdout closed or full) is a failure. */
    errno = 0;
    int fl = fflush(stdout);
    int e = errno;
    if ((fl != 0 || ferror(stdout)) && ok) {
        rc = kw_cli_fail("standard output", "write failed: %s",
                         fl != 0 && e ? strerror(e) : "an earlier write failed");
        ok = 0;
    }
    if (!v->chained) {
        kw_status st = kw_outfile_group_end(ok);
        if (st && ok)
            rc = kw_cli_status(st, NULL);
    }
    wisdom_save(before);
    free(before);
    return rc;
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
            return run_verb(v, argc - 1, argv + 1);
    return kw_cli_fail(argv[1], "unknown verb (kweave --help lists them)");
}
