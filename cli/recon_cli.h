/* recon_cli.h: what the two halves of `kweave recon` share (cli/recon_io.c):
 * the parsed options, their mapping onto kw_recon_options, the sidecar's
 * sampling claims and error mapping from the library's parameter names to
 * the command's options. The report's keys are the library's
 * (recon/recon_json.h: kw_recon_json_build, kw_recon_json_add_method).
 * cmd_recon.c (one array) and recon_multislice.c (slice by slice) each use
 * these; neither uses a name defined in the other but kw_recon_multislice. */
#ifndef KW_RECON_CLI_H
#define KW_RECON_CLI_H

#include <cJSON.h>

#include "h5.h"
#include "kw_recon.h"

typedef struct kw_recon_opts {
    const char *in, *out, *method, *combine;
    const char *sens, *noise_cov, *trajectory, *dcf, *ref, *gfactor, *json;
    const char *dcf_out;  /* write the density weights used (.npy), or NULL */
    const char *sens_out; /* write the estimated maps (.npy), or NULL */
    const char *kernel;   /* "KYxKX" as given; parsed into kernel_yx[] */
    int kernel_yx[2];     /* 0 when not given: the method's default */
    double lambda;        /* NaN when not given */
    long iterations;      /* 0 when not given */
    double stop;          /* NaN when not given */
    double tolerance;     /* NaN when not given */
    double oversampling;  /* NaN when not given */
    long replicas;        /* pseudo-replicas for --gfactor (0: default) */
    long seed;
    int keep_coils;
    int complex_image; /* --complex */
} kw_recon_opts;

/*! kw_recon_sidecar_rel(): a file name from the sidecar, relative to the
 * sidecar's directory (malloc'd). */
char *kw_recon_sidecar_rel(const char *sidecar, const char *name);

/*! kw_recon_cli_options(): the library's options from the command's. */
void kw_recon_cli_options(const kw_recon_opts *o, kw_recon_options *ro);

/*! kw_recon_cli_claims(): the sidecar's "acceleration" / "acs_lines" into
 * *s, *stated = 1 when either is given; -1, or an exit code (printed). */
int kw_recon_cli_claims(const cJSON *sidecar, kw_recon_sampling *s, int *stated);

/*! kw_recon_cli_override(): the options that stand in for a sidecar put
 * into *sidecar (made when NULL) under the sidecar's own keys, so that
 * everything reading the sidecar reads them: --fov L[,LY[,LZ]] ("fov_m",
 * x, y, z; one value for every axis), --accel R or RYxRZ ("acceleration":
 * a number, or a list per axis), --acs N ("acs_lines"). NULL / !seen_acs:
 * not given. One "kweave: note:" line on stderr for each that differs from
 * the sidecar's value. Later failures about the claims name --accel /
 * --acs. -1, or an exit code (printed). */
int kw_recon_cli_override(cJSON **sidecar, const char *fov, const char *accel, long acs, int seen_acs);

/*! kw_recon_cli_axes(): --axes NAMES: the k-space `k` (KW_C64 or KW_F32)
 * whose axes are, in its order, the comma-separated names (coils, samples,
 * nz, ny, nx), transposed in place into kweave's C order (coils, [nz,] ny,
 * nx) or (coils, samples); with no coils named a coil axis of 1 is put in
 * front. -1, or an exit code (printed). */
int kw_recon_cli_axes(const char *axes, kw_array *k);

/*! kw_recon_cli_error(): print the failure of a kw_recon call: the option
 * the library's parameter stands for, else `context`; returns the exit code. */
int kw_recon_cli_error(kw_status st, const char *context);

/* What the attributes of an HDF5 image (kw_recon_h5_attrs) are made of. */
typedef struct kw_recon_h5_meta {
    const cJSON *sidecar; /* fov_m, slices (thickness_m, gap_m, centres_m) */
    const char *method;
    const char *combine;  /* NULL: coil images */
    int spatial;          /* the image's last 2 or 3 axes are (z,) y, x */
    int multislice;       /* the z axis is the slices of a 2-D stack */
} kw_recon_h5_meta;

/*! kw_recon_h5_attrs(): the attributes of an image written to HDF5
 * (docs/files.md): kweave_version, method, combine, axes, matrix, and with
 * an FOV fov_m, voxel_size_m (FOV / matrix; the slice spacing for a stack),
 * origin_m (NIfTI's), slice_thickness_m, slice_gap_m. `meta` is a
 * kw_recon_h5_meta (the callback of kw_h5_write()). */
kw_status kw_recon_h5_attrs(kw_h5w *w, void *meta);

#endif
