/* pattern_analysis.c: kw_pattern_analysis (kw_pattern_analysis.h): the
 * figures `kweave pattern --analyse / --compare` reports. Point spread and
 * gaps come from recon/psf.c (kw_psf.h), the transform point spread from the
 * db4 wavelet (Lustig, Donoho & Pauly 2007, MRM 58:1182), the radial area
 * weights from kw_traj.h and the Pipe & Menon 1999 weights from kw_dcf.h. */
#include "kw_pattern_analysis.h"
#include "mask_acs.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_dcf.h"
#include "kw_traj.h"
#include "kw_wavelet.h"

#define TPSF_ORDER 4 /* db4, as in the compressed-sensing literature */
#define PICTURE 512  /* trajectory picture, pixels a side */

typedef kw_pattern_analysis analysis;

void kw_pattern_analysis_free(kw_pattern_analysis *a)
{
    if (!a)
        return;
    kw_free(a->psfbuf);
    kw_free(a->picture);
    a->psfbuf = NULL;
    a->picture = NULL;
}

/* Cartesian figures that need no PSF: acceleration, ACS, gaps */
static void cartesian_counts(analysis *a, const float *w)
{
    const size_t *d = a->dims;
    size_t n = d[0] * d[1], s = 0;
    for (size_t i = 0; i < n; i++)
        s += w[i] > 0;
    a->sampled_fraction = (double)s / (double)n;
    a->acceleration = s ? (double)n / (double)s : INFINITY;
    /* ACS: the contiguous fully sampled block through k = 0 (mask_acs.h,
     * as the pattern sidecar measures it) */
    uint8_t *m = kw_alloc_n(n, 1);
    if (m) {
        for (size_t i = 0; i < n; i++)
            m[i] = w[i] > 0;
        kw_mask_acs_block(m, d, a->plane, a->acs_block);
        kw_free(m);
    }
    a->acs_lines = a->plane ? (double)(a->acs_block[0] * a->acs_block[1])
                            : (double)a->acs_block[0];
    /* largest step between neighbouring samples along each axis (lines of
     * the other axis), in delta-k; shown per axis for line masks */
    for (int ax = 0; ax < 2; ax++) {
        size_t nl = d[1 - ax], len = d[ax];
        double g = 0;
        for (size_t l = 0; l < nl; l++) {
            long last = -1;
            for (size_t i = 0; i < len; i++) {
                size_t idx = ax == 0 ? i * d[1] + l : l * d[1] + i;
                if (w[idx] > 0) {
                    if (last >= 0 && (double)((long)i - last) > g)
                        g = (double)((long)i - last);
                    last = (long)i;
                }
            }
        }
        a->gap_axis[ax] = g;
    }
}

static double fwhm_main(const analysis *a)
{
    /* the worst (widest) of the phase-encode axes; lines: along y only */
    if (a->cartesian && !a->plane)
        return a->psf.fwhm[0];
    double f = 0;
    for (int i = 0; i < a->psfrank; i++)
        if (isfinite(a->psf.fwhm[i]) && a->psf.fwhm[i] > f)
            f = a->psf.fwhm[i];
    return f;
}

static double tpsf_max(const analysis *a)
{
    double t = 0;
    for (int l = 0; l < a->tpsf_levels; l++)
        if (a->tpsf[l] > t)
            t = a->tpsf[l];
    return a->tpsf_levels ? t : NAN;
}

static kw_status analyse_cartesian(analysis *a, const float *w)
{
    cartesian_counts(a, w);
    KW_FAIL_IF(a->sampled_fraction == 0, KW_EFORMAT, "mask: nothing is sampled");
    kw_status gst = kw_mask_gap(w, a->dims[0], a->dims[1], &a->max_gap);
    if (gst)
        return gst;
    a->psfrank = 2;
    a->psfdims[0] = a->dims[0];
    a->psfdims[1] = a->dims[1];
    size_t n = a->dims[0] * a->dims[1];
    a->psfbuf = kw_alloc(n * sizeof *a->psfbuf);
    KW_FAIL_IF(!a->psfbuf, KW_ENOMEM, "psf: out of memory");
    kw_psf_plan *pp;
    kw_status st = kw_psf_create(&pp, 2, a->dims);
    if (st)
        return st;
    st = kw_psf_execute(pp, w, a->psfbuf);
    kw_psf_destroy(pp);
    if (!st)
        st = kw_psf_measure(a->psfbuf, 2, a->dims, &a->psf);
    if (!st) /* the continuous FWHM replaces the grid-interpolated one */
        st = kw_psf_fwhm_cartesian(w, 2, a->dims, a->psf.fwhm);
    if (st)
        return st;
    /* transform point spread in the db4 wavelet domain */
    int L = kw_wavelet_max_levels(a->dims[0], a->dims[1]);
    if (L > KW_PATTERN_TPSF_MAX_LEVELS)
        L = KW_PATTERN_TPSF_MAX_LEVELS;
    a->tpsf_levels = 0;
    if (L >= 1) {
        kw_tpsf_plan *tp;
        st = kw_tpsf_create(&tp, a->dims[0], a->dims[1], TPSF_ORDER, L);
        if (!st)
            st = kw_tpsf_execute(tp, w, a->tpsf);
        kw_tpsf_destroy(tp);
        if (st)
            return st;
        a->tpsf_levels = L;
    }
    a->nyquist_spokes = NAN;
    a->picture = kw_alloc(n * sizeof *a->picture);
    KW_FAIL_IF(!a->picture, KW_ENOMEM, "picture: out of memory");
    float wmax = 0;
    for (size_t i = 0; i < n; i++)
        wmax = w[i] > wmax ? w[i] : wmax;
    for (size_t i = 0; i < n; i++)
        a->picture[i] = wmax > 0 ? w[i] / wmax : 0;
    a->pic_h = a->dims[0];
    a->pic_w = a->dims[1];
    return KW_OK;
}

/* largest distance from a sample to the nearest sample of another readout,
 * and the largest step along a readout, in delta-k (in-plane) */
static kw_status traj_gap(const float *k, size_t stride, size_t ns, size_t readout, size_t n,
                          double *gap)
{
    const long half = (long)n / 2 + 2, side = 2 * half + 1;
    size_t ncell = (size_t)(side * side);
    size_t *head = kw_alloc_n(ncell, sizeof *head), *next = kw_alloc_n(ns, sizeof *next);
    if (!head || !next) {
        kw_free(head);
        kw_free(next);
        return kw_set_error(KW_ENOMEM, "gap: out of memory");
    }
    for (size_t c = 0; c < ncell; c++)
        head[c] = SIZE_MAX;
    for (size_t s = 0; s < ns; s++) {
        long cx = lround(floor(k[s * stride])) + half, cy = lround(floor(k[s * stride + 1])) + half;
        if (cx < 0) cx = 0;
        if (cy < 0) cy = 0;
        if (cx >= side) cx = side - 1;
        if (cy >= side) cy = side - 1;
        size_t c = (size_t)(cy * side + cx);
        next[s] = head[c];
        head[c] = s;
    }
    double g = 0;
    for (size_t s = 0; s < ns; s++) {
        if ((s + 1) % readout != 0) { /* along the readout */
            double dx = k[(s + 1) * stride] - k[s * stride];
            double dy = k[(s + 1) * stride + 1] - k[s * stride + 1];
            double d = sqrt(dx * dx + dy * dy);
            if (d > g)
                g = d;
        }
        long cx = lround(floor(k[s * stride])) + half, cy = lround(floor(k[s * stride + 1])) + half;
        double best = INFINITY;
        for (long r = 0; r < side; r++) {
            for (long y = cy - r; y <= cy + r; y++)
                for (long x = cx - r; x <= cx + r; x++) {
                    if (labs(y - cy) != r && labs(x - cx) != r)
                        continue;
                    if (x < 0 || y < 0 || x >= side || y >= side)
                        continue;
                    for (size_t q = head[(size_t)(y * side + x)]; q != SIZE_MAX; q = next[q]) {
                        if (q / readout == s / readout)
                            continue;
                        double dx = k[q * stride] - k[s * stride];
                        double dy = k[q * stride + 1] - k[s * stride + 1];
                        double d = sqrt(dx * dx + dy * dy);
                        if (d < best)
                            best = d;
                    }
                }
            if (best <= (double)r)
                break;
        }
        if (isfinite(best) && best > g)
            g = best;
    }
    kw_free(head);
    kw_free(next);
    *gap = g;
    return KW_OK;
}

static kw_status analyse_traj(analysis *a, const float *k, size_t ns, size_t stride,
                              const kw_pattern_traj_desc *ti, kw_progress_fn progress,
                              void *user)
{
    /* one plane: the kz = 0 partition of a stack of stars */
    size_t first = 0, count = ns;
    if (stride == 3) {
        first = ns;
        count = 0;
        for (size_t s = 0; s < ns; s++)
            if (k[s * 3 + 2] == 0.0f) {
                if (first == ns)
                    first = s;
                count++;
            }
        KW_FAIL_IF(count == 0, KW_EFORMAT, "trajectory: no samples in the kz = 0 partition");
        for (size_t s = first; s < first + count; s++)
            KW_FAIL_IF(s >= ns || k[s * 3 + 2] != 0.0f, KW_EFORMAT,
                       "trajectory: the kz = 0 partition is not contiguous");
    }
    KW_FAIL_IF(count % ti->readout != 0, KW_EFORMAT,
               "trajectory: %zu samples per plane are not whole readouts of %zu", count,
               ti->readout);
    const float *kp = k + first * stride;

    a->dims[0] = a->dims[1] = ti->n;
    a->axes[0] = "y";
    a->axes[1] = "x";
    a->sampled_fraction = (double)count / ((double)ti->n * (double)ti->n);
    a->spokes = count / ti->readout;
    a->nyquist_spokes = ti->radial ? (double)kw_traj_nyquist_spokes(ti->n) : NAN;
    a->acceleration = ti->radial ? KW_PI * (double)ti->n / 2.0 / (double)a->spokes : NAN;
    if (!ti->radial && ti->weights == KW_PATTERN_WEIGHTS_NONE) /* EPI: a Cartesian subset */
        a->acceleration = (double)ti->n * (double)ti->n / (double)count;
    a->weights = ti->weights;
    a->acs_lines = NAN;
    kw_status st = traj_gap(kp, stride, count, ti->readout, ti->n, &a->max_gap);
    if (st)
        return st;
    a->gap_axis[0] = a->gap_axis[1] = NAN;
    float *w = NULL;
    if (ti->weights != KW_PATTERN_WEIGHTS_NONE) {
        w = kw_alloc_n(count, sizeof *w);
        KW_FAIL_IF(!w, KW_ENOMEM, "weights: out of memory");
        kw_traj_options o;
        kw_traj_options_init(&o);
        o.kind = KW_TRAJ_RADIAL;
        o.n = ti->n;
        o.spokes = a->spokes;
        o.dwell_s = 1;
        o.te_s = 1;
        o.oversampling = ti->radial ? ti->oversampling : 1;
        if (ti->weights == KW_PATTERN_WEIGHTS_RADIAL) {
            st = kw_traj_radial_weights(&o, w);
        } else {
            /* Pipe & Menon 1999 iterative weights (recon/kw_dcf.h); the grid
             * is 4 points wider so k-max = N/2 lies inside [-M/2, M/2) */
            size_t dd[2] = {ti->n + 4, ti->n + 4};
            st = kw_dcf_pipe(2, dd, count, kp, 0, NULL, w);
        }
        if (st) {
            kw_free(w);
            return st;
        }
    }
    size_t m = ti->psf_size > 0 ? ti->psf_size : (ti->n < 128 ? ti->n : 128);
    a->psfrank = 2;
    a->psfdims[0] = a->psfdims[1] = m;
    a->psfbuf = kw_alloc(m * m * sizeof *a->psfbuf);
    if (!a->psfbuf) {
        kw_free(w);
        return kw_set_error(KW_ENOMEM, "psf: out of memory");
    }
    st = kw_psf_ndft(kp, stride, w, count, ti->n, m, a->psfbuf, progress, user);
    if (!st)
        st = kw_psf_measure(a->psfbuf, 2, a->psfdims, &a->psf);
    if (!st) /* the continuous FWHM replaces the grid-interpolated one */
        st = kw_psf_fwhm_ndft(kp, stride, w, count, ti->n, a->psf.fwhm);
    kw_free(w);
    if (st)
        return st;
    a->tpsf_levels = 0;
    /* picture: the plane's samples on a 512 x 512 canvas over [-N/2, N/2) */
    const size_t P = PICTURE;
    a->picture = kw_alloc(P * P * sizeof *a->picture);
    KW_FAIL_IF(!a->picture, KW_ENOMEM, "picture: out of memory");
    a->pic_h = a->pic_w = P;
    for (size_t s = 0; s < count; s++) {
        double x = (kp[s * stride] / (double)ti->n + 0.5) * (double)P;
        double y = (0.5 - kp[s * stride + 1] / (double)ti->n) * (double)P; /* ky up */
        long ix = (long)floor(x), iy = (long)floor(y);
        if (ix >= 0 && iy >= 0 && ix < (long)P && iy < (long)P)
            a->picture[(size_t)iy * P + (size_t)ix] = 1.0f;
    }
    return KW_OK;
}


kw_status kw_pattern_analyse_mask(kw_pattern_analysis *a, const float *w, size_t rows,
                                  size_t cols, int plane)
{
    KW_FAIL_IF(!a || !w, KW_EINVAL, "analysis: NULL argument");
    memset(a, 0, sizeof *a);
    KW_FAIL_PARAM(rows < 1 || cols < 1, KW_EINVAL, "dims", "empty mask");
    a->cartesian = 1;
    a->plane = plane != 0;
    a->dims[0] = rows;
    a->dims[1] = cols;
    a->axes[0] = a->plane ? "z" : "y";
    a->axes[1] = a->plane ? "y" : "x";
    kw_status st = analyse_cartesian(a, w);
    a->fwhm_main = fwhm_main(a);
    a->tpsf_max = tpsf_max(a);
    return st;
}

kw_status kw_pattern_analyse_trajectory(kw_pattern_analysis *a, const float *k, size_t samples,
                                        int ndim, const kw_pattern_traj_desc *d,
                                        kw_progress_fn progress, void *user)
{
    KW_FAIL_IF(!a || !k || !d, KW_EINVAL, "analysis: NULL argument");
    memset(a, 0, sizeof *a);
    KW_FAIL_PARAM(ndim != 2 && ndim != 3, KW_EINVAL, "ndim", "%d: a trajectory has 2 or 3 columns",
                  ndim);
    KW_FAIL_PARAM(d->n < 2, KW_EINVAL, "n", "matrix %zu under 2", d->n);
    KW_FAIL_PARAM(d->readout < 1, KW_EINVAL, "readout", "no samples per readout");
    /* cycles/FOV: the matrix reaches +-n/2; a sample beyond +-n (twice the
     * extent) is no sampling of this matrix, and huge values would
     * overflow the grid arithmetic below */
    const double lim = (double)d->n;
    for (size_t j = 0; j < samples * (size_t)ndim; j++)
        KW_FAIL_PARAM(!isfinite(k[j]) || fabs(k[j]) > lim, KW_ERANGE, "trajectory",
                      "sample %zu coordinate %zu = %g outside [-%g, %g] cycles/FOV (twice the "
                      "extent of matrix %zu)", j / (size_t)ndim, j % (size_t)ndim, (double)k[j],
                      lim, lim, d->n);
    a->cartesian = 0;
    kw_status st = analyse_traj(a, k, samples, (size_t)ndim, d, progress, user);
    a->fwhm_main = fwhm_main(a);
    a->tpsf_max = tpsf_max(a);
    return st;
}
