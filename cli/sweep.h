/* sweep.h: `kweave sweep`: a grid of undersampling experiments from a JSON
 * spec (docs/sweep.md), run locally in worker processes or under MPI.
 *
 * The unit of work is a data group: one pattern + one simulated acquisition
 * (phantom, matrix, coils, SNR, pattern kind and parameters, acceleration,
 * seed) and every reconstruction of the spec on it. Each (group, method
 * variant) pair is one experiment = one row. Seeds come from a hash of the
 * group's canonical parameter string, never from its position or order. */
#ifndef KW_SWEEP_H
#define KW_SWEEP_H

#include <stdint.h>
#include <stdio.h>

#include "kw_base.h"

#define KW_SWEEP_KEYLEN 512

typedef struct kw_sweep_pattern {
    char kind[24];
    int acs;          /* -1: not given */
    double power;     /* NaN: not given */
    double fraction;  /* NaN: not given */
} kw_sweep_pattern;

typedef struct kw_sweep_method {
    char name[32];
    double lambda;    /* NaN: the method's default */
    long iterations;  /* 0: the method's default */
    char combine[16]; /* "" : the method's default */
} kw_sweep_method;

typedef struct kw_sweep_group {
    char phantom[32];
    int matrix;
    double fov_mm;
    int coils;
    double snr;       /* NaN: no noise */
    kw_sweep_pattern pat;
    int accel;
    long seed;        /* the spec's seed value (a replicate label) */
    char key[320];    /* canonical parameter string of the data */
    uint64_t hash;    /* FNV-1a 64 of key */
    int first_row, nrows; /* rows[first_row .. first_row + nrows) */
} kw_sweep_group;

typedef struct kw_sweep_row {
    int group;
    kw_sweep_method m;
    char key[KW_SWEEP_KEYLEN];  /* group key + method part */
    char id[17];                /* 16 hex digits of FNV-1a 64 of key */
} kw_sweep_row;

typedef struct kw_sweep {
    kw_sweep_group *groups;
    int ngroups;
    kw_sweep_row *rows;
    int nrows;
    int skipped;      /* pattern-method pairs left out (incompatible) */
    int *order;       /* row indices sorted by id (journal look-ups) */
} kw_sweep;

/*! kw_sweep_load(): read and check the spec; expand it into groups and rows.
 * On a bad spec prints the one error line and returns the exit code (2);
 * 0 when all is well. */
int kw_sweep_load(const char *path, kw_sweep *sw);
void kw_sweep_free(kw_sweep *sw);

/*! kw_sweep_numtxt(): a number as text: integers plainly, others in the
 * shortest form that reads back to the same double; NaN as "none". */
void kw_sweep_numtxt(char *b, size_t n, double v);

/*! FNV-1a 64-bit hash (Fowler, Noll, Vo; public domain algorithm). */
uint64_t kw_sweep_hash(const char *s);

/* Seeds of a group: pattern and noise, both from the group's hash. */
long kw_sweep_pattern_seed(const kw_sweep_group *g);
long kw_sweep_noise_seed(const kw_sweep_group *g);

/* ---- running one group (sweep_run.c) ------------------------------------- */

typedef struct kw_sweep_ctx {
    const kw_sweep *sw;
    const char *out;       /* output folder */
    int pictures;          /* --pictures */
    int keep;              /* --keep-files: keep each group's scratch folder */
    const char *host;
    unsigned char *done;   /* per row: already in the journal */
} kw_sweep_ctx;

/*! kw_sweep_group_start(): fork a child that runs group `g` (only the rows
 * not yet done) and writes one JSON line per row into the group's scratch
 * folder. Returns the child's pid, or -1. */
long kw_sweep_group_start(const kw_sweep_ctx *c, int g);

/*! kw_sweep_group_collect(): after the child of group `g` ended, read its
 * rows (a malloc'd text of JSON lines, NULL when it left none) and remove
 * the scratch folder unless --keep-files. */
char *kw_sweep_group_collect(const kw_sweep_ctx *c, int g, int wait_status);

/* ---- journal and results (sweep_out.c) ---------------------------------- */

/*! kw_sweep_journal_load(): read DIR/journal.jsonl, drop a torn last line,
 * mark done rows (a torn last line is cut off the file only when `primary`).
 * Returns rows already done, or -1 (error line printed). */
int kw_sweep_journal_load(const kw_sweep_ctx *c, unsigned char *done, int primary);

/*! kw_sweep_journal_append(): append the rows of `text` (JSON lines) that
 * are not yet done, each with one write() and fsync. Returns rows added or
 * -1. */
int kw_sweep_journal_append(const kw_sweep_ctx *c, const char *text, unsigned char *done);

/*! kw_sweep_write_results(): results.csv and results.json (atomically) from
 * the journal, rows in spec order; `plots` also draws the summary plots. */
int kw_sweep_write_results(const kw_sweep_ctx *c, int plots);

/* sweep_plot.c: the summary plots; rows as parsed JSON objects (NULL for
 * rows not done). */
struct cJSON;
kw_status kw_sweep_plot(const kw_sweep *sw, struct cJSON *const *rows, const char *out);

/* ---- MPI (sweep_mpi.c; a stub when built without MPI) --------------------- */

/*! kw_sweep_mpi_launched(): nonzero when started by an MPI launcher. */
int kw_sweep_mpi_launched(void);

/*! kw_sweep_mpi_built(): nonzero when this kweave was built with MPI. */
int kw_sweep_mpi_built(void);

/*! kw_sweep_mpi_main(): run the whole verb under MPI (rank 0 hands out
 * groups and writes; every rank also runs groups). Returns the exit code. */
int kw_sweep_mpi_main(int argc, char **argv);

#endif
