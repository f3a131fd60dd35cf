/* sense.c: Cartesian SENSE unfolding (Pruessmann et al. 1999, MRM 42:952).
 *
 * Folding with the centered unitary DFT: keeping the k-space lattice
 * k = off + R m - N/2 (m = 0 .. N/R - 1) and zero-filling gives the image
 * x(n) = sum_m' rho(m') psf(n - m'), psf(d) = (1/N) sum_lattice e^{2 pi i k d / N},
 * which is nonzero only at d = j N/R, where psf = (1/R) w^j,
 * w = e^{2 pi i (off - N/2) / R}. Hence x(n) = (1/R) sum_l w^{-l} rho(n + l N/R)
 * for n in the first N/R pixels (indices mod N). */
#include "kw_sense.h"
#include "kw_linalg.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "kw_fft.h"

struct kw_sense {
    size_t nc, d[3], npix;
    int R[3], off[3], rtot;
    double lambda;
    kw_fft_plan *plan;
    float complex *fold; /* (nc, npix) */
    double complex *ph[3]; /* (1/R) w^{-l} per axis */
    int nthreads;         /* the threads the scratch is sized for (at create) */
    double complex *work; /* nthreads x wsize */
    size_t wsize;
};

void kw_sense_destroy(kw_sense *s)
{
    if (!s)
        return;
    kw_fft_destroy(s->plan);
    kw_free(s->fold);
    for (int a = 0; a < 3; a++)
        kw_free(s->ph[a]);
    kw_free(s->work);
    kw_free(s);
}

void kw_sense_options_init(kw_sense_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    for (int a = 0; a < 3; a++)
        o->accel[a] = 1;
}

kw_status kw_sense_create(kw_sense **out, size_t nc, const size_t d[3],
                          const kw_sense_options *caller)
{
    KW_FAIL_IF(!out || !d || nc == 0, KW_EINVAL, "sense: NULL argument");
    *out = NULL;
    kw_sense_options o;
    kw_sense_options_init(&o);
    kw_status ost = kw_options_take(&o, sizeof o, caller, "options");
    if (ost)
        return ost;
    const int *accel = o.accel, *offset = o.offset;
    const double lambda = o.lambda;
    KW_FAIL_PARAM(!(lambda >= 0) || !isfinite(lambda), KW_EINVAL, "lambda", "must be >= 0");
    int rtot = 1;
    for (int a = 0; a < 3; a++) {
        KW_FAIL_PARAM(accel[a] < 1 || d[a] % (size_t)accel[a], KW_EINVAL, "accel",
                      "%d does not divide the matrix (%zu) along axis %d", accel[a], d[a], a);
        rtot *= accel[a];
    }
    KW_FAIL_PARAM(rtot > KW_SENSE_MAX_R, KW_EINVAL, "accel", "R = %d exceeds %d", rtot,
                  KW_SENSE_MAX_R);
    KW_FAIL_PARAM((size_t)rtot > nc, KW_EINVAL, "accel",
                  "R = %d exceeds the %zu coils (SENSE needs R <= coils)", rtot, nc);
    kw_sense *s = kw_alloc_n(1, sizeof *s);
    KW_FAIL_IF(!s, KW_ENOMEM, "sense: out of memory");
    s->nc = nc;
    s->npix = d[0] * d[1] * d[2];
    s->rtot = rtot;
    s->lambda = lambda;
    for (int a = 0; a < 3; a++) {
        s->d[a] = d[a];
        s->R[a] = accel[a];
        s->off[a] = ((offset[a] % accel[a]) + accel[a]) % accel[a];
        s->ph[a] = kw_alloc_n((size_t)accel[a], sizeof *s->ph[a]);
        if (!s->ph[a]) {
            kw_sense_destroy(s);
            return kw_set_error(KW_ENOMEM, "sense: out of memory");
        }
        for (int l = 0; l < accel[a]; l++) {
            double arg = 2 * KW_PI * (double)(s->off[a] - (long)(d[a] / 2)) * l / accel[a];
            s->ph[a][l] = cexp(-I * arg) / accel[a];
        }
    }
    int rank = d[0] > 1 ? 3 : 2;
    kw_status st = kw_fft_create(&s->plan, rank, rank == 3 ? d : d + 1, nc, KW_FFT_ESTIMATE);
    s->fold = kw_alloc(nc * s->npix * sizeof *s->fold);
#ifdef _OPENMP
    s->nthreads = omp_get_max_threads();
#else
    s->nthreads = 1;
#endif
    size_t r = (size_t)rtot;
    /* E (nc x r), A (r x r), L (r x r), b, x, inv (r x r), t (r x r) */
    s->wsize = nc * r + 4 * r * r + 2 * r + nc;
    s->work = kw_alloc_n((size_t)s->nthreads * s->wsize, sizeof *s->work);
    if (st || !s->fold || !s->work) {
        kw_sense_destroy(s);
        return st ? st : kw_set_error(KW_ENOMEM, "sense: out of memory");
    }
    *out = s;
    return KW_OK;
}

kw_status kw_sense_execute(kw_sense *s, const float complex *ksp,
                           const float complex *sens, float complex *img,
                           float *gfactor)
{
    KW_FAIL_IF(!s || !ksp || !sens || !img, KW_EINVAL, "sense: NULL argument");
    const size_t *d = s->d;
    size_t npix = s->npix, nc = s->nc;
    for (size_t p = 0; p < npix; p++) {
        size_t c3[3] = {p / (d[1] * d[2]), (p / d[2]) % d[1], p % d[2]};
        int on = 1;
        for (int a = 0; a < 3; a++)
            on &= (int)(c3[a] % (size_t)s->R[a]) == s->off[a];
        for (size_t c = 0; c < nc; c++)
            s->fold[c * npix + p] = on ? ksp[c * npix + p] : 0;
    }
    kw_status st = kw_fft_inverse(s->plan, s->fold);
    if (st)
        return st;
    size_t red[3] = {d[0] / (size_t)s->R[0], d[1] / (size_t)s->R[1], d[2] / (size_t)s->R[2]};
    size_t nred = red[0] * red[1] * red[2];
    int r = s->rtot;
    int bad = 0;
    size_t badpix = 0;
    /* num_threads: never more threads than the scratch was sized for at
     * create, whatever omp_set_num_threads() says now */
#pragma omp parallel for num_threads(s->nthreads) schedule(dynamic, 64)
    for (size_t q = 0; q < nred; q++) {
        int tid = 0;
#ifdef _OPENMP
        tid = omp_get_thread_num();
#endif
        double complex *E = s->work + (size_t)tid * s->wsize;
        double complex *A = E + nc * (size_t)r, *Lm = A + r * r, *inv = Lm + r * r,
                       *T = inv + r * r, *b = T + r * r, *x = b + r, *av = x + r;
        size_t n3[3] = {q / (red[1] * red[2]), (q / red[2]) % red[1], q % red[2]};
        size_t pos[KW_SENSE_MAX_R];
        int keep[KW_SENSE_MAX_R], nk = 0;
        for (int l = 0; l < r; l++) {
            int l3[3] = {l / (s->R[1] * s->R[2]), (l / s->R[2]) % s->R[1], l % s->R[2]};
            size_t pz = n3[0] + (size_t)l3[0] * red[0], py = n3[1] + (size_t)l3[1] * red[1],
                   px = n3[2] + (size_t)l3[2] * red[2];
            size_t p = (pz * d[1] + py) * d[2] + px;
            pos[l] = p;
            double complex ph = s->ph[0][l3[0]] * s->ph[1][l3[1]] * s->ph[2][l3[2]];
            double nrm = 0;
            for (size_t c = 0; c < nc; c++) {
                double complex e = ph * sens[c * npix + p];
                E[c * (size_t)r + (size_t)nk] = e;
                nrm += creal(e * conj(e));
            }
            img[p] = 0;
            if (gfactor)
                gfactor[p] = 0;
            if (nrm > 0)
                keep[nk++] = l;
        }
        if (!nk)
            continue;
        size_t p0 = pos[0];
        for (size_t c = 0; c < nc; c++)
            av[c] = s->fold[c * npix + p0];
        double tr = 0;
        for (int i = 0; i < nk; i++) {
            for (int j = 0; j < nk; j++) {
                double complex v = 0;
                for (size_t c = 0; c < nc; c++)
                    v += conj(E[c * (size_t)r + (size_t)i]) * E[c * (size_t)r + (size_t)j];
                A[i * nk + j] = v;
            }
            tr += creal(A[i * nk + i]);
            double complex v = 0;
            for (size_t c = 0; c < nc; c++)
                v += conj(E[c * (size_t)r + (size_t)i]) * av[c];
            x[i] = v;
        }
        double lam = s->lambda * tr / nk;
        memcpy(Lm, A, (size_t)(nk * nk) * sizeof *Lm);
        for (int i = 0; i < nk; i++)
            Lm[i * nk + i] += lam;
        if (kw_chol(Lm, (size_t)nk) != KW_OK) {
#pragma omp critical
            {
                bad = 1;
                badpix = p0;
            }
            continue;
        }
        kw_chol_solve(Lm, (size_t)nk, x);
        for (int i = 0; i < nk; i++)
            img[pos[keep[i]]] = (float complex)x[i];
        if (gfactor) {
            /* inv = (A + lam I)^-1, T = A inv, X = inv T */
            for (int j = 0; j < nk; j++) {
                for (int i = 0; i < nk; i++)
                    b[i] = i == j;
                kw_chol_solve(Lm, (size_t)nk, b);
                for (int i = 0; i < nk; i++)
                    inv[i * nk + j] = b[i];
            }
            for (int i = 0; i < nk; i++)
                for (int j = 0; j < nk; j++) {
                    double complex v = 0;
                    for (int k = 0; k < nk; k++)
                        v += A[i * nk + k] * inv[k * nk + j];
                    T[i * nk + j] = v;
                }
            for (int i = 0; i < nk; i++) {
                double complex xi = 0;
                for (int k = 0; k < nk; k++)
                    xi += inv[i * nk + k] * T[k * nk + i];
                double g2 = creal(xi) * creal(A[i * nk + i]);
                gfactor[pos[keep[i]]] = (float)sqrt(g2 > 0 ? g2 : 0);
            }
        }
    }
    KW_FAIL_PARAM(bad, KW_ENUMERIC, "lambda",
                  "the unfolding is singular at pixel (%zu, %zu, %zu) of the sensitivities; "
                  "a regularisation weight > 0 makes it solvable",
                  badpix / (d[1] * d[2]), (badpix / d[2]) % d[1], badpix % d[2]);
    return KW_OK;
}
