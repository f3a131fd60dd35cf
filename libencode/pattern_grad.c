/* pattern_grad.c: the spiral and EPI kinds of kw_pattern, from the planner's
 * gradient design (kw_gradient.h), so that a trajectory is one the hardware
 * can play under the given limits, with the ADC sample times. */
#include "pattern_internal.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_gradient.h"

#define DEFAULT_FAST_DWELL 4e-6 /* spiral/EPI ADC dwell, s: common practice, no source */

static kw_status check_limits(const kw_pattern_options *o, size_t n)
{
    const char *kind = o->kind == KW_PATTERN_SPIRAL ? "spiral" : "epi";
    KW_FAIL_PARAM(o->ndim > 2, KW_EINVAL, "dims", "the %s kind is 2-D: NX or NXxNY",
                  kind);
    KW_FAIL_PARAM(o->dims[0] != o->dims[1], KW_EINVAL, "dims",
                  "%s trajectories here need a square matrix (got %zux%zu)",
                  kind, o->dims[1], o->dims[0]);
    KW_FAIL_PARAM(n < 8 || n > 1024 || n % 2, KW_ERANGE, "dims", "N = %zu outside 8..1024 or odd",
                  n);
    KW_FAIL_PARAM(!(o->gmax > 0), KW_ERANGE, "gmax", "must be positive");
    KW_FAIL_PARAM(!(o->slew > 0), KW_ERANGE, "slew", "must be positive");
    KW_FAIL_PARAM(!(o->raster > 0), KW_ERANGE, "raster", "must be positive");
    KW_FAIL_PARAM(!(o->fov_m > 0), KW_ERANGE, "fov_m", "must be positive");
    KW_FAIL_PARAM(!(o->dwell_s >= 0), KW_ERANGE, "dwell_s", "must be positive");
    return KW_OK;
}

static kw_status alloc_traj(struct kw_pattern *p, size_t ns)
{
    p->k = kw_alloc_n(ns * 2, sizeof *p->k);
    p->t = kw_alloc_n(ns, sizeof *p->t);
    KW_FAIL_IF(!p->k || !p->t, KW_ENOMEM, "trajectory: out of memory");
    p->info.shape[0] = ns;
    p->info.shape[1] = 2;
    return KW_OK;
}

static kw_status make_spiral(struct kw_pattern *p, const kw_gradient_limits *lim, double dwell)
{
    const kw_pattern_options *o = &p->o;
    const size_t n = o->dims[1];
    kw_spiral_spec sp = {o->fov_m, (int)n, 1, dwell};
    kw_spiral_info si;
    kw_status st;
    if (o->interleaves != 0) {
        KW_FAIL_PARAM(o->interleaves < 1 || o->interleaves > 4096, KW_ERANGE, "interleaves",
                      "%d outside 1..4096", o->interleaves);
        sp.interleaves = o->interleaves;
        st = kw_spiral_size(&sp, lim, &si);
    } else {
        st = kw_spiral_interleaves_for(&sp, lim, o->max_readout_s, &sp.interleaves, &si);
    }
    if (st)
        return st;
    const size_t readout = si.samples, readouts = (size_t)sp.interleaves;
    if ((st = alloc_traj(p, readout * readouts)))
        return st;
    st = kw_spiral_design(&sp, lim, &si, NULL, NULL, p->k, p->t);
    if (st)
        return st;
    for (size_t r = 1; r < readouts; r++)
        memcpy(p->t + r * readout, p->t, readout * sizeof *p->t);
    /* The design reaches k-max = N/2 exactly; the sampled grid is
     * [-N/2, N/2) (a point at +N/2 is the same frequency as -N/2 on the
     * image grid), so samples landing on +N/2 are moved inside by one float
     * step (1e-5 cycles/FOV at N = 256). */
    const float kmax = (float)n / 2.0f;
    for (size_t i = 0; i < 2 * readouts * readout; i++)
        if (p->k[i] >= kmax)
            p->k[i] = nextafterf(kmax, 0.0f);
    kw_pattern_info *in = &p->info;
    in->interleaves = sp.interleaves;
    in->readout_samples = readout;
    in->readouts = readouts;
    in->spiral_readout_s = si.readout_s;
    in->gmax_design = si.gmax_design_T_per_m;
    in->slew_design = si.slew_design_T_per_m_per_s;
    return KW_OK;
}

static kw_status make_epi(struct kw_pattern *p, const kw_gradient_limits *lim, double dwell)
{
    const kw_pattern_options *o = &p->o;
    const size_t n = o->dims[1];
    KW_FAIL_PARAM(o->shots < 1 || (size_t)o->shots > n, KW_ERANGE, "shots", "%d outside 1..%zu",
                  o->shots, n);
    KW_FAIL_PARAM(!(o->fraction > 0.5 && o->fraction <= 1.0), KW_ERANGE, "fraction",
                  "%g outside (0.5, 1]", o->fraction);
    kw_epi_spec es = {{o->fov_m, o->fov_m}, {(int)n, (int)n}, dwell, o->shots, o->fraction};
    kw_epi_info ei;
    kw_status st = kw_epi_size(&es, lim, &ei);
    if (st)
        return st;
    if ((st = alloc_traj(p, ei.samples_per_shot * (size_t)es.shots)))
        return st;
    st = kw_epi_design(&es, lim, &ei, p->k, p->t);
    if (st)
        return st;
    kw_pattern_info *in = &p->info;
    in->readout_samples = n;
    in->readouts = ei.lines_per_shot * (size_t)es.shots;
    in->shots = es.shots;
    in->lines_per_shot = (int)ei.lines_per_shot;
    in->epi_fraction = es.partial_fourier;
    in->echo_spacing_s = ei.echo_spacing_s;
    in->train_s = ei.train_s;
    in->center_time_s = ei.center_time_s;
    return KW_OK;
}

kw_status kw_pattern_make_gradient(struct kw_pattern *p)
{
    const kw_pattern_options *o = &p->o;
    const int spiral = o->kind == KW_PATTERN_SPIRAL;
    const size_t n = o->dims[o->ndim - 1];
    kw_status st = check_limits(o, n);
    if (st)
        return st;
    kw_gradient_limits lim = {o->gmax, o->slew, o->raster};
    const double dwell = o->dwell_s != 0 ? o->dwell_s : DEFAULT_FAST_DWELL;
    st = spiral ? make_spiral(p, &lim, dwell) : make_epi(p, &lim, dwell);
    if (st)
        return st;
    kw_pattern_info *in = &p->info;
    in->ndim = 2;
    in->dwell_s = dwell;
    in->fov_m = o->fov_m;
    in->gmax = lim.gmax_T_per_m;
    in->slew = lim.slew_T_per_m_per_s;
    in->raster = lim.raster_s;
    in->acceleration = NAN;
    in->times_origin = spiral ? "readout start" : "start of each shot's train";
    if (!isnan(o->te_s)) { /* times from the excitation: k = 0 at TE */
        double origin = spiral ? 0.0 : in->center_time_s;
        KW_FAIL_PARAM(o->te_s < origin, KW_ERANGE, "te_s",
                      "%g s is earlier than the start of k = 0 (%g s into the readout)",
                      o->te_s, origin);
        for (size_t i = 0; i < in->shape[0]; i++)
            p->t[i] = (float)((double)p->t[i] + o->te_s - origin);
        in->te_s = o->te_s;
        in->times_origin = "excitation";
    }
    return KW_OK;
}
