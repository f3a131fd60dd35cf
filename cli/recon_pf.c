/* recon_pf.c: `kweave recon --method homodyne|pocs`: partial Fourier on each
 * coil, along every axis whose sampled extent is asymmetric, then coil
 * combination. Homodyne detection: Noll, Nishimura & Macovski 1991 (IEEE
 * TMI 10:154). POCS: Haacke, Lindskog & Lin 1991 (JMR 92:126); --iterations
 * (default 20) and --stop (relative change, default 1e-4). */
#include <math.h>

#include "kw_pf.h"
#include "recon_cart.h"

static kw_status run_pf(kw_recon_job *job, int pocs)
{
    const char *name = pocs ? "pocs" : "homodyne";
    kw_cart c;
    kw_pf *p = NULL;
    float complex *img = NULL;
    int done = 0;
    kw_status st = kw_cart_setup(job, &c);
    if (!st && c.smp.accel[0] * c.smp.accel[1] * c.smp.accel[2] > 1)
        st = kw_set_error(KW_ENOTSUP, "acceleration: %s takes partial Fourier data "
                                      "without parallel-imaging undersampling", name);
    if (!st)
        st = kw_pf_create(&p, c.nc, c.d, c.smp.lo, c.smp.hi);
    if (!st && !(img = kw_alloc(c.nc * c.npix * sizeof *img)))
        st = kw_set_error(KW_ENOMEM, "%s: out of memory", name);
    if (!st && pocs) {
        int iters = job->opt->iterations > 0 ? (int)job->opt->iterations : 20;
        double stop = isnan(job->opt->stop) ? 1e-4 : job->opt->stop;
        st = kw_pf_pocs(p, c.k, img, iters, stop, &done);
    } else if (!st) {
        st = kw_pf_homodyne(p, c.k, img);
    }
    if (!st) {
        double f[3];
        kw_pf_fraction(p, f);
        cJSON *a = cJSON_AddArrayToObject(job->report, "partial_fourier_fraction");
        for (int i = 3 - c.sdim; i < 3; i++)
            cJSON_AddItemToArray(a, cJSON_CreateNumber(f[i]));
        if (pocs)
            cJSON_AddNumberToObject(job->report, "iterations", done);
        st = kw_cart_finish(job, &c, img);
    }
    kw_free(img);
    kw_pf_destroy(p);
    kw_cart_free(&c);
    return st;
}

kw_status kw_recon_run_homodyne(kw_recon_job *job) { return run_pf(job, 0); }

kw_status kw_recon_run_pocs(kw_recon_job *job) { return run_pf(job, 1); }
