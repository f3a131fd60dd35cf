/* cmd_encode.c: `kweave encode`: simulate an acquisition of an analytic
 * phantom -> k-space .npy + JSON sidecar (+ truth image). Definitions of
 * SNR, noise and the k-space convention: docs/simulator.md. */
#include <errno.h>
#include <stddef.h>
#include <libgen.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "kw_linalg.h"
#include "jsonio.h"
#include "kw_coils.h"
#include "kw_phantom.h"
#include "kw_simulate.h"
#include "kw_tissue.h"
#include "kw_rng.h"
#include "kw_sequence.h"
#include "npy.h"
#include "npystream.h"
#include "protofile.h"

#define MAX_EDGE 8192
/* Period of the trigonometric series of the coil maps, in FOV units: larger
 * than the FOV so that the series need not be periodic across it
 * (Guerquin-Kern et al. 2012 fit over a box somewhat larger than the object). */
#define COIL_PERIOD 1.5

static const char *usage =
    "usage: kweave encode --phantom NAME --matrix NX[xNY[xNZ]] --fov L[,LY[,LZ]]\n"
    "                     --out ks.npy [--truth truth.npy] [--snr X --seed N]\n"
    "                     [--sequence gre|se|ir --te T --tr T --flip DEG --ti T --b0 B]\n"
    "                     [--bandwidth BW] [--coils N | --sens maps.npy] [--sens-out F]\n"
    "                     [--pattern mask.npy | --trajectory traj.npy] [--noise-corr R]\n"
    "Simulate the acquisition of an analytic phantom with exact k-space (the\n"
    "Fourier transform of every shape evaluated at every sample). Phantoms:\n"
    "shepp-logan, shepp-logan-modified, weave, weave3d. See docs/simulator.md.";

/* "256" / "256x192" / "64x64x16" -> n[0..2]; returns the number of values. */
static int parse_matrix(const char *s, size_t n[3])
{
    int k = 0;
    const char *p = s;
    while (k < 3) {
        char *end;
        errno = 0;
        if (!(*p >= '0' && *p <= '9'))
            return -1;
        long v = strtol(p, &end, 10);
        if (errno || end == p || v < 1 || v > MAX_EDGE)
            return -1;
        n[k++] = (size_t)v;
        if (*end == '\0')
            break;
        if (*end != 'x' && *end != 'X')
            return -1;
        p = end + 1;
    }
    if (*p && k == 3 && strpbrk(p, "xX"))
        return -1;
    return k;
}

/* "256mm" / "256mm,200mm[,120mm]" -> metres. */
/* FOV: one to three positive lengths. */
static int parse_fov(const char *s, double f[3], char *why, size_t wl)
{
    int k = kw_unit_parse_list(s, KW_UNIT_LENGTH, f, 3, why, wl);
    for (int i = 0; i < k; i++)
        if (!(f[i] > 0)) {
            snprintf(why, wl, "must be positive (got %g m)", f[i]);
            return -1;
        }
    return k;
}

/* Mean |truth| over the object: pixels at >= 10% of the maximum. */
static double object_mean(const float *img, size_t n)
{
    double mx = 0;
    for (size_t i = 0; i < n; i++)
        if (fabs(img[i]) > mx)
            mx = fabs(img[i]);
    double s = 0;
    size_t c = 0;
    for (size_t i = 0; i < n; i++)
        if (fabs(img[i]) >= 0.1 * mx && mx > 0) {
            s += fabs(img[i]);
            c++;
        }
    return c ? s / (double)c : 0.0;
}

/* Name of `path` as the sidecar beside `out` should record it: the base name
 * when both lie in the same directory, else the absolute path (the file
 * itself need not exist yet). malloc'd. */
static char *rel_to_sidecar(const char *path, const char *out)
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

/* "<stem>_<suffix>" beside an output "<stem>.npy". malloc'd. */
static char *derived_path(const char *out, const char *suffix)
{
    size_t n = strlen(out);
    size_t stem = (n > 4 && strcmp(out + n - 4, ".npy") == 0) ? n - 4 : n;
    char *p = malloc(stem + strlen(suffix) + 2);
    if (p) {
        memcpy(p, out, stem);
        p[stem] = '_';
        strcpy(p + stem + 1, suffix);
    }
    return p;
}

/* Lower Cholesky factor of the Hermitian matrix a (n x n) into l, upper
 * triangle zeroed (kw_chol); nonzero when not positive definite. */
static int chol_c(const double complex *a, int n, double complex *l)
{
    memcpy(l, a, (size_t)n * n * sizeof *l);
    if (kw_chol(l, (size_t)n) != KW_OK)
        return -1;
    for (int i = 0; i < n; i++)
        for (int j = i + 1; j < n; j++)
            l[i * n + j] = 0;
    return 0;
}

/* Centre (m) of slice i of n, thickness t, gap g, stacked around z = 0. */
static double slice_centre(int i, int n, double t, double g)
{
    return ((double)i - 0.5 * (n - 1)) * (t + g);
}

/* Multi-slice 2-D: each slice is the average of the phantom's cuts over a
 * rectangular profile of thickness `thk` (Gauss-Legendre quadrature across
 * the slice, `npts` points; each cut is an exact 2-D phantom). With `truth`
 * it writes the slab-averaged images (nsl x ny x nx); with `out` the k-space
 * (channels x nsl x ny x nx), plus noise when `chol` is given (slice s seeded
 * with kw_rng_mix(seed, s)). `base` gives grid, contrast, coils and mask;
 * `coef_sl`, when not NULL, each slice's own coil series (slice s at
 * coef_sl + s x coils x terms). `fm`, when not NULL, adds a field map to the
 * k-space (kw_fieldmap over the slice's profile-weighted cuts): slice s's map
 * at fm->map + s x fm->stride; the worst interpolation error and the most
 * segments come back in fm. */
typedef struct slice_fieldmap {
    const float *map;
    size_t stride; /* 0: one map for every slice */
    double err;
    int seg;
} slice_fieldmap;

static kw_status slices_run(const kw_phantom *p3, const kw_sim_options *base, int nsl,
                            double fovz, double thk, double gap, int npts, float *truth,
                            float complex *out, const double complex *chol, uint64_t seed,
                            const double complex *coef_sl, slice_fieldmap *fm)
{
    const size_t cstride = base->ncoils > 0 ? (size_t)base->ncoils *
                                                  (size_t)(2 * base->coil_order + 1) *
                                                  (size_t)(2 * base->coil_order + 1)
                                            : 0;
    double gx[32], gw[32];
    kw_status st = kw_gauss_legendre(npts, gx, gw);
    if (st)
        return st;
    size_t nx = base->n[0], ny = base->n[1], cnt = nx * ny;
    int nch = base->ncoils > 0 ? base->ncoils : 1;
    float *img = NULL;
    float complex *tmp = NULL, *acc = NULL;
    kw_sim *sim = NULL;
    kw_fieldmap *fmp = NULL;
    kw_phantom *cuts = NULL; /* the slice's cuts, for the field map */
    double cw[32];
    if (truth && !(img = malloc(cnt * sizeof *img)))
        return kw_set_error(KW_ENOMEM, "slices: out of memory");
    if (fm && out && !(cuts = malloc((size_t)npts * sizeof *cuts))) {
        st = kw_set_error(KW_ENOMEM, "slices: out of memory");
        goto done;
    }
    if (out && (!(tmp = malloc(cnt * nch * sizeof *tmp)) || !(acc = malloc(cnt * nch * sizeof *acc)))) {
        st = kw_set_error(KW_ENOMEM, "slices: out of memory");
        goto done;
    }
    for (int sl = 0; sl < nsl; sl++) {
        double zc = slice_centre(sl, nsl, thk, gap);
        if (acc)
            memset(acc, 0, cnt * nch * sizeof *acc);
        if (truth)
            memset(truth + (size_t)sl * cnt, 0, cnt * sizeof *truth);
        for (int g = 0; g < npts; g++) {
            /* z of the node in phantom units ([-1, 1] spans the z FOV) */
            double zm = zc + 0.5 * thk * gx[g];
            kw_phantom p2;
            if ((st = kw_phantom_section(p3, zm / (0.5 * fovz), &p2)))
                goto done;
            kw_sim_options o = *base;
            o.phantom = &p2;
            o.noise_chol = NULL;
            if (coef_sl && o.ncoils > 0)
                o.coil_coef = coef_sl + (size_t)sl * cstride;
            if ((st = kw_sim_create(&sim, &o)))
                goto done;
            double wt = 0.5 * gw[g]; /* the profile's mean: weights sum to 2 */
            if (cuts) {
                cuts[g] = p2;
                cw[g] = wt;
            }
            if (truth) {
                double w[KW_PHANTOM_MAX_SHAPES];
                kw_sim_image_weights(sim, w);
                if ((st = kw_phantom_rasterize(&p2, o.n, w, 4, img)))
                    goto done;
                for (size_t i = 0; i < cnt; i++)
                    truth[(size_t)sl * cnt + i] += (float)(wt * img[i]);
            }
            if (out) {
                if ((st = kw_sim_execute(sim, tmp, NULL, NULL)))
                    goto done;
                for (size_t i = 0; i < cnt * nch; i++)
                    acc[i] += (float complex)(wt * tmp[i]);
            }
            kw_sim_destroy(sim);
            sim = NULL;
        }
        if (out && fm) {
            /* the field map's perturbation for the whole slab at once: the
             * class images are the profile-weighted sums of the cuts' */
            kw_sim_options o = *base;
            o.phantom = &cuts[npts / 2];
            o.noise_chol = NULL;
            if (coef_sl && o.ncoils > 0)
                o.coil_coef = coef_sl + (size_t)sl * cstride;
            if ((st = kw_sim_create(&sim, &o)))
                goto done;
            kw_fieldmap_options fo = {sim, fm->map + (size_t)sl * fm->stride, 4, 0, npts, cuts, cw};
            if ((st = kw_fieldmap_create(&fmp, &fo)) || (st = kw_fieldmap_execute(fmp, acc, NULL, NULL)))
                goto done;
            double e = kw_fieldmap_interp_error(fmp);
            fm->err = e > fm->err ? e : fm->err;
            if (kw_fieldmap_segments(fmp) > fm->seg)
                fm->seg = kw_fieldmap_segments(fmp);
            kw_fieldmap_destroy(fmp);
            fmp = NULL;
            kw_sim_destroy(sim);
            sim = NULL;
        }
        if (out) {
            if (chol) {
                kw_phantom p2;
                kw_phantom_section(p3, 0.0, &p2);
                kw_sim_options o = *base;
                o.phantom = &p2;
                o.noise_chol = NULL;
                if ((st = kw_sim_create(&sim, &o)))
                    goto done;
                if ((st = kw_sim_add_noise(sim, chol, kw_rng_mix(seed, (uint64_t)sl), acc)))
                    goto done;
                kw_sim_destroy(sim);
                sim = NULL;
            }
            for (int c = 0; c < nch; c++)
                memcpy(out + ((size_t)c * nsl + sl) * cnt, acc + (size_t)c * cnt, cnt * sizeof *acc);
        }
        if (out) {
            kw_progress pr = {"slices", sl + 1, nsl, NAN};
            kw_cli_progress(NULL, &pr);
        }
    }
done:
    kw_fieldmap_destroy(fmp);
    kw_sim_destroy(sim);
    free(cuts);
    free(img);
    free(tmp);
    free(acc);
    return st;
}

/* ---- protocol files (the planner's `key = value` format, cli/protofile.h) --- */
#define PF_MAX 40
typedef struct proto_keys {
    int n;
    char key[PF_MAX][KW_PROTOFILE_MAX_KEY + 1];
    char val[PF_MAX][KW_PROTOFILE_MAX_LINE + 1];
} proto_keys;

static kw_status proto_key(void *user, const char *key, const char *value, int line)
{
    (void)line;
    proto_keys *pk = user;
    for (int i = 0; i < pk->n; i++)
        KW_FAIL_IF(strcmp(pk->key[i], key) == 0, KW_EINVAL, "%s: given more than once", key);
    KW_FAIL_IF(pk->n >= PF_MAX, KW_EINVAL, "too many keys");
    snprintf(pk->key[pk->n], sizeof pk->key[0], "%s", key);
    snprintf(pk->val[pk->n], sizeof pk->val[0], "%s", value);
    pk->n++;
    return KW_OK;
}

static const char *proto_get(const proto_keys *pk, const char *key)
{
    for (int i = 0; pk && i < pk->n; i++)
        if (strcmp(pk->key[i], key) == 0)
            return pk->val[i];
    return NULL;
}

/* The planner's keys this command does not use itself, into `p`; the rest
 * (sequence, fov, matrix, bandwidth, b0, te, tr) are set by the caller. */
static kw_status proto_fill(const proto_keys *pk, kw_protocol *p)
{
    static const struct {
        const char *key;
        kw_unit_kind kind;
        size_t off;
    } unit_keys[] = {
        {"gmax", KW_UNIT_GRADIENT, offsetof(kw_protocol, gmax_T_per_m)},
        {"slew", KW_UNIT_SLEW, offsetof(kw_protocol, slew_T_per_m_per_s)},
        {"raster", KW_UNIT_TIME, offsetof(kw_protocol, raster_s)},
        {"temperature", KW_UNIT_TEMPERATURE, offsetof(kw_protocol, temperature_k)},
        {"rf-duration", KW_UNIT_TIME, offsetof(kw_protocol, rf_duration_s)},
        {"tbw", KW_UNIT_NONE, offsetof(kw_protocol, tbw)},
        {"slice", KW_UNIT_LENGTH, offsetof(kw_protocol, slice_m)},
        {"spoiler", KW_UNIT_NONE, offsetof(kw_protocol, spoiler_cycles)},
        {"crusher", KW_UNIT_NONE, offsetof(kw_protocol, crusher_cycles)},
        {"t2star", KW_UNIT_TIME, offsetof(kw_protocol, t2star_s)},
        {"partial-fourier", KW_UNIT_NONE, offsetof(kw_protocol, partial_fourier)},
        {"max-readout", KW_UNIT_TIME, offsetof(kw_protocol, max_readout_s)},
    };
    static const struct {
        const char *key;
        size_t off;
    } int_keys[] = {{"shots", offsetof(kw_protocol, shots)},
                    {"interleaves", offsetof(kw_protocol, interleaves)},
                    {"spokes", offsetof(kw_protocol, spokes)},
                    {"averages", offsetof(kw_protocol, averages)}};
    static const char *const own[] = {"sequence", "fov", "matrix", "bandwidth", "b0", "te",
                                      "tr", "flip", "ti", NULL};
    for (int i = 0; i < pk->n; i++) {
        const char *k = pk->key[i], *v = pk->val[i];
        int done = 0;
        for (const char *const *o = own; *o && !done; o++)
            done = strcmp(*o, k) == 0;
        for (size_t u = 0; !done && u < sizeof unit_keys / sizeof unit_keys[0]; u++)
            if (strcmp(unit_keys[u].key, k) == 0) {
                char why[160];
                double x;
                if (kw_unit_parse(v, unit_keys[u].kind, &x, why, sizeof why))
                    return kw_set_error(KW_EINVAL, "%s: %s", k, why);
                *(double *)((char *)p + unit_keys[u].off) = x;
                done = 1;
            }
        for (size_t u = 0; !done && u < sizeof int_keys / sizeof int_keys[0]; u++)
            if (strcmp(int_keys[u].key, k) == 0) {
                char *end;
                long x = strtol(v, &end, 10);
                KW_FAIL_IF(end == v || *end || x < 1 || x > 1000000, KW_EINVAL,
                           "%s: '%s' is not a whole number >= 1", k, v);
                *(int *)((char *)p + int_keys[u].off) = (int)x;
                done = 1;
            }
        KW_FAIL_IF(!done, KW_EINVAL, "%s: unknown key", k);
    }
    return KW_OK;
}

/* ---- --tissue: the built-in table, or the caller's values from JSON ------ */
static void tissue_list(void)
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
}

/* Read --tissue FILE.json into v[KW_TISSUE_COUNT]; an exit code or -1. */
static int tissue_read(const char *path, kw_tissue_values *v)
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

typedef struct enc_args {
    const char *phantom, *matrix, *fov, *out, *truth, *sequence, *bandwidth;
    const char *sens, *sens_out, *pattern, *trajectory, *times, *noise_cov, *field_map, *protocol;
    const char *field_grad, *tissue;
    double snr, te, tr, ti, flip, b0, df, coil_radius, coil_distance, noise_corr;
    double slice_thk, slice_gap;
    long seed, coils, coil_order, coil_order_z, coil_rings, slices, slice_points;
    double coil_ring_gap;
    int s_snr, s_seed, s_ph, s_mx, s_fov, s_out, s_truth, s_seq, s_te, s_tr, s_ti, s_flip,
        s_b0, s_bw, s_df, s_coils, s_cr, s_cd, s_co, s_sens, s_sout, s_pat, s_traj, s_times,
        s_ncorr, s_ncov, s_fmap, s_sl, s_slt, s_slg, s_slp, s_prot, s_fgrad, s_coz, s_crings,
        s_crgap, s_tissue;
} enc_args;

int kw_cmd_encode(int argc, char **argv)
{
    enc_args a;
    memset(&a, 0, sizeof a);
    a.b0 = 3.0;
    a.coil_order = 4;
    a.slice_points = 8;
    const kw_opt table[] = {
        {"phantom", KW_OPT_STRING, &a.phantom, 0, &a.s_ph,
         "shepp-logan | shepp-logan-modified | weave | weave3d"},
        {"matrix", KW_OPT_STRING, &a.matrix, 0, &a.s_mx, "NX[xNY[xNZ]] samples (e.g. 256x256)"},
        {"fov", KW_OPT_STRING, &a.fov, 0, &a.s_fov, "field of view L[,LY[,LZ]] (e.g. 256mm)"},
        {"out", KW_OPT_STRING, &a.out, 0, &a.s_out, "k-space .npy (complex64); sidecar .json beside it"},
        {"truth", KW_OPT_STRING, &a.truth, 0, &a.s_truth,
         "the image at the echo, rasterised at the matrix (.npy float32)"},
        {"snr", KW_OPT_DOUBLE, &a.snr, 0, &a.s_snr,
         "mean object signal / noise standard deviation in the image (default: no noise)"},
        {"seed", KW_OPT_INT, &a.seed, 0, &a.s_seed, "noise seed (default 0)"},
        {"sequence", KW_OPT_STRING, &a.sequence, 0, &a.s_seq,
         "pd (default) | gre (spoiled gradient echo) | se (spin echo) | ir (inversion recovery)"},
        {"te", KW_OPT_UNIT, &a.te, KW_UNIT_TIME, &a.s_te, "echo time (k-space centre), e.g. 10ms"},
        {"tr", KW_OPT_UNIT, &a.tr, KW_UNIT_TIME, &a.s_tr, "repetition time"},
        {"ti", KW_OPT_UNIT, &a.ti, KW_UNIT_TIME, &a.s_ti, "inversion time (ir)"},
        {"flip", KW_OPT_UNIT, &a.flip, KW_UNIT_ANGLE, &a.s_flip, "flip angle (gre), degrees"},
        {"b0", KW_OPT_UNIT, &a.b0, KW_UNIT_FIELD, &a.s_b0, "field strength, 1.5T or 3T (default 3T)"},
        {"bandwidth", KW_OPT_STRING, &a.bandwidth, 0, &a.s_bw,
         "receiver bandwidth, 32kHz (across the FOV) or 250Hz/pixel: times the readout"},
        {"df", KW_OPT_UNIT, &a.df, KW_UNIT_FREQUENCY, &a.s_df,
         "off-resonance added everywhere (e.g. 50Hz)"},
        {"coils", KW_OPT_INT, &a.coils, 0, &a.s_coils, "ring of N circular loop coils"},
        {"coil-radius", KW_OPT_UNIT, &a.coil_radius, KW_UNIT_LENGTH, &a.s_cr,
         "loop radius (default FOV/4)"},
        {"coil-distance", KW_OPT_UNIT, &a.coil_distance, KW_UNIT_LENGTH, &a.s_cd,
         "loop centre to the axis (default 0.75 FOV)"},
        {"coil-order", KW_OPT_INT, &a.coil_order, 0, &a.s_co,
         "order L of the trigonometric series of each sensitivity (0..8, default 4; 3-D: 3)"},
        {"coil-order-z", KW_OPT_INT, &a.coil_order_z, 0, &a.s_coz,
         "3-D phantoms: the series' order along z (0..8, default 2)"},
        {"coil-rings", KW_OPT_INT, &a.coil_rings, 0, &a.s_crings,
         "1 (default) or 2 rings of --coils loops each (3-D: at z = -gap/2, +gap/2)"},
        {"coil-ring-gap", KW_OPT_UNIT, &a.coil_ring_gap, KW_UNIT_LENGTH, &a.s_crgap,
         "distance between the two rings' centres along z (default the z FOV / 2)"},
        {"sens", KW_OPT_STRING, &a.sens, 0, &a.s_sens, "sensitivity maps (coils, ny, nx) .npy"},
        {"sens-out", KW_OPT_STRING, &a.sens_out, 0, &a.s_sout,
         "write the sensitivities the data were made with (.npy complex64)"},
        {"pattern", KW_OPT_STRING, &a.pattern, 0, &a.s_pat,
         "Cartesian mask .npy (ny, nx) or (ny,): zero = not sampled"},
        {"trajectory", KW_OPT_STRING, &a.trajectory, 0, &a.s_traj,
         "non-Cartesian samples (samples, 2|3) in cycles/FOV"},
        {"times", KW_OPT_STRING, &a.times, 0, &a.s_times,
         "sample times after excitation (s): (samples,) for a trajectory; (nx,) or (ny, nx) Cartesian"},
        {"noise-corr", KW_OPT_DOUBLE, &a.noise_corr, 0, &a.s_ncorr,
         "noise correlation coefficient between every pair of coils"},
        {"noise-cov", KW_OPT_STRING, &a.noise_cov, 0, &a.s_ncov,
         "noise covariance (coils, coils) .npy (shape; --snr sets the level)"},
        {"field-map", KW_OPT_STRING, &a.field_map, 0, &a.s_fmap,
         "off-resonance map (ny, nx) in Hz (2-D; multi-slice: (slices, ny, nx) or one for all; time-segmented on a 4x grid)"},
        {"field-gradient", KW_OPT_STRING, &a.field_grad, 0, &a.s_fgrad,
         "linear field GX,GY[,GZ] along the array axes, zero at the FOV centre "
         "(e.g. 20uT/m,0): exact"},
        {"tissue", KW_OPT_STRING, &a.tissue, 0, &a.s_tissue,
         "FILE.json: tissue values {name: {pd, t1_s, t2_s, t2star_s}} instead of the table's "
         "(at any B0); list: print the table"},
        {"protocol", KW_OPT_STRING, &a.protocol, 0, &a.s_prot,
         "protocol file of `kweave plan` (options given here override its keys)"},
        {"slices", KW_OPT_INT, &a.slices, 0, &a.s_sl,
         "multi-slice 2-D of a 3-D phantom: N slices centred on z = 0"},
        {"slice-thickness", KW_OPT_UNIT, &a.slice_thk, KW_UNIT_LENGTH, &a.s_slt,
         "slice thickness (rectangular through-slice profile)"},
        {"slice-gap", KW_OPT_UNIT, &a.slice_gap, KW_UNIT_LENGTH, &a.s_slg, "gap between slices (default 0)"},
        {"slice-points", KW_OPT_INT, &a.slice_points, 0, &a.s_slp,
         "Gauss-Legendre points across each slice (1..32, default 8)"},
        {NULL, 0, NULL, 0, NULL, NULL}};
    int rc = kw_opts_parse(argc, argv, table, usage, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (a.s_tissue && strcmp(a.tissue, "list") == 0) {
        tissue_list();
        return KW_EXIT_OK;
    }
    static kw_tissue_values tvals_given[KW_TISSUE_COUNT];
    memset(tvals_given, 0, sizeof tvals_given);
    if (a.s_tissue && (rc = tissue_read(a.tissue, tvals_given)) >= 0)
        return rc;

    /* ---- protocol file: its keys fill the options not given here ---- */
    static proto_keys pk;
    memset(&pk, 0, sizeof pk);
    const char *prot_seq = NULL;
    if (a.s_prot) {
        kw_status pst = kw_protofile_read(a.protocol, proto_key, &pk);
        if (pst)
            return kw_cli_status(pst, "protocol");
        const char *v;
        char why[200];
        if ((v = proto_get(&pk, "sequence"))) {
            prot_seq = v;
            if (!a.s_seq) {
                if (strcmp(v, "gre") == 0 || strcmp(v, "epi") == 0 || strcmp(v, "radial") == 0 ||
                    strcmp(v, "spiral") == 0)
                    a.sequence = "gre";
                else if (strcmp(v, "se") == 0)
                    a.sequence = "se";
                else
                    return kw_cli_fail("protocol", "sequence: '%s' is not gre, se, epi, radial or spiral", v);
                a.s_seq = 1;
            }
        }
        if (!a.s_fov && (v = proto_get(&pk, "fov"))) {
            a.fov = v;
            a.s_fov = 1;
        }
        if (!a.s_mx && (v = proto_get(&pk, "matrix"))) {
            a.matrix = v;
            a.s_mx = 1;
        }
        if (!a.s_bw && (v = proto_get(&pk, "bandwidth"))) {
            a.bandwidth = v;
            a.s_bw = 1;
        }
        static const struct {
            const char *key;
            kw_unit_kind kind;
        } uk[] = {{"b0", KW_UNIT_FIELD}, {"te", KW_UNIT_TIME}, {"tr", KW_UNIT_TIME},
                  {"flip", KW_UNIT_ANGLE}, {"ti", KW_UNIT_TIME}};
        double *dst[] = {&a.b0, &a.te, &a.tr, &a.flip, &a.ti};
        int *seen[] = {&a.s_b0, &a.s_te, &a.s_tr, &a.s_flip, &a.s_ti};
        for (int i = 0; i < 5; i++)
            if (!*seen[i] && (v = proto_get(&pk, uk[i].key))) {
                if (kw_unit_parse(v, uk[i].kind, dst[i], why, sizeof why))
                    return kw_cli_fail("protocol", "%s: %s", uk[i].key, why);
                *seen[i] = 1;
            }
    }

    /* ---- phantom and grid ---- */
    if (!a.s_ph)
        return kw_cli_fail("phantom", "missing (see --help)");
    kw_phantom ph;
    if (kw_phantom_make(&ph, a.phantom))
        return kw_cli_status(KW_EINVAL, "");
    if (!a.s_mx)
        return kw_cli_fail("matrix", "missing (e.g. --matrix 256)");
    size_t n[3] = {1, 1, 1};
    int nm = parse_matrix(a.matrix, n);
    if (nm < 0)
        return kw_cli_fail("matrix", "'%s' is not NX[xNY[xNZ]] with whole numbers 1..%d",
                           a.matrix, MAX_EDGE);
    /* multi-slice: the 3-D phantom is imaged slice by slice on a 2-D grid */
    kw_phantom ph3;
    int nsl = 0;
    if (a.s_sl || a.s_slt || a.s_slg || a.s_slp) {
        if (!a.s_sl)
            return kw_cli_fail("slices", "missing (slice options need --slices N)");
        if (ph.ndim != 3)
            return kw_cli_fail("slices", "need a 3-D phantom (e.g. weave3d)");
        if (a.slices < 1 || a.slices > 256)
            return kw_cli_fail("slices", "must be 1..256");
        if (!a.s_slt || !(a.slice_thk > 0))
            return kw_cli_fail("slice-thickness", "missing or not positive");
        if (a.s_slg && !(a.slice_gap >= 0))
            return kw_cli_fail("slice-gap", "must be >= 0");
        if (a.slice_points < 1 || a.slice_points > 32)
            return kw_cli_fail("slice-points", "must be 1..32");
        if (nm == 3)
            return kw_cli_fail("matrix", "give NXxNY with --slices");
        nsl = (int)a.slices;
        ph3 = ph;
        kw_phantom_section(&ph3, 0.0, &ph);
    }
    if (nm == 1) {
        n[1] = n[0];
        if (ph.ndim == 3)
            n[2] = n[0];
    }
    if (ph.ndim == 3 && nm == 2)
        n[2] = n[0];
    if (ph.ndim == 2 && nm == 3 && n[2] != 1)
        return kw_cli_fail("matrix", "phantom '%s' is 2-D: give NXxNY", a.phantom);
    if (ph.ndim == 3 && n[2] < 2)
        return kw_cli_fail("matrix", "phantom '%s' is 3-D: NZ must be at least 2", a.phantom);
    if (n[0] * n[1] * n[2] > ((size_t)1 << 27))
        return kw_cli_fail("matrix", "%zux%zux%zu samples is too many", n[0], n[1], n[2]);
    if (!a.s_fov)
        return kw_cli_fail("fov", "missing (e.g. --fov 256mm)");
    double fov[3];
    char why[200];
    int nf = parse_fov(a.fov, fov, why, sizeof why);
    if (nf < 0)
        return kw_cli_fail("fov", "%s", why);
    for (int i = nf; i < 3; i++)
        fov[i] = fov[nf - 1];
    if (!a.s_out)
        return kw_cli_fail("out", "missing (e.g. --out ks.npy)");
    if (strcmp(a.out, "-") == 0)
        return kw_cli_fail("out", "k-space needs a file name (its sidecar goes beside it)");
    if (a.s_snr && !(a.snr > 0 && isfinite(a.snr)))
        return kw_cli_fail("snr", "must be a positive number");
    if (a.s_seed && a.seed < 0)
        return kw_cli_fail("seed", "must be >= 0");
    const int ndim = ph.ndim;
    if (ndim == 2)
        n[2] = 1;

    /* ---- sequence and timing ---- */
    kw_contrast con = {KW_CONTRAST_PD, a.b0, 0, 0, 0, 0};
    const char *seqname = "pd";
    if (a.s_seq) {
        if (strcmp(a.sequence, "pd") == 0)
            con.seq = KW_CONTRAST_PD;
        else if (strcmp(a.sequence, "gre") == 0)
            con.seq = KW_CONTRAST_GRE;
        else if (strcmp(a.sequence, "se") == 0)
            con.seq = KW_CONTRAST_SE;
        else if (strcmp(a.sequence, "ir") == 0)
            con.seq = KW_CONTRAST_IR;
        else
            return kw_cli_fail("sequence", "unknown sequence '%s' (pd, gre, se, ir)", a.sequence);
        seqname = a.sequence;
    }
    if (!(a.b0 > 0))
        return kw_cli_fail("b0", "must be positive");
    if (ph.tissue) {
        /* every tissue of the phantom: the table's values exist at 1.5 and
         * 3 T; the caller's (--tissue) at any field */
        for (int i = 0; i < ph.nshapes; i++) {
            kw_tissue_values tv;
            if (ph.shapes[i].tissue >= 0 &&
                kw_tissue_lookup(ph.shapes[i].tissue, a.b0, tvals_given, &tv) != KW_OK)
                return kw_cli_status(KW_EINVAL, "");
        }
    } else if (a.s_tissue) {
        return kw_cli_fail("tissue", "phantom '%s' carries no tissues (weave, weave3d do)",
                           a.phantom);
    }
    double bw = 0;
    int bw_pp = 0;
    if (a.s_bw) {
        if (kw_unit_parse_bandwidth(a.bandwidth, &bw, &bw_pp, why, sizeof why))
            return kw_cli_fail("bandwidth", "%s", why);
        if (!(bw > 0))
            return kw_cli_fail("bandwidth", "must be positive");
        if (bw_pp)
            bw *= (double)n[0];
    }
    double ro_dur = bw > 0 ? (double)n[0] / bw : 0; /* readout duration, dwell 1/BW */
    double te_min = bw > 0 ? (double)(n[0] / 2) / bw : 0; /* first sample at t >= 0 */
    /* A protocol file: `kweave plan`'s own numbers (minimum TE and TR, EPI
     * echo spacing) for the same protocol. */
    double plan_min_te = 0, plan_esp = 0, plan_dwell = 0;
    int plan_epi = 0, plan_shots = 1, plan_feasible = -1, plan_first_row = 0;
    double plan_pf = 1.0;
    if (a.s_prot) {
        kw_protocol pp;
        kw_protocol_defaults(&pp);
        kw_status pst = proto_fill(&pk, &pp);
        if (pst)
            return kw_cli_status(pst, "protocol");
        /* the file's sequence gives the timing; without one, spin-echo timing
         * for se/ir contrast and gradient-echo timing otherwise */
        const char *sq = prot_seq ? prot_seq
                                  : (con.seq == KW_CONTRAST_SE || con.seq == KW_CONTRAST_IR ? "se" : "gre");
        static const char *const kinds[] = {"gre", "se", "epi", "radial", "spiral"};
        for (int i = 0; i < 5; i++)
            if (strcmp(sq, kinds[i]) == 0)
                pp.sequence = (kw_sequence_kind)i;
        pp.ndim = ndim;
        for (int i = 0; i < 3; i++) {
            pp.fov_m[i] = fov[i];
            pp.matrix[i] = (int)n[i];
        }
        if (bw > 0)
            pp.bandwidth_hz = bw;
        pp.b0_t = a.b0;
        pp.te_s = a.s_te ? a.te : 0;
        pp.tr_s = a.s_tr ? a.tr : 0;
        kw_plan_report *rep = NULL;
        if ((pst = kw_plan_create(&rep, &pp)))
            return kw_cli_status(pst, "protocol");
        plan_min_te = rep->min_te_s;
        plan_feasible = rep->feasible;
        plan_epi = pp.sequence == KW_SEQ_EPI;
        plan_esp = rep->echo_spacing_s;
        plan_dwell = rep->dwell_s;
        plan_shots = pp.shots;
        if (plan_epi) {
            /* the train's rows: the last ETL x shots of ny (kw_epi_size) */
            plan_pf = pp.partial_fourier;
            plan_first_row = (int)n[1] - rep->echo_train_length * pp.shots;
            if (plan_first_row < 0)
                plan_first_row = 0;
        }
        if (!a.s_te) {
            a.te = rep->te_s;
            a.s_te = 1;
        }
        if (!a.s_tr) {
            a.tr = rep->tr_s;
            a.s_tr = 1;
        }
        if (bw <= 0) {
            bw = rep->basic.bandwidth_hz;
            ro_dur = (double)n[0] / bw;
            te_min = (double)(n[0] / 2) / bw;
        }
        kw_plan_destroy(rep);
        if (a.te < plan_min_te * (1 - 1e-9))
            return kw_cli_fail("te", "%.4g ms is shorter than the protocol allows (kweave plan's "
                               "minimum TE is %.4g ms)", a.te * 1e3, plan_min_te * 1e3);
        if (plan_epi)
            te_min = 0; /* the planner's minimum covers the echo train */
    }
    if (con.seq != KW_CONTRAST_PD) {
        if (!a.s_te)
            return kw_cli_fail("te", "missing for --sequence %s", seqname);
        if (!a.s_tr)
            return kw_cli_fail("tr", "missing for --sequence %s", seqname);
    }
    if (a.s_te) {
        if (!(a.te > 0))
            return kw_cli_fail("te", "must be positive");
        if (a.te < te_min)
            return kw_cli_fail("te", "%.4g ms is shorter than the protocol allows: the readout "
                               "(%.4g ms at this bandwidth) is centred on TE, so TE >= %.4g ms",
                               a.te * 1e3, ro_dur * 1e3, te_min * 1e3);
        con.te_s = a.te;
    } else {
        con.te_s = te_min;
    }
    if (a.s_tr) {
        if (!(a.tr > 0))
            return kw_cli_fail("tr", "must be positive");
        if (!(a.tr > con.te_s + 0.5 * ro_dur))
            return kw_cli_fail("tr", "must exceed TE plus the second half of the readout");
        con.tr_s = a.tr;
    }
    if (con.seq == KW_CONTRAST_IR) {
        if (!a.s_ti)
            return kw_cli_fail("ti", "missing for --sequence ir");
        if (!(a.ti > 0) || !(a.ti < con.tr_s))
            return kw_cli_fail("ti", "must be positive and shorter than TR");
        con.ti_s = a.ti;
    } else if (a.s_ti) {
        return kw_cli_fail("ti", "only for --sequence ir");
    }
    if (con.seq == KW_CONTRAST_GRE) {
        if (!a.s_flip)
            return kw_cli_fail("flip", "missing for --sequence gre");
        if (!(a.flip > 0) || a.flip > KW_PI)
            return kw_cli_fail("flip", "must lie in (0, 180] degrees");
        con.flip_rad = a.flip;
    } else if (a.s_flip) {
        return kw_cli_fail("flip", "only for --sequence gre");
    }
    if (a.s_df && !isfinite(a.df))
        return kw_cli_fail("df", "must be finite");
    /* a linear field (T/m) -> off-resonance in Hz per FOV: gamma-bar G FOV */
    double fgrad_t[3] = {0, 0, 0}, fgrad_hz[3] = {0, 0, 0};
    if (a.s_fgrad) {
        int k = kw_unit_parse_list(a.field_grad, KW_UNIT_GRADIENT, fgrad_t, 3, why, sizeof why);
        if (k < 0)
            return kw_cli_fail("field-gradient", "%s", why);
        if (k < ndim)
            return kw_cli_fail("field-gradient", "give %d components (GX,GY%s)", ndim,
                               ndim == 3 ? ",GZ" : "");
        if (k > ndim)
            return kw_cli_fail("field-gradient", "%d components for a %d-D phantom%s", k, ndim,
                               a.s_sl ? " (multi-slice: in-plane GX,GY only)" : "");
        for (int d = 0; d < ndim; d++) {
            if (fabs(fgrad_t[d]) > 0.1)
                return kw_cli_fail("field-gradient", "%g mT/m is not a field inhomogeneity "
                                   "(at most 100 mT/m)", fgrad_t[d] * 1e3);
            fgrad_hz[d] = KW_GAMMA_BAR_P * fgrad_t[d] * fov[d];
        }
    }

    /* ---- sampling ---- */
    if (a.s_pat && a.s_traj)
        return kw_cli_fail("pattern", "give --pattern (Cartesian) or --trajectory, not both");

    kw_phantom *php = &ph;
    kw_array mask = {0}, traj = {0}, times = {0}, sensin = {0}, ncovin = {0}, fmap = {0};
    kw_fieldmap *fmp = NULL;
    double fm_err = -1;
    int fm_seg = 0;
    kw_array ks = {0}, truth = {0}, cover = {0}, maps = {0}, covout = {0};
    uint8_t *mfull = NULL;
    double *tvals = NULL, *resid = NULL;
    double complex *coef = NULL, *cov = NULL, *chol = NULL;
    kw_sim *sim = NULL;
    cJSON *js = NULL;
    char *side = NULL, *covpath = NULL;
    int ret = KW_EXIT_INTERNAL;
    kw_status st;
    double sigma = 0, acceleration = -1;
    long acs = -1;
    size_t npix = n[0] * n[1] * n[2];

    if (a.s_pat) {
        if ((st = kw_npy_read(a.pattern, &mask))) {
            ret = kw_cli_status(st, "pattern");
            goto done;
        }
        if (mask.dtype == KW_C64) {
            ret = kw_cli_fail("pattern", "complex mask (expected uint8, bool or float32)");
            goto done;
        }
        int ok2 = ndim == 2 && ((mask.ndim == 2 && mask.dims[0] == n[1] && mask.dims[1] == n[0]) ||
                                (mask.ndim == 1 && mask.dims[0] == n[1]));
        int ok3 = ndim == 3 && mask.ndim == 3 && mask.dims[0] == n[2] && mask.dims[1] == n[1] &&
                  mask.dims[2] == n[0];
        if (!ok2 && !ok3) {
            ret = kw_cli_fail("pattern", "shape does not match the matrix: expected (%zu, %zu) or "
                              "(%zu,) for %zux%zu", n[1], n[0], n[1], n[0], n[1]);
            goto done;
        }
        if (mask.dtype == KW_F32 && (st = kw_array_all_finite(&mask))) {
            ret = kw_cli_status(st, "pattern");
            goto done;
        }
        mfull = malloc(npix);
        if (!mfull) {
            ret = kw_cli_fail("pattern", "out of memory");
            goto done;
        }
        size_t taken = 0;
        for (size_t i = 0; i < npix; i++) {
            size_t j = mask.ndim == 1 ? (i / n[0]) % n[1] : i;
            int on = mask.dtype == KW_U8 ? ((uint8_t *)mask.data)[j] != 0
                                         : ((float *)mask.data)[j] != 0.0f;
            mfull[i] = (uint8_t)on;
            taken += (size_t)on;
        }
        if (!taken) {
            ret = kw_cli_fail("pattern", "no sample is marked as sampled");
            goto done;
        }
        acceleration = (double)npix / (double)taken;
        if (ndim == 2) {
            /* the run of fully sampled phase-encode rows through ky = 0 */
            long c = (long)(n[1] / 2), lo = c, hi = c;
            for (;;) {
                int full = 1;
                if (lo < 0)
                    break;
                for (size_t x = 0; x < n[0]; x++)
                    full &= mfull[(size_t)lo * n[0] + x];
                if (!full)
                    break;
                lo--;
            }
            for (;;) {
                int full = 1;
                if (hi >= (long)n[1])
                    break;
                for (size_t x = 0; x < n[0]; x++)
                    full &= mfull[(size_t)hi * n[0] + x];
                if (!full)
                    break;
                hi++;
            }
            acs = hi - lo - 1 > 0 ? hi - lo - 1 : 0;
        }
    }
    size_t nsamples = 0;
    if (a.s_traj) {
        if ((st = kw_npy_read(a.trajectory, &traj))) {
            ret = kw_cli_status(st, "trajectory");
            goto done;
        }
        if (traj.dtype != KW_F32 || traj.ndim != 2 || (int)traj.dims[1] != ndim || !traj.dims[0]) {
            ret = kw_cli_fail("trajectory", "expected a real array (samples, %d) in cycles/FOV "
                              "for a %d-D phantom", ndim, ndim);
            goto done;
        }
        if ((st = kw_array_all_finite(&traj))) {
            ret = kw_cli_status(st, "trajectory");
            goto done;
        }
        nsamples = traj.dims[0];
    }
    int times_full = 0;
    if (a.s_times) {
        if ((st = kw_npy_read(a.times, &times))) {
            ret = kw_cli_status(st, "times");
            goto done;
        }
        size_t want = a.s_traj ? nsamples : n[0];
        int ok = times.dtype == KW_F32 && times.ndim == 1 && times.dims[0] == want;
        if (!a.s_traj && ndim == 2 && times.dtype == KW_F32 && times.ndim == 2 &&
            times.dims[0] == n[1] && times.dims[1] == n[0]) {
            ok = 1;
            times_full = 1;
            want = n[0] * n[1];
        }
        if (!ok) {
            if (a.s_traj)
                ret = kw_cli_fail("times", "expected a real array (%zu,) of seconds", nsamples);
            else
                ret = kw_cli_fail("times", "expected a real array (%zu,) or (%zu, %zu) of seconds",
                                  n[0], n[1], n[0]);
            goto done;
        }
        if ((st = kw_array_all_finite(&times))) {
            ret = kw_cli_status(st, "times");
            goto done;
        }
        tvals = malloc(want * sizeof *tvals);
        if (!tvals) {
            ret = kw_cli_fail("times", "out of memory");
            goto done;
        }
        for (size_t i = 0; i < want; i++) {
            tvals[i] = ((float *)times.data)[i];
            if (tvals[i] < 0) {
                ret = kw_cli_fail("times", "sample %zu is before the excitation (%g s)", i, tvals[i]);
                goto done;
            }
        }
        if (a.s_bw && !a.s_traj) {
            ret = kw_cli_fail("times", "give --times or --bandwidth for a Cartesian readout, not both");
            goto done;
        }
    }
    if (a.s_fmap) {
        if (a.s_fgrad) {
            ret = kw_cli_fail("field-map", "give --field-map or --field-gradient, not both "
                              "(add the linear field to the map)");
            goto done;
        }
        if (ndim != 2) {
            ret = kw_cli_fail("field-map", "only for 2-D phantoms");
            goto done;
        }
        if ((st = kw_npy_read(a.field_map, &fmap))) {
            ret = kw_cli_status(st, "field-map");
            goto done;
        }
        int okf = fmap.dtype == KW_F32 &&
                  ((fmap.ndim == 2 && fmap.dims[0] == n[1] && fmap.dims[1] == n[0]) ||
                   (nsl && fmap.ndim == 3 && fmap.dims[0] == (size_t)nsl && fmap.dims[1] == n[1] &&
                    fmap.dims[2] == n[0]));
        if (!okf) {
            if (nsl)
                ret = kw_cli_fail("field-map", "expected a real array (%zu, %zu) or (%d, %zu, %zu) "
                                  "in Hz", n[1], n[0], nsl, n[1], n[0]);
            else
                ret = kw_cli_fail("field-map", "expected a real array (%zu, %zu) in Hz", n[1], n[0]);
            goto done;
        }
        if ((st = kw_array_all_finite(&fmap))) {
            ret = kw_cli_status(st, "field-map");
            goto done;
        }
    }

    if (nsl && a.s_traj) {
        ret = kw_cli_fail("slices", "not with --trajectory");
        goto done;
    }

    if (plan_epi > 0 && !a.s_times && !a.s_traj) {
        if (ndim != 2) {
            ret = kw_cli_fail("protocol", "EPI timing is simulated for 2-D phantoms only");
            goto done;
        }
        if (plan_first_row > 0 && a.s_pat) {
            ret = kw_cli_fail("pattern", "the protocol's partial-Fourier EPI train sets the "
                              "sampled rows; give no --pattern");
            goto done;
        }
        /* EPI train (kweave plan's echo spacing and dwell, kw_epi_design's
         * order): the rows first_row .. ny-1 (partial Fourier leaves out the
         * first, negative-ky rows: stored as zeros), row r on line
         * m = (r - first_row) / shots of its shot, read forwards along x
         * when m is even and backwards when odd; times TE + (r - ny/2)
         * esp / shots (the ky = 0 row's centre at TE, the effective TE;
         * several shots interleaved with their echo times shifted, as the
         * distortion_pixels_per_hz of the planner assumes). */
        tvals = malloc(n[0] * n[1] * sizeof *tvals);
        if (!tvals) {
            ret = kw_cli_fail("protocol", "out of memory");
            goto done;
        }
        for (size_t r = 0; r < n[1]; r++) {
            long e = (long)r - (long)(n[1] / 2);
            long m = ((long)r - plan_first_row) / plan_shots;
            double sgn = (r < (size_t)plan_first_row || m % 2 == 0) ? 1.0 : -1.0;
            for (size_t c = 0; c < n[0]; c++)
                tvals[r * n[0] + c] = a.te + (double)e * plan_esp / plan_shots +
                                      sgn * ((double)c - (double)(n[0] / 2)) * plan_dwell;
        }
        times_full = 1;
        if (plan_first_row > 0) {
            mfull = malloc(npix);
            if (!mfull) {
                ret = kw_cli_fail("protocol", "out of memory");
                goto done;
            }
            for (size_t i = 0; i < npix; i++)
                mfull[i] = (uint8_t)(i / n[0] >= (size_t)plan_first_row);
            acceleration = (double)n[1] / (double)(n[1] - (size_t)plan_first_row);
        }
    }

    /* ---- the working set, against --max-memory, before the large arrays:
     * k-space, truth, support, maps (per slice when sliced), trajectory
     * buffers, and the field-map grid (4x4 finer: class images bounded by
     * the shape count, sensitivity, phase and FFT buffers, class factors) */
    {
        double chan = a.s_coils ? (double)a.coils * (a.coil_rings == 2 ? 2 : 1) : 1;
        if (a.s_sens && strcmp(a.sens, "-") != 0) {
            /* the maps' header says the channel count (errors: below) */
            kw_npyr r;
            if (kw_npyr_open(&r, a.sens) == KW_OK) {
                if (r.ndim == ndim + 1)
                    chan = (double)r.dims[0];
                kw_npyr_close(&r);
            }
        }
        double vox = (double)npix * (nsl ? nsl : 1);
        double count = a.s_traj ? (double)nsamples : vox;
        double need = chan * count * 8 + vox * 8 +
                      ((a.s_coils || a.s_sens) ? chan * vox * 8 : 0) +
                      (a.s_traj ? (double)nsamples * 24 : 0);
        if (a.s_fmap) {
            double m = 16.0 * (double)n[0] * (double)n[1];
            need += m * (4.0 * ph.nshapes + 4 + 4 + 8 * 3) + (double)ph.nshapes * count * 8;
        }
        if (need > (double)kw_cli_memory_limit()) {
            ret = kw_cli_fail("shape", "this simulation needs about %.0f MiB, above the limit of "
                              "%.0f MiB (--max-memory)", need / 1048576.0,
                              (double)kw_cli_memory_limit() / 1048576.0);
            goto done;
        }
    }

    /* ---- coils ---- */
    int ncoils = 0, per_slice = 0;
    const double complex *coef_sl = NULL;
    if (a.s_coils && a.s_sens) {
        ret = kw_cli_fail("coils", "give --coils (a ring of loops) or --sens (maps), not both");
        goto done;
    }
    if (a.s_coils && (a.coils < 1 || a.coils > 128)) {
        ret = kw_cli_fail("coils", "must be 1..128 (got %ld)", a.coils);
        goto done;
    }
    if ((a.s_cr || a.s_cd) && !a.s_coils) {
        ret = kw_cli_fail(a.s_cr ? "coil-radius" : "coil-distance", "only with --coils");
        goto done;
    }
    if (a.s_co && (a.coil_order < 0 || a.coil_order > 8)) {
        ret = kw_cli_fail("coil-order", "must be 0..8");
        goto done;
    }
    if (a.s_sout && !a.s_coils && !a.s_sens) {
        ret = kw_cli_fail("sens-out", "needs --coils or --sens");
        goto done;
    }
    if ((a.s_coz || a.s_crings || a.s_crgap) && !a.s_coils && !a.s_sens) {
        ret = kw_cli_fail(a.s_coz ? "coil-order-z" : a.s_crings ? "coil-rings" : "coil-ring-gap",
                          "only with --coils or --sens");
        goto done;
    }
    if ((a.s_crings || a.s_crgap) && !a.s_coils) {
        ret = kw_cli_fail(a.s_crings ? "coil-rings" : "coil-ring-gap", "only with --coils");
        goto done;
    }
    if (a.s_coz && ndim != 3) {
        ret = kw_cli_fail("coil-order-z", nsl ? "not with --slices (each slice has its own 2-D "
                                                "series)"
                                              : "only for 3-D phantoms");
        goto done;
    }
    if (a.s_coz && (a.coil_order_z < 0 || a.coil_order_z > 8)) {
        ret = kw_cli_fail("coil-order-z", "must be 0..8");
        goto done;
    }
    if (a.s_crings && a.coil_rings != 1 && a.coil_rings != 2) {
        ret = kw_cli_fail("coil-rings", "must be 1 or 2");
        goto done;
    }
    if (a.s_crgap && (a.coil_rings != 2 || !(a.coil_ring_gap > 0) || !isfinite(a.coil_ring_gap))) {
        ret = kw_cli_fail("coil-ring-gap", "a positive length, with --coil-rings 2");
        goto done;
    }
    if (a.coil_rings == 2 && a.coils * 2 > 128) {
        ret = kw_cli_fail("coils", "2 rings of %ld loops: at most 128 channels", a.coils);
        goto done;
    }
    if (ndim == 3) {
        if (!a.s_co)
            a.coil_order = 3;
        if (!a.s_coz)
            a.coil_order_z = 2;
        if ((2 * a.coil_order_z + 1) * (2 * a.coil_order + 1) * (2 * a.coil_order + 1) > 1024) {
            ret = kw_cli_fail("coil-order", "3-D series of orders %ld, %ld: more than 1024 "
                              "terms per coil", a.coil_order, a.coil_order_z);
            goto done;
        }
    }
    /* object support (pixels any shape covers) for fits and the SNR */
    {
        size_t cd[3] = {n[2], n[1], n[0]};
        if ((st = kw_array_alloc(&cover, KW_F32, ndim, cd + (ndim == 3 ? 0 : 1)))) {
            ret = kw_cli_status(st, "encode");
            goto done;
        }
    }
    if (a.s_coils || a.s_sens) {
        /* maps (coils, [nz,] ny, nx); multi-slice with a ring of loops: each
         * slice's own maps, the loops' field in the plane of its centre,
         * (coils, slices, ny, nx) */
        per_slice = nsl > 0 && a.s_coils;
        const int mnd = ndim == 3 || per_slice ? 4 : 3;
        size_t md[4] = {0, ndim == 3 ? n[2] : (size_t)nsl, n[1], n[0]};
        if (mnd == 3)
            md[1] = n[1], md[2] = n[0];
        const size_t nvox = n[0] * n[1] * (ndim == 3 ? n[2] : 1);
        const size_t mvox = nvox * (per_slice ? (size_t)nsl : 1); /* one coil's maps */
        double ones[KW_PHANTOM_MAX_SHAPES];
        for (int i = 0; i < ph.nshapes; i++)
            ones[i] = 1.0;
        kw_phantom_rasterize(&ph, n, ones, 2, cover.data);
        if (a.s_coils) {
            kw_coil_ring ring = {(int)a.coils, a.s_cr ? a.coil_radius : 0.25 * fov[0],
                                 a.s_cd ? a.coil_distance : 0.75 * (fov[0] > fov[1] ? fov[0] : fov[1]),
                                 {fov[0], fov[1]},
                                 a.s_crings ? (int)a.coil_rings : 1,
                                 a.coil_rings == 2 ? (a.s_crgap ? a.coil_ring_gap : 0.5 * fov[2]) : 0.0,
                                 fov[2]};
            ncoils = kw_coil_ring_channels(&ring);
            md[0] = (size_t)ncoils;
            if ((st = kw_array_alloc(&maps, KW_C64, mnd, md))) {
                ret = kw_cli_status(st, "coils");
                goto done;
            }
            if (ndim == 3) {
                st = kw_coil_ring_maps3(&ring, n[0], n[1], n[2], maps.data);
            } else if (per_slice) {
                /* slice-major scratch, reordered to (coils, slices, ny, nx) */
                size_t pl = n[0] * n[1];
                float complex *tmpm = malloc((size_t)ncoils * pl * sizeof *tmpm);
                st = tmpm ? KW_OK : kw_set_error(KW_ENOMEM, "coils: out of memory");
                for (int sl = 0; !st && sl < nsl; sl++) {
                    double zc = slice_centre(sl, nsl, a.slice_thk, a.s_slg ? a.slice_gap : 0.0);
                    st = kw_coil_ring_maps_at(&ring, n[0], n[1], zc / (0.5 * fov[2]), tmpm);
                    for (int c = 0; !st && c < ncoils; c++)
                        memcpy((float complex *)maps.data + ((size_t)c * nsl + sl) * pl,
                               tmpm + (size_t)c * pl, pl * sizeof *tmpm);
                }
                free(tmpm);
            } else {
                st = kw_coil_ring_maps(&ring, n[0], n[1], maps.data);
            }
            if (st) {
                ret = kw_cli_status(st, "coils");
                goto done;
            }
        } else {
            if ((st = kw_npy_read(a.sens, &sensin))) {
                ret = kw_cli_status(st, "sens");
                goto done;
            }
            if (sensin.dtype != KW_C64 && sensin.dtype != KW_F32) {
                ret = kw_cli_fail("sens", "expected complex64 or real maps");
                goto done;
            }
            int ok;
            if (ndim == 3)
                ok = (sensin.ndim == 4 && sensin.dims[1] == n[2] && sensin.dims[2] == n[1] &&
                      sensin.dims[3] == n[0] && sensin.dims[0] >= 1 && sensin.dims[0] <= 128) ||
                     (sensin.ndim == 3 && sensin.dims[0] == n[2] && sensin.dims[1] == n[1] &&
                      sensin.dims[2] == n[0]);
            else
                ok = (sensin.ndim == 3 && sensin.dims[1] == n[1] && sensin.dims[2] == n[0] &&
                      sensin.dims[0] >= 1 && sensin.dims[0] <= 128) ||
                     (sensin.ndim == 2 && sensin.dims[0] == n[1] && sensin.dims[1] == n[0]);
            if (!ok) {
                if (ndim == 3)
                    ret = kw_cli_fail("sens", "shape does not match: expected (coils, %zu, %zu, %zu)",
                                      n[2], n[1], n[0]);
                else
                    ret = kw_cli_fail("sens", "shape does not match: expected (coils, %zu, %zu)",
                                      n[1], n[0]);
                goto done;
            }
            if ((st = kw_array_all_finite(&sensin))) {
                ret = kw_cli_status(st, "sens");
                goto done;
            }
            ncoils = sensin.ndim == mnd ? (int)sensin.dims[0] : 1;
            md[0] = (size_t)ncoils;
            if ((st = kw_array_alloc(&maps, KW_C64, mnd, md))) {
                ret = kw_cli_status(st, "sens");
                goto done;
            }
            size_t cnt = (size_t)ncoils * nvox;
            for (size_t i = 0; i < cnt; i++)
                ((float complex *)maps.data)[i] =
                    sensin.dtype == KW_C64 ? ((float complex *)sensin.data)[i]
                                           : (float complex)((float *)sensin.data)[i];
        }
        int L = (int)a.coil_order, sd = 2 * L + 1;
        int Lz = ndim == 3 ? (int)a.coil_order_z : 0, sidez = 2 * Lz + 1;
        int nterm = sd * sd * sidez;
        int nfit = per_slice ? nsl : 1;
        coef = malloc((size_t)nfit * ncoils * nterm * sizeof *coef);
        resid = malloc((size_t)ncoils * sizeof *resid);
        double *rs = malloc((size_t)ncoils * sizeof *rs);
        float complex *plane = per_slice ? malloc((size_t)ncoils * n[0] * n[1] * sizeof *plane) : NULL;
        if (!coef || !resid || !rs || (per_slice && !plane)) {
            free(rs);
            free(plane);
            ret = kw_cli_fail("coils", "out of memory");
            goto done;
        }
        if (ndim == 3) {
            st = kw_coil_fit3(maps.data, ncoils, n[0], n[1], n[2], cover.data, L, Lz, COIL_PERIOD,
                              coef, resid);
        } else if (per_slice) {
            /* each slice's maps over its own cut of the object; the residual
             * reported per coil is the worst over the slices */
            size_t pl = n[0] * n[1];
            for (int c = 0; c < ncoils; c++)
                resid[c] = 0;
            for (int sl = 0; !st && sl < nsl; sl++) {
                double zc = slice_centre(sl, nsl, a.slice_thk, a.s_slg ? a.slice_gap : 0.0);
                kw_phantom cut;
                st = kw_phantom_section(&ph3, zc / (0.5 * fov[2]), &cut);
                if (!st)
                    st = kw_phantom_rasterize(&cut, n, ones, 2, cover.data);
                for (int c = 0; !st && c < ncoils; c++)
                    memcpy(plane + (size_t)c * pl,
                           (float complex *)maps.data + ((size_t)c * nsl + sl) * pl,
                           pl * sizeof *plane);
                if (!st)
                    st = kw_coil_fit(plane, ncoils, n[0], n[1], cover.data, L, COIL_PERIOD,
                                     coef + (size_t)sl * ncoils * nterm, rs);
                for (int c = 0; !st && c < ncoils; c++)
                    resid[c] = rs[c] > resid[c] ? rs[c] : resid[c];
            }
            /* the object support for the SNR: the centre slice's cut */
            if (!st)
                st = kw_phantom_rasterize(&ph, n, ones, 2, cover.data);
            coef_sl = coef;
        } else {
            st = kw_coil_fit(maps.data, ncoils, n[0], n[1], cover.data, L, COIL_PERIOD, coef,
                             resid);
        }
        free(rs);
        free(plane);
        if (st) {
            ret = kw_cli_status(st, a.s_coils ? "coils" : "sens");
            goto done;
        }
        /* The data are exact for the fitted series: write those maps. */
        size_t planes = ndim == 3 ? n[2] : per_slice ? (size_t)nsl : 1;
        for (int c = 0; c < ncoils && !st; c++)
            for (size_t k = 0; k < (per_slice ? planes : 1) && !st; k++)
                st = kw_coil_series_grid(coef + ((per_slice ? k * (size_t)ncoils : 0) + (size_t)c) * nterm,
                                         L, Lz, COIL_PERIOD, n[0], n[1], per_slice ? 1 : planes,
                                         (float complex *)maps.data + (size_t)c * mvox +
                                             (per_slice ? k * n[0] * n[1] : 0));
        if (st) {
            ret = kw_cli_status(st, "coils");
            goto done;
        }
    }

    /* ---- noise covariance ---- */
    int nch = ncoils > 0 ? ncoils : 1;
    if ((a.s_ncorr || a.s_ncov) && !a.s_snr && !a.s_ncov) {
        ret = kw_cli_fail("noise-corr", "needs --snr (the noise level)");
        goto done;
    }
    if (a.s_ncorr && a.s_ncov) {
        ret = kw_cli_fail("noise-corr", "give --noise-corr or --noise-cov, not both");
        goto done;
    }
    cov = calloc((size_t)nch * nch, sizeof *cov);
    chol = calloc((size_t)nch * nch, sizeof *chol);
    if (!cov || !chol) {
        ret = kw_cli_fail("noise", "out of memory");
        goto done;
    }
    for (int i = 0; i < nch; i++)
        cov[i * nch + i] = 1.0;
    if (a.s_ncorr) {
        if (!isfinite(a.noise_corr) || !(a.noise_corr > -1.0 / (nch > 1 ? nch - 1 : 1)) ||
            !(a.noise_corr < 1)) {
            ret = kw_cli_fail("noise-corr", "must lie in (-1/(coils-1), 1) for %d coils", nch);
            goto done;
        }
        for (int i = 0; i < nch; i++)
            for (int j = 0; j < nch; j++)
                if (i != j)
                    cov[i * nch + j] = a.noise_corr;
    }
    if (a.s_ncov) {
        if ((st = kw_npy_read(a.noise_cov, &ncovin))) {
            ret = kw_cli_status(st, "noise-cov");
            goto done;
        }
        if (ncovin.ndim != 2 || ncovin.dims[0] != (size_t)nch || ncovin.dims[1] != (size_t)nch ||
            ncovin.dtype == KW_U8) {
            ret = kw_cli_fail("noise-cov", "expected a (%d, %d) complex or real matrix", nch, nch);
            goto done;
        }
        if ((st = kw_array_all_finite(&ncovin))) {
            ret = kw_cli_status(st, "noise-cov");
            goto done;
        }
        for (int i = 0; i < nch * nch; i++)
            cov[i] = ncovin.dtype == KW_C64 ? ((float complex *)ncovin.data)[i]
                                            : ((float *)ncovin.data)[i];
        for (int i = 0; i < nch; i++)
            for (int j = 0; j < nch; j++)
                if (cabs(cov[i * nch + j] - conj(cov[j * nch + i])) >
                    1e-5 * (cabs(cov[i * nch + i]) + cabs(cov[j * nch + j]))) {
                    ret = kw_cli_fail("noise-cov", "not Hermitian (entry %d,%d)", i, j);
                    goto done;
                }
    }

    /* ---- simulate ---- */
    kw_sim_options so;
    memset(&so, 0, sizeof so);
    so.phantom = php;
    so.n[0] = n[0];
    so.n[1] = n[1];
    so.n[2] = n[2];
    so.contrast = con;
    so.tissue_values = tvals_given;
    so.bandwidth_hz = bw;
    so.df_hz = a.s_df ? a.df : 0.0;
    for (int d = 0; d < 3; d++)
        so.df_grad_hz[d] = fgrad_hz[d];
    so.seed = (uint64_t)a.seed;
    so.mask = mfull;
    if (a.s_traj) {
        so.traj = traj.data;
        so.nsamples = nsamples;
        so.traj_ndim = ndim;
    }
    so.times = tvals;
    so.times_per_sample = times_full;
    so.ncoils = ncoils;
    so.coil_order = (int)a.coil_order;
    so.coil_order_z = ndim == 3 ? (int)a.coil_order_z : 0;
    so.coil_period = COIL_PERIOD;
    so.coil_coef = coef;

    size_t tdims[3] = {n[2], n[1], n[0]};
    int toff = ndim == 3 ? 0 : 1;
    if (nsl) {
        tdims[0] = (size_t)nsl;
        toff = 0;
        npix = (size_t)nsl * n[0] * n[1];
    }
    if ((st = kw_array_alloc(&truth, KW_F32, 3 - toff, tdims + toff))) {
        ret = kw_cli_status(st, "truth");
        goto done;
    }
    if ((st = kw_sim_create(&sim, &so))) {
        ret = kw_cli_status(st, ""); /* its message names the field */
        goto done;
    }
    double w[KW_PHANTOM_MAX_SHAPES];
    if (nsl) {
        if ((st = slices_run(&ph3, &so, nsl, fov[2], a.slice_thk, a.s_slg ? a.slice_gap : 0.0,
                             (int)a.slice_points, truth.data, NULL, NULL, 0, coef_sl, NULL))) {
            ret = kw_cli_status(st, "slices");
            goto done;
        }
    } else {
        kw_sim_image_weights(sim, w);
        if ((st = kw_phantom_rasterize(&ph, n, w, ndim == 3 ? 4 : 8, truth.data))) {
            ret = kw_cli_status(st, "truth");
            goto done;
        }
    }
    if (a.s_snr || a.s_ncov) {
        double scale = 1.0;
        if (a.s_snr) {
            double m = object_mean(truth.data, npix);
            if (!(m > 0)) {
                ret = kw_cli_fail("snr", "the phantom has no signal with this contrast");
                goto done;
            }
            sigma = m / a.snr;
            /* the covariance keeps its shape; its mean diagonal becomes sigma^2 */
            double md = 0;
            for (int i = 0; i < nch; i++)
                md += creal(cov[i * nch + i]);
            md /= nch;
            if (!(md > 0)) {
                ret = kw_cli_fail(a.s_ncov ? "noise-cov" : "snr", "zero noise variance");
                goto done;
            }
            scale = sigma * sigma / md;
        } else {
            double md = 0;
            for (int i = 0; i < nch; i++)
                md += creal(cov[i * nch + i]);
            sigma = sqrt(md / nch);
        }
        for (int i = 0; i < nch * nch; i++)
            cov[i] *= scale;
        if (chol_c(cov, nch, chol)) {
            ret = kw_cli_fail(a.s_ncov ? "noise-cov" : "noise-corr", "not positive definite");
            goto done;
        }
    }
    slice_fieldmap sfm = {a.s_fmap ? (const float *)fmap.data : NULL,
                          a.s_fmap && fmap.ndim == 3 ? n[0] * n[1] : 0, 0.0, 0};
    if (a.s_fmap && !nsl) {
        kw_fieldmap_options fo = {sim, fmap.data, 4, 0, 0, NULL, NULL};
        if ((st = kw_fieldmap_create(&fmp, &fo))) {
            ret = kw_cli_status(st, "field-map");
            goto done;
        }
        fm_err = kw_fieldmap_interp_error(fmp);
        fm_seg = kw_fieldmap_segments(fmp);
    }

    size_t kdims[4];
    int kn = 0;
    if (a.s_traj) {
        kdims[kn++] = (size_t)nch;
        kdims[kn++] = nsamples;
    } else {
        if (ncoils > 0)
            kdims[kn++] = (size_t)ncoils;
        if (ndim == 3)
            kdims[kn++] = n[2];
        if (nsl)
            kdims[kn++] = (size_t)nsl;
        kdims[kn++] = n[1];
        kdims[kn++] = n[0];
    }
    if ((st = kw_array_alloc(&ks, KW_C64, kn, kdims))) {
        ret = kw_cli_status(st, "out");
        goto done;
    }
    if (nsl)
        st = slices_run(&ph3, &so, nsl, fov[2], a.slice_thk, a.s_slg ? a.slice_gap : 0.0,
                        (int)a.slice_points, NULL, ks.data,
                        (a.s_snr || a.s_ncov) ? chol : NULL, (uint64_t)a.seed, coef_sl,
                        a.s_fmap ? &sfm : NULL);
    else
        st = kw_sim_execute(sim, ks.data, kw_cli_progress, NULL);
    if (!st && fmp)
        st = kw_fieldmap_execute(fmp, ks.data, kw_cli_progress, NULL);
    if (!st && nsl && a.s_fmap) {
        fm_err = sfm.err;
        fm_seg = sfm.seg;
    }
    if (!st && !nsl && (a.s_snr || a.s_ncov))
        st = kw_sim_add_noise(sim, chol, (uint64_t)a.seed, ks.data);
    kw_cli_progress_done();
    if (st) {
        ret = kw_cli_status(st, "encode");
        goto done;
    }

    /* ---- sidecar (keys agreed in BRIEF.md) ---- */
    js = cJSON_CreateObject();
    cJSON_AddStringToObject(js, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(js, "kind", "kspace");
    cJSON_AddStringToObject(js, "layout", a.s_traj ? "noncartesian" : "cartesian");
    double shp[4], mat[3], fv[3];
    for (int i = 0; i < ks.ndim; i++)
        shp[i] = (double)ks.dims[i];
    kw_json_add_vec(js, "shape", shp, ks.ndim);
    for (int i = 0; i < ndim; i++) {
        mat[i] = (double)n[i];
        fv[i] = fov[i];
    }
    kw_json_add_vec(js, "matrix", mat, ndim);
    kw_json_add_vec(js, "fov_m", fv, ndim);
    cJSON_AddStringToObject(js, "phantom", nsl ? ph3.name : ph.name);
    if (ph.tissue) {
        /* the tissue values the data were made with, and where they came from */
        cJSON *tj = cJSON_AddObjectToObject(js, "tissues");
        for (int i = 0; i < ph.nshapes; i++) {
            int id = ph.shapes[i].tissue;
            kw_tissue_values tv;
            const kw_tissue *tt = kw_tissue_get(id);
            if (id < 0 || cJSON_GetObjectItemCaseSensitive(tj, tt->name) ||
                kw_tissue_lookup(id, a.b0, tvals_given, &tv) != KW_OK)
                continue;
            cJSON *e = cJSON_AddObjectToObject(tj, tt->name);
            cJSON_AddStringToObject(e, "species", tt->species == KW_SPECIES_FAT ? "fat" : "water");
            cJSON_AddNumberToObject(e, "pd", tv.pd);
            cJSON_AddNumberToObject(e, "t1_s", tv.t1_s);
            cJSON_AddNumberToObject(e, "t2_s", tv.t2_s);
            cJSON_AddNumberToObject(e, "t2star_s", tv.t2s_s);
            const kw_tissue_values *g = &tvals_given[id];
            cJSON_AddStringToObject(e, "source",
                                    g->pd > 0 || g->t1_s > 0 ? "--tissue" : "kweave table");
        }
        if (a.s_tissue) {
            char *rp = rel_to_sidecar(a.tissue, a.out);
            cJSON_AddStringToObject(js, "tissue_file", rp ? rp : a.tissue);
            free(rp);
        }
    }
    if (nsl) {
        cJSON *so_ = cJSON_AddObjectToObject(js, "slices");
        cJSON_AddNumberToObject(so_, "count", nsl);
        cJSON_AddNumberToObject(so_, "thickness_m", a.slice_thk);
        cJSON_AddNumberToObject(so_, "gap_m", a.s_slg ? a.slice_gap : 0.0);
        double zc[256];
        for (int i = 0; i < nsl; i++)
            zc[i] = slice_centre(i, nsl, a.slice_thk, a.s_slg ? a.slice_gap : 0.0);
        kw_json_add_vec(so_, "centres_m", zc, nsl);
        cJSON_AddStringToObject(so_, "profile", "rectangular");
        cJSON_AddNumberToObject(so_, "gauss_legendre_points", (double)a.slice_points);
        cJSON_AddStringToObject(so_, "coil_maps",
                                per_slice ? "per slice: the loops' field in the plane of its centre"
                                          : "the same 2-D maps in every slice");
    }
    cJSON_AddNumberToObject(js, "coils", nch);
    if (a.s_snr)
        cJSON_AddNumberToObject(js, "snr", a.snr);
    else
        cJSON_AddNullToObject(js, "snr");
    cJSON_AddNumberToObject(js, "noise_sigma", sigma);
    cJSON_AddNumberToObject(js, "seed", (double)a.seed);
    cJSON_AddStringToObject(js, "scale", "unitary");
    side = kw_sidecar_path(a.out);
    if (!side) {
        ret = kw_cli_fail("out", "cannot form the sidecar name");
        goto done;
    }
#define ADD_FILE(key, cond, path)                                                  \
    do {                                                                           \
        if (cond) {                                                                \
            char *rp_ = rel_to_sidecar(path, a.out);                               \
            cJSON_AddStringToObject(js, key, rp_ ? rp_ : path);                    \
            free(rp_);                                                             \
        } else {                                                                   \
            cJSON_AddNullToObject(js, key);                                        \
        }                                                                          \
    } while (0)
    ADD_FILE("trajectory", a.s_traj, a.trajectory);
    ADD_FILE("sens", a.s_sout || a.s_sens, a.s_sout ? a.sens_out : a.sens);
    /* the coil noise covariance, for prewhitening, is written for multi-coil
     * data (a coil axis); one channel has just noise_sigma */
    int write_cov = (a.s_snr || a.s_ncov) && ncoils > 0;
    if (write_cov) {
        covpath = derived_path(a.out, "noise_cov.npy");
        if (!covpath) {
            ret = kw_cli_fail("out", "out of memory");
            goto done;
        }
        char *slash = strrchr(covpath, '/');
        cJSON_AddStringToObject(js, "noise_cov", slash ? slash + 1 : covpath);
    } else {
        cJSON_AddNullToObject(js, "noise_cov");
    }
    ADD_FILE("pattern", a.s_pat, a.pattern);
    if (acceleration > 0)
        cJSON_AddNumberToObject(js, "acceleration", acceleration);
    else
        cJSON_AddNullToObject(js, "acceleration");
    if (acs >= 0)
        cJSON_AddNumberToObject(js, "acs_lines", (double)acs);
    else
        cJSON_AddNullToObject(js, "acs_lines");
    ADD_FILE("times", a.s_times, a.times);
    cJSON *prot = cJSON_AddObjectToObject(js, "protocol");
    cJSON_AddStringToObject(prot, "sequence", seqname);
    cJSON_AddNumberToObject(prot, "b0_t", con.b0_t);
    cJSON_AddNumberToObject(prot, "te_s", con.te_s);
    if (a.s_tr)
        cJSON_AddNumberToObject(prot, "tr_s", con.tr_s);
    if (con.seq == KW_CONTRAST_IR)
        cJSON_AddNumberToObject(prot, "ti_s", con.ti_s);
    if (con.seq == KW_CONTRAST_GRE)
        cJSON_AddNumberToObject(prot, "flip_deg", con.flip_rad * 180.0 / KW_PI);
    double fat_hz = KW_FAT_SHIFT_PPM * 1e-6 * KW_GAMMA_BAR_P * con.b0_t;
    cJSON_AddNumberToObject(prot, "fat_shift_hz", fat_hz);
    if (bw > 0) {
        cJSON_AddNumberToObject(prot, "bandwidth_hz", bw);
        cJSON_AddNumberToObject(prot, "bandwidth_per_pixel_hz", bw / (double)n[0]);
        cJSON_AddNumberToObject(prot, "dwell_s", 1.0 / bw);
        cJSON_AddNumberToObject(prot, "readout_duration_s", ro_dur);
        cJSON_AddNumberToObject(prot, "fat_shift_pixels", fat_hz / (bw / (double)n[0]));
        cJSON_AddStringToObject(prot, "readout_axis", "x");
    } else {
        cJSON_AddNullToObject(prot, "bandwidth_hz");
    }
    cJSON_AddNumberToObject(prot, "df_hz", so.df_hz);
    if (a.s_fgrad) {
        cJSON *fg = cJSON_AddArrayToObject(prot, "field_gradient_T_per_m");
        cJSON *fh = cJSON_AddArrayToObject(prot, "field_gradient_hz_per_fov");
        for (int d = 0; d < ndim; d++) {
            cJSON_AddItemToArray(fg, cJSON_CreateNumber(fgrad_t[d]));
            cJSON_AddItemToArray(fh, cJSON_CreateNumber(fgrad_hz[d]));
        }
    }
    if (a.s_prot) {
        char *rp = rel_to_sidecar(a.protocol, a.out);
        cJSON_AddStringToObject(prot, "file", rp ? rp : a.protocol);
        free(rp);
        if (prot_seq)
            cJSON_AddStringToObject(prot, "plan_sequence", prot_seq);
        cJSON_AddNumberToObject(prot, "min_te_s", plan_min_te);
        cJSON_AddBoolToObject(prot, "feasible", plan_feasible == 1);
        if (plan_epi > 0) {
            cJSON_AddNumberToObject(prot, "echo_spacing_s", plan_esp);
            cJSON_AddNumberToObject(prot, "shots", plan_shots);
            cJSON_AddNumberToObject(prot, "partial_fourier", plan_pf);
            cJSON_AddNumberToObject(prot, "first_row", plan_first_row);
            cJSON_AddNumberToObject(prot, "rows_acquired", (double)n[1] - plan_first_row);
            cJSON_AddNumberToObject(prot, "distortion_pixels_per_hz",
                                    (double)n[1] * plan_esp / plan_shots);
        }
    }
    if (a.s_fmap) {
        char *rp = rel_to_sidecar(a.field_map, a.out);
        cJSON_AddStringToObject(prot, "field_map", rp ? rp : a.field_map);
        free(rp);
        cJSON_AddNumberToObject(prot, "field_map_oversampling", 4);
        cJSON_AddNumberToObject(prot, "field_map_segments", fm_seg);
        cJSON_AddNumberToObject(prot, "field_map_interp_error", fm_err);
    }
    if (ncoils > 0) {
        cJSON *co = cJSON_AddObjectToObject(js, "coil_model");
        cJSON_AddStringToObject(co, "kind", a.s_coils ? "loop-ring" : "maps");
        if (a.s_coils) {
            cJSON_AddNumberToObject(co, "radius_m", a.s_cr ? a.coil_radius : 0.25 * fov[0]);
            cJSON_AddNumberToObject(co, "distance_m",
                                    a.s_cd ? a.coil_distance
                                           : 0.75 * (fov[0] > fov[1] ? fov[0] : fov[1]));
            cJSON_AddNumberToObject(co, "rings", a.coil_rings == 2 ? 2 : 1);
            cJSON_AddNumberToObject(co, "loops_per_ring", (double)a.coils);
            if (a.coil_rings == 2)
                cJSON_AddNumberToObject(co, "ring_gap_m", a.s_crgap ? a.coil_ring_gap : 0.5 * fov[2]);
        }
        cJSON_AddNumberToObject(co, "series_order", (double)a.coil_order);
        if (ndim == 3)
            cJSON_AddNumberToObject(co, "order_z", (double)a.coil_order_z);
        cJSON_AddNumberToObject(co, "series_period_fov", COIL_PERIOD);
        kw_json_add_vec(co, "fit_residual", resid, ncoils);
    }
    cJSON_AddStringToObject(js, "noise_definition",
                            "complex Gaussian, E|n|^2 = noise_sigma^2 per sample "
                            "(real and imaginary parts noise_sigma/sqrt(2) each); "
                            "coils: covariance in noise_cov");
    cJSON_AddStringToObject(js, "snr_definition",
                            "mean |truth| over pixels >= 10% of max |truth|, divided "
                            "by noise_sigma (image domain, unitary DFT)");

    /* ---- write ---- */
    if (a.s_truth && (st = kw_npy_write(a.truth, &truth))) {
        ret = kw_cli_status(st, "truth");
        goto done;
    }
    if (a.s_sout && (st = kw_npy_write(a.sens_out, &maps))) {
        ret = kw_cli_status(st, "sens-out");
        goto done;
    }
    if (write_cov) {
        size_t cd[2] = {(size_t)nch, (size_t)nch};
        if ((st = kw_array_alloc(&covout, KW_C64, 2, cd))) {
            ret = kw_cli_status(st, "out");
            goto done;
        }
        for (int i = 0; i < nch * nch; i++)
            ((float complex *)covout.data)[i] = (float complex)cov[i];
        if ((st = kw_npy_write(covpath, &covout))) {
            ret = kw_cli_status(st, "out");
            goto done;
        }
    }
    if ((st = kw_npy_write(a.out, &ks))) {
        ret = kw_cli_status(st, "out");
        goto done;
    }
    if ((st = kw_json_write(side, js))) {
        remove(a.out);
        ret = kw_cli_status(st, "out");
        goto done;
    }
    if (ncoils > 0 && !kw_cli_quiet) {
        long lz = ndim == 3 ? a.coil_order_z : 0;
        if (ndim == 3)
            printf("coil sensitivities: 3-D trigonometric series of orders %ld (x, y) and %ld (z) "
                   "(%ld terms), fit residual (relative RMS over the object):\n", a.coil_order, lz,
                   (2 * a.coil_order + 1) * (2 * a.coil_order + 1) * (2 * lz + 1));
        else
            printf("coil sensitivities: trigonometric series of order %ld (%ld terms), fit residual "
                   "(relative RMS over the object):\n", a.coil_order,
                   (2 * a.coil_order + 1) * (2 * a.coil_order + 1));
        for (int c = 0; c < ncoils; c++)
            printf("  coil %d: %.3g%%\n", c, 100.0 * resid[c]);
    }
    if (bw > 0 && !kw_cli_quiet) {
        printf("readout along x: dwell %.4g us, duration %.4g ms, %.4g Hz/pixel; "
               "fat shift %.3g pixels\n", 1e6 / bw, ro_dur * 1e3, bw / (double)n[0],
               fat_hz / (bw / (double)n[0]));
        printf("%s\n", KW_SAFETY_CAUTION);
    }
    ret = KW_EXIT_OK;
done:
    free(side);
    free(covpath);
    cJSON_Delete(js);
    kw_sim_destroy(sim);
    kw_array_free(&ks);
    kw_array_free(&truth);
    kw_array_free(&cover);
    kw_array_free(&maps);
    kw_array_free(&covout);
    kw_array_free(&mask);
    kw_array_free(&traj);
    kw_array_free(&times);
    kw_array_free(&sensin);
    kw_array_free(&ncovin);
    kw_array_free(&fmap);
    kw_fieldmap_destroy(fmp);
    free(mfull);
    free(tvals);
    free(resid);
    free(coef);
    free(cov);
    free(chol);
    return ret;
}
