/* sweep_run.c: one data group of a sweep in a child process: pattern ->
 * encode -> recon (each method variant) -> score, through the same verbs a
 * user calls (in-process, argv synthesised, files in a scratch folder).
 *
 * A child per group keeps FFTW planning (not thread-safe) and the verbs'
 * process-wide state out of the scheduler, and lets a kill end it cleanly.
 * The child runs single-threaded so that its numbers do not depend on the
 * machine's thread count. */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>
#include <dirent.h>

#include <cJSON.h>
#include <omp.h>

#include "cli.h"
#include "figure.h"
#include "jsonio.h"
#include "kw_metrics.h"
#include "npy.h"
#include "outfile.h"
#include "png.h"
#include "sweep.h"

#define NARG 48

static double now_s(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static void scratch_dir(const kw_sweep_ctx *c, int g, char *b, size_t n)
{
    snprintf(b, n, "%s/scratch/%016llx", c->out, (unsigned long long)c->sw->groups[g].hash);
}

static void rm_tree(const char *dir)
{
    DIR *d = opendir(dir);
    if (!d)
        return;
    struct dirent *e;
    char p[4096];
    while ((e = readdir(d)) != NULL) {
        if (!strcmp(e->d_name, ".") || !strcmp(e->d_name, ".."))
            continue;
        snprintf(p, sizeof p, "%s/%s", dir, e->d_name);
        unlink(p);
    }
    closedir(d);
    rmdir(dir);
}

/* Where the next verb's output starts in the child's log. */
static long log_mark(void)
{
    fflush(stdout);
    fflush(stderr);
    return (long)lseek(STDERR_FILENO, 0, SEEK_END);
}

/* The first error line the last verb wrote (from `from` on): its reason. */
static void first_error(const char *log, long from, char *why, size_t n)
{
    snprintf(why, n, "failed (no reason given)");
    FILE *f = fopen(log, "r");
    if (!f)
        return;
    if (from > 0)
        fseek(f, from, SEEK_SET);
    char line[512];
    while (fgets(line, sizeof line, f)) {
        if (strncmp(line, "kweave: error: ", 15) == 0) {
            line[strcspn(line, "\n")] = 0;
            size_t k = strlen(line + 15);
            if (k >= n)
                k = n - 1;
            memcpy(why, line + 15, k);
            why[k] = 0;
            break;
        }
    }
    fclose(f);
}

/* The row's parameters (everything but the scores and the run facts). */
static cJSON *row_json(const kw_sweep *sw, int r)
{
    const kw_sweep_row *R = &sw->rows[r];
    const kw_sweep_group *g = &sw->groups[R->group];
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "id", R->id);
    cJSON_AddStringToObject(o, "key", R->key);
    cJSON_AddStringToObject(o, "phantom", g->phantom);
    cJSON_AddNumberToObject(o, "matrix", g->matrix);
    cJSON_AddNumberToObject(o, "fov_mm", g->fov_mm);
    cJSON_AddNumberToObject(o, "coils", g->coils);
    kw_json_add_number_or_null(o, "snr", g->snr);
    cJSON_AddStringToObject(o, "pattern", g->pat.kind);
    if (g->pat.acs >= 0)
        cJSON_AddNumberToObject(o, "acs", g->pat.acs);
    else
        cJSON_AddNullToObject(o, "acs");
    kw_json_add_number_or_null(o, "power", g->pat.power);
    kw_json_add_number_or_null(o, "fraction", g->pat.fraction);
    cJSON_AddNumberToObject(o, "acceleration", g->accel);
    cJSON_AddNumberToObject(o, "seed", (double)g->seed);
    cJSON_AddNumberToObject(o, "pattern_seed", (double)kw_sweep_pattern_seed(g));
    cJSON_AddNumberToObject(o, "noise_seed", (double)kw_sweep_noise_seed(g));
    cJSON_AddStringToObject(o, "method", R->m.name);
    kw_json_add_number_or_null(o, "lambda", R->m.lambda);
    if (R->m.iterations > 0)
        cJSON_AddNumberToObject(o, "iterations", (double)R->m.iterations);
    else
        cJSON_AddNullToObject(o, "iterations");
    if (R->m.combine[0])
        cJSON_AddStringToObject(o, "combine", R->m.combine);
    else
        cJSON_AddNullToObject(o, "combine");
    return o;
}

typedef struct argv_b {
    char *v[NARG];
    char store[NARG][256];
    int n;
} argv_b;

static void arg(argv_b *a, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

static void arg(argv_b *a, const char *fmt, ...)
{
    if (a->n >= NARG - 1)
        return;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(a->store[a->n], sizeof a->store[a->n], fmt, ap);
    va_end(ap);
    a->v[a->n] = a->store[a->n];
    a->n++;
    a->v[a->n] = NULL;
}

/* `encode` writes the pattern's effective acceleration into the sidecar
 * (rounded to an integer by recon's reader); `recon` compares it with the
 * lattice it finds in the data, so a uniform lattice with a calibration
 * block (effective R below the lattice R) is refused. The sweep clears the
 * key in its own sidecar and lets recon read the sampling from the data. */
static int clear_sidecar_accel(const char *dir)
{
    char p[4200];
    snprintf(p, sizeof p, "%s/ks.json", dir);
    cJSON *j = NULL;
    if (kw_json_read(p, &j))
        return -1;
    cJSON_ReplaceItemInObjectCaseSensitive(j, "acceleration", cJSON_CreateNull());
    int rc = kw_json_write(p, j) ? -1 : 0;
    cJSON_Delete(j);
    return rc;
}

static int run_verb(int (*verb)(int, char **), argv_b *a)
{
    optind = 1;
    int rc = verb(a->n, a->v);
    fflush(stdout);
    fflush(stderr);
    return rc;
}

/* The child: never returns. */
static void child_main(const kw_sweep_ctx *c, int gi, const char *dir)
{
    const kw_sweep *sw = c->sw;
    const kw_sweep_group *g = &sw->groups[gi];
    char log[4200], res[4200];
    snprintf(log, sizeof log, "%s/log.txt", dir);
    snprintf(res, sizeof res, "%s/rows.jsonl", dir);
    int lf = open(log, O_WRONLY | O_CREAT | O_TRUNC | O_APPEND, 0644);
    if (lf >= 0) {
        dup2(lf, STDOUT_FILENO);
        dup2(lf, STDERR_FILENO);
        close(lf);
    }
    /* the parent's handler ends the parent's children; here a signal only
     * needs to clear the temporary files, then end this child */
    kw_outfile_install_signal_handlers();
    setenv("OMP_NUM_THREADS", "1", 1);
    omp_set_num_threads(1);
    kw_cli_quiet = 1;
    FILE *out = fopen(res, "w");
    if (!out)
        _exit(1);

    double t0 = now_s();
    char f_mask[4200], f_ks[4200], f_truth[4200], f_sens[4200];
    int nc = !strcmp(g->pat.kind, "radial") || !strcmp(g->pat.kind, "golden");
    snprintf(f_mask, sizeof f_mask, "%s/%s.npy", dir, nc ? "traj" : "mask");
    snprintf(f_ks, sizeof f_ks, "%s/ks.npy", dir);
    snprintf(f_truth, sizeof f_truth, "%s/truth.npy", dir);
    snprintf(f_sens, sizeof f_sens, "%s/sens.npy", dir);
    char why[400] = "";
    argv_b a = {.n = 0};
    arg(&a, "pattern");
    arg(&a, "--kind");
    arg(&a, "%s", g->pat.kind);
    arg(&a, "--matrix");
    arg(&a, "%dx%d", g->matrix, g->matrix);
    if (nc) {
        /* R relative to the pi N / 2 spokes of a fully sampled radial scan */
        arg(&a, "--spokes");
        arg(&a, "%d", (int)ceil(M_PI * g->matrix / 2.0 / g->accel));
    } else if (strcmp(g->pat.kind, "full") && strcmp(g->pat.kind, "partial")) {
        arg(&a, "--accel");
        arg(&a, "%d", g->accel);
    }
    if (g->pat.acs >= 0) {
        arg(&a, "--acs");
        arg(&a, "%d", g->pat.acs);
    }
    if (!isnan(g->pat.power)) {
        arg(&a, "--power");
        arg(&a, "%.17g", g->pat.power);
    }
    if (!isnan(g->pat.fraction)) {
        arg(&a, "--fraction");
        arg(&a, "%.17g", g->pat.fraction);
    }
    arg(&a, "--seed");
    arg(&a, "%ld", kw_sweep_pattern_seed(g));
    arg(&a, "--out");
    arg(&a, "%s", f_mask);
    arg(&a, "--quiet");
    long mark = log_mark();
    int rc = run_verb(kw_cmd_pattern, &a);
    if (rc) {
        first_error(log, mark, why, sizeof why);
    } else {
        a.n = 0;
        arg(&a, "encode");
        arg(&a, "--phantom");
        arg(&a, "%s", g->phantom);
        arg(&a, "--matrix");
        arg(&a, "%dx%d", g->matrix, g->matrix);
        arg(&a, "--fov");
        arg(&a, "%.17gmm", g->fov_mm);
        arg(&a, "--coils");
        arg(&a, "%d", g->coils);
        if (!isnan(g->snr)) {
            arg(&a, "--snr");
            arg(&a, "%.17g", g->snr);
            arg(&a, "--seed");
            arg(&a, "%ld", kw_sweep_noise_seed(g));
        }
        arg(&a, nc ? "--trajectory" : "--pattern");
        arg(&a, "%s", f_mask);
        arg(&a, "--out");
        arg(&a, "%s", f_ks);
        arg(&a, "--truth");
        arg(&a, "%s", f_truth);
        arg(&a, "--sens-out");
        arg(&a, "%s", f_sens);
        arg(&a, "--quiet");
        mark = log_mark();
        rc = run_verb(kw_cmd_encode, &a);
        if (rc)
            first_error(log, mark, why, sizeof why);
        else if (!nc && clear_sidecar_accel(dir))
            snprintf(why, sizeof why, "cannot rewrite the sidecar of the k-space");
    }
    double t_data = now_s() - t0;
    double r_eff = NAN;
    if (!why[0]) {
        char pj[4200];
        snprintf(pj, sizeof pj, "%s/%s.json", dir, nc ? "traj" : "mask");
        cJSON *j = NULL;
        if (kw_json_read(pj, &j) == KW_OK)
            kw_json_get_number(j, "acceleration", &r_eff);
        cJSON_Delete(j);
    }
    kw_array truth = {0};
    if (!why[0] && kw_npy_read(f_truth, &truth))
        snprintf(why, sizeof why, "truth: %s", kw_last_error());

    for (int r = g->first_row; r < g->first_row + g->nrows; r++) {
        if (c->done[r])
            continue;
        const kw_sweep_row *R = &sw->rows[r];
        cJSON *o = row_json(sw, r);
        kw_json_add_number_or_null(o, "acceleration_effective", r_eff);
        double t1 = now_s();
        char rwhy[400];
        snprintf(rwhy, sizeof rwhy, "%s", why);
        kw_scores sc = {NAN, NAN, NAN};
        char f_img[4200];
        snprintf(f_img, sizeof f_img, "%s/img_%s.npy", dir, R->id);
        if (!rwhy[0]) {
            a.n = 0;
            arg(&a, "recon");
            arg(&a, "--in");
            arg(&a, "%s", f_ks);
            arg(&a, "--out");
            arg(&a, "%s", f_img);
            arg(&a, "--method");
            arg(&a, "%s", R->m.name);
            /* images in the truth's intensity scale: the simulator's maps
             * (sidecar) with the optimal combination (docs/cartesian.md) */
            const char *comb = R->m.combine[0] ? R->m.combine : "optimal";
            if (!strcmp(R->m.name, "fft") || !strcmp(R->m.name, "grappa") ||
                !strcmp(R->m.name, "homodyne") || !strcmp(R->m.name, "pocs") ||
                R->m.combine[0]) {
                arg(&a, "--combine");
                arg(&a, "%s", comb);
            }
            if (!isnan(R->m.lambda)) {
                arg(&a, "--lambda");
                arg(&a, "%.17g", R->m.lambda);
            }
            if (R->m.iterations > 0) {
                arg(&a, "--iterations");
                arg(&a, "%ld", R->m.iterations);
            }
            arg(&a, "--quiet");
            mark = log_mark();
            if (run_verb(kw_cmd_recon, &a)) {
                first_error(log, mark, rwhy, sizeof rwhy);
            } else {
                kw_array img = {0};
                if (kw_npy_read(f_img, &img) || kw_metrics_compute(&truth, &img, &sc)) {
                    snprintf(rwhy, sizeof rwhy, "score: %s", kw_last_error());
                } else if (c->pictures) {
                    char pic[4200];
                    snprintf(pic, sizeof pic, "%s/pictures/%s.png", c->out, R->id);
                    kw_png_opts po;
                    kw_png_opts_default(&po);
                    char title[200]; /* the run in words, and its ID */
                    snprintf(title, sizeof title, "%s, %s R %d, seed %ld (%s)", R->m.name,
                             g->pat.kind, g->accel, g->seed, R->id);
                    kw_figure_opts fo;
                    kw_figure_opts_default(&fo);
                    fo.title = title;
                    fo.units = "image units";
                    fo.tile_label = img.ndim >= 3 ? "slice" : NULL;
                    if (kw_figure_write(pic, &img, &po, &fo))
                        snprintf(rwhy, sizeof rwhy, "picture: %s", kw_last_error());
                }
                kw_array_free(&img);
                if (!c->keep)
                    unlink(f_img);
            }
        }
        double t_row = t_data + (now_s() - t1);
        cJSON_AddStringToObject(o, "status", rwhy[0] ? rwhy : "ok");
        kw_json_add_scores(o, sc.nrmse, sc.psnr_db, sc.ssim);
        cJSON_AddNumberToObject(o, "run_time_s", round(t_row * 1000) / 1000);
        cJSON_AddStringToObject(o, "host", c->host);
        char *txt = cJSON_PrintUnformatted(o);
        cJSON_Delete(o);
        if (!txt)
            _exit(1);
        fprintf(out, "%s\n", txt);
        free(txt);
    }
    kw_array_free(&truth);
    _exit(fclose(out) == 0 ? 0 : 1);
}

long kw_sweep_group_start(const kw_sweep_ctx *c, int g)
{
    char dir[4096];
    scratch_dir(c, g, dir, sizeof dir);
    rm_tree(dir);
    if (mkdir(dir, 0755) != 0)
        return -1;
    fflush(stdout);
    fflush(stderr);
    pid_t pid = fork();
    if (pid == 0)
        child_main(c, g, dir);
    return (long)pid;
}

char *kw_sweep_group_collect(const kw_sweep_ctx *c, int g, int wait_status)
{
    char dir[4096], res[4200];
    scratch_dir(c, g, dir, sizeof dir);
    snprintf(res, sizeof res, "%s/rows.jsonl", dir);
    char *text = NULL;
    if (WIFEXITED(wait_status) && WEXITSTATUS(wait_status) == 0) {
        FILE *f = fopen(res, "rb");
        if (f) {
            fseek(f, 0, SEEK_END);
            long n = ftell(f);
            fseek(f, 0, SEEK_SET);
            text = n >= 0 ? malloc((size_t)n + 1) : NULL;
            if (text) {
                size_t got = fread(text, 1, (size_t)n, f);
                text[got] = 0;
            }
            fclose(f);
        }
    }
    if (!c->keep)
        rm_tree(dir);
    return text;
}
