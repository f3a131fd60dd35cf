/* combine.c: prewhitening and coil combination (see kw_combine.h).
 * Roemer PB, Edelstein WA, Hayes CE, Souza SP, Mueller OM, "The NMR phased
 * array", MRM 16:192-225, 1990 (optimal combination S^H Psi^-1 m).
 * Walsh DO, Gmitro AF, Marcellin MW, "Adaptive reconstruction of phased array
 * MR imagery", MRM 43:682-690, 2000 (local signal correlation eigenvector). */
#include "kw_combine.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "kw_fft.h"

/* The threads of a combination: OpenMP's, at most the library's setting
 * once kw_fft_setup() has run (as the transforms before it). */
static int combine_threads(void)
{
#ifdef _OPENMP
    int nt = omp_get_max_threads();
#else
    int nt = 1;
#endif
    if (kw_fft_threads_ready() && kw_fft_threads() < nt)
        nt = kw_fft_threads();
    return nt < 1 ? 1 : nt;
}

kw_status kw_prewhiten_matrix(const float complex *cov, size_t nc, float complex *w)
{
    KW_FAIL_IF(!cov || !w || nc == 0, KW_EINVAL, "noise-cov: empty");
    double complex *L = kw_alloc_n(nc * nc, sizeof *L);
    KW_FAIL_IF(!L, KW_ENOMEM, "noise-cov: out of memory");
    double scale = 0;
    for (size_t i = 0; i < nc; i++)
        scale = fmax(scale, cabs(cov[i * nc + i]));
    kw_status st = KW_OK;
    for (size_t i = 0; i < nc && !st; i++)
        for (size_t j = 0; j < nc; j++)
            if (cabs(cov[i * nc + j] - conj(cov[j * nc + i])) > 1e-4 * scale) {
                st = kw_set_error(KW_ENUMERIC, "noise-cov: not Hermitian at (%zu, %zu)", i, j);
                break;
            }
    /* Cholesky Psi = L L^H in double. */
    for (size_t j = 0; j < nc && !st; j++) {
        double d = creal(cov[j * nc + j]);
        for (size_t k = 0; k < j; k++)
            d -= creal(L[j * nc + k] * conj(L[j * nc + k]));
        if (!(d > 1e-12 * scale)) {
            st = kw_set_error(KW_ENUMERIC, "noise-cov: not positive definite (pivot %zu)", j);
            break;
        }
        L[j * nc + j] = sqrt(d);
        for (size_t i = j + 1; i < nc; i++) {
            double complex s = cov[i * nc + j];
            for (size_t k = 0; k < j; k++)
                s -= L[i * nc + k] * conj(L[j * nc + k]);
            L[i * nc + j] = s / creal(L[j * nc + j]);
        }
    }
    if (!st) {
        /* W = L^-1 by forward substitution, column by column. */
        memset(w, 0, nc * nc * sizeof *w);
        for (size_t col = 0; col < nc; col++)
            for (size_t i = col; i < nc; i++) {
                double complex s = (i == col) ? 1.0 : 0.0;
                for (size_t k = col; k < i; k++)
                    s -= L[i * nc + k] * w[k * nc + col];
                w[i * nc + col] = (float complex)(s / L[i * nc + i]);
            }
    }
    kw_free(L);
    return st;
}

void kw_prewhiten_apply(const float complex *w, size_t nc, size_t npts,
                        float complex *data)
{
    /* W is lower triangular: row i needs the inputs 0..i only, so the rows
     * are made from the last to the first in place (no copy of the point's
     * coils, hence nothing to allocate; the sums are those of the copy). */
    const int nt = combine_threads();
#pragma omp parallel for num_threads(nt) schedule(static)
    for (size_t p = 0; p < npts; p++) {
        for (size_t i = nc; i-- > 0;) {
            double complex s = 0;
            for (size_t k = 0; k <= i; k++)
                s += w[i * nc + k] * data[k * npts + p];
            data[i * npts + p] = (float complex)s;
        }
    }
}

void kw_combine_rss(const float complex *coil, size_t nc, size_t npix, float *out)
{
    const int nt = combine_threads();
#pragma omp parallel for num_threads(nt) schedule(static)
    for (size_t p = 0; p < npix; p++) {
        double s = 0;
        for (size_t c = 0; c < nc; c++) {
            float complex v = coil[c * npix + p];
            s += (double)crealf(v) * crealf(v) + (double)cimagf(v) * cimagf(v);
        }
        out[p] = (float)sqrt(s);
    }
}

void kw_combine_optimal(const float complex *coil, const float complex *sens,
                        size_t nc, size_t npix, float complex *out)
{
    const int nt = combine_threads();
#pragma omp parallel for num_threads(nt) schedule(static)
    for (size_t p = 0; p < npix; p++) {
        double complex num = 0;
        double den = 0;
        for (size_t c = 0; c < nc; c++) {
            float complex s = sens[c * npix + p];
            num += conj(s) * coil[c * npix + p];
            den += (double)crealf(s) * crealf(s) + (double)cimagf(s) * cimagf(s);
        }
        out[p] = den > 0 ? (float complex)(num / den) : 0;
    }
}

/* Dominant eigenvector of the Hermitian matrix a (n x n) by power iteration,
 * started from the column of largest norm (common practice, no source). */
static void dominant(const double complex *a, size_t n, double complex *v,
                     double complex *t)
{
    size_t best = 0;
    double bn = -1;
    for (size_t j = 0; j < n; j++)
        if (creal(a[j * n + j]) > bn) {
            bn = creal(a[j * n + j]);
            best = j;
        }
    for (size_t i = 0; i < n; i++)
        v[i] = a[i * n + best];
    for (int it = 0; it < 30; it++) {
        double nrm = 0;
        for (size_t i = 0; i < n; i++) {
            double complex s = 0;
            for (size_t j = 0; j < n; j++)
                s += a[i * n + j] * v[j];
            t[i] = s;
            nrm += creal(s * conj(s));
        }
        nrm = sqrt(nrm);
        if (!(nrm > 0)) {
            for (size_t i = 0; i < n; i++)
                v[i] = 0;
            return;
        }
        for (size_t i = 0; i < n; i++)
            v[i] = t[i] / nrm;
    }
}

kw_status kw_combine_adaptive(const float complex *coil, size_t nc,
                              const size_t dims[3], int radius,
                              float complex *out, float complex *vec)
{
    KW_FAIL_IF(!coil || !dims || nc == 0 || radius < 0, KW_EINVAL, "combine: bad arguments");
    size_t npix = dims[0] * dims[1] * dims[2];
    int rz = dims[0] > 1 ? radius : 0;
    kw_status st = KW_OK;
    const int nt = combine_threads();
#pragma omp parallel num_threads(nt)
    {
        double complex *a = kw_alloc_n(nc * nc + 2 * nc, sizeof *a);
        if (!a) {
#pragma omp critical
            st = kw_set_error(KW_ENOMEM, "combine: out of memory");
        }
#pragma omp for schedule(dynamic, 16)
        for (size_t p = 0; p < npix; p++) {
            if (!a)
                continue;
            double complex *v = a + nc * nc, *t = v + nc;
            long z = (long)(p / (dims[1] * dims[2])), y = (long)((p / dims[2]) % dims[1]),
                 x = (long)(p % dims[2]);
            memset(a, 0, nc * nc * sizeof *a);
            for (long zz = z - rz; zz <= z + rz; zz++)
                for (long yy = y - radius; yy <= y + radius; yy++)
                    for (long xx = x - radius; xx <= x + radius; xx++) {
                        if (zz < 0 || yy < 0 || xx < 0 || zz >= (long)dims[0] ||
                            yy >= (long)dims[1] || xx >= (long)dims[2])
                            continue;
                        size_t q = ((size_t)zz * dims[1] + (size_t)yy) * dims[2] + (size_t)xx;
                        for (size_t i = 0; i < nc; i++) {
                            double complex mi = coil[i * npix + q];
                            for (size_t j = 0; j <= i; j++)
                                a[i * nc + j] += mi * conj(coil[j * npix + q]);
                        }
                    }
            for (size_t i = 0; i < nc; i++)
                for (size_t j = i + 1; j < nc; j++)
                    a[i * nc + j] = conj(a[j * nc + i]);
            dominant(a, nc, v, t);
            double ph = carg(v[0]);
            double complex rot = cexp(-I * ph);
            double complex s = 0;
            for (size_t c = 0; c < nc; c++) {
                v[c] *= rot;
                s += conj(v[c]) * coil[c * npix + p];
                if (vec)
                    vec[c * npix + p] = (float complex)v[c];
            }
            if (out)
                out[p] = (float complex)s;
        }
        kw_free(a);
    }
    return st;
}
