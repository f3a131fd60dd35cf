/* recon_cli.h: the method table behind `kweave recon`.
 *
 * cmd_recon.c parses every option into kw_recon_opts, reads the k-space, its
 * sidecar and the files the options name, and hands a kw_recon_job to the
 * method. The method fills job->image (and may add keys to job->report);
 * cmd_recon.c then scores it against --ref and writes the outputs.
 * Adding a method: one file cli/recon_<name>.c with its run function, one
 * line in kw_recon_methods[] (recon_methods.c), tests, a README line. */
#ifndef KW_RECON_CLI_H
#define KW_RECON_CLI_H

#include <cJSON.h>

#include "kw_base.h"

typedef struct kw_recon_opts {
    const char *in, *out, *method, *combine;
    const char *sens, *noise_cov, *trajectory, *dcf, *ref, *gfactor, *json;
    const char *dcf_out;  /* write the density weights used (.npy), or NULL */
    const char *kernel;   /* "KYxKX" as given; parsed into kernel[] */
    int kernel_yx[2];     /* 0 when not given: the method's default */
    double lambda;        /* NaN when not given */
    long iterations;      /* 0 when not given */
    double stop;          /* NaN when not given */
    double tolerance;     /* NaN when not given */
    double oversampling;  /* NaN when not given */
    long replicas;        /* pseudo-replicas for --gfactor (0: default) */
    long seed;
    int keep_coils;
} kw_recon_opts;

typedef struct kw_recon_job {
    const kw_recon_opts *opt;
    /* Input k-space, complex64: (coils, ny, nx), (coils, nz, ny, nx), or for
     * non-Cartesian data (coils, samples). A 2-D Cartesian (ny, nx) input is
     * given a leading coil axis of 1. Unsampled Cartesian points are zeros. */
    kw_array ksp;
    kw_array traj;         /* (samples, ndim) cycles/FOV; dtype F32; empty if Cartesian */
    kw_array sens;         /* coil maps (coils, [nz,] ny, nx) C64; empty if none given */
    kw_array noise_cov;    /* (coils, coils) C64; empty if none given */
    const cJSON *sidecar;  /* the input's sidecar, NULL if none */
    cJSON *report;         /* the JSON report: methods add their keys */
    kw_array image;        /* output, allocated by the method: F32 combined image,
                              or C64 (coils, ...) with --keep-coils */
    kw_array gfactor;      /* optional output (F32, image shape) for --gfactor */
    kw_progress_fn progress;
    void *progress_user;
} kw_recon_job;

typedef struct kw_recon_method {
    const char *name;
    int cartesian;      /* accepts Cartesian data */
    int noncartesian;   /* accepts non-Cartesian data (a trajectory) */
    kw_status (*run)(kw_recon_job *job);
    const char *summary;
} kw_recon_method;

/* Method entry points (one per cli/recon_<name>.c). */
kw_status kw_recon_run_fft(kw_recon_job *job);
kw_status kw_recon_run_homodyne(kw_recon_job *job);
kw_status kw_recon_run_pocs(kw_recon_job *job);
kw_status kw_recon_run_sense(kw_recon_job *job);
kw_status kw_recon_run_grappa(kw_recon_job *job);

kw_status kw_recon_run_grid(kw_recon_job *job);        /* recon_grid.c */
kw_status kw_recon_run_cg_sense(kw_recon_job *job);    /* recon_cgsense.c */
kw_status kw_recon_run_cs_wavelet(kw_recon_job *job);  /* recon_cs.c (FISTA) */
kw_status kw_recon_run_cs_tv(kw_recon_job *job);       /* recon_cs.c (FISTA) */
kw_status kw_recon_run_cs_wavelet_admm(kw_recon_job *job); /* recon_cs.c */
kw_status kw_recon_run_cs_tv_admm(kw_recon_job *job);  /* recon_cs.c */

/*! kw_recon_method_find(): the table entry named `name`, or NULL. */
const kw_recon_method *kw_recon_method_find(const char *name);

/* Terminated by an entry with name == NULL. */
extern const kw_recon_method kw_recon_methods[];

#endif
