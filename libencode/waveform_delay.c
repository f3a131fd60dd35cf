/* waveform_delay.c: the gradient delay from radial data by the shift
 * between opposed spokes' echoes (Peters et al. 2003; kw_waveform.h,
 * kw_waveform_estimate_delay()). A direct DFT per spoke, in double. */
#include <complex.h>
#include <math.h>

#include "kw_waveform.h"

/* P(x) = sum_i a[i] e^{+2 pi i (i - n/2)(x - n/2) / n}, x = 0..n-1, of a
 * spoke (reversed when rev), into p. */
static void projection(const kw_cfloat *a, size_t n, int rev, double complex *p)
{
    for (size_t x = 0; x < n; x++) {
        double complex acc = 0;
        for (size_t i = 0; i < n; i++) {
            const size_t j = rev ? n - 1 - i : i;
            const double ph = 2 * KW_PI * ((double)i - (double)(n / 2)) * ((double)x - (double)(n / 2)) / (double)n;
            acc += (double complex)a[j] * cexp(I * ph);
        }
        p[x] = acc;
    }
}

kw_status kw_waveform_estimate_delay(const kw_cfloat *data, size_t coils, size_t spokes, size_t n,
                                     double dwell_s, double *delay_s)
{
    KW_FAIL_PARAM(!data || !delay_s || !coils, KW_EINVAL, "data", "NULL argument or no coils");
    KW_FAIL_PARAM(spokes < 2 || spokes % 2, KW_EINVAL, "spokes",
                  "%zu spokes; an even number, spoke s opposed to spoke s + spokes/2", spokes);
    KW_FAIL_PARAM(n < 4 || n > (1u << 16), KW_EINVAL, "n", "%zu samples per spoke; 4 to 65536", n);
    KW_FAIL_PARAM(!(dwell_s > 0) || !isfinite(dwell_s), KW_EINVAL, "dwell_s", "must be positive");
    double complex *pa = kw_alloc_n(2 * n, sizeof *pa), *pb = pa ? pa + n : NULL;
    KW_FAIL_IF(!pa, KW_ENOMEM, "delay: out of memory");
    double complex acc = 0;
    int finite = 1;
    for (size_t c = 0; c < coils && finite; c++)
        for (size_t s = 0; s < spokes / 2 && finite; s++) {
            const kw_cfloat *a = data + (c * spokes + s) * n, *b = data + (c * spokes + s + spokes / 2) * n;
            for (size_t i = 0; i < n; i++)
                finite &= isfinite(crealf(a[i])) && isfinite(cimagf(a[i])) && isfinite(crealf(b[i])) &&
                          isfinite(cimagf(b[i]));
            projection(a, n, 0, pa);
            projection(b, n, 1, pb);
            for (size_t x = 0; x + 1 < n; x++)
                acc += pb[x + 1] * conj(pa[x + 1]) * conj(pb[x] * conj(pa[x]));
        }
    kw_free(pa);
    KW_FAIL_PARAM(!finite, KW_EINVAL, "data", "not finite");
    KW_FAIL_PARAM(!(cabs(acc) > 0), KW_EINVAL, "data", "no signal to compare");
    /* b[i] = a[i + s] gives P_b = P_a e^{-2 pi i s x / n}: the angle of
     * C(x+1) C(x)* is -2 pi s / n */
    const double shift = -carg(acc) * (double)n / (2 * KW_PI);
    *delay_s = (shift - 1.0) / 2.0 * dwell_s;
    return KW_OK;
}

/* ---- per-axis delays ---------------------------------------------------------------------- */

/* Solve the m x m system a x = b (m <= 3, row-major, overwritten) by
 * Gaussian elimination with partial pivoting; 0 when a pivot falls under
 * 1e-9 of the largest diagonal element (the axes cannot be told apart). */
static int solve_small(double *a, double *b, int m)
{
    double big = 0;
    for (int i = 0; i < m; i++)
        big = fmax(big, fabs(a[i * m + i]));
    for (int c = 0; c < m; c++) {
        int p = c;
        for (int r = c + 1; r < m; r++)
            if (fabs(a[r * m + c]) > fabs(a[p * m + c]))
                p = r;
        if (!(fabs(a[p * m + c]) > 1e-9 * big))
            return 0;
        for (int k = 0; k < m && p != c; k++) {
            const double t = a[c * m + k];
            a[c * m + k] = a[p * m + k];
            a[p * m + k] = t;
        }
        const double tb = b[c];
        b[c] = b[p];
        b[p] = tb;
        for (int r = c + 1; r < m; r++) {
            const double f = a[r * m + c] / a[c * m + c];
            for (int k = c; k < m; k++)
                a[r * m + k] -= f * a[c * m + k];
            b[r] -= f * b[c];
        }
    }
    for (int c = m - 1; c >= 0; c--) {
        double s = b[c];
        for (int k = c + 1; k < m; k++)
            s -= a[c * m + k] * b[k];
        b[c] = s / a[c * m + c];
    }
    return 1;
}

/* The pair s's delay (s) along its spoke and its weight: the phase slope
 * of sum over coils and x of C(x+1) C(x)*, as kw_waveform_estimate_delay()
 * takes over every pair; the weight its magnitude. 0 when a value is not
 * finite. */
static int pair_delay(const kw_cfloat *data, size_t coils, size_t spokes, size_t n, double dwell_s, size_t s,
                      double complex *pa, double complex *pb, double *d, double *wgt)
{
    double complex acc = 0;
    for (size_t c = 0; c < coils; c++) {
        const kw_cfloat *a = data + (c * spokes + s) * n, *b = data + (c * spokes + s + spokes / 2) * n;
        for (size_t i = 0; i < n; i++)
            if (!isfinite(crealf(a[i])) || !isfinite(cimagf(a[i])) || !isfinite(crealf(b[i])) ||
                !isfinite(cimagf(b[i])))
                return 0;
        projection(a, n, 0, pa);
        projection(b, n, 1, pb);
        for (size_t x = 0; x + 1 < n; x++)
            acc += pb[x + 1] * conj(pa[x + 1]) * conj(pb[x] * conj(pa[x]));
    }
    const double shift = -carg(acc) * (double)n / (2 * KW_PI);
    *d = (shift - 1.0) / 2.0 * dwell_s;
    *wgt = cabs(acc);
    return 1;
}

kw_status kw_waveform_estimate_delay_axes(const kw_cfloat *data, size_t coils, size_t spokes, size_t n,
                                          double dwell_s, const double *dir, int axes, double *delay_s)
{
    KW_FAIL_PARAM(!data || !delay_s || !coils, KW_EINVAL, "data", "NULL argument or no coils");
    KW_FAIL_PARAM(spokes < 2 || spokes % 2, KW_EINVAL, "spokes",
                  "%zu spokes; an even number, spoke s opposed to spoke s + spokes/2", spokes);
    KW_FAIL_PARAM(n < 4 || n > (1u << 16), KW_EINVAL, "n", "%zu samples per spoke; 4 to 65536", n);
    KW_FAIL_PARAM(!(dwell_s > 0) || !isfinite(dwell_s), KW_EINVAL, "dwell_s", "must be positive");
    KW_FAIL_PARAM(axes < 1 || axes > 3, KW_EINVAL, "axes", "%d axes; 1 to 3", axes);
    KW_FAIL_PARAM(!dir, KW_EINVAL, "dir", "no spoke directions given");
    for (size_t s = 0; s < spokes / 2; s++) {
        double len = 0;
        for (int a = 0; a < axes; a++) {
            KW_FAIL_PARAM(!isfinite(dir[s * (size_t)axes + (size_t)a]), KW_EINVAL, "dir", "spoke %zu: not finite",
                          s);
            len += dir[s * (size_t)axes + (size_t)a] * dir[s * (size_t)axes + (size_t)a];
        }
        KW_FAIL_PARAM(!(len > 0), KW_EINVAL, "dir", "spoke %zu: no direction (a zero vector)", s);
    }
    double complex *pa = kw_alloc_n(2 * n, sizeof *pa), *pb = pa ? pa + n : NULL;
    KW_FAIL_IF(!pa, KW_ENOMEM, "delay: out of memory");
    /* weighted least squares of d_p = sum_a delay_a u_a^2 over the pairs
     * (u the unit direction of the pair's first spoke; kw_waveform.h),
     * each pair weighted by its signal times (1 - sigma)^4, sigma =
     * min(1, sqrt(2 (1 - sum_a u_a^4))) (|sin 2 theta| in a plane): the
     * sideways offset that comes with unequal delays biases a pair off the
     * axes (kw_waveform.h) */
    double nm[9] = {0}, rhs[3] = {0}, col[3] = {0}, wsum = 0, signal = 0;
    int finite = 1;
    for (size_t s = 0; s < spokes / 2 && finite; s++) {
        double d = 0, wgt = 0, u2[3] = {0}, len = 0, u4 = 0;
        finite = pair_delay(data, coils, spokes, n, dwell_s, s, pa, pb, &d, &wgt);
        for (int a = 0; a < axes; a++)
            len += dir[s * (size_t)axes + (size_t)a] * dir[s * (size_t)axes + (size_t)a];
        for (int a = 0; a < axes; a++) {
            u2[a] = dir[s * (size_t)axes + (size_t)a] * dir[s * (size_t)axes + (size_t)a] / len;
            u4 += u2[a] * u2[a];
        }
        signal += finite ? wgt : 0;
        const double sigma = fmin(1.0, sqrt(fmax(0.0, 2.0 * (1.0 - u4)))), off = 1.0 - sigma;
        wgt *= off * off * off * off;
        for (int a = 0; finite && wgt > 0 && a < axes; a++) {
            for (int b = 0; b < axes; b++)
                nm[a * axes + b] += wgt * u2[a] * u2[b];
            rhs[a] += wgt * u2[a] * d;
            col[a] += wgt * u2[a];
        }
        wsum += finite ? wgt : 0;
    }
    kw_free(pa);
    KW_FAIL_PARAM(!finite, KW_EINVAL, "data", "not finite");
    KW_FAIL_PARAM(!(signal > 0), KW_EINVAL, "data", "no signal to compare");
    KW_FAIL_PARAM(!(wsum > 0), KW_EINVAL, "dir", "no spoke pair runs near an axis (every one at 45 degrees to "
                  "the axes it crosses): the axes' delays cannot be told apart");
    /* the axes some spoke moves along (the others: NaN) */
    int idx[3], m = 0;
    for (int a = 0; a < axes; a++)
        if (col[a] > 1e-9 * wsum)
            idx[m++] = a;
    double sub[9], sb[3];
    for (int i = 0; i < m; i++) {
        sb[i] = rhs[idx[i]];
        for (int j = 0; j < m; j++)
            sub[i * m + j] = nm[idx[i] * axes + idx[j]];
    }
    KW_FAIL_PARAM(!solve_small(sub, sb, m), KW_EINVAL, "dir",
                  "the spokes' directions do not tell the axes' delays apart (every spoke at the same angle "
                  "to the axes)");
    for (int a = 0; a < axes; a++)
        delay_s[a] = NAN;
    for (int i = 0; i < m; i++)
        delay_s[idx[i]] = sb[i];
    return KW_OK;
}
