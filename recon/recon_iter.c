/* recon_iter.c: CG-SENSE (Pruessmann, Weiger, Boernert & Boesiger 2001) and
 * compressed sensing (Lustig, Donoho & Pauly 2007: cs-wavelet, cs-tv, and
 * their ADMM variants) for kw_recon, on Cartesian (masked) or non-Cartesian
 * data: E = (sampling) F (coil maps) from kw_encoder.h, maps given or
 * estimated, W = the density weights (non-Cartesian), and the solver of
 * kw_solvers.h. lambda is relative to max |E^H W y| (so that it does not
 * depend on the data's scale); the report holds the absolute value too. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_encoder.h"
#include "kw_nufft.h"
#include "kw_solvers.h"
#include "recon_priv.h"

enum { K_CG = 0, K_FISTA_WAV, K_FISTA_TV, K_ADMM_WAV, K_ADMM_TV };

static const char *const kind_name[] = {"cg-sense", "fista", "fista", "admm", "admm"};

/* The operator for the job's data; *y: the data it applies to. */
static kw_status make_encoder(kw_rjob *job, kw_cart *cart, float complex **sens,
                              uint8_t **mask, const float complex **y, kw_encoder **enc)
{
    kw_recon *r = job->r;
    kw_nufft_options no;
    kw_nc_nufft_opts(job->opt, &no);
    kw_encoder_options eo;
    kw_encoder_options_init(&eo);
    eo.ncoils = r->nc;
    eo.tolerance = no.tolerance;
    eo.oversampling = no.oversampling;
    kw_status st;
    if (r->noncart) {
        job->rep->dcf_used = r->dcf_used;
        if ((st = kw_nc_sens(job, sens)))
            return st;
        *y = job->ksp;
        eo.sens = *sens;
        eo.nsamples = r->g.dims[1];
        eo.trajectory = r->g.trajectory;
        eo.weights = r->w;
        return kw_encoder_create(enc, r->nc_ndim, r->nc_dims, &eo);
    }
    KW_FAIL_PARAM(r->o.dcf != KW_RECON_DCF_AUTO, KW_EINVAL, "dcf",
                  "density compensation applies to non-Cartesian data only");
    /* the set-up checks stated accelerations against a uniform lattice;
     * these methods take any mask (random, Poisson disc), so the claims are
     * not checked: the sampling is read from the data themselves */
    job->use_claims = 0;
    if ((st = kw_cart_setup_read(job, cart)))
        return st;
    if (r->nc > 1 && (st = kw_cart_need_sens(job, cart, 2)))
        return st;
    *mask = kw_alloc_n(cart->npix, 1);
    KW_FAIL_IF(!*mask, KW_ENOMEM, "recon: out of memory");
    kw_cart_mask(cart->k, r->nc, cart->npix, *mask);
    *y = cart->k;
    eo.sens = cart->sens;
    eo.mask = *mask;
    return kw_encoder_create(enc, r->sp_ndim, r->sp_dims, &eo);
}

/* lambda relative to max |E^H W y|. */
static kw_status lambda_abs(kw_encoder *enc, const float *w, const float complex *y, size_t np,
                            double lrel, double *labs)
{
    size_t nc = kw_encoder_coils(enc), nk = kw_encoder_kpoints(enc);
    float complex *b = kw_alloc(np * sizeof *b);
    float complex *wy = kw_alloc_n(nc * nk, sizeof *wy);
    if (!b || !wy) {
        kw_free(wy);
        kw_free(b);
        return kw_set_error(KW_ENOMEM, "recon: out of memory");
    }
    for (size_t i = 0; i < nc * nk; i++)
        wy[i] = (w ? w[i % nk] : 1.0f) * y[i];
    kw_status st = kw_encoder_adjoint(enc, wy, b);
    kw_free(wy);
    double mx = 0;
    for (size_t i = 0; !st && i < np; i++)
        mx = cabsf(b[i]) > mx ? cabsf(b[i]) : mx;
    kw_free(b);
    *labs = lrel * mx;
    return st;
}

static kw_status report_log(kw_rjob *job, const kw_solver *sol, int kind)
{
    kw_recon_report *rep = job->rep;
    const kw_iter_record *rec;
    size_t nr = kw_solver_log(sol, &rec);
    rep->iterations = (int)nr;
    if (rep != &job->r->rep) /* a pseudo-replica: the log is not kept */
        return KW_OK;
    kw_free(job->r->log);
    job->r->log = kw_alloc_n(3 * nr + 1, sizeof *job->r->log);
    KW_FAIL_IF(!job->r->log, KW_ENOMEM, "recon: out of memory");
    for (size_t i = 0; i < nr; i++) {
        job->r->log[i] = rec[i].iter;
        job->r->log[nr + i] = rec[i].objective;
        job->r->log[2 * nr + i] = rec[i].change;
    }
    rep->log_iter = job->r->log;
    rep->log_objective = job->r->log + nr;
    rep->log_change = job->r->log + 2 * nr;
    rep->log_change_name = kind == K_CG ? "residual" : "change";
    return KW_OK;
}

static kw_status run_iterative(kw_rjob *job, int kind)
{
    const kw_recon_options *o = job->opt;
    kw_recon *r = job->r;
    int ndim = r->noncart ? r->nc_ndim : r->sp_ndim;
    const size_t *dims = r->noncart ? r->nc_dims : r->sp_dims;
    size_t np = 1;
    for (int d = 0; d < ndim; d++)
        np *= dims[d];
    kw_cart cart;
    memset(&cart, 0, sizeof cart);
    float complex *sens = NULL, *x = NULL;
    uint8_t *mask = NULL;
    const float complex *y = NULL;
    kw_encoder *enc = NULL;
    kw_solver *sol = NULL;
    kw_status st = make_encoder(job, &cart, &sens, &mask, &y, &enc);
    if (st)
        goto done;
    kw_solver_options so;
    kw_solver_options_init(&so);
    so.iterations = o->iterations > 0 ? o->iterations : kind == K_CG ? 30 : 100;
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
        if ((st = lambda_abs(enc, r->noncart ? r->w : NULL, y, np, lrel, &so.lambda)))
            goto done;
    }
    if ((st = kw_solver_create(&sol, enc, ndim, dims, &so)))
        goto done;
    x = kw_alloc(np * sizeof *x);
    KW_FAIL_GOTO(!x, st, KW_ENOMEM, done, "recon: out of memory");
    switch (kind) {
    case K_CG: st = kw_cg_sense(sol, y, x, job->progress, job->progress_user); break;
    case K_FISTA_WAV:
    case K_FISTA_TV: st = kw_fista(sol, y, x, job->progress, job->progress_user); break;
    default: st = kw_admm(sol, y, x, job->progress, job->progress_user); break;
    }
    if (st)
        goto done;
    kw_recon_report *rep = job->rep;
    rep->solver = kind_name[kind];
    if (kind != K_CG) {
        rep->regulariser = so.reg == KW_REG_TV ? "tv" : "wavelet-db4";
        rep->lambda = lrel;
        rep->lambda_absolute = so.lambda;
    }
    rep->max_iterations = so.iterations;
    rep->stop = so.stop;
    if ((st = report_log(job, sol, kind)))
        goto done;
    st = r->noncart ? kw_nc_image(job, x) : kw_cart_image_complex(job, &cart, x);
done:
    kw_solver_destroy(sol);
    kw_encoder_destroy(enc);
    kw_cart_free(&cart);
    kw_free(mask);
    kw_free(sens);
    kw_free(x);
    return st;
}

kw_status kw_recon_run_cg_sense(kw_rjob *job) { return run_iterative(job, K_CG); }
kw_status kw_recon_run_cs_wavelet(kw_rjob *job) { return run_iterative(job, K_FISTA_WAV); }
kw_status kw_recon_run_cs_tv(kw_rjob *job) { return run_iterative(job, K_FISTA_TV); }
kw_status kw_recon_run_cs_wavelet_admm(kw_rjob *job) { return run_iterative(job, K_ADMM_WAV); }
kw_status kw_recon_run_cs_tv_admm(kw_rjob *job) { return run_iterative(job, K_ADMM_TV); }
