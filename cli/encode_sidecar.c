/* encode_sidecar.c: the JSON sidecar of `kweave encode` (the file form of
 * kw_acquisition_info) and its summary on stdout. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "encode_cli.h"
#include "jsonio.h"

/* Add the name of the file `path` under `key` as the sidecar beside
 * `out` records it, or null. */
static void add_file(cJSON *js, const char *key, int given, const char *path, const char *out)
{
    if (!given) {
        cJSON_AddNullToObject(js, key);
        return;
    }
    char *rp = enc_rel_to_sidecar(path, out);
    cJSON_AddStringToObject(js, key, rp ? rp : path);
    free(rp);
}

static void add_tissues(cJSON *js, const enc_args *a, const kw_acquisition_info *in)
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
        cJSON_AddStringToObject(e, "source", t->from_caller ? "--tissue" : "kweave table");
    }
    if (a->s_tissue) {
        char *rp = enc_rel_to_sidecar(a->tissue, a->out);
        cJSON_AddStringToObject(js, "tissue_file", rp ? rp : a->tissue);
        free(rp);
    }
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

static void add_protocol(cJSON *js, const enc_args *a, const enc_files *f,
                         const kw_acquisition_info *in)
{
    static const char *const seqname[] = {"pd", "gre", "se", "ir"};
    const kw_contrast *con = &in->contrast;
    const size_t nx = in->dims[2];
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
    double fat_hz = in->fat_shift_hz, bw = in->bandwidth_hz;
    cJSON_AddNumberToObject(prot, "fat_shift_hz", fat_hz);
    if (bw > 0) {
        cJSON_AddNumberToObject(prot, "bandwidth_hz", bw);
        cJSON_AddNumberToObject(prot, "bandwidth_per_pixel_hz", bw / (double)nx);
        cJSON_AddNumberToObject(prot, "dwell_s", 1.0 / bw);
        cJSON_AddNumberToObject(prot, "readout_duration_s", in->readout_duration_s);
        cJSON_AddNumberToObject(prot, "fat_shift_pixels", fat_hz / (bw / (double)nx));
        cJSON_AddStringToObject(prot, "readout_axis", "x");
    } else {
        cJSON_AddNullToObject(prot, "bandwidth_hz");
    }
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
        char *rp = enc_rel_to_sidecar(a->protocol, a->out);
        cJSON_AddStringToObject(prot, "file", rp ? rp : a->protocol);
        free(rp);
        if (f->plan_sequence)
            cJSON_AddStringToObject(prot, "plan_sequence", f->plan_sequence);
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
    if (a->s_fmap) {
        char *rp = enc_rel_to_sidecar(a->field_map, a->out);
        cJSON_AddStringToObject(prot, "field_map", rp ? rp : a->field_map);
        free(rp);
        cJSON_AddNumberToObject(prot, "field_map_oversampling", 4);
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
}

cJSON *enc_sidecar(const enc_args *a, const enc_files *f, const kw_acquisition_info *in,
                   const char *covpath)
{
    cJSON *js = cJSON_CreateObject();
    cJSON_AddStringToObject(js, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(js, "kind", "kspace");
    cJSON_AddStringToObject(js, "layout", in->noncartesian ? "noncartesian" : "cartesian");
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
    cJSON_AddStringToObject(js, "phantom", in->phantom);
    if (in->ntissues || a->s_tissue)
        add_tissues(js, a, in);
    if (in->slices)
        add_slices(js, in);
    cJSON_AddNumberToObject(js, "coils", in->channels);
    if (a->s_snr)
        cJSON_AddNumberToObject(js, "snr", a->snr);
    else
        cJSON_AddNullToObject(js, "snr");
    cJSON_AddNumberToObject(js, "noise_sigma", in->noise_sigma);
    cJSON_AddNumberToObject(js, "seed", (double)in->seed);
    cJSON_AddStringToObject(js, "scale", "unitary");
    add_file(js, "trajectory", a->s_traj, a->trajectory, a->out);
    add_file(js, "sens", a->s_sout || a->s_sens, a->s_sout ? a->sens_out : a->sens, a->out);
    if (covpath) {
        const char *slash = strrchr(covpath, '/');
        cJSON_AddStringToObject(js, "noise_cov", slash ? slash + 1 : covpath);
    } else {
        cJSON_AddNullToObject(js, "noise_cov");
    }
    add_file(js, "pattern", a->s_pat, a->pattern, a->out);
    if (in->acceleration > 0)
        cJSON_AddNumberToObject(js, "acceleration", in->acceleration);
    else
        cJSON_AddNullToObject(js, "acceleration");
    if (in->acs_lines >= 0)
        cJSON_AddNumberToObject(js, "acs_lines", (double)in->acs_lines);
    else
        cJSON_AddNullToObject(js, "acs_lines");
    add_file(js, "times", a->s_times, a->times, a->out);
    add_protocol(js, a, f, in);
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

void enc_summary(const kw_acquisition_info *in)
{
    if (kw_cli_quiet)
        return;
    const long L = in->coil_order, lz = in->coil_order_z;
    if (in->coils > 0) {
        if (in->ndim == 3)
            printf("coil sensitivities: 3-D trigonometric series of orders %ld (x, y) and %ld (z) "
                   "(%ld terms), fit residual (relative RMS over the object):\n", L, lz,
                   (2 * L + 1) * (2 * L + 1) * (2 * lz + 1));
        else
            printf("coil sensitivities: trigonometric series of order %ld (%ld terms), fit residual "
                   "(relative RMS over the object):\n", L, (2 * L + 1) * (2 * L + 1));
        for (int c = 0; c < in->coils; c++)
            printf("  coil %d: %.3g%%\n", c, 100.0 * in->fit_residual[c]);
    }
    double bw = in->bandwidth_hz, nx = (double)in->dims[2];
    if (bw > 0) {
        printf("readout along x: dwell %.4g us, duration %.4g ms, %.4g Hz/pixel; "
               "fat shift %.3g pixels\n", 1e6 / bw, in->readout_duration_s * 1e3, bw / nx,
               in->fat_shift_hz / (bw / nx));
        printf("%s\n", KW_SAFETY_CAUTION);
    }
}
