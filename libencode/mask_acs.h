/* mask_acs.h: the calibration (ACS) block a mask actually holds, measured the
 * one way the pattern sidecar (libencode/pattern.c) and the pattern analysis
 * (recon/pattern_analysis.c) both report it; not public. */
#ifndef KW_MASK_ACS_H
#define KW_MASK_ACS_H

#include <stddef.h>
#include <stdint.h>

/*! kw_mask_acs_block(): the contiguous fully sampled block through k = 0 of
 * a mask `m` (dims[0] x dims[1], nonzero = sampled). Line masks (plane 0,
 * rows are ky lines read whole): the run of whole rows through the centre
 * row, block = (run, dims[1]). Plane masks (ky-kz, plane 1): the runs
 * through the centre along both axes, shrunk (the larger side first) until
 * the rectangle is fully sampled. A run of one line is no ACS: block 0. */
void kw_mask_acs_block(const uint8_t *m, const size_t dims[2], int plane, size_t block[2]);

#endif
