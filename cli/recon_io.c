/* recon_io.c: what cmd_recon.c and recon_multislice.c share (recon_cli.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "jsonio.h"
#include "recon_cli.h"

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

void kw_recon_cli_options(const kw_recon_opts *o, kw_recon_options *ro)
{
    kw_recon_options_init(ro);
    ro->method = o->method;
    ro->combine = o->combine;
    ro->lambda = o->lambda;
    ro->iterations = (int)o->iterations;
    ro->stop = o->stop;
    ro->tolerance = o->tolerance;
    ro->oversampling = o->oversampling;
    ro->kernel[0] = o->kernel_yx[0];
    ro->kernel[1] = o->kernel_yx[1];
    ro->replicas = (int)o->replicas;
    ro->seed = o->seed;
    ro->keep_coils = o->keep_coils;
    ro->want_gfactor = o->gfactor != NULL;
    ro->estimate_sens = o->sens_out != NULL;
    ro->dcf = KW_RECON_DCF_AUTO;
    if (o->dcf)
        ro->dcf = strcmp(o->dcf, "radial") == 0 ? KW_RECON_DCF_RADIAL
                  : strcmp(o->dcf, "pipe") == 0 ? KW_RECON_DCF_PIPE
                                                : KW_RECON_DCF_GIVEN;
}

/* A whole number, or a list whose product is the total; 0: absent. */
static int json_int(const cJSON *o, const char *key, double *v, int *list)
{
    const cJSON *j = o ? cJSON_GetObjectItemCaseSensitive(o, key) : NULL;
    if (!j || cJSON_IsNull(j))
        return 0;
    if (cJSON_IsNumber(j)) {
        *v = j->valuedouble;
        *list = 0;
        return 1;
    }
    if (cJSON_IsArray(j)) {
        int prod = 1;
        const cJSON *e;
        cJSON_ArrayForEach(e, j) if (cJSON_IsNumber(e)) prod *= (int)e->valuedouble;
        *v = prod;
        *list = 1;
        return 1;
    }
    return -1;
}

int kw_recon_cli_claims(const cJSON *sidecar, kw_recon_sampling *s, int *stated)
{
    memset(s, 0, sizeof *s);
    *stated = 0;
    double v = 0;
    int list = 0;
    int h = json_int(sidecar, "acceleration", &v, &list);
    if (h < 0)
        return kw_cli_fail("acceleration", "sidecar value is not a number or list");
    if (h > 0) {
        s->acceleration = v;
        s->acceleration_per_axis = list;
        *stated = 1;
    }
    h = json_int(sidecar, "acs_lines", &v, &list);
    if (h > 0) {
        s->acs_lines = (int)v;
        *stated = 1;
    }
    return -1;
}

/* The library's parameter names -> the command's options. */
static const struct {
    const char *param, *option;
} param_map[] = {
    {"lambda", "lambda"},         {"kernel", "kernel"},       {"sens", "sens"},
    {"noise_cov", "noise-cov"},   {"keep_coils", "keep-coils"}, {"dcf", "dcf"},
    {"image_dims", "sidecar"},    {"kspace", "in"},           {"trajectory", "trajectory"},
    {"acceleration", "acceleration"}, {"acs_lines", "acs_lines"}, {"gfactor", "gfactor"},
    {"combine", "combine"},       {"iterations", "iterations"}, {"stop", "stop"},
    {"tolerance", "tolerance"},   {"oversampling", "oversampling"}, {"replicas", "replicas"},
    {"seed", "seed"},             {"method", "method"},
};

int kw_recon_cli_error(kw_status st, const char *context)
{
    const char *param = kw_last_error_param();
    for (size_t i = 0; param && *param && i < sizeof param_map / sizeof param_map[0]; i++)
        if (strcmp(param, param_map[i].param) == 0) {
            char why[512];
            snprintf(why, sizeof why, "%s", kw_last_error_reason());
            kw_set_error(st, "%s", why);
            return kw_cli_status(st, param_map[i].option);
        }
    return kw_cli_status(st, context);
}

static void add_vec_d(cJSON *j, const char *key, const double *v, int n)
{
    cJSON *a = cJSON_AddArrayToObject(j, key);
    for (int i = 0; a && i < n; i++)
        cJSON_AddItemToArray(a, cJSON_CreateNumber(v[i]));
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
    add_vec_d(smp, "acceleration_axes", acc, p->sdim);
    add_vec_d(smp, "acs_axes", acs, p->sdim);
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
    double g[3];
    for (int d = 0; d < p->nufft_ndim; d++)
        g[d] = (double)p->nufft_grid[d];
    kw_json_add_vec(o, "grid", g, p->nufft_ndim);
}

void kw_recon_json_method(cJSON *j, const kw_recon_report *p, const char *dcf_name,
                          const char *dcf_file, const char *sens_file)
{
    const char *m = p->method;
    if (!p->noncartesian) {
        if (p->prewhitened)
            cJSON_AddBoolToObject(j, "prewhitened", 1);
        if (p->sens_estimated && p->sens_at == 1) {
            cJSON_AddStringToObject(j, "sens_source", p->sens_source);
            if (sens_file)
                cJSON_AddStringToObject(j, "sens_file", sens_file);
        }
        if (p->has_sampling)
            json_sampling(j, p);
    } else if (p->dcf_used) {
        cJSON_AddStringToObject(j, "dcf", p->dcf_used == KW_RECON_DCF_RADIAL ? "radial"
                                          : p->dcf_used == KW_RECON_DCF_PIPE ? "pipe"
                                                                              : dcf_name);
        if (dcf_file)
            cJSON_AddStringToObject(j, "dcf_file", dcf_file);
    }
    if (p->sens_estimated && p->sens_at == 2)
        cJSON_AddStringToObject(j, "sens_source", p->sens_source);
    if (p->has_pf) {
        add_vec_d(j, "partial_fourier_fraction", p->pf_fraction, p->sdim);
        if (p->iterations >= 0)
            cJSON_AddNumberToObject(j, "iterations", p->iterations);
    }
    if (strcmp(m, "sense") == 0) {
        if (p->gfactor_analytic)
            cJSON_AddStringToObject(j, "gfactor_method", p->gfactor_analytic);
        cJSON_AddNumberToObject(j, "lambda", p->lambda);
    } else if (strcmp(m, "grappa") == 0) {
        double k[3];
        for (int i = 0; i < p->kernel_n; i++)
            k[i] = p->kernel[i];
        add_vec_d(j, "kernel", k, p->kernel_n);
        cJSON_AddNumberToObject(j, "lambda", p->lambda);
        cJSON_AddNumberToObject(j, "calibration_fits", p->calibration_fits);
    } else if (p->solver) {
        json_solver(j, p);
    } else if (p->has_nufft) {
        json_nufft(j, p);
    }
    if (p->combine)
        cJSON_AddStringToObject(j, "combine", p->combine);
    if (p->sens_estimated && p->sens_at == 3)
        cJSON_AddStringToObject(j, "sens_source", p->sens_source);
}
