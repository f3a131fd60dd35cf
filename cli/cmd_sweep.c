/* cmd_sweep.c: `kweave sweep --spec FILE --out DIR`: a grid of undersampling
 * experiments (pattern -> encode -> recon -> score), run in worker processes
 * on this machine, or under `mpirun` over many (sweep_mpi.c). docs/sweep.md.
 */
#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "sweep.h"

#define MAX_JOBS 64

static const char usage_text[] =
    "usage: kweave sweep --spec SPEC.json --out DIR [--jobs N] [--pictures] [--keep-files]\n"
    "       mpirun -np N kweave sweep --spec SPEC.json --out DIR\n\n"
    "Runs every experiment of the spec (phantom x matrix x coils x SNR x pattern x\n"
    "acceleration x seed, each reconstructed by every method variant and scored\n"
    "against the truth). DIR gets journal.jsonl (one line per finished experiment;\n"
    "a sweep started again does only what is left), results.csv, results.json and\n"
    "summary_{nrmse,psnr_db,ssim}.png. See docs/sweep.md for the spec.";

/* ---- children and signals --------------------------------------------------- */

static volatile pid_t kids[MAX_JOBS];
static struct sigaction old_term, old_int, old_hup;

/* SIGTERM / SIGINT / SIGHUP: end the running experiments (their rows were never
 * journalled, so a restart runs them again), then die as before. */
static void on_signal(int sig)
{
    for (int i = 0; i < MAX_JOBS; i++)
        if (kids[i] > 0)
            kill(kids[i], SIGKILL);
    const struct sigaction *old = sig == SIGTERM ? &old_term : sig == SIGINT ? &old_int : &old_hup;
    if (old->sa_handler != SIG_DFL && old->sa_handler != SIG_IGN &&
        !(old->sa_flags & SA_SIGINFO)) {
        old->sa_handler(sig);
    }
    signal(sig, SIG_DFL);
    raise(sig);
}

static void install_signals(void)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGTERM, &sa, &old_term);
    sigaction(SIGINT, &sa, &old_int);
    sigaction(SIGHUP, &sa, &old_hup);
}

/* ---- shared by the local and the MPI runs ----------------------------------- */

int kw_sweep_parse(int argc, char **argv, kw_sweep_opts *o, kw_sweep *sw)
{
    memset(o, 0, sizeof *o);
    const kw_opt opts[] = {
        {"spec", KW_OPT_STRING, &o->spec, 0, NULL, "the sweep spec (JSON, docs/sweep.md)"},
        {"out", KW_OPT_STRING, &o->out, 0, NULL, "output folder (created; reused to resume)"},
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
    if (o->jobs < 0 || o->jobs > MAX_JOBS)
        return kw_cli_fail("jobs", "must be 1..%d", MAX_JOBS);
    if (o->jobs == 0) {
        long n = sysconf(_SC_NPROCESSORS_ONLN);
        o->jobs = n < 1 ? 1 : n > MAX_JOBS ? MAX_JOBS : n;
    }
    rc = kw_sweep_load(o->spec, sw);
    if (rc)
        return rc;
    if (o->dry_run) {
        printf("kweave sweep: %d experiments in %d data groups", sw->nrows, sw->ngroups);
        if (sw->skipped)
            printf(" (%d pattern-method pairs left out: the method cannot read the "
                   "pattern's sampling)", sw->skipped);
        printf("\nMPI: %s\n", kw_sweep_mpi_built() ? "built in" : "not built");
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

static double mono(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int group_pending(const kw_sweep_ctx *c, int g)
{
    const kw_sweep_group *G = &c->sw->groups[g];
    for (int r = G->first_row; r < G->first_row + G->nrows; r++)
        if (!c->done[r])
            return 1;
    return 0;
}

static int count_done(const kw_sweep_ctx *c)
{
    int n = 0;
    for (int r = 0; r < c->sw->nrows; r++)
        n += c->done[r];
    return n;
}

/* ---- the local run ----------------------------------------------------------- */

static int run_local(const kw_sweep_opts *o, kw_sweep_ctx *c)
{
    const kw_sweep *sw = c->sw;
    int *todo = malloc((size_t)sw->ngroups * sizeof *todo), ntodo = 0;
    if (!todo)
        return kw_cli_status(KW_ENOMEM, "sweep");
    for (int g = 0; g < sw->ngroups; g++)
        if (group_pending(c, g))
            todo[ntodo++] = g;
    int slot_group[MAX_JOBS];
    int next = 0, running = 0, ran = 0, failed = 0;
    int jobs = (int)o->jobs;
    double last_ckpt = mono();
    install_signals();
    kw_sweep_progress(count_done(c), sw->nrows);
    while (next < ntodo || running) {
        while (running < jobs && next < ntodo) {
            int s = 0;
            while (kids[s] > 0)
                s++;
            long pid = kw_sweep_group_start(c, todo[next]);
            if (pid < 0) {
                failed++;
                next++;
                continue;
            }
            kids[s] = (pid_t)pid;
            slot_group[s] = todo[next++];
            running++;
        }
        if (!running)
            break;
        int wst;
        pid_t p = waitpid(-1, &wst, 0);
        if (p < 0) {
            if (errno == EINTR)
                continue;
            break;
        }
        int s = 0;
        while (s < MAX_JOBS && kids[s] != p)
            s++;
        if (s == MAX_JOBS)
            continue;
        kids[s] = 0;
        running--;
        char *text = kw_sweep_group_collect(c, slot_group[s], wst);
        int added = text ? kw_sweep_journal_append(c, text, c->done) : -1;
        free(text);
        if (added < 0)
            failed++;
        else
            ran += added;
        kw_sweep_progress(count_done(c), sw->nrows);
        if (mono() - last_ckpt > 30) {
            kw_sweep_write_results(c, 0);
            last_ckpt = mono();
        }
    }
    free(todo);
    return kw_sweep_finish(c, ran, failed);
}

int kw_cmd_sweep(int argc, char **argv)
{
    if (kw_sweep_mpi_launched())
        return kw_sweep_mpi_main(argc, argv);
    kw_sweep_opts o;
    kw_sweep sw;
    int rc = kw_sweep_parse(argc, argv, &o, &sw);
    if (rc >= 0)
        return rc;
    kw_sweep_ctx c;
    rc = kw_sweep_prepare(&o, &sw, &c, 1);
    if (rc < 0)
        rc = run_local(&o, &c);
    free(c.done);
    kw_sweep_free(&sw);
    return rc;
}
