/* test_outfile.c: atomic output: nothing half-written, on error or signal. */
#define _POSIX_C_SOURCE 200809L
#include <criterion/criterion.h>
#include <dirent.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

#include "outfile.h"

static char dir[64];

static void setup(void)
{
    snprintf(dir, sizeof dir, "/tmp/kw_out_XXXXXX");
    cr_assert_not_null(mkdtemp(dir));
}

static void teardown(void)
{
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    cr_expect_eq(system(cmd), 0);
}

static int count_entries(const char *d)
{
    DIR *h = opendir(d);
    cr_assert_not_null(h);
    int n = 0;
    struct dirent *e;
    while ((e = readdir(h)))
        if (strcmp(e->d_name, ".") && strcmp(e->d_name, ".."))
            n++;
    closedir(h);
    return n;
}

TestSuite(outfile, .init = setup, .fini = teardown);

Test(outfile, commit_renames_into_place)
{
    char path[128];
    snprintf(path, sizeof path, "%s/a.bin", dir);
    kw_outfile o;
    cr_assert_eq(kw_outfile_open(&o, path), KW_OK);
    cr_expect_neq(access(path, F_OK), 0, "the target appears only on commit");
    cr_expect_eq(count_entries(dir), 1); /* the hidden temporary file */
    fputs("hello", o.fp);
    cr_assert_eq(kw_outfile_commit(&o), KW_OK);
    cr_expect_eq(count_entries(dir), 1);
    FILE *f = fopen(path, "rb");
    char buf[16] = "";
    cr_assert_not_null(f);
    cr_expect_eq(fread(buf, 1, sizeof buf, f), 5);
    fclose(f);
    cr_expect_str_eq(buf, "hello");
}

Test(outfile, abort_leaves_nothing)
{
    char path[128];
    snprintf(path, sizeof path, "%s/b.bin", dir);
    kw_outfile o;
    cr_assert_eq(kw_outfile_open(&o, path), KW_OK);
    fputs("partial", o.fp);
    kw_outfile_abort(&o);
    kw_outfile_abort(&o); /* idempotent */
    kw_outfile_abort(NULL);
    cr_expect_eq(count_entries(dir), 0);
}

Test(outfile, full_device_reports_the_error)
{
    kw_outfile o;
    cr_assert_eq(kw_outfile_open(&o, "/dev/full"), KW_OK);
    for (int i = 0; i < 10000; i++)
        fputs("0123456789", o.fp);
    cr_expect_eq(kw_outfile_commit(&o), KW_EIO);
    cr_expect(strstr(kw_last_error(), "/dev/full") != NULL, "%s", kw_last_error());
}

Test(outfile, bad_targets)
{
    kw_outfile o;
    cr_expect_eq(kw_outfile_open(&o, dir), KW_EIO); /* a directory */
    cr_expect(strstr(kw_last_error(), "directory") != NULL);
    char path[128];
    snprintf(path, sizeof path, "%s/missing/c.bin", dir);
    cr_expect_eq(kw_outfile_open(&o, path), KW_EIO);
    cr_expect_eq(kw_outfile_open(&o, ""), KW_EINVAL);
    cr_expect_eq(count_entries(dir), 0);
}

/* A child writes, then is killed by `sig` before committing: the handler must
 * remove its temporary files and the process must still die of the signal. */
static void die_mid_write(int sig)
{
    char p1[128], p2[128];
    snprintf(p1, sizeof p1, "%s/d1.bin", dir);
    snprintf(p2, sizeof p2, "%s/d2.bin", dir);
    fflush(NULL);
    pid_t pid = fork();
    cr_assert_neq(pid, -1);
    if (pid == 0) {
        kw_outfile_install_signal_handlers();
        kw_outfile a, b;
        if (kw_outfile_open(&a, p1) || kw_outfile_open(&b, p2))
            _exit(3);
        for (int i = 0; i < 1000; i++)
            fputs("partial data ", a.fp);
        fflush(a.fp);
        raise(sig);
        _exit(4); /* not reached: the signal ends the process */
    }
    int status = 0;
    cr_assert_eq(waitpid(pid, &status, 0), pid);
    cr_expect(WIFSIGNALED(status) && WTERMSIG(status) == sig,
              "child ended with status 0x%x, not by signal %d", status, sig);
    cr_expect_eq(count_entries(dir), 0, "temporary files left after signal %d", sig);
}

Test(outfile, sigint_removes_temporaries) { die_mid_write(SIGINT); }
Test(outfile, sigterm_removes_temporaries) { die_mid_write(SIGTERM); }
Test(outfile, sighup_removes_temporaries) { die_mid_write(SIGHUP); }
