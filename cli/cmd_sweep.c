/* cmd_sweep.c: `kweave sweep --spec FILE --out DIR`: a grid of undersampling
 * experiments (pattern -> encode -> recon -> score), run in worker processes
 * on this machine, or under `mpirun` over many (sweep_mpi.c). docs/sweep.md.
 * The steps both runs share (options, output folder, progress, results) are
 * in sweep_verb.c.
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
#include "sweep_verb.h"
#include "kw_fft.h"

#define MAX_JOBS KW_SWEEP_MAX_JOBS

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
    /* The same table, bit for bit, on every run, resume and MPI layout: plans
     * made without timing and without the wisdom cache (kw_fft.h). */
    kw_fft_set_reproducible(1);
    if (kw_sweep_mpi_launched())
        return kw_sweep_mpi_main(argc, argv);
    kw_sweep_opts o;
    kw_sweep sw;
    int rc = kw_sweep_parse(argc, argv, &o, &sw, kw_sweep_mpi_built());
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
