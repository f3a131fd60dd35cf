/* cmd_recon.c: `kweave recon`: k-space (+ sidecar, maps, noise covariance,
 * trajectory) -> image by a kw_recon (recon/kw_recon.h); optional scores
 * against a reference and a g-factor map. This file parses the options,
 * reads the files, runs the library object and writes the files and the
 * JSON report; multi-slice input goes to recon_multislice.c. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <poll.h>
#include <errno.h>
#include <string.h>
#include <unistd.h>

#include "arrayio.h"
#include "cli.h"
#include "h5.h"
#include "jsonio.h"
#include "recon_json.h"
#include "kw_metrics.h"
#include "nifti.h"
#include "npy.h"
#include "figure.h"
#include "png.h"
#include "recon_cli.h"
#include "recon_multislice.h"

static const char USAGE[] =
    "usage: kweave recon --in KS.npy --out IMG.npy|IMG.png|IMG.nii|IMG.h5 [--method M] [options]\n"
    "\n"
    "Every array may also be one dataset of an HDF5 file, FILE.h5:/path (.hdf5,\n"
    "MATLAB v7.3 .mat), complex as a compound r/i or real/imag or a trailing\n"
    "axis of 2 (docs/files.md).\n"
    "Reconstructs k-space (coils, [nz,] ny, nx) or non-Cartesian samples\n"
    "(coils, samples) with a trajectory. The sidecar KS.json is read when\n"
    "present (trajectory, maps, noise covariance, acceleration). Multi-slice\n"
    "2-D k-space (the sidecar's \"slices\", or --slices AXIS) is reconstructed\n"
    "slice by slice from the file into (slices, ny, nx). Methods:";

typedef struct recon_ctx {
    kw_recon_opts o;
    int seen_seed, seen_rep, seen_slices;
    long slice_axis;
    cJSON *sidecar;
    char *scpath;
    const char *sidecar_opt; /* --sidecar FILE.json, e.g. for --in - */
    const char *fov, *accel, *axes; /* stand-ins for the sidecar (recon_cli.h) */
    long acs;
    int seen_acs;
    kw_array ksp, traj, sens, cov, dcfw, ref, image, gfactor;
    int noncart;
    size_t image_dims[3];
    int has_image_dims;
    kw_recon_sampling claims;
    int stated;
    const char *mname;
    cJSON *report;
    kw_recon *r;
} recon_ctx;

static int ends_with(const char *s, const char *suf)
{
    size_t n = strlen(s), m = strlen(suf);
    return n >= m && strcasecmp(s + n - m, suf) == 0;
}

/* Read a file named by an option or, failing that, by the sidecar key.
 * `pairs`: an HDF5 dataset's trailing axis of 2 is (real, imaginary): 1
 * always (maps), 2 only for a square matrix (noise covariance, (n, n, 2)),
 * 0 never (a trajectory's (samples, 2) is two coordinates). */
static int read_named(const char *opt_path, const cJSON *sc, const char *scpath,
                      const char *key, const char *field, int pairs, kw_array *out)
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
    kw_status st = kw_array_read(path, out);
    if (st) {
        int rc = kw_cli_status(st, field);
        free(path);
        return rc;
    }
    if (pairs && kw_array_is_hdf5(path) &&
        (pairs == 1 || (out->ndim == 3 && out->dims[0] == out->dims[1])))
        kw_array_pairs_to_complex(out);
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

static kw_status write_image(const char *path, const kw_array *a, int spatial, const cJSON *sidecar)
{
    if (ends_with(path, ".nii")) {
        KW_FAIL_IF(spatial < 2 || spatial > 3 || a->ndim < spatial, KW_EINVAL,
                   "a NIfTI image has 2 or 3 spatial axes (this one %d)", spatial);
        kw_nifti_geom g;
        const size_t *d = a->dims + a->ndim - spatial;
        kw_nifti_geom_from_sidecar(sidecar, d[spatial - 1], d[spatial - 2], spatial == 3 ? d[0] : 0, 0, &g);
        return kw_nifti_write(path, a, spatial, &g);
    }
    if (ends_with(path, ".png")) {
        kw_png_opts po;
        kw_png_opts_default(&po);
        return kw_png_write_array(path, a, &po);
    }
    return kw_npy_write(path, a);
}

/* An HDF5 target (FILE.h5[:/dataset]) checked before any work. -1: go on. */
static int check_h5_out(const char *out)
{
    char *file;
    const char *dset;
    kw_status st = kw_array_h5_target(out, "/image", &file, &dset);
    free(file);
    return st ? kw_cli_status(st, "out") : -1;
}

/* The image as a dataset of an HDF5 file, the run's metadata its attributes. */
static kw_status write_h5(const recon_ctx *c, int spatial)
{
    char *file;
    const char *dset;
    kw_status st = kw_array_h5_target(c->o.out, "/image", &file, &dset);
    if (st)
        return st;
    const kw_recon_report *rep = kw_recon_get_report(c->r);
    kw_recon_h5_meta m = {c->sidecar, rep->method ? rep->method : c->mname, rep->combine, spatial, 0};
    st = kw_h5_write(file, dset, &c->image, kw_recon_h5_attrs, &m);
    free(file);
    return st;
}

/* The g-factor map: a .png is a figure whose grey bar runs from 1 (no noise
 * amplification) to the map's maximum (gfactor_max of the report); values
 * below 1, and the 0 outside the object, are black. Other names: as images. */
static kw_status write_gfactor(const char *path, const kw_array *g, int spatial,
                               const cJSON *sidecar)
{
    if (!ends_with(path, ".png"))
        return write_image(path, g, spatial, sidecar);
    size_t n = kw_array_count(g);
    const float *v = g->data;
    float mx = 1;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i]) && v[i] > mx)
            mx = v[i];
    kw_png_opts po;
    kw_png_opts_default(&po);
    po.part = KW_PART_REAL;
    po.auto_window = 0;
    po.lo = 1;
    po.hi = mx > 1.001f ? mx : 1.001f;
    kw_figure_opts fo;
    kw_figure_opts_default(&fo);
    fo.title = "g-factor (black: 1 or less, or no signal)";
    fo.quantity = "g-factor";
    fo.tile_label = g->ndim >= 3 ? "slice" : NULL;
    return kw_figure_write(path, g, &po, &fo);
}

/* The option table and the checks that need no file. -1: go on. */
static int parse(recon_ctx *c, int argc, char **argv)
{
    kw_recon_opts *o = &c->o;
    const kw_opt table[] = {
        {"in", KW_OPT_STRING, &o->in, 0, NULL, "k-space .npy (- for stdin) or FILE.h5:/dataset (required)"},
        {"sidecar", KW_OPT_STRING, &c->sidecar_opt, 0, NULL,
         "the k-space's sidecar .json (default: beside --in; for --in -, give it here)"},
        {"out", KW_OPT_STRING, &o->out, 0, NULL,
         "image: .npy (float32, or complex64 with --keep-coils or --complex), .png, .nii "
         "(NIfTI-1) or FILE.h5[:/dataset] (HDF5, default dataset /image, metadata as attributes) (required)"},
        {"fov", KW_OPT_STRING, &c->fov, KW_UNIT_LENGTH, NULL,
         "field of view L[,LY[,LZ]] (e.g. 256mm; default: the sidecar's fov_m, else none)"},
        {"accel", KW_OPT_STRING, &c->accel, 0, NULL,
         "stated acceleration R or RYxRZ, checked against the data (default: the sidecar's, else inferred)"},
        {"acs", KW_OPT_INT, &c->acs, 0, &c->seen_acs,
         "stated calibration lines (default: the sidecar's acs_lines, else inferred)"},
        {"axes", KW_OPT_STRING, &c->axes, 0, NULL,
         "the k-space's axes in its order, e.g. ny,nx,coils (names coils, samples, nz, ny, nx; "
         "default coils,[nz,]ny,nx)"},
        {"method", KW_OPT_STRING, &o->method, 0, NULL, "fft (Cartesian default), homodyne, pocs, sense, grappa, grid, ..."},
        {"combine", KW_OPT_STRING, &o->combine, 0, NULL, "coil combination: rss, optimal, adaptive (default: optimal with maps, else rss)"},
        {"sens", KW_OPT_STRING, &o->sens, 0, NULL, "coil sensitivities .npy (coils, [nz,] ny, nx) (default: the sidecar's, else none)"},
        {"sens-out", KW_OPT_STRING, &o->sens_out, 0, NULL, "write the sensitivities estimated from the calibration block (.npy; default: none)"},
        {"noise-cov", KW_OPT_STRING, &o->noise_cov, 0, NULL, "coil noise covariance .npy (coils, coils): prewhitening (default: the sidecar's, else none)"},
        {"kernel", KW_OPT_STRING, &o->kernel, 0, NULL, "GRAPPA kernel KYxKX (source lines x readout points; default 2x5)"},
        {"lambda", KW_OPT_DOUBLE, &o->lambda, 0, NULL, "regularisation weight, relative (default: sense 0, grappa 1e-4, cs-* 0.003)"},
        {"ref", KW_OPT_STRING, &o->ref, 0, NULL, "reference image .npy: adds NRMSE, PSNR, SSIM to the report (default: none)"},
        {"json", KW_OPT_STRING, &o->json, 0, NULL, "JSON report file (- for stdout; default: none)"},
        {"gfactor", KW_OPT_STRING, &o->gfactor, 0, NULL, "g-factor map .png or .npy (default: none)"},
        {"trajectory", KW_OPT_STRING, &o->trajectory, 0, NULL, "non-Cartesian trajectory .npy (samples, ndim), cycles/FOV (default: the sidecar's, else Cartesian)"},
        {"dcf", KW_OPT_STRING, &o->dcf, 0, NULL, "density compensation: FILE.npy, radial or pipe (default: radial for radial trajectories, else pipe)"},
        {"dcf-out", KW_OPT_STRING, &o->dcf_out, 0, NULL, "write the density weights used (.npy, one per sample; default: none)"},
        {"tolerance", KW_OPT_DOUBLE, &o->tolerance, 0, NULL, "NUFFT accuracy, relative l2 (default 1e-3)"},
        {"oversampling", KW_OPT_DOUBLE, &o->oversampling, 0, NULL, "NUFFT grid oversampling, 1.25 .. 2 (default 2)"},
        {"iterations", KW_OPT_INT, &o->iterations, 0, NULL, "iterations (default: pocs 20, cg-sense 30, cs-* 100)"},
        {"stop", KW_OPT_DOUBLE, &o->stop, 0, NULL, "stop when the relative change falls below this (default: cg-sense 1e-6, others 1e-4)"},
        {"keep-coils", KW_OPT_FLAG, &o->keep_coils, 0, NULL, "write the coil images (complex64) instead of combining"},
        {"complex", KW_OPT_FLAG, &o->complex_image, 0, NULL,
         "write the image as complex64, its phase kept (optimal or adaptive combination, or a "
         "method that makes one image)"},
        {"replicas", KW_OPT_INT, &o->replicas, 0, &c->seen_rep, "pseudo-replicas for --gfactor (default 50; forces the pseudo-replica map)"},
        {"seed", KW_OPT_INT, &o->seed, 0, &c->seen_seed, "seed of the pseudo-replica noise (default 1)"},
        {"slices", KW_OPT_INT, &c->slice_axis, 0, &c->seen_slices,
         "multi-slice 2-D input: the slice axis (1: (coils, slices, ny, nx), 0: (slices, [coils,] ny, nx));"
         " default from the sidecar's \"slices\""},
        {NULL, 0, NULL, 0, NULL, NULL},
    };
    char usage[2048];
    size_t ul = (size_t)snprintf(usage, sizeof usage, "%s", USAGE);
    int wid = 0; /* the method names in one column */
    for (const kw_recon_method_info *m = kw_recon_methods(); m->name; m++)
        wid = (int)strlen(m->name) > wid ? (int)strlen(m->name) : wid;
    for (const kw_recon_method_info *m = kw_recon_methods(); m->name && ul < sizeof usage; m++)
        ul += (size_t)snprintf(usage + ul, sizeof usage - ul, "\n  %-*s  %s", wid, m->name,
                               m->summary);
    int rc = kw_opts_parse(argc, argv, table, usage, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (!o->in)
        return kw_cli_fail("in", "missing (--in KS.npy)");
    if (!o->out && !o->json)
        return kw_cli_fail("out", "missing (--out IMG.npy or IMG.png)");
    if (o->out && !ends_with(o->out, ".npy") && !ends_with(o->out, ".png") && !ends_with(o->out, ".nii") &&
        !kw_array_is_hdf5(o->out) && strcmp(o->out, "-") != 0)
        return kw_cli_fail("out", "'%s': give a .npy, .png, .nii or .h5 file name", o->out);
    if (o->out && (rc = check_h5_out(o->out)) >= 0)
        return rc;
    if (o->gfactor && !ends_with(o->gfactor, ".npy") && !ends_with(o->gfactor, ".png"))
        return kw_cli_fail("gfactor", "'%s': give a .npy or .png file name", o->gfactor);
    if (o->kernel && (rc = parse_kernel(o->kernel, o->kernel_yx)) >= 0)
        return rc;
    if (c->seen_rep && (o->replicas < 2 || o->replicas > 10000))
        return kw_cli_fail("replicas", "must be 2 .. 10000");
    if (o->sens_out && !ends_with(o->sens_out, ".npy"))
        return kw_cli_fail("sens-out", "'%s': give a .npy file name", o->sens_out);
    if (c->seen_slices && (c->slice_axis < 0 || c->slice_axis > 1))
        return kw_cli_fail("slices", "the slice axis must be 0 or 1 (got %ld)", c->slice_axis);
    /* the options' own ranges, checked by the library before any file */
    kw_recon_options ro;
    kw_recon_cli_options(o, &ro);
    ro.method = NULL;
    kw_recon *probe = NULL;
    size_t d[3] = {1, 2, 2};
    kw_recon_geometry g = {.ndim = 3, .dims = d};
    kw_status st = kw_recon_create(&probe, &g, &ro);
    kw_recon_destroy(probe);
    if (st && strcmp(kw_last_error_param(), "kspace") != 0)
        return kw_recon_cli_error(st, "recon");
    return -1;
}

/* The sidecar named by --sidecar, else the one next to the input, if any.
 * -1: go on. In a pipe (`kweave encode --out - --sidecar ks.json | kweave
 * recon --in - --sidecar ks.json`) the writer puts the sidecar in place
 * before the first byte of the array, so the sidecar is read once standard
 * input has data. */
static int read_sidecar(recon_ctx *c)
{
    kw_status st;
    if (c->sidecar_opt) {
        if (strcmp(c->o.in, "-") == 0) {
            struct pollfd pfd = {.fd = STDIN_FILENO, .events = POLLIN};
            while (poll(&pfd, 1, -1) < 0 && errno == EINTR)
                ;
        }
        if (!(c->scpath = strdup(c->sidecar_opt)))
            return kw_cli_fail("sidecar", "out of memory");
        if (access(c->scpath, F_OK) != 0)
            return kw_cli_fail("sidecar", "%s: %s", c->scpath, strerror(errno));
    } else if (strcmp(c->o.in, "-") == 0 || !(c->scpath = kw_array_sidecar_path(c->o.in)) ||
               access(c->scpath, F_OK) != 0) {
        return -1;
    }
    if ((st = kw_json_read(c->scpath, &c->sidecar)))
        return kw_cli_status(st, "sidecar");
    if (!cJSON_IsObject(c->sidecar))
        return kw_cli_fail("sidecar", "%s: not a JSON object", c->scpath);
    const cJSON *kind = cJSON_GetObjectItemCaseSensitive(c->sidecar, "kind");
    if (kind && (!cJSON_IsString(kind) || strcmp(kind->valuestring, "kspace") != 0))
        return kw_cli_fail("kind", "%s: the sidecar describes \"%s\", not k-space", c->scpath,
                           cJSON_IsString(kind) ? kind->valuestring : "?");
    return -1;
}

/* The k-space array, checked against the sidecar's shape, and its layout. */
static int read_kspace(recon_ctx *c)
{
    kw_array *k = &c->ksp;
    int rc;
    kw_status st = kw_array_read_complex(c->o.in, k);
    if (st)
        return kw_cli_status(st, "in");
    if (k->dtype != KW_C64)
        return kw_cli_fail("in", "k-space must be complex (complex64 or complex128%s)",
                           kw_array_is_hdf5(c->o.in) ? "; in HDF5 a compound r/i or real/imag, or a trailing axis of 2" : "");
    if (kw_array_all_finite(k))
        return kw_cli_fail("in", "%s", kw_last_error());
    if (c->axes && (rc = kw_recon_cli_axes(c->axes, k)) >= 0)
        return rc;
    /* The sidecar must describe this array: its "shape" is the array's. */
    const cJSON *sc = c->sidecar;
    const cJSON *shp = sc ? cJSON_GetObjectItemCaseSensitive(sc, "shape") : NULL;
    if (shp) {
        int ok = cJSON_IsArray(shp) && cJSON_GetArraySize(shp) == k->ndim;
        for (int i = 0; ok && i < k->ndim; i++) {
            const cJSON *e = cJSON_GetArrayItem(shp, i);
            ok = cJSON_IsNumber(e) && e->valuedouble == (double)k->dims[i];
        }
        if (!ok)
            return kw_cli_fail("shape", "%s: the sidecar's shape does not match the k-space array "
                               "(the sidecar belongs to another file?)", c->scpath);
    }
    /* Layout: a trajectory (option or sidecar) means non-Cartesian. */
    const cJSON *lay = sc ? cJSON_GetObjectItemCaseSensitive(sc, "layout") : NULL;
    if ((rc = read_named(c->o.trajectory, sc, c->scpath, "trajectory", "trajectory", 0, &c->traj)) >= 0)
        return rc;
    c->noncart = c->traj.data != NULL;
    if (c->o.dcf_out && !c->noncart)
        return kw_cli_fail("dcf-out", "density weights exist only for non-Cartesian data (a trajectory)");
    if (c->o.dcf_out && !ends_with(c->o.dcf_out, ".npy"))
        return kw_cli_fail("dcf-out", "'%s': give a .npy file name", c->o.dcf_out);
    if (!c->noncart && lay && cJSON_IsString(lay) && strcmp(lay->valuestring, "noncartesian") == 0)
        return kw_cli_fail("trajectory", "the sidecar says non-Cartesian but names no trajectory (give --trajectory)");
    if (c->noncart) {
        const kw_array *t = &c->traj;
        if (t->dtype != KW_F32 || t->ndim != 2 || t->dims[1] < 1 || t->dims[1] > 3)
            return kw_cli_fail("trajectory", "must be real (samples, ndim) with ndim 1-3");
        if (k->ndim == 1) {
            k->dims[1] = k->dims[0];
            k->dims[0] = 1;
            k->ndim = 2;
        }
        if (k->ndim != 2 || k->dims[1] != t->dims[0])
            return kw_cli_fail("in", "non-Cartesian k-space must be (coils, samples) with %zu samples (the trajectory's)",
                               t->dims[0]);
    } else {
        const cJSON *mat = sc ? cJSON_GetObjectItemCaseSensitive(sc, "matrix") : NULL;
        int single3d = k->ndim == 3 && mat && cJSON_GetArraySize(mat) == 3;
        if (k->ndim == 2 || single3d) {
            for (int i = k->ndim; i > 0; i--)
                k->dims[i] = k->dims[i - 1];
            k->dims[0] = 1;
            k->ndim++;
        }
        if (k->ndim < 3 || k->ndim > 4)
            return kw_cli_fail("in", "Cartesian k-space must be (ny, nx), (coils, ny, nx) or (coils, nz, ny, nx); got %d dimensions",
                               k->ndim);
        for (int i = 1; i < k->ndim; i++)
            if (k->dims[i] < 2)
                return kw_cli_fail("in", "axis %d has %zu samples (at least 2 needed)", i, k->dims[i]);
    }
    if (k->dims[0] < 1 || k->dims[0] > 256)
        return kw_cli_fail("in", "%zu coils (1 .. 256 supported)", k->dims[0]);
    return -1;
}

/* Maps and noise covariance (option or sidecar). */
static int read_maps(recon_ctx *c)
{
    const kw_array *k = &c->ksp;
    kw_array *s = &c->sens;
    int rc;
    if ((rc = read_named(c->o.sens, c->sidecar, c->scpath, "sens", "sens", 1, s)) >= 0)
        return rc;
    if (s->data && (s->dtype != KW_C64 || s->dims[0] != k->dims[0]))
        return kw_cli_fail("sens", "must be complex with one map per coil (%zu coils)", k->dims[0]);
    if (s->data && !c->noncart && s->ndim == k->ndim - 1 && k->dims[0] == 1) {
        for (int i = s->ndim; i > 0; i--)
            s->dims[i] = s->dims[i - 1];
        s->dims[0] = 1;
        s->ndim++;
    }
    if (s->data && !c->noncart) {
        int ok = s->ndim == k->ndim;
        for (int i = 0; ok && i < k->ndim; i++)
            ok = s->dims[i] == k->dims[i];
        if (!ok)
            return kw_cli_fail("sens", "shape must equal the k-space shape (coils, [nz,] ny, nx)");
    }
    kw_array *q = &c->cov;
    if ((rc = read_named(c->o.noise_cov, c->sidecar, c->scpath, "noise_cov", "noise-cov", 2, q)) >= 0)
        return rc;
    if (q->data && (q->ndim != 2 || q->dims[0] != k->dims[0] || q->dims[1] != k->dims[0] || q->dtype == KW_U8))
        return kw_cli_fail("noise-cov", "shape must be (%zu, %zu), one row and column per coil",
                           k->dims[0], k->dims[0]);
    if (q->data && q->dtype == KW_F32) { /* a real covariance, as complex */
        kw_array z = {0};
        kw_status st = kw_array_alloc(&z, KW_C64, 2, q->dims);
        if (st)
            return kw_cli_status(st, "noise-cov");
        for (size_t i = 0; i < q->dims[0] * q->dims[1]; i++)
            ((kw_cfloat *)z.data)[i] = ((const float *)q->data)[i];
        kw_array_free(q);
        *q = z;
    }
    return -1;
}

/* Non-Cartesian: the image matrix from the sidecar, density weights from a file. */
static int read_noncart(recon_ctx *c)
{
    int nd = (int)c->traj.dims[1];
    const cJSON *m = c->sidecar ? cJSON_GetObjectItemCaseSensitive(c->sidecar, "matrix") : NULL;
    if (!c->sens.data && m && cJSON_IsArray(m) && cJSON_GetArraySize(m) == nd && (nd == 2 || nd == 3)) {
        for (int d = 0; d < nd; d++) {
            const cJSON *v = cJSON_GetArrayItem(m, d);
            if (!cJSON_IsNumber(v) || v->valuedouble < 2 || v->valuedouble > 65536 ||
                v->valuedouble != floor(v->valuedouble))
                return kw_cli_fail("sidecar", "\"matrix\" entry %d is not a size", d);
            c->image_dims[nd - 1 - d] = (size_t)v->valuedouble;
        }
        c->has_image_dims = 1;
    }
    const char *dcf = c->o.dcf;
    if (!dcf || !strcmp(dcf, "radial") || !strcmp(dcf, "pipe"))
        return -1;
    kw_status st = kw_array_read(dcf, &c->dcfw);
    if (st)
        return kw_cli_fail("dcf", "expected radial, pipe or a weights .npy file; %s", kw_last_error());
    size_t n = kw_array_count(&c->dcfw), ns = c->traj.dims[0];
    if (c->dcfw.dtype != KW_F32 || n != ns)
        return kw_cli_fail("dcf", "%s must hold %zu real weights (one per sample), has %zu%s", dcf, ns, n,
                           c->dcfw.dtype == KW_F32 ? "" : " non-real values");
    return -1;
}

static int check_method(recon_ctx *c)
{
    c->mname = c->o.method ? c->o.method : c->noncart ? "grid" : "fft";
    if (kw_recon_method_check(c->mname, c->noncart, NULL))
        return kw_cli_fail("method", "%s", kw_last_error_reason());
    if (c->o.ref) {
        kw_status st;
        if ((st = kw_array_read(c->o.ref, &c->ref)))
            return kw_cli_status(st, "ref");
        if (kw_array_all_finite(&c->ref))
            return kw_cli_fail("ref", "%s", kw_last_error());
        if (c->ref.dtype == KW_U8)
            return kw_cli_fail("ref", "must be float or complex");
    }
    return -1;
}

/* Create and execute the kw_recon: c->image (and c->gfactor). */
static int run(recon_ctx *c)
{
    kw_recon_options ro;
    kw_recon_cli_options(&c->o, &ro);
    ro.method = c->mname;
    kw_recon_geometry g = {0};
    g.ndim = c->ksp.ndim;
    g.dims = c->ksp.dims;
    if (c->noncart) {
        g.trajectory = c->traj.data;
        g.traj_ndim = (int)c->traj.dims[1];
        g.image_dims = c->has_image_dims ? c->image_dims : NULL;
        g.weights = c->dcfw.data;
    }
    g.sens = c->sens.data;
    g.sens_ndim = c->sens.ndim;
    g.sens_dims = c->sens.dims;
    g.noise_cov = c->cov.data;
    g.sampling = c->stated ? &c->claims : NULL;
    kw_status st = kw_recon_create(&c->r, &g, &ro);
    if (st)
        return kw_recon_cli_error(st, c->mname);
    int nd, cplx;
    size_t d[4];
    kw_recon_image_shape(c->r, &nd, d, &cplx);
    if ((st = kw_array_alloc(&c->image, cplx ? KW_C64 : KW_F32, nd, d)))
        return kw_cli_status(st, "out");
    if (c->o.gfactor) {
        kw_recon_gfactor_shape(c->r, &nd, d);
        if ((st = kw_array_alloc(&c->gfactor, KW_F32, nd, d)))
            return kw_cli_status(st, "gfactor");
    }
    st = kw_recon_execute(c->r, c->ksp.data, c->image.data, c->gfactor.data, kw_cli_progress, NULL);
    kw_cli_progress_done();
    if (st)
        return kw_recon_cli_error(st, c->mname);
    const kw_recon_report *rep = kw_recon_get_report(c->r);
    if (rep->advice) /* the method ignores how the data were sampled: say what suits them */
        fprintf(stderr, "kweave: warning: %s\n", rep->advice);
    return -1;
}

/* Files the library's results make beside the image: --sens-out, --dcf-out. */
static int write_side_files(recon_ctx *c, const char **sens_file, const char **dcf_file)
{
    kw_status st;
    *sens_file = *dcf_file = NULL;
    int nd;
    size_t d[4];
    const kw_cfloat *s = c->o.sens_out ? kw_recon_estimated_sens(c->r, &nd, d) : NULL;
    if (s) {
        /* the maps as estimated: in the whitened coil basis when a noise
         * covariance was given */
        kw_array a = {0};
        a.dtype = KW_C64;
        a.ndim = nd;
        memcpy(a.dims, d, (size_t)nd * sizeof *d);
        a.data = (void *)s;
        if ((st = kw_npy_write(c->o.sens_out, &a)))
            return kw_cli_status(st, c->mname);
        *sens_file = c->o.sens_out;
    }
    size_t n;
    const float *w = c->o.dcf_out ? kw_recon_density_weights(c->r, &n) : NULL;
    if (w) {
        kw_array a = {.dtype = KW_F32, .ndim = 1, .dims = {n}, .data = (void *)w};
        if ((st = kw_npy_write(c->o.dcf_out, &a)))
            return kw_cli_fail("dcf-out", "%s", kw_last_error());
        *dcf_file = c->o.dcf_out;
    }
    return -1;
}

/* Scores against --ref (coil images scored by their root-sum-of-squares). */
static int score(recon_ctx *c)
{
    kw_array test = c->image, tmp = {0};
    kw_status st;
    if (c->image.dtype == KW_C64 && c->image.ndim == c->ref.ndim + 1) {
        size_t nc = c->image.dims[0], np = kw_array_count(&c->image) / nc;
        if ((st = kw_array_alloc(&tmp, KW_F32, c->ref.ndim, c->image.dims + 1)))
            return kw_cli_status(st, "ref");
        for (size_t p = 0; p < np; p++) {
            double s = 0;
            for (size_t k = 0; k < nc; k++)
                s += pow(cabsf(((float complex *)c->image.data)[k * np + p]), 2);
            ((float *)tmp.data)[p] = (float)sqrt(s);
        }
        test = tmp;
    }
    kw_scores sc;
    st = kw_metrics_compute(&c->ref, &test, &sc);
    kw_array_free(&tmp);
    if (st)
        return kw_cli_status(st, "ref");
    cJSON *s = cJSON_AddObjectToObject(c->report, "scores");
    kw_json_add_scores(s, sc.nrmse, sc.psnr_db, sc.ssim);
    cJSON_AddStringToObject(s, "ref", c->o.ref);
    if ((!c->o.out || strcmp(c->o.out, "-")) && (!c->o.json || strcmp(c->o.json, "-")))
        printf("%s: nrmse %.4f  psnr %.2f dB  ssim %.4f\n", c->mname, sc.nrmse, sc.psnr_db, sc.ssim);
    return -1;
}

/* What the report's slots need: the files the command read and wrote. */
typedef struct report_slots {
    const recon_ctx *c;
    const char *dcf_file, *sens_file;
} report_slots;

/* The command's keys at their places in the library's report
 * (recon/recon_json.h). */
static int report_slot(cJSON *j, const char *slot, void *user)
{
    const report_slots *s = user;
    const recon_ctx *c = s->c;
    if (strcmp(slot, "input") == 0)
        cJSON_AddStringToObject(j, "input", c->o.in);
    else if (strcmp(slot, "sens_source") == 0)
        cJSON_AddStringToObject(j, "sens_source",
                                c->sens.data ? (c->o.sens ? "file (--sens)" : "file (sidecar)") : "none");
    else if (strcmp(slot, "dcf") == 0 && c->o.dcf)
        cJSON_AddStringToObject(j, "dcf", c->o.dcf);
    else if (strcmp(slot, "dcf_file") == 0 && s->dcf_file)
        cJSON_AddStringToObject(j, "dcf_file", s->dcf_file);
    else if (strcmp(slot, "sens_file") == 0 && s->sens_file)
        cJSON_AddStringToObject(j, "sens_file", s->sens_file);
    else if (strcmp(slot, "gfactor_file") == 0)
        cJSON_AddStringToObject(j, "gfactor_file", c->o.gfactor);
    else
        return 0;
    return 1;
}

/* The report: the library's (kw_recon_report_json()) with the command's
 * file names, then the scores and the output. */
static int report(recon_ctx *c)
{
    const char *sens_file, *dcf_file;
    int rc = write_side_files(c, &sens_file, &dcf_file);
    if (rc >= 0)
        return rc;
    report_slots rs = {c, dcf_file, sens_file};
    cJSON *j = c->report = kw_recon_json_build(c->r, report_slot, &rs);
    if (!j)
        return kw_cli_fail("json", "out of memory");
    if (c->o.ref && (rc = score(c)) >= 0)
        return rc;
    kw_status st;
    int spatial = c->noncart ? (int)c->traj.dims[1] : c->ksp.ndim - 1;
    if (c->o.out && kw_array_is_hdf5(c->o.out)) {
        if ((st = write_h5(c, spatial)))
            return kw_cli_status(st, "out");
    } else if (c->o.out && (st = write_image(c->o.out, &c->image, spatial, c->sidecar))) {
        return kw_cli_status(st, "out");
    }
    if (c->o.gfactor && (st = write_gfactor(c->o.gfactor, &c->gfactor, spatial, c->sidecar)))
        return kw_cli_status(st, "gfactor");
    if (c->o.out)
        cJSON_AddStringToObject(j, "output", c->o.out);
    if (c->o.json && (st = kw_json_write(c->o.json, j)))
        return kw_cli_status(st, "json");
    return -1;
}

static int recon_main(recon_ctx *c, int argc, char **argv)
{
    int rc;
    if ((rc = parse(c, argc, argv)) >= 0 || (rc = read_sidecar(c)) >= 0 ||
        (rc = kw_recon_cli_override(&c->sidecar, c->fov, c->accel, c->acs, c->seen_acs)) >= 0)
        return rc;
    /* Multi-slice 2-D: streamed slice by slice, never read whole. */
    if (c->seen_slices || (c->sidecar && cJSON_GetObjectItemCaseSensitive(c->sidecar, "slices"))) {
        if (c->axes)
            return kw_cli_fail("axes", "not with multi-slice input (give the layout with --slices AXIS)");
        if (c->o.sens_out)
            return kw_cli_fail("sens-out", "not with multi-slice input (the maps are per slice)");
        return kw_recon_multislice(&c->o, c->sidecar, c->scpath, c->seen_slices ? (int)c->slice_axis : -1);
    }
    if ((rc = read_kspace(c)) >= 0 || (rc = read_maps(c)) >= 0 || (rc = check_method(c)) >= 0)
        return rc;
    if (c->noncart && (rc = read_noncart(c)) >= 0)
        return rc;
    if (!c->noncart && (rc = kw_recon_cli_claims(c->sidecar, &c->claims, &c->stated)) >= 0)
        return rc;
    if ((rc = run(c)) >= 0 || (rc = report(c)) >= 0)
        return rc;
    return KW_EXIT_OK;
}

int kw_cmd_recon(int argc, char **argv)
{
    recon_ctx c;
    memset(&c, 0, sizeof c);
    c.o.lambda = c.o.stop = c.o.tolerance = c.o.oversampling = NAN;
    c.o.seed = 1;
    c.slice_axis = -1;
    int rc = recon_main(&c, argc, argv);
    kw_cli_progress_done();
    kw_recon_destroy(c.r);
    kw_array *arrays[] = {&c.ksp, &c.traj, &c.sens, &c.cov, &c.dcfw, &c.ref, &c.image, &c.gfactor};
    for (size_t i = 0; i < sizeof arrays / sizeof arrays[0]; i++)
        kw_array_free(arrays[i]);
    cJSON_Delete(c.report);
    cJSON_Delete(c.sidecar);
    free(c.scpath);
    return rc;
}
