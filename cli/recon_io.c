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
