/* recon_cart_common.c: set-up and coil combination shared by the Cartesian
 * methods of `kweave recon` (see recon_cart.h). */
#include "recon_cart.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_combine.h"
#include "npy.h"

const char *kw_cart_sens_out;

/* Threshold of the estimated sensitivities' support: 4% of the maximum
 * low-resolution signal (common practice, no source). */
#define SENS_THRESH 0.04

void kw_cart_free(kw_cart *c)
{
    if (!c)
        return;
    kw_free(c->k);
    kw_free(c->sens);
    free(c->wht);
    memset(c, 0, sizeof *c);
}

void kw_cart_spatial_dims(const kw_cart *c, size_t *dims, int *ndim)
{
    if (c->sdim == 3) {
        dims[0] = c->d[0];
        dims[1] = c->d[1];
        dims[2] = c->d[2];
    } else {
        dims[0] = c->d[1];
        dims[1] = c->d[2];
    }
    *ndim = c->sdim;
}

static int json_int(const cJSON *o, const char *key, int *v)
{
    const cJSON *j = o ? cJSON_GetObjectItemCaseSensitive(o, key) : NULL;
    if (!j || cJSON_IsNull(j))
        return 0;
    if (cJSON_IsNumber(j)) {
        *v = (int)j->valuedouble;
        return 1;
    }
    if (cJSON_IsArray(j)) { /* [R1, R2]: the product is the total */
        int prod = 1;
        const cJSON *e;
        cJSON_ArrayForEach(e, j) if (cJSON_IsNumber(e)) prod *= (int)e->valuedouble;
        *v = prod;
        return 1;
    }
    return -1;
}

void kw_cart_cov_normalise(float complex *cov, size_t nc)
{
    double tr = 0;
    for (size_t i = 0; i < nc; i++)
        tr += crealf(cov[i * nc + i]);
    if (tr > 0)
        for (size_t i = 0; i < nc * nc; i++)
            cov[i] /= (float)(tr / (double)nc);
}

kw_status kw_cart_setup(kw_recon_job *job, kw_cart *c)
{
    memset(c, 0, sizeof *c);
    const kw_array *k = &job->ksp;
    KW_FAIL_IF(k->dtype != KW_C64 || k->ndim < 3 || k->ndim > 4, KW_EFORMAT,
               "in: Cartesian k-space must be (coils, ny, nx) or (coils, nz, ny, nx)");
    c->nc = k->dims[0];
    c->sdim = k->ndim - 1;
    c->d[0] = k->ndim == 4 ? k->dims[1] : 1;
    c->d[1] = k->dims[k->ndim - 2];
    c->d[2] = k->dims[k->ndim - 1];
    c->npix = c->d[0] * c->d[1] * c->d[2];
    size_t n = c->nc * c->npix;
    c->k = kw_alloc(n * sizeof *c->k);
    KW_FAIL_IF(!c->k, KW_ENOMEM, "in: out of memory");
    memcpy(c->k, k->data, n * sizeof *c->k);

    uint8_t *mask = malloc(c->npix);
    KW_FAIL_IF(!mask, KW_ENOMEM, "in: out of memory");
    kw_cart_mask(c->k, c->nc, c->npix, mask);
    kw_status st = kw_cart_sampling_analyse(mask, c->d, &c->smp);
    free(mask);
    if (st)
        return st;
    int Rd = c->smp.accel[0] * c->smp.accel[1] * c->smp.accel[2], Rs, acs;
    int h = json_int(job->sidecar, "acceleration", &Rs);
    KW_FAIL_IF(h < 0, KW_EFORMAT, "acceleration: sidecar value is not a number or list");
    /* Only a uniform lattice has an R the data can confirm; for random,
     * Poisson-disc or lattice-shifted patterns the sidecar's acceleration is
     * the nominal (or achieved) ratio and cannot contradict the data. Writers
     * give either the lattice R or the effective one (1 / sampled fraction,
     * lower with calibration lines): both agree with the data. */
    const cJSON *jr = job->sidecar ? cJSON_GetObjectItemCaseSensitive(job->sidecar, "acceleration")
                                   : NULL;
    double reff = c->smp.fraction > 0 ? 1.0 / c->smp.fraction : 0;
    int agrees = Rs == Rd || (cJSON_IsNumber(jr) && fabs(jr->valuedouble - reff) <= 0.05 * reff);
    KW_FAIL_IF(h > 0 && Rs > 1 && c->smp.uniform && !agrees, KW_EINVAL,
               "acceleration: the sidecar says %g but the data are sampled at R = %d "
               "(effective %.2f)", cJSON_IsNumber(jr) ? jr->valuedouble : (double)Rs, Rd, reff);
    h = json_int(job->sidecar, "acs_lines", &acs);
    if (h > 0 && Rd > 1) {
        int found = 0;
        for (int a = 0; a < 3; a++)
            if (c->smp.accel[a] > 1)
                found = (int)c->smp.acs_n[a];
        /* the block found may include a neighbouring lattice line */
        KW_FAIL_IF(acs > found, KW_EINVAL,
                   "acs_lines: the sidecar says %d but the data hold only %d", acs, found);
    }

    if (job->sens.data) {
        const kw_array *s = &job->sens;
        int ok = s->dtype == KW_C64 && s->ndim == k->ndim;
        for (int i = 0; ok && i < k->ndim; i++)
            ok = s->dims[i] == k->dims[i];
        KW_FAIL_IF(!ok, KW_EFORMAT, "sens: shape must equal the k-space shape (coils, [nz,] ny, nx)");
        c->sens = kw_alloc(n * sizeof *c->sens);
        KW_FAIL_IF(!c->sens, KW_ENOMEM, "sens: out of memory");
        memcpy(c->sens, s->data, n * sizeof *c->sens);
    }
    if (job->noise_cov.data) {
        const kw_array *q = &job->noise_cov;
        KW_FAIL_IF(q->ndim != 2 || q->dims[0] != c->nc || q->dims[1] != c->nc, KW_EFORMAT,
                   "noise-cov: shape must be (%zu, %zu), one row and column per coil", c->nc, c->nc);
        c->wht = malloc(c->nc * c->nc * sizeof *c->wht);
        KW_FAIL_IF(!c->wht, KW_ENOMEM, "noise-cov: out of memory");
        float complex *cov = malloc(c->nc * c->nc * sizeof *cov);
        KW_FAIL_IF(!cov, KW_ENOMEM, "noise-cov: out of memory");
        for (size_t i = 0; i < c->nc * c->nc; i++)
            cov[i] = q->dtype == KW_C64 ? ((float complex *)q->data)[i] : ((float *)q->data)[i];
        kw_cart_cov_normalise(cov, c->nc);
        st = kw_prewhiten_matrix(cov, c->nc, c->wht);
        free(cov);
        if (st)
            return st;
        kw_prewhiten_apply(c->wht, c->nc, c->npix, c->k);
        if (c->sens)
            kw_prewhiten_apply(c->wht, c->nc, c->npix, c->sens);
        cJSON_AddBoolToObject(job->report, "prewhitened", 1);
    }
    if (kw_cart_sens_out && (st = kw_cart_need_sens(job, c)))
        return st;
    cJSON *smp = cJSON_AddObjectToObject(job->report, "sampling");
    if (smp) {
        double acc[3] = {c->smp.accel[0], c->smp.accel[1], c->smp.accel[2]};
        double acsn[3] = {(double)c->smp.acs_n[0], (double)c->smp.acs_n[1], (double)c->smp.acs_n[2]};
        int off = 3 - c->sdim;
        cJSON *a = cJSON_AddArrayToObject(smp, "acceleration_axes");
        cJSON *b = cJSON_AddArrayToObject(smp, "acs_axes");
        for (int i = off; i < 3; i++) {
            cJSON_AddItemToArray(a, cJSON_CreateNumber(acc[i]));
            cJSON_AddItemToArray(b, cJSON_CreateNumber(acsn[i]));
        }
        cJSON_AddNumberToObject(smp, "acceleration", Rd);
        cJSON_AddNumberToObject(smp, "sampled_fraction", c->smp.fraction);
        cJSON_AddBoolToObject(smp, "uniform", c->smp.uniform);
        int pf = c->smp.partial[0] || c->smp.partial[1] || c->smp.partial[2];
        cJSON_AddBoolToObject(smp, "partial_fourier", pf);
    }
    return KW_OK;
}

kw_status kw_cart_require_lattice(const kw_cart *c, const char *method)
{
    KW_FAIL_IF(!c->smp.uniform, KW_EINVAL,
               "acceleration: %s needs uniform undersampling (a regular lattice of lines "
               "plus an optional calibration block); these samples are irregular", method);
    KW_FAIL_IF(c->smp.partial[0] || c->smp.partial[1] || c->smp.partial[2], KW_ENOTSUP,
               "acceleration: partial Fourier combined with %s is not supported", method);
    return KW_OK;
}

kw_status kw_cart_need_sens(kw_recon_job *job, kw_cart *c)
{
    if (c->sens)
        return KW_OK;
    c->sens = kw_alloc(c->nc * c->npix * sizeof *c->sens);
    KW_FAIL_IF(!c->sens, KW_ENOMEM, "sens: out of memory");
    kw_status st = kw_coilsens_walsh(c->k, c->nc, c->d, &c->smp, SENS_THRESH, c->sens);
    if (st)
        return st;
    cJSON_AddStringToObject(job->report, "sens_source", "estimated (Walsh eigenvector, ACS)");
    if (kw_cart_sens_out) {
        /* the maps as estimated: in the whitened coil basis when a noise
         * covariance was given */
        kw_array a = {0};
        a.dtype = KW_C64;
        a.ndim = c->sdim + 1;
        a.dims[0] = c->nc;
        for (int i = 0; i < c->sdim; i++)
            a.dims[1 + i] = c->d[3 - c->sdim + i];
        a.data = c->sens;
        if ((st = kw_npy_write(kw_cart_sens_out, &a)))
            return st;
        cJSON_AddStringToObject(job->report, "sens_file", kw_cart_sens_out);
        kw_cart_sens_out = NULL; /* once per run (not for pseudo-replicas) */
    }
    return KW_OK;
}

kw_status kw_cart_image_complex(kw_recon_job *job, const kw_cart *c,
                                const float complex *img)
{
    size_t dims[3];
    int nd;
    kw_cart_spatial_dims(c, dims, &nd);
    kw_status st;
    if (job->opt->keep_coils) {
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

kw_status kw_cart_finish(kw_recon_job *job, kw_cart *c, const float complex *coil)
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
    cJSON_AddStringToObject(job->report, "combine", mode);
    if ((st = kw_array_alloc(&job->image, KW_F32, nd, dims + 1)))
        return st;
    float *out = job->image.data;
    if (strcmp(mode, "rss") == 0 || c->nc == 1) {
        kw_combine_rss(coil, c->nc, c->npix, out);
        return KW_OK;
    }
    float complex *tmp = kw_alloc(c->npix * sizeof *tmp);
    KW_FAIL_IF(!tmp, KW_ENOMEM, "combine: out of memory");
    if (strcmp(mode, "optimal") == 0) {
        st = kw_cart_need_sens(job, c);
        if (!st)
            kw_combine_optimal(coil, c->sens, c->nc, c->npix, tmp);
    } else {
        /* 7 x 7 neighbourhood: common practice, no source */
        st = kw_combine_adaptive(coil, c->nc, c->d, 3, tmp, NULL);
    }
    if (!st)
        for (size_t p = 0; p < c->npix; p++)
            out[p] = cabsf(tmp[p]);
    kw_free(tmp);
    return st;
}
