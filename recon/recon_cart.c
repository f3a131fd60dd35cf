/* recon_cart.c: set-up and coil combination shared by the Cartesian methods
 * of kw_recon: the data as (coils, nz, ny, nx) with noise prewhitening
 * applied, the sampling analysed, maps given or estimated (Walsh), and the
 * final combination into the job's image. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <stdio.h>
#include <string.h>

#include "kw_combine.h"
#include "recon_priv.h"

/* Threshold of the estimated sensitivities' support: 4% of the maximum
 * low-resolution signal (common practice, no source). */
#define SENS_THRESH 0.04

void kw_cart_free(kw_cart *c)
{
    if (!c)
        return;
    if (!c->k_borrowed)
        kw_free(c->k);
    kw_free(c->sens);
    kw_free(c->wht);
    memset(c, 0, sizeof *c);
}

void kw_cart_spatial_dims(const kw_cart *c, size_t *dims, int *ndim)
{
    for (int i = 0; i < c->sdim; i++)
        dims[i] = c->d[3 - c->sdim + i];
    *ndim = c->sdim;
}

static void report_sampling(kw_recon_report *rep, const kw_cart *c)
{
    rep->has_sampling = 1;
    rep->sdim = c->sdim;
    for (int a = 0; a < 3; a++) {
        rep->accel[a] = c->smp.accel[a];
        rep->acs[a] = c->smp.acs_n[a];
    }
    rep->acceleration = c->smp.accel[0] * c->smp.accel[1] * c->smp.accel[2];
    rep->sampled_fraction = c->smp.fraction;
    rep->effective_acceleration = 1.0 / c->smp.fraction;
    rep->uniform = c->smp.uniform;
    rep->partial_fourier = c->smp.partial[0] || c->smp.partial[1] || c->smp.partial[2];
}

void kw_recon_advise(kw_recon *r)
{
    kw_recon_report *p = &r->rep;
    p->advice = NULL;
    if (r->noncart || !p->has_sampling || strcmp(r->m->info->name, "fft") != 0 ||
        p->sampled_fraction >= 1)
        return;
    if (p->uniform && p->acceleration > 1)
        snprintf(r->advice, sizeof r->advice,
                 "fft zero-fills the lines this uniformly undersampled k-space lacks (R = %d): "
                 "sense, grappa or cg-sense unfold it", p->acceleration);
    else if (!p->uniform)
        snprintf(r->advice, sizeof r->advice,
                 "fft zero-fills this irregularly undersampled k-space (effective R = %.2f): "
                 "cg-sense, cs-wavelet or cs-tv suit its sampling", p->effective_acceleration);
    else if (p->partial_fourier)
        snprintf(r->advice, sizeof r->advice,
                 "fft zero-fills the part of k-space a partial Fourier acquisition leaves out: "
                 "homodyne or pocs restore it");
    else
        return;
    p->advice = r->advice;
}

/* borrow: take job->ksp itself where nothing will change it (the caller
 * only reads c->k). */
static kw_status cart_setup(kw_rjob *job, kw_cart *c, int borrow)
{
    memset(c, 0, sizeof *c);
    const kw_recon *r = job->r;
    c->nc = r->nc;
    c->sdim = r->kndim - 1;
    c->d[0] = r->kndim == 4 ? r->kdims[1] : 1;
    c->d[1] = r->kdims[r->kndim - 2];
    c->d[2] = r->kdims[r->kndim - 1];
    c->npix = c->d[0] * c->d[1] * c->d[2];
    size_t n = c->nc * c->npix;
    if (borrow && !r->g.noise_cov && (uintptr_t)job->ksp % 16 == 0) {
        /* const dropped here only: k_borrowed marks it read-only */
        c->k = (float complex *)(uintptr_t)job->ksp;
        c->k_borrowed = 1;
    } else {
        c->k = kw_alloc(n * sizeof *c->k);
        KW_FAIL_PARAM(!c->k, KW_ENOMEM, "kspace", "out of memory");
        memcpy(c->k, job->ksp, n * sizeof *c->k);
    }

    uint8_t *mask = kw_alloc_n(c->npix, 1);
    KW_FAIL_PARAM(!mask, KW_ENOMEM, "kspace", "out of memory");
    kw_cart_mask(c->k, c->nc, c->npix, mask);
    kw_status st = kw_cart_sampling_analyse(mask, c->d, &c->smp);
    kw_free(mask);
    if (st)
        return st;
    if (job->use_claims && r->has_claims && (st = kw_recon_check_claims(&r->claims, &c->smp)))
        return st;
    if (r->g.sens) {
        c->sens = kw_alloc(n * sizeof *c->sens);
        KW_FAIL_PARAM(!c->sens, KW_ENOMEM, "sens", "out of memory");
        memcpy(c->sens, r->g.sens, n * sizeof *c->sens);
    }
    if (r->g.noise_cov) {
        if ((st = kw_recon_whitener(r->g.noise_cov, c->nc, &c->wht)))
            return st;
        kw_prewhiten_apply(c->wht, c->nc, c->npix, c->k);
        if (c->sens)
            kw_prewhiten_apply(c->wht, c->nc, c->npix, c->sens);
        job->rep->prewhitened = 1;
    }
    if (job->opt->estimate_sens && (st = kw_cart_need_sens(job, c, 1)))
        return st;
    report_sampling(job->rep, c);
    return KW_OK;
}

kw_status kw_cart_setup(kw_rjob *job, kw_cart *c) { return cart_setup(job, c, 0); }

kw_status kw_cart_setup_read(kw_rjob *job, kw_cart *c) { return cart_setup(job, c, 1); }

kw_status kw_cart_require_lattice(const kw_cart *c, const char *method)
{
    KW_FAIL_PARAM(!c->smp.uniform, KW_EINVAL, "acceleration",
                  "%s needs uniform undersampling (a regular lattice of lines "
                  "plus an optional calibration block); these samples are irregular: "
                  "cg-sense, cs-wavelet or cs-tv take any sampling", method);
    KW_FAIL_PARAM(c->smp.partial[0] || c->smp.partial[1] || c->smp.partial[2], KW_ENOTSUP,
                  "acceleration", "partial Fourier combined with %s is not supported", method);
    return KW_OK;
}

/* Make sure c->sens exists: the given maps, or maps estimated from the
 * calibration block (Walsh eigenvector method); `at` is recorded as
 * report->sens_at. */
kw_status kw_cart_need_sens(kw_rjob *job, kw_cart *c, int at)
{
    if (c->sens)
        return KW_OK;
    c->sens = kw_alloc(c->nc * c->npix * sizeof *c->sens);
    KW_FAIL_PARAM(!c->sens, KW_ENOMEM, "sens", "out of memory");
    kw_status st = kw_coilsens_walsh(c->k, c->nc, c->d, &c->smp, SENS_THRESH, c->sens);
    if (st)
        return st;
    job->rep->sens_estimated = 1;
    job->rep->sens_at = at;
    job->rep->sens_source = "estimated (Walsh eigenvector, ACS)";
    if (job->keep_sens) {
        kw_recon *r = job->r;
        if (!r->est_sens)
            r->est_sens = kw_alloc(c->nc * c->npix * sizeof *r->est_sens);
        KW_FAIL_PARAM(!r->est_sens, KW_ENOMEM, "sens", "out of memory");
        memcpy(r->est_sens, c->sens, c->nc * c->npix * sizeof *c->sens);
    }
    return KW_OK;
}

kw_status kw_cart_image_complex(kw_rjob *job, const kw_cart *c, const float complex *img)
{
    size_t dims[3];
    int nd;
    kw_cart_spatial_dims(c, dims, &nd);
    kw_status st;
    if (job->opt->keep_coils || job->opt->complex_image) {
        if ((st = kw_array_alloc(&job->image, KW_C64, nd, dims)))
            return st;
        memcpy(job->image.data, img, c->npix * sizeof *img);
        return KW_OK;
    }
    if ((st = kw_array_alloc(&job->image, KW_F32, nd, dims)))
        return st;
    float *o = job->image.data;
    for (size_t p = 0; p < c->npix; p++)
        o[p] = cabsf(img[p]);
    return KW_OK;
}

/* Coil images (nc, npix) -> the image by opt->combine (rss default), or
 * kept as coils with keep_coils. */
kw_status kw_cart_finish(kw_rjob *job, kw_cart *c, const float complex *coil)
{
    size_t dims[4];
    int nd;
    kw_cart_spatial_dims(c, dims + 1, &nd);
    kw_status st;
    if (job->opt->keep_coils) {
        dims[0] = c->nc;
        if ((st = kw_array_alloc(&job->image, KW_C64, nd + 1, dims)))
            return st;
        memcpy(job->image.data, coil, c->nc * c->npix * sizeof *coil);
        return KW_OK;
    }
    const char *mode = job->opt->combine ? job->opt->combine : "rss";
    job->rep->combine = mode;
    int cplx = job->opt->complex_image;
    KW_FAIL_PARAM(cplx && c->nc > 1 && strcmp(mode, "rss") == 0, KW_EINVAL, "complex_image",
                  "root-sum-of-squares has no phase: combine optimal or adaptive");
    if ((st = kw_array_alloc(&job->image, cplx ? KW_C64 : KW_F32, nd, dims + 1)))
        return st;
    if (cplx && c->nc == 1) {
        memcpy(job->image.data, coil, c->npix * sizeof *coil);
        return KW_OK;
    }
    float *out = job->image.data;
    if (strcmp(mode, "rss") == 0 || c->nc == 1) {
        kw_combine_rss(coil, c->nc, c->npix, out);
        return KW_OK;
    }
    float complex *tmp = kw_alloc(c->npix * sizeof *tmp);
    KW_FAIL_PARAM(!tmp, KW_ENOMEM, "combine", "out of memory");
    if (strcmp(mode, "optimal") == 0) {
        st = kw_cart_need_sens(job, c, 3);
        if (!st)
            kw_combine_optimal(coil, c->sens, c->nc, c->npix, tmp);
    } else {
        /* 7 x 7 neighbourhood: common practice, no source */
        st = kw_combine_adaptive(coil, c->nc, c->d, 3, tmp, NULL);
    }
    if (!st && cplx)
        memcpy(job->image.data, tmp, c->npix * sizeof *tmp);
    else if (!st)
        for (size_t p = 0; p < c->npix; p++)
            out[p] = cabsf(tmp[p]);
    kw_free(tmp);
    return st;
}
