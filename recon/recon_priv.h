/* recon_priv.h: what the files of the reconstruction object share (not
 * public): the object, one run's job, the Cartesian set-up and the method
 * entry points. */
#ifndef KW_RECON_PRIV_H
#define KW_RECON_PRIV_H

#include <complex.h>
#include <stdint.h>

#include "kw_coilsens.h"
#include "kw_nufft.h"
#include "kw_recon.h"
#include "kw_rssrecon.h"

typedef struct kw_rjob kw_rjob;
typedef kw_status (*kw_recon_run_fn)(kw_rjob *job);

typedef struct kw_recon_method_entry {
    const kw_recon_method_info *info;
    kw_recon_run_fn run;
    int coil_images; /* keep_coils gives (coils, ...) rather than one complex image */
} kw_recon_method_entry;

struct kw_recon {
    kw_recon_options o;
    const kw_recon_method_entry *m;
    kw_recon_geometry g;
    size_t kdims[4];      /* k-space dims as given */
    int kndim;
    size_t nc;
    int noncart;
    kw_recon_sampling claims;
    int has_claims;
    /* output */
    int out_ndim, out_complex;
    size_t out_dims[4];
    int sp_ndim;          /* image (g-factor) shape without the coil axis */
    size_t sp_dims[3];
    /* non-Cartesian: image geometry and density weights (from create) */
    int nc_ndim;
    size_t nc_dims[3];
    float *w;             /* density weights or NULL */
    kw_recon_dcf dcf_used;
    /* default fft + rss path: planned once */
    kw_rssrecon *rss;
    /* after execute */
    kw_recon_report rep;
    char advice[320];     /* rep.advice points here */
    kw_cfloat *est_sens;  /* maps estimated by the last execute (nc x npix) */
    double *log;          /* 2 x iterations: objective then change */
};

/*! kw_recon_advise(): after a run, rep.advice for a method that ignores how
 * the data were sampled (recon_cart.c). */
void kw_recon_advise(kw_recon *r);

/* One reconstruction of one k-space array (the main run or a replica). */
struct kw_rjob {
    kw_recon *r;
    const kw_recon_options *opt;
    const kw_cfloat *ksp;
    kw_recon_report *rep;
    int use_claims;       /* check the caller's sampling claims */
    int keep_sens;        /* copy estimated maps to r->est_sens */
    kw_array image;       /* allocated by the method */
    kw_array gfactor;     /* analytic map (sense), allocated by the method */
    kw_progress_fn progress;
    void *progress_user;
};

/* Cartesian data as (coils, nz, ny, nx), prewhitened. */
typedef struct kw_cart {
    size_t nc;
    size_t d[3];
    int sdim;
    size_t npix;
    float complex *k;     /* the data; with k_borrowed the caller's k-space
                             itself (kw_cart_setup_read): read only, not freed */
    int k_borrowed;
    float complex *sens;
    float complex *wht;
    kw_cart_sampling smp;
} kw_cart;

/* recon_cart.c */
kw_status kw_cart_setup(kw_rjob *job, kw_cart *c);
/* the same for methods that only read c->k: the job's k-space is borrowed
 * instead of copied unless prewhitening changes it (or it is not 16-byte
 * aligned) */
kw_status kw_cart_setup_read(kw_rjob *job, kw_cart *c);
kw_status kw_cart_require_lattice(const kw_cart *c, const char *method);
kw_status kw_cart_need_sens(kw_rjob *job, kw_cart *c, int at);
kw_status kw_cart_finish(kw_rjob *job, kw_cart *c, const float complex *coil);
kw_status kw_cart_image_complex(kw_rjob *job, const kw_cart *c, const float complex *img);
void kw_cart_free(kw_cart *c);
void kw_cart_spatial_dims(const kw_cart *c, size_t *dims, int *ndim);

/* sampling_infer.c: the caller's claims against the data */
kw_status kw_recon_check_claims(const kw_recon_sampling *s, const kw_cart_sampling *smp);

/* whiten.c */
void kw_recon_cov_normalise(float complex *cov, size_t nc);
kw_status kw_recon_whitener(const kw_cfloat *cov, size_t nc, float complex **w);
kw_status kw_recon_cov_cholesky(const kw_cfloat *cov, size_t nc, double complex *L);

/* gfactor.c */
kw_status kw_recon_pseudo_replica(kw_recon *r, const kw_cfloat *ksp, const float *base,
                                  float *g, kw_progress_fn progress, void *user);

/* recon_grid.c: non-Cartesian helpers */
kw_status kw_nc_geometry(kw_recon *r);
kw_status kw_nc_weights(kw_recon *r);
kw_status kw_nc_sens(kw_rjob *job, float complex **sens);
kw_status kw_nc_image(kw_rjob *job, const float complex *x);
void kw_nc_nufft_opts(const kw_recon_options *o, kw_nufft_options *no);

/* methods */
kw_status kw_recon_run_fft(kw_rjob *job);
kw_status kw_recon_run_homodyne(kw_rjob *job);
kw_status kw_recon_run_pocs(kw_rjob *job);
kw_status kw_recon_run_sense(kw_rjob *job);
kw_status kw_recon_run_grappa(kw_rjob *job);
kw_status kw_recon_run_grid(kw_rjob *job);
kw_status kw_recon_run_cg_sense(kw_rjob *job);
kw_status kw_recon_run_cs_wavelet(kw_rjob *job);
kw_status kw_recon_run_cs_tv(kw_rjob *job);
kw_status kw_recon_run_cs_wavelet_admm(kw_rjob *job);
kw_status kw_recon_run_cs_tv_admm(kw_rjob *job);
#endif
