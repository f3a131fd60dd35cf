/* pattern_params.c: the options of `kweave pattern` as named parameters
 * (kw_pattern_input, kw_pattern.h): each key's text read as the command
 * reads it, then the rules between the options and kw_pattern_options. */
#include "kw_pattern.h"

#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "defaults.h"
#include "params_int.h"

enum {
    P_KIND, P_MATRIX, P_ACCEL, P_ACS, P_FRACTION, P_ELLIPSE, P_POWER, P_SHIFT, P_SPOKES,
    P_TINY, P_ROS, P_DWELL, P_FOV, P_GMAX, P_SLEW, P_RASTER, P_INTERLEAVES, P_SHOTS, P_TE,
    P_SEED, P_COUNT
};

static const kw_param_key keys[P_COUNT + 1] = {
    {"kind", KW_PARAM_NAME, KW_UNIT_NONE, "full, partial, uniform, random, poisson, lattice, "
     "radial, golden, stack-of-stars, spiral or epi (required to make a pattern)"},
    {"matrix", KW_PARAM_SIZES, KW_UNIT_NONE, "NX, NXxNY or NXxNYxNZ (3-D: a ky-kz mask; required to make a "
     "pattern)"},
    {"accel", KW_PARAM_NUMBERS, KW_UNIT_NONE, "acceleration R, or RYxRZ (required by uniform, "
     "random, poisson, lattice; default: none)"},
    {"acs", KW_PARAM_SIZES, KW_UNIT_NONE, "autocalibration lines N (3-D: N or NYxNZ; default: none)"},
    {"fraction", KW_PARAM_NUMBER, KW_UNIT_NONE, "partial Fourier fraction in (0.5, 1] (default 1; "
     "required by partial)"},
    {"ellipse", KW_PARAM_FLAG, KW_UNIT_NONE, "3-D: drop the ky-kz corners (default: off)"},
    {"power", KW_PARAM_NUMBER, KW_UNIT_NONE, "density exponent d of (1-r)^d (default 3)"},
    {"shift", KW_PARAM_WHOLE, KW_UNIT_NONE, "lattice: ky shift per kz row (default 1)"},
    {"spokes", KW_PARAM_WHOLE, KW_UNIT_NONE, "radial spokes (default ceil(pi N/2))"},
    {"tiny", KW_PARAM_WHOLE, KW_UNIT_NONE, "golden: tiny golden angle order (default 1 = 111.246 deg)"},
    {"readout-oversampling", KW_PARAM_WHOLE, KW_UNIT_NONE, "radial kinds: F x N samples per "
     "spoke, 1/F cycle/FOV apart (1..4, default 1)"},
    {"dwell", KW_PARAM_QUANTITY, KW_UNIT_TIME, "radial: time per image pixel (default 1/("
     KWD_BW_PER_PIXEL_TEXT " x N); samples every dwell/F); spiral/epi: time between samples (default 4us)"},
    {"fov", KW_PARAM_QUANTITY, KW_UNIT_LENGTH, "spiral/epi: field of view (default " KWD_FOV_TEXT ")"},
    {"gmax", KW_PARAM_QUANTITY, KW_UNIT_GRADIENT, "spiral/epi: gradient limit (default "
     KWD_GMAX_TEXT ")"},
    {"slew", KW_PARAM_QUANTITY, KW_UNIT_SLEW, "spiral/epi: slew-rate limit (default "
     KWD_SLEW_TEXT ")"},
    {"raster", KW_PARAM_QUANTITY, KW_UNIT_TIME, "spiral/epi: gradient raster (default "
     KWD_RASTER_TEXT ")"},
    {"interleaves", KW_PARAM_WHOLE, KW_UNIT_NONE, "spiral: interleaves (default: the fewest "
     "with readouts <= " KWD_SPIRAL_MAX_READOUT_TEXT ")"},
    {"shots", KW_PARAM_WHOLE, KW_UNIT_NONE, "epi: shots (default " KWD_EPI_SHOTS_TEXT ")"},
    {"te", KW_PARAM_QUANTITY, KW_UNIT_TIME, "time of k = 0 (default N/2 x dwell)"},
    {"seed", KW_PARAM_WHOLE, KW_UNIT_NONE, "random seed, >= 0 (default 0)"},
    {NULL, 0, KW_UNIT_NONE, NULL}};

/* kw_pattern_options' fields -> the keys */
static const char *const field_keys[] = {
    "dims", "matrix", "accel", "accel", "acs", "acs", "fraction", "fraction", "ellipse", "ellipse",
    "power", "power", "shift", "shift", "seed", "seed", "spokes", "spokes", "tiny", "tiny",
    "readout_oversampling", "readout-oversampling", "dwell_s", "dwell", "te_s", "te",
    "fov_m", "fov", "gmax", "gmax", "slew", "slew", "raster", "raster",
    "interleaves", "interleaves", "shots", "shots", "kind", "kind", NULL};

typedef struct pin_vals {
    kw_pattern_kind kind;
    size_t mat[3], acs[2];
    int nmat, nacs;
    double accel[2];
    int naccel, ellipse;
    double num[P_COUNT]; /* the numbers and quantities, by key */
    long whole[P_COUNT]; /* the whole numbers, by key */
} pin_vals;

struct kw_pattern_input {
    pin_vals v;
    unsigned char seen[P_COUNT];
};

const kw_param_key *kw_pattern_input_keys(void) { return keys; }

const char *kw_pattern_input_key_of(const char *field)
{
    for (int i = 0; field && field_keys[i]; i += 2)
        if (strcmp(field_keys[i], field) == 0)
            return field_keys[i + 1];
    return NULL;
}

kw_status kw_pattern_input_create(kw_pattern_input **in)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL pointer for the result");
    *in = kw_alloc_n(1, sizeof **in);
    KW_FAIL_IF(!*in, KW_ENOMEM, "pattern input: out of memory");
    return KW_OK;
}

void kw_pattern_input_destroy(kw_pattern_input *in) { kw_free(in); }

/* ---- the texts ------------------------------------------------------------------- */

/* "256", "256x128", "2x2", "4.5": up to `max` numbers */
static kw_status parse_list(const char *key, const char *s, double *v, int max, int *n)
{
    *n = 0;
    const char *p = s;
    while (*p) {
        char *end;
        double x = strtod(p, &end);
        KW_FAIL_PARAM(end == p || !isfinite(x), KW_EINVAL, key, "'%s' is not of the form AxB", s);
        KW_FAIL_PARAM(*n == max, KW_EINVAL, key, "'%s' has more than %d parts", s, max);
        v[(*n)++] = x;
        p = end;
        if (*p == 'x' || *p == 'X') {
            p++;
            KW_FAIL_PARAM(!*p, KW_EINVAL, key, "'%s' ends with x", s);
        } else {
            KW_FAIL_PARAM(*p, KW_EINVAL, key, "'%s' is not of the form AxB", s);
        }
    }
    KW_FAIL_PARAM(*n == 0, KW_EINVAL, key, "empty value");
    return KW_OK;
}

static kw_status parse_sizes(const char *key, const char *s, size_t *v, int max, int *n)
{
    double d[3];
    kw_status st = parse_list(key, s, d, max, n);
    for (int i = 0; !st && i < *n; i++) {
        KW_FAIL_PARAM(d[i] != floor(d[i]) || d[i] < 0 || d[i] > 65536, KW_EINVAL, key,
                      "'%s': sizes must be whole numbers in 0..65536", s);
        v[i] = (size_t)d[i];
    }
    return st;
}

static kw_status parse_kind(const char *s, kw_pattern_kind *k)
{
    int i = 0;
    while (kw_pattern_kind_name((kw_pattern_kind)i) &&
           strcmp(kw_pattern_kind_name((kw_pattern_kind)i), s) != 0)
        i++;
    if (kw_pattern_kind_name((kw_pattern_kind)i)) {
        *k = (kw_pattern_kind)i;
        return KW_OK;
    }
    const char *names[32]; /* name the kinds there are */
    int n = 0;
    while (n < 31 && kw_pattern_kind_name((kw_pattern_kind)n)) {
        names[n] = kw_pattern_kind_name((kw_pattern_kind)n);
        n++;
    }
    names[n] = NULL;
    return kw_param_choice_error("kind", "kind", s, names);
}

static kw_status set_value(pin_vals *v, int k, const char *text)
{
    const char *key = keys[k].name;
    switch (k) {
    case P_KIND: return parse_kind(text, &v->kind);
    case P_MATRIX: return parse_sizes(key, text, v->mat, 3, &v->nmat);
    case P_ACS: return parse_sizes(key, text, v->acs, 2, &v->nacs);
    case P_ACCEL: {
        kw_status st = parse_list(key, text, v->accel, 2, &v->naccel);
        if (!st && v->naccel < 2)
            v->accel[1] = 1.0;
        KW_FAIL_PARAM(!st && (!(v->accel[0] > 0) || !(v->accel[1] > 0)), KW_EINVAL, key,
                      "must be positive");
        return st;
    }
    case P_ELLIPSE: return kw_param_flag(key, text, &v->ellipse);
    case P_SEED: {
        kw_status st = kw_param_whole(key, text, &v->whole[k]);
        KW_FAIL_PARAM(!st && v->whole[k] < 0, KW_EINVAL, key, "must be >= 0");
        return st;
    }
    default: break;
    }
    switch (keys[k].type) {
    case KW_PARAM_WHOLE: return kw_param_whole(key, text, &v->whole[k]);
    case KW_PARAM_NUMBER: return kw_param_number(key, text, &v->num[k]);
    default: return kw_param_quantity(key, text, keys[k].unit, &v->num[k]);
    }
}

kw_status kw_pattern_input_set(kw_pattern_input *in, const char *key, const char *text)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL pattern input");
    int k = kw_param_find(keys, key);
    if (k < 0)
        return KW_EINVAL;
    kw_status st = kw_param_text(key, text);
    pin_vals v = in->v;
    if (st || (st = set_value(&v, k, text)))
        return st;
    in->v = v;
    in->seen[k] = 1;
    return KW_OK;
}

kw_status kw_pattern_input_clear(kw_pattern_input *in, const char *key)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL pattern input");
    int k = kw_param_find(keys, key);
    if (k < 0)
        return KW_EINVAL;
    in->seen[k] = 0;
    if (k == P_ELLIPSE)
        in->v.ellipse = 0;
    return KW_OK;
}

int kw_pattern_input_given(const kw_pattern_input *in, const char *key)
{
    for (int k = 0; in && key && k < P_COUNT; k++)
        if (strcmp(keys[k].name, key) == 0)
            return in->seen[k] && (k != P_ELLIPSE || in->v.ellipse);
    return 0;
}

/* ---- the rules between the options ------------------------------------------------- */

static int clamp_int(long v) { return v > INT_MAX ? INT_MAX : v < INT_MIN ? INT_MIN : (int)v; }

/* the name of the first key of `list` (P_COUNT-terminated) given, or NULL */
static const char *first_given(const kw_pattern_input *in, const int *list)
{
    for (; *list != P_COUNT; list++)
        if (in->seen[*list] && (*list != P_ELLIPSE || in->v.ellipse))
            return keys[*list].name;
    return NULL;
}

static kw_status traj_rules(const kw_pattern_input *in, const kw_param_spelling *sp,
                            kw_pattern_options *o)
{
    const pin_vals *v = &in->v;
    const unsigned char *s = in->seen;
    kw_param_names nm = {.next = 0};
    const char *kind = kw_pattern_kind_name(o->kind);
    const int grad = o->kind == KW_PATTERN_SPIRAL || o->kind == KW_PATTERN_EPI;
    static const int cart[] = {P_ACCEL, P_ACS, P_FRACTION, P_ELLIPSE, P_COUNT};
    static const int radial[] = {P_ACCEL, P_ACS, P_ELLIPSE, P_SPOKES, P_TINY, P_COUNT};
    const char *bad = first_given(in, grad ? radial : cart);
    KW_FAIL_PARAM(bad && !grad, KW_EINVAL, bad, "not used by %s (set %s)",
                  kw_param_spell(&nm, sp, "kind", kind), kw_param_spell(&nm, sp, "spokes", NULL));
    KW_FAIL_PARAM(bad, KW_EINVAL, bad, "not used by %s", kw_param_spell(&nm, sp, "kind", kind));
    if (o->kind == KW_PATTERN_SPIRAL && (s[P_SHOTS] || s[P_FRACTION]))
        return kw_set_error_param(KW_EINVAL, s[P_SHOTS] ? "shots" : "fraction", "not used by %s",
                                  kw_param_spell(&nm, sp, "kind", "spiral"));
    KW_FAIL_PARAM(o->kind == KW_PATTERN_EPI && s[P_INTERLEAVES], KW_EINVAL, "interleaves",
                  "not used by %s (use %s)", kw_param_spell(&nm, sp, "kind", "epi"),
                  kw_param_spell(&nm, sp, "shots", NULL));
    /* 0 asks the library for its default: an explicit 0 is an error here */
    KW_FAIL_PARAM(s[P_SPOKES] && v->whole[P_SPOKES] < 1, KW_EINVAL, "spokes",
                  "%ld outside 1..10000000", v->whole[P_SPOKES]);
    KW_FAIL_PARAM(s[P_TINY] && v->whole[P_TINY] < 1, KW_EINVAL, "tiny", "%ld outside 1..1000",
                  v->whole[P_TINY]);
    KW_FAIL_PARAM(s[P_ROS] && v->whole[P_ROS] < 1, KW_EINVAL, "readout-oversampling",
                  "%ld outside 1..4", v->whole[P_ROS]);
    KW_FAIL_PARAM(s[P_INTERLEAVES] && v->whole[P_INTERLEAVES] < 1, KW_EINVAL, "interleaves",
                  "%ld outside 1..4096", v->whole[P_INTERLEAVES]);
    KW_FAIL_PARAM(s[P_DWELL] && !(v->num[P_DWELL] > 0), KW_EINVAL, "dwell",
                  grad ? "must be positive" : "must be a positive time");
    o->spokes = s[P_SPOKES] ? (size_t)v->whole[P_SPOKES] : 0;
    o->tiny = s[P_TINY] ? clamp_int(v->whole[P_TINY]) : 0;
    o->readout_oversampling = s[P_ROS] ? clamp_int(v->whole[P_ROS]) : 0;
    double *dst[] = {&o->dwell_s, &o->te_s, &o->fov_m, &o->gmax, &o->slew, &o->raster,
                     &o->fraction};
    static const int from[] = {P_DWELL, P_TE, P_FOV, P_GMAX, P_SLEW, P_RASTER, P_FRACTION};
    for (int i = 0; i < 7; i++)
        if (s[from[i]])
            *dst[i] = v->num[from[i]];
    if (s[P_INTERLEAVES])
        o->interleaves = clamp_int(v->whole[P_INTERLEAVES]);
    if (s[P_SHOTS])
        o->shots = clamp_int(v->whole[P_SHOTS]);
    return KW_OK;
}

/* accel R or RYxRZ, acs N or NYxNZ into the C-order arrays; the rest */
static kw_status mask_rules(const kw_pattern_input *in, const kw_param_spelling *sp,
                            kw_pattern_options *o)
{
    const pin_vals *v = &in->v;
    const unsigned char *s = in->seen;
    kw_param_names nm = {.next = 0};
    static const int timing[] = {P_SPOKES, P_TINY, P_DWELL, P_TE, P_COUNT};
    const char *bad = first_given(in, timing);
    KW_FAIL_PARAM(bad, KW_EINVAL, bad, "not used by the Cartesian %s",
                  kw_param_spell(&nm, sp, "kind", kw_pattern_kind_name(o->kind)));
    const int three_d = o->ndim == 3;
    if (s[P_ACCEL]) {
        double ry = v->accel[0], rz = v->accel[1];
        o->accel[0] = three_d ? rz : ry;
        o->accel[1] = three_d ? ry : rz; /* 2-D: kw_pattern_create rejects RZ != 1 */
        o->accel[2] = three_d ? 1.0 : 0.0;
    }
    if (s[P_ACS]) {
        KW_FAIL_PARAM(v->nacs > 1 && !three_d, KW_EINVAL, "acs",
                      "a 2-D ACS block AYxAZ needs a 3-D matrix");
        o->acs[0] = three_d ? (v->nacs > 1 ? v->acs[1] : v->acs[0]) : v->acs[0];
        o->acs[1] = three_d ? v->acs[0] : 0;
    }
    KW_FAIL_PARAM(o->kind == KW_PATTERN_PARTIAL && !s[P_FRACTION], KW_EINVAL, "fraction",
                  "required for %s", kw_param_spell(&nm, sp, "kind", "partial"));
    if (s[P_FRACTION])
        o->fraction = v->num[P_FRACTION];
    if (s[P_POWER])
        o->power = v->num[P_POWER];
    if (s[P_SHIFT])
        o->shift = v->whole[P_SHIFT];
    o->ellipse = v->ellipse;
    o->seed = s[P_SEED] ? (uint64_t)v->whole[P_SEED] : 0;
    return KW_OK;
}

kw_status kw_pattern_input_finish(const kw_pattern_input *in, const kw_param_spelling *sp,
                                  kw_pattern_options *out)
{
    KW_FAIL_PARAM(!in || !out, KW_EINVAL, "input", "NULL argument");
    kw_param_names nm = {.next = 0};
    const pin_vals *v = &in->v;
    KW_FAIL_PARAM(!in->seen[P_KIND], KW_EINVAL, "kind", "missing");
    KW_FAIL_PARAM(!in->seen[P_MATRIX], KW_EINVAL, "matrix", "missing (e.g. %s)",
                  kw_param_spell(&nm, sp, "matrix", "256x256"));
    kw_pattern_options o;
    kw_pattern_options_init(&o);
    o.kind = v->kind;
    /* NXxNY[xNZ] into C order */
    o.ndim = v->nmat > 2 ? 3 : 2;
    o.dims[o.ndim - 1] = v->mat[0];
    o.dims[o.ndim - 2] = v->nmat > 1 ? v->mat[1] : v->mat[0];
    if (v->nmat > 2)
        o.dims[0] = v->mat[2];
    const int grad = o.kind == KW_PATTERN_SPIRAL || o.kind == KW_PATTERN_EPI;
    const int radial = o.kind == KW_PATTERN_RADIAL || o.kind == KW_PATTERN_GOLDEN ||
                       o.kind == KW_PATTERN_STACK_OF_STARS;
    KW_FAIL_PARAM(in->seen[P_ROS] && !radial, KW_EINVAL, "readout-oversampling",
                  "only for %s, golden or stack-of-stars", kw_param_spell(&nm, sp, "kind", "radial"));
    static const int hardware[] = {P_FOV, P_GMAX, P_SLEW, P_RASTER, P_INTERLEAVES, P_SHOTS,
                                   P_COUNT};
    const char *hw = grad ? NULL : first_given(in, hardware);
    KW_FAIL_PARAM(hw, KW_EINVAL, hw, "only used by %s or epi",
                  kw_param_spell(&nm, sp, "kind", "spiral"));
    kw_status st = kw_pattern_kind_is_mask(o.kind) ? mask_rules(in, sp, &o)
                                                   : traj_rules(in, sp, &o);
    if (st)
        return st;
    *out = o;
    return KW_OK;
}
