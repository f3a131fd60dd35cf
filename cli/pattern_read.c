/* pattern_read.c: `kweave pattern --analyse / --compare` reads a pattern
 * file (.npy and its sidecar JSON), checks it and hands it to the analysis
 * (recon/kw_pattern_analysis.h). */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "arrayio.h"
#include "cli.h"
#include "npy.h"
#include "pattern_cli.h"

/* ---- reading a pattern file ---------------------------------------------------------- */

static const char *json_str(const cJSON *o, const char *k)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(o, k);
    return cJSON_IsString(it) ? it->valuestring : NULL;
}

static int json_size(const cJSON *o, const char *k, size_t *v)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(o, k);
    if (!cJSON_IsNumber(it) || !(it->valuedouble >= 1) || it->valuedouble > 1e9 ||
        it->valuedouble != floor(it->valuedouble))
        return 0;
    *v = (size_t)it->valuedouble;
    return 1;
}

/* The readout oversampling F of a radial-family trajectory: the sidecar's
 * "readout_oversampling" when present (files written before it existed
 * have F = 1: readout_samples = matrix), else readout_samples / matrix;
 * readout_samples must be F N and the first readout's samples 1/F cycle/FOV
 * apart. Returns -1 or the exit code. */
static int radial_oversampling(const cJSON *side, const kw_array *arr, kw_pattern_traj_desc *ti)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(side, "readout_oversampling");
    long f;
    if (it) {
        if (!cJSON_IsNumber(it) || it->valuedouble != floor(it->valuedouble) ||
            !(it->valuedouble >= 1 && it->valuedouble <= 4))
            return kw_cli_fail("readout_oversampling", "must be a whole number in 1..4");
        f = (long)it->valuedouble;
    } else {
        if (ti->readout % ti->n != 0 || ti->readout / ti->n > 4)
            return kw_cli_fail("readout_samples", "%zu is not F x the matrix %zu (F = 1..4)",
                               ti->readout, ti->n);
        f = (long)(ti->readout / ti->n);
    }
    if (ti->readout != (size_t)f * ti->n)
        return kw_cli_fail("readout_samples", "%zu differs from %ld x the matrix %zu",
                           ti->readout, f, ti->n);
    if (arr->dims[0] < ti->readout)
        return kw_cli_fail("readout_samples", "%zu samples per readout, the file holds %zu",
                           ti->readout, arr->dims[0]);
    /* the step along the first spoke (samples n = FN/2 and FN/2 + 1) */
    const float *k = arr->data;
    const size_t c = arr->dims[1], j = ti->readout / 2;
    double dx = (double)k[(j + 1) * c] - k[j * c], dy = (double)k[(j + 1) * c + 1] - k[j * c + 1];
    double step = sqrt(dx * dx + dy * dy);
    if (!(fabs(step * (double)f - 1.0) < 1e-3))
        return kw_cli_fail("readout_oversampling", "samples are %g cycle/FOV apart along a "
                           "readout, not 1/%ld", step, f);
    ti->oversampling = (int)f;
    return -1;
}

/* Analyse the file `path`; returns -1 on success or the exit code. */
int kw_pattern_cli_analyse_file(const char *path, kw_pattern_report *a, long psf_size)
{
    memset(a, 0, sizeof *a);
    const char *slash = strrchr(path, '/');
    snprintf(a->name, sizeof a->name, "%s", slash ? slash + 1 : path);
    kw_array arr = {0};
    kw_status st = kw_array_read(path, &arr);
    if (st)
        return kw_cli_status(st, "analyse");
    cJSON *side = NULL;
    char *sp = kw_array_sidecar_path(path);
    FILE *probe = sp ? fopen(sp, "rb") : NULL;
    if (probe) {
        fclose(probe);
        st = kw_json_read(sp, &side);
        if (st) {
            free(sp);
            kw_array_free(&arr);
            return kw_cli_status(st, "sidecar");
        }
    }
    free(sp);
    int rc = -1;
    const char *skind = side ? json_str(side, "kind") : NULL;
    const char *pk = side ? json_str(side, "pattern_kind") : NULL;
    snprintf(a->kind, sizeof a->kind, "%s", pk ? pk : "");
    st = kw_array_all_finite(&arr);
    if (st && arr.dtype != KW_U8) {
        rc = kw_cli_status(st, path);
        goto out;
    }
    if (arr.dtype == KW_C64) {
        rc = kw_cli_fail(path, "a pattern is uint8 or float32, not complex");
        goto out;
    }
    int is_traj = skind && strcmp(skind, "trajectory") == 0;
    if (!skind && arr.dtype == KW_F32 && arr.ndim == 2 && (arr.dims[1] == 2 || arr.dims[1] == 3)) {
        const float *v = arr.data;
        for (size_t i = 0; i < kw_array_count(&arr); i++)
            if (v[i] < 0)
                is_traj = 1;
    }
    if (is_traj) {
        if (arr.dtype != KW_F32 || arr.ndim != 2 || (arr.dims[1] != 2 && arr.dims[1] != 3) ||
            arr.dims[0] < 2) {
            rc = kw_cli_fail(path, "a trajectory must be float32 of shape (samples, 2 or 3)");
            goto out;
        }
        kw_pattern_traj_desc ti = {0};
        const cJSON *mat = side ? cJSON_GetObjectItemCaseSensitive(side, "matrix") : NULL;
        if (!side || !cJSON_IsArray(mat) || !cJSON_IsNumber(cJSON_GetArrayItem(mat, 0)) ||
            !json_size(side, "readout_samples", &ti.readout)) {
            rc = kw_cli_fail(path, "a trajectory needs its sidecar JSON with \"matrix\" "
                                   "and \"readout_samples\"");
            goto out;
        }
        double nn = cJSON_GetArrayItem(mat, 0)->valuedouble;
        if (!(nn >= 2 && nn <= 4096 && nn == floor(nn))) {
            rc = kw_cli_fail("matrix", "sidecar matrix %g outside 2..4096", nn);
            goto out;
        }
        ti.n = (size_t)nn;
        const cJSON *cols = cJSON_GetObjectItemCaseSensitive(side, "shape");
        if (cJSON_IsArray(cols) && cJSON_GetArraySize(cols) == 2 &&
            (cJSON_GetArrayItem(cols, 0)->valuedouble != (double)arr.dims[0] ||
             cJSON_GetArrayItem(cols, 1)->valuedouble != (double)arr.dims[1])) {
            rc = kw_cli_fail(path, "shape (%zu, %zu) differs from the sidecar's", arr.dims[0],
                             arr.dims[1]);
            goto out;
        }
        ti.radial = pk && (strcmp(pk, "radial") == 0 || strcmp(pk, "golden") == 0 ||
                           strcmp(pk, "stack-of-stars") == 0);
        ti.weights = ti.radial                             ? KW_PATTERN_WEIGHTS_RADIAL
                     : (pk && strcmp(pk, "spiral") == 0) ? KW_PATTERN_WEIGHTS_PIPE
                                                         : KW_PATTERN_WEIGHTS_NONE;
        if (ti.radial) {
            rc = radial_oversampling(side, &arr, &ti);
            if (rc >= 0)
                goto out;
        }
        ti.psf_size = psf_size > 0 ? (size_t)psf_size : 0;
        st = kw_pattern_analyse_trajectory(&a->r, arr.data, arr.dims[0], (int)arr.dims[1], &ti,
                                           kw_cli_progress, NULL);
        kw_cli_progress_done();
        if (st)
            rc = kw_cli_status(st, path);
        goto out;
    }
    if (skind && strcmp(skind, "mask") != 0) {
        rc = kw_cli_fail(path, "sidecar kind \"%s\" is not a mask or trajectory", skind);
        goto out;
    }
    if (arr.ndim != 2 || arr.dims[0] < 1 || arr.dims[1] < 1) {
        rc = kw_cli_fail(path, "a mask must be 2-D: (ny, nx) or (nz, ny), got %d dimensions",
                         arr.ndim);
        goto out;
    }
    const size_t rows = arr.dims[0], cols = arr.dims[1], n = rows * cols;
    float *w = kw_alloc_n(n, sizeof *w);
    if (!w) {
        rc = kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory"), path);
        goto out;
    }
    for (size_t i = 0; i < n; i++) {
        float v = arr.dtype == KW_U8 ? (float)((uint8_t *)arr.data)[i] : ((float *)arr.data)[i];
        if (v < 0) {
            kw_free(w);
            rc = kw_cli_fail(path, "negative weight %g at index %zu", v, i);
            goto out;
        }
        w[i] = arr.dtype == KW_U8 ? (v > 0) : v;
    }
    const char *plane = side ? json_str(side, "plane") : NULL;
    int is_plane = 0;
    if (plane)
        is_plane = strcmp(plane, "kz-ky") == 0;
    else { /* rows constant along x: ky lines */
        for (size_t y = 0; y < rows && !is_plane; y++)
            for (size_t x = 1; x < cols; x++)
                if (w[y * cols + x] != w[y * cols]) {
                    is_plane = 1;
                    break;
                }
    }
    st = kw_pattern_analyse_mask(&a->r, w, rows, cols, is_plane);
    kw_free(w);
    if (st)
        rc = kw_cli_status(st, path);
out:
    cJSON_Delete(side);
    kw_array_free(&arr);
    return rc;
}

