/* recon_homodyne.c: `kweave recon --method homodyne`: partial Fourier by
 * homodyne detection (Noll, Nishimura & Macovski 1991) on each coil, along
 * every axis whose sampled extent is asymmetric, then coil combination. */
#include "kw_pf.h"
#include "recon_cart.h"

kw_status kw_recon_run_homodyne(kw_recon_job *job)
{
    kw_cart c;
    kw_pf *p = NULL;
    float complex *img = NULL;
    kw_status st = kw_cart_setup(job, &c);
    if (!st && c.smp.accel[0] * c.smp.accel[1] * c.smp.accel[2] > 1)
        st = kw_set_error(KW_ENOTSUP, "acceleration: homodyne takes partial Fourier data "
                                      "without parallel-imaging undersampling");
    if (!st)
        st = kw_pf_create(&p, c.nc, c.d, c.smp.lo, c.smp.hi);
    if (!st && !(img = kw_alloc(c.nc * c.npix * sizeof *img)))
        st = kw_set_error(KW_ENOMEM, "homodyne: out of memory");
    if (!st)
        st = kw_pf_homodyne(p, c.k, img);
    if (!st) {
        double f[3];
        kw_pf_fraction(p, f);
        cJSON *a = cJSON_AddArrayToObject(job->report, "partial_fourier_fraction");
        for (int i = 3 - c.sdim; i < 3; i++)
            cJSON_AddItemToArray(a, cJSON_CreateNumber(f[i]));
        st = kw_cart_finish(job, &c, img);
    }
    kw_free(img);
    kw_pf_destroy(p);
    kw_cart_free(&c);
    return st;
}
