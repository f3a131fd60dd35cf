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
#include "arrayio.h"
#include "h5.h"

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

/* How the library's messages name our options. */
static const kw_param_spelling SPELLING = {"--", '-', " ", NULL};

/* A failure of the acquisition, reported under our option's name (the
 * input's keys are our options; kw_acquisition_create() names fields). */
static int acq_fail(kw_status st)
{
    const char *p = kw_last_error_param();
    if (!*p)
        return kw_cli_status(st, ""); /* its reason names what failed */
    const char *opt = kw_acquisition_input_key_of(p);
    if (!opt)
        opt = strcmp(p, "max_bytes") == 0 ? "shape" : strcmp(p, "protocol") == 0 ? "protocol"
                                                                                  : "encode";
    char why[600];
    snprintf(why, sizeof why, "%s%s", kw_last_error_reason(),
             strcmp(p, "max_bytes") == 0 ? " (--max-memory)"
             : strcmp(p, "b0_t") == 0    ? " with --tissue FILE.json (see --tissue list)"
                                         : "");
    kw_set_error(st, "%s", why);
    return kw_cli_status(st, opt);
}

/* A refused option: the input names it by our option's name. */
static int input_fail(void)
{
    return kw_cli_fail(kw_last_error_param(), "%s", kw_last_error_reason());
}

/* The options of the table that are the input's keys, in its order (the
 * file options declare their arrays given). */
static int set_keys(kw_acquisition_input *in, const kw_opt *table)
{
    for (const kw_param_key *k = kw_acquisition_input_keys(); k->name; k++) {
        const kw_opt *t = table;
        while (t->name && strcmp(t->name, k->name) != 0)
            t++;
        const char *text = t->name && *t->seen ? *(const char **)t->dest : NULL;
        if (text && kw_acquisition_input_set(in, k->name, text))
            return input_fail();
    }
    return -1;
}

/* What only the command checks: its outputs. */
static int check_outputs(const enc_args *a)
{
    if (!a->s_out)
        return kw_cli_fail("out", "missing (e.g. --out ks.npy)");
    if (strcmp(a->out, "-") == 0 && !a->s_sidecar)
        return kw_cli_fail("out", "standard output needs --sidecar FILE.json (the sidecar "
                                  "cannot go beside it)");
    if (a->s_sidecar && strcmp(a->sidecar, "-") == 0)
        return kw_cli_fail("sidecar", "needs a file name");
    if (kw_array_is_hdf5(a->out)) {
        char *file;
        const char *dset;
        kw_status st = kw_array_h5_target(a->out, "/kspace", &file, &dset);
        free(file);
        if (st)
            return kw_cli_status(st, "out");
    }
    if (a->s_sout && !a->s_coils && !a->s_sens)
        return kw_cli_fail("sens-out", "needs --coils or --sens");
    return -1;
}

/* k-space as .npy, or as a dataset of an HDF5 file (FILE.h5[:/dataset],
 * default /kspace) with the sidecar's keys as its attributes. */
static kw_status write_kspace(const char *out, const kw_array *ks, cJSON *js)
{
    if (!kw_array_is_hdf5(out))
        return kw_npy_write(out, ks);
    char *file;
    const char *dset;
    kw_status st = kw_array_h5_target(out, "/kspace", &file, &dset);
    if (st)
        return st;
    st = kw_h5_write(file, dset, ks, kw_h5w_attrs_json, js);
    free(file);
    return st;
}

/* The outputs: truth, maps, the noise covariance, k-space, then the sidecar. */
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
    if ((st = write_kspace(a->out, ks, js))) {
        if (to_stdout)
            remove(side); /* landed above for the reader; the stream failed */
        ret = kw_cli_status(st, "out");
        goto done;
    }
    /* (a failure from here on leaves nothing: the run's files land together) */
    if (!to_stdout && (st = kw_json_write(side, js))) {
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

/* The options through the library's input (and the files), then the run. */
static int run_input(const enc_args *a, enc_files *f, kw_acquisition_input *in,
                     const kw_opt *table)
{
    int rc;
    kw_acquisition_options o;
    kw_acquisition_options_init(&o);
    if ((rc = set_keys(in, table)) >= 0)
        return rc;
    if (a->s_tissue) {
        if ((rc = enc_tissue_read(a->tissue, f->tissues)) >= 0)
            return rc;
        o.tissue_values = f->tissues;
    }
    /* a protocol file: its keys fill the options not given here */
    if (a->s_prot && (rc = enc_protocol_read(a, in)) >= 0)
        return rc;
    if (!a->s_ph)
        return kw_cli_fail("phantom", "missing (see --help)");
    if (kw_acquisition_input_finish(in, &SPELLING, &o))
        return input_fail();
    if ((rc = check_outputs(a)) >= 0)
        return rc;
    f->plan_sequence = kw_acquisition_input_protocol_text(in, "sequence");
    o.max_bytes = kw_cli_memory_limit();
    rc = enc_files_read(a, f, &o);
    return rc < 0 ? run(a, f, &o) : rc;
}

int kw_cmd_encode(int argc, char **argv)
{
    enc_args a;
    memset(&a, 0, sizeof a);
    const kw_opt table[] = {
        {"phantom", KW_OPT_STRING, &a.phantom, 0, &a.s_ph, KW_OPT_KEY_HELP},
        {"matrix", KW_OPT_STRING, &a.matrix, 0, &a.s_mx, KW_OPT_KEY_HELP},
        {"fov", KW_OPT_STRING, &a.fov, 0, &a.s_fov, KW_OPT_KEY_HELP},
        {"out", KW_OPT_STRING, &a.out, 0, &a.s_out,
         "k-space .npy (complex64; - for stdout) or FILE.h5[:/dataset] (HDF5, default dataset /kspace, the sidecar's keys as attributes); sidecar .json beside it (required)"},
        {"sidecar", KW_OPT_STRING, &a.sidecar, 0, &a.s_sidecar,
         "sidecar .json (default: beside --out; needed with --out -)"},
        {"truth", KW_OPT_STRING, &a.truth, 0, &a.s_truth,
         "the image at the echo, rasterised at the matrix (.npy float32; default: not written)"},
        {"snr", KW_OPT_STRING, &a.snr, 0, &a.s_snr, KW_OPT_KEY_HELP},
        {"seed", KW_OPT_STRING, &a.seed, 0, &a.s_seed, KW_OPT_KEY_HELP},
        {"sequence", KW_OPT_STRING, &a.sequence, 0, &a.s_seq, KW_OPT_KEY_HELP},
        {"te", KW_OPT_STRING, &a.te, 0, &a.s_te, KW_OPT_KEY_HELP},
        {"tr", KW_OPT_STRING, &a.tr, 0, &a.s_tr, KW_OPT_KEY_HELP},
        {"ti", KW_OPT_STRING, &a.ti, 0, &a.s_ti, KW_OPT_KEY_HELP},
        {"flip", KW_OPT_STRING, &a.flip, 0, &a.s_flip, KW_OPT_KEY_HELP},
        {"b0", KW_OPT_STRING, &a.b0, 0, &a.s_b0, KW_OPT_KEY_HELP},
        {"bandwidth", KW_OPT_STRING, &a.bandwidth, 0, &a.s_bw, KW_OPT_KEY_HELP},
        {"df", KW_OPT_STRING, &a.df, 0, &a.s_df, KW_OPT_KEY_HELP},
        {"coils", KW_OPT_STRING, &a.coils, 0, &a.s_coils, KW_OPT_KEY_HELP},
        {"coil-radius", KW_OPT_STRING, &a.coil_radius, 0, &a.s_cr, KW_OPT_KEY_HELP},
        {"coil-distance", KW_OPT_STRING, &a.coil_distance, 0, &a.s_cd, KW_OPT_KEY_HELP},
        {"coil-order", KW_OPT_STRING, &a.coil_order, 0, &a.s_co, KW_OPT_KEY_HELP},
        {"coil-tolerance", KW_OPT_STRING, &a.coil_tolerance, 0, &a.s_ctol, KW_OPT_KEY_HELP},
        {"coil-order-z", KW_OPT_STRING, &a.coil_order_z, 0, &a.s_coz, KW_OPT_KEY_HELP},
        {"coil-rings", KW_OPT_STRING, &a.coil_rings, 0, &a.s_crings, KW_OPT_KEY_HELP},
        {"coil-ring-gap", KW_OPT_STRING, &a.coil_ring_gap, 0, &a.s_crgap, KW_OPT_KEY_HELP},
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
        {"noise-corr", KW_OPT_STRING, &a.noise_corr, 0, &a.s_ncorr, KW_OPT_KEY_HELP},
        {"noise-cov", KW_OPT_STRING, &a.noise_cov, 0, &a.s_ncov,
         "noise covariance (coils, coils) .npy: the noise as given, or only its shape when --snr "
         "sets the level (--noise-corr has no level of its own and needs --snr; default: none)"},
        {"field-map", KW_OPT_STRING, &a.field_map, 0, &a.s_fmap,
         "off-resonance map (ny, nx) in Hz (2-D; multi-slice: (slices, ny, nx) or one for all; "
         "time-segmented on a 4x grid; default: none)"},
        {"field-gradient", KW_OPT_STRING, &a.field_grad, 0, &a.s_fgrad, KW_OPT_KEY_HELP},
        {"tissue", KW_OPT_STRING, &a.tissue, 0, &a.s_tissue,
         "FILE.json: tissue values {name: {pd, t1_s, t2_s, t2star_s}} instead of the table's "
         "(at any B0); list: print the table (default: none, the table's values)"},
        {"protocol", KW_OPT_STRING, &a.protocol, 0, &a.s_prot,
         "protocol file of `kweave plan` (options given here override its keys; default: none)"},
        {"slices", KW_OPT_STRING, &a.slices, 0, &a.s_sl, KW_OPT_KEY_HELP},
        {"slice-thickness", KW_OPT_STRING, &a.slice_thk, 0, &a.s_slt, KW_OPT_KEY_HELP},
        {"slice-gap", KW_OPT_STRING, &a.slice_gap, 0, &a.s_slg, KW_OPT_KEY_HELP},
        {"slice-points", KW_OPT_STRING, &a.slice_points, 0, &a.s_slp, KW_OPT_KEY_HELP},
        {NULL, 0, NULL, 0, NULL, NULL}};
    static const kw_opt_arg extra[] = {{"tissue", "FILE"}, {NULL, NULL}};
    kw_opts_set_args_from_keys(kw_acquisition_input_keys(), extra);
    int rc = kw_opts_parse(argc, argv, table, usage, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (a.s_tissue && strcmp(a.tissue, "list") == 0)
        return enc_tissue_list();
    /* k-space into an HDF5 file: the sidecar goes beside the file (FILE.json) */
    char *h5side = NULL;
    if (a.s_out && !a.s_sidecar && kw_array_is_hdf5(a.out)) {
        if (!(h5side = kw_array_sidecar_path(a.out)))
            return kw_cli_fail("out", "out of memory");
        a.sidecar = h5side;
        a.s_sidecar = 1;
    }
    kw_acquisition_input *in = NULL;
    if (kw_acquisition_input_create(&in)) {
        free(h5side);
        return kw_cli_status(KW_ENOMEM, "encode");
    }
    static enc_files f;
    memset(&f, 0, sizeof f);
    rc = run_input(&a, &f, in, table);
    enc_files_free(&f);
    kw_acquisition_input_destroy(in);
    free(h5side);
    return rc;
}
