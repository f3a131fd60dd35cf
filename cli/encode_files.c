/* encode_files.c: the files `kweave encode` reads (protocol, tissue JSON,
 * mask, trajectory, times, field map, sensitivities, noise covariance) into
 * the forms kw_acquisition_options takes, and the names its sidecar gives
 * them. */
#include <libgen.h>
#include <limits.h>
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "arrayio.h"
#include "cli.h"
#include "encode_cli.h"
#include "jsonio.h"
#include "npy.h"
#include "protofile.h"

/* Name of `path` as the sidecar beside `out` should record it: the base name
 * when both lie in the same directory, else the absolute path (the file
 * itself need not exist yet). malloc'd. */
char *enc_rel_to_sidecar(const char *path, const char *out)
{
    char rp[PATH_MAX], ro[PATH_MAX], t1[PATH_MAX], t2[PATH_MAX];
    snprintf(t1, sizeof t1, "%s", path);
    snprintf(t2, sizeof t2, "%s", path);
    const char *base = basename(t2);
    if (!realpath(dirname(t1), rp))
        return strdup(path);
    snprintf(t1, sizeof t1, "%s", out);
    if (realpath(dirname(t1), ro) && strcmp(rp, ro) == 0)
        return strdup(base);
    size_t need = strlen(rp) + strlen(base) + 2;
    char *r = malloc(need);
    if (r)
        snprintf(r, need, "%s/%s", rp, base);
    return r;
}

/* "<stem>_<suffix>" beside an output "<stem>.npy" (or a sidecar
 * "<stem>.json"). malloc'd. */
char *enc_derived_path(const char *out, const char *suffix)
{
    size_t n = strlen(out);
    size_t stem = (n > 4 && strcmp(out + n - 4, ".npy") == 0)    ? n - 4
                  : (n > 5 && strcmp(out + n - 5, ".json") == 0) ? n - 5
                                                                 : n;
    char *p = malloc(stem + strlen(suffix) + 2);
    if (p) {
        memcpy(p, out, stem);
        p[stem] = '_';
        strcpy(p + stem + 1, suffix);
    }
    return p;
}

/* ---- --tissue: the built-in table, or the caller's values from JSON ------ */
int enc_tissue_list(void)
{
    static const char *const src[KW_TISSUE_COUNT] = {
        "T1/T2: Stanisz et al. 2005, Table 1 (recalled)", "T1/T2: Stanisz et al. 2005, Table 1 (recalled)",
        "representative (recalled)",                     "T1/T2: Stanisz et al. 2005, Table 1 (recalled)",
        "T1/T2: Stanisz et al. 2005, Table 1 (recalled)", "T1/T2: Stanisz et al. 2005, Table 1 (recalled)",
        "representative, cf. Gold et al. 2004 (recalled)"};
    printf("tissue         species  PD    T1 1.5T/3T (ms)   T2 1.5T/3T (ms)   T2* 1.5T/3T (ms)  source\n");
    for (int i = 0; i < KW_TISSUE_COUNT; i++) {
        const kw_tissue *t = kw_tissue_get(i);
        printf("%-14s %-7s  %.2f  %6.0f / %6.0f   %6.0f / %6.0f   %6.0f / %6.0f   %s\n", t->name,
               t->species == KW_SPECIES_FAT ? "fat" : "water", t->pd, t->t1[0] * 1e3, t->t1[1] * 1e3,
               t->t2[0] * 1e3, t->t2[1] * 1e3, t->t2s[0] * 1e3, t->t2s[1] * 1e3, src[i]);
    }
    printf("PD and T2* of every tissue: representative values (recalled). Give your own with\n"
           "--tissue FILE.json: {\"white-matter\": {\"pd\": 0.69, \"t1_s\": 1.084, \"t2_s\": 0.069, "
           "\"t2star_s\": 0.045}, ...}\n");
    return KW_EXIT_OK;
}

/* Read --tissue FILE.json into v[KW_TISSUE_COUNT]; an exit code or -1. */
int enc_tissue_read(const char *path, kw_tissue_values *v)
{
    cJSON *root = NULL;
    kw_status st = kw_json_read(path, &root);
    if (st)
        return kw_cli_status(st, "tissue");
    int ret = -1;
    if (!cJSON_IsObject(root)) {
        ret = kw_cli_fail("tissue", "%s: expected an object of tissues", path);
        goto out;
    }
    const cJSON *t;
    cJSON_ArrayForEach(t, root) {
        int id = -1;
        for (int i = 0; i < KW_TISSUE_COUNT; i++)
            if (strcmp(t->string, kw_tissue_get(i)->name) == 0)
                id = i;
        if (id < 0) {
            ret = kw_cli_fail("tissue", "unknown tissue '%s' (white-matter, grey-matter, csf, "
                              "muscle, liver, blood, fat)", t->string);
            goto out;
        }
        if (!cJSON_IsObject(t)) {
            ret = kw_cli_fail("tissue", "%s: expected an object of values", t->string);
            goto out;
        }
        static const char *const keys[4] = {"pd", "t1_s", "t2_s", "t2star_s"};
        double *dst[4] = {&v[id].pd, &v[id].t1_s, &v[id].t2_s, &v[id].t2s_s};
        static const double hi[4] = {2.0, 100.0, 100.0, 100.0};
        const cJSON *k;
        cJSON_ArrayForEach(k, t) {
            int j = 0;
            while (j < 4 && strcmp(k->string, keys[j]) != 0)
                j++;
            if (j == 4) {
                ret = kw_cli_fail("tissue", "%s: unknown key '%s' (pd, t1_s, t2_s, t2star_s)",
                                  t->string, k->string);
                goto out;
            }
            if (!cJSON_IsNumber(k) || !isfinite(k->valuedouble) || !(k->valuedouble > 0) ||
                k->valuedouble > hi[j]) {
                ret = kw_cli_fail("tissue", "%s: %s must be a number in (0, %g]%s", t->string,
                                  keys[j], hi[j], j ? " seconds" : "");
                goto out;
            }
            *dst[j] = k->valuedouble;
        }
        int nt = (v[id].t1_s > 0) + (v[id].t2_s > 0) + (v[id].t2s_s > 0);
        if (nt != 0 && nt != 3) {
            ret = kw_cli_fail("tissue", "%s: give t1_s, t2_s and t2star_s together (or none)",
                              t->string);
            goto out;
        }
    }
out:
    cJSON_Delete(root);
    return ret;
}


/* ---- the protocol file: its keys fill the options not given --------- */
/* The planner's protocol file, read here and handed to the library's input
 * (kw_acquisition_input_protocol(): how its keys fill the options). */
int enc_protocol_read(const enc_args *a, kw_acquisition_input *in)
{
    char *buf = NULL;
    size_t n = 0;
    kw_status st = kw_protofile_load(a->protocol, &buf, &n);
    if (st)
        return kw_cli_status(st, "protocol");
    st = kw_acquisition_input_protocol(in, buf, n);
    kw_free(buf);
    return st ? kw_cli_fail("protocol", "%s", kw_last_error_reason()) : -1;
}

/* ---- arrays ------------------------------------------------------------- */

static int read_mask(const char *path, enc_files *f, kw_acquisition_options *o)
{
    kw_array *m = &f->mask_in;
    kw_status st = kw_array_read(path, m);
    if (st)
        return kw_cli_status(st, "pattern");
    if (m->dtype == KW_C64)
        return kw_cli_fail("pattern", "complex mask (expected uint8, bool or float32)");
    if (m->ndim < 1 || m->ndim > 3)
        return kw_cli_fail("pattern", "expected a mask of 1 to 3 dimensions");
    if (m->dtype == KW_F32 && (st = kw_array_all_finite(m)))
        return kw_cli_status(st, "pattern");
    size_t cnt = kw_array_count(m);
    f->mask = kw_alloc_n(cnt ? cnt : 1, 1);
    if (!f->mask)
        return kw_cli_fail("pattern", "out of memory");
    for (size_t i = 0; i < cnt; i++)
        f->mask[i] = m->dtype == KW_U8 ? ((uint8_t *)m->data)[i] != 0
                                       : ((float *)m->data)[i] != 0.0f;
    o->mask = f->mask;
    o->mask_ndim = m->ndim;
    for (int i = 0; i < m->ndim; i++)
        o->mask_dims[i] = m->dims[i];
    return -1;
}

static int read_traj(const char *path, enc_files *f, kw_acquisition_options *o)
{
    kw_status st = kw_array_read(path, &f->traj);
    if (st)
        return kw_cli_status(st, "trajectory");
    if (f->traj.dtype != KW_F32 || f->traj.ndim != 2 || !f->traj.dims[0])
        return kw_cli_fail("trajectory", "expected a real array (samples, 2|3) in cycles/FOV");
    if ((st = kw_array_all_finite(&f->traj)))
        return kw_cli_status(st, "trajectory");
    o->traj = f->traj.data;
    o->traj_dims[0] = f->traj.dims[0];
    o->traj_dims[1] = f->traj.dims[1];
    return -1;
}

static int read_times(const char *path, enc_files *f, kw_acquisition_options *o)
{
    kw_array *t = &f->times_in;
    kw_status st = kw_array_read(path, t);
    if (st)
        return kw_cli_status(st, "times");
    if (t->dtype != KW_F32 || t->ndim < 1 || t->ndim > 2)
        return kw_cli_fail("times", "expected a real array of seconds");
    if ((st = kw_array_all_finite(t)))
        return kw_cli_status(st, "times");
    size_t cnt = kw_array_count(t);
    f->times = kw_alloc_n(cnt ? cnt : 1, sizeof *f->times);
    if (!f->times)
        return kw_cli_fail("times", "out of memory");
    for (size_t i = 0; i < cnt; i++)
        f->times[i] = ((float *)t->data)[i];
    o->times = f->times;
    o->times_ndim = t->ndim;
    for (int i = 0; i < t->ndim; i++)
        o->times_dims[i] = t->dims[i];
    return -1;
}

static int read_fmap(const char *path, enc_files *f, kw_acquisition_options *o)
{
    kw_status st = kw_array_read(path, &f->fmap);
    if (st)
        return kw_cli_status(st, "field-map");
    if (f->fmap.dtype != KW_F32 || f->fmap.ndim < 2 || f->fmap.ndim > 3)
        return kw_cli_fail("field-map", "expected a real array (ny, nx) or (slices, ny, nx) in Hz");
    if ((st = kw_array_all_finite(&f->fmap)))
        return kw_cli_status(st, "field-map");
    o->field_map = f->fmap.data;
    o->field_map_ndim = f->fmap.ndim;
    for (int i = 0; i < f->fmap.ndim; i++)
        o->field_map_dims[i] = f->fmap.dims[i];
    return -1;
}

static int read_sens(const char *path, enc_files *f, kw_acquisition_options *o)
{
    kw_array *s = &f->sens_in;
    kw_status st = kw_array_read_complex(path, s);
    if (st)
        return kw_cli_status(st, "sens");
    if (s->dtype != KW_C64 && s->dtype != KW_F32)
        return kw_cli_fail("sens", "expected complex64 or real maps");
    if (s->ndim < 2 || s->ndim > 4)
        return kw_cli_fail("sens", "expected maps (coils, [nz,] ny, nx)");
    if ((st = kw_array_all_finite(s)))
        return kw_cli_status(st, "sens");
    size_t cnt = kw_array_count(s);
    f->sens = kw_alloc_n(cnt ? cnt : 1, sizeof *f->sens);
    if (!f->sens)
        return kw_cli_fail("sens", "out of memory");
    for (size_t i = 0; i < cnt; i++)
        f->sens[i] = s->dtype == KW_C64 ? ((kw_cfloat *)s->data)[i]
                                        : (kw_cfloat)((float *)s->data)[i];
    o->sens = f->sens;
    o->sens_ndim = s->ndim;
    for (int i = 0; i < s->ndim; i++)
        o->sens_dims[i] = s->dims[i];
    return -1;
}

static int read_ncov(const char *path, enc_files *f, kw_acquisition_options *o)
{
    kw_array *c = &f->ncov_in;
    kw_status st = kw_array_read(path, c);
    if (st)
        return kw_cli_status(st, "noise-cov");
    if (kw_array_is_hdf5(path) && c->ndim == 3 && c->dims[0] == c->dims[1])
        kw_array_pairs_to_complex(c); /* (n, n, 2): real, imaginary */
    if (c->ndim != 2 || c->dtype == KW_U8)
        return kw_cli_fail("noise-cov", "expected a (coils, coils) complex or real matrix");
    if ((st = kw_array_all_finite(c)))
        return kw_cli_status(st, "noise-cov");
    size_t cnt = kw_array_count(c);
    f->ncov = kw_alloc_n(cnt ? cnt : 1, sizeof *f->ncov);
    if (!f->ncov)
        return kw_cli_fail("noise-cov", "out of memory");
    for (size_t i = 0; i < cnt; i++)
        f->ncov[i] = c->dtype == KW_C64 ? ((kw_cfloat *)c->data)[i] : ((float *)c->data)[i];
    o->noise_cov = f->ncov;
    o->noise_cov_dims[0] = c->dims[0];
    o->noise_cov_dims[1] = c->dims[1];
    return -1;
}

int enc_files_read(const enc_args *a, enc_files *f, kw_acquisition_options *o)
{
    int rc = -1;
    if (a->s_pat && (rc = read_mask(a->pattern, f, o)) >= 0)
        return rc;
    if (a->s_traj && (rc = read_traj(a->trajectory, f, o)) >= 0)
        return rc;
    if (a->s_times && (rc = read_times(a->times, f, o)) >= 0)
        return rc;
    if (a->s_fmap && (rc = read_fmap(a->field_map, f, o)) >= 0)
        return rc;
    if (a->s_sens && (rc = read_sens(a->sens, f, o)) >= 0)
        return rc;
    if (a->s_ncov && (rc = read_ncov(a->noise_cov, f, o)) >= 0)
        return rc;
    return -1;
}

void enc_files_free(enc_files *f)
{
    f->plan_sequence = NULL;
    kw_array_free(&f->mask_in);
    kw_array_free(&f->traj);
    kw_array_free(&f->times_in);
    kw_array_free(&f->fmap);
    kw_array_free(&f->sens_in);
    kw_array_free(&f->ncov_in);
    kw_free(f->mask);
    kw_free(f->times);
    kw_free(f->sens);
    kw_free(f->ncov);
}
