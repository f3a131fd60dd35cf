/* recon_cartm.c: the Cartesian methods of kw_recon.
 *
 * fft: the centered unitary inverse DFT over the spatial axes of every coil,
 * then coil combination (root-sum-of-squares by default); for partial-Fourier
 * or undersampled data the zero-filled reconstruction. The plain case
 * (root-sum-of-squares, coils not kept) goes through the fused kw_rssrecon
 * planned once in kw_recon_create: coils transformed out of place in
 * parallel, per-pixel sums in coil order, so the image is byte-identical for
 * any thread count.
 * sense: Cartesian SENSE (Pruessmann et al. 1999) with the maps given or
 * estimated from the calibration block; lambda: relative Tikhonov weight
 * (default 0); the analytic g-factor map with want_gfactor.
 * grappa: GRAPPA (Griswold et al. 2002) calibrated on the calibration block,
 * kernel (KY sources along each accelerated axis x KX neighbours along each
 * unaccelerated axis; default 2x5), lambda relative Tikhonov (default 1e-4).
 * homodyne / pocs: partial Fourier on each coil along every asymmetric axis:
 * Noll, Nishimura & Macovski 1991 (IEEE TMI 10:154); Haacke, Lindskog & Lin
 * 1991 (JMR 92:126), iterations (default 20), stop (default 1e-4). */
#include <math.h>
#include <string.h>

#include "kw_fft.h"
#include "kw_grappa.h"
#include "kw_pf.h"
#include "kw_sense.h"
#include "recon_priv.h"

kw_status kw_recon_run_fft(kw_rjob *job)
{
    kw_cart c;
    const char *comb = job->opt->combine;
    /* the fused root-sum-of-squares path only reads the k-space; the other
     * transforms it in place */
    int rss = !job->opt->keep_coils && !job->opt->complex_image &&
              (!comb || strcmp(comb, "rss") == 0);
    kw_status st = rss ? kw_cart_setup_read(job, &c) : kw_cart_setup(job, &c);
    if (!st && rss) {
        size_t dims[3];
        int nd;
        kw_cart_spatial_dims(&c, dims, &nd);
        if (!job->r->rss)
            st = kw_rssrecon_create(&job->r->rss, c.sdim, c.sdim == 3 ? c.d : c.d + 1, c.nc,
                                    KW_FFT_MEASURE);
        if (!st)
            st = kw_array_alloc(&job->image, KW_F32, nd, dims);
        if (!st)
            st = kw_rssrecon_execute(job->r->rss, c.k, job->image.data);
        if (!st)
            job->rep->combine = "rss";
        kw_cart_free(&c);
        return st;
    }
    /* Sensitivities for optimal combination come from the k-space
     * calibration block: before the transform overwrites c.k with images. */
    if (!st && !job->opt->keep_coils && comb && strcmp(comb, "optimal") == 0 && c.nc > 1)
        st = kw_cart_need_sens(job, &c, 2);
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

kw_status kw_recon_run_sense(kw_rjob *job)
{
    kw_cart c;
    kw_sense *s = NULL;
    float complex *img = NULL;
    kw_status st = kw_cart_setup_read(job, &c);
    if (st)
        goto out;
    if ((st = kw_cart_require_lattice(&c, "SENSE")))
        goto out;
    if ((st = kw_cart_need_sens(job, &c, 2)))
        goto out;
    double lambda = isnan(job->opt->lambda) ? 0.0 : job->opt->lambda;
    kw_sense_options so;
    kw_sense_options_init(&so);
    for (int a = 0; a < 3; a++) {
        so.accel[a] = c.smp.accel[a];
        so.offset[a] = c.smp.offset[a];
    }
    so.lambda = lambda;
    /* the building block's "accel" is the recon's "acceleration" */
    if ((st = kw_error_reparam(kw_sense_create(&s, c.nc, c.d, &so), "accel", "acceleration")))
        goto out;
    img = kw_alloc(c.npix * sizeof *img);
    KW_FAIL_GOTO(!img, st, KW_ENOMEM, out, "sense: out of memory");
    if (job->opt->want_gfactor) {
        size_t dims[3];
        int nd;
        kw_cart_spatial_dims(&c, dims, &nd);
        if ((st = kw_array_alloc(&job->gfactor, KW_F32, nd, dims)))
            goto out;
    }
    if ((st = kw_sense_execute(s, c.k, c.sens, img, job->gfactor.data)))
        goto out;
    if (job->gfactor.data)
        job->rep->gfactor_analytic = "analytic (Pruessmann et al. 1999)";
    job->rep->lambda = lambda;
    st = kw_cart_image_complex(job, &c, img);
out:
    kw_free(img);
    kw_sense_destroy(s);
    kw_cart_free(&c);
    return st;
}

static void grappa_opts(const kw_rjob *job, const kw_cart *c, kw_grappa_options *o)
{
    kw_grappa_options_init(o);
    int ky = job->opt->kernel[0] ? job->opt->kernel[0] : 2;
    int kx = job->opt->kernel[1] ? job->opt->kernel[1] : 5;
    for (int a = 0; a < 3; a++) {
        o->accel[a] = c->smp.accel[a];
        o->offset[a] = c->smp.offset[a];
        o->acs_lo[a] = c->smp.acs_lo[a];
        o->acs_n[a] = c->smp.acs_n[a];
        /* accelerated axes take KY sources, the others (the readout, and an
         * unaccelerated phase-encode axis of 3-D data) KX neighbours, so
         * that the kernel follows the maps along every axis */
        o->kernel[a] = c->d[a] == 1 ? 1 : c->smp.accel[a] > 1 ? ky : kx;
    }
    if (c->smp.accel[0] == 1 && c->smp.accel[1] == 1 && c->smp.accel[2] == 1)
        o->kernel[1] = 1; /* fully sampled: nothing to synthesise */
    if (!isnan(job->opt->lambda))
        o->lambda = job->opt->lambda; /* else the library's default, 1e-4 */
}

kw_status kw_recon_run_grappa(kw_rjob *job)
{
    kw_cart c;
    kw_grappa *g = NULL;
    kw_fft_plan *plan = NULL;
    float complex *full = NULL;
    kw_status st = kw_cart_setup_read(job, &c);
    if (st)
        goto out;
    if ((st = kw_cart_require_lattice(&c, "GRAPPA")))
        goto out;
    kw_grappa_options o;
    grappa_opts(job, &c, &o);
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
    kw_recon_report *rep = job->rep;
    rep->kernel_n = 0;
    for (int a = 3 - c.sdim; a < 3; a++)
        rep->kernel[rep->kernel_n++] = o.kernel[a];
    rep->lambda = o.lambda;
    rep->calibration_fits = (double)kw_grappa_fit_count(g);
    st = kw_cart_finish(job, &c, full);
out:
    kw_fft_destroy(plan);
    kw_free(full);
    kw_grappa_destroy(g);
    kw_cart_free(&c);
    return st;
}

static kw_status run_pf(kw_rjob *job, int pocs)
{
    const char *name = pocs ? "pocs" : "homodyne";
    kw_cart c;
    kw_pf *p = NULL;
    float complex *img = NULL;
    int done = 0;
    kw_status st = kw_cart_setup_read(job, &c);
    if (!st && c.smp.accel[0] * c.smp.accel[1] * c.smp.accel[2] > 1)
        st = kw_set_error_param(KW_ENOTSUP, "acceleration",
                                "%s takes partial Fourier data without parallel-imaging "
                                "undersampling", name);
    if (!st)
        st = kw_pf_create(&p, c.nc, c.d, c.smp.lo, c.smp.hi);
    if (!st && !(img = kw_alloc(c.nc * c.npix * sizeof *img)))
        st = kw_set_error(KW_ENOMEM, "%s: out of memory", name);
    if (!st && pocs) {
        int iters = job->opt->iterations > 0 ? job->opt->iterations : 20;
        double stop = isnan(job->opt->stop) ? 1e-4 : job->opt->stop;
        st = kw_pf_pocs(p, c.k, img, iters, stop, &done);
    } else if (!st) {
        st = kw_pf_homodyne(p, c.k, img);
    }
    if (!st) {
        double f[3];
        kw_pf_fraction(p, f);
        job->rep->has_pf = 1;
        for (int i = 3 - c.sdim, j = 0; i < 3; i++, j++)
            job->rep->pf_fraction[j] = f[i];
        if (pocs)
            job->rep->iterations = done;
        st = kw_cart_finish(job, &c, img);
    }
    kw_free(img);
    kw_pf_destroy(p);
    kw_cart_free(&c);
    return st;
}

kw_status kw_recon_run_homodyne(kw_rjob *job) { return run_pf(job, 0); }

kw_status kw_recon_run_pocs(kw_rjob *job) { return run_pf(job, 1); }
