/* cmd_plan.c: `kweave plan`: a protocol (options or a protocol file) checked
 * against the gradient hardware, with the resolution, timing and sampling it
 * implies. Text on stdout, --json FILE for scripts, --plot/--kplot pictures.
 * Exit 0 feasible, 3 infeasible (KW_EXIT_INFEASIBLE), 2 bad input. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "defaults.h"
#include "jsonio.h"
#include "kw_protocol.h"
#include "kw_sequence.h"
#include "kw_waveform.h"
#include "npy.h"
#include "plan_input_int.h"
#include "plot.h"
#include "protofile.h"
#include "report_names.h"

/* The option table's slots, in the order of kw_protocol_keys(). */
typedef enum key_id {
    K_SEQUENCE, K_FOV, K_MATRIX, K_BANDWIDTH, K_B0, K_GMAX, K_SLEW, K_RASTER,
    K_TEMPERATURE, K_TE, K_TR, K_RF_DURATION, K_TBW, K_SLICE, K_SPOILER, K_CRUSHER,
    K_T2STAR, K_SHOTS, K_PARTIAL_FOURIER, K_INTERLEAVES, K_MAX_READOUT, K_SPOKES,
    K_AVERAGES, K_COUNT
} key_id;

/* The snr factor of the reference protocol file; an exit code or -1. */
static int reference_factor(const char *path, double *factor)
{
    kw_protocol_input *ref = NULL;
    kw_protocol p;
    kw_plan_report *rr = NULL;
    kw_status st = kw_protocol_input_create(&ref);
    if (!st)
        st = kw_protofile_read_into(ref, path);
    if (!st)
        st = kw_protocol_input_finish(ref, &p);
    kw_protocol_input_destroy(ref);
    if (!st)
        st = kw_plan_create(&rr, &p);
    if (st)
        return kw_cli_status(st, "reference");
    *factor = rr->snr_factor;
    kw_plan_destroy(rr);
    return -1;
}

/* ---- report ----------------------------------------------------------------- */

static void print_lobe(const char *name, const kw_trapezoid *t)
{
    if (kw_trapezoid_duration(t) <= 0)
        return;
    printf("    %-16s %+9.3f mT/m  ramp %6.0f us  flat %8.0f us  total %8.0f us\n", name,
           t->amplitude_T_per_m * 1e3, t->ramp_s * 1e6, t->flat_s * 1e6,
           kw_trapezoid_duration(t) * 1e6);
}

static const char *fmt_unit(double v, const char *unit, char *buf, size_t n)
{
    if (strcmp(unit, "T/m") == 0)
        snprintf(buf, n, "%.3f mT/m", v * 1e3);
    else if (strcmp(unit, "s") == 0)
        snprintf(buf, n, "%.3f ms", v * 1e3);
    else
        snprintf(buf, n, "%.1f %s", v, unit);
    return buf;
}

static void report_text(const kw_plan_report *r, double ref_factor)
{
    const kw_protocol *p = &r->protocol;
    const kw_plan_basic *b = &r->basic;
    static const char *const label[] = {"spoiled gradient echo", "spin echo", "EPI", "radial",
                                        "spiral"};
    char u1[48], u2[48], u3[48];
    printf("kweave plan: %s, %d-D\n", label[p->sequence], p->ndim);
    printf("  B0 %.4g T: %s %.6f MHz; %s %.2f K %.4g (%.3f per million)\n", p->b0_t,
           RN_LABEL(PLAN_LARMOR), b->larmor_hz / 1e6, RN_LABEL(PLAN_TEMPERATURE), p->temperature_k,
           b->polarization, b->polarization * 1e6);
    printf("Resolution\n");
    if (p->ndim == 3)
        printf("  %s %.1f x %.1f x %.1f mm, %s %d x %d x %d, %s %.4f x %.4f x %.4f mm\n",
               RN_LABEL(PLAN_FOV), p->fov_m[0] * 1e3, p->fov_m[1] * 1e3, p->fov_m[2] * 1e3, RN_LABEL(PLAN_MATRIX),
               p->matrix[0], p->matrix[1], p->matrix[2], RN_LABEL(PLAN_VOXEL_SIZE),
               b->pixel_size_m[0] * 1e3, b->pixel_size_m[1] * 1e3,
               b->pixel_size_m[2] * 1e3);
    else
        printf("  %s %.1f x %.1f mm, %s %d x %d, %s %.4f x %.4f mm, %s %.3f mm\n",
               RN_LABEL(PLAN_FOV), p->fov_m[0] * 1e3, p->fov_m[1] * 1e3, RN_LABEL(PLAN_MATRIX),
               p->matrix[0], p->matrix[1], RN_LABEL(PLAN_PIXEL), b->pixel_size_m[0] * 1e3,
               b->pixel_size_m[1] * 1e3, RN_LABEL(PLAN_SLICE), p->slice_m * 1e3);
    if (p->ndim == 3) /* the partition axis too (the JSON has all three) */
        printf("  %s %.4f x %.4f x %.4f 1/m, %s %.3f x %.3f x %.3f 1/m\n",
               RN_LABEL(PLAN_DELTA_K), b->delta_k_per_m[0], b->delta_k_per_m[1],
               b->delta_k_per_m[2], RN_LABEL(PLAN_K_MAX), b->k_max_per_m[0], b->k_max_per_m[1], b->k_max_per_m[2]);
    else
        printf("  %s %.4f x %.4f 1/m, %s %.3f x %.3f 1/m\n", RN_LABEL(PLAN_DELTA_K),
               b->delta_k_per_m[0], b->delta_k_per_m[1], RN_LABEL(PLAN_K_MAX), b->k_max_per_m[0],
               b->k_max_per_m[1]);
    printf("Readout\n");
    printf("  %s %.1f Hz (%.2f %s), %s %.4f us, %s %.4f ms\n", RN_LABEL(PLAN_BANDWIDTH),
           b->bandwidth_hz, b->bandwidth_per_pixel_hz, RN_LABEL(PLAN_BANDWIDTH_PIXEL),
           RN_LABEL(PLAN_DWELL), r->dwell_s * 1e6, RN_LABEL(PLAN_READOUT),
           r->readout_duration_s * 1e3);
    if (p->sequence != KW_SEQ_SPIRAL)
        printf("  %s %.4f mT/m (%s %.4f mT/m, %s %.1f T/m/s)\n", RN_LABEL(PLAN_READOUT_GRADIENT),
               b->readout_gradient_T_per_m * 1e3, RN_LABEL(PLAN_GMAX), p->gmax_T_per_m * 1e3,
               RN_LABEL(PLAN_SLEW), p->slew_T_per_m_per_s);
    else
        printf("  %s %.4f mT/m, %s %.1f T/m/s\n", RN_LABEL(PLAN_GMAX), p->gmax_T_per_m * 1e3,
               RN_LABEL(PLAN_SLEW), p->slew_T_per_m_per_s);
    printf("  %s %.4f mT/m (%s %.3f ms, %s %.3g)\n",
           p->ndim == 3 ? RN_LABEL(PLAN_SLAB_GRADIENT) : RN_LABEL(PLAN_SLICE_GRADIENT),
           r->slice_gradient_T_per_m * 1e3, RN_LABEL(PLAN_RF_DURATION), r->rf_duration_s * 1e3,
           RN_LABEL(PLAN_TBW), p->tbw);
    if (p->sequence == KW_SEQ_EPI)
        printf("  EPI: %d %s, %s %d, %s %.4f ms, %s %.3f ms, %s %.3g\n", p->shots,
               RN_LABEL(PLAN_SHOTS), RN_LABEL(PLAN_ECHO_TRAIN_LENGTH), r->echo_train_length,
               RN_LABEL(PLAN_ECHO_SPACING), r->echo_spacing_s * 1e3, RN_LABEL(PLAN_ECHO_TRAIN),
               r->echo_train_s * 1e3, RN_LABEL(PLAN_PARTIAL_FOURIER), p->partial_fourier);
    if (p->sequence == KW_SEQ_RADIAL)
        printf("  radial: %d %s (%s pi/2 x %d = %d)\n", r->spokes, RN_LABEL(PLAN_SPOKES),
               RN_LABEL(PLAN_SPOKES_NYQUIST), p->matrix[0], r->spokes_nyquist);
    if (p->sequence == KW_SEQ_SPIRAL)
        printf("  spiral: %d %s, %.4f ms %s, %zu %s\n", r->interleaves,
               RN_LABEL(PLAN_INTERLEAVES), r->readout_per_interleave_s * 1e3,
               RN_LABEL(PLAN_READOUT_INTERLEAF), r->spiral.samples, RN_LABEL(PLAN_SAMPLES_INTERLEAF));
    printf("Timing\n");
    printf("  %s %.4f ms (%s %.4f ms)%s%s, %s %.4f ms (%s %.4f ms), %s %.3f s%s\n",
           RN_LABEL(PLAN_TE), r->te_s * 1e3, RN_LABEL(PLAN_MIN_TE), r->min_te_s * 1e3,
           p->sequence == KW_SEQ_EPI ? " " : "",
           p->sequence == KW_SEQ_EPI ? RN_LABEL(PLAN_EFFECTIVE_TE) : "", RN_LABEL(PLAN_TR), r->tr_s * 1e3,
           RN_LABEL(PLAN_MIN_TR), r->min_tr_s * 1e3, RN_LABEL(PLAN_SCAN), r->scan_time_s,
           p->ndim == 2 ? " per slice" : "");
    printf("  lobes (%s %.0f us):\n", RN_LABEL(PLAN_RASTER), p->raster_s * 1e6);
    int is3d = p->ndim == 3;
    print_lobe(is3d ? RN_LABEL(LOBE_SLAB_SELECT) : RN_LABEL(LOBE_SLICE_SELECT), &r->slice_select);
    /* 3-D: the slab rephaser and the largest partition encode are played as
     * one lobe (the JSON's slice_rephaser); the partition encode alone is
     * listed after it */
    print_lobe(is3d ? RN_LABEL(LOBE_SLAB_REPHASER) : RN_LABEL(LOBE_SLICE_REPHASER),
               &r->slice_rephaser);
    print_lobe(RN_LABEL(LOBE_READOUT), &r->readout);
    print_lobe(RN_LABEL(LOBE_PREPHASER), &r->prephaser);
    print_lobe(RN_LABEL(LOBE_PHASE_ENCODE), &r->phase_encode);
    print_lobe(RN_LABEL(LOBE_PARTITION_ENCODE), &r->partition_encode);
    print_lobe(RN_LABEL(LOBE_SPOILER), &r->spoiler);
    print_lobe(RN_LABEL(LOBE_CRUSHER), &r->crusher);
    if (is3d)
        printf("    (slab rephaser+kz: the slab rephaser and the largest partition encode, "
               "played as one lobe)\n");
    printf("Artefacts and signal\n");
    if (p->sequence == KW_SEQ_SPIRAL)
        printf("  %s %.1f Hz (%.1f ppm): a blur, %.2f %s\n", RN_LABEL(PLAN_FAT_WATER),
               r->fat_water_hz, KW_FAT_WATER_PPM, r->fat_water_hz * r->readout_per_interleave_s,
               RN_LABEL(PLAN_FAT_CYCLES));
    else
        printf("  %s %.1f Hz (%.1f ppm): %.3f pixels = %.3f mm along the readout\n",
               RN_LABEL(PLAN_SHIFT_PIXELS), r->fat_water_hz, KW_FAT_WATER_PPM,
               r->chemical_shift_pixels, r->chemical_shift_mm);
    if (p->sequence == KW_SEQ_EPI)
        printf("  %s: %.5f %s; fat-water %.2f pixels = %.2f mm\n",
               RN_LABEL(PLAN_SHIFT_PHASE_PIXELS), r->distortion_pixels_per_hz, RN_LABEL(PLAN_DISTORTION), r->chemical_shift_phase_pixels,
               r->chemical_shift_phase_mm);
    if (isfinite(r->readout_to_t2star))
        printf("  %s %s = %.3f (T2* %.2f ms)\n",
               p->sequence == KW_SEQ_EPI ? "echo train" : "readout", RN_LABEL(PLAN_T2STAR_RATIO),
               r->readout_to_t2star,
               p->t2star_s * 1e3);
    printf("  %s %.4g mm^3, %s %.4g s: %s (voxel x sqrt(time), the usual proportionality) "
           "%.4g m^3 s^0.5", RN_LABEL(PLAN_VOXEL), r->voxel_volume_m3 * 1e9,
           RN_LABEL(PLAN_SAMPLING_TIME), r->total_sampling_time_s, RN_LABEL(PLAN_SNR_FACTOR),
           r->snr_factor);
    if (ref_factor > 0)
        printf("; %s %.4f", RN_LABEL(PLAN_RELATIVE_SNR), r->snr_factor / ref_factor);
    printf("\nLimits\n  %-24s %16s %16s %16s  %s\n", "constraint", "required", "available",
           "margin", "ok");
    for (int i = 0; i < r->nlimits; i++) {
        const kw_limit *l = &r->limits[i];
        printf("  %-24s %16s %16s %16s  %s\n", l->name, fmt_unit(l->required, l->unit, u1, sizeof u1),
               fmt_unit(l->available, l->unit, u2, sizeof u2),
               fmt_unit(l->available - l->required, l->unit, u3, sizeof u3), l->ok ? "yes" : "NO");
    }
    if (r->feasible) {
        printf("Feasible: yes\n");
    } else {
        const kw_nearest *n = &r->nearest;
        printf("Feasible: NO. Failing:");
        int nfail = 0;
        for (int i = 0; i < r->nlimits; i++)
            if (!r->limits[i].ok)
                printf("%s %s (required %s, available %s, off by %s)", nfail++ ? ";" : "",
                       r->limits[i].name,
                       fmt_unit(r->limits[i].required, r->limits[i].unit, u1, sizeof u1),
                       fmt_unit(r->limits[i].available, r->limits[i].unit, u2, sizeof u2),
                       fmt_unit(r->limits[i].required - r->limits[i].available, r->limits[i].unit,
                                u3, sizeof u3));
        printf(".\nNearest feasible (each with the rest held):\n");
        if (n->has_bandwidth)
            printf("  bandwidth at most %.0f Hz (%.2f Hz/pixel)\n", n->bandwidth_hz,
                   n->bandwidth_per_pixel_hz);
        if (n->has_matrix)
            printf("  or, at %.2f Hz/pixel, readout matrix at most %d (pixel at least %.4f mm)\n",
                   r->bandwidth_per_pixel_hz, n->matrix_x, n->pixel_size_x_m * 1e3);
        if (n->has_slice)
            printf("  %s at least %.3f mm, or RF pulse at least %.3f ms\n",
                   p->ndim == 3 ? "slab" : "slice", n->slice_m * 1e3, n->rf_duration_s * 1e3);
        if (n->has_te)
            printf("  TE at least %.4f ms\n", n->te_s * 1e3);
        if (n->has_tr)
            printf("  TR at least %.4f ms\n", n->tr_s * 1e3);
        if (n->has_interleaves)
            printf("  at least %d interleaves\n", n->interleaves);
        if (n->has_combined) {
            const kw_protocol *q = &n->combined;
            printf("  all together (re-planned, feasible): bandwidth %.0f Hz, %s %.3f mm, RF %.3f ms",
                   q->bandwidth_hz, p->ndim == 3 ? "slab" : "slice",
                   (p->ndim == 3 ? q->fov_m[2] : q->slice_m) * 1e3, q->rf_duration_s * 1e3);
            if (q->te_s > 0)
                printf(", TE %.4f ms", q->te_s * 1e3);
            if (q->tr_s > 0)
                printf(", TR %.4f ms", q->tr_s * 1e3);
            if (q->interleaves > 0)
                printf(", %d interleaves", q->interleaves);
            printf("\n");
        }
    }
    printf("\n%s\n", KW_SAFETY_CAUTION);
}

/* --waveform: the gradient-echo plan's lobes as the waveform `kweave
 * waveform` checks (kw_waveform_plan()), computed before anything is
 * written; *g (samples, 3) float32 kw_alloc'd. */
static int plan_waveform(const kw_plan_report *r, float **g, size_t *n, kw_waveform_adc *adc, double *rf,
                         double *te)
{
    kw_status st = kw_waveform_plan(r, NULL, n, NULL, NULL, NULL);
    double *gd = st ? NULL : kw_alloc_n(*n * 3, sizeof *gd);
    *g = st ? NULL : kw_alloc_n(*n * 3, sizeof **g);
    if (!st && (!gd || !*g))
        st = kw_set_error(KW_ENOMEM, "out of memory");
    if (!st)
        st = kw_waveform_plan(r, gd, n, adc, rf, te);
    for (size_t i = 0; !st && i < *n * 3; i++)
        (*g)[i] = (float)gd[i];
    kw_free(gd);
    if (st) {
        kw_free(*g);
        *g = NULL;
        return kw_cli_status(st, "waveform");
    }
    return -1;
}

/* the waveform .npy and its timing sidecar (the keys `kweave waveform` reads) */
static kw_status write_waveform(const char *path, const float *g, size_t n, const kw_waveform_adc *adc,
                                double rf, double te, double raster)
{
    kw_array a = {.dtype = KW_F32, .ndim = 2, .dims = {n, 3}, .data = (void *)g};
    kw_status st = kw_npy_write(path, &a);
    char *sp = st ? NULL : kw_sidecar_path(path);
    if (st || !sp)
        return st ? st : kw_set_error(KW_ENOMEM, "out of memory");
    cJSON *j = cJSON_CreateObject(), *arr = cJSON_AddArrayToObject(j, "adc"), *w = cJSON_CreateObject();
    cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(j, "kind", "waveform");
    cJSON_AddStringToObject(j, "source", "kweave plan --sequence gre: one repetition (x readout, y phase "
                            "encode at its largest step, z slice)");
    cJSON_AddBoolToObject(j, "held", 0);
    cJSON_AddStringToObject(j, "units", "T/m");
    kw_json_add_number_or_null(j, "raster_s", raster);
    kw_json_add_number_or_null(j, "rf_centre_s", rf);
    kw_json_add_number_or_null(j, "te_s", te);
    kw_json_add_number_or_null(w, "start_s", adc->start_s);
    kw_json_add_number_or_null(w, "samples", (double)adc->samples);
    kw_json_add_number_or_null(w, "dwell_s", adc->dwell_s);
    cJSON_AddItemToArray(arr, w);
    cJSON_AddStringToObject(j, "safety_caution", KW_SAFETY_CAUTION);
    st = kw_json_write(sp, j);
    cJSON_Delete(j);
    free(sp);
    return st;
}

static int report(const kw_protocol *p, const char *json_path, const char *plot,
                  const char *kplot, const char *waveform, double ref_factor)
{
    kw_plan_report *r = NULL;
    kw_status st = kw_plan_create(&r, p);
    if (st)
        return kw_cli_status(st, "plan");
    float *wg = NULL;
    size_t wn = 0;
    kw_waveform_adc wadc;
    double wrf = 0, wte = 0;
    int rc = waveform ? plan_waveform(r, &wg, &wn, &wadc, &wrf, &wte) : -1;
    if (rc >= 0) {
        kw_plan_destroy(r);
        return rc;
    }
    if (json_path) {
        cJSON *j = kw_plan_report_cjson(r, ref_factor);
        st = j ? kw_json_write(json_path, j) : kw_set_error(KW_ENOMEM, "out of memory");
        cJSON_Delete(j);
        if (st) {
            kw_plan_destroy(r);
            kw_free(wg);
            return kw_cli_status(st, "json");
        }
    }
    if (plot && (st = kw_plot_timing(plot, r))) {
        kw_plan_destroy(r);
        kw_free(wg);
        return kw_cli_status(st, "plot");
    }
    if (kplot && (st = kw_plot_kspace(kplot, r))) {
        kw_plan_destroy(r);
        kw_free(wg);
        return kw_cli_status(st, "kplot");
    }
    if (wg && (st = write_waveform(waveform, wg, wn, &wadc, wrf, wte, p->raster_s))) {
        kw_plan_destroy(r);
        kw_free(wg);
        return kw_cli_status(st, "waveform");
    }
    kw_free(wg);
    if (!json_path || strcmp(json_path, "-") != 0) /* one report on stdout */
        report_text(r, ref_factor);
    int feasible = r->feasible;
    kw_plan_destroy(r);
    return feasible ? KW_EXIT_OK : KW_EXIT_INFEASIBLE;
}

/* ---- the verb ----------------------------------------------------------------- */

int kw_cmd_plan(int argc, char **argv)
{
    /* --bandwidth may be given twice, once in each form: take those out of
     * argv before the table parser, which refuses repeats. */
    char **av = calloc((size_t)argc + 1, sizeof *av);
    if (!av)
        return kw_cli_fail("plan", "out of memory");
    const char *bw_cli[3] = {NULL, NULL, NULL};
    int nbw = 0, ac = 0;
    for (int i = 0; i < argc; i++) {
        const char *a = argv[i];
        if (i > 0 && strcmp(a, "--bandwidth") == 0) {
            if (i + 1 >= argc) {
                free(av);
                return kw_cli_fail("bandwidth", "missing value");
            }
            if (nbw == 2) {
                free(av);
                return kw_cli_fail("bandwidth", "given more than twice");
            }
            bw_cli[nbw++] = argv[++i];
            continue;
        }
        if (i > 0 && strncmp(a, "--bandwidth=", 12) == 0) {
            if (nbw == 2) {
                free(av);
                return kw_cli_fail("bandwidth", "given more than twice");
            }
            bw_cli[nbw++] = a + 12;
            continue;
        }
        av[ac++] = argv[i];
    }

    const char *val[K_COUNT] = {0};
    int seen[K_COUNT] = {0};
    const char *protocol = NULL, *json = NULL, *plot = NULL, *kplot = NULL, *reference = NULL, *waveform = NULL;
    const char *bw_dummy = NULL;
    kw_opt table[] = {
        {"protocol", KW_OPT_STRING, &protocol, KW_UNIT_NONE, NULL,
         "protocol file of key = value lines (options override it; default: none, the defaults below)"},
        {"sequence", KW_OPT_STRING, &val[K_SEQUENCE], KW_UNIT_NONE, &seen[K_SEQUENCE],
         "gre | se | epi | radial | spiral: the pulse sequence timed (default gre; encode's --sequence "
         "is its signal model, default pd)"},
        {"fov", KW_OPT_STRING, &val[K_FOV], KW_UNIT_LENGTH, &seen[K_FOV],
         "field of view: 256mm, or x,y (256mm,192mm), or x,y,z (default " KWD_FOV_TEXT ")"},
        {"matrix", KW_OPT_STRING, &val[K_MATRIX], KW_UNIT_NONE, &seen[K_MATRIX],
         "NX, NXxNY or NXxNYxNZ; x = readout (default 256)"},
        {"bandwidth", KW_OPT_STRING, &bw_dummy, KW_UNIT_NONE, NULL,
         "receiver bandwidth across the FOV (32kHz) or per pixel (250Hz/pixel); default "
         KWD_BW_PER_PIXEL_TEXT},
        {"b0", KW_OPT_STRING, &val[K_B0], KW_UNIT_FIELD, &seen[K_B0], "main field (default " KWD_B0_TEXT ")"},
        {"gmax", KW_OPT_STRING, &val[K_GMAX], KW_UNIT_GRADIENT, &seen[K_GMAX],
         "gradient amplitude limit (default " KWD_GMAX_TEXT ")"},
        {"slew", KW_OPT_STRING, &val[K_SLEW], KW_UNIT_SLEW, &seen[K_SLEW],
         "slew-rate limit (default " KWD_SLEW_TEXT ")"},
        {"raster", KW_OPT_STRING, &val[K_RASTER], KW_UNIT_TIME, &seen[K_RASTER],
         "gradient raster time (default " KWD_RASTER_TEXT ")"},
        {"temperature", KW_OPT_STRING, &val[K_TEMPERATURE], KW_UNIT_TEMPERATURE, &seen[K_TEMPERATURE],
         "sample temperature for the polarization (default 310K)"},
        {"te", KW_OPT_STRING, &val[K_TE], KW_UNIT_TIME, &seen[K_TE],
         "echo time (default: the minimum)"},
        {"tr", KW_OPT_STRING, &val[K_TR], KW_UNIT_TIME, &seen[K_TR],
         "repetition time (default: the minimum)"},
        {"rf-duration", KW_OPT_STRING, &val[K_RF_DURATION], KW_UNIT_TIME, &seen[K_RF_DURATION],
         "RF pulse duration (default 2ms)"},
        {"tbw", KW_OPT_STRING, &val[K_TBW], KW_UNIT_NONE, &seen[K_TBW],
         "RF time-bandwidth product (default 4)"},
        {"slice", KW_OPT_STRING, &val[K_SLICE], KW_UNIT_LENGTH, &seen[K_SLICE],
         "slice thickness, 2-D (default 5mm)"},
        {"spoiler", KW_OPT_STRING, &val[K_SPOILER], KW_UNIT_NONE, &seen[K_SPOILER],
         "spoiler: cycles of phase across the slice (default 0: none)"},
        {"crusher", KW_OPT_STRING, &val[K_CRUSHER], KW_UNIT_NONE, &seen[K_CRUSHER],
         "SE crushers: cycles across the slice (default 2)"},
        {"t2star", KW_OPT_STRING, &val[K_T2STAR], KW_UNIT_TIME, &seen[K_T2STAR],
         "T2* for the readout/T2* ratio (default: none, no ratio)"},
        {"shots", KW_OPT_STRING, &val[K_SHOTS], KW_UNIT_NONE, &seen[K_SHOTS],
         "EPI shots (default " KWD_EPI_SHOTS_TEXT ")"},
        {"partial-fourier", KW_OPT_STRING, &val[K_PARTIAL_FOURIER], KW_UNIT_NONE,
         &seen[K_PARTIAL_FOURIER], "EPI phase-encode fraction, 0.5 < f <= 1 (default 1)"},
        {"interleaves", KW_OPT_STRING, &val[K_INTERLEAVES], KW_UNIT_NONE, &seen[K_INTERLEAVES],
         "spiral interleaves (default: fewest within --max-readout)"},
        {"max-readout", KW_OPT_STRING, &val[K_MAX_READOUT], KW_UNIT_TIME, &seen[K_MAX_READOUT],
         "spiral: longest readout per interleaf (default " KWD_SPIRAL_MAX_READOUT_TEXT ")"},
        {"spokes", KW_OPT_STRING, &val[K_SPOKES], KW_UNIT_NONE, &seen[K_SPOKES],
         "radial spokes (default: Nyquist, pi/2 x N)"},
        {"averages", KW_OPT_STRING, &val[K_AVERAGES], KW_UNIT_NONE, &seen[K_AVERAGES],
         "signal averages (default 1)"},
        {"reference", KW_OPT_STRING, &reference, KW_UNIT_NONE, NULL,
         "protocol file of a reference protocol for the relative SNR (default: none)"},
        {"json", KW_OPT_STRING, &json, KW_UNIT_NONE, NULL, "write the report as JSON (- for stdout, in place of the text; default: not written)"},
        {"plot", KW_OPT_STRING, &plot, KW_UNIT_NONE, NULL, "timing diagram PNG (default: not written)"},
        {"kplot", KW_OPT_STRING, &kplot, KW_UNIT_NONE, NULL, "k-space path PNG (default: not written)"},
        {"waveform", KW_OPT_STRING, &waveform, KW_UNIT_NONE, NULL,
         "gre: one repetition's lobes as a gradient waveform (.npy (samples, 3) T/m, x y z) + timing sidecar "
         "for `kweave waveform` (default: not written)"},
        {NULL, 0, NULL, 0, NULL, NULL}};
    static const kw_opt_arg args[] = {{"tbw", "X"}, {"spoiler", "X"}, {"crusher", "X"},
                                      {"shots", "N"}, {"partial-fourier", "X"},
                                      {"interleaves", "N"}, {"spokes", "N"}, {"averages", "N"},
                                      {NULL, NULL}};
    kw_opts_set_args(args);
    int rc = kw_opts_parse(ac, av, table,
                           "usage: kweave plan [--protocol FILE] [--sequence S] --fov F --matrix M "
                           "--bandwidth B [--b0 B0] [--gmax G] [--slew S] [--json FILE] "
                           "[--plot FILE.png] [--kplot FILE.png]\n"
                           "Checks a protocol against the gradient hardware; exit 0 feasible, "
                           "3 infeasible, 2 bad input.",
                           NULL, 0, NULL);
    free(av);
    if (rc >= 0)
        return rc;
    if (protocol && reference && strcmp(protocol, "-") == 0 && strcmp(reference, "-") == 0)
        return kw_cli_fail("reference", "standard input ('-') is already --protocol; give the "
                           "reference protocol as a file");

    /* The file first, then the command line over it: its bandwidth (one or
     * both forms) replaces the file's, each other option replaces its key. */
    kw_protocol_input *in = NULL;
    kw_status st = kw_protocol_input_create(&in);
    if (st)
        return kw_cli_status(st, NULL);
    const char *const *keys = kw_protocol_keys();
    kw_protocol p;
    if (protocol && (st = kw_protofile_read_into(in, protocol))) {
        kw_protocol_input_destroy(in);
        return kw_cli_status(st, "protocol");
    }
    if (nbw)
        st = kw_protocol_input_clear(in, "bandwidth");
    for (int i = 0; !st && i < nbw; i++)
        st = kw_protocol_input_set(in, "bandwidth", bw_cli[i]);
    for (int k = 0; !st && k < K_COUNT; k++)
        if (seen[k] && k != K_BANDWIDTH)
            st = kw_protocol_input_set(in, keys[k], val[k]);
    if (!st)
        st = kw_protocol_input_finish(in, &p);
    kw_protocol_input_destroy(in);
    if (st)
        return kw_cli_status(st, NULL);
    double ref_factor = 0;
    if (reference && (rc = reference_factor(reference, &ref_factor)) >= 0)
        return rc;
    return report(&p, json, plot, kplot, waveform, ref_factor);
}
