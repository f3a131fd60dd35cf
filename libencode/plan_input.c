/* plan_input.c: a protocol assembled from `key = value` texts with units
 * (kw_plan_input.h): the keys of `kweave plan`, its options and its
 * protocol files. */
#include "kw_plan_input.h"

#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "kw_units.h"
#include "defaults.h"
#include "params_int.h"
#include "plan_input_int.h"
#include "protofile.h"

typedef enum key_id {
    K_SEQUENCE, K_FOV, K_MATRIX, K_BANDWIDTH, K_B0, K_GMAX, K_SLEW, K_RASTER,
    K_TEMPERATURE, K_TE, K_TR, K_RF_DURATION, K_TBW, K_SLICE, K_SPOILER, K_CRUSHER,
    K_T2STAR, K_SHOTS, K_PARTIAL_FOURIER, K_INTERLEAVES, K_MAX_READOUT, K_SPOKES,
    K_AVERAGES, K_COUNT
} key_id;

static const char *const key_names[K_COUNT + 1] = {
    "sequence", "fov", "matrix", "bandwidth", "b0", "gmax", "slew", "raster",
    "temperature", "te", "tr", "rf-duration", "tbw", "slice", "spoiler", "crusher",
    "t2star", "shots", "partial-fourier", "interleaves", "max-readout", "spokes",
    "averages", NULL};

/* How each key's text is read: a unit value into a double of the protocol
 * (POS: and positive), a count into an int, or by its own code. */
typedef enum key_kind { KD_OWN, KD_UNIT, KD_UNIT_POS, KD_COUNT } key_kind;

static const struct key_def {
    key_kind kind;
    kw_unit_kind unit;
    size_t off, size; /* the field of kw_protocol (KD_OWN: unused but sequence) */
    long lo, hi;      /* counts */
} defs[K_COUNT] = {
#define F(field) offsetof(kw_protocol, field), sizeof(((kw_protocol *)0)->field)
    [K_SEQUENCE] = {KD_OWN, KW_UNIT_NONE, F(sequence), 0, 0},
    [K_FOV] = {KD_OWN, KW_UNIT_LENGTH, 0, 0, 0, 0},
    [K_MATRIX] = {KD_OWN, KW_UNIT_NONE, 0, 0, 0, 0},
    [K_BANDWIDTH] = {KD_OWN, KW_UNIT_FREQUENCY, 0, 0, 0, 0},
    [K_B0] = {KD_UNIT, KW_UNIT_FIELD, F(b0_t), 0, 0},
    [K_GMAX] = {KD_UNIT, KW_UNIT_GRADIENT, F(gmax_T_per_m), 0, 0},
    [K_SLEW] = {KD_UNIT, KW_UNIT_SLEW, F(slew_T_per_m_per_s), 0, 0},
    [K_RASTER] = {KD_UNIT, KW_UNIT_TIME, F(raster_s), 0, 0},
    [K_TEMPERATURE] = {KD_UNIT, KW_UNIT_TEMPERATURE, F(temperature_k), 0, 0},
    [K_TE] = {KD_UNIT_POS, KW_UNIT_TIME, F(te_s), 0, 0},
    [K_TR] = {KD_UNIT_POS, KW_UNIT_TIME, F(tr_s), 0, 0},
    [K_RF_DURATION] = {KD_UNIT, KW_UNIT_TIME, F(rf_duration_s), 0, 0},
    [K_TBW] = {KD_UNIT, KW_UNIT_NONE, F(tbw), 0, 0},
    [K_SLICE] = {KD_UNIT, KW_UNIT_LENGTH, F(slice_m), 0, 0},
    [K_SPOILER] = {KD_UNIT, KW_UNIT_NONE, F(spoiler_cycles), 0, 0},
    [K_CRUSHER] = {KD_UNIT, KW_UNIT_NONE, F(crusher_cycles), 0, 0},
    [K_T2STAR] = {KD_UNIT_POS, KW_UNIT_TIME, F(t2star_s), 0, 0},
    [K_SHOTS] = {KD_COUNT, KW_UNIT_NONE, F(shots), 1, 8192},
    [K_PARTIAL_FOURIER] = {KD_UNIT, KW_UNIT_NONE, F(partial_fourier), 0, 0},
    [K_INTERLEAVES] = {KD_COUNT, KW_UNIT_NONE, F(interleaves), 1, 4096},
    [K_MAX_READOUT] = {KD_UNIT, KW_UNIT_TIME, F(max_readout_s), 0, 0},
    [K_SPOKES] = {KD_COUNT, KW_UNIT_NONE, F(spokes), 1, 1000000},
    [K_AVERAGES] = {KD_COUNT, KW_UNIT_NONE, F(averages), 1, 100000},
#undef F
};

static const char *const seq_names[] = {"gre", "se", "epi", "radial", "spiral", NULL};

/* The values read so far; a set works on a copy and commits it on success. */
typedef struct pin_vals {
    kw_protocol p;
    int fov_n, matrix_n; /* how many axes fov and matrix gave (0: not set) */
    double fov[3];
    int matrix[3];
    double bw[2]; /* bandwidth: [0] across the FOV, [1] per pixel */
    int bw_set[2];
} pin_vals;

/* The texts set, in the order first set (a set again replaces in place). */
#define PIN_MAX_ENTRIES 40
typedef struct pin_entry {
    char key[KW_PROTOFILE_MAX_KEY + 1];
    char *text;
} pin_entry;

struct kw_protocol_input {
    pin_vals v;
    int encode; /* the simulator's dialect (plan_input_int.h) */
    int n;
    pin_entry ent[PIN_MAX_ENTRIES];
    unsigned char seen[K_COUNT]; /* keys of the text being parsed */
};

const char *const *kw_protocol_keys(void) { return key_names; }

const char *kw_protocol_sequence_name(kw_sequence_kind s)
{
    return (int)s >= 0 && (int)s < 5 ? seq_names[s] : "?";
}

static int key_lookup(const char *key)
{
    for (int k = 0; key && k < K_COUNT; k++)
        if (strcmp(key_names[k], key) == 0)
            return k;
    return -1;
}

static kw_status unknown_key(const char *key)
{
    int best = -1, bd = 3;
    for (int k = 0; k < K_COUNT; k++) {
        int d = kw_param_distance(key, key_names[k]);
        if (d < bd && d < (int)strlen(key)) {
            bd = d;
            best = k;
        }
    }
    if (best >= 0)
        return kw_set_error_param(KW_EINVAL, key, "unknown key (did you mean '%s'?)",
                                  key_names[best]);
    return kw_set_error_param(KW_EINVAL, key, "unknown key");
}

/* ---- reading one value ------------------------------------------------------ */

static kw_status parse_unit(const char *key, const char *val, kw_unit_kind kind, double *v)
{
    char why[160];
    if (kw_unit_parse(val, kind, v, why, sizeof why))
        return kw_set_error_param(KW_EINVAL, key, "%s", why);
    return KW_OK;
}

static kw_status parse_count(const char *key, const char *val, long lo, long hi, int *out)
{
    char *end;
    long v = strtol(val, &end, 10);
    while (*end == ' ' || *end == '\t')
        end++;
    KW_FAIL_PARAM(end == val || *end, KW_EINVAL, key, "'%s' is not a whole number", val);
    KW_FAIL_PARAM(v < lo || v > hi, KW_EINVAL, key, "%ld is outside %ld to %ld", v, lo, hi);
    *out = (int)v;
    return KW_OK;
}

/* The simulator's counts (plan_input_int.h). */
static kw_status parse_count_encode(const char *key, const char *val, int *out)
{
    char *end;
    long x = strtol(val, &end, 10);
    KW_FAIL_PARAM(end == val || *end || x < 1 || x > 1000000, KW_EINVAL, key,
                  "'%s' is not a whole number >= 1", val);
    *out = (int)x;
    return KW_OK;
}

/* "256mm" or "256mm,192mm" or "256mm,192mm,64mm". */
static kw_status parse_fov(const char *val, double *fov, int *n)
{
    char why[200];
    *n = kw_unit_parse_list(val, KW_UNIT_LENGTH, fov, 3, why, sizeof why);
    KW_FAIL_PARAM(*n < 0, KW_EINVAL, "fov", "%s", why);
    for (int i = 0; i < *n; i++)
        KW_FAIL_PARAM(!(fov[i] > 0), KW_EINVAL, "fov", "must be positive (got %g m)", fov[i]);
    return KW_OK;
}

/* "256" or "256x192" or "256x192x64". */
static kw_status parse_matrix(const char *val, int *m, int *n)
{
    *n = 0;
    const char *s = val;
    for (;;) {
        KW_FAIL_PARAM(*n >= 3, KW_EINVAL, "matrix", "at most three sizes nx x ny x nz");
        while (*s == ' ')
            s++;
        char *end;
        long v = strtol(s, &end, 10);
        KW_FAIL_PARAM(end == s, KW_EINVAL, "matrix", "'%s' is not NX, NXxNY or NXxNYxNZ", val);
        KW_FAIL_PARAM(v < 1 || v > 8192, KW_EINVAL, "matrix", "%ld is outside 1 to 8192", v);
        m[(*n)++] = (int)v;
        s = end;
        while (*s == ' ')
            s++;
        if (!*s)
            break;
        KW_FAIL_PARAM(*s != 'x' && *s != 'X', KW_EINVAL, "matrix",
                      "'%s' is not NX, NXxNY or NXxNYxNZ", val);
        s++;
    }
    return KW_OK;
}

static kw_status set_bandwidth(pin_vals *v, const char *val)
{
    double hz;
    int pp;
    char why[160];
    if (kw_unit_parse_bandwidth(val, &hz, &pp, why, sizeof why))
        return kw_set_error_param(KW_EINVAL, "bandwidth", "%s", why);
    KW_FAIL_PARAM(!(hz > 0), KW_EINVAL, "bandwidth", "must be positive (got '%s')", val);
    KW_FAIL_PARAM(v->bw_set[pp], KW_EINVAL, "bandwidth", "given more than once %s",
                  pp ? "per pixel" : "across the FOV");
    v->bw[pp] = hz;
    v->bw_set[pp] = 1;
    return KW_OK;
}

static kw_status set_value(pin_vals *v, int k, const char *val, int encode)
{
    const struct key_def *d = &defs[k];
    const char *key = key_names[k];
    char *field = (char *)&v->p + d->off;
    switch (d->kind) {
    case KD_UNIT: return parse_unit(key, val, d->unit, (double *)(void *)field);
    case KD_UNIT_POS: {
        double x;
        kw_status st = parse_unit(key, val, d->unit, &x);
        if (st)
            return st;
        KW_FAIL_PARAM(!encode && !(x > 0), KW_EINVAL, key, "must be positive (got '%s')", val);
        *(double *)(void *)field = x;
        return KW_OK;
    }
    case KD_COUNT:
        return encode ? parse_count_encode(key, val, (int *)(void *)field)
                      : parse_count(key, val, d->lo, d->hi, (int *)(void *)field);
    case KD_OWN: break;
    }
    switch ((key_id)k) {
    case K_SEQUENCE:
        for (int s = 0; s < 5; s++)
            if (strcmp(val, seq_names[s]) == 0) {
                v->p.sequence = (kw_sequence_kind)s;
                return KW_OK;
            }
        return kw_param_choice_error("sequence", "sequence", val, seq_names);
    case K_FOV: return parse_fov(val, v->fov, &v->fov_n);
    case K_MATRIX: return parse_matrix(val, v->matrix, &v->matrix_n);
    case K_BANDWIDTH: return set_bandwidth(v, val);
    default: break;
    }
    return kw_set_error_param(KW_EINTERNAL, key, "no handler");
}

/* ---- the texts ----------------------------------------------------------------- */

static pin_entry *entry_find(const kw_protocol_input *in, const char *key)
{
    for (int i = 0; i < in->n; i++)
        if (strcmp(in->ent[i].key, key) == 0)
            return (pin_entry *)&in->ent[i];
    return NULL;
}

static kw_status entry_put(kw_protocol_input *in, const char *key, const char *text)
{
    size_t n = strlen(text);
    char *t = kw_alloc_n(n + 1, 1);
    KW_FAIL_IF(!t, KW_ENOMEM, "%s: out of memory", key);
    memcpy(t, text, n + 1);
    pin_entry *e = entry_find(in, key);
    if (!e) {
        if (in->n >= PIN_MAX_ENTRIES || strlen(key) > KW_PROTOFILE_MAX_KEY) {
            kw_free(t);
            return kw_set_error(KW_EINVAL, "too many keys");
        }
        e = &in->ent[in->n++];
        snprintf(e->key, sizeof e->key, "%s", key);
    } else {
        kw_free(e->text);
    }
    e->text = t;
    return KW_OK;
}

static void entry_drop(kw_protocol_input *in, const char *key)
{
    pin_entry *e = entry_find(in, key);
    if (!e)
        return;
    kw_free(e->text);
    int i = (int)(e - in->ent);
    memmove(&in->ent[i], &in->ent[i + 1], (size_t)(in->n - i - 1) * sizeof in->ent[0]);
    in->n--;
}

/* ---- the calls --------------------------------------------------------------------- */

kw_status kw_protocol_input_create(kw_protocol_input **in)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL pointer for the result");
    *in = kw_alloc_n(1, sizeof **in);
    KW_FAIL_IF(!*in, KW_ENOMEM, "protocol input: out of memory");
    kw_protocol_defaults(&(*in)->v.p);
    return KW_OK;
}

void kw_protocol_input_destroy(kw_protocol_input *in)
{
    if (!in)
        return;
    for (int i = 0; i < in->n; i++)
        kw_free(in->ent[i].text);
    kw_free(in);
}

kw_status kw_protocol_input_set(kw_protocol_input *in, const char *key, const char *value)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL protocol input");
    KW_FAIL_PARAM(!key, KW_EINVAL, "key", "NULL key");
    int k = key_lookup(key);
    if (k < 0)
        return unknown_key(key);
    KW_FAIL_PARAM(!value, KW_EINVAL, key, "no value");
    pin_vals v = in->v;
    kw_status st = set_value(&v, k, value, in->encode);
    if (st)
        return st;
    if ((st = entry_put(in, key, value)))
        return st;
    in->v = v;
    return KW_OK;
}

kw_status kw_protocol_input_get(const kw_protocol_input *in, const char *key, const char **value)
{
    KW_FAIL_PARAM(!in || !value, KW_EINVAL, "input", "NULL argument");
    *value = NULL;
    const pin_entry *e = key ? entry_find(in, key) : NULL;
    if (e) {
        *value = e->text;
        return KW_OK;
    }
    if (key_lookup(key) < 0)
        return unknown_key(key ? key : "(null)");
    return KW_OK;
}

kw_status kw_protocol_input_clear(kw_protocol_input *in, const char *key)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL protocol input");
    int k = key_lookup(key);
    if (k < 0)
        return unknown_key(key ? key : "(null)");
    switch ((key_id)k) {
    case K_FOV: in->v.fov_n = 0; break;
    case K_MATRIX: in->v.matrix_n = 0; break;
    case K_BANDWIDTH: in->v.bw_set[0] = in->v.bw_set[1] = 0; break;
    default: {
        kw_protocol def;
        kw_protocol_defaults(&def);
        memcpy((char *)&in->v.p + defs[k].off, (const char *)&def + defs[k].off, defs[k].size);
    }
    }
    entry_drop(in, key);
    return KW_OK;
}

static kw_status file_key(void *user, const char *key, const char *value, int line)
{
    (void)line;
    kw_protocol_input *in = user;
    if (in->encode) { /* the simulator's dialect: texts only */
        KW_FAIL_IF(entry_find(in, key), KW_EINVAL, "%s: given more than once", key);
        return entry_put(in, key, value);
    }
    int k = key_lookup(key);
    if (k < 0)
        return unknown_key(key);
    /* bandwidth may appear once in each form; every other key once. */
    KW_FAIL_PARAM(k != K_BANDWIDTH && in->seen[k], KW_EINVAL, key, "given more than once");
    in->seen[k] = 1;
    return kw_protocol_input_set(in, key, value);
}

kw_status kw_protocol_input_parse(kw_protocol_input *in, const char *text, size_t len)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL protocol input");
    memset(in->seen, 0, sizeof in->seen);
    return kw_protofile_parse(text, len, file_key, in);
}

kw_status kw_protocol_input_finish(const kw_protocol_input *in, kw_protocol *out)
{
    KW_FAIL_PARAM(!in || !out, KW_EINVAL, "input", "NULL argument");
    const pin_vals *v = &in->v;
    kw_protocol p = v->p;
    if (v->matrix_n) {
        p.ndim = v->matrix_n == 3 ? 3 : 2;
        p.matrix[0] = v->matrix[0];
        p.matrix[1] = v->matrix_n >= 2 ? v->matrix[1] : v->matrix[0];
        p.matrix[2] = v->matrix_n == 3 ? v->matrix[2] : 1;
    }
    if (v->fov_n) {
        KW_FAIL_PARAM(v->fov_n == 3 && p.ndim != 3, KW_EINVAL, "fov",
                      "a z FOV needs a 3-D matrix NXxNYxNZ");
        KW_FAIL_PARAM(v->fov_n == 2 && p.ndim == 3, KW_EINVAL, "fov",
                      "a 3-D matrix needs x,y,z FOVs (or one for all)");
        p.fov_m[0] = v->fov[0];
        p.fov_m[1] = v->fov_n >= 2 ? v->fov[1] : v->fov[0];
        p.fov_m[2] = v->fov_n == 3 ? v->fov[2] : v->fov[0];
    }
    const double nx = p.matrix[0];
    if (v->bw_set[0] && v->bw_set[1]) {
        double a = v->bw[0], b = v->bw[1] * nx;
        KW_FAIL_PARAM(fabs(a - b) > 1e-9 * a, KW_EINVAL, "bandwidth",
                      "%g Hz across the FOV contradicts %g Hz/pixel x %d pixels = %g Hz", a,
                      v->bw[1], p.matrix[0], b);
        p.bandwidth_hz = a;
    } else if (v->bw_set[0]) {
        p.bandwidth_hz = v->bw[0];
    } else if (v->bw_set[1]) {
        p.bandwidth_hz = v->bw[1] * nx;
    } else {
        p.bandwidth_hz = KWD_BW_PER_PIXEL_HZ * nx;
    }
    kw_status st = kw_protocol_check(&p);
    if (st)
        return st;
    *out = p;
    return KW_OK;
}

/* ---- the simulator's dialect (plan_input_int.h) ------------------------------------ */

void kw_protocol_input_encode_dialect(kw_protocol_input *in)
{
    if (in)
        in->encode = 1;
}

kw_status kw_protocol_input_encode_fill(const kw_protocol_input *in, const char *const *skip,
                                        kw_protocol *p)
{
    KW_FAIL_PARAM(!in || !p, KW_EINVAL, "input", "NULL argument");
    pin_vals v = {.p = *p};
    for (int i = 0; i < in->n; i++) {
        const char *key = in->ent[i].key;
        int own = 0;
        for (const char *const *s = skip; s && *s && !own; s++)
            own = strcmp(*s, key) == 0;
        if (own)
            continue;
        int k = key_lookup(key);
        KW_FAIL_IF(k < 0 || defs[k].kind == KD_OWN, KW_EINVAL, "%s: unknown key", key);
        kw_status st = set_value(&v, k, in->ent[i].text, 1);
        if (st)
            return st;
    }
    *p = v.p;
    return KW_OK;
}
