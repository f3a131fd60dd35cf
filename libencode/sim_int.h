/* sim_int.h: the simulation object's inside, shared by simulate.c and
 * sim_grid.c (not installed; the public face is kw_simulate.h). */
#ifndef KW_SIM_INT_H
#define KW_SIM_INT_H

#include <complex.h>

#include "kw_simulate.h"

#define KW_SIM_MAX_ORDER 8
#define KW_SIM_MAX_TERMS 1024 /* (2L+1)^2 in 2-D, (2Lz+1)(2L+1)^2 in 3-D */

/* Per shape, precomputed for the inner loops: rotation, axes, centre (in the
 * frequency convention of kw_phantom_kspace_shape) and scale. */
struct kw_sim_shape {
    int kind;
    double ca, sa, a, b, c, cx, cy, cz, scale;
};

typedef struct kw_sim_grid kw_sim_grid;

struct kw_sim {
    kw_sim_options o;
    size_t cdims[3];         /* o.n in C order (nz, ny, nx) */
    int nshapes;
    int channels;
    int terms;               /* (2L+1)^2 (3-D: (2Lz+1)(2L+1)^2), 1 without coils */
    int lz;                  /* Lz: the series' order along z (0 in 2-D) */
    double steady[KW_PHANTOM_MAX_SHAPES];
    double t2[KW_PHANTOM_MAX_SHAPES], t2s[KW_PHANTOM_MAX_SHAPES];
    double df[KW_PHANTOM_MAX_SHAPES];
    size_t count;            /* samples per channel */
    struct kw_sim_shape fs[KW_PHANTOM_MAX_SHAPES];
    double complex *shift_phase; /* nshapes x terms: exp(+i 2 pi delta.c) */
    kw_sim_grid *grid;       /* the grid path's plan (sim_grid.c) or NULL */
};

/* Real amplitude of a shape's spectrum at phantom frequency (fx, fy, fz)
 * without the centre's phase (simulate.c). */
double kw_sim_shape_mag(const struct kw_sim_shape *f, double fx, double fy, double fz);

/* sim_grid.c: the grid path for Cartesian sampling with coils (no field
 * gradient): plan and allocate (sim->grid stays NULL where the path does
 * not apply or its memory is refused), run, free. */
kw_status kw_sim_grid_create(kw_sim *sim);
kw_status kw_sim_grid_execute(kw_sim *sim, kw_cfloat *out, kw_progress_fn progress, void *user);
void kw_sim_grid_destroy(kw_sim_grid *g);

#endif
