/* plan_json.c: the planner's report as JSON (kw_plan_report_json() in
 * kw_plan_input.h), the text `kweave plan --json` writes. Key order and
 * number formatting are part of the contract (tests/golden). */
#include <math.h>
#include <string.h>

#include "json_build.h"
#include "kw_plan_input.h"
#include "plan_input_int.h"
#include "report_names.h"

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

cJSON *kw_plan_report_cjson(const kw_plan_report *r, double ref_factor)
{
    const kw_protocol *p = &r->protocol;
    const kw_plan_basic *b = &r->basic;
    cJSON *j = cJSON_CreateObject();
    cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(j, "sequence", kw_protocol_sequence_name(p->sequence));
    cJSON_AddBoolToObject(j, "feasible", r->feasible);
    cJSON_AddNumberToObject(j, "dimensions", p->ndim);
    cJSON_AddNumberToObject(j, "b0_t", p->b0_t);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_LARMOR), b->larmor_hz);
    kw_json_add_vec(j, RN_KEY(PLAN_FOV), p->fov_m, p->ndim);
    double m[3] = {p->matrix[0], p->matrix[1], p->matrix[2]};
    kw_json_add_vec(j, RN_KEY(PLAN_MATRIX), m, p->ndim);
    kw_json_add_vec(j, RN_KEY(PLAN_PIXEL), b->pixel_size_m, p->ndim);
    kw_json_add_vec(j, RN_KEY(PLAN_DELTA_K), b->delta_k_per_m, p->ndim);
    kw_json_add_vec(j, RN_KEY(PLAN_K_MAX), b->k_max_per_m, p->ndim);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_SLICE), r->slice_m);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_DWELL), r->dwell_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_READOUT), r->readout_duration_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_BANDWIDTH), b->bandwidth_hz);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_BANDWIDTH_PIXEL), b->bandwidth_per_pixel_hz);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_READOUT_GRADIENT), b->readout_gradient_T_per_m);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_SLICE_GRADIENT), r->slice_gradient_T_per_m);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_RF_DURATION), r->rf_duration_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_TBW), p->tbw);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_GMAX), p->gmax_T_per_m);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_SLEW), p->slew_T_per_m_per_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_RASTER), p->raster_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_TEMPERATURE), p->temperature_k);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_POLARIZATION), b->polarization);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_MIN_TE), r->min_te_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_MIN_TR), r->min_tr_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_TE), r->te_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_TR), r->tr_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_SCAN), r->scan_time_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_FAT_WATER), r->fat_water_hz);
    kw_json_add_number_or_null(j, RN_KEY(PLAN_SHIFT_PIXELS), r->chemical_shift_pixels);
    kw_json_add_number_or_null(j, RN_KEY(PLAN_SHIFT_MM), r->chemical_shift_mm);
    if (p->sequence == KW_SEQ_EPI) {
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_ECHO_SPACING), r->echo_spacing_s);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_ECHO_TRAIN_LENGTH), r->echo_train_length);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_ECHO_TRAIN), r->echo_train_s);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_EFFECTIVE_TE), r->te_s);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_SHOTS), p->shots);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_PARTIAL_FOURIER), p->partial_fourier);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_DISTORTION), r->distortion_pixels_per_hz);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_SHIFT_PHASE_PIXELS), r->chemical_shift_phase_pixels);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_SHIFT_PHASE_MM), r->chemical_shift_phase_mm);
    }
    if (p->sequence == KW_SEQ_RADIAL) {
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_SPOKES_NYQUIST), r->spokes_nyquist);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_SPOKES), r->spokes);
    }
    if (p->sequence == KW_SEQ_SPIRAL) {
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_INTERLEAVES), r->interleaves);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_READOUT_INTERLEAF), r->readout_per_interleave_s);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_SAMPLES_INTERLEAF), (double)r->spiral.samples);
        cJSON_AddNumberToObject(j, RN_KEY(PLAN_FAT_CYCLES),
                                r->fat_water_hz * r->readout_per_interleave_s);
    }
    kw_json_add_number_or_null(j, RN_KEY(PLAN_T2STAR_RATIO), r->readout_to_t2star);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_VOXEL), r->voxel_volume_m3);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_SAMPLING_TIME), r->total_sampling_time_s);
    cJSON_AddNumberToObject(j, RN_KEY(PLAN_SNR_FACTOR), r->snr_factor);
    kw_json_add_number_or_null(j, RN_KEY(PLAN_RELATIVE_SNR), ref_factor > 0 ? r->snr_factor / ref_factor : NAN);
    cJSON *lobes = cJSON_AddObjectToObject(j, "lobes");
    add_lobe_json(lobes, RN_KEY(LOBE_SLICE_SELECT), &r->slice_select);
    add_lobe_json(lobes, RN_KEY(LOBE_SLICE_REPHASER), &r->slice_rephaser);
    add_lobe_json(lobes, RN_KEY(LOBE_READOUT), &r->readout);
    add_lobe_json(lobes, RN_KEY(LOBE_PREPHASER), &r->prephaser);
    add_lobe_json(lobes, RN_KEY(LOBE_PHASE_ENCODE), &r->phase_encode);
    add_lobe_json(lobes, RN_KEY(LOBE_PARTITION_ENCODE), &r->partition_encode);
    add_lobe_json(lobes, RN_KEY(LOBE_SPOILER), &r->spoiler);
    add_lobe_json(lobes, RN_KEY(LOBE_CRUSHER), &r->crusher);
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

kw_status kw_plan_report_json(const kw_plan_report *r, double ref_snr_factor, char **json)
{
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL pointer for the result");
    *json = NULL;
    KW_FAIL_PARAM(!r, KW_EINVAL, "report", "NULL report");
    return kw_json_text(kw_plan_report_cjson(r, ref_snr_factor), json);
}
