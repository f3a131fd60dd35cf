/* acquire_sampling.c: the acquisition's sampling: Cartesian mask (its
 * acceleration and calibration rows), trajectory, sample times, field map,
 * and the EPI train of a planner's protocol. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "acquire_int.h"

/* The run of fully sampled phase-encode rows through ky = 0. */
static long acs_rows(const uint8_t *m, size_t nx, size_t ny)
{
    long c = (long)(ny / 2), lo = c, hi = c;
    for (;;) {
        int full = 1;
        if (lo < 0)
            break;
        for (size_t x = 0; x < nx; x++)
            full &= m[(size_t)lo * nx + x];
        if (!full)
            break;
        lo--;
    }
    for (;;) {
        int full = 1;
        if (hi >= (long)ny)
            break;
        for (size_t x = 0; x < nx; x++)
            full &= m[(size_t)hi * nx + x];
        if (!full)
            break;
        hi++;
    }
    return hi - lo - 1 > 0 ? hi - lo - 1 : 0;
}

static kw_status acq_mask(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    const size_t *n = a->n, *md = o->mask_dims;
    int ok2 = a->ndim == 2 && ((o->mask_ndim == 2 && md[0] == n[1] && md[1] == n[0]) ||
                               (o->mask_ndim == 1 && md[0] == n[1]));
    int ok3 = a->ndim == 3 && o->mask_ndim == 3 && md[0] == n[2] && md[1] == n[1] && md[2] == n[0];
    KW_FAIL_PARAM(!ok2 && !ok3, KW_EINVAL, "mask",
                  "shape does not match the matrix: expected (%zu, %zu) or (%zu,) for %zux%zu",
                  n[1], n[0], n[1], n[0], n[1]);
    a->mfull = kw_alloc_n(a->npix, 1);
    KW_FAIL_PARAM(!a->mfull, KW_ENOMEM, "mask", "out of memory");
    size_t taken = 0;
    for (size_t i = 0; i < a->npix; i++) {
        size_t j = o->mask_ndim == 1 ? (i / n[0]) % n[1] : i;
        a->mfull[i] = (uint8_t)(o->mask[j] != 0);
        taken += a->mfull[i];
    }
    KW_FAIL_PARAM(!taken, KW_EINVAL, "mask", "no sample is marked as sampled");
    a->info.acceleration = (double)a->npix / (double)taken;
    a->info.acs_lines = a->ndim == 2 ? acs_rows(a->mfull, n[0], n[1]) : -1;
    return KW_OK;
}

static kw_status acq_times(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    const size_t *n = a->n;
    size_t want = o->traj ? a->nsamples : n[0];
    int ok = o->times_ndim == 1 && o->times_dims[0] == want;
    if (!o->traj && a->ndim == 2 && o->times_ndim == 2 && o->times_dims[0] == n[1] &&
        o->times_dims[1] == n[0]) {
        ok = 1;
        a->times_full = 1;
        want = n[0] * n[1];
    }
    if (!ok && o->traj)
        return kw_set_error_param(KW_EINVAL, "times", "expected (%zu,) seconds", a->nsamples);
    KW_FAIL_PARAM(!ok, KW_EINVAL, "times", "expected (%zu,) or (%zu, %zu) seconds", n[0], n[1],
                  n[0]);
    a->tvals = kw_alloc_n(want, sizeof *a->tvals);
    KW_FAIL_PARAM(!a->tvals, KW_ENOMEM, "times", "out of memory");
    for (size_t i = 0; i < want; i++) {
        a->tvals[i] = o->times[i];
        KW_FAIL_PARAM(!isfinite(a->tvals[i]), KW_ENUMERIC, "times",
                      "non-finite value at index %zu", i);
        KW_FAIL_PARAM(a->tvals[i] < 0, KW_EINVAL, "times",
                      "sample %zu is before the excitation (%g s)", i, a->tvals[i]);
        /* the planner's longest TR is 100 s; no echo is sampled later */
        KW_FAIL_PARAM(a->tvals[i] > 100, KW_EINVAL, "times",
                      "sample %zu at %g s after the excitation is absurd (over 100 s)", i,
                      a->tvals[i]);
    }
    KW_FAIL_PARAM(o->bandwidth_hz > 0 && !o->traj, KW_EINVAL, "times",
                  "give sample times or a bandwidth for a Cartesian readout, not both");
    return KW_OK;
}

static kw_status acq_field_map(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    const size_t *n = a->n, *fd = o->field_map_dims;
    KW_FAIL_PARAM(o->field_gradient_ndim, KW_EINVAL, "field_map",
                  "give a field map or a field gradient, not both (add the linear field to "
                  "the map)");
    KW_FAIL_PARAM(a->ndim != 2, KW_ENOTSUP, "field_map", "only for 2-D phantoms");
    int okf = (o->field_map_ndim == 2 && fd[0] == n[1] && fd[1] == n[0]) ||
              (a->nsl && o->field_map_ndim == 3 && fd[0] == (size_t)a->nsl && fd[1] == n[1] &&
               fd[2] == n[0]);
    if (!okf && a->nsl)
        return kw_set_error_param(KW_EINVAL, "field_map", "expected (%zu, %zu) or (%d, %zu, %zu) "
                                  "values in Hz", n[1], n[0], a->nsl, n[1], n[0]);
    KW_FAIL_PARAM(!okf, KW_EINVAL, "field_map", "expected (%zu, %zu) values in Hz", n[1], n[0]);
    size_t cnt = n[0] * n[1] * (o->field_map_ndim == 3 ? fd[0] : 1);
    for (size_t i = 0; i < cnt; i++) {
        KW_FAIL_PARAM(!isfinite(o->field_map[i]), KW_ENUMERIC, "field_map",
                      "non-finite value at index %zu", i);
        /* a few kHz near metal at 7 T; beyond 1 MHz the map is not in Hz */
        KW_FAIL_PARAM(fabs(o->field_map[i]) > 1e6, KW_EINVAL, "field_map",
                      "%g Hz at index %zu is absurd (over 1 MHz off resonance; the map is in Hz)",
                      (double)o->field_map[i], i);
    }
    return KW_OK;
}

/* EPI train (the planner's echo spacing and dwell, kw_epi_design's order):
 * the rows first_row .. ny-1 (partial Fourier leaves out the first,
 * negative-ky rows: stored as zeros), row r on line m = (r - first_row) /
 * shots of its shot, read forwards along x when m is even and backwards
 * when odd; times TE + (r - ny/2) esp / shots (the ky = 0 row's centre at
 * TE, the effective TE; several shots interleaved with their echo times
 * shifted, as the distortion_pixels_per_hz of the planner assumes). */
static kw_status acq_epi(kw_acquisition *a)
{
    const kw_acquisition_info *in = &a->info;
    const size_t *n = a->n;
    KW_FAIL_PARAM(a->ndim != 2, KW_ENOTSUP, "protocol",
                  "EPI timing is simulated for 2-D phantoms only");
    KW_FAIL_PARAM(in->first_row > 0 && a->o.mask, KW_EINVAL, "mask",
                  "the protocol's partial-Fourier EPI train sets the sampled rows; give no mask");
    a->tvals = kw_alloc_n(n[0] * n[1], sizeof *a->tvals);
    KW_FAIL_PARAM(!a->tvals, KW_ENOMEM, "protocol", "out of memory");
    for (size_t r = 0; r < n[1]; r++) {
        long e = (long)r - (long)(n[1] / 2);
        long m = ((long)r - in->first_row) / in->shots;
        double sgn = (r < (size_t)in->first_row || m % 2 == 0) ? 1.0 : -1.0;
        for (size_t c = 0; c < n[0]; c++)
            a->tvals[r * n[0] + c] = a->con.te_s + (double)e * in->echo_spacing_s / in->shots +
                                     sgn * ((double)c - (double)(n[0] / 2)) * a->plan_dwell;
    }
    a->times_full = 1;
    if (in->first_row > 0) {
        a->mfull = kw_alloc_n(a->npix, 1);
        KW_FAIL_PARAM(!a->mfull, KW_ENOMEM, "protocol", "out of memory");
        for (size_t i = 0; i < a->npix; i++)
            a->mfull[i] = (uint8_t)(i / n[0] >= (size_t)in->first_row);
        a->info.acceleration = (double)n[1] / (double)(n[1] - (size_t)in->first_row);
    }
    return KW_OK;
}

kw_status kw_acq_sampling(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    kw_status st;
    a->info.acs_lines = -1;
    KW_FAIL_PARAM(o->mask && o->traj, KW_EINVAL, "mask",
                  "give a Cartesian mask or a trajectory, not both");
    if (o->mask && (st = acq_mask(a)))
        return st;
    if (o->traj) {
        KW_FAIL_PARAM(o->traj_dims[1] != (size_t)a->ndim || !o->traj_dims[0], KW_EINVAL, "traj",
                      "expected (samples, %d) in cycles/FOV for a %d-D phantom", a->ndim, a->ndim);
        a->nsamples = o->traj_dims[0];
        for (size_t i = 0; i < a->nsamples * (size_t)a->ndim; i++)
            KW_FAIL_PARAM(!isfinite(o->traj[i]), KW_ENUMERIC, "traj",
                          "non-finite value at index %zu", i);
    }
    if (o->times && (st = acq_times(a)))
        return st;
    if (o->field_map && (st = acq_field_map(a)))
        return st;
    KW_FAIL_PARAM(a->nsl && o->traj, KW_ENOTSUP, "slices", "not with a trajectory");
    if (a->info.epi && !o->times && !o->traj && (st = acq_epi(a)))
        return st;
    return KW_OK;
}
