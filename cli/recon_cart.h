/* recon_cart.h: what the Cartesian methods of `kweave recon` share: the
 * data as (coils, nz, ny, nx) with noise prewhitening applied, and the final
 * coil combination into job->image. */
#ifndef KW_RECON_CART_H
#define KW_RECON_CART_H

#include "kw_base.h"
#include "kw_coilsens.h"
#include "recon_cli.h"

typedef struct kw_cart {
    size_t nc;      /* coils */
    size_t d[3];    /* spatial (nz, ny, nx); nz = 1 for 2-D data */
    int sdim;       /* 2 or 3 spatial dimensions in the input */
    size_t npix;    /* nz * ny * nx */
    float complex *k;    /* whitened k-space copy (nc, npix), owned */
    float complex *sens; /* whitened sensitivities (nc, npix) or NULL, owned */
    float complex *wht;  /* whitening matrix (nc x nc) or NULL, owned */
    kw_cart_sampling smp; /* acceleration, ACS, partial Fourier: from the data */
} kw_cart;

/* `kweave recon --sens-out FILE.npy`: where kw_cart_setup() writes the
 * sensitivities it estimates (NULL: not written). Set by cmd_recon.c. */
extern const char *kw_cart_sens_out;

/*! kw_cart_cov_normalise(): divide a noise covariance (nc x nc) by its
 * mean diagonal. Whitening with the result gives every coil the mean noise
 * variance of the input instead of 1, so images keep the data's intensity
 * scale (a scalar does not change any combination or unfolding). */
void kw_cart_cov_normalise(float complex *cov, size_t nc);

/*! kw_cart_setup(): copy and whiten the job's k-space and maps, analyse the
 * sampling (checked against the sidecar's "acceleration"/"acs_lines"). */
kw_status kw_cart_setup(kw_recon_job *job, kw_cart *c);

/*! kw_cart_require_lattice(): KW_EINVAL unless the data are a uniform
 * lattice (plus an optional calibration block), KW_ENOTSUP when partial
 * Fourier is combined with it; `method` names the method in the reason. */
kw_status kw_cart_require_lattice(const kw_cart *c, const char *method);

/*! kw_cart_need_sens(): make sure c->sens exists: the given maps, or maps
 * estimated from the autocalibration block (Walsh eigenvector method). */
kw_status kw_cart_need_sens(kw_recon_job *job, kw_cart *c);

/*! kw_cart_finish(): coil images (nc, npix) -> job->image by opt->combine
 * (rss default) or kept as coils with --keep-coils. */
kw_status kw_cart_finish(kw_recon_job *job, kw_cart *c, const float complex *coil);

/*! kw_cart_image_complex(): job->image from one complex image (npix): its
 * magnitude (F32), or the complex image with --keep-coils. */
kw_status kw_cart_image_complex(kw_recon_job *job, const kw_cart *c,
                                const float complex *img);

/*! kw_cart_free(): release what kw_cart_setup made (NULL-safe). */
void kw_cart_free(kw_cart *c);

/*! kw_cart_spatial_dims(): the image shape for job->image (sdim entries). */
void kw_cart_spatial_dims(const kw_cart *c, size_t *dims, int *ndim);

/*! kw_recon_pseudo_replica(): g-factor map by pseudo-multiple replicas
 * (Robson et al. 2008, MRM 60:895) for any method: job->gfactor (F32, image
 * shape) from opt->replicas (default 50) reconstructions of the data plus
 * complex Gaussian noise of the given covariance (seeded with opt->seed). */
kw_status kw_recon_pseudo_replica(kw_recon_job *job, const kw_recon_method *m);

#endif
