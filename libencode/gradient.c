/* gradient.c: trapezoid lobes, the time-optimal Archimedean spiral and the
 * EPI echo train under the gradient amplitude, slew and raster limits.
 *
 * Trapezoid durations: the closed forms of the Handbook of MRI Pulse
 * Sequences (Bernstein, King & Zhou 2004, sec. 5.1 on trapezoids; recalled
 * from memory): triangle when A <= Gmax^2/S with duration 2 sqrt(A/S), else
 * ramps Gmax/S and flat top A/Gmax - Gmax/S.
 * Spiral: Lustig, Kim & Pauly 2008 (see kw_gradient.h). */
#include "kw_gradient.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#define MAX_POINTS 4000000u
#define MAX_SAMPLES 64000000u

/* Whole raster steps needed to hold `t` (the 1e-9 forgives rounding noise). */
static double steps_up(double t, double dt)
{
    double n = ceil(t / dt - 1e-9);
    return n < 0 ? 0 : n;
}

static kw_status check_limits(const kw_gradient_limits *lim)
{
    KW_FAIL_IF(!lim, KW_EINVAL, "gradient: no limits");
    KW_FAIL_IF(!(isfinite(lim->gmax_T_per_m) && lim->gmax_T_per_m > 0), KW_EINVAL,
               "gmax: must be positive");
    KW_FAIL_IF(!(isfinite(lim->slew_T_per_m_per_s) && lim->slew_T_per_m_per_s > 0), KW_EINVAL,
               "slew: must be positive");
    KW_FAIL_IF(!(isfinite(lim->raster_s) && lim->raster_s > 0), KW_EINVAL,
               "raster: must be positive");
    return KW_OK;
}

double kw_trapezoid_duration(const kw_trapezoid *t) { return 2 * t->ramp_s + t->flat_s; }

double kw_trapezoid_area(const kw_trapezoid *t)
{
    return t->amplitude_T_per_m * (t->ramp_s + t->flat_s);
}

kw_status kw_trapezoid_for_area(double area, const kw_gradient_limits *lim, kw_trapezoid *out)
{
    kw_status st = check_limits(lim);
    if (st)
        return st;
    KW_FAIL_IF(!out, KW_EINVAL, "gradient: no output");
    KW_FAIL_IF(!isfinite(area), KW_EINVAL, "gradient: area is not finite");
    *out = (kw_trapezoid){0};
    const double A = fabs(area), G = lim->gmax_T_per_m, S = lim->slew_T_per_m_per_s,
                 dt = lim->raster_s;
    if (A == 0)
        return KW_OK;
    double tmin = A <= G * G / S ? 2 * sqrt(A / S) : A / G + G / S;
    double n0 = steps_up(tmin, dt);
    KW_FAIL_IF(n0 > 1e7, KW_ERANGE, "gradient: lobe of area %g T s/m needs over 1e7 raster steps",
               A);
    if (n0 < 2)
        n0 = 2;
    /* The shortest whole number of steps N with some ramp nr and flat
     * N - 2 nr whose amplitude A / ((N - nr) dt) keeps both limits. */
    for (long N = (long)n0; N < (long)n0 + 1000; N++) {
        for (long nr = 1; 2 * nr <= N; nr++) {
            double amp = A / ((double)(N - nr) * dt);
            if (amp <= G * (1 + 1e-12) && amp / (nr * dt) <= S * (1 + 1e-12)) {
                out->amplitude_T_per_m = copysign(amp, area);
                out->ramp_s = nr * dt;
                out->flat_s = (double)(N - 2 * nr) * dt;
                return KW_OK;
            }
        }
    }
    return kw_set_error(KW_EINTERNAL, "gradient: no lobe found for area %g T s/m", A);
}

kw_status kw_trapezoid_flat(double amplitude, double flat_s, const kw_gradient_limits *lim,
                            kw_trapezoid *out)
{
    kw_status st = check_limits(lim);
    if (st)
        return st;
    KW_FAIL_IF(!out, KW_EINVAL, "gradient: no output");
    KW_FAIL_IF(!isfinite(amplitude) || !isfinite(flat_s) || flat_s < 0, KW_EINVAL,
               "gradient: flat top needs a finite amplitude and duration");
    const double dt = lim->raster_s;
    double nr = steps_up(fabs(amplitude) / lim->slew_T_per_m_per_s, dt);
    if (nr < 1 && amplitude != 0)
        nr = 1;
    out->amplitude_T_per_m = amplitude;
    out->ramp_s = nr * dt;
    out->flat_s = steps_up(flat_s, dt) * dt;
    return KW_OK;
}

size_t kw_trapezoid_raster_count(const kw_trapezoid *t, double raster_s)
{
    return (size_t)llround(kw_trapezoid_duration(t) / raster_s) + 1;
}

kw_status kw_trapezoid_raster(const kw_trapezoid *t, double dt, double *g, size_t cap)
{
    KW_FAIL_IF(!t || !g || !(dt > 0), KW_EINVAL, "gradient: bad raster request");
    size_t n = kw_trapezoid_raster_count(t, dt);
    KW_FAIL_IF(cap < n, KW_ERANGE, "gradient: %zu raster points do not fit in %zu", n, cap);
    long nr = lround(t->ramp_s / dt), nf = lround(t->flat_s / dt);
    for (size_t i = 0; i < n; i++) {
        long k = (long)i;
        double f;
        if (k <= nr)
            f = nr ? (double)k / nr : 0.0;
        else if (k <= nr + nf)
            f = 1.0;
        else
            f = nr ? (double)(2 * nr + nf - k) / nr : 0.0;
        g[i] = t->amplitude_T_per_m * f;
    }
    return KW_OK;
}

/* ---- spiral ------------------------------------------------------------------ */

static kw_status check_spiral(const kw_spiral_spec *s)
{
    KW_FAIL_IF(!s, KW_EINVAL, "spiral: no spec");
    KW_FAIL_IF(!(isfinite(s->fov_m) && s->fov_m > 0), KW_EINVAL, "fov: must be positive");
    KW_FAIL_IF(s->matrix < 2 || s->matrix > 8192, KW_EINVAL, "matrix: 2 to 8192");
    KW_FAIL_IF(s->interleaves < 1 || s->interleaves > 4096, KW_EINVAL, "interleaves: 1 to 4096");
    KW_FAIL_IF(!(isfinite(s->dwell_s) && s->dwell_s > 0), KW_EINVAL, "dwell: must be positive");
    return KW_OK;
}

/* Arc length of k = lambda theta e^{i theta} from 0 to theta. */
static double arc(double lambda, double th)
{
    return 0.5 * lambda * (th * sqrt(1 + th * th) + asinh(th));
}

/* theta(s) by Newton from `th` (ds/dtheta = lambda sqrt(1 + theta^2)). */
static double arc_inverse(double lambda, double s, double th)
{
    for (int it = 0; it < 50; it++) {
        double f = arc(lambda, th) - s;
        double d = lambda * sqrt(1 + th * th);
        double step = f / d;
        th -= step;
        if (th < 0)
            th = 0;
        if (fabs(step) <= 1e-13 * (1 + th))
            break;
    }
    return th;
}

/* The raster k-space points of interleaf 0 (kx, ky at raster j = 0..n),
 * malloc'd into *kxy. Time-optimal velocity profile along the path (forward
 * and backward passes, Lustig et al. 2008) with velocity limit vg (1/m/s) and
 * acceleration limit a (1/m/s^2). */
static kw_status spiral_path(double lambda, double thmax, double vg, double a, double dt,
                             double **kxy, size_t *n_out)
{
    const double L = arc(lambda, thmax);
    double ds = vg * dt / 8;
    if (L / ds < 256)
        ds = L / 256;
    double Mf = ceil(L / ds);
    KW_FAIL_IF(Mf > MAX_POINTS, KW_ERANGE,
               "interleaves: the spiral path needs over %u design points (use more interleaves)",
               MAX_POINTS);
    size_t M = (size_t)Mf;
    ds = L / (double)M;
    double *th = kw_alloc_n(M + 1, sizeof *th), *v = kw_alloc_n(M + 1, sizeof *v),
           *t = kw_alloc_n(M + 1, sizeof *t);
    if (!th || !v || !t) {
        kw_free(th), kw_free(v), kw_free(t);
        return kw_set_error(KW_ENOMEM, "spiral: out of memory");
    }
    double prev = 0;
    for (size_t i = 0; i <= M; i++) {
        prev = arc_inverse(lambda, (double)i * ds, prev);
        th[i] = prev;
    }
    th[M] = thmax;
    /* curvature of the Archimedean spiral: (theta^2 + 2) / (lambda (1 + theta^2)^1.5) */
#define KAPPA(x) (((x) * (x) + 2) / (lambda * pow(1 + (x) * (x), 1.5)))
    for (size_t i = 0; i <= M; i++) {
        double vk = sqrt(a / KAPPA(th[i]));
        v[i] = vk < vg ? vk : vg;
    }
    /* forward pass from rest */
    double vf = 0;
    for (size_t i = 0; i < M; i++) {
        double cur = i == 0 ? 0 : fmin(v[i], vf);
        if (i == 0)
            v[0] = 0;
        else
            v[i] = cur;
        double kc = KAPPA(th[i]) * cur * cur;
        double at = a * a - kc * kc;
        at = at > 0 ? sqrt(at) : 0;
        vf = sqrt(cur * cur + 2 * ds * at);
    }
    v[M] = fmin(v[M], vf);
    /* backward pass (the path's curvature falls outwards, so this rarely binds) */
    for (size_t i = M; i-- > 0;) {
        double kc = KAPPA(th[i + 1]) * v[i + 1] * v[i + 1];
        double at = a * a - kc * kc;
        at = at > 0 ? sqrt(at) : 0;
        double vb = sqrt(v[i + 1] * v[i + 1] + 2 * ds * at);
        if (vb < v[i])
            v[i] = vb;
    }
#undef KAPPA
    t[0] = 0;
    for (size_t i = 0; i < M; i++) {
        double vs = v[i] + v[i + 1];
        if (!(vs > 0)) {
            kw_free(th), kw_free(v), kw_free(t);
            return kw_set_error(KW_EINTERNAL, "spiral: velocity profile stalled");
        }
        t[i + 1] = t[i] + 2 * ds / vs;
    }
    const double T = t[M];
    double nf = ceil(T / dt - 1e-9);
    if (nf < 1)
        nf = 1;
    if (nf > MAX_POINTS) {
        kw_free(th), kw_free(v), kw_free(t);
        return kw_set_error(KW_ERANGE, "interleaves: spiral readout over %u raster points (use more interleaves)", MAX_POINTS);
    }
    size_t n = (size_t)nf;
    double *k = kw_alloc_n((n + 1) * 2, sizeof *k);
    if (!k) {
        kw_free(th), kw_free(v), kw_free(t);
        return kw_set_error(KW_ENOMEM, "spiral: out of memory");
    }
    /* k at the raster points: the path position at time j dt (the last raster
     * point holds k-max; the time runs up to n dt >= T). */
    size_t seg = 0;
    for (size_t j = 0; j <= n; j++) {
        double tj = (double)j * dt * (T / (n * dt)); /* stretch onto the raster */
        while (seg + 1 < M && t[seg + 1] < tj)
            seg++;
        double f = (tj - t[seg]) / (t[seg + 1] - t[seg]);
        if (f < 0)
            f = 0;
        if (f > 1)
            f = 1;
        double s = ((double)seg + f) * ds;
        double thj = j == n ? thmax : arc_inverse(lambda, s, th[seg]);
        k[2 * j] = lambda * thj * cos(thj);
        k[2 * j + 1] = lambda * thj * sin(thj);
    }
    kw_free(th), kw_free(v), kw_free(t);
    *kxy = k;
    *n_out = n;
    return KW_OK;
}

/* Design, verify and fill (see kw_spiral_design). */
static kw_status spiral_run(const kw_spiral_spec *spec, const kw_gradient_limits *lim,
                            kw_spiral_info *info, double *gx, double *gy, float *traj,
                            float *times)
{
    kw_status st = check_spiral(spec);
    if (st)
        return st;
    if ((st = check_limits(lim)))
        return st;
    const double gb = KW_GAMMA_BAR_P, dt = lim->raster_s, fov = spec->fov_m;
    const double lambda = spec->interleaves / (2 * KW_PI * fov);
    const double kmax = spec->matrix / (2 * fov);
    const double thmax = kmax / lambda;
    /* amplitude: the hardware, and one dwell must not step more than 1/FOV */
    const double gcap = fmin(lim->gmax_T_per_m, 1.0 / (gb * fov * spec->dwell_s));
    const double S = lim->slew_T_per_m_per_s;
    double *k = NULL, *g = NULL;
    size_t n = 0, nd = 0;
    double margin = 0.995;
    int ok = 0;
    for (int attempt = 0; attempt < 40 && !ok; attempt++, margin *= 0.98) {
        kw_free(k);
        k = NULL;
        st = spiral_path(lambda, thmax, gb * gcap * margin, gb * S * margin, dt, &k, &n);
        if (st) {
            kw_free(g); /* of the attempt before */
            return st;
        }
        /* gradient per raster interval and the check of every step */
        kw_free(g);
        g = kw_alloc_n(2 * n, sizeof *g);
        if (!g) {
            kw_free(k);
            return kw_set_error(KW_ENOMEM, "spiral: out of memory");
        }
        ok = 1;
        double px = 0, py = 0;
        for (size_t j = 0; j < n && ok; j++) {
            double x = (k[2 * j + 2] - k[2 * j]) / (gb * dt);
            double y = (k[2 * j + 3] - k[2 * j + 1]) / (gb * dt);
            g[2 * j] = x;
            g[2 * j + 1] = y;
            if (hypot(x, y) > gcap * (1 + 1e-9) || hypot(x - px, y - py) > S * dt * (1 + 1e-9))
                ok = 0;
            px = x;
            py = y;
        }
    }
    if (!ok) {
        kw_free(k), kw_free(g);
        /* an unattainable input (a slew rate far too low for the raster),
         * not a failure of the design */
        KW_FAIL_PARAM(1, KW_EINFEASIBLE, "slew",
                      "no spiral meets %g T/m and %g T/m/s on the %g us raster (raise the "
                      "slew rate)", gcap, S, dt * 1e6);
    }
    const double gl = hypot(g[2 * n - 2], g[2 * n - 1]);
    nd = (size_t)steps_up(gl / S, dt);
    if (nd < 1)
        nd = 1;
    const double T = (double)n * dt;
    const double nsf = floor(T / spec->dwell_s + 1e-9) + 1;
    if (nsf > (double)MAX_SAMPLES || nsf * spec->interleaves > (double)MAX_SAMPLES) {
        kw_free(k), kw_free(g);
        return kw_set_error(KW_ERANGE,
                            "bandwidth: the spiral would take over %u ADC samples in all "
                            "(%.0f per interleaf)", MAX_SAMPLES, nsf);
    }
    const size_t ns = (size_t)nsf;
    kw_spiral_info inf = {.readout_points = n,
                          .rampdown_points = nd,
                          .samples = ns,
                          .readout_s = T,
                          .kmax_per_m = kmax,
                          .gmax_design_T_per_m = gcap * margin / 0.98,
                          .slew_design_T_per_m_per_s = S * margin / 0.98};
    if (info)
        *info = inf;
    if (gx || gy) {
        for (size_t j = 0; j < n; j++) {
            if (gx)
                gx[j] = g[2 * j];
            if (gy)
                gy[j] = g[2 * j + 1];
        }
        for (size_t i = 1; i <= nd; i++) {
            double f = 1.0 - (double)i / (double)nd;
            if (gx)
                gx[n - 1 + i] = g[2 * n - 2] * f;
            if (gy)
                gy[n - 1 + i] = g[2 * n - 1] * f;
        }
    }
    if (traj || times) {
        for (size_t m = 0; m < ns; m++) {
            double tm = (double)m * spec->dwell_s;
            double u = tm / dt;
            size_t j = (size_t)floor(u);
            double kx, ky;
            if (j >= n) {
                kx = k[2 * n];
                ky = k[2 * n + 1];
            } else {
                double f = u - (double)j;
                kx = k[2 * j] + f * (k[2 * j + 2] - k[2 * j]);
                ky = k[2 * j + 1] + f * (k[2 * j + 3] - k[2 * j + 1]);
            }
            if (times)
                times[m] = (float)tm;
            if (traj)
                for (int il = 0; il < spec->interleaves; il++) {
                    double phi = 2 * KW_PI * il / spec->interleaves;
                    double c = cos(phi), s = sin(phi);
                    size_t at = ((size_t)il * ns + m) * 2;
                    traj[at] = (float)((c * kx - s * ky) * fov);
                    traj[at + 1] = (float)((s * kx + c * ky) * fov);
                }
        }
    }
    kw_free(k);
    kw_free(g);
    return KW_OK;
}

kw_status kw_spiral_size(const kw_spiral_spec *spec, const kw_gradient_limits *lim,
                         kw_spiral_info *info)
{
    KW_FAIL_IF(!info, KW_EINVAL, "spiral: no info");
    return spiral_run(spec, lim, info, NULL, NULL, NULL, NULL);
}

kw_status kw_spiral_design(const kw_spiral_spec *spec, const kw_gradient_limits *lim,
                           kw_spiral_info *info, double *gx, double *gy, float *traj,
                           float *times)
{
    return spiral_run(spec, lim, info, gx, gy, traj, times);
}

kw_status kw_spiral_interleaves_for(const kw_spiral_spec *spec, const kw_gradient_limits *lim,
                                    double max_readout_s, int *interleaves,
                                    kw_spiral_info *info)
{
    KW_FAIL_IF(!spec || !interleaves, KW_EINVAL, "spiral: no spec");
    KW_FAIL_IF(!(isfinite(max_readout_s) && max_readout_s > 0), KW_EINVAL,
               "max-readout: must be positive");
    kw_spiral_spec s = *spec;
    kw_spiral_info best = {0}, cur;
    int lo = 1, hi = 4096, found = 0;
    /* the readout shortens as interleaves are added: bisect for the fewest */
    while (lo <= hi) {
        int mid = lo + (hi - lo) / 2;
        s.interleaves = mid;
        kw_status st = kw_spiral_size(&s, lim, &cur);
        if (st && st != KW_ERANGE)
            return st;
        if (!st && cur.readout_s <= max_readout_s * (1 + 1e-12)) {
            found = mid;
            best = cur;
            hi = mid - 1;
        } else {
            lo = mid + 1;
        }
    }
    kw_clear_error();
    KW_FAIL_IF(!found, KW_EINFEASIBLE,
               "interleaves: even 4096 interleaves need a readout over %g s", max_readout_s);
    *interleaves = found;
    if (info)
        *info = best;
    return KW_OK;
}

/* ---- EPI ---------------------------------------------------------------------- */

kw_status kw_epi_size(const kw_epi_spec *spec, const kw_gradient_limits *lim, kw_epi_info *info)
{
    kw_status st = check_limits(lim);
    if (st)
        return st;
    KW_FAIL_IF(!spec || !info, KW_EINVAL, "epi: no spec");
    for (int d = 0; d < 2; d++) {
        KW_FAIL_IF(!(isfinite(spec->fov_m[d]) && spec->fov_m[d] > 0), KW_EINVAL,
                   "fov: must be positive");
        KW_FAIL_IF(spec->matrix[d] < 2 || spec->matrix[d] > 8192, KW_EINVAL,
                   "matrix: 2 to 8192 per axis");
    }
    KW_FAIL_IF(!(isfinite(spec->dwell_s) && spec->dwell_s > 0), KW_EINVAL,
               "dwell: must be positive");
    const int ny = spec->matrix[1], nx = spec->matrix[0], sh = spec->shots;
    KW_FAIL_IF(sh < 1 || sh > ny, KW_EINVAL, "shots: 1 to ny = %d", ny);
    KW_FAIL_IF(ny % sh, KW_EINVAL, "shots: %d does not divide ny = %d", sh, ny);
    KW_FAIL_IF(!(spec->partial_fourier > 0.5 && spec->partial_fourier <= 1), KW_EINVAL,
               "partial-fourier: above 0.5 and at most 1");
    int nacq = (int)ceil(spec->partial_fourier * ny - 1e-9);
    nacq = ((nacq + sh - 1) / sh) * sh;
    if (nacq > ny)
        nacq = ny;
    *info = (kw_epi_info){0};
    info->lines_per_shot = (size_t)(nacq / sh);
    info->samples_per_shot = info->lines_per_shot * (size_t)nx;
    info->first_row = ny - nacq;
    const double G = 1.0 / (KW_GAMMA_BAR_P * spec->fov_m[0] * spec->dwell_s);
    if ((st = kw_trapezoid_flat(G, nx * spec->dwell_s, lim, &info->readout)))
        return st;
    if ((st = kw_trapezoid_for_area(sh / (KW_GAMMA_BAR_P * spec->fov_m[1]), lim, &info->blip)))
        return st;
    const double ramp = info->readout.ramp_s, flat = info->readout.flat_s;
    const double gap = fmax(2 * ramp, kw_trapezoid_duration(&info->blip));
    info->echo_spacing_s = flat + gap;
    info->blip_start_s =
        ramp + flat + floor((gap - kw_trapezoid_duration(&info->blip)) / 2 / lim->raster_s + 1e-9) *
                          lim->raster_s;
    info->train_s = ramp + (double)(info->lines_per_shot - 1) * info->echo_spacing_s + flat + ramp;
    const int rel = ny / 2 - info->first_row; /* rows before the centre row */
    info->center_shot = rel % sh;
    info->center_time_s = ramp + (double)(rel / sh) * info->echo_spacing_s + flat / 2;
    return KW_OK;
}

kw_status kw_epi_design(const kw_epi_spec *spec, const kw_gradient_limits *lim,
                        kw_epi_info *info, float *traj, float *times)
{
    kw_epi_info inf;
    kw_status st = kw_epi_size(spec, lim, &inf);
    if (st)
        return st;
    if (info)
        *info = inf;
    const int nx = spec->matrix[0], ny = spec->matrix[1];
    const double ramp = inf.readout.ramp_s, flat = inf.readout.flat_s;
    for (int s = 0; s < spec->shots; s++)
        for (size_t m = 0; m < inf.lines_per_shot; m++) {
            int row = inf.first_row + s + spec->shots * (int)m;
            double tc = ramp + (double)m * inf.echo_spacing_s + flat / 2; /* echo of the line */
            int forward = (m % 2) == 0;
            for (int j = 0; j < nx; j++) {
                /* forward lines run kx = -nx/2 .. nx/2-1, reversed lines back */
                int q = forward ? j - nx / 2 : (nx - nx / 2 - 1) - j;
                size_t at = ((size_t)s * inf.lines_per_shot + m) * (size_t)nx + (size_t)j;
                if (traj) {
                    traj[2 * at] = (float)q;
                    traj[2 * at + 1] = (float)(row - ny / 2);
                }
                if (times)
                    times[at] = (float)(tc + (forward ? q : -q) * spec->dwell_s);
            }
        }
    return KW_OK;
}
