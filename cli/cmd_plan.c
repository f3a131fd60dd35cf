/* cmd_plan.c: `kweave plan`: a protocol (options or a protocol file) checked
 * against the gradient hardware, with the resolution, timing and sampling it
 * implies. Text on stdout, --json FILE for scripts, --plot/--kplot pictures.
 * Exit 0 feasible, 3 infeasible (KW_EXIT_INFEASIBLE), 2 bad input. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "jsonio.h"
#include "kw_protocol.h"
#include "kw_sequence.h"
#include "plot.h"
#include "protofile.h"

/* ---- protocol keys (shared by options and protocol files) ---------------- */

typedef struct plan_in {
    kw_protocol p;
    int fov_n, matrix_n;   /* how many axes --fov and --matrix gave */
    double fov[3];
    int matrix[3];
    /* bandwidth: [0] across the FOV, [1] per pixel; set[] per source */
    double bw[2];
    int bw_set[2];
    char seen_file[32];   /* keys seen in the protocol file (duplicates are errors) */
} plan_in;

typedef enum key_id {
    K_SEQUENCE, K_FOV, K_MATRIX, K_BANDWIDTH, K_B0, K_GMAX, K_SLEW, K_RASTER,
    K_TEMPERATURE, K_TE, K_TR, K_RF_DURATION, K_TBW, K_SLICE, K_SPOILER, K_CRUSHER,
    K_T2STAR, K_SHOTS, K_PARTIAL_FOURIER, K_INTERLEAVES, K_MAX_READOUT, K_SPOKES,
    K_AVERAGES, K_COUNT
} key_id;

static const char *const key_names[K_COUNT] = {
    "sequence", "fov", "matrix", "bandwidth", "b0", "gmax", "slew", "raster",
    "temperature", "te", "tr", "rf-duration", "tbw", "slice", "spoiler", "crusher",
    "t2star", "shots", "partial-fourier", "interleaves", "max-readout", "spokes",
    "averages"};

static const char *const seq_names[] = {"gre", "se", "epi", "radial", "spiral"};

static int key_lookup(const char *key)
{
    for (int k = 0; k < K_COUNT; k++)
        if (strcmp(key_names[k], key) == 0)
            return k;
    return -1;
}

static kw_status parse_unit(const char *key, const char *val, kw_unit_kind kind, double *v)
{
    char why[160];
    if (kw_unit_parse(val, kind, v, why, sizeof why))
        return kw_set_error(KW_EINVAL, "%s: %s", key, why);
    return KW_OK;
}

static kw_status parse_count(const char *key, const char *val, long lo, long hi, int *out)
{
    char *end;
    long v = strtol(val, &end, 10);
    while (*end == ' ' || *end == '\t')
        end++;
    KW_FAIL_IF(end == val || *end, KW_EINVAL, "%s: '%s' is not a whole number", key, val);
    KW_FAIL_IF(v < lo || v > hi, KW_EINVAL, "%s: %ld is outside %ld to %ld", key, v, lo, hi);
    *out = (int)v;
    return KW_OK;
}

/* "256mm" or "256mm,192mm" or "256mm,192mm,64mm". */
static kw_status parse_fov(const char *val, double *fov, int *n)
{
    char why[200];
    *n = kw_unit_parse_list(val, KW_UNIT_LENGTH, fov, 3, why, sizeof why);
    KW_FAIL_IF(*n < 0, KW_EINVAL, "fov: %s", why);
    for (int i = 0; i < *n; i++)
        KW_FAIL_IF(!(fov[i] > 0), KW_EINVAL, "fov: must be positive (got %g m)", fov[i]);
    return KW_OK;
}

/* "256" or "256x192" or "256x192x64". */
static kw_status parse_matrix(const char *val, int *m, int *n)
{
    *n = 0;
    const char *s = val;
    for (;;) {
        KW_FAIL_IF(*n >= 3, KW_EINVAL, "matrix: at most three sizes nx x ny x nz");
        while (*s == ' ')
            s++;
        char *end;
        long v = strtol(s, &end, 10);
        KW_FAIL_IF(end == s, KW_EINVAL, "matrix: '%s' is not NX, NXxNY or NXxNYxNZ", val);
        KW_FAIL_IF(v < 1 || v > 8192, KW_EINVAL, "matrix: %ld is outside 1 to 8192", v);
        m[(*n)++] = (int)v;
        s = end;
        while (*s == ' ')
            s++;
        if (!*s)
            break;
        KW_FAIL_IF(*s != 'x' && *s != 'X', KW_EINVAL,
                   "matrix: '%s' is not NX, NXxNY or NXxNYxNZ", val);
        s++;
    }
    return KW_OK;
}

static kw_status set_bandwidth(plan_in *in, const char *val)
{
    double hz;
    int pp;
    char why[160];
    if (kw_unit_parse_bandwidth(val, &hz, &pp, why, sizeof why))
        return kw_set_error(KW_EINVAL, "bandwidth: %s", why);
    KW_FAIL_IF(!(hz > 0), KW_EINVAL, "bandwidth: must be positive (got '%s')", val);
    KW_FAIL_IF(in->bw_set[pp], KW_EINVAL, "bandwidth: given more than once %s",
               pp ? "per pixel" : "across the FOV");
    in->bw[pp] = hz;
    in->bw_set[pp] = 1;
    return KW_OK;
}

static kw_status set_key(plan_in *in, int k, const char *val)
{
    kw_protocol *p = &in->p;
    const char *key = key_names[k];
    switch ((key_id)k) {
    case K_SEQUENCE:
        for (int s = 0; s < 5; s++)
            if (strcmp(val, seq_names[s]) == 0) {
                p->sequence = (kw_sequence_kind)s;
                return KW_OK;
            }
        return kw_set_error(KW_EINVAL, "sequence: '%s' is not gre, se, epi, radial or spiral",
                            val);
    case K_FOV: return parse_fov(val, in->fov, &in->fov_n);
    case K_MATRIX: return parse_matrix(val, in->matrix, &in->matrix_n);
    case K_BANDWIDTH: return set_bandwidth(in, val);
    case K_B0: return parse_unit(key, val, KW_UNIT_FIELD, &p->b0_t);
    case K_GMAX: return parse_unit(key, val, KW_UNIT_GRADIENT, &p->gmax_T_per_m);
    case K_SLEW: return parse_unit(key, val, KW_UNIT_SLEW, &p->slew_T_per_m_per_s);
    case K_RASTER: return parse_unit(key, val, KW_UNIT_TIME, &p->raster_s);
    case K_TEMPERATURE: return parse_unit(key, val, KW_UNIT_TEMPERATURE, &p->temperature_k);
    case K_TE: {
        kw_status st = parse_unit(key, val, KW_UNIT_TIME, &p->te_s);
        KW_FAIL_IF(!st && !(p->te_s > 0), KW_EINVAL, "te: must be positive (got '%s')", val);
        return st;
    }
    case K_TR: {
        kw_status st = parse_unit(key, val, KW_UNIT_TIME, &p->tr_s);
        KW_FAIL_IF(!st && !(p->tr_s > 0), KW_EINVAL, "tr: must be positive (got '%s')", val);
        return st;
    }
    case K_RF_DURATION: return parse_unit(key, val, KW_UNIT_TIME, &p->rf_duration_s);
    case K_TBW: return parse_unit(key, val, KW_UNIT_NONE, &p->tbw);
    case K_SLICE: return parse_unit(key, val, KW_UNIT_LENGTH, &p->slice_m);
    case K_SPOILER: return parse_unit(key, val, KW_UNIT_NONE, &p->spoiler_cycles);
    case K_CRUSHER: return parse_unit(key, val, KW_UNIT_NONE, &p->crusher_cycles);
    case K_T2STAR: {
        kw_status st = parse_unit(key, val, KW_UNIT_TIME, &p->t2star_s);
        KW_FAIL_IF(!st && !(p->t2star_s > 0), KW_EINVAL, "t2star: must be positive (got '%s')",
                   val);
        return st;
    }
    case K_SHOTS: return parse_count(key, val, 1, 8192, &p->shots);
    case K_PARTIAL_FOURIER: return parse_unit(key, val, KW_UNIT_NONE, &p->partial_fourier);
    case K_INTERLEAVES: return parse_count(key, val, 1, 4096, &p->interleaves);
    case K_MAX_READOUT: return parse_unit(key, val, KW_UNIT_TIME, &p->max_readout_s);
    case K_SPOKES: return parse_count(key, val, 1, 1000000, &p->spokes);
    case K_AVERAGES: return parse_count(key, val, 1, 100000, &p->averages);
    case K_COUNT: break;
    }
    return kw_set_error(KW_EINTERNAL, "%s: no handler", key);
}

static kw_status file_key(void *user, const char *key, const char *value, int line)
{
    (void)line;
    plan_in *in = user;
    int k = key_lookup(key);
    KW_FAIL_IF(k < 0, KW_EINVAL, "%s: unknown key", key);
    /* bandwidth may appear once in each form; every other key once. */
    KW_FAIL_IF(k != K_BANDWIDTH && in->seen_file[k], KW_EINVAL, "%s: given more than once",
               key);
    in->seen_file[k] = 1;
    return set_key(in, k, value);
}

/* Turn the collected fov/matrix/bandwidth into the protocol. */
static kw_status finish_protocol(plan_in *in)
{
    kw_protocol *p = &in->p;
    if (in->matrix_n) {
        p->ndim = in->matrix_n == 3 ? 3 : 2;
        p->matrix[0] = in->matrix[0];
        p->matrix[1] = in->matrix_n >= 2 ? in->matrix[1] : in->matrix[0];
        p->matrix[2] = in->matrix_n == 3 ? in->matrix[2] : 1;
    }
    if (in->fov_n) {
        KW_FAIL_IF(in->fov_n == 3 && p->ndim != 3, KW_EINVAL,
                   "fov: a z FOV needs a 3-D matrix NXxNYxNZ");
        KW_FAIL_IF(in->fov_n == 2 && p->ndim == 3, KW_EINVAL,
                   "fov: a 3-D matrix needs x,y,z FOVs (or one for all)");
        p->fov_m[0] = in->fov[0];
        p->fov_m[1] = in->fov_n >= 2 ? in->fov[1] : in->fov[0];
        p->fov_m[2] = in->fov_n == 3 ? in->fov[2] : in->fov[0];
    }
    const double nx = p->matrix[0];
    if (in->bw_set[0] && in->bw_set[1]) {
        double a = in->bw[0], b = in->bw[1] * nx;
        KW_FAIL_IF(fabs(a - b) > 1e-9 * a, KW_EINVAL,
                   "bandwidth: %g Hz across the FOV contradicts %g Hz/pixel x %d pixels = %g Hz",
                   a, in->bw[1], p->matrix[0], b);
        p->bandwidth_hz = a;
    } else if (in->bw_set[0]) {
        p->bandwidth_hz = in->bw[0];
    } else if (in->bw_set[1]) {
        p->bandwidth_hz = in->bw[1] * nx;
    } else {
        p->bandwidth_hz = 250.0 * nx; /* default 250 Hz/pixel */
    }
    return kw_protocol_check(p);
}

/* ---- report ----------------------------------------------------------------- */

static void add_num_or_null(cJSON *j, const char *key, double v)
{
    if (isfinite(v))
        cJSON_AddNumberToObject(j, key, v);
    else
        cJSON_AddNullToObject(j, key);
}

static void add_lobe_json(cJSON *lobes, const char *name, const kw_trapezoid *t)
{
    if (kw_trapezoid_duration(t) <= 0)
        return;
    cJSON *o = cJSON_AddObjectToObject(lobes, name);
    cJSON_AddNumberToObject(o, "amplitude_T_per_m", t->amplitude_T_per_m);
    cJSON_AddNumberToObject(o, "ramp_s", t->ramp_s);
    cJSON_AddNumberToObject(o, "flat_s", t->flat_s);
    cJSON_AddNumberToObject(o, "duration_s", kw_trapezoid_duration(t));
    cJSON_AddNumberToObject(o, "area_T_s_per_m", kw_trapezoid_area(t));
}

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

static cJSON *report_json(const kw_plan_report *r, double ref_factor)
{
    const kw_protocol *p = &r->protocol;
    const kw_plan_basic *b = &r->basic;
    cJSON *j = cJSON_CreateObject();
    cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(j, "sequence", seq_names[p->sequence]);
    cJSON_AddBoolToObject(j, "feasible", r->feasible);
    cJSON_AddNumberToObject(j, "dimensions", p->ndim);
    cJSON_AddNumberToObject(j, "b0_t", p->b0_t);
    cJSON_AddNumberToObject(j, "larmor_hz", b->larmor_hz);
    kw_json_add_vec(j, "fov_m", p->fov_m, p->ndim);
    double m[3] = {p->matrix[0], p->matrix[1], p->matrix[2]};
    kw_json_add_vec(j, "matrix", m, p->ndim);
    kw_json_add_vec(j, "pixel_size_m", b->pixel_size_m, p->ndim);
    kw_json_add_vec(j, "delta_k_per_m", b->delta_k_per_m, p->ndim);
    kw_json_add_vec(j, "k_max_per_m", b->k_max_per_m, p->ndim);
    cJSON_AddNumberToObject(j, "slice_m", r->slice_m);
    cJSON_AddNumberToObject(j, "dwell_s", r->dwell_s);
    cJSON_AddNumberToObject(j, "readout_duration_s", r->readout_duration_s);
    cJSON_AddNumberToObject(j, "bandwidth_hz", b->bandwidth_hz);
    cJSON_AddNumberToObject(j, "bandwidth_per_pixel_hz", b->bandwidth_per_pixel_hz);
    cJSON_AddNumberToObject(j, "readout_gradient_T_per_m", b->readout_gradient_T_per_m);
    cJSON_AddNumberToObject(j, "slice_select_gradient_T_per_m", r->slice_gradient_T_per_m);
    cJSON_AddNumberToObject(j, "rf_duration_s", r->rf_duration_s);
    cJSON_AddNumberToObject(j, "tbw", p->tbw);
    cJSON_AddNumberToObject(j, "gmax_T_per_m", p->gmax_T_per_m);
    cJSON_AddNumberToObject(j, "slew_T_per_m_per_s", p->slew_T_per_m_per_s);
    cJSON_AddNumberToObject(j, "raster_s", p->raster_s);
    cJSON_AddNumberToObject(j, "temperature_k", p->temperature_k);
    cJSON_AddNumberToObject(j, "polarization", b->polarization);
    cJSON_AddNumberToObject(j, "min_te_s", r->min_te_s);
    cJSON_AddNumberToObject(j, "min_tr_s", r->min_tr_s);
    cJSON_AddNumberToObject(j, "te_s", r->te_s);
    cJSON_AddNumberToObject(j, "tr_s", r->tr_s);
    cJSON_AddNumberToObject(j, "scan_time_s", r->scan_time_s);
    cJSON_AddNumberToObject(j, "chemical_shift_hz", r->fat_water_hz);
    add_num_or_null(j, "chemical_shift_pixels", r->chemical_shift_pixels);
    add_num_or_null(j, "chemical_shift_mm", r->chemical_shift_mm);
    if (p->sequence == KW_SEQ_EPI) {
        cJSON_AddNumberToObject(j, "echo_spacing_s", r->echo_spacing_s);
        cJSON_AddNumberToObject(j, "echo_train_length", r->echo_train_length);
        cJSON_AddNumberToObject(j, "echo_train_duration_s", r->echo_train_s);
        cJSON_AddNumberToObject(j, "effective_te_s", r->te_s);
        cJSON_AddNumberToObject(j, "shots", p->shots);
        cJSON_AddNumberToObject(j, "partial_fourier", p->partial_fourier);
        cJSON_AddNumberToObject(j, "distortion_pixels_per_hz", r->distortion_pixels_per_hz);
        cJSON_AddNumberToObject(j, "chemical_shift_phase_pixels", r->chemical_shift_phase_pixels);
        cJSON_AddNumberToObject(j, "chemical_shift_phase_mm", r->chemical_shift_phase_mm);
    }
    if (p->sequence == KW_SEQ_RADIAL) {
        cJSON_AddNumberToObject(j, "spokes_nyquist", r->spokes_nyquist);
        cJSON_AddNumberToObject(j, "spokes", r->spokes);
    }
    if (p->sequence == KW_SEQ_SPIRAL) {
        cJSON_AddNumberToObject(j, "interleaves", r->interleaves);
        cJSON_AddNumberToObject(j, "readout_per_interleave_s", r->readout_per_interleave_s);
        cJSON_AddNumberToObject(j, "samples_per_interleave", (double)r->spiral.samples);
        cJSON_AddNumberToObject(j, "fat_water_cycles_per_readout",
                                r->fat_water_hz * r->readout_per_interleave_s);
    }
    add_num_or_null(j, "readout_to_t2star", r->readout_to_t2star);
    cJSON_AddNumberToObject(j, "voxel_volume_m3", r->voxel_volume_m3);
    cJSON_AddNumberToObject(j, "total_sampling_time_s", r->total_sampling_time_s);
    cJSON_AddNumberToObject(j, "snr_factor", r->snr_factor);
    add_num_or_null(j, "relative_snr", ref_factor > 0 ? r->snr_factor / ref_factor : NAN);
    cJSON *lobes = cJSON_AddObjectToObject(j, "lobes");
    add_lobe_json(lobes, "slice_select", &r->slice_select);
    add_lobe_json(lobes, "slice_rephaser", &r->slice_rephaser);
    add_lobe_json(lobes, "readout", &r->readout);
    add_lobe_json(lobes, "prephaser", &r->prephaser);
    add_lobe_json(lobes, "phase_encode", &r->phase_encode);
    add_lobe_json(lobes, "partition_encode", &r->partition_encode);
    add_lobe_json(lobes, "spoiler", &r->spoiler);
    add_lobe_json(lobes, "crusher", &r->crusher);
    cJSON *lim = cJSON_AddArrayToObject(j, "limits");
    for (int i = 0; i < r->nlimits; i++) {
        const kw_limit *l = &r->limits[i];
        cJSON *o = cJSON_CreateObject();
        cJSON_AddStringToObject(o, "name", l->name);
        cJSON_AddNumberToObject(o, "required", l->required);
        cJSON_AddNumberToObject(o, "available", l->available);
        cJSON_AddStringToObject(o, "unit", l->unit);
        cJSON_AddNumberToObject(o, "margin", l->available - l->required);
        cJSON_AddBoolToObject(o, "ok", l->ok);
        cJSON_AddItemToArray(lim, o);
    }
    if (!r->feasible) {
        const kw_nearest *n = &r->nearest;
        cJSON *o = cJSON_AddObjectToObject(j, "nearest_feasible");
        if (n->has_bandwidth) {
            cJSON_AddNumberToObject(o, "bandwidth_hz", n->bandwidth_hz);
            cJSON_AddNumberToObject(o, "bandwidth_per_pixel_hz", n->bandwidth_per_pixel_hz);
        }
        if (n->has_matrix) {
            cJSON_AddNumberToObject(o, "matrix_x", n->matrix_x);
            cJSON_AddNumberToObject(o, "pixel_size_x_m", n->pixel_size_x_m);
        }
        if (n->has_slice) {
            cJSON_AddNumberToObject(o, p->ndim == 3 ? "slab_m" : "slice_m", n->slice_m);
            cJSON_AddNumberToObject(o, "rf_duration_s", n->rf_duration_s);
        }
        if (n->has_te)
            cJSON_AddNumberToObject(o, "te_s", n->te_s);
        if (n->has_tr)
            cJSON_AddNumberToObject(o, "tr_s", n->tr_s);
        if (n->has_interleaves)
            cJSON_AddNumberToObject(o, "interleaves", n->interleaves);
        if (n->has_combined) {
            const kw_protocol *q = &n->combined;
            cJSON *c = cJSON_AddObjectToObject(o, "combined");
            cJSON_AddNumberToObject(c, "bandwidth_hz", q->bandwidth_hz);
            cJSON_AddNumberToObject(c, "slice_m", q->slice_m);
            cJSON_AddNumberToObject(c, "rf_duration_s", q->rf_duration_s);
            if (q->te_s > 0)
                cJSON_AddNumberToObject(c, "te_s", q->te_s);
            if (q->tr_s > 0)
                cJSON_AddNumberToObject(c, "tr_s", q->tr_s);
            if (q->interleaves > 0)
                cJSON_AddNumberToObject(c, "interleaves", q->interleaves);
        }
    }
    cJSON_AddStringToObject(j, "safety_caution", KW_SAFETY_CAUTION);
    return j;
}

static void report_text(const kw_plan_report *r, double ref_factor)
{
    const kw_protocol *p = &r->protocol;
    const kw_plan_basic *b = &r->basic;
    static const char *const label[] = {"spoiled gradient echo", "spin echo", "EPI", "radial",
                                        "spiral"};
    char u1[48], u2[48], u3[48];
    printf("kweave plan: %s, %d-D\n", label[p->sequence], p->ndim);
    printf("  B0 %.4g T: Larmor frequency %.6f MHz; polarization at %.2f K %.4g (%.3f per million)\n",
           p->b0_t, b->larmor_hz / 1e6, p->temperature_k, b->polarization, b->polarization * 1e6);
    printf("Resolution\n");
    if (p->ndim == 3)
        printf("  FOV %.1f x %.1f x %.1f mm, matrix %d x %d x %d, voxel %.4f x %.4f x %.4f mm\n",
               p->fov_m[0] * 1e3, p->fov_m[1] * 1e3, p->fov_m[2] * 1e3, p->matrix[0], p->matrix[1],
               p->matrix[2], b->pixel_size_m[0] * 1e3, b->pixel_size_m[1] * 1e3,
               b->pixel_size_m[2] * 1e3);
    else
        printf("  FOV %.1f x %.1f mm, matrix %d x %d, pixel %.4f x %.4f mm, slice %.3f mm\n",
               p->fov_m[0] * 1e3, p->fov_m[1] * 1e3, p->matrix[0], p->matrix[1],
               b->pixel_size_m[0] * 1e3, b->pixel_size_m[1] * 1e3, p->slice_m * 1e3);
    printf("  delta-k %.4f x %.4f 1/m, k-max %.3f x %.3f 1/m\n", b->delta_k_per_m[0],
           b->delta_k_per_m[1], b->k_max_per_m[0], b->k_max_per_m[1]);
    printf("Readout\n");
    printf("  bandwidth %.1f Hz (%.2f Hz/pixel), dwell %.4f us, readout %.4f ms\n", b->bandwidth_hz,
           b->bandwidth_per_pixel_hz, r->dwell_s * 1e6, r->readout_duration_s * 1e3);
    if (p->sequence != KW_SEQ_SPIRAL)
        printf("  readout gradient %.4f mT/m of %.4f mT/m\n", b->readout_gradient_T_per_m * 1e3,
               p->gmax_T_per_m * 1e3);
    printf("  %s gradient %.4f mT/m (TBW %.3g over %.3f ms)\n", p->ndim == 3 ? "slab-select" : "slice-select",
           r->slice_gradient_T_per_m * 1e3, p->tbw, r->rf_duration_s * 1e3);
    if (p->sequence == KW_SEQ_EPI)
        printf("  EPI: %d shot(s), echo-train length %d, echo spacing %.4f ms, train %.3f ms, "
               "partial Fourier %.3g\n", p->shots, r->echo_train_length, r->echo_spacing_s * 1e3,
               r->echo_train_s * 1e3, p->partial_fourier);
    if (p->sequence == KW_SEQ_RADIAL)
        printf("  radial: %d spokes (Nyquist pi/2 x %d = %d)\n", r->spokes, p->matrix[0],
               r->spokes_nyquist);
    if (p->sequence == KW_SEQ_SPIRAL)
        printf("  spiral: %d interleaves, %.4f ms readout per interleaf, %zu samples each\n",
               r->interleaves, r->readout_per_interleave_s * 1e3, r->spiral.samples);
    printf("Timing\n");
    printf("  TE %.4f ms (minimum %.4f ms)%s, TR %.4f ms (minimum %.4f ms), scan %.3f s%s\n",
           r->te_s * 1e3, r->min_te_s * 1e3, p->sequence == KW_SEQ_EPI ? " effective" : "",
           r->tr_s * 1e3, r->min_tr_s * 1e3, r->scan_time_s, p->ndim == 2 ? " per slice" : "");
    printf("  lobes (raster %.0f us):\n", p->raster_s * 1e6);
    print_lobe("slice select", &r->slice_select);
    print_lobe("slice rephaser", &r->slice_rephaser);
    print_lobe("readout", &r->readout);
    print_lobe("prephaser", &r->prephaser);
    print_lobe("phase encode", &r->phase_encode);
    print_lobe("partition encode", &r->partition_encode);
    print_lobe("spoiler", &r->spoiler);
    print_lobe("crusher", &r->crusher);
    printf("Artefacts and signal\n");
    if (p->sequence == KW_SEQ_SPIRAL)
        printf("  fat-water %.1f Hz (%.1f ppm): a blur, %.2f cycles of phase by the end of the "
               "readout\n", r->fat_water_hz, KW_FAT_WATER_PPM,
               r->fat_water_hz * r->readout_per_interleave_s);
    else
        printf("  fat-water shift %.1f Hz (%.1f ppm): %.3f pixels = %.3f mm along the readout\n",
               r->fat_water_hz, KW_FAT_WATER_PPM, r->chemical_shift_pixels, r->chemical_shift_mm);
    if (p->sequence == KW_SEQ_EPI)
        printf("  EPI phase direction: %.5f pixels per Hz off-resonance; fat-water %.2f pixels = "
               "%.2f mm\n", r->distortion_pixels_per_hz, r->chemical_shift_phase_pixels,
               r->chemical_shift_phase_mm);
    if (isfinite(r->readout_to_t2star))
        printf("  acquisition per excitation / T2* = %.3f (T2* %.2f ms)\n", r->readout_to_t2star,
               p->t2star_s * 1e3);
    printf("  voxel %.4g mm^3, total sampling time %.4g s: SNR factor (voxel x sqrt(time), the "
           "usual proportionality) %.4g m^3 s^0.5", r->voxel_volume_m3 * 1e9,
           r->total_sampling_time_s, r->snr_factor);
    if (ref_factor > 0)
        printf("; relative SNR %.4f", r->snr_factor / ref_factor);
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
        for (int i = 0; i < r->nlimits; i++)
            if (!r->limits[i].ok)
                printf(" %s (required %s, available %s, off by %s);", r->limits[i].name,
                       fmt_unit(r->limits[i].required, r->limits[i].unit, u1, sizeof u1),
                       fmt_unit(r->limits[i].available, r->limits[i].unit, u2, sizeof u2),
                       fmt_unit(r->limits[i].required - r->limits[i].available, r->limits[i].unit,
                                u3, sizeof u3));
        printf("\nNearest feasible (each with the rest held):\n");
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

static int report(const kw_protocol *p, const char *json_path, const char *plot,
                  const char *kplot, double ref_factor)
{
    kw_plan_report *r = NULL;
    kw_status st = kw_plan_create(&r, p);
    if (st)
        return kw_cli_status(st, "plan");
    if (json_path) {
        cJSON *j = report_json(r, ref_factor);
        st = j ? kw_json_write(json_path, j) : kw_set_error(KW_ENOMEM, "out of memory");
        cJSON_Delete(j);
        if (st) {
            kw_plan_destroy(r);
            return kw_cli_status(st, "json");
        }
    }
    if (plot && (st = kw_plot_timing(plot, r))) {
        kw_plan_destroy(r);
        return kw_cli_status(st, "plot");
    }
    if (kplot && (st = kw_plot_kspace(kplot, r))) {
        kw_plan_destroy(r);
        return kw_cli_status(st, "kplot");
    }
    report_text(r, ref_factor);
    int feasible = r->feasible;
    kw_plan_destroy(r);
    return feasible ? KW_EXIT_OK : KW_EXIT_INFEASIBLE;
}

/* ---- the verb ----------------------------------------------------------------- */

int kw_cmd_plan(int argc, char **argv)
{
    plan_in in;
    memset(&in, 0, sizeof in);
    kw_protocol_defaults(&in.p);

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
    const char *protocol = NULL, *json = NULL, *plot = NULL, *kplot = NULL, *reference = NULL;
    const char *bw_dummy = NULL;
    kw_opt table[] = {
        {"protocol", KW_OPT_STRING, &protocol, KW_UNIT_NONE, NULL,
         "protocol file of key = value lines (options override it)"},
        {"sequence", KW_OPT_STRING, &val[K_SEQUENCE], KW_UNIT_NONE, &seen[K_SEQUENCE],
         "gre | se | epi | radial | spiral (default gre)"},
        {"fov", KW_OPT_STRING, &val[K_FOV], KW_UNIT_NONE, &seen[K_FOV],
         "field of view: 256mm, or x,y (256mm,192mm), or x,y,z (default 256mm)"},
        {"matrix", KW_OPT_STRING, &val[K_MATRIX], KW_UNIT_NONE, &seen[K_MATRIX],
         "NX, NXxNY or NXxNYxNZ; x = readout (default 256)"},
        {"bandwidth", KW_OPT_STRING, &bw_dummy, KW_UNIT_NONE, NULL,
         "receiver bandwidth across the FOV (32kHz) or per pixel (250Hz/pixel); default 250Hz/pixel"},
        {"b0", KW_OPT_STRING, &val[K_B0], KW_UNIT_NONE, &seen[K_B0], "main field (default 3T)"},
        {"gmax", KW_OPT_STRING, &val[K_GMAX], KW_UNIT_NONE, &seen[K_GMAX],
         "gradient amplitude limit (default 40mT/m)"},
        {"slew", KW_OPT_STRING, &val[K_SLEW], KW_UNIT_NONE, &seen[K_SLEW],
         "slew-rate limit (default 150T/m/s)"},
        {"raster", KW_OPT_STRING, &val[K_RASTER], KW_UNIT_NONE, &seen[K_RASTER],
         "gradient raster time (default 10us)"},
        {"temperature", KW_OPT_STRING, &val[K_TEMPERATURE], KW_UNIT_NONE, &seen[K_TEMPERATURE],
         "sample temperature for the polarization (default 310K)"},
        {"te", KW_OPT_STRING, &val[K_TE], KW_UNIT_NONE, &seen[K_TE],
         "echo time (default: the minimum)"},
        {"tr", KW_OPT_STRING, &val[K_TR], KW_UNIT_NONE, &seen[K_TR],
         "repetition time (default: the minimum)"},
        {"rf-duration", KW_OPT_STRING, &val[K_RF_DURATION], KW_UNIT_NONE, &seen[K_RF_DURATION],
         "RF pulse duration (default 2ms)"},
        {"tbw", KW_OPT_STRING, &val[K_TBW], KW_UNIT_NONE, &seen[K_TBW],
         "RF time-bandwidth product (default 4)"},
        {"slice", KW_OPT_STRING, &val[K_SLICE], KW_UNIT_NONE, &seen[K_SLICE],
         "slice thickness, 2-D (default 5mm)"},
        {"spoiler", KW_OPT_STRING, &val[K_SPOILER], KW_UNIT_NONE, &seen[K_SPOILER],
         "spoiler: cycles of phase across the slice (default 0: none)"},
        {"crusher", KW_OPT_STRING, &val[K_CRUSHER], KW_UNIT_NONE, &seen[K_CRUSHER],
         "SE crushers: cycles across the slice (default 2)"},
        {"t2star", KW_OPT_STRING, &val[K_T2STAR], KW_UNIT_NONE, &seen[K_T2STAR],
         "T2* for the readout/T2* ratio"},
        {"shots", KW_OPT_STRING, &val[K_SHOTS], KW_UNIT_NONE, &seen[K_SHOTS],
         "EPI shots (default 1)"},
        {"partial-fourier", KW_OPT_STRING, &val[K_PARTIAL_FOURIER], KW_UNIT_NONE,
         &seen[K_PARTIAL_FOURIER], "EPI phase-encode fraction, 0.5 < f <= 1 (default 1)"},
        {"interleaves", KW_OPT_STRING, &val[K_INTERLEAVES], KW_UNIT_NONE, &seen[K_INTERLEAVES],
         "spiral interleaves (default: fewest within --max-readout)"},
        {"max-readout", KW_OPT_STRING, &val[K_MAX_READOUT], KW_UNIT_NONE, &seen[K_MAX_READOUT],
         "spiral: longest readout per interleaf (default 16ms)"},
        {"spokes", KW_OPT_STRING, &val[K_SPOKES], KW_UNIT_NONE, &seen[K_SPOKES],
         "radial spokes (default: Nyquist, pi/2 x N)"},
        {"averages", KW_OPT_STRING, &val[K_AVERAGES], KW_UNIT_NONE, &seen[K_AVERAGES],
         "signal averages (default 1)"},
        {"reference", KW_OPT_STRING, &reference, KW_UNIT_NONE, NULL,
         "protocol file of a reference protocol for the relative SNR"},
        {"json", KW_OPT_STRING, &json, KW_UNIT_NONE, NULL, "write the report as JSON"},
        {"plot", KW_OPT_STRING, &plot, KW_UNIT_NONE, NULL, "timing diagram PNG"},
        {"kplot", KW_OPT_STRING, &kplot, KW_UNIT_NONE, NULL, "k-space path PNG"},
        {NULL, 0, NULL, 0, NULL, NULL}};
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

    kw_status st;
    if (protocol) {
        st = kw_protofile_read(protocol, file_key, &in);
        if (st)
            return kw_cli_status(st, "protocol");
    }
    if (nbw) { /* the command line's bandwidth replaces the file's */
        in.bw_set[0] = in.bw_set[1] = 0;
        for (int i = 0; i < nbw; i++)
            if ((st = set_bandwidth(&in, bw_cli[i])))
                return kw_cli_status(st, NULL);
    }
    for (int k = 0; k < K_COUNT; k++) {
        if (!seen[k] || k == K_BANDWIDTH)
            continue;
        if ((st = set_key(&in, k, val[k])))
            return kw_cli_status(st, NULL);
    }
    if ((st = finish_protocol(&in)))
        return kw_cli_status(st, NULL);
    double ref_factor = 0;
    if (reference) {
        plan_in ref;
        memset(&ref, 0, sizeof ref);
        kw_protocol_defaults(&ref.p);
        if ((st = kw_protofile_read(reference, file_key, &ref)))
            return kw_cli_status(st, "reference");
        if ((st = finish_protocol(&ref)))
            return kw_cli_status(st, "reference");
        kw_plan_report *rr = NULL;
        if ((st = kw_plan_create(&rr, &ref.p)))
            return kw_cli_status(st, "reference");
        ref_factor = rr->snr_factor;
        kw_plan_destroy(rr);
    }
    return report(&in.p, json, plot, kplot, ref_factor);
}
