/* waveform_cli.h: the parts of `kweave waveform` split out of
 * cli/cmd_waveform.c. */
#ifndef KW_WAVEFORM_CLI_H
#define KW_WAVEFORM_CLI_H

#include <stddef.h>

#include "kw_waveform.h"

/* waveform_png.c: the picture of the waveform g (n, axes) T/m checked as w
 * with options o, to path (through kw_plot_write_png()). */
kw_status kw_wf_write_png(const char *path, const double *g, size_t n, int axes, const kw_waveform *w,
                          const kw_waveform_options *o);

#endif
