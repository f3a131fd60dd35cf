/* simulate.c: exact k-space of analytic phantoms at every sample, with coils
 * (trigonometric-series sensitivities: M. Guerquin-Kern, L. Lejeune,
 * K. P. Pruessmann, M. Unser, "Realistic analytical phantoms for parallel
 * magnetic resonance imaging", IEEE Trans Med Imaging 31:626-636, 2012),
 * tissue contrast, relaxation and off-resonance per sample, and noise. */
#include "kw_simulate.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_rng.h"
#include "sim_int.h"

#define MAX_ORDER KW_SIM_MAX_ORDER
#define MAX_TERMS KW_SIM_MAX_TERMS

void kw_sim_options_init(kw_sim_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
}

kw_status kw_sim_create(kw_sim **out, const kw_sim_options *caller)
{
    KW_FAIL_IF(!out, KW_EINVAL, "simulate: NULL argument");
    kw_sim_options taken;
    kw_sim_options_init(&taken);
    kw_status tst = kw_options_take(&taken, sizeof taken, caller, "sim_options");
    if (tst)
        return tst;
    const kw_sim_options *opt = &taken;
    KW_FAIL_IF(!opt->phantom, KW_EINVAL, "simulate: NULL argument");
    *out = NULL;
    const kw_phantom *p = opt->phantom;
    KW_FAIL_IF(p->nshapes < 1 || p->nshapes > KW_PHANTOM_MAX_SHAPES, KW_EINVAL,
               "phantom: %d shapes", p->nshapes);
    /* n in C order (nz, ny, nx) */
    size_t nz = opt->n[0] ? opt->n[0] : 1;
    KW_FAIL_PARAM(opt->n[2] < 1 || opt->n[1] < 1, KW_EINVAL, "n", "must be positive");
    KW_FAIL_PARAM(p->ndim == 2 && nz > 1, KW_ENOTSUP, "n",
               "a 2-D phantom gives one slice (nz must be 1)");
    KW_FAIL_PARAM(p->ndim == 3 && !opt->traj && nz < 2, KW_EINVAL, "n",
               "a 3-D phantom needs nz >= 2");
    if (opt->traj) {
        KW_FAIL_PARAM(opt->nsamples < 1, KW_EINVAL, "traj", "no samples");
        KW_FAIL_PARAM(opt->traj_ndim < 2 || opt->traj_ndim > 3, KW_EINVAL, "traj",
                   "%d columns (2 or 3)", opt->traj_ndim);
        KW_FAIL_PARAM(opt->traj_ndim != p->ndim, KW_EINVAL, "traj",
                   "%d-D trajectory for a %d-D phantom", opt->traj_ndim,
                   p->ndim);
        for (size_t i = 0; i < opt->nsamples * (size_t)opt->traj_ndim; i++)
            KW_FAIL_PARAM(!isfinite(opt->traj[i]), KW_ENUMERIC, "traj",
                       "non-finite value at index %zu", i);
    }
    KW_FAIL_IF(opt->ncoils < 0 || opt->ncoils > 256, KW_EINVAL, "coils: %d", opt->ncoils);
    if (opt->ncoils > 0) {
        KW_FAIL_IF(!opt->coil_coef, KW_EINVAL, "coils: no coefficients");
        KW_FAIL_IF(opt->coil_order < 0 || opt->coil_order > MAX_ORDER, KW_ERANGE,
                   "coils: series order %d (0..%d)", opt->coil_order, MAX_ORDER);
        if (p->ndim == 3) {
            int sd = 2 * opt->coil_order + 1;
            KW_FAIL_IF(opt->coil_order_z < 0 || opt->coil_order_z > MAX_ORDER ||
                           (2 * opt->coil_order_z + 1) * sd * sd > MAX_TERMS,
                       KW_ERANGE, "coils: 3-D series orders %d, %d (at most %d terms)",
                       opt->coil_order, opt->coil_order_z, MAX_TERMS);
        }
        KW_FAIL_IF(!(opt->coil_period > 0) || !isfinite(opt->coil_period), KW_EINVAL,
                   "coils: period must be positive");
    }
    for (int d = 0; d < 3; d++)
        KW_FAIL_PARAM(!isfinite(opt->df_grad_hz[d]) || fabs(opt->df_grad_hz[d]) > 1e7, KW_ERANGE, "df_grad_hz",
                   "%g Hz per FOV is not a finite, physical value",
                   opt->df_grad_hz[d]);
    KW_FAIL_PARAM(p->ndim == 2 && opt->df_grad_hz[2] != 0, KW_EINVAL, "df_grad_hz",
               "a z component for a 2-D phantom");
    KW_FAIL_PARAM(!isfinite(opt->bandwidth_hz) || opt->bandwidth_hz < 0, KW_EINVAL, "bandwidth_hz",
               "must be positive");
    const kw_contrast *c = &opt->contrast;
    KW_FAIL_PARAM(!isfinite(c->te_s) || c->te_s < 0, KW_EINVAL, "contrast", "must be >= 0");

    kw_sim *s = kw_alloc_n(1, sizeof *s);
    KW_FAIL_IF(!s, KW_ENOMEM, "simulate: out of memory");
    s->o = *opt;
    s->o.n[0] = nz;
    s->cdims[0] = nz;
    s->cdims[1] = opt->n[1];
    s->cdims[2] = opt->n[2];
    s->nshapes = p->nshapes;
    s->channels = opt->ncoils > 0 ? opt->ncoils : 1;
    s->lz = opt->ncoils > 0 && p->ndim == 3 ? opt->coil_order_z : 0;
    s->terms = opt->ncoils > 0
                   ? (2 * s->lz + 1) * (2 * opt->coil_order + 1) * (2 * opt->coil_order + 1)
                   : 1;
    s->count = opt->traj ? opt->nsamples : opt->n[2] * opt->n[1] * nz;
    double fat_hz = KW_FAT_SHIFT_PPM * 1e-6 * KW_GAMMA_BAR_P * c->b0_t;
    for (int i = 0; i < p->nshapes; i++) {
        const kw_shape *sh = &p->shapes[i];
        s->df[i] = opt->df_hz + sh->df_hz;
        s->t2[i] = s->t2s[i] = INFINITY;
        if (p->tissue && sh->tissue >= 0) {
            kw_tissue_values tv;
            kw_status st = kw_tissue_lookup(sh->tissue, c->b0_t, opt->tissue_values, &tv);
            if (st) {
                kw_free(s);
                return st;
            }
            const kw_tissue *tt = kw_tissue_get(sh->tissue);
            s->steady[i] = kw_signal_steady(c, tv.pd, tv.t1_s);
            s->t2[i] = tv.t2_s;
            s->t2s[i] = tv.t2s_s;
            if (tt->species == KW_SPECIES_FAT)
                s->df[i] += fat_hz;
        } else {
            s->steady[i] = sh->value;
        }
    }
    double scale = sqrt((double)opt->n[2] * (double)opt->n[1]) * 0.25;
    if (p->ndim == 3)
        scale *= sqrt((double)nz) * 0.5;
    for (int i = 0; i < p->nshapes; i++) {
        const kw_shape *sh = &p->shapes[i];
        struct kw_sim_shape *f = &s->fs[i];
        f->kind = sh->kind;
        f->ca = cos(sh->angle);
        f->sa = sin(sh->angle);
        f->a = sh->axes[0];
        f->b = sh->axes[1];
        f->c = sh->axes[2];
        f->cx = sh->center[0];
        f->cy = sh->center[1];
        f->cz = p->ndim == 3 ? sh->center[2] : 0.0;
        f->scale = scale;
        if (p->ndim == 3 && (sh->kind == KW_SHAPE_ELLIPSE || sh->kind == KW_SHAPE_RECT))
            f->scale = 0; /* see kw_phantom_kspace_shape */
    }
    if (opt->ncoils > 0) {
        s->shift_phase = kw_alloc_n((size_t)p->nshapes * s->terms, sizeof *s->shift_phase);
        if (!s->shift_phase) {
            kw_free(s);
            return kw_set_error(KW_ENOMEM, "simulate: out of memory");
        }
        int L = opt->coil_order, side = 2 * L + 1, Lz = s->lz;
        for (int i = 0; i < p->nshapes; i++)
            for (int r = -Lz; r <= Lz; r++)
                for (int q = -L; q <= L; q++)
                    for (int pp = -L; pp <= L; pp++) {
                        /* k shifted by (p, q, r)/period cycles/FOV along
                         * (kx, kv, kz) is the phantom frequency shifted by
                         * (p/2, -q/2, r/2)/period */
                        double dfx = 0.5 * pp / opt->coil_period, dfy = -0.5 * q / opt->coil_period;
                        double dfz = 0.5 * r / opt->coil_period;
                        double ph = 2.0 * KW_PI *
                                    (dfx * s->fs[i].cx + dfy * s->fs[i].cy + dfz * s->fs[i].cz);
                        s->shift_phase[(size_t)i * s->terms + ((r + Lz) * side + (q + L)) * side +
                                       (pp + L)] = cos(ph) + I * sin(ph);
                    }
    }
    kw_status gst = kw_sim_grid_create(s);
    if (gst) {
        kw_sim_destroy(s);
        return gst;
    }
    *out = s;
    return KW_OK;
}

size_t kw_sim_output_count(const kw_sim *sim) { return sim->count; }
int kw_sim_channels(const kw_sim *sim) { return sim->channels; }
int kw_sim_uses_grid(const kw_sim *sim) { return sim && sim->grid; }

void kw_sim_destroy(kw_sim *sim)
{
    if (!sim)
        return;
    kw_sim_grid_destroy(sim->grid);
    kw_free(sim->shift_phase);
    kw_free(sim);
}

void kw_sim_image_weights(const kw_sim *sim, double *w)
{
    double complex own[KW_PHANTOM_MAX_SHAPES];
    double re[KW_PHANTOM_MAX_SHAPES];
    /* at the echo: no off-resonance phase (tau = 0 for echoes at TE; for GRE
     * the phase at TE is a constant that magnitude images do not show) */
    const kw_contrast *c = &sim->o.contrast;
    for (int i = 0; i < sim->nshapes; i++) {
        double a = sim->steady[i];
        if (sim->o.phantom->tissue && sim->o.phantom->shapes[i].tissue >= 0)
            a *= kw_signal_decay(c, sim->t2[i], sim->t2s[i], c->te_s);
        own[i] = a;
        re[i] = a;
    }
    (void)own;
    kw_phantom_weights(sim->o.phantom, re, w);
}

static double sample_time(const kw_sim *s, size_t i, size_t ix)
{
    return kw_sim_sample_time(&s->o, i, ix);
}

/* All channels of one sample at (kx, kv, kz), time t. */
static void one_sample(const kw_sim *s, double kx, double kv, double kz, double t,
                       float complex *out, size_t stride)
{
    const kw_phantom *p = s->o.phantom;
    double complex own[KW_PHANTOM_MAX_SHAPES];
    double complex w[KW_PHANTOM_MAX_SHAPES];
    kw_sim_shape_signal(s, t, own);
    for (int i = 0; i < s->nshapes; i++) {
        int par = p->shapes[i].parent;
        w[i] = own[i];
        if (p->tissue && par >= 0)
            w[i] -= own[par];
    }
    if (s->o.ncoils == 0) {
        double complex acc = 0;
        for (int i = 0; i < s->nshapes; i++)
            acc += w[i] * kw_phantom_kspace_shape(&p->shapes[i], p->ndim,
                                                  s->cdims + (p->ndim == 3 ? 0 : 1), kx, kv, kz);
        out[0] = (float complex)acc;
        return;
    }
    /* k-space of (sensitivity x object) = sum_pq c_pq F(k - (p, q)/period):
     * the object spectra at the shifted frequencies are shared by all coils.
     * F(f - d) = A(f - d) exp(-i 2 pi f.c) exp(+i 2 pi d.c): the centre's
     * phase at f is computed once per shape, the shift's from a table. */
    int L = s->o.coil_order, side = 2 * L + 1, Lz = s->lz;
    double inv = 1.0 / s->o.coil_period;
    double complex g[MAX_TERMS];
    double complex wph[KW_PHANTOM_MAX_SHAPES];
    double fx = 0.5 * kx, fy = -0.5 * kv, fz = 0.5 * kz;
    for (int i = 0; i < s->nshapes; i++) {
        const struct kw_sim_shape *f = &s->fs[i];
        double ph = -2.0 * KW_PI * (fx * f->cx + fy * f->cy + fz * f->cz);
        wph[i] = w[i] * f->scale * (cos(ph) + I * sin(ph));
    }
    for (int j = 0; j < s->terms; j++)
        g[j] = 0;
    for (int i = 0; i < s->nshapes; i++) {
        if (wph[i] == 0)
            continue;
        const struct kw_sim_shape *f = &s->fs[i];
        const double complex *sp = s->shift_phase + (size_t)i * s->terms;
        if ((f->kind == KW_SHAPE_BOX || f->kind == KW_SHAPE_RECT) && f->sa == 0) {
            /* an axis-aligned box or rectangle: its spectrum is a product of
             * sincs, one table per axis (19 sincs instead of 3 x 245) */
            double tx[2 * MAX_ORDER + 1], ty[2 * MAX_ORDER + 1], tz[2 * MAX_ORDER + 1];
            for (int pp = -L; pp <= L; pp++)
                tx[pp + L] = kw_ft_sinc(2.0 * f->a * (fx - 0.5 * pp * inv) * f->ca);
            for (int q = -L; q <= L; q++)
                ty[q + L] = kw_ft_sinc(2.0 * f->b * (fy + 0.5 * q * inv) * f->ca);
            double amp = f->kind == KW_SHAPE_BOX ? 8.0 * f->a * f->b * f->c : 4.0 * f->a * f->b;
            for (int r = -Lz; r <= Lz; r++)
                tz[r + Lz] = f->kind == KW_SHAPE_BOX ? amp * kw_ft_sinc(2.0 * f->c * (fz - 0.5 * r * inv))
                                                     : amp;
            for (int r = 0; r < 2 * Lz + 1; r++)
                for (int q = 0; q < side; q++) {
                    double zy = tz[r] * ty[q];
                    int j0 = (r * side + q) * side;
                    for (int pp = 0; pp < side; pp++)
                        g[j0 + pp] += wph[i] * sp[j0 + pp] * (zy * tx[pp]);
                }
            continue;
        }
        for (int r = -Lz; r <= Lz; r++) {
            double fzr = fz - 0.5 * r * inv;
            for (int q = -L; q <= L; q++) {
                double fyq = fy + 0.5 * q * inv;
                for (int pp = -L; pp <= L; pp++) {
                    int j = ((r + Lz) * side + (q + L)) * side + (pp + L);
                    g[j] += wph[i] * sp[j] * kw_sim_shape_mag(f, fx - 0.5 * pp * inv, fyq, fzr);
                }
            }
        }
    }
    for (int c = 0; c < s->o.ncoils; c++) {
        const double complex *cc = s->o.coil_coef + (size_t)c * s->terms;
        double complex acc = 0;
        for (int j = 0; j < s->terms; j++)
            acc += cc[j] * g[j];
        out[(size_t)c * stride] = (float complex)acc;
    }
}

kw_status kw_sim_execute(kw_sim *s, float complex *out, kw_progress_fn progress,
                         void *user)
{
    KW_FAIL_IF(!s || !out, KW_EINVAL, "simulate: NULL argument");
    const size_t nx = s->o.n[2], ny = s->o.n[1], nz = s->o.n[0];
    const size_t count = s->count;
    const double *g = s->o.df_grad_hz;
    const int grad = g[0] != 0 || g[1] != 0 || (nz > 1 || s->o.traj_ndim == 3 ? g[2] != 0 : 0);
    memset(out, 0, count * (size_t)s->channels * sizeof *out);
    if (s->grid) {
        kw_status gst = kw_sim_grid_execute(s, out, progress, user);
        if (gst)
            return gst;
        if (s->o.noise_chol)
            return kw_sim_add_noise(s, s->o.noise_chol, s->o.seed, out);
        return KW_OK;
    }
    const size_t nchunk = 64;
    const size_t chunk = (count + nchunk - 1) / nchunk;
    for (size_t c0 = 0, it = 0; c0 < count; c0 += chunk, it++) {
        size_t c1 = c0 + chunk < count ? c0 + chunk : count;
#pragma omp parallel for schedule(dynamic, 64)
        for (size_t i = c0; i < c1; i++) {
            double kx, kv, kz, t;
            if (s->o.traj) {
                const float *k = s->o.traj + i * (size_t)s->o.traj_ndim;
                kx = k[0];
                kv = k[1];
                kz = s->o.traj_ndim == 3 ? k[2] : 0.0;
                t = sample_time(s, i, i);
            } else {
                if (s->o.mask && !s->o.mask[i])
                    continue;
                size_t ix = i % nx, iy = (i / nx) % ny, iz = i / (nx * ny);
                kx = (double)ix - (double)(nx / 2);
                kv = (double)iy - (double)(ny / 2);
                kz = nz > 1 ? (double)iz - (double)(nz / 2) : 0.0;
                t = sample_time(s, i, ix);
            }
            if (grad) {
                /* linear off-resonance: k -> k + g tau (kw_simulate.h) */
                double tau = kw_signal_phase_time(&s->o.contrast, t);
                kx += g[0] * tau;
                kv += g[1] * tau;
                kz += g[2] * tau;
            }
            one_sample(s, kx, kv, kz, t, out + i, count);
        }
        if (progress) {
            kw_progress pr = {"encode", (int)it + 1, (int)((count + chunk - 1) / chunk), NAN, NULL};
            if (progress(user, &pr))
                return kw_set_error(KW_ECANCELLED, "encode: cancelled");
        }
    }
    if (s->o.noise_chol)
        return kw_sim_add_noise(s, s->o.noise_chol, s->o.seed, out);
    return KW_OK;
}

const kw_sim_options *kw_sim_get_options(const kw_sim *sim)
{
    return &sim->o;
}

kw_status kw_sim_add_noise(const kw_sim *s, const double complex *chol,
                           uint64_t seed, float complex *out)
{
    KW_FAIL_IF(!s || !chol || !out, KW_EINVAL, "noise: NULL argument");
    /* Serial, in sample-major order, so a seed gives the same noise on every
     * machine and thread count. */
    const size_t count = s->count;
    kw_rng r;
    kw_rng_seed(&r, seed);
    int nc = s->channels;
    double complex z[256];
    const double h = sqrt(0.5);
    for (size_t i = 0; i < count; i++) {
        if (!s->o.traj && s->o.mask && !s->o.mask[i])
            continue;
        for (int c = 0; c < nc; c++) {
            double re = kw_rng_normal(&r), im = kw_rng_normal(&r);
            z[c] = h * (re + I * im);
        }
        for (int c = 0; c < nc; c++) {
            double complex acc = 0;
            for (int d = 0; d <= c; d++)
                acc += chol[(size_t)c * nc + d] * z[d];
            out[(size_t)c * count + i] += (float complex)acc;
        }
    }
    return KW_OK;
}
