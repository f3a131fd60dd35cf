/* outfile.h: atomic output. Every file kweave writes goes to a temporary file
 * beside the target and is renamed into place only when complete, so a failed
 * or interrupted run leaves no half-written file. "-" means standard output.
 * A target that exists and is not a regular file (/dev/null, /dev/full, a
 * FIFO) is written directly. Temporary files still open when SIGINT or
 * SIGTERM arrives are removed by the handler. */
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

/*! kw_outfile_install_signal_handlers(): SIGINT/SIGTERM/SIGHUP remove the
 * temporary files still open, then the process dies of the signal. */
void kw_outfile_install_signal_handlers(void);

/*! kw_outfile_write_all(): helper: write `n` bytes to `path` atomically. */
kw_status kw_outfile_write_all(const char *path, const void *buf, size_t n);

#endif
