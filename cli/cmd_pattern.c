/* cmd_pattern.c: `kweave pattern`: make Cartesian masks and radial
 * trajectories, analyse them (point spread, gaps, incoherence), compare
 * several side by side. Methods live in libencode/sampling.c,
 * libencode/traj.c and recon/psf.c; this file reads, writes and reports.
 * Documentation: docs/patterns.md. */
#define _POSIX_C_SOURCE 200809L
#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "jsonio.h"
#include "kw_dcf.h"
#include "kw_psf.h"
#include "kw_sampling.h"
#include "kw_traj.h"
#include "kw_wavelet.h"
#include "npy.h"
#include "outfile.h"
#include "png.h"

/* Spiral and EPI come from the planner's gradient design (kw_gradient.h),
 * so that a trajectory is one the hardware can play. */
#include "kw_gradient.h"
#include <dlfcn.h>

#define MAX_COMPARE 8
#define PSF_DB_FLOOR -60.0  /* picture window: common practice, no source */
#define TPSF_ORDER 4        /* db4, as in the compressed-sensing literature */
#define TPSF_MAX_LEVELS 4
/* defaults shared with `kweave plan` (common practice, no source) */
#define DEFAULT_BW_PER_PIXEL 250.0 /* Hz/pixel: dwell = 1 / (250 N) */
#define DEFAULT_FOV_M 0.256
#define DEFAULT_GMAX 40e-3
#define DEFAULT_SLEW 150.0
#define DEFAULT_RASTER 10e-6
#define DEFAULT_FAST_DWELL 4e-6    /* spiral/EPI ADC dwell, s: common practice, no source */
#define DEFAULT_MAX_READOUT 10e-3 /* spiral interleaf, s: common practice, no source */

static const char *USAGE =
    "usage: kweave pattern --kind KIND --matrix NXxNY[xNZ] [options] [--out F.npy]\n"
    "       kweave pattern --analyse F.npy [--json F] [--psf F.png]\n"
    "       kweave pattern --compare A.npy B.npy ... [--png F.png] [--json F]\n"
    "Kinds: full uniform random poisson lattice partial (Cartesian masks);\n"
    "       radial golden stack-of-stars (radial trajectories); spiral epi.\n"
    "A 2-D matrix gives a mask of shape (ny, nx) sampled along whole readout\n"
    "rows; a 3-D matrix gives a ky-kz mask of shape (nz, ny). Trajectories are\n"
    "(samples, ndim) in cycles/FOV with sample times in F_times.npy.";

/* ---- small parsers ---------------------------------------------------------- */

/* "256", "256x128", "2x2", "4.5": up to `max` positive numbers */
static int parse_list(const char *field, const char *s, double *v, int max, int *n)
{
    *n = 0;
    const char *p = s;
    while (*p) {
        char *end;
        double x = strtod(p, &end);
        if (end == p || !isfinite(x))
            return kw_cli_fail(field, "'%s' is not of the form AxB", s);
        if (*n == max)
            return kw_cli_fail(field, "'%s' has more than %d parts", s, max);
        v[(*n)++] = x;
        p = end;
        if (*p == 'x' || *p == 'X') {
            p++;
            if (!*p)
                return kw_cli_fail(field, "'%s' ends with x", s);
        } else if (*p) {
            return kw_cli_fail(field, "'%s' is not of the form AxB", s);
        }
    }
    if (*n == 0)
        return kw_cli_fail(field, "empty value");
    return -1;
}

static int parse_sizes(const char *field, const char *s, size_t *v, int max, int *n)
{
    double d[3];
    int rc = parse_list(field, s, d, max, n);
    if (rc >= 0)
        return rc;
    for (int i = 0; i < *n; i++) {
        if (d[i] != floor(d[i]) || d[i] < 0 || d[i] > 65536)
            return kw_cli_fail(field, "'%s': sizes must be whole numbers in 0..65536", s);
        v[i] = (size_t)d[i];
    }
    return -1;
}

static cJSON *num_or_null(double v) { return isfinite(v) ? cJSON_CreateNumber(v) : cJSON_CreateNull(); }

static void add_num(cJSON *o, const char *k, double v) { cJSON_AddItemToObject(o, k, num_or_null(v)); }

/* ---- the analysis of one pattern ---------------------------------------------- */

typedef struct analysis {
    char name[256];        /* file or kind */
    char kind[32];         /* pattern kind if known */
    int cartesian;
    int plane;             /* Cartesian: 1 = ky-kz plane (nz, ny), 0 = lines (ny, nx) */
    const char *axes[3];   /* axis names in array order */
    int rank;
    size_t dims[3];
    double acceleration, sampled_fraction;
    double acs_lines;      /* NaN when not applicable */
    size_t acs_block[2];   /* along axes 0, 1 */
    double max_gap, gap_axis[3];
    kw_psf_metrics psf;
    float complex *psfbuf; /* the PSF itself (owned) */
    size_t psfdims[3];
    int psfrank;
    double tpsf[TPSF_MAX_LEVELS];
    int tpsf_levels;       /* 0: not computed */
    double nyquist_spokes; /* radial: pi N / 2, else NaN */
    int weights;           /* non-Cartesian PSF weights: W_* */
    size_t spokes;
    float *picture;        /* mask or trajectory picture, values 0..1 (owned) */
    size_t pic_h, pic_w;
} analysis;

static void analysis_free(analysis *a)
{
    kw_free(a->psfbuf);
    kw_free(a->picture);
    a->psfbuf = NULL;
    a->picture = NULL;
}

/* contiguous sampled run through the centre of axis `ax` (other index at its
 * centre), lo/hi offsets from the centre */
static void centre_run(const float *w, const size_t *dims, int ax, long *lo, long *hi)
{
    size_t c0 = dims[0] / 2, c1 = dims[1] / 2;
    long n = (long)dims[ax];
    long c = (long)(dims[ax] / 2);
#define AT(i) (ax == 0 ? w[(size_t)(i) * dims[1] + c1] : w[c0 * dims[1] + (size_t)(i)])
    *lo = 0;
    *hi = -1;
    if (!(AT(c) > 0))
        return;
    long a = c, b = c;
    while (a - 1 >= 0 && AT(a - 1) > 0)
        a--;
    while (b + 1 < n && AT(b + 1) > 0)
        b++;
#undef AT
    *lo = a - c;
    *hi = b - c;
}

static int rect_full(const float *w, const size_t *dims, long y0, long y1, long x0, long x1)
{
    for (long y = y0; y <= y1; y++)
        for (long x = x0; x <= x1; x++)
            if (!(w[(size_t)y * dims[1] + (size_t)x] > 0))
                return 0;
    return 1;
}

/* Cartesian figures that need no PSF: acceleration, ACS, gaps */
static void cartesian_counts(analysis *a, const float *w)
{
    const size_t *d = a->dims;
    size_t n = d[0] * d[1], s = 0;
    for (size_t i = 0; i < n; i++)
        s += w[i] > 0;
    a->sampled_fraction = (double)s / (double)n;
    a->acceleration = s ? (double)n / (double)s : INFINITY;
    /* ACS: the contiguous fully sampled block through k = 0; for line masks
     * the run of whole rows along ky; a run of one line is no ACS */
    long lo0, hi0, lo1, hi1;
    centre_run(w, d, 0, &lo0, &hi0);
    if (!a->plane) {
        long len = hi0 - lo0 + 1;
        /* every row of the run must be fully sampled */
        if (len > 0 && !rect_full(w, d, (long)(d[0] / 2) + lo0, (long)(d[0] / 2) + hi0, 0,
                                  (long)d[1] - 1))
            len = 0;
        a->acs_block[0] = len >= 2 ? (size_t)len : 0;
        a->acs_block[1] = d[1];
        a->acs_lines = (double)a->acs_block[0];
    } else {
        centre_run(w, d, 1, &lo1, &hi1);
        long cy = (long)(d[0] / 2), cx = (long)(d[1] / 2);
        /* shrink the larger side until the rectangle is fully sampled */
        while (hi0 >= lo0 && hi1 >= lo1 &&
               !rect_full(w, d, cy + lo0, cy + hi0, cx + lo1, cx + hi1)) {
            if (hi0 - lo0 >= hi1 - lo1) {
                if (-lo0 > hi0) lo0++; else hi0--;
            } else {
                if (-lo1 > hi1) lo1++; else hi1--;
            }
        }
        long ly = hi0 - lo0 + 1, lx = hi1 - lo1 + 1;
        if (ly < 2 || lx < 2)
            ly = lx = 0;
        a->acs_block[0] = (size_t)(ly > 0 ? ly : 0);
        a->acs_block[1] = (size_t)(lx > 0 ? lx : 0);
        a->acs_lines = (double)(a->acs_block[0] * a->acs_block[1]);
    }
    /* largest step between neighbouring samples along each axis (lines of
     * the other axis), in delta-k; shown per axis for line masks */
    for (int ax = 0; ax < 2; ax++) {
        size_t nl = d[1 - ax], len = d[ax];
        double g = 0;
        for (size_t l = 0; l < nl; l++) {
            long last = -1;
            for (size_t i = 0; i < len; i++) {
                size_t idx = ax == 0 ? i * d[1] + l : l * d[1] + i;
                if (w[idx] > 0) {
                    if (last >= 0 && (double)((long)i - last) > g)
                        g = (double)((long)i - last);
                    last = (long)i;
                }
            }
        }
        a->gap_axis[ax] = g;
    }
}

static int analyse_cartesian(analysis *a, const float *w)
{
    cartesian_counts(a, w);
    KW_FAIL_IF(a->sampled_fraction == 0, KW_EFORMAT, "mask: nothing is sampled");
    kw_status gst = kw_mask_gap(w, a->dims[0], a->dims[1], &a->max_gap);
    if (gst)
        return gst;
    a->psfrank = 2;
    a->psfdims[0] = a->dims[0];
    a->psfdims[1] = a->dims[1];
    size_t n = a->dims[0] * a->dims[1];
    a->psfbuf = kw_alloc(n * sizeof *a->psfbuf);
    KW_FAIL_IF(!a->psfbuf, KW_ENOMEM, "psf: out of memory");
    kw_psf_plan *pp;
    kw_status st = kw_psf_create(&pp, 2, a->dims);
    if (st)
        return st;
    st = kw_psf_execute(pp, w, a->psfbuf);
    kw_psf_destroy(pp);
    if (!st)
        st = kw_psf_measure(a->psfbuf, 2, a->dims, &a->psf);
    if (!st) /* the continuous FWHM replaces the grid-interpolated one */
        st = kw_psf_fwhm_cartesian(w, 2, a->dims, a->psf.fwhm);
    if (st)
        return st;
    /* transform point spread in the db4 wavelet domain */
    int L = kw_wavelet_max_levels(a->dims[0], a->dims[1]);
    if (L > TPSF_MAX_LEVELS)
        L = TPSF_MAX_LEVELS;
    a->tpsf_levels = 0;
    if (L >= 1) {
        kw_tpsf_plan *tp;
        st = kw_tpsf_create(&tp, a->dims[0], a->dims[1], TPSF_ORDER, L);
        if (!st)
            st = kw_tpsf_execute(tp, w, a->tpsf);
        kw_tpsf_destroy(tp);
        if (st)
            return st;
        a->tpsf_levels = L;
    }
    a->nyquist_spokes = NAN;
    a->picture = kw_alloc(n * sizeof *a->picture);
    KW_FAIL_IF(!a->picture, KW_ENOMEM, "picture: out of memory");
    float wmax = 0;
    for (size_t i = 0; i < n; i++)
        wmax = w[i] > wmax ? w[i] : wmax;
    for (size_t i = 0; i < n; i++)
        a->picture[i] = wmax > 0 ? w[i] / wmax : 0;
    a->pic_h = a->dims[0];
    a->pic_w = a->dims[1];
    return KW_OK;
}

enum { W_NONE = 0, W_RADIAL = 1, W_PIPE = 2 };

/* trajectory information from its sidecar */
typedef struct traj_info {
    size_t n, nz, readout, spokes;
    int ndim;
    int radial;  /* full-spoke radial family: Nyquist spokes pi N / 2 */
    int weights; /* W_NONE, W_RADIAL (area ramp), W_PIPE (Pipe-Menon) */
    int oversampling; /* radial: readout oversampling F (readout = F n) */
} traj_info;

/* largest distance from a sample to the nearest sample of another readout,
 * and the largest step along a readout, in delta-k (in-plane) */
static kw_status traj_gap(const float *k, size_t stride, size_t ns, size_t readout, size_t n,
                          double *gap)
{
    const long half = (long)n / 2 + 2, side = 2 * half + 1;
    size_t ncell = (size_t)(side * side);
    size_t *head = malloc(ncell * sizeof *head), *next = malloc(ns * sizeof *next);
    if (!head || !next) {
        free(head);
        free(next);
        return kw_set_error(KW_ENOMEM, "gap: out of memory");
    }
    for (size_t c = 0; c < ncell; c++)
        head[c] = SIZE_MAX;
    for (size_t s = 0; s < ns; s++) {
        long cx = lround(floor(k[s * stride])) + half, cy = lround(floor(k[s * stride + 1])) + half;
        if (cx < 0) cx = 0;
        if (cy < 0) cy = 0;
        if (cx >= side) cx = side - 1;
        if (cy >= side) cy = side - 1;
        size_t c = (size_t)(cy * side + cx);
        next[s] = head[c];
        head[c] = s;
    }
    double g = 0;
    for (size_t s = 0; s < ns; s++) {
        if ((s + 1) % readout != 0) { /* along the readout */
            double dx = k[(s + 1) * stride] - k[s * stride];
            double dy = k[(s + 1) * stride + 1] - k[s * stride + 1];
            double d = sqrt(dx * dx + dy * dy);
            if (d > g)
                g = d;
        }
        long cx = lround(floor(k[s * stride])) + half, cy = lround(floor(k[s * stride + 1])) + half;
        double best = INFINITY;
        for (long r = 0; r < side; r++) {
            for (long y = cy - r; y <= cy + r; y++)
                for (long x = cx - r; x <= cx + r; x++) {
                    if (labs(y - cy) != r && labs(x - cx) != r)
                        continue;
                    if (x < 0 || y < 0 || x >= side || y >= side)
                        continue;
                    for (size_t q = head[(size_t)(y * side + x)]; q != SIZE_MAX; q = next[q]) {
                        if (q / readout == s / readout)
                            continue;
                        double dx = k[q * stride] - k[s * stride];
                        double dy = k[q * stride + 1] - k[s * stride + 1];
                        double d = sqrt(dx * dx + dy * dy);
                        if (d < best)
                            best = d;
                    }
                }
            if (best <= (double)r)
                break;
        }
        if (isfinite(best) && best > g)
            g = best;
    }
    free(head);
    free(next);
    *gap = g;
    return KW_OK;
}

static int analyse_traj(analysis *a, const kw_array *t, const traj_info *ti, size_t psf_size)
{
    const float *k = t->data;
    const size_t ns = t->dims[0], stride = t->dims[1];
    /* one plane: the kz = 0 partition of a stack of stars */
    size_t first = 0, count = ns;
    if (stride == 3) {
        first = ns;
        count = 0;
        for (size_t s = 0; s < ns; s++)
            if (k[s * 3 + 2] == 0.0f) {
                if (first == ns)
                    first = s;
                count++;
            }
        KW_FAIL_IF(count == 0, KW_EFORMAT, "trajectory: no samples in the kz = 0 partition");
        for (size_t s = first; s < first + count; s++)
            KW_FAIL_IF(s >= ns || k[s * 3 + 2] != 0.0f, KW_EFORMAT,
                       "trajectory: the kz = 0 partition is not contiguous");
    }
    KW_FAIL_IF(count % ti->readout != 0, KW_EFORMAT,
               "trajectory: %zu samples per plane are not whole readouts of %zu", count,
               ti->readout);
    const float *kp = k + first * stride;
    a->rank = 2;
    a->dims[0] = a->dims[1] = ti->n;
    a->axes[0] = "y";
    a->axes[1] = "x";
    a->sampled_fraction = (double)count / ((double)ti->n * (double)ti->n);
    a->spokes = count / ti->readout;
    a->nyquist_spokes = ti->radial ? (double)kw_traj_nyquist_spokes(ti->n) : NAN;
    a->acceleration = ti->radial ? KW_PI * (double)ti->n / 2.0 / (double)a->spokes : NAN;
    if (!ti->radial && ti->weights == W_NONE) /* EPI: a Cartesian subset */
        a->acceleration = (double)ti->n * (double)ti->n / (double)count;
    a->weights = ti->weights;
    a->acs_lines = NAN;
    kw_status st = traj_gap(kp, stride, count, ti->readout, ti->n, &a->max_gap);
    if (st)
        return st;
    a->gap_axis[0] = a->gap_axis[1] = NAN;
    float *w = NULL;
    if (ti->weights != W_NONE) {
        w = malloc(count * sizeof *w);
        KW_FAIL_IF(!w, KW_ENOMEM, "weights: out of memory");
        kw_traj_opts o = {.kind = KW_TRAJ_RADIAL, .n = ti->n, .nz = 1, .spokes = a->spokes,
                          .dwell_s = 1, .te_s = 1,
                          .oversampling = ti->radial ? ti->oversampling : 1};
        if (ti->weights == W_RADIAL) {
            st = kw_traj_radial_weights(&o, w);
        } else {
            /* Pipe & Menon 1999 iterative weights (recon/kw_dcf.h); the grid
             * is 4 points wider so k-max = N/2 lies inside [-M/2, M/2) */
            size_t dd[2] = {ti->n + 4, ti->n + 4};
            st = kw_dcf_pipe(2, dd, count, kp, 0, NULL, w);
        }
        if (st) {
            free(w);
            return st;
        }
    }
    size_t m = psf_size;
    a->psfrank = 2;
    a->psfdims[0] = a->psfdims[1] = m;
    a->psfbuf = kw_alloc(m * m * sizeof *a->psfbuf);
    if (!a->psfbuf) {
        free(w);
        return kw_set_error(KW_ENOMEM, "psf: out of memory");
    }
    st = kw_psf_ndft(kp, stride, w, count, ti->n, m, a->psfbuf, kw_cli_progress, NULL);
    kw_cli_progress_done();
    if (!st)
        st = kw_psf_measure(a->psfbuf, 2, a->psfdims, &a->psf);
    if (!st) /* the continuous FWHM replaces the grid-interpolated one */
        st = kw_psf_fwhm_ndft(kp, stride, w, count, ti->n, a->psf.fwhm);
    free(w);
    if (st)
        return st;
    a->tpsf_levels = 0;
    /* picture: the plane's samples on a 512 x 512 canvas over [-N/2, N/2) */
    const size_t P = 512;
    a->picture = kw_alloc(P * P * sizeof *a->picture);
    KW_FAIL_IF(!a->picture, KW_ENOMEM, "picture: out of memory");
    a->pic_h = a->pic_w = P;
    for (size_t s = 0; s < count; s++) {
        double x = (kp[s * stride] / (double)ti->n + 0.5) * (double)P;
        double y = (0.5 - kp[s * stride + 1] / (double)ti->n) * (double)P; /* ky up */
        long ix = (long)floor(x), iy = (long)floor(y);
        if (ix >= 0 && iy >= 0 && ix < (long)P && iy < (long)P)
            a->picture[(size_t)iy * P + (size_t)ix] = 1.0f;
    }
    return KW_OK;
}

/* ---- reading a pattern file ---------------------------------------------------------- */

static const char *json_str(const cJSON *o, const char *k)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(o, k);
    return cJSON_IsString(it) ? it->valuestring : NULL;
}

static int json_size(const cJSON *o, const char *k, size_t *v)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(o, k);
    if (!cJSON_IsNumber(it) || !(it->valuedouble >= 1) || it->valuedouble > 1e9 ||
        it->valuedouble != floor(it->valuedouble))
        return 0;
    *v = (size_t)it->valuedouble;
    return 1;
}

/* The readout oversampling F of a radial-family trajectory: the sidecar's
 * "readout_oversampling" when present (files written before it existed
 * have F = 1: readout_samples = matrix), else readout_samples / matrix;
 * readout_samples must be F N and the first readout's samples 1/F cycle/FOV
 * apart. Returns -1 or the exit code. */
static int radial_oversampling(const cJSON *side, const kw_array *arr, traj_info *ti)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(side, "readout_oversampling");
    long f;
    if (it) {
        if (!cJSON_IsNumber(it) || it->valuedouble != floor(it->valuedouble) ||
            !(it->valuedouble >= 1 && it->valuedouble <= 4))
            return kw_cli_fail("readout_oversampling", "must be a whole number in 1..4");
        f = (long)it->valuedouble;
    } else {
        if (ti->readout % ti->n != 0 || ti->readout / ti->n > 4)
            return kw_cli_fail("readout_samples", "%zu is not F x the matrix %zu (F = 1..4)",
                               ti->readout, ti->n);
        f = (long)(ti->readout / ti->n);
    }
    if (ti->readout != (size_t)f * ti->n)
        return kw_cli_fail("readout_samples", "%zu differs from %ld x the matrix %zu",
                           ti->readout, f, ti->n);
    if (arr->dims[0] < ti->readout)
        return kw_cli_fail("readout_samples", "%zu samples per readout, the file holds %zu",
                           ti->readout, arr->dims[0]);
    /* the step along the first spoke (samples n = FN/2 and FN/2 + 1) */
    const float *k = arr->data;
    const size_t c = arr->dims[1], j = ti->readout / 2;
    double dx = (double)k[(j + 1) * c] - k[j * c], dy = (double)k[(j + 1) * c + 1] - k[j * c + 1];
    double step = sqrt(dx * dx + dy * dy);
    if (!(fabs(step * (double)f - 1.0) < 1e-3))
        return kw_cli_fail("readout_oversampling", "samples are %g cycle/FOV apart along a "
                           "readout, not 1/%ld", step, f);
    ti->oversampling = (int)f;
    return -1;
}

/* Analyse the file `path`; returns -1 on success or the exit code. */
static int analyse_file(const char *path, analysis *a, long psf_size)
{
    memset(a, 0, sizeof *a);
    snprintf(a->name, sizeof a->name, "%s", path);
    const char *slash = strrchr(path, '/');
    snprintf(a->name, sizeof a->name, "%s", slash ? slash + 1 : path);
    kw_array arr = {0};
    kw_status st = kw_npy_read(path, &arr);
    if (st)
        return kw_cli_status(st, "analyse");
    cJSON *side = NULL;
    char *sp = kw_sidecar_path(path);
    FILE *probe = sp ? fopen(sp, "rb") : NULL;
    if (probe) {
        fclose(probe);
        st = kw_json_read(sp, &side);
        if (st) {
            free(sp);
            kw_array_free(&arr);
            return kw_cli_status(st, "sidecar");
        }
    }
    free(sp);
    int rc = -1;
    const char *skind = side ? json_str(side, "kind") : NULL;
    const char *pk = side ? json_str(side, "pattern_kind") : NULL;
    snprintf(a->kind, sizeof a->kind, "%s", pk ? pk : "");
    st = kw_array_all_finite(&arr);
    if (st && arr.dtype != KW_U8) {
        rc = kw_cli_status(st, path);
        goto out;
    }
    if (arr.dtype == KW_C64) {
        rc = kw_cli_fail(path, "a pattern is uint8 or float32, not complex");
        goto out;
    }
    int is_traj = skind && strcmp(skind, "trajectory") == 0;
    if (!skind && arr.dtype == KW_F32 && arr.ndim == 2 && (arr.dims[1] == 2 || arr.dims[1] == 3)) {
        const float *v = arr.data;
        for (size_t i = 0; i < kw_array_count(&arr); i++)
            if (v[i] < 0)
                is_traj = 1;
    }
    if (is_traj) {
        if (arr.dtype != KW_F32 || arr.ndim != 2 || (arr.dims[1] != 2 && arr.dims[1] != 3) ||
            arr.dims[0] < 2) {
            rc = kw_cli_fail(path, "a trajectory must be float32 of shape (samples, 2 or 3)");
            goto out;
        }
        traj_info ti = {0};
        const cJSON *mat = side ? cJSON_GetObjectItemCaseSensitive(side, "matrix") : NULL;
        if (!side || !cJSON_IsArray(mat) || !cJSON_IsNumber(cJSON_GetArrayItem(mat, 0)) ||
            !json_size(side, "readout_samples", &ti.readout)) {
            rc = kw_cli_fail(path, "a trajectory needs its sidecar JSON with \"matrix\" "
                                   "and \"readout_samples\"");
            goto out;
        }
        double nn = cJSON_GetArrayItem(mat, 0)->valuedouble;
        if (!(nn >= 2 && nn <= 4096 && nn == floor(nn))) {
            rc = kw_cli_fail("matrix", "sidecar matrix %g outside 2..4096", nn);
            goto out;
        }
        ti.n = (size_t)nn;
        const cJSON *cols = cJSON_GetObjectItemCaseSensitive(side, "shape");
        if (cJSON_IsArray(cols) && cJSON_GetArraySize(cols) == 2 &&
            (cJSON_GetArrayItem(cols, 0)->valuedouble != (double)arr.dims[0] ||
             cJSON_GetArrayItem(cols, 1)->valuedouble != (double)arr.dims[1])) {
            rc = kw_cli_fail(path, "shape (%zu, %zu) differs from the sidecar's", arr.dims[0],
                             arr.dims[1]);
            goto out;
        }
        ti.radial = pk && (strcmp(pk, "radial") == 0 || strcmp(pk, "golden") == 0 ||
                           strcmp(pk, "stack-of-stars") == 0);
        ti.weights = ti.radial ? W_RADIAL : (pk && strcmp(pk, "spiral") == 0) ? W_PIPE : W_NONE;
        if (ti.radial) {
            rc = radial_oversampling(side, &arr, &ti);
            if (rc >= 0)
                goto out;
        }
        size_t m = psf_size > 0 ? (size_t)psf_size : (ti.n < 128 ? ti.n : 128);
        a->cartesian = 0;
        st = analyse_traj(a, &arr, &ti, m);
        if (st)
            rc = kw_cli_status(st, path);
        goto out;
    }
    if (skind && strcmp(skind, "mask") != 0) {
        rc = kw_cli_fail(path, "sidecar kind \"%s\" is not a mask or trajectory", skind);
        goto out;
    }
    if (arr.ndim != 2 || arr.dims[0] < 1 || arr.dims[1] < 1) {
        rc = kw_cli_fail(path, "a mask must be 2-D: (ny, nx) or (nz, ny), got %d dimensions",
                         arr.ndim);
        goto out;
    }
    a->cartesian = 1;
    a->rank = 2;
    a->dims[0] = arr.dims[0];
    a->dims[1] = arr.dims[1];
    size_t n = a->dims[0] * a->dims[1];
    float *w = malloc(n * sizeof *w);
    if (!w) {
        rc = kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory"), path);
        goto out;
    }
    for (size_t i = 0; i < n; i++) {
        float v = arr.dtype == KW_U8 ? (float)((uint8_t *)arr.data)[i] : ((float *)arr.data)[i];
        if (v < 0) {
            free(w);
            rc = kw_cli_fail(path, "negative weight %g at index %zu", v, i);
            goto out;
        }
        w[i] = arr.dtype == KW_U8 ? (v > 0) : v;
    }
    const char *plane = side ? json_str(side, "plane") : NULL;
    if (plane)
        a->plane = strcmp(plane, "kz-ky") == 0;
    else {
        a->plane = 0; /* rows constant along x: ky lines */
        for (size_t y = 0; y < a->dims[0] && !a->plane; y++)
            for (size_t x = 1; x < a->dims[1]; x++)
                if (w[y * a->dims[1] + x] != w[y * a->dims[1]]) {
                    a->plane = 1;
                    break;
                }
    }
    a->axes[0] = a->plane ? "z" : "y";
    a->axes[1] = a->plane ? "y" : "x";
    st = analyse_cartesian(a, w);
    free(w);
    if (st)
        rc = kw_cli_status(st, path);
out:
    cJSON_Delete(side);
    kw_array_free(&arr);
    return rc;
}

/* ---- reports -------------------------------------------------------------------------- */

static double fwhm_main(const analysis *a)
{
    /* the worst (widest) of the phase-encode axes; lines: along y only */
    if (a->cartesian && !a->plane)
        return a->psf.fwhm[0];
    double f = 0;
    for (int i = 0; i < a->psfrank; i++)
        if (isfinite(a->psf.fwhm[i]) && a->psf.fwhm[i] > f)
            f = a->psf.fwhm[i];
    return f;
}

static double tpsf_max(const analysis *a)
{
    double t = 0;
    for (int l = 0; l < a->tpsf_levels; l++)
        if (a->tpsf[l] > t)
            t = a->tpsf[l];
    return a->tpsf_levels ? t : NAN;
}

static cJSON *analysis_json(const analysis *a)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddStringToObject(o, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(o, "file", a->name);
    if (a->kind[0])
        cJSON_AddStringToObject(o, "pattern_kind", a->kind);
    else
        cJSON_AddNullToObject(o, "pattern_kind");
    cJSON_AddStringToObject(o, "layout", a->cartesian ? "cartesian" : "noncartesian");
    cJSON *ax = cJSON_AddArrayToObject(o, "axes");
    for (int i = 0; i < 2; i++)
        cJSON_AddItemToArray(ax, cJSON_CreateString(a->axes[i]));
    double d[3] = {(double)a->dims[0], (double)a->dims[1], 0};
    kw_json_add_vec(o, "shape", d, 2);
    add_num(o, "acceleration", a->acceleration);
    add_num(o, "sampled_fraction", a->sampled_fraction);
    add_num(o, "acs_lines", a->acs_lines);
    if (a->cartesian) {
        double b[2] = {(double)a->acs_block[0], (double)a->acs_block[1]};
        kw_json_add_vec(o, "acs_block", b, 2);
    } else {
        cJSON_AddNullToObject(o, "acs_block");
    }
    add_num(o, "max_gap_dk", a->max_gap);
    if (a->cartesian && !a->plane) {
        cJSON *g = cJSON_AddObjectToObject(o, "max_gap_dk_by_axis");
        for (int i = 0; i < 2; i++)
            add_num(g, a->axes[i], a->gap_axis[i]);
    }
    add_num(o, "psf_fwhm_pixels", fwhm_main(a));
    cJSON *f = cJSON_AddObjectToObject(o, "psf_fwhm_pixels_by_axis");
    cJSON *lobe = cJSON_AddObjectToObject(o, "psf_mainlobe_halfwidth_pixels");
    cJSON *at = cJSON_AddObjectToObject(o, "psf_peak_sidelobe_at_pixels");
    for (int i = 0; i < a->psfrank; i++) {
        add_num(f, a->axes[i], a->psf.fwhm[i]);
        add_num(lobe, a->axes[i], a->psf.lobe[i]);
        add_num(at, a->axes[i], (double)a->psf.sidelobe_at[i]);
    }
    add_num(o, "psf_peak", a->psf.peak);
    add_num(o, "psf_peak_sidelobe", a->psf.peak_sidelobe);
    add_num(o, "psf_energy_outside_mainlobe", a->psf.energy_outside);
    double pg[2] = {(double)a->psfdims[0], (double)a->psfdims[1]};
    kw_json_add_vec(o, "psf_grid", pg, 2);
    cJSON_AddStringToObject(o, "psf_method", a->cartesian ? "fft" : "ndft");
    if (!a->cartesian)
        cJSON_AddStringToObject(o, "psf_weights",
                                a->weights == W_RADIAL ? "radial area (ramp)"
                                : a->weights == W_PIPE ? "Pipe-Menon 1999 (iterative)"
                                                       : "none");
    add_num(o, "tpsf_incoherence", tpsf_max(a));
    if (a->tpsf_levels) {
        cJSON_AddStringToObject(o, "tpsf_wavelet", "db4");
        kw_json_add_vec(o, "tpsf_by_level", a->tpsf, a->tpsf_levels);
    } else {
        cJSON_AddNullToObject(o, "tpsf_wavelet");
        cJSON_AddNullToObject(o, "tpsf_by_level");
    }
    if (!a->cartesian) {
        add_num(o, "spokes", (double)a->spokes);
        add_num(o, "nyquist_spokes", a->nyquist_spokes);
    }
    return o;
}

static void analysis_text(FILE *f, const analysis *a)
{
    fprintf(f, "pattern %s (%s, %s %zux%zu)\n", a->name, a->kind[0] ? a->kind : "unknown kind",
            a->cartesian ? "Cartesian" : "non-Cartesian", a->dims[0], a->dims[1]);
    if (a->cartesian) {
        fprintf(f, "  acceleration            %.3f (sampled fraction %.4f)\n", a->acceleration,
                a->sampled_fraction);
        if (a->plane)
            fprintf(f, "  ACS block               %zu x %zu (%g readout lines)\n",
                    a->acs_block[1], a->acs_block[0], a->acs_lines);
        else
            fprintf(f, "  ACS lines               %g\n", a->acs_lines);
        fprintf(f, "  largest gap             %g delta-k\n", a->max_gap);
    } else {
        if (a->weights == W_RADIAL) {
            fprintf(f, "  spokes                  %zu per plane (Nyquist: %g)\n", a->spokes,
                    a->nyquist_spokes);
            fprintf(f, "  acceleration            %.3f (pi N/2 over spokes); sampled fraction "
                       "%.4f of the N x N grid\n", a->acceleration, a->sampled_fraction);
        } else {
            fprintf(f, "  readouts                %zu\n", a->spokes);
            if (isfinite(a->acceleration))
                fprintf(f, "  acceleration            %.3f (grid points over samples)\n",
                        a->acceleration);
            fprintf(f, "  sampled fraction        %.4f of the N x N grid\n", a->sampled_fraction);
        }
        fprintf(f, "  largest gap             %.3f delta-k\n", a->max_gap);
    }
    fprintf(f, "  PSF main lobe (FWHM)    %.2f pixels", fwhm_main(a));
    fprintf(f, " (%s %.2f, %s %.2f)\n", a->axes[0], a->psf.fwhm[0], a->axes[1], a->psf.fwhm[1]);
    fprintf(f, "  peak sidelobe           %.4f of the peak (%.1f dB) at %s %+ld, %s %+ld px\n",
            a->psf.peak_sidelobe, 20 * log10(a->psf.peak_sidelobe > 0 ? a->psf.peak_sidelobe : 1e-30),
            a->axes[0], a->psf.sidelobe_at[0], a->axes[1], a->psf.sidelobe_at[1]);
    fprintf(f, "  energy outside lobe     %.4f\n", a->psf.energy_outside);
    if (a->tpsf_levels) {
        fprintf(f, "  TPSF coherence (db4)    %.4f (by level, finest first:", tpsf_max(a));
        for (int l = 0; l < a->tpsf_levels; l++)
            fprintf(f, " %.4f", a->tpsf[l]);
        fprintf(f, ")\n");
    }
    if (!a->cartesian)
        fprintf(f, "  PSF by direct NDFT on %zu x %zu pixels%s\n", a->psfdims[0], a->psfdims[1],
                a->weights == W_RADIAL ? ", radial area weights"
                : a->weights == W_PIPE ? ", Pipe-Menon weights" : ", unit weights");
}

/* |psf| in dB over the peak, floored at PSF_DB_FLOOR, mapped to 0..1 */
static float *psf_db(const analysis *a)
{
    size_t n = a->psfdims[0] * a->psfdims[1];
    float *v = kw_alloc(n * sizeof *v);
    if (!v)
        return NULL;
    for (size_t i = 0; i < n; i++) {
        double m = cabs((double complex)a->psfbuf[i]) / a->psf.peak;
        double db = m > 0 ? 20 * log10(m) : PSF_DB_FLOOR;
        if (db < PSF_DB_FLOOR)
            db = PSF_DB_FLOOR;
        v[i] = (float)((db - PSF_DB_FLOOR) / -PSF_DB_FLOOR);
    }
    return v;
}

static kw_status write_gray(const char *path, const float *v, size_t h, size_t w)
{
    kw_array arr = {.dtype = KW_F32, .ndim = 2, .dims = {h, w}, .data = (void *)v};
    kw_png_opts o;
    kw_png_opts_default(&o);
    o.auto_window = 0;
    o.lo = 0;
    o.hi = 1;
    o.part = KW_PART_REAL;
    return kw_png_write_array(path, &arr, &o);
}

static int write_psf_png(const char *path, const analysis *a)
{
    float *v = psf_db(a);
    if (!v)
        return kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory"), "psf");
    kw_status st = write_gray(path, v, a->psfdims[0], a->psfdims[1]);
    kw_free(v);
    return st ? kw_cli_status(st, "psf") : -1;
}

/* ---- compare: one picture and one table -------------------------------------------------- */

#define PANEL 256
#define LABEL 28

/* Release cairo's and fontconfig's process-wide caches after the picture so
 * leak checkers (make asan) see nothing held by the font system (the same
 * measure as cli/plot.c); FcFini is looked up at run time because kweave
 * does not link fontconfig itself. */
static void release_font_caches(void)
{
    cairo_debug_reset_static_data();
    void (*fc_fini)(void);
    *(void **)&fc_fini = dlsym(RTLD_DEFAULT, "FcFini");
    if (fc_fini)
        fc_fini();
}

/* draw a gray picture (values 0..1, h x w) scaled into a PANEL square */
static void draw_panel(cairo_t *cr, const float *v, size_t h, size_t w, double x0, double y0)
{
    int stride = cairo_format_stride_for_width(CAIRO_FORMAT_RGB24, (int)w);
    unsigned char *buf = calloc((size_t)stride * h, 1);
    if (!buf)
        return;
    for (size_t y = 0; y < h; y++) {
        uint32_t *row = (uint32_t *)(buf + y * (size_t)stride);
        for (size_t x = 0; x < w; x++) {
            float t = v[y * w + x];
            unsigned g = (unsigned)lround(255.0 * (t < 0 ? 0 : t > 1 ? 1 : t));
            row[x] = (g << 16) | (g << 8) | g;
        }
    }
    cairo_surface_t *s = cairo_image_surface_create_for_data(buf, CAIRO_FORMAT_RGB24, (int)w,
                                                             (int)h, stride);
    cairo_save(cr);
    cairo_translate(cr, x0, y0);
    double sc = (double)PANEL / (double)(h > w ? h : w);
    cairo_scale(cr, sc, sc);
    cairo_set_source_surface(cr, s, 0, 0);
    cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
    cairo_paint(cr);
    cairo_restore(cr);
    cairo_surface_destroy(s);
    free(buf);
}

static int compare_png(const char *path, analysis *as, int n)
{
    const int pad = 8;
    int W = n * (PANEL + pad) + pad, H = 2 * (PANEL + LABEL) + pad + LABEL;
    cairo_surface_t *surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, W, H);
    cairo_t *cr = cairo_create(surf);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, 13);
    for (int i = 0; i < n; i++) {
        double x0 = pad + i * (PANEL + pad);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_move_to(cr, x0, 18);
        cairo_show_text(cr, as[i].name);
        draw_panel(cr, as[i].picture, as[i].pic_h, as[i].pic_w, x0, LABEL);
        float *db = psf_db(&as[i]);
        if (db) {
            draw_panel(cr, db, as[i].psfdims[0], as[i].psfdims[1], x0, 2 * LABEL + PANEL);
            kw_free(db);
        }
        char line[128];
        cairo_set_source_rgb(cr, 0, 0, 0);
        snprintf(line, sizeof line, "R %.2f  FWHM %.2f px  PSR %.3f", as[i].acceleration,
                 fwhm_main(&as[i]), as[i].psf.peak_sidelobe);
        cairo_move_to(cr, x0, LABEL + PANEL + 18);
        cairo_show_text(cr, line);
    }
    cairo_move_to(cr, pad, H - 10);
    cairo_show_text(cr, "top: pattern (mask rows = ky; trajectory kx right, ky up); "
                        "bottom: |PSF| in dB, 0 (white) to -60 (black)");
    cairo_surface_flush(surf);
    const unsigned char *data = cairo_image_surface_get_data(surf);
    int stride = cairo_image_surface_get_stride(surf);
    uint8_t *rgb = malloc((size_t)W * (size_t)H * 3);
    kw_status st = KW_OK;
    if (!rgb || !data) {
        st = kw_set_error(KW_ENOMEM, "out of memory");
    } else {
        for (int y = 0; y < H; y++)
            for (int x = 0; x < W; x++) {
                uint32_t p = ((const uint32_t *)(data + (size_t)y * (size_t)stride))[x];
                uint8_t *q = rgb + ((size_t)y * (size_t)W + (size_t)x) * 3;
                q[0] = (uint8_t)(p >> 16);
                q[1] = (uint8_t)(p >> 8);
                q[2] = (uint8_t)p;
            }
        st = kw_png_write_rgb8(path, rgb, (size_t)W, (size_t)H);
    }
    free(rgb);
    cairo_destroy(cr);
    cairo_surface_destroy(surf);
    release_font_caches();
    return st ? kw_cli_status(st, "png") : -1;
}

static void fmt_num(char *b, size_t n, const char *fmt, double v)
{
    if (isfinite(v))
        snprintf(b, n, fmt, v);
    else
        snprintf(b, n, "n/a");
}

static void compare_table(FILE *f, const analysis *as, int n)
{
    fprintf(f, "| Pattern | Kind | R | Sampled | ACS | Max gap (dk) | PSF FWHM (px) | "
               "Peak sidelobe | Sidelobe at (px) | Energy outside main lobe | "
               "TPSF coherence (db4) |\n");
    fprintf(f, "|---|---|---:|---:|---:|---:|---:|---:|---|---:|---:|\n");
    for (int i = 0; i < n; i++) {
        const analysis *a = &as[i];
        char r[32], s[32], acs[32], g[32], fw[32], ps[32], eo[32], tp[32];
        fmt_num(r, sizeof r, "%.2f", a->acceleration);
        fmt_num(s, sizeof s, "%.3f", a->sampled_fraction);
        if (a->cartesian && a->plane && a->acs_lines > 0)
            snprintf(acs, sizeof acs, "%zux%zu", a->acs_block[1], a->acs_block[0]);
        else
            fmt_num(acs, sizeof acs, "%.0f", a->acs_lines);
        fmt_num(g, sizeof g, "%.2f", a->max_gap);
        fmt_num(fw, sizeof fw, "%.2f", fwhm_main(a));
        fmt_num(ps, sizeof ps, "%.3f", a->psf.peak_sidelobe);
        fmt_num(eo, sizeof eo, "%.3f", a->psf.energy_outside);
        fmt_num(tp, sizeof tp, "%.3f", tpsf_max(a));
        fprintf(f, "| %s | %s | %s | %s | %s | %s | %s | %s | %s %+ld, %s %+ld | %s | %s |\n",
                a->name, a->kind[0] ? a->kind : "?", r, s, acs, g, fw, ps, a->axes[0],
                a->psf.sidelobe_at[0], a->axes[1], a->psf.sidelobe_at[1], eo, tp);
    }
}

/* ---- generation ------------------------------------------------------------------------ */

typedef struct gen_opts {
    const char *kind, *matrix, *accel, *acs, *out, *png, *json, *psf, *analyse, *density;
    const char *times;
    double fraction, power, dwell, te, fov, gmax, slew, raster;
    long shift, spokes, seed, tiny, psf_size, interleaves, shots, ros;
    int seen_ros;
    int seen_fov, seen_gmax, seen_slew, seen_raster, seen_interleaves, seen_shots;
    int ellipse, compare;
    int seen_fraction, seen_power, seen_shift, seen_spokes, seen_seed, seen_tiny, seen_te,
        seen_dwell, seen_ellipse, seen_accel, seen_acs;
} gen_opts;

static char *times_path(const char *out)
{
    size_t n = strlen(out);
    const char *slash = strrchr(out, '/');
    const char *dot = strrchr(out, '.');
    size_t stem = (dot && (!slash || dot > slash)) ? (size_t)(dot - out) : n;
    char *s = malloc(stem + 12);
    if (!s)
        return NULL;
    memcpy(s, out, stem);
    memcpy(s + stem, "_times.npy", 11);
    return s;
}

static const char *base_name(const char *p)
{
    const char *s = strrchr(p, '/');
    return s ? s + 1 : p;
}

/* After writing the pattern: analyse it, print, write --json / --psf / --png. */
static int report_generated(const gen_opts *g, analysis *a)
{
    analysis_text(stdout, a);
    int rc;
    if (g->json) {
        cJSON *j = analysis_json(a);
        kw_status st = kw_json_write(g->json, j);
        cJSON_Delete(j);
        if (st)
            return kw_cli_status(st, "json");
    }
    if (g->psf && (rc = write_psf_png(g->psf, a)) >= 0)
        return rc;
    if (g->png) {
        kw_status st = write_gray(g->png, a->picture, a->pic_h, a->pic_w);
        if (st)
            return kw_cli_status(st, "png");
    }
    return KW_EXIT_OK;
}

static int gen_cartesian(const gen_opts *g, kw_mask_kind kind, const size_t *mat, int nmat)
{
    kw_mask_opts o;
    kw_mask_opts_default(&o);
    o.kind = kind;
    size_t nx = mat[0], ny = nmat > 1 ? mat[1] : mat[0], nz = nmat > 2 ? mat[2] : 1;
    if (nx < 1 || ny < 1 || nz < 1)
        return kw_cli_fail("matrix", "sizes must be >= 1");
    if ((double)nx * (double)ny * (double)nz > 1e8)
        return kw_cli_fail("matrix", "%zux%zux%zu is too large", nx, ny, nz);
    o.ny = ny;
    o.nz = nz;
    if (g->accel) {
        double r[2];
        int n;
        int rc = parse_list("accel", g->accel, r, 2, &n);
        if (rc >= 0)
            return rc;
        o.accel_y = r[0];
        o.accel_z = n > 1 ? r[1] : 1.0;
        if (!(o.accel_y > 0) || !(o.accel_z > 0))
            return kw_cli_fail("accel", "must be positive");
    } else if (kind == KW_MASK_UNIFORM || kind == KW_MASK_RANDOM || kind == KW_MASK_POISSON ||
               kind == KW_MASK_LATTICE) {
        return kw_cli_fail("accel", "required for --kind %s", g->kind);
    }
    if (g->acs) {
        size_t v[2];
        int n;
        int rc = parse_sizes("acs", g->acs, v, 2, &n);
        if (rc >= 0)
            return rc;
        o.acs_y = v[0];
        o.acs_z = n > 1 ? v[1] : (nz > 1 ? v[0] : 0);
        if (n > 1 && nz == 1)
            return kw_cli_fail("acs", "a 2-D ACS block AYxAZ needs a 3-D matrix");
    }
    if (g->seen_fraction)
        o.fraction = g->fraction;
    if (kind == KW_MASK_FULL && !strcmp(g->kind, "partial") && !g->seen_fraction)
        return kw_cli_fail("fraction", "required for --kind partial");
    if (g->seen_power)
        o.power = g->power;
    if (g->seen_shift)
        o.shift = g->shift;
    o.ellipse = g->ellipse;
    o.seed = (uint64_t)g->seed;
    size_t np = ny * nz;
    uint8_t *m = malloc(np);
    float *prob = malloc(np * sizeof *prob);
    if (!m || !prob) {
        free(m);
        free(prob);
        return kw_cli_status(kw_set_error(KW_ENOMEM, "out of memory"), "mask");
    }
    kw_status st = kw_mask_make(&o, m, prob);
    if (st) {
        free(m);
        free(prob);
        const char *why = kw_last_error();
        const char *colon = strchr(why, ':');
        char field[32] = "pattern";
        if (colon && (size_t)(colon - why) < sizeof field) {
            memcpy(field, why, (size_t)(colon - why));
            field[colon - why] = 0;
            char msg[400];
            snprintf(msg, sizeof msg, "%s", colon + 2);
            return kw_cli_fail(field, "%s", msg);
        }
        return kw_cli_status(st, "pattern");
    }
    /* the file: (ny, nx) rows repeated along the readout, or (nz, ny) */
    kw_array arr = {0};
    size_t dims[2] = {nz > 1 ? nz : ny, nz > 1 ? ny : nx};
    st = kw_array_alloc(&arr, KW_U8, 2, dims);
    float *w = st ? NULL : malloc(dims[0] * dims[1] * sizeof *w);
    if (st || !w) {
        free(m);
        free(prob);
        kw_array_free(&arr);
        return kw_cli_status(st ? st : kw_set_error(KW_ENOMEM, "out of memory"), "mask");
    }
    uint8_t *d = arr.data;
    for (size_t r = 0; r < dims[0]; r++)
        for (size_t c = 0; c < dims[1]; c++) {
            uint8_t v = nz > 1 ? m[r * ny + c] : m[r];
            d[r * dims[1] + c] = v;
            w[r * dims[1] + c] = v;
        }
    int rc = -1;
    if (g->out) {
        st = kw_npy_write(g->out, &arr);
        if (st)
            rc = kw_cli_status(st, "out");
    }
    if (rc < 0 && g->density) {
        kw_array pa = {.dtype = KW_F32, .ndim = 2, .dims = {nz > 1 ? nz : 1, ny}, .data = prob};
        st = kw_npy_write(g->density, &pa);
        if (st)
            rc = kw_cli_status(st, "density");
    }
    size_t count = 0;
    for (size_t i = 0; i < np; i++)
        count += m[i];
    char *sp = g->out ? kw_sidecar_path(g->out) : NULL;
    if (rc < 0 && sp) {
        cJSON *j = cJSON_CreateObject();
        cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
        cJSON_AddStringToObject(j, "kind", "mask");
        cJSON_AddStringToObject(j, "layout", "cartesian");
        cJSON_AddStringToObject(j, "pattern_kind", g->kind);
        cJSON_AddStringToObject(j, "plane", nz > 1 ? "kz-ky" : "ky-kx");
        double sh[2] = {(double)dims[0], (double)dims[1]};
        kw_json_add_vec(j, "shape", sh, 2);
        double mt[3] = {(double)nx, (double)ny, (double)nz};
        kw_json_add_vec(j, "matrix", mt, nz > 1 ? 3 : 2);
        add_num(j, "acceleration", (double)np / (double)(count ? count : 1));
        double rq[2] = {o.accel_y, o.accel_z};
        kw_json_add_vec(j, "accel_requested", rq, nz > 1 ? 2 : 1);
        add_num(j, "acs_lines", nz > 1 ? (double)(o.acs_y * o.acs_z) : (double)o.acs_y);
        double ab[2] = {(double)o.acs_y, (double)o.acs_z};
        kw_json_add_vec(j, "acs_requested", ab, nz > 1 ? 2 : 1);
        add_num(j, "fraction", o.fraction);
        cJSON_AddBoolToObject(j, "ellipse", o.ellipse);
        if (kind == KW_MASK_RANDOM || kind == KW_MASK_POISSON)
            add_num(j, "density_power", o.power);
        if (kind == KW_MASK_LATTICE)
            add_num(j, "shift", (double)o.shift);
        add_num(j, "seed", (double)g->seed);
        add_num(j, "sampled_points", (double)count);
        st = kw_json_write(sp, j);
        cJSON_Delete(j);
        if (st)
            rc = kw_cli_status(st, "sidecar");
    }
    free(sp);
    if (rc < 0) {
        analysis a;
        memset(&a, 0, sizeof a);
        snprintf(a.name, sizeof a.name, "%s", g->out ? base_name(g->out) : g->kind);
        snprintf(a.kind, sizeof a.kind, "%s", g->kind);
        a.cartesian = 1;
        a.plane = nz > 1;
        a.rank = 2;
        a.dims[0] = dims[0];
        a.dims[1] = dims[1];
        a.axes[0] = a.plane ? "z" : "y";
        a.axes[1] = a.plane ? "y" : "x";
        st = analyse_cartesian(&a, w);
        rc = st ? kw_cli_status(st, "analyse") : report_generated(g, &a);
        analysis_free(&a);
    }
    free(m);
    free(prob);
    free(w);
    kw_array_free(&arr);
    return rc;
}

/* Analyse a trajectory just made (named after --out or the kind), on a PSF
 * grid of --psf-size or min(N, 128). */
static kw_status analyse_generated(const gen_opts *g, const kw_array *k, const traj_info *ti,
                                   analysis *a)
{
    memset(a, 0, sizeof *a);
    snprintf(a->name, sizeof a->name, "%s", g->out ? base_name(g->out) : g->kind);
    snprintf(a->kind, sizeof a->kind, "%s", g->kind);
    size_t m = g->psf_size > 0 ? (size_t)g->psf_size : (ti->n < 128 ? ti->n : 128);
    return analyse_traj(a, k, ti, m);
}

/* Write a trajectory, its sample times and start its sidecar (the keys
 * every trajectory has). Returns the sidecar object to complete, or NULL
 * with *rc set (an exit code) when a file could not be written, or NULL
 * with *rc = -1 when no --out was given. *tp and *sp receive the times and
 * sidecar file names (free them). */
static cJSON *traj_write_begin(const gen_opts *g, const kw_array *k, const kw_array *t,
                               const char *const *columns, int *rc, char **tp, char **sp)
{
    *rc = -1;
    *tp = *sp = NULL;
    if (!g->out)
        return NULL;
    *tp = g->times ? strdup(g->times) : times_path(g->out);
    kw_status st = kw_npy_write(g->out, k);
    if (!st && *tp)
        st = kw_npy_write(*tp, t);
    if (st) {
        *rc = kw_cli_status(st, "out");
        return NULL;
    }
    *sp = kw_sidecar_path(g->out);
    if (!*sp)
        return NULL;
    cJSON *j = cJSON_CreateObject();
    cJSON_AddStringToObject(j, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(j, "kind", "trajectory");
    cJSON_AddStringToObject(j, "layout", "noncartesian");
    cJSON_AddStringToObject(j, "pattern_kind", g->kind);
    double sh[2] = {(double)k->dims[0], (double)k->dims[1]};
    kw_json_add_vec(j, "shape", sh, 2);
    cJSON *cols = cJSON_AddArrayToObject(j, "columns");
    for (size_t i = 0; i < k->dims[1]; i++)
        cJSON_AddItemToArray(cols, cJSON_CreateString(columns[i]));
    cJSON_AddStringToObject(j, "units", "cycles/FOV");
    return j;
}

/* Finish and write the sidecar started by traj_write_begin(). */
static int traj_write_end(cJSON *j, const char *sp, const char *tp)
{
    cJSON_AddStringToObject(j, "times", tp ? base_name(tp) : "");
    cJSON_AddNullToObject(j, "seed");
    kw_status st = kw_json_write(sp, j);
    cJSON_Delete(j);
    return st ? kw_cli_status(st, "sidecar") : -1;
}

static int gen_traj(const gen_opts *g, kw_traj_kind kind, const size_t *mat, int nmat)
{
    kw_traj_opts o = {0};
    o.kind = kind;
    size_t nx = mat[0], ny = nmat > 1 ? mat[1] : mat[0];
    if (nx != ny)
        return kw_cli_fail("matrix", "radial trajectories need a square in-plane matrix "
                                     "(got %zux%zu)", nx, ny);
    if (kind == KW_TRAJ_STACK_OF_STARS && nmat < 3)
        return kw_cli_fail("matrix", "a stack of stars needs NxNxNZ");
    if (kind != KW_TRAJ_STACK_OF_STARS && nmat > 2)
        return kw_cli_fail("matrix", "--kind %s is 2-D (use stack-of-stars for 3-D)", g->kind);
    if (g->seen_accel || g->seen_acs || g->seen_fraction || g->ellipse)
        return kw_cli_fail(g->seen_accel ? "accel" : g->seen_acs ? "acs"
                           : g->seen_fraction ? "fraction" : "ellipse",
                           "not used by --kind %s (set --spokes)", g->kind);
    o.n = nx;
    o.nz = nmat > 2 ? mat[2] : 1;
    if (g->seen_spokes && (g->spokes < 1 || g->spokes > 10000000))
        return kw_cli_fail("spokes", "%ld outside 1..10000000", g->spokes);
    o.spokes = g->seen_spokes ? (size_t)g->spokes : kw_traj_nyquist_spokes(nx);
    o.tiny = kind == KW_TRAJ_GOLDEN ? (g->seen_tiny ? (int)g->tiny : 1)
                                    : (g->seen_tiny ? (int)g->tiny : 0);
    if (g->seen_tiny && (g->tiny < 1 || g->tiny > 1000))
        return kw_cli_fail("tiny", "%ld outside 1..1000", g->tiny);
    if (g->seen_ros && (g->ros < 1 || g->ros > 4))
        return kw_cli_fail("readout-oversampling", "%ld outside 1..4", g->ros);
    o.oversampling = g->seen_ros ? (int)g->ros : 1;
    /* dwell: the time per image pixel; the ADC samples every dwell / F */
    o.dwell_s = g->seen_dwell ? g->dwell : 1.0 / (DEFAULT_BW_PER_PIXEL * (double)nx);
    o.te_s = g->seen_te ? g->te : 0.5 * (double)nx * o.dwell_s;
    size_t ns;
    int nd;
    kw_status st = kw_traj_size(&o, &ns, &nd);
    if (st) {
        const char *why = kw_last_error();
        const char *colon = strchr(why, ':');
        char field[32] = "pattern";
        if (colon && (size_t)(colon - why) < sizeof field) {
            memcpy(field, why, (size_t)(colon - why));
            field[colon - why] = 0;
            return kw_cli_fail(field, "%s", colon + 2);
        }
        return kw_cli_status(st, "trajectory");
    }
    kw_array k = {0}, t = {0};
    size_t kd[2] = {ns, (size_t)nd}, td[1] = {ns};
    st = kw_array_alloc(&k, KW_F32, 2, kd);
    if (!st)
        st = kw_array_alloc(&t, KW_F32, 1, td);
    if (!st)
        st = kw_traj_make(&o, k.data, t.data);
    if (st) {
        kw_array_free(&k);
        kw_array_free(&t);
        return kw_cli_status(st, "trajectory");
    }
    int rc;
    char *tp, *sp;
    static const char *const cn[3] = {"kx", "ky", "kz"};
    cJSON *j = traj_write_begin(g, &k, &t, cn, &rc, &tp, &sp);
    if (j) {
        double mt[3] = {(double)nx, (double)nx, (double)o.nz};
        kw_json_add_vec(j, "matrix", mt, nd);
        add_num(j, "spokes", (double)o.spokes);
        add_num(j, "partitions", (double)o.nz);
        add_num(j, "readout_samples", (double)o.oversampling * (double)o.n);
        add_num(j, "readout_oversampling", o.oversampling);
        add_num(j, "readouts", (double)(o.spokes * o.nz));
        add_num(j, "nyquist_spokes", (double)kw_traj_nyquist_spokes(nx));
        add_num(j, "acceleration", KW_PI * (double)nx / 2.0 / (double)o.spokes);
        if (o.tiny >= 1) {
            add_num(j, "angle_increment_deg", kw_traj_golden_angle(o.tiny) * 180.0 / KW_PI);
            add_num(j, "tiny_golden_order", o.tiny);
        } else {
            add_num(j, "angle_increment_deg", 180.0 / (double)o.spokes);
            cJSON_AddNullToObject(j, "tiny_golden_order");
        }
        add_num(j, "dwell_s", o.dwell_s / o.oversampling); /* ADC: between samples */
        add_num(j, "dwell_per_pixel_s", o.dwell_s);
        add_num(j, "readout_duration_s", (double)o.n * o.dwell_s);
        add_num(j, "te_s", o.te_s);
        rc = traj_write_end(j, sp, tp);
    }
    free(sp);
    free(tp);
    if (rc < 0) {
        analysis a;
        traj_info ti = {.n = nx, .nz = o.nz, .readout = (size_t)o.oversampling * nx,
                        .spokes = o.spokes, .ndim = nd, .radial = 1, .weights = W_RADIAL,
                        .oversampling = o.oversampling};
        st = analyse_generated(g, &k, &ti, &a);
        if (st)
            rc = kw_cli_status(st, "analyse");
        else {
            printf("  angle increment         %.6f deg (%s)\n",
                   o.tiny >= 1 ? kw_traj_golden_angle(o.tiny) * 180.0 / KW_PI
                               : 180.0 / (double)o.spokes,
                   o.tiny == 1 ? "golden angle 180/phi" : o.tiny > 1 ? "tiny golden angle"
                                                                     : "uniform");
            printf("  readout                 %zu samples (oversampling %d: %g cycle/FOV apart), "
                   "ADC dwell %g us, %g us per pixel, duration %g ms, k = 0 at %g ms\n",
                   (size_t)o.oversampling * o.n, o.oversampling, 1.0 / o.oversampling,
                   o.dwell_s / o.oversampling * 1e6, o.dwell_s * 1e6,
                   (double)o.n * o.dwell_s * 1e3, o.te_s * 1e3);
            rc = report_generated(g, &a);
            printf("%s\n", KW_SAFETY_CAUTION);
        }
        analysis_free(&a);
    }
    kw_array_free(&k);
    kw_array_free(&t);
    return rc;
}

/* Spiral (interleaved Archimedean) and EPI from the planner's gradient
 * design: the trajectory the hardware plays under --gmax / --slew, with the
 * ADC sample times. */
static int gen_gradient(const gen_opts *g, int spiral, const size_t *mat, int nmat)
{
    size_t nx = mat[0], ny = nmat > 1 ? mat[1] : mat[0];
    if (nmat > 2)
        return kw_cli_fail("matrix", "--kind %s is 2-D: NX or NXxNY", g->kind);
    if (nx != ny)
        return kw_cli_fail("matrix", "%s trajectories here need a square matrix (got %zux%zu)",
                           g->kind, nx, ny);
    if (nx < 8 || nx > 1024 || nx % 2)
        return kw_cli_fail("matrix", "N = %zu outside 8..1024 or odd", nx);
    if (g->seen_accel || g->seen_acs || g->ellipse || g->seen_spokes || g->seen_tiny)
        return kw_cli_fail(g->seen_accel ? "accel" : g->seen_acs ? "acs"
                           : g->ellipse ? "ellipse" : g->seen_spokes ? "spokes" : "tiny",
                           "not used by --kind %s", g->kind);
    if (spiral && (g->seen_shots || g->seen_fraction))
        return kw_cli_fail(g->seen_shots ? "shots" : "fraction", "not used by --kind spiral");
    if (!spiral && g->seen_interleaves)
        return kw_cli_fail("interleaves", "not used by --kind epi (use --shots)");
    kw_gradient_limits lim = {g->seen_gmax ? g->gmax : DEFAULT_GMAX,
                              g->seen_slew ? g->slew : DEFAULT_SLEW,
                              g->seen_raster ? g->raster : DEFAULT_RASTER};
    if (!(lim.gmax_T_per_m > 0) || !(lim.slew_T_per_m_per_s > 0) || !(lim.raster_s > 0))
        return kw_cli_fail(!(lim.gmax_T_per_m > 0) ? "gmax" : !(lim.slew_T_per_m_per_s > 0)
                                                              ? "slew" : "raster",
                           "must be positive");
    double fov = g->seen_fov ? g->fov : DEFAULT_FOV_M;
    if (!(fov > 0))
        return kw_cli_fail("fov", "must be positive");
    double dwell = g->seen_dwell ? g->dwell : DEFAULT_FAST_DWELL;
    if (!(dwell > 0))
        return kw_cli_fail("dwell", "must be positive");
    kw_array k = {0}, t = {0};
    size_t readout = 0, readouts = 0, ns = 0;
    double extra[4] = {0};
    kw_status st;
    int interleaves = 0;
    kw_epi_spec es;
    kw_epi_info ei;
    if (spiral) {
        kw_spiral_spec sp = {fov, (int)nx, 1, dwell};
        kw_spiral_info si;
        if (g->seen_interleaves) {
            if (g->interleaves < 1 || g->interleaves > 4096)
                return kw_cli_fail("interleaves", "%ld outside 1..4096", g->interleaves);
            sp.interleaves = (int)g->interleaves;
            st = kw_spiral_size(&sp, &lim, &si);
        } else {
            st = kw_spiral_interleaves_for(&sp, &lim, DEFAULT_MAX_READOUT, &sp.interleaves, &si);
        }
        if (st)
            return kw_cli_status(st, "spiral");
        interleaves = sp.interleaves;
        readout = si.samples;
        readouts = (size_t)sp.interleaves;
        ns = readout * readouts;
        size_t kd[2] = {ns, 2}, td[1] = {ns};
        st = kw_array_alloc(&k, KW_F32, 2, kd);
        if (!st)
            st = kw_array_alloc(&t, KW_F32, 1, td);
        if (!st)
            st = kw_spiral_design(&sp, &lim, &si, NULL, NULL, k.data, t.data);
        if (!st) {
            float *tv = t.data;
            for (size_t r = 1; r < readouts; r++)
                memcpy(tv + r * readout, tv, readout * sizeof *tv);
            /* The design reaches k-max = N/2 exactly; the sampled grid is
             * [-N/2, N/2) (a point at +N/2 is the same frequency as -N/2 on
             * the image grid), so samples landing on +N/2 are moved inside by
             * one float step (1e-5 cycles/FOV at N = 256). */
            float *kv = k.data;
            const float kmax[2] = {(float)nx / 2.0f, (float)ny / 2.0f};
            for (size_t i = 0; i < readouts * readout; i++)
                for (int c = 0; c < 2; c++)
                    if (kv[2 * i + c] >= kmax[c])
                        kv[2 * i + c] = nextafterf(kmax[c], 0.0f);
        }
        extra[0] = si.readout_s;
        extra[1] = si.gmax_design_T_per_m;
        extra[2] = si.slew_design_T_per_m_per_s;
    } else {
        if (g->seen_shots && (g->shots < 1 || g->shots > (long)ny))
            return kw_cli_fail("shots", "%ld outside 1..%zu", g->shots, ny);
        es = (kw_epi_spec){{fov, fov}, {(int)nx, (int)ny}, dwell,
                           g->seen_shots ? (int)g->shots : 1,
                           g->seen_fraction ? g->fraction : 1.0};
        if (!(es.partial_fourier > 0.5 && es.partial_fourier <= 1.0))
            return kw_cli_fail("fraction", "%g outside (0.5, 1]", es.partial_fourier);
        st = kw_epi_size(&es, &lim, &ei);
        if (st)
            return kw_cli_status(st, "epi");
        readout = nx;
        readouts = ei.lines_per_shot * (size_t)es.shots;
        ns = ei.samples_per_shot * (size_t)es.shots;
        size_t kd[2] = {ns, 2}, td[1] = {ns};
        st = kw_array_alloc(&k, KW_F32, 2, kd);
        if (!st)
            st = kw_array_alloc(&t, KW_F32, 1, td);
        if (!st)
            st = kw_epi_design(&es, &lim, &ei, k.data, t.data);
        extra[0] = ei.echo_spacing_s;
        extra[1] = ei.train_s;
        extra[2] = ei.center_time_s;
    }
    if (st) {
        kw_array_free(&k);
        kw_array_free(&t);
        return kw_cli_status(st, g->kind);
    }
    if (g->seen_te) { /* times from the excitation: k = 0 at TE */
        double origin = spiral ? 0.0 : extra[2];
        if (g->te < origin)
            return kw_array_free(&k), kw_array_free(&t),
                   kw_cli_fail("te", "%g s is earlier than the start of k = 0 (%g s into "
                                     "the readout)", g->te, origin);
        float *tv = t.data;
        for (size_t i = 0; i < ns; i++)
            tv[i] = (float)((double)tv[i] + g->te - origin);
    }
    int rc;
    char *tp, *sp;
    static const char *const cn[2] = {"kx", "ky"};
    cJSON *j = traj_write_begin(g, &k, &t, cn, &rc, &tp, &sp);
    if (j) {
        double mt[2] = {(double)nx, (double)ny};
        kw_json_add_vec(j, "matrix", mt, 2);
        double fv[2] = {fov, fov};
        kw_json_add_vec(j, "fov_m", fv, 2);
        add_num(j, "readout_samples", (double)readout);
        add_num(j, "readouts", (double)readouts);
        if (spiral) {
            add_num(j, "interleaves", interleaves);
            add_num(j, "readout_s", extra[0]);
            add_num(j, "gmax_design_T_per_m", extra[1]);
            add_num(j, "slew_design_T_per_m_per_s", extra[2]);
        } else {
            add_num(j, "shots", es.shots);
            add_num(j, "fraction", es.partial_fourier);
            add_num(j, "echo_spacing_s", extra[0]);
            add_num(j, "train_s", extra[1]);
            add_num(j, "center_time_s", extra[2]);
        }
        add_num(j, "dwell_s", dwell);
        add_num(j, "gmax_T_per_m", lim.gmax_T_per_m);
        add_num(j, "slew_T_per_m_per_s", lim.slew_T_per_m_per_s);
        add_num(j, "raster_s", lim.raster_s);
        if (g->seen_te)
            add_num(j, "te_s", g->te);
        else
            cJSON_AddNullToObject(j, "te_s");
        cJSON_AddStringToObject(j, "times", tp ? base_name(tp) : "");
        cJSON_AddStringToObject(j, "times_origin", g->seen_te ? "excitation"
                                                   : spiral ? "readout start"
                                                            : "start of each shot's train");
        rc = traj_write_end(j, sp, tp);
    }
    free(sp);
    free(tp);
    if (rc < 0) {
        analysis a;
        traj_info ti = {.n = nx, .nz = 1, .readout = readout, .spokes = readouts, .ndim = 2,
                        .radial = 0, .weights = spiral ? W_PIPE : W_NONE};
        st = analyse_generated(g, &k, &ti, &a);
        if (st)
            rc = kw_cli_status(st, "analyse");
        else {
            if (spiral)
                printf("  spiral                  %d interleaves, %zu samples each, readout "
                       "%.3f ms (design |G| %.2f mT/m, slew %.1f T/m/s)\n", interleaves,
                       readout, extra[0] * 1e3, extra[1] * 1e3, extra[2]);
            else
                printf("  EPI                     %d shot(s), %zu lines each, echo spacing "
                       "%.3f ms, train %.3f ms, k = 0 at %.3f ms\n", es.shots,
                       ei.lines_per_shot, extra[0] * 1e3, extra[1] * 1e3, extra[2] * 1e3);
            printf("  limits                  %.1f mT/m, %.1f T/m/s, raster %g us, dwell %g us\n",
                   lim.gmax_T_per_m * 1e3, lim.slew_T_per_m_per_s, lim.raster_s * 1e6,
                   dwell * 1e6);
            rc = report_generated(g, &a);
            printf("%s\n", KW_SAFETY_CAUTION);
        }
        analysis_free(&a);
    }
    kw_array_free(&k);
    kw_array_free(&t);
    return rc;
}

int kw_cmd_pattern(int argc, char **argv)
{
    gen_opts g;
    memset(&g, 0, sizeof g);
    const kw_opt table[] = {
        {"kind", KW_OPT_STRING, &g.kind, KW_UNIT_NONE, NULL,
         "full|uniform|random|poisson|lattice|partial|radial|golden|stack-of-stars|spiral|epi"},
        {"matrix", KW_OPT_STRING, &g.matrix, KW_UNIT_NONE, NULL, "NXxNY or NXxNYxNZ (3-D: ky-kz mask)"},
        {"accel", KW_OPT_STRING, &g.accel, KW_UNIT_NONE, &g.seen_accel, "acceleration R, or RYxRZ"},
        {"acs", KW_OPT_STRING, &g.acs, KW_UNIT_NONE, &g.seen_acs, "autocalibration lines N (3-D: N or NYxNZ)"},
        {"fraction", KW_OPT_DOUBLE, &g.fraction, KW_UNIT_NONE, &g.seen_fraction, "partial Fourier fraction in (0.5, 1]"},
        {"ellipse", KW_OPT_FLAG, &g.ellipse, KW_UNIT_NONE, NULL, "3-D: drop the ky-kz corners"},
        {"power", KW_OPT_DOUBLE, &g.power, KW_UNIT_NONE, &g.seen_power, "density exponent d of (1-r)^d (default 3)"},
        {"shift", KW_OPT_INT, &g.shift, KW_UNIT_NONE, &g.seen_shift, "lattice: ky shift per kz row (default 1)"},
        {"spokes", KW_OPT_INT, &g.spokes, KW_UNIT_NONE, &g.seen_spokes, "radial spokes (default ceil(pi N/2))"},
        {"tiny", KW_OPT_INT, &g.tiny, KW_UNIT_NONE, &g.seen_tiny, "golden: tiny golden angle order (1 = 111.246 deg)"},
        {"readout-oversampling", KW_OPT_INT, &g.ros, KW_UNIT_NONE, &g.seen_ros, "radial kinds: F x N samples per spoke, 1/F cycle/FOV apart (1..4, default 1)"},
        {"dwell", KW_OPT_UNIT, &g.dwell, KW_UNIT_TIME, &g.seen_dwell, "radial: time per image pixel, 1/(250Hz x N) (samples every dwell/F); spiral/epi: time between samples, 4us"},
        {"fov", KW_OPT_UNIT, &g.fov, KW_UNIT_LENGTH, &g.seen_fov, "spiral/epi: field of view (default 256mm)"},
        {"gmax", KW_OPT_UNIT, &g.gmax, KW_UNIT_GRADIENT, &g.seen_gmax, "spiral/epi: gradient limit (default 40mT/m)"},
        {"slew", KW_OPT_UNIT, &g.slew, KW_UNIT_SLEW, &g.seen_slew, "spiral/epi: slew-rate limit (default 150T/m/s)"},
        {"raster", KW_OPT_UNIT, &g.raster, KW_UNIT_TIME, &g.seen_raster, "spiral/epi: gradient raster (default 10us)"},
        {"interleaves", KW_OPT_INT, &g.interleaves, KW_UNIT_NONE, &g.seen_interleaves, "spiral: interleaves (default: readouts <= 10ms)"},
        {"shots", KW_OPT_INT, &g.shots, KW_UNIT_NONE, &g.seen_shots, "epi: shots (default 1)"},
        {"te", KW_OPT_UNIT, &g.te, KW_UNIT_TIME, &g.seen_te, "time of k = 0 (default N/2 x dwell)"},
        {"seed", KW_OPT_INT, &g.seed, KW_UNIT_NONE, &g.seen_seed, "random seed (default 0)"},
        {"out", KW_OPT_STRING, &g.out, KW_UNIT_NONE, NULL, "write the mask / trajectory (.npy) + sidecar"},
        {"times", KW_OPT_STRING, &g.times, KW_UNIT_NONE, NULL, "sample times file (default OUT_times.npy)"},
        {"density", KW_OPT_STRING, &g.density, KW_UNIT_NONE, NULL, "write the sampling probability (.npy)"},
        {"png", KW_OPT_STRING, &g.png, KW_UNIT_NONE, NULL, "picture of the pattern (or of --compare)"},
        {"json", KW_OPT_STRING, &g.json, KW_UNIT_NONE, NULL, "analysis as JSON"},
        {"psf", KW_OPT_STRING, &g.psf, KW_UNIT_NONE, NULL, "picture of the PSF (log scale)"},
        {"psf-size", KW_OPT_INT, &g.psf_size, KW_UNIT_NONE, NULL, "non-Cartesian PSF grid (default min(N,128))"},
        {"analyse", KW_OPT_STRING, &g.analyse, KW_UNIT_NONE, NULL, "analyse a mask or trajectory file"},
        {"compare", KW_OPT_FLAG, &g.compare, KW_UNIT_NONE, NULL, "compare the files that follow"},
        {NULL, 0, NULL, 0, NULL, NULL},
    };
    const char *files[MAX_COMPARE];
    int nfiles = 0;
    int rc = kw_opts_parse(argc, argv, table, USAGE, files, MAX_COMPARE, &nfiles);
    if (rc >= 0)
        return rc;
    if (nfiles > 0 && !g.compare)
        return kw_cli_fail(files[0], "unexpected argument (files to compare follow --compare)");
    if (g.psf_size && (g.psf_size < 8 || g.psf_size > 512))
        return kw_cli_fail("psf-size", "%ld outside 8..512", g.psf_size);
    if (g.seen_seed && g.seed < 0)
        return kw_cli_fail("seed", "must be >= 0");
    if ((g.compare || g.analyse) && g.seen_ros)
        return kw_cli_fail("readout-oversampling", "only when making a trajectory (--kind); "
                           "the analysis reads it from the sidecar");
    if (g.compare) {
        if (g.kind || g.analyse)
            return kw_cli_fail("compare", "cannot be combined with --kind or --analyse");
        if (nfiles < 1)
            return kw_cli_fail("compare", "no files given");
        analysis as[MAX_COMPARE];
        memset(as, 0, sizeof as);
        int n = 0;
        for (; n < nfiles; n++) {
            rc = analyse_file(files[n], &as[n], g.psf_size);
            if (rc >= 0)
                break;
        }
        if (rc < 0) {
            compare_table(stdout, as, n);
            if (g.json) {
                cJSON *arr = cJSON_CreateArray();
                for (int i = 0; i < n; i++)
                    cJSON_AddItemToArray(arr, analysis_json(&as[i]));
                kw_status st = kw_json_write(g.json, arr);
                cJSON_Delete(arr);
                if (st)
                    rc = kw_cli_status(st, "json");
            }
            if (rc < 0 && g.png)
                rc = compare_png(g.png, as, n);
        }
        for (int i = 0; i <= n && i < MAX_COMPARE; i++)
            analysis_free(&as[i]);
        return rc < 0 ? KW_EXIT_OK : rc;
    }
    if (g.analyse) {
        if (g.kind)
            return kw_cli_fail("analyse", "cannot be combined with --kind");
        analysis a;
        rc = analyse_file(g.analyse, &a, g.psf_size);
        if (rc < 0) {
            analysis_text(stdout, &a);
            if (g.json) {
                cJSON *j = analysis_json(&a);
                kw_status st = kw_json_write(g.json, j);
                cJSON_Delete(j);
                if (st)
                    rc = kw_cli_status(st, "json");
            }
            if (rc < 0 && g.psf)
                rc = write_psf_png(g.psf, &a);
            if (rc < 0 && g.png) {
                kw_status st = write_gray(g.png, a.picture, a.pic_h, a.pic_w);
                if (st)
                    rc = kw_cli_status(st, "png");
            }
        }
        analysis_free(&a);
        return rc < 0 ? KW_EXIT_OK : rc;
    }
    if (!g.kind)
        return kw_cli_fail("kind", "missing (or give --analyse FILE or --compare FILES)");
    if (!g.matrix)
        return kw_cli_fail("matrix", "missing (e.g. --matrix 256x256)");
    size_t mat[3];
    int nmat;
    rc = parse_sizes("matrix", g.matrix, mat, 3, &nmat);
    if (rc >= 0)
        return rc;
    if (g.seen_ros && (!strcmp(g.kind, "spiral") || !strcmp(g.kind, "epi") ||
                       !strcmp(g.kind, "full") || !strcmp(g.kind, "partial") ||
                       !strcmp(g.kind, "uniform") || !strcmp(g.kind, "random") ||
                       !strcmp(g.kind, "poisson") || !strcmp(g.kind, "lattice")))
        return kw_cli_fail("readout-oversampling",
                           "only for --kind radial, golden or stack-of-stars");
    if (!strcmp(g.kind, "spiral") || !strcmp(g.kind, "epi")) {
        if (g.density)
            return kw_cli_fail("density", "only for Cartesian masks");
        return gen_gradient(&g, !strcmp(g.kind, "spiral"), mat, nmat);
    }
    static const struct {
        const char *name;
        int cart;
        int k;
    } kinds[] = {{"full", 1, KW_MASK_FULL},       {"partial", 1, KW_MASK_FULL},
                 {"uniform", 1, KW_MASK_UNIFORM}, {"random", 1, KW_MASK_RANDOM},
                 {"poisson", 1, KW_MASK_POISSON}, {"lattice", 1, KW_MASK_LATTICE},
                 {"radial", 0, KW_TRAJ_RADIAL},   {"golden", 0, KW_TRAJ_GOLDEN},
                 {"stack-of-stars", 0, KW_TRAJ_STACK_OF_STARS}};
    for (size_t i = 0; i < sizeof kinds / sizeof kinds[0]; i++) {
        if (strcmp(g.kind, kinds[i].name) != 0)
            continue;
        const char *hw = g.seen_fov ? "fov" : g.seen_gmax ? "gmax" : g.seen_slew ? "slew"
                         : g.seen_raster ? "raster" : g.seen_interleaves ? "interleaves"
                         : g.seen_shots ? "shots" : NULL;
        if (hw)
            return kw_cli_fail(hw, "only used by --kind spiral or epi");
        if (kinds[i].cart) {
            if (g.seen_spokes || g.seen_tiny || g.seen_dwell || g.seen_te)
                return kw_cli_fail(g.seen_spokes ? "spokes" : g.seen_tiny ? "tiny"
                                   : g.seen_dwell ? "dwell" : "te",
                                   "not used by the Cartesian --kind %s", g.kind);
            if (g.times)
                return kw_cli_fail("times", "a Cartesian mask has no sample times");
            return gen_cartesian(&g, (kw_mask_kind)kinds[i].k, mat, nmat);
        }
        if (g.density)
            return kw_cli_fail("density", "only for Cartesian masks");
        return gen_traj(&g, (kw_traj_kind)kinds[i].k, mat, nmat);
    }
    return kw_cli_fail("kind", "unknown kind '%s' (see --help)", g.kind);
}
