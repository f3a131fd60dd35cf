/* html_report.c: report.html of `kweave demo` and `kweave sweep` (see
 * html_report.h). Every text read from a file is HTML-escaped; pictures are
 * found by listing the folder (known names first, in the order of the caption
 * table, then the others by name in the C locale), so that a step that writes
 * another picture needs no change here. */
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <cJSON.h>

#include "html_report.h"
#include "jsonio.h"
#include "outfile.h"
#include "sweep.h"

/* ---- page pieces ---------------------------------------------------------- */

static void esc(FILE *f, const char *s)
{
    for (; s && *s; s++) {
        switch (*s) {
        case '&': fputs("&amp;", f); break;
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '"': fputs("&quot;", f); break;
        case '\'': fputs("&#39;", f); break;
        default: fputc(*s, f);
        }
    }
}

static const char css[] =
    "body{font-family:sans-serif;max-width:64em;margin:1em auto;padding:0 1em;"
    "color:#222;background:#fff;line-height:1.45}\n"
    "h1{font-size:1.5em}h2{font-size:1.2em;margin-top:1.6em;border-bottom:1px solid #ccc}\n"
    "table{border-collapse:collapse;margin:0.5em 0 1em}\n"
    "th,td{border:1px solid #bbb;padding:0.15em 0.6em;text-align:left;vertical-align:top}\n"
    "thead th{background:#eee}tbody th{font-weight:normal;background:#f7f7f7}\n"
    "td.n{text-align:right;font-variant-numeric:tabular-nums}\n"
    ".fail{color:#a00}td.fail{min-width:18em}\n"
    "figure{margin:1.2em 0}\n"
    "img{max-width:100%;height:auto;border:1px solid #ccc;background:#000}\n"
    "img.x2{image-rendering:pixelated}\n"
    "figcaption{margin-top:0.3em;color:#333}\n"
    ".caution{border-left:4px solid #c60;background:#fff4e5;padding:0.5em 1em}\n";

static void page_head(FILE *f, const char *title)
{
    fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
          "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
          "img-src data:; style-src 'unsafe-inline'\">\n"
          "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>",
          f);
    esc(f, title);
    fprintf(f, "</title>\n<style>\n%s</style>\n</head>\n<body>\n<h1>", css);
    esc(f, title);
    fputs("</h1>\n", f);
}

static void page_foot(FILE *f)
{
    fprintf(f, "<p>Written by kweave %s.</p>\n</body>\n</html>\n", KW_VERSION_STRING);
}

static void caution(FILE *f)
{
    fputs("<p class=\"caution\">", f);
    esc(f, kw_safety_caution());
    fputs("</p>\n", f);
}

static const char b64[] = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";

/* One figure: `rel` (relative to `dir`) as a base64 PNG, then its caption. */
static kw_status figure(FILE *f, const char *dir, const char *rel, const char *caption)
{
    char p[4200];
    snprintf(p, sizeof p, "%s/%s", dir, rel);
    FILE *in = fopen(p, "rb");
    KW_FAIL_IF(!in, KW_EIO, "%s: cannot read the picture", p);
    unsigned char b[3 * 1024];
    size_t n = fread(b, 1, sizeof b, in);
    fputs("<figure>\n<img alt=\"", f);
    esc(f, rel);
    /* A small picture (the PNG's IHDR: width and height at bytes 16..23) is
     * shown at twice its size, pixels kept sharp. */
    unsigned long w = 0, h = 0;
    if (n >= 24 && memcmp(b + 12, "IHDR", 4) == 0)
        for (int i = 0; i < 4; i++) {
            w = w << 8 | b[16 + i];
            h = h << 8 | b[20 + i];
        }
    if (w > 0 && h > 0 && w <= 320 && h <= 320)
        fprintf(f, "\" class=\"x2\" width=\"%lu\" height=\"%lu", 2 * w, 2 * h);
    fputs("\" src=\"data:image/png;base64,", f);
    for (; n > 0; n = fread(b, 1, sizeof b, in)) {
        for (size_t i = 0; i < n; i += 3) {
            unsigned v = (unsigned)b[i] << 16 | (i + 1 < n ? (unsigned)b[i + 1] << 8 : 0) |
                         (i + 2 < n ? b[i + 2] : 0);
            fputc(b64[v >> 18 & 63], f);
            fputc(b64[v >> 12 & 63], f);
            fputc(i + 1 < n ? b64[v >> 6 & 63] : '=', f);
            fputc(i + 2 < n ? b64[v & 63] : '=', f);
        }
        if (n < sizeof b)
            break;
    }
    int bad = ferror(in);
    fclose(in);
    KW_FAIL_IF(bad, KW_EIO, "%s: cannot read the picture", p);
    fputs("\">\n<figcaption><b>", f);
    esc(f, rel);
    fputs("</b>: ", f);
    esc(f, caption);
    fputs("</figcaption>\n</figure>\n", f);
    return KW_OK;
}

typedef struct caption {
    const char *name, *text;
} caption;

static int by_name(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

/* Every DIR/ *.png: those of `known` first in its order, then the others by
 * name, each with its caption (a generic one for names not in `known`). */
static kw_status figures(FILE *f, const char *dir, const caption *known, const char *generic)
{
    DIR *d = opendir(dir);
    KW_FAIL_IF(!d, KW_EIO, "%s: cannot list the folder", dir);
    char **names = NULL;
    size_t nn = 0, cap = 0;
    kw_status st = KW_OK;
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        size_t len = strlen(e->d_name);
        if (len < 5 || strcmp(e->d_name + len - 4, ".png") != 0 || e->d_name[0] == '.')
            continue;
        char p[4200];
        struct stat sb;
        snprintf(p, sizeof p, "%s/%s", dir, e->d_name);
        if (stat(p, &sb) != 0 || !S_ISREG(sb.st_mode))
            continue;
        if (nn == cap) {
            char **t = realloc(names, (cap = cap ? 2 * cap : 16) * sizeof *t);
            if (!t) {
                st = kw_set_error(KW_ENOMEM, "report: out of memory");
                break;
            }
            names = t;
        }
        if (!(names[nn] = strdup(e->d_name))) {
            st = kw_set_error(KW_ENOMEM, "report: out of memory");
            break;
        }
        nn++;
    }
    closedir(d);
    if (nn)
        qsort(names, nn, sizeof *names, by_name);
    for (int k = 0; known[k].name && !st; k++)
        for (size_t i = 0; i < nn && !st; i++)
            if (names[i] && strcmp(names[i], known[k].name) == 0) {
                st = figure(f, dir, names[i], known[k].text);
                free(names[i]);
                names[i] = NULL;
            }
    for (size_t i = 0; i < nn && !st; i++)
        if (names[i])
            st = figure(f, dir, names[i], generic);
    for (size_t i = 0; i < nn; i++)
        free(names[i]);
    free(names);
    return st;
}

/* ---- tables of JSON values -------------------------------------------------- */

/* A number as text: `prec` >= 0 decimals, or -prec significant digits. */
static void numtxt(char *b, size_t n, double v, int prec)
{
    if (prec >= 0)
        snprintf(b, n, "%.*f", prec, v);
    else
        snprintf(b, n, "%.*g", -prec, v);
}

/* One row "label | value unit" from o[key]: numbers times `scale`, arrays
 * of numbers joined by " x ", strings and booleans as they are, a missing
 * value as a dash. */
static void row(FILE *f, const char *label, const cJSON *o, const char *key, double scale,
                int prec, const char *unit)
{
    const cJSON *v = o ? cJSON_GetObjectItemCaseSensitive(o, key) : NULL;
    fputs("<tr><th>", f);
    esc(f, label);
    fputs("</th><td>", f);
    char b[64];
    if (cJSON_IsNumber(v) || (cJSON_IsArray(v) && cJSON_GetArraySize(v) > 0)) {
        const cJSON *x = cJSON_IsArray(v) ? v->child : v;
        for (int first = 1; x; x = cJSON_IsArray(v) ? x->next : NULL, first = 0) {
            if (!first)
                fputs(" &times; ", f);
            if (cJSON_IsNumber(x)) {
                numtxt(b, sizeof b, x->valuedouble * scale, prec);
                esc(f, b);
            } else {
                fputs("&mdash;", f);
            }
        }
        if (unit) {
            fputc(' ', f);
            esc(f, unit);
        }
    } else if (cJSON_IsString(v)) {
        esc(f, v->valuestring);
    } else if (cJSON_IsBool(v)) {
        fputs(cJSON_IsTrue(v) ? "yes" : "no", f);
    } else {
        fputs("&mdash;", f);
    }
    fputs("</td></tr>\n", f);
}

static void td_num(FILE *f, double v, int prec)
{
    char b[64];
    numtxt(b, sizeof b, v, prec);
    fputs("<td class=\"n\">", f);
    esc(f, b);
    fputs("</td>", f);
}

/* A number of a plan limit in the unit a reader expects. */
static const char *limit_unit(const char *si, double *scale, int *prec)
{
    *scale = 1;
    *prec = 3;
    if (!si)
        return "";
    if (strcmp(si, "T/m") == 0)
        return *scale = 1e3, "mT/m";
    if (strcmp(si, "s") == 0)
        return *scale = 1e3, "ms";
    if (strcmp(si, "T/m/s") == 0)
        return *prec = 1, "T/m/s";
    return si;
}

static void plan_tables(FILE *f, const cJSON *p)
{
    fputs("<table>\n<tbody>\n", f);
    row(f, "Sequence", p, "sequence", 1, 0, NULL);
    row(f, "Field strength", p, "b0_t", 1, -4, "T");
    row(f, "Larmor frequency", p, "larmor_hz", 1e-6, 4, "MHz");
    row(f, "Field of view", p, "fov_m", 1e3, -6, "mm");
    row(f, "Matrix", p, "matrix", 1, 0, NULL);
    row(f, "Pixel size", p, "pixel_size_m", 1e3, 4, "mm");
    row(f, "Slice thickness", p, "slice_m", 1e3, 3, "mm");
    row(f, "Bandwidth per pixel", p, "bandwidth_per_pixel_hz", 1, 2, "Hz");
    row(f, "Receive bandwidth", p, "bandwidth_hz", 1e-3, 3, "kHz");
    row(f, "Dwell time", p, "dwell_s", 1e6, 4, "\xc2\xb5s");
    row(f, "Readout duration", p, "readout_duration_s", 1e3, 4, "ms");
    row(f, "Readout gradient", p, "readout_gradient_T_per_m", 1e3, 4, "mT/m");
    row(f, "Slice-select gradient", p, "slice_select_gradient_T_per_m", 1e3, 4, "mT/m");
    row(f, "Gradient limit (amplitude)", p, "gmax_T_per_m", 1e3, 1, "mT/m");
    row(f, "Gradient limit (slew rate)", p, "slew_T_per_m_per_s", 1, 1, "T/m/s");
    row(f, "Echo time TE", p, "te_s", 1e3, 4, "ms");
    row(f, "Shortest TE", p, "min_te_s", 1e3, 4, "ms");
    row(f, "Repetition time TR", p, "tr_s", 1e3, 4, "ms");
    row(f, "Shortest TR", p, "min_tr_s", 1e3, 4, "ms");
    row(f, "Scan time per slice", p, "scan_time_s", 1, 3, "s");
    row(f, "Fat-water shift", p, "chemical_shift_pixels", 1, 3, "pixels along the readout");
    row(f, "Feasible on this system", p, "feasible", 1, 0, NULL);
    fputs("</tbody>\n</table>\n", f);

    const cJSON *lim = cJSON_GetObjectItemCaseSensitive(p, "limits"), *x;
    if (cJSON_IsArray(lim) && lim->child) {
        fputs("<p>Each limit: what the protocol needs, what the system has, the margin.</p>\n"
              "<table>\n<thead><tr><th>constraint</th><th>required</th><th>available</th>"
              "<th>margin</th><th>unit</th><th>within</th></tr></thead>\n<tbody>\n", f);
        cJSON_ArrayForEach(x, lim) {
            double scale, v;
            int prec;
            const char *u = limit_unit(
                cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(x, "unit")), &scale, &prec);
            fputs("<tr><td>", f);
            esc(f, cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(x, "name")));
            fputs("</td>", f);
            static const char *const k[] = {"required", "available", "margin"};
            for (int i = 0; i < 3; i++) {
                if (kw_json_get_number(x, k[i], &v) == KW_OK)
                    td_num(f, v * scale, prec);
                else
                    fputs("<td>&mdash;</td>", f);
            }
            fputs("<td>", f);
            esc(f, u);
            fprintf(f, "</td><td>%s</td></tr>\n",
                    cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(x, "ok")) ? "yes"
                                                                           : "<b class=\"fail\">no</b>");
        }
        fputs("</tbody>\n</table>\n", f);
    }
    const cJSON *lobes = cJSON_GetObjectItemCaseSensitive(p, "lobes");
    if (cJSON_IsObject(lobes) && lobes->child) {
        fputs("<p>Gradient lobes (trapezoids on the gradient raster).</p>\n<table>\n<thead><tr>"
              "<th>lobe</th><th>amplitude (mT/m)</th><th>ramp (\xc2\xb5s)</th>"
              "<th>flat top (\xc2\xb5s)</th><th>total (\xc2\xb5s)</th></tr></thead>\n<tbody>\n",
              f);
        cJSON_ArrayForEach(x, lobes) {
            fputs("<tr><td>", f);
            esc(f, x->string);
            fputs("</td>", f);
            static const char *const k[] = {"amplitude_T_per_m", "ramp_s", "flat_s", "duration_s"};
            for (int i = 0; i < 4; i++) {
                double v;
                if (kw_json_get_number(x, k[i], &v) == KW_OK)
                    td_num(f, v * (i ? 1e6 : 1e3), i ? 0 : 3);
                else
                    fputs("<td>&mdash;</td>", f);
            }
            fputs("</tr>\n", f);
        }
        fputs("</tbody>\n</table>\n", f);
    }
}

static void acquisition_tables(FILE *f, const cJSON *k)
{
    const cJSON *pr = cJSON_GetObjectItemCaseSensitive(k, "protocol"),
                *cm = cJSON_GetObjectItemCaseSensitive(k, "coil_model");
    fputs("<table>\n<tbody>\n", f);
    row(f, "Test object", k, "phantom", 1, 0, NULL);
    row(f, "Data shape (coils, rows, columns)", k, "shape", 1, 0, NULL);
    row(f, "Receive coils", cm, "kind", 1, 0, NULL);
    row(f, "Loops per ring", cm, "loops_per_ring", 1, 0, NULL);
    row(f, "Sequence", pr, "sequence", 1, 0, NULL);
    row(f, "Echo time TE", pr, "te_s", 1e3, 3, "ms");
    row(f, "Repetition time TR", pr, "tr_s", 1e3, 3, "ms");
    row(f, "Flip angle", pr, "flip_deg", 1, -6, "degrees");
    row(f, "Bandwidth per pixel", pr, "bandwidth_per_pixel_hz", 1, 2, "Hz");
    row(f, "Fat shift", pr, "fat_shift_pixels", 1, 3, "pixels");
    row(f, "SNR", k, "snr", 1, -6, NULL);
    row(f, "Noise standard deviation", k, "noise_sigma", 1, -4, NULL);
    row(f, "Noise seed", k, "seed", 1, 0, NULL);
    fputs("</tbody>\n</table>\n", f);
    const cJSON *ts = cJSON_GetObjectItemCaseSensitive(k, "tissues"), *t;
    if (cJSON_IsObject(ts) && ts->child) {
        fputs("<p>The tissues of the test object and their relaxation times at this field.</p>\n"
              "<table>\n<thead><tr><th>tissue</th><th>species</th><th>proton density</th>"
              "<th>T1 (ms)</th><th>T2 (ms)</th><th>T2* (ms)</th></tr></thead>\n<tbody>\n",
              f);
        cJSON_ArrayForEach(t, ts) {
            fputs("<tr><td>", f);
            esc(f, t->string);
            fputs("</td><td>", f);
            esc(f, cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(t, "species")));
            fputs("</td>", f);
            static const char *const key[] = {"pd", "t1_s", "t2_s", "t2star_s"};
            for (int i = 0; i < 4; i++) {
                double v;
                if (kw_json_get_number(t, key[i], &v) == KW_OK)
                    td_num(f, i ? v * 1e3 : v, i ? 0 : 2);
                else
                    fputs("<td>&mdash;</td>", f);
            }
            fputs("</tr>\n", f);
        }
        fputs("</tbody>\n</table>\n", f);
    }
}

static void recon_tables(FILE *f, const cJSON *r, const cJSON *s)
{
    const cJSON *sa = cJSON_GetObjectItemCaseSensitive(r, "sampling");
    fputs("<table>\n<tbody>\n", f);
    row(f, "Method", r, "method", 1, 0, NULL);
    row(f, "Coil combination", r, "combine", 1, 0, NULL);
    row(f, "Coil maps from", r, "sens_source", 1, 0, NULL);
    row(f, "Noise prewhitened", r, "prewhitened", 1, 0, NULL);
    row(f, "Acceleration", sa, "acceleration", 1, -6, NULL);
    row(f, "Sampled fraction of k-space", sa, "sampled_fraction", 1, -6, NULL);
    row(f, "Image shape", r, "image_shape", 1, 0, NULL);
    fputs("</tbody>\n</table>\n<p>Scores of the reconstruction against the truth "
          "(NRMSE: lower is better; PSNR and SSIM: higher is better).</p>\n"
          "<table>\n<tbody>\n", f);
    row(f, "NRMSE", s, "nrmse", 1, 4, NULL);
    row(f, "PSNR", s, "psnr_db", 1, 2, "dB");
    row(f, "SSIM", s, "ssim", 1, 4, NULL);
    fputs("</tbody>\n</table>\n", f);
}

static cJSON *load(const char *dir, const char *name)
{
    char p[4200];
    snprintf(p, sizeof p, "%s/%s", dir, name);
    cJSON *j = NULL;
    if (kw_json_read(p, &j) != KW_OK)
        j = NULL;
    return j;
}

/* ---- the demo ----------------------------------------------------------------- */

static const caption demo_captions[] = {
    {"truth.png",
     "the truth: the weave test object as the protocol weights it (magnitude of the "
     "noise-free image, drawn without the fat shift). The body is muscle; the vials, "
     "clockwise from the top: white matter, grey matter, CSF, liver, blood, and fat at the "
     "upper left; in the middle four groups of CSF-filled bars, 5.1, 3.6, 2.6 and 1.8 "
     "pixels wide."},
    {"kspace.png",
     "the simulated k-space of the receive coils (log magnitude, one tile per coil, k = 0 "
     "in the middle of each tile)."},
    {"coil_maps.png", "the sensitivity maps of the receive coils (magnitude, one tile per coil)."},
    {"recon.png",
     "the reconstruction: an FFT of each coil's k-space, combined with the optimal "
     "(sensitivity-weighted) coil weights (magnitude)."},
    {"difference.png",
     "the difference |recon| - |truth| (magnitude). Most of it is at the fat vial, displaced "
     "along the readout by the fat-water shift (the truth is drawn without it), then ringing "
     "at sharp edges and the noise."},
    {NULL, NULL},
};

kw_status kw_html_demo(const char *dir, const char *scenario, long seed)
{
    char p[4200];
    snprintf(p, sizeof p, "%s/report.html", dir);
    cJSON *plan = load(dir, "plan.json"), *ks = load(dir, "kspace.json"),
          *rec = load(dir, "recon.json"), *sc = load(dir, "score.json");
    kw_outfile o;
    kw_status st = kw_outfile_open(&o, p);
    if (!st) {
        FILE *f = o.fp;
        page_head(f, "kweave demo");
        fputs("<p>Scenario: ", f);
        esc(f, scenario);
        fprintf(f, "; noise seed %ld.</p>\n<p>Every step ran through the verbs a user would "
                   "call (plan, encode, recon, score, render); their files are beside this "
                   "page.</p>\n",
                seed);
        fputs("<h2>The protocol check (plan.json)</h2>\n", f);
        plan_tables(f, plan);
        caution(f);
        fputs("<h2>The simulated acquisition (kspace.json)</h2>\n", f);
        acquisition_tables(f, ks);
        caution(f);
        fputs("<h2>The reconstruction (recon.json, score.json)</h2>\n", f);
        recon_tables(f, rec, sc);
        fputs("<h2>The pictures</h2>\n", f);
        st = figures(f, dir, demo_captions, "a picture the demo wrote.");
        if (!st)
            page_foot(f);
        st = st ? (kw_outfile_abort(&o), st) : kw_outfile_commit(&o);
    }
    cJSON_Delete(plan);
    cJSON_Delete(ks);
    cJSON_Delete(rec);
    cJSON_Delete(sc);
    return st;
}

/* ---- the sweep ---------------------------------------------------------------- */

/* The parameters of a row; the first NGROUP make a group of rows (the mean
 * over seeds), then the seed. */
#define NGROUP 14
static const char *const sweep_params[] = {
    "phantom", "matrix", "fov_mm", "coils", "snr", "pattern", "acs", "power", "fraction",
    "acceleration", "method", "lambda", "iterations", "combine", "seed", NULL};

static void cell_text(char *b, size_t n, const cJSON *row_obj, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(row_obj, key);
    if (cJSON_IsNumber(v))
        kw_sweep_numtxt(b, n, v->valuedouble);
    else if (cJSON_IsString(v))
        snprintf(b, n, "%s", v->valuestring);
    else
        snprintf(b, n, "%s", "");
}

/* Does `key` take more than one value over the rows done? */
static int varies(const kw_sweep *sw, cJSON *const *rows, const char *key)
{
    char first[256], b[256];
    int have = 0;
    for (int r = 0; r < sw->nrows; r++) {
        if (!rows[r])
            continue;
        cell_text(have ? b : first, sizeof b, rows[r], key);
        if (have && strcmp(first, b) != 0)
            return 1;
        have = 1;
    }
    return 0;
}

static void td_text(FILE *f, const cJSON *row_obj, const char *key)
{
    char b[256];
    cell_text(b, sizeof b, row_obj, key);
    fputs("<td>", f);
    if (b[0])
        esc(f, b);
    else
        fputs("&mdash;", f);
    fputs("</td>", f);
}

static int row_ok(const cJSON *o)
{
    const char *s = cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(o, "status"));
    return s && strcmp(s, "ok") == 0;
}

static const char *const score_key[] = {"nrmse", "psnr_db", "ssim"};
static const int score_prec[] = {4, 2, 4};

/* A row's group: its varying parameters' cells joined (unit separator). */
typedef struct group_key {
    char *key;
    int row;
} group_key;

static int group_key_cmp(const void *pa, const void *pb)
{
    const group_key *a = pa, *b = pb;
    int c = strcmp(a->key, b->key);
    return c ? c : (a->row > b->row) - (a->row < b->row);
}

/* A group: where it starts in the sorted keys, and its first row. */
typedef struct group_span {
    int start, row;
} group_span;

static int group_first_cmp(const void *pa, const void *pb)
{
    const group_span *a = pa, *b = pb;
    return (a->row > b->row) - (a->row < b->row);
}

static char *row_group_key(const cJSON *row_obj, const int *vary)
{
    size_t len = 1;
    char b[256];
    for (int k = 0; k < NGROUP; k++)
        if (vary[k]) {
            cell_text(b, sizeof b, row_obj, sweep_params[k]);
            len += strlen(b) + 1;
        }
    char *key = kw_alloc(len), *p = key;
    for (int k = 0; key && k < NGROUP; k++)
        if (vary[k]) {
            cell_text(b, sizeof b, row_obj, sweep_params[k]);
            size_t n = strlen(b);
            memcpy(p, b, n);
            p[n] = '\x1f';
            p += n + 1;
        }
    if (key)
        *p = '\0';
    return key;
}

/* One group's row of the table: its parameters, how many rows are ok, the
 * mean scores of those. rows[idx[0..n)] make the group. */
static void group_row(FILE *f, cJSON *const *rows, const group_key *idx, int n, const int *vary)
{
    double sum[3] = {0, 0, 0};
    int nok = 0;
    for (int i = 0; i < n; i++) {
        const cJSON *o = rows[idx[i].row];
        double v[3];
        int good = row_ok(o);
        for (int m = 0; m < 3 && good; m++)
            good = kw_json_get_number(o, score_key[m], &v[m]) == KW_OK;
        if (good) {
            for (int m = 0; m < 3; m++)
                sum[m] += v[m];
            nok++;
        }
    }
    fputs("<tr>", f);
    for (int k = 0; k < NGROUP; k++)
        if (vary[k])
            td_text(f, rows[idx[0].row], sweep_params[k]);
    fprintf(f, "<td class=\"n\">%d of %d</td>", nok, n);
    for (int m = 0; m < 3; m++)
        if (nok)
            td_num(f, sum[m] / nok, score_prec[m]);
        else
            fputs("<td>&mdash;</td>", f);
    fputs("</tr>\n", f);
}

/* Mean scores over the seeds of each group of rows that share every varying
 * parameter, groups in the order of the spec (of their first row). Rows are
 * grouped by sorting their keys: n log n for sweeps of many rows. */
static kw_status sweep_means(FILE *f, const kw_sweep *sw, cJSON *const *rows, const int *vary)
{
    int n = 0;
    group_key *g = kw_alloc_n((size_t)sw->nrows + 1, sizeof *g);
    group_span *first = kw_alloc_n((size_t)sw->nrows + 1, sizeof *first);
    kw_status st = g && first ? KW_OK : kw_set_error(KW_ENOMEM, "report: out of memory");
    for (int r = 0; !st && r < sw->nrows; r++)
        if (rows[r]) {
            g[n].row = r;
            if (!(g[n++].key = row_group_key(rows[r], vary)))
                st = kw_set_error(KW_ENOMEM, "report: out of memory");
        }
    if (!st) {
        qsort(g, (size_t)n, sizeof *g, group_key_cmp);
        int ng = 0; /* the groups, then in the order of their first rows */
        for (int i = 0; i < n; i++)
            if (i == 0 || strcmp(g[i].key, g[i - 1].key) != 0)
                first[ng++] = (group_span){i, g[i].row};
        qsort(first, (size_t)ng, sizeof *first, group_first_cmp);
        fputs("<h2>Mean scores over seeds</h2>\n<table>\n<thead><tr>", f);
        for (int k = 0; k < NGROUP; k++)
            if (vary[k])
                fprintf(f, "<th>%s</th>", sweep_params[k]);
        fputs("<th>rows ok</th><th>NRMSE</th><th>PSNR (dB)</th><th>SSIM</th></tr></thead>\n"
              "<tbody>\n", f);
        for (int i = 0; i < ng; i++) {
            const group_key *at = g + first[i].start;
            int m = 1;
            while (first[i].start + m < n && strcmp(at[m].key, at[0].key) == 0)
                m++;
            group_row(f, rows, at, m, vary);
        }
        fputs("</tbody>\n</table>\n", f);
    }
    for (int i = 0; g && i < n; i++)
        kw_free(g[i].key);
    kw_free(g);
    kw_free(first);
    return st;
}

static void sweep_rows(FILE *f, const kw_sweep *sw, cJSON *const *rows, const int *vary)
{
    fputs("<h2>Every experiment</h2>\n<table>\n<thead><tr><th>id</th>", f);
    for (int k = 0; sweep_params[k]; k++)
        if (vary[k])
            fprintf(f, "<th>%s</th>", sweep_params[k]);
    fputs("<th>effective acceleration</th><th>status</th><th>NRMSE</th><th>PSNR (dB)</th>"
          "<th>SSIM</th></tr></thead>\n<tbody>\n", f);
    for (int r = 0; r < sw->nrows; r++) {
        if (!rows[r])
            continue;
        fputs("<tr>", f);
        td_text(f, rows[r], "id");
        for (int k = 0; sweep_params[k]; k++)
            if (vary[k])
                td_text(f, rows[r], sweep_params[k]);
        double v;
        if (kw_json_get_number(rows[r], "acceleration_effective", &v) == KW_OK)
            td_num(f, v, 3);
        else
            fputs("<td>&mdash;</td>", f);
        int ok = row_ok(rows[r]);
        fputs(ok ? "<td>" : "<td class=\"fail\">", f);
        esc(f, cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(rows[r], "status")));
        fputs("</td>", f);
        for (int m = 0; m < 3; m++)
            if (ok && kw_json_get_number(rows[r], score_key[m], &v) == KW_OK)
                td_num(f, v, score_prec[m]);
            else
                fputs("<td>&mdash;</td>", f);
        fputs("</tr>\n", f);
    }
    fputs("</tbody>\n</table>\n", f);
}

static const caption sweep_captions[] = {
    {"summary_nrmse.png",
     "NRMSE against the acceleration, one panel per pattern, one line per reconstruction "
     "(line: mean over seeds; bar: smallest to largest value). Lower is better."},
    {"summary_psnr_db.png",
     "PSNR in dB against the acceleration, one panel per pattern, one line per "
     "reconstruction (line: mean over seeds; bar: smallest to largest). Higher is better."},
    {"summary_ssim.png",
     "SSIM against the acceleration, one panel per pattern, one line per reconstruction "
     "(line: mean over seeds; bar: smallest to largest). Higher is better."},
    {NULL, NULL},
};

/* DIR/pictures/ID.png of each row done, with the row's varying parameters. */
static kw_status sweep_pictures(FILE *f, const kw_sweep *sw, cJSON *const *rows, const char *dir,
                                const int *vary)
{
    int any = 0;
    kw_status st = KW_OK;
    for (int r = 0; r < sw->nrows && !st; r++) {
        char rel[64], p[4200], cap[1024], b[256];
        snprintf(rel, sizeof rel, "pictures/%s.png", sw->rows[r].id);
        snprintf(p, sizeof p, "%s/%s", dir, rel);
        struct stat sb;
        if (!rows[r] || stat(p, &sb) != 0 || !S_ISREG(sb.st_mode))
            continue;
        if (!any)
            fputs("<h2>The reconstructions (magnitude)</h2>\n", f);
        any = 1;
        size_t n = (size_t)snprintf(cap, sizeof cap, "the reconstruction of experiment %s",
                                    sw->rows[r].id);
        const char *sep = ": ";
        for (int k = 0; sweep_params[k]; k++) {
            if (!vary[k])
                continue;
            cell_text(b, sizeof b, rows[r], sweep_params[k]);
            if (n < sizeof cap)
                n += (size_t)snprintf(cap + n, sizeof cap - n, "%s%s %s", sep, sweep_params[k],
                                      b[0] ? b : "none");
            sep = ", ";
        }
        if (n < sizeof cap)
            snprintf(cap + n, sizeof cap - n, ".");
        st = figure(f, dir, rel, cap);
    }
    return st;
}

kw_status kw_html_sweep(const kw_sweep *sw, cJSON *const *rows, const char *dir)
{
    int vary[sizeof sweep_params / sizeof *sweep_params];
    int ndone = 0, nok = 0;
    for (int r = 0; r < sw->nrows; r++)
        if (rows[r]) {
            ndone++;
            nok += row_ok(rows[r]);
        }
    for (int k = 0; sweep_params[k]; k++)
        vary[k] = varies(sw, rows, sweep_params[k]);

    char p[4200];
    snprintf(p, sizeof p, "%s/report.html", dir);
    kw_outfile o;
    kw_status st = kw_outfile_open(&o, p);
    if (st)
        return st;
    FILE *f = o.fp;
    page_head(f, "kweave sweep");
    fprintf(f, "<p>%d experiments in the spec, %d done, %d of them with scores (status ok). "
               "Scores against the simulator's truth: NRMSE (lower is better), PSNR and SSIM "
               "(higher is better). The same numbers, unrounded, are in results.csv and "
               "results.json. A dash: a parameter left at the method's default, or no "
               "score.</p>\n",
            sw->nrows, ndone, nok);
    fputs("<h2>Shared by every experiment</h2>\n<table>\n<tbody>\n", f);
    const cJSON *first = NULL;
    for (int r = 0; r < sw->nrows && !first; r++)
        first = rows[r];
    for (int k = 0; sweep_params[k] && first; k++) {
        if (vary[k])
            continue;
        fprintf(f, "<tr><th>%s</th>", sweep_params[k]);
        td_text(f, first, sweep_params[k]);
        fputs("</tr>\n", f);
    }
    fputs("</tbody>\n</table>\n", f);
    st = sweep_means(f, sw, rows, vary);
    if (!st) {
        sweep_rows(f, sw, rows, vary);
        fputs("<h2>Summary plots</h2>\n", f);
        st = figures(f, dir, sweep_captions, "a plot the sweep wrote.");
    }
    if (!st)
        st = sweep_pictures(f, sw, rows, dir, vary);
    if (st) {
        kw_outfile_abort(&o);
        return st;
    }
    page_foot(f);
    return kw_outfile_commit(&o);
}
