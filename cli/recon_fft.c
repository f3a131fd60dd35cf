/* recon_fft.c: placeholder for the fft method. */
#include "recon_cli.h"

kw_status kw_recon_run_fft(kw_recon_job *job)
{
    (void)job;
    return kw_set_error(KW_ENOTSUP, "method fft: not built yet");
}
