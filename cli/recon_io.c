/* recon_io.c: what cmd_recon.c and recon_multislice.c share (recon_cli.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "jsonio.h"
#include "nifti.h"
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
    ro->complex_image = o->complex_image;
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
    {"noise_cov", "noise-cov"},   {"keep_coils", "keep-coils"}, {"complex_image", "complex"}, {"dcf", "dcf"},
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

/* A number of the array `key` of `o` at index i, or NaN. */
static double num_at(const cJSON *o, const char *key, int i)
{
    const cJSON *a = o ? cJSON_GetObjectItemCaseSensitive(o, key) : NULL;
    const cJSON *v = cJSON_IsArray(a) ? cJSON_GetArrayItem(a, i) : NULL;
    return cJSON_IsNumber(v) ? v->valuedouble : NAN;
}

static double num_of(const cJSON *o, const char *key)
{
    const cJSON *v = o ? cJSON_GetObjectItemCaseSensitive(o, key) : NULL;
    return cJSON_IsNumber(v) ? v->valuedouble : NAN;
}

kw_status kw_recon_h5_attrs(kw_h5w *w, void *meta)
{
    const kw_recon_h5_meta *m = meta;
    const int sp = m->spatial, nd = w->ndim;
    const size_t *d = w->dims + nd - sp; /* (z,) y, x */
    const cJSON *sc = m->sidecar, *sl = sc ? cJSON_GetObjectItemCaseSensitive(sc, "slices") : NULL;
    kw_status st;
    char axes[64];
    snprintf(axes, sizeof axes, "%s%s%s", nd > sp ? "coil," : "",
             sp == 3 ? (m->multislice ? "slice," : "z,") : "", "y,x");
    long long mat[3];
    double fov[3], vox[3];
    int nf = 0;
    for (int i = 0; i < sp; i++)
        mat[i] = (long long)d[sp - 1 - i];
    for (int i = 0; i < sp && i < (m->multislice ? 2 : 3); i++) {
        fov[i] = num_at(sc, "fov_m", i);
        if (!(fov[i] > 0))
            break;
        vox[i] = fov[i] / (double)mat[i];
        nf = i + 1;
    }
    if ((st = kw_h5w_attr_str(w, "kweave_version", KW_VERSION_STRING)) ||
        (st = kw_h5w_attr_str(w, "method", m->method)) ||
        (st = kw_h5w_attr_str(w, "combine", m->combine ? m->combine : "none (coil images)")) ||
        (st = kw_h5w_attr_str(w, "axes", axes)) || (st = kw_h5w_attr_i64(w, "matrix", mat, sp)))
        return st;
    if (nf < 2)
        return KW_OK; /* no FOV: no geometry */
    kw_nifti_geom g;
    kw_nifti_geom_from_sidecar(sc, (size_t)mat[0], (size_t)mat[1], sp == 3 ? (size_t)mat[2] : 0, m->multislice, &g);
    if (sp == 3 && m->multislice && g.known)
        vox[2] = g.voxel_mm[2] * 1e-3; /* the slice spacing */
    int nv = sp == 3 && (nf == 3 || (m->multislice && g.known)) ? 3 : 2;
    double origin[3] = {g.origin_mm[0] * 1e-3, g.origin_mm[1] * 1e-3, g.origin_mm[2] * 1e-3};
    if ((st = kw_h5w_attr_f64(w, "fov_m", fov, nf)) || (st = kw_h5w_attr_f64(w, "voxel_size_m", vox, nv)))
        return st;
    if (g.known && (st = kw_h5w_attr_f64(w, "origin_m", origin, 3)))
        return st;
    double th = num_of(sl, "thickness_m"), gap = num_of(sl, "gap_m");
    if (m->multislice && th > 0 && (st = kw_h5w_attr_f64(w, "slice_thickness_m", &th, 0)))
        return st;
    if (m->multislice && isfinite(gap) && (st = kw_h5w_attr_f64(w, "slice_gap_m", &gap, 0)))
        return st;
    return KW_OK;
}
