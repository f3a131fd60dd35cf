/* sweep_mpi.c: `kweave sweep` under mpirun. Every rank reads the spec; rank
 * 0 hands data groups out one at a time (whoever asks next gets the next
 * one), writes the journal and the results; every rank, rank 0 included,
 * runs one group at a time in a child process. The rows are the same as a
 * local run's: each group's seeds come from its own parameters.
 *
 * Built with MPI when the Makefile finds mpicc (or MPI=1): KW_WITH_MPI. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "sweep.h"
#include "sweep_verb.h"

static int env_size(void)
{
    const char *v[] = {"OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "PMIX_SIZE", NULL};
    for (int i = 0; v[i]; i++) {
        const char *s = getenv(v[i]);
        if (s && *s)
            return atoi(s);
    }
    return getenv("PMIX_RANK") ? 1 : 0;
}

#ifndef KW_WITH_MPI

int kw_sweep_mpi_launched(void)
{
    return env_size() > 1;
}

int kw_sweep_mpi_built(void)
{
    return 0;
}

int kw_sweep_mpi_main(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return kw_cli_fail("sweep", "started by an MPI launcher, but this kweave was built "
                                "without MPI (make MPI=1 with mpicc installed)");
}

#else

#include <errno.h>
#include <signal.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <mpi.h>

enum { TAG_ROWS = 1, TAG_WORK = 2 };

int kw_sweep_mpi_launched(void)
{
    return env_size() >= 1;
}

int kw_sweep_mpi_built(void)
{
    return 1;
}

static pid_t own_child;

static void on_term(int sig)
{
    if (own_child > 0)
        kill(own_child, SIGKILL);
    signal(sig, SIG_DFL);
    raise(sig);
}

/* Run group g in a child and wait for it; the rows as text ("" if none). */
static char *run_group(const kw_sweep_ctx *c, int g)
{
    long pid = kw_sweep_group_start(c, g);
    if (pid < 0)
        return NULL;
    own_child = (pid_t)pid;
    int wst;
    while (waitpid((pid_t)pid, &wst, 0) < 0 && errno == EINTR) {
    }
    own_child = 0;
    return kw_sweep_group_collect(c, g, wst);
}

static void sleep_ms(int ms)
{
    struct timespec t = {0, (long)ms * 1000000L};
    nanosleep(&t, NULL);
}

static int rank0(kw_sweep_ctx *c, int size)
{
    const kw_sweep *sw = c->sw;
    int *todo = malloc((size_t)sw->ngroups * sizeof *todo), ntodo = 0;
    if (!todo)
        return kw_cli_status(KW_ENOMEM, "sweep");
    for (int g = 0; g < sw->ngroups; g++) {
        const kw_sweep_group *G = &sw->groups[g];
        for (int r = G->first_row; r < G->first_row + G->nrows; r++)
            if (!c->done[r]) {
                todo[ntodo++] = g;
                break;
            }
    }
    int next = 0, workers = size - 1, ran = 0, failed = 0;
    int own = -1; /* the group rank 0's own child runs */
    int ndone = 0;
    for (int r = 0; r < sw->nrows; r++)
        ndone += c->done[r];
    kw_sweep_progress(ndone, sw->nrows);
    while (workers > 0 || own >= 0 || next < ntodo) {
        int busy = 0;
        if (own < 0 && next < ntodo) {
            own = todo[next++];
            long pid = kw_sweep_group_start(c, own);
            if (pid < 0) {
                failed++;
                own = -1;
            } else {
                own_child = (pid_t)pid;
            }
            busy = 1;
        }
        if (own >= 0) {
            int wst;
            pid_t p = waitpid(own_child, &wst, WNOHANG);
            if (p == own_child) {
                own_child = 0;
                char *text = kw_sweep_group_collect(c, own, wst);
                int added = text ? kw_sweep_journal_append(c, text, c->done) : -1;
                free(text);
                if (added < 0)
                    failed++;
                else
                    ran += added, ndone += added;
                kw_sweep_progress(ndone, sw->nrows);
                own = -1;
                busy = 1;
            }
        }
        int flag = 0;
        MPI_Status ms;
        MPI_Iprobe(MPI_ANY_SOURCE, TAG_ROWS, MPI_COMM_WORLD, &flag, &ms);
        if (flag) {
            int n;
            MPI_Get_count(&ms, MPI_CHAR, &n);
            char *text = malloc((size_t)n + 1);
            MPI_Recv(text, n, MPI_CHAR, ms.MPI_SOURCE, TAG_ROWS, MPI_COMM_WORLD,
                     MPI_STATUS_IGNORE);
            if (text) {
                text[n] = 0;
                /* "!" marks a group whose child left no rows */
                if (n > 0 && text[0] == '!') {
                    failed++;
                } else if (n > 0) {
                    int added = kw_sweep_journal_append(c, text, c->done);
                    if (added < 0)
                        failed++;
                    else
                        ran += added, ndone += added;
                    kw_sweep_progress(ndone, sw->nrows);
                }
                free(text);
            }
            int g = next < ntodo ? todo[next++] : -1;
            MPI_Send(&g, 1, MPI_INT, ms.MPI_SOURCE, TAG_WORK, MPI_COMM_WORLD);
            if (g < 0)
                workers--;
            busy = 1;
        }
        if (!busy)
            sleep_ms(2);
    }
    free(todo);
    return kw_sweep_finish(c, ran, failed);
}

static void worker(kw_sweep_ctx *c)
{
    char *text = NULL;
    const char *msg = "";
    for (;;) {
        int n = (int)strlen(msg);
        MPI_Send(msg, n, MPI_CHAR, 0, TAG_ROWS, MPI_COMM_WORLD);
        free(text);
        text = NULL;
        int g;
        MPI_Recv(&g, 1, MPI_INT, 0, TAG_WORK, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
        if (g < 0)
            break;
        text = run_group(c, g);
        msg = text ? text : "!";
    }
}

int kw_sweep_mpi_main(int argc, char **argv)
{
    /* the children are plain processes that never call MPI */
    setenv("OMPI_MCA_mpi_warn_on_fork", "0", 0);
    int provided = 0;
    if (MPI_Init_thread(&argc, &argv, MPI_THREAD_SINGLE, &provided) != MPI_SUCCESS)
        return kw_cli_fail("sweep", "MPI_Init failed");
    int rank = 0, size = 1;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &size);
    /* every rank checks the spec; only rank 0 speaks */
    if (rank != 0) {
        kw_cli_quiet = 1;
        if (!freopen("/dev/null", "w", stderr) || !freopen("/dev/null", "w", stdout)) {
        }
    }
    kw_sweep_opts o;
    kw_sweep sw;
    int rc = kw_sweep_parse(argc, argv, &o, &sw, 1);
    if (rc >= 0) {
        MPI_Finalize();
        return rc;
    }
    kw_sweep_ctx c;
    memset(&c, 0, sizeof c);
    /* rank 0 makes the folder and reads the journal; the others wait, then
     * read the same journal (they only need it to skip done rows) */
    if (rank == 0)
        rc = kw_sweep_prepare(&o, &sw, &c, 1);
    MPI_Bcast(&rc, 1, MPI_INT, 0, MPI_COMM_WORLD);
    if (rank != 0 && rc < 0)
        rc = kw_sweep_prepare(&o, &sw, &c, 0);
    if (rc < 0) {
        signal(SIGTERM, on_term);
        signal(SIGINT, on_term);
        if (rank == 0)
            rc = rank0(&c, size);
        else {
            worker(&c);
            rc = 0;
        }
    }
    free(c.done);
    kw_sweep_free(&sw);
    MPI_Finalize();
    return rc < 0 ? 0 : rc;
}

#endif
