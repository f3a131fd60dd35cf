/* recon_multislice.c: `kweave recon` on multi-slice 2-D k-space.
 *
 * Multi-slice 2-D imaging excites and encodes each slice on its own, so its
 * k-space holds one independent 2-D (ky, kx) plane per slice: the image of
 * slice s is the 2-D reconstruction of plane s alone, and no transform runs
 * across the slice axis (a 3-D transform there would be wrong). The input is
 * read one slice at a time (every coil's plane of that slice) through
 * cli/npystream.h and each finished slice image is written at once, so peak
 * memory is one slice's working set plus, with --ref, the image being scored,
 * whatever the number of slices (measured in docs/multislice.md). One
 * kw_recon serves every slice: the default fft + root-sum-of-squares path
 * makes its FFTW plan once for all slices; the other methods make theirs per
 * slice from the wisdom FFTW keeps after the first.
 *
 * Layouts: (coils, slices, ny, nx) (slice axis 1, what `kweave encode
 * --slices` writes), (slices, coils, ny, nx) (axis 0) or (slices, ny, nx) for
 * one channel. A pipe can only be read forwards, so on standard input only
 * the slice-major layouts stream; (coils, slices, ny, nx) is refused there.
 * Maps: (coils, slices, ny, nx), streamed the same way, or (coils, ny, nx)
 * shared by all slices. Output: (slices, ny, nx) float32, or with
 * --keep-coils (coils, slices, ny, nx) complex64 (written in place, so the
 * target must be a file). A .nii output (NIfTI-1, cli/nifti.h) is written
 * the same way, slice by slice, with the slice spacing of the sidecar.
 * An HDF5 dataset (FILE.h5:/path, cli/h5.h) cannot be streamed here: it is
 * read whole (within --max-memory) and served slice by slice from memory. */
#include "recon_multislice.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "arrayio.h"
#include "cli.h"
#include "jsonio.h"
#include "recon_json.h"
#include "kw_metrics.h"
#include "nifti.h"
#include "npy.h"
#include "npystream.h"
#include "recon_cli.h"

/* A complex source read by element ranges: a .npy stream, or an HDF5
 * dataset held in memory (r then holds only its shape). */
typedef struct ms_src {
    kw_npyr r;
    kw_array mem;
} ms_src;

typedef struct ms_ctx {
    const kw_recon_opts *o;
    const cJSON *sidecar;
    const char *scpath, *mname;
    int axis;
    ms_src rk, rs;
    kw_npyw w;
    kw_h5w h5; /* the image as an HDF5 dataset (h5.open) instead of w */
    size_t nc, ns, ny, nx, npix;
    kw_array ref, ncov, sens;
    const char *sens_src;
    float complex *kbuf;
    void *ibuf;
    float *score;
    char *spath, *cpath;
    cJSON *report;
    kw_recon *r;
    kw_recon_sampling claims;
    int stated;
} ms_ctx;

static int ends_with_ci(const char *s, const char *suf)
{
    size_t n = strlen(s), m = strlen(suf);
    return n >= m && strcasecmp(s + n - m, suf) == 0;
}

/* The file an option or the sidecar names (NULL: none); -1 or an exit code. */
static int named_path(const char *opt, const cJSON *sc, const char *scpath, const char *key,
                      const char *field, char **path)
{
    *path = NULL;
    if (opt) {
        *path = strdup(opt);
    } else if (sc) {
        const cJSON *j = cJSON_GetObjectItemCaseSensitive(sc, key);
        if (j && cJSON_IsString(j) && j->valuestring[0])
            *path = kw_recon_sidecar_rel(scpath, j->valuestring);
        else if (j && !cJSON_IsNull(j) && !cJSON_IsString(j))
            return kw_cli_fail(field, "sidecar key \"%s\" is not a file name", key);
        else
            return -1;
    } else {
        return -1;
    }
    if (!*path)
        return kw_cli_fail(field, "out of memory");
    return -1;
}

static void add_dims(cJSON *r, const char *key, const size_t *d, int n)
{
    double v[KW_MAX_DIMS];
    for (int i = 0; i < n; i++)
        v[i] = (double)d[i];
    kw_json_add_vec(r, key, v, n);
}

static kw_status src_open(ms_src *s, const char *path)
{
    if (!kw_array_is_hdf5(path))
        return kw_npyr_open(&s->r, path);
    kw_status st = kw_array_read_complex(path, &s->mem);
    if (st)
        return st;
    if (s->mem.dtype != KW_C64) {
        kw_array_free(&s->mem);
        return kw_set_error(KW_EFORMAT, "%s: must be complex (a compound r/i or real/imag, or a trailing axis of 2)",
                            path);
    }
    s->r.ndim = s->mem.ndim;
    memcpy(s->r.dims, s->mem.dims, sizeof s->r.dims);
    s->r.count = kw_array_count(&s->mem);
    s->r.seekable = 1;
    return KW_OK;
}

static kw_status src_read(ms_src *s, size_t first, size_t n, float complex *out)
{
    if (!s->mem.data)
        return kw_npyr_read(&s->r, first, n, out);
    KW_FAIL_IF(first > s->r.count || n > s->r.count - first, KW_EINVAL, "elements %zu..%zu lie outside the array",
               first, first + n);
    memcpy(out, (const float complex *)s->mem.data + first, n * sizeof *out);
    return KW_OK;
}

static int src_live(const ms_src *s) { return s->r.fp || s->mem.data; }

static void src_close(ms_src *s)
{
    kw_npyr_close(&s->r);
    kw_array_free(&s->mem);
}

/* Element offset of coil c, slice s in a 4-D layout with the slice axis. */
static size_t plane_at(int axis, size_t nc, size_t ns, size_t c, size_t s, size_t npix)
{
    return (axis == 1 ? c * ns + s : s * nc + c) * npix;
}

/* Every coil's plane of slice s into buf (nc, npix). */
static kw_status read_slice(ms_src *r, int axis, size_t nc, size_t ns, size_t s, size_t npix,
                            float complex *buf)
{
    if (axis == 0) /* slice-major: one contiguous block */
        return src_read(r, s * nc * npix, nc * npix, buf);
    for (size_t c = 0; c < nc; c++) {
        kw_status st = src_read(r, plane_at(axis, nc, ns, c, s, npix), npix, buf + c * npix);
        if (st)
            return st;
    }
    return KW_OK;
}

static kw_status finite_block(const float complex *b, size_t n, size_t s)
{
    for (size_t i = 0; i < n; i++)
        if (!isfinite(crealf(b[i])) || !isfinite(cimagf(b[i])))
            return kw_set_error(KW_ENUMERIC, "slice %zu: value %zu is not finite", s, i);
    return KW_OK;
}

/* Whole slices of the image into the .npy / .nii stream or the HDF5 dataset. */
static kw_status out_write(ms_ctx *m, size_t first, const void *data, size_t n)
{
    return m->h5.open ? kw_h5w_write(&m->h5, first, data, n) : kw_npyw_write(&m->w, first, data, n);
}

/* The HDF5 dataset's attributes, then the file renamed into place. */
static kw_status out_commit(ms_ctx *m)
{
    if (!m->h5.open)
        return kw_npyw_commit(&m->w);
    const kw_recon_report *rep = kw_recon_get_report(m->r);
    kw_recon_h5_meta hm = {m->sidecar, rep->method ? rep->method : m->mname, rep->combine, 3, 1};
    kw_status st = kw_recon_h5_attrs(&m->h5, &hm);
    if (st) {
        kw_h5w_abort(&m->h5);
        return st;
    }
    return kw_h5w_commit(&m->h5);
}

/* The request and the k-space stream's layout. -1: go on. */
static int open_kspace(ms_ctx *m)
{
    const kw_recon_opts *o = m->o;
    const cJSON *sidecar = m->sidecar;
    kw_status st;
    const cJSON *lay = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "layout") : NULL;
    const cJSON *tj = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "trajectory") : NULL;
    if (o->trajectory || (tj && cJSON_IsString(tj)) ||
        (lay && cJSON_IsString(lay) && strcmp(lay->valuestring, "noncartesian") == 0))
        return kw_cli_fail("slices", "multi-slice reconstruction takes Cartesian data only (no trajectory)");
    if (o->gfactor)
        return kw_cli_fail("gfactor", "not with multi-slice input (run one slice on its own for a g-factor map)");
    if (o->out && !ends_with_ci(o->out, ".npy") && !ends_with_ci(o->out, ".nii") && !kw_array_is_hdf5(o->out) &&
        strcmp(o->out, "-") != 0)
        return kw_cli_fail("out", "'%s': multi-slice images are written as .npy, .nii or .h5 (slices, ny, nx)",
                           o->out);

    m->mname = o->method ? o->method : "fft";
    const kw_recon_method_info *mi = kw_recon_method_find(m->mname);
    if (!mi) {
        (void)kw_recon_method_check(m->mname, 0, NULL); /* the list and a near miss */
        return kw_cli_fail("method", "%s", kw_last_error_reason());
    }
    if (!mi->cartesian)
        return kw_cli_fail("method", "%s takes non-Cartesian data only; multi-slice data are Cartesian", m->mname);

    kw_npyr *rk = &m->rk.r;
    if ((st = src_open(&m->rk, o->in)))
        return kw_cli_status(st, "in");
    if (rk->ndim != 3 && rk->ndim != 4)
        return kw_cli_fail("in", "multi-slice k-space must be (coils, slices, ny, nx), (slices, coils, ny, nx) "
                                 "or (slices, ny, nx); got %d dimensions", rk->ndim);
    const cJSON *sl = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "slices") : NULL;
    if (m->axis < 0)
        m->axis = rk->ndim == 4 ? 1 : 0;
    int axis = m->axis;
    if (rk->ndim == 3 && axis != 0)
        return kw_cli_fail("slices", "a 3-D input is one channel (slices, ny, nx): the slice axis is 0");
    m->nc = rk->ndim == 4 ? rk->dims[axis == 1 ? 0 : 1] : 1;
    m->ns = rk->dims[axis];
    m->ny = rk->dims[rk->ndim - 2];
    m->nx = rk->dims[rk->ndim - 1];
    m->npix = m->ny * m->nx;
    if (sl) {
        const cJSON *cnt = cJSON_IsObject(sl) ? cJSON_GetObjectItemCaseSensitive(sl, "count") : NULL;
        long long count;
        if (!cnt || !cJSON_IsNumber(cnt) ||
            kw_checked_whole(cnt->valuedouble, 1, 1LL << 40, &count) != KW_OK)
            return kw_cli_fail("sidecar", "\"slices\" must be an object with a whole \"count\" "
                               "from 1 to 2^40");
        if ((unsigned long long)count != m->ns)
            return kw_cli_fail("slices", "the sidecar says %.0f slices but axis %d of the input holds %zu",
                               cnt->valuedouble, axis, m->ns);
    }
    if (m->ns < 1)
        return kw_cli_fail("in", "no slices (axis %d has length 0)", axis);
    if (m->nc < 1 || m->nc > 256)
        return kw_cli_fail("in", "%zu coils (1 .. 256 supported)", m->nc);
    if (m->ny < 2 || m->nx < 2)
        return kw_cli_fail("in", "each slice is %zu x %zu (at least 2 x 2 needed)", m->ny, m->nx);
    if (!rk->seekable && axis == 1 && m->nc > 1)
        return kw_cli_fail("in", "a pipe cannot be read slice by slice in the layout (coils, slices, ny, nx); "
                                 "give a file, or send (slices, coils, ny, nx) with --slices 0");
    /* one slice's working set: the block read, the method's copies and its
     * coil images (about six slice blocks; an estimate, no source) */
    size_t block = m->nc * m->npix * sizeof(float complex);
    if (block > kw_cli_memory_limit() / 6)
        return kw_cli_fail("in", "one slice (%zu coils x %zu x %zu) needs about %.3g MiB to reconstruct, "
                                 "above the limit (--max-memory)", m->nc, m->ny, m->nx, 6.0 * (double)block / 1048576.0);
    return -1;
}

/* Sensitivities: (coils, slices, ny, nx) streamed, or (coils, ny, nx) shared. */
static int open_sens(ms_ctx *m)
{
    size_t nc = m->nc, ns = m->ns, ny = m->ny, nx = m->nx, npix = m->npix;
    kw_status st;
    int rc;
    m->sens_src = "none";
    if ((rc = named_path(m->o->sens, m->sidecar, m->scpath, "sens", "sens", &m->spath)) >= 0)
        return rc;
    if (!m->spath)
        return -1;
    kw_npyr *rs = &m->rs.r;
    m->sens_src = m->o->sens ? "file (--sens)" : "file (sidecar)";
    if ((st = src_open(&m->rs, m->spath)))
        return kw_cli_status(st, "sens");
    int per_slice = rs->ndim == 4 && rs->dims[0] == nc && rs->dims[1] == ns && rs->dims[2] == ny && rs->dims[3] == nx;
    int shared = (rs->ndim == 3 && rs->dims[0] == nc && rs->dims[1] == ny && rs->dims[2] == nx) ||
                 (rs->ndim == 2 && nc == 1 && rs->dims[0] == ny && rs->dims[1] == nx);
    if (!per_slice && !shared)
        return kw_cli_fail("sens", "shape must be (coils, slices, ny, nx) = (%zu, %zu, %zu, %zu) or "
                                   "(coils, ny, nx) shared by all slices", nc, ns, ny, nx);
    if (!rs->seekable && per_slice && nc > 1)
        return kw_cli_fail("sens", "maps (coils, slices, ny, nx) must come from a file, not a pipe");
    size_t sd[3] = {nc, ny, nx};
    if ((st = kw_array_alloc(&m->sens, KW_C64, 3, sd)))
        return kw_cli_status(st, "sens");
    if (shared) {
        if ((st = src_read(&m->rs, 0, nc * npix, m->sens.data)) ||
            (st = finite_block(m->sens.data, nc * npix, 0)))
            return kw_cli_status(st, "sens");
        src_close(&m->rs);
    }
    return -1;
}

/* Noise covariance (as complex) and the reference. */
static int open_cov_ref(ms_ctx *m)
{
    const kw_recon_opts *o = m->o;
    size_t nc = m->nc;
    kw_status st;
    int rc;
    if ((rc = named_path(o->noise_cov, m->sidecar, m->scpath, "noise_cov", "noise-cov", &m->cpath)) >= 0)
        return rc;
    if (m->cpath) {
        kw_array *q = &m->ncov;
        if ((st = kw_array_read(m->cpath, q)))
            return kw_cli_status(st, "noise-cov");
        if (kw_array_is_hdf5(m->cpath) && q->ndim == 3 && q->dims[0] == q->dims[1])
            kw_array_pairs_to_complex(q); /* (n, n, 2): real, imaginary */
        if (kw_array_all_finite(q))
            return kw_cli_fail("noise-cov", "%s", kw_last_error());
        if (q->ndim != 2 || q->dims[0] != nc || q->dims[1] != nc || q->dtype == KW_U8)
            return kw_cli_fail("noise-cov", "shape must be (%zu, %zu), one row and column per coil", nc, nc);
        if (q->dtype == KW_F32) {
            kw_array z = {0};
            if ((st = kw_array_alloc(&z, KW_C64, 2, q->dims)))
                return kw_cli_status(st, "noise-cov");
            for (size_t i = 0; i < nc * nc; i++)
                ((kw_cfloat *)z.data)[i] = ((const float *)q->data)[i];
            kw_array_free(q);
            *q = z;
        }
    }
    if (o->ref) {
        kw_array *ref = &m->ref;
        if ((st = kw_array_read(o->ref, ref)))
            return kw_cli_status(st, "ref");
        if (kw_array_all_finite(ref))
            return kw_cli_fail("ref", "%s", kw_last_error());
        if (ref->dtype == KW_U8)
            return kw_cli_fail("ref", "must be float or complex");
        int ok = (ref->ndim == 3 && ref->dims[0] == m->ns && ref->dims[1] == m->ny && ref->dims[2] == m->nx) ||
                 (ref->ndim == 2 && m->ns == 1 && ref->dims[0] == m->ny && ref->dims[1] == m->nx);
        if (!ok)
            return kw_cli_fail("ref", "shape must be (slices, ny, nx) = (%zu, %zu, %zu)", m->ns, m->ny, m->nx);
        m->score = kw_alloc_n(m->ns * m->npix, sizeof *m->score);
        if (!m->score)
            return kw_cli_fail("ref", "out of memory");
    }
    return kw_recon_cli_claims(m->sidecar, &m->claims, &m->stated);
}

/* The report's keys before the slices, the kw_recon every slice runs, the buffers. */
static int start(ms_ctx *m, int *kind)
{
    const kw_recon_opts *o = m->o;
    cJSON *report = m->report = cJSON_CreateObject();
    if (!report)
        return kw_cli_fail("json", "out of memory");
    cJSON_AddStringToObject(report, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(report, "kind", "recon");
    cJSON_AddStringToObject(report, "method", m->mname);
    cJSON_AddStringToObject(report, "input", o->in);
    cJSON_AddStringToObject(report, "layout", "cartesian");
    add_dims(report, "kspace_shape", m->rk.r.dims, m->rk.r.ndim);
    cJSON_AddNumberToObject(report, "coils", (double)m->nc);
    cJSON_AddBoolToObject(report, "multislice", 1);
    cJSON_AddNumberToObject(report, "slices", (double)m->ns);
    cJSON_AddNumberToObject(report, "slice_axis", m->axis);
    cJSON_AddStringToObject(report, "sens_source", m->sens_src);

    kw_recon_options ro;
    kw_recon_cli_options(o, &ro);
    ro.method = m->mname;
    ro.want_gfactor = 0;
    size_t kd[3] = {m->nc, m->ny, m->nx};
    kw_recon_geometry g = {0};
    g.ndim = 3;
    g.dims = kd;
    g.sens = m->sens.data; /* refilled per slice when streamed */
    g.sens_ndim = 3;
    g.sens_dims = kd;
    g.noise_cov = m->ncov.data;
    g.sampling = m->stated ? &m->claims : NULL;
    kw_status st = kw_recon_create(&m->r, &g, &ro);
    if (st)
        return kw_recon_cli_error(st, m->mname);
    int nd, cplx;
    size_t d[4];
    kw_recon_image_shape(m->r, &nd, d, &cplx);
    *kind = !cplx ? 1 : nd == 2 ? 2 : 3; /* 1: F32 (ns, ny, nx); 2: C64 (ns, ny, nx); 3: C64 (nc, ns, ny, nx) */
    m->kbuf = kw_alloc(m->nc * m->npix * sizeof *m->kbuf);
    m->ibuf = kw_alloc((*kind == 3 ? m->nc : 1) * m->npix * (cplx ? sizeof(kw_cfloat) : sizeof(float)));
    if (!m->kbuf || !m->ibuf)
        return kw_cli_fail("in", "out of memory");
    size_t od[4] = {m->nc, m->ns, m->ny, m->nx};
    kw_status wst = KW_OK;
    int nd_out = *kind == 3 ? 4 : 3;
    kw_dtype dt_out = *kind == 1 ? KW_F32 : KW_C64;
    if (o->out && ends_with_ci(o->out, ".nii")) {
        kw_nifti_geom ng;
        kw_nifti_geom_from_sidecar(m->sidecar, m->nx, m->ny, m->ns, 1, &ng);
        wst = kw_nifti_open(&m->w, o->out, dt_out, nd_out, od + 4 - nd_out, 3, &ng);
    } else if (o->out && kw_array_is_hdf5(o->out)) {
        char *file;
        const char *dset;
        if (!(wst = kw_array_h5_target(o->out, "/image", &file, &dset)))
            wst = kw_h5w_open(&m->h5, file, dset, dt_out, nd_out, od + 4 - nd_out);
        free(file);
    } else if (o->out) {
        wst = kw_npyw_open(&m->w, o->out, dt_out, nd_out, od + 4 - nd_out);
    }
    if (wst)
        return kw_cli_status(wst, "out");
    if (o->out && *kind == 3 && m->nc > 1 && m->ns > 1 && !m->w.seekable && !m->h5.open)
        return kw_cli_fail("out", "--keep-coils writes (coils, slices, ny, nx) in place: give a file, not a pipe");
    return -1;
}

/* Slice 0's method keys into the report (replacing the keys it repeats). */
static void merge_keys(ms_ctx *m, int kind)
{
    cJSON *sub = cJSON_CreateObject();
    if (!sub)
        return;
    kw_recon_json_add_method(sub, kw_recon_get_report(m->r), NULL, NULL);
    for (cJSON *it = sub->child; it; it = it->next)
        if (it->string) {
            if (cJSON_GetObjectItemCaseSensitive(m->report, it->string))
                cJSON_DeleteItemFromObjectCaseSensitive(m->report, it->string);
            cJSON_AddItemToObject(m->report, it->string, cJSON_Duplicate(it, 1));
        }
    cJSON_Delete(sub);
    size_t od[4] = {m->nc, m->ns, m->ny, m->nx};
    if (kind == 3)
        add_dims(m->report, "image_shape", od, 4);
    else
        add_dims(m->report, "image_shape", od + 1, 3);
}

/* The magnitude of slice s for scoring; coil images by their root-sum-of-squares. */
static void keep_score(ms_ctx *m, int kind, size_t s)
{
    float *d = m->score + s * m->npix;
    for (size_t p = 0; p < m->npix; p++) {
        if (kind == 1) {
            d[p] = ((const float *)m->ibuf)[p];
        } else if (kind == 2) {
            d[p] = cabsf(((const float complex *)m->ibuf)[p]);
        } else {
            double acc = 0;
            for (size_t c = 0; c < m->nc; c++) {
                float complex v = ((const float complex *)m->ibuf)[c * m->npix + p];
                acc += (double)crealf(v) * crealf(v) + (double)cimagf(v) * cimagf(v);
            }
            d[p] = (float)sqrt(acc);
        }
    }
}

/* Read, reconstruct and write every slice. */
static int slices(ms_ctx *m, int kind)
{
    size_t nc = m->nc, ns = m->ns, npix = m->npix;
    kw_status st;
    for (size_t s = 0; s < ns; s++) {
        kw_progress pr = {"slices", (int)s + 1, (int)ns, NAN, NULL};
        kw_cli_progress(NULL, &pr);
        if ((st = read_slice(&m->rk, m->axis, nc, ns, s, npix, m->kbuf)))
            return kw_cli_status(st, "in");
        if ((st = finite_block(m->kbuf, nc * npix, s)))
            return kw_cli_status(st, "in");
        if (src_live(&m->rs)) {
            for (size_t c = 0; c < nc; c++)
                if ((st = src_read(&m->rs, (c * ns + s) * npix, npix,
                                       (float complex *)m->sens.data + c * npix)))
                    return kw_cli_status(st, "sens");
            if ((st = finite_block(m->sens.data, nc * npix, s)))
                return kw_cli_status(st, "sens");
        }
        /* the slice count is the progress shown */
        if ((st = kw_recon_execute(m->r, m->kbuf, m->ibuf, NULL, NULL, NULL)))
            return kw_recon_cli_error(st, m->mname);
        if (s == 0 && kw_recon_get_report(m->r)->advice) /* once, from the first slice */
            fprintf(stderr, "kweave: warning: %s\n", kw_recon_get_report(m->r)->advice);
        if (s == 0)
            merge_keys(m, kind);
        if (m->o->out) {
            if (kind == 3) {
                for (size_t c = 0; c < nc; c++)
                    if ((st = out_write(m, (c * ns + s) * npix, (const float complex *)m->ibuf + c * npix,
                                        npix)))
                        return kw_cli_status(st, "out");
            } else if ((st = out_write(m, s * npix, m->ibuf, npix))) {
                return kw_cli_status(st, "out");
            }
        }
        if (m->score)
            keep_score(m, kind, s);
    }
    kw_cli_progress_done();
    return -1;
}

/* Scores, the image committed, the report. */
static int finish(ms_ctx *m)
{
    const kw_recon_opts *o = m->o;
    kw_status st;
    if (m->score) {
        /* scored as a batch of 2-D slices: (slices, 1, ny, nx), so SSIM's
         * window never reaches across slices (kw_metrics.h: leading axes are
         * a batch; an axis shorter than the window is not filtered) */
        kw_array t = {0}, r4 = m->ref;
        t.dtype = KW_F32;
        t.ndim = r4.ndim = 4;
        t.dims[0] = r4.dims[0] = m->ns;
        t.dims[1] = r4.dims[1] = 1;
        t.dims[2] = r4.dims[2] = m->ny;
        t.dims[3] = r4.dims[3] = m->nx;
        t.data = m->score;
        kw_scores sc;
        if ((st = kw_metrics_compute(&r4, &t, &sc)))
            return kw_cli_status(st, "ref");
        cJSON *j = cJSON_AddObjectToObject(m->report, "scores");
        kw_json_add_scores(j, sc.nrmse, sc.psnr_db, sc.ssim);
        cJSON_AddStringToObject(j, "ref", o->ref);
        cJSON_AddStringToObject(j, "scored_as", "2-D slices");
        if ((!o->out || strcmp(o->out, "-")) && (!o->json || strcmp(o->json, "-")))
            printf("%s: nrmse %.4f  psnr %.2f dB  ssim %.4f (%zu slices)\n", m->mname, sc.nrmse, sc.psnr_db,
                   sc.ssim, m->ns);
    }
    if (o->out) {
        if ((st = out_commit(m)))
            return kw_cli_status(st, "out");
        cJSON_AddStringToObject(m->report, "output", o->out);
    }
    if (o->json && (st = kw_json_write(o->json, m->report)))
        return kw_cli_status(st, "json");
    return -1;
}

int kw_recon_multislice(const kw_recon_opts *o, const cJSON *sidecar, const char *scpath, int axis)
{
    ms_ctx m;
    memset(&m, 0, sizeof m);
    m.o = o;
    m.sidecar = sidecar;
    m.scpath = scpath;
    m.axis = axis;
    int kind = 0, rc;
    if ((rc = open_kspace(&m)) < 0 && (rc = open_sens(&m)) < 0 && (rc = open_cov_ref(&m)) < 0 &&
        (rc = start(&m, &kind)) < 0 && (rc = slices(&m, kind)) < 0)
        rc = finish(&m);
    kw_cli_progress_done();
    kw_npyw_abort(&m.w);
    kw_h5w_abort(&m.h5);
    kw_recon_destroy(m.r);
    src_close(&m.rk);
    src_close(&m.rs);
    kw_array_free(&m.sens);
    kw_array_free(&m.ncov);
    kw_array_free(&m.ref);
    kw_free(m.kbuf);
    kw_free(m.ibuf);
    kw_free(m.score);
    free(m.spath);
    free(m.cpath);
    cJSON_Delete(m.report);
    return rc < 0 ? KW_EXIT_OK : rc;
}
