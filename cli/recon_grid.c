/* recon_grid.c: `kweave recon --method grid`: gridding reconstruction of
 * non-Cartesian data (radial, golden-angle, stack-of-stars, spiral): coil
 * images x_c = F_nu^H W y_c with density compensation W (kw_dcf.h) and the
 * NUFFT's adjoint (kw_nufft.h), combined by root-sum-of-squares, or by the
 * maps (sum_c conj(s_c) x_c / sum_c |s_c|^2) when --sens is given.
 * Also the helpers the iterative non-Cartesian methods share (recon_cs.c):
 * image geometry, density weights, NUFFT options, coil maps. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "jsonio.h"
#include "kw_dcf.h"
#include "kw_nufft.h"
#include "npy.h"
#include "recon_cli.h"
#include "recon_nc.h"


void kw_nc_nufft_opts(const kw_recon_job *job, kw_nufft_opts *no)
{
    memset(no, 0, sizeof *no);
    no->tolerance = isnan(job->opt->tolerance) ? 1e-3 : job->opt->tolerance;
    no->oversampling = isnan(job->opt->oversampling) ? 0 : job->opt->oversampling;
    no->measure = 0;
}

/* Image shape (C order): the maps' shape, else the sidecar's "matrix"
 * [nx, ny(, nz)], else twice the trajectory's extent per axis. */
kw_status kw_nc_geometry(kw_recon_job *job, int *ndim, size_t dims[3])
{
    const kw_array *t = &job->traj;
    int nd = (int)t->dims[1];
    KW_FAIL_IF(nd != 2 && nd != 3, KW_ENOTSUP,
               "trajectory: %d-D trajectories are not supported (2-D or 3-D)", nd);
    *ndim = nd;
    if (job->sens.data) {
        KW_FAIL_IF(job->sens.ndim != nd + 1, KW_EFORMAT,
                   "sens: shape must be (coils, %s) for a %d-D trajectory",
                   nd == 2 ? "ny, nx" : "nz, ny, nx", nd);
        for (int d = 0; d < nd; d++)
            dims[d] = job->sens.dims[d + 1];
        return KW_OK;
    }
    const cJSON *m = job->sidecar ? cJSON_GetObjectItemCaseSensitive(job->sidecar, "matrix")
                                  : NULL;
    if (m && cJSON_IsArray(m) && cJSON_GetArraySize(m) == nd) {
        for (int d = 0; d < nd; d++) {
            const cJSON *v = cJSON_GetArrayItem(m, d);
            KW_FAIL_IF(!cJSON_IsNumber(v) || v->valuedouble < 2 || v->valuedouble > 65536 ||
                           v->valuedouble != floor(v->valuedouble),
                       KW_EFORMAT, "sidecar: \"matrix\" entry %d is not a size", d);
            dims[nd - 1 - d] = (size_t)v->valuedouble;
        }
        return KW_OK;
    }
    /* the smallest even N with every k in [-N/2, N/2) */
    const float *k = t->data;
    for (int c = 0; c < nd; c++) {
        double h = 1;
        for (size_t j = 0; j < t->dims[0]; j++) {
            double v = k[j * nd + c];
            double need = v < 0 ? ceil(-v) : floor(v) + 1;
            h = need > h ? need : h;
        }
        KW_FAIL_IF(!(h <= 32768), KW_ERANGE, "trajectory: coordinate %d reaches %g cycles/FOV",
                   c, h);
        dims[nd - 1 - c] = 2 * (size_t)h;
    }
    return KW_OK;
}

/* Radial (or stack-of-stars, golden-angle) trajectories: consecutive samples
 * on one line through the origin of the kx-ky plane for >= 90% of pairs. */
static int is_radial(const kw_recon_job *job)
{
    const float *k = job->traj.data;
    size_t ns = job->traj.dims[0], nd = job->traj.dims[1], on = 0;
    if (ns < 2)
        return 0;
    for (size_t j = 0; j + 1 < ns; j++) {
        double ax = k[j * nd], ay = k[j * nd + 1], bx = k[(j + 1) * nd], by = k[(j + 1) * nd + 1];
        double cr = fabs(ax * by - ay * bx), sc = (ax * ax + ay * ay) + (bx * bx + by * by);
        on += cr <= 1e-4 * sc;
    }
    return (double)on >= 0.9 * (double)(ns - 1);
}

/* Density weights: --dcf FILE.npy | radial | pipe; without --dcf, radial for
 * a radial trajectory, else pipe, when
 * `dflt` else none (*w = NULL). Adds "dcf" to the report. */
kw_status kw_nc_weights(kw_recon_job *job, int ndim, const size_t *dims, int dflt,
                        float **w)
{
    *w = NULL;
    const char *kind = job->opt->dcf ? job->opt->dcf : dflt ? (is_radial(job) ? "radial" : "pipe") : NULL;
    if (!kind) {
        cJSON_AddNullToObject(job->report, "dcf");
        return KW_OK;
    }
    size_t ns = job->traj.dims[0];
    const float *t = job->traj.data;
    kw_status st = KW_OK;
    if (strcmp(kind, "radial") == 0 || strcmp(kind, "pipe") == 0) {
        *w = malloc(ns * sizeof **w);
        KW_FAIL_IF(!*w, KW_ENOMEM, "dcf: out of memory");
        if (kind[0] == 'r') {
            st = kw_dcf_radial(ndim, ns, t, *w);
        } else {
            kw_nufft_opts no;
            kw_nc_nufft_opts(job, &no);
            st = kw_dcf_pipe(ndim, dims, ns, t, 20, &no, *w);
        }
    } else {
        kw_array a = {0};
        st = kw_npy_read(kind, &a);
        if (st)
            return kw_set_error(st, "dcf: expected radial, pipe or a weights .npy file; %s",
                                kw_last_error());
        size_t n = kw_array_count(&a);
        if (a.dtype != KW_F32 || n != ns) {
            kw_array_free(&a);
            return kw_set_error(KW_EFORMAT,
                                "dcf: %s must hold %zu real weights (one per sample), has %zu%s",
                                kind, ns, n, a.dtype == KW_F32 ? "" : " non-real values");
        }
        const float *v = a.data;
        for (size_t j = 0; j < ns; j++)
            if (!(v[j] >= 0) || !isfinite(v[j])) {
                kw_array_free(&a);
                return kw_set_error(KW_ERANGE, "dcf: weight %zu is negative or not finite", j);
            }
        *w = malloc(ns * sizeof **w);
        if (*w)
            memcpy(*w, v, ns * sizeof **w);
        kw_array_free(&a);
        KW_FAIL_IF(!*w, KW_ENOMEM, "dcf: out of memory");
    }
    if (st) {
        free(*w);
        *w = NULL;
        return st;
    }
    cJSON_AddStringToObject(job->report, "dcf", kind);
    if (job->opt->dcf_out) {
        kw_array a = {.dtype = KW_F32, .ndim = 1, .dims = {ns}, .data = *w};
        st = kw_npy_write(job->opt->dcf_out, &a);
        if (st) {
            free(*w);
            *w = NULL;
            return kw_set_error(st, "dcf-out: %s", kw_last_error());
        }
        cJSON_AddStringToObject(job->report, "dcf_file", job->opt->dcf_out);
    }
    return KW_OK;
}

/* Coil maps: the given ones, or (several coils) estimated from low-resolution
 * gridded coil images, s_c = x_c / sqrt(sum |x_c|^2) where that exceeds 5%
 * of its maximum, 0 elsewhere (ratio to root-sum-of-squares: common
 * practice, no source); the centre of k-space (radius N/8, Hann taper)
 * makes the coil images. One coil without maps: NULL (ones). */
kw_status kw_nc_sens(kw_recon_job *job, int ndim, const size_t *dims, const float *w,
                     float complex **sens)
{
    *sens = NULL;
    size_t nc = job->ksp.dims[0], np = 1, ns = job->traj.dims[0];
    for (int d = 0; d < ndim; d++)
        np *= dims[d];
    if (job->sens.data) {
        *sens = kw_alloc(nc * np * sizeof **sens);
        KW_FAIL_IF(!*sens, KW_ENOMEM, "sens: out of memory");
        memcpy(*sens, job->sens.data, nc * np * sizeof **sens);
        return KW_OK;
    }
    if (nc == 1)
        return KW_OK;
    const float *t = job->traj.data;
    double kc = (double)dims[ndim - 1] / 8.0;
    float complex *y = malloc(nc * ns * sizeof *y);
    float complex *img = kw_alloc(nc * np * sizeof *img);
    kw_nufft_plan *p = NULL;
    kw_nufft_opts no;
    kw_nc_nufft_opts(job, &no);
    kw_status st = KW_OK;
    if (!y || !img) {
        st = kw_set_error(KW_ENOMEM, "sens: out of memory");
        goto done;
    }
    for (size_t j = 0; j < ns; j++) {
        double r = 0;
        for (int c = 0; c < ndim; c++)
            r += (double)t[j * ndim + c] * t[j * ndim + c];
        r = sqrt(r);
        float f = r < kc ? (float)(0.5 * (1 + cos(KW_PI * r / kc))) * (w ? w[j] : 1.0f) : 0.0f;
        for (size_t c = 0; c < nc; c++)
            y[c * ns + j] = f * ((const float complex *)job->ksp.data)[c * ns + j];
    }
    if ((st = kw_nufft_create(&p, ndim, dims, ns, t, &no)))
        goto done;
    if ((st = kw_nufft_adjoint(p, y, img, nc)))
        goto done;
    double mx = 0;
    for (size_t i = 0; i < np; i++) {
        double s = 0;
        for (size_t c = 0; c < nc; c++)
            s += pow(cabsf(img[c * np + i]), 2);
        mx = s > mx ? s : mx;
    }
    for (size_t i = 0; i < np; i++) {
        double s = 0;
        for (size_t c = 0; c < nc; c++)
            s += pow(cabsf(img[c * np + i]), 2);
        float f = s > 0.0025 * mx ? (float)(1.0 / sqrt(s)) : 0.0f; /* 5% in magnitude */
        for (size_t c = 0; c < nc; c++)
            img[c * np + i] *= f;
    }
    *sens = img;
    img = NULL;
    cJSON_DeleteItemFromObjectCaseSensitive(job->report, "sens_source");
    cJSON_AddStringToObject(job->report, "sens_source",
                            "estimated (low-resolution gridded coil images / root-sum-of-squares)");
done:
    kw_nufft_destroy(p);
    free(y);
    kw_free(img);
    return st;
}

/* job->image from one complex image: |x| (F32), or x (C64) with --keep-coils. */
kw_status kw_nc_image(kw_recon_job *job, int ndim, const size_t *dims,
                      const float complex *x)
{
    size_t np = 1;
    for (int d = 0; d < ndim; d++)
        np *= dims[d];
    kw_status st = kw_array_alloc(&job->image, job->opt->keep_coils ? KW_C64 : KW_F32, ndim,
                                  dims);
    if (st)
        return st;
    if (job->opt->keep_coils) {
        memcpy(job->image.data, x, np * sizeof *x);
    } else {
        float *o = job->image.data;
        for (size_t i = 0; i < np; i++)
            o[i] = cabsf(x[i]);
    }
    return KW_OK;
}

static void add_nufft_info(cJSON *r, const kw_nufft_plan *p)
{
    kw_nufft_info in;
    if (kw_nufft_get_info(p, &in))
        return;
    cJSON *o = cJSON_AddObjectToObject(r, "nufft");
    cJSON_AddNumberToObject(o, "tolerance", in.tolerance);
    cJSON_AddNumberToObject(o, "oversampling", in.oversampling);
    cJSON_AddNumberToObject(o, "kernel_width", in.width);
    cJSON_AddNumberToObject(o, "kaiser_bessel_beta", in.beta);
    double g[3];
    for (int d = 0; d < in.ndim; d++)
        g[d] = (double)in.grid[d];
    kw_json_add_vec(o, "grid", g, in.ndim);
}

kw_status kw_recon_run_grid(kw_recon_job *job)
{
    int ndim;
    size_t dims[3];
    kw_status st = kw_nc_geometry(job, &ndim, dims);
    if (st)
        return st;
    size_t nc = job->ksp.dims[0], ns = job->traj.dims[0], np = 1;
    for (int d = 0; d < ndim; d++)
        np *= dims[d];
    float *w = NULL;
    float complex *y = NULL, *img = NULL;
    kw_nufft_plan *p = NULL;
    kw_nufft_opts no;
    kw_nc_nufft_opts(job, &no);
    if ((st = kw_nufft_create(&p, ndim, dims, ns, job->traj.data, &no)))
        return st;
    if ((st = kw_nc_weights(job, ndim, dims, 1, &w)))
        goto done;
    y = malloc(nc * ns * sizeof *y);
    img = kw_alloc(nc * np * sizeof *img);
    if (!y || !img) {
        st = kw_set_error(KW_ENOMEM, "grid: out of memory");
        goto done;
    }
    for (size_t c = 0; c < nc; c++)
        for (size_t j = 0; j < ns; j++)
            y[c * ns + j] = w[j] * ((const float complex *)job->ksp.data)[c * ns + j];
    if (job->progress) {
        kw_progress pr = {"grid", 0, 0, NAN};
        job->progress(job->progress_user, &pr);
    }
    if ((st = kw_nufft_adjoint(p, y, img, nc)))
        goto done;
    add_nufft_info(job->report, p);
    if (job->opt->keep_coils) {
        size_t sh[4] = {nc, dims[0], dims[1], dims[2]};
        if ((st = kw_array_alloc(&job->image, KW_C64, ndim + 1, sh)))
            goto done;
        memcpy(job->image.data, img, nc * np * sizeof *img);
    } else {
        if ((st = kw_array_alloc(&job->image, KW_F32, ndim, dims)))
            goto done;
        float *o = job->image.data;
        const float complex *s = job->sens.data;
        for (size_t i = 0; i < np; i++) {
            double a = 0, b = 0;
            double complex z = 0;
            for (size_t c = 0; c < nc; c++) {
                if (s) {
                    z += conj((double complex)s[c * np + i]) * img[c * np + i];
                    b += pow(cabsf(s[c * np + i]), 2);
                } else {
                    a += pow(cabsf(img[c * np + i]), 2);
                }
            }
            o[i] = s ? (b > 0 ? (float)(cabs(z) / b) : 0.0f) : (float)sqrt(a);
        }
        cJSON_AddStringToObject(job->report, "combine", s ? "sensitivity-weighted" : "rss");
    }
done:
    kw_nufft_destroy(p);
    free(w);
    free(y);
    kw_free(img);
    return st;
}
