/* api_example.c: `kweave pattern | encode | recon | score` as library calls: the weave
 * object, 8 coils, R = 2 with 24 calibration lines, reconstructed by zero-filled FFT,
 * SENSE and CG-SENSE with the simulated maps, scored against the truth.
 *   cc api_example.c $(pkg-config --cflags --libs kweave) -o api_example */
#include <kweave.h>
#include <stdio.h>
#include <stdlib.h>

static int fail(const char *what)
{ return fprintf(stderr, "api_example: %s: %s (%s)\n", what, kw_last_error(), kw_last_error_param()), 1; }
int main(void)
{
    enum { N = 128, C = 8 };
    kw_pattern_options po;  kw_pattern *pat = NULL;                /* uniform R = 2 along ky */
    kw_pattern_options_init(&po);
    po.kind = KW_PATTERN_UNIFORM, po.dims[0] = N, po.dims[1] = N, po.accel[0] = 2, po.acs[0] = 24;
    kw_acquisition_options ao;  kw_acquisition *acq = NULL;  /* phantom, coils, noise, mask */
    kw_acquisition_options_init(&ao);
    ao.phantom = "weave", ao.dims[2] = N, ao.fov_m[2] = 0.24, ao.coils = C, ao.snr = 60, ao.seed = 1;
    ao.mask_ndim = 2, ao.mask_dims[0] = N, ao.mask_dims[1] = N;
    if (kw_pattern_create(&pat, &po))
        return fail("pattern");
    ao.mask = kw_pattern_mask(pat);               /* uint8 (N, N), C order */
    if (kw_acquisition_create(&acq, &ao))
        return fail("acquisition");
    kw_cfloat *ks = malloc(kw_acquisition_kspace_count(acq) * sizeof *ks);   /* (C, N, N) */
    kw_cfloat *maps = malloc(kw_acquisition_maps_count(acq) * sizeof *maps);
    float *truth = malloc(N * N * sizeof *truth), *img = malloc(N * N * sizeof *img);
    if (!ks || !maps || !truth || !img || kw_acquisition_execute(acq, ks, truth, maps, NULL, NULL))
        return fail("acquisition");
    const size_t kd[3] = {C, N, N};
    kw_array ref = {KW_F32, 2, {N, N}, truth}, test = {KW_F32, 2, {N, N}, img};
    const char *method[3] = {"fft", "sense", "cg-sense"};
    for (int m = 0; m < 3; m++) {
        kw_recon_options ro;
        kw_recon_options_init(&ro);
        ro.method = method[m], ro.combine = "optimal";
        kw_recon_geometry g = {.ndim = 3, .dims = kd, .sens = maps, .sens_ndim = 3, .sens_dims = kd};
        kw_recon *r = NULL;  kw_scores s;
        if (kw_recon_create(&r, &g, &ro) || kw_recon_execute(r, ks, img, NULL, NULL, NULL) ||
            kw_metrics_compute(&ref, &test, &s))
            return fail(method[m]);
        printf("%-8s R = %d: NRMSE %.4f, PSNR %.2f dB, SSIM %.4f\n", method[m],
               kw_recon_get_report(r)->acceleration, s.nrmse, s.psnr_db, s.ssim);
        kw_recon_destroy(r);
    }
    kw_acquisition_destroy(acq), kw_pattern_destroy(pat);
    free(ks), free(maps), free(truth), free(img);
    return 0;
}
