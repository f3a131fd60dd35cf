/* recon_fft.c: `kweave recon --method fft`: the centered unitary inverse DFT
 * of DESIGN.md over the spatial axes of every coil, then coil combination
 * (root-sum-of-squares by default). For partial-Fourier or undersampled data
 * this is the zero-filled reconstruction.
 *
 * The plain case (root-sum-of-squares, coils not kept) goes through the fused
 * kw_rssrecon: one single-coil plan made once, coils transformed out of place
 * in parallel, shifts folded into the indexing; its per-pixel sums run in
 * coil order, so the image is byte-identical for any thread count. Other
 * combinations use one batched kw_fft plan and kw_cart_finish(). */
#include <string.h>

#include "kw_fft.h"
#include "kw_rssrecon.h"
#include "recon_cart.h"

static kw_status fused_rss(kw_recon_job *job, kw_cart *c)
{
    size_t dims[3];
    int nd;
    kw_cart_spatial_dims(c, dims, &nd);
    kw_rssrecon *r = NULL;
    kw_status st = kw_rssrecon_create(&r, c->sdim, c->sdim == 3 ? c->d : c->d + 1, c->nc,
                                      KW_FFT_MEASURE);
    if (!st)
        st = kw_array_alloc(&job->image, KW_F32, nd, dims);
    if (!st)
        st = kw_rssrecon_execute(r, c->k, job->image.data);
    if (!st)
        cJSON_AddStringToObject(job->report, "combine", "rss");
    kw_rssrecon_destroy(r);
    return st;
}

kw_status kw_recon_run_fft(kw_recon_job *job)
{
    kw_cart c;
    kw_status st = kw_cart_setup(job, &c);
    const char *comb = job->opt->combine;
    if (!st && !job->opt->keep_coils && (!comb || strcmp(comb, "rss") == 0)) {
        st = fused_rss(job, &c);
        kw_cart_free(&c);
        return st;
    }
    /* Sensitivities for --combine optimal are estimated from the k-space
     * calibration block: before the transform overwrites c.k with images. */
    if (!st && !job->opt->keep_coils && comb && strcmp(comb, "optimal") == 0 && c.nc > 1)
        st = kw_cart_need_sens(job, &c);
    kw_fft_plan *plan = NULL;
    if (!st)
        st = kw_fft_create(&plan, c.sdim, c.sdim == 3 ? c.d : c.d + 1, c.nc, KW_FFT_MEASURE);
    if (!st)
        st = kw_fft_inverse(plan, c.k); /* c.k becomes the coil images */
    if (!st)
        st = kw_cart_finish(job, &c, c.k);
    kw_fft_destroy(plan);
    kw_cart_free(&c);
    return st;
}
