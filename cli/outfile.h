/* outfile.h: atomic output. Every file kweave writes goes to a temporary file
 * beside the target and is renamed into place only when complete, so a failed
 * or interrupted run leaves no half-written file. "-" means standard output.
 * A target that exists and is not a regular file (/dev/null, /dev/full, a
 * FIFO) is written directly. Temporary files still open when a signal that
 * ends the process arrives (SIGINT, SIGTERM, SIGHUP, SIGPIPE, SIGQUIT,
 * SIGUSR1/2, SIGALRM, SIGVTALRM, SIGPROF) are removed by the handler; SIGXFSZ
 * is ignored so that a file-size limit is a write error. */
#ifndef KW_OUTFILE_H
#define KW_OUTFILE_H

#include <stdio.h>

#include "kw_base.h"

typedef struct kw_outfile {
    FILE *fp;   /* write here */
    char *path; /* final name (NULL for stdout) */
    char *tmp;  /* temporary name (NULL when writing directly) */
    int slot;   /* index in the signal-cleanup table, -1 if none */
} kw_outfile;

/*! kw_outfile_open(): open `path` for writing ("-" for stdout). On failure
 * returns KW_EIO with "<path>: <reason>" in kw_last_error(). */
kw_status kw_outfile_open(kw_outfile *o, const char *path);

/*! kw_outfile_commit(): flush, check for write errors (a full disk), close
 * and rename into place. On failure the temporary file is removed and
 * KW_EIO returned. Always leaves `o` closed. */
kw_status kw_outfile_commit(kw_outfile *o);

/*! kw_outfile_abort(): close and remove the temporary file (NULL-safe,
 * idempotent). */
void kw_outfile_abort(kw_outfile *o);

/*! kw_outfile_install_signal_handlers(): the signals above remove the
 * temporary files still open, then the process dies of the signal. */
void kw_outfile_install_signal_handlers(void);

/*! kw_outfile_group_begin(): from now on kw_outfile_commit() keeps each
 * finished file under its temporary name; kw_outfile_group_end(keep) renames
 * them all into place when `keep` (the run succeeded) or removes them all.
 * While a group is open an output that is also an input of the run (noted
 * with kw_outfile_note_input()), or that is named twice, is refused with
 * KW_EINVAL before anything is written. `kweave VERB` runs each verb in a
 * group, except the ones that read their own outputs (demo, sweep). */
void kw_outfile_group_begin(void);
kw_status kw_outfile_group_end(int keep);

/*! kw_outfile_group_land(): rename the files finished so far into place now,
 * the group staying open: a run about to stream to standard output lands the
 * files a reader at the other end needs first (encode's sidecar). */
kw_status kw_outfile_group_land(void);

/*! kw_outfile_note_input(): `path` is read by this run ("-" and files that do
 * not exist are ignored). KW_EINVAL when it is already an output. */
kw_status kw_outfile_note_input(const char *path);

/*! kw_outfile_write_all(): helper: write `n` bytes to `path` atomically. */
kw_status kw_outfile_write_all(const char *path, const void *buf, size_t n);

#endif
