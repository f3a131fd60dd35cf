/* recon_grid.c: gridding reconstruction of non-Cartesian data (radial,
 * golden-angle, stack-of-stars, spiral) for kw_recon: coil images
 * x_c = F_nu^H W y_c with density compensation W (kw_dcf.h) and the NUFFT's
 * adjoint (kw_nufft.h), combined by root-sum-of-squares, or by the maps
 * (sum_c conj(s_c) x_c / sum_c |s_c|^2) when maps are given.
 * Also what the iterative non-Cartesian methods share (recon_iter.c): image
 * geometry, density weights, NUFFT options, coil maps, the output image. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_dcf.h"
#include "kw_nufft.h"
#include "recon_priv.h"

void kw_nc_nufft_opts(const kw_recon_options *o, kw_nufft_options *no)
{
    kw_nufft_options_init(no);
    if (!isnan(o->tolerance))
        no->tolerance = o->tolerance;
    if (!isnan(o->oversampling))
        no->oversampling = o->oversampling;
}

/* Image shape (C order): the maps' shape, else the caller's image_dims, else
 * twice the trajectory's extent per axis. */
kw_status kw_nc_geometry(kw_recon *r)
{
    const kw_recon_geometry *g = &r->g;
    int nd = g->traj_ndim;
    KW_FAIL_PARAM(nd != 2 && nd != 3, KW_ENOTSUP, "trajectory",
                  "%d-D trajectories are not supported (2-D or 3-D)", nd);
    r->nc_ndim = nd;
    if (g->sens) {
        KW_FAIL_PARAM(g->sens_ndim != nd + 1, KW_EFORMAT, "sens",
                      "shape must be (coils, %s) for a %d-D trajectory",
                      nd == 2 ? "ny, nx" : "nz, ny, nx", nd);
        for (int d = 0; d < nd; d++)
            r->nc_dims[d] = g->sens_dims[d + 1];
        return KW_OK;
    }
    if (g->image_dims) {
        for (int d = 0; d < nd; d++) {
            KW_FAIL_PARAM(g->image_dims[d] < 2 || g->image_dims[d] > 65536, KW_EFORMAT,
                          "image_dims", "entry %d is not a size", d);
            r->nc_dims[d] = g->image_dims[d];
        }
        return KW_OK;
    }
    /* the smallest even N with every k in [-N/2, N/2) */
    const float *k = g->trajectory;
    size_t ns = g->dims[1];
    for (int c = 0; c < nd; c++) {
        double h = 1;
        for (size_t j = 0; j < ns; j++) {
            double v = k[j * nd + c];
            double need = v < 0 ? ceil(-v) : floor(v) + 1;
            h = need > h ? need : h;
        }
        KW_FAIL_PARAM(!(h <= 32768), KW_ERANGE, "trajectory",
                      "coordinate %d reaches %g cycles/FOV", c, h);
        r->nc_dims[nd - 1 - c] = 2 * (size_t)h;
    }
    return KW_OK;
}

/* Radial (or stack-of-stars, golden-angle) trajectories: consecutive samples
 * on one line through the origin of the kx-ky plane for >= 90% of pairs. */
static int is_radial(const float *k, size_t ns, size_t nd)
{
    size_t on = 0;
    if (ns < 2)
        return 0;
    for (size_t j = 0; j + 1 < ns; j++) {
        double ax = k[j * nd], ay = k[j * nd + 1], bx = k[(j + 1) * nd], by = k[(j + 1) * nd + 1];
        double cr = fabs(ax * by - ay * bx), sc = (ax * ax + ay * ay) + (bx * bx + by * by);
        on += cr <= 1e-4 * sc;
    }
    return (double)on >= 0.9 * (double)(ns - 1);
}

/* Density weights r->w (one per sample) by the options' dcf. */
kw_status kw_nc_weights(kw_recon *r)
{
    size_t ns = r->g.dims[1];
    const float *t = r->g.trajectory;
    int nd = r->g.traj_ndim;
    kw_recon_dcf kind = r->o.dcf;
    if (kind == KW_RECON_DCF_AUTO)
        kind = is_radial(t, ns, (size_t)nd) ? KW_RECON_DCF_RADIAL : KW_RECON_DCF_PIPE;
    r->dcf_used = kind;
    r->w = kw_alloc_n(ns, sizeof *r->w);
    KW_FAIL_PARAM(!r->w, KW_ENOMEM, "dcf", "out of memory");
    if (kind == KW_RECON_DCF_GIVEN) {
        const float *v = r->g.weights;
        KW_FAIL_PARAM(!v, KW_EINVAL, "dcf", "given weights expected (weights is NULL)");
        size_t nonzero = 0;
        for (size_t j = 0; j < ns; j++) {
            KW_FAIL_PARAM(!(v[j] >= 0) || !isfinite(v[j]), KW_ERANGE, "dcf",
                          "weight %zu is negative or not finite", j);
            nonzero += v[j] > 0;
        }
        /* all zero: every sample dropped, an image of nothing */
        KW_FAIL_PARAM(nonzero == 0, KW_EINVAL, "dcf", "every weight is zero");
        memcpy(r->w, v, ns * sizeof *r->w);
        return KW_OK;
    }
    if (kind == KW_RECON_DCF_RADIAL)
        return kw_dcf_radial(nd, ns, t, r->w);
    kw_nufft_options no;
    kw_nc_nufft_opts(&r->o, &no);
    return kw_dcf_pipe(nd, r->nc_dims, ns, t, 20, &no, r->w);
}

/* Coil maps: the given ones, or (several coils) estimated from low-resolution
 * gridded coil images, s_c = x_c / sqrt(sum |x_c|^2) where that exceeds 5%
 * of its maximum, 0 elsewhere (ratio to root-sum-of-squares: common
 * practice, no source); the centre of k-space (radius N/8, Hann taper)
 * makes the coil images. One coil without maps: NULL (ones). */
kw_status kw_nc_sens(kw_rjob *job, float complex **sens)
{
    *sens = NULL;
    const kw_recon *r = job->r;
    int ndim = r->nc_ndim;
    const size_t *dims = r->nc_dims;
    const float *w = r->w;
    size_t nc = r->nc, np = 1, ns = r->g.dims[1];
    for (int d = 0; d < ndim; d++)
        np *= dims[d];
    if (r->g.sens) {
        *sens = kw_alloc(nc * np * sizeof **sens);
        KW_FAIL_PARAM(!*sens, KW_ENOMEM, "sens", "out of memory");
        memcpy(*sens, r->g.sens, nc * np * sizeof **sens);
        return KW_OK;
    }
    if (nc == 1)
        return KW_OK;
    const float *t = r->g.trajectory;
    double kc = (double)dims[ndim - 1] / 8.0;
    float complex *y = kw_alloc_n(nc * ns, sizeof *y);
    float complex *img = kw_alloc(nc * np * sizeof *img);
    kw_nufft_plan *p = NULL;
    kw_nufft_options no;
    kw_nc_nufft_opts(job->opt, &no);
    kw_status st = KW_OK;
    if (!y || !img) {
        st = kw_set_error_param(KW_ENOMEM, "sens", "out of memory");
        goto done;
    }
    for (size_t j = 0; j < ns; j++) {
        double rr = 0;
        for (int c = 0; c < ndim; c++)
            rr += (double)t[j * ndim + c] * t[j * ndim + c];
        rr = sqrt(rr);
        float f = rr < kc ? (float)(0.5 * (1 + cos(KW_PI * rr / kc))) * (w ? w[j] : 1.0f) : 0.0f;
        for (size_t c = 0; c < nc; c++)
            y[c * ns + j] = f * job->ksp[c * ns + j];
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
    job->rep->sens_estimated = 1;
    job->rep->sens_at = 2;
    job->rep->sens_source = "estimated (low-resolution gridded coil images / root-sum-of-squares)";
done:
    kw_nufft_destroy(p);
    kw_free(y);
    kw_free(img);
    return st;
}

/* The image from one complex image: |x| (float), or x with keep_coils. */
kw_status kw_nc_image(kw_rjob *job, const float complex *x)
{
    const kw_recon *r = job->r;
    size_t np = 1;
    for (int d = 0; d < r->nc_ndim; d++)
        np *= r->nc_dims[d];
    int cplx = job->opt->keep_coils || job->opt->complex_image;
    kw_status st = kw_array_alloc(&job->image, cplx ? KW_C64 : KW_F32, r->nc_ndim, r->nc_dims);
    if (st)
        return st;
    if (cplx) {
        memcpy(job->image.data, x, np * sizeof *x);
    } else {
        float *o = job->image.data;
        for (size_t i = 0; i < np; i++)
            o[i] = cabsf(x[i]);
    }
    return KW_OK;
}

static void report_nufft(kw_recon_report *rep, const kw_nufft_plan *p)
{
    kw_nufft_info in;
    if (kw_nufft_get_info(p, &in))
        return;
    rep->has_nufft = 1;
    rep->nufft_tolerance = in.tolerance;
    rep->nufft_oversampling = in.oversampling;
    rep->nufft_width = in.width;
    rep->nufft_beta = in.beta;
    rep->nufft_ndim = in.ndim;
    for (int d = 0; d < in.ndim; d++)
        rep->nufft_grid[d] = in.grid[d];
}

static void combine_grid(const kw_recon *r, const float complex *img, size_t np, float *o)
{
    size_t nc = r->nc;
    const float complex *s = r->g.sens;
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
}

kw_status kw_recon_run_grid(kw_rjob *job)
{
    kw_recon *r = job->r;
    int ndim = r->nc_ndim;
    const size_t *dims = r->nc_dims;
    size_t nc = r->nc, ns = r->g.dims[1], np = 1;
    for (int d = 0; d < ndim; d++)
        np *= dims[d];
    float complex *y = NULL, *img = NULL;
    kw_nufft_plan *p = NULL;
    kw_nufft_options no;
    kw_nc_nufft_opts(job->opt, &no);
    kw_status st;
    if ((st = kw_nufft_create(&p, ndim, dims, ns, r->g.trajectory, &no)))
        return st;
    job->rep->dcf_used = r->dcf_used;
    y = kw_alloc_n(nc * ns, sizeof *y);
    img = kw_alloc(nc * np * sizeof *img);
    if (!y || !img) {
        st = kw_set_error(KW_ENOMEM, "grid: out of memory");
        goto done;
    }
    for (size_t c = 0; c < nc; c++)
        for (size_t j = 0; j < ns; j++)
            y[c * ns + j] = r->w[j] * job->ksp[c * ns + j];
    if (job->progress) {
        kw_progress pr = {"grid", 0, 0, NAN, NULL};
        job->progress(job->progress_user, &pr);
    }
    if ((st = kw_nufft_adjoint(p, y, img, nc)))
        goto done;
    report_nufft(job->rep, p);
    if (job->opt->complex_image && nc == 1) {
        if ((st = kw_array_alloc(&job->image, KW_C64, ndim, dims)))
            goto done;
        memcpy(job->image.data, img, np * sizeof *img);
    } else if (job->opt->complex_image) {
        st = kw_set_error_param(KW_ENOTSUP, "complex_image",
                                "grid combines its coils by magnitude; cg-sense gives the complex "
                                "image");
    } else if (job->opt->keep_coils) {
        size_t sh[4] = {nc, dims[0], dims[1], dims[2]};
        if ((st = kw_array_alloc(&job->image, KW_C64, ndim + 1, sh)))
            goto done;
        memcpy(job->image.data, img, nc * np * sizeof *img);
    } else {
        if ((st = kw_array_alloc(&job->image, KW_F32, ndim, dims)))
            goto done;
        combine_grid(r, img, np, job->image.data);
        job->rep->combine = r->g.sens ? "sensitivity-weighted" : "rss";
    }
done:
    kw_nufft_destroy(p);
    kw_free(y);
    kw_free(img);
    return st;
}
