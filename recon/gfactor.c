/* gfactor.c: g-factor maps by pseudo-multiple replicas for any Cartesian
 * method of kw_recon.
 * Robson PM, Grant AK, Madhuranthakam AJ, Lattanzi R, Sodickson DK,
 * McKenzie CA, "Comprehensive quantification of signal-to-noise ratio and
 * g-factor for image-based and k-space-based parallel imaging
 * reconstructions", MRM 60:895-907, 2008:
 *   g(x) = SNR_full(x) / (SNR_acc(x) sqrt(R)) = sigma_acc(x) / (sigma_full(x) sqrt(R)),
 * sigma_acc from the spread of the method's image over replicas of the data
 * with synthetic noise added to every sampled point. The fully sampled
 * reference is not in the input, so sigma_full is the closed form for fully
 * sampled white noise sigma through the same combination, taken on the
 * magnitude image at high SNR (noise along the signal phase, variance
 * sigma^2 / 2): sigma / sqrt(2) for root-sum-of-squares and adaptive
 * combination (unit-norm weights), sigma / (sqrt(2) |S(x)|) for images in
 * the intensity scale of the sensitivities S (SENSE, optimal combination;
 * Roemer et al. 1990). (The analytic SENSE map is kw_sense.h's.) */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_combine.h"
#include "kw_rng.h"
#include "recon_priv.h"

#define DEFAULT_REPLICAS 50

/* |S(x)| of the (whitened) given maps, or NULL when not in map units. */
static kw_status sens_norm(const kw_recon *r, size_t npix, float **snorm)
{
    size_t nc = r->nc;
    *snorm = NULL;
    float complex *s = kw_alloc(nc * npix * sizeof *s);
    float *n = kw_alloc_n(npix, sizeof *n);
    if (!s || !n) {
        kw_free(s);
        kw_free(n);
        return kw_set_error_param(KW_ENOMEM, "gfactor", "out of memory");
    }
    memcpy(s, r->g.sens, nc * npix * sizeof *s);
    kw_status st = KW_OK;
    if (r->g.noise_cov) {
        float complex *w = NULL;
        if (!(st = kw_recon_whitener(r->g.noise_cov, nc, &w)))
            kw_prewhiten_apply(w, nc, npix, s);
        kw_free(w);
    }
    kw_combine_rss(s, nc, npix, n);
    kw_free(s);
    if (st)
        kw_free(n);
    else
        *snorm = n;
    return st;
}

/* Noise level: 2% of the mean image intensity over the object (pixels above
 * 10% of the maximum), high SNR so that magnitude noise is Gaussian (common
 * practice, no source); in the maps' scale times a typical |S|. */
static kw_status noise_level(const float *b, size_t npix, const float *snorm, float *mx,
                             double *sigma)
{
    *mx = 0;
    for (size_t p = 0; p < npix; p++)
        *mx = b[p] > *mx ? b[p] : *mx;
    double msum = 0;
    size_t mcnt = 0;
    for (size_t p = 0; p < npix; p++)
        if (b[p] > 0.1f * *mx) {
            msum += b[p];
            mcnt++;
        }
    KW_FAIL_PARAM(!mcnt, KW_ENUMERIC, "gfactor", "the image is all zero");
    *sigma = 0.02 * msum / (double)mcnt;
    if (snorm) {
        double ss = 0;
        size_t sc = 0;
        for (size_t p = 0; p < npix; p++)
            if (b[p] > 0.1f * *mx && snorm[p] > 0) {
                ss += snorm[p];
                sc++;
            }
        if (sc)
            *sigma *= ss / (double)sc;
    }
    return KW_OK;
}

/* One replica's k-space: k0 + sigma L z at every sampled point. */
static void add_noise(const kw_cfloat *k0, size_t nc, size_t nk, const double complex *L,
                      double sigma, kw_rng *rng, kw_cfloat *noisy)
{
    const double hs = sqrt(0.5);
    for (size_t p = 0; p < nk; p++) {
        int sampled = 0;
        for (size_t c = 0; c < nc && !sampled; c++)
            sampled = k0[c * nk + p] != 0;
        double complex z[256];
        for (size_t c = 0; c < nc; c++)
            z[c] = sampled ? hs * (kw_rng_normal(rng) + I * kw_rng_normal(rng)) : 0;
        for (size_t c = 0; c < nc; c++) {
            double complex n = 0;
            for (size_t k = 0; k <= c; k++)
                n += L[c * nc + k] * z[k];
            noisy[c * nk + p] = k0[c * nk + p] + (float complex)(sigma * n);
        }
    }
}

/* Welford's running variance over the replicas' images. */
static kw_status run_replicas(kw_recon *r, const kw_cfloat *k0, const double complex *L,
                              double sigma, long nrep, size_t npix, double *acc,
                              kw_progress_fn progress, void *user)
{
    size_t nc = r->nc, nk = 1;
    for (int i = 1; i < r->kndim; i++)
        nk *= r->kdims[i];
    kw_cfloat *noisy = kw_alloc(nc * nk * sizeof *noisy);
    KW_FAIL_PARAM(!noisy, KW_ENOMEM, "gfactor", "out of memory");
    kw_recon_options ro = r->o;
    ro.want_gfactor = 0;
    ro.keep_coils = 0;
    ro.complex_image = 0;
    ro.estimate_sens = 0;
    kw_rng rng;
    kw_rng_seed(&rng, (uint64_t)r->o.seed);
    kw_status st = KW_OK;
    for (long i = 0; i < nrep && !st; i++) {
        kw_recon_report rep = r->rep;
        kw_rjob sub;
        memset(&sub, 0, sizeof sub);
        sub.r = r;
        sub.opt = &ro;
        sub.ksp = noisy;
        sub.rep = &rep;
        sub.use_claims = 1;
        add_noise(k0, nc, nk, L, sigma, &rng, noisy);
        st = r->m->run(&sub);
        if (!st && (sub.image.dtype != KW_F32 || kw_array_count(&sub.image) != npix))
            st = kw_set_error(KW_EINTERNAL, "gfactor: replica image of another shape");
        if (!st) {
            const float *im = sub.image.data;
            for (size_t p = 0; p < npix; p++) {
                double d = im[p] - acc[p];
                acc[p] += d / (double)(i + 1);
                acc[npix + p] += d * (im[p] - acc[p]);
            }
        }
        kw_array_free(&sub.image);
        kw_array_free(&sub.gfactor);
        if (progress) {
            kw_progress pg = {"pseudo-replicas", (int)i + 1, (int)nrep, NAN, NULL};
            progress(user, &pg);
        }
    }
    kw_free(noisy);
    return st;
}

kw_status kw_recon_pseudo_replica(kw_recon *r, const kw_cfloat *ksp, const float *base,
                                  float *g, kw_progress_fn progress, void *user)
{
    KW_FAIL_PARAM(r->noncart, KW_ENOTSUP, "gfactor", "pseudo-replica g-factor: Cartesian data only");
    KW_FAIL_PARAM(r->o.keep_coils, KW_ENOTSUP, "keep_coils",
                  "pseudo-replica g-factor: needs a combined image (coils not kept)");
    size_t nc = r->nc, npix = 1;
    for (int i = 0; i < r->sp_ndim; i++)
        npix *= r->sp_dims[i];
    long nrep = r->o.replicas > 0 ? r->o.replicas : DEFAULT_REPLICAS;
    int sens_units = strcmp(r->m->info->name, "sense") == 0 ||
                     (r->o.combine && strcmp(r->o.combine, "optimal") == 0);
    /* noise colouring: n = L z with Psi = L L^H (identity without a covariance) */
    double complex *L = kw_alloc_n(nc * nc, sizeof *L);
    double *acc = kw_alloc_n(2 * npix, sizeof *acc);
    float *snorm = NULL;
    kw_status st = KW_OK;
    KW_FAIL_GOTO(!L || !acc, st, KW_ENOMEM, out, "gfactor: out of memory");
    if (r->g.noise_cov) {
        if ((st = kw_recon_cov_cholesky(r->g.noise_cov, nc, L)))
            goto out;
    } else {
        for (size_t i = 0; i < nc; i++)
            L[i * nc + i] = 1;
    }
    if (sens_units && r->g.sens && (st = sens_norm(r, npix, &snorm)))
        goto out;
    float mx = 0;
    double sigma = 0;
    if ((st = noise_level(base, npix, snorm, &mx, &sigma)))
        goto out;
    if ((st = run_replicas(r, ksp, L, sigma, nrep, npix, acc, progress, user)))
        goto out;
    const kw_recon_report *rep = &r->rep;
    double R = rep->uniform ? rep->acceleration
               : rep->sampled_fraction > 0 ? 1.0 / rep->sampled_fraction : 1;
    for (size_t p = 0; p < npix; p++) {
        double sd = sqrt(acc[npix + p] / (double)(nrep - 1));
        double full = sigma * sqrt(0.5);
        if (snorm)
            full = snorm[p] > 0 ? full / snorm[p] : 0;
        g[p] = (base[p] > 0.1f * mx && full > 0) ? (float)(sd / (full * sqrt(R))) : 0.0f;
    }
    r->rep.gfactor_method = "pseudo-replica (Robson et al. 2008)";
    r->rep.gfactor_replicas = (int)nrep;
out:
    kw_free(L);
    kw_free(acc);
    kw_free(snorm);
    return st;
}
