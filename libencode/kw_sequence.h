/* kw_sequence.h: the protocol planner. A protocol (kw_protocol.h) becomes a
 * sequence timing built from gradient lobes under the hardware limits
 * (kw_gradient.h): minimum TE and TR, readout and dwell, chemical shift, EPI
 * distortion, readout/T2*, the relative SNR factor, a table of limits with
 * margins and, when a limit fails, the nearest feasible protocol.
 *
 * Timing model (documented in docs/planner.md): one TR starts with the
 * slice-select lobe of the excitation; TE runs from the centre of the
 * excitation pulse to the k-space centre (the flat-top centre of the readout,
 * the ky = 0 echo for EPI, the spiral start); TR is the length of one
 * repetition with TE as used. Every duration is a whole number of raster
 * steps except the RF pulse, which is rounded up to the raster too.
 *
 * Safety: the limits here are hardware limits, not patient-safety limits
 * (IEC 60601-2-33: PNS and SAR belong to the scanner's own supervision).
 */
#ifndef KW_SEQUENCE_H
#define KW_SEQUENCE_H

#include "kw_gradient.h"
#include "kw_protocol.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Fat-water chemical shift used for the displacement (ppm of the Larmor
 * frequency): methylene at about 1.3 ppm against water at 4.7 ppm, 3.4 ppm
 * (common practice, no source; recalled from memory). */
#define KW_FAT_WATER_PPM 3.4

#define KW_PLAN_MAX_LIMITS 12
#define KW_PLAN_MAX_EVENTS 48

/* One row of the table of limits. */
typedef struct kw_limit {
    const char *name;  /* e.g. "readout_gradient" (static string) */
    double required;
    double available;
    const char *unit;  /* "T/m", "T/m/s", "s" */
    int ok;            /* required <= available */
} kw_limit;

/* Where things happen in one TR (for the timing diagram). */
typedef enum kw_event_axis {
    KW_AX_RF = 0,    /* RF pulse: t0 .. t1 */
    KW_AX_SLICE = 1, /* gradient lobes on the three axes */
    KW_AX_PHASE = 2,
    KW_AX_READ = 3,
    KW_AX_ADC = 4    /* receiver window: t0 .. t1 */
} kw_event_axis;

typedef enum kw_event_kind {
    KW_EV_LOBE = 0,      /* `lobe` starting at t0 */
    KW_EV_RF_EXCITE = 1, /* excitation pulse */
    KW_EV_RF_REFOCUS = 2,/* refocusing pulse */
    KW_EV_ADC = 3,       /* receiver window */
    KW_EV_EPI_TRAIN = 4, /* the EPI echo train (kw_epi_size of the report's spec) from t0 */
    KW_EV_SPIRAL = 5     /* the spiral waveform (kw_spiral_design) from t0 on read (x) and phase (y) */
} kw_event_kind;

typedef struct kw_event {
    kw_event_axis axis;
    kw_event_kind kind;
    double t0, t1;       /* s from the start of the TR */
    kw_trapezoid lobe;   /* for KW_EV_LOBE */
    const char *label;   /* static string */
} kw_event;

/* Nearest feasible protocol: each value is the best one with the rest of the
 * protocol held; has_* says which apply (their limit failed). */
typedef struct kw_nearest {
    int has_bandwidth;     /* readout gradient over gmax */
    double bandwidth_hz;   /* largest receiver bandwidth across the FOV */
    double bandwidth_per_pixel_hz;
    int has_matrix;        /* same failure, bandwidth per pixel held */
    int matrix_x;          /* largest readout matrix at the same FOV */
    double pixel_size_x_m; /* smallest readout pixel */
    int has_slice;         /* slice-select gradient over gmax */
    double slice_m;        /* thinnest slice (slab in 3-D) */
    double rf_duration_s;  /* or the shortest pulse for the slice asked */
    int has_te;
    double te_s;           /* shortest TE */
    int has_tr;
    double tr_s;           /* shortest TR */
    int has_interleaves;
    int interleaves;       /* fewest spiral interleaves within max-readout */
    /* all of the above applied together, re-planned and feasible */
    int has_combined;
    kw_protocol combined;
} kw_nearest;

typedef struct kw_plan_report {
    kw_protocol protocol;   /* as asked */
    kw_plan_basic basic;
    int feasible;
    /* timing */
    double min_te_s, min_tr_s;
    double te_s, tr_s;      /* as used: the requested ones, else the minimum */
    double readout_duration_s; /* one acquisition window: nx x dwell (spiral: per interleaf) */
    double dwell_s;
    double bandwidth_per_pixel_hz;
    double rf_duration_s;   /* rounded up to the raster */
    double slice_gradient_T_per_m; /* (TBW / T_rf) / (gamma-bar x slice) */
    double slice_m;         /* slice (2-D) or slab (3-D) thickness */
    /* chemical shift (fat-water, KW_FAT_WATER_PPM) */
    double fat_water_hz;
    double chemical_shift_pixels; /* readout direction; NAN for spiral (blur, not shift) */
    double chemical_shift_mm;
    double chemical_shift_phase_pixels; /* EPI only, else 0 */
    double chemical_shift_phase_mm;
    /* EPI */
    double echo_spacing_s;
    double distortion_pixels_per_hz; /* ny x echo spacing / shots */
    int echo_train_length;
    double echo_train_s;
    /* radial */
    int spokes_nyquist;     /* ceil(pi/2 x N) */
    int spokes;             /* as used */
    /* spiral */
    int interleaves;        /* as used */
    double readout_per_interleave_s;
    kw_spiral_info spiral;
    /* relaxation and SNR */
    double readout_to_t2star; /* readout duration (EPI: the whole echo train, the time the
                                 signal decays over) / T2*; NAN without a T2* */
    double voxel_volume_m3;
    double total_sampling_time_s; /* ADC time of the whole scan */
    double snr_factor;      /* voxel volume x sqrt(total sampling time), m^3 s^0.5 */
    double scan_time_s;     /* repetitions x TR (per slice in 2-D) */
    /* lobes */
    kw_trapezoid readout, prephaser, phase_encode, partition_encode, slice_select,
        slice_rephaser, spoiler, crusher;
    double max_slew_used_T_per_m_per_s;
    /* limits */
    kw_limit limits[KW_PLAN_MAX_LIMITS];
    int nlimits;
    kw_nearest nearest;     /* meaningful when !feasible */
    /* timeline of one TR */
    kw_event events[KW_PLAN_MAX_EVENTS];
    int nevents;
    double timeline_s;      /* TR as used */
} kw_plan_report;

/*! kw_plan_create(): plan `p` into a new report (free with
 * kw_plan_destroy). KW_EINVAL with "<field>: <why>" for a malformed protocol;
 * an infeasible protocol is NOT an error: the report says so (feasible = 0,
 * the failing limits, the nearest feasible protocol). */
KW_API kw_status kw_plan_create(kw_plan_report **out, const kw_protocol *p);

/*! kw_plan_destroy(): free a report (NULL-safe). */
KW_API void kw_plan_destroy(kw_plan_report *r);

/*! kw_plan_spiral_spec() / kw_plan_epi_spec(): the trajectory specs the
 * report was planned with (for drawing and for trajectory export). */
KW_API void kw_plan_spiral_spec(const kw_plan_report *r, kw_spiral_spec *s);
KW_API void kw_plan_epi_spec(const kw_plan_report *r, kw_epi_spec *s);

/*! kw_plan_limits(): the hardware limits of a protocol as kw_gradient_limits. */
KW_API kw_gradient_limits kw_plan_limits(const kw_protocol *p);

#ifdef __cplusplus
}
#endif
#endif /* KW_SEQUENCE_H */
