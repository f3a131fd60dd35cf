/* whiten.c: noise prewhitening of the reconstruction object: the noise
 * covariance normalised to its mean diagonal, the whitening matrix
 * (kw_prewhiten_matrix, kw_combine.h) and the covariance's Cholesky factor
 * that colours pseudo-replica noise (gfactor.c). */
#include <math.h>
#include <stdlib.h>

#include "kw_combine.h"
#include "recon_priv.h"

/* Divide a noise covariance (nc x nc) by its mean diagonal. Whitening with
 * the result gives every coil the mean noise variance of the input instead
 * of 1, so images keep the data's intensity scale (a scalar does not change
 * any combination or unfolding). */
void kw_recon_cov_normalise(float complex *cov, size_t nc)
{
    double tr = 0;
    for (size_t i = 0; i < nc; i++)
        tr += crealf(cov[i * nc + i]);
    if (tr > 0)
        for (size_t i = 0; i < nc * nc; i++)
            cov[i] /= (float)(tr / (double)nc);
}

/* *w (malloc'd nc x nc): the whitening matrix of the normalised covariance. */
kw_status kw_recon_whitener(const kw_cfloat *cov_in, size_t nc, float complex **w)
{
    *w = kw_alloc_n(nc * nc, sizeof **w);
    float complex *cov = kw_alloc_n(nc * nc, sizeof *cov);
    if (!*w || !cov) {
        kw_free(*w);
        kw_free(cov);
        *w = NULL;
        return kw_set_error_param(KW_ENOMEM, "noise_cov", "out of memory");
    }
    for (size_t i = 0; i < nc * nc; i++)
        cov[i] = cov_in[i];
    kw_recon_cov_normalise(cov, nc);
    kw_status st = kw_prewhiten_matrix(cov, nc, *w);
    kw_free(cov);
    if (st) {
        kw_free(*w);
        *w = NULL;
    }
    return st;
}

/* L (nc x nc, lower): Psi / mean diag(Psi) = L L^H, so that L z (z white,
 * unit variance) has the covariance the whitening undoes. */
kw_status kw_recon_cov_cholesky(const kw_cfloat *q, size_t nc, double complex *L)
{
    double tr = 0;
    for (size_t i = 0; i < nc; i++)
        tr += crealf(q[i * nc + i]);
    double nrm = tr > 0 ? tr / (double)nc : 1.0;
    for (size_t j = 0; j < nc; j++)
        for (size_t i = j; i < nc; i++) {
            double complex s = q[i * nc + j] / nrm;
            for (size_t k = 0; k < j; k++)
                s -= L[i * nc + k] * conj(L[j * nc + k]);
            if (i == j) {
                KW_FAIL_PARAM(!(creal(s) > 0), KW_ENUMERIC, "noise_cov", "not positive definite");
                L[i * nc + i] = sqrt(creal(s));
            } else {
                L[i * nc + j] = s / L[j * nc + j];
            }
        }
    return KW_OK;
}
