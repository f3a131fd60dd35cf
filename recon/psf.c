/* psf.c: point-spread functions and their figures (see kw_psf.h). The
 * transform point spread follows Lustig, Donoho & Pauly 2007 (MRM 58:1182). */
#include "kw_psf.h"

#include <math.h>
#include <limits.h>
#include <stdlib.h>
#include <string.h>

struct kw_psf_plan {
    int rank;
    size_t dims[KW_PSF_MAX_RANK];
    size_t n;
    kw_fft_plan *fft;
};

kw_status kw_psf_create(kw_psf_plan **plan, int rank, const size_t *dims)
{
    KW_FAIL_IF(!plan || !dims, KW_EINVAL, "psf: NULL argument");
    *plan = NULL;
    KW_FAIL_IF(rank < 1 || rank > KW_PSF_MAX_RANK, KW_EINVAL, "psf: rank %d not in 1..3", rank);
    size_t n = 1;
    for (int a = 0; a < rank; a++) {
        KW_FAIL_IF(dims[a] < 1, KW_EINVAL, "psf: empty axis %d", a);
        n *= dims[a];
    }
    kw_psf_plan *p = kw_alloc(sizeof *p);
    KW_FAIL_IF(!p, KW_ENOMEM, "psf: out of memory");
    p->rank = rank;
    p->n = n;
    memcpy(p->dims, dims, (size_t)rank * sizeof *dims);
    kw_status st = kw_fft_create(&p->fft, rank, dims, 1, KW_FFT_ESTIMATE);
    if (st) {
        kw_free(p);
        return st;
    }
    *plan = p;
    return KW_OK;
}

kw_status kw_psf_execute(const kw_psf_plan *p, const float *w, float complex *psf)
{
    KW_FAIL_IF(!p || !w || !psf, KW_EINVAL, "psf: NULL argument");
    for (size_t i = 0; i < p->n; i++)
        psf[i] = w[i];
    kw_status st = kw_fft_inverse(p->fft, psf);
    if (st)
        return st;
    /* the unitary inverse carries 1/sqrt(P); the PSF wants 1/P */
    const float s = (float)(1.0 / sqrt((double)p->n));
    for (size_t i = 0; i < p->n; i++)
        psf[i] *= s;
    return KW_OK;
}

void kw_psf_destroy(kw_psf_plan *p)
{
    if (!p)
        return;
    kw_fft_destroy(p->fft);
    kw_free(p);
}

kw_status kw_psf_ndft(const float *k, size_t stride, const float *w, size_t samples,
                      size_t n, size_t m, float complex *psf, kw_progress_fn progress,
                      void *user)
{
    KW_FAIL_IF(!k || !psf || stride < 2 || n < 1 || m < 1, KW_EINVAL, "psf: bad arguments");
    const double c = 2.0 * KW_PI / (double)n;
    const long h = (long)(m / 2);
    const double norm = 1.0 / ((double)n * (double)n);
    /* exp(i c (kx x + ky y)) = ex(x) ey(y): per block of samples, tabulate
     * the two factors, then sum their outer products in double */
    enum { B = 256 };
    double complex *acc = kw_alloc(m * m * sizeof *acc);
    double complex *ex = kw_alloc((size_t)B * m * sizeof *ex);
    double complex *ey = kw_alloc((size_t)B * m * sizeof *ey);
    if (!acc || !ex || !ey) {
        kw_free(acc);
        kw_free(ex);
        kw_free(ey);
        return kw_set_error(KW_ENOMEM, "psf: out of memory");
    }
    kw_status st = KW_OK;
    const size_t nblocks = (samples + B - 1) / B;
    for (size_t b = 0; b < nblocks; b++) {
        const size_t s0 = b * B, nb = samples - s0 < B ? samples - s0 : B;
#pragma omp parallel for schedule(static)
        for (size_t j = 0; j < nb; j++) {
            const double kx = k[(s0 + j) * stride], ky = k[(s0 + j) * stride + 1];
            const double ws = w ? (double)w[s0 + j] : 1.0;
            for (size_t i = 0; i < m; i++) {
                const double x = (double)((long)i - h);
                ex[j * m + i] = ws * cexp(I * (c * kx * x));
                ey[j * m + i] = cexp(I * (c * ky * x));
            }
        }
#pragma omp parallel for schedule(static)
        for (size_t iy = 0; iy < m; iy++)
            for (size_t j = 0; j < nb; j++) {
                const double complex f = ey[j * m + iy];
                const double complex *e = ex + j * m;
                double complex *row = acc + iy * m;
                for (size_t ix = 0; ix < m; ix++)
                    row[ix] += f * e[ix];
            }
        if (progress) {
            kw_progress pr = {"psf", (int)(b + 1), (int)nblocks, NAN, NULL};
            if (progress(user, &pr)) {
                st = kw_set_error(KW_ECANCELLED, "psf: cancelled");
                break;
            }
        }
    }
    if (!st)
        for (size_t i = 0; i < m * m; i++)
            psf[i] = (float complex)(acc[i] * norm);
    kw_free(acc);
    kw_free(ex);
    kw_free(ey);
    return st;
}

/* |psf| at centre + offset d along axis a */
static double mag_at(const float complex *psf, int rank, const size_t *dims, int a, long d)
{
    size_t idx = 0;
    for (int b = 0; b < rank; b++) {
        long i = (long)(dims[b] / 2) + (b == a ? d : 0);
        idx = idx * dims[b] + (size_t)i;
    }
    return cabs((double complex)psf[idx]);
}

kw_status kw_psf_measure(const float complex *psf, int rank, const size_t *dims,
                         kw_psf_metrics *m)
{
    KW_FAIL_IF(!psf || !dims || !m, KW_EINVAL, "psf: NULL argument");
    KW_FAIL_IF(rank < 1 || rank > KW_PSF_MAX_RANK, KW_EINVAL, "psf: rank %d not in 1..3", rank);
    memset(m, 0, sizeof *m);
    m->rank = rank;
    size_t n = 1;
    for (int a = 0; a < rank; a++) {
        m->dims[a] = dims[a];
        n *= dims[a];
    }
    const double peak = mag_at(psf, rank, dims, 0, 0);
    m->peak = peak;
    KW_FAIL_IF(!(peak > 0), KW_ENUMERIC, "psf: zero at the centre (nothing sampled)");
    for (int a = 0; a < rank; a++) {
        if (dims[a] < 2) {
            m->fwhm[a] = NAN;
            m->lobe[a] = INFINITY; /* no extent: does not limit the lobe */
            continue;
        }
        const long lo = -(long)(dims[a] / 2), hi = (long)dims[a] - 1 - (long)(dims[a] / 2);
        double width = 0;
        for (int side = -1; side <= 1; side += 2) {
            long lim = side > 0 ? hi : -lo;
            double half = (double)lim + 0.5; /* never falls: the whole axis */
            double prev = peak;
            for (long d = 1; d <= lim; d++) {
                double v = mag_at(psf, rank, dims, a, side * d);
                if (v < 0.5 * peak) {
                    half = (double)(d - 1) + (prev - 0.5 * peak) / (prev - v);
                    break;
                }
                prev = v;
            }
            width += half;
        }
        m->fwhm[a] = width;
        double lobe = INFINITY;
        for (int side = -1; side <= 1; side += 2) {
            long lim = side > 0 ? hi : -lo;
            long d = 1;
            while (d < lim && mag_at(psf, rank, dims, a, side * (d + 1)) <
                                  mag_at(psf, rank, dims, a, side * d))
                d++;
            if ((double)d < lobe)
                lobe = (double)d;
        }
        m->lobe[a] = lobe;
    }
    double e_all = 0, e_main = 0, best = -1, bestd = 0;
    long bestoff[KW_PSF_MAX_RANK] = {0};
    for (size_t i = 0; i < n; i++) {
        long off[KW_PSF_MAX_RANK];
        size_t r = i;
        for (int a = rank - 1; a >= 0; a--) {
            off[a] = (long)(r % dims[a]) - (long)(dims[a] / 2);
            r /= dims[a];
        }
        double v = cabs((double complex)psf[i]);
        e_all += v * v;
        double q = 0, d2 = 0;
        for (int a = 0; a < rank; a++) {
            if (isfinite(m->lobe[a]))
                q += ((double)off[a] / m->lobe[a]) * ((double)off[a] / m->lobe[a]);
            d2 += (double)off[a] * (double)off[a];
        }
        if (q < 1.0) {
            e_main += v * v;
            continue;
        }
        const double tie = 1e-9 * peak;
        int better = v > best + tie;
        if (!better && fabs(v - best) <= tie) {
            if (d2 < bestd)
                better = 1;
            else if (d2 == bestd)
                for (int a = 0; a < rank; a++)
                    if (off[a] != bestoff[a]) {
                        better = off[a] > bestoff[a];
                        break;
                    }
        }
        if (better) {
            best = v;
            bestd = d2;
            memcpy(bestoff, off, sizeof off);
        }
    }
    m->peak_sidelobe = best > 0 ? best / peak : 0.0;
    memcpy(m->sidelobe_at, bestoff, sizeof bestoff);
    m->energy_outside = e_all > 0 ? 1.0 - e_main / e_all : 0.0;
    if (m->energy_outside < 0)
        m->energy_outside = 0;
    return KW_OK;
}

/* ---- transform point spread ---------------------------------------------- */

struct kw_tpsf_plan {
    size_t ny, nx;
    int levels;
    kw_fft_plan *fft;
    kw_wavelet_plan *wav;
    float complex *buf;
};

kw_status kw_tpsf_create(kw_tpsf_plan **plan, size_t ny, size_t nx, int order, int levels)
{
    KW_FAIL_IF(!plan, KW_EINVAL, "tpsf: NULL argument");
    *plan = NULL;
    KW_FAIL_IF(levels < 1, KW_EINVAL, "tpsf: at least one wavelet level");
    kw_tpsf_plan *p = kw_alloc(sizeof *p);
    KW_FAIL_IF(!p, KW_ENOMEM, "tpsf: out of memory");
    p->ny = ny;
    p->nx = nx;
    p->levels = levels;
    kw_status st = kw_wavelet_create(&p->wav, order, ny, nx, levels);
    if (!st) {
        size_t dims[2] = {ny, nx};
        st = kw_fft_create(&p->fft, 2, dims, 1, KW_FFT_ESTIMATE);
    }
    if (!st) {
        p->buf = kw_alloc(ny * nx * sizeof *p->buf);
        if (!p->buf)
            st = kw_set_error(KW_ENOMEM, "tpsf: out of memory");
    }
    if (st) {
        kw_tpsf_destroy(p);
        return st;
    }
    *plan = p;
    return KW_OK;
}

kw_status kw_tpsf_execute(const kw_tpsf_plan *p, const float *w, double *coherence)
{
    KW_FAIL_IF(!p || !w || !coherence, KW_EINVAL, "tpsf: NULL argument");
    const size_t n = p->ny * p->nx;
    for (int l = 1; l <= p->levels; l++) {
        /* centre of the diagonal band of level l */
        size_t by = p->ny >> l, bx = p->nx >> l;
        size_t ci = (by + by / 2) * p->nx + (bx + bx / 2);
        memset(p->buf, 0, n * sizeof *p->buf);
        p->buf[ci] = 1.0f;
        kw_status st = kw_wavelet_inverse_c(p->wav, p->buf, p->buf);
        if (!st)
            st = kw_fft_forward(p->fft, p->buf);
        if (st)
            return st;
        for (size_t i = 0; i < n; i++)
            p->buf[i] *= w[i];
        st = kw_fft_inverse(p->fft, p->buf);
        if (!st)
            st = kw_wavelet_forward_c(p->wav, p->buf, p->buf);
        if (st)
            return st;
        double own = cabs((double complex)p->buf[ci]), other = 0;
        for (size_t i = 0; i < n; i++)
            if (i != ci) {
                double v = cabs((double complex)p->buf[i]);
                if (v > other)
                    other = v;
            }
        coherence[l - 1] = own > 0 ? other / own : INFINITY;
    }
    return KW_OK;
}

void kw_tpsf_destroy(kw_tpsf_plan *p)
{
    if (!p)
        return;
    kw_wavelet_destroy(p->wav);
    kw_fft_destroy(p->fft);
    kw_free(p->buf);
    kw_free(p);
}

/* ---- largest gap of a Cartesian pattern ------------------------------------ */

kw_status kw_mask_gap(const float *w, size_t ny, size_t nx, double *gap)
{
    KW_FAIL_IF(!w || !gap || ny < 1 || nx < 1, KW_EINVAL, "gap: bad arguments");
    const size_t H = 2 * ny - 1, W = 2 * nx - 1;
    const size_t big = H + W + 4;
    size_t *d = kw_alloc_n(H * W, sizeof *d);
    long *rmin = kw_alloc_n(ny, sizeof *rmin), *rmax = kw_alloc_n(ny, sizeof *rmax);
    long *cmin = kw_alloc_n(nx, sizeof *cmin), *cmax = kw_alloc_n(nx, sizeof *cmax);
    if (!d || !rmin || !rmax || !cmin || !cmax) {
        kw_free(d);
        kw_free(rmin);
        kw_free(rmax);
        kw_free(cmin);
        kw_free(cmax);
        return kw_set_error(KW_ENOMEM, "gap: out of memory");
    }
    for (size_t y = 0; y < ny; y++)
        rmin[y] = LONG_MAX, rmax[y] = -1;
    for (size_t x = 0; x < nx; x++)
        cmin[x] = LONG_MAX, cmax[x] = -1;
    for (size_t y = 0; y < ny; y++)
        for (size_t x = 0; x < nx; x++)
            if (w[y * nx + x] > 0) {
                if ((long)x < rmin[y]) rmin[y] = (long)x;
                if ((long)x > rmax[y]) rmax[y] = (long)x;
                if ((long)y < cmin[x]) cmin[x] = (long)y;
                if ((long)y > cmax[x]) cmax[x] = (long)y;
            }
    /* chessboard distance transform on the half-step grid (two passes with
     * unit weights over the 8-neighbourhood are exact for this metric) */
    for (size_t Y = 0; Y < H; Y++)
        for (size_t X = 0; X < W; X++)
            d[Y * W + X] = (Y % 2 == 0 && X % 2 == 0 && w[(Y / 2) * nx + X / 2] > 0) ? 0 : big;
    for (size_t Y = 0; Y < H; Y++)
        for (size_t X = 0; X < W; X++) {
            size_t v = d[Y * W + X];
            if (X > 0 && d[Y * W + X - 1] + 1 < v) v = d[Y * W + X - 1] + 1;
            if (Y > 0) {
                for (long dx = -1; dx <= 1; dx++) {
                    long xx = (long)X + dx;
                    if (xx >= 0 && xx < (long)W && d[(Y - 1) * W + (size_t)xx] + 1 < v)
                        v = d[(Y - 1) * W + (size_t)xx] + 1;
                }
            }
            d[Y * W + X] = v;
        }
    for (size_t Y = H; Y-- > 0;)
        for (size_t X = W; X-- > 0;) {
            size_t v = d[Y * W + X];
            if (X + 1 < W && d[Y * W + X + 1] + 1 < v) v = d[Y * W + X + 1] + 1;
            if (Y + 1 < H) {
                for (long dx = -1; dx <= 1; dx++) {
                    long xx = (long)X + dx;
                    if (xx >= 0 && xx < (long)W && d[(Y + 1) * W + (size_t)xx] + 1 < v)
                        v = d[(Y + 1) * W + (size_t)xx] + 1;
                }
            }
            d[Y * W + X] = v;
        }
    /* only points enclosed by samples along their row and column count:
     * the edges of k-space (partial Fourier, cut corners) are not gaps */
    size_t g = 0;
    for (size_t Y = 0; Y < H; Y++)
        for (size_t X = 0; X < W; X++) {
            if (d[Y * W + X] <= g)
                continue;
            size_t y0 = Y / 2, y1 = (Y + 1) / 2, x0 = X / 2, x1 = (X + 1) / 2;
            const size_t xs[2] = {x0, x1}, ys[2] = {y0, y1};
            int col_ok = 1, row_ok = 1;
            for (int i = 0; i < 2; i++) {
                /* Y (half steps) within [2 cmin, 2 cmax] of both columns */
                if (cmax[xs[i]] < 0 || (long)Y < 2 * cmin[xs[i]] || (long)Y > 2 * cmax[xs[i]])
                    col_ok = 0;
                if (rmax[ys[i]] < 0 || (long)X < 2 * rmin[ys[i]] || (long)X > 2 * rmax[ys[i]])
                    row_ok = 0;
            }
            int in = col_ok || row_ok;
            if (in)
                g = d[Y * W + X];
        }
    /* g half-steps from the centre of the largest empty square to a sample:
     * its side, 2 g half-steps, is g delta-k; a full grid gives 1 */
    *gap = (double)g;
    kw_free(d);
    kw_free(rmin);
    kw_free(rmax);
    kw_free(cmin);
    kw_free(cmax);
    return KW_OK;
}

/* ---- continuous FWHM ----------------------------------------------------------- */

/* |sum_j a_j exp(2 pi i f_j t)| for a profile given as (frequency, amplitude)
 * pairs, in double */
static double profile(const double *f, const double *amp, size_t n, double t)
{
    double re = 0, im = 0;
    for (size_t j = 0; j < n; j++) {
        double ph = 2.0 * KW_PI * f[j] * t;
        re += amp[j] * cos(ph);
        im += amp[j] * sin(ph);
    }
    return sqrt(re * re + im * im);
}

/* full width at half maximum of |profile(t)| (symmetric for real
 * amplitudes): march outwards in steps of 1/32, then bisect */
static double fwhm_of(const double *f, const double *amp, size_t n, double tmax)
{
    const double peak = profile(f, amp, n, 0.0);
    if (!(peak > 0))
        return NAN;
    const double h = 1.0 / 32.0;
    double t = h;
    while (t <= tmax && profile(f, amp, n, t) >= 0.5 * peak)
        t += h;
    if (t > tmax)
        return 2.0 * tmax;
    double lo = t - h, hi = t;
    for (int i = 0; i < 40; i++) {
        double mid = 0.5 * (lo + hi);
        if (profile(f, amp, n, mid) >= 0.5 * peak)
            lo = mid;
        else
            hi = mid;
    }
    return lo + hi; /* 2 x the midpoint */
}

kw_status kw_psf_fwhm_cartesian(const float *w, int rank, const size_t *dims, double *fwhm)
{
    KW_FAIL_IF(!w || !dims || !fwhm, KW_EINVAL, "fwhm: NULL argument");
    KW_FAIL_IF(rank < 1 || rank > KW_PSF_MAX_RANK, KW_EINVAL, "fwhm: rank %d not in 1..3", rank);
    size_t total = 1, nmax = 1;
    for (int a = 0; a < rank; a++) {
        total *= dims[a];
        if (dims[a] > nmax)
            nmax = dims[a];
    }
    double *f = kw_alloc_n(nmax, sizeof *f), *amp = kw_alloc_n(nmax, sizeof *amp);
    if (!f || !amp) {
        kw_free(f);
        kw_free(amp);
        return kw_set_error(KW_ENOMEM, "fwhm: out of memory");
    }
    for (int a = 0; a < rank; a++) {
        if (dims[a] < 2) {
            fwhm[a] = NAN;
            continue;
        }
        /* the PSF on the line through x = 0 along axis a only sees the
         * weights summed over the other axes */
        size_t inner = 1;
        for (int b = a + 1; b < rank; b++)
            inner *= dims[b];
        for (size_t k = 0; k < dims[a]; k++) {
            f[k] = ((double)k - (double)(dims[a] / 2)) / (double)dims[a];
            amp[k] = 0;
        }
        for (size_t i = 0; i < total; i++)
            amp[(i / inner) % dims[a]] += w[i];
        fwhm[a] = fwhm_of(f, amp, dims[a], 0.5 * (double)dims[a]);
    }
    kw_free(f);
    kw_free(amp);
    return KW_OK;
}

kw_status kw_psf_fwhm_ndft(const float *k, size_t stride, const float *w, size_t samples,
                           size_t n, double *fwhm)
{
    KW_FAIL_IF(!k || !fwhm || stride < 2 || samples < 1 || n < 2, KW_EINVAL,
               "fwhm: bad arguments");
    double *f = kw_alloc_n(samples, sizeof *f), *amp = kw_alloc_n(samples, sizeof *amp);
    if (!f || !amp) {
        kw_free(f);
        kw_free(amp);
        return kw_set_error(KW_ENOMEM, "fwhm: out of memory");
    }
    /* axis 0 of the picture is y (k column 1), axis 1 is x (column 0) */
    for (int a = 0; a < 2; a++) {
        size_t col = a == 0 ? 1 : 0;
        for (size_t s = 0; s < samples; s++) {
            f[s] = (double)k[s * stride + col] / (double)n;
            amp[s] = w ? (double)w[s] : 1.0;
        }
        fwhm[a] = fwhm_of(f, amp, samples, 0.5 * (double)n);
    }
    kw_free(f);
    kw_free(amp);
    return KW_OK;
}
