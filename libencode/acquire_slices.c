/* acquire_slices.c: multi-slice 2-D of a 3-D phantom: each slice is the
 * average of the phantom's cuts over a rectangular profile (Gauss-Legendre
 * quadrature across the slice; each cut an exact 2-D phantom). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "acquire_int.h"
#include "kw_rng.h"

double kw_acq_slice_centre(int i, int n, double t, double g)
{
    return ((double)i - 0.5 * (n - 1)) * (t + g);
}

/* Scratch of one slab run. */
typedef struct slab {
    const kw_acquisition *a;
    size_t cstride, cnt;
    int nch, npts;
    double gx[32], gw[32], cw[32];
    float *img;
    kw_cfloat *tmp, *acc;
    kw_phantom *cuts; /* the slice's cuts, for the field map */
    kw_sim *sim;
    kw_fieldmap *fmp;
} slab;

/* A simulation of cut `p2` with slice sl's coil series (no noise). */
static kw_status slab_sim(slab *s, const kw_phantom *p2, int sl)
{
    kw_sim_options o = s->a->so;
    o.phantom = p2;
    o.noise_chol = NULL;
    if (s->a->per_slice && o.ncoils > 0)
        o.coil_coef = s->a->coef + (size_t)sl * s->cstride;
    return kw_sim_create(&s->sim, &o);
}

/* The quadrature over slice sl: the truth (when `truth`) and the k-space
 * into s->acc (when s->acc). */
static kw_status slab_cuts(slab *s, int sl, float *truth)
{
    const kw_acquisition *a = s->a;
    double zc = a->zc[sl], thk = a->o.slice_thickness_m;
    kw_status st;
    for (int g = 0; g < s->npts; g++) {
        /* z of the node in phantom units ([-1, 1] spans the z FOV) */
        double zm = zc + 0.5 * thk * s->gx[g];
        kw_phantom p2;
        if ((st = kw_phantom_section(&a->ph3, zm / (0.5 * a->fov[2]), &p2)) ||
            (st = slab_sim(s, &p2, sl)))
            return st;
        double wt = 0.5 * s->gw[g]; /* the profile's mean: weights sum to 2 */
        if (s->cuts) {
            s->cuts[g] = p2;
            s->cw[g] = wt;
        }
        if (truth) {
            double w[KW_PHANTOM_MAX_SHAPES];
            kw_sim_image_weights(s->sim, w);
            if ((st = kw_phantom_rasterize(&p2, a->cd + 1, w, 4, s->img)))
                return st;
            for (size_t i = 0; i < s->cnt; i++)
                truth[(size_t)sl * s->cnt + i] += (float)(wt * s->img[i]);
        }
        if (s->acc) {
            if ((st = kw_sim_execute(s->sim, s->tmp, NULL, NULL)))
                return st;
            for (size_t i = 0; i < s->cnt * s->nch; i++)
                s->acc[i] += (kw_cfloat)(wt * s->tmp[i]);
        }
        kw_sim_destroy(s->sim);
        s->sim = NULL;
    }
    return KW_OK;
}

/* The field map's perturbation for the whole slab at once: the class
 * images are the profile-weighted sums of the cuts'. */
static kw_status slab_fieldmap(slab *s, int sl, kw_acq_slice_fieldmap *fm)
{
    kw_status st = slab_sim(s, &s->cuts[s->npts / 2], sl);
    if (st)
        return st;
    kw_fieldmap_options fo;
    kw_fieldmap_options_init(&fo);
    fo.sim = s->sim;
    fo.field_hz = fm->map + (size_t)sl * fm->stride;
    fo.nsections = s->npts;
    fo.sections = s->cuts;
    fo.section_weights = s->cw;
    if ((st = kw_fieldmap_create(&s->fmp, &fo)) || (st = kw_fieldmap_execute(s->fmp, s->acc, NULL, NULL)))
        return st;
    double e = kw_fieldmap_interp_error(s->fmp);
    fm->err = e > fm->err ? e : fm->err;
    if (kw_fieldmap_segments(s->fmp) > fm->seg)
        fm->seg = kw_fieldmap_segments(s->fmp);
    kw_fieldmap_destroy(s->fmp);
    s->fmp = NULL;
    kw_sim_destroy(s->sim);
    s->sim = NULL;
    return KW_OK;
}

/* Noise of slice sl, seeded with kw_rng_mix(seed, sl). */
static kw_status slab_noise(slab *s, int sl)
{
    const kw_acquisition *a = s->a;
    kw_phantom p2;
    kw_phantom_section(&a->ph3, 0.0, &p2);
    kw_sim_options o = a->so;
    o.phantom = &p2;
    o.noise_chol = NULL;
    kw_status st = kw_sim_create(&s->sim, &o);
    if (!st)
        st = kw_sim_add_noise(s->sim, a->chol, kw_rng_mix(a->o.seed, (uint64_t)sl), s->acc);
    kw_sim_destroy(s->sim);
    s->sim = NULL;
    return st;
}

/* With `truth`: the slab-averaged images (nsl x ny x nx); with `out`: the
 * k-space (channels x nsl x ny x nx) plus the noise when the acquisition
 * is noisy; with `fm` the field map (slice s's map at fm->map + s x
 * fm->stride; the worst interpolation error and the most segments come
 * back in fm). */
kw_status kw_acq_slices_run(const kw_acquisition *a, float *truth, kw_cfloat *out,
                            kw_acq_slice_fieldmap *fm, kw_progress_fn progress, void *user)
{
    slab s;
    memset(&s, 0, sizeof s);
    s.a = a;
    s.cstride = a->ncoils > 0 ? (size_t)a->ncoils * (size_t)(2 * a->coil_order + 1) *
                                    (size_t)(2 * a->coil_order + 1)
                              : 0;
    s.npts = a->o.slice_points;
    kw_status st = kw_gauss_legendre(s.npts, s.gx, s.gw);
    if (st)
        return st;
    const int nsl = a->nsl;
    s.cnt = a->n[0] * a->n[1];
    s.nch = a->ncoils > 0 ? a->ncoils : 1;
    if (truth && !(s.img = kw_alloc_n(s.cnt, sizeof *s.img)))
        return kw_set_error(KW_ENOMEM, "slices: out of memory");
    if (fm && out && !(s.cuts = kw_alloc_n((size_t)s.npts, sizeof *s.cuts))) {
        st = kw_set_error(KW_ENOMEM, "slices: out of memory");
        goto done;
    }
    if (out && (!(s.tmp = kw_alloc_n(s.cnt * s.nch, sizeof *s.tmp)) ||
                !(s.acc = kw_alloc_n(s.cnt * s.nch, sizeof *s.acc)))) {
        st = kw_set_error(KW_ENOMEM, "slices: out of memory");
        goto done;
    }
    for (int sl = 0; sl < nsl; sl++) {
        if (s.acc)
            memset(s.acc, 0, s.cnt * s.nch * sizeof *s.acc);
        if (truth)
            memset(truth + (size_t)sl * s.cnt, 0, s.cnt * sizeof *truth);
        if ((st = slab_cuts(&s, sl, truth)))
            goto done;
        if (out && fm && (st = slab_fieldmap(&s, sl, fm)))
            goto done;
        if (!out)
            continue;
        if (a->noisy && (st = slab_noise(&s, sl)))
            goto done;
        for (int c = 0; c < s.nch; c++)
            memcpy(out + ((size_t)c * nsl + sl) * s.cnt, s.acc + (size_t)c * s.cnt,
                   s.cnt * sizeof *s.acc);
        kw_progress pr = {"slices", sl + 1, nsl, NAN, NULL};
        if (progress && progress(user, &pr)) {
            st = kw_set_error(KW_ECANCELLED, "slices: cancelled");
            goto done;
        }
    }
done:
    kw_fieldmap_destroy(s.fmp);
    kw_sim_destroy(s.sim);
    kw_free(s.cuts);
    kw_free(s.img);
    kw_free(s.tmp);
    kw_free(s.acc);
    return st;
}
