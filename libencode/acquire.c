/* acquire.c: kw_acquisition: options, life cycle, grid, truth and execute.
 * Contrast and timing: acquire_timing.c; sampling: acquire_sampling.c;
 * coils and noise: acquire_coils.c; multi-slice: acquire_slices.c.
 * Definitions of SNR, noise and the k-space scale: docs/simulator.md. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "acquire_int.h"
#include "defaults.h"

void kw_acquisition_options_init(kw_acquisition_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->sequence = KW_CONTRAST_PD;
    o->b0_t = KWD_B0_T;
    o->coil_rings = 1;
    o->coil_order = -1;
    o->coil_order_z = -1;
    o->slice_points = 8;
    o->coil_tolerance = -1;
}

/* Mean |truth| over the object: pixels at >= 10% of the maximum. */
static double object_mean(const float *img, size_t n)
{
    double mx = 0;
    for (size_t i = 0; i < n; i++)
        if (fabs(img[i]) > mx)
            mx = fabs(img[i]);
    double s = 0;
    size_t c = 0;
    for (size_t i = 0; i < n; i++)
        if (fabs(img[i]) >= 0.1 * mx && mx > 0) {
            s += fabs(img[i]);
            c++;
        }
    return c ? s / (double)c : 0.0;
}

/* Phantom, multi-slice geometry, matrix and FOV. */
static kw_status acq_grid(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    KW_FAIL_PARAM(!o->phantom || !*o->phantom, KW_EINVAL, "phantom", "missing");
    kw_status st = kw_phantom_make(&a->ph, o->phantom);
    if (st)
        return kw_set_error_param(st, "phantom", "%s", kw_last_error_reason());
    /* 2 at least: a reconstruction needs a centre and a neighbour on each
     * axis, and an array kweave writes must be one kweave reads */
    KW_FAIL_PARAM(o->dims[2] < 2 || o->dims[2] > KW_ACQ_MAX_EDGE || o->dims[1] == 1 ||
                      o->dims[1] > KW_ACQ_MAX_EDGE || o->dims[0] == 1 ||
                      o->dims[0] > KW_ACQ_MAX_EDGE, KW_EINVAL, "dims",
                  "each size must be a whole number 2..%d", KW_ACQ_MAX_EDGE);
    size_t nx = o->dims[2], ny = o->dims[1] ? o->dims[1] : nx, nz = o->dims[0];
    if (o->slices || o->slice_thickness_m != 0 || o->slice_gap_m != 0) {
        KW_FAIL_PARAM(o->slices == 0, KW_EINVAL, "slices", "missing (the slice options need slices)");
        KW_FAIL_PARAM(a->ph.ndim != 3, KW_EINVAL, "slices", "need a 3-D phantom (e.g. weave3d)");
        KW_FAIL_PARAM(o->slices < 1 || o->slices > KW_ACQ_MAX_SLICES, KW_EINVAL, "slices",
                      "must be 1..%d", KW_ACQ_MAX_SLICES);
        KW_FAIL_PARAM(!(o->slice_thickness_m > 0), KW_EINVAL, "slice_thickness_m",
                      "missing or not positive");
        KW_FAIL_PARAM(!(o->slice_gap_m >= 0), KW_EINVAL, "slice_gap_m", "must be >= 0");
        KW_FAIL_PARAM(o->slice_points < 1 || o->slice_points > 32, KW_EINVAL, "slice_points",
                      "must be 1..32");
        KW_FAIL_PARAM(nz != 0, KW_EINVAL, "dims", "give (ny, nx) for a multi-slice acquisition");
        a->nsl = o->slices;
        a->ph3 = a->ph;
        kw_phantom_section(&a->ph3, 0.0, &a->ph);
    }
    const int ndim = a->ph.ndim;
    KW_FAIL_PARAM(ndim == 2 && nz > 1, KW_EINVAL, "dims", "phantom '%s' is 2-D: give (ny, nx)",
                  o->phantom);
    if (nz == 0)
        nz = ndim == 3 ? nx : 1;
    KW_FAIL_PARAM(ndim == 3 && nz < 2, KW_EINVAL, "dims",
                  "phantom '%s' is 3-D: nz must be at least 2", o->phantom);
    KW_FAIL_PARAM(nx * ny * nz > ((size_t)1 << 27), KW_EINVAL, "dims",
                  "%zux%zux%zu samples is too many", nx, ny, nz);
    a->n[0] = nx;
    a->n[1] = ny;
    a->n[2] = ndim == 2 ? 1 : nz;
    a->ndim = ndim;
    a->cd[0] = a->n[2];
    a->cd[1] = ny;
    a->cd[2] = nx;
    KW_FAIL_PARAM(!(o->fov_m[2] > 0) || !isfinite(o->fov_m[2]), KW_EINVAL, "fov_m",
                  "missing or not positive");
    a->fov[0] = o->fov_m[2];
    for (int i = 1; i < 3; i++) {
        double f = o->fov_m[2 - i];
        KW_FAIL_PARAM(f != 0 && (!(f > 0) || !isfinite(f)), KW_EINVAL, "fov_m",
                      "must be positive (got %g m)", f);
        a->fov[i] = f > 0 ? f : a->fov[i - 1];
    }
    KW_FAIL_PARAM(o->snr != 0 && !(o->snr > 0 && isfinite(o->snr)), KW_EINVAL, "snr",
                  "must be a positive number");
    a->npix = a->n[0] * a->n[1] * a->n[2];
    return KW_OK;
}

/* The working set, against max_bytes, before the large arrays: k-space,
 * truth, support, maps (per slice when sliced), trajectory buffers, and the
 * field-map grid (4x4 finer: class images bounded by the shape count,
 * sensitivity, phase and FFT buffers, class factors). */
static kw_status acq_working_set(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    double chan = o->coils ? (double)o->coils * (o->coil_rings == 2 ? 2 : 1) : 1;
    if (o->sens && o->sens_ndim == a->ndim + 1)
        chan = (double)o->sens_dims[0];
    double vox = (double)a->npix * (a->nsl ? a->nsl : 1);
    double count = o->traj ? (double)a->nsamples : vox;
    double need = chan * count * 8 + vox * 8 + ((o->coils || o->sens) ? chan * vox * 8 : 0) +
                  (o->traj ? (double)a->nsamples * 24 : 0);
    if (o->field_map) {
        double m = 16.0 * (double)a->n[0] * (double)a->n[1];
        need += m * (4.0 * a->ph.nshapes + 4 + 4 + 8 * 3) + (double)a->ph.nshapes * count * 8;
    }
    a->info.working_set_bytes = need < 1.8e19 ? (size_t)need : SIZE_MAX;
    KW_FAIL_PARAM(o->max_bytes && need > (double)o->max_bytes, KW_ENOMEM, "max_bytes",
                  "this simulation needs about %.0f MiB, above the limit of %.0f MiB",
                  need / 1048576.0, (double)o->max_bytes / 1048576.0);
    return KW_OK;
}

/* The truth image: the slab averages (multi-slice) or the phantom at the
 * echo rasterised at the matrix. */
static kw_status acq_truth(kw_acquisition *a)
{
    size_t tdims[3] = {a->n[2], a->n[1], a->n[0]};
    int toff = a->ndim == 3 ? 0 : 1;
    if (a->nsl) {
        tdims[0] = (size_t)a->nsl;
        toff = 0;
    }
    kw_acquisition_info *in = &a->info;
    in->truth_ndim = 3 - toff;
    a->truth_count = 1;
    for (int i = 0; i < in->truth_ndim; i++) {
        in->truth_dims[i] = tdims[toff + i];
        a->truth_count *= tdims[toff + i];
    }
    a->truth = kw_alloc(a->truth_count * sizeof *a->truth);
    KW_FAIL_PARAM(!a->truth, KW_ENOMEM, "dims", "truth: out of memory");
    if (a->nsl)
        return kw_error_reparam(kw_acq_slices_run(a, a->truth, NULL, NULL, NULL, NULL), NULL, "slices");
    double w[KW_PHANTOM_MAX_SHAPES];
    kw_sim_image_weights(a->sim, w);
    return kw_error_reparam(kw_phantom_rasterize(&a->ph, a->cd + (a->ndim == 3 ? 0 : 1), w,
                                                 a->ndim == 3 ? 4 : 8, a->truth),
                            NULL, "dims");
}

static void acq_sim_options(kw_acquisition *a)
{
    kw_sim_options *so = &a->so;
    kw_sim_options_init(so);
    so->phantom = &a->ph;
    for (int d = 0; d < 3; d++) {
        so->n[d] = a->n[2 - d]; /* C order (nz, ny, nx) */
        so->df_grad_hz[d] = a->fgrad_hz[d];
    }
    so->contrast = a->con;
    so->tissue_values = a->tvals_given;
    so->bandwidth_hz = a->bw;
    so->df_hz = a->o.df_hz;
    so->seed = a->o.seed;
    so->mask = a->mfull;
    if (a->o.traj) {
        so->traj = a->o.traj;
        so->nsamples = a->nsamples;
        so->traj_ndim = a->ndim;
    }
    so->times = a->tvals;
    so->times_per_sample = a->times_full;
    so->ncoils = a->ncoils;
    so->coil_order = a->coil_order;
    so->coil_order_z = a->ndim == 3 ? a->coil_order_z : 0;
    so->coil_period = KW_ACQ_COIL_PERIOD;
    so->coil_coef = a->coef;
    so->per_sample = a->o.per_sample;
}

static void acq_kspace_shape(kw_acquisition *a)
{
    kw_acquisition_info *in = &a->info;
    int kn = 0;
    if (a->o.traj) {
        in->kspace_dims[kn++] = (size_t)(a->ncoils > 0 ? a->ncoils : 1);
        in->kspace_dims[kn++] = a->nsamples;
    } else {
        if (a->ncoils > 0)
            in->kspace_dims[kn++] = (size_t)a->ncoils;
        if (a->ndim == 3)
            in->kspace_dims[kn++] = a->n[2];
        if (a->nsl)
            in->kspace_dims[kn++] = (size_t)a->nsl;
        in->kspace_dims[kn++] = a->n[1];
        in->kspace_dims[kn++] = a->n[0];
    }
    in->kspace_ndim = kn;
    a->kspace_count = 1;
    for (int i = 0; i < kn; i++)
        a->kspace_count *= in->kspace_dims[i];
}

/* The resolved grid, noise and tissues into the info. */
static void acq_info(kw_acquisition *a)
{
    kw_acquisition_info *in = &a->info;
    const kw_phantom *ph = a->nsl ? &a->ph3 : &a->ph;
    in->phantom = ph->name;
    in->ndim = a->ndim;
    for (int i = 0; i < 3; i++) {
        in->dims[i] = a->n[2 - i];
        in->fov_m[i] = a->fov[2 - i];
        in->field_gradient_hz_per_fov[i] = a->fgrad_hz[2 - i];
    }
    in->noncartesian = a->o.traj != NULL;
    in->coils = a->ncoils;
    in->channels = a->ncoils > 0 ? a->ncoils : 1;
    in->contrast = a->con;
    in->bandwidth_hz = a->bw;
    in->readout_duration_s = a->ro_dur;
    in->fat_shift_hz = KW_FAT_SHIFT_PPM * 1e-6 * KW_GAMMA_BAR_P * a->con.b0_t;
    in->df_hz = a->o.df_hz;
    in->field_gradient_ndim = a->o.field_gradient_ndim;
    for (int i = 0; i < 3; i++)
        in->field_gradient_t_per_m[i] = a->o.field_gradient_t_per_m[i];
    in->noisy = a->noisy;
    in->noise_sigma = a->sigma;
    in->noise_cov = a->noisy ? a->cov : NULL;
    in->seed = a->o.seed;
    in->snr = a->o.snr;
    in->tissue_values_given = a->o.tissue_values != NULL;
    if (a->o.field_map) {
        in->field_map = 1;
        in->field_map_oversampling = 4; /* kw_fieldmap_options_init()'s oversample */
    }
    if (a->nsl) {
        in->slices = a->nsl;
        in->slice_thickness_m = a->o.slice_thickness_m;
        in->slice_gap_m = a->o.slice_gap_m;
        in->slice_centres_m = a->zc;
        in->slice_points = a->o.slice_points;
        in->maps_per_slice = a->per_slice;
    }
    if (a->ph.tissue) {
        /* the tissue values the data were made with, and their source */
        for (int i = 0; i < a->ph.nshapes; i++) {
            int id = a->ph.shapes[i].tissue, seen = 0;
            kw_tissue_values tv;
            for (int j = 0; j < in->ntissues; j++)
                seen |= in->tissues[j].id == id;
            if (id < 0 || seen || kw_tissue_lookup(id, a->con.b0_t, a->tvals_given, &tv) != KW_OK)
                continue;
            kw_acquisition_tissue *t = &in->tissues[in->ntissues++];
            t->id = id;
            t->values = tv;
            t->from_caller = a->tvals_given[id].pd > 0 || a->tvals_given[id].t1_s > 0;
        }
    }
}

static kw_status acq_build(kw_acquisition *a)
{
    kw_status st;
    if ((st = acq_grid(a)) || (st = kw_acq_timing(a)) || (st = kw_acq_sampling(a)) ||
        (st = acq_working_set(a)) || (st = kw_acq_coils(a)) || (st = kw_acq_noise_shape(a)))
        return st;
    acq_sim_options(a);
    if ((st = kw_sim_create(&a->sim, &a->so)))
        return st; /* its reason names the field */
    if ((st = acq_truth(a)))
        return st;
    a->npix *= a->nsl ? (size_t)a->nsl : 1;
    if (a->noisy) {
        if (a->o.snr > 0) {
            double m = object_mean(a->truth, a->npix);
            KW_FAIL_PARAM(!(m > 0), KW_EINVAL, "snr", "the phantom has no signal with this contrast");
            a->sigma = m / a->o.snr;
            /* the covariance (sigma^2) is written as complex64: it must stay
             * well inside float range, neither overflow nor underflow */
            double s2 = a->sigma * a->sigma, hi = FLT_MAX / 1e6, lo = FLT_MIN * 1e6;
            KW_FAIL_PARAM(!(s2 < hi), KW_ERANGE, "snr",
                          "%g puts the noise level (sigma %.3g) beyond float range; the lowest "
                          "SNR for this object is %.3g", a->o.snr, a->sigma, m / sqrt(hi));
            KW_FAIL_PARAM(!(s2 > lo), KW_ERANGE, "snr",
                          "%g puts the noise level (sigma %.3g) below float resolution; the "
                          "highest SNR for this object is %.3g", a->o.snr, a->sigma, m / sqrt(lo));
        }
        if ((st = kw_acq_noise_level(a)))
            return st;
    }
    if (a->o.field_map && !a->nsl) {
        kw_fieldmap_options fo;
        kw_fieldmap_options_init(&fo);
        fo.sim = a->sim;
        fo.field_hz = a->o.field_map;
        if ((st = kw_fieldmap_create(&a->fmp, &fo)))
            return kw_error_reparam(st, NULL, "field_map");
        a->info.field_map_interp_error = kw_fieldmap_interp_error(a->fmp);
        a->info.field_map_segments = kw_fieldmap_segments(a->fmp);
    }
    acq_kspace_shape(a);
    acq_info(a);
    return KW_OK;
}

kw_status kw_acquisition_create(kw_acquisition **out, const kw_acquisition_options *o)
{
    KW_FAIL_IF(!out, KW_EINVAL, "acquisition: NULL argument");
    *out = NULL;
    kw_acquisition *a = kw_alloc_n(1, sizeof *a);
    KW_FAIL_IF(!a, KW_ENOMEM, "acquisition: out of memory");
    kw_acquisition_options_init(&a->o);
    kw_status st = kw_options_take(&a->o, sizeof a->o, o, "options");
    if (!st)
        st = acq_build(a);
    if (st) {
        kw_acquisition_destroy(a);
        return st;
    }
    *out = a;
    return KW_OK;
}

const kw_acquisition_info *kw_acquisition_info_get(const kw_acquisition *a)
{
    return a ? &a->info : NULL;
}

size_t kw_acquisition_kspace_count(const kw_acquisition *a)
{
    return a ? a->kspace_count : 0;
}

size_t kw_acquisition_truth_count(const kw_acquisition *a)
{
    return a ? a->truth_count : 0;
}

size_t kw_acquisition_maps_count(const kw_acquisition *a)
{
    return a ? a->maps_count : 0;
}

kw_status kw_acquisition_execute(kw_acquisition *a, kw_cfloat *kspace, float *truth,
                                 kw_cfloat *maps, kw_progress_fn progress, void *user)
{
    KW_FAIL_IF(!a || !kspace, KW_EINVAL, "acquisition: NULL argument");
    kw_status st;
    if (a->nsl) {
        kw_acq_slice_fieldmap sfm = {a->o.field_map,
                                     a->o.field_map && a->o.field_map_ndim == 3 ? a->n[0] * a->n[1] : 0,
                                     0.0, 0};
        st = kw_acq_slices_run(a, NULL, kspace, a->o.field_map ? &sfm : NULL, progress, user);
        if (!st && a->o.field_map) {
            a->info.field_map_interp_error = sfm.err;
            a->info.field_map_segments = sfm.seg;
        }
    } else {
        st = kw_sim_execute(a->sim, kspace, progress, user);
    }
    if (!st && a->fmp)
        st = kw_fieldmap_execute(a->fmp, kspace, progress, user);
    if (!st && !a->nsl && a->noisy)
        st = kw_sim_add_noise(a->sim, a->chol, a->o.seed, kspace);
    if (st)
        return st;
    if (truth)
        memcpy(truth, a->truth, a->truth_count * sizeof *truth);
    if (maps && a->maps)
        memcpy(maps, a->maps, a->maps_count * sizeof *maps);
    return KW_OK;
}

void kw_acquisition_destroy(kw_acquisition *a)
{
    if (!a)
        return;
    kw_fieldmap_destroy(a->fmp);
    kw_sim_destroy(a->sim);
    kw_free(a->truth);
    kw_free(a->maps);
    kw_free(a->cover);
    kw_free(a->mfull);
    kw_free(a->tvals);
    kw_free(a->coef);
    kw_free(a->resid);
    kw_free(a->cov);
    kw_free(a->chol);
    kw_free(a);
}
