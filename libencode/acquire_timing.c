/* acquire_timing.c: the acquisition's contrast and timing: sequence,
 * tissues, receiver bandwidth, the planner's protocol (minimum TE, TR, EPI
 * train), TE/TR/TI/flip and the off-resonance terms. */
#include <math.h>
#include <string.h>

#include "acquire_int.h"
#include "defaults.h"
#include "kw_sequence.h"

/* Every tissue of the phantom: the table's values exist at 1.5 and 3 T;
 * the caller's at any field. */
static kw_status acq_tissues(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    a->tvals_given = o->tissue_values ? o->tissue_values : a->tvals_zero;
    if (a->ph.tissue) {
        for (int i = 0; i < a->ph.nshapes; i++) {
            kw_tissue_values tv;
            kw_status st;
            if (a->ph.shapes[i].tissue >= 0 &&
                (st = kw_tissue_lookup(a->ph.shapes[i].tissue, o->b0_t, a->tvals_given, &tv)))
                return st; /* names "b0_t" or "tissue" */
        }
    } else {
        KW_FAIL_PARAM(o->tissue_values, KW_EINVAL, "tissue_values",
                      "phantom '%s' carries no tissues (weave, weave3d do)", o->phantom);
    }
    return KW_OK;
}

/* A protocol: the planner's own numbers (minimum TE and TR, EPI echo
 * spacing) for the same grid. */
static kw_status acq_plan(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    kw_acquisition_info *in = &a->info;
    kw_protocol pp = *o->protocol;
    pp.ndim = a->ndim;
    for (int i = 0; i < 3; i++) {
        pp.fov_m[i] = a->fov[i];
        pp.matrix[i] = (int)a->n[i];
    }
    if (a->bw > 0)
        pp.bandwidth_hz = a->bw;
    else if (!(pp.bandwidth_hz > 0)) /* not stated: the planner's default */
        pp.bandwidth_hz = KWD_BW_PER_PIXEL_HZ * (double)pp.matrix[0];
    pp.b0_t = o->b0_t;
    pp.te_s = o->te_s;
    pp.tr_s = o->tr_s;
    kw_plan_report *rep = NULL;
    kw_status st = kw_plan_create(&rep, &pp);
    if (st)
        return kw_error_reparam(st, NULL, "protocol");
    in->protocol = 1;
    in->min_te_s = rep->min_te_s;
    in->feasible = rep->feasible;
    in->epi = pp.sequence == KW_SEQ_EPI;
    in->echo_spacing_s = rep->echo_spacing_s;
    in->shots = pp.shots;
    in->partial_fourier = 1.0;
    a->te_min = a->bw > 0 ? (double)(a->n[0] / 2) / a->bw : 0;
    a->plan_dwell = rep->dwell_s;
    if (in->epi) {
        /* the train's rows: the last ETL x shots of ny (kw_epi_size) */
        in->partial_fourier = pp.partial_fourier;
        in->first_row = (int)a->n[1] - rep->echo_train_length * pp.shots;
        if (in->first_row < 0)
            in->first_row = 0;
        in->rows_acquired = (int)a->n[1] - in->first_row;
        in->distortion_pixels_per_hz = (double)a->n[1] * in->echo_spacing_s / in->shots;
    }
    if (!(o->te_s > 0))
        a->con.te_s = rep->te_s;
    if (!(o->tr_s > 0))
        a->con.tr_s = rep->tr_s;
    if (a->bw <= 0) {
        a->bw = rep->basic.bandwidth_hz;
        a->ro_dur = (double)a->n[0] / a->bw;
        a->te_min = (double)(a->n[0] / 2) / a->bw;
    }
    kw_plan_destroy(rep);
    KW_FAIL_PARAM(a->con.te_s < in->min_te_s * (1 - 1e-9), KW_EINVAL, "te_s",
                  "%.4g ms is shorter than the protocol allows (the planner's minimum TE is "
                  "%.4g ms)", a->con.te_s * 1e3, in->min_te_s * 1e3);
    if (in->epi)
        a->te_min = 0; /* the planner's minimum covers the echo train */
    return KW_OK;
}

/* TE, TR, TI and the flip angle against the sequence and the readout. */
static kw_status acq_echo(kw_acquisition *a, int te_given, int tr_given)
{
    const kw_acquisition_options *o = &a->o;
    kw_contrast *con = &a->con;
    static const char *const names[] = {"pd", "gre", "se", "ir"};
    if (con->seq != KW_CONTRAST_PD) {
        KW_FAIL_PARAM(!te_given, KW_EINVAL, "te_s", "missing for the %s sequence", names[con->seq]);
        KW_FAIL_PARAM(!tr_given, KW_EINVAL, "tr_s", "missing for the %s sequence", names[con->seq]);
    }
    if (te_given) {
        KW_FAIL_PARAM(!(con->te_s > 0), KW_EINVAL, "te_s", "must be positive");
        KW_FAIL_PARAM(con->te_s < a->te_min, KW_EINVAL, "te_s",
                      "%.4g ms is shorter than the protocol allows: the readout (%.4g ms at this "
                      "bandwidth) is centred on TE, so TE >= %.4g ms",
                      con->te_s * 1e3, a->ro_dur * 1e3, a->te_min * 1e3);
    } else {
        con->te_s = a->te_min;
    }
    if (tr_given) {
        KW_FAIL_PARAM(!(con->tr_s > 0), KW_EINVAL, "tr_s", "must be positive");
        KW_FAIL_PARAM(!(con->tr_s > con->te_s + 0.5 * a->ro_dur), KW_EINVAL, "tr_s",
                      "must exceed TE plus the second half of the readout");
    }
    if (con->seq == KW_CONTRAST_IR) {
        KW_FAIL_PARAM(o->ti_s == 0, KW_EINVAL, "ti_s", "missing for the ir sequence");
        KW_FAIL_PARAM(!(o->ti_s > 0) || !(o->ti_s < con->tr_s), KW_EINVAL, "ti_s",
                      "must be positive and shorter than TR");
        con->ti_s = o->ti_s;
    } else {
        KW_FAIL_PARAM(o->ti_s != 0, KW_EINVAL, "ti_s", "only for the ir sequence");
    }
    if (con->seq == KW_CONTRAST_GRE) {
        KW_FAIL_PARAM(o->flip_rad == 0, KW_EINVAL, "flip_rad", "missing for the gre sequence");
        KW_FAIL_PARAM(!(o->flip_rad > 0) || o->flip_rad > KW_PI, KW_EINVAL, "flip_rad",
                      "must lie in (0, 180] degrees");
        con->flip_rad = o->flip_rad;
    } else {
        KW_FAIL_PARAM(o->flip_rad != 0, KW_EINVAL, "flip_rad", "only for the gre sequence");
    }
    return KW_OK;
}

/* A linear field (T/m) -> off-resonance in Hz per FOV: gamma-bar G FOV. */
static kw_status acq_offres(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    KW_FAIL_PARAM(!isfinite(o->df_hz), KW_EINVAL, "df_hz", "must be finite");
    int k = o->field_gradient_ndim;
    if (!k)
        return KW_OK;
    KW_FAIL_PARAM(k < 0 || k > 3, KW_EINVAL, "field_gradient_ndim", "must be 0..3");
    KW_FAIL_PARAM(k < a->ndim, KW_EINVAL, "field_gradient_t_per_m", "give %d components",
                  a->ndim);
    KW_FAIL_PARAM(k > a->ndim, KW_EINVAL, "field_gradient_t_per_m",
                  "%d components for a %d-D phantom%s", k, a->ndim,
                  a->nsl ? " (multi-slice: in-plane only)" : "");
    for (int d = 0; d < a->ndim; d++) {
        double g = o->field_gradient_t_per_m[2 - d];
        KW_FAIL_PARAM(!isfinite(g), KW_EINVAL, "field_gradient_t_per_m", "must be finite");
        KW_FAIL_PARAM(fabs(g) > 0.1, KW_EINVAL, "field_gradient_t_per_m",
                      "%g mT/m is not a field inhomogeneity (at most 100 mT/m)", g * 1e3);
        a->fgrad_hz[d] = KW_GAMMA_BAR_P * g * a->fov[d];
    }
    return KW_OK;
}

kw_status kw_acq_timing(kw_acquisition *a)
{
    const kw_acquisition_options *o = &a->o;
    KW_FAIL_PARAM(o->sequence < KW_CONTRAST_PD || o->sequence > KW_CONTRAST_IR, KW_EINVAL,
                  "sequence", "unknown sequence %d", (int)o->sequence);
    a->con.seq = o->sequence;
    a->con.b0_t = o->b0_t;
    KW_FAIL_PARAM(!(o->b0_t > 0) || !isfinite(o->b0_t), KW_EINVAL, "b0_t", "must be positive");
    kw_status st = acq_tissues(a);
    if (st)
        return st;
    KW_FAIL_PARAM(!(o->bandwidth_hz >= 0) || !isfinite(o->bandwidth_hz), KW_EINVAL,
                  "bandwidth_hz", "must be positive");
    KW_FAIL_PARAM(o->te_s < 0 || isnan(o->te_s), KW_EINVAL, "te_s", "must be positive");
    KW_FAIL_PARAM(o->tr_s < 0 || isnan(o->tr_s), KW_EINVAL, "tr_s", "must be positive");
    a->bw = o->bandwidth_hz;
    a->ro_dur = a->bw > 0 ? (double)a->n[0] / a->bw : 0; /* readout duration, dwell 1/BW */
    a->te_min = a->bw > 0 ? (double)(a->n[0] / 2) / a->bw : 0; /* first sample at t >= 0 */
    a->con.te_s = o->te_s;
    a->con.tr_s = o->tr_s;
    int te_given = o->te_s > 0, tr_given = o->tr_s > 0;
    if (o->protocol) {
        if ((st = acq_plan(a)))
            return st;
        te_given = tr_given = 1;
    }
    if ((st = acq_echo(a, te_given, tr_given)))
        return st;
    return acq_offres(a);
}
