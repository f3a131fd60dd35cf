/* acquire_params.c: the options of `kweave encode` as named parameters
 * (kw_acquisition_input, kw_acquire.h): each key's text read as the command
 * reads it, a protocol file's keys for those not given, the rules between
 * the options and kw_acquisition_options. */
#include "kw_acquire.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "defaults.h"
#include "params_int.h"
#include "plan_input_int.h"

#define MAX_EDGE 8192

enum {
    A_PHANTOM, A_MATRIX, A_FOV, A_SNR, A_SEED, A_SEQUENCE, A_TE, A_TR, A_TI, A_FLIP, A_B0,
    A_BANDWIDTH, A_DF, A_COILS, A_CR, A_CD, A_CO, A_COZ, A_CRINGS, A_CRGAP, A_SENS, A_PATTERN,
    A_TRAJ, A_TIMES, A_NCORR, A_NCOV, A_FMAP, A_FGRAD, A_TISSUE, A_SLICES, A_SLT, A_SLG, A_SLP,
    A_CTOL, A_COUNT
};

#define Q(unit) KW_PARAM_QUANTITY, KW_UNIT_##unit
static const kw_param_key keys[A_COUNT + 1] = {
    {"phantom", KW_PARAM_NAME, KW_UNIT_NONE,
     "shepp-logan, shepp-logan-modified, weave or weave3d (required)"},
    {"matrix", KW_PARAM_SIZES, KW_UNIT_NONE,
     "NX[xNY[xNZ]] samples, 1..8192 each (e.g. 256x256; required, or from a protocol)"},
    {"fov", KW_PARAM_QUANTITIES, KW_UNIT_LENGTH,
     "field of view L[,LY[,LZ]] (e.g. 256mm; required, or from a protocol)"},
    {"snr", KW_PARAM_NUMBER, KW_UNIT_NONE,
     "mean object signal / noise standard deviation in the image (default: no noise)"},
    {"seed", KW_PARAM_WHOLE, KW_UNIT_NONE,
     "noise seed, >= 0 (default 0)"},
    {"sequence", KW_PARAM_NAME, KW_UNIT_NONE,
     "signal model: pd (default: proton density, needs no TE, TR or flip), gre "
     "(spoiled gradient echo), se (spin echo) or ir (inversion recovery); a protocol's "
     "sequence is the pulse sequence timed (default gre), which it passes on"},
    {"te", Q(TIME),
     "echo time (k-space centre), e.g. 10ms (default: the shortest the readout "
     "allows; with a protocol the planner's minimum)"},
    {"tr", Q(TIME),
     "repetition time (required by gre, se, ir; default: none, with a protocol the "
     "planner's minimum)"},
    {"ti", Q(TIME),
     "inversion time (required by ir; default: none)"},
    {"flip", Q(ANGLE),
     "flip angle (required by gre), degrees without a unit (default: none)"},
    {"b0", Q(FIELD),
     "field strength, 1.5T or 3T with the built-in tissue table, any with tissue "
     "values of one's own (default " KWD_B0_TEXT ")"},
    {"bandwidth", KW_PARAM_BANDWIDTH, KW_UNIT_FREQUENCY,
     "receiver bandwidth, 32kHz (across the FOV) or 250Hz/pixel: times the "
     "readout (default: none, every sample at TE; with a protocol the protocol's, else "
     "the planner's default)"},
    {"df", Q(FREQUENCY),
     "off-resonance added everywhere (e.g. 50Hz; default 0)"},
    {"coils", KW_PARAM_WHOLE, KW_UNIT_NONE,
     "a ring of N circular loop coils, 1..128 (default: none, one uniform coil)"},
    {"coil-radius", Q(LENGTH),
     "loop radius (default FOV/4)"},
    {"coil-distance", Q(LENGTH),
     "loop centre to the axis (default 0.75 FOV)"},
    {"coil-order", KW_PARAM_WHOLE, KW_UNIT_NONE,
     "order L of the trigonometric series of each sensitivity, 0..8 (default 4; "
     "3-D: 3)"},
    {"coil-order-z", KW_PARAM_WHOLE, KW_UNIT_NONE,
     "3-D phantoms: the series' order along z, 0..8 (default 2)"},
    {"coil-rings", KW_PARAM_WHOLE, KW_UNIT_NONE,
     "1 (default) or 2 rings of N loops each (3-D: at z = -gap/2, +gap/2)"},
    {"coil-ring-gap", Q(LENGTH),
     "distance between the two rings' centres along z (default the z FOV / 2)"},
    {"sens", KW_PARAM_ARRAY, KW_UNIT_NONE, "sensitivity maps (options.sens; default none)"},
    {"pattern", KW_PARAM_ARRAY, KW_UNIT_NONE, "Cartesian mask (options.mask; default full grid)"},
    {"trajectory", KW_PARAM_ARRAY, KW_UNIT_NONE, "non-Cartesian samples (options.traj)"},
    {"times", KW_PARAM_ARRAY, KW_UNIT_NONE, "sample times (options.times)"},
    {"noise-corr", KW_PARAM_NUMBER, KW_UNIT_NONE,
     "noise correlation coefficient between every pair of coils (default 0)"},
    {"noise-cov", KW_PARAM_ARRAY, KW_UNIT_NONE, "noise covariance (options.noise_cov)"},
    {"field-map", KW_PARAM_ARRAY, KW_UNIT_NONE, "off-resonance map in Hz (options.field_map)"},
    {"field-gradient", KW_PARAM_QUANTITIES, KW_UNIT_GRADIENT,
     "linear field GX,GY[,GZ] along the array axes, zero at the FOV centre "
     "(e.g. 20uT/m,0): exact (default: none)"},
    {"tissue", KW_PARAM_ARRAY, KW_UNIT_NONE, "tissue values (options.tissue_values)"},
    {"slices", KW_PARAM_WHOLE, KW_UNIT_NONE,
     "multi-slice 2-D of a 3-D phantom: N slices centred on z = 0, 1..256 "
     "(default: none)"},
    {"slice-thickness", Q(LENGTH),
     "slice thickness (rectangular through-slice profile; required with slices)"},
    {"slice-gap", Q(LENGTH),
     "gap between slices (default 0)"},
    {"slice-points", KW_PARAM_WHOLE, KW_UNIT_NONE,
     "Gauss-Legendre points across each slice, 1..32 (default 8)"},
    {"coil-tolerance", KW_PARAM_NUMBER, KW_UNIT_NONE,
     "largest pointwise misfit of the fitted ring maps against the loops' field, "
     "a fraction of the local value where a coil is >= 10% of its peak in the object; the "
     "series order not given is raised to meet it; 0 <= t < 1 (default 0.01 in 2-D; 3-D: "
     "none, orders 3 and 2; 0: no check)"},
    {NULL, 0, KW_UNIT_NONE, NULL}};
#undef Q

/* kw_acquisition_options' fields -> the keys */
static const char *const field_keys[] = {
    "phantom", "phantom", "dims", "matrix", "fov_m", "fov", "sequence", "sequence", "te_s", "te",
    "tr_s", "tr", "ti_s", "ti", "flip_rad", "flip", "b0_t", "b0", "bandwidth_hz", "bandwidth",
    "tissue_values", "tissue", "tissue", "tissue", "df_hz", "df", "field_gradient_ndim",
    "field-gradient", "field_gradient_t_per_m", "field-gradient", "field_map", "field-map",
    "coils", "coils", "coil_radius_m", "coil-radius", "coil_distance_m", "coil-distance",
    "coil_rings", "coil-rings", "coil_ring_gap_m", "coil-ring-gap", "coil_order", "coil-order",
    "coil_order_z", "coil-order-z", "sens", "sens", "snr", "snr", "noise_corr", "noise-corr",
    "noise_cov", "noise-cov", "seed", "seed", "slices", "slices", "slice_thickness_m",
    "slice-thickness", "slice_gap_m", "slice-gap", "slice_points", "slice-points",
    "mask", "pattern", "traj", "trajectory", "times", "times", "coil_tolerance", "coil-tolerance",
    NULL};

typedef struct ain_vals {
    size_t mat[3];
    int nmat, nfov, ngrad, seq, bw_pp;
    double fov[3], grad[3], bw;
    double num[A_COUNT];
    long whole[A_COUNT];
} ain_vals;

struct kw_acquisition_input {
    ain_vals v;
    unsigned char seen[A_COUNT];
    kw_protocol_input *pin; /* a protocol's texts (the simulator's dialect) */
    kw_protocol protocol;   /* what finish made of it */
    char *phantom;          /* options.phantom points here */
};

const kw_param_key *kw_acquisition_input_keys(void) { return keys; }

const char *kw_acquisition_input_key_of(const char *field)
{
    for (int i = 0; field && field_keys[i]; i += 2)
        if (strcmp(field_keys[i], field) == 0)
            return field_keys[i + 1];
    return NULL;
}

kw_status kw_acquisition_input_create(kw_acquisition_input **in)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL pointer for the result");
    *in = kw_alloc_n(1, sizeof **in);
    KW_FAIL_IF(!*in, KW_ENOMEM, "acquisition input: out of memory");
    return KW_OK;
}

void kw_acquisition_input_destroy(kw_acquisition_input *in)
{
    if (in) {
        kw_protocol_input_destroy(in->pin);
        kw_free(in->phantom);
    }
    kw_free(in);
}

/* ---- the texts ------------------------------------------------------------------- */

/* "256" / "256x192" / "64x64x16" */
static kw_status parse_matrix(const char *s, ain_vals *v)
{
    int k = 0;
    const char *p = s;
    int bad = 0;
    while (k < 3 && !bad) {
        char *end;
        long x = (*p >= '0' && *p <= '9') ? strtol(p, &end, 10) : -1;
        if (x < 1 || x > MAX_EDGE) {
            bad = 1;
            break;
        }
        v->mat[k++] = (size_t)x;
        if (*end == '\0')
            break;
        bad = *end != 'x' && *end != 'X';
        p = end + 1;
    }
    bad = bad || (*p && k == 3 && strpbrk(p, "xX"));
    KW_FAIL_PARAM(bad, KW_EINVAL, "matrix", "'%s' is not NX[xNY[xNZ]] with whole numbers 1..%d",
                  s, MAX_EDGE);
    v->nmat = k;
    return KW_OK;
}

static kw_status parse_own(ain_vals *v, int k, const char *text)
{
    char why[200];
    switch (k) {
    case A_MATRIX: return parse_matrix(text, v);
    case A_FOV:
        v->nfov = kw_unit_parse_list(text, KW_UNIT_LENGTH, v->fov, 3, why, sizeof why);
        KW_FAIL_PARAM(v->nfov < 0, KW_EINVAL, "fov", "%s", why);
        for (int i = 0; i < v->nfov; i++)
            KW_FAIL_PARAM(!(v->fov[i] > 0), KW_EINVAL, "fov", "must be positive (got %g m)",
                          v->fov[i]);
        return KW_OK;
    case A_SEQUENCE: {
        static const char *const names[] = {"pd", "gre", "se", "ir", NULL};
        for (v->seq = 0; v->seq < 4; v->seq++)
            if (strcmp(text, names[v->seq]) == 0)
                return KW_OK;
        return kw_param_choice_error("sequence", "sequence", text, names);
    }
    case A_BANDWIDTH:
        if (kw_unit_parse_bandwidth(text, &v->bw, &v->bw_pp, why, sizeof why))
            return kw_set_error_param(KW_EINVAL, "bandwidth", "%s", why);
        KW_FAIL_PARAM(!(v->bw > 0), KW_EINVAL, "bandwidth", "must be positive");
        return KW_OK;
    case A_FGRAD:
        memset(v->grad, 0, sizeof v->grad);
        v->ngrad = kw_unit_parse_list(text, KW_UNIT_GRADIENT, v->grad, 3, why, sizeof why);
        KW_FAIL_PARAM(v->ngrad < 0, KW_EINVAL, "field-gradient", "%s", why);
        return KW_OK;
    case A_SNR: {
        kw_status st = kw_param_number("snr", text, &v->num[k]);
        KW_FAIL_PARAM(!st && !(v->num[k] > 0 && isfinite(v->num[k])), KW_EINVAL, "snr",
                      "must be a positive number");
        return st;
    }
    case A_SEED: {
        kw_status st = kw_param_whole("seed", text, &v->whole[k]);
        KW_FAIL_PARAM(!st && v->whole[k] < 0, KW_EINVAL, "seed", "must be >= 0");
        return st;
    }
    }
    switch (keys[k].type) {
    case KW_PARAM_WHOLE: return kw_param_whole(keys[k].name, text, &v->whole[k]);
    case KW_PARAM_NUMBER: return kw_param_number(keys[k].name, text, &v->num[k]);
    case KW_PARAM_QUANTITY: return kw_param_quantity(keys[k].name, text, keys[k].unit, &v->num[k]);
    default: return KW_OK; /* NAME (phantom: create checks it), ARRAY */
    }
}

kw_status kw_acquisition_input_set(kw_acquisition_input *in, const char *key, const char *text)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL acquisition input");
    int k = kw_param_find(keys, key);
    if (k < 0)
        return KW_EINVAL;
    kw_status st = kw_param_text(key, text);
    ain_vals v = in->v;
    if (st || (st = parse_own(&v, k, text)))
        return st;
    if (k == A_PHANTOM) {
        char *t = kw_alloc_n(strlen(text) + 1, 1);
        KW_FAIL_IF(!t, KW_ENOMEM, "phantom: out of memory");
        kw_free(in->phantom);
        in->phantom = strcpy(t, text);
    }
    in->v = v;
    in->seen[k] = 1;
    return KW_OK;
}

int kw_acquisition_input_given(const kw_acquisition_input *in, const char *key)
{
    for (int k = 0; in && key && k < A_COUNT; k++)
        if (strcmp(keys[k].name, key) == 0)
            return in->seen[k];
    return 0;
}

kw_status kw_acquisition_input_clear(kw_acquisition_input *in, const char *key)
{
    KW_FAIL_PARAM(!in, KW_EINVAL, "input", "NULL acquisition input");
    int k = kw_param_find(keys, key);
    if (k < 0)
        return KW_EINVAL;
    in->seen[k] = 0;
    return KW_OK;
}

/* ---- a protocol file ----------------------------------------------------------------- */

kw_status kw_acquisition_input_protocol(kw_acquisition_input *in, const char *text, size_t len)
{
    KW_FAIL_PARAM(!in || !text, KW_EINVAL, "input", "NULL argument");
    kw_protocol_input_destroy(in->pin);
    in->pin = NULL;
    kw_status st = kw_protocol_input_create(&in->pin);
    if (!st) {
        kw_protocol_input_encode_dialect(in->pin);
        st = kw_protocol_input_parse(in->pin, text, len);
    }
    return kw_error_reparam(st, NULL, "protocol");
}

const char *kw_acquisition_input_protocol_text(const kw_acquisition_input *in, const char *key)
{
    const char *v = NULL;
    if (!in || !in->pin || kw_protocol_input_get(in->pin, key, &v)) {
        if (in && in->pin)
            kw_clear_error(); /* flip and ti are not the planner's: absent, not an error */
        return NULL;
    }
    return v;
}

/* The protocol's keys for the keys not given (on a copy of the input). */
static kw_status protocol_keys(kw_acquisition_input *in)
{
    const char *v = kw_acquisition_input_protocol_text(in, "sequence");
    if (v && !in->seen[A_SEQUENCE]) {
        const char *s = strcmp(v, "gre") == 0 || strcmp(v, "epi") == 0 ||
                                strcmp(v, "radial") == 0 || strcmp(v, "spiral") == 0
                            ? "gre"
                        : strcmp(v, "se") == 0 ? "se" : NULL;
        static const char *const plan_seqs[] = {"gre", "se", "epi", "radial", "spiral", NULL};
        const char *near = s ? NULL : kw_param_near(v, plan_seqs);
        KW_FAIL_PARAM(!s && near, KW_EINVAL, "protocol", "sequence: unknown sequence '%s'; did you "
                      "mean '%s'? (one of: gre, se, epi, radial, spiral)", v, near);
        KW_FAIL_PARAM(!s, KW_EINVAL, "protocol", "sequence: unknown sequence '%s' (one of: gre, se, "
                      "epi, radial, spiral)", v);
        kw_acquisition_input_set(in, "sequence", s);
    }
    static const int texts[] = {A_FOV, A_MATRIX, A_BANDWIDTH};
    for (int i = 0; i < 3; i++) {
        kw_status st;
        if (!in->seen[texts[i]] && (v = kw_acquisition_input_protocol_text(in, keys[texts[i]].name)) &&
            (st = kw_acquisition_input_set(in, keys[texts[i]].name, v)))
            return st;
    }
    static const int units[] = {A_B0, A_TE, A_TR, A_FLIP, A_TI};
    for (int i = 0; i < 5; i++) {
        const kw_param_key *k = &keys[units[i]];
        char why[200];
        if (in->seen[units[i]] || !(v = kw_acquisition_input_protocol_text(in, k->name)))
            continue;
        if (kw_unit_parse(v, k->unit, &in->v.num[units[i]], why, sizeof why))
            return kw_set_error_param(KW_EINVAL, "protocol", "%s: %s", k->name, why);
        in->seen[units[i]] = 1;
    }
    return KW_OK;
}

/* The planner's protocol of the file: its keys over the defaults; the
 * file's sequence gives the timing, without one spin-echo timing for se/ir
 * contrast and gradient-echo timing otherwise. */
static kw_status protocol_fill(const kw_acquisition_input *in, kw_contrast_kind seq,
                              kw_protocol *p)
{
    /* the keys the options took (protocol_keys) */
    static const char *const own[] = {"sequence", "fov", "matrix", "bandwidth", "b0", "te",
                                      "tr", "flip", "ti", NULL};
    kw_protocol_defaults(p);
    kw_status st = kw_protocol_input_encode_fill(in->pin, own, p);
    if (st)
        return kw_error_reparam(st, NULL, "protocol");
    /* its bandwidth line, if any, became the bandwidth; without one the
     * library applies the planner's default per pixel to the matrix used */
    p->bandwidth_hz = 0;
    const char *sq = kw_acquisition_input_protocol_text(in, "sequence");
    if (!sq)
        sq = seq == KW_CONTRAST_SE || seq == KW_CONTRAST_IR ? "se" : "gre";
    static const char *const kinds[] = {"gre", "se", "epi", "radial", "spiral"};
    for (int i = 0; i < 5; i++)
        if (strcmp(sq, kinds[i]) == 0)
            p->sequence = (kw_sequence_kind)i;
    return KW_OK;
}

/* ---- the rules between the options --------------------------------------------------- */

/* Options given together that do not go together, and values that the
 * options struct reads as "not given". */
static kw_status combinations(const kw_acquisition_input *in, const kw_param_spelling *sp)
{
    const unsigned char *s = in->seen;
    const ain_vals *v = &in->v;
    kw_param_names nm = {.next = 0};
#define SP(key, val) kw_param_spell(&nm, sp, key, val)
    KW_FAIL_PARAM((s[A_SLT] || s[A_SLG] || s[A_SLP]) && !s[A_SLICES], KW_EINVAL, "slices",
                  "missing (slice options need %s)", SP("slices", "N"));
    KW_FAIL_PARAM(s[A_SLICES] && (v->whole[A_SLICES] < 1 || v->whole[A_SLICES] > 256), KW_EINVAL,
                  "slices", "must be 1..256");
    KW_FAIL_PARAM(s[A_PATTERN] && s[A_TRAJ], KW_EINVAL, "pattern",
                  "give %s (Cartesian) or %s, not both", SP("pattern", NULL), SP("trajectory", NULL));
    KW_FAIL_PARAM(s[A_FMAP] && s[A_FGRAD], KW_EINVAL, "field-map", "give %s or %s, not both "
                  "(add the linear field to the map)", SP("field-map", NULL),
                  SP("field-gradient", NULL));
    KW_FAIL_PARAM(s[A_COILS] && s[A_SENS], KW_EINVAL, "coils",
                  "give %s (a ring of loops) or %s (maps), not both", SP("coils", NULL),
                  SP("sens", NULL));
    KW_FAIL_PARAM(s[A_COILS] && (v->whole[A_COILS] < 1 || v->whole[A_COILS] > 128), KW_EINVAL,
                  "coils", "must be 1..128 (got %ld)", v->whole[A_COILS]);
    KW_FAIL_PARAM((s[A_CR] || s[A_CD]) && !s[A_COILS], KW_EINVAL,
                  s[A_CR] ? "coil-radius" : "coil-distance", "only with %s", SP("coils", NULL));
    const int bad_cr = s[A_CR] && !(v->num[A_CR] > 0);
    KW_FAIL_PARAM(bad_cr || (s[A_CD] && !(v->num[A_CD] > 0)), KW_EINVAL,
                  bad_cr ? "coil-radius" : "coil-distance", "must be positive");
    KW_FAIL_PARAM(s[A_CO] && (v->whole[A_CO] < 0 || v->whole[A_CO] > 8), KW_EINVAL, "coil-order",
                  "must be 0..8");
    KW_FAIL_PARAM(s[A_COZ] && (v->whole[A_COZ] < 0 || v->whole[A_COZ] > 8), KW_EINVAL,
                  "coil-order-z", "must be 0..8");
    const char *ring = s[A_COZ] ? "coil-order-z" : s[A_CRINGS] ? "coil-rings" : "coil-ring-gap";
    KW_FAIL_PARAM((s[A_COZ] || s[A_CRINGS] || s[A_CRGAP]) && !s[A_COILS] && !s[A_SENS], KW_EINVAL,
                  ring, "only with %s or %s", SP("coils", NULL), SP("sens", NULL));
    KW_FAIL_PARAM((s[A_CRINGS] || s[A_CRGAP]) && !s[A_COILS], KW_EINVAL,
                  s[A_CRINGS] ? "coil-rings" : "coil-ring-gap", "only with %s", SP("coils", NULL));
    KW_FAIL_PARAM(s[A_CRGAP] && !(v->num[A_CRGAP] > 0), KW_EINVAL, "coil-ring-gap",
                  "a positive length, with %s", SP("coil-rings", "2"));
    KW_FAIL_PARAM(s[A_NCORR] && !s[A_SNR], KW_EINVAL, "noise-corr", "needs %s (the noise level)",
                  SP("snr", NULL));
    KW_FAIL_PARAM(s[A_NCORR] && s[A_NCOV], KW_EINVAL, "noise-corr", "give %s or %s, not both",
                  SP("noise-corr", NULL), SP("noise-cov", NULL));
#undef SP
    static const int pos[] = {A_TE, A_TR, A_TI, A_FLIP};
    for (int i = 0; i < 4; i++)
        KW_FAIL_PARAM(s[pos[i]] && !(v->num[pos[i]] > 0), KW_EINVAL, keys[pos[i]].name,
                      "must be positive");
    return KW_OK;
}

/* The scalars into the options. */
static void fill(const kw_acquisition_input *in, kw_acquisition_options *o)
{
    const unsigned char *s = in->seen;
    const ain_vals *v = &in->v;
    for (int i = 0; i < v->nmat; i++)
        o->dims[2 - i] = v->mat[i]; /* C order: (nz, ny, nx) */
    for (int i = 0; i < v->nfov; i++)
        o->fov_m[2 - i] = v->fov[i];
    if (s[A_SEQUENCE])
        o->sequence = (kw_contrast_kind)v->seq;
    if (s[A_BANDWIDTH])
        o->bandwidth_hz = v->bw_pp ? v->bw * (double)v->mat[0] : v->bw;
    if (s[A_FGRAD]) {
        o->field_gradient_ndim = v->ngrad;
        for (int d = 0; d < v->ngrad; d++)
            o->field_gradient_t_per_m[2 - d] = v->grad[d]; /* GX,GY[,GZ] -> (z, y, x) */
    }
    static const int dbl[] = {A_SNR, A_TE, A_TR, A_TI, A_FLIP, A_B0, A_DF, A_CR, A_CD, A_CRGAP,
                              A_NCORR, A_CTOL};
    double *dd[] = {&o->snr, &o->te_s, &o->tr_s, &o->ti_s, &o->flip_rad, &o->b0_t, &o->df_hz,
                    &o->coil_radius_m, &o->coil_distance_m, &o->coil_ring_gap_m, &o->noise_corr,
                    &o->coil_tolerance};
    for (int i = 0; i < 12; i++)
        if (s[dbl[i]])
            *dd[i] = v->num[dbl[i]];
    static const int ints[] = {A_COILS, A_CO, A_COZ, A_CRINGS};
    int *di[] = {&o->coils, &o->coil_order, &o->coil_order_z, &o->coil_rings};
    for (int i = 0; i < 4; i++)
        if (s[ints[i]])
            *di[i] = (int)v->whole[ints[i]];
    if (s[A_SEED])
        o->seed = (uint64_t)v->whole[A_SEED];
    if (s[A_SLICES]) {
        o->slices = (int)v->whole[A_SLICES];
        o->slice_thickness_m = s[A_SLT] ? v->num[A_SLT] : 0;
        o->slice_gap_m = s[A_SLG] ? v->num[A_SLG] : 0;
        if (s[A_SLP])
            o->slice_points = (int)v->whole[A_SLP];
    }
}

kw_status kw_acquisition_input_finish(kw_acquisition_input *in, const kw_param_spelling *sp,
                                      kw_acquisition_options *o)
{
    KW_FAIL_PARAM(!in || !o, KW_EINVAL, "input", "NULL argument");
    KW_FAIL_PARAM(o->struct_size != sizeof *o, KW_EINVAL, "options",
                  "options not initialised (call kw_acquisition_options_init() first)");
    kw_acquisition_input w = *in; /* the protocol's keys go onto a copy */
    kw_param_names nm = {.next = 0};
    kw_status st = in->pin ? protocol_keys(&w) : KW_OK;
    if (st)
        return st;
    if (!w.seen[A_PHANTOM]) {
        char list[160] = "";
        size_t used = 0;
        for (const char *const *n = kw_phantom_names(); *n && used < sizeof list; n++)
            used += (size_t)snprintf(list + used, sizeof list - used, "%s%s", used ? ", " : "", *n);
        return kw_set_error_param(KW_EINVAL, "phantom", "missing (%s)", list);
    }
    KW_FAIL_PARAM(!w.seen[A_MATRIX], KW_EINVAL, "matrix", "missing (e.g. %s)",
                  kw_param_spell(&nm, sp, "matrix", "256"));
    KW_FAIL_PARAM(!w.seen[A_FOV], KW_EINVAL, "fov", "missing (e.g. %s)",
                  kw_param_spell(&nm, sp, "fov", "256mm"));
    if ((st = combinations(&w, sp)))
        return st;
    kw_acquisition_options r = *o;
    r.phantom = in->phantom;
    fill(&w, &r);
    if (in->pin) {
        if ((st = protocol_fill(in, r.sequence, &in->protocol)))
            return st;
        r.protocol = &in->protocol;
    }
    *o = r;
    return KW_OK;
}
