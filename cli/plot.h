/* plot.h: pictures of a plan, drawn with cairo and written atomically as PNG
 * (kw_outfile): the timing diagram of one TR (RF, slice, phase and readout
 * gradients, ADC) with time and amplitude axes and the gradient limit drawn,
 * and the k-space path. */
#ifndef KW_PLOT_H
#define KW_PLOT_H

#include <cairo.h>

#include "kw_sequence.h"

/*! kw_plot_write_png(): flush a cairo image surface and write it as a PNG,
 * atomically (kw_outfile). */
kw_status kw_plot_write_png(cairo_surface_t *s, const char *path);

/*! kw_plot_timing(): the timing diagram of `r` into the PNG `path`. */
kw_status kw_plot_timing(const char *path, const kw_plan_report *r);

/*! kw_plot_kspace(): the k-space path of `r` into the PNG `path`. */
kw_status kw_plot_kspace(const char *path, const kw_plan_report *r);

#endif
