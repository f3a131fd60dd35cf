/* pattern_json.c: the sidecar of a pattern (mask or trajectory) as JSON:
 * kw_pattern_info_json() and the builder `kweave pattern` writes its
 * sidecars with (pattern_json.h). */
#include <math.h>

#include "json_build.h"
#include "pattern_internal.h"
#include "pattern_json.h"

#define add_num kw_json_add_number_or_null

static cJSON *sidecar_begin(const kw_pattern *p, const char *kind, const char *layout)
{
    cJSON *j = cJSON_CreateObject();
    if (!j)
        return NULL;
    cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(j, "kind", kind);
    cJSON_AddStringToObject(j, "layout", layout);
    cJSON_AddStringToObject(j, "pattern_kind", kw_pattern_kind_name(p->o.kind));
    return j;
}

static cJSON *mask_json(const kw_pattern *p)
{
    const kw_pattern_options *o = &p->o;
    const kw_pattern_info *in = &p->info;
    const int plane = in->plane;
    const size_t nx = o->dims[o->ndim - 1], ny = in->density_shape[1],
                 nz = in->density_shape[0];
    cJSON *j = sidecar_begin(p, "mask", "cartesian");
    if (!j)
        return NULL;
    cJSON_AddStringToObject(j, "plane", plane ? "kz-ky" : "ky-kx");
    double sh[2] = {(double)in->shape[0], (double)in->shape[1]};
    kw_json_add_vec(j, "shape", sh, 2);
    double mt[3] = {(double)nx, (double)ny, (double)nz};
    kw_json_add_vec(j, "matrix", mt, plane ? 3 : 2);
    add_num(j, "acceleration", in->acceleration);
    kw_json_add_vec(j, "accel_requested", in->accel_requested, plane ? 2 : 1);
    add_num(j, "acs_lines", in->acs_lines);
    double ab[2] = {(double)in->acs_requested[0], (double)in->acs_requested[1]};
    kw_json_add_vec(j, "acs_requested", ab, plane ? 2 : 1);
    add_num(j, "fraction", o->fraction);
    cJSON_AddBoolToObject(j, "ellipse", o->ellipse);
    if (o->kind == KW_PATTERN_RANDOM || o->kind == KW_PATTERN_POISSON)
        add_num(j, "density_power", o->power);
    if (o->kind == KW_PATTERN_LATTICE)
        add_num(j, "shift", (double)o->shift);
    add_num(j, "seed", (double)o->seed);
    add_num(j, "sampled_points", (double)in->sampled_points);
    return j;
}

static void radial_json(cJSON *j, const kw_pattern *p)
{
    const kw_pattern_info *in = &p->info;
    const size_t nx = p->o.dims[p->o.ndim - 1];
    double mt[3] = {(double)nx, (double)nx, (double)in->partitions};
    kw_json_add_vec(j, "matrix", mt, (int)in->shape[1]);
    add_num(j, "spokes", (double)in->spokes);
    add_num(j, "partitions", (double)in->partitions);
    add_num(j, "readout_samples", (double)in->readout_samples);
    add_num(j, "readout_oversampling", in->oversampling);
    add_num(j, "readouts", (double)in->readouts);
    add_num(j, "nyquist_spokes", (double)in->nyquist_spokes);
    add_num(j, "acceleration", in->acceleration);
    add_num(j, "angle_increment_deg", in->angle_increment_deg);
    if (in->tiny >= 1)
        add_num(j, "tiny_golden_order", in->tiny);
    else
        cJSON_AddNullToObject(j, "tiny_golden_order");
    add_num(j, "dwell_s", in->dwell_s); /* ADC: between samples */
    add_num(j, "dwell_per_pixel_s", in->dwell_per_pixel_s);
    add_num(j, "readout_duration_s", in->readout_duration_s);
    add_num(j, "te_s", in->te_s);
}

static void gradient_json(cJSON *j, const kw_pattern *p, kw_json_slot_fn fn, void *user)
{
    const kw_pattern_info *in = &p->info;
    const int spiral = p->o.kind == KW_PATTERN_SPIRAL;
    double mt[2] = {(double)p->o.dims[1], (double)p->o.dims[0]};
    kw_json_add_vec(j, "matrix", mt, 2);
    double fv[2] = {in->fov_m, in->fov_m};
    kw_json_add_vec(j, "fov_m", fv, 2);
    add_num(j, "readout_samples", (double)in->readout_samples);
    add_num(j, "readouts", (double)in->readouts);
    if (spiral) {
        add_num(j, "interleaves", in->interleaves);
        add_num(j, "readout_s", in->spiral_readout_s);
        add_num(j, "gmax_design_T_per_m", in->gmax_design);
        add_num(j, "slew_design_T_per_m_per_s", in->slew_design);
    } else {
        add_num(j, "shots", in->shots);
        add_num(j, "fraction", in->epi_fraction);
        add_num(j, "echo_spacing_s", in->echo_spacing_s);
        add_num(j, "train_s", in->train_s);
        add_num(j, "center_time_s", in->center_time_s);
    }
    add_num(j, "dwell_s", in->dwell_s);
    add_num(j, "gmax_T_per_m", in->gmax);
    add_num(j, "slew_T_per_m_per_s", in->slew);
    add_num(j, "raster_s", in->raster);
    add_num(j, "te_s", in->te_s); /* null without te_s */
    /* the times file here and again before "seed": the command's files have
     * always carried it twice */
    kw_json_slot(fn, user, j, "times");
    cJSON_AddStringToObject(j, "times_origin", in->times_origin);
}

static cJSON *traj_json(const kw_pattern *p, kw_json_slot_fn fn, void *user)
{
    static const char *const columns[3] = {"kx", "ky", "kz"};
    const kw_pattern_info *in = &p->info;
    cJSON *j = sidecar_begin(p, "trajectory", "noncartesian");
    if (!j)
        return NULL;
    double sh[2] = {(double)in->shape[0], (double)in->shape[1]};
    kw_json_add_vec(j, "shape", sh, 2);
    cJSON *cols = cJSON_AddArrayToObject(j, "columns");
    for (size_t i = 0; i < in->shape[1] && i < 3; i++)
        cJSON_AddItemToArray(cols, cJSON_CreateString(columns[i]));
    cJSON_AddStringToObject(j, "units", "cycles/FOV");
    if (p->o.kind == KW_PATTERN_SPIRAL || p->o.kind == KW_PATTERN_EPI)
        gradient_json(j, p, fn, user);
    else
        radial_json(j, p);
    kw_json_slot(fn, user, j, "times_end");
    cJSON_AddNullToObject(j, "seed");
    return j;
}

cJSON *kw_pattern_json_build(const kw_pattern *p, kw_json_slot_fn fn, void *user)
{
    return p->info.is_mask ? mask_json(p) : traj_json(p, fn, user);
}

kw_status kw_pattern_info_json(const kw_pattern *p, char **json)
{
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL output pointer");
    *json = NULL;
    KW_FAIL_IF(!p, KW_EINVAL, "pattern: NULL object");
    return kw_json_text(kw_pattern_json_build(p, NULL, NULL), json);
}
