/* recon_sense.c: `kweave recon --method sense`: Cartesian SENSE (Pruessmann
 * et al. 1999) with the maps given (--sens / sidecar) or estimated from the
 * autocalibration block; acceleration and lattice read from the data;
 * --lambda: relative Tikhonov weight (default 0); --gfactor: the analytic
 * g-factor map (or pseudo-replicas with --replicas). */
#include <math.h>

#include "kw_sense.h"
#include "recon_cart.h"

kw_status kw_recon_run_sense(kw_recon_job *job)
{
    kw_cart c;
    kw_sense *s = NULL;
    float complex *img = NULL;
    kw_status st = kw_cart_setup(job, &c);
    if (st)
        goto out;
    if ((st = kw_cart_require_lattice(&c, "SENSE")))
        goto out;
    if ((st = kw_cart_need_sens(job, &c)))
        goto out;
    double lambda = isnan(job->opt->lambda) ? 0.0 : job->opt->lambda;
    if ((st = kw_sense_create(&s, c.nc, c.d, c.smp.accel, c.smp.offset, lambda)))
        goto out;
    img = kw_alloc(c.npix * sizeof *img);
    KW_FAIL_GOTO(!img, st, KW_ENOMEM, out, "sense: out of memory");
    if (job->opt->gfactor) {
        size_t dims[3];
        int nd;
        kw_cart_spatial_dims(&c, dims, &nd);
        if ((st = kw_array_alloc(&job->gfactor, KW_F32, nd, dims)))
            goto out;
    }
    if ((st = kw_sense_execute(s, c.k, c.sens, img, job->gfactor.data)))
        goto out;
    if (job->gfactor.data)
        cJSON_AddStringToObject(job->report, "gfactor_method", "analytic (Pruessmann et al. 1999)");
    cJSON_AddNumberToObject(job->report, "lambda", lambda);
    st = kw_cart_image_complex(job, &c, img);
out:
    kw_free(img);
    kw_sense_destroy(s);
    kw_cart_free(&c);
    return st;
}
