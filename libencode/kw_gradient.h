/* kw_gradient.h: gradient waveforms under the hardware limits: trapezoid and
 * triangle lobes, the Archimedean spiral (time-optimal for its path), and the
 * EPI echo train; spiral and EPI k-space trajectories with their sample times.
 *
 * Units: SI (T/m, T/m/s, s); gradient areas in T s / m (k = gamma-bar x
 * area, in 1/m); trajectories in cycles per FOV (k x FOV), so Cartesian
 * points are the integers -N/2 .. N/2-1 (kw_base.h).
 *
 * Amplitude and slew limits are hardware limits, not patient-safety limits:
 * peripheral nerve stimulation is governed by IEC 60601-2-33 and the
 * scanner's own supervision.
 */
#ifndef KW_GRADIENT_H
#define KW_GRADIENT_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

/* The gradient hardware of one axis (the spiral applies them to the vector). */
typedef struct kw_gradient_limits {
    double gmax_T_per_m;       /* amplitude limit, > 0 */
    double slew_T_per_m_per_s; /* slew-rate limit, > 0 */
    double raster_s;           /* gradient raster time, > 0 */
} kw_gradient_limits;

/* A trapezoid lobe (a triangle when flat_s is 0). Every duration is a whole
 * number of raster steps; the waveform starts and ends at 0. */
typedef struct kw_trapezoid {
    double amplitude_T_per_m; /* signed flat-top amplitude */
    double ramp_s;            /* each ramp (up and down are equal) */
    double flat_s;            /* flat top */
} kw_trapezoid;

/*! kw_trapezoid_duration(): ramp + flat + ramp (s). */
KW_API double kw_trapezoid_duration(const kw_trapezoid *t);

/*! kw_trapezoid_area(): the signed area amplitude x (ramp + flat) (T s/m). */
KW_API double kw_trapezoid_area(const kw_trapezoid *t);

/*! kw_trapezoid_for_area(): the shortest lobe on the raster whose area is
 * `area_T_s_per_m` exactly (sign included), with |G| <= gmax and ramps no
 * steeper than the slew limit: a triangle when |area| <= gmax^2 / slew, else
 * a trapezoid (continuous durations 2 sqrt(A/S), resp. A/gmax + gmax/S,
 * rounded up to the raster, then the amplitude lowered to keep the area).
 * Area 0 gives the empty lobe (duration 0). */
KW_API kw_status kw_trapezoid_for_area(double area_T_s_per_m, const kw_gradient_limits *lim,
                                kw_trapezoid *out);

/*! kw_trapezoid_flat(): a lobe with flat-top amplitude `amplitude_T_per_m`
 * held for at least `flat_s` (rounded up to the raster), ramps at the slew
 * limit rounded up to the raster. The amplitude is NOT checked against gmax
 * (the planner reports that limit); it must be finite. */
KW_API kw_status kw_trapezoid_flat(double amplitude_T_per_m, double flat_s,
                            const kw_gradient_limits *lim, kw_trapezoid *out);

/*! kw_trapezoid_raster_count(): number of raster points of the lobe,
 * duration / raster + 1 (corners fall on raster points). */
KW_API size_t kw_trapezoid_raster_count(const kw_trapezoid *t, double raster_s);

/*! kw_trapezoid_raster(): the lobe at t = i x raster, i = 0 .. n-1 into `g`
 * (n = kw_trapezoid_raster_count()); KW_ERANGE when cap < n. The waveform is
 * piecewise linear between these points (its area by the trapezoid rule is
 * exact). */
KW_API kw_status kw_trapezoid_raster(const kw_trapezoid *t, double raster_s, double *g, size_t cap);

/* ---- spiral ------------------------------------------------------------- */

/* An interleaved Archimedean spiral out from k = 0 to k-max = N / (2 FOV):
 * k(theta) = lambda theta e^{i theta}, lambda = interleaves / (2 pi FOV), so
 * neighbouring turns of all interleaves are 1/FOV apart (Nyquist). */
typedef struct kw_spiral_spec {
    double fov_m;    /* in-plane FOV (square) */
    int matrix;      /* N */
    int interleaves; /* >= 1; interleaf i is rotated by 2 pi i / interleaves */
    double dwell_s;  /* ADC sample spacing (1 / receiver bandwidth) */
} kw_spiral_spec;

typedef struct kw_spiral_info {
    size_t readout_points; /* gradient values per interleaf during the readout */
    size_t rampdown_points; /* values after it that bring G back to 0 */
    size_t samples;        /* ADC samples per interleaf */
    double readout_s;      /* time from k = 0 to k-max (readout per interleaf) */
    double kmax_per_m;     /* N / (2 FOV), reached exactly */
    double gmax_design_T_per_m;  /* amplitude the design used: min(gmax, 1/(gamma-bar FOV dwell)) x margin */
    double slew_design_T_per_m_per_s; /* slew the design used (limit x margin) */
} kw_spiral_info;

/*! kw_spiral_size(): design the spiral and report its sizes (the size query
 * for kw_spiral_design). The design is time-optimal for the path under the
 * amplitude limit, the slew limit (both on the gradient vector) and the
 * sampling limit |G| <= 1 / (gamma-bar FOV dwell) (one dwell must not step
 * more than 1/FOV along the path), after Lustig, Kim & Pauly, "A fast method
 * for designing time-optimal gradient waveforms for arbitrary k-space
 * trajectories", IEEE Trans Med Imaging 27(6):866-873, 2008. The raster
 * waveform is verified against the limits and redesigned with slightly lower
 * limits if a raster step breaks one. KW_ERANGE if the design would exceed
 * 4 million raster points or 64 million ADC samples (all interleaves). */
KW_API kw_status kw_spiral_size(const kw_spiral_spec *spec, const kw_gradient_limits *lim,
                         kw_spiral_info *info);

/*! kw_spiral_design(): the same design, filling any of the caller's arrays
 * that are not NULL (sizes from kw_spiral_size()):
 *   gx, gy   readout_points + rampdown_points gradient values (T/m) of
 *            interleaf 0; value j is held over [j, j+1) x raster, so k at
 *            raster point j is gamma-bar x raster x sum of the values before it;
 *   traj     (interleaves x samples, 2) floats: k in cycles per FOV, interleaf
 *            by interleaf, (kx, ky) pairs; sample m at time m x dwell;
 *   times    samples floats: time of sample m from the start of the readout (s).
 * `info` (may be NULL) receives the sizes again. */
KW_API kw_status kw_spiral_design(const kw_spiral_spec *spec, const kw_gradient_limits *lim,
                           kw_spiral_info *info, double *gx, double *gy, float *traj,
                           float *times);

/*! kw_spiral_interleaves_for(): the fewest interleaves (1 .. 4096) whose
 * readout per interleaf is at most `max_readout_s`; KW_EINFEASIBLE when even
 * 4096 do not fit. `info` (may be NULL) receives that design. */
KW_API kw_status kw_spiral_interleaves_for(const kw_spiral_spec *spec, const kw_gradient_limits *lim,
                                    double max_readout_s, int *interleaves,
                                    kw_spiral_info *info);

/* ---- EPI ---------------------------------------------------------------- */

/* A blipped Cartesian EPI echo train. The acquired phase-encode lines are the
 * last n_acq of the ny rows (partial Fourier leaves out the first, negative
 * ky, rows), n_acq = ceil(partial_fourier x ny) rounded up to a multiple of
 * shots; shot s acquires rows i0 + s, i0 + s + shots, ... Readouts alternate
 * in sign; samples lie on the flat tops only, at the Cartesian grid points
 * kx = -nx/2 .. nx/2-1 (the reversed lines in reverse order).
 * Readout lobe m (sign (-1)^m) starts at m x echo_spacing_s from the start of
 * the train, its blip at m x echo_spacing_s + blip_start_s; before the train
 * a prephaser of area -(ramp + flat)/2 x amplitude on the readout axis and
 * (first_row + s - ny/2) / (gamma-bar FOVy) on the phase axis bring k to the
 * first sample's line (the planner plays them). */
typedef struct kw_epi_spec {
    double fov_m[2];        /* x (readout), y (phase) */
    int matrix[2];          /* nx, ny; ny divisible by shots */
    double dwell_s;         /* ADC sample spacing */
    int shots;              /* >= 1 */
    double partial_fourier; /* 0.5 < f <= 1 */
} kw_epi_spec;

typedef struct kw_epi_info {
    size_t lines_per_shot;   /* echo-train length */
    size_t samples_per_shot; /* lines_per_shot x nx */
    int first_row;           /* i0: first acquired row (ky = i0 - ny/2) */
    kw_trapezoid readout;    /* one readout lobe (positive sign) */
    kw_trapezoid blip;       /* phase-encode blip between lines */
    double echo_spacing_s;   /* flat + max(2 ramp, blip) */
    double blip_start_s;     /* from the start of readout lobe m to the blip after it
                              * (on the raster, centred in the gap between flat tops) */
    double train_s;          /* first ramp up to last ramp down */
    double center_time_s;    /* time of the ky = 0 echo from the start of the train */
    int center_shot;         /* the shot that holds the ky = 0 row */
} kw_epi_info;

/*! kw_epi_size(): lobes, echo spacing and sizes (the size query); KW_EINVAL
 * with a reason for a malformed spec. The readout amplitude
 * 1 / (gamma-bar FOVx dwell) is not checked against gmax (the planner reports
 * it); the blip is the shortest lobe of area shots / (gamma-bar FOVy). */
KW_API kw_status kw_epi_size(const kw_epi_spec *spec, const kw_gradient_limits *lim, kw_epi_info *info);

/*! kw_epi_design(): fill `traj` ((shots x samples_per_shot, 2) floats, cycles
 * per FOV, shot by shot in acquisition order) and `times` (shots x
 * samples_per_shot floats: seconds from the start of each shot's train);
 * either may be NULL. */
KW_API kw_status kw_epi_design(const kw_epi_spec *spec, const kw_gradient_limits *lim,
                        kw_epi_info *info, float *traj, float *times);

#ifdef __cplusplus
}
#endif
#endif /* KW_GRADIENT_H */
