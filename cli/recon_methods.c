/* recon_methods.c: the methods `kweave recon --method` offers. */
#include "recon_cli.h"

const kw_recon_method kw_recon_methods[] = {
    {"fft", 1, 0, kw_recon_run_fft,
     "centered unitary inverse FFT, coils combined (root-sum-of-squares by default)"},
    {"homodyne", 1, 0, kw_recon_run_homodyne,
     "partial Fourier by homodyne detection (Noll, Nishimura & Macovski 1991)"},
    {"pocs", 1, 0, kw_recon_run_pocs, "partial Fourier by POCS (Haacke, Lindskog & Lin 1991)"},
    {"sense", 1, 0, kw_recon_run_sense, "SENSE unfolding, Tikhonov --lambda (Pruessmann et al. 1999)"},
    {"grappa", 1, 0, kw_recon_run_grappa, "GRAPPA, --kernel KYxKX (Griswold et al. 2002)"},
    {NULL, 0, 0, NULL, NULL},
};
