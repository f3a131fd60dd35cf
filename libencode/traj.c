/* traj.c: radial trajectories. Golden angle after Winkelmann et al. 2007
 * (IEEE TMI 26:68-76); tiny golden angles after Wundrak et al. 2016 (MRM
 * 75:2372-2378); the Nyquist spoke count pi N / 2 is textbook (Bernstein,
 * King & Zhou 2004, sec. 17.1). */
#include "kw_traj.h"

#include <math.h>
#include <string.h>

double kw_traj_golden_angle(int m)
{
    if (m < 1)
        return NAN;
    return KW_PI / (KW_GOLDEN_RATIO + (double)m - 1.0);
}

size_t kw_traj_nyquist_spokes(size_t n) { return (size_t)ceil(KW_PI * (double)n / 2.0 - 1e-9); }

void kw_traj_options_init(kw_traj_options *o)
{
    memset(o, 0, sizeof *o);
    o->struct_size = sizeof *o;
    o->kind = KW_TRAJ_RADIAL;
    o->nz = 1;
    o->oversampling = 1;
}

/* The caller's options over the defaults (an older, shorter struct gets the
 * defaults for the fields it lacks). */
static kw_status take(kw_traj_options *local, const kw_traj_options *caller)
{
    kw_traj_options_init(local);
    return kw_options_take(local, sizeof *local, caller, "options");
}

static int oversampling(const kw_traj_options *o) { return o->oversampling == 0 ? 1 : o->oversampling; }

int kw_traj_oversampling(const kw_traj_options *o)
{
    kw_traj_options l;
    return take(&l, o) ? 0 : oversampling(&l);
}

static double angle(const kw_traj_options *o, size_t r)
{
    if (o->tiny >= 1) {
        /* fmod of the exact product in long double keeps 1e-12 rad over
         * millions of readouts */
        long double a = (long double)r * (long double)kw_traj_golden_angle(o->tiny);
        return (double)fmodl(a, (long double)KW_PI);
    }
    size_t s = r % o->spokes;
    return KW_PI * (double)s / (double)o->spokes;
}

static kw_status size_of(const kw_traj_options *o, size_t *samples, int *ndim)
{
    KW_FAIL_PARAM(o->n < 2 || o->n % 2, KW_ERANGE, "n", "radial needs an even N >= 2 (got %zu)",
               o->n);
    KW_FAIL_PARAM(o->spokes < 1, KW_ERANGE, "spokes", "at least one spoke");
    KW_FAIL_PARAM(o->nz < 1, KW_ERANGE, "nz", "no partitions");
    KW_FAIL_PARAM(o->kind != KW_TRAJ_STACK_OF_STARS && o->nz != 1, KW_ERANGE, "nz",
               "a 3-D radial trajectory is a stack of stars");
    KW_FAIL_PARAM(o->kind == KW_TRAJ_GOLDEN && o->tiny < 1, KW_ERANGE, "tiny",
               "golden-angle order must be >= 1");
    KW_FAIL_PARAM(o->kind == KW_TRAJ_RADIAL && o->tiny != 0, KW_ERANGE, "tiny",
               "uniform radial has no golden-angle order (only the golden kind has one)");
    KW_FAIL_PARAM(o->tiny < 0 || o->tiny > 1000, KW_ERANGE, "tiny", "%d outside 1..1000", o->tiny);
    KW_FAIL_PARAM(o->oversampling < 0 || o->oversampling > 4, KW_ERANGE, "oversampling",
               "%d outside 1..4", o->oversampling);
    KW_FAIL_PARAM(!(o->dwell_s > 0) || !isfinite(o->dwell_s), KW_ERANGE, "dwell_s",
               "must be a positive time");
    KW_FAIL_PARAM(!(o->te_s >= 0) || !isfinite(o->te_s), KW_ERANGE, "te_s", "must be >= 0");
    KW_FAIL_PARAM(o->te_s < 0.5 * (double)o->n * o->dwell_s * (1 - 1e-12), KW_ERANGE, "te_s",
               "%g s is shorter than half the readout (N/2 x dwell = %g s)", o->te_s,
               0.5 * (double)o->n * o->dwell_s);
    const size_t f = (size_t)oversampling(o);
    double s = (double)f * (double)o->n * (double)o->spokes * (double)o->nz;
    KW_FAIL_PARAM(s > 2147483648.0, KW_ERANGE, "spokes", "%.0f samples is too many", s);
    *samples = f * o->n * o->spokes * o->nz;
    *ndim = o->kind == KW_TRAJ_STACK_OF_STARS ? 3 : 2;
    return KW_OK;
}

double kw_traj_angle(const kw_traj_options *o, size_t r)
{
    kw_traj_options l;
    return take(&l, o) ? NAN : angle(&l, r);
}

kw_status kw_traj_size(const kw_traj_options *caller, size_t *samples, int *ndim)
{
    KW_FAIL_IF(!samples || !ndim, KW_EINVAL, "trajectory: NULL output");
    kw_traj_options o;
    kw_status st = take(&o, caller);
    return st ? st : size_of(&o, samples, ndim);
}

kw_status kw_traj_make(const kw_traj_options *caller, float *k, float *t)
{
    kw_traj_options local;
    const kw_traj_options *o = &local;
    size_t ns;
    int nd;
    kw_status st = take(&local, caller);
    if (!st)
        st = size_of(o, &ns, &nd);
    if (st)
        return st;
    KW_FAIL_IF(!k, KW_EINVAL, "trajectory: NULL output");
    const size_t f = (size_t)oversampling(o), n = f * o->n;
    const double dk = 1.0 / (double)f, dt = o->dwell_s / (double)f;
    size_t r = 0, i = 0;
    for (size_t z = 0; z < o->nz; z++)
        for (size_t s = 0; s < o->spokes; s++, r++) {
            double th = angle(o, r);
            double c = cos(th), sn = sin(th);
            for (size_t j = 0; j < n; j++, i++) {
                /* integer offset from k = 0 first, then the exact scale:
                 * k is exact in float for F = 1, 2, 4 */
                double kr = ((double)j - (double)(n / 2)) * dk;
                k[i * nd + 0] = (float)(kr * c);
                k[i * nd + 1] = (float)(kr * sn);
                if (nd == 3)
                    k[i * nd + 2] = (float)((double)z - (double)(o->nz / 2));
                if (t)
                    t[i] = (float)(o->te_s + ((double)j - (double)(n / 2)) * dt);
            }
        }
    return KW_OK;
}

kw_status kw_traj_radial_weights(const kw_traj_options *caller, float *w)
{
    kw_traj_options local;
    const kw_traj_options *o = &local;
    kw_status st = take(&local, caller);
    if (st)
        return st;
    KW_FAIL_IF(!w || o->spokes < 1 || o->n < 2, KW_EINVAL, "weights: bad arguments");
    KW_FAIL_PARAM(o->oversampling < 0 || o->oversampling > 4, KW_ERANGE, "oversampling",
               "%d outside 1..4", o->oversampling);
    const double S = (double)o->spokes, dr = 1.0 / (double)oversampling(o);
    const size_t n = (size_t)oversampling(o) * o->n;
    for (size_t s = 0; s < o->spokes; s++)
        for (size_t j = 0; j < n; j++) {
            double kr = fabs((double)j - (double)(n / 2)) * dr;
            w[s * n + j] = (float)(kr > 0 ? KW_PI * kr * dr / S : KW_PI * dr * dr / (4.0 * S));
        }
    return KW_OK;
}

