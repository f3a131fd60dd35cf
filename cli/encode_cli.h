/* encode_cli.h: the parts of `kweave encode` (cmd_encode.c): its arguments,
 * the files it reads (encode_files.c) and the sidecar it writes
 * (encode_sidecar.c). The simulation itself is kw_acquisition
 * (libencode/kw_acquire.h). */
#ifndef KW_ENCODE_CLI_H
#define KW_ENCODE_CLI_H

#include <stdio.h>

#include <cjson/cJSON.h>

#include "kw_acquire.h"

typedef struct enc_args {
    const char *phantom, *matrix, *fov, *out, *truth, *sequence, *bandwidth;
    const char *sens, *sens_out, *pattern, *trajectory, *times, *noise_cov, *field_map, *protocol;
    const char *field_grad, *tissue;
    const char *sidecar; /* --sidecar: where the sidecar goes (needed with --out -) */
    /* the texts of the other options, read by kw_acquisition_input */
    const char *snr, *te, *tr, *ti, *flip, *b0, *df, *coil_radius, *coil_distance, *noise_corr;
    const char *slice_thk, *slice_gap, *coil_ring_gap, *coil_tolerance;
    const char *seed, *coils, *coil_order, *coil_order_z, *coil_rings, *slices, *slice_points;
    int s_snr, s_seed, s_ph, s_mx, s_fov, s_out, s_truth, s_seq, s_te, s_tr, s_ti, s_flip,
        s_b0, s_bw, s_df, s_coils, s_cr, s_cd, s_co, s_sens, s_sout, s_pat, s_traj, s_times,
        s_ncorr, s_ncov, s_fmap, s_sl, s_slt, s_slg, s_slp, s_prot, s_fgrad, s_coz, s_crings,
        s_crgap, s_tissue, s_sidecar, s_ctol;
} enc_args;

/* The arrays read from the files the arguments name, in the forms the
 * acquisition options take; freed by enc_files_free(). */
typedef struct enc_files {
    kw_array mask_in, traj, times_in, fmap, sens_in, ncov_in;
    uint8_t *mask;
    double *times;
    kw_cfloat *sens;
    kw_cdouble *ncov;
    const char *plan_sequence; /* the protocol file's sequence (NULL: none) */
    kw_tissue_values tissues[KW_TISSUE_COUNT];
} enc_files;

/* encode_files.c. Each returns an exit code, or -1 to go on. */
int enc_tissue_list(void);
int enc_tissue_read(const char *path, kw_tissue_values *v);
int enc_protocol_read(const enc_args *a, kw_acquisition_input *in);
int enc_files_read(const enc_args *a, enc_files *f, kw_acquisition_options *o);
void enc_files_free(enc_files *f);
char *enc_rel_to_sidecar(const char *path, const char *out);
char *enc_derived_path(const char *out, const char *suffix);

/* encode_sidecar.c: the JSON sidecar of the k-space file `a->out`;
 * `covpath` the noise covariance file written beside it (NULL: none). */
cJSON *enc_sidecar(const enc_args *a, const enc_files *f, const kw_acquisition_info *in,
                   const char *covpath);
void enc_summary(FILE *f, const kw_acquisition_info *in);

/*! enc_sidecar_anchor(): the path the sidecar's file names are relative to:
 * the sidecar itself (--sidecar), else the k-space file beside it. */
const char *enc_sidecar_anchor(const enc_args *a);

#endif
