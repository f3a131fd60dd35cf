/* recon_cart_gfactor.c: g-factor maps by pseudo-multiple replicas.
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
 * Roemer et al. 1990). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_combine.h"
#include "kw_rng.h"
#include "recon_cart.h"

#define DEFAULT_REPLICAS 50

kw_status kw_recon_pseudo_replica(kw_recon_job *job, const kw_recon_method *m)
{
    KW_FAIL_IF(job->traj.data, KW_ENOTSUP, "pseudo-replica g-factor: Cartesian data only");
    const kw_array *base = &job->image;
    KW_FAIL_IF(base->dtype != KW_F32, KW_ENOTSUP,
               "pseudo-replica g-factor: needs a combined image (drop --keep-coils)");
    size_t nc = job->ksp.dims[0], nk = kw_array_count(&job->ksp) / nc;
    size_t npix = kw_array_count(base);
    long nrep = job->opt->replicas > 0 ? job->opt->replicas : DEFAULT_REPLICAS;
    int sens_units = strcmp(m->name, "sense") == 0 ||
                     (job->opt->combine && strcmp(job->opt->combine, "optimal") == 0);

    /* noise colouring: n = L z with Psi = L L^H (identity without a covariance) */
    double complex *L = calloc(nc * nc, sizeof *L);
    double *acc = calloc(2 * npix, sizeof *acc);
    float complex *noisy = kw_alloc(nc * nk * sizeof *noisy);
    float *snorm = NULL;
    kw_status st = KW_OK;
    if (!L || !acc || !noisy) {
        st = kw_set_error(KW_ENOMEM, "gfactor: out of memory");
        goto out;
    }
    if (job->noise_cov.data) {
        /* the covariance normalised as kw_cart_setup() whitens with it, so
         * that the whitened replica noise has variance sigma^2 */
        const kw_array *q = &job->noise_cov;
        double tr = 0;
        for (size_t i = 0; i < nc; i++)
            tr += q->dtype == KW_C64 ? crealf(((float complex *)q->data)[i * nc + i])
                                     : ((float *)q->data)[i * nc + i];
        double nrm = tr > 0 ? tr / (double)nc : 1.0;
        for (size_t j = 0; j < nc; j++)
            for (size_t i = j; i < nc; i++) {
                double complex s = (q->dtype == KW_C64 ? ((float complex *)q->data)[i * nc + j]
                                                       : ((float *)q->data)[i * nc + j]) / nrm;
                for (size_t k = 0; k < j; k++)
                    s -= L[i * nc + k] * conj(L[j * nc + k]);
                if (i == j) {
                    if (!(creal(s) > 0)) {
                        st = kw_set_error(KW_ENUMERIC, "noise-cov: not positive definite");
                        goto out;
                    }
                    L[i * nc + i] = sqrt(creal(s));
                } else {
                    L[i * nc + j] = s / L[j * nc + j];
                }
            }
    } else {
        for (size_t i = 0; i < nc; i++)
            L[i * nc + i] = 1;
    }
    if (sens_units && job->sens.data) {
        /* |S(x)| of the whitened maps */
        float complex *s = kw_alloc(nc * npix * sizeof *s);
        snorm = malloc(npix * sizeof *snorm);
        if (!s || !snorm) {
            kw_free(s);
            st = kw_set_error(KW_ENOMEM, "gfactor: out of memory");
            goto out;
        }
        memcpy(s, job->sens.data, nc * npix * sizeof *s);
        if (job->noise_cov.data) {
            float complex *w = malloc(nc * nc * sizeof *w), *cov = malloc(nc * nc * sizeof *cov);
            const kw_array *q = &job->noise_cov;
            for (size_t i = 0; w && cov && i < nc * nc; i++)
                cov[i] = q->dtype == KW_C64 ? ((float complex *)q->data)[i] : ((float *)q->data)[i];
            if (cov)
                kw_cart_cov_normalise(cov, nc);
            st = (w && cov) ? kw_prewhiten_matrix(cov, nc, w) : kw_set_error(KW_ENOMEM, "gfactor: out of memory");
            if (!st)
                kw_prewhiten_apply(w, nc, npix, s);
            free(w);
            free(cov);
        }
        kw_combine_rss(s, nc, npix, snorm);
        kw_free(s);
        if (st)
            goto out;
    }

    /* noise level: 2% of the mean image intensity over the object (pixels
     * above 10% of the maximum), high SNR so that magnitude noise is Gaussian
     * (common practice, no source) */
    const float *b = base->data;
    float mx = 0;
    for (size_t p = 0; p < npix; p++)
        mx = b[p] > mx ? b[p] : mx;
    double msum = 0;
    size_t mcnt = 0;
    for (size_t p = 0; p < npix; p++)
        if (b[p] > 0.1f * mx) {
            msum += b[p];
            mcnt++;
        }
    KW_FAIL_GOTO(!mcnt, st, KW_ENUMERIC, out, "gfactor: the image is all zero");
    double sigma = 0.02 * msum / (double)mcnt;
    /* sigma is the per-coil image noise of an RSS image of unit-norm
     * weights; in the sensitivities' scale divide by a typical |S| */
    if (snorm) {
        double ss = 0;
        size_t sc = 0;
        for (size_t p = 0; p < npix; p++)
            if (b[p] > 0.1f * mx && snorm[p] > 0) {
                ss += snorm[p];
                sc++;
            }
        if (sc)
            sigma *= ss / (double)sc;
    }

    kw_recon_opts ro = *job->opt;
    ro.gfactor = NULL;
    ro.keep_coils = 0;
    ro.ref = NULL;
    const float complex *k0 = job->ksp.data;
    kw_rng rng;
    kw_rng_seed(&rng, (uint64_t)job->opt->seed);
    for (long r = 0; r < nrep && !st; r++) {
        kw_recon_job sub = *job;
        sub.opt = &ro;
        memset(&sub.image, 0, sizeof sub.image);
        memset(&sub.gfactor, 0, sizeof sub.gfactor);
        sub.report = cJSON_CreateObject();
        sub.progress = NULL;
        sub.ksp.data = noisy;
        const double hs = sqrt(0.5);
        for (size_t p = 0; p < nk; p++) {
            int sampled = 0;
            for (size_t c = 0; c < nc && !sampled; c++)
                sampled = k0[c * nk + p] != 0;
            double complex z[256];
            for (size_t c = 0; c < nc; c++)
                z[c] = sampled ? hs * (kw_rng_normal(&rng) + I * kw_rng_normal(&rng)) : 0;
            for (size_t c = 0; c < nc; c++) {
                double complex n = 0;
                for (size_t k = 0; k <= c; k++)
                    n += L[c * nc + k] * z[k];
                noisy[c * nk + p] = k0[c * nk + p] + (float complex)(sigma * n);
            }
        }
        st = sub.report ? m->run(&sub) : kw_set_error(KW_ENOMEM, "gfactor: out of memory");
        if (!st && (sub.image.dtype != KW_F32 || kw_array_count(&sub.image) != npix))
            st = kw_set_error(KW_EINTERNAL, "gfactor: replica image of another shape");
        if (!st) {
            const float *im = sub.image.data;
            for (size_t p = 0; p < npix; p++) { /* Welford's running variance */
                double d = im[p] - acc[p];
                acc[p] += d / (double)(r + 1);
                acc[npix + p] += d * (im[p] - acc[p]);
            }
        }
        kw_array_free(&sub.image);
        kw_array_free(&sub.gfactor);
        cJSON_Delete(sub.report);
        if (job->progress) {
            kw_progress pg = {"pseudo-replicas", (int)r + 1, (int)nrep, NAN};
            job->progress(job->progress_user, &pg);
        }
    }
    if (st)
        goto out;
    double R = 1;
    {
        cJSON *smp = cJSON_GetObjectItemCaseSensitive(job->report, "sampling");
        cJSON *a = smp ? cJSON_GetObjectItemCaseSensitive(smp, "acceleration") : NULL;
        cJSON *f = smp ? cJSON_GetObjectItemCaseSensitive(smp, "sampled_fraction") : NULL;
        cJSON *u = smp ? cJSON_GetObjectItemCaseSensitive(smp, "uniform") : NULL;
        if (u && cJSON_IsTrue(u) && a)
            R = a->valuedouble;
        else if (f && f->valuedouble > 0)
            R = 1.0 / f->valuedouble;
    }
    if ((st = kw_array_alloc(&job->gfactor, KW_F32, base->ndim, base->dims)))
        goto out;
    float *g = job->gfactor.data;
    for (size_t p = 0; p < npix; p++) {
        double sd = sqrt(acc[npix + p] / (double)(nrep - 1));
        double full = sigma * sqrt(0.5);
        if (snorm)
            full = snorm[p] > 0 ? full / snorm[p] : 0;
        g[p] = (b[p] > 0.1f * mx && full > 0) ? (float)(sd / (full * sqrt(R))) : 0.0f;
    }
    cJSON_AddStringToObject(job->report, "gfactor_method", "pseudo-replica (Robson et al. 2008)");
    cJSON_AddNumberToObject(job->report, "gfactor_replicas", (double)nrep);
out:
    free(L);
    free(acc);
    kw_free(noisy);
    free(snorm);
    return st;
}
