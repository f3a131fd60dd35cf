/* kw_recon.h: the reconstruction object: k-space (+ trajectory, coil maps,
 * noise covariance, the caller's sampling claims) -> image, by one of the
 * methods of kw_recon_methods(), with an optional g-factor map and a report
 * of what was inferred and used (docs/api-recon.md).
 *
 * Life cycle: kw_recon_options_init(&o), set fields; kw_recon_create(&r,
 * &geometry, &o) checks the request, infers the image shape and makes what
 * depends only on the geometry (density weights, the fused FFT plan of the
 * default fft + root-sum-of-squares path); kw_recon_execute(r, kspace, image,
 * gfactor, progress, user) reconstructs one k-space array of the geometry's
 * shape, and may be called again with new data (the multi-slice loop of the
 * command does so per slice); kw_recon_destroy(r) frees (NULL-safe).
 *
 * Allocation: execute still allocates its working buffers (the whitened data
 * copy, method scratch, the methods' own plans) as the methods did before
 * they moved into the library; only the default fft path and the density
 * weights are planned once in create.
 *
 * Arrays (C order, slowest axis first, kw_cfloat samples; kw_base.h):
 *   Cartesian k-space (coils, ny, nx) or (coils, nz, ny, nx), unsampled
 *   points zero; non-Cartesian (coils, samples) with a trajectory (samples,
 *   traj_ndim) in cycles per FOV. Maps (coils, [nz,] ny, nx); noise
 *   covariance (coils, coils). The geometry's arrays are BORROWED: they must
 *   stay valid until kw_recon_destroy(), and their contents are read at each
 *   execute (a caller may change the maps between executes).
 *
 * Thread safety: one kw_recon is used by one thread at a time; distinct
 * objects may be created, run and destroyed in parallel: the library holds
 * one lock around FFTW's planner (creates and executes make plans).
 *
 * Errors: every call returns kw_status; kw_last_error_param() names the field
 * at fault in these structs' words: "method", "combine", "lambda", "kernel",
 * "iterations", "stop", "tolerance", "oversampling", "replicas", "dcf",
 * "sens", "noise_cov", "trajectory", "kspace", "acceleration", "acs_lines",
 * "keep_coils", "complex_image", "gfactor", "image_dims".
 */
#ifndef KW_RECON_H
#define KW_RECON_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_recon kw_recon;

/* Density compensation of non-Cartesian data (grid and iterative methods). */
typedef enum kw_recon_dcf {
    KW_RECON_DCF_AUTO = 0,   /* radial for a radial trajectory, else pipe */
    KW_RECON_DCF_RADIAL = 1, /* |k| ramp (kw_dcf.h) */
    KW_RECON_DCF_PIPE = 2,   /* Pipe & Menon iteration (kw_dcf.h) */
    KW_RECON_DCF_GIVEN = 3   /* kw_recon_geometry.weights */
} kw_recon_dcf;

typedef struct kw_recon_options {
    size_t struct_size;  /* set by kw_recon_options_init() */
    const char *method;  /* a name of kw_recon_methods(); NULL: fft (Cartesian)
                            or grid (non-Cartesian) */
    const char *combine; /* "rss", "optimal", "adaptive"; NULL: "optimal" when
                            coil maps are given (they are the best weights
                            there are), else "rss" */
    double lambda;       /* regularisation, relative; NaN: the method's default */
    int iterations;      /* 0: the method's default */
    double stop;         /* relative change to stop at; NaN: default */
    double tolerance;    /* NUFFT accuracy; NaN: 1e-3 */
    double oversampling; /* NUFFT grid oversampling; NaN: chosen */
    int kernel[2];       /* GRAPPA (KY, KX); 0: 2 x 5 */
    int replicas;        /* pseudo-replicas; 0: 50 (and the analytic map where
                            the method has one), > 0 forces pseudo-replicas */
    long seed;           /* seed of the pseudo-replica noise (default 1) */
    int keep_coils;      /* complex coil images (or the complex image) out */
    kw_recon_dcf dcf;    /* density compensation (non-Cartesian) */
    int want_gfactor;    /* execute fills the g-factor map */
    int estimate_sens;   /* Cartesian: estimate maps (Walsh) even if the method
                            does not need them; see kw_recon_estimated_sens() */
    int complex_image;   /* the image complex (kw_cfloat), its phase kept: the
                            one image of sense, cg-sense and cs-*, or the coil
                            combination of fft, homodyne, pocs, grappa and grid
                            with optimal or adaptive combination (or one coil);
                            refused with rss (no phase) and with keep_coils */
} kw_recon_options;

/* What the caller knows of the Cartesian sampling (e.g. from a sidecar); the
 * data are analysed in any case and must agree. */
typedef struct kw_recon_sampling {
    double acceleration;  /* stated total acceleration; 0: not stated */
    int acceleration_per_axis; /* 1: stated per axis, `acceleration` is the
                                  product (then only the lattice R may match) */
    int acs_lines;        /* stated calibration lines; 0: not stated */
} kw_recon_sampling;

typedef struct kw_recon_geometry {
    int ndim;                 /* of the k-space array: 3 or 4 Cartesian, 2 non-Cartesian */
    const size_t *dims;       /* (coils, [nz,] ny, nx) or (coils, samples) */
    const float *trajectory;  /* (samples, traj_ndim) cycles/FOV, or NULL: Cartesian */
    int traj_ndim;            /* 2 or 3 */
    const kw_cfloat *sens;    /* coil maps, or NULL (estimated where needed) */
    int sens_ndim;            /* sens dims: (coils, [nz,] ny, nx) */
    const size_t *sens_dims;
    const kw_cfloat *noise_cov; /* (coils, coils) or NULL: no prewhitening */
    const size_t *image_dims; /* non-Cartesian image (traj_ndim sizes) or NULL:
                                 the maps' shape, else 2 x the trajectory's extent */
    const float *weights;     /* density weights (samples) with KW_RECON_DCF_GIVEN */
    const kw_recon_sampling *sampling; /* the caller's claims or NULL */
} kw_recon_geometry;

/* What execute inferred and used (valid until the next execute/destroy). */
typedef struct kw_recon_report {
    const char *method;
    int noncartesian;
    int prewhitened;
    /* Cartesian sampling analysis (has_sampling) */
    int has_sampling;
    int sdim;                 /* 2 or 3 spatial axes; axes below are (z, y, x) */
    int accel[3];
    size_t acs[3];
    int acceleration;         /* product of accel[] */
    double sampled_fraction;
    int uniform, partial_fourier;
    /* coil maps */
    int sens_estimated;       /* 0: given or none; 1: estimated */
    int sens_at;              /* where estimated: 1 at set-up (estimate_sens),
                                 2 before the method's own keys, 3 after combining */
    const char *sens_source;  /* when estimated: how */
    const char *combine;      /* the combination used, or NULL (coils kept) */
    /* method specifics (NaN / 0 when not used) */
    double lambda, lambda_absolute;
    const char *solver, *regulariser;
    int kernel[3], kernel_n;  /* GRAPPA kernel over the sdim axes */
    double calibration_fits;
    double pf_fraction[3];    /* homodyne / pocs: over the sdim axes */
    int has_pf;
    int iterations;           /* run (pocs, iterative methods); -1: not reported */
    int max_iterations;
    double stop;
    const double *log_iter, *log_objective, *log_change; /* iterative: per iteration */
    const char *log_change_name; /* "residual" (CG) or "change" */
    /* non-Cartesian */
    kw_recon_dcf dcf_used;    /* AUTO never: RADIAL, PIPE or GIVEN */
    int has_nufft;
    double nufft_tolerance, nufft_oversampling, nufft_width, nufft_beta;
    size_t nufft_grid[3];
    int nufft_ndim;
    /* g-factor */
    const char *gfactor_analytic; /* set when the method's analytic map was made */
    const char *gfactor_method;   /* pseudo-replica, when made */
    int gfactor_replicas;
    double gfactor_mean, gfactor_max; /* over the pixels where the map is > 0 */
    /* Cartesian sampling, continued */
    double effective_acceleration; /* points / sampled points (1 / sampled_fraction) */
    const char *advice; /* when the method ignores how the data were sampled
                           (fft on undersampled data): one sentence naming
                           the methods that suit the sampling; else NULL */
} kw_recon_report;

typedef struct kw_recon_method_info {
    const char *name;
    int cartesian;    /* accepts Cartesian data */
    int noncartesian; /* accepts a trajectory */
    const char *summary;
} kw_recon_method_info;

/*! kw_recon_options_init(): the defaults (those of `kweave recon`). */
KW_API void kw_recon_options_init(kw_recon_options *o);

/*! kw_recon_methods(): the method table, terminated by name == NULL. */
KW_API const kw_recon_method_info *kw_recon_methods(void);

/*! kw_recon_method_find(): the entry named `name`, or NULL. */
KW_API const kw_recon_method_info *kw_recon_method_find(const char *name);

/*! kw_recon_method_check(): is `name` (NULL: the default, fft for Cartesian
 * data, grid for non-Cartesian) a method for this kind of data? KW_OK with
 * *info (when info is not NULL) set to its entry; else KW_EINVAL naming
 * "method": an unknown name gets the closest method when it is a near miss
 * and the list of methods ("unknown method 'sens'; did you mean 'sense'?
 * (one of: fft, homodyne, ...)"), a known one the kind of data it takes.
 * The checks kw_recon_create() makes, for a caller that wants them before
 * reading its data. */
KW_API kw_status kw_recon_method_check(const char *name, int noncartesian,
                                       const kw_recon_method_info **info);

/*! kw_recon_create(): check the request and plan. *r is NULL on failure. */
KW_API kw_status kw_recon_create(kw_recon **r, const kw_recon_geometry *g,
                                 const kw_recon_options *o);

/*! kw_recon_image_shape(): the image execute writes: *ndim axes `dims`
 * (at most 4), complex (kw_cfloat) when *is_complex, else float. */
KW_API void kw_recon_image_shape(const kw_recon *r, int *ndim, size_t dims[4],
                                 int *is_complex);

/*! kw_recon_gfactor_shape(): the g-factor map's shape (float). */
KW_API void kw_recon_gfactor_shape(const kw_recon *r, int *ndim, size_t dims[3]);

/*! kw_recon_execute(): reconstruct `kspace` (the geometry's shape) into
 * `image` (kw_recon_image_shape(): float or kw_cfloat elements) and, with
 * want_gfactor, `gfactor` (float, kw_recon_gfactor_shape(); may be NULL
 * otherwise). `progress` may be NULL. */
KW_API kw_status kw_recon_execute(kw_recon *r, const kw_cfloat *kspace, void *image,
                                  float *gfactor, kw_progress_fn progress, void *user);

/*! kw_recon_report(): what the last execute inferred and used. */
KW_API const kw_recon_report *kw_recon_get_report(const kw_recon *r);

/*! kw_recon_report_json(): the report of the last execute as `kweave recon
 * --json` writes it, as JSON text (kw_alloc'd, free with kw_free(); ends
 * with a newline), without the keys that name the command's files. Keys, in
 * order: kweave_version, kind ("recon"), method, layout, kspace_shape,
 * coils, sens_source (maps not estimated: "given" or "none"), then the
 * method's: prewhitened, sens_source (estimated), sampling (Cartesian: the
 * inferred acceleration_axes, acs_axes, acceleration, sampled_fraction,
 * uniform, partial_fourier), dcf (non-Cartesian: "radial", "pipe" or
 * "given"), partial_fourier_fraction, iterations, gfactor_method and lambda
 * (sense), kernel, lambda, calibration_fits (grappa), solver, regulariser,
 * lambda, lambda_absolute, max_iterations, stop, iterations, iteration_log
 * (iterative methods), nufft (tolerance, oversampling, kernel_width,
 * kaiser_bessel_beta, grid), combine; then image_shape and, with
 * want_gfactor, gfactor_method, gfactor_replicas, gfactor_mean,
 * gfactor_max. The command adds "input" after "method", writes
 * sens_source as where its maps came from (its option's file, the
 * sidecar's, or "none"), the given weights' file as "dcf" and "dcf_file", "sens_file",
 * "gfactor_file", and after these "scores" and "output". KW_EINVAL on NULL
 * or before the first execute. */
KW_API kw_status kw_recon_report_json(const kw_recon *r, char **json);

/*! kw_recon_estimated_sens(): the maps the last execute estimated (in the
 * whitened coil basis when a noise covariance was given), their ndim and
 * dims (coils, [nz,] ny, nx); NULL when none were estimated. */
KW_API const kw_cfloat *kw_recon_estimated_sens(const kw_recon *r, int *ndim,
                                                size_t dims[4]);

/*! kw_recon_density_weights(): the density weights used (one per sample,
 * *n of them) or NULL (Cartesian, or a method without weights). */
KW_API const float *kw_recon_density_weights(const kw_recon *r, size_t *n);

/*! kw_recon_destroy(): free (NULL-safe). */
KW_API void kw_recon_destroy(kw_recon *r);

#ifdef __cplusplus
}
#endif
#endif /* KW_RECON_H */
