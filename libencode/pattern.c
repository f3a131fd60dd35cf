/* pattern.c: kw_pattern (kw_pattern.h): options, validation, the Cartesian
 * masks (methods in sampling.c) and the radial family (traj.c). Spiral and
 * EPI are in pattern_grad.c. */
#include "mask_acs.h"
#include "pattern_internal.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "kw_sampling.h"
#include "kw_traj.h"
#include "defaults.h"

#define MAX_MASK_POINTS 1e8

static const char *const KIND_NAMES[] = {"full",   "partial", "uniform",        "random",
                                         "poisson", "lattice", "radial",         "golden",
                                         "stack-of-stars", "spiral", "epi"};

const char *kw_pattern_kind_name(kw_pattern_kind k)
{
    if ((int)k < 0 || (size_t)k >= sizeof KIND_NAMES / sizeof KIND_NAMES[0])
        return NULL;
    return KIND_NAMES[k];
}

int kw_pattern_kind_is_mask(kw_pattern_kind k) { return k >= KW_PATTERN_FULL && k <= KW_PATTERN_LATTICE; }

void kw_pattern_options_init(kw_pattern_options *o)
{
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->kind = KW_PATTERN_FULL;
    o->ndim = 2;
    o->fraction = 1.0;
    o->power = 3.0;
    o->shift = 1;
    o->te_s = NAN;
    o->fov_m = KWD_FOV_M;
    o->gmax = KWD_GMAX_T_PER_M;
    o->slew = KWD_SLEW_T_PER_M_PER_S;
    o->raster = KWD_RASTER_S;
    o->max_readout_s = KWD_SPIRAL_MAX_READOUT_S;
    o->shots = KWD_EPI_SHOTS;
}

/* ---- Cartesian masks ------------------------------------------------------ */

static kw_status mask_opts(const kw_pattern_options *po, kw_mask_options *o)
{
    const int nd = po->ndim;
    const size_t *d = po->dims;
    const size_t nx = d[nd - 1], ny = d[nd - 2], nz = nd == 3 ? d[0] : 1;
    KW_FAIL_PARAM(nx < 1 || ny < 1 || nz < 1, KW_EINVAL, "dims", "sizes must be >= 1");
    KW_FAIL_PARAM((double)nx * (double)ny * (double)nz > MAX_MASK_POINTS, KW_ERANGE, "dims",
                  "%zux%zux%zu is too large", nx, ny, nz);
    static const kw_mask_kind MK[] = {KW_MASK_FULL,   KW_MASK_FULL,    KW_MASK_UNIFORM,
                                      KW_MASK_RANDOM, KW_MASK_POISSON, KW_MASK_LATTICE};
    kw_mask_options_init(o);
    o->kind = MK[po->kind];
    o->dims[0] = nz;
    o->dims[1] = ny;
    /* accel[] in C order: (Ry, readout) or (Rz, Ry, readout) */
    double ry = nd == 3 ? po->accel[1] : po->accel[0];
    double rz = nd == 3 ? po->accel[0] : po->accel[1]; /* 2-D: kw_mask_make rejects != 1 */
    double rx = nd == 3 ? po->accel[2] : 1.0;
    int given = po->accel[0] != 0 || po->accel[1] != 0 || po->accel[2] != 0;
    KW_FAIL_PARAM(!given && o->kind != KW_MASK_FULL, KW_EINVAL, "accel",
                  "required for the %s kind", KIND_NAMES[po->kind]);
    if (given) {
        KW_FAIL_PARAM(!(ry > 0) || !(rz >= 0) || !(rx >= 0), KW_ERANGE, "accel",
                      "must be positive");
        KW_FAIL_PARAM(rx > 1.0, KW_ERANGE, "accel", "the readout axis is always fully sampled");
        o->accel_y = ry;
        o->accel_z = rz > 0 ? rz : 1.0;
    }
    size_t ay = nd == 3 ? po->acs[1] : po->acs[0], az = nd == 3 ? po->acs[0] : 0;
    KW_FAIL_PARAM(nd == 2 && po->acs[1] != 0, KW_EINVAL, "acs",
                  "a 2-D matrix has no ACS block along its readout axis");
    o->acs_y = ay;
    o->acs_z = az;
    o->fraction = po->fraction;
    o->ellipse = po->ellipse;
    o->power = po->power;
    o->shift = po->shift;
    o->seed = po->seed;
    return KW_OK;
}

static kw_status make_mask(kw_pattern *p)
{
    const kw_pattern_options *po = &p->o;
    kw_mask_options o;
    kw_status st = mask_opts(po, &o);
    if (st)
        return st;
    const int nd = po->ndim;
    const size_t nx = po->dims[nd - 1], ny = o.dims[1], nz = o.dims[0], np = ny * nz;
    kw_pattern_info *in = &p->info;
    in->is_mask = 1;
    in->ndim = 2;
    in->plane = nz > 1;
    in->shape[0] = nz > 1 ? nz : ny;
    in->shape[1] = nz > 1 ? ny : nx;
    in->density_shape[0] = nz;
    in->density_shape[1] = ny;
    p->mask = kw_alloc_n(in->shape[0] * in->shape[1], 1);
    p->density = kw_alloc_n(np, sizeof *p->density);
    KW_FAIL_IF(!p->mask || !p->density, KW_ENOMEM, "mask: out of memory");
    st = kw_mask_fill(&o, 2, in->shape, p->mask, p->density);
    if (st)
        return st;
    size_t count = 0; /* over the plane (3-D) or the ky line (column 0, 2-D) */
    for (size_t r = 0; r < in->shape[0]; r++)
        for (size_t c = 0; c < (nz > 1 ? in->shape[1] : 1); c++)
            count += p->mask[r * in->shape[1] + c];
    in->sampled_points = count;
    in->acceleration = (double)np / (double)(count ? count : 1);
    in->accel_requested[0] = o.accel_y;
    in->accel_requested[1] = o.accel_z;
    in->acs_requested[0] = o.acs_y;
    in->acs_requested[1] = o.acs_z;
    /* what the mask holds (mask_acs.h), as the analysis reports it: a
     * lattice line next to the requested block lengthens the fully sampled
     * run (24 asked at R = 2 gives 25); the request is acs_requested */
    size_t blk[2];
    kw_mask_acs_block(p->mask, in->shape, nz > 1, blk);
    in->acs_lines = nz > 1 ? (double)(blk[0] * blk[1]) : (double)blk[0];
    return KW_OK;
}

/* ---- radial family --------------------------------------------------------- */

static kw_status make_radial(kw_pattern *p)
{
    const kw_pattern_options *po = &p->o;
    kw_traj_options o;
    kw_traj_options_init(&o);
    o.kind = po->kind == KW_PATTERN_RADIAL   ? KW_TRAJ_RADIAL
             : po->kind == KW_PATTERN_GOLDEN ? KW_TRAJ_GOLDEN
                                             : KW_TRAJ_STACK_OF_STARS;
    const int nd = po->ndim;
    const size_t nx = po->dims[nd - 1], ny = po->dims[nd - 2];
    KW_FAIL_PARAM(nx != ny, KW_EINVAL, "dims",
                  "radial trajectories need a square in-plane matrix (got %zux%zu)", nx, ny);
    KW_FAIL_PARAM(o.kind == KW_TRAJ_STACK_OF_STARS && nd < 3, KW_EINVAL, "dims",
                  "a stack of stars needs NxNxNZ");
    KW_FAIL_PARAM(o.kind != KW_TRAJ_STACK_OF_STARS && nd > 2, KW_EINVAL, "dims",
                  "the %s kind is 2-D (stack-of-stars is the 3-D one)", KIND_NAMES[po->kind]);
    KW_FAIL_PARAM(po->spokes > 10000000, KW_ERANGE, "spokes", "%zu outside 1..10000000",
                  po->spokes);
    o.n = nx;
    o.nz = nd == 3 ? po->dims[0] : 1;
    o.spokes = po->spokes ? po->spokes : kw_traj_nyquist_spokes(nx);
    o.tiny = po->tiny ? po->tiny : o.kind == KW_TRAJ_GOLDEN;
    o.oversampling = po->readout_oversampling ? po->readout_oversampling : 1;
    /* dwell: the time per image pixel; the ADC samples every dwell / F */
    o.dwell_s = po->dwell_s != 0 ? po->dwell_s : 1.0 / (KWD_BW_PER_PIXEL_HZ * (double)nx);
    o.te_s = !isnan(po->te_s) ? po->te_s : 0.5 * (double)nx * o.dwell_s;
    size_t ns;
    int ndk;
    kw_status st = kw_traj_size(&o, &ns, &ndk);
    if (st)
    {
        st = kw_error_reparam(st, "oversampling", "readout_oversampling");
        st = kw_error_reparam(st, "n", "dims");
        return kw_error_reparam(st, "nz", "dims");
    }
    p->k = kw_alloc_n(ns * (size_t)ndk, sizeof *p->k);
    p->t = kw_alloc_n(ns, sizeof *p->t);
    KW_FAIL_IF(!p->k || !p->t, KW_ENOMEM, "trajectory: out of memory");
    st = kw_traj_make(&o, p->k, p->t);
    if (st)
        return st;
    kw_pattern_info *in = &p->info;
    in->ndim = 2;
    in->shape[0] = ns;
    in->shape[1] = (size_t)ndk;
    in->spokes = o.spokes;
    in->partitions = o.nz;
    in->oversampling = o.oversampling;
    in->readout_samples = (size_t)o.oversampling * o.n;
    in->readouts = o.spokes * o.nz;
    in->nyquist_spokes = kw_traj_nyquist_spokes(nx);
    in->acceleration = KW_PI * (double)nx / 2.0 / (double)o.spokes;
    in->tiny = o.tiny;
    in->angle_increment_deg = o.tiny >= 1 ? kw_traj_golden_angle(o.tiny) * 180.0 / KW_PI
                                          : 180.0 / (double)o.spokes;
    in->dwell_s = o.dwell_s / o.oversampling; /* ADC: between samples */
    in->dwell_per_pixel_s = o.dwell_s;
    in->readout_duration_s = (double)o.n * o.dwell_s;
    in->te_s = o.te_s;
    in->times_origin = "excitation";
    return KW_OK;
}

/* ---- the object ---------------------------------------------------------- */

static kw_status check_common(const kw_pattern_options *o)
{
    KW_FAIL_PARAM(!kw_pattern_kind_name(o->kind), KW_EINVAL, "kind", "unknown kind %d",
                  (int)o->kind);
    KW_FAIL_PARAM(o->ndim != 2 && o->ndim != 3, KW_EINVAL, "dims",
                  "ndim %d: a matrix is 2-D or 3-D", o->ndim);
    for (int i = 0; i < o->ndim; i++)
        KW_FAIL_PARAM(o->dims[i] > 65536, KW_ERANGE, "dims", "%zu outside 0..65536",
                      o->dims[i]);
    int mask = kw_pattern_kind_is_mask(o->kind);
    KW_FAIL_PARAM(!mask && o->ellipse, KW_EINVAL, "ellipse", "not used by the %s kind",
                  KIND_NAMES[o->kind]);
    KW_FAIL_PARAM(mask && o->readout_oversampling > 1, KW_EINVAL, "readout_oversampling",
                  "only for the radial kinds");
    return KW_OK;
}

kw_status kw_pattern_create(kw_pattern **pp, const kw_pattern_options *opt)
{
    KW_FAIL_IF(!pp, KW_EINVAL, "pattern: NULL argument");
    *pp = NULL;
    kw_pattern *p = kw_alloc_n(1, sizeof *p);
    KW_FAIL_IF(!p, KW_ENOMEM, "pattern: out of memory");
    kw_pattern_options_init(&p->o);
    kw_status st = kw_options_take(&p->o, sizeof p->o, opt, "options");
    if (!st)
        st = check_common(&p->o);
    if (!st) {
        memset(&p->info, 0, sizeof p->info);
        p->info.kind = p->o.kind;
        p->info.te_s = NAN;
        p->info.times_origin = "";
        if (kw_pattern_kind_is_mask(p->o.kind))
            st = make_mask(p);
        else if (p->o.kind == KW_PATTERN_SPIRAL || p->o.kind == KW_PATTERN_EPI)
            st = kw_pattern_make_gradient(p);
        else
            st = make_radial(p);
    }
    if (st) {
        kw_pattern_destroy(p);
        return st;
    }
    *pp = p;
    return KW_OK;
}

const kw_pattern_info *kw_pattern_info_of(const kw_pattern *p) { return p ? &p->info : NULL; }
const uint8_t *kw_pattern_mask(const kw_pattern *p) { return p ? p->mask : NULL; }
const float *kw_pattern_density(const kw_pattern *p) { return p ? p->density : NULL; }
const float *kw_pattern_trajectory(const kw_pattern *p) { return p ? p->k : NULL; }
const float *kw_pattern_times(const kw_pattern *p) { return p ? p->t : NULL; }

void kw_pattern_destroy(kw_pattern *p)
{
    if (!p)
        return;
    kw_free(p->mask);
    kw_free(p->density);
    kw_free(p->k);
    kw_free(p->t);
    kw_free(p);
}
