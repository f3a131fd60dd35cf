/* recon_multislice.c: `kweave recon` on multi-slice 2-D k-space.
 *
 * Multi-slice 2-D imaging excites and encodes each slice on its own, so its
 * k-space holds one independent 2-D (ky, kx) plane per slice: the image of
 * slice s is the 2-D reconstruction of plane s alone, and no transform runs
 * across the slice axis (a 3-D transform there would be wrong). The input is
 * read one slice at a time (every coil's plane of that slice) through
 * cli/npystream.h and each finished slice image is written at once, so peak
 * memory is one slice's working set plus, with --ref, the image being scored,
 * whatever the number of slices (measured in docs/multislice.md). The
 * default fft + root-sum-of-squares path makes its FFTW plan once for all
 * slices; the other methods make theirs per slice from the wisdom FFTW keeps
 * after the first (their run functions own their plans).
 *
 * Layouts: (coils, slices, ny, nx) (slice axis 1, what `kweave encode
 * --slices` writes), (slices, coils, ny, nx) (axis 0) or (slices, ny, nx) for
 * one channel. A pipe can only be read forwards, so on standard input only
 * the slice-major layouts stream; (coils, slices, ny, nx) is refused there.
 * Maps: (coils, slices, ny, nx), streamed the same way, or (coils, ny, nx)
 * shared by all slices. Output: (slices, ny, nx) float32, or with
 * --keep-coils (coils, slices, ny, nx) complex64 (written in place, so the
 * target must be a file). */
#include "recon_multislice.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "jsonio.h"
#include "kw_fft.h"
#include "kw_metrics.h"
#include "kw_rssrecon.h"
#include "npy.h"
#include "npystream.h"
#include "recon_cart.h"

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

/* Element offset of coil c, slice s in a 4-D layout with the slice axis. */
static size_t plane_at(int axis, size_t nc, size_t ns, size_t c, size_t s, size_t npix)
{
    return (axis == 1 ? c * ns + s : s * nc + c) * npix;
}

/* Every coil's plane of slice s into buf (nc, npix). */
static kw_status read_slice(kw_npyr *r, int axis, size_t nc, size_t ns, size_t s, size_t npix,
                            float complex *buf)
{
    if (axis == 0) /* slice-major: one contiguous block */
        return kw_npyr_read(r, s * nc * npix, nc * npix, buf);
    for (size_t c = 0; c < nc; c++) {
        kw_status st = kw_npyr_read(r, plane_at(axis, nc, ns, c, s, npix), npix, buf + c * npix);
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

/* The default method (fft, root-sum-of-squares, coils not kept) with one
 * kw_rssrecon plan made for the first slice and reused for all: the same
 * set-up and fused transform as recon_fft.c, which makes its plan per call. */
static kw_status fft_rss_slice(kw_recon_job *job, kw_rssrecon **plan)
{
    kw_cart c;
    kw_status st = kw_cart_setup(job, &c);
    if (!st && !*plan)
        st = kw_rssrecon_create(plan, 2, c.d + 1, c.nc, KW_FFT_MEASURE);
    if (!st)
        st = kw_array_alloc(&job->image, KW_F32, 2, c.d + 1);
    if (!st)
        st = kw_rssrecon_execute(*plan, c.k, job->image.data);
    if (!st)
        cJSON_AddStringToObject(job->report, "combine", "rss");
    kw_cart_free(&c);
    return st;
}

int kw_recon_multislice(const kw_recon_opts *o, const cJSON *sidecar, const char *scpath, int axis)
{
    int ec = KW_EXIT_OK, rc;
    kw_status st;
    kw_npyr rk, rs;
    kw_npyw w;
    memset(&rk, 0, sizeof rk);
    memset(&rs, 0, sizeof rs);
    memset(&w, 0, sizeof w);
    kw_array ref = {0}, ncov = {0}, shared_sens = {0};
    float complex *kbuf = NULL;
    float *score = NULL;
    char *spath = NULL, *cpath = NULL;
    cJSON *report = NULL, *sub_report = NULL;
    kw_rssrecon *plan = NULL;
    kw_recon_job sub;
    memset(&sub, 0, sizeof sub);
#define FAIL(expr)                                                             \
    do {                                                                       \
        ec = (expr);                                                           \
        goto done;                                                             \
    } while (0)

    const cJSON *lay = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "layout") : NULL;
    const cJSON *tj = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "trajectory") : NULL;
    if (o->trajectory || (tj && cJSON_IsString(tj)) ||
        (lay && cJSON_IsString(lay) && strcmp(lay->valuestring, "noncartesian") == 0))
        FAIL(kw_cli_fail("slices", "multi-slice reconstruction takes Cartesian data only (no trajectory)"));
    if (o->gfactor)
        FAIL(kw_cli_fail("gfactor", "not with multi-slice input (run one slice on its own for a g-factor map)"));
    if (o->out && !ends_with_ci(o->out, ".npy") && strcmp(o->out, "-") != 0)
        FAIL(kw_cli_fail("out", "'%s': multi-slice images are written as .npy (slices, ny, nx)", o->out));

    const char *mname = o->method ? o->method : "fft";
    const kw_recon_method *m = kw_recon_method_find(mname);
    if (!m)
        FAIL(kw_cli_fail("method", "'%s' is not a method (see kweave recon --help)", mname));
    if (!m->cartesian)
        FAIL(kw_cli_fail("method", "%s takes non-Cartesian data only; multi-slice data are Cartesian", mname));

    if ((st = kw_npyr_open(&rk, o->in)))
        FAIL(kw_cli_status(st, "in"));
    if (rk.ndim != 3 && rk.ndim != 4)
        FAIL(kw_cli_fail("in", "multi-slice k-space must be (coils, slices, ny, nx), (slices, coils, ny, nx) "
                               "or (slices, ny, nx); got %d dimensions", rk.ndim));
    const cJSON *sl = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "slices") : NULL;
    if (axis < 0)
        axis = rk.ndim == 4 ? 1 : 0;
    if (rk.ndim == 3 && axis != 0)
        FAIL(kw_cli_fail("slices", "a 3-D input is one channel (slices, ny, nx): the slice axis is 0"));
    size_t nc = rk.ndim == 4 ? rk.dims[axis == 1 ? 0 : 1] : 1;
    size_t ns = rk.dims[axis], ny = rk.dims[rk.ndim - 2], nx = rk.dims[rk.ndim - 1], npix = ny * nx;
    if (sl) {
        const cJSON *cnt = cJSON_IsObject(sl) ? cJSON_GetObjectItemCaseSensitive(sl, "count") : NULL;
        if (!cnt || !cJSON_IsNumber(cnt) || !(cnt->valuedouble >= 1) || cnt->valuedouble != floor(cnt->valuedouble))
            FAIL(kw_cli_fail("sidecar", "\"slices\" must be an object with a whole \"count\" >= 1"));
        if ((size_t)cnt->valuedouble != ns)
            FAIL(kw_cli_fail("slices", "the sidecar says %.0f slices but axis %d of the input holds %zu",
                             cnt->valuedouble, axis, ns));
    }
    if (ns < 1)
        FAIL(kw_cli_fail("in", "no slices (axis %d has length 0)", axis));
    if (nc < 1 || nc > 256)
        FAIL(kw_cli_fail("in", "%zu coils (1 .. 256 supported)", nc));
    if (ny < 2 || nx < 2)
        FAIL(kw_cli_fail("in", "each slice is %zu x %zu (at least 2 x 2 needed)", ny, nx));
    if (!rk.seekable && axis == 1 && nc > 1)
        FAIL(kw_cli_fail("in", "a pipe cannot be read slice by slice in the layout (coils, slices, ny, nx); "
                               "give a file, or send (slices, coils, ny, nx) with --slices 0"));
    /* one slice's working set: the block read, the method's copies and its
     * coil images (about six slice blocks; an estimate, no source) */
    size_t block = nc * npix * sizeof(float complex);
    if (block > kw_cli_memory_limit() / 6)
        FAIL(kw_cli_fail("in", "one slice (%zu coils x %zu x %zu) needs about %.3g MiB to reconstruct, "
                               "above the limit (--max-memory)", nc, ny, nx, 6.0 * (double)block / 1048576.0));

    /* sensitivities: (coils, slices, ny, nx) streamed, or (coils, ny, nx) shared */
    const char *sens_src = "none";
    if ((rc = named_path(o->sens, sidecar, scpath, "sens", "sens", &spath)) >= 0)
        FAIL(rc);
    if (spath) {
        sens_src = o->sens ? "file (--sens)" : "file (sidecar)";
        if ((st = kw_npyr_open(&rs, spath)))
            FAIL(kw_cli_status(st, "sens"));
        int per_slice = rs.ndim == 4 && rs.dims[0] == nc && rs.dims[1] == ns && rs.dims[2] == ny && rs.dims[3] == nx;
        int shared = (rs.ndim == 3 && rs.dims[0] == nc && rs.dims[1] == ny && rs.dims[2] == nx) ||
                     (rs.ndim == 2 && nc == 1 && rs.dims[0] == ny && rs.dims[1] == nx);
        if (!per_slice && !shared)
            FAIL(kw_cli_fail("sens", "shape must be (coils, slices, ny, nx) = (%zu, %zu, %zu, %zu) or "
                                     "(coils, ny, nx) shared by all slices", nc, ns, ny, nx));
        if (!rs.seekable && per_slice && nc > 1)
            FAIL(kw_cli_fail("sens", "maps (coils, slices, ny, nx) must come from a file, not a pipe"));
        size_t sd[3] = {nc, ny, nx};
        if ((st = kw_array_alloc(&shared_sens, KW_C64, 3, sd)))
            FAIL(kw_cli_status(st, "sens"));
        if (shared) {
            if ((st = kw_npyr_read(&rs, 0, nc * npix, shared_sens.data)) ||
                (st = finite_block(shared_sens.data, nc * npix, 0)))
                FAIL(kw_cli_status(st, "sens"));
            kw_npyr_close(&rs);
        }
    }
    if ((rc = named_path(o->noise_cov, sidecar, scpath, "noise_cov", "noise-cov", &cpath)) >= 0)
        FAIL(rc);
    if (cpath) {
        if ((st = kw_npy_read(cpath, &ncov)))
            FAIL(kw_cli_status(st, "noise-cov"));
        if (kw_array_all_finite(&ncov))
            FAIL(kw_cli_fail("noise-cov", "%s", kw_last_error()));
        if (ncov.ndim != 2 || ncov.dims[0] != nc || ncov.dims[1] != nc || ncov.dtype == KW_U8)
            FAIL(kw_cli_fail("noise-cov", "shape must be (%zu, %zu), one row and column per coil", nc, nc));
    }
    if (o->ref) {
        if ((st = kw_npy_read(o->ref, &ref)))
            FAIL(kw_cli_status(st, "ref"));
        if (kw_array_all_finite(&ref))
            FAIL(kw_cli_fail("ref", "%s", kw_last_error()));
        if (ref.dtype == KW_U8)
            FAIL(kw_cli_fail("ref", "must be float or complex"));
        int ok = (ref.ndim == 3 && ref.dims[0] == ns && ref.dims[1] == ny && ref.dims[2] == nx) ||
                 (ref.ndim == 2 && ns == 1 && ref.dims[0] == ny && ref.dims[1] == nx);
        if (!ok)
            FAIL(kw_cli_fail("ref", "shape must be (slices, ny, nx) = (%zu, %zu, %zu)", ns, ny, nx));
        score = malloc(ns * npix * sizeof *score);
        if (!score)
            FAIL(kw_cli_fail("ref", "out of memory"));
    }

    report = cJSON_CreateObject();
    if (!report)
        FAIL(kw_cli_fail("json", "out of memory"));
    cJSON_AddStringToObject(report, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(report, "kind", "recon");
    cJSON_AddStringToObject(report, "method", mname);
    cJSON_AddStringToObject(report, "input", o->in);
    cJSON_AddStringToObject(report, "layout", "cartesian");
    add_dims(report, "kspace_shape", rk.dims, rk.ndim);
    cJSON_AddNumberToObject(report, "coils", (double)nc);
    cJSON_AddBoolToObject(report, "multislice", 1);
    cJSON_AddNumberToObject(report, "slices", (double)ns);
    cJSON_AddNumberToObject(report, "slice_axis", axis);
    cJSON_AddStringToObject(report, "sens_source", sens_src);

    kbuf = kw_alloc(block);
    if (!kbuf)
        FAIL(kw_cli_fail("in", "out of memory"));

    sub.opt = o;
    sub.sidecar = sidecar;
    sub.progress = NULL; /* the slice count is the progress shown */
    sub.ksp.dtype = KW_C64;
    sub.ksp.ndim = 3;
    sub.ksp.dims[0] = nc;
    sub.ksp.dims[1] = ny;
    sub.ksp.dims[2] = nx;
    sub.ksp.data = kbuf;
    if (shared_sens.data)
        sub.sens = shared_sens; /* borrowed: sub.sens is never freed here */
    if (ncov.data)
        sub.noise_cov = ncov;
    int out_kind = 0; /* 1: F32 (ns, ny, nx); 2: C64 (ns, ny, nx); 3: C64 (nc, ns, ny, nx) */
    for (size_t s = 0; s < ns; s++) {
        kw_progress pr = {"slices", (int)s + 1, (int)ns, NAN};
        kw_cli_progress(NULL, &pr);
        if ((st = read_slice(&rk, axis, nc, ns, s, npix, kbuf)))
            FAIL(kw_cli_status(st, "in"));
        if ((st = finite_block(kbuf, nc * npix, s)))
            FAIL(kw_cli_status(st, "in"));
        if (rs.fp) {
            for (size_t c = 0; c < nc; c++)
                if ((st = kw_npyr_read(&rs, (c * ns + s) * npix, npix,
                                       (float complex *)shared_sens.data + c * npix)))
                    FAIL(kw_cli_status(st, "sens"));
            if ((st = finite_block(shared_sens.data, nc * npix, s)))
                FAIL(kw_cli_status(st, "sens"));
        }
        sub_report = cJSON_CreateObject();
        if (!sub_report)
            FAIL(kw_cli_fail("json", "out of memory"));
        sub.report = sub_report;
        int fused = strcmp(mname, "fft") == 0 && !o->keep_coils && (!o->combine || strcmp(o->combine, "rss") == 0);
        st = fused ? fft_rss_slice(&sub, &plan) : m->run(&sub);
        if (st)
            FAIL(kw_cli_status(st, mname));
        const kw_array *im = &sub.image;
        int kind = 0;
        if (im->dtype == KW_F32 && im->ndim == 2)
            kind = 1;
        else if (im->dtype == KW_C64 && im->ndim == 2)
            kind = 2;
        else if (im->dtype == KW_C64 && im->ndim == 3 && im->dims[0] == nc)
            kind = 3;
        if (!kind || im->dims[im->ndim - 2] != ny || im->dims[im->ndim - 1] != nx)
            FAIL(kw_cli_fail(mname, "internal: slice %zu's image has an unexpected shape", s));
        if (kw_array_all_finite(im))
            FAIL(kw_cli_fail(mname, "slice %zu: the reconstruction is not finite (%s); try --lambda", s,
                             kw_last_error()));
        if (s == 0) {
            out_kind = kind;
            /* the method's keys (sampling, combine, sens_source, ...) from slice 0 */
            for (cJSON *it = sub_report->child; it; it = it->next)
                if (it->string) {
                    if (cJSON_GetObjectItemCaseSensitive(report, it->string))
                        cJSON_DeleteItemFromObjectCaseSensitive(report, it->string);
                    cJSON_AddItemToObject(report, it->string, cJSON_Duplicate(it, 1));
                }
            size_t od[4] = {nc, ns, ny, nx};
            if (kind == 3)
                add_dims(report, "image_shape", od, 4);
            else
                add_dims(report, "image_shape", od + 1, 3);
            if (o->out) {
                if ((st = kind == 3 ? kw_npyw_open(&w, o->out, KW_C64, 4, od)
                                    : kw_npyw_open(&w, o->out, kind == 1 ? KW_F32 : KW_C64, 3, od + 1)))
                    FAIL(kw_cli_status(st, "out"));
                if (kind == 3 && nc > 1 && ns > 1 && !w.seekable)
                    FAIL(kw_cli_fail("out", "--keep-coils writes (coils, slices, ny, nx) in place: give a file, not a pipe"));
            }
        } else if (kind != out_kind) {
            FAIL(kw_cli_fail(mname, "internal: slice %zu's image differs in kind from slice 0's", s));
        }
        if (o->out) {
            if (kind == 3) {
                for (size_t c = 0; c < nc; c++)
                    if ((st = kw_npyw_write(&w, (c * ns + s) * npix,
                                            (const float complex *)im->data + c * npix, npix)))
                        FAIL(kw_cli_status(st, "out"));
            } else if ((st = kw_npyw_write(&w, s * npix, im->data, npix))) {
                FAIL(kw_cli_status(st, "out"));
            }
        }
        if (score) { /* magnitude; coil images scored by their root-sum-of-squares */
            float *d = score + s * npix;
            for (size_t p = 0; p < npix; p++) {
                if (kind == 1) {
                    d[p] = ((const float *)im->data)[p];
                } else if (kind == 2) {
                    d[p] = cabsf(((const float complex *)im->data)[p]);
                } else {
                    double acc = 0;
                    for (size_t c = 0; c < nc; c++) {
                        float complex v = ((const float complex *)im->data)[c * npix + p];
                        acc += (double)crealf(v) * crealf(v) + (double)cimagf(v) * cimagf(v);
                    }
                    d[p] = (float)sqrt(acc);
                }
            }
        }
        kw_array_free(&sub.image);
        kw_array_free(&sub.gfactor);
        cJSON_Delete(sub_report);
        sub_report = NULL;
        sub.report = NULL;
    }
    kw_cli_progress_done();
    {
        /* a method that estimated its maps replaces "sens_source": keep one */
        int nsrc = 0;
        for (cJSON *it = report->child; it; it = it->next)
            nsrc += it->string && strcmp(it->string, "sens_source") == 0;
        if (nsrc > 1)
            cJSON_DeleteItemFromObjectCaseSensitive(report, "sens_source");
    }

    if (score) {
        /* scored as a batch of 2-D slices: (slices, 1, ny, nx), so SSIM's
         * window never reaches across slices (kw_metrics.h: leading axes are
         * a batch; an axis shorter than the window is not filtered) */
        kw_array t = {0}, r4 = ref;
        t.dtype = KW_F32;
        t.ndim = r4.ndim = 4;
        t.dims[0] = r4.dims[0] = ns;
        t.dims[1] = r4.dims[1] = 1;
        t.dims[2] = r4.dims[2] = ny;
        t.dims[3] = r4.dims[3] = nx;
        t.data = score;
        kw_scores sc;
        if ((st = kw_metrics_compute(&r4, &t, &sc)))
            FAIL(kw_cli_status(st, "ref"));
        cJSON *j = cJSON_AddObjectToObject(report, "scores");
        kw_json_add_scores(j, sc.nrmse, sc.psnr_db, sc.ssim);
        cJSON_AddStringToObject(j, "ref", o->ref);
        cJSON_AddStringToObject(j, "scored_as", "2-D slices");
        if ((!o->out || strcmp(o->out, "-")) && (!o->json || strcmp(o->json, "-")))
            printf("%s: nrmse %.4f  psnr %.2f dB  ssim %.4f (%zu slices)\n", mname, sc.nrmse, sc.psnr_db,
                   sc.ssim, ns);
    }
    if (o->out) {
        if ((st = kw_npyw_commit(&w)))
            FAIL(kw_cli_status(st, "out"));
        cJSON_AddStringToObject(report, "output", o->out);
    }
    if (o->json && (st = kw_json_write(o->json, report)))
        FAIL(kw_cli_status(st, "json"));

done:
    kw_cli_progress_done();
    kw_npyw_abort(&w);
    kw_rssrecon_destroy(plan);
    kw_npyr_close(&rk);
    kw_npyr_close(&rs);
    kw_array_free(&sub.image);
    kw_array_free(&sub.gfactor);
    cJSON_Delete(sub_report);
    kw_array_free(&shared_sens);
    kw_array_free(&ncov);
    kw_array_free(&ref);
    kw_free(kbuf);
    free(score);
    free(spath);
    free(cpath);
    cJSON_Delete(report);
    return ec;
#undef FAIL
}
