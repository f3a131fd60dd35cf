/* kw_waveform.h: a sequence programmer's own gradient waveform, checked:
 * gradient limits (amplitude, slew, per axis and of the vector), every
 * interval that breaks one, the raster of the ADC windows, duty (RMS
 * gradient), the gradient moments M0, M1, M2 at every ADC centre and at the
 * echo, the k-space trajectory at the ADC samples, and an estimate of the
 * nerve-stimulation figure dB/dt against the strength-duration limit.
 *
 * The waveform: g[samples * axes], C order (samples, axes), T/m, axes 1..3
 * in the order x, y, z (the columns of the trajectory are (kx, ky, kz) in
 * the same order). Sample i is the gradient at t_i = i raster after the
 * waveform's start, and the gradient is linear between samples (a
 * trapezoid whose corners lie on the raster is exact), zero outside
 * [t_0, t_(samples-1)]. Interval i runs from sample i to sample i + 1; its
 * slew is (g[i+1] - g[i]) / raster.
 *
 * Times: the RF centre (the excitation's isodelay point) rf_centre_s and
 * the ADC windows' starts are in seconds after the waveform's start; the
 * echo time te_s, moment times and the trajectory's times are in seconds
 * after the RF centre. An ADC window of n samples, dwell d starting at s
 * takes sample j at s + j d (j = 0..n-1); its centre is s + n d / 2 (the
 * time of sample n/2, k = 0 of a symmetric readout, as kw_traj.h counts).
 *
 * Moments (Bernstein, King & Zhou, Handbook of MRI Pulse Sequences, 2004,
 * sec. 9.1): M_n(t) = integral from the RF centre to t of G(tau) (tau -
 * t_rf)^n dtau, in T s^(n+1) / m. On the piecewise-linear waveform the
 * integrand is a polynomial of degree n + 1 <= 3 on every interval, which
 * Simpson's rule integrates exactly: the moments are exact for the sampled
 * waveform, up to double rounding.
 *
 * Trajectory: k(t) = gamma_bar M0(t) cycles/m, gamma_bar = KW_GAMMA_BAR_P
 * (CODATA 2018), times FOV per axis: cycles per FOV, kweave's convention
 * (kw_base.h), a (adc_samples, axes) array, windows one after the other.
 *
 * Nerve stimulation (an ESTIMATE: stimulation depends on the coil, the
 * body and its position; the scanner's own supervision and IEC 60601-2-33
 * govern; research and planning only): a ramp is a run of intervals on one
 * axis whose slew keeps one sign; its dB/dt = peak |slew| x radius (the
 * field change at that distance from the isocentre; default radius 0.2 m,
 * as recalled from IEC 60601-2-33 for whole-body gradients, from memory),
 * held against the strength-duration limit of the normal operating mode
 * dB/dt_limit = fraction x rheobase x (1 + chronaxie / t_eff), t_eff the
 * ramp's duration, rheobase 20 T/s, chronaxie 0.36 ms, fraction 0.8 (80 %
 * of the mean threshold) (values recalled from IEC 60601-2-33, from
 * memory: check them against the standard). The figure is 100 x dB/dt /
 * limit per ramp.
 *
 * Actual gradient: an imperfect system plays, per axis a,
 *   G_act(t) = (1 - alpha) G(t - d) + alpha y(t - d),
 *   y' = (G - y) / tau, y = 0 before the waveform,
 * d = delay_s[a], tau = response_tau_s[a], alpha = response_amp[a]:
 * alpha = 1 is a first-order low-pass of time constant tau; a small alpha
 * the usual single-exponential eddy-current term, since
 * G - alpha integral G'(s) e^{-(t-s)/tau} ds = (1 - alpha) G + alpha y
 * (integration by parts). On the piecewise-linear waveform y and its
 * integral have closed forms on every interval, so the actual k-space
 * (kw_waveform_trajectory_actual()) is exact; it obeys
 * k_nominal(t - d) - k_actual(t) = alpha tau y(t - d) x gamma_bar FOV
 * (the area the lag holds back). The moments, limits and ramps above are
 * those of the nominal waveform.
 *
 * Actual gradient: GIRF. When the options give a sampled transfer function
 * H(f) per axis (girf_*), the actual samples are the nominal samples
 * filtered by H: zero-padded to N >= 2 samples (the next power of 2;
 * a response tail shorter than the waveform's span does not wrap onto it),
 * a discrete Fourier transform in double precision, each bin f_k = k / (N
 * raster) (|f_k| <= 1 / (2 raster)) times H(f_k), the inverse transform.
 * H(f_k) is interpolated linearly in its real and imaginary parts between
 * the given frequencies; below the first given frequency f_0 > 0 between
 * conj H(f_0) at -f_0 and H(f_0) at f_0; H(-f) = conj H(f) (a real
 * response); the DC and Nyquist bins take the real part; ABOVE THE LAST
 * GIVEN FREQUENCY H = 0 (nothing is assumed outside the measured band;
 * give H up to 1 / (2 raster) to keep the whole band of the samples).
 * H = 1 to 1 / (2 raster) returns the nominal samples (to double
 * rounding); H = exp(-i 2 pi f d) with d a whole number of rasters delays
 * them by d (to the interpolation of the phase). The actual gradient is
 * then linear between its samples, and the actual k-space its exact
 * integral, as for the nominal waveform.
 *
 * Cross-axis terms (girf_cross): the output of axis b is the sum over the
 * input axes a of H_b,a applied to the samples of axis a (each as above,
 * the same bins, the same rules), so a table with H_b,a = 0 off the
 * diagonal is the per-axis GIRF.
 *
 * Actual gradient of a held waveform: the same model with a constant
 * input on every interval (y relaxes towards each held value: y = g_i +
 * (y_i - g_i) e^{-t/tau}); kw_waveform_actual() returns the mean of the
 * actual gradient over every raster interval [t_i, t_i+1) (the exact
 * integral's differences; held, they give the exact actual k at every
 * boundary), the actual trajectory the exact integral. A GIRF acts on the
 * samples as above and its output is held.
 *
 * Several RF centres (rf_centres_s: several excitations in one file, e.g.
 * repetitions): every time belongs to the segment of the last RF centre at
 * or before it (the first centre's before it), and the moments and k are
 * counted from that centre: M_n(t) = integral from t_rf(t) to t of G(tau)
 * (tau - t_rf(t))^n dtau, k restarting from 0 at each excitation (a
 * refocusing pulse, which would invert k, is not modelled). Times after
 * "the RF centre" (te_s, the moments' t_s, the trajectory's times) stay
 * counted from the first centre; an ADC window must not hold a later
 * centre after its first sample ("adc"). The actual k restarts likewise
 * (the actual gradient itself runs on across the centres: the system
 * does not know about the excitation).
 *
 * Actual gradient: cascade. A GIRF with a delay and/or a response term:
 * the GIRF acts on the samples first, then the delay and the response term
 * act (as above, in closed form) on the GIRF's output, linear between its
 * samples. The systems are linear and time-invariant, so the cascade's
 * transfer function is the product H(f) e^{-i 2 pi f d} ((1 - alpha) +
 * alpha / (1 + i 2 pi f tau)) whatever the order (convolution commutes);
 * this order keeps the delay and the response exact on the continuous
 * waveform rather than sampled onto the DFT's bins.
 *
 * Object model: kw_waveform_create() checks and computes everything and
 * keeps it; the accessors return pointers into the object, valid until
 * kw_waveform_destroy() (NULL-safe). The object is read-only after create:
 * its accessors may be used from any thread; different objects may be made
 * in different threads at once.
 *
 * Errors: KW_EINVAL / KW_ERANGE / KW_ENUMERIC with kw_last_error_param()
 * naming the argument or field at fault: "waveform" (NULL, a non-finite
 * sample: the sample and axis in the reason), "samples" (< 2), "axes"
 * (outside 1..3), "raster_s", "rf_centre_s" (NaN: not given; outside the
 * waveform), "te_s", "gmax", "slew", "tr_s", "fov_m", "adc" (a window
 * off the raster, outside the waveform, before the RF centre, dwell <= 0,
 * no samples; the window's number in the reason), "pns_radius_m",
 * "pns_rheobase", "pns_chronaxie_s", "pns_fraction", "delay_s",
 * "response_tau_s", "response_amp", "rf_centres_s" (NULL with nrf > 0,
 * more than 2^16, non-finite, outside the waveform, not strictly
 * increasing, or a first one that is not rf_centre_s), "girf" (a NULL array, a count below
 * 2, a non-finite value), "girf_freq_hz" (non-finite, negative or not strictly
 * increasing: the index in the reason), "girf_axes" (not the waveform's),
 * "options".
 */
#ifndef KW_WAVEFORM_H
#define KW_WAVEFORM_H

#include "kw_base.h"
#include "kw_pattern.h"
#include "kw_sequence.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Defaults of the nerve-stimulation estimate (values recalled from IEC
 * 60601-2-33, from memory; see above). */
#define KW_PNS_RADIUS_M 0.2
#define KW_PNS_RHEOBASE_T_PER_S 20.0
#define KW_PNS_CHRONAXIE_S 0.36e-3
#define KW_PNS_FRACTION 0.8

/* One ADC window: `samples` samples, `dwell_s` apart, the first at
 * `start_s` after the waveform's start. start_s and samples x dwell_s must
 * be whole multiples of the raster (to 1e-6 of a raster). */
typedef struct kw_waveform_adc {
    double start_s;
    double dwell_s;
    size_t samples;
} kw_waveform_adc;

typedef struct kw_waveform_options {
    size_t struct_size;   /* sizeof, set by kw_waveform_options_init() */
    double raster_s;      /* time between samples, s (10 us) */
    double rf_centre_s;   /* RF centre after the waveform's start, s (NaN:
                           * not given, refused) */
    double te_s;          /* echo time after the RF centre, s (NaN: none) */
    double gmax;          /* T/m per axis (40 mT/m) */
    double slew;          /* T/m/s per axis (150 T/m/s) */
    int limit_vector;     /* 1: the vector sums are held against gmax and
                           * slew too (axis -1 in the violations) (0) */
    double tr_s;          /* repetition for the RMS gradient (0: the
                           * waveform's span, (samples - 1) raster) */
    double fov_m[3];      /* per axis, for the trajectory (0.256 m each) */
    const kw_waveform_adc *adc; /* the ADC windows (NULL: none) */
    size_t nadc;
    double pns_radius_m;  /* KW_PNS_RADIUS_M */
    double pns_rheobase;  /* T/s, KW_PNS_RHEOBASE_T_PER_S */
    double pns_chronaxie_s; /* KW_PNS_CHRONAXIE_S */
    double pns_fraction;  /* KW_PNS_FRACTION */
    /* The imperfect gradient system, per axis (see "Actual gradient"):
     * delay (s, any sign; 0), and one first-order term of time constant
     * response_tau_s (s, >= 0; 0) and amplitude response_amp (0..1; 0):
     * amplitude 1 is a first-order low-pass, a small amplitude an eddy
     * current. */
    double delay_s[3];
    double response_tau_s[3];
    double response_amp[3];
    /* 1: sample i is held over [t_i, t_i+1) (the planner's spiral,
     * kw_gradient.h; the waveform spans samples x raster); 0: linear
     * between samples (default). Held: the moments and k are those of
     * the steps (M0 exactly the sum of G raster); the slew of interval i
     * is raster-limited, (g[i+1] - g[i]) / raster, the step between held
     * values spread over one raster (the model's steps are instantaneous;
     * a sequence's gradient raster is what its hardware plays, so the
     * limit is held against that figure); the actual gradient is the
     * delay / response of the steps in closed form (a constant input on
     * every interval), kw_waveform_actual() gives its mean over every
     * [t_i, t_i+1) (held, these have the exact actual k at every
     * boundary), and a GIRF acts on the samples, its output held. */
    int held;
    /* A measured gradient impulse response (GIRF; Vannesjo et al., "Gradient
     * system characterization by impulse response measurements with a
     * dynamic field camera", MRM 69:583-593, 2013) as a sampled transfer
     * function (see "Actual gradient: GIRF"): girf_nfreq (>= 2)
     * frequencies girf_freq_hz (Hz, >= 0, strictly increasing) and
     * girf[girf_axes * girf_nfreq] (C order (axes, nfreq)) the complex
     * H(f) per axis; girf_axes must equal the waveform's axes. NULL / 0:
     * none (default). With delay_s or a response term set too, they act
     * on the GIRF's output (the cascade, "Actual gradient: cascade"). */
    const double *girf_freq_hz;
    const kw_cdouble *girf;
    size_t girf_nfreq;
    int girf_axes;
    /* Several excitations in one waveform: nrf (>= 1) RF centres
     * rf_centres_s (s after the waveform's start, strictly increasing,
     * within the waveform); rf_centre_s is then NaN or the first of them.
     * The moments and k restart from 0 at each centre ("Several RF
     * centres" above). NULL / 0: the one centre rf_centre_s (default). */
    const double *rf_centres_s;
    size_t nrf;
    /* 1: girf holds the cross-axis terms too, a matrix of transfer
     * functions: girf[(out * axes + in) * girf_nfreq + k] = H_out,in(f_k)
     * (C order (axes, axes, nfreq)), G_act,out = sum over in of H_out,in
     * applied to G_in ("Actual gradient: GIRF"); 0: one H per axis, the
     * diagonal (default). */
    int girf_cross;
} kw_waveform_options;

/*! kw_waveform_options_init(): the defaults above (gmax, slew and raster
 * those of the planner, defaults.h) and o->struct_size = sizeof *o.
 * kw_waveform_create() copies the caller's struct over them
 * (kw_options_take()). */
KW_API void kw_waveform_options_init(kw_waveform_options *o);

/* Which limit a violation breaks. */
typedef enum kw_waveform_limit {
    KW_WAVEFORM_AMPLITUDE = 0, /* |G| > gmax: first/last are samples */
    KW_WAVEFORM_SLEW = 1       /* |dG/dt| > slew: first/last are intervals */
} kw_waveform_limit;

/* One run of consecutive samples (amplitude) or intervals (slew) over a
 * limit on one axis (0..2; -1: the vector sum). start_s / end_s: the time
 * of the first sample (interval: its start) and of the last sample
 * (interval: its end), after the waveform's start. peak: the largest |G|
 * (T/m) or |slew| (T/m/s) in the run; excess = peak - limit (same unit).
 * A value within 1e-5 of the limit (relative) counts as at the limit: the
 * rounding of a float32 file. */
typedef struct kw_waveform_violation {
    kw_waveform_limit limit;
    int axis;
    size_t first, last;
    double start_s, end_s;
    double peak, limit_value, excess;
} kw_waveform_violation;

/* Moments at one time t_s (after the RF centre), per axis (unused axes 0). */
typedef struct kw_waveform_moments {
    double t_s;
    double m0[3]; /* T s / m */
    double m1[3]; /* T s^2 / m */
    double m2[3]; /* T s^3 / m */
} kw_waveform_moments;

/* One ramp of the nerve-stimulation estimate (intervals first..last on
 * `axis`). */
typedef struct kw_waveform_ramp {
    int axis;
    size_t first, last;
    double start_s;    /* after the waveform's start */
    double duration_s; /* t_eff = (last - first + 1) raster */
    double slew;       /* peak |dG/dt| in the ramp, T/m/s */
    double dbdt;       /* slew x radius, T/s */
    double limit;      /* fraction x rheobase x (1 + chronaxie / t_eff), T/s */
    double percent;    /* 100 dbdt / limit */
} kw_waveform_ramp;

/* Whole-waveform figures. Indices: samples for amplitudes, intervals for
 * slews. */
typedef struct kw_waveform_summary {
    size_t samples;
    int axes;
    double raster_s, span_s, tr_s;
    double peak_g[3];
    size_t peak_g_at[3];
    double peak_g_vector;
    size_t peak_g_vector_at;
    double peak_slew[3];
    size_t peak_slew_at[3];
    double peak_slew_vector;
    size_t peak_slew_vector_at;
    double rms_g[3];          /* sqrt(integral G^2 dt / tr), T/m */
    double rms_g_vector;
    int starts_at_zero, ends_at_zero; /* first / last sample exactly 0 on every axis */
    size_t adc_samples;       /* over all windows */
    size_t violations, ramps;
    double pns_percent_max;   /* the largest ramp percentage (0: no ramp) */
    size_t pns_worst;         /* its index in kw_waveform_ramps() */
    double gamma_bar;         /* Hz/T used for k */
} kw_waveform_summary;

typedef struct kw_waveform kw_waveform;

/*! kw_waveform_create(): copy g[samples * axes] (T/m, C order), check it
 * and the options, and compute every figure. *w is NULL on failure. A
 * waveform over a limit is not an error: the violations list it. */
KW_API kw_status kw_waveform_create(kw_waveform **w, const double *g, size_t samples, int axes,
                                    const kw_waveform_options *o);

/*! kw_waveform_destroy(): NULL-safe. */
KW_API void kw_waveform_destroy(kw_waveform *w);

/*! kw_waveform_summary_of(): the figures above (owned by w). */
KW_API const kw_waveform_summary *kw_waveform_summary_of(const kw_waveform *w);

/*! kw_waveform_violations(): the runs over a limit, amplitude runs first,
 * then slew, each by axis then time; *n their count. Owned by w. */
KW_API const kw_waveform_violation *kw_waveform_violations(const kw_waveform *w, size_t *n);

/*! kw_waveform_ramps(): the ramps of the nerve-stimulation estimate, by
 * axis then time; *n their count. Owned by w. */
KW_API const kw_waveform_ramp *kw_waveform_ramps(const kw_waveform *w, size_t *n);

/*! kw_waveform_adc_moments(): the moments at the centre of every ADC
 * window, in the order of the options; *n = nadc. Owned by w. */
KW_API const kw_waveform_moments *kw_waveform_adc_moments(const kw_waveform *w, size_t *n);

/*! kw_waveform_moments_at(): the moments at t_s after the RF centre
 * (t_s within the waveform; KW_ERANGE naming "t_s" otherwise). */
KW_API kw_status kw_waveform_moments_at(const kw_waveform *w, double t_s, kw_waveform_moments *m);

/*! kw_waveform_trajectory(): k[adc_samples * axes] in cycles/FOV (column
 * a: gamma_bar M0_a(t) fov_m[a]) and t[adc_samples], the sample times
 * after the RF centre (t may be NULL); windows one after the other.
 * KW_EINVAL naming "adc" when there is no ADC window. */
KW_API kw_status kw_waveform_trajectory(const kw_waveform *w, float *k, float *t);

/*! kw_waveform_has_imperfection(): 1 when a delay or a response term is
 * set on some axis, or a GIRF is given (the actual gradient differs from
 * the nominal). */
KW_API int kw_waveform_has_imperfection(const kw_waveform *w);

/*! kw_waveform_actual(): the actual gradient (see above) at every sample
 * time t_i into g[samples * axes] (T/m). */
KW_API kw_status kw_waveform_actual(const kw_waveform *w, double *g);

/*! kw_waveform_trajectory_actual(): kw_waveform_trajectory() of the actual
 * gradient (exact), the same sample times. */
KW_API kw_status kw_waveform_trajectory_actual(const kw_waveform *w, float *k, float *t);

/*! kw_waveform_girf_split(): a GIRF table held as one complex array
 * table[rows * (1 + axes)], C order (rows, 1 + axes): column 0 the
 * frequency in Hz (imaginary part 0), column 1 + a H(f) of axis a; into
 * *freq_hz[rows] and *h[axes * rows] (C order (axes, rows)), both
 * kw_alloc'd (kw_free()), for kw_waveform_options' girf_* fields (which
 * kw_waveform_create() checks). KW_EINVAL naming "girf": NULL, no rows,
 * axes outside 1..3, a frequency that is not real (its row in the
 * reason); *freq_hz and *h are then NULL. With cross-axis terms the table
 * has 1 + axes x axes columns (H_xx, H_xy, ..., output axis slowest): call
 * it with axes x axes columns of H (axes 1, 4 or 9 here) and set
 * girf_cross; *h is then (axes, axes, rows) in the options' order. */
KW_API kw_status kw_waveform_girf_split(const kw_cfloat *table, size_t rows, int axes, double **freq_hz,
                                        kw_cdouble **h);

/*! kw_waveform_pns_limit(): fraction x rheobase x (1 + chronaxie / t_eff)
 * in T/s (NaN for t_eff <= 0 or non-finite arguments). */
KW_API double kw_waveform_pns_limit(double t_eff_s, double rheobase, double chronaxie_s,
                                    double fraction);

/*! kw_waveform_epi(): the gradient waveform of one shot (0-based) of the
 * EPI train kw_pattern_create(o) makes (kind KW_PATTERN_EPI; the planner's
 * design, kw_gradient.h), in this header's format: g (samples, 2) T/m,
 * x the readout, y the phase encoding, on the design's raster, the RF
 * centre at t = 0; the prephasers (the shortest trapezoids of the areas
 * that bring k to the first line: kw_trapezoid_for_area()) from sample 0,
 * the train after them; one ADC window per line with the sample times of
 * kw_epi_design() (forward lines from the echo - nx/2 dwell, reversed ones
 * from the echo - (nx/2 - 1) dwell). Imported with kw_waveform_create()
 * (rf_centre_s 0, these windows), its trajectory is the pattern's rows of
 * that shot. The windows lie on the raster when the dwell does (e.g. the
 * dwell equal to the raster). Size query: with g NULL, *samples and *nadc
 * receive the sizes; otherwise they give the room in g (rows) and adc and
 * receive the sizes (KW_ERANGE naming "samples" when short). Errors of
 * kw_pattern_create() pass through; "kind" when not EPI, "shot" outside
 * 0..shots-1. */
KW_API kw_status kw_waveform_epi(const kw_pattern_options *o, int shot, double *g, size_t *samples,
                                 kw_waveform_adc *adc, size_t *nadc);

/*! kw_waveform_estimate_delay(): the gradient delay from radial data by
 * the shift between opposed spokes' echoes (Peters, Derbyshire & McVeigh,
 * "Centering the projection reconstruction trajectory: reducing gradient
 * delay errors", MRM 50:1-6, 2003). data: (coils, spokes * n) samples,
 * spoke after spoke, n per spoke on the readout's flat top, dwell_s apart;
 * spoke s and spoke s + spokes/2 run along the same line in opposite
 * directions (spokes even), sample n/2 at k = 0 nominally. A delay d moves
 * every sample back along its spoke by d / dwell samples, so the second
 * spoke of a pair, reversed, is the first shifted by 1 + 2 d / dwell
 * samples (the one from reversing an even count about n/2); the shift is
 * the slope of the phase of P_b(x) P_a(x)* over the projection position x
 * (P the inverse DFT of a spoke), taken from the sum over pairs, coils and
 * x of C(x+1) C(x)*, C = P_b P_a*. One delay for every axis (isotropic).
 * *delay_s in s. KW_EINVAL naming "spokes" (odd, < 2), "n" (< 4), "dwell_s"
 * (<= 0), "data" (NULL, non-finite, or no signal). */
KW_API kw_status kw_waveform_estimate_delay(const kw_cfloat *data, size_t coils, size_t spokes, size_t n,
                                            double dwell_s, double *delay_s);

/*! kw_waveform_estimate_delay_axes(): the gradient delay of each axis from
 * radial data (the same data and pairing as kw_waveform_estimate_delay();
 * Peters et al. 2003 measure the echo shift of opposed spokes). dir:
 * (spokes, axes) the readout direction of each spoke (any length, e.g. the
 * gradient at its centre, kw_waveform_adc_directions(); only the first
 * spoke of each pair is read). Derivation: on a readout of gradient
 * G u (u a unit vector) with delays d_a per axis, axis a plays
 * G u_a (t - d_a), so the sample taken at t lies at k_nominal(t) -
 * gamma_bar G (d_a u_a)_a: its component along the spoke is -gamma_bar G
 * sum_a d_a u_a^2 (the echo moves by sum_a d_a u_a^2 / dwell samples, the
 * pair's effective delay d(u) = sum_a d_a u_a^2, d_x cos^2 + d_y sin^2 in a
 * plane), the rest is a sideways offset gamma_bar G (d_x - d_y) cos sin
 * that does not move the echo. Each pair gives d(u) as
 * kw_waveform_estimate_delay() gives d; the delays are the least-squares
 * fit of d(u) = sum_a d_a u_a^2 over the pairs. The sideways offset
 * (unequal delays only) biases the phase slope of a pair off the axes by
 * an amount that depends on the object (none for an object whose
 * projections' columns share one centroid, e.g. a Gaussian blob; measured
 * 0.43 us at 45 degrees on encode's Shepp-Logan with dx - dy = 3 us) and
 * vanishes along an axis, where Peters et al. measure; so each pair is
 * weighted by the magnitude of its phase-slope sum (its signal) times
 * (1 - sigma)^4, sigma = min(1, sqrt(2 (1 - sum_a u_a^4))) (|sin 2 theta|
 * in a plane: 0 on an axis, 1 at 45 degrees), which favours the pairs near
 * the axes (the exponent is our choice, no source: on the Shepp-Logan case
 * above the fit is 1.80 / -1.23 us weighted by the signal alone, 1.97 /
 * -1.02 us with the factor). delay_s[axes] in s; NaN for an axis along which no pair
 * of non-zero weight runs.
 * Errors of kw_waveform_estimate_delay(), "axes" (outside 1..3), "dir"
 * (NULL, non-finite, a zero row, or directions that cannot tell the axes
 * apart: every pair at 45 degrees to the axes it crosses). */
KW_API kw_status kw_waveform_estimate_delay_axes(const kw_cfloat *data, size_t coils, size_t spokes, size_t n,
                                                 double dwell_s, const double *dir, int axes, double *delay_s);

/*! kw_waveform_adc_directions(): the nominal gradient (T/m) at the centre
 * of every ADC window, dir[nadc * axes] (C order (windows, axes)): the
 * readout direction of each spoke for kw_waveform_estimate_delay_axes().
 * KW_EINVAL naming "adc" when there is no window. */
KW_API kw_status kw_waveform_adc_directions(const kw_waveform *w, double *dir);

/* The timing keys of a waveform's JSON sidecar (kweave waveform's): NaN
 * where the text has none. */
typedef struct kw_waveform_timing {
    double raster_s, rf_centre_s, te_s, tr_s;
    kw_waveform_adc *adc; /* kw_alloc'd, free with kw_free(); NULL: no "adc" */
    size_t nadc;
    int held;             /* -1: no "held" key; else its value (true 1) */
} kw_waveform_timing;

/*! kw_waveform_timing_parse(): read a JSON object's keys raster_s,
 * rf_centre_s, te_s, tr_s (numbers or null) and adc (null or a list of
 * {start_s or start_sample, samples, dwell_s}; start_sample counts rasters
 * of `raster_s` when it is > 0, else of the text's raster_s, else 10 us).
 * KW_EFORMAT naming "json" (not an object), the key ("rf_centre_s", ...)
 * or "adc" (the entry's number in the reason); *t is then empty. */
KW_API kw_status kw_waveform_timing_parse(const char *json, double raster_s, kw_waveform_timing *t);

/*! kw_waveform_trajectory_json(): the sidecar of a trajectory file written
 * from kw_waveform_trajectory() (actual 0) or kw_waveform_trajectory_actual()
 * (actual 1) padded to max(2, axes) columns, as JSON text (kw_alloc'd,
 * free with kw_free()): kweave_version, kind ("trajectory"), layout
 * ("noncartesian"), pattern_kind ("waveform"), shape, columns, units
 * ("cycles/FOV"), readouts (the ADC windows), fov_m, raster_s,
 * gamma_bar_Hz_per_T, waveform (`source`), times (`times_name`),
 * times_origin ("RF centre"), gradient ("nominal" | "actual"; actual also
 * delay_s, response_tau_s, response_amp), safety_caution. */
KW_API kw_status kw_waveform_trajectory_json(const kw_waveform *w, int actual, const char *times_name,
                                             const char *source, char **json);

/*! kw_waveform_adc_parse(): ADC windows from text
 * "START:SAMPLES:DWELL[,...]" (START a time with its unit, "1.2ms", or a
 * sample index, a whole number without unit, counted in rasters of
 * raster_s; DWELL a time, "4us"); *adc kw_alloc'd (kw_free()), *n windows.
 * KW_EINVAL naming "adc" with the reason. */
KW_API kw_status kw_waveform_adc_parse(const char *text, double raster_s, kw_waveform_adc **adc, size_t *n);

/*! kw_waveform_table_parse(): a waveform written as a plain text table:
 * one sample a line, 1 to 3 numbers (T/m, axes x, y, z) separated by
 * commas, semicolons, tabs or spaces; '#' starts a comment; empty lines
 * and a first line of column names are skipped. *g (samples, axes),
 * kw_alloc'd (kw_free()). KW_EFORMAT naming "waveform" with the line at
 * fault (not numbers, more than 3 columns, a different count). Non-finite
 * numbers are read; kw_waveform_create() refuses them. */
KW_API kw_status kw_waveform_table_parse(const char *text, double **g, size_t *samples, int *axes);

/*! kw_waveform_spiral(): interleaf `interleaf` (0-based) of the spiral
 * kw_pattern_create(o) makes (kind KW_PATTERN_SPIRAL; the planner's
 * design, kw_gradient.h) as a waveform (samples, 2) T/m, x and y, each
 * value held over one raster interval (options' held = 1), the RF centre
 * and the readout's start at t = 0, one ADC window of the design's samples
 * and dwell from t = 0. Imported with kw_waveform_create() (held 1,
 * rf_centre_s 0), its trajectory is the pattern's rows of that interleaf.
 * Sizes and errors as kw_waveform_epi() ("interleaf" outside
 * 0..interleaves-1). */
KW_API kw_status kw_waveform_spiral(const kw_pattern_options *o, int interleaf, double *g, size_t *samples,
                                    kw_waveform_adc *adc, size_t *nadc);

/*! kw_waveform_plan(): the lobes of a gradient-echo plan (kw_plan_create(),
 * sequence KW_SEQ_GRE: slice select, rephaser, readout prephaser, phase
 * encode (the plan's largest step), readout, spoiler and rewinder, at the
 * times of its timeline) as a waveform (samples, 3) T/m, x the readout, y
 * the phase encoding, z the slice, on the plan's raster, one repetition
 * (timeline_s, the TR as used; samples = TR / raster + 1); the RF centre
 * (*rf_centre_s: the excitation's centre, s after the start), its one ADC
 * window (the plan's, nx samples of its dwell) and *te_s (the window's
 * centre after the RF centre: the plan's TE as laid out). Imported with
 * kw_waveform_create(), M0 on x at TE is 0 (the prephaser's area is minus
 * half the readout's), M0 on y the phase encode's area, M0 on z 0 (the
 * rephaser undoes the slice select after the RF centre). Size query: with
 * g NULL, *samples receives the count; otherwise it gives the room in g
 * (rows; KW_ERANGE naming "samples" when short). KW_EINVAL naming "kind"
 * for another sequence, "adc" when the plan's window is not a whole number
 * of rasters from the start (choose a readout of whole rasters). */
KW_API kw_status kw_waveform_plan(const kw_plan_report *r, double *g, size_t *samples, kw_waveform_adc *adc,
                                  double *rf_centre_s, double *te_s);

/*! kw_waveform_report_json(): the report as JSON text (kw_alloc'd, free
 * with kw_free(); ends with a newline): kweave_version, kind ("waveform"),
 * samples, axes, raster_s, span_s, tr_s, rf_centre_s, te_s (null when
 * none), gmax_T_per_m, slew_T_per_m_per_s, limit_vector, held, peak_G_T_per_m
 * (per axis), peak_G_sample, peak_G_vector_T_per_m, peak_G_vector_sample,
 * peak_slew_T_per_m_per_s, peak_slew_interval, peak_slew_vector_T_per_m_per_s,
 * peak_slew_vector_interval, rms_G_T_per_m, rms_G_vector_T_per_m,
 * duty_percent (100 rms / gmax per axis), starts_at_zero, ends_at_zero,
 * raster_ok, within_limits, violations [{limit ("amplitude"|"slew"), axis
 * ("x","y","z","vector"), first, last, start_s, end_s, peak, limit_value,
 * excess}], adc [{start_s, dwell_s, samples, centre_s, m0, m1, m2}], echo
 * ({t_s, m0, m1, m2} or null), gamma_bar_Hz_per_T, fov_m, actual
 * ({delay_s, response_tau_s, response_amp} per axis, or null), pns {estimate
 * (true), radius_m, rheobase_T_per_s, chronaxie_s, fraction, source,
 * caution, percent_max, worst (the ramp or null), ramps [{axis, first,
 * last, start_s, duration_s, slew, dbdt_T_per_s, limit_T_per_s,
 * percent}]}, safety_caution. NaN figures are null. */
KW_API kw_status kw_waveform_report_json(const kw_waveform *w, char **json);

#ifdef __cplusplus
}
#endif
#endif /* KW_WAVEFORM_H */
