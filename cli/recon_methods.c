/* recon_methods.c: the methods `kweave recon --method` offers. */
#include <string.h>

#include "recon_cli.h"

const kw_recon_method kw_recon_methods[] = {
    {"fft", 1, 0, kw_recon_run_fft,
     "centered unitary inverse FFT, coils combined (root-sum-of-squares by default)"},
    {"homodyne", 1, 0, kw_recon_run_homodyne,
     "partial Fourier by homodyne detection (Noll, Nishimura & Macovski 1991)"},
    {"pocs", 1, 0, kw_recon_run_pocs, "partial Fourier by POCS (Haacke, Lindskog & Lin 1991)"},
    {"sense", 1, 0, kw_recon_run_sense, "SENSE unfolding, Tikhonov --lambda (Pruessmann et al. 1999)"},
    {"grappa", 1, 0, kw_recon_run_grappa, "GRAPPA, --kernel KYxKX (Griswold et al. 2002)"},
    /* non-Cartesian gridding and iterative methods (recon_grid.c, recon_cgsense.c, recon_cs.c) */
    {"grid", 0, 1, kw_recon_run_grid, "gridding: density-compensated adjoint NUFFT (--dcf pipe|radial|FILE), root-sum-of-squares"},
    {"cg-sense", 1, 1, kw_recon_run_cg_sense, "CG-SENSE (Pruessmann 2001), any sampling; --iterations, --stop"},
    {"cs-wavelet", 1, 1, kw_recon_run_cs_wavelet, "compressed sensing, l1 of db4 wavelets, FISTA; --lambda (relative), --iterations, --stop"},
    {"cs-tv", 1, 1, kw_recon_run_cs_tv, "compressed sensing, total variation, FISTA; --lambda (relative), --iterations, --stop"},
    {"cs-wavelet-admm", 1, 1, kw_recon_run_cs_wavelet_admm, "as cs-wavelet, solved by ADMM"},
    {"cs-tv-admm", 1, 1, kw_recon_run_cs_tv_admm, "as cs-tv, solved by ADMM"},
    {NULL, 0, 0, NULL, NULL},
};

const kw_recon_method *kw_recon_method_find(const char *name)
{
    for (const kw_recon_method *t = kw_recon_methods; t->name; t++)
        if (strcmp(t->name, name) == 0)
            return t;
    return NULL;
}
