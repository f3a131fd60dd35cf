/* sweep_verb.c: the steps of `kweave sweep` that the local run (cmd_sweep.c)
 * and the MPI run (sweep_mpi.c) share: options and spec, the output folder
 * and journal, the progress line, the results and the closing line. Split
 * from cmd_sweep.c so that both runs use it and neither uses the other's
 * internals (cmd_sweep.c -> sweep_mpi.c -> sweep_verb.c, one direction). */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "sweep.h"
#include "sweep_verb.h"

static const char usage_text[] =
    "usage: kweave sweep --spec SPEC.json --out DIR [--jobs N] [--pictures] [--keep-files]\n"
    "       mpirun -np N kweave sweep --spec SPEC.json --out DIR\n\n"
    "Runs every experiment of the spec (phantom x matrix x coils x SNR x pattern x\n"
    "acceleration x seed, each reconstructed by every method variant and scored\n"
    "against the truth). DIR gets journal.jsonl (one line per finished experiment;\n"
    "a sweep started again does only what is left), results.csv, results.json and\n"
    "summary_{nrmse,psnr_db,ssim}.png. See docs/sweep.md for the spec.";

int kw_sweep_parse(int argc, char **argv, kw_sweep_opts *o, kw_sweep *sw, int mpi_built)
{
    memset(o, 0, sizeof *o);
    const kw_opt opts[] = {
        {"spec", KW_OPT_STRING, &o->spec, 0, NULL, "the sweep spec (JSON, docs/sweep.md) (required)"},
        {"out", KW_OPT_STRING, &o->out, 0, NULL, "output folder (created; reused to resume) (required)"},
        {"jobs", KW_OPT_INT, &o->jobs, 0, NULL,
         "experiments at once on this machine (default: the cores; ignored under MPI)"},
        {"pictures", KW_OPT_FLAG, &o->pictures, 0, NULL,
         "a picture of every reconstruction (DIR/pictures/ID.png)"},
        {"keep-files", KW_OPT_FLAG, &o->keep, 0, NULL,
         "keep each group's files (DIR/scratch/: truth, k-space, images)"},
        {"dry-run", KW_OPT_FLAG, &o->dry_run, 0, NULL,
         "check the spec, print the counts, run nothing"},
        {NULL, 0, NULL, 0, NULL, NULL},
    };
    int rc = kw_opts_parse(argc, argv, opts, usage_text, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (!o->spec)
        return kw_cli_fail("spec", "missing (kweave sweep --spec SPEC.json --out DIR)");
    if (!o->out && !o->dry_run)
        return kw_cli_fail("out", "missing (kweave sweep --spec SPEC.json --out DIR)");
    if (o->jobs < 0 || o->jobs > KW_SWEEP_MAX_JOBS)
        return kw_cli_fail("jobs", "must be 1..%d", KW_SWEEP_MAX_JOBS);
    if (o->jobs == 0) {
        long n = sysconf(_SC_NPROCESSORS_ONLN);
        o->jobs = n < 1 ? 1 : n > KW_SWEEP_MAX_JOBS ? KW_SWEEP_MAX_JOBS : n;
    }
    rc = kw_sweep_load(o->spec, sw);
    if (rc)
        return rc;
    if (o->dry_run) {
        printf("kweave sweep: %d experiments in %d data groups", sw->nrows, sw->ngroups);
        if (sw->skipped)
            printf(" (%d pattern-method pairs left out: the method cannot read the "
                   "pattern's sampling)", sw->skipped);
        printf("\nMPI: %s\n", mpi_built ? "built in" : "not built");
        kw_sweep_free(sw);
        return 0;
    }
    return -1;
}

static char hostname[256];

int kw_sweep_prepare(const kw_sweep_opts *o, const kw_sweep *sw, kw_sweep_ctx *c, int primary)
{
    memset(c, 0, sizeof *c);
    c->sw = sw;
    c->out = o->out;
    c->pictures = o->pictures;
    c->keep = o->keep;
    if (gethostname(hostname, sizeof hostname - 1) != 0)
        snprintf(hostname, sizeof hostname, "unknown");
    c->host = hostname;
    char p[4200];
    const char *sub[] = {"", "/scratch", o->pictures ? "/pictures" : NULL};
    for (int i = 0; i < 3; i++) {
        if (!sub[i])
            continue;
        snprintf(p, sizeof p, "%s%s", o->out, sub[i]);
        struct stat sb;
        if (mkdir(p, 0755) != 0 && errno != EEXIST)
            return kw_cli_fail("out", "%s: cannot create folder: %s", p, strerror(errno));
        if (stat(p, &sb) != 0 || !S_ISDIR(sb.st_mode))
            return kw_cli_fail("out", "%s: not a folder", p);
    }
    c->done = calloc((size_t)sw->nrows + 1, 1);
    if (!c->done)
        return kw_cli_status(KW_ENOMEM, "sweep");
    if (kw_sweep_journal_load(c, c->done, primary) < 0) {
        free(c->done);
        c->done = NULL;
        return KW_EXIT_USAGE;
    }
    return -1;
}

static struct timespec prog_t0;
static int prog_first = -1;

void kw_sweep_progress(int done, int total)
{
    /* the ETA counts only what this run did (a resumed sweep starts late) */
    if (prog_first < 0) {
        prog_first = done;
        clock_gettime(CLOCK_MONOTONIC, &prog_t0);
    }
    kw_progress p = {.stage = "sweep: experiments done", .iter = done - prog_first,
                     .niter = total - prog_first, .residual = 0.0 / 0.0};
    if (p.iter > 0)
        kw_cli_progress(NULL, &p);
}

int kw_sweep_finish(const kw_sweep_ctx *c, int ran, int failed_groups)
{
    kw_cli_progress_done();
    int rc = kw_sweep_write_results(c, 1);
    if (rc)
        return rc;
    if (!c->keep) {
        char p[4200];
        snprintf(p, sizeof p, "%s/scratch", c->out);
        rmdir(p); /* only when empty: a group still running elsewhere keeps it */
    }
    int ndone = 0;
    for (int r = 0; r < c->sw->nrows; r++)
        ndone += c->done[r];
    if (!kw_cli_quiet)
        fprintf(stderr, "kweave sweep: %d of %d experiments done (%d now), results in %s/\n",
                ndone, c->sw->nrows, ran, c->out);
    if (failed_groups)
        return fprintf(stderr, "kweave: error: sweep: %d data groups ended without results "
                               "(run the sweep again to retry them)\n", failed_groups),
               KW_EXIT_INTERNAL;
    return 0;
}
