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

/* Read the whole journal; a torn last line is cut off (file truncated). */
static char *read_journal(const kw_sweep_ctx *c, int truncate_torn)
{
    char p[4200];
    journal_path(c, p, sizeof p);
    FILE *f = fopen(p, "rb");
    if (!f)
        return calloc(1, 1);
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *t = n >= 0 ? malloc((size_t)n + 1) : NULL;
    size_t got = t ? fread(t, 1, (size_t)n, f) : 0;
    fclose(f);
    if (!t)
        return NULL;
    t[got] = 0;
    char *last = strrchr(t, '\n');
    size_t keep = last ? (size_t)(last - t) + 1 : 0;
    if (keep < got) {
        t[keep] = 0;
        if (truncate_torn && truncate(p, (off_t)keep) != 0)
            return free(t), NULL;
    }
    return t;
}

int kw_sweep_journal_load(const kw_sweep_ctx *c, unsigned char *done, int primary)
{
    char *t = read_journal(c, primary);
    if (!t)
        return kw_cli_fail("journal", "cannot read %s/journal.jsonl: %s", c->out,
                           strerror(errno)), -1;
    int n = 0;
    for (char *line = strtok(t, "\n"); line; line = strtok(NULL, "\n")) {
        cJSON *j = cJSON_Parse(line);
        const char *id = j ? cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(j, "id"))
                           : NULL;
        int r = id ? row_index(c->sw, id) : -1;
        if (r >= 0 && !done[r]) {
            done[r] = 1;
            n++;
        }
        cJSON_Delete(j);
    }
    free(t);
    return n;
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

int kw_sweep_write_results(const kw_sweep_ctx *c, int plots)
{
    const kw_sweep *sw = c->sw;
    char *t = read_journal(c, 0);
    if (!t)
        return kw_cli_fail("journal", "cannot read %s/journal.jsonl", c->out);
    cJSON **rows = calloc((size_t)sw->nrows, sizeof *rows);
    if (!rows) {
        free(t);
        return kw_cli_status(KW_ENOMEM, "results");
    }
    for (char *line = strtok(t, "\n"); line; line = strtok(NULL, "\n")) {
        cJSON *j = cJSON_Parse(line);
        const char *id = j ? cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(j, "id"))
                           : NULL;
        int r = id ? row_index(sw, id) : -1;
        if (r >= 0 && !rows[r])
            rows[r] = j;
        else
            cJSON_Delete(j);
    }
    free(t);

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
