/* preview.c: the planner's predictions against a simulated acquisition of
 * the same protocol (kw_preview.h, docs/preview.md): plan, the scenario's
 * acquisition and reconstruction, and the measurements on isolated inserts
 * of the "weave" object registered by phase correlation. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "kw_acquire.h"
#include "kw_fft.h"
#include "kw_phantom.h"
#include "kw_preview.h"
#include "kw_recon.h"
#include "kw_sequence.h"
#include "kw_simulate.h"
#include "preview_int.h"

/* The weave object's shapes (libencode/phantom.c, make_weave): body 0,
 * vials 1..6 (white matter, grey matter, CSF, liver, blood, fat). */
enum { SHAPE_CSF_VIAL = 3, SHAPE_FAT_VIAL = 6 };

/* The bump: bump_hz up to BUMP_R1 (phantom units) from the vial's centre
 * (its radius 0.14 and a margin), a raised-cosine edge out to BUMP_R2 (short
 * of the neighbouring vials, 0.41 away), zero beyond. */
#define BUMP_R1 0.20
#define BUMP_R2 0.35

void kw_preview_options_init(kw_preview_options *o)
{
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->bump_hz = 100.0;
    o->flip_rad = 15.0 * KW_PI / 180.0;
    o->fat_tolerance_px = 0.1;
    o->bump_tolerance = 0.10;
    o->blur_tolerance = 0.15;
    o->replicas = 50;
    o->seed = 1;
    o->snr_tolerance = 0.10;
    o->edge_tolerance = 0.05;
}

/* A protocol preview can simulate: 2-D, gre, se or epi, 16..1024 pixels. */
static kw_status check_protocol(const kw_protocol *pr, const char *what)
{
    kw_status st = kw_protocol_check(pr);
    if (st)
        return strcmp(what, "protocol") ? kw_error_reparam(st, NULL, what) : st;
    KW_FAIL_PARAM(pr->ndim != 2, KW_ENOTSUP, strcmp(what, "protocol") ? what : "ndim",
                  "preview measures 2-D protocols so far (a %d-D protocol was given)", pr->ndim);
    KW_FAIL_PARAM(pr->sequence != KW_SEQ_GRE && pr->sequence != KW_SEQ_SE &&
                      pr->sequence != KW_SEQ_EPI,
                  KW_ENOTSUP, strcmp(what, "protocol") ? what : "sequence",
                  "preview measures Cartesian gre, se and epi protocols so far (radial and "
                  "spiral blur instead of shifting; not yet measured)");
    KW_FAIL_PARAM(pr->matrix[0] < 16 || pr->matrix[1] < 16 || pr->matrix[0] > 1024 ||
                      pr->matrix[1] > 1024,
                  KW_EINVAL, strcmp(what, "protocol") ? what : "matrix",
                  "preview needs 16 .. 1024 pixels per axis (got %dx%d)", pr->matrix[0],
                  pr->matrix[1]);
    return KW_OK;
}

kw_status kw_preview_create(kw_preview **out, const kw_preview_options *o)
{
    KW_FAIL_IF(!out, KW_EINVAL, "preview: NULL argument");
    *out = NULL;
    kw_preview_options opt;
    kw_preview_options_init(&opt);
    kw_status st = kw_options_take(&opt, sizeof opt, o, "options");
    if (st)
        return st;
    KW_FAIL_PARAM(!opt.protocol, KW_EINVAL, "protocol", "required");
    KW_FAIL_PARAM(!(opt.bump_hz >= 0) || opt.bump_hz > 1000, KW_EINVAL, "bump_hz",
                  "must be 0 .. 1000 Hz (got %g)", opt.bump_hz);
    KW_FAIL_PARAM(!(opt.flip_rad > 0) || opt.flip_rad > KW_PI, KW_EINVAL, "flip_rad",
                  "must lie in (0, 180] degrees");
    KW_FAIL_PARAM(!(opt.fat_tolerance_px > 0) || !isfinite(opt.fat_tolerance_px), KW_EINVAL,
                  "fat_tolerance_px", "must be positive");
    KW_FAIL_PARAM(!(opt.bump_tolerance > 0) || !(opt.bump_tolerance < 1), KW_EINVAL,
                  "bump_tolerance", "must be in (0, 1)");
    KW_FAIL_PARAM(!(opt.blur_tolerance > 0) || !(opt.blur_tolerance < 1), KW_EINVAL,
                  "blur_tolerance", "must be in (0, 1)");
    KW_FAIL_PARAM(!(opt.edge_tolerance > 0) || !(opt.edge_tolerance < 1), KW_EINVAL,
                  "edge_tolerance", "must be in (0, 1)");
    KW_FAIL_PARAM(opt.replicas < 2 || opt.replicas > 10000, KW_EINVAL, "replicas",
                  "must be 2 .. 10000 (got %d)", opt.replicas);
    KW_FAIL_PARAM(!(opt.snr_tolerance > 0) || !(opt.snr_tolerance < 1), KW_EINVAL,
                  "snr_tolerance", "must be in (0, 1)");
    const kw_protocol *pr = opt.protocol;
    if ((st = check_protocol(pr, "protocol")))
        return st;
    KW_FAIL_PARAM(fabs(pr->b0_t - 1.5) > 0.05 && fabs(pr->b0_t - 3.0) > 0.05, KW_EINVAL, "b0_t",
                  "the weave object's tissue values are tabulated at 1.5 T and 3 T only (got "
                  "%g T)", pr->b0_t);
    if (opt.reference && (st = check_protocol(opt.reference, "reference")))
        return st;
    kw_preview *p = kw_alloc(sizeof *p);
    KW_FAIL_IF(!p, KW_ENOMEM, "preview: out of memory");
    p->o = opt;
    p->prot = *pr;
    p->o.protocol = &p->prot;
    if (opt.reference)
        p->ref = *opt.reference;
    p->o.reference = opt.reference ? &p->ref : NULL;
    if ((st = kw_plan_create(&p->rep, &p->prot)) ||
        (opt.reference && (st = kw_plan_create(&p->ref_rep, &p->ref)))) {
        kw_plan_destroy(p->rep);
        kw_free(p);
        return kw_error_reparam(st, NULL, opt.reference && p->rep ? "reference" : "protocol");
    }
    *out = p;
    return KW_OK;
}

void kw_preview_destroy(kw_preview *p)
{
    if (!p)
        return;
    kw_plan_destroy(p->rep);
    kw_plan_destroy(p->ref_rep);
    kw_free(p->image);
    kw_free(p);
}

const kw_preview_result *kw_preview_get_result(const kw_preview *p)
{
    return p && p->done ? &p->res : NULL;
}

/* ---- registration ------------------------------------------------------------- */

/* The shift s (pixels, along `axis`: 0 rows, 1 columns) that moves image b
 * onto image a, from the phase step of their cross-power spectrum (phase
 * correlation; kw_preview.h). fa, fb: the images' centered unitary DFTs. */
double kw_preview_phase_shift(const kw_cfloat *fa, const kw_cfloat *fb, size_t ny, size_t nx,
                              int axis)
{
    double zr = 0, zi = 0;
    size_t step = axis == 0 ? nx : 1;
    for (size_t r = (axis == 0); r < ny; r++)
        for (size_t c = (axis == 1); c < nx; c++) {
            size_t i = r * nx + c, j = i - step;
            /* R(k) = fa conj(fb); z += R(k) conj(R(k - 1)) */
            double ar = crealf(fa[i]), ai = cimagf(fa[i]), br = crealf(fb[i]), bi = cimagf(fb[i]);
            double r1 = ar * br + ai * bi, i1 = ai * br - ar * bi;
            ar = crealf(fa[j]), ai = cimagf(fa[j]), br = crealf(fb[j]), bi = cimagf(fb[j]);
            double r0 = ar * br + ai * bi, i0 = ai * br - ar * bi;
            zr += r1 * r0 + i1 * i0;
            zi += i1 * r0 - r1 * i0;
        }
    double n = (double)(axis == 0 ? ny : nx);
    return -n * atan2(zi, zr) / (2 * KW_PI);
}

/* ---- the pieces of execute ------------------------------------------------------- */

/* The field bump over the vial `s` (Hz at the pixel centres, (ny, nx)). */
static void bump_map(const kw_shape *s, double hz, size_t ny, size_t nx, float *map)
{
    for (size_t r = 0; r < ny; r++)
        for (size_t c = 0; c < nx; c++) {
            double x = ((double)c - (double)(nx / 2)) * 2.0 / (double)nx;
            double y = ((double)(ny / 2) - (double)r) * 2.0 / (double)ny;
            double d = hypot(x - s->center[0], y - s->center[1]), f = 0;
            if (d <= BUMP_R1)
                f = hz;
            else if (d < BUMP_R2)
                f = hz * 0.5 * (1 + cos(KW_PI * (d - BUMP_R1) / (BUMP_R2 - BUMP_R1)));
            map[r * nx + c] = (float)f;
        }
}

static int relay(void *user, const kw_progress *pg)
{
    const kw_preview_progress *pp = user;
    return pp->fn ? pp->fn(pp->user, pg) : 0;
}

/* The whole object with fat and the bump, as the protocol acquires it:
 * kw_acquisition (plan, contrast, timing, field map) -> kw_recon (fft). */
static kw_status scenario(kw_preview *p, const float *bump, kw_preview_progress *pp)
{
    size_t ny = (size_t)p->prot.matrix[1], nx = (size_t)p->prot.matrix[0];
    kw_acquisition_options ao;
    kw_acquisition_options_init(&ao);
    ao.phantom = "weave";
    ao.dims[0] = 0; /* 2-D phantom: one plane */
    ao.dims[1] = ny;
    ao.dims[2] = nx;
    ao.fov_m[1] = p->prot.fov_m[1];
    ao.fov_m[2] = p->prot.fov_m[0];
    ao.sequence = p->prot.sequence == KW_SEQ_SE ? KW_CONTRAST_SE : KW_CONTRAST_GRE;
    ao.flip_rad = ao.sequence == KW_CONTRAST_GRE ? p->o.flip_rad : 0;
    ao.b0_t = p->prot.b0_t;
    ao.protocol = &p->prot;
    if (bump) {
        ao.field_map = bump;
        ao.field_map_ndim = 2;
        ao.field_map_dims[0] = ny;
        ao.field_map_dims[1] = nx;
    }
    kw_acquisition *a = NULL;
    kw_status st = kw_acquisition_create(&a, &ao);
    if (st)
        return st;
    const kw_acquisition_info *in = kw_acquisition_info_get(a);
    p->con = in->contrast;
    p->bw = in->bandwidth_hz;
    p->first_row = in->epi ? in->first_row : 0;
    p->esp = in->echo_spacing_s;
    p->shots = in->shots > 0 ? in->shots : 1;
    kw_cfloat *ks = kw_alloc_n(ny * nx, sizeof *ks);
    st = ks ? kw_acquisition_execute(a, ks, NULL, NULL, relay, pp)
            : kw_set_error(KW_ENOMEM, "preview: out of memory");
    kw_acquisition_destroy(a);
    if (!st)
        st = kw_preview_recon(ks, ny, nx, 0, p->image);
    kw_free(ks);
    return st;
}

/* The sample times of the protocol's EPI train, as the acquisition makes
 * them (kw_acquire.h, docs/simulator.md): row r at TE + (r - ny/2) esp /
 * shots, read forwards on even train lines and backwards on odd ones, dwell
 * 1/BW. */
static void epi_times(const kw_preview *p, size_t ny, size_t nx, double *t)
{
    double dwell = 1.0 / p->bw;
    for (size_t r = 0; r < ny; r++) {
        long e = (long)r - (long)(ny / 2);
        long m = ((long)r - p->first_row) / p->shots;
        double sgn = ((long)r < p->first_row || m % 2 == 0) ? 1.0 : -1.0;
        for (size_t c = 0; c < nx; c++)
            t[r * nx + c] = p->con.te_s + (double)e * p->esp / p->shots +
                            sgn * ((double)c - (double)(nx / 2)) * dwell;
    }
}

static void effect_place(kw_preview_effect *e, const kw_shape *s, size_t ny, size_t nx)
{
    e->centre_px[0] = (double)(ny / 2) - s->center[1] * (double)ny / 2;
    e->centre_px[1] = (double)(nx / 2) + s->center[0] * (double)nx / 2;
    e->radius_px[0] = s->axes[1] * (double)ny / 2;
    e->radius_px[1] = s->axes[0] * (double)nx / 2;
}

/* Measure one effect: the insert with (a) and without (b) it. */
static kw_status measure(kw_preview *p, const kw_shape *s, double df_a, double df_b,
                         const float *field_a, const double *times, const uint8_t *mask,
                         int axis, kw_cfloat *buf, double *shift)
{
    size_t ny = (size_t)p->prot.matrix[1], nx = (size_t)p->prot.matrix[0], n = ny * nx;
    kw_status st = kw_preview_insert(p, s, df_a, field_a, times, mask, buf, buf + n);
    if (!st)
        st = kw_preview_insert(p, s, df_b, NULL, times, mask, buf + 2 * n, buf + 3 * n);
    if (!st)
        *shift = kw_preview_phase_shift(buf + n, buf + 3 * n, ny, nx, axis);
    return st;
}

kw_status kw_preview_execute(kw_preview *p, kw_progress_fn progress, void *user)
{
    KW_FAIL_IF(!p, KW_EINVAL, "preview: NULL argument");
    p->done = 0;
    size_t ny = (size_t)p->prot.matrix[1], nx = (size_t)p->prot.matrix[0], n = ny * nx;
    kw_preview_progress pp = {progress, user};
    kw_phantom weave;
    kw_status st = kw_phantom_make(&weave, "weave");
    if (st)
        return st;
    kw_free(p->image);
    p->image = kw_alloc_n(n, sizeof *p->image);
    float *bump = p->o.bump_hz > 0 ? kw_alloc_n(n, sizeof *bump) : NULL;
    double *times = p->prot.sequence == KW_SEQ_EPI ? kw_alloc_n(n, sizeof *times) : NULL;
    uint8_t *mask = NULL;
    kw_cfloat *buf = kw_alloc_n(4 * n, sizeof *buf);
    if (!p->image || (p->o.bump_hz > 0 && !bump) || (p->prot.sequence == KW_SEQ_EPI && !times) ||
        !buf) {
        st = kw_set_error(KW_ENOMEM, "preview: out of memory");
        goto done;
    }
    const kw_shape *fat = &weave.shapes[SHAPE_FAT_VIAL], *vial = &weave.shapes[SHAPE_CSF_VIAL];
    if (bump)
        bump_map(vial, p->o.bump_hz, ny, nx, bump);
    if ((st = scenario(p, bump, &pp)))
        goto done;
    if (times) {
        epi_times(p, ny, nx, times);
        if (p->first_row > 0) {
            mask = kw_alloc_n(n, 1);
            if (!mask) {
                st = kw_set_error(KW_ENOMEM, "preview: out of memory");
                goto done;
            }
            for (size_t i = 0; i < n; i++)
                mask[i] = (uint8_t)(i / nx >= (size_t)p->first_row);
        }
    }
    int epi = p->prot.sequence == KW_SEQ_EPI, axis = epi ? 0 : 1;
    kw_preview_result *r = &p->res;
    kw_preview_result_head(p);
    /* fat: its own chemical shift against the same vial on resonance */
    double fat_hz = -KW_FAT_SHIFT_PPM * 1e-6 * KW_GAMMA_BAR_P * p->prot.b0_t; /* > 0 */
    double s = 0;
    if ((st = measure(p, fat, 0.0, fat_hz, NULL, times, mask, axis, buf, &s)))
        goto done;
    kw_preview_effect_fat(p, &r->effects[r->neffects], s);
    effect_place(&r->effects[r->neffects++], fat, ny, nx);
    if (bump) {
        if ((st = measure(p, vial, 0.0, 0.0, bump, times, mask, axis, buf, &s)))
            goto done;
        kw_preview_effect_bump(p, &r->effects[r->neffects], s);
        effect_place(&r->effects[r->neffects++], vial, ny, nx);
    }
    if (p->prot.t2star_s > 0 && p->prot.sequence != KW_SEQ_SE) {
        double pred = 0, meas = 0;
        if ((st = kw_preview_blur(p, times, mask, buf, &pred, &meas)))
            goto done;
        kw_preview_effect *e = &r->effects[r->neffects++];
        kw_preview_effect_blur(p, e, pred, meas);
        e->centre_px[0] = (double)(ny / 2);
        e->centre_px[1] = (double)(nx / 2);
    }
    {
        double pw = 0, po = 0, mw = 0, mo = 0;
        kw_preview_edge_ideal(&pw, &po);
        if ((st = kw_preview_edge(p, buf, &mw, &mo)))
            goto done;
        for (int w = 0; w < 2; w++) {
            kw_preview_effect *e = &r->effects[r->neffects++];
            kw_preview_effect_edge(p, e, w, w ? po : pw, w ? mo : mw);
            e->centre_px[0] = (double)(ny / 2);
            e->centre_px[1] = (double)(nx / 2 + nx / 4);
        }
    }
    if (p->o.reference) {
        double pred = 0, meas = 0;
        if ((st = kw_preview_snr(p, &pred, &meas)))
            goto done;
        kw_preview_effect *e = &r->effects[r->neffects++];
        kw_preview_effect_snr(p, e, pred, meas);
        e->centre_px[0] = (double)(ny / 2);
        e->centre_px[1] = (double)(nx / 2);
    }
    r->all_pass = 1;
    for (int i = 0; i < r->neffects; i++)
        r->all_pass &= r->effects[i].pass;
    r->image = p->image;
    p->done = 1;
done:
    kw_free(bump);
    kw_free(times);
    kw_free(mask);
    kw_free(buf);
    return st;
}
