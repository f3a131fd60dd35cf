/* protocol.c: protocol defaults, checks and the Cartesian basics. */
#include "kw_protocol.h"

#include <math.h>

#include "defaults.h"

/* The largest matrix along one axis the planner accepts. */
#define KW_PLAN_MAX_MATRIX 8192

void kw_protocol_defaults(kw_protocol *p)
{
    *p = (kw_protocol){0};
    p->sequence = KW_SEQ_GRE;
    p->ndim = 2;
    p->fov_m[0] = p->fov_m[1] = p->fov_m[2] = KWD_FOV_M;
    p->matrix[0] = p->matrix[1] = 256;
    p->matrix[2] = 1;
    p->bandwidth_hz = KWD_BW_PER_PIXEL_HZ * 256;
    p->b0_t = KWD_B0_T;
    p->gmax_T_per_m = KWD_GMAX_T_PER_M;
    p->slew_T_per_m_per_s = KWD_SLEW_T_PER_M_PER_S;
    p->raster_s = KWD_RASTER_S;
    p->temperature_k = 310.0;
    p->rf_duration_s = 2e-3;
    p->tbw = 4.0;
    p->slice_m = 5e-3;
    p->spoiler_cycles = 0.0;
    p->crusher_cycles = 2.0;
    p->shots = KWD_EPI_SHOTS;
    p->partial_fourier = 1.0;
    p->max_readout_s = KWD_SPIRAL_MAX_READOUT_S;
    p->averages = 1;
}

static int pos(double v) { return isfinite(v) && v > 0; }

kw_status kw_protocol_check(const kw_protocol *p)
{
    KW_FAIL_IF(!p, KW_EINVAL, "protocol: missing");
    KW_FAIL_IF(p->sequence < KW_SEQ_GRE || p->sequence > KW_SEQ_SPIRAL, KW_EINVAL,
               "sequence: unknown kind %d", (int)p->sequence);
    KW_FAIL_IF(p->ndim != 2 && p->ndim != 3, KW_EINVAL, "matrix: 2 or 3 dimensions, not %d",
               p->ndim);
    static const char *const ax = "xyz";
    for (int d = 0; d < p->ndim; d++) {
        KW_FAIL_IF(!pos(p->fov_m[d]), KW_EINVAL, "fov: %c must be a positive length (got %g m)",
                   ax[d], p->fov_m[d]);
        KW_FAIL_IF(p->fov_m[d] > 10.0, KW_EINVAL, "fov: %c = %g m is absurd (over 10 m)", ax[d],
                   p->fov_m[d]);
        KW_FAIL_IF(p->matrix[d] < 1, KW_EINVAL, "matrix: %c must be at least 1 (got %d)", ax[d],
                   p->matrix[d]);
        KW_FAIL_IF(p->matrix[d] > KW_PLAN_MAX_MATRIX, KW_EINVAL,
                   "matrix: %c = %d exceeds %d", ax[d], p->matrix[d], KW_PLAN_MAX_MATRIX);
    }
    KW_FAIL_IF(p->matrix[0] < 2, KW_EINVAL, "matrix: x needs at least 2 samples");
    KW_FAIL_IF(!pos(p->bandwidth_hz), KW_EINVAL, "bandwidth: must be positive (got %g Hz)",
               p->bandwidth_hz);
    KW_FAIL_IF(p->bandwidth_hz > 100e6, KW_EINVAL, "bandwidth: %g Hz is absurd (over 100 MHz)",
               p->bandwidth_hz);
    /* a readout (matrix / bandwidth) over 1 s: no echo lives that long */
    KW_FAIL_IF(p->bandwidth_hz < (double)p->matrix[0], KW_EINVAL,
               "bandwidth: %g Hz/pixel is absurd (a readout of %g s; at least 1 Hz/pixel)",
               p->bandwidth_hz / p->matrix[0], p->matrix[0] / p->bandwidth_hz);
    KW_FAIL_IF(!pos(p->b0_t) || p->b0_t > 100, KW_EINVAL,
               "b0: must be a positive field up to 100 T (got %g T)", p->b0_t);
    KW_FAIL_IF(!pos(p->gmax_T_per_m) || p->gmax_T_per_m > 10, KW_EINVAL,
               "gmax: must be positive, up to 10 T/m (got %g T/m)", p->gmax_T_per_m);
    KW_FAIL_IF(!pos(p->slew_T_per_m_per_s) || p->slew_T_per_m_per_s > 1e5, KW_EINVAL,
               "slew: must be positive, up to 1e5 T/m/s (got %g T/m/s)", p->slew_T_per_m_per_s);
    KW_FAIL_IF(!pos(p->raster_s) || p->raster_s > 1e-3, KW_EINVAL,
               "raster: must be positive, up to 1 ms (got %g s)", p->raster_s);
    KW_FAIL_IF(!pos(p->temperature_k) || p->temperature_k > 1e4, KW_EINVAL,
               "temperature: must be above 0 K (got %g K)", p->temperature_k);
    KW_FAIL_IF(!isfinite(p->te_s) || p->te_s < 0 || p->te_s > 10, KW_EINVAL,
               "te: must be positive, up to 10 s (got %g s)", p->te_s);
    KW_FAIL_IF(!isfinite(p->tr_s) || p->tr_s < 0 || p->tr_s > 100, KW_EINVAL,
               "tr: must be positive, up to 100 s (got %g s)", p->tr_s);
    KW_FAIL_IF(!pos(p->rf_duration_s) || p->rf_duration_s > 0.1, KW_EINVAL,
               "rf-duration: must be positive, up to 100 ms (got %g s)", p->rf_duration_s);
    KW_FAIL_IF(!pos(p->tbw) || p->tbw > 1000, KW_EINVAL,
               "tbw: must be positive, up to 1000 (got %g)", p->tbw);
    KW_FAIL_IF(!pos(p->slice_m) || p->slice_m > 1, KW_EINVAL,
               "slice: must be a positive length up to 1 m (got %g m)", p->slice_m);
    KW_FAIL_IF(!isfinite(p->spoiler_cycles) || p->spoiler_cycles < 0 ||
                   p->spoiler_cycles > 1000, KW_EINVAL,
               "spoiler: 0 to 1000 cycles across the slice (got %g)", p->spoiler_cycles);
    KW_FAIL_IF(!isfinite(p->crusher_cycles) || p->crusher_cycles < 0 ||
                   p->crusher_cycles > 1000, KW_EINVAL,
               "crusher: 0 to 1000 cycles across the slice (got %g)", p->crusher_cycles);
    KW_FAIL_IF(!isfinite(p->t2star_s) || p->t2star_s < 0 || p->t2star_s > 100, KW_EINVAL,
               "t2star: must be positive (got %g s)", p->t2star_s);
    KW_FAIL_IF(p->shots < 1 || p->shots > p->matrix[1], KW_EINVAL,
               "shots: 1 to ny = %d (got %d)", p->matrix[1], p->shots);
    KW_FAIL_IF(!isfinite(p->partial_fourier) || p->partial_fourier <= 0.5 ||
                   p->partial_fourier > 1.0, KW_EINVAL,
               "partial-fourier: a fraction above 0.5 and at most 1 (got %g)",
               p->partial_fourier);
    KW_FAIL_IF(p->interleaves < 0 || p->interleaves > 4096, KW_EINVAL,
               "interleaves: 1 to 4096, or 0 for automatic (got %d)", p->interleaves);
    KW_FAIL_IF(!pos(p->max_readout_s) || p->max_readout_s > 1.0, KW_EINVAL,
               "max-readout: must be positive, up to 1 s (got %g s)", p->max_readout_s);
    KW_FAIL_IF(p->spokes < 0 || p->spokes > 1000000, KW_EINVAL,
               "spokes: 1 to 1000000, or 0 for Nyquist (got %d)", p->spokes);
    KW_FAIL_IF(p->averages < 1 || p->averages > 100000, KW_EINVAL,
               "averages: 1 to 100000 (got %d)", p->averages);
    if (p->sequence == KW_SEQ_RADIAL || p->sequence == KW_SEQ_SPIRAL) {
        KW_FAIL_IF(p->fov_m[0] != p->fov_m[1], KW_EINVAL,
                   "fov: %s needs a square in-plane FOV (got %g m x %g m)",
                   p->sequence == KW_SEQ_RADIAL ? "radial" : "spiral", p->fov_m[0], p->fov_m[1]);
        KW_FAIL_IF(p->matrix[0] != p->matrix[1], KW_EINVAL,
                   "matrix: %s needs a square in-plane matrix (got %dx%d)",
                   p->sequence == KW_SEQ_RADIAL ? "radial" : "spiral", p->matrix[0],
                   p->matrix[1]);
    }
    return KW_OK;
}

double kw_larmor_hz(double b0_t) { return KW_GAMMA_BAR_P * b0_t; }

double kw_polarization(double b0_t, double temperature_k)
{
    /* Two Zeeman levels split by gamma hbar B0, populated by Boltzmann's law:
     * P = (N+ - N-)/(N+ + N-) = tanh(gamma hbar B0 / (2 k T)). */
    return tanh(KW_GAMMA_P * KW_HBAR * b0_t / (2.0 * KW_BOLTZMANN * temperature_k));
}

kw_status kw_plan_basics(const kw_protocol *p, kw_plan_basic *out)
{
    kw_status st = kw_protocol_check(p);
    if (st)
        return st;
    KW_FAIL_IF(!out, KW_EINVAL, "plan: no output");
    *out = (kw_plan_basic){0};
    out->larmor_hz = kw_larmor_hz(p->b0_t);
    for (int d = 0; d < p->ndim; d++) {
        out->pixel_size_m[d] = p->fov_m[d] / p->matrix[d];
        out->delta_k_per_m[d] = 1.0 / p->fov_m[d];
        out->k_max_per_m[d] = p->matrix[d] / (2.0 * p->fov_m[d]);
    }
    out->bandwidth_hz = p->bandwidth_hz;
    out->dwell_s = 1.0 / p->bandwidth_hz;
    out->bandwidth_per_pixel_hz = p->bandwidth_hz / p->matrix[0];
    out->readout_duration_s = p->matrix[0] * out->dwell_s;
    /* One dwell advances k by delta-k = 1/FOV: gamma-bar G dwell = 1/FOV. */
    out->readout_gradient_T_per_m = p->bandwidth_hz / (KW_GAMMA_BAR_P * p->fov_m[0]);
    out->polarization = kw_polarization(p->b0_t, p->temperature_k);
    out->readout_fits = out->readout_gradient_T_per_m <= p->gmax_T_per_m;
    return KW_OK;
}
