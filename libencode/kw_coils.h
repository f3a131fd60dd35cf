/* kw_coils.h: receive coils: the field of a circular loop (Biot-Savart, in
 * closed form with complete elliptic integrals), a ring of loops around the
 * object, sensitivity maps, and their fit by a low-order trigonometric series
 * (Guerquin-Kern et al. 2012, IEEE TMI 31:626) that lets kw_simulate.h give
 * the exact k-space of (sensitivity x phantom).
 *
 * Geometry: SI metres; B0 along z; the image plane is z = 0 with x right and
 * y up (kw_phantom.h). The ring's loops stand on a cylinder around the z axis:
 * loop c has its centre at distance `distance` from the axis, at azimuth
 * 2 pi c / N (coil 0 on +x, counter-clockwise), its normal pointing at the
 * axis, radius `radius`.
 *
 * Receive sensitivity (principle of reciprocity, Hoult 2000, Concepts Magn
 * Reson 12:173): proportional to the transverse field per unit current,
 * taken here as B1- = (Bx - i By); the sign of the imaginary part is a
 * convention (sense of precession) that magnitude images and coil combination
 * do not depend on. Maps are scaled so that the root-sum-of-squares over the
 * coils is 1 at the centre of the FOV.
 */
#ifndef KW_COILS_H
#define KW_COILS_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

/*! kw_ellip_ke(): complete elliptic integrals of the first and second kind
 * K(m), E(m) with parameter m = k^2 in [0, 1) (the convention of
 * scipy.special.ellipk/ellipe), by the arithmetic-geometric mean. */
KW_API kw_status kw_ellip_ke(double m, double *K, double *E);

/*! kw_loop_field(): magnetic field (T) at `r` of a circular loop of radius
 * `a` (m) centred at `c` with unit normal `n`, carrying `current` (A),
 * the current circulating counter-clockwise seen from the tip of n. b[3]
 * receives Bx, By, Bz. KW_ERANGE on the wire itself. */
KW_API kw_status kw_loop_field(const double c[3], const double n[3], double a, double current,
                        const double r[3], double b[3]);

typedef struct kw_coil_ring {
    int ncoils;      /* loops per ring */
    double radius;   /* loop radius (m) */
    double distance; /* loop centre to z axis (m) */
    double fov[2];   /* FOV in C order (y, x) (m), to place the image plane's pixels */
    /* Optional (zero: one ring in the plane z = 0). rings = 2: two rings of
     * ncoils loops with centres at z = -gap/2 and +gap/2, the second turned
     * by half a loop spacing (pi / ncoils); channels ring by ring. */
    int rings;
    double ring_gap; /* m */
    double fov_z;    /* FOV along z (m), to place 3-D voxels */
} kw_coil_ring;

/*! kw_coil_ring_channels(): ncoils x max(rings, 1). */
KW_API int kw_coil_ring_channels(const kw_coil_ring *ring);

/*! kw_coil_ring_sens(): complex sensitivity of every coil at the phantom
 * point (x, y) in [-1, 1] (z = 0), normalised as above: s[ncoils]. The loop
 * planes must lie outside the FOV square (distance > FOV diagonal / 2). */
KW_API kw_status kw_coil_ring_sens(const kw_coil_ring *ring, double x, double y,
                            kw_cdouble *s);

/*! kw_coil_ring_maps(): sensitivity maps on the pixel grid (kw_phantom.h
 * grid, 2-D) of dims = (ny, nx): out = channels x ny x nx (C order). */
KW_API kw_status kw_coil_ring_maps(const kw_coil_ring *ring, const size_t *dims, kw_cfloat *out);

/*! kw_coil_ring_maps_at(): the 2-D maps of the plane at height z (phantom
 * units, [-1, 1] spans fov_z; kw_coil_ring_maps() is z = 0). */
KW_API kw_status kw_coil_ring_maps_at(const kw_coil_ring *ring, const size_t *dims, double z,
                               kw_cfloat *out);

/*! kw_coil_ring_sens3()/kw_coil_ring_maps3(): the same in 3-D: the point
 * (x, y, z) in [-1, 1]^3 (z along B0, scaled by fov_z / 2; voxel iz at
 * z = (iz - nz/2) 2 / nz), dims = (nz, ny, nx), maps channels x nz x ny x
 * nx. Normalised so that
 * the root-sum-of-squares over all channels is 1 at the centre. */
KW_API kw_status kw_coil_ring_sens3(const kw_coil_ring *ring, double x, double y, double z,
                             kw_cdouble *s);
KW_API kw_status kw_coil_ring_maps3(const kw_coil_ring *ring, const size_t *dims,
                             kw_cfloat *out);

/*! kw_coil_fit3(): the 3-D series
 *   s(u, v, w) = sum_{|p|,|q| <= order, |r| <= order_z} c_pqr
 *                exp(i 2 pi (p u + q v + r w) / period),
 * w = z/2 along the array's z axis (FOV units), fitted by least squares
 * over the voxels where weight != 0, subsampled to at most ~20 per axis
 * for the solve (~64 per axis when nz = 1: kw_coil_fit() is this fit with
 * nz = 1, order_z = 0); coef = channels x (2 order_z + 1)(2 order + 1)^2 values,
 * index ((r + order_z)(2 order + 1) + (q + order))(2 order + 1) + (p + order);
 * residual[c] over all weighted voxels. dims = (nz, ny, nx), C order. */
KW_API kw_status kw_coil_fit3(const kw_cfloat *maps, int ncoils, const size_t *dims,
                       const float *weight, int order, int order_z, double period,
                       kw_cdouble *coef, double *residual);

/*! kw_coil_fit(): least-squares fit of each map (ncoils x ny x nx samples on
 * the pixel grid) by the trigonometric series
 *   s(u, v) = sum_{|p|,|q| <= order} c_pq exp(i 2 pi (p u + q v) / period),
 * u = x/2 right, v = -y/2 down (FOV units, the array axes), over the pixels
 * where weight[pixel] != 0 (NULL: all), subsampled to at most ~64 x 64
 * points for the solve. coef receives ncoils x (2 order + 1)^2 values
 * (index (q + order)(2 order + 1) + (p + order)); residual[c] the relative
 * RMS misfit ||s - fit|| / ||s|| of coil c over all weighted pixels.
 * dims = (ny, nx), C order. */
KW_API kw_status kw_coil_fit(const kw_cfloat *maps, int ncoils, const size_t *dims,
                      const float *weight, int order, double period,
                      kw_cdouble *coef, double *residual);

/*! kw_coil_series_grid(): one coil's 3-D series (kw_coil_fit3's layout;
 * order_z = 0 and nz = 1 for the 2-D series) on the voxel grid dims =
 * (nz, ny, nx) (C order) into out, evaluated separably (per row the x coefficients, then
 * 2 order + 1 terms per voxel). Returns KW_ENOMEM if its row tables cannot
 * be allocated. */
KW_API kw_status kw_coil_series_grid(const kw_cdouble *coef, int order, int order_z, double period,
                              const size_t *dims, kw_cfloat *out);

/*! kw_coil_fit_error(): the largest pointwise misfit of one coil's fitted
 * series `fit` against its map `map` (both on the voxel grid dims = (nz,
 * ny, nx), C order), relative to the map's local magnitude:
 *   max |fit - map| / |map|
 * over the voxels where weight != 0 (NULL: all) and |map| >= floor x the
 * largest |map| among those voxels (floor in [0, 1); 0.1 for the
 * acquisition's tolerance). *max_err = 0 where no voxel qualifies. */
KW_API kw_status kw_coil_fit_error(const kw_cfloat *map, const kw_cfloat *fit, const size_t *dims,
                                   const float *weight, double floor, double *max_err);

#ifdef __cplusplus
}
#endif
#endif /* KW_COILS_H */
