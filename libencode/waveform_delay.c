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
