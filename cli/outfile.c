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

#define MAX_OPEN 256

/* Names of open temporary files, read by the signal handler: fixed-size
 * buffers so that the handler only calls unlink() (async-signal-safe). */
static char tmp_names[MAX_OPEN][4096];
static volatile sig_atomic_t tmp_used[MAX_OPEN];

/* Every catchable signal whose default action ends the process; SIGPIPE: a
 * reader that goes away (kweave ... | head) also ends the run. */
static const int cleanup_signals[] = {SIGINT,  SIGTERM, SIGHUP,    SIGPIPE, SIGQUIT,
                                      SIGUSR1, SIGUSR2, SIGALRM,   SIGVTALRM, SIGPROF};

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
    for (size_t i = 0; i < sizeof cleanup_signals / sizeof cleanup_signals[0]; i++)
        sigaction(cleanup_signals[i], &sa, NULL);
    /* A file-size limit (ulimit -f) makes write() fail with EFBIG, handled as
     * a write error, instead of killing the process without a word. */
    signal(SIGXFSZ, SIG_IGN);
}

/* Block the cleanup signals while a temporary file is created and entered
 * in the table, so that none can slip between the two. */
static void block_signals(sigset_t *old)
{
    sigset_t s;
    sigemptyset(&s);
    for (size_t i = 0; i < sizeof cleanup_signals / sizeof cleanup_signals[0]; i++)
        sigaddset(&s, cleanup_signals[i]);
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

/* ---- one run, all or nothing ---------------------------------------------
 * While a group is open, a committed file stays under its temporary name and
 * is renamed into place by kw_outfile_group_end() only when the whole run
 * succeeded; the run's inputs and outputs are recorded so that an output
 * that is an input, or that is named twice, is refused (same device and
 * inode, or the same directory and name for a file not yet there). */
typedef struct ident {
    dev_t dev;
    ino_t ino;
    int exists;
    char *name; /* canonical: real path of the directory + "/" + base name */
} ident;

typedef struct pending {
    char *tmp, *path;
    int slot;
} pending;

static struct {
    int on;
    int stdout_taken; /* "-" named once as an output */
    ident *in, *out;
    size_t nin, nout, capin, capout;
    pending *p;
    size_t np, capp;
} grp;

static char *canonical_name(const char *path)
{
    const char *slash = strrchr(path, '/');
    char dir[4096];
    if (!slash)
        snprintf(dir, sizeof dir, ".");
    else if (slash == path)
        snprintf(dir, sizeof dir, "/");
    else
        snprintf(dir, sizeof dir, "%.*s", (int)(slash - path), path);
    char *real = realpath(dir, NULL);
    if (!real)
        return NULL;
    const char *base = slash ? slash + 1 : path;
    size_t n = strlen(real) + strlen(base) + 2;
    char *c = malloc(n);
    if (c)
        snprintf(c, n, "%s/%s", real, base);
    free(real);
    return c;
}

static int ident_make(ident *id, const char *path)
{
    memset(id, 0, sizeof *id);
    struct stat sb;
    if (stat(path, &sb) == 0) {
        id->exists = 1;
        id->dev = sb.st_dev;
        id->ino = sb.st_ino;
    }
    id->name = canonical_name(path);
    return id->exists || id->name ? 0 : -1;
}

static int ident_same(const ident *a, const ident *b)
{
    if (a->exists && b->exists)
        return a->dev == b->dev && a->ino == b->ino;
    return a->name && b->name && strcmp(a->name, b->name) == 0;
}

static int ident_push(ident **v, size_t *n, size_t *cap, const ident *id)
{
    if (*n == *cap) {
        size_t nc = *cap ? 2 * *cap : 16;
        ident *nv = realloc(*v, nc * sizeof *nv);
        if (!nv)
            return -1;
        *v = nv;
        *cap = nc;
    }
    (*v)[(*n)++] = *id;
    return 0;
}

void kw_outfile_group_begin(void)
{
    grp.on = 1;
}

kw_status kw_outfile_note_input(const char *path)
{
    if (!grp.on || !path || strcmp(path, "-") == 0)
        return KW_OK;
    ident id;
    if (ident_make(&id, path) != 0 || !id.exists) {
        free(id.name);
        return KW_OK; /* the reader reports a missing file itself */
    }
    for (size_t i = 0; i < grp.nout; i++)
        if (ident_same(&grp.out[i], &id)) {
            free(id.name);
            return kw_set_error(KW_EINVAL, "%s: is also an output of this run; "
                                "choose another output name", path);
        }
    if (ident_push(&grp.in, &grp.nin, &grp.capin, &id) != 0) {
        free(id.name);
        return kw_set_error(KW_ENOMEM, "%s: out of memory", path);
    }
    return KW_OK;
}

/* An output of the group: refused when it is an input or an earlier output. */
static kw_status note_output(const char *path)
{
    if (!grp.on)
        return KW_OK;
    ident id;
    if (ident_make(&id, path) != 0)
        return KW_OK; /* no such directory: the open reports it */
    for (size_t i = 0; i < grp.nin; i++)
        if (ident_same(&grp.in[i], &id)) {
            free(id.name);
            return kw_set_error(KW_EINVAL, "%s: is also an input of this run; "
                                "refusing to overwrite it (choose another output name)", path);
        }
    for (size_t i = 0; i < grp.nout; i++)
        if (ident_same(&grp.out[i], &id)) {
            free(id.name);
            return kw_set_error(KW_EINVAL, "%s: is named as two outputs of this run "
                                "(a sidecar is named after its array: X.npy -> X.json)", path);
        }
    if (ident_push(&grp.out, &grp.nout, &grp.capout, &id) != 0) {
        free(id.name);
        return kw_set_error(KW_ENOMEM, "%s: out of memory", path);
    }
    return KW_OK;
}

static int defer(kw_outfile *o)
{
    if (grp.np == grp.capp) {
        size_t nc = grp.capp ? 2 * grp.capp : 16;
        pending *nv = realloc(grp.p, nc * sizeof *nv);
        if (!nv)
            return -1;
        grp.p = nv;
        grp.capp = nc;
    }
    grp.p[grp.np++] = (pending){o->tmp, o->path, o->slot};
    return 0;
}

/* The pending files renamed into place in order (keep), or removed; after a
 * failed rename the rest are removed. Frees the list. */
static kw_status settle(pending *p, size_t np, int keep)
{
    kw_status st = KW_OK;
    for (size_t i = 0; i < np; i++) {
        if (keep && st == KW_OK) {
            sigset_t old;
            block_signals(&old);
            int rc = rename(p[i].tmp, p[i].path);
            int e = errno;
            if (rc == 0)
                release_slot(p[i].slot);
            sigprocmask(SIG_SETMASK, &old, NULL);
            if (rc != 0)
                st = kw_set_error(KW_EIO, "%s: cannot rename into place: %s", p[i].path,
                                  strerror(e));
        }
        if (!keep || st != KW_OK) {
            unlink(p[i].tmp);
            release_slot(p[i].slot);
        }
        free(p[i].tmp);
        free(p[i].path);
    }
    free(p);
    return st;
}

kw_status kw_outfile_group_land(void)
{
    if (!grp.on)
        return KW_OK;
    /* rename what is pending, keep the record of inputs and outputs */
    pending *p = grp.p;
    size_t np = grp.np;
    grp.p = NULL;
    grp.np = grp.capp = 0;
    return settle(p, np, 1);
}

kw_status kw_outfile_group_end(int keep)
{
    kw_status st = settle(grp.p, grp.np, keep);
    for (size_t i = 0; i < grp.nin; i++)
        free(grp.in[i].name);
    for (size_t i = 0; i < grp.nout; i++)
        free(grp.out[i].name);
    free(grp.in);
    free(grp.out);
    memset(&grp, 0, sizeof grp);
    return st;
}

kw_status kw_outfile_open(kw_outfile *o, const char *path)
{
    memset(o, 0, sizeof *o);
    o->slot = -1;
    KW_FAIL_IF(!path || !*path, KW_EINVAL, "output: empty file name");
    if (strcmp(path, "-") == 0) {
        KW_FAIL_IF(grp.on && grp.stdout_taken, KW_EINVAL,
                   "standard output ('-') is named as two outputs of this run; "
                   "send one of them to a file");
        grp.stdout_taken = grp.on;
        o->fp = stdout;
        return KW_OK;
    }
    struct stat sb;
    if (stat(path, &sb) == 0)
        KW_FAIL_IF(S_ISDIR(sb.st_mode), KW_EIO, "%s: is a directory", path);
    kw_status st = note_output(path);
    if (st)
        return st;
    if (stat(path, &sb) == 0) {
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
    /* The name is cut so that it fits NAME_MAX (255) with the 11 added bytes. */
    snprintf(o->tmp, n, "%.*s.%.200s.kw-XXXXXX", (int)dirlen, path, path + dirlen);
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
    if (grp.on && o->tmp) {
        if (defer(o) != 0) {
            char what[256];
            snprintf(what, sizeof what, "%s", o->path);
            kw_outfile_abort(o);
            return kw_set_error(KW_ENOMEM, "%s: out of memory", what);
        }
        memset(o, 0, sizeof *o); /* the group owns the names now */
        o->slot = -1;
        return KW_OK;
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
