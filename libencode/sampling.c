/* sampling.c: Cartesian masks. Methods and their sources:
 *  - variable-density random sampling with a polynomial density:
 *    Lustig, Donoho & Pauly 2007, "Sparse MRI", MRM 58:1182-1195;
 *  - Poisson-disc sampling by dart throwing around an active list:
 *    Bridson 2007, "Fast Poisson disk sampling in arbitrary dimensions",
 *    SIGGRAPH sketches (here on the Cartesian grid, variable radius);
 *  - sheared 2-D lattices: Breuer et al. 2006, "Controlled aliasing in
 *    volumetric parallel imaging (2D CAIPIRINHA)", MRM 55:549-556. */
#include "kw_sampling.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_rng.h"

#define POISSON_QMIN (1.0 / 16.0) /* ours: caps the radius at 4 s */
#define POISSON_TRIES 30          /* Bridson 2007's k */

void kw_mask_options_init(kw_mask_options *o)
{
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->kind = KW_MASK_FULL;
    o->accel_y = o->accel_z = 1.0;
    o->fraction = 1.0;
    o->power = 3.0;
    o->shift = 1;
    o->dims[0] = 1;
}

/* The caller's options over the defaults (an older, shorter struct gets the
 * defaults for the fields it lacks). */
static kw_status take(kw_mask_options *local, const kw_mask_options *caller)
{
    kw_mask_options_init(local);
    return kw_options_take(local, sizeof *local, caller, "options");
}

static long kidx(size_t i, size_t n) { return (long)i - (long)(n / 2); }

/* floor-modulo for possibly negative a */
static long fmod_l(long a, long m)
{
    long r = a % m;
    return r < 0 ? r + m : r;
}

static long fdiv_l(long a, long m) { return (a - fmod_l(a, m)) / m; }

static int allowed(const kw_mask_options *o, size_t iy, size_t iz)
{
    if (o->fraction < 1.0) {
        /* partial Fourier: keep the last round(F ny) ky lines (the first,
         * negative-ky lines are not acquired) */
        size_t keep = (size_t)llround(o->fraction * (double)o->dims[1]);
        if (iy < o->dims[1] - keep)
            return 0;
    }
    if (o->ellipse && o->dims[0] > 1) {
        double y = (double)kidx(iy, o->dims[1]) / (0.5 * (double)o->dims[1]);
        double z = (double)kidx(iz, o->dims[0]) / (0.5 * (double)o->dims[0]);
        if (y * y + z * z > 1.0)
            return 0;
    }
    return 1;
}

static double rho_max(const kw_mask_options *o)
{
    /* farthest grid point: index 0 (k = -n/2) scaled to -1 on each axis */
    return o->dims[0] > 1 ? sqrt(2.0) : 1.0;
}

static double density(const kw_mask_options *o, size_t iy, size_t iz)
{
    double y = (double)kidx(iy, o->dims[1]) / (0.5 * (double)o->dims[1]);
    double z = o->dims[0] > 1 ? (double)kidx(iz, o->dims[0]) / (0.5 * (double)o->dims[0]) : 0.0;
    if (o->dims[1] == 1)
        y = 0;
    double rho = sqrt(y * y + z * z) / rho_max(o);
    if (rho > 1.0)
        rho = 1.0;
    return pow(1.0 - rho, o->power);
}

static int in_acs(const kw_mask_options *o, size_t iy, size_t iz)
{
    if (o->acs_y == 0)
        return 0;
    long ky = kidx(iy, o->dims[1]);
    long lo = -(long)(o->acs_y / 2);
    if (ky < lo || ky >= lo + (long)o->acs_y)
        return 0;
    if (o->dims[0] > 1) {
        size_t az = o->acs_z ? o->acs_z : o->acs_y;
        long kz = kidx(iz, o->dims[0]);
        long lz = -(long)(az / 2);
        if (kz < lz || kz >= lz + (long)az)
            return 0;
    }
    return 1;
}

static kw_status check_opts(const kw_mask_options *o)
{
    KW_FAIL_PARAM(o->dims[1] < 1 || o->dims[0] < 1, KW_EINVAL, "dims", "empty phase-encode plane");
    KW_FAIL_PARAM(!(o->fraction > 0.5 && o->fraction <= 1.0), KW_ERANGE,
               "fraction", "%g outside (0.5, 1]", o->fraction);
    KW_FAIL_PARAM(!(o->accel_y >= 1.0) || !(o->accel_z >= 1.0) || !isfinite(o->accel_y) ||
                   !isfinite(o->accel_z),
               KW_ERANGE, "accel", "must be a number >= 1");
    KW_FAIL_PARAM(o->accel_y > (double)o->dims[1], KW_ERANGE,
               "accel", "R %g larger than the matrix (%zu phase encodes)", o->accel_y, o->dims[1]);
    KW_FAIL_PARAM(o->dims[0] == 1 && o->accel_z != 1.0, KW_ERANGE,
               "accel", "a 2-D acceleration RYxRZ needs a 3-D matrix");
    KW_FAIL_PARAM(o->accel_z > (double)o->dims[0], KW_ERANGE,
               "accel", "RZ %g larger than the matrix (%zu partitions)", o->accel_z, o->dims[0]);
    double total = o->accel_y * o->accel_z;
    KW_FAIL_PARAM(total > (double)(o->dims[1] * o->dims[0]), KW_ERANGE,
               "accel", "R %g larger than the matrix (%zu points)", total, o->dims[1] * o->dims[0]);
    KW_FAIL_PARAM(o->acs_y > o->dims[1], KW_ERANGE, "acs", "%zu larger than the matrix (%zu)",
               o->acs_y, o->dims[1]);
    KW_FAIL_PARAM(o->dims[0] > 1 && o->acs_z > o->dims[0], KW_ERANGE,
               "acs", "%zu larger than the matrix (%zu partitions)", o->acs_z, o->dims[0]);
    KW_FAIL_PARAM(o->dims[0] > 1 && o->acs_z == 0 && o->acs_y > o->dims[0], KW_ERANGE,
               "acs", "%zu larger than the matrix (%zu partitions)", o->acs_y, o->dims[0]);
    KW_FAIL_PARAM(o->ellipse && o->dims[0] == 1, KW_EINVAL,
               "ellipse", "the corner cut-off needs a 3-D (ky-kz) matrix");
    KW_FAIL_PARAM(!(o->power >= 0.0) || o->power > 100.0, KW_ERANGE,
               "power", "%g outside [0, 100]", o->power);
    if (o->kind == KW_MASK_UNIFORM || o->kind == KW_MASK_LATTICE) {
        KW_FAIL_PARAM(o->accel_y != floor(o->accel_y) || o->accel_z != floor(o->accel_z),
                   KW_ERANGE, "accel", "%s undersampling needs whole numbers (got %gx%g)",
                   o->kind == KW_MASK_UNIFORM ? "uniform" : "lattice", o->accel_y,
                   o->accel_z);
    }
    if (o->kind == KW_MASK_LATTICE)
        KW_FAIL_PARAM(o->dims[0] == 1, KW_EINVAL, "kind", "a lattice (CAIPIRINHA) needs a 3-D matrix");
    return KW_OK;
}

/* ---- random: Bernoulli draws with p = min(1, c q) ----------------------- */

static double budget_sum(const kw_mask_options *o, double c, const uint8_t *fixed)
{
    double s = 0;
    for (size_t iz = 0; iz < o->dims[0]; iz++)
        for (size_t iy = 0; iy < o->dims[1]; iy++) {
            size_t i = iz * o->dims[1] + iy;
            if (fixed[i] == 1)
                s += 1.0;
            else if (fixed[i] == 0) {
                double p = c * density(o, iy, iz);
                s += p > 1.0 ? 1.0 : p;
            }
        }
    return s;
}

/* fixed[i]: 1 ACS (always), 2 outside the allowed region (never), 0 free */
static void mark_fixed(const kw_mask_options *o, uint8_t *fixed)
{
    for (size_t iz = 0; iz < o->dims[0]; iz++)
        for (size_t iy = 0; iy < o->dims[1]; iy++) {
            size_t i = iz * o->dims[1] + iy;
            if (!allowed(o, iy, iz))
                fixed[i] = 2;
            else
                fixed[i] = in_acs(o, iy, iz) ? 1 : 0;
        }
}

static kw_status make_random(const kw_mask_options *o, uint8_t *mask, float *prob,
                             uint8_t *fixed)
{
    size_t n = o->dims[1] * o->dims[0];
    double target = (double)n / (o->accel_y * o->accel_z);
    mark_fixed(o, fixed);
    double lo = 0, hi = 1;
    double acs = budget_sum(o, 0.0, fixed);
    KW_FAIL_PARAM(acs > target + 1e-9, KW_EINFEASIBLE,
               "acs", "the %g ACS points exceed the budget of %.1f samples for R %g", acs,
               target, o->accel_y * o->accel_z);
    while (budget_sum(o, hi, fixed) < target && hi < 1e12)
        hi *= 2;
    KW_FAIL_PARAM(budget_sum(o, hi, fixed) < target - 1e-6, KW_ERANGE,
               "accel", "R %g cannot be reached inside the allowed region",
               o->accel_y * o->accel_z);
    for (int it = 0; it < 200 && hi - lo > 1e-14 * hi; it++) {
        double mid = 0.5 * (lo + hi);
        if (budget_sum(o, mid, fixed) < target)
            lo = mid;
        else
            hi = mid;
    }
    double c = 0.5 * (lo + hi);
    kw_rng r;
    kw_rng_seed(&r, o->seed);
    /* one uniform draw per point in C order, whatever the point: the stream
     * position of a point does not depend on the parameters */
    for (size_t iz = 0; iz < o->dims[0]; iz++)
        for (size_t iy = 0; iy < o->dims[1]; iy++) {
            size_t i = iz * o->dims[1] + iy;
            double u = kw_rng_uniform(&r);
            double p = fixed[i] == 1 ? 1.0 : fixed[i] == 2 ? 0.0 : c * density(o, iy, iz);
            if (p > 1.0)
                p = 1.0;
            mask[i] = u < p;
            if (prob)
                prob[i] = (float)p;
        }
    return KW_OK;
}

/* ---- Poisson-disc (Bridson 2007) on the grid, radius at the candidate ---- */

static double radius(const kw_mask_options *o, double scale, size_t iy, size_t iz)
{
    double q = density(o, iy, iz);
    if (q < POISSON_QMIN)
        q = POISSON_QMIN;
    double r = scale / sqrt(q);
    return r < 1.0 ? 1.0 : r;
}

int kw_mask_allowed(const kw_mask_options *o, size_t iy, size_t iz)
{
    kw_mask_options l;
    return take(&l, o) ? 0 : allowed(&l, iy, iz);
}

double kw_mask_density(const kw_mask_options *o, size_t iy, size_t iz)
{
    kw_mask_options l;
    return take(&l, o) ? NAN : density(&l, iy, iz);
}

double kw_poisson_radius(const kw_mask_options *o, double scale, size_t iy, size_t iz)
{
    kw_mask_options l;
    return take(&l, o) ? NAN : radius(&l, scale, iy, iz);
}

/* One Poisson-disc pattern with scale s into mask; returns the count. */
static size_t poisson_once(const kw_mask_options *o, double s, uint8_t *mask,
                           const uint8_t *fixed, size_t *active)
{
    const size_t ny = o->dims[1], nz = o->dims[0], n = ny * nz;
    memset(mask, 0, n);
    kw_rng r;
    kw_rng_seed(&r, o->seed);
    size_t nactive = 0, count = 0;
    /* start at k = 0 when allowed, else the first allowed point */
    size_t start = (nz / 2) * ny + ny / 2;
    if (fixed[start] == 2) {
        start = n;
        for (size_t i = 0; i < n; i++)
            if (fixed[i] != 2) {
                start = i;
                break;
            }
        if (start == n)
            return 0;
    }
    mask[start] = 1;
    active[nactive++] = start;
    count = 1;
    while (nactive > 0) {
        size_t a = (size_t)kw_rng_below(&r, nactive);
        size_t p = active[a];
        double py = (double)(p % ny), pz = (double)(p / ny);
        double rp = radius(o, s, p % ny, p / ny);
        int found = 0;
        for (int t = 0; t < POISSON_TRIES && !found; t++) {
            double rad = rp * (1.0 + kw_rng_uniform(&r));
            double th = 2.0 * KW_PI * kw_rng_uniform(&r);
            double cy, cz;
            if (nz > 1) {
                cy = py + rad * cos(th);
                cz = pz + rad * sin(th);
            } else {
                cy = py + (th < KW_PI ? rad : -rad);
                cz = 0;
            }
            long iy = lround(cy), iz = lround(cz);
            if (iy < 0 || iz < 0 || iy >= (long)ny || iz >= (long)nz)
                continue;
            size_t ci = (size_t)iz * ny + (size_t)iy;
            if (mask[ci] || fixed[ci] == 2)
                continue;
            double rc = radius(o, s, (size_t)iy, (size_t)iz);
            long w = (long)ceil(rc);
            int ok = 1;
            for (long dz = (nz > 1 ? -w : 0); dz <= (nz > 1 ? w : 0) && ok; dz++)
                for (long dy = -w; dy <= w; dy++) {
                    long y = iy + dy, z = iz + dz;
                    if (y < 0 || z < 0 || y >= (long)ny || z >= (long)nz)
                        continue;
                    if (mask[(size_t)z * ny + (size_t)y] &&
                        (double)(dy * dy + dz * dz) < rc * rc) {
                        ok = 0;
                        break;
                    }
                }
            if (!ok)
                continue;
            mask[ci] = 1;
            active[nactive++] = ci;
            count++;
            found = 1;
        }
        if (!found)
            active[a] = active[--nactive];
    }
    return count;
}

static size_t with_acs_count(const kw_mask_options *o, const uint8_t *mask, const uint8_t *fixed)
{
    size_t c = 0;
    for (size_t i = 0; i < o->dims[1] * o->dims[0]; i++)
        c += mask[i] || fixed[i] == 1;
    return c;
}

static kw_status poisson_scale(const kw_mask_options *o, uint8_t *mask, uint8_t *fixed,
                               size_t *active, double *scale)
{
    size_t n = o->dims[1] * o->dims[0];
    double target = (double)n / (o->accel_y * o->accel_z);
    mark_fixed(o, fixed);
    size_t nacs = 0;
    for (size_t i = 0; i < n; i++)
        nacs += fixed[i] == 1;
    KW_FAIL_PARAM((double)nacs > target + 1e-9, KW_EINFEASIBLE,
               "acs", "the %zu ACS points exceed the budget of %.1f samples for R %g", nacs,
               target, o->accel_y * o->accel_z);
    /* count(s) falls as s grows; bisection in log s */
    double lo = 0.25, hi = (double)(o->dims[1] > o->dims[0] ? o->dims[1] : o->dims[0]);
    double best = hi, besterr = INFINITY;
    for (int it = 0; it < 28; it++) {
        double mid = sqrt(lo * hi);
        double c = (double)with_acs_count(o, (poisson_once(o, mid, mask, fixed, active), mask), fixed);
        double err = fabs(c - target);
        if (err < besterr) {
            besterr = err;
            best = mid;
        }
        if (c > target)
            lo = mid;
        else
            hi = mid;
        if (hi / lo < 1.0 + 1e-4)
            break;
    }
    *scale = best;
    return KW_OK;
}

kw_status kw_mask_poisson_scale(const kw_mask_options *caller, double *scale)
{
    KW_FAIL_IF(!scale, KW_EINVAL, "mask: NULL argument");
    kw_mask_options local;
    const kw_mask_options *o = &local;
    kw_status st = take(&local, caller);
    if (!st)
        st = check_opts(o);
    if (st)
        return st;
    size_t n = o->dims[1] * o->dims[0];
    uint8_t *mask = kw_alloc_n(n, 1), *fixed = kw_alloc_n(n, 1);
    size_t *active = kw_alloc_n(n, sizeof *active);
    if (!mask || !fixed || !active)
        st = kw_set_error(KW_ENOMEM, "poisson: out of memory");
    else
        st = poisson_scale(o, mask, fixed, active, scale);
    kw_free(mask);
    kw_free(fixed);
    kw_free(active);
    return st;
}

kw_status kw_mask_make(const kw_mask_options *caller, uint8_t *mask, float *prob)
{
    KW_FAIL_IF(!mask, KW_EINVAL, "mask: NULL argument");
    kw_mask_options local;
    const kw_mask_options *o = &local;
    kw_status st = take(&local, caller);
    if (!st)
        st = check_opts(o);
    if (st)
        return st;
    const size_t ny = o->dims[1], nz = o->dims[0], n = ny * nz;
    uint8_t *fixed = kw_alloc_n(n, 1);
    KW_FAIL_IF(!fixed, KW_ENOMEM, "mask: out of memory");
    switch (o->kind) {
    case KW_MASK_FULL:
    case KW_MASK_UNIFORM:
    case KW_MASK_LATTICE: {
        long ry = (long)o->accel_y, rz = (long)o->accel_z;
        for (size_t iz = 0; iz < nz; iz++)
            for (size_t iy = 0; iy < ny; iy++) {
                size_t i = iz * ny + iy;
                long ky = kidx(iy, ny), kz = kidx(iz, nz);
                int on = 1;
                if (o->kind == KW_MASK_UNIFORM)
                    on = fmod_l(ky, ry) == 0 && fmod_l(kz, rz) == 0;
                else if (o->kind == KW_MASK_LATTICE)
                    /* sampled kz rows every Rz; within row j = kz / Rz the ky
                     * positions move by shift * j (mod Ry): Breuer 2006 */
                    on = fmod_l(kz, rz) == 0 &&
                         fmod_l(ky - fmod_l(o->shift, ry) * fdiv_l(kz, rz), ry) == 0;
                int in = allowed(o, iy, iz);
                mask[i] = in && (on || in_acs(o, iy, iz));
                if (prob)
                    prob[i] = mask[i];
            }
        break;
    }
    case KW_MASK_RANDOM:
        st = make_random(o, mask, prob, fixed);
        break;
    case KW_MASK_POISSON: {
        size_t *active = kw_alloc_n(n, sizeof *active);
        if (!active) {
            st = kw_set_error(KW_ENOMEM, "mask: out of memory");
            break;
        }
        double s;
        st = poisson_scale(o, mask, fixed, active, &s);
        if (!st) {
            poisson_once(o, s, mask, fixed, active);
            for (size_t i = 0; i < n; i++) {
                if (fixed[i] == 1)
                    mask[i] = 1;
                if (prob)
                    prob[i] = mask[i];
            }
        }
        kw_free(active);
        break;
    }
    default:
        st = kw_set_error_param(KW_EINVAL, "kind", "unknown mask kind %d", (int)o->kind);
    }
    kw_free(fixed);
    return st;
}

kw_status kw_mask_fill(const kw_mask_options *caller, int ndim, const size_t *dims,
                       uint8_t *mask, float *prob)
{
    KW_FAIL_IF(!dims || !mask, KW_EINVAL, "mask: NULL argument");
    kw_mask_options local;
    const kw_mask_options *o = &local;
    kw_status tst = take(&local, caller);
    if (tst)
        return tst;
    KW_FAIL_PARAM(ndim != 2 && ndim != 3, KW_EINVAL, "dims", "ndim %d: a mask is 2-D or 3-D",
                  ndim);
    const size_t nx = dims[ndim - 1];
    /* the plane (nz, ny) repeated along x, the plane itself, or ky lines */
    size_t ny, nz, rep;
    if (ndim == 3) {
        nz = dims[0];
        ny = dims[1];
        rep = nx;
    } else if (o->dims[0] > 1) {
        nz = dims[0];
        ny = dims[1];
        rep = 1;
    } else {
        nz = 1;
        ny = dims[0];
        rep = nx;
    }
    KW_FAIL_PARAM(ny != o->dims[1] || nz != o->dims[0] || rep < 1, KW_EINVAL, "dims",
                  "mask dims differ from the options' %zu x %zu phase encodes", o->dims[0], o->dims[1]);
    const size_t np = ny * nz;
    uint8_t *plane = rep == 1 ? mask : kw_alloc_n(np, 1);
    KW_FAIL_IF(!plane, KW_ENOMEM, "mask: out of memory");
    kw_status st = kw_mask_make(o, plane, prob);
    if (!st && rep > 1)
        for (size_t i = 0; i < np; i++)
            memset(mask + i * rep, plane[i], rep);
    if (plane != mask)
        kw_free(plane);
    return st;
}
