/* acquire_json.c: the sidecar of an acquisition (kw_acquisition_info) as
 * JSON: kw_acquisition_info_json() and the builder `kweave encode` writes
 * its sidecar with (acquire_json.h). */
#include <math.h>
#include <string.h>

#include "acquire_json.h"
#include "json_build.h"
#include "kw_tissue.h"

static void add_tissues(cJSON *js, const kw_acquisition_info *in, kw_json_slot_fn fn, void *user)
{
    cJSON *tj = cJSON_AddObjectToObject(js, "tissues");
    for (int i = 0; i < in->ntissues; i++) {
        const kw_acquisition_tissue *t = &in->tissues[i];
        const kw_tissue *tt = kw_tissue_get(t->id);
        cJSON *e = cJSON_AddObjectToObject(tj, tt->name);
        cJSON_AddStringToObject(e, "species", tt->species == KW_SPECIES_FAT ? "fat" : "water");
        cJSON_AddNumberToObject(e, "pd", t->values.pd);
        cJSON_AddNumberToObject(e, "t1_s", t->values.t1_s);
        cJSON_AddNumberToObject(e, "t2_s", t->values.t2_s);
        cJSON_AddNumberToObject(e, "t2star_s", t->values.t2s_s);
        if (!t->from_caller)
            cJSON_AddStringToObject(e, "source", "kweave table");
        else if (!kw_json_slot(fn, user, e, "tissue_source"))
            cJSON_AddStringToObject(e, "source", "caller");
    }
    kw_json_slot(fn, user, js, "tissue_file");
}

static void add_slices(cJSON *js, const kw_acquisition_info *in)
{
    cJSON *so = cJSON_AddObjectToObject(js, "slices");
    cJSON_AddNumberToObject(so, "count", in->slices);
    cJSON_AddNumberToObject(so, "thickness_m", in->slice_thickness_m);
    cJSON_AddNumberToObject(so, "gap_m", in->slice_gap_m);
    kw_json_add_vec(so, "centres_m", in->slice_centres_m, in->slices);
    cJSON_AddStringToObject(so, "profile", "rectangular");
    cJSON_AddNumberToObject(so, "gauss_legendre_points", (double)in->slice_points);
    cJSON_AddStringToObject(so, "coil_maps",
                            in->maps_per_slice ? "per slice: the loops' field in the plane of its centre"
                                               : "the same 2-D maps in every slice");
}

static void add_readout(cJSON *prot, const kw_acquisition_info *in)
{
    const double fat_hz = in->fat_shift_hz, bw = in->bandwidth_hz, nx = (double)in->dims[2];
    cJSON_AddNumberToObject(prot, "fat_shift_hz", fat_hz);
    if (bw > 0) {
        cJSON_AddNumberToObject(prot, "bandwidth_hz", bw);
        cJSON_AddNumberToObject(prot, "bandwidth_per_pixel_hz", bw / nx);
        cJSON_AddNumberToObject(prot, "dwell_s", 1.0 / bw);
        cJSON_AddNumberToObject(prot, "readout_duration_s", in->readout_duration_s);
        cJSON_AddNumberToObject(prot, "fat_shift_pixels", fat_hz / (bw / nx));
        cJSON_AddStringToObject(prot, "readout_axis", "x");
    } else {
        cJSON_AddNullToObject(prot, "bandwidth_hz");
    }
}

static void add_protocol(cJSON *js, const kw_acquisition_info *in, kw_json_slot_fn fn, void *user)
{
    static const char *const seqname[] = {"pd", "gre", "se", "ir"};
    const kw_contrast *con = &in->contrast;
    cJSON *prot = cJSON_AddObjectToObject(js, "protocol");
    cJSON_AddStringToObject(prot, "sequence", seqname[con->seq]);
    cJSON_AddNumberToObject(prot, "b0_t", con->b0_t);
    cJSON_AddNumberToObject(prot, "te_s", con->te_s);
    if (con->tr_s > 0)
        cJSON_AddNumberToObject(prot, "tr_s", con->tr_s);
    if (con->seq == KW_CONTRAST_IR)
        cJSON_AddNumberToObject(prot, "ti_s", con->ti_s);
    if (con->seq == KW_CONTRAST_GRE)
        cJSON_AddNumberToObject(prot, "flip_deg", con->flip_rad * 180.0 / KW_PI);
    add_readout(prot, in);
    cJSON_AddNumberToObject(prot, "df_hz", in->df_hz);
    if (in->field_gradient_ndim) {
        /* x first, as the option is written */
        cJSON *fg = cJSON_AddArrayToObject(prot, "field_gradient_T_per_m");
        cJSON *fh = cJSON_AddArrayToObject(prot, "field_gradient_hz_per_fov");
        for (int d = 0; d < in->ndim; d++) {
            cJSON_AddItemToArray(fg, cJSON_CreateNumber(in->field_gradient_t_per_m[2 - d]));
            cJSON_AddItemToArray(fh, cJSON_CreateNumber(in->field_gradient_hz_per_fov[2 - d]));
        }
    }
    if (in->protocol) {
        kw_json_slot(fn, user, prot, "protocol_file");
        cJSON_AddNumberToObject(prot, "min_te_s", in->min_te_s);
        cJSON_AddBoolToObject(prot, "feasible", in->feasible == 1);
        if (in->epi) {
            cJSON_AddNumberToObject(prot, "echo_spacing_s", in->echo_spacing_s);
            cJSON_AddNumberToObject(prot, "shots", in->shots);
            cJSON_AddNumberToObject(prot, "partial_fourier", in->partial_fourier);
            cJSON_AddNumberToObject(prot, "first_row", in->first_row);
            cJSON_AddNumberToObject(prot, "rows_acquired", (double)in->rows_acquired);
            cJSON_AddNumberToObject(prot, "distortion_pixels_per_hz", in->distortion_pixels_per_hz);
        }
    }
    if (in->field_map) {
        kw_json_slot(fn, user, prot, "field_map");
        cJSON_AddNumberToObject(prot, "field_map_oversampling", in->field_map_oversampling);
        cJSON_AddNumberToObject(prot, "field_map_segments", in->field_map_segments);
        cJSON_AddNumberToObject(prot, "field_map_interp_error", in->field_map_interp_error);
    }
}

static void add_coils(cJSON *js, const kw_acquisition_info *in)
{
    cJSON *co = cJSON_AddObjectToObject(js, "coil_model");
    cJSON_AddStringToObject(co, "kind", in->coil_ring ? "loop-ring" : "maps");
    if (in->coil_ring) {
        cJSON_AddNumberToObject(co, "radius_m", in->coil_radius_m);
        cJSON_AddNumberToObject(co, "distance_m", in->coil_distance_m);
        cJSON_AddNumberToObject(co, "rings", in->coil_rings == 2 ? 2 : 1);
        cJSON_AddNumberToObject(co, "loops_per_ring", (double)in->loops_per_ring);
        if (in->coil_rings == 2)
            cJSON_AddNumberToObject(co, "ring_gap_m", in->coil_ring_gap_m);
    }
    cJSON_AddNumberToObject(co, "series_order", (double)in->coil_order);
    if (in->ndim == 3)
        cJSON_AddNumberToObject(co, "order_z", (double)in->coil_order_z);
    cJSON_AddNumberToObject(co, "series_period_fov", in->coil_period);
    kw_json_add_vec(co, "fit_residual", in->fit_residual, in->coils);
    kw_json_add_vec(co, "fit_max_error", in->fit_max_error, in->coils);
    kw_json_add_number_or_null(co, "fit_tolerance",
                               in->coil_tolerance > 0 ? in->coil_tolerance : NAN);
}

static void add_grid(cJSON *js, const kw_acquisition_info *in)
{
    double shp[4], mat[3], fv[3];
    for (int i = 0; i < in->kspace_ndim; i++)
        shp[i] = (double)in->kspace_dims[i];
    kw_json_add_vec(js, "shape", shp, in->kspace_ndim);
    for (int i = 0; i < in->ndim; i++) {
        mat[i] = (double)in->dims[2 - i];
        fv[i] = in->fov_m[2 - i];
    }
    kw_json_add_vec(js, "matrix", mat, in->ndim);
    kw_json_add_vec(js, "fov_m", fv, in->ndim);
}

cJSON *kw_acquisition_json_build(const kw_acquisition_info *in, kw_json_slot_fn fn, void *user)
{
    cJSON *js = cJSON_CreateObject();
    if (!js)
        return NULL;
    cJSON_AddStringToObject(js, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(js, "kind", "kspace");
    cJSON_AddStringToObject(js, "layout", in->noncartesian ? "noncartesian" : "cartesian");
    add_grid(js, in);
    cJSON_AddStringToObject(js, "phantom", in->phantom);
    if (in->ntissues || in->tissue_values_given)
        add_tissues(js, in, fn, user);
    if (in->slices)
        add_slices(js, in);
    cJSON_AddNumberToObject(js, "coils", in->channels);
    kw_json_add_number_or_null(js, "snr", in->snr > 0 ? in->snr : NAN);
    cJSON_AddNumberToObject(js, "noise_sigma", in->noise_sigma);
    cJSON_AddNumberToObject(js, "seed", (double)in->seed);
    cJSON_AddStringToObject(js, "scale", "unitary");
    kw_json_slot(fn, user, js, "trajectory");
    kw_json_slot(fn, user, js, "sens");
    kw_json_slot(fn, user, js, "noise_cov");
    kw_json_slot(fn, user, js, "pattern");
    kw_json_add_number_or_null(js, "acceleration", in->acceleration > 0 ? in->acceleration : NAN);
    if (in->acs_lines >= 0)
        cJSON_AddNumberToObject(js, "acs_lines", (double)in->acs_lines);
    else
        cJSON_AddNullToObject(js, "acs_lines");
    kw_json_slot(fn, user, js, "times");
    add_protocol(js, in, fn, user);
    if (in->coils > 0)
        add_coils(js, in);
    cJSON_AddStringToObject(js, "noise_definition",
                            "complex Gaussian, E|n|^2 = noise_sigma^2 per sample "
                            "(real and imaginary parts noise_sigma/sqrt(2) each); "
                            "coils: covariance in noise_cov");
    cJSON_AddStringToObject(js, "snr_definition",
                            "mean |truth| over pixels >= 10% of max |truth|, divided "
                            "by noise_sigma (image domain, unitary DFT)");
    return js;
}

kw_status kw_acquisition_info_json(const kw_acquisition *a, char **json)
{
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL output pointer");
    *json = NULL;
    KW_FAIL_IF(!a, KW_EINVAL, "acquisition: NULL object");
    return kw_json_text(kw_acquisition_json_build(kw_acquisition_info_get(a), NULL, NULL), json);
}
