/* recon_fft.c: `kweave recon --method fft`: the centered unitary inverse DFT
 * of DESIGN.md over the spatial axes of every coil (one batched FFTW plan,
 * made once), then coil combination (root-sum-of-squares by default). For
 * partial-Fourier or undersampled data this is the zero-filled
 * reconstruction. (The fused kw_rssrecon is not used here: its per-thread
 * partial sums make the image depend on the thread count, and `kweave
 * recon` promises byte-identical output for any thread count.) */
#include <string.h>

#include "kw_fft.h"
#include "recon_cart.h"

kw_status kw_recon_run_fft(kw_recon_job *job)
{
    kw_cart c;
    kw_status st = kw_cart_setup(job, &c);
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
