/* recon_multislice.h: `kweave recon` on multi-slice 2-D k-space, slice by
 * slice from a stream (cli/recon_multislice.c, docs/multislice.md). */
#ifndef KW_RECON_MULTISLICE_H
#define KW_RECON_MULTISLICE_H

#include <cJSON.h>

#include "recon_cli.h"

/*! kw_recon_multislice(): reconstruct every slice of o->in as its own 2-D
 * problem with the Cartesian method asked for. `axis`: the slice axis given
 * by --slices, or -1 to take the layout from the sidecar's "slices" key.
 * Returns the process exit code (errors already printed). */
int kw_recon_multislice(const kw_recon_opts *o, const cJSON *sidecar, const char *scpath, int axis);

#endif
