/* recon_cgsense.c: `kweave recon --method cg-sense`: CG-SENSE (Pruessmann,
 * Weiger, Boernert & Boesiger 2001) on Cartesian (masked) or non-Cartesian
 * data; the solver is recon/cg.c, the problem set-up is shared with the
 * compressed-sensing methods in recon_cs.c. */
#include "recon_cli.h"

/* recon_cs.c: build E (and W), run solver `kind`, write job->image */
kw_status kw_nc_iterative(kw_recon_job *job, int kind);

kw_status kw_recon_run_cg_sense(kw_recon_job *job) { return kw_nc_iterative(job, 0); }
