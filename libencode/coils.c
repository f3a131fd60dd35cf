/* coils.c: loop fields, a ring of receive coils, and the trigonometric-series
 * fit of their sensitivities (Guerquin-Kern et al. 2012). */
#include "kw_coils.h"
#include "kw_linalg.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

kw_status kw_ellip_ke(double m, double *K, double *E)
{
    KW_FAIL_IF(!(m >= 0 && m < 1), KW_ERANGE, "ellip: parameter m = %g outside [0, 1)", m);
    /* Arithmetic-geometric mean (Abramowitz & Stegun 17.6): K = pi/(2 a_N);
     * E = K (1 - sum_n 2^(n-1) c_n^2), c_0^2 = m, c_{n+1} = (a_n - b_n)/2. */
    double a = 1.0, b = sqrt(1.0 - m), sum = 0.5 * m, pow2 = 0.5;
    for (int i = 0; i < 60; i++) {
        double c = 0.5 * (a - b);
        double an = 0.5 * (a + b);
        b = sqrt(a * b);
        a = an;
        pow2 *= 2.0;
        sum += pow2 * c * c;
        if (fabs(c) < 1e-17 * a)
            break;
    }
    *K = KW_PI / (2.0 * a);
    *E = *K * (1.0 - sum);
    return KW_OK;
}

kw_status kw_loop_field(const double c[3], const double n[3], double a, double current,
                        const double r[3], double b[3])
{
    KW_FAIL_IF(!(a > 0), KW_EINVAL, "coil: loop radius must be positive");
    double nn = sqrt(n[0] * n[0] + n[1] * n[1] + n[2] * n[2]);
    KW_FAIL_IF(!(nn > 0), KW_EINVAL, "coil: zero normal");
    double u[3] = {n[0] / nn, n[1] / nn, n[2] / nn};
    double d[3] = {r[0] - c[0], r[1] - c[1], r[2] - c[2]};
    double z = d[0] * u[0] + d[1] * u[1] + d[2] * u[2];
    double rv[3] = {d[0] - z * u[0], d[1] - z * u[1], d[2] - z * u[2]};
    double rho = sqrt(rv[0] * rv[0] + rv[1] * rv[1] + rv[2] * rv[2]);
    double q = (a + rho) * (a + rho) + z * z;
    double g = (a - rho) * (a - rho) + z * z;
    KW_FAIL_IF(g < 1e-24 * a * a, KW_ERANGE, "coil: field point on the wire");
    double m = 4.0 * a * rho / q;
    double K, E;
    kw_status st = kw_ellip_ke(m, &K, &E);
    if (st)
        return st;
    /* Closed form of the Biot-Savart integral for a circular loop (e.g.
     * Smythe, "Static and Dynamic Electricity", 1950, sec. 7.10; Simpson et
     * al. 2001, NASA/TM-2013-217919 form), axial (along n) and radial parts. */
    double k0 = KW_MU0 * current / (2.0 * KW_PI * sqrt(q));
    double bz = k0 * (K + (a * a - rho * rho - z * z) / g * E);
    double brho = 0.0;
    if (rho > 1e-12 * a)
        brho = k0 * z / rho * (-K + (a * a + rho * rho + z * z) / g * E);
    for (int i = 0; i < 3; i++)
        b[i] = bz * u[i] + (rho > 1e-12 * a ? brho * rv[i] / rho : 0.0);
    return KW_OK;
}

int kw_coil_ring_channels(const kw_coil_ring *ring)
{
    return ring->ncoils * (ring->rings > 1 ? ring->rings : 1);
}

static kw_status ring_check(const kw_coil_ring *ring)
{
    KW_FAIL_IF(!ring, KW_EINVAL, "coils: NULL ring");
    KW_FAIL_PARAM(ring->rings < 0 || ring->rings > 2, KW_EINVAL, "rings", "1 or 2 (got %d)",
               ring->rings);
    KW_FAIL_PARAM(ring->rings == 2 && (!(ring->ring_gap > 0) || !isfinite(ring->ring_gap)), KW_EINVAL, "ring_gap", "must be positive for two rings");
    KW_FAIL_PARAM(ring->fov_z < 0 || !isfinite(ring->fov_z), KW_EINVAL, "fov_z", "z must be positive");
    KW_FAIL_PARAM(ring->ncoils < 1 || ring->ncoils > 128, KW_EINVAL, "ncoils",
               "count must be 1..128 (got %d)", ring->ncoils);
    KW_FAIL_PARAM(!(ring->radius > 0) || !isfinite(ring->radius), KW_EINVAL, "radius",
               "must be positive");
    KW_FAIL_PARAM(!(ring->fov[0] > 0 && ring->fov[1] > 0), KW_EINVAL, "fov", "must be positive");
    double half_diag = 0.5 * hypot(ring->fov[0], ring->fov[1]);
    KW_FAIL_PARAM(!(ring->distance > half_diag) || !isfinite(ring->distance), KW_EINVAL, "distance",
               "the loops must stand outside the FOV (more than %g m "
               "from the centre)", half_diag);
    return KW_OK;
}

static void ring_raw(const kw_coil_ring *ring, int cidx, double xm, double ym, double zm,
                     double complex *s)
{
    int g = cidx / ring->ncoils, k = cidx % ring->ncoils;
    double phi = 2.0 * KW_PI * k / ring->ncoils + (g == 1 ? KW_PI / ring->ncoils : 0.0);
    double zc = ring->rings == 2 ? (g == 0 ? -0.5 : 0.5) * ring->ring_gap : 0.0;
    double c[3] = {ring->distance * cos(phi), ring->distance * sin(phi), zc};
    double n[3] = {-cos(phi), -sin(phi), 0};
    double r[3] = {xm, ym, zm}, b[3] = {0, 0, 0};
    kw_loop_field(c, n, ring->radius, 1.0, r, b);
    *s = b[0] - I * b[1];
}

/* 1 / root-sum-of-squares of the raw sensitivities at the centre. */
static double ring_norm(const kw_coil_ring *ring)
{
    double norm = 0;
    for (int c = 0; c < kw_coil_ring_channels(ring); c++) {
        double complex s0;
        ring_raw(ring, c, 0, 0, 0, &s0);
        norm += creal(s0 * conj(s0));
    }
    return 1.0 / sqrt(norm);
}

static void ring_sens(const kw_coil_ring *ring, double norm, double x, double y, double z,
                      double complex *s)
{
    for (int c = 0; c < kw_coil_ring_channels(ring); c++) {
        ring_raw(ring, c, 0.5 * x * ring->fov[1], 0.5 * y * ring->fov[0], 0.5 * z * ring->fov_z,
                 &s[c]);
        s[c] *= norm;
    }
}

/* One plane at height z: coil c's map at out + c x coil_stride (ny x nx). */
static void ring_plane(const kw_coil_ring *ring, double norm, size_t nx, size_t ny, double z,
                       float complex *out, size_t coil_stride)
{
    int nch = kw_coil_ring_channels(ring);
#pragma omp parallel for schedule(static)
    for (size_t r = 0; r < ny; r++) {
        double complex s[256];
        double y = ((double)(ny / 2) - (double)r) * 2.0 / (double)ny;
        for (size_t col = 0; col < nx; col++) {
            double x = ((double)col - (double)(nx / 2)) * 2.0 / (double)nx;
            ring_sens(ring, norm, x, y, z, s);
            for (int c = 0; c < nch; c++)
                out[(size_t)c * coil_stride + r * nx + col] = (float complex)s[c];
        }
    }
}

kw_status kw_coil_ring_sens3(const kw_coil_ring *ring, double x, double y, double z,
                             double complex *s)
{
    kw_status st = ring_check(ring);
    if (st)
        return st;
    ring_sens(ring, ring_norm(ring), x, y, z, s);
    return KW_OK;
}

kw_status kw_coil_ring_maps3(const kw_coil_ring *ring, const size_t *dims, float complex *out)
{
    KW_FAIL_IF(!dims, KW_EINVAL, "coils: NULL dims");
    const size_t nz = dims[0], ny = dims[1], nx = dims[2]; /* C order */
    kw_status st = ring_check(ring);
    if (st)
        return st;
    KW_FAIL_IF(!out || !nx || !ny || !nz, KW_EINVAL, "coils: empty grid");
    KW_FAIL_PARAM(!(ring->fov_z > 0), KW_EINVAL, "fov_z", "z must be positive for 3-D maps");
    double norm = ring_norm(ring);
    for (size_t iz = 0; iz < nz; iz++)
        ring_plane(ring, norm, nx, ny, ((double)iz - (double)(nz / 2)) * 2.0 / (double)nz,
                   out + iz * nx * ny, nx * ny * nz);
    return KW_OK;
}

kw_status kw_coil_ring_sens(const kw_coil_ring *ring, double x, double y,
                            double complex *s)
{
    return kw_coil_ring_sens3(ring, x, y, 0.0, s);
}

kw_status kw_coil_ring_maps(const kw_coil_ring *ring, const size_t *dims, float complex *out)
{
    return kw_coil_ring_maps_at(ring, dims, 0.0, out);
}

kw_status kw_coil_ring_maps_at(const kw_coil_ring *ring, const size_t *dims, double z,
                               float complex *out)
{
    KW_FAIL_IF(!dims, KW_EINVAL, "coils: NULL dims");
    const size_t ny = dims[0], nx = dims[1]; /* C order */
    kw_status st = ring_check(ring);
    if (st)
        return st;
    KW_FAIL_IF(!out || !nx || !ny, KW_EINVAL, "coils: empty grid");
    ring_plane(ring, ring_norm(ring), nx, ny, z, out, nx * ny);
    return KW_OK;
}

static kw_status coil_fit3(const float complex *maps, int ncoils, size_t nx, size_t ny,
                           size_t nz, const float *weight, int order, int order_z,
                           double period, double complex *coef, double *residual);
static kw_status series_grid(const double complex *h, int order, int order_z, double period,
                             size_t nx, size_t ny, size_t nz, float complex *out);

kw_status kw_coil_fit(const float complex *maps, int ncoils, const size_t *dims,
                      const float *weight, int order, double period,
                      double complex *coef, double *residual)
{
    KW_FAIL_IF(!dims, KW_EINVAL, "coil fit: NULL dims");
    /* the 3-D fit with one slice and order 0 along z: the same series */
    return coil_fit3(maps, ncoils, dims[1], dims[0], 1, weight, order, 0, period, coef, residual);
}

kw_status kw_coil_fit3(const float complex *maps, int ncoils, const size_t *dims,
                       const float *weight, int order, int order_z, double period,
                       double complex *coef, double *residual)
{
    KW_FAIL_IF(!dims, KW_EINVAL, "coil fit: NULL dims");
    return coil_fit3(maps, ncoils, dims[2], dims[1], dims[0], weight, order, order_z, period,
                     coef, residual);
}

kw_status kw_coil_series_grid(const double complex *h, int order, int order_z, double period,
                              const size_t *dims, float complex *out)
{
    KW_FAIL_IF(!dims, KW_EINVAL, "coil series: NULL dims");
    return series_grid(h, order, order_z, period, dims[2], dims[1], dims[0], out);
}

/* exp(i 2 pi m t / period) for m = -order..order at the n positions
 * t = (i - n/2) / n: n x (2 order + 1) values. */
static void basis_table(size_t n, int order, double period, double complex *e)
{
    int side = 2 * order + 1;
    for (size_t i = 0; i < n; i++) {
        double t = ((double)i - (double)(n / 2)) / (double)n;
        for (int m = -order; m <= order; m++) {
            double ph = 2.0 * KW_PI * m * t / period;
            e[i * side + (m + order)] = cos(ph) + I * sin(ph);
        }
    }
}

static kw_status series_grid(const double complex *h, int order, int order_z, double period,
                             size_t nx, size_t ny, size_t nz, float complex *out)
{
    KW_FAIL_IF(!h || !out || order < 0 || order_z < 0, KW_EINVAL, "coil series: bad arguments");
    const int side = 2 * order + 1, sz = 2 * order_z + 1;
    double complex *ex = kw_alloc_n(nx * (size_t)side, sizeof *ex);
    double complex *ey = kw_alloc_n(ny * (size_t)side, sizeof *ey);
    double complex *ez = kw_alloc_n(nz * (size_t)sz, sizeof *ez);
    if (!ex || !ey || !ez) {
        kw_free(ex);
        kw_free(ey);
        kw_free(ez);
        return kw_set_error(KW_ENOMEM, "coil series: out of memory");
    }
    basis_table(nx, order, period, ex);
    basis_table(ny, order, period, ey);
    basis_table(nz, order_z, period, ez);
#pragma omp parallel for schedule(static)
    for (size_t row = 0; row < nz * ny; row++) {
        size_t k = row / ny, r = row % ny;
        double complex t[2 * 8 + 1]; /* order <= 8 */
        for (int p = 0; p < side; p++) {
            double complex acc = 0;
            for (int w = 0; w < sz; w++)
                for (int q = 0; q < side; q++)
                    acc += h[(w * side + q) * side + p] * ez[k * sz + w] * ey[r * side + q];
            t[p] = acc;
        }
        for (size_t c = 0; c < nx; c++) {
            double complex f = 0;
            for (int p = 0; p < side; p++)
                f += t[p] * ex[c * side + p];
            out[row * nx + c] = (float complex)f;
        }
    }
    kw_free(ex);
    kw_free(ey);
    kw_free(ez);
    return KW_OK;
}

static kw_status coil_fit3(const float complex *maps, int ncoils, size_t nx, size_t ny,
                           size_t nz, const float *weight, int order, int order_z,
                           double period, double complex *coef, double *residual)
{
    KW_FAIL_IF(!maps || !coef || ncoils < 1 || !nx || !ny || !nz, KW_EINVAL,
               "coil fit: bad arguments");
    KW_FAIL_PARAM(order < 0 || order > 8 || order_z < 0 || order_z > 8, KW_ERANGE, "order",
               "%d, %d outside 0..8", order, order_z);
    KW_FAIL_IF(!(period > 0) || !isfinite(period), KW_EINVAL, "coil fit: period must be positive");
    const int side = 2 * order + 1, sz = 2 * order_z + 1, P = side * side * sz;
    KW_FAIL_PARAM(P > 1024, KW_ERANGE, "order", "%d coefficients per coil (at most 1024)", P);
    const size_t nv = nx * ny * nz;
    /* fit points: at most 64 per axis in 2-D, 20 per axis in 3-D */
    const size_t cap = nz == 1 ? 64 : 20;
    size_t sx = (nx + cap - 1) / cap, sy = (ny + cap - 1) / cap, szs = (nz + cap - 1) / cap;
    size_t M = 0;
    for (size_t k = 0; k < nz; k += szs)
        for (size_t r = 0; r < ny; r += sy)
            for (size_t c = 0; c < nx; c += sx)
                if (!weight || weight[(k * ny + r) * nx + c] != 0)
                    M++;
    KW_FAIL_IF(M < (size_t)P, KW_EINVAL,
               "coil fit: %zu fit points for %d coefficients (object too small "
               "or order too high)", M, P);
    double complex *G = kw_alloc_n((size_t)P * P, sizeof *G);
    double complex *H = kw_alloc_n((size_t)P * ncoils, sizeof *H);
    double complex *ex = kw_alloc_n(nx * (size_t)side, sizeof *ex);
    double complex *ey = kw_alloc_n(ny * (size_t)side, sizeof *ey);
    double complex *ez = kw_alloc_n(nz * (size_t)sz, sizeof *ez);
    double complex *a = kw_alloc_n((size_t)P, sizeof *a);
    float complex *fit = NULL; /* one coil's fitted map, for the residual */
    kw_status st = KW_OK;
    if (!G || !H || !ex || !ey || !ez || !a) {
        st = kw_set_error(KW_ENOMEM, "coil fit: out of memory");
        goto done;
    }
    basis_table(nx, order, period, ex);
    basis_table(ny, order, period, ey);
    basis_table(nz, order_z, period, ez);
    /* normal equations G = A^H A and right-hand sides A^H s, one fit point
     * (one basis row a) at a time */
    for (size_t k = 0; k < nz; k += szs)
        for (size_t r = 0; r < ny; r += sy)
            for (size_t c = 0; c < nx; c += sx) {
                size_t v = (k * ny + r) * nx + c;
                if (weight && weight[v] == 0)
                    continue;
                for (int w = 0; w < sz; w++)
                    for (int q = 0; q < side; q++)
                        for (int p = 0; p < side; p++)
                            a[(w * side + q) * side + p] =
                                ez[k * sz + w] * ey[r * side + q] * ex[c * side + p];
                for (int i = 0; i < P; i++) {
                    double complex ci = conj(a[i]);
                    for (int j = 0; j <= i; j++)
                        G[i * P + j] += ci * a[j];
                }
                for (int ch = 0; ch < ncoils; ch++) {
                    double complex m = maps[(size_t)ch * nv + v];
                    for (int i = 0; i < P; i++)
                        H[(size_t)ch * P + i] += conj(a[i]) * m;
                }
            }
    double tr = 0;
    for (int i = 0; i < P; i++)
        tr += creal(G[i * P + i]);
    for (int i = 0; i < P; i++)
        G[i * P + i] += 1e-10 * tr / P;
    if (kw_chol(G, (size_t)P) != KW_OK) {
        st = kw_set_error(KW_ENUMERIC, "coil fit: normal equations not positive definite");
        goto done;
    }
    for (int ch = 0; ch < ncoils; ch++) {
        double complex *h = H + (size_t)ch * P;
        kw_chol_solve(G, (size_t)P, h);
        memcpy(coef + (size_t)ch * P, h, (size_t)P * sizeof *h);
        if (!residual)
            continue;
        /* the fit on every weighted voxel */
        if (!fit && !(fit = kw_alloc_n(nv, sizeof *fit))) {
            st = kw_set_error(KW_ENOMEM, "coil fit: out of memory");
            goto done;
        }
        if ((st = series_grid(h, order, order_z, period, nx, ny, nz, fit)))
            goto done;
        double num = 0, den = 0;
        const float complex *mp = maps + (size_t)ch * nv;
        for (size_t v = 0; v < nv; v++) {
            if (weight && weight[v] == 0)
                continue;
            double complex e = (double complex)fit[v] - mp[v];
            num += creal(e * conj(e));
            den += creal(mp[v] * conj(mp[v]));
        }
        residual[ch] = den > 0 ? sqrt(num / den) : 0.0;
    }
done:
    kw_free(G);
    kw_free(H);
    kw_free(ex);
    kw_free(ey);
    kw_free(ez);
    kw_free(a);
    kw_free(fit);
    return st;
}

kw_status kw_coil_fit_error(const float complex *map, const float complex *fit, const size_t *dims,
                            const float *weight, double floor, double *max_err)
{
    KW_FAIL_IF(!map || !fit || !dims || !max_err, KW_EINVAL, "coil fit error: NULL argument");
    KW_FAIL_IF(!(floor >= 0 && floor < 1), KW_EINVAL, "coil fit error: floor %g outside [0, 1)",
               floor);
    const size_t nv = dims[0] * dims[1] * dims[2];
    double peak = 0;
    for (size_t v = 0; v < nv; v++)
        if (!weight || weight[v] != 0) {
            double m = cabs((double complex)map[v]);
            peak = m > peak ? m : peak;
        }
    double worst = 0;
    for (size_t v = 0; v < nv; v++) {
        if (weight && weight[v] == 0)
            continue;
        double m = cabs((double complex)map[v]);
        if (m <= 0 || m < floor * peak)
            continue;
        double e = cabs((double complex)fit[v] - (double complex)map[v]) / m;
        worst = e > worst ? e : worst;
    }
    *max_err = worst;
    return KW_OK;
}
