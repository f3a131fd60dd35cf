/* acquire_coils.c: the acquisition's coils (a ring of loops or the caller's
 * maps, fitted by a trigonometric series: Guerquin-Kern et al. 2012) and
 * its noise covariance. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "acquire_int.h"
#include "kw_coils.h"
#include "kw_linalg.h"

static kw_status acq_coil_checks(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    KW_FAIL_PARAM(o->coils && o->sens, KW_EINVAL, "coils",
                  "give a ring of loops or sensitivity maps, not both");
    KW_FAIL_PARAM(o->coils < 0 || o->coils > 128, KW_EINVAL, "coils", "must be 1..128 (got %d)",
                  o->coils);
    KW_FAIL_PARAM(o->coil_radius_m != 0 && !o->coils, KW_EINVAL, "coil_radius_m",
                  "only with a ring of loops");
    KW_FAIL_PARAM(o->coil_distance_m != 0 && !o->coils, KW_EINVAL, "coil_distance_m",
                  "only with a ring of loops");
    /* the same bound as the FOV's (10 m): a coil farther away sees nothing */
    KW_FAIL_PARAM(!(fabs(o->coil_radius_m) <= 10), KW_EINVAL, "coil_radius_m",
                  "%g m is absurd (over 10 m)", o->coil_radius_m);
    KW_FAIL_PARAM(!(fabs(o->coil_distance_m) <= 10), KW_EINVAL, "coil_distance_m",
                  "%g m is absurd (over 10 m)", o->coil_distance_m);
    KW_FAIL_PARAM(o->coil_order < -1 || o->coil_order > 8, KW_EINVAL, "coil_order", "must be 0..8");
    KW_FAIL_PARAM(o->coil_tolerance != -1 && (!(o->coil_tolerance >= 0) || !(o->coil_tolerance < 1)),
                  KW_EINVAL, "coil_tolerance",
                  "must lie in [0, 1) (a fraction of the local magnitude)");
    KW_FAIL_PARAM(o->coil_order_z >= 0 && a->ndim != 3, KW_EINVAL, "coil_order_z",
                  a->nsl ? "not with slices (each slice has its own 2-D series)"
                         : "only for 3-D phantoms");
    KW_FAIL_PARAM(o->coil_order_z < -1 || o->coil_order_z > 8, KW_EINVAL, "coil_order_z",
                  "must be 0..8");
    KW_FAIL_PARAM(o->coil_rings != 1 && o->coil_rings != 2, KW_EINVAL, "coil_rings",
                  "must be 1 or 2");
    KW_FAIL_PARAM(o->coil_rings == 2 && !o->coils, KW_EINVAL, "coil_rings",
                  "only with a ring of loops");
    KW_FAIL_PARAM(o->coil_ring_gap_m != 0 && (o->coil_rings != 2 || !(o->coil_ring_gap_m > 0) ||
                                              !isfinite(o->coil_ring_gap_m)),
                  KW_EINVAL, "coil_ring_gap_m", "a positive length, with two rings");
    KW_FAIL_PARAM(o->coil_rings == 2 && o->coils * 2 > 128, KW_EINVAL, "coils",
                  "2 rings of %d loops: at most 128 channels", o->coils);
    a->coil_order = o->coil_order >= 0 ? o->coil_order : a->ndim == 3 ? 3 : 4;
    a->coil_order_z = a->ndim == 3 ? (o->coil_order_z >= 0 ? o->coil_order_z : 2) : 0;
    if (a->ndim == 3)
        KW_FAIL_PARAM((2 * a->coil_order_z + 1) * (2 * a->coil_order + 1) *
                              (2 * a->coil_order + 1) > 1024,
                      KW_EINVAL, "coil_order",
                      "3-D series of orders %d, %d: more than 1024 terms per coil",
                      a->coil_order, a->coil_order_z);
    return KW_OK;
}

/* A ring the coil model refuses: its field (kw_coil_ring's words) as the
 * option of ours that set it, else "coils". */
static kw_status ring_fail(kw_status st)
{
    static const char *const names[][2] = {
        {"rings", "coil_rings"},          {"ring_gap", "coil_ring_gap_m"},
        {"ncoils", "coils"},              {"radius", "coil_radius_m"},
        {"distance", "coil_distance_m"},  {"fov", "fov_m"},
        {"fov_z", "fov_m"}};
    const char *p = kw_last_error_param();
    for (size_t i = 0; *p && i < sizeof names / sizeof names[0]; i++)
        if (strcmp(p, names[i][0]) == 0) {
            char why[400];
            snprintf(why, sizeof why, "%s", kw_last_error_reason());
            return kw_set_error_param(st, names[i][1], "%s", why);
        }
    return kw_error_reparam(st, NULL, "coils");
}

/* The ring's maps: (coils, [nz or slices,] ny, nx); multi-slice: each
 * slice's own maps, the loops' field in the plane of its centre. */
static kw_status acq_ring_maps(kw_acquisition *a, const kw_coil_ring *ring)
{
    const size_t *n = a->n;
    if (a->ndim == 3)
        return kw_coil_ring_maps3(ring, a->cd, a->maps);
    if (!a->per_slice)
        return kw_coil_ring_maps(ring, a->cd + 1, a->maps);
    /* slice-major scratch, reordered to (coils, slices, ny, nx) */
    size_t pl = n[0] * n[1];
    int nsl = a->nsl;
    kw_cfloat *tmpm = kw_alloc_n((size_t)a->ncoils * pl, sizeof *tmpm);
    kw_status st = tmpm ? KW_OK : kw_set_error(KW_ENOMEM, "coils: out of memory");
    for (int sl = 0; !st && sl < nsl; sl++) {
        st = kw_coil_ring_maps_at(ring, a->cd + 1, a->zc[sl] / (0.5 * a->fov[2]), tmpm);
        for (int c = 0; !st && c < a->ncoils; c++)
            memcpy(a->maps + ((size_t)c * nsl + sl) * pl, tmpm + (size_t)c * pl, pl * sizeof *tmpm);
    }
    kw_free(tmpm);
    return st;
}

/* The caller's maps: ([coils,] [nz,] ny, nx). */
static kw_status acq_given_maps(kw_acquisition *a, int mnd)
{
    const kw_acquisition_options *o = &a->o;
    const size_t *n = a->n, *sd = o->sens_dims;
    int ok;
    if (a->ndim == 3)
        ok = (o->sens_ndim == 4 && sd[1] == n[2] && sd[2] == n[1] && sd[3] == n[0] && sd[0] >= 1 &&
              sd[0] <= 128) ||
             (o->sens_ndim == 3 && sd[0] == n[2] && sd[1] == n[1] && sd[2] == n[0]);
    else
        ok = (o->sens_ndim == 3 && sd[1] == n[1] && sd[2] == n[0] && sd[0] >= 1 && sd[0] <= 128) ||
             (o->sens_ndim == 2 && sd[0] == n[1] && sd[1] == n[0]);
    if (!ok && a->ndim == 3)
        return kw_set_error_param(KW_EINVAL, "sens", "shape does not match: expected (coils, %zu, "
                                  "%zu, %zu)", n[2], n[1], n[0]);
    KW_FAIL_PARAM(!ok, KW_EINVAL, "sens", "shape does not match: expected (coils, %zu, %zu)",
                  n[1], n[0]);
    a->ncoils = o->sens_ndim == mnd ? (int)sd[0] : 1;
    return KW_OK;
}

static kw_status acq_alloc_maps(kw_acquisition *a, int mnd, size_t *md, size_t mvox)
{
    md[0] = (size_t)a->ncoils;
    a->info.maps_ndim = mnd;
    for (int i = 0; i < mnd; i++)
        a->info.maps_dims[i] = md[i];
    a->maps_count = (size_t)a->ncoils * mvox;
    a->maps = kw_alloc(a->maps_count * sizeof *a->maps);
    KW_FAIL_PARAM(!a->maps, KW_ENOMEM, a->o.coils ? "coils" : "sens", "out of memory");
    return KW_OK;
}

/* Terms of one coil's series of orders (L, Lz). */
static int series_terms(int L, int Lz)
{
    return (2 * L + 1) * (2 * L + 1) * (2 * Lz + 1);
}

/* The largest pointwise misfit of each coil's series (coef, orders L, Lz)
 * against its maps (coil c at maps + c x stride, grid gd) over the object
 * a->cover, into err[c] where larger (kw_coil_fit_error, floor 10%). */
static kw_status fit_errors(kw_acquisition *a, const kw_cfloat *maps, size_t stride,
                            const kw_cdouble *coef, int L, int Lz, const size_t *gd,
                            kw_cfloat *scratch, double *err)
{
    const int nterm = series_terms(L, Lz);
    for (int c = 0; c < a->ncoils; c++) {
        double e = 0;
        kw_status st = kw_coil_series_grid(coef + (size_t)c * nterm, L, Lz, KW_ACQ_COIL_PERIOD, gd,
                                           scratch);
        if (!st)
            st = kw_coil_fit_error(maps + (size_t)c * stride, scratch, gd, a->cover, 0.1, &e);
        if (st)
            return st;
        err[c] = e > err[c] ? e : err[c];
    }
    return KW_OK;
}

/* acq_fit for multi-slice rings: slice by slice, over its own cut. */
static kw_status acq_fit_slices(kw_acquisition *a, const double *ones, int L, kw_cfloat *scratch)
{
    const size_t *n = a->n;
    const int ncoils = a->ncoils, nterm = series_terms(L, 0);
    const size_t plane_dims[3] = {1, n[1], n[0]};
    size_t pl = n[0] * n[1];
    double *rs = kw_alloc_n((size_t)ncoils, sizeof *rs);
    kw_cfloat *plane = kw_alloc_n((size_t)ncoils * pl, sizeof *plane);
    kw_status st = rs && plane ? KW_OK : kw_set_error(KW_ENOMEM, "coils: out of memory");
    for (int c = 0; c < ncoils; c++)
        a->resid[c] = 0;
    for (int sl = 0; !st && sl < a->nsl; sl++) {
        kw_phantom cut;
        st = kw_phantom_section(&a->ph3, a->zc[sl] / (0.5 * a->fov[2]), &cut);
        if (!st)
            st = kw_phantom_rasterize(&cut, a->cd + 1, ones, 2, a->cover);
        for (int c = 0; !st && c < ncoils; c++)
            memcpy(plane + (size_t)c * pl, a->maps + ((size_t)c * a->nsl + sl) * pl,
                   pl * sizeof *plane);
        const kw_cdouble *coef = a->coef + (size_t)sl * ncoils * nterm;
        if (!st)
            st = kw_coil_fit(plane, ncoils, a->cd + 1, a->cover, L, KW_ACQ_COIL_PERIOD,
                             a->coef + (size_t)sl * ncoils * nterm, rs);
        if (!st)
            st = fit_errors(a, plane, pl, coef, L, 0, plane_dims, scratch, a->resid + ncoils);
        for (int c = 0; !st && c < ncoils; c++)
            a->resid[c] = rs[c] > a->resid[c] ? rs[c] : a->resid[c];
    }
    /* the object support for the SNR: the centre slice's cut */
    if (!st)
        st = kw_phantom_rasterize(&a->ph, a->cd + 1, ones, 2, a->cover);
    kw_free(rs);
    kw_free(plane);
    return st;
}

/* Fit each coil's maps by the series of orders (L, Lz) over the object's
 * support; multi-slice rings: each slice's maps over its own cut, the
 * residual and the largest pointwise misfit per coil the worst over the
 * slices. a->resid: the RMS residuals, then (a->resid + ncoils) the
 * misfits; *worst: the largest misfit of any coil. */
static kw_status acq_fit(kw_acquisition *a, const double *ones, int L, int Lz, double *worst)
{
    const size_t *n = a->n;
    const int ncoils = a->ncoils;
    const size_t pl = n[0] * n[1], plane_dims[3] = {1, n[1], n[0]};
    const size_t nvox = a->ndim == 3 ? pl * n[2] : pl;
    double *maxerr = a->resid + ncoils;
    kw_cfloat *scratch = kw_alloc(nvox * sizeof *scratch);
    KW_FAIL_PARAM(!scratch, KW_ENOMEM, "coils", "out of memory");
    for (int c = 0; c < ncoils; c++)
        maxerr[c] = 0;
    kw_status st;
    if (a->ndim == 3) {
        st = kw_coil_fit3(a->maps, ncoils, a->cd, a->cover, L, Lz, KW_ACQ_COIL_PERIOD, a->coef,
                          a->resid);
        if (!st)
            st = fit_errors(a, a->maps, nvox, a->coef, L, Lz, a->cd, scratch, maxerr);
    } else if (!a->per_slice) {
        st = kw_coil_fit(a->maps, ncoils, a->cd + 1, a->cover, L, KW_ACQ_COIL_PERIOD, a->coef,
                         a->resid);
        if (!st)
            st = fit_errors(a, a->maps, pl, a->coef, L, 0, plane_dims, scratch, maxerr);
    } else {
        st = acq_fit_slices(a, ones, L, scratch);
    }
    kw_free(scratch);
    *worst = 0;
    for (int c = 0; !st && c < ncoils; c++)
        *worst = maxerr[c] > *worst ? maxerr[c] : *worst;
    return st;
}

/* The series order is searched for: a ring of loops, a tolerance, and an
 * order left to the library on at least one axis. */
static double acq_tolerance(const kw_acquisition *a)
{
    const double t = a->o.coil_tolerance;
    return t >= 0 ? t : a->ndim == 3 ? 0.0 : 0.01; /* the default: kw_acquire.h */
}

static int acq_searching(const kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    return o->coils && acq_tolerance(a) > 0 &&
           (o->coil_order < 0 || (a->ndim == 3 && o->coil_order_z < 0));
}

/* Fit at the starting orders; while searching and the largest pointwise
 * misfit is above the tolerance, raise a free axis (3-D, both free: the one
 * whose raise leaves the smaller misfit) within 8 and 1024 terms, and fit
 * again. */
static kw_status acq_fit_search(kw_acquisition *a, const double *ones, int search,
                                const char *who)
{
    const kw_acquisition_options *o = &a->o;
    const int free_l = o->coil_order < 0, free_z = a->ndim == 3 && o->coil_order_z < 0;
    int L = a->coil_order, Lz = a->coil_order_z;
    for (;;) {
        double worst = 0;
        kw_status st = acq_fit(a, ones, L, Lz, &worst);
        if (st)
            return kw_error_reparam(st, NULL, who);
        a->coil_order = L;
        a->coil_order_z = Lz;
        if (!search || worst <= acq_tolerance(a))
            return KW_OK;
        const int up_l = free_l && L < 8 && series_terms(L + 1, Lz) <= 1024;
        const int up_z = free_z && Lz < 8 && series_terms(L, Lz + 1) <= 1024;
        if (up_l && up_z) {
            /* both axes free: the one whose raise fits better (z tried
             * first, kept only when the in-plane raise is worse) */
            double wz = 0, wl = 0;
            if ((st = acq_fit(a, ones, L, Lz + 1, &wz)) || (st = acq_fit(a, ones, L + 1, Lz, &wl)))
                return kw_error_reparam(st, NULL, who);
            if (wl <= wz)
                L++;
            else
                Lz++;
        } else if (up_l) {
            L++;
        } else if (up_z) {
            Lz++;
        } else if (a->ndim == 3)
            return kw_set_error_param(KW_EINVAL, "coil_tolerance",
                                      "%g not met by any series up to 1024 terms: orders %d and "
                                      "%d (z) leave a pointwise misfit of %.3g",
                                      acq_tolerance(a), L, Lz, worst);
        else
            return kw_set_error_param(KW_EINVAL, "coil_tolerance",
                                      "%g not met by any series order up to 8: order %d leaves "
                                      "a pointwise misfit of %.3g", acq_tolerance(a), L, worst);
    }
}

kw_status kw_acq_coils(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    const size_t *n = a->n;
    kw_status st;
    for (int i = 0; i < a->nsl; i++)
        a->zc[i] = kw_acq_slice_centre(i, a->nsl, o->slice_thickness_m, o->slice_gap_m);
    if ((st = acq_coil_checks(a)))
        return st;
    /* object support (pixels any shape covers) for fits and the SNR */
    a->cover = kw_alloc_n(a->npix, sizeof *a->cover);
    KW_FAIL_PARAM(!a->cover, KW_ENOMEM, "dims", "out of memory");
    if (!o->coils && !o->sens)
        return KW_OK;
    const char *who = o->coils ? "coils" : "sens";
    a->per_slice = a->nsl > 0 && o->coils;
    const int mnd = a->ndim == 3 || a->per_slice ? 4 : 3;
    size_t md[4] = {0, a->ndim == 3 ? n[2] : (size_t)a->nsl, n[1], n[0]};
    if (mnd == 3)
        md[1] = n[1], md[2] = n[0];
    const size_t nvox = n[0] * n[1] * (a->ndim == 3 ? n[2] : 1);
    const size_t mvox = nvox * (a->per_slice ? (size_t)a->nsl : 1); /* one coil's maps */
    double ones[KW_PHANTOM_MAX_SHAPES];
    for (int i = 0; i < a->ph.nshapes; i++)
        ones[i] = 1.0;
    kw_phantom_rasterize(&a->ph, a->cd + (a->ndim == 3 ? 0 : 1), ones, 2, a->cover);
    kw_acquisition_info *in = &a->info;
    if (o->coils) {
        kw_coil_ring ring = {o->coils, o->coil_radius_m ? o->coil_radius_m : 0.25 * a->fov[0],
                             o->coil_distance_m ? o->coil_distance_m
                                                : 0.75 * (a->fov[0] > a->fov[1] ? a->fov[0] : a->fov[1]),
                             {a->fov[1], a->fov[0]}, /* (y, x) */
                             o->coil_rings,
                             o->coil_rings == 2 ? (o->coil_ring_gap_m ? o->coil_ring_gap_m : 0.5 * a->fov[2])
                                                : 0.0,
                             a->fov[2]};
        a->ncoils = kw_coil_ring_channels(&ring);
        if ((st = acq_alloc_maps(a, mnd, md, mvox)))
            return st;
        if ((st = acq_ring_maps(a, &ring)))
            return ring_fail(st);
        in->coil_ring = 1;
        in->coil_radius_m = ring.radius;
        in->coil_distance_m = ring.distance;
        in->coil_rings = o->coil_rings;
        in->loops_per_ring = o->coils;
        in->coil_ring_gap_m = ring.ring_gap;
    } else {
        if ((st = acq_given_maps(a, mnd)) || (st = acq_alloc_maps(a, mnd, md, mvox)))
            return st;
        for (size_t i = 0; i < a->maps_count; i++)
            KW_FAIL_PARAM(!isfinite(crealf(o->sens[i])) || !isfinite(cimagf(o->sens[i])),
                          KW_ENUMERIC, "sens", "non-finite value at index %zu", i);
        memcpy(a->maps, o->sens, a->maps_count * sizeof *a->maps);
    }
    const int search = acq_searching(a);
    const int nfit = a->per_slice ? a->nsl : 1,
              maxterm = search ? (a->ndim == 3 ? 1024 : series_terms(8, 0))
                               : series_terms(a->coil_order, a->coil_order_z);
    a->coef = kw_alloc_n((size_t)nfit * a->ncoils * maxterm, sizeof *a->coef);
    a->resid = kw_alloc_n((size_t)a->ncoils * 2, sizeof *a->resid); /* RMS, then max misfit */
    KW_FAIL_PARAM(!a->coef || !a->resid, KW_ENOMEM, "coils", "out of memory");
    if ((st = acq_fit_search(a, ones, search, who)))
        return st;
    const int L = a->coil_order, Lz = a->coil_order_z, nterm = series_terms(L, Lz);
    /* The data are exact for the fitted series: the maps are those. */
    size_t planes = a->ndim == 3 ? n[2] : a->per_slice ? (size_t)a->nsl : 1;
    const size_t gd[3] = {a->per_slice ? 1 : planes, n[1], n[0]}; /* one grid, C order */
    for (int c = 0; c < a->ncoils && !st; c++)
        for (size_t k = 0; k < (a->per_slice ? planes : 1) && !st; k++)
            st = kw_coil_series_grid(a->coef + ((a->per_slice ? k * (size_t)a->ncoils : 0) + (size_t)c) * nterm,
                                     L, Lz, KW_ACQ_COIL_PERIOD, gd,
                                     a->maps + (size_t)c * mvox + (a->per_slice ? k * n[0] * n[1] : 0));
    if (st)
        return kw_error_reparam(st, NULL, "coils");
    in->coil_order = L;
    in->coil_order_z = Lz;
    in->coil_period = KW_ACQ_COIL_PERIOD;
    in->fit_residual = a->resid;
    in->fit_max_error = a->resid + a->ncoils;
    in->coil_tolerance = search ? acq_tolerance(a) : 0;
    return KW_OK;
}

/* The noise covariance's shape: identity, a uniform correlation, or the
 * caller's Hermitian matrix. */
kw_status kw_acq_noise_shape(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    const int nch = a->ncoils > 0 ? a->ncoils : 1;
    KW_FAIL_PARAM(o->noise_corr != 0 && !(o->snr > 0) && !o->noise_cov, KW_EINVAL, "noise_corr",
                  "needs snr (the noise level)");
    KW_FAIL_PARAM(o->noise_corr != 0 && o->noise_cov, KW_EINVAL, "noise_corr",
                  "give a correlation or a covariance, not both");
    a->cov = kw_alloc_n((size_t)nch * nch, sizeof *a->cov);
    a->chol = kw_alloc_n((size_t)nch * nch, sizeof *a->chol);
    KW_FAIL_PARAM(!a->cov || !a->chol, KW_ENOMEM, "noise_cov", "out of memory");
    for (int i = 0; i < nch; i++)
        a->cov[i * nch + i] = 1.0;
    if (o->noise_corr != 0) {
        KW_FAIL_PARAM(!isfinite(o->noise_corr) || !(o->noise_corr > -1.0 / (nch > 1 ? nch - 1 : 1)) ||
                          !(o->noise_corr < 1),
                      KW_EINVAL, "noise_corr", "must lie in (-1/(coils-1), 1) for %d coils", nch);
        for (int i = 0; i < nch; i++)
            for (int j = 0; j < nch; j++)
                if (i != j)
                    a->cov[i * nch + j] = o->noise_corr;
    }
    if (o->noise_cov) {
        KW_FAIL_PARAM(o->noise_cov_dims[0] != (size_t)nch || o->noise_cov_dims[1] != (size_t)nch,
                      KW_EINVAL, "noise_cov", "expected a (%d, %d) matrix", nch, nch);
        kw_cdouble *cov = a->cov;
        for (int i = 0; i < nch * nch; i++) {
            cov[i] = o->noise_cov[i];
            KW_FAIL_PARAM(!isfinite(creal(cov[i])) || !isfinite(cimag(cov[i])), KW_ENUMERIC,
                          "noise_cov", "non-finite value at index %d", i);
        }
        for (int i = 0; i < nch; i++)
            for (int j = 0; j < nch; j++)
                KW_FAIL_PARAM(cabs(cov[i * nch + j] - conj(cov[j * nch + i])) >
                                  1e-5 * (cabs(cov[i * nch + i]) + cabs(cov[j * nch + j])),
                              KW_EINVAL, "noise_cov", "not Hermitian (entry %d,%d)", i, j);
    }
    a->noisy = o->snr > 0 || o->noise_cov;
    return KW_OK;
}

/* The level: with snr the covariance keeps its shape and its mean diagonal
 * becomes sigma^2 (sigma set by the caller from the truth); without, sigma
 * is the root of the mean diagonal. Then its Cholesky factor. */
kw_status kw_acq_noise_level(kw_acquisition *a)
{
    const int nch = a->ncoils > 0 ? a->ncoils : 1;
    const char *who = a->o.noise_cov ? "noise_cov" : "noise_corr";
    double md = 0, scale = 1.0;
    for (int i = 0; i < nch; i++)
        md += creal(a->cov[i * nch + i]);
    md /= nch;
    if (a->o.snr > 0) {
        KW_FAIL_PARAM(!(md > 0), KW_EINVAL, a->o.noise_cov ? "noise_cov" : "snr",
                      "zero noise variance");
        scale = a->sigma * a->sigma / md;
    } else {
        a->sigma = sqrt(md);
    }
    for (int i = 0; i < nch * nch; i++)
        a->cov[i] *= scale;
    /* lower Cholesky factor, upper triangle zeroed */
    memcpy(a->chol, a->cov, (size_t)nch * nch * sizeof *a->chol);
    KW_FAIL_PARAM(kw_chol(a->chol, (size_t)nch) != KW_OK, KW_EINVAL, who, "not positive definite");
    for (int i = 0; i < nch; i++)
        for (int j = i + 1; j < nch; j++)
            a->chol[i * nch + j] = 0;
    return KW_OK;
}
