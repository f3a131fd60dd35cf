/* recon.c: the reconstruction object kw_recon (kw_recon.h): options, the
 * method table, create (request checked, image shape inferred, density
 * weights and the default path's FFT plan made), execute (one method run,
 * the image copied out, the g-factor map), the report and destroy. The
 * methods live in recon_cartm.c, recon_iter.c, recon_grid.c. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_fft.h"
#include "params_int.h"
#include "recon_priv.h"

static const kw_recon_method_info infos[] = {
    {"fft", 1, 0, "centered unitary inverse FFT, coils combined (optimal with maps, else "
                  "root-sum-of-squares)"},
    {"homodyne", 1, 0, "partial Fourier by homodyne detection (Noll, Nishimura & Macovski 1991)"},
    {"pocs", 1, 0, "partial Fourier by POCS (Haacke, Lindskog & Lin 1991)"},
    {"sense", 1, 0, "SENSE unfolding, Tikhonov lambda (Pruessmann et al. 1999)"},
    {"grappa", 1, 0, "GRAPPA, kernel KY x KX (Griswold et al. 2002)"},
    {"grid", 0, 1, "gridding: density-compensated adjoint NUFFT (dcf pipe, radial or given), root-sum-of-squares"},
    {"cg-sense", 1, 1, "CG-SENSE (Pruessmann 2001), any sampling; iterations, stop"},
    {"cs-wavelet", 1, 1, "compressed sensing, l1 of db4 wavelets, FISTA; lambda (relative), iterations, stop"},
    {"cs-tv", 1, 1, "compressed sensing, total variation, FISTA; lambda (relative), iterations, stop"},
    {"cs-wavelet-admm", 1, 1, "as cs-wavelet, solved by ADMM"},
    {"cs-tv-admm", 1, 1, "as cs-tv, solved by ADMM"},
    {NULL, 0, 0, NULL},
};

/* The run functions, in the order of infos[]; coil_images: keep_coils gives
 * (coils, ...) rather than one complex image. (The summaries use the
 * options' field names; the command prints them as its help.) */
static const kw_recon_method_entry methods[] = {
    {&infos[0], kw_recon_run_fft, 1},
    {&infos[1], kw_recon_run_homodyne, 1},
    {&infos[2], kw_recon_run_pocs, 1},
    {&infos[3], kw_recon_run_sense, 0},
    {&infos[4], kw_recon_run_grappa, 1},
    {&infos[5], kw_recon_run_grid, 1},
    {&infos[6], kw_recon_run_cg_sense, 0},
    {&infos[7], kw_recon_run_cs_wavelet, 0},
    {&infos[8], kw_recon_run_cs_tv, 0},
    {&infos[9], kw_recon_run_cs_wavelet_admm, 0},
    {&infos[10], kw_recon_run_cs_tv_admm, 0},
    {NULL, NULL, 0},
};

const kw_recon_method_info *kw_recon_methods(void) { return infos; }

static const kw_recon_method_entry *find_entry(const char *name)
{
    for (const kw_recon_method_entry *t = methods; name && t->info; t++)
        if (strcmp(t->info->name, name) == 0)
            return t;
    return NULL;
}

const kw_recon_method_info *kw_recon_method_find(const char *name)
{
    const kw_recon_method_entry *e = find_entry(name);
    return e ? e->info : NULL;
}

kw_status kw_recon_method_check(const char *name, int noncartesian,
                                const kw_recon_method_info **info)
{
    if (!name)
        name = noncartesian ? "grid" : "fft";
    const kw_recon_method_entry *e = find_entry(name);
    if (!e) {
        const char *names[sizeof infos / sizeof infos[0]];
        size_t n = 0;
        for (; infos[n].name; n++)
            names[n] = infos[n].name;
        names[n] = NULL;
        return kw_param_choice_error("method", "method", name, names);
    }
    KW_FAIL_PARAM(noncartesian && !e->info->noncartesian, KW_EINVAL, "method",
                  "%s takes Cartesian data only; this input has a trajectory", name);
    KW_FAIL_PARAM(!noncartesian && !e->info->cartesian, KW_EINVAL, "method",
                  "%s takes non-Cartesian data only (give a trajectory)", name);
    if (info)
        *info = e->info;
    return KW_OK;
}

void kw_recon_options_init(kw_recon_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->lambda = o->stop = o->tolerance = o->oversampling = NAN;
    o->seed = 1;
    o->dcf = KW_RECON_DCF_AUTO;
}

static kw_status check_options(const kw_recon_options *o)
{
    static const char *const combines[] = {"rss", "optimal", "adaptive", NULL};
    if (o->combine && strcmp(o->combine, "rss") && strcmp(o->combine, "optimal") &&
        strcmp(o->combine, "adaptive"))
        return kw_param_choice_error("combine", "combination", o->combine, combines);
    KW_FAIL_PARAM(o->kernel[0] < 0 || o->kernel[0] > 16 || o->kernel[1] < 0 || o->kernel[1] > 31,
                  KW_EINVAL, "kernel", "must be 1 <= KY <= 16, 1 <= KX <= 31 (0: default)");
    KW_FAIL_PARAM(!isnan(o->lambda) && !(o->lambda >= 0 && o->lambda < 1e6), KW_EINVAL, "lambda",
                  "must be >= 0 (got %g)", o->lambda);
    KW_FAIL_PARAM(o->iterations < 0 || o->iterations > 100000, KW_EINVAL, "iterations",
                  "must be 1 .. 100000");
    KW_FAIL_PARAM(!isnan(o->stop) && !(o->stop >= 0 && o->stop < 1), KW_EINVAL, "stop",
                  "must be in [0, 1)");
    KW_FAIL_PARAM(!isnan(o->tolerance) && !(o->tolerance > 0 && o->tolerance < 1), KW_EINVAL,
                  "tolerance", "must be in (0, 1)");
    KW_FAIL_PARAM(!isnan(o->oversampling) && !(o->oversampling >= 1 && o->oversampling <= 4),
                  KW_EINVAL, "oversampling", "must be in [1, 4]");
    KW_FAIL_PARAM(o->replicas != 0 && (o->replicas < 2 || o->replicas > 10000), KW_EINVAL,
                  "replicas", "must be 2 .. 10000");
    KW_FAIL_PARAM(o->seed < 0, KW_EINVAL, "seed", "must be >= 0");
    KW_FAIL_PARAM(o->complex_image && o->keep_coils, KW_EINVAL, "complex_image",
                  "not with keep_coils, which already gives the complex coil images");
    KW_FAIL_PARAM((int)o->dcf < 0 || o->dcf > KW_RECON_DCF_GIVEN, KW_EINVAL, "dcf",
                  "unknown density compensation %d", (int)o->dcf);
    return KW_OK;
}

static kw_status check_geometry(kw_recon *r, const kw_recon_geometry *g)
{
    KW_FAIL_PARAM(!g->dims || g->ndim < 2 || g->ndim > 4, KW_EINVAL, "kspace",
                  "dims: (coils, [nz,] ny, nx) or (coils, samples) expected");
    r->kndim = g->ndim;
    memcpy(r->kdims, g->dims, (size_t)g->ndim * sizeof *g->dims);
    r->nc = g->dims[0];
    r->noncart = g->trajectory != NULL;
    KW_FAIL_PARAM(r->nc < 1 || r->nc > 256, KW_EINVAL, "kspace", "%zu coils (1 .. 256 supported)",
                  r->nc);
    if (r->noncart) {
        KW_FAIL_PARAM(g->ndim != 2, KW_EINVAL, "kspace",
                      "non-Cartesian k-space must be (coils, samples)");
        return KW_OK;
    }
    KW_FAIL_PARAM(g->ndim < 3, KW_EINVAL, "kspace",
                  "Cartesian k-space must be (coils, ny, nx) or (coils, nz, ny, nx)");
    for (int i = 1; i < g->ndim; i++)
        KW_FAIL_PARAM(g->dims[i] < 2, KW_EINVAL, "kspace",
                      "axis %d has %zu samples (at least 2 needed)", i, g->dims[i]);
    if (g->sens) {
        int ok = g->sens_dims && g->sens_ndim == g->ndim;
        for (int i = 0; ok && i < g->ndim; i++)
            ok = g->sens_dims[i] == g->dims[i];
        KW_FAIL_PARAM(!ok, KW_EFORMAT, "sens",
                      "shape must equal the k-space shape (coils, [nz,] ny, nx)");
    }
    r->sp_ndim = g->ndim - 1;
    for (int i = 0; i < r->sp_ndim; i++)
        r->sp_dims[i] = g->dims[i + 1];
    return KW_OK;
}

static void output_shape(kw_recon *r)
{
    if (r->noncart) {
        r->sp_ndim = r->nc_ndim;
        memcpy(r->sp_dims, r->nc_dims, sizeof r->sp_dims);
    }
    r->out_complex = r->o.keep_coils || r->o.complex_image;
    int coils = r->o.keep_coils && r->m->coil_images;
    r->out_ndim = r->sp_ndim + coils;
    if (coils)
        r->out_dims[0] = r->nc;
    for (int i = 0; i < r->sp_ndim; i++)
        r->out_dims[i + coils] = r->sp_dims[i];
}

static kw_status create(kw_recon *r, const kw_recon_geometry *g, const kw_recon_options *o)
{
    kw_recon_options_init(&r->o);
    kw_status st = kw_options_take(&r->o, sizeof r->o, o, "options");
    if (st || (st = check_options(&r->o)))
        return st;
    if ((st = check_geometry(r, g)))
        return st;
    /* Maps given for multi-coil Cartesian data are the best combination
     * weights there are: the default combination uses them. */
    if (!r->o.combine && g->sens && !r->noncart && r->nc > 1)
        r->o.combine = "optimal";
    r->g = *g;
    r->g.dims = r->kdims;
    if (g->sampling) {
        r->claims = *g->sampling;
        r->has_claims = 1;
    }
    const char *name = r->o.method ? r->o.method : r->noncart ? "grid" : "fft";
    if ((st = kw_recon_method_check(name, r->noncart, NULL)))
        return st;
    r->m = find_entry(name);
    if (r->noncart) {
        if ((st = kw_nc_geometry(r)) || (st = kw_nc_weights(r)))
            return st;
    }
    output_shape(r);
    return KW_OK;
}

kw_status kw_recon_create(kw_recon **rp, const kw_recon_geometry *g, const kw_recon_options *o)
{
    KW_FAIL_IF(!rp, KW_EINVAL, "recon: NULL argument");
    *rp = NULL;
    KW_FAIL_PARAM(!g, KW_EINVAL, "kspace", "no geometry");
    kw_recon *r = kw_alloc_n(1, sizeof *r);
    KW_FAIL_IF(!r, KW_ENOMEM, "recon: out of memory");
    kw_status st = create(r, g, o);
    if (st) {
        kw_recon_destroy(r);
        return st;
    }
    *rp = r;
    return KW_OK;
}

void kw_recon_image_shape(const kw_recon *r, int *ndim, size_t dims[4], int *is_complex)
{
    *ndim = r->out_ndim;
    memcpy(dims, r->out_dims, sizeof r->out_dims);
    *is_complex = r->out_complex;
}

void kw_recon_gfactor_shape(const kw_recon *r, int *ndim, size_t dims[3])
{
    *ndim = r->sp_ndim;
    memcpy(dims, r->sp_dims, sizeof r->sp_dims);
}

static void report_reset(kw_recon *r)
{
    kw_recon_report *p = &r->rep;
    memset(p, 0, sizeof *p);
    p->method = r->m->info->name;
    p->noncartesian = r->noncart;
    p->lambda = p->lambda_absolute = p->stop = NAN;
    p->calibration_fits = NAN;
    p->iterations = -1;
    p->gfactor_mean = p->gfactor_max = NAN;
}

static kw_status gfactor(kw_recon *r, kw_rjob *job, const kw_cfloat *ksp, float *g,
                         kw_progress_fn progress, void *user)
{
    size_t n = 1;
    for (int i = 0; i < r->sp_ndim; i++)
        n *= r->sp_dims[i];
    kw_status st;
    KW_FAIL_PARAM(!g, KW_EINVAL, "gfactor", "want_gfactor set but no map buffer");
    if (job->gfactor.data && r->o.replicas == 0) {
        memcpy(g, job->gfactor.data, n * sizeof *g);
    } else if ((st = kw_recon_pseudo_replica(r, ksp, job->image.data, g, progress, user))) {
        return st;
    }
    double sum = 0, mx = 0;
    size_t cnt = 0;
    for (size_t i = 0; i < n; i++) {
        KW_FAIL_PARAM(!isfinite(g[i]), KW_ENUMERIC, "gfactor", "the map is not finite");
        if (g[i] > 0) { /* the summary over the pixels where the map is defined */
            sum += g[i];
            mx = g[i] > mx ? g[i] : mx;
            cnt++;
        }
    }
    r->rep.gfactor_mean = cnt ? sum / (double)cnt : 0;
    r->rep.gfactor_max = mx;
    return KW_OK;
}

kw_status kw_recon_execute(kw_recon *r, const kw_cfloat *kspace, void *image, float *g,
                           kw_progress_fn progress, void *user)
{
    KW_FAIL_IF(!r || !image, KW_EINVAL, "recon: NULL argument");
    KW_FAIL_PARAM(!kspace, KW_EINVAL, "kspace", "NULL k-space");
    report_reset(r);
    kw_rjob job;
    memset(&job, 0, sizeof job);
    job.r = r;
    job.opt = &r->o;
    job.ksp = kspace;
    job.rep = &r->rep;
    job.use_claims = 1;
    job.keep_sens = !r->noncart;
    job.progress = progress;
    job.progress_user = user;
    kw_status st = r->m->run(&job);
    if (!st)
        kw_recon_advise(r);
    if (!st) {
        size_t n = 1;
        for (int i = 0; i < r->out_ndim; i++)
            n *= r->out_dims[i];
        kw_dtype want = r->out_complex ? KW_C64 : KW_F32;
        if (job.image.dtype != want || kw_array_count(&job.image) != n)
            st = kw_set_error(KW_EINTERNAL, "recon: the method made an image of another shape");
        else if (kw_array_all_finite(&job.image))
            st = kw_set_error(KW_ENUMERIC, "the reconstruction is not finite (%s); try a larger lambda",
                              kw_last_error());
        else
            memcpy(image, job.image.data, n * kw_dtype_size(want));
    }
    if (!st && r->o.want_gfactor)
        st = gfactor(r, &job, kspace, g, progress, user);
    kw_array_free(&job.image);
    kw_array_free(&job.gfactor);
    return st;
}

const kw_recon_report *kw_recon_get_report(const kw_recon *r) { return r ? &r->rep : NULL; }

const kw_cfloat *kw_recon_estimated_sens(const kw_recon *r, int *ndim, size_t dims[4])
{
    if (!r || r->noncart || !r->rep.sens_estimated || !r->est_sens)
        return NULL;
    *ndim = r->kndim;
    memcpy(dims, r->kdims, sizeof r->kdims);
    return r->est_sens;
}

const float *kw_recon_density_weights(const kw_recon *r, size_t *n)
{
    if (!r || !r->w)
        return NULL;
    *n = r->g.dims[1];
    return r->w;
}

void kw_recon_destroy(kw_recon *r)
{
    if (!r)
        return;
    kw_rssrecon_destroy(r->rss);
    kw_free(r->est_sens);
    kw_free(r->w);
    kw_free(r->log);
    kw_free(r);
}
