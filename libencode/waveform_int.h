/* waveform_int.h: the inside of kw_waveform (kw_waveform.h), shared by
 * waveform.c (checks, moments, trajectory), waveform_check.c (limits,
 * duty, ramps) and waveform_json.c (the report). Not installed. */
#ifndef KW_WAVEFORM_INT_H
#define KW_WAVEFORM_INT_H

#include "kw_waveform.h"

/* Relative margin within which a value counts as at a limit: the rounding
 * of a float32 file (6e-8 relative on G; a slew is a difference of two
 * such samples). */
#define WF_LIMIT_MARGIN 1e-5

/* What the slew of a held waveform means (the report's slew_model). */
#define WF_HELD_SLEW                                                                                        \
    "raster-limited: (G[i+1] - G[i]) / raster, the step between held values spread over one raster (the "   \
    "model's steps are instantaneous)"

struct kw_waveform {
    kw_waveform_options o; /* o.adc points at `adc` below */
    kw_waveform_adc *adc;
    double *g;   /* (n, axes) */
    size_t n;
    int axes;
    double *cum; /* (3, axes, n): M_m from the RF centre to sample i */
    kw_waveform_summary sum;
    kw_waveform_violation *viol;
    size_t nviol;
    kw_waveform_ramp *ramps;
    size_t nramps;
    kw_waveform_moments *adcm;
    double *lp;  /* (2, axes, n): the response y at sample i and its
                  * integral from the start to sample i (NULL: no term) */
    double *f0;  /* (axes, n): integral of G from the start to sample i */
    double *ga;  /* (n, axes): the actual samples through the GIRF (NULL: none) */
    double *gaf; /* (n, axes): their integral from the start to sample i */
    double girf_band[2]; /* the GIRF's first and last frequency, Hz */
    double *rf;  /* (nrf) the RF centres, increasing; rf[0] = o.rf_centre_s */
    size_t nrf;  /* >= 1 */
};

/* The segment of tau (after the waveform's start): the index of the last
 * RF centre at or before it (0 before the first). */
static inline size_t kw_waveform_segment_of(const struct kw_waveform *w, double tau)
{
    size_t lo = 0, hi = w->nrf;
    while (hi - lo > 1) {
        const size_t mid = lo + (hi - lo) / 2;
        if (w->rf[mid] <= tau)
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

/* waveform_check.c: peaks, RMS, violations and ramps into w (allocates
 * w->viol and w->ramps). */
kw_status kw_waveform_check_limits(struct kw_waveform *w);

/* waveform_actual.c: the checks of the imperfection fields (naming them)
 * and the tables of the actual gradient (allocates w->lp, w->f0). */
kw_status kw_waveform_actual_check(const kw_waveform_options *o, double span);
kw_status kw_waveform_actual_prepare(struct kw_waveform *w);

/* waveform_girf.c: the checks of the girf_* fields (naming them), the
 * actual samples through the GIRF and their integral (allocates w->ga,
 * w->gaf; forgets the caller's arrays in w->o), the integral from the
 * start to t on axis a. */
kw_status kw_waveform_girf_check(const kw_waveform_options *o, int axes);
kw_status kw_waveform_girf_prepare(struct kw_waveform *w);
double kw_waveform_girf_integral(const struct kw_waveform *w, int a, double t);

#endif
