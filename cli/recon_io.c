/* recon_io.c: what cmd_recon.c and recon_multislice.c share (recon_cli.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "jsonio.h"
#include "kw_units.h"
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

/* Sampling claims beyond these are no sampling of any array kweave reads
 * (2^20 lines or a factor of 2^20): refused before any conversion. */
#define CLAIM_MAX (1LL << 20)

/* A number, or a list of whole numbers whose product is the total; 0:
 * absent, -1: not a number or list, -2: out of range [lo, CLAIM_MAX] (a
 * list's entries and product, a number's value). */
static int json_int(const cJSON *o, const char *key, double lo, double *v, int *list)
{
    const cJSON *j = o ? cJSON_GetObjectItemCaseSensitive(o, key) : NULL;
    if (!j || cJSON_IsNull(j))
        return 0;
    if (cJSON_IsNumber(j)) {
        if (!(j->valuedouble >= lo && j->valuedouble <= (double)CLAIM_MAX))
            return -2;
        *v = j->valuedouble;
        *list = 0;
        return 1;
    }
    if (cJSON_IsArray(j)) {
        double prod = 1;
        const cJSON *e;
        cJSON_ArrayForEach(e, j) {
            long long k;
            if (!cJSON_IsNumber(e))
                return -1;
            if (kw_checked_whole(e->valuedouble, (long long)lo, CLAIM_MAX, &k) != KW_OK)
                return -2;
            prod *= (double)k;
            if (prod > (double)CLAIM_MAX)
                return -2;
        }
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
    int h = json_int(sidecar, "acceleration", 1, &v, &list);
    if (h == -1)
        return kw_cli_fail("acceleration", "sidecar value is not a number or list");
    if (h == -2)
        return kw_cli_fail("acceleration", "sidecar value is out of range (1 to %lld, "
                           "whole numbers in a list)", CLAIM_MAX);
    if (h > 0) {
        s->acceleration = v;
        s->acceleration_per_axis = list;
        *stated = 1;
    }
    h = json_int(sidecar, "acs_lines", 0, &v, &list);
    if (h == -1)
        return kw_cli_fail("acs_lines", "sidecar value is not a number or list");
    if (h == -2 || (h > 0 && v != floor(v)))
        return kw_cli_fail("acs_lines", "sidecar value is out of range (a whole number 0 to %lld)",
                           CLAIM_MAX);
    if (h > 0) {
        s->acs_lines = (int)v;
        *stated = 1;
    }
    return -1;
}

static int claims_by_option; /* --accel / --acs given: errors name them */

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
    if (claims_by_option && param && (!strcmp(param, "acceleration") || !strcmp(param, "acs_lines"))) {
        const char *opt = strcmp(param, "acceleration") == 0 ? "accel" : "acs"; /* before kw_set_error */
        char why[512];
        snprintf(why, sizeof why, "%s", kw_last_error_reason());
        kw_set_error(st, "%s", why);
        return kw_cli_status(st, opt);
    }
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

/* ---- options that stand in for the sidecar ------------------------------ */


/* The sidecar's numbers under `key` as text, for the note. */
static void json_text(const cJSON *j, char *buf, size_t n)
{
    char *t = j ? cJSON_PrintUnformatted(j) : NULL;
    snprintf(buf, n, "%s", t ? t : "none");
    cJSON_free(t);
}

/* Put `v` under `key` of *sc (made when absent); one note when the sidecar
 * said something else. `same` tells whether the old value equals `v`. */
static int put_key(cJSON **sc, const char *key, cJSON *v, const char *opt, const char *given,
                   int (*same)(const cJSON *, const cJSON *))
{
    if (!v || (!*sc && !(*sc = cJSON_CreateObject()))) {
        cJSON_Delete(v);
        return kw_cli_fail(opt, "out of memory");
    }
    const cJSON *old = cJSON_GetObjectItemCaseSensitive(*sc, key);
    if (old && !cJSON_IsNull(old) && !same(old, v)) {
        char was[128];
        json_text(old, was, sizeof was);
        fprintf(stderr, "kweave: note: --%s %s overrides the sidecar's %s %s\n", opt, given, key, was);
    }
    if (old)
        cJSON_ReplaceItemInObjectCaseSensitive(*sc, key, v);
    else
        cJSON_AddItemToObject(*sc, key, v);
    return -1;
}

static int same_numbers(const cJSON *a, const cJSON *b)
{
    if (cJSON_IsNumber(a) && cJSON_IsNumber(b))
        return a->valuedouble == b->valuedouble;
    if (!cJSON_IsArray(a) || !cJSON_IsArray(b))
        return 0;
    /* a FOV given once stands for every axis the sidecar lists */
    int na = cJSON_GetArraySize(a), nb = cJSON_GetArraySize(b);
    for (int i = 0; i < na && i < nb; i++) {
        const cJSON *x = cJSON_GetArrayItem(a, i), *y = cJSON_GetArrayItem(b, i);
        if (!cJSON_IsNumber(x) || !cJSON_IsNumber(y) ||
            fabs(x->valuedouble - y->valuedouble) > 1e-9 * fabs(y->valuedouble))
            return 0;
    }
    return na == nb || nb == 3;
}

int kw_recon_cli_override(cJSON **sc, const char *fov, const char *accel, long acs, int seen_acs)
{
    int rc;
    claims_by_option = accel || seen_acs;
    if (fov) {
        double f[3];
        char why[160];
        int n = kw_unit_parse_list(fov, KW_UNIT_LENGTH, f, 3, why, sizeof why);
        if (n < 0)
            return kw_cli_fail("fov", "'%s': %s", fov, why);
        for (int i = 0; i < n; i++)
            if (!(f[i] > 0))
                return kw_cli_fail("fov", "'%s': must be positive", fov);
        for (int i = n; i < 3; i++) /* one value: every axis; two: x, y (z unknown) */
            f[i] = n == 1 ? f[0] : NAN;
        cJSON *v = n == 2 ? cJSON_CreateDoubleArray(f, 2) : cJSON_CreateDoubleArray(f, 3);
        if ((rc = put_key(sc, "fov_m", v, "fov", fov, same_numbers)) >= 0)
            return rc;
    }
    if (accel) {
        double r[2];
        int n = 0;
        const char *p = accel;
        for (; n >= 0 && n < 2 && *p; n++) { /* decimal numbers, x between */
            size_t len = strspn(p, "0123456789.");
            char *end;
            r[n] = strtod(p, &end);
            if (!len || end != p + len || !(r[n] >= 1 && r[n] <= 64))
                n = -2;
            else if (*(p += len) == 'x' && p[1])
                p++;
            else if (*p)
                n = -2;
        }
        if (n <= 0 || *p)
            return kw_cli_fail("accel", "'%s' is not R or RYxRZ with 1 <= R <= 64", accel);
        cJSON *v = n == 1 ? cJSON_CreateNumber(r[0]) : cJSON_CreateDoubleArray(r, 2);
        if ((rc = put_key(sc, "acceleration", v, "accel", accel, same_numbers)) >= 0)
            return rc;
    }
    if (seen_acs) {
        if (acs < 1 || acs > 4096)
            return kw_cli_fail("acs", "must be 1 .. 4096 calibration lines (got %ld)", acs);
        char given[32];
        snprintf(given, sizeof given, "%ld", acs);
        if ((rc = put_key(sc, "acs_lines", cJSON_CreateNumber((double)acs), "acs", given, same_numbers)) >= 0)
            return rc;
    }
    return -1;
}

/* --axes: the names, their canonical places (C order). */
static const char *const AXES[] = {"coils", "samples", "nz", "ny", "nx"};

int kw_recon_cli_axes(const char *axes, kw_array *k)
{
    int pos[KW_MAX_DIMS], n = 0, has_coils = 0;
    const char *p = axes;
    while (*p) {
        size_t len = strcspn(p, ",");
        int a = -1;
        for (int i = 0; i < 5; i++)
            if (strlen(AXES[i]) == len && strncmp(p, AXES[i], len) == 0)
                a = i;
        if (a < 0 || n == KW_MAX_DIMS)
            return kw_cli_fail("axes", "'%s': give the input's axes in its order, named from coils, samples, "
                               "nz, ny, nx (e.g. ny,nx,coils)", axes);
        for (int i = 0; i < n; i++)
            if (pos[i] == a)
                return kw_cli_fail("axes", "'%s' names %s twice", axes, AXES[a]);
        has_coils |= a == 0;
        pos[n++] = a;
        p += len;
        if (*p == ',' && *++p == '\0')
            return kw_cli_fail("axes", "'%s' ends with a comma", axes);
    }
    if (n != k->ndim)
        return kw_cli_fail("axes", "'%s' names %d axes but the k-space has %d", axes, n, k->ndim);
    /* perm[j]: the input axis that becomes output axis j */
    int perm[KW_MAX_DIMS], m = 0;
    for (int a = 0; a < 5; a++)
        for (int i = 0; i < n; i++)
            if (pos[i] == a)
                perm[m++] = i;
    kw_array t = {0};
    size_t od[KW_MAX_DIMS], istride[KW_MAX_DIMS], s = 1;
    for (int i = n - 1; i >= 0; i--) {
        istride[i] = s;
        s *= k->dims[i];
    }
    for (int j = 0; j < n; j++)
        od[j] = k->dims[perm[j]];
    kw_status st = kw_array_alloc(&t, k->dtype, n, od);
    if (st)
        return kw_cli_status(st, "axes");
    size_t es = k->dtype == KW_C64 ? sizeof(kw_cfloat) : sizeof(float), idx[KW_MAX_DIMS] = {0};
    for (size_t o = 0; o < s; o++) { /* the output in C order, the input strided */
        size_t in = 0;
        for (int j = 0; j < n; j++)
            in += idx[j] * istride[perm[j]];
        memcpy((char *)t.data + o * es, (const char *)k->data + in * es, es);
        for (int j = n - 1; j >= 0 && ++idx[j] == od[j]; j--)
            idx[j] = 0;
    }
    kw_array_free(k);
    *k = t;
    if (!has_coils) { /* one coil: the axis made explicit */
        for (int i = k->ndim; i > 0; i--)
            k->dims[i] = k->dims[i - 1];
        k->dims[0] = 1;
        k->ndim++;
    }
    return -1;
}
