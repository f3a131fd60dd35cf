/* outfile.c: temporary file + rename, with removal on error and on signals. */
#define _POSIX_C_SOURCE 200809L
#include "outfile.h"

#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define MAX_OPEN 64

/* Names of open temporary files, read by the signal handler: fixed-size
 * buffers so that the handler only calls unlink() (async-signal-safe). */
static char tmp_names[MAX_OPEN][4096];
static volatile sig_atomic_t tmp_used[MAX_OPEN];

static void on_signal(int sig)
{
    for (int i = 0; i < MAX_OPEN; i++)
        if (tmp_used[i])
            unlink(tmp_names[i]);
    signal(sig, SIG_DFL);
    raise(sig);
}

void kw_outfile_install_signal_handlers(void)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    sigaction(SIGHUP, &sa, NULL);
    /* A reader that goes away (kweave ... | head) also ends the run. */
    sigaction(SIGPIPE, &sa, NULL);
}

/* Block the cleanup signals while a temporary file is created and entered
 * in the table, so that none can slip between the two. */
static void block_signals(sigset_t *old)
{
    sigset_t s;
    sigemptyset(&s);
    sigaddset(&s, SIGINT);
    sigaddset(&s, SIGTERM);
    sigaddset(&s, SIGHUP);
    sigaddset(&s, SIGPIPE);
    sigprocmask(SIG_BLOCK, &s, old);
}

static int claim_slot(const char *name)
{
    if (strlen(name) >= sizeof tmp_names[0])
        return -1;
    for (int i = 0; i < MAX_OPEN; i++) {
        if (!tmp_used[i]) {
            strcpy(tmp_names[i], name);
            /* The name must be complete before the handler may read it. */
            atomic_signal_fence(memory_order_seq_cst);
            tmp_used[i] = 1;
            return i;
        }
    }
    return -1;
}

static void release_slot(int i)
{
    if (i >= 0 && i < MAX_OPEN)
        tmp_used[i] = 0;
}

kw_status kw_outfile_open(kw_outfile *o, const char *path)
{
    memset(o, 0, sizeof *o);
    o->slot = -1;
    KW_FAIL_IF(!path || !*path, KW_EINVAL, "output: empty file name");
    if (strcmp(path, "-") == 0) {
        o->fp = stdout;
        return KW_OK;
    }
    struct stat sb;
    if (stat(path, &sb) == 0) {
        KW_FAIL_IF(S_ISDIR(sb.st_mode), KW_EIO, "%s: is a directory", path);
        if (!S_ISREG(sb.st_mode)) { /* device or FIFO: write directly */
            o->fp = fopen(path, "wb");
            KW_FAIL_IF(!o->fp, KW_EIO, "%s: %s", path, strerror(errno));
            o->path = strdup(path);
            if (!o->path) {
                fclose(o->fp);
                o->fp = NULL;
                return kw_set_error(KW_ENOMEM, "%s: out of memory", path);
            }
            return KW_OK;
        }
    }
    size_t n = strlen(path) + 32;
    o->tmp = malloc(n);
    o->path = strdup(path);
    if (!o->tmp || !o->path) {
        free(o->tmp);
        free(o->path);
        memset(o, 0, sizeof *o);
        return kw_set_error(KW_ENOMEM, "%s: out of memory", path);
    }
    /* Hidden name beside the target, so that rename() stays on one file
     * system: dir/.name.kw-XXXXXX */
    const char *slash = strrchr(path, '/');
    size_t dirlen = slash ? (size_t)(slash - path + 1) : 0;
    snprintf(o->tmp, n, "%.*s.%s.kw-XXXXXX", (int)dirlen, path, path + dirlen);
    sigset_t old;
    block_signals(&old);
    int fd = mkstemp(o->tmp);
    if (fd >= 0)
        o->slot = claim_slot(o->tmp);
    sigprocmask(SIG_SETMASK, &old, NULL);
    if (fd < 0) {
        int e = errno;
        free(o->tmp);
        free(o->path);
        memset(o, 0, sizeof *o);
        o->slot = -1;
        return kw_set_error(KW_EIO, "%s: cannot write here: %s", path, strerror(e));
    }
    fchmod(fd, 0644 & ~0022);
    o->fp = fdopen(fd, "wb");
    if (!o->fp) {
        close(fd);
        kw_outfile_abort(o);
        return kw_set_error(KW_EIO, "%s: cannot open", path);
    }
    return KW_OK;
}

kw_status kw_outfile_commit(kw_outfile *o)
{
    KW_FAIL_IF(!o->fp, KW_EINVAL, "output: not open");
    int bad = fflush(o->fp) != 0 || ferror(o->fp);
    int e = errno;
    if (o->fp == stdout) {
        o->fp = NULL;
        KW_FAIL_IF(bad, KW_EIO, "standard output: %s", strerror(e));
        return KW_OK;
    }
    if (fclose(o->fp) != 0 && !bad) {
        bad = 1;
        e = errno;
    }
    o->fp = NULL;
    if (bad) {
        char what[256];
        snprintf(what, sizeof what, "%s", o->path ? o->path : "output");
        kw_outfile_abort(o);
        return kw_set_error(KW_EIO, "%s: write failed: %s", what, strerror(e));
    }
    sigset_t old;
    block_signals(&old);
    int rc = o->tmp ? rename(o->tmp, o->path) : 0;
    e = errno;
    if (rc == 0)
        release_slot(o->slot); /* the name now belongs to the finished file */
    sigprocmask(SIG_SETMASK, &old, NULL);
    if (rc != 0) {
        char what[256];
        snprintf(what, sizeof what, "%s", o->path);
        kw_outfile_abort(o);
        return kw_set_error(KW_EIO, "%s: cannot rename into place: %s", what,
                            strerror(e));
    }
    free(o->tmp);
    free(o->path);
    memset(o, 0, sizeof *o);
    o->slot = -1;
    return KW_OK;
}

void kw_outfile_abort(kw_outfile *o)
{
    if (!o)
        return;
    if (o->fp && o->fp != stdout)
        fclose(o->fp);
    if (o->tmp)
        unlink(o->tmp);
    release_slot(o->slot);
    free(o->tmp);
    free(o->path);
    memset(o, 0, sizeof *o);
    o->slot = -1;
}

kw_status kw_outfile_write_all(const char *path, const void *buf, size_t n)
{
    kw_outfile o;
    kw_status st = kw_outfile_open(&o, path);
    if (st)
        return st;
    if (n && fwrite(buf, 1, n, o.fp) != n) {
        kw_outfile_abort(&o);
        return kw_set_error(KW_EIO, "%s: write failed", path);
    }
    return kw_outfile_commit(&o);
}
