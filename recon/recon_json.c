/* recon_json.c: the report of a reconstruction's last execute as JSON
 * (kw_recon_report_json(); the builder of `kweave recon --json`,
 * recon_json.h). */
#include <string.h>

#include "json_build.h"
#include "recon_json.h"
#include "recon_priv.h"

static void add_sizes(cJSON *j, const char *key, const size_t *d, int n)
{
    double v[4];
    for (int i = 0; i < n && i < 4; i++)
        v[i] = (double)d[i];
    kw_json_add_vec(j, key, v, n);
}

static void json_sampling(cJSON *j, const kw_recon_report *p)
{
    cJSON *smp = cJSON_AddObjectToObject(j, "sampling");
    if (!smp)
        return;
    double acc[3], acs[3];
    int off = 3 - p->sdim;
    for (int i = off; i < 3; i++) {
        acc[i - off] = p->accel[i];
        acs[i - off] = (double)p->acs[i];
    }
    kw_json_add_vec(smp, "acceleration_axes", acc, p->sdim);
    kw_json_add_vec(smp, "acs_axes", acs, p->sdim);
    cJSON_AddNumberToObject(smp, "acceleration", p->acceleration);
    cJSON_AddNumberToObject(smp, "sampled_fraction", p->sampled_fraction);
    cJSON_AddBoolToObject(smp, "uniform", p->uniform);
    cJSON_AddBoolToObject(smp, "partial_fourier", p->partial_fourier);
}

static void json_solver(cJSON *j, const kw_recon_report *p)
{
    cJSON_AddStringToObject(j, "solver", p->solver);
    if (p->regulariser) {
        cJSON_AddStringToObject(j, "regulariser", p->regulariser);
        cJSON_AddNumberToObject(j, "lambda", p->lambda);
        cJSON_AddNumberToObject(j, "lambda_absolute", p->lambda_absolute);
    }
    cJSON_AddNumberToObject(j, "max_iterations", p->max_iterations);
    cJSON_AddNumberToObject(j, "stop", p->stop);
    cJSON_AddNumberToObject(j, "iterations", p->iterations);
    cJSON *log = cJSON_AddArrayToObject(j, "iteration_log");
    for (int i = 0; log && i < p->iterations; i++) {
        cJSON *e = cJSON_CreateObject();
        cJSON_AddNumberToObject(e, "iter", p->log_iter[i]);
        cJSON_AddNumberToObject(e, "objective", p->log_objective[i]);
        cJSON_AddNumberToObject(e, p->log_change_name, p->log_change[i]);
        cJSON_AddItemToArray(log, e);
    }
}

static void json_nufft(cJSON *j, const kw_recon_report *p)
{
    cJSON *o = cJSON_AddObjectToObject(j, "nufft");
    cJSON_AddNumberToObject(o, "tolerance", p->nufft_tolerance);
    cJSON_AddNumberToObject(o, "oversampling", p->nufft_oversampling);
    cJSON_AddNumberToObject(o, "kernel_width", p->nufft_width);
    cJSON_AddNumberToObject(o, "kaiser_bessel_beta", p->nufft_beta);
    add_sizes(o, "grid", p->nufft_grid, p->nufft_ndim);
}

static void json_method_specific(cJSON *j, const kw_recon_report *p)
{
    const char *m = p->method;
    if (strcmp(m, "sense") == 0) {
        if (p->gfactor_analytic)
            cJSON_AddStringToObject(j, "gfactor_method", p->gfactor_analytic);
        cJSON_AddNumberToObject(j, "lambda", p->lambda);
    } else if (strcmp(m, "grappa") == 0) {
        double k[3];
        for (int i = 0; i < p->kernel_n && i < 3; i++)
            k[i] = p->kernel[i];
        kw_json_add_vec(j, "kernel", k, p->kernel_n);
        cJSON_AddNumberToObject(j, "lambda", p->lambda);
        cJSON_AddNumberToObject(j, "calibration_fits", p->calibration_fits);
    } else if (p->solver) {
        json_solver(j, p);
    } else if (p->has_nufft) {
        json_nufft(j, p);
    }
}

void kw_recon_json_add_method(cJSON *j, const kw_recon_report *p, kw_json_slot_fn fn,
                              void *user)
{
    if (!p->noncartesian) {
        if (p->prewhitened)
            cJSON_AddBoolToObject(j, "prewhitened", 1);
        if (p->sens_estimated && p->sens_at == 1) {
            cJSON_AddStringToObject(j, "sens_source", p->sens_source);
            kw_json_slot(fn, user, j, "sens_file");
        }
        if (p->has_sampling)
            json_sampling(j, p);
    } else if (p->dcf_used) {
        if (p->dcf_used == KW_RECON_DCF_RADIAL)
            cJSON_AddStringToObject(j, "dcf", "radial");
        else if (p->dcf_used == KW_RECON_DCF_PIPE)
            cJSON_AddStringToObject(j, "dcf", "pipe");
        else if (!kw_json_slot(fn, user, j, "dcf"))
            cJSON_AddStringToObject(j, "dcf", "given");
        kw_json_slot(fn, user, j, "dcf_file");
    }
    if (p->sens_estimated && p->sens_at == 2)
        cJSON_AddStringToObject(j, "sens_source", p->sens_source);
    if (p->has_pf) {
        double f[3];
        for (int i = 0; i < p->sdim && i < 3; i++)
            f[i] = p->pf_fraction[i];
        kw_json_add_vec(j, "partial_fourier_fraction", f, p->sdim);
        if (p->iterations >= 0)
            cJSON_AddNumberToObject(j, "iterations", p->iterations);
    }
    json_method_specific(j, p);
    if (p->combine)
        cJSON_AddStringToObject(j, "combine", p->combine);
    if (p->sens_estimated && p->sens_at == 3)
        cJSON_AddStringToObject(j, "sens_source", p->sens_source);
}

cJSON *kw_recon_json_build(const kw_recon *r, kw_json_slot_fn fn, void *user)
{
    const kw_recon_report *p = &r->rep;
    cJSON *j = cJSON_CreateObject();
    if (!j)
        return NULL;
    cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(j, "kind", "recon");
    cJSON_AddStringToObject(j, "method", p->method);
    kw_json_slot(fn, user, j, "input");
    cJSON_AddStringToObject(j, "layout", r->noncart ? "noncartesian" : "cartesian");
    add_sizes(j, "kspace_shape", r->kdims, r->kndim);
    cJSON_AddNumberToObject(j, "coils", (double)r->kdims[0]);
    if (!p->sens_estimated && !kw_json_slot(fn, user, j, "sens_source"))
        cJSON_AddStringToObject(j, "sens_source", r->g.sens ? "given" : "none");
    kw_recon_json_add_method(j, p, fn, user);
    add_sizes(j, "image_shape", r->out_dims, r->out_ndim);
    if (r->o.want_gfactor) {
        if (p->gfactor_method) {
            cJSON_AddStringToObject(j, "gfactor_method", p->gfactor_method);
            cJSON_AddNumberToObject(j, "gfactor_replicas", p->gfactor_replicas);
        }
        cJSON_AddNumberToObject(j, "gfactor_mean", p->gfactor_mean);
        cJSON_AddNumberToObject(j, "gfactor_max", p->gfactor_max);
        kw_json_slot(fn, user, j, "gfactor_file");
    }
    return j;
}

kw_status kw_recon_report_json(const kw_recon *r, char **json)
{
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL output pointer");
    *json = NULL;
    KW_FAIL_IF(!r, KW_EINVAL, "recon: NULL object");
    KW_FAIL_IF(!r->rep.method, KW_EINVAL, "recon: no report before kw_recon_execute()");
    return kw_json_text(kw_recon_json_build(r, NULL, NULL), json);
}
