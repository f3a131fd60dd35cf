/* phantom.c: analytic phantoms and their exact Fourier transforms. */
#include "kw_phantom.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "kw_tissue.h"
#include "params_int.h"

#define DEG (KW_PI / 180.0)

/* ---- Fourier transforms of the unit shapes --------------------------------- */

/* J1(z)/z for the ellipse (limit 1/2 at z = 0; series J1(z)/z = 1/2 - z^2/16
 * + z^4/384 below 1e-4 where j1()'s quotient would lose digits). */
double kw_ft_jinc(double z)
{
    if (z < 1e-4)
        return 0.5 - z * z / 16.0 + z * z * z * z / 384.0;
    return j1(z) / z;
}

/* Spherical Bessel j1(z)/z = (sin z - z cos z)/z^3 (limit 1/3). Below 0.1
 * the difference cancels, so use its series sum_n (-1)^n (2n+2) z^2n/(2n+3)!
 * (from the series of sin and cos), five terms: error < 1e-21. */
double kw_ft_sjinc(double z)
{
    if (z < 0.1) {
        double z2 = z * z;
        return 1.0 / 3.0 - z2 / 30.0 + z2 * z2 / 840.0 - z2 * z2 * z2 / 45360.0 +
               z2 * z2 * z2 * z2 / 3991680.0;
    }
    return (sin(z) - z * cos(z)) / (z * z * z);
}

/* kw_ft_sinc(t) = sin(pi t)/(pi t). */
double kw_ft_sinc(double t)
{
    double x = KW_PI * t;
    if (fabs(x) < 1e-4)
        return 1.0 - x * x / 6.0;
    return sin(x) / x;
}

double complex kw_shape_ft(const kw_shape *s, double fx, double fy, double fz)
{
    double c = cos(s->angle), sn = sin(s->angle);
    /* frequency in the shape's own frame: f' = R^T f */
    double fu = fx * c + fy * sn;
    double fv = -fx * sn + fy * c;
    double a = s->axes[0], b = s->axes[1], cz = s->axes[2];
    double mag;
    double ph = fx * s->center[0] + fy * s->center[1];
    switch (s->kind) {
    case KW_SHAPE_ELLIPSE: {
        /* unit disk: J1(2 pi |f|)/|f|; scaled: a b J1(2 pi q)/q
         *          = 2 pi a b J1(z)/z with z = 2 pi q */
        double q = hypot(a * fu, b * fv);
        mag = 2.0 * KW_PI * a * b * kw_ft_jinc(2.0 * KW_PI * q);
        break;
    }
    case KW_SHAPE_RECT:
        mag = 4.0 * a * b * kw_ft_sinc(2.0 * a * fu) * kw_ft_sinc(2.0 * b * fv);
        break;
    case KW_SHAPE_ELLIPSOID: {
        /* unit ball: 4 pi j1(k)/k with k = 2 pi |f|; scaled by a b c */
        double q = sqrt(a * fu * a * fu + b * fv * b * fv + cz * fz * cz * fz);
        mag = 4.0 * KW_PI * a * b * cz * kw_ft_sjinc(2.0 * KW_PI * q);
        ph += fz * s->center[2];
        break;
    }
    case KW_SHAPE_BOX:
        mag = 8.0 * a * b * cz * kw_ft_sinc(2.0 * a * fu) * kw_ft_sinc(2.0 * b * fv) *
              kw_ft_sinc(2.0 * cz * fz);
        ph += fz * s->center[2];
        break;
    default:
        return 0;
    }
    double arg = -2.0 * KW_PI * ph;
    return mag * (cos(arg) + I * sin(arg));
}

kw_status kw_shape_ft_many(const kw_shape *s, size_t n, const double *f,
                           double *out)
{
    KW_FAIL_IF(!s || (n && (!f || !out)), KW_EINVAL, "shape_ft: NULL argument");
    for (size_t i = 0; i < n; i++) {
        double complex v = kw_shape_ft(s, f[3 * i], f[3 * i + 1], f[3 * i + 2]);
        out[2 * i] = creal(v);
        out[2 * i + 1] = cimag(v);
    }
    return KW_OK;
}

int kw_shape_contains(const kw_shape *s, double x, double y, double z)
{
    double c = cos(s->angle), sn = sin(s->angle);
    double dx = x - s->center[0], dy = y - s->center[1], dz = z - s->center[2];
    double u = dx * c + dy * sn, v = -dx * sn + dy * c;
    double a = s->axes[0], b = s->axes[1], cz = s->axes[2];
    if (!(a > 0) || !(b > 0))
        return 0;
    switch (s->kind) {
    case KW_SHAPE_ELLIPSE:
        return (u / a) * (u / a) + (v / b) * (v / b) <= 1.0;
    case KW_SHAPE_RECT:
        return fabs(u) <= a && fabs(v) <= b;
    case KW_SHAPE_ELLIPSOID:
        return (u / a) * (u / a) + (v / b) * (v / b) + (dz / cz) * (dz / cz) <= 1.0;
    case KW_SHAPE_BOX:
        return fabs(u) <= a && fabs(v) <= b && fabs(dz) <= cz;
    }
    return 0;
}

static int shape_ndim(const kw_shape *s)
{
    return (s->kind == KW_SHAPE_ELLIPSOID || s->kind == KW_SHAPE_BOX) ? 3 : 2;
}

double complex kw_phantom_kspace_shape(const kw_shape *s, int ndim,
                                       const size_t *dims, double kx, double ky,
                                       double kz)
{
    /* u = x/2 (FOV units); ky runs along the rows, i.e. towards -y:
     * integral f(u) e^{-i 2 pi k.u} du = 2^-ndim F(kx/2, -ky/2, kz/2). */
    const size_t nx = dims[ndim - 1], ny = dims[ndim - 2];
    double scale = sqrt((double)nx * (double)ny) * 0.25;
    double fz = 0;
    if (ndim == 3) {
        scale *= sqrt((double)dims[0]) * 0.5;
        fz = 0.5 * kz;
    }
    if (shape_ndim(s) == 2 && ndim == 3) {
        /* a 2-D shape in a 3-D volume: an infinitely long prism is not
         * band-limited; callers use 3-D shapes for 3-D phantoms. */
        return 0;
    }
    return scale * kw_shape_ft(s, 0.5 * kx, -0.5 * ky, fz);
}

void kw_phantom_weights(const kw_phantom *p, const double *own, double *w)
{
    for (int i = 0; i < p->nshapes; i++) {
        double v = own ? own[i] : p->shapes[i].value;
        int par = p->shapes[i].parent;
        if (p->tissue && par >= 0 && par < p->nshapes)
            v -= own ? own[par] : p->shapes[par].value;
        w[i] = v;
    }
}

double complex kw_phantom_kspace(const kw_phantom *p, const size_t *dims,
                                 double kx, double ky, double kz)
{
    double w[KW_PHANTOM_MAX_SHAPES];
    kw_phantom_weights(p, NULL, w);
    double complex acc = 0;
    for (int i = 0; i < p->nshapes; i++)
        acc += w[i] * kw_phantom_kspace_shape(&p->shapes[i], p->ndim, dims, kx, ky, kz);
    return acc;
}

/* ---- rasterisation ------------------------------------------------------------ */

static double shape_radius(const kw_shape *s)
{
    double a = s->axes[0], b = s->axes[1];
    if (s->kind == KW_SHAPE_RECT || s->kind == KW_SHAPE_BOX)
        return sqrt(a * a + b * b);
    return a > b ? a : b;
}

static long clampl(long v, long lo, long hi)
{
    return v < lo ? lo : (v > hi ? hi : v);
}

kw_status kw_phantom_rasterize(const kw_phantom *p, const size_t *dims,
                               const double *w, int super, float *out)
{
    return kw_phantom_rasterize_grid(p, dims, w, super, 0.0, out);
}

kw_status kw_phantom_rasterize_grid(const kw_phantom *p, const size_t *dims,
                                    const double *w, int super, double offset,
                                    float *out)
{
    KW_FAIL_IF(!p || !dims || !out, KW_EINVAL, "rasterize: NULL argument");
    KW_FAIL_IF(super < 1 || super > 64, KW_EINVAL, "rasterize: supersampling %d", super);
    KW_FAIL_IF(p->ndim != 2 && p->ndim != 3, KW_EINVAL, "rasterize: ndim %d", p->ndim);
    KW_FAIL_IF(!(fabs(offset) <= 1.0), KW_EINVAL, "rasterize: offset %g", offset);
    double wl[KW_PHANTOM_MAX_SHAPES];
    if (!w) {
        kw_phantom_weights(p, NULL, wl);
        w = wl;
    }
    /* dims: (ny, nx) or (nz, ny, nx), C order */
    size_t nx = dims[p->ndim - 1], ny = dims[p->ndim - 2], nz = p->ndim == 3 ? dims[0] : 1;
    KW_FAIL_IF(!nx || !ny || !nz, KW_EINVAL, "rasterize: empty grid");
    memset(out, 0, nx * ny * nz * sizeof *out);
    double dx = 2.0 / (double)nx, dy = 2.0 / (double)ny, dz = 2.0 / (double)nz;
    long hx = (long)(nx / 2), hy = (long)(ny / 2), hz = (long)(nz / 2);
    int sz = p->ndim == 3 ? super : 1;
    double inv = 1.0 / ((double)super * super * sz);
    for (int si = 0; si < p->nshapes; si++) {
        const kw_shape *s = &p->shapes[si];
        if (w[si] == 0)
            continue;
        double r = shape_radius(s);
        /* pixel c covers x in [(c - hx - 1/2) dx, (c - hx + 1/2) dx] */
        long c0 = clampl((long)floor((s->center[0] - r) / dx + hx - 1), 0, (long)nx - 1);
        long c1 = clampl((long)ceil((s->center[0] + r) / dx + hx + 1), 0, (long)nx - 1);
        long r0 = clampl((long)floor(hy - (s->center[1] + r) / dy - 1), 0, (long)ny - 1);
        long r1 = clampl((long)ceil(hy - (s->center[1] - r) / dy + 1), 0, (long)ny - 1);
        long z0 = 0, z1 = 0;
        if (p->ndim == 3) {
            double rz = s->axes[2];
            z0 = clampl((long)floor((s->center[2] - rz) / dz + hz - 1), 0, (long)nz - 1);
            z1 = clampl((long)ceil((s->center[2] + rz) / dz + hz + 1), 0, (long)nz - 1);
        }
        for (long sl = z0; sl <= z1; sl++)
            for (long row = r0; row <= r1; row++)
                for (long col = c0; col <= c1; col++) {
                    int hits = 0;
                    for (int iz = 0; iz < sz; iz++) {
                        double z = p->ndim == 3
                                       ? ((double)(sl - hz) + offset + (iz + 0.5) / sz - 0.5) * dz
                                       : 0.0;
                        for (int iy = 0; iy < super; iy++) {
                            double y = ((double)(hy - row) - offset - (iy + 0.5) / super + 0.5) * dy;
                            for (int ix = 0; ix < super; ix++) {
                                double x = ((double)(col - hx) + offset + (ix + 0.5) / super - 0.5) * dx;
                                hits += kw_shape_contains(s, x, y, z);
                            }
                        }
                    }
                    if (hits)
                        out[((size_t)sl * ny + (size_t)row) * nx + (size_t)col] +=
                            (float)(w[si] * hits * inv);
                }
    }
    return KW_OK;
}

/* ---- built-in phantoms ------------------------------------------------------------ */

static const char *const names[] = {"shepp-logan", "shepp-logan-modified",
                                    "weave", "weave3d", NULL};

const char *const *kw_phantom_names(void)
{
    return names;
}

/* Shepp & Logan 1974 (IEEE Trans Nucl Sci 21:21, Table 1) geometry: center
 * x, y, semi-axes a (along the rotated x), b, rotation (degrees), and the
 * original additive intensities; the modified intensities are Toft's 1996
 * higher-contrast set (P. Toft, "The Radon Transform", PhD thesis, DTU,
 * Table B.3). Recalled from memory; checked against scikit-image's
 * shepp_logan_phantom() in tests/ref/test_phantom_skimage.py. */
static const double sl_geom[10][5] = {
    {0, 0, 0.69, 0.92, 0},
    {0, -0.0184, 0.6624, 0.874, 0},
    {0.22, 0, 0.11, 0.31, -18},
    {-0.22, 0, 0.16, 0.41, 18},
    {0, 0.35, 0.21, 0.25, 0},
    {0, 0.1, 0.046, 0.046, 0},
    {0, -0.1, 0.046, 0.046, 0},
    {-0.08, -0.605, 0.046, 0.023, 0},
    {0, -0.605, 0.023, 0.023, 0},
    {0.06, -0.605, 0.023, 0.046, 0},
};
static const double sl_orig[10] = {2, -0.98, -0.02, -0.02, 0.01, 0.01, 0.01, 0.01, 0.01, 0.01};
static const double sl_mod[10] = {1, -0.8, -0.2, -0.2, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1};

static kw_shape *add(kw_phantom *p, kw_shape_kind kind, double x, double y,
                     double z, double a, double b, double c, double angle_deg)
{
    kw_shape *s = &p->shapes[p->nshapes++];
    memset(s, 0, sizeof *s);
    s->kind = kind;
    s->center[0] = x;
    s->center[1] = y;
    s->center[2] = z;
    s->axes[0] = a;
    s->axes[1] = b;
    s->axes[2] = c;
    s->angle = angle_deg * DEG;
    s->tissue = -1;
    s->parent = -1;
    return s;
}

static void set_tissue(kw_shape *s, int tissue, int parent)
{
    s->tissue = tissue;
    s->parent = parent;
    s->value = kw_tissue_get(tissue)->pd;
}

/* "weave": our own test object (2-D). A muscle-like body (ellipse 0.90 x
 * 0.85) holds six vials of radius 0.14 on a ring of radius 0.55 (white
 * matter at the top, then clockwise grey matter, CSF, liver, blood, and fat at
 * the upper left), and in the middle a resolution insert of CSF-filled bars:
 * four groups of three vertical bars (long along y, 0.24 long) whose width
 * equals their spacing: 0.04, 0.028, 0.02, 0.014 phantom units (at a 256
 * matrix: 5.1, 3.6, 2.6 and 1.8 pixels). `dim3`: the 3-D version, body and
 * vials ellipsoids, bars boxes. */
static void make_weave(kw_phantom *p, int dim3)
{
    p->ndim = dim3 ? 3 : 2;
    p->tissue = 1;
    kw_shape_kind ell = dim3 ? KW_SHAPE_ELLIPSOID : KW_SHAPE_ELLIPSE;
    kw_shape_kind bar = dim3 ? KW_SHAPE_BOX : KW_SHAPE_RECT;
    kw_shape *body = add(p, ell, 0, 0, 0, 0.90, 0.85, 0.90, 0);
    set_tissue(body, KW_TISSUE_MUSCLE, -1);
    static const int vial_tissue[6] = {KW_TISSUE_WHITE_MATTER, KW_TISSUE_GREY_MATTER,
                                       KW_TISSUE_CSF, KW_TISSUE_LIVER,
                                       KW_TISSUE_BLOOD, KW_TISSUE_FAT};
    static const double vial_angle[6] = {90, 30, -30, -90, -150, 150};
    for (int v = 0; v < 6; v++) {
        double t = vial_angle[v] * DEG;
        kw_shape *s = add(p, ell, 0.55 * cos(t), 0.55 * sin(t), 0, 0.14, 0.14, 0.45, 0);
        set_tissue(s, vial_tissue[v], 0);
    }
    static const double half[4] = {0.02, 0.014, 0.01, 0.007};
    static const double gx[4] = {-0.23, -0.01, 0.16, 0.295};
    for (int g = 0; g < 4; g++)
        for (int b = -1; b <= 1; b++) {
            kw_shape *s = add(p, bar, gx[g] + 4.0 * half[g] * b, 0, 0, half[g], 0.12, 0.3, 0);
            set_tissue(s, KW_TISSUE_CSF, 0);
        }
}

kw_status kw_phantom_make(kw_phantom *p, const char *name)
{
    KW_FAIL_IF(!p || !name, KW_EINVAL, "phantom: NULL argument");
    memset(p, 0, sizeof *p);
    if (strcmp(name, "shepp-logan") == 0 || strcmp(name, "shepp-logan-modified") == 0) {
        const double *val = strcmp(name, "shepp-logan") == 0 ? sl_orig : sl_mod;
        p->ndim = 2;
        for (int i = 0; i < 10; i++) {
            kw_shape *s = add(p, KW_SHAPE_ELLIPSE, sl_geom[i][0], sl_geom[i][1], 0,
                              sl_geom[i][2], sl_geom[i][3], 0, sl_geom[i][4]);
            s->value = val[i];
        }
    } else if (strcmp(name, "weave") == 0) {
        make_weave(p, 0);
    } else if (strcmp(name, "weave3d") == 0) {
        make_weave(p, 1);
    } else {
        static const char *const known[] = {"shepp-logan", "shepp-logan-modified", "weave",
                                            "weave3d", NULL};
        return kw_param_choice_error("name", "phantom", name, known);
    }
    snprintf(p->name, sizeof p->name, "%s", name);
    return KW_OK;
}

kw_status kw_phantom_section(const kw_phantom *p3, double z, kw_phantom *p2)
{
    KW_FAIL_IF(!p3 || !p2, KW_EINVAL, "section: NULL argument");
    KW_FAIL_IF(p3->ndim != 3, KW_EINVAL, "section: the phantom is not 3-D");
    *p2 = *p3;
    p2->ndim = 2;
    for (int i = 0; i < p2->nshapes; i++) {
        kw_shape *s = &p2->shapes[i];
        double t = (z - s->center[2]) / s->axes[2];
        double f = 0;
        if (s->kind == KW_SHAPE_ELLIPSOID) {
            /* the cut of an ellipsoid at height z is an ellipse with both
             * semi-axes scaled by sqrt(1 - t^2) */
            s->kind = KW_SHAPE_ELLIPSE;
            f = fabs(t) < 1 ? sqrt(1 - t * t) : 0;
        } else if (s->kind == KW_SHAPE_BOX) {
            s->kind = KW_SHAPE_RECT;
            f = fabs(t) <= 1 ? 1 : 0;
        } else {
            f = 1;
        }
        s->axes[0] *= f;
        s->axes[1] *= f;
        s->axes[2] = 0;
        s->center[2] = 0;
    }
    return KW_OK;
}

kw_status kw_gauss_legendre(int n, double *x, double *w)
{
    KW_FAIL_IF(n < 1 || n > 64 || !x || !w, KW_EINVAL, "gauss-legendre: n = %d", n);
    /* Newton iteration on P_n from the Chebyshev-like first guess (Abramowitz
     * & Stegun 25.4.29 nodes; textbook construction). */
    for (int i = 0; i < n; i++) {
        double t = cos(KW_PI * (i + 0.75) / (n + 0.5)), dp = 1;
        for (int it = 0; it < 100; it++) {
            double p0 = 1, p1 = t;
            for (int k = 2; k <= n; k++) {
                double p2 = ((2 * k - 1) * t * p1 - (k - 1) * p0) / k;
                p0 = p1;
                p1 = p2;
            }
            if (n == 1) {
                p1 = t;
                p0 = 1;
            }
            dp = n * (t * p1 - p0) / (t * t - 1);
            double dt = p1 / dp;
            t -= dt;
            if (fabs(dt) < 1e-16)
                break;
        }
        x[i] = t;
        w[i] = 2.0 / ((1 - t * t) * dp * dp);
    }
    return KW_OK;
}
