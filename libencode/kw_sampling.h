/* kw_sampling.h: Cartesian undersampling masks over the phase-encode plane.
 *
 * The plane is ny x nz points (C order (nz, ny): row = kz, column = ky); a
 * 2-D acquisition has nz = 1. kw_mask_fill() gives the whole mask in C
 * order, (ny, nx), (nz, ny) or (nz, ny, nx) (the readout x fully sampled);
 * kw_mask_make() only the (nz, ny) plane (one line of ny points in 2-D).
 * Failures name the field at fault in kw_last_error_param() ("options" for
 * a struct not initialised, "dims", "accel" for accel_y / accel_z, "acs", "fraction", "power",
 * "ellipse", "kind").
 * Index i along an axis of n points is k = i - n/2 (integer division): k = 0
 * sits at index n/2, as in the rest of kweave.
 *
 * Order of construction: the allowed region (partial Fourier along ky,
 * elliptical corner cut-off in ky-kz), then the autocalibration (ACS) block,
 * then the pattern inside the allowed region. Seeded patterns use kw_rng
 * (xoshiro256**): the same seed gives the same mask on every machine.
 */
#ifndef KW_SAMPLING_H
#define KW_SAMPLING_H

#include <stdint.h>

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum kw_mask_kind {
    KW_MASK_FULL = 0,    /* every point (partial Fourier / ellipse still apply) */
    KW_MASK_UNIFORM = 1, /* every Ry-th ky and Rz-th kz through k = 0 */
    KW_MASK_RANDOM = 2,  /* variable-density random, polynomial density */
    KW_MASK_POISSON = 3, /* variable-density Poisson-disc */
    KW_MASK_LATTICE = 4  /* sheared 2-D lattice (CAIPIRINHA) */
} kw_mask_kind;

typedef struct kw_mask_options {
    size_t struct_size;     /* sizeof, set by kw_mask_options_init() */
    kw_mask_kind kind;
    size_t dims[2];         /* the phase-encode plane in C order (nz, ny):
                               partitions, then phase encodes; nz = 1 for 2-D */
    double accel_y, accel_z; /* uniform/lattice: whole numbers >= 1 per axis;
                               random/poisson: the target is accel_y*accel_z */
    size_t acs_y, acs_z;    /* ACS block (0: none; acs_z ignored when nz = 1) */
    double fraction;        /* partial Fourier fraction of ky kept, (0.5, 1] */
    int ellipse;            /* 1: drop ky-kz corners outside the inscribed ellipse */
    double power;           /* polynomial density exponent d (random, poisson) */
    long shift;             /* lattice: ky shift per sampled kz row */
    uint64_t seed;
} kw_mask_options;

/*! kw_mask_options_init(): full mask, accel 1 x 1, no ACS, fraction 1, no
 * ellipse, power 3, shift 1, seed 0; dims = (1, 0) (the caller sets the
 * sizes); struct_size = sizeof *o. Every call below copies the caller's
 * struct over these defaults (kw_options_take(), kw_base.h): a struct_size
 * of 0 is refused naming "options"; a shorter struct (an older caller) gets
 * the defaults for the fields it lacks. */
KW_API void kw_mask_options_init(kw_mask_options *o);

/*! kw_mask_density(): the polynomial density shape of Lustig, Donoho & Pauly
 * 2007 (MRM 58:1182), q(rho) = (1 - rho)^power, where rho is the distance
 * from k = 0 with each axis scaled to [-1, 1) and divided by the largest such
 * distance on the grid (so rho = 1 at the farthest corner). NaN when the
 * options are refused (kw_last_error() says why). */
KW_API double kw_mask_density(const kw_mask_options *o, size_t iy, size_t iz);

/*! kw_mask_make(): fill mask[nz*ny] (0/1) and, if `prob` is not NULL,
 * prob[nz*ny] with the target probability of each point (random: the exact
 * Bernoulli probability; every other kind: the mask itself). Returns KW_ERANGE for an acceleration or ACS larger than
 * the matrix, a fraction outside (0.5, 1], a non-integer uniform/lattice
 * factor; KW_EINFEASIBLE when the ACS block alone exceeds the sample budget
 * of a random/poisson pattern. Allocates temporary work space itself. */
KW_API kw_status kw_mask_make(const kw_mask_options *o, uint8_t *mask, float *prob);

/*! kw_mask_fill(): the whole mask in C order, dims[ndim] (slowest first):
 * (ny, nx) for a 2-D options plane (nz = 1: every ky line repeated along the
 * fully sampled readout x), (nz, ny) for the ky-kz plane itself, or
 * (nz, ny, nx) for the plane repeated along x. prob (may be NULL) receives
 * the plane's probabilities, nz x ny values, as kw_mask_make(). KW_EINVAL
 * naming "dims" when dims do not match the options' o->dims. */
KW_API kw_status kw_mask_fill(const kw_mask_options *o, int ndim, const size_t *dims, uint8_t *mask,
                              float *prob);

/*! kw_poisson_radius(): the exclusion radius (in delta-k) of the Poisson-disc
 * pattern at point (iy, iz) for scale s: r = max(1, s / sqrt(max(q, 1/16)))
 * with q = kw_mask_density(). A candidate is accepted only when no earlier
 * sample lies closer than its own radius, so no two samples are closer than
 * the smaller of their two radii (tests/test_sampling.c checks it). */
KW_API double kw_poisson_radius(const kw_mask_options *o, double scale, size_t iy, size_t iz);

/*! kw_mask_poisson_scale(): the scale s that kw_mask_make() uses for these
 * options: found by bisection so that the sample count (ACS included) comes
 * closest to ny nz / R; deterministic for a seed. */
KW_API kw_status kw_mask_poisson_scale(const kw_mask_options *o, double *scale);

/*! kw_mask_allowed(): 1 when point (iy, iz) lies in the allowed region
 * (partial Fourier and ellipse), else 0 (also when the options are refused). */
KW_API int kw_mask_allowed(const kw_mask_options *o, size_t iy, size_t iz);

#ifdef __cplusplus
}
#endif
#endif /* KW_SAMPLING_H */
