/* nifti.h: images written as single-file NIfTI-1 (.nii), the open format of
 * neuroimaging tools (the NIfTI-1 data format, nifti.nimh.nih.gov).
 *
 * Layout: the 348-byte header, 4 zero bytes (no extensions), the data from
 * byte 352 (vox_offset), little-endian; float32 (datatype 16, bitpix 32) or
 * complex64 (datatype 32, bitpix 64); magic "n+1". NIfTI's first axis is x
 * and varies fastest, so a C-ordered (nz, ny, nx) array is written as it is
 * with dim = (3, nx, ny, nz); a leading axis beyond the spatial ones (the
 * coils of --keep-coils) becomes NIfTI's 4th: (coils, ny, nx) is written
 * with dim = (4, nx, ny, 1, coils).
 *
 * Geometry (kw_nifti_geom): voxel sizes in mm (pixdim[1..3], xyzt_units =
 * mm) and the world position of the first voxel. kweave's images have x to
 * the right and y up with row 0 at the top, so the affine (qform and sform,
 * both code 1, "scanner anatomical") is diag(dx, -dy, dz) plus the offset:
 * the image's row index runs down. With no geometry known the voxel sizes
 * are 1, the units unknown and the transforms unset (codes 0). */
#ifndef KW_NIFTI_H
#define KW_NIFTI_H

#include <cJSON.h>

#include "kw_base.h"
#include "npystream.h"

typedef struct kw_nifti_geom {
    int known;            /* 0: voxel sizes unknown (1, units unset) */
    double voxel_mm[3];   /* x, y, z (z: slice spacing for multi-slice) */
    double origin_mm[3];  /* world x, y, z of voxel (0, 0, 0) */
} kw_nifti_geom;

/*! kw_nifti_geom_from_sidecar(): the geometry of an image of `nx` x `ny`
 * (x `nz` when nz > 0) voxels from a k-space sidecar: "fov_m" over the
 * image size, or for multi-slice (`multislice`) the in-plane FOV and the
 * "slices" object's "centres_m" (spacing; else thickness_m + gap_m). The
 * centre of the centred transform (index n/2) sits at 0 mm; a multi-slice
 * stack at its slices' centres. Unknown (g->known = 0) when the sidecar
 * lacks what is needed. */
void kw_nifti_geom_from_sidecar(const cJSON *sidecar, size_t nx, size_t ny, size_t nz, int multislice,
                                kw_nifti_geom *g);

/*! kw_nifti_open(): start `path` (a file: the data are placed by seeking)
 * with the header of a KW_F32 or KW_C64 array (ndim `ndim`, of which the
 * last `spatial` (2 or 3) are z, y, x); blocks then go through
 * kw_npyw_write() and kw_npyw_commit() / kw_npyw_abort() (cli/npystream.h)
 * as for .npy. */
kw_status kw_nifti_open(kw_npyw *w, const char *path, kw_dtype dt, int ndim, const size_t *dims, int spatial,
                        const kw_nifti_geom *g);

/*! kw_nifti_write(): write the whole array `a` to `path` atomically. */
kw_status kw_nifti_write(const char *path, const kw_array *a, int spatial, const kw_nifti_geom *g);

#endif
