/* sequence.c: the protocol planner: sequence timing from gradient lobes,
 * the table of limits and the nearest feasible protocol (kw_sequence.h).
 *
 * Timing formulas (Handbook of MRI Pulse Sequences, Bernstein, King & Zhou
 * 2004; recalled from memory): readout amplitude G = BW / (gamma-bar FOVx);
 * slice-select amplitude G = (TBW / T_rf) / (gamma-bar x slice); the slice
 * rephaser undoes half the flat top plus the ramp down; the readout prephaser
 * carries half the readout lobe up to the echo; the largest phase-encode lobe
 * reaches ky = -N/2 delta-k; spin echo TE = 2 max(90-to-180, 180-to-echo). */
#include "kw_sequence.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

static double steps_up(double t, double dt)
{
    double n = ceil(t / dt - 1e-9);
    return n < 0 ? 0 : n;
}

kw_gradient_limits kw_plan_limits(const kw_protocol *p)
{
    kw_gradient_limits l = {p->gmax_T_per_m, p->slew_T_per_m_per_s, p->raster_s};
    return l;
}

void kw_plan_spiral_spec(const kw_plan_report *r, kw_spiral_spec *s)
{
    const kw_protocol *p = &r->protocol;
    s->fov_m = p->fov_m[0];
    s->matrix = p->matrix[0];
    s->interleaves = r->interleaves > 0 ? r->interleaves : 1;
    s->dwell_s = 1.0 / p->bandwidth_hz;
}

void kw_plan_epi_spec(const kw_plan_report *r, kw_epi_spec *s)
{
    const kw_protocol *p = &r->protocol;
    s->fov_m[0] = p->fov_m[0];
    s->fov_m[1] = p->fov_m[1];
    s->matrix[0] = p->matrix[0];
    s->matrix[1] = p->matrix[1];
    s->dwell_s = 1.0 / p->bandwidth_hz;
    s->shots = p->shots;
    s->partial_fourier = p->partial_fourier;
}

static void add_event(kw_plan_report *r, kw_event_axis ax, kw_event_kind kind, double t0,
                      double t1, const kw_trapezoid *lobe, const char *label)
{
    if (r->nevents >= KW_PLAN_MAX_EVENTS)
        return;
    kw_event *e = &r->events[r->nevents++];
    memset(e, 0, sizeof *e);
    e->axis = ax;
    e->kind = kind;
    e->t0 = t0;
    e->t1 = t1;
    if (lobe)
        e->lobe = *lobe;
    e->label = label;
}

static void add_lobe(kw_plan_report *r, kw_event_axis ax, double t0, const kw_trapezoid *l,
                     const char *label)
{
    double d = kw_trapezoid_duration(l);
    if (d <= 0)
        return;
    add_event(r, ax, KW_EV_LOBE, t0, t0 + d, l, label);
    if (l->ramp_s > 0) {
        double s = fabs(l->amplitude_T_per_m) / l->ramp_s;
        if (s > r->max_slew_used_T_per_m_per_s)
            r->max_slew_used_T_per_m_per_s = s;
    }
}

static void add_limit(kw_plan_report *r, const char *name, double req, double avail,
                      const char *unit)
{
    if (r->nlimits >= KW_PLAN_MAX_LIMITS)
        return;
    kw_limit *l = &r->limits[r->nlimits++];
    l->name = name;
    l->required = req;
    l->available = avail;
    l->unit = unit;
    l->ok = req <= avail * (1 + 1e-9);
}

static double dur(const kw_trapezoid *t) { return kw_trapezoid_duration(t); }

static double max3(double a, double b, double c) { return fmax(a, fmax(b, c)); }

/* What the four steps of plan_core share: the protocol's numbers and the
 * lobes one step makes for the next. */
typedef struct plan_ctx {
    const kw_protocol *p;
    kw_gradient_limits lim;
    double gb, dt;
    int nx, ny, nz, is3d;
    kw_sequence_kind seq;
    double kz_area;     /* largest 3-D partition encode area (0 in 2-D) */
    kw_epi_info epi;    /* the echo train (EPI only) */
    kw_trapezoid rewind; /* phase rewinder (GRE, SE) */
} plan_ctx;

/* The EPI echo train, or the spiral's interleaves and readout. */
static kw_status plan_train(kw_plan_report *r, plan_ctx *x)
{
    const kw_protocol *p = x->p;
    kw_status st = KW_OK;
    if (x->seq == KW_SEQ_EPI) {
        kw_epi_spec es;
        kw_plan_epi_spec(r, &es);
        if ((st = kw_epi_size(&es, &x->lim, &x->epi)))
            return st;
        r->echo_spacing_s = x->epi.echo_spacing_s;
        r->echo_train_length = (int)x->epi.lines_per_shot;
        r->echo_train_s = x->epi.train_s;
        r->distortion_pixels_per_hz = x->ny * x->epi.echo_spacing_s / p->shots;
    }
    if (x->seq == KW_SEQ_SPIRAL) {
        kw_spiral_spec sp = {p->fov_m[0], x->nx, p->interleaves ? p->interleaves : 1, r->dwell_s};
        if (p->interleaves) {
            st = kw_spiral_size(&sp, &x->lim, &r->spiral);
            r->interleaves = p->interleaves;
        } else {
            int n = 0;
            st = kw_spiral_interleaves_for(&sp, &x->lim, p->max_readout_s, &n, &r->spiral);
            if (st == KW_EINFEASIBLE) { /* report the best there is */
                sp.interleaves = 4096;
                st = kw_spiral_size(&sp, &x->lim, &r->spiral);
                n = 4096;
            }
            r->interleaves = n;
        }
        if (st)
            return st;
        r->readout_per_interleave_s = r->spiral.readout_s;
        r->readout_duration_s = r->spiral.readout_s;
    }
    if (x->seq == KW_SEQ_RADIAL) {
        r->spokes_nyquist = (int)ceil(KW_PI / 2 * x->nx - 1e-9);
        r->spokes = p->spokes ? p->spokes : r->spokes_nyquist;
    }
    return KW_OK;
}

/* Every gradient lobe: excitation, readout, the train, prephasers,
 * spoiler, rewinder and crusher. */
static kw_status plan_lobes(kw_plan_report *r, plan_ctx *x)
{
    const kw_protocol *p = x->p;
    const kw_gradient_limits *lim = &x->lim;
    const double gb = x->gb;
    const kw_sequence_kind seq = x->seq;
    kw_status st;

    /* excitation: slice (2-D) or slab (3-D) select */
    r->rf_duration_s = steps_up(p->rf_duration_s, x->dt) * x->dt;
    r->slice_m = x->is3d ? p->fov_m[2] : p->slice_m;
    r->slice_gradient_T_per_m = (p->tbw / r->rf_duration_s) / (gb * r->slice_m);
    if ((st = kw_trapezoid_flat(r->slice_gradient_T_per_m, r->rf_duration_s, lim,
                                &r->slice_select)))
        return st;
    const kw_trapezoid ss = r->slice_select;
    x->kz_area = x->is3d ? (x->nz / 2.0) / (gb * p->fov_m[2]) : 0.0;
    /* rephaser: half the flat top plus the ramp down; 3-D adds the largest
     * partition encode on the same axis */
    const double reph_area = -ss.amplitude_T_per_m * (ss.flat_s / 2 + ss.ramp_s / 2);
    if ((st = kw_trapezoid_for_area(reph_area - x->kz_area, lim, &r->slice_rephaser)))
        return st;
    if (x->is3d && (st = kw_trapezoid_for_area(-x->kz_area, lim, &r->partition_encode)))
        return st;

    /* readout */
    const double G = r->basic.readout_gradient_T_per_m;
    if ((st = kw_trapezoid_flat(G, x->nx * r->dwell_s, lim, &r->readout)))
        return st;
    const kw_trapezoid ro = r->readout;
    const double half_ro = G * (ro.ramp_s + ro.flat_s) / 2;

    if ((st = plan_train(r, x)))
        return st;

    /* prephasing lobes */
    double preph_area = 0, pe_area = 0;
    switch (seq) {
    case KW_SEQ_GRE:
    case KW_SEQ_RADIAL: preph_area = -half_ro; break;
    case KW_SEQ_SE: preph_area = +half_ro; break; /* the 180 inverts it */
    case KW_SEQ_EPI: preph_area = -half_ro; break;
    case KW_SEQ_SPIRAL: preph_area = 0; break;
    }
    if (seq == KW_SEQ_GRE || seq == KW_SEQ_SE)
        pe_area = -(x->ny / 2.0) / (gb * p->fov_m[1]);
    else if (seq == KW_SEQ_EPI)
        pe_area = (x->epi.first_row - x->ny / 2.0) / (gb * p->fov_m[1]);
    if ((st = kw_trapezoid_for_area(preph_area, lim, &r->prephaser)))
        return st;
    if ((st = kw_trapezoid_for_area(pe_area, lim, &r->phase_encode)))
        return st;
    /* after the readout: spoiler (+ 3-D partition rewinder) and phase rewinder */
    const double spoil_area = p->spoiler_cycles / (gb * r->slice_m);
    if ((st = kw_trapezoid_for_area(spoil_area + x->kz_area, lim, &r->spoiler)))
        return st;
    if (seq == KW_SEQ_GRE || seq == KW_SEQ_SE)
        if ((st = kw_trapezoid_for_area(-pe_area, lim, &x->rewind)))
            return st;
    if (seq == KW_SEQ_SE &&
        (st = kw_trapezoid_for_area(p->crusher_cycles / (gb * r->slice_m), lim, &r->crusher)))
        return st;
    return KW_OK;
}

/* The timeline of one TR: the events, minimum TE and TR. */
static void plan_timeline(kw_plan_report *r, const plan_ctx *x)
{
    const kw_protocol *p = x->p;
    const kw_sequence_kind seq = x->seq;
    const kw_trapezoid ss = r->slice_select, ro = r->readout;
    const double dt = x->dt;
    const double c = ss.ramp_s + r->rf_duration_s / 2; /* excitation centre */
    const double t1 = dur(&ss);
    add_lobe(r, KW_AX_SLICE, 0, &ss, "slice select");
    add_event(r, KW_AX_RF, KW_EV_RF_EXCITE, ss.ramp_s, ss.ramp_s + r->rf_duration_s, NULL,
              "excitation");
    const double prep = max3(dur(&r->slice_rephaser), dur(&r->prephaser), dur(&r->phase_encode));
    double echo_off = 0, block = 0, ro_start = 0, te_layout;
    switch (seq) {
    case KW_SEQ_GRE:
    case KW_SEQ_RADIAL: echo_off = ro.ramp_s + ro.flat_s / 2; block = dur(&ro); break;
    case KW_SEQ_EPI: echo_off = x->epi.center_time_s; block = x->epi.train_s; break;
    case KW_SEQ_SPIRAL:
        echo_off = 0;
        block = (double)(r->spiral.readout_points + r->spiral.rampdown_points) * dt;
        break;
    case KW_SEQ_SE: break;
    }
    if (seq != KW_SEQ_SE) {
        r->min_te_s = t1 + prep + echo_off - c;
        r->te_s = p->te_s > 0 ? p->te_s : r->min_te_s;
        te_layout = fmax(r->te_s, r->min_te_s);
        ro_start = t1 + prep + (te_layout - r->min_te_s);
        add_lobe(r, KW_AX_SLICE, t1, &r->slice_rephaser, "rephaser");
        add_lobe(r, KW_AX_READ, t1, &r->prephaser, "prephaser");
        add_lobe(r, KW_AX_PHASE, t1, &r->phase_encode, "phase encode");
    } else {
        const double C = dur(&r->crusher);
        const double a = (r->rf_duration_s / 2 + ss.ramp_s) + prep + C + (ss.ramp_s + r->rf_duration_s / 2);
        const double b = (r->rf_duration_s / 2 + ss.ramp_s) + C + ro.ramp_s + ro.flat_s / 2;
        r->min_te_s = 2 * fmax(a, b);
        r->te_s = p->te_s > 0 ? p->te_s : r->min_te_s;
        te_layout = fmax(r->te_s, r->min_te_s);
        const double d1 = te_layout / 2 - a, d2 = te_layout / 2 - b;
        add_lobe(r, KW_AX_SLICE, t1, &r->slice_rephaser, "rephaser");
        add_lobe(r, KW_AX_READ, t1, &r->prephaser, "prephaser");
        add_lobe(r, KW_AX_PHASE, t1, &r->phase_encode, "phase encode");
        double tc1 = t1 + prep + d1;
        add_lobe(r, KW_AX_SLICE, tc1, &r->crusher, "crusher");
        double t180 = tc1 + C;
        add_lobe(r, KW_AX_SLICE, t180, &ss, "slice select");
        add_event(r, KW_AX_RF, KW_EV_RF_REFOCUS, t180 + ss.ramp_s,
                  t180 + ss.ramp_s + r->rf_duration_s, NULL, "refocusing");
        add_lobe(r, KW_AX_SLICE, t180 + dur(&ss), &r->crusher, "crusher");
        ro_start = t180 + dur(&ss) + C + d2;
        block = dur(&ro);
    }
    /* the readout itself */
    switch (seq) {
    case KW_SEQ_GRE:
    case KW_SEQ_SE:
    case KW_SEQ_RADIAL: {
        add_lobe(r, KW_AX_READ, ro_start, &ro, "readout");
        double w = x->nx * r->dwell_s, a0 = ro_start + ro.ramp_s + (ro.flat_s - w) / 2;
        add_event(r, KW_AX_ADC, KW_EV_ADC, a0, a0 + w, NULL, "ADC");
        break;
    }
    case KW_SEQ_EPI:
        add_event(r, KW_AX_READ, KW_EV_EPI_TRAIN, ro_start, ro_start + x->epi.train_s, NULL,
                  "EPI train");
        break;
    case KW_SEQ_SPIRAL:
        add_event(r, KW_AX_READ, KW_EV_SPIRAL, ro_start, ro_start + block, NULL, "spiral");
        add_event(r, KW_AX_ADC, KW_EV_ADC, ro_start, ro_start + r->spiral.readout_s, NULL, "ADC");
        break;
    }
    const double post_start = ro_start + block;
    add_lobe(r, KW_AX_SLICE, post_start, &r->spoiler, x->is3d ? "spoiler/rewinder" : "spoiler");
    add_lobe(r, KW_AX_PHASE, post_start, &x->rewind, "rewinder");
    r->min_tr_s = post_start + fmax(dur(&r->spoiler), dur(&x->rewind));
    r->tr_s = p->tr_s > 0 ? p->tr_s : r->min_tr_s;
    r->timeline_s = fmax(r->tr_s, r->min_tr_s);
}

/* Chemical shift, sampling time, SNR factor, scan time. */
static void plan_derived(kw_plan_report *r, const plan_ctx *x)
{
    const kw_protocol *p = x->p;
    const kw_sequence_kind seq = x->seq;
    r->fat_water_hz = KW_FAT_WATER_PPM * 1e-6 * r->basic.larmor_hz;
    if (seq == KW_SEQ_SPIRAL) {
        r->chemical_shift_pixels = NAN; /* a blur, not a shift */
        r->chemical_shift_mm = NAN;
    } else {
        r->chemical_shift_pixels = r->fat_water_hz / r->bandwidth_per_pixel_hz;
        r->chemical_shift_mm = r->chemical_shift_pixels * r->basic.pixel_size_m[0] * 1e3;
    }
    if (seq == KW_SEQ_EPI) {
        r->chemical_shift_phase_pixels = r->fat_water_hz * r->distortion_pixels_per_hz;
        r->chemical_shift_phase_mm = r->chemical_shift_phase_pixels * r->basic.pixel_size_m[1] * 1e3;
    }
    /* sampling time (SNR): the ADC-on time; T2* decay: the time the signal
     * decays over while it is read, for EPI the whole train with its ramps
     * and blips (72 x 0.5 ms sampled, but a 70.56 ms train: the blurring
     * follows the train) */
    const double acq = seq == KW_SEQ_EPI ? (double)x->epi.lines_per_shot * x->nx * r->dwell_s
                                         : r->readout_duration_s;
    const double decay = seq == KW_SEQ_EPI ? x->epi.train_s : r->readout_duration_s;
    r->readout_to_t2star = p->t2star_s > 0 ? decay / p->t2star_s : NAN;
    r->voxel_volume_m3 = r->basic.pixel_size_m[0] * r->basic.pixel_size_m[1] *
                         (x->is3d ? r->basic.pixel_size_m[2] : p->slice_m);
    double reps = 0; /* excitations per scan (per slice in 2-D) */
    switch (seq) {
    case KW_SEQ_GRE:
    case KW_SEQ_SE: reps = (double)x->ny * x->nz; break;
    case KW_SEQ_EPI: reps = (double)p->shots * x->nz; break;
    case KW_SEQ_RADIAL: reps = (double)r->spokes * x->nz; break;
    case KW_SEQ_SPIRAL: reps = (double)r->interleaves * x->nz; break;
    }
    reps *= p->averages;
    r->total_sampling_time_s = reps * acq;
    r->snr_factor = r->voxel_volume_m3 * sqrt(r->total_sampling_time_s);
    r->scan_time_s = reps * r->tr_s;
}

/* The table of limits and the verdict. */
static kw_status plan_limit_table(kw_plan_report *r, const plan_ctx *x)
{
    const kw_protocol *p = x->p;
    const kw_sequence_kind seq = x->seq;
    if (seq != KW_SEQ_SPIRAL)
        add_limit(r, "readout_gradient", r->basic.readout_gradient_T_per_m, p->gmax_T_per_m,
                  "T/m");
    add_limit(r, x->is3d ? "slab_select_gradient" : "slice_select_gradient",
              r->slice_gradient_T_per_m, p->gmax_T_per_m, "T/m");
    if (seq == KW_SEQ_SPIRAL) {
        kw_spiral_spec sp;
        kw_plan_spiral_spec(r, &sp);
        size_t n = r->spiral.readout_points + r->spiral.rampdown_points;
        double *gx = kw_alloc_n(n, sizeof *gx), *gy = kw_alloc_n(n, sizeof *gy);
        if (!gx || !gy) {
            kw_free(gx), kw_free(gy);
            return kw_set_error(KW_ENOMEM, "spiral: out of memory");
        }
        kw_status st = kw_spiral_design(&sp, &x->lim, NULL, gx, gy, NULL, NULL);
        double gm = 0, sm = 0, px = 0, py = 0;
        for (size_t j = 0; j < n && !st; j++) {
            gm = fmax(gm, hypot(gx[j], gy[j]));
            sm = fmax(sm, hypot(gx[j] - px, gy[j] - py) / x->dt);
            px = gx[j], py = gy[j];
        }
        kw_free(gx), kw_free(gy);
        if (st)
            return st;
        add_limit(r, "spiral_gradient", gm, p->gmax_T_per_m, "T/m");
        add_limit(r, "spiral_slew", sm, p->slew_T_per_m_per_s, "T/m/s");
        add_limit(r, "readout_per_interleave", r->readout_per_interleave_s, p->max_readout_s, "s");
    }
    add_limit(r, "slew_rate", r->max_slew_used_T_per_m_per_s, p->slew_T_per_m_per_s, "T/m/s");
    if (p->te_s > 0)
        add_limit(r, "te", r->min_te_s, p->te_s, "s");
    if (p->tr_s > 0)
        add_limit(r, "tr", r->min_tr_s, p->tr_s, "s");
    r->feasible = 1;
    for (int i = 0; i < r->nlimits; i++)
        if (!r->limits[i].ok)
            r->feasible = 0;
    return KW_OK;
}

/* Plan without the nearest-feasible search: the lobes, the timeline of one
 * TR, the derived numbers, the limits. */
static kw_status plan_core(kw_plan_report *r, const kw_protocol *p)
{
    memset(r, 0, sizeof *r);
    r->protocol = *p;
    kw_status st = kw_plan_basics(p, &r->basic);
    if (st)
        return st;
    plan_ctx x = {0};
    x.p = p;
    x.lim = kw_plan_limits(p);
    x.gb = KW_GAMMA_BAR_P;
    x.dt = p->raster_s;
    x.nx = p->matrix[0];
    x.ny = p->matrix[1];
    x.nz = p->ndim == 3 ? p->matrix[2] : 1;
    x.is3d = p->ndim == 3;
    x.seq = p->sequence;

    r->dwell_s = r->basic.dwell_s;
    r->bandwidth_per_pixel_hz = r->basic.bandwidth_per_pixel_hz;
    r->readout_duration_s = r->basic.readout_duration_s;

    if ((st = plan_lobes(r, &x)))
        return st;
    plan_timeline(r, &x);
    plan_derived(r, &x);
    return plan_limit_table(r, &x);
}

static const kw_limit *find_limit(const kw_plan_report *r, const char *name)
{
    for (int i = 0; i < r->nlimits; i++)
        if (strcmp(r->limits[i].name, name) == 0)
            return &r->limits[i];
    return NULL;
}

static int failed(const kw_plan_report *r, const char *name)
{
    const kw_limit *l = find_limit(r, name);
    return l && !l->ok;
}

/* Nearest feasible values, each with the rest held, and all together. */
static kw_status plan_nearest(kw_plan_report *r)
{
    const kw_protocol *p = &r->protocol;
    kw_nearest *n = &r->nearest;
    const double gb = KW_GAMMA_BAR_P;
    memset(n, 0, sizeof *n);
    if (failed(r, "readout_gradient")) {
        /* G = BW / (gamma-bar FOVx) <= gmax: BW <= gamma-bar gmax FOVx (floored to 1 Hz) */
        n->has_bandwidth = 1;
        n->bandwidth_hz = floor(gb * p->gmax_T_per_m * p->fov_m[0]);
        n->bandwidth_per_pixel_hz = n->bandwidth_hz / p->matrix[0];
        /* bandwidth per pixel held: G = BWpp / (gamma-bar pixel) <= gmax */
        double bwpp = r->bandwidth_per_pixel_hz;
        int mx = (int)floor(p->fov_m[0] * gb * p->gmax_T_per_m / bwpp + 1e-9);
        if (mx >= 2) {
            n->has_matrix = 1;
            n->matrix_x = mx;
            n->pixel_size_x_m = p->fov_m[0] / mx;
        }
    }
    if (failed(r, "slice_select_gradient") || failed(r, "slab_select_gradient")) {
        /* G_ss = (TBW / T_rf) / (gamma-bar slice) <= gmax, rounded up to 1 um */
        n->has_slice = 1;
        n->slice_m = ceil(p->tbw / (r->rf_duration_s * gb * p->gmax_T_per_m) * 1e6 - 1e-6) / 1e6;
        n->rf_duration_s = steps_up(p->tbw / (gb * p->gmax_T_per_m * r->slice_m), p->raster_s) *
                           p->raster_s;
    }
    if (failed(r, "te")) {
        n->has_te = 1;
        n->te_s = r->min_te_s;
    }
    if (failed(r, "tr")) {
        n->has_tr = 1;
        n->tr_s = r->min_tr_s;
    }
    /* an automatic count is already the fewest that fit (or none does) */
    if (failed(r, "readout_per_interleave") && r->protocol.interleaves) {
        kw_spiral_spec sp;
        kw_plan_spiral_spec(r, &sp);
        kw_gradient_limits lim = kw_plan_limits(p);
        int k = 0;
        if (kw_spiral_interleaves_for(&sp, &lim, p->max_readout_s, &k, NULL) == KW_OK) {
            n->has_interleaves = 1;
            n->interleaves = k;
        }
        kw_clear_error();
    }
    /* all together: apply, re-plan, and take TE/TR up to the new minimum */
    kw_protocol q = *p;
    if (n->has_bandwidth)
        q.bandwidth_hz = n->bandwidth_hz;
    if (n->has_slice) {
        if (q.ndim == 3)
            q.rf_duration_s = n->rf_duration_s;
        else
            q.slice_m = n->slice_m;
    }
    if (n->has_interleaves)
        q.interleaves = n->interleaves;
    kw_plan_report *t = kw_alloc_n(1, sizeof *t);
    if (!t)
        return kw_set_error(KW_ENOMEM, "plan: out of memory");
    for (int it = 0; it < 3; it++) {
        kw_status st = plan_core(t, &q);
        if (st) { /* the changed protocol is not plannable: offer no combination */
            kw_clear_error();
            break;
        }
        if (t->feasible) {
            n->has_combined = 1;
            n->combined = q;
            break;
        }
        if (failed(t, "te"))
            q.te_s = t->min_te_s;
        if (failed(t, "tr"))
            q.tr_s = t->min_tr_s;
        if (failed(t, "readout_gradient") || failed(t, "slice_select_gradient") ||
            failed(t, "slab_select_gradient"))
            break;
    }
    kw_free(t);
    return KW_OK;
}

kw_status kw_plan_create(kw_plan_report **out, const kw_protocol *p)
{
    KW_FAIL_IF(!out, KW_EINVAL, "plan: no output");
    *out = NULL;
    kw_plan_report *r = kw_alloc_n(1, sizeof *r);
    KW_FAIL_IF(!r, KW_ENOMEM, "plan: out of memory");
    kw_status st = plan_core(r, p);
    if (!st && !r->feasible)
        st = plan_nearest(r);
    if (st) {
        kw_free(r);
        return st;
    }
    *out = r;
    return KW_OK;
}

void kw_plan_destroy(kw_plan_report *r) { kw_free(r); }
