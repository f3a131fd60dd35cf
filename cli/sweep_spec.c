/* sweep_spec.c: the sweep spec (JSON, docs/sweep.md): checked as a whole
 * before anything runs, then expanded into data groups and rows. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cJSON.h>

#include "cli.h"
#include "jsonio.h"
#include "kw_rng.h"
#include "kw_recon.h"
#include "sweep.h"

#define MAX_AXIS 256
#define MAX_ROWS 1000000

uint64_t kw_sweep_hash(const char *s)
{
    /* FNV-1a, 64 bit: offset basis 14695981039346656037, prime 1099511628211
     * (Fowler/Noll/Vo, IETF draft-eastlake-fnv). */
    uint64_t h = 14695981039346656037ULL;
    for (; *s; s++) {
        h ^= (unsigned char)*s;
        h *= 1099511628211ULL;
    }
    return h;
}

/* Seeds for `kweave pattern --seed` and `kweave encode --seed`: 31 bits of
 * two streams mixed from the group's hash. */
long kw_sweep_pattern_seed(const kw_sweep_group *g)
{
    return (long)(kw_rng_mix(g->hash, 1) >> 33);
}

long kw_sweep_noise_seed(const kw_sweep_group *g)
{
    return (long)(kw_rng_mix(g->hash, 2) >> 33);
}

/* An axis: a value or a non-empty list of values. */
typedef struct axis {
    const cJSON *v[MAX_AXIS];
    int n;
} axis;

static int get_axis(const cJSON *obj, const char *key, const char *field, int required,
                    axis *a)
{
    a->n = 0;
    const cJSON *x = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (!x) {
        if (required)
            return kw_cli_fail(field, "missing");
        return 0;
    }
    if (cJSON_IsArray(x)) {
        int n = cJSON_GetArraySize(x);
        if (n == 0)
            return kw_cli_fail(field, "empty axis (give at least one value)");
        if (n > MAX_AXIS)
            return kw_cli_fail(field, "more than %d values", MAX_AXIS);
        const cJSON *e;
        cJSON_ArrayForEach(e, x) a->v[a->n++] = e;
    } else {
        a->v[a->n++] = x;
    }
    return 0;
}

static int axis_ints(const axis *a, const char *field, long lo, long hi, long *out)
{
    for (int i = 0; i < a->n; i++) {
        const cJSON *e = a->v[i];
        if (!cJSON_IsNumber(e) || !isfinite(e->valuedouble) ||
            e->valuedouble != floor(e->valuedouble)) {
            if (cJSON_IsNumber(e))
                return kw_cli_fail(field, "%.17g (entry %d) is not a whole number",
                                   e->valuedouble, i + 1);
            return kw_cli_fail(field, "entry %d is not a number", i + 1);
        }
        if (e->valuedouble < (double)lo || e->valuedouble > (double)hi)
            return kw_cli_fail(field, "value %.17g is out of range [%ld, %ld]", e->valuedouble,
                               lo, hi);
        out[i] = (long)e->valuedouble;
    }
    return 0;
}

/* Numbers in (lo, hi] (lo_open) or [lo, hi]; `null` allowed when nullable. */
static int axis_nums(const axis *a, const char *field, double lo, int lo_open, double hi,
                     int nullable, double *out)
{
    for (int i = 0; i < a->n; i++) {
        const cJSON *e = a->v[i];
        if (nullable && cJSON_IsNull(e)) {
            out[i] = NAN;
            continue;
        }
        if (!cJSON_IsNumber(e) || !isfinite(e->valuedouble))
            return kw_cli_fail(field, "value %d is not a number%s", i + 1,
                               nullable ? " (or null)" : "");
        double v = e->valuedouble;
        if ((lo_open ? v <= lo : v < lo) || v > hi)
            return kw_cli_fail(field, "value %.17g is out of range %s%g, %g]", v,
                               lo_open ? "(" : "[", lo, hi);
        out[i] = v;
    }
    return 0;
}

static int check_keys(const cJSON *obj, const char *const *allowed, const char *prefix,
                      const char *what)
{
    const cJSON *e;
    cJSON_ArrayForEach(e, obj)
    {
        int ok = 0;
        for (const char *const *k = allowed; *k; k++)
            ok |= strcmp(e->string, *k) == 0;
        if (!ok) {
            char f[160];
            snprintf(f, sizeof f, "%s%s", prefix, e->string);
            return kw_cli_fail(f, "unknown %s", what);
        }
    }
    return 0;
}

static const char *const kinds[] = {"full", "uniform", "random", "poisson", "partial",
                                    "radial", "golden", NULL};

static int kind_noncartesian(const char *k)
{
    return strcmp(k, "radial") == 0 || strcmp(k, "golden") == 0;
}

void kw_sweep_numtxt(char *b, size_t n, double v)
{
    if (isnan(v)) {
        snprintf(b, n, "none");
        return;
    }
    if (v == floor(v) && fabs(v) < 1e15) {
        snprintf(b, n, "%.0f", v);
        return;
    }
    for (int p = 1; p <= 17; p++) {
        snprintf(b, n, "%.*g", p, v);
        if (strtod(b, NULL) == v)
            return;
    }
}

typedef struct pat_spec {
    kw_sweep_pattern p;
    long accel[MAX_AXIS];
    int naccel; /* 0: the top-level axis */
} pat_spec;

typedef struct meth_spec {
    char name[32];
    int cart, noncart;
    double lambda[MAX_AXIS];
    int nl;
    long iters[MAX_AXIS];
    int ni;
    char combine[16];
} meth_spec;

static const kw_sweep_row *sort_rows;
static int by_id(const void *a, const void *b)
{
    return strcmp(sort_rows[*(const int *)a].id, sort_rows[*(const int *)b].id);
}

/* The spec's top-level axes (values and counts). */
typedef struct top_axes {
    const char *phantoms[MAX_AXIS]; /* strings of the parsed spec */
    long matrix[MAX_AXIS], coils[MAX_AXIS], accel[MAX_AXIS], seeds[MAX_AXIS];
    double fov[MAX_AXIS], snr[MAX_AXIS];
    int nph, nmat, nfov, ncoil, nsnr, nacc, nseed;
} top_axes;

/* Read the top-level axes; 0, or the exit code (error line printed). */
static int read_axes(const cJSON *root, top_axes *x)
{
    axis a;
    int rc;
    if ((rc = get_axis(root, "phantom", "spec.phantom", 1, &a)))
        return rc;
    x->nph = a.n;
    for (int i = 0; i < a.n; i++) {
        const char *s = cJSON_GetStringValue(a.v[i]);
        if (!s || (strcmp(s, "weave") && strcmp(s, "shepp-logan") &&
                   strcmp(s, "shepp-logan-modified")))
            return kw_cli_fail("spec.phantom", "value %d: expected weave, shepp-logan or "
                               "shepp-logan-modified", i + 1);
        x->phantoms[i] = s;
    }
    x->nfov = 1;
    if ((rc = get_axis(root, "matrix", "spec.matrix", 1, &a)) ||
        (rc = axis_ints(&a, "spec.matrix", 16, 1024, x->matrix)))
        return rc;
    x->nmat = a.n;
    x->fov[0] = 256;
    if ((rc = get_axis(root, "fov_mm", "spec.fov_mm", 0, &a)) ||
        (rc = axis_nums(&a, "spec.fov_mm", 0, 1, 2000, 0, x->fov)))
        return rc;
    if (a.n)
        x->nfov = a.n;
    if ((rc = get_axis(root, "coils", "spec.coils", 1, &a)) ||
        (rc = axis_ints(&a, "spec.coils", 1, 64, x->coils)))
        return rc;
    x->ncoil = a.n;
    if ((rc = get_axis(root, "snr", "spec.snr", 1, &a)) ||
        (rc = axis_nums(&a, "spec.snr", 0, 1, 1e6, 1, x->snr)))
        return rc;
    x->nsnr = a.n;
    if ((rc = get_axis(root, "acceleration", "spec.acceleration", 1, &a)) ||
        (rc = axis_ints(&a, "spec.acceleration", 1, 32, x->accel)))
        return rc;
    x->nacc = a.n;
    if ((rc = get_axis(root, "seeds", "spec.seeds", 1, &a)) ||
        (rc = axis_ints(&a, "spec.seeds", 0, 2147483647L, x->seeds)))
        return rc;
    x->nseed = a.n;
    return 0;
}

/* Pattern i of the spec: a kind name, or an object {kind, acs, power,
 * fraction, acceleration}; 0, or the exit code (error line printed). */
static int read_pattern(const cJSON *e, int i, pat_spec *p)
{
    int rc;
    char f[96];
    p->p.acs = -1;
    p->p.power = NAN;
    p->p.fraction = NAN;
    const char *kind = cJSON_GetStringValue(e);
    if (cJSON_IsObject(e)) {
        static const char *const pk[] = {"kind", "acs", "power", "fraction",
                                         "acceleration", NULL};
        snprintf(f, sizeof f, "spec.patterns[%d].", i);
        if ((rc = check_keys(e, pk, f, "key")))
            return rc;
        kind = cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(e, "kind"));
    }
    snprintf(f, sizeof f, "spec.patterns[%d].kind", i);
    int known = 0;
    for (const char *const *k = kinds; kind && *k; k++)
        known |= strcmp(kind, *k) == 0;
    if (!kind)
        return kw_cli_fail(f, "missing (one of: full, uniform, random, poisson, partial, radial, "
                              "golden)");
    if (!known)
        return kw_cli_choice_fail(f, "kind", kind, kinds);
    snprintf(p->p.kind, sizeof p->p.kind, "%s", kind);
    if (!cJSON_IsObject(e))
        return 0;
    axis b;
    long iv[MAX_AXIS];
    double dv[MAX_AXIS];
    snprintf(f, sizeof f, "spec.patterns[%d].acs", i);
    if ((rc = get_axis(e, "acs", f, 0, &b)))
        return rc;
    if (b.n > 1)
        return kw_cli_fail(f, "one value, not a list");
    if (b.n && (rc = axis_ints(&b, f, 0, 1024, iv)))
        return rc;
    if (b.n)
        p->p.acs = (int)iv[0];
    snprintf(f, sizeof f, "spec.patterns[%d].power", i);
    if ((rc = get_axis(e, "power", f, 0, &b)))
        return rc;
    if (b.n > 1)
        return kw_cli_fail(f, "one value, not a list");
    if (b.n && (rc = axis_nums(&b, f, 0, 0, 20, 0, dv)))
        return rc;
    if (b.n)
        p->p.power = dv[0];
    snprintf(f, sizeof f, "spec.patterns[%d].fraction", i);
    if ((rc = get_axis(e, "fraction", f, 0, &b)))
        return rc;
    if (b.n > 1)
        return kw_cli_fail(f, "one value, not a list");
    if (b.n && (rc = axis_nums(&b, f, 0.5, 1, 1, 0, dv)))
        return rc;
    if (b.n)
        p->p.fraction = dv[0];
    snprintf(f, sizeof f, "spec.patterns[%d].acceleration", i);
    if ((rc = get_axis(e, "acceleration", f, 0, &b)) ||
        (rc = axis_ints(&b, f, 1, 32, p->accel)))
        return rc;
    p->naccel = b.n;
    return 0;
}

/* Count the groups and rows, then expand them in a fixed nesting order;
 * 0, or the exit code (error line printed). */
static int expand(kw_sweep *sw, const top_axes *x, const pat_spec *pats, int np,
                  const meth_spec *meths, int nm)
{
    long ngroups = 0, nrows = 0;
    for (int p = 0; p < np; p++) {
        long na = pats[p].naccel ? pats[p].naccel : x->nacc;
        long per = 0;
        for (int m = 0; m < nm; m++) {
            int nc = kind_noncartesian(pats[p].p.kind);
            if (nc ? meths[m].noncart : meths[m].cart)
                per += (long)meths[m].nl * meths[m].ni;
            else
                sw->skipped +=
                    x->nph * x->nmat * x->nfov * x->ncoil * x->nsnr * (int)na * x->nseed;
        }
        long g = (long)x->nph * x->nmat * x->nfov * x->ncoil * x->nsnr * na * x->nseed;
        ngroups += g;
        nrows += g * per;
        if (nrows > MAX_ROWS)
            return kw_cli_fail("spec", "more than %d experiments; split the sweep", MAX_ROWS);
    }
    if (nrows == 0)
        return kw_cli_fail("spec.methods", "no method can reconstruct any of the patterns "
                                           "(Cartesian vs non-Cartesian)");
    sw->groups = calloc((size_t)ngroups, sizeof *sw->groups);
    sw->rows = calloc((size_t)nrows, sizeof *sw->rows);
    if (!sw->groups || !sw->rows)
        return kw_cli_status(KW_ENOMEM, "spec");
    for (int ip = 0; ip < np; ip++) {
        const pat_spec *P = &pats[ip];
        const long *acc = P->naccel ? P->accel : x->accel;
        int na = P->naccel ? P->naccel : x->nacc;
        int nc = kind_noncartesian(P->p.kind);
        for (int iph = 0; iph < x->nph; iph++)
        for (int im = 0; im < x->nmat; im++)
        for (int ifv = 0; ifv < x->nfov; ifv++)
        for (int ic = 0; ic < x->ncoil; ic++)
        for (int is = 0; is < x->nsnr; is++)
        for (int ia = 0; ia < na; ia++)
        for (int ie = 0; ie < x->nseed; ie++) {
            kw_sweep_group *g = &sw->groups[sw->ngroups];
            snprintf(g->phantom, sizeof g->phantom, "%s", x->phantoms[iph]);
            g->matrix = (int)x->matrix[im];
            g->fov_mm = x->fov[ifv];
            g->coils = (int)x->coils[ic];
            g->snr = x->snr[is];
            g->pat = P->p;
            g->accel = (int)acc[ia];
            g->seed = x->seeds[ie];
            char t1[32], t2[32], t3[32], t4[32];
            kw_sweep_numtxt(t1, sizeof t1, g->fov_mm);
            kw_sweep_numtxt(t2, sizeof t2, g->snr);
            kw_sweep_numtxt(t3, sizeof t3, g->pat.power);
            kw_sweep_numtxt(t4, sizeof t4, g->pat.fraction);
            snprintf(g->key, sizeof g->key,
                     "phantom=%s matrix=%d fov_mm=%s coils=%d snr=%s pattern=%s acs=%d "
                     "power=%s fraction=%s acceleration=%d seed=%ld",
                     g->phantom, g->matrix, t1, g->coils, t2, g->pat.kind, g->pat.acs, t3, t4,
                     g->accel, g->seed);
            g->hash = kw_sweep_hash(g->key);
            g->first_row = sw->nrows;
            for (int m = 0; m < nm; m++) {
                const meth_spec *M = &meths[m];
                if (nc ? !M->noncart : !M->cart)
                    continue;
                for (int il = 0; il < M->nl; il++)
                for (int ii = 0; ii < M->ni; ii++) {
                    kw_sweep_row *r = &sw->rows[sw->nrows++];
                    r->group = sw->ngroups;
                    snprintf(r->m.name, sizeof r->m.name, "%s", M->name);
                    r->m.lambda = M->lambda[il];
                    r->m.iterations = M->iters[ii];
                    snprintf(r->m.combine, sizeof r->m.combine, "%s", M->combine);
                    char tl[32];
                    kw_sweep_numtxt(tl, sizeof tl, r->m.lambda);
                    snprintf(r->key, sizeof r->key, "%s method=%s lambda=%s iterations=%ld "
                             "combine=%s", g->key, r->m.name, tl, r->m.iterations,
                             r->m.combine[0] ? r->m.combine : "default");
                    snprintf(r->id, sizeof r->id, "%016llx",
                             (unsigned long long)kw_sweep_hash(r->key));
                }
            }
            g->nrows = sw->nrows - g->first_row;
            sw->ngroups++;
        }
    }
    return 0;
}

/* The rows sorted by id (journal look-ups); two equal ids are an error. */
static int order_rows(kw_sweep *sw)
{
    sw->order = malloc((size_t)sw->nrows * sizeof *sw->order);
    if (!sw->order)
        return kw_cli_status(KW_ENOMEM, "spec");
    for (int i = 0; i < sw->nrows; i++)
        sw->order[i] = i;
    sort_rows = sw->rows;
    qsort(sw->order, (size_t)sw->nrows, sizeof *sw->order, by_id);
    for (int i = 1; i < sw->nrows; i++)
        if (!strcmp(sw->rows[sw->order[i]].id, sw->rows[sw->order[i - 1]].id))
            return kw_cli_fail("spec", "two experiments are the same (a value repeated in "
                               "an axis?): %s", sw->rows[sw->order[i]].key);
    return 0;
}

int kw_sweep_load(const char *path, kw_sweep *sw)
{
    memset(sw, 0, sizeof *sw);
    cJSON *root = NULL;
    kw_status st = kw_json_read(path, &root);
    if (st)
        return kw_cli_status(st, "spec");
    int rc = 0;
    pat_spec *pats = NULL;
    meth_spec *meths = NULL;
    if (!cJSON_IsObject(root)) {
        rc = kw_cli_fail("spec", "must be a JSON object");
        goto done;
    }
    static const char *const top[] = {"title", "phantom", "matrix", "fov_mm", "coils", "snr",
                                      "patterns", "acceleration", "seeds", "methods", NULL};
    if ((rc = check_keys(root, top, "spec.", "axis")))
        goto done;

    top_axes ax;
    if ((rc = read_axes(root, &ax)))
        goto done;

    /* patterns: objects {kind, acs, power, fraction, acceleration} or names */
    axis pa;
    if ((rc = get_axis(root, "patterns", "spec.patterns", 1, &pa)))
        goto done;
    pats = calloc((size_t)pa.n, sizeof *pats);
    if (!pats) {
        rc = kw_cli_status(KW_ENOMEM, "spec");
        goto done;
    }
    for (int i = 0; i < pa.n; i++)
        if ((rc = read_pattern(pa.v[i], i, &pats[i])))
            goto done;

    /* methods: objects {name, lambda, iterations, combine} or names */
    axis ma;
    if ((rc = get_axis(root, "methods", "spec.methods", 1, &ma)))
        goto done;
    meths = calloc((size_t)ma.n, sizeof *meths);
    if (!meths) {
        rc = kw_cli_status(KW_ENOMEM, "spec");
        goto done;
    }
    for (int i = 0; i < ma.n; i++) {
        char f[96];
        const cJSON *e = ma.v[i];
        meth_spec *m = &meths[i];
        const char *name = cJSON_GetStringValue(e);
        if (cJSON_IsObject(e)) {
            static const char *const mk[] = {"name", "lambda", "iterations", "combine", NULL};
            snprintf(f, sizeof f, "spec.methods[%d].", i);
            if ((rc = check_keys(e, mk, f, "key")))
                goto done;
            name = cJSON_GetStringValue(cJSON_GetObjectItemCaseSensitive(e, "name"));
        }
        snprintf(f, sizeof f, "spec.methods[%d].name", i);
        const kw_recon_method_info *rm = name ? kw_recon_method_find(name) : NULL;
        if (!rm) {
            if (name)
                (void)kw_recon_method_check(name, 0, NULL); /* the list and a near miss */
            rc = name ? kw_cli_fail(f, "%s", kw_last_error_reason())
                      : kw_cli_fail(f, "unknown method '(not a string)'");
            goto done;
        }
        snprintf(m->name, sizeof m->name, "%s", name);
        m->cart = rm->cartesian;
        m->noncart = rm->noncartesian;
        m->lambda[0] = NAN;
        m->nl = 1;
        m->iters[0] = 0;
        m->ni = 1;
        if (!cJSON_IsObject(e))
            continue;
        axis b;
        snprintf(f, sizeof f, "spec.methods[%d].lambda", i);
        if ((rc = get_axis(e, "lambda", f, 0, &b)) ||
            (rc = axis_nums(&b, f, 0, 0, 1e6, 0, m->lambda)))
            goto done;
        if (b.n)
            m->nl = b.n;
        snprintf(f, sizeof f, "spec.methods[%d].iterations", i);
        if ((rc = get_axis(e, "iterations", f, 0, &b)) ||
            (rc = axis_ints(&b, f, 1, 100000, m->iters)))
            goto done;
        if (b.n)
            m->ni = b.n;
        const cJSON *cb = cJSON_GetObjectItemCaseSensitive(e, "combine");
        if (cb) {
            const char *s = cJSON_GetStringValue(cb);
            snprintf(f, sizeof f, "spec.methods[%d].combine", i);
            if (!s || (strcmp(s, "rss") && strcmp(s, "optimal") && strcmp(s, "adaptive"))) {
                rc = kw_cli_fail(f, "expected rss, optimal or adaptive");
                goto done;
            }
            snprintf(m->combine, sizeof m->combine, "%s", s);
        }
    }

    if ((rc = expand(sw, &ax, pats, pa.n, meths, ma.n)) || (rc = order_rows(sw)))
        goto done;
done:
    free(pats);
    free(meths);
    cJSON_Delete(root);
    if (rc)
        kw_sweep_free(sw);
    return rc;
}

void kw_sweep_free(kw_sweep *sw)
{
    free(sw->groups);
    free(sw->rows);
    free(sw->order);
    memset(sw, 0, sizeof *sw);
}
