/* sweep_out.c: the journal of finished experiments and the result tables.
 *
 * DIR/journal.jsonl holds one JSON object per finished experiment, each
 * appended with one write() on an O_APPEND descriptor and fsync'd, so a
 * kill leaves at most a torn last line (no newline); loading drops it.
 * results.csv / results.json are rebuilt from the journal, rows in spec
 * order, and replaced atomically (kw_outfile); at the end of a run also the
 * summary plots and report.html (html_report.c). */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cJSON.h>

#include "cli.h"
#include "html_report.h"
#include "jsonio.h"
#include "outfile.h"
#include "sweep.h"

static const char *const columns[] = {
    "id", "phantom", "matrix", "fov_mm", "coils", "snr", "pattern", "acs", "power",
    "fraction", "acceleration", "acceleration_effective", "seed", "pattern_seed", "noise_seed", "method", "lambda",
    "iterations", "combine", "status", "nrmse", "psnr_db", "ssim", "run_time_s", "host", NULL};

static void journal_path(const kw_sweep_ctx *c, char *b, size_t n)
{
    snprintf(b, n, "%s/journal.jsonl", c->out);
}

static int row_index(const kw_sweep *sw, const char *id)
{
    int lo = 0, hi = sw->nrows - 1;
    while (lo <= hi) {
        int mid = (lo + hi) / 2, cmp = strcmp(sw->rows[sw->order[mid]].id, id);
        if (cmp == 0)
            return sw->order[mid];
        if (cmp < 0)
            lo = mid + 1;
        else
            hi = mid - 1;
    }
    return -1;
}

/* A journal line is one experiment's JSON (about 1 KB); anything longer is
 * not a journal of ours. */
#define JOURNAL_LINE_MAX ((size_t)1 << 20)

/* Each complete line of the journal, in order, read a line at a time (a
 * journal of any size costs one line of memory); a torn last line (no
 * newline) is cut off the file when `truncate_torn`. A missing journal is
 * empty. -1 (message printed) for a journal that is not a regular file, a
 * line over JOURNAL_LINE_MAX (the file is left as it is) or a read error. */
static int journal_each(const kw_sweep_ctx *c, int truncate_torn,
                        void (*fn)(const char *line, void *user), void *user)
{
    char p[4200];
    journal_path(c, p, sizeof p);
    FILE *f = fopen(p, "rb");
    if (!f)
        return errno == ENOENT ? 0 : (kw_cli_fail("journal", "cannot read %s: %s", p, strerror(errno)), -1);
    struct stat sb;
    if (fstat(fileno(f), &sb) != 0 || !S_ISREG(sb.st_mode)) {
        fclose(f);
        return kw_cli_fail("journal", "%s is not a regular file", p), -1;
    }
    char *line = malloc(JOURNAL_LINE_MAX + 1);
    if (!line) {
        fclose(f);
        return kw_cli_status(KW_ENOMEM, "journal"), -1;
    }
    size_t len = 0;
    long long pos = 0, good = 0; /* bytes read; bytes up to the last newline */
    int ch;
    while ((ch = getc(f)) != EOF) {
        pos++;
        if (ch == '\n') {
            line[len] = '\0';
            fn(line, user);
            len = 0;
            good = pos;
        } else if (len == JOURNAL_LINE_MAX) {
            free(line);
            fclose(f);
            return kw_cli_fail("journal", "%s: the line at byte %lld is longer than 1 MiB: not a "
                               "kweave journal (left as it is)", p, good), -1;
        } else {
            line[len++] = (char)ch;
        }
    }
    int err = ferror(f);
    free(line);
    fclose(f);
    if (err)
        return kw_cli_fail("journal", "cannot read %s", p), -1;
    if (len > 0 && truncate_torn && truncate(p, (off_t)good) != 0)
        return kw_cli_fail("journal", "cannot cut the torn last line of %s: %s", p,
                           strerror(errno)), -1;
    return 0;
}

typedef struct load_ctx {
    const kw_sweep *sw;
    unsigned char *done;
    int n;
} load_ctx;

static void load_line(const char *line, void *user)
{
    load_ctx *l = user;
    cJSON *j = cJSON_Parse(line);
    const char *id = j ? cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(j, "id")) : NULL;
    int r = id ? row_index(l->sw, id) : -1;
    if (r >= 0 && !l->done[r]) {
        l->done[r] = 1;
        l->n++;
    }
    cJSON_Delete(j);
}

int kw_sweep_journal_load(const kw_sweep_ctx *c, unsigned char *done, int primary)
{
    load_ctx l = {c->sw, done, 0};
    if (journal_each(c, primary, load_line, &l) != 0)
        return -1;
    return l.n;
}

int kw_sweep_journal_append(const kw_sweep_ctx *c, const char *text, unsigned char *done)
{
    char p[4200];
    journal_path(c, p, sizeof p);
    int fd = open(p, O_WRONLY | O_APPEND | O_CREAT, 0644);
    if (fd < 0)
        return -1;
    int added = 0;
    const char *s = text;
    while (s && *s) {
        const char *e = strchr(s, '\n');
        size_t len = e ? (size_t)(e - s) : strlen(s);
        char *line = malloc(len + 2);
        if (!line)
            break;
        memcpy(line, s, len);
        line[len] = 0;
        cJSON *j = cJSON_Parse(line);
        const char *id = j ? cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(j, "id"))
                           : NULL;
        int r = id ? row_index(c->sw, id) : -1;
        cJSON_Delete(j);
        if (r >= 0 && !done[r]) {
            line[len] = '\n';
            /* one write per line: O_APPEND places it whole at the end */
            if (write(fd, line, len + 1) != (ssize_t)(len + 1) || fsync(fd) != 0) {
                free(line);
                close(fd);
                return -1;
            }
            done[r] = 1;
            added++;
        }
        free(line);
        s = e ? e + 1 : NULL;
    }
    close(fd);
    return added;
}

/* CSV field: numbers as their shortest round-trip text, null empty, strings
 * quoted when they hold a comma, a quote or a newline (RFC 4180). */
static void csv_field(FILE *f, const cJSON *v)
{
    if (!v || cJSON_IsNull(v))
        return;
    if (cJSON_IsNumber(v)) {
        char b[40];
        kw_sweep_numtxt(b, sizeof b, v->valuedouble);
        fputs(b, f);
        return;
    }
    const char *s = cJSON_GetStringValue(v);
    if (!s)
        return;
    if (strpbrk(s, ",\"\n")) {
        fputc('"', f);
        for (; *s; s++) {
            if (*s == '"')
                fputc('"', f);
            fputc(*s, f);
        }
        fputc('"', f);
    } else {
        fputs(s, f);
    }
}

typedef struct rows_ctx {
    const kw_sweep *sw;
    cJSON **rows;
} rows_ctx;

static void rows_line(const char *line, void *user)
{
    rows_ctx *x = user;
    cJSON *j = cJSON_Parse(line);
    const char *id = j ? cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(j, "id")) : NULL;
    int r = id ? row_index(x->sw, id) : -1;
    if (r >= 0 && !x->rows[r])
        x->rows[r] = j;
    else
        cJSON_Delete(j);
}

int kw_sweep_write_results(const kw_sweep_ctx *c, int plots)
{
    const kw_sweep *sw = c->sw;
    cJSON **rows = calloc((size_t)sw->nrows, sizeof *rows);
    if (!rows)
        return kw_cli_status(KW_ENOMEM, "results");
    rows_ctx rc_ = {sw, rows};
    if (journal_each(c, 0, rows_line, &rc_) != 0) {
        free(rows);
        return KW_EXIT_USAGE;
    }

    int rc = 0;
    char p[4200];
    snprintf(p, sizeof p, "%s/results.csv", c->out);
    kw_outfile o;
    kw_status st = kw_outfile_open(&o, p);
    if (st) {
        rc = kw_cli_status(st, "results");
        goto done;
    }
    for (int k = 0; columns[k]; k++)
        fprintf(o.fp, "%s%s", k ? "," : "", columns[k]);
    fputc('\n', o.fp);
    for (int r = 0; r < sw->nrows; r++) {
        if (!rows[r])
            continue;
        for (int k = 0; columns[k]; k++) {
            if (k)
                fputc(',', o.fp);
            csv_field(o.fp, cJSON_GetObjectItemCaseSensitive(rows[r], columns[k]));
        }
        fputc('\n', o.fp);
    }
    if ((st = kw_outfile_commit(&o))) {
        rc = kw_cli_status(st, "results");
        goto done;
    }

    cJSON *root = cJSON_CreateObject();
    cJSON_AddStringToObject(root, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(root, "kind", "sweep-results");
    cJSON_AddNumberToObject(root, "experiments", sw->nrows);
    cJSON *cols = cJSON_AddArrayToObject(root, "columns");
    for (int k = 0; columns[k]; k++)
        cJSON_AddItemToArray(cols, cJSON_CreateString(columns[k]));
    cJSON *arr = cJSON_AddArrayToObject(root, "rows");
    int ndone = 0;
    for (int r = 0; r < sw->nrows; r++)
        if (rows[r]) {
            cJSON_AddItemReferenceToArray(arr, rows[r]);
            ndone++;
        }
    cJSON_AddNumberToObject(root, "done", ndone);
    snprintf(p, sizeof p, "%s/results.json", c->out);
    st = kw_json_write(p, root);
    cJSON_Delete(root);
    if (st) {
        rc = kw_cli_status(st, "results");
        goto done;
    }
    if (plots && (st = kw_sweep_plot(sw, rows, c->out)))
        rc = kw_cli_status(st, "plot");
    else if (plots && (st = kw_html_sweep(sw, rows, c->out)))
        rc = kw_cli_status(st, "report");
done:
    for (int r = 0; r < sw->nrows; r++)
        cJSON_Delete(rows[r]);
    free(rows);
    return rc;
}
