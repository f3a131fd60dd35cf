/* sim_grid.c: the grid path of the simulation (kw_simulate.h), for Cartesian
 * sampling with coils and no field gradient.
 *
 * The k-space of (sensitivity x object) is sum_j c_j F(k - d_j): the
 * object's spectrum F at the sample's k shifted by the series' frequencies
 * d_j = (p, q, r)/period (Guerquin-Kern et al. 2012). On a Cartesian grid
 * the shifted frequencies k - d_j of all samples fall on a few grids: along
 * each axis the shift -p/period splits into an integer part and a
 * fractional offset, and the offsets take few distinct values (period 1.5:
 * 0, 1/3 and 2/3). Each shape's exact transform is evaluated once at every
 * point of these grids (the union of the sample grid moved by each offset
 * and widened by the integer shifts), summed over the shapes with their
 * weights, and each coil's sample is then the short sum of the grid values
 * at its shifted positions weighted by the coil's coefficients: the values
 * of the per-sample path (simulate.c), computed once instead of once per
 * coefficient.
 *
 * Time effects stay exact: the shapes are grouped into classes whose signal
 * is the same function of time (relaxation during the readout, chemical
 * shift and off-resonance; kw_sim_shape_classes()), each class gets its own
 * grid, and each sample sums the classes' values times their factors at the
 * sample's time. When every sample is at the same time the factors are
 * folded into the weights and one grid serves. A field gradient moves each
 * sample's k by its own amount; those runs take the per-sample path.
 *
 * Memory: the grids are held for a band of output planes (3-D) or rows
 * (2-D) at a time, at most GRID_BYTES, allocated at create. */
#include <math.h>
#include <omp.h>
#include <string.h>

#include "sim_int.h"

#define NTERM1 (2 * KW_SIM_MAX_ORDER + 1)
#define GRID_BYTES ((size_t)64 << 20)
#define NS KW_PHANTOM_MAX_SHAPES

/* One axis: the offsets' classes and each term's class and integer shift. */
typedef struct grid_axis {
    int n;                  /* output samples */
    int ncl;                /* offset classes */
    int cls[NTERM1], sh[NTERM1]; /* per term index p + L */
    double phi[NTERM1];     /* each class's fractional offset, in [0, 1) */
    int lo[NTERM1], hi[NTERM1]; /* each class's integer shifts' range */
    int span;               /* the largest hi - lo */
    int mcl[NTERM1];        /* the class of the points -k (-1: none) */
    long mo[NTERM1];        /* point g's mirror is point mo - g of that class */
} grid_axis;

struct kw_sim_grid {
    grid_axis ax[3];        /* x, y, z */
    int ca;                 /* the axis cut into bands: 2 (z) in 3-D, 1 (y) in 2-D */
    int band;               /* output planes (rows) per band */
    int nt;                 /* time classes held */
    int fixed;              /* every sample at one time: the factors are in w */
    int rep[NS];            /* a shape of each time class */
    int nw[NS];             /* per shape: the classes it adds to (0..2) */
    int wcls[NS][2];
    double complex w[NS][2];
    int sep[NS];            /* axis-aligned box or rectangle: the tables hold its sincs */
    double amp[NS];         /* separable shapes: the constant of the sinc product */
    size_t dim[3];          /* one block: x, y, z points */
    size_t blk;
    size_t len[3];          /* table length per axis (n + span) */
    double complex *g;      /* nt x ncz x ncy x ncx blocks */
    double complex *tab[3]; /* per axis: nshapes x ncl x len */
    double complex *coef;   /* terms x ncoils */
    double complex *rcol;   /* nt x nx: per-column factors (neither fixed nor per sample) */
    double complex *scr;    /* per thread: scr_n values */
    size_t scr_n;
    int nthreads;
};

static void plan_axis(grid_axis *ax, int n, int L, double period)
{
    memset(ax, 0, sizeof *ax);
    ax->n = n;
    for (int p = -L; p <= L; p++) {
        /* the term's frequency: k - p / period = k + sh + phi */
        double off = -(double)p / period;
        double fl = floor(off + 1e-9), fr = off - fl;
        if (fr < 0)
            fr = 0;
        int c = 0;
        while (c < ax->ncl && fabs(ax->phi[c] - fr) > 1e-9)
            c++;
        if (c == ax->ncl) {
            ax->phi[c] = fr;
            ax->lo[c] = ax->hi[c] = (int)fl;
            ax->ncl++;
        }
        ax->cls[p + L] = c;
        ax->sh[p + L] = (int)fl;
        if ((int)fl < ax->lo[c])
            ax->lo[c] = (int)fl;
        if ((int)fl > ax->hi[c])
            ax->hi[c] = (int)fl;
    }
    for (int c = 0; c < ax->ncl; c++)
        if (ax->hi[c] - ax->lo[c] > ax->span)
            ax->span = ax->hi[c] - ax->lo[c];
    /* -k = -(g + lo + phi - n/2) = g' + lo' + phi' - n/2 with phi' = 1 - phi
     * (0 when phi is 0) */
    for (int c = 0; c < ax->ncl; c++) {
        double want = ax->phi[c] > 0 ? 1.0 - ax->phi[c] : 0.0;
        ax->mcl[c] = -1;
        for (int d = 0; d < ax->ncl; d++)
            if (fabs(ax->phi[d] - want) < 1e-9)
                ax->mcl[c] = d;
        if (ax->mcl[c] >= 0)
            ax->mo[c] = 2L * (n / 2) - ax->lo[c] - ax->lo[ax->mcl[c]] - (ax->phi[c] > 0);
    }
}

/* k (cycles/FOV) of point g of class c's grid along axis `ax`. */
static double axis_k(const grid_axis *ax, int c, size_t g)
{
    return (double)((long)g + ax->lo[c] - (long)(ax->n / 2)) + ax->phi[c];
}

/* The shapes' weights per time class (scale included). */
static void plan_weights(const kw_sim *s, kw_sim_grid *g)
{
    const kw_phantom *p = s->o.phantom;
    const kw_sim_options *o = &s->o;
    g->fixed = !o->times && !(o->bandwidth_hz > 0);
    if (g->fixed) {
        /* every Cartesian sample at TE (kw_sim_sample_time) */
        double complex own[NS];
        kw_sim_shape_signal(s, o->contrast.te_s, own);
        g->nt = 1;
        for (int i = 0; i < s->nshapes; i++) {
            int par = p->shapes[i].parent;
            double complex w = own[i];
            if (p->tissue && par >= 0)
                w -= own[par];
            w *= s->fs[i].scale;
            g->nw[i] = w != 0;
            g->wcls[i][0] = 0;
            g->w[i][0] = w;
        }
        return;
    }
    int cls[NS];
    g->nt = kw_sim_shape_classes(s, cls);
    for (int i = s->nshapes - 1; i >= 0; i--)
        g->rep[cls[i]] = i;
    for (int i = 0; i < s->nshapes; i++) {
        /* own signal steady x r_c(t), less the parent's where it replaces it */
        int par = p->shapes[i].parent, n = 0;
        int c2[2] = {cls[i], p->tissue && par >= 0 ? cls[par] : -1};
        double w2[2] = {kw_sim_shape_steady(s, i) * s->fs[i].scale,
                        par >= 0 ? -kw_sim_shape_steady(s, par) * s->fs[i].scale : 0.0};
        if (c2[1] == c2[0]) {
            w2[0] += w2[1];
            c2[1] = -1;
        }
        for (int u = 0; u < 2; u++)
            if (c2[u] >= 0 && w2[u] != 0) {
                g->wcls[i][n] = c2[u];
                g->w[i][n++] = w2[u];
            }
        g->nw[i] = n;
    }
}

/* Per-axis tables: the centre's phase exp(-i 2 pi f c) at every grid point
 * of every class, times the shape's sinc along that axis for separable
 * shapes (f the phantom frequency: (kx/2, -ky/2, kz/2)). */
static void fill_tables(const kw_sim *s, kw_sim_grid *g)
{
    static const double fsign[3] = {0.5, -0.5, 0.5};
    for (int a = 0; a < 3; a++) {
        const grid_axis *ax = &g->ax[a];
        for (int i = 0; i < s->nshapes; i++) {
            const struct kw_sim_shape *f = &s->fs[i];
            double cen = a == 0 ? f->cx : a == 1 ? f->cy : f->cz;
            for (int c = 0; c < ax->ncl; c++) {
                double complex *t = g->tab[a] + ((size_t)i * ax->ncl + c) * g->len[a];
                for (size_t k = 0; k < g->len[a]; k++) {
                    double fr = fsign[a] * axis_k(ax, c, k);
                    double ph = -2.0 * KW_PI * fr * cen;
                    double m = 1.0;
                    if (g->sep[i] && a == 0)
                        m = kw_ft_sinc(2.0 * f->a * fr * f->ca);
                    else if (g->sep[i] && a == 1)
                        m = kw_ft_sinc(2.0 * f->b * fr * f->ca);
                    else if (g->sep[i] && a == 2 && f->kind == KW_SHAPE_BOX)
                        m = kw_ft_sinc(2.0 * f->c * fr);
                    t[k] = m * (cos(ph) + I * sin(ph));
                }
            }
        }
    }
}

static int alloc_grids(kw_sim_grid *g)
{
    const grid_axis *ax = g->ax;
    size_t blocks = (size_t)g->nt * ax[0].ncl * ax[1].ncl * ax[2].ncl;
    int nca = ax[g->ca].n;
    for (int b = nca;; b = (b + 1) / 2) {
        for (int a = 0; a < 3; a++)
            g->dim[a] = a == g->ca ? (size_t)(b + ax[a].span) : g->len[a];
        g->blk = g->dim[0] * g->dim[1] * g->dim[2];
        g->band = b;
        if ((blocks * g->blk * sizeof *g->g <= GRID_BYTES || b == 1) &&
            (g->g = kw_alloc_n(blocks * g->blk, sizeof *g->g)))
            return 1;
        if (b == 1)
            return 0;
    }
}

kw_status kw_sim_grid_create(kw_sim *s)
{
    const kw_sim_options *o = &s->o;
    const double *gr = o->df_grad_hz;
    if (o->per_sample || o->traj || o->ncoils < 1 || gr[0] != 0 || gr[1] != 0 || gr[2] != 0)
        return KW_OK;
    kw_sim_grid *g = kw_alloc_n(1, sizeof *g);
    if (!g)
        return KW_OK; /* the per-sample path */
    memset(g, 0, sizeof *g);
    const int nd3 = s->cdims[0] > 1;
    plan_axis(&g->ax[0], (int)s->cdims[2], o->coil_order, o->coil_period);
    plan_axis(&g->ax[1], (int)s->cdims[1], o->coil_order, o->coil_period);
    plan_axis(&g->ax[2], (int)s->cdims[0], s->lz, o->coil_period);
    g->ca = nd3 ? 2 : 1;
    for (int a = 0; a < 3; a++)
        g->len[a] = (size_t)g->ax[a].n + (size_t)g->ax[a].span;
    for (int i = 0; i < s->nshapes; i++) {
        const struct kw_sim_shape *f = &s->fs[i];
        g->sep[i] = (f->kind == KW_SHAPE_BOX || f->kind == KW_SHAPE_RECT) && f->sa == 0;
        g->amp[i] = f->kind == KW_SHAPE_BOX ? 8.0 * f->a * f->b * f->c : 4.0 * f->a * f->b;
    }
    plan_weights(s, g);
    for (int i = 0; i < s->nshapes; i++) {
        /* a shape of zero extent (a multi-slice cut beyond it) has a zero
         * spectrum everywhere: it adds nothing */
        const struct kw_sim_shape *f = &s->fs[i];
        int k3 = f->kind == KW_SHAPE_ELLIPSOID || f->kind == KW_SHAPE_BOX;
        if (f->a == 0 || f->b == 0 || (k3 && f->c == 0))
            g->nw[i] = 0;
    }
    const size_t nx = g->ax[0].n, nc = (size_t)o->ncoils;
    g->nthreads = omp_get_max_threads();
    /* scratch: the coils' sums, a row of class sums and of factors
     * (combine_row); a row of amplitudes and values (fill_row) */
    g->scr_n = nc * nx + nx + (size_t)g->nt * nx;
    if (g->scr_n < (size_t)g->ax[0].ncl * g->len[0])
        g->scr_n = (size_t)g->ax[0].ncl * g->len[0]; /* two rows of amplitudes (fill_band) */
    int ok = 1;
    for (int a = 0; a < 3 && ok; a++)
        ok = !!(g->tab[a] = kw_alloc_n((size_t)s->nshapes * g->ax[a].ncl * g->len[a], sizeof **g->tab));
    ok = ok && (g->coef = kw_alloc_n((size_t)s->terms * nc, sizeof *g->coef)) &&
         (g->scr = kw_alloc_n(g->scr_n * (size_t)g->nthreads, sizeof *g->scr));
    if (ok && !g->fixed && !o->times_per_sample)
        ok = !!(g->rcol = kw_alloc_n((size_t)g->nt * nx, sizeof *g->rcol));
    if (!ok || !alloc_grids(g)) {
        /* the memory is refused: the per-sample path needs none */
        kw_sim_grid_destroy(g);
        return KW_OK;
    }
    for (int j = 0; j < s->terms; j++)
        for (size_t c = 0; c < nc; c++)
            g->coef[(size_t)j * nc + c] = o->coil_coef[c * (size_t)s->terms + (size_t)j];
    if (g->rcol)
        for (int t = 0; t < g->nt; t++)
            for (size_t x = 0; x < nx; x++)
                g->rcol[(size_t)t * nx + x] =
                    kw_sim_shape_factor(s, g->rep[t], kw_sim_sample_time(o, x, x));
    fill_tables(s, g);
    s->grid = g;
    return KW_OK;
}

void kw_sim_grid_destroy(kw_sim_grid *g)
{
    if (!g)
        return;
    for (int a = 0; a < 3; a++)
        kw_free(g->tab[a]);
    kw_free(g->coef);
    kw_free(g->rcol);
    kw_free(g->scr);
    kw_free(g->g);
    kw_free(g);
}

/* A non-separable shape's amplitude at phantom frequency (fx, fy, fz) (the
 * formulas of kw_sim_shape_mag()). */
static double mag_at(const struct kw_sim_shape *f, double fx, double fy, double fz)
{
    double fu = fx * f->ca + fy * f->sa;
    double fv = -fx * f->sa + fy * f->ca;
    double au = f->a * fu, bv = f->b * fv;
    if (f->kind == KW_SHAPE_ELLIPSE)
        return 2.0 * KW_PI * f->a * f->b * kw_ft_jinc(2.0 * KW_PI * sqrt(au * au + bv * bv));
    if (f->kind == KW_SHAPE_ELLIPSOID) {
        double cw = f->c * fz;
        return 4.0 * KW_PI * f->a * f->b * f->c * kw_ft_sjinc(2.0 * KW_PI * sqrt(au * au + bv * bv + cw * cw));
    }
    return kw_sim_shape_mag(f, fx, fy, fz);
}

/* Points of class c along an axis: n + hi - lo (the banded axis: fewer). */
static long axis_points(const grid_axis *ax, int c)
{
    return (long)ax->n + ax->hi[c] - ax->lo[c];
}

/* The point -k of point g of class c: its class *cm and index (-1: none). */
static long axis_mirror(const grid_axis *ax, int c, long g, int *cm)
{
    *cm = ax->mcl[c];
    if (*cm < 0)
        return -1;
    long gm = ax->mo[c] - g;
    return gm >= 0 && gm < axis_points(ax, *cm) ? gm : -1;
}

/* Amplitudes of shape f on grid row (fy, fz) for every x class into m
 * (ncx x len): each spectrum is even, A(-f) = A(f), and an axis-aligned
 * one is even in fx alone, so the point -fx of a row takes the value
 * already found. `from`: the amplitudes of the mirror row (-fy) or NULL. */
static void mag_row(const struct kw_sim_shape *f, const grid_axis *ax, size_t len, double fy,
                    double fz, const double *from, double *m)
{
    const int aligned = f->sa == 0;
    for (int c = 0; c < ax->ncl; c++) {
        long np = axis_points(ax, c);
        for (long g = 0; g < np; g++) {
            int cm;
            long gm = axis_mirror(ax, c, g, &cm);
            double *dst = m + (size_t)c * len + (size_t)g;
            if (from && aligned)
                *dst = from[(size_t)c * len + (size_t)g];
            else if (from && gm >= 0)
                *dst = from[(size_t)cm * len + (size_t)gm];
            else if (!from && aligned && gm >= 0 && (cm < c || (cm == c && gm < g)))
                *dst = m[(size_t)cm * len + (size_t)gm];
            else
                *dst = mag_at(f, 0.5 * axis_k(ax, c, (size_t)g), fy, fz);
        }
    }
}

/* Add shape i's values on grid row (cz, zg, cy, yg) (global indices; the
 * block row at band-local gz, gy) to the time classes' grids; m: its
 * amplitudes (NULL: separable). */
static void add_row(const kw_sim *s, kw_sim_grid *g, int i, int cz, size_t zg, size_t gz, int cy,
                    size_t yg, size_t gy, const double *m)
{
    const grid_axis *ax = g->ax;
    const size_t bstride = (size_t)ax[2].ncl * ax[1].ncl * ax[0].ncl * g->blk;
    double complex tyz = g->tab[1][((size_t)i * ax[1].ncl + cy) * g->len[1] + yg] *
                         g->tab[2][((size_t)i * ax[2].ncl + cz) * g->len[2] + zg];
    if (!m)
        tyz *= g->amp[i];
    (void)s;
    for (int cx = 0; cx < ax[0].ncl; cx++) {
        size_t np = (size_t)axis_points(&ax[0], cx);
        const double *tx = (const double *)(g->tab[0] + ((size_t)i * ax[0].ncl + cx) * g->len[0]);
        const double *mc = m ? m + (size_t)cx * g->len[0] : NULL;
        size_t b0 = ((size_t)cz * ax[1].ncl + cy) * ax[0].ncl + cx;
        for (int u = 0; u < g->nw[i]; u++) {
            double complex wyz = g->w[i][u] * tyz;
            double wr = creal(wyz), wi = cimag(wyz);
            double *dst = (double *)(g->g + (size_t)g->wcls[i][u] * bstride + b0 * g->blk +
                                     (gz * g->dim[1] + gy) * g->dim[0]);
            if (mc) {
                for (size_t k = 0; k < np; k++) {
                    double xr = mc[k] * tx[2 * k], xi = mc[k] * tx[2 * k + 1];
                    dst[2 * k] += xr * wr - xi * wi;
                    dst[2 * k + 1] += xr * wi + xi * wr;
                }
            } else {
                for (size_t k = 0; k < np; k++) {
                    double xr = tx[2 * k], xi = tx[2 * k + 1];
                    dst[2 * k] += xr * wr - xi * wi;
                    dst[2 * k + 1] += xr * wi + xi * wr;
                }
            }
        }
    }
}

/* The grids of the band [s0, s1) along the banded axis: one task per grid
 * row pair (fy and its mirror -fy, which share the amplitudes). */
static void fill_band(const kw_sim *s, kw_sim_grid *g, size_t s0, size_t s1)
{
    const grid_axis *ax = g->ax;
    const long ncz = ax[2].ncl, ncy = ax[1].ncl;
    const long dz = (long)g->dim[2], dy = (long)g->dim[1];
    const long rows = ncz * dz * ncy * dy;
    const size_t bstride = (size_t)ax[2].ncl * ax[1].ncl * ax[0].ncl * g->blk;
    const long yoff = g->ca == 1 ? (long)s0 : 0, zoff = g->ca == 2 ? (long)s0 : 0;
#pragma omp parallel for num_threads(g->nthreads) schedule(dynamic, 2)
    for (long r = 0; r < rows; r++) {
        long gy = r % dy, cy = (r / dy) % ncy, gz = (r / (dy * ncy)) % dz, cz = r / (dy * ncy * dz);
        /* the rows this class's grid has in the band */
        long lz = g->ca == 2 ? (long)(s1 - s0) + ax[2].hi[cz] - ax[2].lo[cz] : axis_points(&ax[2], (int)cz);
        long ly = g->ca == 1 ? (long)(s1 - s0) + ax[1].hi[cy] - ax[1].lo[cy] : axis_points(&ax[1], (int)cy);
        if (gz >= lz || gy >= ly)
            continue;
        /* the mirror row: handled with the first of the two */
        int cyp;
        long ygp = axis_mirror(&ax[1], (int)cy, gy + yoff, &cyp), gyp = ygp - yoff;
        long lyp = ygp < 0 ? 0
                           : g->ca == 1 ? (long)(s1 - s0) + ax[1].hi[cyp] - ax[1].lo[cyp]
                                        : axis_points(&ax[1], cyp);
        int pair = ygp >= 0 && gyp >= 0 && gyp < lyp;
        if (pair && (cyp < cy || (cyp == cy && gyp < gy)))
            continue;
        if (pair && cyp == cy && gyp == gy)
            pair = 0;
        double *m = (double *)(g->scr + (size_t)omp_get_thread_num() * g->scr_n);
        double *mp = m + (size_t)ax[0].ncl * g->len[0];
        size_t zg = (size_t)(gz + zoff);
        double fz = 0.5 * axis_k(&ax[2], (int)cz, zg);
        double fy = -0.5 * axis_k(&ax[1], (int)cy, (size_t)(gy + yoff));
        for (int t = 0; t < g->nt; t++)
            for (int cx = 0; cx < ax[0].ncl; cx++) {
                size_t b0 = ((size_t)cz * ax[1].ncl + cy) * ax[0].ncl + cx;
                memset(g->g + t * bstride + b0 * g->blk + ((size_t)gz * g->dim[1] + (size_t)gy) * g->dim[0],
                       0, g->dim[0] * sizeof *g->g);
                if (pair) {
                    b0 = ((size_t)cz * ax[1].ncl + cyp) * ax[0].ncl + cx;
                    memset(g->g + t * bstride + b0 * g->blk +
                               ((size_t)gz * g->dim[1] + (size_t)gyp) * g->dim[0],
                           0, g->dim[0] * sizeof *g->g);
                }
            }
        for (int i = 0; i < s->nshapes; i++) {
            if (!g->nw[i])
                continue;
            const double *mi = NULL, *mpi = NULL;
            if (!g->sep[i]) {
                mag_row(&s->fs[i], &ax[0], g->len[0], fy, fz, NULL, m);
                mi = m;
                if (pair) {
                    double fyp = -0.5 * axis_k(&ax[1], cyp, (size_t)ygp);
                    mag_row(&s->fs[i], &ax[0], g->len[0], fyp, fz, m, mp);
                    mpi = mp;
                }
            }
            add_row(s, g, i, (int)cz, zg, (size_t)gz, (int)cy, (size_t)(gy + yoff), (size_t)gy, mi);
            if (pair)
                add_row(s, g, i, (int)cz, zg, (size_t)gz, cyp, (size_t)ygp, (size_t)gyp, mpi);
        }
    }
}

/* The time factors of output row (iz, iy) into r (nt x nx). */
static const double complex *row_factors(const kw_sim *s, const kw_sim_grid *g, size_t i0,
                                         double complex *r)
{
    const size_t nx = g->ax[0].n;
    if (g->rcol)
        return g->rcol;
    for (int t = 0; t < g->nt; t++)
        for (size_t x = 0; x < nx; x++)
            r[(size_t)t * nx + x] = kw_sim_shape_factor(s, g->rep[t], kw_sim_sample_time(&s->o, i0 + x, x));
    return r;
}

/* Output row (iz, iy) of the band [s0, ...): every coil's samples. */
static void combine_row(const kw_sim *s, const kw_sim_grid *g, size_t iz, size_t iy, size_t s0,
                        kw_cfloat *out, double complex *scr)
{
    const grid_axis *ax = g->ax;
    const size_t nx = ax[0].n, ny = ax[1].n, nc = (size_t)s->o.ncoils;
    const size_t i0 = (iz * ny + iy) * nx;
    const uint8_t *mask = s->o.mask ? s->o.mask + i0 : NULL;
    if (mask) {
        size_t x = 0;
        while (x < nx && !mask[x])
            x++;
        if (x == nx)
            return;
    }
    double complex *acc = scr, *tmp = scr + nc * nx, *rbuf = tmp + nx;
    memset(acc, 0, nc * nx * sizeof *acc);
    const double complex *r = g->fixed ? NULL : row_factors(s, g, i0, rbuf);
    const size_t bstride = (size_t)ax[2].ncl * ax[1].ncl * ax[0].ncl * g->blk;
    const int L = s->o.coil_order, Lz = s->lz, side = 2 * L + 1;
    size_t zl = iz - (g->ca == 2 ? s0 : 0), yl = iy - (g->ca == 1 ? s0 : 0);
    for (int rz = -Lz; rz <= Lz; rz++) {
        int cz = ax[2].cls[rz + Lz];
        size_t gz = zl + (size_t)(ax[2].sh[rz + Lz] - ax[2].lo[cz]);
        for (int q = -L; q <= L; q++) {
            int cy = ax[1].cls[q + L];
            size_t gy = yl + (size_t)(ax[1].sh[q + L] - ax[1].lo[cy]);
            for (int p = -L; p <= L; p++) {
                int cx = ax[0].cls[p + L];
                size_t gx = (size_t)(ax[0].sh[p + L] - ax[0].lo[cx]);
                size_t b = ((size_t)cz * ax[1].ncl + cy) * ax[0].ncl + cx;
                const double complex *src = g->g + b * g->blk + (gz * g->dim[1] + gy) * g->dim[0] + gx;
                if (r) {
                    /* the classes' values times their factors at each sample's time */
                    double *tv = (double *)tmp;
                    for (size_t x = 0; x < nx; x++)
                        tv[2 * x] = tv[2 * x + 1] = 0;
                    for (int t = 0; t < g->nt; t++) {
                        const double *sv = (const double *)(src + (size_t)t * bstride);
                        const double *rv = (const double *)(r + (size_t)t * nx);
                        for (size_t x = 0; x < nx; x++) {
                            tv[2 * x] += rv[2 * x] * sv[2 * x] - rv[2 * x + 1] * sv[2 * x + 1];
                            tv[2 * x + 1] += rv[2 * x] * sv[2 * x + 1] + rv[2 * x + 1] * sv[2 * x];
                        }
                    }
                    src = tmp;
                }
                int j = ((rz + Lz) * side + (q + L)) * side + (p + L);
                const double *sv = (const double *)src;
                for (size_t c = 0; c < nc; c++) {
                    double cr = creal(g->coef[(size_t)j * nc + c]), ci = cimag(g->coef[(size_t)j * nc + c]);
                    double *av = (double *)(acc + c * nx);
#pragma omp simd
                    for (size_t x = 0; x < nx; x++) {
                        av[2 * x] += cr * sv[2 * x] - ci * sv[2 * x + 1];
                        av[2 * x + 1] += cr * sv[2 * x + 1] + ci * sv[2 * x];
                    }
                }
            }
        }
    }
    const size_t count = s->count;
    for (size_t c = 0; c < nc; c++)
        for (size_t x = 0; x < nx; x++)
            if (!mask || mask[x])
                out[c * count + i0 + x] = (kw_cfloat)acc[c * nx + x];
}

kw_status kw_sim_grid_execute(kw_sim *s, kw_cfloat *out, kw_progress_fn progress, void *user)
{
    kw_sim_grid *g = s->grid;
    const size_t nca = (size_t)g->ax[g->ca].n, band = (size_t)g->band;
    const size_t nbands = (nca + band - 1) / band;
    const size_t ny = g->ax[1].n;
    for (size_t k = 0; k < nbands; k++) {
        size_t s0 = k * band, s1 = s0 + band < nca ? s0 + band : nca;
        fill_band(s, g, s0, s1);
        /* output rows of the band: (iz, iy) */
        size_t z0 = g->ca == 2 ? s0 : 0, z1 = g->ca == 2 ? s1 : 1;
        size_t y0 = g->ca == 1 ? s0 : 0, y1 = g->ca == 1 ? s1 : ny;
        long rows = (long)((z1 - z0) * (y1 - y0));
#pragma omp parallel for num_threads(g->nthreads) schedule(dynamic, 2)
        for (long r = 0; r < rows; r++) {
            size_t iz = z0 + (size_t)r / (y1 - y0), iy = y0 + (size_t)r % (y1 - y0);
            double complex *scr = g->scr + (size_t)omp_get_thread_num() * g->scr_n;
            combine_row(s, g, iz, iy, s0, out, scr);
        }
        if (progress) {
            kw_progress pr = {"encode", (int)k + 1, (int)nbands, NAN, NULL};
            if (progress(user, &pr))
                return kw_set_error(KW_ECANCELLED, "encode: cancelled");
        }
    }
    return KW_OK;
}
