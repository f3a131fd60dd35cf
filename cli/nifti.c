/* nifti.c: the NIfTI-1 single-file writer (see nifti.h). Field offsets are
 * those of the NIfTI-1 header (nifti1.h of the standard): every value is
 * placed byte by byte, little-endian. */
#include "nifti.h"

#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

#include "outfile.h"

enum { NII_HDR = 348, NII_OFFSET = 352 };

static void put16(unsigned char *h, size_t off, int v)
{
    uint16_t u = (uint16_t)(int16_t)v;
    h[off] = (unsigned char)(u & 0xff);
    h[off + 1] = (unsigned char)(u >> 8);
}

static void put32(unsigned char *h, size_t off, uint32_t u)
{
    for (int i = 0; i < 4; i++)
        h[off + (size_t)i] = (unsigned char)(u >> (8 * i));
}

static void putf(unsigned char *h, size_t off, double v)
{
    float f = (float)v;
    uint32_t u;
    memcpy(&u, &f, 4);
    put32(h, off, u);
}

/* A number of the sidecar's array `key` at index i, or NaN. */
static double num_at(const cJSON *o, const char *key, int i)
{
    const cJSON *a = o ? cJSON_GetObjectItemCaseSensitive(o, key) : NULL;
    const cJSON *v = cJSON_IsArray(a) ? cJSON_GetArrayItem(a, i) : NULL;
    return cJSON_IsNumber(v) ? v->valuedouble : NAN;
}

void kw_nifti_geom_from_sidecar(const cJSON *sidecar, size_t nx, size_t ny, size_t nz, int multislice,
                                kw_nifti_geom *g)
{
    memset(g, 0, sizeof *g);
    double fx = num_at(sidecar, "fov_m", 0), fy = num_at(sidecar, "fov_m", 1);
    if (!(fx > 0) || !(fy > 0) || nx < 1 || ny < 1)
        return;
    double dz = 1, z0;
    if (multislice) {
        const cJSON *sl = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "slices") : NULL;
        const cJSON *th = sl ? cJSON_GetObjectItemCaseSensitive(sl, "thickness_m") : NULL;
        const cJSON *gap = sl ? cJSON_GetObjectItemCaseSensitive(sl, "gap_m") : NULL;
        double c0 = num_at(sl, "centres_m", 0), c1 = num_at(sl, "centres_m", 1);
        if (isfinite(c0) && isfinite(c1) && c1 != c0)
            dz = fabs(c1 - c0) * 1e3;
        else if (cJSON_IsNumber(th) && th->valuedouble > 0)
            dz = (th->valuedouble + (cJSON_IsNumber(gap) ? gap->valuedouble : 0)) * 1e3;
        else
            return;
        z0 = isfinite(c0) ? c0 * 1e3 : -dz * (double)(nz / 2);
    } else if (nz > 0) {
        double fz = num_at(sidecar, "fov_m", 2);
        if (!(fz > 0))
            return;
        dz = fz * 1e3 / (double)nz;
        z0 = -dz * (double)(nz / 2);
    } else {
        dz = fx * 1e3 / (double)nx; /* a single plane: z is nominal */
        z0 = 0;
    }
    g->known = 1;
    g->voxel_mm[0] = fx * 1e3 / (double)nx;
    g->voxel_mm[1] = fy * 1e3 / (double)ny;
    g->voxel_mm[2] = dz;
    g->origin_mm[0] = -g->voxel_mm[0] * (double)(nx / 2);
    g->origin_mm[1] = g->voxel_mm[1] * (double)(ny / 2); /* row 0 at the top */
    g->origin_mm[2] = z0;
}

/* The 352 bytes before the data. */
static kw_status header(unsigned char *h, kw_dtype dt, int ndim, const size_t *dims, int spatial,
                        const kw_nifti_geom *g)
{
    KW_FAIL_IF(dt != KW_F32 && dt != KW_C64, KW_EINVAL, "out: NIfTI images are float32 or complex64");
    KW_FAIL_IF(spatial < 2 || spatial > 3 || ndim < spatial || ndim > spatial + 1, KW_EINVAL,
               "out: a NIfTI image has 2 or 3 spatial axes and at most one more (got %d axes)", ndim);
    size_t nd[8] = {0, 1, 1, 1, 1, 1, 1, 1};
    for (int i = 0; i < spatial; i++)
        nd[1 + i] = dims[ndim - 1 - i];
    int dim0 = spatial;
    if (ndim > spatial) { /* the leading axis (coils) is NIfTI's 4th */
        nd[4] = dims[0];
        dim0 = 4;
    }
    for (int i = 1; i <= 4; i++)
        KW_FAIL_IF(nd[i] > 32767, KW_EINVAL, "out: axis of %zu voxels (NIfTI-1 holds at most 32767)", nd[i]);
    memset(h, 0, NII_OFFSET);
    put32(h, 0, NII_HDR);
    h[39] = (unsigned char)(1 | (2 << 2) | (3 << 4)); /* dim_info: freq x, phase y, slice z */
    put16(h, 40, dim0);
    for (int i = 1; i < 8; i++)
        put16(h, 40 + 2 * (size_t)i, (int)nd[i]);
    put16(h, 70, dt == KW_C64 ? 32 : 16); /* datatype: NIFTI_TYPE_COMPLEX64 or FLOAT32 */
    put16(h, 72, dt == KW_C64 ? 64 : 32); /* bitpix */
    const double *v = g->voxel_mm;
    double vox[3] = {g->known ? v[0] : 1, g->known ? v[1] : 1, g->known ? v[2] : 1};
    putf(h, 76, g->known ? -1.0 : 1.0); /* pixdim[0] = qfac */
    for (int i = 0; i < 3; i++)
        putf(h, 80 + 4 * (size_t)i, vox[i]);
    putf(h, 92, 1.0);
    putf(h, 108, NII_OFFSET);   /* vox_offset */
    putf(h, 112, 1.0);          /* scl_slope: values as stored */
    h[123] = g->known ? 2 : 0;  /* xyzt_units: NIFTI_UNITS_MM */
    snprintf((char *)h + 148, 80, "kweave %s", KW_VERSION_STRING);
    if (g->known) {
        put16(h, 252, 1); /* qform_code: NIFTI_XFORM_SCANNER_ANAT */
        put16(h, 254, 1); /* sform_code */
        /* diag(1, -1, 1) = rotation by pi about x (quaternion b = 1) times
         * diag(1, 1, qfac) with qfac = -1 */
        putf(h, 256, 1.0);
        putf(h, 268, g->origin_mm[0]);
        putf(h, 272, g->origin_mm[1]);
        putf(h, 276, g->origin_mm[2]);
        double srow[3][4] = {{vox[0], 0, 0, g->origin_mm[0]},
                             {0, -vox[1], 0, g->origin_mm[1]},
                             {0, 0, vox[2], g->origin_mm[2]}};
        for (int r = 0; r < 3; r++)
            for (int c = 0; c < 4; c++)
                putf(h, 280 + 16 * (size_t)r + 4 * (size_t)c, srow[r][c]);
    }
    memcpy(h + 344, "n+1\0", 4);
    return KW_OK; /* bytes 348..351: no extensions */
}

kw_status kw_nifti_open(kw_npyw *w, const char *path, kw_dtype dt, int ndim, const size_t *dims, int spatial,
                        const kw_nifti_geom *g)
{
    memset(w, 0, sizeof *w);
    unsigned char h[NII_OFFSET];
    kw_status st = header(h, dt, ndim, dims, spatial, g);
    if (st)
        return st;
    KW_FAIL_IF(strcmp(path, "-") == 0, KW_EINVAL, "out: a NIfTI image is written to a file, not standard output");
    size_t bytes;
    w->esize = dt == KW_C64 ? 8 : 4;
    KW_FAIL_IF(kw_checked_bytes(dims, ndim, w->esize, 0, &bytes), KW_EINVAL, "out: size overflows");
    w->count = bytes / w->esize;
    if ((st = kw_outfile_open(&w->of, path)))
        return st;
    w->open = 1;
    if (fwrite(h, 1, NII_OFFSET, w->of.fp) != NII_OFFSET) {
        kw_npyw_abort(w);
        return kw_set_error(KW_EIO, "%s: write failed: %s", path, strerror(errno));
    }
    w->data_off = NII_OFFSET;
    struct stat sb;
    w->seekable = fstat(fileno(w->of.fp), &sb) == 0 && S_ISREG(sb.st_mode) && ftello(w->of.fp) == w->data_off;
    return KW_OK;
}

kw_status kw_nifti_write(const char *path, const kw_array *a, int spatial, const kw_nifti_geom *g)
{
    kw_npyw w;
    kw_status st = kw_nifti_open(&w, path, a->dtype, a->ndim, a->dims, spatial, g);
    if (st)
        return st;
    if ((st = kw_npyw_write(&w, 0, a->data, w.count))) {
        kw_npyw_abort(&w);
        return st;
    }
    return kw_npyw_commit(&w);
}
