/* kw_pattern_analysis.h: the figures of merit of a sampling pattern, as
 * `kweave pattern --analyse / --compare` reports them: acceleration, sampled
 * fraction, ACS block, largest gap, point-spread function (FWHM, main lobe,
 * peak sidelobe, energy outside the main lobe; recon/kw_psf.h) and the
 * transform point spread in the db4 wavelet domain (Lustig, Donoho & Pauly
 * 2007).
 *
 * Object model: a kw_pattern_analysis is a plain struct the caller declares;
 * kw_pattern_analyse_mask() / kw_pattern_analyse_trajectory() fill it and
 * allocate its two pictures (psf, picture), which kw_pattern_analysis_free()
 * releases (NULL-safe, idempotent; call it after a failure too).
 *
 * Arrays: C order. Masks are weights w (rows, cols) >= 0 (0: not sampled),
 * rows = ky for line masks (ny, nx), rows = kz for ky-kz planes (nz, ny).
 * Trajectories are (samples, ndim) float in cycles/FOV, ndim 2 or 3; of a
 * stack of stars (ndim 3) the kz = 0 partition is analysed.
 *
 * Thread safety: calls on different structs may run concurrently (the
 * FFTW planning inside holds the library's planner lock).
 */
#ifndef KW_PATTERN_ANALYSIS_H
#define KW_PATTERN_ANALYSIS_H

#include "kw_base.h"
#include "kw_psf.h"

#ifdef __cplusplus
extern "C" {
#endif

#define KW_PATTERN_TPSF_MAX_LEVELS 4

/* density weights of the non-Cartesian PSF */
typedef enum kw_pattern_weights {
    KW_PATTERN_WEIGHTS_NONE = 0,   /* unit weights (EPI: a Cartesian subset) */
    KW_PATTERN_WEIGHTS_RADIAL = 1, /* radial area ramp (kw_traj_radial_weights) */
    KW_PATTERN_WEIGHTS_PIPE = 2    /* Pipe & Menon 1999 iterative (kw_dcf_pipe) */
} kw_pattern_weights;

/* What is known of a trajectory besides its samples (from its sidecar). */
typedef struct kw_pattern_traj_desc {
    size_t n;           /* in-plane matrix N */
    size_t readout;     /* samples per readout */
    int radial;         /* full-spoke radial family: Nyquist spokes pi N / 2 */
    kw_pattern_weights weights;
    int oversampling;   /* radial: readout oversampling F (readout = F N) */
    size_t psf_size;    /* PSF grid m x m (0: min(N, 128)) */
} kw_pattern_traj_desc;

typedef struct kw_pattern_analysis {
    int cartesian;
    int plane;              /* Cartesian: 1 = ky-kz plane (nz, ny), 0 = lines (ny, nx) */
    const char *axes[2];    /* axis names in array order ("y", "x" / "z", "y") */
    size_t dims[2];
    double acceleration, sampled_fraction;
    double acs_lines;       /* NaN when not applicable */
    size_t acs_block[2];    /* along axes 0, 1 */
    double max_gap;         /* delta-k */
    double gap_axis[2];     /* Cartesian: per axis; NaN otherwise */
    kw_psf_metrics psf;
    double fwhm_main;       /* the widest phase-encode FWHM (lines: along y) */
    kw_cfloat *psfbuf;      /* the PSF itself, psfdims (owned) */
    size_t psfdims[2];
    int psfrank;
    double tpsf[KW_PATTERN_TPSF_MAX_LEVELS]; /* coherence by level, finest first */
    int tpsf_levels;        /* 0: not computed */
    double tpsf_max;        /* the largest of tpsf[], NaN when not computed */
    double nyquist_spokes;  /* radial: ceil(pi N / 2), else NaN */
    kw_pattern_weights weights;
    size_t spokes;          /* readouts per plane */
    float *picture;         /* mask or trajectory picture, values 0..1 (owned) */
    size_t pic_h, pic_w;
} kw_pattern_analysis;

/*! kw_pattern_analyse_mask(): analyse the weights w[rows * cols] (plane: 1
 * for a ky-kz plane, 0 for ky lines along x). KW_EFORMAT when nothing is
 * sampled. The PSF is the FFT of w; the picture is w / max(w). */
KW_API kw_status kw_pattern_analyse_mask(kw_pattern_analysis *a, const float *w, size_t rows,
                                         size_t cols, int plane);

/*! kw_pattern_analyse_trajectory(): analyse k[samples * ndim]; the PSF by
 * the direct NDFT on psf_size^2 pixels (progress may be NULL); the picture
 * the plane's samples on a 512 x 512 canvas over [-N/2, N/2). KW_EFORMAT when
 * the kz = 0 partition is missing or not contiguous or the plane is not
 * whole readouts. */
KW_API kw_status kw_pattern_analyse_trajectory(kw_pattern_analysis *a, const float *k,
                                               size_t samples, int ndim,
                                               const kw_pattern_traj_desc *d,
                                               kw_progress_fn progress, void *user);

/*! kw_pattern_analysis_json(): the report `kweave pattern --analyse F
 * --json R` (and the generating command's --json) writes, as JSON text
 * (kw_alloc'd, free with kw_free(); ends with a newline). `name` is written
 * under "file" (the command: the pattern file's base name or the kind; NULL:
 * null), `kind` under "pattern_kind" (NULL or "": null). Keys, in order:
 * kweave_version, file, pattern_kind, layout, axes, shape, acceleration,
 * sampled_fraction, acs_lines, acs_block, max_gap_dk, max_gap_dk_by_axis
 * (Cartesian lines), psf_fwhm_pixels, psf_fwhm_pixels_by_axis,
 * psf_mainlobe_halfwidth_pixels, psf_peak_sidelobe_at_pixels, psf_peak,
 * psf_peak_sidelobe, psf_energy_outside_mainlobe, psf_grid, psf_method,
 * psf_weights (non-Cartesian), tpsf_incoherence, tpsf_wavelet,
 * tpsf_by_level, spokes and nyquist_spokes (non-Cartesian); figures that do
 * not apply (NaN) are null. KW_EINVAL on NULL or an analysis not made. The
 * command adds nothing (--compare writes an array of these). */
KW_API kw_status kw_pattern_analysis_json(const kw_pattern_analysis *a, const char *name,
                                          const char *kind, char **json);

/*! kw_pattern_analysis_free(): release psfbuf and picture (NULL-safe). */
KW_API void kw_pattern_analysis_free(kw_pattern_analysis *a);

#ifdef __cplusplus
}
#endif
#endif /* KW_PATTERN_ANALYSIS_H */
