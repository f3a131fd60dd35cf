/* recon_fft.c: `kweave recon --method fft`: the centered unitary inverse DFT
 * of DESIGN.md over the spatial axes of every coil (one batched FFTW plan,
 * made once), then coil combination (root-sum-of-squares by default). For
 * partial-Fourier or undersampled data this is the zero-filled
 * reconstruction. The plain root-sum-of-squares case goes through the fused
 * kw_rssrecon (same transform, no shift passes). */
#include <string.h>

#include "kw_fft.h"
#include "kw_rssrecon.h"
#include "recon_cart.h"

kw_status kw_recon_run_fft(kw_recon_job *job)
{
    kw_cart c;
    kw_status st = kw_cart_setup(job, &c);
    const char *mode = job->opt->combine ? job->opt->combine : "rss";
    if (!st && !job->opt->keep_coils && strcmp(mode, "rss") == 0) {
        kw_rssrecon *r = NULL;
        size_t dims[3];
        int nd;
        kw_cart_spatial_dims(&c, dims, &nd);
        st = kw_rssrecon_create(&r, c.sdim, dims, c.nc, KW_FFT_ESTIMATE);
        if (!st)
            st = kw_array_alloc(&job->image, KW_F32, nd, dims);
        if (!st)
            st = kw_rssrecon_execute(r, c.k, job->image.data);
        kw_rssrecon_destroy(r);
        cJSON_AddStringToObject(job->report, "combine", "rss");
        kw_cart_free(&c);
        return st;
    }
    kw_fft_plan *plan = NULL;
    if (!st)
        st = kw_fft_create(&plan, c.sdim, c.sdim == 3 ? c.d : c.d + 1, c.nc, KW_FFT_ESTIMATE);
    if (!st)
        st = kw_fft_inverse(plan, c.k); /* c.k becomes the coil images */
    if (!st)
        st = kw_cart_finish(job, &c, c.k);
    kw_fft_destroy(plan);
    kw_cart_free(&c);
    return st;
}
