/* cmd_pattern.c: `kweave pattern`: make Cartesian masks and trajectories
 * (libencode/kw_pattern.h), analyse them (recon/kw_pattern_analysis.h),
 * compare several side by side. This file parses the options, writes the
 * files (.npy, sidecar JSON, times) and reports; reading a pattern file is
 * in cli/pattern_read.c, the reports in cli/pattern_report.c.
 * Documentation: docs/patterns.md. */
#define _POSIX_C_SOURCE 200809L
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "defaults.h"
#include "jsonio.h"
#include "kw_pattern.h"
#include "kw_waveform.h"
#include "npy.h"
#include "outfile.h"
#include "pattern_cli.h"
#include "pattern_json.h"

#define MAX_COMPARE 8

static const char *USAGE =
    "usage: kweave pattern --kind KIND --matrix NXxNY[xNZ] [options] [--out F.npy]\n"
    "       kweave pattern --analyse F.npy [--json F] [--psf F.png]\n"
    "       kweave pattern --compare A.npy B.npy ... [--png F.png] [--json F]\n"
    "Kinds: full uniform random poisson lattice partial (Cartesian masks);\n"
    "       radial golden stack-of-stars (radial trajectories); spiral epi.\n"
    "A 2-D matrix gives a mask of shape (ny, nx) sampled along whole readout\n"
    "rows; a 3-D matrix gives a ky-kz mask of shape (nz, ny). Trajectories are\n"
    "(samples, ndim) in cycles/FOV with sample times in F_times.npy.";

typedef struct gen_opts {
    const char *kind, *matrix, *accel, *acs, *out, *png, *json, *psf, *analyse, *density;
    const char *times, *waveform;
    const char *fraction, *power, *dwell, *te, *fov, *gmax, *slew, *raster;
    const char *shift, *spokes, *seed, *tiny, *interleaves, *shots, *ros;
    long psf_size;
    int ellipse, compare;
    int seen_ros, seen_fov, seen_gmax, seen_slew, seen_raster, seen_interleaves, seen_shots;
    int seen_fraction, seen_power, seen_shift, seen_spokes, seen_seed, seen_tiny, seen_te,
        seen_dwell, seen_accel, seen_acs;
    kw_pattern_input *in; /* the options that make a pattern (kw_pattern.h) */
} gen_opts;

/* How the library's messages name our options. */
static const kw_param_spelling SPELLING = {"--", '-', " ", NULL};

/* The text report: stdout, or nowhere when --json - puts the JSON there (one
 * report on stdout). */
static FILE *txt;

/* A failed library call: blame the option of the parameter at fault
 * (kw_pattern_create() names its fields, the input its keys: our options),
 * or report it under `context`. */
static int pattern_fail(kw_status st, const char *context)
{
    const char *key = kw_pattern_input_key_of(kw_last_error_param());
    if (key)
        return kw_cli_fail(key, "%s", kw_last_error_reason());
    return kw_cli_status(st, context);
}

/* A refused option: the input names it by our option's name. */
static int input_fail(void)
{
    return kw_cli_fail(kw_last_error_param(), "%s", kw_last_error_reason());
}

static char *times_path(const char *out)
{
    size_t n = strlen(out);
    const char *slash = strrchr(out, '/');
    const char *dot = strrchr(out, '.');
    size_t stem = (dot && (!slash || dot > slash)) ? (size_t)(dot - out) : n;
    char *s = malloc(stem + 12);
    if (!s)
        return NULL;
    memcpy(s, out, stem);
    memcpy(s + stem, "_times.npy", 11);
    return s;
}

static const char *base_name(const char *p)
{
    const char *s = strrchr(p, '/');
    return s ? s + 1 : p;
}

/* ---- reports after generation ----------------------------------------------------------- */

/* After writing the pattern: print the analysis, write --json / --psf / --png. */
static int report_generated(const gen_opts *g, kw_pattern_report *a)
{
    kw_pattern_cli_text(txt, a);
    int rc;
    if (g->json) {
        cJSON *j = kw_pattern_cli_json(a);
        kw_status st = kw_json_write(g->json, j);
        cJSON_Delete(j);
        if (st)
            return kw_cli_status(st, "json");
    }
    if (g->psf && (rc = kw_pattern_cli_psf_png(g->psf, a)) >= 0)
        return rc;
    if (g->png) {
        kw_status st = kw_pattern_cli_gray_png(g->png, a->r.picture, a->r.pic_h, a->r.pic_w);
        if (st)
            return kw_cli_status(st, "png");
    }
    return KW_EXIT_OK;
}

static void report_names(const gen_opts *g, kw_pattern_report *a)
{
    memset(a, 0, sizeof *a);
    snprintf(a->name, sizeof a->name, "%s", g->out ? base_name(g->out) : g->kind);
    snprintf(a->kind, sizeof a->kind, "%s", g->kind);
}

/* ---- masks ------------------------------------------------------------------------------ */

/* The sidecar (the library's, pattern_json.h; a mask names no file). */
static int mask_sidecar(const kw_pattern *p, const char *sp)
{
    cJSON *j = kw_pattern_json_build(p, NULL, NULL);
    kw_status st = j ? kw_json_write(sp, j) : kw_set_error(KW_ENOMEM, "out of memory");
    cJSON_Delete(j);
    return st ? kw_cli_status(st, "sidecar") : -1;
}

static int mask_files(const gen_opts *g, const kw_pattern *p)
{
    const kw_pattern_info *in = kw_pattern_info_of(p);
    int rc = -1;
    if (g->out) {
        kw_array arr = {.dtype = KW_U8, .ndim = 2, .dims = {in->shape[0], in->shape[1]},
                        .data = (void *)kw_pattern_mask(p)};
        kw_status st = kw_npy_write(g->out, &arr);
        if (st)
            return kw_cli_status(st, "out");
    }
    if (g->density) {
        kw_array pa = {.dtype = KW_F32, .ndim = 2,
                       .dims = {in->density_shape[0], in->density_shape[1]},
                       .data = (void *)kw_pattern_density(p)};
        kw_status st = kw_npy_write(g->density, &pa);
        if (st)
            return kw_cli_status(st, "density");
    }
    char *sp = g->out ? kw_sidecar_path(g->out) : NULL;
    if (sp)
        rc = mask_sidecar(p, sp);
    free(sp);
    return rc;
}

static int gen_mask(const gen_opts *g, kw_pattern_options *o)
{
    int rc;
    kw_pattern *p;
    kw_status st = kw_pattern_create(&p, o);
    if (st)
        return pattern_fail(st, "pattern");
    rc = mask_files(g, p);
    if (rc < 0) {
        const kw_pattern_info *in = kw_pattern_info_of(p);
        const size_t n = in->shape[0] * in->shape[1];
        const uint8_t *m = kw_pattern_mask(p);
        float *w = kw_alloc_n(n, sizeof *w);
        kw_pattern_report a;
        report_names(g, &a);
        if (!w) {
            st = kw_set_error(KW_ENOMEM, "out of memory");
        } else {
            for (size_t i = 0; i < n; i++)
                w[i] = m[i];
            st = kw_pattern_analyse_mask(&a.r, w, in->shape[0], in->shape[1], in->plane);
        }
        rc = st ? kw_cli_status(st, "analyse") : report_generated(g, &a);
        kw_pattern_analysis_free(&a.r);
        kw_free(w);
    }
    kw_pattern_destroy(p);
    return rc;
}

/* ---- trajectories ----------------------------------------------------------------------- */

/* The slots of a trajectory's sidecar: the times file (its base name). */
static int traj_slot(cJSON *j, const char *slot, void *user)
{
    const char *tp = user;
    (void)slot; /* "times" and "times_end": the same key */
    cJSON_AddStringToObject(j, "times", tp ? base_name(tp) : "");
    return 1;
}

/* Write a trajectory, its sample times and its sidecar (the library's,
 * pattern_json.h, with the times file's name). -1 or an exit code; nothing
 * without --out. */
static int traj_write(const gen_opts *g, const kw_pattern *p)
{
    const kw_pattern_info *in = kw_pattern_info_of(p);
    if (!g->out)
        return -1;
    char *tp = g->times ? strdup(g->times) : times_path(g->out);
    kw_array k = {.dtype = KW_F32, .ndim = 2, .dims = {in->shape[0], in->shape[1]},
                  .data = (void *)kw_pattern_trajectory(p)};
    kw_array t = {.dtype = KW_F32, .ndim = 1, .dims = {in->shape[0]},
                  .data = (void *)kw_pattern_times(p)};
    kw_status st = kw_npy_write(g->out, &k);
    if (!st && tp)
        st = kw_npy_write(tp, &t);
    if (st) {
        free(tp);
        return kw_cli_status(st, "out");
    }
    int rc = -1;
    char *sp = kw_sidecar_path(g->out);
    if (sp) {
        cJSON *j = kw_pattern_json_build(p, traj_slot, tp);
        st = j ? kw_json_write(sp, j) : kw_set_error(KW_ENOMEM, "out of memory");
        cJSON_Delete(j);
        rc = st ? kw_cli_status(st, "sidecar") : -1;
    }
    free(sp);
    free(tp);
    return rc;
}

/* the lines a trajectory's report starts with */
static void traj_lines(const kw_pattern_options *o, const kw_pattern_info *in)
{
    if (o->kind == KW_PATTERN_SPIRAL) {
        fprintf(txt, "  spiral                  %d interleaves, %zu samples each, readout "
               "%.3f ms (design |G| %.2f mT/m, slew %.1f T/m/s)\n", in->interleaves,
               in->readout_samples, in->spiral_readout_s * 1e3, in->gmax_design * 1e3,
               in->slew_design);
    } else if (o->kind == KW_PATTERN_EPI) {
        fprintf(txt, "  EPI                     %d shot(s), %d lines each, echo spacing "
               "%.3f ms, train %.3f ms, k = 0 at %.3f ms\n", in->shots,
               in->lines_per_shot, in->echo_spacing_s * 1e3, in->train_s * 1e3,
               in->center_time_s * 1e3);
    } else {
        fprintf(txt, "  angle increment         %.6f deg (%s)\n", in->angle_increment_deg,
               in->tiny == 1 ? "golden angle 180/phi" : in->tiny > 1 ? "tiny golden angle"
                                                                    : "uniform");
        fprintf(txt, "  readout                 %zu samples (oversampling %d: %g cycle/FOV apart), "
               "ADC dwell %g us, %g us per pixel, duration %g ms, k = 0 at %g ms\n",
               in->readout_samples, in->oversampling, 1.0 / in->oversampling,
               in->dwell_s * 1e6, in->dwell_per_pixel_s * 1e6, in->readout_duration_s * 1e3,
               in->te_s * 1e3);
        return;
    }
    fprintf(txt, "  limits                  %.1f mT/m, %.1f T/m/s, raster %g us, dwell %g us\n",
           in->gmax * 1e3, in->slew, in->raster * 1e6, in->dwell_s * 1e6);
}

static int traj_report(const gen_opts *g, const kw_pattern_options *o, const kw_pattern *p)
{
    const kw_pattern_info *in = kw_pattern_info_of(p);
    const int radial = o->kind != KW_PATTERN_SPIRAL && o->kind != KW_PATTERN_EPI;
    kw_pattern_traj_desc d = {
        .n = o->dims[o->ndim - 1], .readout = in->readout_samples, .radial = radial,
        .weights = radial ? KW_PATTERN_WEIGHTS_RADIAL
                   : o->kind == KW_PATTERN_SPIRAL ? KW_PATTERN_WEIGHTS_PIPE
                                                  : KW_PATTERN_WEIGHTS_NONE,
        .oversampling = radial ? in->oversampling : 1,
        .psf_size = g->psf_size > 0 ? (size_t)g->psf_size : 0};
    kw_pattern_report a;
    report_names(g, &a);
    kw_status st = kw_pattern_analyse_trajectory(&a.r, kw_pattern_trajectory(p), in->shape[0],
                                                 (int)in->shape[1], &d, kw_cli_progress, NULL);
    kw_cli_progress_done();
    int rc;
    if (st) {
        rc = kw_cli_status(st, "analyse");
    } else {
        traj_lines(o, in);
        rc = report_generated(g, &a);
        fprintf(txt, "%s\n", KW_SAFETY_CAUTION);
    }
    kw_pattern_analysis_free(&a.r);
    return rc;
}

/* --waveform: shot 0 of an EPI train or interleaf 0 of a spiral as the
 * gradient waveform `kweave waveform` checks (kw_waveform_epi(),
 * kw_waveform_spiral()), float32 (samples, 2) T/m, with a sidecar of its
 * timing (a spiral's samples are held over a raster: "held" true). */
static int waveform_write(const gen_opts *g, const kw_pattern_options *o)
{
    size_t n = 0, na = 0;
    const int spiral = o->kind == KW_PATTERN_SPIRAL;
    kw_status st = spiral ? kw_waveform_spiral(o, 0, NULL, &n, NULL, &na) : kw_waveform_epi(o, 0, NULL, &n, NULL, &na);
    if (st)
        return pattern_fail(st, "waveform");
    double *gd = kw_alloc_n(2 * n, sizeof *gd);
    float *gf = kw_alloc_n(2 * n, sizeof *gf);
    kw_waveform_adc *adc = kw_alloc_n(na, sizeof *adc);
    char *sp = kw_sidecar_path(g->waveform);
    st = !gd || !gf || !adc || !sp ? kw_set_error(KW_ENOMEM, "out of memory")
         : spiral ? kw_waveform_spiral(o, 0, gd, &n, adc, &na) : kw_waveform_epi(o, 0, gd, &n, adc, &na);
    for (size_t i = 0; !st && i < 2 * n; i++)
        gf[i] = (float)gd[i];
    kw_array a = {.dtype = KW_F32, .ndim = 2, .dims = {n, 2}, .data = gf};
    if (!st)
        st = kw_npy_write(g->waveform, &a);
    if (!st) {
        cJSON *j = cJSON_CreateObject(), *arr = cJSON_AddArrayToObject(j, "adc");
        cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
        cJSON_AddStringToObject(j, "kind", "waveform");
        cJSON_AddStringToObject(j, "source", spiral ? "kweave pattern --kind spiral, interleaf 0"
                                                    : "kweave pattern --kind epi, shot 0");
        cJSON_AddBoolToObject(j, "held", spiral);
        cJSON_AddStringToObject(j, "units", "T/m");
        kw_json_add_number_or_null(j, "raster_s", o->raster);
        kw_json_add_number_or_null(j, "rf_centre_s", 0);
        for (size_t i = 0; arr && i < na; i++) {
            cJSON *w = cJSON_CreateObject();
            kw_json_add_number_or_null(w, "start_s", adc[i].start_s);
            kw_json_add_number_or_null(w, "samples", (double)adc[i].samples);
            kw_json_add_number_or_null(w, "dwell_s", adc[i].dwell_s);
            cJSON_AddItemToArray(arr, w);
        }
        cJSON_AddStringToObject(j, "safety_caution", KW_SAFETY_CAUTION);
        st = kw_json_write(sp, j);
        cJSON_Delete(j);
    }
    kw_free(gd);
    kw_free(gf);
    kw_free(adc);
    free(sp);
    return st ? kw_cli_status(st, "waveform") : -1;
}

static int gen_traj(const gen_opts *g, kw_pattern_options *o)
{
    int rc;
    const int grad = o->kind == KW_PATTERN_SPIRAL || o->kind == KW_PATTERN_EPI;
    kw_pattern *p;
    kw_status st = kw_pattern_create(&p, o);
    if (st)
        return pattern_fail(st, grad ? g->kind : "trajectory");
    rc = traj_write(g, p);
    if (rc < 0 && g->waveform)
        rc = waveform_write(g, o);
    if (rc < 0)
        rc = traj_report(g, o, p);
    kw_pattern_destroy(p);
    return rc;
}

/* ---- --analyse and --compare -------------------------------------------------------------- */

static int run_compare(const gen_opts *g, const char **files, int nfiles)
{
    if (g->kind || g->analyse)
        return kw_cli_fail("compare", "cannot be combined with --kind or --analyse");
    if (nfiles < 1)
        return kw_cli_fail("compare", "no files given");
    kw_pattern_report as[MAX_COMPARE];
    memset(as, 0, sizeof as);
    int n = 0, rc = -1;
    for (; n < nfiles; n++) {
        rc = kw_pattern_cli_analyse_file(files[n], &as[n], g->psf_size);
        if (rc >= 0)
            break;
    }
    if (rc < 0) {
        kw_pattern_cli_compare_table(txt, as, n);
        if (g->json) {
            cJSON *arr = cJSON_CreateArray();
            for (int i = 0; i < n; i++)
                cJSON_AddItemToArray(arr, kw_pattern_cli_json(&as[i]));
            kw_status st = kw_json_write(g->json, arr);
            cJSON_Delete(arr);
            if (st)
                rc = kw_cli_status(st, "json");
        }
        if (rc < 0 && g->png)
            rc = kw_pattern_cli_compare_png(g->png, as, n);
    }
    for (int i = 0; i <= n && i < MAX_COMPARE; i++)
        kw_pattern_analysis_free(&as[i].r);
    return rc < 0 ? KW_EXIT_OK : rc;
}

static int run_analyse(const gen_opts *g)
{
    if (g->kind)
        return kw_cli_fail("analyse", "cannot be combined with --kind");
    kw_pattern_report a;
    int rc = kw_pattern_cli_analyse_file(g->analyse, &a, g->psf_size);
    if (rc < 0) {
        kw_pattern_cli_text(txt, &a);
        if (g->json) {
            cJSON *j = kw_pattern_cli_json(&a);
            kw_status st = kw_json_write(g->json, j);
            cJSON_Delete(j);
            if (st)
                rc = kw_cli_status(st, "json");
        }
        if (rc < 0 && g->psf)
            rc = kw_pattern_cli_psf_png(g->psf, &a);
        if (rc < 0 && g->png) {
            kw_status st = kw_pattern_cli_gray_png(g->png, a.r.picture, a.r.pic_h, a.r.pic_w);
            if (st)
                rc = kw_cli_status(st, "png");
        }
    }
    kw_pattern_analysis_free(&a.r);
    return rc < 0 ? KW_EXIT_OK : rc;
}

/* The options through the library's input; then the mask or the trajectory */
static int run_generate(const gen_opts *g)
{
    if (!g->kind)
        return kw_cli_fail("kind", "missing (or give --analyse FILE or --compare FILES)");
    kw_pattern_options o;
    if (kw_pattern_input_finish(g->in, &SPELLING, &o))
        return input_fail();
    const int mask = kw_pattern_kind_is_mask(o.kind);
    if (!mask && g->density)
        return kw_cli_fail("density", "only for Cartesian masks");
    if (mask && g->times)
        return kw_cli_fail("times", "a Cartesian mask has no sample times");
    if (g->waveform && o.kind != KW_PATTERN_EPI && o.kind != KW_PATTERN_SPIRAL)
        return kw_cli_fail("waveform", "only --kind epi or spiral in this version");
    return mask ? gen_mask(g, &o) : gen_traj(g, &o);
}

/* The options of the table that are the input's keys, in its order. */
static int set_keys(gen_opts *g, const kw_opt *table)
{
    if (kw_pattern_input_create(&g->in))
        return kw_cli_status(KW_ENOMEM, "pattern");
    for (const kw_param_key *k = kw_pattern_input_keys(); k->name; k++) {
        const kw_opt *t = table;
        while (t->name && strcmp(t->name, k->name) != 0)
            t++;
        const char *text = t->type == KW_OPT_FLAG ? (*(int *)t->dest ? "1" : NULL)
                                                  : *(const char **)t->dest;
        if (text && kw_pattern_input_set(g->in, k->name, text))
            return input_fail();
    }
    return -1;
}

int kw_cmd_pattern(int argc, char **argv)
{
    gen_opts g;
    memset(&g, 0, sizeof g);
    const kw_opt table[] = {
        {"kind", KW_OPT_STRING, &g.kind, KW_UNIT_NONE, NULL, KW_OPT_KEY_HELP},
        {"matrix", KW_OPT_STRING, &g.matrix, KW_UNIT_NONE, NULL, KW_OPT_KEY_HELP},
        {"accel", KW_OPT_STRING, &g.accel, KW_UNIT_NONE, &g.seen_accel, KW_OPT_KEY_HELP},
        {"acs", KW_OPT_STRING, &g.acs, KW_UNIT_NONE, &g.seen_acs, KW_OPT_KEY_HELP},
        {"fraction", KW_OPT_STRING, &g.fraction, KW_UNIT_NONE, &g.seen_fraction, KW_OPT_KEY_HELP},
        {"ellipse", KW_OPT_FLAG, &g.ellipse, KW_UNIT_NONE, NULL, KW_OPT_KEY_HELP},
        {"power", KW_OPT_STRING, &g.power, KW_UNIT_NONE, &g.seen_power, KW_OPT_KEY_HELP},
        {"shift", KW_OPT_STRING, &g.shift, KW_UNIT_NONE, &g.seen_shift, KW_OPT_KEY_HELP},
        {"spokes", KW_OPT_STRING, &g.spokes, KW_UNIT_NONE, &g.seen_spokes, KW_OPT_KEY_HELP},
        {"tiny", KW_OPT_STRING, &g.tiny, KW_UNIT_NONE, &g.seen_tiny, KW_OPT_KEY_HELP},
        {"readout-oversampling", KW_OPT_STRING, &g.ros, KW_UNIT_NONE, &g.seen_ros, KW_OPT_KEY_HELP},
        {"dwell", KW_OPT_STRING, &g.dwell, KW_UNIT_TIME, &g.seen_dwell, KW_OPT_KEY_HELP},
        {"fov", KW_OPT_STRING, &g.fov, KW_UNIT_LENGTH, &g.seen_fov, KW_OPT_KEY_HELP},
        {"gmax", KW_OPT_STRING, &g.gmax, KW_UNIT_GRADIENT, &g.seen_gmax, KW_OPT_KEY_HELP},
        {"slew", KW_OPT_STRING, &g.slew, KW_UNIT_SLEW, &g.seen_slew, KW_OPT_KEY_HELP},
        {"raster", KW_OPT_STRING, &g.raster, KW_UNIT_TIME, &g.seen_raster, KW_OPT_KEY_HELP},
        {"interleaves", KW_OPT_STRING, &g.interleaves, KW_UNIT_NONE, &g.seen_interleaves, KW_OPT_KEY_HELP},
        {"shots", KW_OPT_STRING, &g.shots, KW_UNIT_NONE, &g.seen_shots, KW_OPT_KEY_HELP},
        {"te", KW_OPT_STRING, &g.te, KW_UNIT_TIME, &g.seen_te, KW_OPT_KEY_HELP},
        {"seed", KW_OPT_STRING, &g.seed, KW_UNIT_NONE, &g.seen_seed, KW_OPT_KEY_HELP},
        {"out", KW_OPT_STRING, &g.out, KW_UNIT_NONE, NULL, "write the mask / trajectory (.npy) + sidecar (default: not written)"},
        {"times", KW_OPT_STRING, &g.times, KW_UNIT_NONE, NULL, "sample times file (default OUT_times.npy)"},
        {"waveform", KW_OPT_STRING, &g.waveform, KW_UNIT_NONE, NULL,
         "epi/spiral: write shot/interleaf 0's gradient waveform (.npy (samples, 2) T/m) + timing sidecar for `kweave waveform` (default: not written)"},
        {"density", KW_OPT_STRING, &g.density, KW_UNIT_NONE, NULL, "write the sampling probability (.npy; default: not written)"},
        {"png", KW_OPT_STRING, &g.png, KW_UNIT_NONE, NULL, "picture of the pattern (or of --compare; default: not written)"},
        {"json", KW_OPT_STRING, &g.json, KW_UNIT_NONE, NULL, "analysis as JSON (- for stdout, in place of the text; default: not written)"},
        {"psf", KW_OPT_STRING, &g.psf, KW_UNIT_NONE, NULL, "picture of the PSF (log scale; default: not written)"},
        {"psf-size", KW_OPT_INT, &g.psf_size, KW_UNIT_NONE, NULL, "non-Cartesian PSF grid (default min(N,128))"},
        {"analyse", KW_OPT_STRING, &g.analyse, KW_UNIT_NONE, NULL, "analyse a mask or trajectory file (default: none, make one with --kind)"},
        {"compare", KW_OPT_FLAG, &g.compare, KW_UNIT_NONE, NULL, "compare the files that follow"},
        {NULL, 0, NULL, 0, NULL, NULL},
    };
    const char *files[MAX_COMPARE];
    int nfiles = 0;
    static const kw_opt_arg extra[] = {{"analyse", "FILE"}, {NULL, NULL}};
    kw_opts_set_args_from_keys(kw_pattern_input_keys(), extra);
    int rc = kw_opts_parse(argc, argv, table, USAGE, files, MAX_COMPARE, &nfiles);
    if (rc >= 0)
        return rc;
    if (nfiles > 0 && !g.compare)
        return kw_cli_fail(files[0], "unexpected argument (files to compare follow --compare)");
    if (g.psf_size && (g.psf_size < 8 || g.psf_size > 512))
        return kw_cli_fail("psf-size", "%ld outside 8..512", g.psf_size);
    if ((rc = set_keys(&g, table)) >= 0) {
        kw_pattern_input_destroy(g.in);
        return rc;
    }
    if ((g.compare || g.analyse) && g.seen_ros) {
        kw_pattern_input_destroy(g.in);
        return kw_cli_fail("readout-oversampling", "only when making a trajectory (--kind); "
                           "the analysis reads it from the sidecar");
    }
    FILE *sink = NULL;
    txt = stdout;
    if (g.json && strcmp(g.json, "-") == 0) {
        if (!(sink = fopen("/dev/null", "w"))) {
            kw_pattern_input_destroy(g.in);
            return kw_cli_fail("json", "cannot open /dev/null to set the text report aside");
        }
        txt = sink;
    }
    rc = g.compare ? run_compare(&g, files, nfiles) : g.analyse ? run_analyse(&g) : run_generate(&g);
    txt = stdout;
    if (sink)
        fclose(sink);
    kw_pattern_input_destroy(g.in);
    return rc;
}
