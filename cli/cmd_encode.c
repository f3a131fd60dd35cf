/* cmd_encode.c: `kweave encode`: simulate an acquisition of an analytic
 * phantom -> k-space .npy + JSON sidecar (+ truth image, coil maps). The
 * simulation is kw_acquisition (libencode/kw_acquire.h); this file maps the
 * arguments and files onto its options and its results onto files.
 * Definitions of SNR, noise and the k-space convention: docs/simulator.md. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "defaults.h"
#include "encode_cli.h"
#include "jsonio.h"
#include "npy.h"
#include "outfile.h"

#define MAX_EDGE 8192

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


/* The acquisition's option names (kw_last_error_param()) -> ours. */
static const struct {
    const char *param, *option;
} param_map[] = {
    {"phantom", "phantom"}, {"dims", "matrix"}, {"fov_m", "fov"}, {"sequence", "sequence"},
    {"te_s", "te"}, {"tr_s", "tr"}, {"ti_s", "ti"}, {"flip_rad", "flip"}, {"b0_t", "b0"},
    {"bandwidth_hz", "bandwidth"}, {"tissue_values", "tissue"}, {"tissue", "tissue"},
    {"df_hz", "df"}, {"field_gradient_ndim", "field-gradient"},
    {"field_gradient_t_per_m", "field-gradient"}, {"field_map", "field-map"},
    {"coils", "coils"}, {"coil_radius_m", "coil-radius"}, {"coil_distance_m", "coil-distance"},
    {"coil_rings", "coil-rings"}, {"coil_ring_gap_m", "coil-ring-gap"},
    {"coil_order", "coil-order"}, {"coil_order_z", "coil-order-z"}, {"sens", "sens"},
    {"coil_tolerance", "coil-tolerance"},
    {"snr", "snr"}, {"noise_corr", "noise-corr"}, {"noise_cov", "noise-cov"}, {"seed", "seed"},
    {"slices", "slices"}, {"slice_thickness_m", "slice-thickness"}, {"slice_gap_m", "slice-gap"},
    {"slice_points", "slice-points"}, {"mask", "pattern"}, {"traj", "trajectory"},
    {"times", "times"}, {"protocol", "protocol"}, {"max_bytes", "shape"}, {"options", "encode"}};

/* A failure of the acquisition, reported under our option's name. */
static int acq_fail(kw_status st)
{
    const char *p = kw_last_error_param();
    if (!*p)
        return kw_cli_status(st, ""); /* its reason names what failed */
    const char *opt = "encode";
    for (size_t i = 0; i < sizeof param_map / sizeof param_map[0]; i++)
        if (strcmp(param_map[i].param, p) == 0)
            opt = param_map[i].option;
    char why[600];
    snprintf(why, sizeof why, "%s%s", kw_last_error_reason(),
             strcmp(p, "max_bytes") == 0 ? " (--max-memory)"
             : strcmp(p, "b0_t") == 0    ? " with --tissue FILE.json (see --tissue list)"
                                         : "");
    kw_set_error(st, "%s", why);
    return kw_cli_status(st, opt);
}

/* Options given together that do not go together, and values that the
 * options struct reads as "not given". */
static int check_combinations(const enc_args *a)
{
    if ((a->s_slt || a->s_slg || a->s_slp) && !a->s_sl)
        return kw_cli_fail("slices", "missing (slice options need --slices N)");
    if (a->s_sl && (a->slices < 1 || a->slices > 256))
        return kw_cli_fail("slices", "must be 1..256");
    if (a->s_pat && a->s_traj)
        return kw_cli_fail("pattern", "give --pattern (Cartesian) or --trajectory, not both");
    if (a->s_fmap && a->s_fgrad)
        return kw_cli_fail("field-map", "give --field-map or --field-gradient, not both "
                           "(add the linear field to the map)");
    if (a->s_coils && a->s_sens)
        return kw_cli_fail("coils", "give --coils (a ring of loops) or --sens (maps), not both");
    if (a->s_coils && (a->coils < 1 || a->coils > 128))
        return kw_cli_fail("coils", "must be 1..128 (got %ld)", a->coils);
    if ((a->s_cr || a->s_cd) && !a->s_coils)
        return kw_cli_fail(a->s_cr ? "coil-radius" : "coil-distance", "only with --coils");
    if ((a->s_cr && !(a->coil_radius > 0)) || (a->s_cd && !(a->coil_distance > 0)))
        return kw_cli_fail(a->s_cr && !(a->coil_radius > 0) ? "coil-radius" : "coil-distance",
                           "must be positive");
    if (a->s_co && (a->coil_order < 0 || a->coil_order > 8))
        return kw_cli_fail("coil-order", "must be 0..8");
    if (a->s_coz && (a->coil_order_z < 0 || a->coil_order_z > 8))
        return kw_cli_fail("coil-order-z", "must be 0..8");
    if (a->s_sout && !a->s_coils && !a->s_sens)
        return kw_cli_fail("sens-out", "needs --coils or --sens");
    if ((a->s_coz || a->s_crings || a->s_crgap) && !a->s_coils && !a->s_sens)
        return kw_cli_fail(a->s_coz ? "coil-order-z" : a->s_crings ? "coil-rings" : "coil-ring-gap",
                           "only with --coils or --sens");
    if ((a->s_crings || a->s_crgap) && !a->s_coils)
        return kw_cli_fail(a->s_crings ? "coil-rings" : "coil-ring-gap", "only with --coils");
    if (a->s_crgap && !(a->coil_ring_gap > 0))
        return kw_cli_fail("coil-ring-gap", "a positive length, with --coil-rings 2");
    if (a->s_ncorr && !a->s_snr)
        return kw_cli_fail("noise-corr", "needs --snr (the noise level)");
    if (a->s_ncorr && a->s_ncov)
        return kw_cli_fail("noise-corr", "give --noise-corr or --noise-cov, not both");
    static const char *const pos[] = {"te", "tr", "ti", "flip"};
    const double v[] = {a->te, a->tr, a->ti, a->flip};
    const int s[] = {a->s_te, a->s_tr, a->s_ti, a->s_flip};
    for (int i = 0; i < 4; i++)
        if (s[i] && !(v[i] > 0))
            return kw_cli_fail(pos[i], "must be positive");
    return -1;
}

/* Grid, FOV, contrast, bandwidth and fields: the arguments -> options. */
static int args_grid(enc_args *a, kw_acquisition_options *o)
{
    if (!a->s_ph)
        return kw_cli_fail("phantom", "missing (see --help)");
    o->phantom = a->phantom;
    if (!a->s_mx)
        return kw_cli_fail("matrix", "missing (e.g. --matrix 256)");
    size_t n[3] = {1, 1, 1};
    int nm = parse_matrix(a->matrix, n);
    if (nm < 0)
        return kw_cli_fail("matrix", "'%s' is not NX[xNY[xNZ]] with whole numbers 1..%d",
                           a->matrix, MAX_EDGE);
    for (int i = 0; i < nm; i++)
        o->dims[2 - i] = n[i]; /* C order: (nz, ny, nx) */
    if (!a->s_fov)
        return kw_cli_fail("fov", "missing (e.g. --fov 256mm)");
    double fov[3];
    char why[200];
    int nf = parse_fov(a->fov, fov, why, sizeof why);
    if (nf < 0)
        return kw_cli_fail("fov", "%s", why);
    for (int i = 0; i < nf; i++)
        o->fov_m[2 - i] = fov[i];
    if (!a->s_out)
        return kw_cli_fail("out", "missing (e.g. --out ks.npy)");
    if (strcmp(a->out, "-") == 0 && !a->s_sidecar)
        return kw_cli_fail("out", "standard output needs --sidecar FILE.json (the sidecar "
                                  "cannot go beside it)");
    if (a->s_sidecar && strcmp(a->sidecar, "-") == 0)
        return kw_cli_fail("sidecar", "needs a file name");
    if (a->s_snr && !(a->snr > 0 && isfinite(a->snr)))
        return kw_cli_fail("snr", "must be a positive number");
    if (a->s_seed && a->seed < 0)
        return kw_cli_fail("seed", "must be >= 0");
    if (a->s_seq) {
        static const char *const names[] = {"pd", "gre", "se", "ir"};
        int k = 0;
        while (k < 4 && strcmp(a->sequence, names[k]) != 0)
            k++;
        if (k == 4)
            return kw_cli_fail("sequence", "unknown sequence '%s' (pd, gre, se, ir)", a->sequence);
        o->sequence = (kw_contrast_kind)k;
    }
    if (a->s_bw) {
        double bw = 0;
        int bw_pp = 0;
        if (kw_unit_parse_bandwidth(a->bandwidth, &bw, &bw_pp, why, sizeof why))
            return kw_cli_fail("bandwidth", "%s", why);
        if (!(bw > 0))
            return kw_cli_fail("bandwidth", "must be positive");
        o->bandwidth_hz = bw_pp ? bw * (double)n[0] : bw;
    }
    if (a->s_fgrad) {
        double g[3] = {0, 0, 0};
        int k = kw_unit_parse_list(a->field_grad, KW_UNIT_GRADIENT, g, 3, why, sizeof why);
        if (k < 0)
            return kw_cli_fail("field-gradient", "%s", why);
        o->field_gradient_ndim = k;
        for (int d = 0; d < k; d++)
            o->field_gradient_t_per_m[2 - d] = g[d]; /* GX,GY[,GZ] -> (z, y, x) */
    }
    return -1;
}

static void args_rest(const enc_args *a, kw_acquisition_options *o)
{
    o->snr = a->s_snr ? a->snr : 0;
    o->seed = (uint64_t)a->seed;
    o->te_s = a->s_te ? a->te : 0;
    o->tr_s = a->s_tr ? a->tr : 0;
    o->ti_s = a->s_ti ? a->ti : 0;
    o->flip_rad = a->s_flip ? a->flip : 0;
    o->b0_t = a->b0;
    o->df_hz = a->s_df ? a->df : 0;
    o->coils = a->s_coils ? (int)a->coils : 0;
    o->coil_radius_m = a->s_cr ? a->coil_radius : 0;
    o->coil_distance_m = a->s_cd ? a->coil_distance : 0;
    o->coil_rings = a->s_crings ? (int)a->coil_rings : 1;
    o->coil_ring_gap_m = a->s_crgap ? a->coil_ring_gap : 0;
    o->coil_order = a->s_co ? (int)a->coil_order : -1;
    o->coil_order_z = a->s_coz ? (int)a->coil_order_z : -1;
    o->noise_corr = a->s_ncorr ? a->noise_corr : 0;
    if (a->s_sl) {
        o->slices = (int)a->slices;
        o->slice_thickness_m = a->s_slt ? a->slice_thk : 0;
        o->slice_gap_m = a->s_slg ? a->slice_gap : 0;
        o->slice_points = (int)a->slice_points;
    }
    o->max_bytes = kw_cli_memory_limit();
}

/* The outputs: truth, maps, the noise covariance, k-space, then the sidecar
 * (a failed sidecar removes the k-space). */
static int write_outputs(const enc_args *a, const enc_files *f, const kw_acquisition_info *in,
                         const kw_array *ks, const kw_array *truth, const kw_array *maps)
{
    kw_status st;
    int ret = KW_EXIT_INTERNAL;
    char *side = a->s_sidecar ? strdup(a->sidecar) : kw_sidecar_path(a->out), *covpath = NULL;
    cJSON *js = NULL;
    kw_array covout = {0};
    if (!side) {
        ret = kw_cli_fail("out", "cannot form the sidecar name");
        goto done;
    }
    /* the coil noise covariance, for prewhitening, is written for multi-coil
     * data (a coil axis); one channel has just noise_sigma */
    if (in->noisy && in->coils > 0 &&
        !(covpath = enc_derived_path(enc_sidecar_anchor(a), "noise_cov.npy"))) {
        ret = kw_cli_fail("out", "out of memory");
        goto done;
    }
    js = enc_sidecar(a, f, in, covpath);
    if (a->s_truth && (st = kw_npy_write(a->truth, truth))) {
        ret = kw_cli_status(st, "truth");
        goto done;
    }
    if (a->s_sout && (st = kw_npy_write(a->sens_out, maps))) {
        ret = kw_cli_status(st, "sens-out");
        goto done;
    }
    if (covpath) {
        const int nch = in->channels;
        size_t cd[2] = {(size_t)nch, (size_t)nch};
        if ((st = kw_array_alloc(&covout, KW_C64, 2, cd))) {
            ret = kw_cli_status(st, "out");
            goto done;
        }
        for (int i = 0; i < nch * nch; i++)
            ((kw_cfloat *)covout.data)[i] = (kw_cfloat)in->noise_cov[i];
        if ((st = kw_npy_write(covpath, &covout))) {
            ret = kw_cli_status(st, "out");
            goto done;
        }
    }
    /* To standard output the sidecar goes first, so that a reader at the
     * other end of a pipe finds it once the array's first bytes arrive. */
    int to_stdout = strcmp(a->out, "-") == 0;
    if (to_stdout && ((st = kw_json_write(side, js)) || (st = kw_outfile_group_land()))) {
        ret = kw_cli_status(st, "sidecar");
        goto done;
    }
    if ((st = kw_npy_write(a->out, ks))) {
        if (to_stdout)
            remove(side);
        ret = kw_cli_status(st, "out");
        goto done;
    }
    if (!to_stdout && (st = kw_json_write(side, js))) {
        remove(a->out);
        ret = kw_cli_status(st, "out");
        goto done;
    }
    enc_summary(strcmp(a->out, "-") == 0 ? stderr : stdout, in);
    ret = KW_EXIT_OK;
done:
    free(side);
    free(covpath);
    cJSON_Delete(js);
    kw_array_free(&covout);
    return ret;
}

/* Create and run the acquisition, then write. */
static int run(const enc_args *a, const enc_files *f, const kw_acquisition_options *o)
{
    kw_acquisition *acq = NULL;
    kw_array ks = {0}, truth = {0}, maps = {0};
    int ret;
    kw_status st = kw_acquisition_create(&acq, o);
    if (st)
        return acq_fail(st);
    const kw_acquisition_info *in = kw_acquisition_info_get(acq);
    if ((st = kw_array_alloc(&truth, KW_F32, in->truth_ndim, in->truth_dims))) {
        ret = kw_cli_status(st, "truth");
        goto done;
    }
    if (in->maps_ndim && (st = kw_array_alloc(&maps, KW_C64, in->maps_ndim, in->maps_dims))) {
        ret = kw_cli_status(st, "coils");
        goto done;
    }
    if ((st = kw_array_alloc(&ks, KW_C64, in->kspace_ndim, in->kspace_dims))) {
        ret = kw_cli_status(st, "out");
        goto done;
    }
    st = kw_acquisition_execute(acq, ks.data, truth.data, maps.data, kw_cli_progress, NULL);
    kw_cli_progress_done();
    if (st) {
        ret = kw_cli_status(st, "encode");
        goto done;
    }
    ret = write_outputs(a, f, in, &ks, &truth, &maps);
done:
    kw_acquisition_destroy(acq);
    kw_array_free(&ks);
    kw_array_free(&truth);
    kw_array_free(&maps);
    return ret;
}

int kw_cmd_encode(int argc, char **argv)
{
    enc_args a;
    memset(&a, 0, sizeof a);
    kw_acquisition_options dflt; /* the library's defaults, as the package takes them */
    kw_acquisition_options_init(&dflt);
    a.b0 = dflt.b0_t;
    a.slice_points = dflt.slice_points;
    double coil_tol = dflt.coil_tolerance;
    const kw_opt table[] = {
        {"phantom", KW_OPT_STRING, &a.phantom, 0, &a.s_ph,
         "shepp-logan | shepp-logan-modified | weave | weave3d (required)"},
        {"matrix", KW_OPT_STRING, &a.matrix, 0, &a.s_mx, "NX[xNY[xNZ]] samples (e.g. 256x256; required, or from --protocol)"},
        {"fov", KW_OPT_STRING, &a.fov, 0, &a.s_fov, "field of view L[,LY[,LZ]] (e.g. 256mm; required, or from --protocol)"},
        {"out", KW_OPT_STRING, &a.out, 0, &a.s_out,
         "k-space .npy (complex64; - for stdout); sidecar .json beside it (required)"},
        {"sidecar", KW_OPT_STRING, &a.sidecar, 0, &a.s_sidecar,
         "sidecar .json (default: beside --out; needed with --out -)"},
        {"truth", KW_OPT_STRING, &a.truth, 0, &a.s_truth,
         "the image at the echo, rasterised at the matrix (.npy float32; default: not written)"},
        {"snr", KW_OPT_DOUBLE, &a.snr, 0, &a.s_snr,
         "mean object signal / noise standard deviation in the image (default: no noise)"},
        {"seed", KW_OPT_INT, &a.seed, 0, &a.s_seed, "noise seed (default 0)"},
        {"sequence", KW_OPT_STRING, &a.sequence, 0, &a.s_seq,
         "signal model: pd (default: proton density, needs no TE, TR or flip) | gre (spoiled "
         "gradient echo) | se (spin echo) | ir (inversion recovery); plan's --sequence is the "
         "pulse sequence timed (default gre), which --protocol passes on"},
        {"te", KW_OPT_UNIT, &a.te, KW_UNIT_TIME, &a.s_te, "echo time (k-space centre), e.g. 10ms (default: the shortest the readout allows; "
         "with --protocol the planner's minimum)"},
        {"tr", KW_OPT_UNIT, &a.tr, KW_UNIT_TIME, &a.s_tr, "repetition time (required by gre, se, ir; default: none, with --protocol the planner's "
         "minimum)"},
        {"ti", KW_OPT_UNIT, &a.ti, KW_UNIT_TIME, &a.s_ti, "inversion time (required by ir; default: none)"},
        {"flip", KW_OPT_UNIT, &a.flip, KW_UNIT_ANGLE, &a.s_flip, "flip angle (required by gre), degrees (default: none)"},
        {"b0", KW_OPT_UNIT, &a.b0, KW_UNIT_FIELD, &a.s_b0, "field strength, 1.5T or 3T (default " KWD_B0_TEXT ")"},
        {"bandwidth", KW_OPT_STRING, &a.bandwidth, 0, &a.s_bw,
         "receiver bandwidth, 32kHz (across the FOV) or 250Hz/pixel: times the readout (default: "
         "none, every sample at TE; with --protocol the file's, else the planner's default)"},
        {"df", KW_OPT_UNIT, &a.df, KW_UNIT_FREQUENCY, &a.s_df,
         "off-resonance added everywhere (e.g. 50Hz; default 0)"},
        {"coils", KW_OPT_INT, &a.coils, 0, &a.s_coils, "ring of N circular loop coils (default: none, one uniform coil)"},
        {"coil-radius", KW_OPT_UNIT, &a.coil_radius, KW_UNIT_LENGTH, &a.s_cr,
         "loop radius (default FOV/4)"},
        {"coil-distance", KW_OPT_UNIT, &a.coil_distance, KW_UNIT_LENGTH, &a.s_cd,
         "loop centre to the axis (default 0.75 FOV)"},
        {"coil-order", KW_OPT_INT, &a.coil_order, 0, &a.s_co,
         "order L of the trigonometric series of each sensitivity (0..8, default 4; 3-D: 3)"},
        {"coil-tolerance", KW_OPT_DOUBLE, &coil_tol, 0, NULL,
         "largest pointwise misfit of the fitted ring maps against the loops' field, a fraction "
         "of the local value where a coil is >= 10% of its peak in the object; the series order "
         "not given is raised to meet it (default 0.01 in 2-D; 3-D: none, orders 3 and 2; 0: no check)"},
        {"coil-order-z", KW_OPT_INT, &a.coil_order_z, 0, &a.s_coz,
         "3-D phantoms: the series' order along z (0..8, default 2)"},
        {"coil-rings", KW_OPT_INT, &a.coil_rings, 0, &a.s_crings,
         "1 (default) or 2 rings of --coils loops each (3-D: at z = -gap/2, +gap/2)"},
        {"coil-ring-gap", KW_OPT_UNIT, &a.coil_ring_gap, KW_UNIT_LENGTH, &a.s_crgap,
         "distance between the two rings' centres along z (default the z FOV / 2)"},
        {"sens", KW_OPT_STRING, &a.sens, 0, &a.s_sens, "sensitivity maps (coils, ny, nx) .npy (default: none)"},
        {"sens-out", KW_OPT_STRING, &a.sens_out, 0, &a.s_sout,
         "write the sensitivities the data were made with (.npy complex64; default: not written)"},
        {"pattern", KW_OPT_STRING, &a.pattern, 0, &a.s_pat,
         "Cartesian mask .npy (ny, nx) or (ny,): zero = not sampled (default: full grid)"},
        {"trajectory", KW_OPT_STRING, &a.trajectory, 0, &a.s_traj,
         "non-Cartesian samples (samples, 2|3) in cycles/FOV (default: none, Cartesian)"},
        {"times", KW_OPT_STRING, &a.times, 0, &a.s_times,
         "sample times after excitation (s): (samples,) for a trajectory; (nx,) or (ny, nx) Cartesian "
         "(default: from --bandwidth, else every sample at TE)"},
        {"noise-corr", KW_OPT_DOUBLE, &a.noise_corr, 0, &a.s_ncorr,
         "noise correlation coefficient between every pair of coils (default 0)"},
        {"noise-cov", KW_OPT_STRING, &a.noise_cov, 0, &a.s_ncov,
         "noise covariance (coils, coils) .npy (shape; --snr sets the level; default: none)"},
        {"field-map", KW_OPT_STRING, &a.field_map, 0, &a.s_fmap,
         "off-resonance map (ny, nx) in Hz (2-D; multi-slice: (slices, ny, nx) or one for all; "
         "time-segmented on a 4x grid; default: none)"},
        {"field-gradient", KW_OPT_STRING, &a.field_grad, 0, &a.s_fgrad,
         "linear field GX,GY[,GZ] along the array axes, zero at the FOV centre "
         "(e.g. 20uT/m,0): exact (default: none)"},
        {"tissue", KW_OPT_STRING, &a.tissue, 0, &a.s_tissue,
         "FILE.json: tissue values {name: {pd, t1_s, t2_s, t2star_s}} instead of the table's "
         "(at any B0); list: print the table (default: none, the table's values)"},
        {"protocol", KW_OPT_STRING, &a.protocol, 0, &a.s_prot,
         "protocol file of `kweave plan` (options given here override its keys; default: none)"},
        {"slices", KW_OPT_INT, &a.slices, 0, &a.s_sl,
         "multi-slice 2-D of a 3-D phantom: N slices centred on z = 0 (default: none)"},
        {"slice-thickness", KW_OPT_UNIT, &a.slice_thk, KW_UNIT_LENGTH, &a.s_slt,
         "slice thickness (rectangular through-slice profile; required with --slices)"},
        {"slice-gap", KW_OPT_UNIT, &a.slice_gap, KW_UNIT_LENGTH, &a.s_slg, "gap between slices (default 0)"},
        {"slice-points", KW_OPT_INT, &a.slice_points, 0, &a.s_slp,
         "Gauss-Legendre points across each slice (1..32, default 8)"},
        {NULL, 0, NULL, 0, NULL, NULL}};
    int rc = kw_opts_parse(argc, argv, table, usage, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (a.s_tissue && strcmp(a.tissue, "list") == 0)
        return enc_tissue_list();
    static enc_files f;
    memset(&f, 0, sizeof f);
    kw_acquisition_options o;
    kw_acquisition_options_init(&o);
    if (a.s_tissue) {
        if ((rc = enc_tissue_read(a.tissue, f.tissues)) >= 0)
            return rc;
        o.tissue_values = f.tissues;
    }
    /* a protocol file: its keys fill the options not given here */
    if (a.s_prot && (rc = enc_protocol_args(&a, &f)) >= 0)
        return rc;
    if ((rc = args_grid(&a, &o)) >= 0 || (rc = check_combinations(&a)) >= 0)
        return rc;
    args_rest(&a, &o);
    o.coil_tolerance = coil_tol;
    if (a.s_prot) {
        if ((rc = enc_protocol_read(&a, &f, o.sequence)) >= 0)
            return rc;
        o.protocol = &f.protocol;
    }
    rc = enc_files_read(&a, &f, &o);
    if (rc < 0)
        rc = run(&a, &f, &o);
    enc_files_free(&f);
    return rc;
}
