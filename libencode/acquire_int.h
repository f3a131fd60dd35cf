/* acquire_int.h: the acquisition object's inside, shared by acquire*.c (not
 * installed; the public face is kw_acquire.h). */
#ifndef KW_ACQUIRE_INT_H
#define KW_ACQUIRE_INT_H

#include <complex.h>

#include "kw_acquire.h"
#include "kw_simulate.h"

/* Period of the trigonometric series of the coil maps, in FOV units: larger
 * than the FOV so that the series need not be periodic across it
 * (Guerquin-Kern et al. 2012 fit over a box somewhat larger than the object). */
#define KW_ACQ_COIL_PERIOD 1.5
#define KW_ACQ_MAX_EDGE 8192
#define KW_ACQ_MAX_SLICES 256

struct kw_acquisition {
    kw_acquisition_options o; /* the caller's, copied */
    kw_acquisition_info info;

    kw_phantom ph;   /* the imaged phantom (multi-slice: the cut at z = 0) */
    kw_phantom ph3;  /* multi-slice: the 3-D phantom */
    int ndim, nsl;
    size_t n[3];     /* nx, ny, nz: kw_sim_options' order */
    size_t cd[3];    /* the same in C order (nz, ny, nx): cd + 1 is (ny, nx) */
    double fov[3];   /* x, y, z */
    size_t npix;     /* nx ny nz */

    kw_contrast con;
    double bw, ro_dur, te_min, plan_dwell;
    double fgrad_hz[3]; /* x, y, z */
    const kw_tissue_values *tvals_given;
    kw_tissue_values tvals_zero[KW_TISSUE_COUNT];

    uint8_t *mfull;     /* the full Cartesian mask or NULL */
    double *tvals;      /* sample times or NULL */
    int times_full;
    size_t nsamples;

    int ncoils, per_slice, coil_order, coil_order_z;
    kw_cfloat *maps;
    size_t maps_count;
    float *cover;
    kw_cdouble *coef;
    double *resid;

    kw_cdouble *cov, *chol;
    int noisy;
    double sigma;

    float *truth;
    size_t truth_count, kspace_count;
    double zc[KW_ACQ_MAX_SLICES];

    kw_sim_options so;
    kw_sim *sim;
    kw_fieldmap *fmp;
};

/* The multi-slice slab of one acquisition: field-map figures come back. */
typedef struct kw_acq_slice_fieldmap {
    const float *map;
    size_t stride; /* 0: one map for every slice */
    double err;
    int seg;
} kw_acq_slice_fieldmap;


/* acquire_timing.c: contrast, bandwidth, protocol plan, TE/TR/TI/flip,
 * off-resonance. */
kw_status kw_acq_timing(kw_acquisition *a);

/* acquire_sampling.c: mask, trajectory, times, field map, EPI train. */
kw_status kw_acq_sampling(kw_acquisition *a);

/* acquire_coils.c: coil options, maps and their series fit; the noise
 * covariance (and its level, once the truth is known). */
kw_status kw_acq_coils(kw_acquisition *a);
kw_status kw_acq_noise_shape(kw_acquisition *a);
kw_status kw_acq_noise_level(kw_acquisition *a);

/* acquire_slices.c: the slab-averaged multi-slice truth (truth != NULL)
 * or k-space (out != NULL). */
double kw_acq_slice_centre(int i, int n, double t, double g);
kw_status kw_acq_slices_run(const kw_acquisition *a, float *truth, kw_cfloat *out,
                            kw_acq_slice_fieldmap *fm, kw_progress_fn progress, void *user);

#endif
