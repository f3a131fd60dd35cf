/* encode_sidecar.c: the JSON sidecar of `kweave encode`: the library's
 * (kw_acquisition_info_json(), libencode/acquire_json.h) with the names of
 * the files the command read and wrote at their places; and its summary on
 * stdout. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "encode_cli.h"
#include "jsonio.h"

#include "acquire_json.h"

/* What the slots of the sidecar need (acquire_json.h). */
typedef struct side_ctx {
    const enc_args *a;
    const enc_files *f;
    const char *covpath;
} side_ctx;

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

/* The command's keys: the files it read and wrote. */
static int side_slot(cJSON *js, const char *slot, void *user)
{
    const side_ctx *c = user;
    const enc_args *a = c->a;
    if (strcmp(slot, "tissue_source") == 0) {
        cJSON_AddStringToObject(js, "source", "--tissue");
    } else if (strcmp(slot, "tissue_file") == 0) {
        if (a->s_tissue)
            add_file(js, "tissue_file", 1, a->tissue, enc_sidecar_anchor(a));
    } else if (strcmp(slot, "trajectory") == 0) {
        add_file(js, "trajectory", a->s_traj, a->trajectory, enc_sidecar_anchor(a));
    } else if (strcmp(slot, "sens") == 0) {
        add_file(js, "sens", a->s_sout || a->s_sens, a->s_sout ? a->sens_out : a->sens, enc_sidecar_anchor(a));
    } else if (strcmp(slot, "noise_cov") == 0) {
        const char *slash = c->covpath ? strrchr(c->covpath, '/') : NULL;
        if (c->covpath)
            cJSON_AddStringToObject(js, "noise_cov", slash ? slash + 1 : c->covpath);
        else
            cJSON_AddNullToObject(js, "noise_cov");
    } else if (strcmp(slot, "pattern") == 0) {
        add_file(js, "pattern", a->s_pat, a->pattern, enc_sidecar_anchor(a));
    } else if (strcmp(slot, "times") == 0) {
        add_file(js, "times", a->s_times, a->times, enc_sidecar_anchor(a));
    } else if (strcmp(slot, "protocol_file") == 0) {
        add_file(js, "file", 1, a->protocol, enc_sidecar_anchor(a));
        if (c->f->plan_sequence)
            cJSON_AddStringToObject(js, "plan_sequence", c->f->plan_sequence);
    } else if (strcmp(slot, "field_map") == 0) {
        add_file(js, "field_map", 1, a->field_map, enc_sidecar_anchor(a));
    } else {
        return 0;
    }
    return 1;
}

cJSON *enc_sidecar(const enc_args *a, const enc_files *f, const kw_acquisition_info *in,
                   const char *covpath)
{
    side_ctx c = {a, f, covpath};
    return kw_acquisition_json_build(in, side_slot, &c);
}

const char *enc_sidecar_anchor(const enc_args *a)
{
    return a->s_sidecar ? a->sidecar : a->out;
}

void enc_summary(FILE *f, const kw_acquisition_info *in)
{
    if (kw_cli_quiet)
        return;
    const long L = in->coil_order, lz = in->coil_order_z;
    if (in->coils > 0) {
        if (in->ndim == 3)
            fprintf(f, "coil sensitivities: 3-D trigonometric series of orders %ld (x, y) and %ld (z) "
                   "(%ld terms), fit residual (relative RMS over the object):\n", L, lz,
                   (2 * L + 1) * (2 * L + 1) * (2 * lz + 1));
        else
            fprintf(f, "coil sensitivities: trigonometric series of order %ld (%ld terms), fit residual "
                   "(relative RMS over the object):\n", L, (2 * L + 1) * (2 * L + 1));
        for (int c = 0; c < in->coils; c++) {
            fprintf(f, "  coil %d: %.3g%%", c, 100.0 * in->fit_residual[c]);
            if (in->fit_max_error)
                fprintf(f, ", largest pointwise misfit %.3g%%", 100.0 * in->fit_max_error[c]);
            fputc('\n', f);
        }
        if (in->fit_max_error && in->coil_tolerance > 0)
            fprintf(f, "  (order chosen to keep the pointwise misfit within %.3g%% where a coil is "
                       ">= 10%% of its peak)\n", 100.0 * in->coil_tolerance);
    }
    double bw = in->bandwidth_hz, nx = (double)in->dims[2];
    if (bw > 0) {
        fprintf(f, "readout along x: dwell %.4g us, duration %.4g ms, %.4g Hz/pixel; "
               "fat shift %.3g pixels\n", 1e6 / bw, in->readout_duration_s * 1e3, bw / nx,
               in->fat_shift_hz / (bw / nx));
        fprintf(f, "%s\n", KW_SAFETY_CAUTION);
    }
}
