/* recon_nc.h: what the non-Cartesian methods of `kweave recon` share
 * (recon_grid.c defines these; recon_cs.c uses them): the image geometry
 * from the trajectory and sidecar, NUFFT options from --tolerance and
 * --oversampling, density weights (--dcf, --dcf-out), coil maps (given or
 * estimated from the gridded centre of k-space) and the output image. */
#ifndef KW_RECON_NC_H
#define KW_RECON_NC_H

#include "kw_nufft.h"
#include "recon_cli.h"

kw_status kw_nc_geometry(kw_recon_job *job, int *ndim, size_t dims[3]);
void kw_nc_nufft_opts(const kw_recon_job *job, kw_nufft_opts *no);
kw_status kw_nc_weights(kw_recon_job *job, int ndim, const size_t *dims, int dflt,
                        float **w);
kw_status kw_nc_sens(kw_recon_job *job, int ndim, const size_t *dims, const float *w,
                     float complex **sens);
kw_status kw_nc_image(kw_recon_job *job, int ndim, const size_t *dims,
                      const float complex *x);

#endif
