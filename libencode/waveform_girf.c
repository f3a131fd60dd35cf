/* waveform_girf.c: the actual gradient through a measured gradient impulse
 * response given as a sampled transfer function (GIRF; Vannesjo et al.,
 * MRM 69:583-593, 2013; kw_waveform.h, "Actual gradient: GIRF"): the
 * nominal samples zero-padded, transformed by a radix-2 DFT in double
 * precision, multiplied by H(f) interpolated onto the bins, transformed
 * back. */
#include <math.h>
#include <string.h>

#include "waveform_int.h"

kw_status kw_waveform_girf_check(const kw_waveform_options *o, int axes)
{
    if (!o->girf && !o->girf_freq_hz && !o->girf_nfreq)
        return KW_OK;
    KW_FAIL_PARAM(!o->girf || !o->girf_freq_hz, KW_EINVAL, "girf", "%s not given",
                  o->girf ? "the frequencies" : "the transfer function");
    KW_FAIL_PARAM(o->girf_nfreq < 2, KW_EINVAL, "girf", "%zu frequencies; at least 2", o->girf_nfreq);
    KW_FAIL_PARAM(o->girf_nfreq > ((size_t)1 << 28), KW_ERANGE, "girf", "%zu frequencies; at most 2^28",
                  o->girf_nfreq);
    KW_FAIL_PARAM(o->girf_axes != axes, KW_EINVAL, "girf_axes",
                  "%d axes in the transfer function, %d in the waveform", o->girf_axes, axes);
    const size_t nh = o->girf_cross ? (size_t)axes * (size_t)axes : (size_t)axes;
    for (size_t j = 0; j < o->girf_nfreq; j++) {
        const double f = o->girf_freq_hz[j];
        KW_FAIL_PARAM(!isfinite(f) || f < 0, KW_EINVAL, "girf_freq_hz", "frequency %zu: %g Hz; finite and >= 0",
                      j, f);
        KW_FAIL_PARAM(j > 0 && !(f > o->girf_freq_hz[j - 1]), KW_EINVAL, "girf_freq_hz",
                      "frequency %zu: %.9g Hz after %.9g Hz; must increase strictly", j, f, o->girf_freq_hz[j - 1]);
    }
    for (size_t j = 0; j < nh * o->girf_nfreq; j++)
        KW_FAIL_PARAM(!isfinite(creal(o->girf[j])) || !isfinite(cimag(o->girf[j])), KW_ENUMERIC, "girf",
                      "%s %zu, frequency %zu: not a finite number", o->girf_cross ? "term" : "axis",
                      j / o->girf_nfreq, j % o->girf_nfreq);
    return KW_OK;
}

/* In-place iterative radix-2 DFT of length n (a power of 2) in double:
 * X_k = sum_j x_j exp(sign 2 pi i j k / n), unscaled. Twiddles from sin and
 * cos of each angle (no recurrence), so the rounding stays near 1e-16
 * log2(n). */
static void dft2(kw_cdouble *x, size_t n, int sign)
{
    for (size_t i = 1, j = 0; i < n; i++) {
        size_t bit = n >> 1;
        for (; j & bit; bit >>= 1)
            j ^= bit;
        j |= bit;
        if (i < j) {
            kw_cdouble t = x[i];
            x[i] = x[j];
            x[j] = t;
        }
    }
    for (size_t len = 2; len <= n; len <<= 1) {
        const double ang = sign * 2.0 * M_PI / (double)len;
        for (size_t k = 0; k < len / 2; k++) {
            const kw_cdouble wk = cos(ang * (double)k) + I * sin(ang * (double)k);
            for (size_t s = 0; s < n; s += len) {
                const kw_cdouble u = x[s + k], v = x[s + k + len / 2] * wk;
                x[s + k] = u + v;
                x[s + k + len / 2] = u - v;
            }
        }
    }
}

/* H number a (an axis, or a term out * axes + in) at frequency f >= 0
 * (kw_waveform.h's rules). */
static kw_cdouble h_at(const kw_waveform_options *o, int a, double f)
{
    const double *fr = o->girf_freq_hz;
    const kw_cdouble *h = o->girf + (size_t)a * o->girf_nfreq;
    const size_t m = o->girf_nfreq;
    if (f > fr[m - 1])
        return 0;
    if (f < fr[0]) /* between conj H(f_0) at -f_0 and H(f_0) at f_0 */
        return creal(h[0]) + I * cimag(h[0]) * (f / fr[0]);
    size_t lo = 0, hi = m - 1; /* fr[lo] <= f <= fr[hi] */
    while (hi - lo > 1) {
        const size_t mid = lo + (hi - lo) / 2;
        if (fr[mid] <= f)
            lo = mid;
        else
            hi = mid;
    }
    const double u = (f - fr[lo]) / (fr[hi] - fr[lo]);
    return (1.0 - u) * creal(h[lo]) + u * creal(h[hi]) + I * ((1.0 - u) * cimag(h[lo]) + u * cimag(h[hi]));
}

kw_status kw_waveform_girf_prepare(struct kw_waveform *w)
{
    const kw_waveform_options *o = &w->o;
    if (!o->girf)
        return KW_OK;
    const size_t n = w->n, na = (size_t)w->axes;
    size_t nf = 2;
    while (nf < 2 * n)
        nf <<= 1;
    const size_t nin = o->girf_cross ? na : 1; /* inputs per output axis */
    kw_cdouble *x = kw_alloc_n(nf * (1 + nin), sizeof *x), *in = x ? x + nf : NULL;
    w->ga = kw_alloc_n(n * na, sizeof *w->ga);
    w->gaf = kw_alloc_n(n * na, sizeof *w->gaf);
    if (!x || !w->ga || !w->gaf) {
        kw_free(x);
        KW_FAIL_IF(1, KW_ENOMEM, "girf: out of memory for %zu frequency bins", nf);
    }
    const double df = 1.0 / ((double)nf * o->raster_s);
    for (size_t a = 0; a < na; a++) {
        /* the spectra of the inputs: axis a alone, or every axis (cross) */
        for (size_t c = 0; c < nin; c++) {
            kw_cdouble *s = in + c * nf;
            const size_t ax = o->girf_cross ? c : a;
            memset(s, 0, nf * sizeof *s);
            for (size_t i = 0; i < n; i++)
                s[i] = w->g[i * na + ax];
            dft2(s, nf, -1);
        }
        memset(x, 0, nf * sizeof *x);
        for (size_t c = 0; c < nin; c++) {
            const int hi = o->girf_cross ? (int)(a * na + c) : (int)a;
            const kw_cdouble *s = in + c * nf;
            for (size_t k = 0; k <= nf / 2; k++) {
                kw_cdouble hk = h_at(o, hi, (double)k * df);
                if (k == 0 || k == nf / 2)
                    hk = creal(hk);
                x[k] += s[k] * hk;
                if (k > 0 && k < nf / 2)
                    x[nf - k] += s[nf - k] * conj(hk);
            }
        }
        dft2(x, nf, +1);
        for (size_t i = 0; i < n; i++)
            w->ga[i * na + a] = creal(x[i]) / (double)nf;
        w->gaf[a] = 0; /* the integral from the start, linear between samples */
        for (size_t i = 1; i < n; i++)
            w->gaf[i * na + a] = w->gaf[(i - 1) * na + a] +
                                 0.5 * o->raster_s * (w->ga[(i - 1) * na + a] + w->ga[i * na + a]);
    }
    kw_free(x);
    w->girf_band[0] = o->girf_freq_hz[0];
    w->girf_band[1] = o->girf_freq_hz[o->girf_nfreq - 1];
    w->o.girf = NULL; /* the caller's arrays are not kept */
    w->o.girf_freq_hz = NULL;
    return KW_OK;
}

/* The integral of the actual gradient on axis a from the start to t (0
 * before it; the last value after it: the waveform is over). */
double kw_waveform_girf_integral(const struct kw_waveform *w, int a, double t)
{
    const size_t na = (size_t)w->axes, last = w->n - 1;
    const double h = w->o.raster_s;
    if (t <= 0)
        return 0;
    if (t >= (double)last * h)
        return w->gaf[last * na + (size_t)a];
    size_t i = (size_t)floor(t / h);
    if (i >= last)
        i = last - 1;
    const double d = t - (double)i * h, g0 = w->ga[i * na + (size_t)a], s = (w->ga[(i + 1) * na + (size_t)a] - g0) / h;
    return w->gaf[i * na + (size_t)a] + g0 * d + 0.5 * s * d * d;
}

kw_status kw_waveform_girf_split(const kw_cfloat *table, size_t rows, int axes, double **freq_hz,
                                 kw_cdouble **h)
{
    KW_FAIL_PARAM(!freq_hz || !h, KW_EINVAL, "girf", "NULL argument");
    *freq_hz = NULL;
    *h = NULL;
    KW_FAIL_PARAM(!table || !rows, KW_EINVAL, "girf", "no rows given");
    KW_FAIL_PARAM(axes < 1 || (axes > 3 && axes != 4 && axes != 9), KW_EINVAL, "girf",
                  "%d columns of H; 1 to 3 (one per axis), or 4 or 9 (cross-axis terms)", axes);
    const size_t nc = (size_t)axes + 1;
    for (size_t j = 0; j < rows; j++)
        KW_FAIL_PARAM(cimagf(table[j * nc]) != 0, KW_EINVAL, "girf",
                      "row %zu: the frequency (column 0) %g%+gi Hz is not real", j, (double)crealf(table[j * nc]),
                      (double)cimagf(table[j * nc]));
    double *f = kw_alloc_n(rows, sizeof *f);
    kw_cdouble *hv = kw_alloc_n(rows * (size_t)axes, sizeof *hv);
    if (!f || !hv) {
        kw_free(f);
        kw_free(hv);
        KW_FAIL_IF(1, KW_ENOMEM, "girf: out of memory for %zu rows", rows);
    }
    for (size_t j = 0; j < rows; j++) {
        f[j] = crealf(table[j * nc]);
        for (size_t c = 0; c + 1 < nc; c++)
            hv[c * rows + j] = (double)crealf(table[j * nc + 1 + c]) + I * (double)cimagf(table[j * nc + 1 + c]);
    }
    *freq_hz = f;
    *h = hv;
    return KW_OK;
}
