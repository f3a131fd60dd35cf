/* sim_fieldmap.c: the effect of an arbitrary field map, time-segmented on an
 * oversampled grid (least-squares interpolators: B. P. Sutton, D. C. Noll,
 * J. A. Fessler, "Fast, iterative image reconstruction for MRI in the
 * presence of field inhomogeneities", IEEE TMI 22:178-188, 2003). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_fft.h"
#include "kw_linalg.h"
#include "kw_nufft.h"
#include "kw_simulate.h"

#define MAX_SEG 64
/* Subsamples per fine pixel edge. A pixel that is the mean of S x S point
 * samples has the transfer function D(k) = sin(pi k / M) / (S sin(pi k / (S M)))
 * per axis (a Dirichlet kernel); gather() divides it out. */
#define FINE_SUPER 8

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
    int ncls;               /* shape classes (kw_sim_shape_classes) */
    float *cls;             /* ncls x my x mx: each class's image (steady amplitudes) */
    float *obj;             /* my x mx: sum of |class images| (the object's support) */
    float complex *rt;      /* ncls x nsamp: each class's factor r_c(t) at each sample */
    unsigned char cls_used[KW_PHANTOM_MAX_SHAPES]; /* class image not all zero */
    float complex *sens;    /* my x mx: the current coil's sensitivity */
    float complex *sphase;  /* my x mx: sensitivity x the current segment's phase */
    float *field;           /* my x mx field map (Hz) */
    float complex *work;    /* my x mx */
    double complex *ex, *ey; /* coil series tables */
    kw_fft_plan *plan;      /* Cartesian sampling: the fine grid's FFT */
    kw_nufft_plan *nu;      /* a trajectory: the fine grid's NUFFT ... */
    float complex *kvals;   /* ... and its output at the samples */
    int per_sample;         /* weights interpolated per sample (trajectory, EPI) */
    size_t nsamp;           /* samples per coil written by the simulation */
    double err;
};

int kw_fieldmap_segments(const kw_fieldmap *fm) { return fm->nseg; }
double kw_fieldmap_interp_error(const kw_fieldmap *fm) { return fm->err; }

void kw_fieldmap_destroy(kw_fieldmap *fm)
{
    if (!fm)
        return;
    kw_free(fm->b_re);
    kw_free(fm->b_im);
    kw_free(fm->obj);
    kw_free(fm->cls);
    kw_free(fm->rt);
    kw_free(fm->sens);
    kw_free(fm->sphase);
    kw_free(fm->field);
    kw_free(fm->work);
    kw_free(fm->ex);
    kw_free(fm->ey);
    kw_fft_destroy(fm->plan);
    kw_nufft_destroy(fm->nu);
    kw_free(fm->kvals);
    kw_free(fm);
}

/* Phase time of Cartesian sample i (column ix) or trajectory sample i. */
static double sample_tau(const kw_sim_options *o, size_t i, size_t ix)
{
    return kw_signal_phase_time(&o->contrast, kw_sim_sample_time(o, i, ix));
}

/* The options against the simulation they perturb. */
static kw_status fm_check(kw_fieldmap **out, const kw_fieldmap_options *opt)
{
    KW_FAIL_IF(!out || !opt || !opt->sim || !opt->field_hz, KW_EINVAL, "field-map: NULL argument");
    *out = NULL;
    const kw_sim_options *o = kw_sim_get_options(opt->sim);
    KW_FAIL_IF(o->phantom->ndim != 2 || (o->traj && o->traj_ndim != 2), KW_ENOTSUP,
               "field-map: only for 2-D phantoms");
    KW_FAIL_IF(o->df_grad_hz[0] != 0 || o->df_grad_hz[1] != 0, KW_ENOTSUP,
               "field-map: not together with a field gradient (add the linear field to the map)");
    KW_FAIL_IF(opt->oversample < 4 || opt->oversample > 16, KW_EINVAL,
               "field-map: oversampling %d (4..16)", opt->oversample);
    KW_FAIL_IF(opt->segments < 0 || opt->segments > MAX_SEG, KW_EINVAL,
               "field-map: segments %d (0..%d)", opt->segments, MAX_SEG);
    KW_FAIL_IF(opt->nsections < 0 || (opt->nsections > 0 && (!opt->sections || !opt->section_weights)),
               KW_EINVAL, "field-map: sections without phantoms or weights");
    for (int g = 0; g < opt->nsections; g++)
        KW_FAIL_IF(opt->sections[g].nshapes != o->phantom->nshapes || opt->sections[g].ndim != 2,
                   KW_EINVAL, "field-map: section %d is not a 2-D cut of the same phantom", g);
    const size_t nx = o->n[2], ny = o->n[1];
    for (size_t i = 0; i < nx * ny; i++)
        KW_FAIL_IF(!isfinite(opt->field_hz[i]), KW_ENUMERIC,
                   "field-map: non-finite value at pixel %zu", i);
    return KW_OK;
}

/* Each class's image on the fine grid (additive weights of the shapes'
 * steady amplitudes, the other classes' shapes set to zero), the object's
 * support, and each class's factor at every sample. */
static kw_status fm_classes(kw_fieldmap *fm, const kw_fieldmap_options *opt, const int *shape_cls)
{
    const kw_sim_options *o = fm->o;
    const size_t M = fm->mx * fm->my, nx = fm->nx;
    kw_status st;
    const size_t fn[2] = {fm->my, fm->mx}; /* the fine grid, C order */
    memset(fm->obj, 0, M * sizeof *fm->obj);
    for (int q = 0; q < fm->ncls; q++) {
        double own[KW_PHANTOM_MAX_SHAPES], w[KW_PHANTOM_MAX_SHAPES];
        int rep = -1;
        for (int i = 0; i < o->phantom->nshapes; i++) {
            own[i] = shape_cls[i] == q ? kw_sim_shape_steady(opt->sim, i) : 0.0;
            if (shape_cls[i] == q && rep < 0)
                rep = i;
        }
        kw_phantom_weights(o->phantom, own, w);
        float *img = fm->cls + (size_t)q * M;
        if (opt->nsections > 0) {
            /* a slab: the profile-weighted sum of the cuts' images (work
             * holds one cut's image as floats meanwhile) */
            float *cut = (float *)fm->work;
            memset(img, 0, M * sizeof *img);
            for (int g = 0; g < opt->nsections; g++) {
                if ((st = kw_phantom_rasterize(&opt->sections[g], fn, w, FINE_SUPER, cut)))
                    return st;
                for (size_t i = 0; i < M; i++)
                    img[i] += (float)(opt->section_weights[g] * cut[i]);
            }
        } else if ((st = kw_phantom_rasterize(o->phantom, fn, w, FINE_SUPER, img))) {
            return st;
        }
        for (size_t i = 0; i < M; i++) {
            fm->obj[i] += fabsf(img[i]);
            fm->cls_used[q] |= img[i] != 0;
        }
        float complex *r = fm->rt + (size_t)q * fm->nsamp;
        for (size_t j = 0; j < fm->nsamp; j++)
            r[j] = (float complex)kw_sim_shape_factor(opt->sim, rep,
                                                      kw_sim_sample_time(o, j, o->traj ? j : j % nx));
    }
    return KW_OK;
}

/* The field map on the fine grid, bilinear between the matrix's pixel
 * centres. */
static void fm_field(kw_fieldmap *fm, const float *f)
{
    const size_t nx = fm->nx, ny = fm->ny;
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
            fm->field[r * fm->mx + c] =
                (float)((1 - ay) * ((1 - ax) * f[y0 * nx + x0] + ax * f[y0 * nx + x1]) +
                        ay * ((1 - ax) * f[y1 * nx + x0] + ax * f[y1 * nx + x1]));
        }
    }
}

/* Phase times of the readout, the time nodes, the field range over the
 * object and the segments' times. */
static void fm_segments(kw_fieldmap *fm, const kw_fieldmap_options *opt, size_t *nobj_out)
{
    const kw_sim_options *o = fm->o;
    const size_t M = fm->mx * fm->my, nx = fm->nx;
    double tmin = INFINITY, tmax = -INFINITY, fmin = INFINITY, fmax = -INFINITY;
    for (size_t i = 0; i < (fm->per_sample ? fm->nsamp : nx); i++) {
        double t = sample_tau(o, i, o->traj ? i : i % nx);
        tmin = t < tmin ? t : tmin;
        tmax = t > tmax ? t : tmax;
    }
    /* time nodes: each column (one time per readout column), or for
     * per-sample times a grid of 512 nodes over the range, the weights of a
     * sample then interpolated linearly between its two nodes */
    fm->nt = fm->per_sample ? 512 : nx;
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
    *nobj_out = nobj;
}

/* The least-squares interpolators of Sutton et al. over the object's pixels
 * (every pixel when the object is empty), subsampled to at most ~20000: with
 * e_l(x) = exp(-i 2 pi f_x tau_l) once per fit pixel,
 *   G_lm = sum_x conj(e_l) e_m,  rhs_l(tau) = sum_x conj(e_l) y(tau),
 * y(tau) = exp(-i 2 pi f_x tau), b(tau) = G^-1 rhs(tau). */
static kw_status fm_fit(kw_fieldmap *fm, size_t nobj)
{
    const kw_sim_options *o = fm->o;
    const size_t M = fm->mx * fm->my;
    const int nseg = fm->nseg;
    kw_status st = KW_OK;
    fm->b_re = kw_alloc_n((size_t)nseg * fm->nt, sizeof *fm->b_re);
    fm->b_im = kw_alloc_n((size_t)nseg * fm->nt, sizeof *fm->b_im);
    /* The least-squares interpolators of Sutton et al. over the object's
     * pixels (every pixel when the object is empty), subsampled to at most
     * ~20000: with e_l(x) = exp(-i 2 pi f_x tau_l) once per fit pixel,
     *   G_lm = sum_x conj(e_l) e_m,  rhs_l(tau) = sum_x conj(e_l) y(tau),
     * y(tau) = exp(-i 2 pi f_x tau), b(tau) = G^-1 rhs(tau). */
    size_t stride = nobj > 20000 ? nobj / 20000 : 1;
    size_t used = 0;
    double worst = 0;
    for (size_t i = 0, k = 0; i < M; i++)
        if ((!nobj || fm->obj[i] != 0) && k++ % stride == 0)
            used++;
    double complex *G = kw_alloc_n((size_t)nseg * nseg, sizeof *G);
    double complex *rhs = kw_alloc_n((size_t)nseg, sizeof *rhs);
    double complex *e = kw_alloc_n(used * (size_t)nseg, sizeof *e);
    double *fx = kw_alloc_n(used, sizeof *fx);
    double complex *y = kw_alloc_n(used, sizeof *y); /* y(tau) of the node at hand */
    if (!fm->b_re || !fm->b_im || !G || !rhs || !e || !fx || !y) {
        st = kw_set_error(KW_ENOMEM, "field-map: out of memory");
        goto fit_done;
    }
    for (size_t i = 0, k = 0, u = 0; i < M; i++)
        if ((!nobj || fm->obj[i] != 0) && k++ % stride == 0)
            fx[u++] = fm->field[i];
    for (size_t u = 0; u < used; u++)
        for (int l = 0; l < nseg; l++)
            e[u * nseg + l] = cexp(-2.0 * I * KW_PI * fx[u] * fm->tau_seg[l]);
    for (size_t u = 0; u < used; u++)
        for (int l = 0; l < nseg; l++)
            for (int m = 0; m <= l; m++)
                G[l * nseg + m] += conj(e[u * nseg + l]) * e[u * nseg + m];
    double trace = 0;
    for (int l = 0; l < nseg; l++)
        trace += creal(G[l * nseg + l]);
    for (int l = 0; l < nseg; l++)
        G[l * nseg + l] += 1e-9 * trace / nseg;
    if (kw_chol(G, (size_t)nseg) != KW_OK) {
        st = kw_set_error(KW_ENUMERIC, "field-map: segment interpolators are singular");
        goto fit_done;
    }
    for (size_t ix = 0; ix < fm->nt; ix++) {
        double tau = fm->per_sample ? fm->tau0 + fm->dtau * (double)ix : sample_tau(o, ix, ix);
        for (int l = 0; l < nseg; l++)
            rhs[l] = 0;
        for (size_t u = 0; u < used; u++) {
            y[u] = cexp(-2.0 * I * KW_PI * fx[u] * tau);
            for (int l = 0; l < nseg; l++)
                rhs[l] += conj(e[u * nseg + l]) * y[u];
        }
        kw_chol_solve(G, (size_t)nseg, rhs);
        double e2 = 0;
        for (size_t u = 0; u < used; u++) {
            double complex r = y[u];
            for (int l = 0; l < nseg; l++)
                r -= rhs[l] * e[u * nseg + l];
            e2 += creal(r * conj(r));
        }
        double err = sqrt(e2 / (double)(used ? used : 1));
        worst = err > worst ? err : worst;
        for (int l = 0; l < nseg; l++) {
            fm->b_re[(size_t)l * fm->nt + ix] = creal(rhs[l]);
            fm->b_im[(size_t)l * fm->nt + ix] = cimag(rhs[l]);
        }
    }
fit_done:
    kw_free(G);
    kw_free(rhs);
    kw_free(e);
    kw_free(fx);
    kw_free(y);
    if (!st)
        fm->err = worst;
    return st;
}

void kw_fieldmap_options_init(kw_fieldmap_options *o)
{
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->oversample = 4;
}

kw_status kw_fieldmap_create(kw_fieldmap **out, const kw_fieldmap_options *caller)
{
    kw_fieldmap_options local;
    const kw_fieldmap_options *opt = &local;
    kw_fieldmap_options_init(&local);
    kw_status st = kw_options_take(&local, sizeof local, caller, "options");
    if (st)
        return st;
    st = fm_check(out, opt);
    if (st)
        return st;
    const kw_sim_options *o = kw_sim_get_options(opt->sim);
    const size_t nx = o->n[2], ny = o->n[1];
    kw_fieldmap *fm = kw_alloc_n(1, sizeof *fm);
    KW_FAIL_IF(!fm, KW_ENOMEM, "field-map: out of memory");
    fm->sim = opt->sim;
    fm->o = o;
    fm->nx = nx;
    fm->ny = ny;
    fm->ov = opt->oversample;
    fm->mx = nx * (size_t)fm->ov;
    fm->my = ny * (size_t)fm->ov;
    size_t M = fm->mx * fm->my;
    int L = o->ncoils > 0 ? o->coil_order : 0, side = 2 * L + 1;
    int shape_cls[KW_PHANTOM_MAX_SHAPES];
    fm->ncls = kw_sim_shape_classes(opt->sim, shape_cls);
    fm->per_sample = o->traj || o->times_per_sample;
    fm->nsamp = o->traj ? o->nsamples : nx * ny;
    fm->cls = kw_alloc((size_t)fm->ncls * M * sizeof *fm->cls);
    fm->rt = kw_alloc((size_t)fm->ncls * fm->nsamp * sizeof *fm->rt);
    fm->obj = kw_alloc(M * sizeof *fm->obj);
    fm->sens = kw_alloc(M * sizeof *fm->sens);
    fm->sphase = kw_alloc(M * sizeof *fm->sphase);
    fm->field = kw_alloc(M * sizeof *fm->field);
    fm->work = kw_alloc(M * sizeof *fm->work);
    fm->ex = kw_alloc_n(fm->mx * (size_t)side, sizeof *fm->ex);
    fm->ey = kw_alloc_n(fm->my * (size_t)side, sizeof *fm->ey);
    if (!fm->obj || !fm->field || !fm->work || !fm->ex || !fm->ey || !fm->cls || !fm->rt ||
        !fm->sens || !fm->sphase) {
        st = kw_set_error(KW_ENOMEM, "field-map: out of memory for the %zux%zu grid", fm->mx, fm->my);
        goto fail;
    }
    size_t dims[2] = {fm->my, fm->mx};
    if (o->traj) {
        /* the fine grid's spectrum at the samples: its integer frequencies
         * span [-2N, 2N), the trajectory [-N/2, N/2) */
        kw_nufft_options no;
        kw_nufft_options_init(&no);
        no.tolerance = 1e-6;
        if ((st = kw_nufft_create(&fm->nu, 2, dims, o->nsamples, o->traj, &no)))
            goto fail;
        fm->kvals = kw_alloc(o->nsamples * sizeof *fm->kvals);
        if (!fm->kvals) {
            st = kw_set_error(KW_ENOMEM, "field-map: out of memory");
            goto fail;
        }
    } else if ((st = kw_fft_create(&fm->plan, 2, dims, 1, KW_FFT_ESTIMATE))) {
        goto fail;
    }
    if ((st = fm_classes(fm, opt, shape_cls)))
        goto fail;
    fm_field(fm, opt->field_hz);
    size_t nobj = 0;
    fm_segments(fm, opt, &nobj);
    if ((st = fm_fit(fm, nobj)))
        goto fail;
    *out = fm;
    return KW_OK;
fail:
    kw_fieldmap_destroy(fm);
    return st;
}

/* The interpolator weight of segment l (columns bre/bim) at sample i, column
 * ix: the column's own, or linear between the two time nodes around the
 * sample's phase time. */
static double complex seg_weight(const kw_fieldmap *fm, const double *bre, const double *bim,
                                 size_t i, size_t ix)
{
    if (!fm->per_sample)
        return bre[ix] + I * bim[ix];
    double pos = fm->dtau > 0 ? (sample_tau(fm->o, i, ix) - fm->tau0) / fm->dtau : 0.0;
    size_t j = pos <= 0 ? 0 : (size_t)pos;
    if (j > fm->nt - 2)
        j = fm->nt - 2;
    double al = pos - (double)j;
    al = al < 0 ? 0 : (al > 1 ? 1 : al);
    return (1 - al) * (bre[j] + I * bim[j]) + al * (bre[j + 1] + I * bim[j + 1]);
}

/* Trajectory: add coef x NUFFT_fine(work)(k_j) / ov to every sample of coil
 * c (bre NULL: -1, the subtracted reference). */
static void gather_traj(const kw_fieldmap *fm, int c, const float complex *rt,
                        const double *bre, const double *bim, float complex *out)
{
    const kw_sim_options *o = fm->o;
    double inv = 1.0 / fm->ov;
    for (size_t j = 0; j < o->nsamples; j++) {
        const float *k = o->traj + 2 * j;
        double d = dirichlet(k[0], fm->mx) * dirichlet(k[1], fm->my);
        double complex b = bre ? seg_weight(fm, bre, bim, j, j) : -1.0;
        out[(size_t)c * o->nsamples + j] +=
            (float complex)(b * (double complex)rt[j] * fm->kvals[j] * inv / d);
    }
}

/* Add coef x FT_fine(work) / ov at every sampled Cartesian point of coil c;
 * bl: per-column complex weights (NULL: -1, the subtracted reference). */
static void gather(const kw_fieldmap *fm, int c, const float complex *rt, const double *bre,
                   const double *bim, float complex *out)
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
            double complex b = bre ? seg_weight(fm, bre, bim, i, ix) : -1.0;
            out[(size_t)c * count + i] += (float complex)(b * (double complex)rt[i] * v);
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
        /* coil c's sensitivity on the fine grid (once per coil) */
        const double complex *cc = o->ncoils > 0 ? o->coil_coef + (size_t)c * side * side : NULL;
#pragma omp parallel for schedule(static)
        for (size_t r = 0; r < fm->my; r++)
            for (size_t x = 0; x < fm->mx; x++) {
                size_t i = r * fm->mx + x;
                double complex sv = 1.0;
                if (cc && fm->obj[i] != 0) {
                    sv = 0;
                    for (int q = 0; q < side; q++) {
                        double complex t = 0;
                        for (int p = 0; p < side; p++)
                            t += cc[q * side + p] * fm->ex[x * side + p];
                        sv += t * fm->ey[r * side + q];
                    }
                }
                fm->sens[i] = (float complex)sv;
            }
        for (int l = -1; l < fm->nseg; l++) {
            /* sensitivity x the segment's field phase (once per segment) */
            double tau = l >= 0 ? fm->tau_seg[l] : 0.0;
#pragma omp parallel for schedule(static)
            for (size_t i = 0; i < M; i++) {
                double complex v = fm->sens[i];
                if (l >= 0 && fm->obj[i] != 0)
                    v *= cexp(-2.0 * I * KW_PI * fm->field[i] * tau);
                fm->sphase[i] = (float complex)v;
            }
            const double *bre = l < 0 ? NULL : fm->b_re + (size_t)l * fm->nt;
            const double *bim = l < 0 ? NULL : fm->b_im + (size_t)l * fm->nt;
            for (int cq = 0; cq < fm->ncls; cq++) {
                if (!fm->cls_used[cq])
                    continue;
                const float *obj = fm->cls + (size_t)cq * M;
                const float complex *rt = fm->rt + (size_t)cq * fm->nsamp;
#pragma omp parallel for schedule(static)
                for (size_t i = 0; i < M; i++)
                    fm->work[i] = obj[i] * fm->sphase[i];
                kw_status st;
                if (fm->nu) {
                    if ((st = kw_nufft_forward(fm->nu, fm->work, fm->kvals, 1)))
                        return st;
                    gather_traj(fm, c, rt, bre, bim, out);
                } else {
                    if ((st = kw_fft_forward(fm->plan, fm->work)))
                        return st;
                    gather(fm, c, rt, bre, bim, out);
                }
            }
            if (progress) {
                kw_progress pr = {"field-map", ++step, nstep, NAN, NULL};
                if (progress(user, &pr))
                    return kw_set_error(KW_ECANCELLED, "field-map: cancelled");
            }
        }
    }
    return KW_OK;
}
