/* sweep_verb.h: the steps of `kweave sweep` shared by the local run
 * (cmd_sweep.c) and the MPI run (sweep_mpi.c); defined in sweep_verb.c,
 * which uses neither of them. */
#ifndef KW_SWEEP_VERB_H
#define KW_SWEEP_VERB_H

#include "sweep.h"

/* The most worker processes at once on one machine (--jobs). */
#define KW_SWEEP_MAX_JOBS 64

typedef struct kw_sweep_opts {
    const char *spec, *out;
    long jobs;
    int pictures, keep, dry_run;
} kw_sweep_opts;

/*! kw_sweep_parse(): options and spec; returns -1 when all went well, else
 * the exit code (0 after --dry-run, which prints the counts and whether
 * this kweave has MPI: `mpi_built`). */
int kw_sweep_parse(int argc, char **argv, kw_sweep_opts *o, kw_sweep *sw, int mpi_built);

/*! kw_sweep_prepare(): make the output folder, load the journal, fill ctx.
 * Returns -1 when all went well, else an exit code. */
int kw_sweep_prepare(const kw_sweep_opts *o, const kw_sweep *sw, kw_sweep_ctx *c, int primary);

/*! kw_sweep_progress(): progress line (done / total, ETA). */
void kw_sweep_progress(int done, int total);

/*! kw_sweep_finish(): results + plots + the closing line; the exit code. */
int kw_sweep_finish(const kw_sweep_ctx *c, int ran, int failed_groups);

#endif
