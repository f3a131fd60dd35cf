/* recon_grappa.c: `kweave recon --method grappa`: GRAPPA (Griswold et al.
 * 2002) calibrated on the autocalibration block of the data, kernel
 * --kernel KYxKX (sources along each accelerated axis x neighbours along
 * each unaccelerated axis; default 2x5), --lambda relative Tikhonov weight (default 1e-4),
 * then the coil images are combined by --combine (rss default). */
#include <math.h>

#include "kw_fft.h"
#include "kw_grappa.h"
#include "recon_cart.h"

#define DEFAULT_LAMBDA 1e-4 /* common practice, no source */

kw_status kw_recon_run_grappa(kw_recon_job *job)
{
    kw_cart c;
    kw_grappa *g = NULL;
    kw_fft_plan *plan = NULL;
    float complex *full = NULL;
    kw_status st = kw_cart_setup(job, &c);
    if (st)
        goto out;
    if ((st = kw_cart_require_lattice(&c, "GRAPPA")))
        goto out;
    kw_grappa_opts o = {0};
    int ky = job->opt->kernel_yx[0] ? job->opt->kernel_yx[0] : 2;
    int kx = job->opt->kernel_yx[1] ? job->opt->kernel_yx[1] : 5;
    for (int a = 0; a < 3; a++) {
        o.accel[a] = c.smp.accel[a];
        o.offset[a] = c.smp.offset[a];
        o.acs_lo[a] = c.smp.acs_lo[a];
        o.acs_n[a] = c.smp.acs_n[a];
        /* accelerated axes take KY sources, the others (the readout, and an
         * unaccelerated phase-encode axis of 3-D data) KX neighbours, so
         * that the kernel follows the maps along every axis */
        o.kernel[a] = c.d[a] == 1 ? 1 : c.smp.accel[a] > 1 ? ky : kx;
    }
    if (c.smp.accel[0] == 1 && c.smp.accel[1] == 1 && c.smp.accel[2] == 1)
        o.kernel[1] = 1; /* fully sampled: nothing to synthesise */
    o.lambda = isnan(job->opt->lambda) ? DEFAULT_LAMBDA : job->opt->lambda;
    if ((st = kw_grappa_create(&g, c.nc, c.d, &o)))
        goto out;
    if ((st = kw_grappa_calibrate(g, c.k)))
        goto out;
    full = kw_alloc(c.nc * c.npix * sizeof *full);
    KW_FAIL_GOTO(!full, st, KW_ENOMEM, out, "grappa: out of memory");
    if ((st = kw_grappa_execute(g, c.k, full)))
        goto out;
    if ((st = kw_fft_create(&plan, c.sdim, c.sdim == 3 ? c.d : c.d + 1, c.nc, KW_FFT_ESTIMATE)))
        goto out;
    if ((st = kw_fft_inverse(plan, full)))
        goto out;
    cJSON *k = cJSON_AddArrayToObject(job->report, "kernel");
    for (int a = 3 - c.sdim; a < 3; a++)
        cJSON_AddItemToArray(k, cJSON_CreateNumber(o.kernel[a]));
    cJSON_AddNumberToObject(job->report, "lambda", o.lambda);
    cJSON_AddNumberToObject(job->report, "calibration_fits", (double)kw_grappa_fit_count(g));
    st = kw_cart_finish(job, &c, full);
out:
    kw_fft_destroy(plan);
    kw_free(full);
    kw_grappa_destroy(g);
    kw_cart_free(&c);
    return st;
}
