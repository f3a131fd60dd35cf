/* kw_phantom.h: analytic phantoms made of ellipses, rectangles, ellipsoids
 * and boxes, with their exact Fourier transforms (no rasterise-then-FFT).
 *
 * Coordinates (docs/api.md): phantom coordinates [-1, 1] span the FOV in every
 * direction; x to the right, y up, z towards the viewer. Row 0 of an image is
 * the top (y = +1 side).
 *
 * k-space convention (docs/simulator.md): the spatial frequency of an image
 * array is taken along the array axes, i.e. kx runs along the columns (x,
 * to the right) and ky along the rows (row index grows downwards, towards
 * -y); kz along the slices (slice index grows with z). Frequencies are in
 * cycles per FOV, so the Cartesian sample at index i of an axis of N points
 * stands for k = i - N/2 (integer division, as the centered DFT puts k = 0 at
 * index N/2). The value returned is in the scale of the centered unitary DFT
 * on an N-point grid:
 *     S(k) = sqrt(Nx Ny [Nz]) * integral f(u) exp(-i 2 pi k.u) du
 * with u in FOV units (u = x/2), so that the inverse unitary DFT of fully
 * sampled S reconstructs the phantom's intensities.
 *
 * Shapes are additive (the Shepp-Logan convention): overlapping shapes add.
 * A tissue phantom's shape replaces its `parent` inside its area; its
 * additive weight is then (own signal - parent's signal), see kw_simulate.h.
 */
#ifndef KW_PHANTOM_H
#define KW_PHANTOM_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum kw_shape_kind {
    KW_SHAPE_ELLIPSE = 0,   /* 2-D: center, semi-axes a (x'), b (y'), angle */
    KW_SHAPE_RECT = 1,      /* 2-D: center, half-widths a, b, angle */
    KW_SHAPE_ELLIPSOID = 2, /* 3-D: center, semi-axes a, b, c, angle about z */
    KW_SHAPE_BOX = 3        /* 3-D: center, half-widths a, b, c, angle about z */
} kw_shape_kind;

typedef enum kw_species {
    KW_SPECIES_WATER = 0,
    KW_SPECIES_FAT = 1
} kw_species;

/* One shape. Lengths in phantom units ([-1, 1] spans the FOV). */
typedef struct kw_shape {
    kw_shape_kind kind;
    double center[3]; /* x, y, z */
    double axes[3];   /* semi-axes or half-widths along the shape's own axes */
    double angle;     /* rotation about z, radians, counter-clockwise from +x */
    double value;     /* additive intensity (plain phantoms) */
    /* Tissue properties (tissue phantoms; tissue < 0 for plain shapes). */
    int tissue;       /* index into kw_tissue_table(), or -1 */
    int parent;       /* index of the shape this one replaces inside, or -1 */
    double df_hz;     /* extra off-resonance of this shape (Hz), default 0 */
} kw_shape;

#define KW_PHANTOM_MAX_SHAPES 64

typedef struct kw_phantom {
    char name[32];
    int ndim;       /* 2 or 3 */
    int tissue;     /* 1: shapes carry tissues (weights from the signal model) */
    int nshapes;
    kw_shape shapes[KW_PHANTOM_MAX_SHAPES];
} kw_phantom;

/*! kw_phantom_names(): NULL-terminated list of built-in phantom names. */
KW_API const char *const *kw_phantom_names(void);

/*! kw_phantom_make(): fill `p` with the built-in phantom `name`:
 *  "shepp-logan"           Shepp & Logan 1974 (2-D, additive intensities)
 *  "shepp-logan-modified"  Toft 1996 higher-contrast version (2-D)
 *  "weave"                 our own test object: tissue vials, a fat vial and a
 *                          bar resolution insert in a muscle-like body (2-D)
 *  "weave3d"               a 3-D version of "weave": ellipsoidal body and
 *                          vials, box-shaped bars (3-D)
 * KW_EINVAL for an unknown name. Tissue phantoms come with value = proton
 * density of their tissue (so a PD image results without a protocol). */
KW_API kw_status kw_phantom_make(kw_phantom *p, const char *name);

/*! kw_shape_ft(): the continuous Fourier transform of the shape's indicator
 * (value 1 inside), in phantom units, at spatial frequency (fx, fy, fz)
 * cycles per phantom unit, in the phantom's own orientation (y up):
 *   F(f) = integral_shape exp(-i 2 pi f.x) dx.
 * Ellipse: a b J1(2 pi q)/q, q = |diag(a, b) R^T f|; ellipsoid:
 * 4 pi a b c j1(2 pi q)/(2 pi q) (spherical Bessel j1); rectangle/box: products
 * of sinc. For a 2-D shape fz is ignored. */
KW_API kw_cdouble kw_shape_ft(const kw_shape *s, double fx, double fy, double fz);

/*! kw_shape_ft_many(): kw_shape_ft() at n frequencies f[3i..3i+2], written
 * as out[2i] = real, out[2i+1] = imaginary part (for bindings). */
KW_API kw_status kw_shape_ft_many(const kw_shape *s, size_t n, const double *f,
                           double *out);

/*! kw_shape_contains(): 1 if the point (x, y, z) lies inside the shape (z
 * ignored for 2-D shapes). */
KW_API int kw_shape_contains(const kw_shape *s, double x, double y, double z);

/*! kw_phantom_kspace_shape(): the k-space (module convention above) of one
 * shape's indicator at (kx, ky, kz) cycles/FOV on a grid of dims = (ny, nx)
 * or, ndim 3, (nz, ny, nx) points, C order (scale sqrt(prod dims)). */
KW_API kw_cdouble kw_phantom_kspace_shape(const kw_shape *s, int ndim,
                                       const size_t *dims, double kx, double ky,
                                       double kz);

/*! kw_phantom_weights(): additive weight of each shape. `own` gives each
 * shape's own signal (NULL: its `value`). Plain phantoms add: w = own; in a
 * tissue phantom a shape replaces its parent: w = own - own[parent]. */
KW_API void kw_phantom_weights(const kw_phantom *p, const double *own, double *w);

/*! kw_phantom_kspace(): the plain phantom (weights from `value`) at the sample
 * (kx, ky, kz), same convention: dims holds p->ndim sizes, C order. */
KW_API kw_cdouble kw_phantom_kspace(const kw_phantom *p, const size_t *dims,
                                 double kx, double ky, double kz);

/*! kw_phantom_rasterize(): area-averaged image of the phantom on the
 * pixel grid dims = (ny, nx), or for a 3-D phantom (nz, ny, nx) (p->ndim
 * sizes, C order), with per-shape additive weights w[s] (NULL:
 * kw_phantom_weights(p, NULL, .)). `out` holds prod(dims) floats: pixel (row r, column c) is centred at
 * x = (c - nx/2) 2/nx, y = (ny/2 - r) 2/ny (z = (sl - nz/2) 2/nz), the grid
 * of the centered DFT. Each pixel is the mean over `super`^ndim subsamples
 * (super >= 1). */
KW_API kw_status kw_phantom_rasterize(const kw_phantom *p, const size_t *dims,
                               const double *w, int super, float *out);

/*! kw_phantom_rasterize_grid(): the same on a grid moved by `offset` pixels
 * (|offset| <= 1): pixel centres at x = (c - nx/2 + offset) 2/nx,
 * y = (ny/2 - r - offset) 2/ny (z likewise +offset). offset = 0.5 gives the
 * symmetric grid, centres at +-(N-1)/N, that some other tools use. */
KW_API kw_status kw_phantom_rasterize_grid(const kw_phantom *p, const size_t *dims,
                                    const double *w, int super, double offset,
                                    float *out);

/*! kw_phantom_section(): the 2-D phantom cut from the 3-D phantom `p3` at
 * height z (phantom units): ellipsoids become ellipses scaled by
 * sqrt(1 - ((z - cz)/c)^2), boxes rectangles; shapes the plane misses get
 * zero axes (no signal). Tissues and parents are kept. */
KW_API kw_status kw_phantom_section(const kw_phantom *p3, double z, kw_phantom *p2);

/*! kw_gauss_legendre(): n-point Gauss-Legendre nodes x (descending) and
 * weights w on [-1, 1] (n <= 64). */
KW_API kw_status kw_gauss_legendre(int n, double *x, double *w);

/*! The radial kernels of the shape transforms, safe at 0 (series near 0):
 * kw_ft_jinc(z) = J1(z)/z (limit 1/2), kw_ft_sjinc(z) = j1(z)/z =
 * (sin z - z cos z)/z^3 (limit 1/3), kw_ft_sinc(t) = sin(pi t)/(pi t). */
KW_API double kw_ft_jinc(double z);
KW_API double kw_ft_sjinc(double z);
KW_API double kw_ft_sinc(double t);

#ifdef __cplusplus
}
#endif
#endif /* KW_PHANTOM_H */
