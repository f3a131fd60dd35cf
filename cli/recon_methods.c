/* recon_methods.c: the methods `kweave recon --method` offers. */
#include "recon_cli.h"

const kw_recon_method kw_recon_methods[] = {
    {"fft", 1, 0, kw_recon_run_fft,
     "centered unitary inverse FFT, coils combined (root-sum-of-squares by default)"},
    {NULL, 0, 0, NULL, NULL},
};
