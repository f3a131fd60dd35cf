/* sim_fieldmap.c: the effect of an arbitrary field map, time-segmented on an
 * oversampled grid (least-squares interpolators: B. P. Sutton, D. C. Noll,
 * J. A. Fessler, "Fast, iterative image reconstruction for MRI in the
 * presence of field inhomogeneities", IEEE TMI 22:178-188, 2003). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_fft.h"
#include "kw_linalg.h"
#include "kw_simulate.h"

#define MAX_SEG 64
/* Subsamples per fine pixel edge. A pixel that is the mean of S x S point
 * samples has the transfer function D(k) = sin(pi k / M) / (S sin(pi k / (S M)))
 * per axis (a Dirichlet kernel); gather() divides it out. */
#define FINE_SUPER 4

static double dirichlet(double k, size_t m)
{
    double a = KW_PI * k / (double)m;
    if (fabs(a) < 1e-12)
        return 1.0;
    return sin(a) / (FINE_SUPER * sin(a / FINE_SUPER));
}

struct kw_fieldmap {
    const kw_sim *sim;
    const kw_sim_options *o;
    size_t nx, ny, mx, my;
    int ov, nseg;
    double tau_seg[MAX_SEG];
    size_t nt;              /* time nodes: the columns, or a grid over tau */
    double tau0, dtau;      /* grid nodes tau0 + j dtau (per-sample times) */
    double *b_re, *b_im;    /* nseg x nt interpolator weights */
    float *obj;             /* my x mx image at the echo */
    float *field;           /* my x mx field map (Hz) */
    float complex *work;    /* my x mx */
    double complex *ex, *ey; /* coil series tables */
    kw_fft_plan *plan;
    double err;
};

int kw_fieldmap_segments(const kw_fieldmap *fm) { return fm->nseg; }
double kw_fieldmap_interp_error(const kw_fieldmap *fm) { return fm->err; }

void kw_fieldmap_destroy(kw_fieldmap *fm)
{
    if (!fm)
        return;
    free(fm->b_re);
    free(fm->b_im);
    kw_free(fm->obj);
    kw_free(fm->field);
    kw_free(fm->work);
    free(fm->ex);
    free(fm->ey);
    kw_fft_destroy(fm->plan);
    free(fm);
}

static double sample_tau(const kw_sim_options *o, size_t i, size_t ix)
{
    double t;
    if (o->times)
        t = o->times[o->times_per_sample ? i : ix];
    else if (o->bandwidth_hz > 0)
        t = o->contrast.te_s + ((double)ix - (double)(o->n[0] / 2)) / o->bandwidth_hz;
    else
        t = o->contrast.te_s;
    return kw_signal_phase_time(&o->contrast, t);
}

kw_status kw_fieldmap_create(kw_fieldmap **out, const kw_fieldmap_options *opt)
{
    KW_FAIL_IF(!out || !opt || !opt->sim || !opt->field_hz, KW_EINVAL, "field-map: NULL argument");
    *out = NULL;
    const kw_sim_options *o = kw_sim_get_options(opt->sim);
    KW_FAIL_IF(o->traj, KW_ENOTSUP, "field-map: only for Cartesian sampling (not with a trajectory)");
    KW_FAIL_IF(o->phantom->ndim != 2, KW_ENOTSUP, "field-map: only for 2-D phantoms");
    KW_FAIL_IF(opt->oversample < 4 || opt->oversample > 16, KW_EINVAL,
               "field-map: oversampling %d (4..16)", opt->oversample);
    KW_FAIL_IF(opt->segments < 0 || opt->segments > MAX_SEG, KW_EINVAL,
               "field-map: segments %d (0..%d)", opt->segments, MAX_SEG);
    size_t nx = o->n[0], ny = o->n[1];
    for (size_t i = 0; i < nx * ny; i++)
        KW_FAIL_IF(!isfinite(opt->field_hz[i]), KW_ENUMERIC,
                   "field-map: non-finite value at pixel %zu", i);
    kw_fieldmap *fm = calloc(1, sizeof *fm);
    KW_FAIL_IF(!fm, KW_ENOMEM, "field-map: out of memory");
    kw_status st = KW_OK;
    fm->sim = opt->sim;
    fm->o = o;
    fm->nx = nx;
    fm->ny = ny;
    fm->ov = opt->oversample;
    fm->mx = nx * (size_t)fm->ov;
    fm->my = ny * (size_t)fm->ov;
    size_t M = fm->mx * fm->my;
    int L = o->ncoils > 0 ? o->coil_order : 0, side = 2 * L + 1;
    fm->obj = kw_alloc(M * sizeof *fm->obj);
    fm->field = kw_alloc(M * sizeof *fm->field);
    fm->work = kw_alloc(M * sizeof *fm->work);
    fm->ex = malloc(fm->mx * (size_t)side * sizeof *fm->ex);
    fm->ey = malloc(fm->my * (size_t)side * sizeof *fm->ey);
    if (!fm->obj || !fm->field || !fm->work || !fm->ex || !fm->ey) {
        st = kw_set_error(KW_ENOMEM, "field-map: out of memory for the %zux%zu grid", fm->mx, fm->my);
        goto fail;
    }
    size_t dims[2] = {fm->my, fm->mx};
    if ((st = kw_fft_create(&fm->plan, 2, dims, 1, KW_FFT_ESTIMATE)))
        goto fail;
    /* the object at the echo on the fine grid */
    double w[KW_PHANTOM_MAX_SHAPES];
    kw_sim_image_weights(opt->sim, w);
    size_t fn[3] = {fm->mx, fm->my, 1};
    if ((st = kw_phantom_rasterize(o->phantom, fn, w, FINE_SUPER, fm->obj)))
        goto fail;
    /* the field map, bilinear between the matrix's pixel centres */
    for (size_t r = 0; r < fm->my; r++) {
        double yr = ((double)r - (double)(fm->my / 2)) / (double)fm->ov + (double)(ny / 2);
        for (size_t c = 0; c < fm->mx; c++) {
            double xc = ((double)c - (double)(fm->mx / 2)) / (double)fm->ov + (double)(nx / 2);
            double fx = floor(xc), fy = floor(yr);
            double ax = xc - fx, ay = yr - fy;
            long x0 = (long)fx, y0 = (long)fy;
            long x1 = x0 + 1, y1 = y0 + 1;
#define CL(v, n) ((v) < 0 ? 0 : ((v) >= (long)(n) ? (long)(n)-1 : (v)))
            x0 = CL(x0, nx);
            x1 = CL(x1, nx);
            y0 = CL(y0, ny);
            y1 = CL(y1, ny);
#undef CL
            const float *f = opt->field_hz;
            fm->field[r * fm->mx + c] =
                (float)((1 - ay) * ((1 - ax) * f[y0 * nx + x0] + ax * f[y0 * nx + x1]) +
                        ay * ((1 - ax) * f[y1 * nx + x0] + ax * f[y1 * nx + x1]));
        }
    }
    /* phase times of the readout and the field range over the object */
    double tmin = INFINITY, tmax = -INFINITY, fmin = INFINITY, fmax = -INFINITY;
    for (size_t i = 0; i < (o->times_per_sample ? nx * ny : nx); i++) {
        double t = sample_tau(o, i, i % nx);
        tmin = t < tmin ? t : tmin;
        tmax = t > tmax ? t : tmax;
    }
    /* time nodes: each column (one time per readout column), or for
     * per-sample times a grid of 512 nodes over the range, the weights of a
     * sample then interpolated linearly between its two nodes */
    fm->nt = o->times_per_sample ? 512 : nx;
    fm->tau0 = tmin;
    fm->dtau = (tmax - tmin) / 511.0;
    size_t nobj = 0;
    for (size_t i = 0; i < M; i++)
        if (fm->obj[i] != 0) {
            nobj++;
            fmin = fm->field[i] < fmin ? fm->field[i] : fmin;
            fmax = fm->field[i] > fmax ? fm->field[i] : fmax;
        }
    if (!nobj) {
        fmin = fmax = 0;
    }
    int nseg = opt->segments;
    if (!nseg) {
        /* about one segment per cycle of phase spread, plus margin (common
         * practice for least-squares interpolators; the error is reported) */
        double cyc = (fmax - fmin) * (tmax - tmin);
        nseg = (int)ceil(cyc) + 3;
        if (nseg > MAX_SEG)
            nseg = MAX_SEG;
    }
    if (tmax - tmin < 1e-15)
        nseg = 1;
    fm->nseg = nseg;
    for (int l = 0; l < nseg; l++)
        fm->tau_seg[l] = nseg == 1 ? tmin : tmin + (tmax - tmin) * l / (nseg - 1);
    fm->b_re = malloc((size_t)nseg * fm->nt * sizeof *fm->b_re);
    fm->b_im = malloc((size_t)nseg * fm->nt * sizeof *fm->b_im);
    double complex *G = calloc((size_t)nseg * nseg, sizeof *G);
    double complex *rhs = malloc((size_t)nseg * sizeof *rhs);
    size_t stride = nobj > 20000 ? nobj / 20000 : 1;
    if (!fm->b_re || !fm->b_im || !G || !rhs) {
        free(G);
        free(rhs);
        st = kw_set_error(KW_ENOMEM, "field-map: out of memory");
        goto fail;
    }
    /* G_lm = sum_x exp(i 2 pi f_x (tau_l - tau_m)) over sampled object pixels */
    size_t used = 0;
    for (size_t i = 0, k = 0; i < M; i++) {
        if (nobj && fm->obj[i] == 0)
            continue;
        if (k++ % stride)
            continue;
        used++;
        double f = fm->field[i];
        for (int l = 0; l < nseg; l++)
            for (int m = 0; m <= l; m++)
                G[l * nseg + m] += cexp(2.0 * I * KW_PI * f * (fm->tau_seg[l] - fm->tau_seg[m]));
    }
    double trace = 0;
    for (int l = 0; l < nseg; l++)
        trace += creal(G[l * nseg + l]);
    for (int l = 0; l < nseg; l++)
        G[l * nseg + l] += 1e-9 * trace / nseg;
    if (kw_chol(G, (size_t)nseg) != KW_OK) {
        free(G);
        free(rhs);
        st = kw_set_error(KW_ENUMERIC, "field-map: segment interpolators are singular");
        goto fail;
    }
    double worst = 0;
    for (size_t ix = 0; ix < fm->nt; ix++) {
        double tau = o->times_per_sample ? fm->tau0 + fm->dtau * (double)ix : sample_tau(o, ix, ix);
        for (int l = 0; l < nseg; l++)
            rhs[l] = 0;
        for (size_t i = 0, k = 0; i < M; i++) {
            if (nobj && fm->obj[i] == 0)
                continue;
            if (k++ % stride)
                continue;
            double f = fm->field[i];
            for (int l = 0; l < nseg; l++)
                rhs[l] += cexp(2.0 * I * KW_PI * f * (fm->tau_seg[l] - tau));
        }
        kw_chol_solve(G, (size_t)nseg, rhs);
        double e2 = 0;
        for (size_t i = 0, k = 0; i < M; i++) {
            if (nobj && fm->obj[i] == 0)
                continue;
            if (k++ % stride)
                continue;
            double f = fm->field[i];
            double complex y = cexp(-2.0 * I * KW_PI * f * tau);
            for (int l = 0; l < nseg; l++)
                y -= rhs[l] * cexp(-2.0 * I * KW_PI * f * fm->tau_seg[l]);
            e2 += creal(y * conj(y));
        }
        double e = sqrt(e2 / (double)(used ? used : 1));
        worst = e > worst ? e : worst;
        for (int l = 0; l < nseg; l++) {
            fm->b_re[(size_t)l * fm->nt + ix] = creal(rhs[l]);
            fm->b_im[(size_t)l * fm->nt + ix] = cimag(rhs[l]);
        }
    }
    free(G);
    free(rhs);
    fm->err = worst;
    *out = fm;
    return KW_OK;
fail:
    kw_fieldmap_destroy(fm);
    return st;
}

/* Add coef x FT_fine(work) / ov at every sampled Cartesian point of coil c;
 * bl: per-column complex weights (NULL: -1, the subtracted reference). */
static void gather(const kw_fieldmap *fm, int c, const double *bre, const double *bim,
                   float complex *out)
{
    const kw_sim_options *o = fm->o;
    size_t nx = fm->nx, ny = fm->ny, count = nx * ny;
    double inv = 1.0 / fm->ov;
    for (size_t iy = 0; iy < ny; iy++) {
        size_t R = iy - ny / 2 + fm->my / 2;
        double dy = dirichlet((double)iy - (double)(ny / 2), fm->my);
        for (size_t ix = 0; ix < nx; ix++) {
            size_t i = iy * nx + ix;
            if (o->mask && !o->mask[i])
                continue;
            size_t C = ix - nx / 2 + fm->mx / 2;
            double dx = dirichlet((double)ix - (double)(nx / 2), fm->mx);
            double complex v = fm->work[R * fm->mx + C] * inv / (dx * dy);
            double complex b = -1.0;
            if (bre && !o->times_per_sample) {
                b = bre[ix] + I * bim[ix];
            } else if (bre) {
                double pos = fm->dtau > 0 ? (sample_tau(o, i, ix) - fm->tau0) / fm->dtau : 0.0;
                size_t j = pos <= 0 ? 0 : (size_t)pos;
                if (j > fm->nt - 2)
                    j = fm->nt - 2;
                double al = pos - (double)j;
                al = al < 0 ? 0 : (al > 1 ? 1 : al);
                b = (1 - al) * (bre[j] + I * bim[j]) + al * (bre[j + 1] + I * bim[j + 1]);
            }
            out[(size_t)c * count + i] += (float complex)(b * v);
        }
    }
}

kw_status kw_fieldmap_execute(kw_fieldmap *fm, float complex *out, kw_progress_fn progress,
                              void *user)
{
    KW_FAIL_IF(!fm || !out, KW_EINVAL, "field-map: NULL argument");
    const kw_sim_options *o = fm->o;
    int nc = o->ncoils > 0 ? o->ncoils : 1;
    int L = o->ncoils > 0 ? o->coil_order : 0, side = 2 * L + 1;
    size_t M = fm->mx * fm->my;
    if (o->ncoils > 0) {
        for (size_t c = 0; c < fm->mx; c++) {
            double u = ((double)c - (double)(fm->mx / 2)) / (double)fm->mx;
            for (int p = -L; p <= L; p++)
                fm->ex[c * side + (p + L)] = cexp(2.0 * I * KW_PI * p * u / o->coil_period);
        }
        for (size_t r = 0; r < fm->my; r++) {
            double v = ((double)r - (double)(fm->my / 2)) / (double)fm->my;
            for (int q = -L; q <= L; q++)
                fm->ey[r * side + (q + L)] = cexp(2.0 * I * KW_PI * q * v / o->coil_period);
        }
    }
    int step = 0, nstep = nc * (fm->nseg + 1);
    for (int c = 0; c < nc; c++) {
        const double complex *cc = o->ncoils > 0 ? o->coil_coef + (size_t)c * side * side : NULL;
        for (int l = -1; l < fm->nseg; l++) {
            double tau = l >= 0 ? fm->tau_seg[l] : 0.0;
#pragma omp parallel for schedule(static)
            for (size_t r = 0; r < fm->my; r++)
                for (size_t x = 0; x < fm->mx; x++) {
                    size_t i = r * fm->mx + x;
                    double complex v = fm->obj[i];
                    if (v == 0) {
                        fm->work[i] = 0;
                        continue;
                    }
                    if (cc) {
                        double complex s = 0;
                        for (int q = 0; q < side; q++) {
                            double complex t = 0;
                            for (int p = 0; p < side; p++)
                                t += cc[q * side + p] * fm->ex[x * side + p];
                            s += t * fm->ey[r * side + q];
                        }
                        v *= s;
                    }
                    if (l >= 0)
                        v *= cexp(-2.0 * I * KW_PI * fm->field[i] * tau);
                    fm->work[i] = (float complex)v;
                }
            kw_status st = kw_fft_forward(fm->plan, fm->work);
            if (st)
                return st;
            if (l < 0)
                gather(fm, c, NULL, NULL, out);
            else
                gather(fm, c, fm->b_re + (size_t)l * fm->nt, fm->b_im + (size_t)l * fm->nt, out);
            if (progress) {
                kw_progress pr = {"field-map", ++step, nstep, NAN};
                if (progress(user, &pr))
                    return kw_set_error(KW_ECANCELLED, "field-map: cancelled");
            }
        }
    }
    (void)M;
    return KW_OK;
}
