/* cmd_recon.c: `kweave recon`: k-space (+ sidecar, maps, noise covariance,
 * trajectory) -> image, by the method asked for; optional scores against a
 * reference and a g-factor map. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "jsonio.h"
#include "kw_metrics.h"
#include "npy.h"
#include "png.h"
#include "recon_cli.h"
#include "recon_cart.h"
#include "recon_multislice.h"

static const char USAGE[] =
    "usage: kweave recon --in KS.npy --out IMG.npy|IMG.png [--method M] [options]\n"
    "\n"
    "Reconstructs k-space (coils, [nz,] ny, nx) or non-Cartesian samples\n"
    "(coils, samples) with a trajectory. The sidecar KS.json is read when\n"
    "present (trajectory, maps, noise covariance, acceleration). Multi-slice\n"
    "2-D k-space (the sidecar's \"slices\", or --slices AXIS) is reconstructed\n"
    "slice by slice from the file into (slices, ny, nx). Methods:";

static int ends_with(const char *s, const char *suf)
{
    size_t n = strlen(s), m = strlen(suf);
    return n >= m && strcasecmp(s + n - m, suf) == 0;
}

/* A path from the sidecar is relative to the sidecar's directory. */
char *kw_recon_sidecar_rel(const char *sidecar, const char *name)
{
    if (name[0] == '/' || !strchr(sidecar, '/'))
        return strdup(name);
    size_t dl = (size_t)(strrchr(sidecar, '/') - sidecar) + 1;
    char *p = malloc(dl + strlen(name) + 1);
    if (p) {
        memcpy(p, sidecar, dl);
        strcpy(p + dl, name);
    }
    return p;
}

/* Read a file named by an option or, failing that, by the sidecar key. */
static int read_named(const char *opt_path, const cJSON *sc, const char *scpath,
                      const char *key, const char *field, kw_array *out)
{
    char *path = NULL;
    if (opt_path) {
        path = strdup(opt_path);
    } else if (sc) {
        const cJSON *j = cJSON_GetObjectItemCaseSensitive(sc, key);
        if (j && cJSON_IsString(j) && j->valuestring[0])
            path = kw_recon_sidecar_rel(scpath, j->valuestring);
        else if (j && !cJSON_IsNull(j) && !cJSON_IsString(j))
            return kw_cli_fail(field, "sidecar key \"%s\" is not a file name", key);
    }
    if (!path)
        return -1;
    kw_status st = kw_npy_read(path, out);
    if (st) {
        int rc = kw_cli_status(st, field);
        free(path);
        return rc;
    }
    free(path);
    if (kw_array_all_finite(out))
        return kw_cli_fail(field, "%s", kw_last_error());
    return -1;
}

static int parse_kernel(const char *s, int k[2])
{
    int a, b, n = 0;
    if (sscanf(s, "%dx%d%n", &a, &b, &n) != 2 || s[n] || a < 1 || b < 1 || a > 16 || b > 31)
        return kw_cli_fail("kernel", "'%s' is not KYxKX with 1 <= KY <= 16, 1 <= KX <= 31", s);
    k[0] = a;
    k[1] = b;
    return -1;
}

static kw_status write_image(const char *path, const kw_array *a)
{
    if (ends_with(path, ".png")) {
        kw_png_opts po;
        kw_png_opts_default(&po);
        return kw_png_write_array(path, a, &po);
    }
    return kw_npy_write(path, a);
}

static void add_shape(cJSON *r, const char *key, const kw_array *a)
{
    double v[KW_MAX_DIMS];
    for (int i = 0; i < a->ndim; i++)
        v[i] = (double)a->dims[i];
    kw_json_add_vec(r, key, v, a->ndim);
}

int kw_cmd_recon(int argc, char **argv)
{
    kw_recon_opts o;
    memset(&o, 0, sizeof o);
    o.lambda = o.stop = o.tolerance = o.oversampling = NAN;
    o.seed = 1;
    int seen_seed = 0, seen_rep = 0, seen_slices = 0;
    long slice_axis = -1;
    const char *sens_out = NULL;
    const kw_opt table[] = {
        {"in", KW_OPT_STRING, &o.in, 0, NULL, "k-space .npy (- for stdin)"},
        {"out", KW_OPT_STRING, &o.out, 0, NULL, "image: .npy (float32, or complex64 with --keep-coils) or .png"},
        {"method", KW_OPT_STRING, &o.method, 0, NULL, "fft (Cartesian default), homodyne, pocs, sense, grappa, grid, ..."},
        {"combine", KW_OPT_STRING, &o.combine, 0, NULL, "coil combination: rss (default), optimal, adaptive"},
        {"sens", KW_OPT_STRING, &o.sens, 0, NULL, "coil sensitivities .npy (coils, [nz,] ny, nx)"},
        {"sens-out", KW_OPT_STRING, &sens_out, 0, NULL, "write the sensitivities estimated from the calibration block (.npy)"},
        {"noise-cov", KW_OPT_STRING, &o.noise_cov, 0, NULL, "coil noise covariance .npy (coils, coils): prewhitening"},
        {"kernel", KW_OPT_STRING, &o.kernel, 0, NULL, "GRAPPA kernel KYxKX (source lines x readout points; default 2x5)"},
        {"lambda", KW_OPT_DOUBLE, &o.lambda, 0, NULL, "regularisation weight (relative; method-specific default)"},
        {"ref", KW_OPT_STRING, &o.ref, 0, NULL, "reference image .npy: adds NRMSE, PSNR, SSIM to the report"},
        {"json", KW_OPT_STRING, &o.json, 0, NULL, "JSON report file (- for stdout)"},
        {"gfactor", KW_OPT_STRING, &o.gfactor, 0, NULL, "g-factor map .png or .npy"},
        {"trajectory", KW_OPT_STRING, &o.trajectory, 0, NULL, "non-Cartesian trajectory .npy (samples, ndim), cycles/FOV"},
        {"dcf", KW_OPT_STRING, &o.dcf, 0, NULL, "density compensation: FILE.npy, radial or pipe"},
        {"dcf-out", KW_OPT_STRING, &o.dcf_out, 0, NULL, "write the density weights used (.npy, one per sample)"},
        {"tolerance", KW_OPT_DOUBLE, &o.tolerance, 0, NULL, "NUFFT accuracy"},
        {"oversampling", KW_OPT_DOUBLE, &o.oversampling, 0, NULL, "NUFFT grid oversampling"},
        {"iterations", KW_OPT_INT, &o.iterations, 0, NULL, "iterations of iterative methods"},
        {"stop", KW_OPT_DOUBLE, &o.stop, 0, NULL, "stop when the relative change falls below this"},
        {"keep-coils", KW_OPT_FLAG, &o.keep_coils, 0, NULL, "write the coil images (complex64) instead of combining"},
        {"replicas", KW_OPT_INT, &o.replicas, 0, &seen_rep, "pseudo-replicas for --gfactor (default 50; forces the pseudo-replica map)"},
        {"seed", KW_OPT_INT, &o.seed, 0, &seen_seed, "seed of the pseudo-replica noise (default 1)"},
        {"slices", KW_OPT_INT, &slice_axis, 0, &seen_slices,
         "multi-slice 2-D input: the slice axis (1: (coils, slices, ny, nx), 0: (slices, [coils,] ny, nx));"
         " default from the sidecar's \"slices\""},
        {NULL, 0, NULL, 0, NULL, NULL},
    };
    char usage[2048];
    size_t ul = (size_t)snprintf(usage, sizeof usage, "%s", USAGE);
    for (const kw_recon_method *m = kw_recon_methods; m->name && ul < sizeof usage; m++)
        ul += (size_t)snprintf(usage + ul, sizeof usage - ul, "\n  %-11s %s", m->name, m->summary);
    int rc = kw_opts_parse(argc, argv, table, usage, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (!o.in)
        return kw_cli_fail("in", "missing (--in KS.npy)");
    if (!o.out && !o.json)
        return kw_cli_fail("out", "missing (--out IMG.npy or IMG.png)");
    if (o.out && !ends_with(o.out, ".npy") && !ends_with(o.out, ".png") && strcmp(o.out, "-") != 0)
        return kw_cli_fail("out", "'%s': give a .npy or .png file name", o.out);
    if (o.gfactor && !ends_with(o.gfactor, ".npy") && !ends_with(o.gfactor, ".png"))
        return kw_cli_fail("gfactor", "'%s': give a .npy or .png file name", o.gfactor);
    if (o.combine && strcmp(o.combine, "rss") && strcmp(o.combine, "optimal") &&
        strcmp(o.combine, "adaptive"))
        return kw_cli_fail("combine", "'%s' is not rss, optimal or adaptive", o.combine);
    if (o.kernel && (rc = parse_kernel(o.kernel, o.kernel_yx)) >= 0)
        return rc;
    if (!isnan(o.lambda) && !(o.lambda >= 0 && o.lambda < 1e6))
        return kw_cli_fail("lambda", "must be >= 0 (got %g)", o.lambda);
    if (o.iterations < 0 || o.iterations > 100000)
        return kw_cli_fail("iterations", "must be 1 .. 100000");
    if (!isnan(o.stop) && !(o.stop >= 0 && o.stop < 1))
        return kw_cli_fail("stop", "must be in [0, 1)");
    if (!isnan(o.tolerance) && !(o.tolerance > 0 && o.tolerance < 1))
        return kw_cli_fail("tolerance", "must be in (0, 1)");
    if (!isnan(o.oversampling) && !(o.oversampling >= 1 && o.oversampling <= 4))
        return kw_cli_fail("oversampling", "must be in [1, 4]");
    if (seen_rep && (o.replicas < 2 || o.replicas > 10000))
        return kw_cli_fail("replicas", "must be 2 .. 10000");
    if (seen_seed && o.seed < 0)
        return kw_cli_fail("seed", "must be >= 0");
    (void)seen_seed;

    if (sens_out && !ends_with(sens_out, ".npy"))
        return kw_cli_fail("sens-out", "'%s': give a .npy file name", sens_out);
    kw_cart_sens_out = sens_out;
    kw_recon_job job;
    memset(&job, 0, sizeof job);
    job.opt = &o;
    job.progress = kw_cli_progress;
    cJSON *sidecar = NULL;
    char *scpath = NULL;
    kw_array ref = {0};
    int exit_code = KW_EXIT_OK;
#define FAIL(expr)                                                             \
    do {                                                                       \
        exit_code = (expr);                                                    \
        goto done;                                                             \
    } while (0)

    kw_status st;
    if (seen_slices && (slice_axis < 0 || slice_axis > 1))
        FAIL(kw_cli_fail("slices", "the slice axis must be 0 or 1 (got %ld)", slice_axis));
    if (strcmp(o.in, "-") != 0 && (scpath = kw_sidecar_path(o.in)) && access(scpath, F_OK) == 0) {
        if ((st = kw_json_read(scpath, &sidecar)))
            FAIL(kw_cli_status(st, "sidecar"));
        if (!cJSON_IsObject(sidecar))
            FAIL(kw_cli_fail("sidecar", "%s: not a JSON object", scpath));
        const cJSON *kind = cJSON_GetObjectItemCaseSensitive(sidecar, "kind");
        if (kind && (!cJSON_IsString(kind) || strcmp(kind->valuestring, "kspace") != 0))
            FAIL(kw_cli_fail("kind", "%s: the sidecar describes \"%s\", not k-space", scpath,
                             cJSON_IsString(kind) ? kind->valuestring : "?"));
    }
    /* Multi-slice 2-D: streamed slice by slice, never read whole. */
    if (seen_slices || (sidecar && cJSON_GetObjectItemCaseSensitive(sidecar, "slices"))) {
        if (sens_out)
            FAIL(kw_cli_fail("sens-out", "not with multi-slice input (the maps are per slice)"));
        FAIL(kw_recon_multislice(&o, sidecar, scpath, seen_slices ? (int)slice_axis : -1));
    }
    st = kw_npy_read(o.in, &job.ksp);
    if (st)
        FAIL(kw_cli_status(st, "in"));
    if (job.ksp.dtype != KW_C64)
        FAIL(kw_cli_fail("in", "k-space must be complex (complex64 or complex128)"));
    if (kw_array_all_finite(&job.ksp))
        FAIL(kw_cli_fail("in", "%s", kw_last_error()));
    /* The sidecar must describe this array: its "shape" is the array's. */
    const cJSON *shp = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "shape") : NULL;
    if (shp) {
        int ok = cJSON_IsArray(shp) && cJSON_GetArraySize(shp) == job.ksp.ndim;
        for (int i = 0; ok && i < job.ksp.ndim; i++) {
            const cJSON *e = cJSON_GetArrayItem(shp, i);
            ok = cJSON_IsNumber(e) && e->valuedouble == (double)job.ksp.dims[i];
        }
        if (!ok)
            FAIL(kw_cli_fail("shape", "%s: the sidecar's shape does not match the k-space array "
                             "(the sidecar belongs to another file?)", scpath));
    }
    job.sidecar = sidecar;

    /* Layout: a trajectory (option or sidecar) means non-Cartesian. */
    const cJSON *lay = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "layout") : NULL;
    if ((rc = read_named(o.trajectory, sidecar, scpath, "trajectory", "trajectory", &job.traj)) >= 0)
        FAIL(rc);
    int noncart = job.traj.data != NULL;
    if (o.dcf_out && !noncart)
        FAIL(kw_cli_fail("dcf-out", "density weights exist only for non-Cartesian data (a trajectory)"));
    if (o.dcf_out && !ends_with(o.dcf_out, ".npy"))
        FAIL(kw_cli_fail("dcf-out", "'%s': give a .npy file name", o.dcf_out));
    if (!noncart && lay && cJSON_IsString(lay) && strcmp(lay->valuestring, "noncartesian") == 0)
        FAIL(kw_cli_fail("trajectory", "the sidecar says non-Cartesian but names no trajectory (give --trajectory)"));
    if (noncart) {
        if (job.traj.dtype != KW_F32 || job.traj.ndim != 2 || job.traj.dims[1] < 1 || job.traj.dims[1] > 3)
            FAIL(kw_cli_fail("trajectory", "must be real (samples, ndim) with ndim 1-3"));
        if (job.ksp.ndim == 1) {
            job.ksp.dims[1] = job.ksp.dims[0];
            job.ksp.dims[0] = 1;
            job.ksp.ndim = 2;
        }
        if (job.ksp.ndim != 2 || job.ksp.dims[1] != job.traj.dims[0])
            FAIL(kw_cli_fail("in", "non-Cartesian k-space must be (coils, samples) with %zu samples (the trajectory's)",
                             job.traj.dims[0]));
    } else {
        int single3d = 0;
        const cJSON *mat = sidecar ? cJSON_GetObjectItemCaseSensitive(sidecar, "matrix") : NULL;
        if (job.ksp.ndim == 3 && mat && cJSON_GetArraySize(mat) == 3)
            single3d = 1;
        if (job.ksp.ndim == 2 || single3d) {
            for (int i = job.ksp.ndim; i > 0; i--)
                job.ksp.dims[i] = job.ksp.dims[i - 1];
            job.ksp.dims[0] = 1;
            job.ksp.ndim++;
        }
        if (job.ksp.ndim < 3 || job.ksp.ndim > 4)
            FAIL(kw_cli_fail("in", "Cartesian k-space must be (ny, nx), (coils, ny, nx) or (coils, nz, ny, nx); got %d dimensions",
                             job.ksp.ndim));
        for (int i = 1; i < job.ksp.ndim; i++)
            if (job.ksp.dims[i] < 2)
                FAIL(kw_cli_fail("in", "axis %d has %zu samples (at least 2 needed)", i, job.ksp.dims[i]));
    }
    if (job.ksp.dims[0] < 1 || job.ksp.dims[0] > 256)
        FAIL(kw_cli_fail("in", "%zu coils (1 .. 256 supported)", job.ksp.dims[0]));
    if ((rc = read_named(o.sens, sidecar, scpath, "sens", "sens", &job.sens)) >= 0)
        FAIL(rc);
    if (job.sens.data && (job.sens.dtype != KW_C64 || job.sens.dims[0] != job.ksp.dims[0]))
        FAIL(kw_cli_fail("sens", "must be complex with one map per coil (%zu coils)", job.ksp.dims[0]));
    if (job.sens.data && !noncart && job.sens.ndim == job.ksp.ndim - 1 && job.ksp.dims[0] == 1) {
        for (int i = job.sens.ndim; i > 0; i--)
            job.sens.dims[i] = job.sens.dims[i - 1];
        job.sens.dims[0] = 1;
        job.sens.ndim++;
    }
    if (job.sens.data && !noncart) {
        int ok = job.sens.ndim == job.ksp.ndim;
        for (int i = 0; ok && i < job.ksp.ndim; i++)
            ok = job.sens.dims[i] == job.ksp.dims[i];
        if (!ok)
            FAIL(kw_cli_fail("sens", "shape must equal the k-space shape (coils, [nz,] ny, nx)"));
    }
    if ((rc = read_named(o.noise_cov, sidecar, scpath, "noise_cov", "noise-cov", &job.noise_cov)) >= 0)
        FAIL(rc);
    if (job.noise_cov.data && (job.noise_cov.ndim != 2 || job.noise_cov.dims[0] != job.ksp.dims[0] ||
                               job.noise_cov.dims[1] != job.ksp.dims[0] || job.noise_cov.dtype == KW_U8))
        FAIL(kw_cli_fail("noise-cov", "shape must be (%zu, %zu), one row and column per coil",
                         job.ksp.dims[0], job.ksp.dims[0]));

    const char *mname = o.method ? o.method : noncart ? "grid" : "fft";
    const kw_recon_method *m = kw_recon_method_find(mname);
    if (!m)
        FAIL(kw_cli_fail("method", "'%s' is not a method (see kweave recon --help)", mname));
    if (noncart && !m->noncartesian)
        FAIL(kw_cli_fail("method", "%s takes Cartesian data only; this input has a trajectory", mname));
    if (!noncart && !m->cartesian)
        FAIL(kw_cli_fail("method", "%s takes non-Cartesian data only (give --trajectory)", mname));
    if (o.ref) {
        if ((st = kw_npy_read(o.ref, &ref)))
            FAIL(kw_cli_status(st, "ref"));
        if (kw_array_all_finite(&ref))
            FAIL(kw_cli_fail("ref", "%s", kw_last_error()));
        if (ref.dtype == KW_U8)
            FAIL(kw_cli_fail("ref", "must be float or complex"));
    }

    job.report = cJSON_CreateObject();
    if (!job.report)
        FAIL(kw_cli_fail("json", "out of memory"));
    cJSON_AddStringToObject(job.report, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(job.report, "kind", "recon");
    cJSON_AddStringToObject(job.report, "method", mname);
    cJSON_AddStringToObject(job.report, "input", o.in);
    cJSON_AddStringToObject(job.report, "layout", noncart ? "noncartesian" : "cartesian");
    add_shape(job.report, "kspace_shape", &job.ksp);
    cJSON_AddNumberToObject(job.report, "coils", (double)job.ksp.dims[0]);
    cJSON_AddStringToObject(job.report, "sens_source",
                            job.sens.data ? (o.sens ? "file (--sens)" : "file (sidecar)") : "none");

    st = m->run(&job);
    kw_cli_progress_done();
    if (st)
        FAIL(kw_cli_status(st, mname));
    if (!job.image.data)
        FAIL(kw_cli_fail(mname, "internal: the method made no image"));
    if (kw_array_all_finite(&job.image))
        FAIL(kw_cli_fail(mname, "the reconstruction is not finite (%s); try --lambda", kw_last_error()));
    {
        /* drop the key that the method may have replaced */
        cJSON *items = job.report->child;
        int nsrc = 0;
        for (cJSON *it = items; it; it = it->next)
            nsrc += it->string && strcmp(it->string, "sens_source") == 0;
        if (nsrc > 1)
            cJSON_DeleteItemFromObjectCaseSensitive(job.report, "sens_source");
    }
    add_shape(job.report, "image_shape", &job.image);

    if (o.gfactor) {
        if (!job.gfactor.data || seen_rep) {
            kw_array_free(&job.gfactor);
            if ((st = kw_recon_pseudo_replica(&job, m)))
                FAIL(kw_cli_status(st, "gfactor"));
        }
        if (kw_array_all_finite(&job.gfactor))
            FAIL(kw_cli_fail("gfactor", "the map is not finite"));
        /* summary over the pixels where the map is defined (> 0) */
        const float *g = job.gfactor.data;
        size_t n = kw_array_count(&job.gfactor), cnt = 0;
        double sum = 0, mx = 0;
        for (size_t i = 0; i < n; i++)
            if (g[i] > 0) {
                sum += g[i];
                mx = g[i] > mx ? g[i] : mx;
                cnt++;
            }
        cJSON_AddNumberToObject(job.report, "gfactor_mean", cnt ? sum / (double)cnt : 0);
        cJSON_AddNumberToObject(job.report, "gfactor_max", mx);
        cJSON_AddStringToObject(job.report, "gfactor_file", o.gfactor);
    }

    if (o.ref) {
        kw_array test = job.image;
        kw_array tmp = {0};
        if (job.image.dtype == KW_C64 && job.image.ndim == ref.ndim + 1) {
            /* --keep-coils: score the root-sum-of-squares of the coils */
            size_t nc = job.image.dims[0], np = kw_array_count(&job.image) / nc;
            if ((st = kw_array_alloc(&tmp, KW_F32, ref.ndim, job.image.dims + 1)))
                FAIL(kw_cli_status(st, "ref"));
            for (size_t p = 0; p < np; p++) {
                double s = 0;
                for (size_t c = 0; c < nc; c++)
                    s += pow(cabsf(((float complex *)job.image.data)[c * np + p]), 2);
                ((float *)tmp.data)[p] = (float)sqrt(s);
            }
            test = tmp;
        }
        kw_scores sc;
        st = kw_metrics_compute(&ref, &test, &sc);
        kw_array_free(&tmp);
        if (st)
            FAIL(kw_cli_status(st, "ref"));
        cJSON *s = cJSON_AddObjectToObject(job.report, "scores");
        kw_json_add_scores(s, sc.nrmse, sc.psnr_db, sc.ssim);
        cJSON_AddStringToObject(s, "ref", o.ref);
        if ((!o.out || strcmp(o.out, "-")) && (!o.json || strcmp(o.json, "-")))
            printf("%s: nrmse %.4f  psnr %.2f dB  ssim %.4f\n", mname, sc.nrmse, sc.psnr_db, sc.ssim);
    }

    if (o.out && (st = write_image(o.out, &job.image)))
        FAIL(kw_cli_status(st, "out"));
    if (o.gfactor && (st = write_image(o.gfactor, &job.gfactor)))
        FAIL(kw_cli_status(st, "gfactor"));
    if (o.out)
        cJSON_AddStringToObject(job.report, "output", o.out);
    if (o.json && (st = kw_json_write(o.json, job.report)))
        FAIL(kw_cli_status(st, "json"));

done:
    kw_cli_progress_done();
    kw_array_free(&job.ksp);
    kw_array_free(&job.traj);
    kw_array_free(&job.sens);
    kw_array_free(&job.noise_cov);
    kw_array_free(&job.image);
    kw_array_free(&job.gfactor);
    kw_array_free(&ref);
    cJSON_Delete(job.report);
    cJSON_Delete(sidecar);
    free(scpath);
    return exit_code;
#undef FAIL
}
