/* coilsens.c: sampling analysis and sensitivity estimation (kw_coilsens.h).
 * Eigenvector method: Walsh DO, Gmitro AF, Marcellin MW, MRM 43:682-690,
 * 2000, applied to low-resolution images from the autocalibration lines. */
#include "kw_coilsens.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_combine.h"
#include "kw_fft.h"

void kw_cart_mask(const float complex *ksp, size_t nc, size_t npix, uint8_t *mask)
{
    for (size_t p = 0; p < npix; p++) {
        uint8_t m = 0;
        for (size_t c = 0; c < nc && !m; c++)
            m = ksp[c * npix + p] != 0;
        mask[p] = m;
    }
}

static size_t gcd_sz(size_t a, size_t b)
{
    while (b) {
        size_t t = a % b;
        a = b;
        b = t;
    }
    return a;
}

/* Lines along axis a, from..to inclusive, with at least one sample (one
 * pass over the mask; at most 1 at a time per line counted). */
static size_t lines_in(const uint8_t *mask, const size_t d[3], int a, size_t from, size_t to)
{
    if (to < from || from >= d[a])
        return 0;
    if (to >= d[a])
        to = d[a] - 1;
    uint8_t *seen = kw_alloc_n(to - from + 1, 1);
    if (!seen)
        return 0;
    size_t npix = d[0] * d[1] * d[2], n = 0;
    for (size_t p = 0; p < npix; p++) {
        size_t idx = a == 0 ? p / (d[1] * d[2]) : a == 1 ? (p / d[2]) % d[1] : p % d[2];
        if (mask[p] && idx >= from && idx <= to && !seen[idx - from]) {
            seen[idx - from] = 1;
            n++;
        }
    }
    kw_free(seen);
    return n;
}

kw_status kw_cart_sampling_analyse(const uint8_t *mask, const size_t d[3],
                                   kw_cart_sampling *s)
{
    KW_FAIL_IF(!mask || !d || !s, KW_EINVAL, "sampling: NULL argument");
    memset(s, 0, sizeof *s);
    size_t npix = d[0] * d[1] * d[2];
    size_t count = 0;
    for (size_t p = 0; p < npix; p++)
        count += mask[p] != 0;
    KW_FAIL_IF(count == 0, KW_EFORMAT, "in: no sampled point (all zero k-space)");
    s->fraction = (double)count / (double)npix;
    size_t ctr[3] = {d[0] / 2, d[1] / 2, d[2] / 2};
    size_t maxd = d[0] > d[1] ? d[0] : d[1];
    maxd = maxd > d[2] ? maxd : d[2];
    uint8_t *proj = kw_alloc_n(maxd, 1);
    KW_FAIL_IF(!proj, KW_ENOMEM, "sampling: out of memory");
    s->uniform = 1;
    for (int a = 0; a < 3; a++) {
        memset(proj, 0, maxd);
        for (size_t p = 0; p < npix; p++)
            if (mask[p]) {
                size_t idx = a == 0 ? p / (d[1] * d[2]) : a == 1 ? (p / d[2]) % d[1] : p % d[2];
                proj[idx] = 1;
            }
        size_t lo = 0, hi = d[a] - 1;
        while (!proj[lo])
            lo++;
        while (!proj[hi])
            hi--;
        s->lo[a] = lo;
        s->hi[a] = hi;
        /* autocalibration run through the centre voxel along this axis */
        size_t c3[3] = {ctr[0], ctr[1], ctr[2]};
        size_t ci = (ctr[0] * d[1] + ctr[1]) * d[2] + ctr[2];
        size_t stride = a == 0 ? d[1] * d[2] : a == 1 ? d[2] : 1;
        (void)c3;
        if (mask[ci]) {
            size_t b = ctr[a], e = ctr[a];
            while (b > 0 && mask[ci - (ctr[a] - (b - 1)) * stride])
                b--;
            while (e + 1 < d[a] && mask[ci + (e + 1 - ctr[a]) * stride])
                e++;
            s->acs_lo[a] = b;
            s->acs_n[a] = e - b + 1;
        }
    }
    /* The runs through the centre may reach a neighbouring lattice line: keep
     * the box only as large as it is fully sampled (shrink faces that are
     * not). */
    for (;;) {
        /* the face with the largest share of unsampled points goes first */
        int ba = -1, bs = 0;
        double worst = 0;
        for (int a = 0; a < 3; a++) {
            if (s->acs_n[a] < 2)
                continue;
            for (int side = 0; side < 2; side++) {
                size_t face = side ? s->acs_lo[a] + s->acs_n[a] - 1 : s->acs_lo[a];
                size_t tot = 0, miss = 0;
                for (size_t p = 0; p < npix; p++) {
                    size_t c3[3] = {p / (d[1] * d[2]), (p / d[2]) % d[1], p % d[2]};
                    if (c3[a] != face)
                        continue;
                    int in = 1;
                    for (int b = 0; b < 3; b++)
                        if (b != a && (c3[b] < s->acs_lo[b] || c3[b] >= s->acs_lo[b] + s->acs_n[b]))
                            in = 0;
                    tot += in;
                    miss += in && !mask[p];
                }
                double frac = tot ? (double)miss / (double)tot : 0;
                if (frac > worst) {
                    worst = frac;
                    ba = a;
                    bs = side;
                }
            }
        }
        if (ba < 0)
            break;
        if (!bs)
            s->acs_lo[ba]++;
        s->acs_n[ba]--;
    }
    for (int a = 0; a < 3; a++) {
        memset(proj, 0, maxd);
        for (size_t p = 0; p < npix; p++)
            if (mask[p]) {
                size_t idx = a == 0 ? p / (d[1] * d[2]) : a == 1 ? (p / d[2]) % d[1] : p % d[2];
                proj[idx] = 1;
            }
        size_t lo = s->lo[a], hi = s->hi[a];
        /* lattice outside the block */
        size_t g = 0, first = (size_t)-1, prev = (size_t)-1;
        for (size_t i = lo; i <= hi; i++) {
            int in_acs = s->acs_n[a] && i >= s->acs_lo[a] && i < s->acs_lo[a] + s->acs_n[a];
            if (!proj[i] || in_acs)
                continue;
            if (first == (size_t)-1)
                first = i;
            /* spacings on one side of the block only (not across it) */
            int across = s->acs_n[a] && prev != (size_t)-1 && prev < s->acs_lo[a] && i > s->acs_lo[a];
            if (prev != (size_t)-1 && !across)
                g = gcd_sz(g, i - prev);
            prev = i;
        }
        int R = 1;
        if (g > 1)
            R = (int)g;
        else if (g == 0 && first != (size_t)-1 && s->acs_n[a]) {
            /* one line outside the block: spacing from the block edge */
            size_t dist = first < s->acs_lo[a] ? s->acs_lo[a] - first
                                                : first - (s->acs_lo[a] + s->acs_n[a] - 1);
            R = dist > 1 ? (int)dist : 1;
        }
        s->accel[a] = R;
        s->offset[a] = (int)((first == (size_t)-1 ? lo : first) % (size_t)R);
        for (size_t i = lo; i <= hi && R > 1; i++) {
            int in_acs = s->acs_n[a] && i >= s->acs_lo[a] && i < s->acs_lo[a] + s->acs_n[a];
            int on = (int)(i % (size_t)R) == s->offset[a];
            if (!in_acs && on != proj[i])
                s->uniform = 0;
        }
        size_t left = ctr[a] - lo, right = hi - ctr[a];
        /* asymmetric by more than one lattice step */
        s->partial[a] = d[a] > 1 && (left > right + (size_t)R || right > left + (size_t)R);
    }
    kw_free(proj);
    /* every lattice point sampled, nothing else outside the block */
    for (size_t p = 0; p < npix && s->uniform; p++) {
        size_t c3[3] = {p / (d[1] * d[2]), (p / d[2]) % d[1], p % d[2]};
        int lat = 1, acs = 1;
        for (int a = 0; a < 3; a++) {
            if (c3[a] < s->lo[a] || c3[a] > s->hi[a] ||
                (int)(c3[a] % (size_t)s->accel[a]) != s->offset[a])
                lat = 0;
            if (!s->acs_n[a] || c3[a] < s->acs_lo[a] || c3[a] >= s->acs_lo[a] + s->acs_n[a])
                acs = 0;
        }
        if ((lat && !mask[p]) || (mask[p] && !lat && !acs))
            s->uniform = 0;
    }
    if (!s->uniform)
        for (int a = 0; a < 3; a++) {
            s->accel[a] = 1;
            s->offset[a] = 0;
            /* Irregular sampling (random, Poisson-disc) is sparse at the
             * edges of k-space, so its outermost lines fall unevenly by
             * chance. Partial Fourier is a missing band of at least 1/16 of
             * the axis on one side whose mirror band on the other side
             * holds at least 3 sampled lines (Poisson-disc R = 4 on 64 to
             * 128 lines: 0 to 2 there by chance; with a fraction of 0.75:
             * 4 or more). A rule of ours from those measurements, no
             * source. */
            size_t left = ctr[a] - s->lo[a], right = s->hi[a] - ctr[a];
            size_t tol = d[a] / 16 > 2 ? d[a] / 16 : 2;
            int asym = d[a] > 1 && (left > right + tol || right > left + tol);
            size_t mirror = 0;
            if (asym)
                mirror = left < right ? lines_in(mask, d, a, ctr[a] + left + 1, s->hi[a])
                                      : lines_in(mask, d, a, s->lo[a], ctr[a] - right - 1);
            s->partial[a] = asym && mirror >= 3;
        }
    return KW_OK;
}

kw_status kw_coilsens_walsh(const float complex *ksp, size_t nc, const size_t d[3],
                            const kw_cart_sampling *s, double thresh,
                            float complex *sens)
{
    KW_FAIL_IF(!ksp || !d || !s || !sens || nc == 0, KW_EINVAL, "sens: NULL argument");
    for (int a = 0; a < 3; a++)
        KW_FAIL_PARAM(d[a] > 1 && s->acs_n[a] < 4 && s->acs_n[a] < d[a], KW_EINVAL, "sens",
                      "no autocalibration block in the data to estimate "
                      "sensitivities from (%zu lines along axis %d; give maps)",
                      s->acs_n[a], a);
    size_t npix = d[0] * d[1] * d[2];
    int rank = d[0] > 1 ? 3 : 2;
    size_t fd[3] = {d[0], d[1], d[2]};
    kw_fft_plan *plan = NULL;
    kw_status st = kw_fft_create(&plan, rank, rank == 3 ? fd : fd + 1, nc, KW_FFT_ESTIMATE);
    if (st)
        return st;
    float complex *low = kw_alloc(nc * npix * sizeof *low);
    float *rss = kw_alloc_n(npix, sizeof *rss);
    if (!low || !rss) {
        kw_fft_destroy(plan);
        kw_free(low);
        kw_free(rss);
        return kw_set_error(KW_ENOMEM, "sens: out of memory");
    }
    for (size_t p = 0; p < npix; p++) {
        size_t c3[3] = {p / (d[1] * d[2]), (p / d[2]) % d[1], p % d[2]};
        double w = 1;
        for (int a = 0; a < 3; a++) {
            size_t n = s->acs_n[a];
            if (c3[a] < s->acs_lo[a] || c3[a] >= s->acs_lo[a] + n) {
                w = 0;
                break;
            }
            if (n < d[a]) /* Hann window over the block */
                w *= 0.5 - 0.5 * cos(2 * KW_PI * ((double)(c3[a] - s->acs_lo[a]) + 0.5) / (double)n);
        }
        for (size_t c = 0; c < nc; c++)
            low[c * npix + p] = (float)w * ksp[c * npix + p];
    }
    st = kw_fft_inverse(plan, low);
    kw_fft_destroy(plan);
    if (!st)
        st = kw_combine_adaptive(low, nc, d, 2, NULL, sens);
    if (!st) {
        kw_combine_rss(low, nc, npix, rss);
        float mx = 0;
        for (size_t p = 0; p < npix; p++)
            mx = rss[p] > mx ? rss[p] : mx;
        for (size_t p = 0; p < npix; p++)
            if (rss[p] < (float)thresh * mx)
                for (size_t c = 0; c < nc; c++)
                    sens[c * npix + p] = 0;
    }
    kw_free(low);
    kw_free(rss);
    return st;
}
