/* sim_shapes.c: the per-shape terms of the simulation (kw_simulate.h) that
 * both of its paths use: each shape's spectrum amplitude, its signal at a
 * sample's time (contrast, relaxation during the readout, off-resonance
 * phase), the classes of shapes with the same time course, and the sample
 * times of the options. */
#include <math.h>

#include "sim_int.h"

/* Real amplitude of shape i's spectrum at phantom frequency (fx, fy, fz)
 * (the same formulas as kw_shape_ft(), without the centre's phase). */
double kw_sim_shape_mag(const struct kw_sim_shape *f, double fx, double fy, double fz)
{
    double fu = fx * f->ca + fy * f->sa;
    double fv = -fx * f->sa + fy * f->ca;
    switch (f->kind) {
    case KW_SHAPE_ELLIPSE:
        return 2.0 * KW_PI * f->a * f->b * kw_ft_jinc(2.0 * KW_PI * hypot(f->a * fu, f->b * fv));
    case KW_SHAPE_RECT:
        return 4.0 * f->a * f->b * kw_ft_sinc(2.0 * f->a * fu) * kw_ft_sinc(2.0 * f->b * fv);
    case KW_SHAPE_ELLIPSOID: {
        double q = sqrt(f->a * fu * f->a * fu + f->b * fv * f->b * fv + f->c * fz * f->c * fz);
        return 4.0 * KW_PI * f->a * f->b * f->c * kw_ft_sjinc(2.0 * KW_PI * q);
    }
    case KW_SHAPE_BOX:
        return 8.0 * f->a * f->b * f->c * kw_ft_sinc(2.0 * f->a * fu) * kw_ft_sinc(2.0 * f->b * fv) *
               kw_ft_sinc(2.0 * f->c * fz);
    }
    return 0.0;
}

static int has_decay(const kw_sim *sim, int i)
{
    return sim->o.phantom->tissue && sim->o.phantom->shapes[i].tissue >= 0;
}

double complex kw_sim_shape_factor(const kw_sim *sim, int i, double t)
{
    const kw_contrast *c = &sim->o.contrast;
    double a = has_decay(sim, i) ? kw_signal_decay(c, sim->t2[i], sim->t2s[i], t) : 1.0;
    double ph = -2.0 * KW_PI * sim->df[i] * kw_signal_phase_time(c, t);
    return a * (cos(ph) + I * sin(ph));
}

double kw_sim_shape_steady(const kw_sim *sim, int i) { return sim->steady[i]; }

int kw_sim_shape_classes(const kw_sim *sim, int *cls)
{
    int n = 0, rep[KW_PHANTOM_MAX_SHAPES];
    for (int i = 0; i < sim->nshapes; i++) {
        int c = 0;
        for (; c < n; c++) {
            int j = rep[c];
            if (has_decay(sim, i) == has_decay(sim, j) && sim->df[i] == sim->df[j] &&
                (!has_decay(sim, i) || (sim->t2[i] == sim->t2[j] && sim->t2s[i] == sim->t2s[j])))
                break;
        }
        if (c == n)
            rep[n++] = i;
        cls[i] = c;
    }
    return n;
}

void kw_sim_shape_signal(const kw_sim *sim, double t, double complex *own)
{
    for (int i = 0; i < sim->nshapes; i++)
        own[i] = sim->steady[i] * kw_sim_shape_factor(sim, i, t);
}

double kw_sim_sample_time(const kw_sim_options *o, size_t i, size_t ix)
{
    if (o->times)
        return o->times[o->traj || o->times_per_sample ? i : ix];
    if (!o->traj && o->bandwidth_hz > 0)
        return o->contrast.te_s + ((double)ix - (double)(o->n[2] / 2)) / o->bandwidth_hz;
    return o->contrast.te_s;
}

