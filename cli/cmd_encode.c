/* cmd_encode.c: `kweave encode`: simulate an acquisition of an analytic
 * phantom -> k-space .npy + JSON sidecar (+ truth image). Definitions of
 * SNR, noise and the k-space convention: docs/simulator.md. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "jsonio.h"
#include "kw_phantom.h"
#include "kw_simulate.h"
#include "kw_tissue.h"
#include "npy.h"

#define MAX_EDGE 8192

static const char *usage =
    "usage: kweave encode --phantom NAME --matrix NX[xNY[xNZ]] --fov L[,LY[,LZ]]\n"
    "                     --out ks.npy [--truth truth.npy] [--snr X --seed N]\n"
    "Simulate the acquisition of an analytic phantom with exact k-space (the\n"
    "Fourier transform of every shape evaluated at every sample). Phantoms:\n"
    "shepp-logan, shepp-logan-modified, weave, weave3d. See docs/simulator.md.";

/* "256" / "256x192" / "64x64x16" -> n[0..2]; returns the number of values. */
static int parse_matrix(const char *s, size_t n[3])
{
    int k = 0;
    const char *p = s;
    while (k < 3) {
        char *end;
        errno = 0;
        if (!(*p >= '0' && *p <= '9'))
            return -1;
        long v = strtol(p, &end, 10);
        if (errno || end == p || v < 1 || v > MAX_EDGE)
            return -1;
        n[k++] = (size_t)v;
        if (*end == '\0')
            break;
        if (*end != 'x' && *end != 'X')
            return -1;
        p = end + 1;
    }
    if (*p && k == 3 && strpbrk(p, "xX"))
        return -1;
    return k;
}

/* "256mm" / "256mm,200mm[,120mm]" -> metres. */
static int parse_fov(const char *s, double f[3], char *why, size_t wl)
{
    char buf[256];
    snprintf(buf, sizeof buf, "%s", s);
    int k = 0;
    char *save = NULL;
    for (char *t = strtok_r(buf, ",", &save); t; t = strtok_r(NULL, ",", &save)) {
        if (k == 3) {
            snprintf(why, wl, "at most three lengths");
            return -1;
        }
        if (kw_unit_parse(t, KW_UNIT_LENGTH, &f[k], why, wl))
            return -1;
        if (!(f[k] > 0)) {
            snprintf(why, wl, "must be positive (got '%s')", t);
            return -1;
        }
        k++;
    }
    if (k == 0) {
        snprintf(why, wl, "empty");
        return -1;
    }
    return k;
}

/* Mean |truth| over the object: pixels at >= 10% of the maximum. */
static double object_mean(const float *img, size_t n)
{
    double mx = 0;
    for (size_t i = 0; i < n; i++)
        if (fabs(img[i]) > mx)
            mx = fabs(img[i]);
    double s = 0;
    size_t c = 0;
    for (size_t i = 0; i < n; i++)
        if (fabs(img[i]) >= 0.1 * mx && mx > 0) {
            s += fabs(img[i]);
            c++;
        }
    return c ? s / (double)c : 0.0;
}

int kw_cmd_encode(int argc, char **argv)
{
    const char *phantom_name = NULL, *matrix_s = NULL, *fov_s = NULL;
    const char *out_path = NULL, *truth_path = NULL;
    double snr = 0;
    long seed = 0;
    int snr_seen = 0, seed_seen = 0, ph_seen = 0, mx_seen = 0, fov_seen = 0, out_seen = 0,
        tr_seen = 0;
    const kw_opt table[] = {
        {"phantom", KW_OPT_STRING, &phantom_name, 0, &ph_seen,
         "shepp-logan | shepp-logan-modified | weave | weave3d"},
        {"matrix", KW_OPT_STRING, &matrix_s, 0, &mx_seen, "NX[xNY[xNZ]] samples (e.g. 256x256)"},
        {"fov", KW_OPT_STRING, &fov_s, 0, &fov_seen, "field of view L[,LY[,LZ]] (e.g. 256mm)"},
        {"out", KW_OPT_STRING, &out_path, 0, &out_seen, "k-space .npy (complex64); sidecar .json beside it"},
        {"truth", KW_OPT_STRING, &truth_path, 0, &tr_seen, "phantom rasterised at the matrix (.npy float32)"},
        {"snr", KW_OPT_DOUBLE, &snr, 0, &snr_seen,
         "mean object signal / noise standard deviation in the image (default: no noise)"},
        {"seed", KW_OPT_INT, &seed, 0, &seed_seen, "noise seed (default 0)"},
        {NULL, 0, NULL, 0, NULL, NULL}};
    int rc = kw_opts_parse(argc, argv, table, usage, NULL, 0, NULL);
    if (rc >= 0)
        return rc;

    if (!ph_seen)
        return kw_cli_fail("phantom", "missing (see --help)");
    kw_phantom ph;
    if (kw_phantom_make(&ph, phantom_name))
        return kw_cli_status(KW_EINVAL, "");
    if (!mx_seen)
        return kw_cli_fail("matrix", "missing (e.g. --matrix 256)");
    size_t n[3] = {1, 1, 1};
    int nm = parse_matrix(matrix_s, n);
    if (nm < 0)
        return kw_cli_fail("matrix", "'%s' is not NX[xNY[xNZ]] with whole numbers 1..%d",
                           matrix_s, MAX_EDGE);
    if (nm == 1) {
        n[1] = n[0];
        if (ph.ndim == 3)
            n[2] = n[0];
    }
    if (ph.ndim == 3 && nm == 2)
        n[2] = n[0];
    if (ph.ndim == 2 && nm == 3 && n[2] != 1)
        return kw_cli_fail("matrix", "phantom '%s' is 2-D: give NXxNY", phantom_name);
    if (ph.ndim == 3 && n[2] < 2)
        return kw_cli_fail("matrix", "phantom '%s' is 3-D: NZ must be at least 2", phantom_name);
    if (n[0] * n[1] * n[2] > ((size_t)1 << 27))
        return kw_cli_fail("matrix", "%zux%zux%zu samples is too many", n[0], n[1], n[2]);
    if (!fov_seen)
        return kw_cli_fail("fov", "missing (e.g. --fov 256mm)");
    double fov[3];
    char why[200];
    int nf = parse_fov(fov_s, fov, why, sizeof why);
    if (nf < 0)
        return kw_cli_fail("fov", "%s", why);
    for (int i = nf; i < 3; i++)
        fov[i] = fov[nf - 1];
    if (!out_seen)
        return kw_cli_fail("out", "missing (e.g. --out ks.npy)");
    if (strcmp(out_path, "-") == 0)
        return kw_cli_fail("out", "k-space needs a file name (its sidecar goes beside it)");
    if (snr_seen && !(snr > 0 && isfinite(snr)))
        return kw_cli_fail("snr", "must be a positive number");
    if (seed_seen && seed < 0)
        return kw_cli_fail("seed", "must be >= 0");

    kw_sim_options so;
    memset(&so, 0, sizeof so);
    so.phantom = &ph;
    so.n[0] = n[0];
    so.n[1] = n[1];
    so.n[2] = ph.ndim == 3 ? n[2] : 1;
    so.contrast.seq = KW_SEQ_PD;
    so.contrast.b0_t = 3.0;
    so.seed = (uint64_t)seed;

    int ndim = ph.ndim;
    size_t npix = so.n[0] * so.n[1] * so.n[2];
    kw_array ks = {0}, truth = {0};
    kw_sim *sim = NULL;
    cJSON *js = NULL;
    char *side = NULL;
    int ret = KW_EXIT_INTERNAL;
    kw_status st;
    double complex chol = 0;
    double sigma = 0;

    /* Truth: the image a perfect reconstruction shows (area-averaged). */
    size_t tdims[3] = {so.n[2], so.n[1], so.n[0]};
    int toff = ndim == 3 ? 0 : 1;
    st = kw_array_alloc(&truth, KW_F32, ndim, tdims + toff);
    if (st) {
        ret = kw_cli_status(st, "truth");
        goto done;
    }
    st = kw_sim_create(&sim, &so);
    if (st) {
        ret = kw_cli_status(st, "encode");
        goto done;
    }
    double w[KW_PHANTOM_MAX_SHAPES];
    kw_sim_image_weights(sim, w);
    st = kw_phantom_rasterize(&ph, so.n, w, ndim == 3 ? 4 : 8, truth.data);
    if (st) {
        ret = kw_cli_status(st, "truth");
        goto done;
    }
    if (snr_seen) {
        double m = object_mean(truth.data, npix);
        if (!(m > 0)) {
            ret = kw_cli_fail("snr", "the phantom has no signal with this contrast");
            goto done;
        }
        sigma = m / snr;
        chol = sigma;
        kw_sim_destroy(sim);
        sim = NULL;
        so.noise_chol = &chol;
        st = kw_sim_create(&sim, &so);
        if (st) {
            ret = kw_cli_status(st, "encode");
            goto done;
        }
    }

    size_t kdims[3] = {so.n[2], so.n[1], so.n[0]};
    st = kw_array_alloc(&ks, KW_C64, ndim, kdims + toff);
    if (st) {
        ret = kw_cli_status(st, "out");
        goto done;
    }
    st = kw_sim_execute(sim, ks.data, kw_cli_progress, NULL);
    kw_cli_progress_done();
    if (st) {
        ret = kw_cli_status(st, "encode");
        goto done;
    }

    /* Sidecar (keys agreed in BRIEF.md). */
    js = cJSON_CreateObject();
    cJSON_AddStringToObject(js, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(js, "kind", "kspace");
    cJSON_AddStringToObject(js, "layout", "cartesian");
    double shp[4], mat[3], fv[3];
    for (int i = 0; i < ks.ndim; i++)
        shp[i] = (double)ks.dims[i];
    kw_json_add_vec(js, "shape", shp, ks.ndim);
    for (int i = 0; i < ndim; i++) {
        mat[i] = (double)so.n[i];
        fv[i] = fov[i];
    }
    kw_json_add_vec(js, "matrix", mat, ndim);
    kw_json_add_vec(js, "fov_m", fv, ndim);
    cJSON_AddStringToObject(js, "phantom", ph.name);
    cJSON_AddNumberToObject(js, "coils", 1);
    if (snr_seen)
        cJSON_AddNumberToObject(js, "snr", snr);
    else
        cJSON_AddNullToObject(js, "snr");
    cJSON_AddNumberToObject(js, "noise_sigma", sigma);
    cJSON_AddNumberToObject(js, "seed", (double)seed);
    cJSON_AddStringToObject(js, "scale", "unitary");
    cJSON_AddNullToObject(js, "trajectory");
    cJSON_AddNullToObject(js, "sens");
    cJSON_AddNullToObject(js, "noise_cov");
    cJSON_AddNullToObject(js, "pattern");
    cJSON_AddNullToObject(js, "acceleration");
    cJSON_AddNullToObject(js, "acs_lines");
    cJSON *prot = cJSON_AddObjectToObject(js, "protocol");
    cJSON_AddStringToObject(prot, "sequence", "pd");
    cJSON_AddStringToObject(js, "noise_definition",
                            "complex Gaussian, E|n|^2 = noise_sigma^2 per sample "
                            "(real and imaginary parts noise_sigma/sqrt(2) each)");
    cJSON_AddStringToObject(js, "snr_definition",
                            "mean |truth| over pixels >= 10% of max |truth|, divided "
                            "by noise_sigma (image domain, unitary DFT)");

    side = kw_sidecar_path(out_path);
    if (!side) {
        ret = kw_cli_fail("out", "cannot form the sidecar name");
        goto done;
    }
    if (truth_path && (st = kw_npy_write(truth_path, &truth))) {
        ret = kw_cli_status(st, "truth");
        goto done;
    }
    if ((st = kw_npy_write(out_path, &ks))) {
        ret = kw_cli_status(st, "out");
        goto done;
    }
    if ((st = kw_json_write(side, js))) {
        remove(out_path);
        ret = kw_cli_status(st, "out");
        goto done;
    }
    ret = KW_EXIT_OK;
done:
    free(side);
    cJSON_Delete(js);
    kw_sim_destroy(sim);
    kw_array_free(&ks);
    kw_array_free(&truth);
    return ret;
}
