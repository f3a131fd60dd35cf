/* kw_protocol.h: an MR protocol (field of view, matrix, receiver bandwidth,
 * field strength, gradient limits, timing) and the Cartesian numbers it
 * implies: Larmor frequency, pixel size, delta-k, k-max, dwell time, readout
 * duration, bandwidth per pixel, readout gradient, equilibrium polarization.
 *
 * Conventions: SI units throughout (m, s, T, T/m, T/m/s, Hz, K). Axis 0 is x,
 * the readout (frequency-encode) direction, columns, nx; axis 1 is y, the
 * phase-encode direction, rows, ny; axis 2 is z (3-D only), nz.
 * The receiver bandwidth `bandwidth_hz` is the full bandwidth across the FOV,
 * 1 / dwell; the bandwidth per pixel is bandwidth_hz / nx = 1 / readout
 * duration.
 */
#ifndef KW_PROTOCOL_H
#define KW_PROTOCOL_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum kw_sequence_kind {
    KW_SEQ_GRE = 0,    /* spoiled gradient echo (2-D or 3-D) */
    KW_SEQ_SE = 1,     /* spin echo (refocusing pulse and crushers) */
    KW_SEQ_EPI = 2,    /* single- or multi-shot gradient-echo EPI */
    KW_SEQ_RADIAL = 3, /* radial spokes through the k-space centre */
    KW_SEQ_SPIRAL = 4  /* Archimedean spiral out, interleaved */
} kw_sequence_kind;

/* A protocol. kw_protocol_defaults() fills every field; 0 in te_s, tr_s,
 * t2star_s, interleaves, spokes means "not given" (minimum / automatic). */
typedef struct kw_protocol {
    kw_sequence_kind sequence;
    int ndim;                  /* 2 or 3 */
    double fov_m[3];           /* x (readout), y (phase), z (3-D) */
    int matrix[3];             /* nx, ny, nz */
    double bandwidth_hz;       /* receiver bandwidth across the FOV (1/dwell) */
    double b0_t;               /* main field */
    double gmax_T_per_m;       /* gradient amplitude limit per axis */
    double slew_T_per_m_per_s; /* slew-rate limit per axis */
    double raster_s;           /* gradient raster time */
    double temperature_k;      /* sample temperature (polarization) */
    double te_s, tr_s;         /* requested; 0: the minimum */
    double rf_duration_s;      /* excitation (and refocusing) pulse duration */
    double tbw;                /* time-bandwidth product of the pulses */
    double slice_m;            /* slice thickness (2-D); slab = fov z in 3-D */
    double spoiler_cycles;     /* spoiler: cycles of phase across the slice (0: none) */
    double crusher_cycles;     /* SE crushers: cycles of phase across the slice */
    double t2star_s;           /* T2* for the readout/T2* ratio; 0: not given */
    int shots;                 /* EPI shots (1: single shot) */
    double partial_fourier;    /* EPI fraction of phase-encode lines, 0.5 < f <= 1 */
    int interleaves;           /* spiral interleaves; 0: fewest that fit max_readout_s */
    double max_readout_s;      /* spiral: longest readout per interleaf */
    int spokes;                /* radial spokes; 0: the Nyquist number */
    int averages;              /* signal averages (relative SNR) */
} kw_protocol;

/*! kw_protocol_defaults(): a 2-D GRE at 3 T: FOV 256 mm, 256 x 256,
 * 250 Hz/pixel (64 kHz), 40 mT/m, 150 T/m/s, raster 10 us, 310 K, 2 ms pulse
 * of TBW 4, 5 mm slice, no spoiler, 2-cycle crushers, 1 shot, full Fourier,
 * automatic interleaves with 10 ms longest spiral readout, Nyquist spokes,
 * 1 average. (Common practice values, no source.) */
KW_API void kw_protocol_defaults(kw_protocol *p);

/*! kw_protocol_check(): KW_OK when every field is usable, else KW_EINVAL
 * with "<field>: <why>" in kw_last_error() (zero/negative/NaN values, matrix
 * too large, partial Fourier out of range, a non-square in-plane FOV or
 * matrix for radial and spiral). A protocol that is well formed but breaks a
 * hardware limit passes: that is the planner's job to report. */
KW_API kw_status kw_protocol_check(const kw_protocol *p);

/*! kw_larmor_hz(): proton Larmor frequency gamma-bar x B0 (CODATA 2018). */
KW_API double kw_larmor_hz(double b0_t);

/*! kw_polarization(): equilibrium spin-1/2 polarization of protons,
 * tanh(gamma hbar B0 / (2 k T)) (Boltzmann distribution of the two levels). */
KW_API double kw_polarization(double b0_t, double temperature_k);

/* The Cartesian numbers of a protocol (issue "Cartesian basics"). */
typedef struct kw_plan_basic {
    double larmor_hz;
    double pixel_size_m[3];   /* fov / matrix */
    double delta_k_per_m[3];  /* 1 / fov */
    double k_max_per_m[3];    /* matrix / (2 fov) = 1 / (2 pixel) */
    double dwell_s;           /* 1 / bandwidth_hz */
    double readout_duration_s; /* nx x dwell = 1 / bandwidth per pixel */
    double bandwidth_hz;
    double bandwidth_per_pixel_hz;
    double readout_gradient_T_per_m; /* bandwidth / (gamma-bar x fov_x) */
    double polarization;
    int readout_fits; /* readout gradient <= gmax */
} kw_plan_basic;

/*! kw_plan_basics(): fill `out` from `p` (checked with kw_protocol_check). */
KW_API kw_status kw_plan_basics(const kw_protocol *p, kw_plan_basic *out);

#ifdef __cplusplus
}
#endif
#endif /* KW_PROTOCOL_H */
