/* dcf.c: density compensation (kw_dcf.h). */
#include "kw_dcf.h"

#include <math.h>
#include <stdlib.h>

static int cmp_float(const void *a, const void *b)
{
    float x = *(const float *)a, y = *(const float *)b;
    return (x > y) - (x < y);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* index of the entry of sorted u[0..m) nearest to t */
static size_t nearest(const double *u, size_t m, double t)
{
    size_t lo = 0, hi = m;
    while (hi - lo > 1) {
        size_t mid = (lo + hi) / 2;
        if (u[mid] <= t)
            lo = mid;
        else
            hi = mid;
    }
    if (lo + 1 < m && fabs(u[lo + 1] - t) < fabs(u[lo] - t))
        lo++;
    return lo;
}

kw_status kw_dcf_radial(int ndim, size_t ns, const float *traj, float *w)
{
    KW_FAIL_IF(ndim != 2 && ndim != 3, KW_EINVAL, "dcf: %d dimensions", ndim);
    KW_FAIL_IF(ns == 0 || !traj || !w, KW_EINVAL, "dcf: empty trajectory");
    double rmax = 0, rmin = INFINITY;
    int centre = 0;
    for (size_t j = 0; j < ns; j++) {
        double kx = traj[j * ndim], ky = traj[j * ndim + 1];
        KW_FAIL_IF(!isfinite(kx) || !isfinite(ky), KW_ENUMERIC,
                   "trajectory: sample %zu is not finite", j);
        double r = hypot(kx, ky);
        if (r > rmax)
            rmax = r;
    }
    /* A sample within ctol of k = 0 is the centre: relative to the extent,
     * so that a trajectory integrated from sampled gradients (its centre a
     * few 1e-6 cycles/FOV off in float) is not taken for a first ring of
     * radius 1e-6 (which made every weight, and the image, tiny). The
     * innermost true ring is half a step or more out: 0.5 / rmax >= 1.2e-4
     * of the extent up to matrix 8192, far above 1e-5. */
    const double ctol = fmax(1e-6, 1e-5 * rmax);
    for (size_t j = 0; j < ns; j++) {
        double r = hypot(traj[j * ndim], traj[j * ndim + 1]);
        if (r < ctol)
            centre = 1;
        else if (r < rmin)
            rmin = r;
    }
    KW_FAIL_IF(!(rmax > 0) || !isfinite(rmin), KW_EINVAL,
               "dcf: radial weights need samples away from the centre");
    /* radial step: the innermost ring sits at dr, or at dr/2 when no sample
     * falls on the centre (spokes shifted by half a step) */
    double dr = centre ? rmin : 2 * rmin;
    size_t nplanes = 1;
    double dz = 1.0;
    if (ndim == 3) {
        /* stack of stars: count distinct kz values (sorted copy) */
        float *z = kw_alloc_n(ns, sizeof *z);
        KW_FAIL_IF(!z, KW_ENOMEM, "dcf: out of memory");
        for (size_t j = 0; j < ns; j++)
            z[j] = traj[j * 3 + 2];
        qsort(z, ns, sizeof *z, cmp_float);
        nplanes = 1;
        for (size_t j = 1; j < ns; j++)
            if (z[j] != z[j - 1])
                nplanes++;
        dz = nplanes > 1 ? (double)(z[ns - 1] - z[0]) / (double)(nplanes - 1) : 1.0;
        kw_free(z);
    }
    /* Each full-diameter spoke direction theta (mod pi) owns the angular
     * sector halfway to its neighbours, width dtheta; a sample at radius r
     * owns r dtheta dr of it (uniform angles: dtheta = pi/Ns, w = pi r dr/Ns;
     * golden-angle: the sectors differ). Directions repeated (several
     * planes or repetitions) share: m = samples of the innermost ring at
     * that angle / 2 (the +r and -r of one spoke). */
    double *th = kw_alloc_n(ns, sizeof *th), *u = kw_alloc_n(ns, sizeof *u);
    size_t *cnt = kw_alloc_n(ns, sizeof *cnt);
    if (!th || !u || !cnt) {
        kw_free(th);
        kw_free(u);
        kw_free(cnt);
        return kw_set_error(KW_ENOMEM, "dcf: out of memory");
    }
    size_t nu = 0, ncentre = 0;
    for (size_t j = 0; j < ns; j++) {
        double kx = traj[j * ndim], ky = traj[j * ndim + 1];
        double t = atan2(ky, kx);
        if (t < 0)
            t += KW_PI;
        if (t >= KW_PI - 1e-9)
            t -= KW_PI;
        th[j] = t;
        if (hypot(kx, ky) >= ctol)
            u[nu++] = t;
        else
            ncentre++;
    }
    qsort(u, nu, sizeof *u, cmp_double);
    size_t m = 0;
    for (size_t i = 0; i < nu; i++)
        if (m == 0 || u[i] - u[m - 1] > 1e-5)
            u[m++] = u[i];
    for (size_t j = 0; j < ns; j++) {
        double r = hypot(traj[j * ndim], traj[j * ndim + 1]);
        if (r >= ctol && fabs(r - rmin) < 0.25 * dr)
            cnt[nearest(u, m, th[j])]++;
    }
    for (size_t j = 0; j < ns; j++) {
        double r = hypot(traj[j * ndim], traj[j * ndim + 1]);
        /* the centre: not its Voronoi disc pi dr^2/4 but the weight that
         * makes the ring sum sum_{m>=0} 2 pi (m dr) f(m dr) dr an accurate
         * quadrature of the area integral: Euler-Maclaurin (Abramowitz &
         * Stegun 23.1.30) with g(r) = 2 pi r f(r), g(0) = 0, g'(0) = 2 pi f(0)
         * gives sum_{m>=1} g(m dr) dr = int g - 2 pi f(0) dr^2 / 12 + O(dr^4),
         * so the centre carries pi dr^2 / 6 */
        if (r < ctol) {
            w[j] = (float)(KW_PI * dr * dr / 6 * dz * (double)nplanes / (double)ncentre);
            continue;
        }
        size_t i = nearest(u, m, th[j]);
        double lo = i > 0 ? u[i - 1] : u[m - 1] - KW_PI;
        double hi = i + 1 < m ? u[i + 1] : u[0] + KW_PI;
        double dth = m > 1 ? 0.5 * (hi - lo) : KW_PI;
        double mult = cnt[i] >= 2 ? (double)cnt[i] / 2.0 : 1.0;
        w[j] = (float)(r * dth * dr * dz / mult);
    }
    kw_free(th);
    kw_free(u);
    kw_free(cnt);
    return KW_OK;
}


kw_status kw_dcf_pipe(int ndim, const size_t *dims, size_t ns, const float *traj,
                      int iterations, const kw_nufft_options *opts, float *w)
{
    KW_FAIL_IF(!w || !traj || ns == 0, KW_EINVAL, "dcf: empty trajectory");
    if (iterations <= 0)
        iterations = 20;
    /* A wide kernel (W = 8 at tolerance 1e-6, alpha = 2) keeps the
     * grid-sampled convolution close to shift-invariant: with W = 4 the
     * weights of radial sampling scatter by +-15%, with W = 8 by +-1%
     * against the exact Voronoi areas (tests/test_dcf.c). */
    kw_nufft_options o, given;
    kw_nufft_options_init(&given);
    if (opts) {
        kw_status ost = kw_options_take(&given, sizeof given, opts, "options");
        if (ost)
            return ost;
    }
    kw_nufft_options_init(&o);
    o.tolerance = 1e-6;
    o.oversampling = 2.0;
    o.nthreads = given.nthreads;
    kw_nufft_plan *p;
    kw_status st = kw_nufft_create(&p, ndim, dims, ns, traj, &o);
    if (st)
        return st;
    float complex *a = kw_alloc_n(ns, sizeof *a), *b = kw_alloc_n(ns, sizeof *b);
    if (!a || !b) {
        kw_free(a);
        kw_free(b);
        kw_nufft_destroy(p);
        return kw_set_error(KW_ENOMEM, "dcf: out of memory");
    }
    for (size_t j = 0; j < ns; j++)
        a[j] = 1.0f;
    for (int it = 0; it < iterations && !st; it++) {
        st = kw_nufft_convolve(p, a, b);
        for (size_t j = 0; j < ns && !st; j++) {
            float c = crealf(b[j]);
            a[j] = c > 0 ? crealf(a[j]) / c : 0.0f;
        }
    }
    for (size_t j = 0; j < ns; j++)
        w[j] = crealf(a[j]);
    kw_free(a);
    kw_free(b);
    kw_nufft_destroy(p);
    return st;
}
