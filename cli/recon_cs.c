/* recon_cs.c: `kweave recon --method cs-wavelet|cs-tv` (and their -admm
 * variants): compressed sensing (Lustig, Donoho & Pauly 2007) on Cartesian
 * (masked) or non-Cartesian data, and the problem set-up shared with
 * cg-sense: E = (sampling) F (coil maps) from kw_encoder.h, maps given or
 * estimated, W = the --dcf weights if given (non-Cartesian), and the solver
 * of kw_solvers.h. --lambda is relative to max |E^H W y| (so that it does
 * not depend on the data's scale); the report holds the absolute value. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_encoder.h"
#include "kw_nufft.h"
#include "kw_solvers.h"
#include "recon_cart.h"
#include "recon_cli.h"
#include "recon_nc.h"

kw_status kw_nc_iterative(kw_recon_job *job, int kind);

enum { K_CG = 0, K_FISTA_WAV, K_FISTA_TV, K_ADMM_WAV, K_ADMM_TV };

static const char *const kind_name[] = {"cg-sense", "fista", "fista", "admm", "admm"};

kw_status kw_nc_iterative(kw_recon_job *job, int kind)
{
    const kw_recon_opts *o = job->opt;
    const int noncart = job->traj.data != NULL;
    int ndim = 0;
    size_t dims[3] = {1, 1, 1}, np = 1;
    size_t nc = job->ksp.dims[0];
    kw_cart cart;
    memset(&cart, 0, sizeof cart);
    float *w = NULL;
    float complex *sens = NULL, *x = NULL, *b = NULL;
    uint8_t *mask = NULL;
    const float complex *y;
    kw_encoder *enc = NULL;
    kw_solver *sol = NULL;
    kw_status st;
    kw_encoder_opts eo = {0};
    kw_nufft_opts no;
    kw_nc_nufft_opts(job, &no);
    eo.tolerance = no.tolerance;
    eo.oversampling = no.oversampling;
    if (noncart) {
        if ((st = kw_nc_geometry(job, &ndim, dims)))
            return st;
        for (int d = 0; d < ndim; d++)
            np *= dims[d];
        if ((st = kw_nc_weights(job, ndim, dims, 1, &w)))
            goto done;
        if ((st = kw_nc_sens(job, ndim, dims, w, &sens)))
            goto done;
        y = job->ksp.data;
        st = kw_encoder_create(&enc, ndim, dims, nc, sens, NULL, job->traj.dims[0],
                               job->traj.data, w, &eo);
    } else {
        if (o->dcf) {
            st = kw_set_error(KW_EINVAL, "dcf: density compensation applies to non-Cartesian data only");
            goto done;
        }
        /* kw_cart_setup() checks the sidecar's "acceleration" against a
         * uniform lattice; these methods take any mask (random, Poisson
         * disc), so the sidecar is hidden from that check: the sampling is
         * read from the data themselves */
        const cJSON *sc = job->sidecar;
        job->sidecar = NULL;
        st = kw_cart_setup(job, &cart);
        job->sidecar = sc;
        if (st)
            goto done;
        if (nc > 1 && (st = kw_cart_need_sens(job, &cart)))
            goto done;
        size_t sd[3];
        kw_cart_spatial_dims(&cart, sd, &ndim);
        for (int d = 0; d < ndim; d++) {
            dims[d] = sd[d];
            np *= sd[d];
        }
        mask = malloc(np);
        if (!mask) {
            st = kw_set_error(KW_ENOMEM, "recon: out of memory");
            goto done;
        }
        kw_cart_mask(cart.k, nc, np, mask);
        y = cart.k;
        st = kw_encoder_create(&enc, ndim, dims, nc, cart.sens, mask, 0, NULL, NULL, &eo);
    }
    if (st)
        goto done;
    kw_solver_opts so = {0};
    so.iterations = o->iterations > 0 ? (int)o->iterations : kind == K_CG ? 30 : 100;
    so.stop = isnan(o->stop) ? (kind == K_CG ? 1e-6 : 1e-4) : o->stop;
    so.reg = kind == K_FISTA_WAV || kind == K_ADMM_WAV ? KW_REG_WAVELET
             : kind == K_CG                            ? KW_REG_NONE
                                                       : KW_REG_TV;
    double lrel = 0;
    if (kind != K_CG) {
        /* defaults from a scan over 0.0003 .. 0.03 on the simulator's weave
         * phantom, 128 x 128, 240 mm, 8 coils, variable-density random mask
         * (R 4.9, seed 1), SNR 40 (samples/noncartesian_pictures.sh): TV
         * NRMSE 0.020 / 0.019 / 0.029 / 0.047 at 0.001 / 0.003 / 0.01 / 0.03;
         * wavelet 0.054 / 0.055 / 0.063 at 0.001 / 0.003 / 0.01 (SSIM best
         * at 0.003). The data decide: common practice, no source. */
        lrel = isnan(o->lambda) ? 0.003 : o->lambda;
        b = kw_alloc(np * sizeof *b);
        float complex *wy = malloc(nc * kw_encoder_kpoints(enc) * sizeof *wy);
        if (!b || !wy) {
            free(wy);
            st = kw_set_error(KW_ENOMEM, "recon: out of memory");
            goto done;
        }
        size_t nk = kw_encoder_kpoints(enc);
        for (size_t i = 0; i < nc * nk; i++)
            wy[i] = (w ? w[i % nk] : 1.0f) * y[i];
        st = kw_encoder_adjoint(enc, wy, b);
        free(wy);
        if (st)
            goto done;
        double mx = 0;
        for (size_t i = 0; i < np; i++)
            mx = cabsf(b[i]) > mx ? cabsf(b[i]) : mx;
        so.lambda = lrel * mx;
    }
    if ((st = kw_solver_create(&sol, enc, ndim, dims, &so)))
        goto done;
    x = kw_alloc(np * sizeof *x);
    if (!x) {
        st = kw_set_error(KW_ENOMEM, "recon: out of memory");
        goto done;
    }
    switch (kind) {
    case K_CG: st = kw_cg_sense(sol, y, x, job->progress, job->progress_user); break;
    case K_FISTA_WAV:
    case K_FISTA_TV: st = kw_fista(sol, y, x, job->progress, job->progress_user); break;
    default: st = kw_admm(sol, y, x, job->progress, job->progress_user); break;
    }
    if (st)
        goto done;
    cJSON *r = job->report;
    cJSON_AddStringToObject(r, "solver", kind_name[kind]);
    if (kind != K_CG) {
        cJSON_AddStringToObject(r, "regulariser", so.reg == KW_REG_TV ? "tv" : "wavelet-db4");
        cJSON_AddNumberToObject(r, "lambda", lrel);
        cJSON_AddNumberToObject(r, "lambda_absolute", so.lambda);
    }
    cJSON_AddNumberToObject(r, "max_iterations", so.iterations);
    cJSON_AddNumberToObject(r, "stop", so.stop);
    {
        const kw_iter_record *rec;
        size_t nr = kw_solver_log(sol, &rec);
        cJSON_AddNumberToObject(r, "iterations", (double)nr);
        cJSON *log = cJSON_AddArrayToObject(r, "iteration_log");
        for (size_t i = 0; log && i < nr; i++) {
            cJSON *e = cJSON_CreateObject();
            cJSON_AddNumberToObject(e, "iter", rec[i].iter);
            cJSON_AddNumberToObject(e, "objective", rec[i].objective);
            cJSON_AddNumberToObject(e, kind == K_CG ? "residual" : "change", rec[i].change);
            cJSON_AddItemToArray(log, e);
        }
    }
    if (noncart)
        st = kw_nc_image(job, ndim, dims, x);
    else
        st = kw_cart_image_complex(job, &cart, x);
done:
    kw_solver_destroy(sol);
    kw_encoder_destroy(enc);
    kw_cart_free(&cart);
    free(w);
    free(mask);
    kw_free(sens);
    kw_free(x);
    kw_free(b);
    return st;
}

kw_status kw_recon_run_cs_wavelet(kw_recon_job *job) { return kw_nc_iterative(job, K_FISTA_WAV); }
kw_status kw_recon_run_cs_tv(kw_recon_job *job) { return kw_nc_iterative(job, K_FISTA_TV); }
kw_status kw_recon_run_cs_wavelet_admm(kw_recon_job *job) { return kw_nc_iterative(job, K_ADMM_WAV); }
kw_status kw_recon_run_cs_tv_admm(kw_recon_job *job) { return kw_nc_iterative(job, K_ADMM_TV); }
