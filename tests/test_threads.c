/* test_threads.c: every object with per-thread state or parallel loops,
 * created under one OpenMP thread count and executed under another
 * (omp_set_num_threads(1) then 4, and 4 then 1). Objects size their
 * per-thread scratch for the threads at create and never run more (their
 * headers say so), so each run is compared with the same object created and
 * executed at the create-time count: BIT-IDENTICAL, because the object runs
 * the same threads on the same partition either way. The two create-time
 * counts (1 and 4) are then compared with each other: bit-identical where the
 * code promises it (per-pixel or per-sample work, fixed reduction order: named
 * beside each check), otherwise within single-precision rounding (FFTW's
 * threaded plans and the NUFFT's threaded FFT may order sums differently).
 * Under AddressSanitizer (make asan) a scratch buffer sized for fewer threads
 * than run is a heap-buffer-overflow: the point of the first two tests.
 * Sizes are chosen so that every parallel loop really runs in parallel (more
 * iterations than the loops' thresholds and schedule chunks). */
#include <criterion/criterion.h>
#include <math.h>
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "kw_coilsens.h"
#include "kw_combine.h"
#include "kw_dcf.h"
#include "kw_encoder.h"
#include "kw_fft.h"
#include "kw_grappa.h"
#include "kw_nufft.h"
#include "kw_psf.h"
#include "kw_rssrecon.h"
#include "kw_sense.h"
#include "kw_solvers.h"
#include "kw_tv.h"
#include "kw_wavelet.h"

/* ---- helpers --------------------------------------------------------------- */

/* A reproducible value in [-0.5, 0.5) (an LCG: Numerical Recipes' constants). */
static float rnd(uint32_t *s)
{
    *s = *s * 1664525u + 1013904223u;
    return (float)(*s >> 8) / 16777216.0f - 0.5f;
}

static void fill(float complex *x, size_t n, uint32_t seed)
{
    for (size_t i = 0; i < n; i++) {
        float a = rnd(&seed);
        x[i] = a + I * rnd(&seed);
    }
}

/* Smooth, nonzero coil maps (nc, ny, nx): no singular SENSE pixel. */
static void coil_maps(float complex *s, size_t nc, size_t ny, size_t nx)
{
    for (size_t c = 0; c < nc; c++)
        for (size_t y = 0; y < ny; y++)
            for (size_t x = 0; x < nx; x++) {
                double ang = 2 * KW_PI * (double)c / (double)nc;
                double u = ((double)x / nx - 0.5) * cos(ang) + ((double)y / ny - 0.5) * sin(ang);
                s[(c * ny + y) * nx + x] =
                    (float complex)((1.2 + u) * cexp(I * (0.7 * (double)c + 2.0 * u)));
            }
}

typedef void (*run_fn)(int create_threads, int exec_threads, float *out);

/* Runs fn(ct, et) and returns its `n` floats (malloc'd). */
static float *run(run_fn fn, int ct, int et, size_t n)
{
    float *o = calloc(n, sizeof *o);
    cr_assert(o);
    fn(ct, et, o);
    omp_set_num_threads(1);
    return o;
}

static void expect_same(const float *a, const float *b, size_t n, const char *what)
{
    size_t bad = 0, first = 0;
    for (size_t i = 0; i < n; i++)
        if (memcmp(&a[i], &b[i], sizeof *a)) {
            if (!bad++)
                first = i;
        }
    cr_expect_eq(bad, 0, "%s: %zu of %zu values differ (first at %zu: %.9g vs %.9g)", what,
                 bad, n, first, bad ? a[first] : 0.0, bad ? b[first] : 0.0);
}

/* Within single-precision rounding: max |a - b| <= tol max |b|. */
static void expect_close(const float *a, const float *b, size_t n, double tol, const char *what)
{
    double dmax = 0, bmax = 0;
    for (size_t i = 0; i < n; i++) {
        double d = fabs((double)a[i] - b[i]);
        if (!(d <= dmax))
            dmax = d;
        if (fabs((double)b[i]) > bmax)
            bmax = fabs((double)b[i]);
    }
    cr_expect(bmax > 0, "%s: the reference is all zero", what);
    cr_expect(dmax <= tol * bmax, "%s: max difference %g of max %g (tolerance %g)", what, dmax,
              bmax, tol);
}

/* The four runs. `exact_across`: the results at 1 and 4 create-time threads
 * are bit-identical too (else within `tol` relative to the largest value). */
static void check(run_fn fn, size_t n, int exact_across, double tol, const char *what)
{
    float *r1 = run(fn, 1, 1, n), *a = run(fn, 1, 4, n);
    float *r4 = run(fn, 4, 4, n), *b = run(fn, 4, 1, n);
    char msg[128];
    snprintf(msg, sizeof msg, "%s: made at 1 thread, run at 4 vs at 1", what);
    expect_same(a, r1, n, msg);
    snprintf(msg, sizeof msg, "%s: made at 4 threads, run at 1 vs at 4", what);
    expect_same(b, r4, n, msg);
    snprintf(msg, sizeof msg, "%s: made at 4 vs made at 1", what);
    if (exact_across)
        expect_same(r4, r1, n, msg);
    else
        expect_close(r4, r1, n, tol, msg);
    free(r1);
    free(a);
    free(r4);
    free(b);
}

/* ---- SENSE ------------------------------------------------------------------ */

enum { S_NC = 4, S_NY = 64, S_NX = 64, S_NP = S_NY * S_NX };

static void sense_run(int ct, int et, float *out)
{
    size_t d[3] = {1, S_NY, S_NX};
    int acc[3] = {1, 2, 1}, off[3] = {0, 0, 0};
    float complex *k = kw_alloc(S_NC * S_NP * sizeof *k), *s = kw_alloc(S_NC * S_NP * sizeof *s);
    float complex *img = kw_alloc(S_NP * sizeof *img);
    float *g = kw_alloc(S_NP * sizeof *g);
    cr_assert(k && s && img && g);
    fill(k, S_NC * S_NP, 11);
    coil_maps(s, S_NC, S_NY, S_NX);
    omp_set_num_threads(ct);
    kw_sense *se;
    kw_sense_options so;
    kw_sense_options_init(&so);
    for (int a = 0; a < 3; a++) {
        so.accel[a] = acc[a];
        so.offset[a] = off[a];
    }
    so.lambda = 1e-3;
    cr_assert_eq(kw_sense_create(&se, S_NC, d, &so), KW_OK, "%s", kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_sense_execute(se, k, s, img, g), KW_OK, "%s", kw_last_error());
    memcpy(out, img, S_NP * sizeof *img);
    memcpy(out + 2 * S_NP, g, S_NP * sizeof *g);
    kw_sense_destroy(se);
    kw_free(k);
    kw_free(s);
    kw_free(img);
    kw_free(g);
}

/* Every folded pixel is solved by one thread in a fixed order: bit-identical
 * for any thread count (sense.c). */
Test(threads, sense) { check(sense_run, 3 * S_NP, 1, 0, "sense image and g-factor"); }

/* ---- GRAPPA ----------------------------------------------------------------- */

enum { G_NC = 4, G_NY = 64, G_NX = 32, G_NP = G_NY * G_NX };

static void grappa_run(int ct, int et, float *out)
{
    size_t d[3] = {1, G_NY, G_NX};
    float complex *k = kw_alloc(G_NC * G_NP * sizeof *k), *o = kw_alloc(G_NC * G_NP * sizeof *o);
    cr_assert(k && o);
    fill(k, G_NC * G_NP, 23);
    for (size_t c = 0; c < G_NC; c++)
        for (size_t y = 0; y < G_NY; y++)
            if (y % 2 && (y < 24 || y >= 40))
                memset(k + (c * G_NY + y) * G_NX, 0, G_NX * sizeof *k);
    kw_grappa_options go;
    kw_grappa_options_init(&go);
    go.accel[1] = 2;
    go.acs_lo[1] = 24;
    go.acs_n[0] = 1;
    go.acs_n[1] = 16;
    go.acs_n[2] = G_NX;
    go.kernel[1] = 4;
    go.kernel[2] = 5;
    go.lambda = 1e-3;
    omp_set_num_threads(ct);
    kw_grappa *g;
    cr_assert_eq(kw_grappa_create(&g, G_NC, d, &go), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_grappa_calibrate(g, k), KW_OK, "%s", kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_grappa_execute(g, k, o), KW_OK, "%s", kw_last_error());
    memcpy(out, o, G_NC * G_NP * sizeof *o);
    kw_grappa_destroy(g);
    kw_free(k);
    kw_free(o);
}

/* Every missing point is synthesised by one thread: bit-identical (grappa.c). */
Test(threads, grappa) { check(grappa_run, 2 * G_NC * G_NP, 1, 0, "grappa k-space"); }

/* ---- FFT -------------------------------------------------------------------- */

static void fft_run_dims(int ct, int et, float *out, size_t ny, size_t nx)
{
    size_t d[2] = {ny, nx}, n = ny * nx;
    float complex *x = kw_alloc(n * sizeof *x);
    cr_assert(x);
    fill(x, n, 5);
    omp_set_num_threads(ct);
    kw_fft_plan *p;
    cr_assert_eq(kw_fft_create(&p, 2, d, 1, KW_FFT_ESTIMATE), KW_OK, "%s", kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_fft_forward(p, x), KW_OK);
    memcpy(out, x, n * sizeof *x);
    cr_assert_eq(kw_fft_inverse(p, x), KW_OK);
    memcpy(out + 2 * n, x, n * sizeof *x);
    kw_fft_destroy(p);
    kw_free(x);
}

static void fft_even_run(int ct, int et, float *out) { fft_run_dims(ct, et, out, 256, 512); }
static void fft_odd_run(int ct, int et, float *out) { fft_run_dims(ct, et, out, 63, 65); }

/* The centering modulation is elementwise and FFTW is single-threaded here
 * (no kw_fft_setup): bit-identical (fft.c). */
Test(threads, fft_even) { check(fft_even_run, 4 * 256 * 512, 1, 0, "fft 256 x 512"); }
Test(threads, fft_odd) { check(fft_odd_run, 4 * 63 * 65, 1, 0, "fft 63 x 65"); }

/* ---- NUFFT and the density compensation ------------------------------------- */

enum { N_N = 96, N_S = 30000 };

static void traj_2d(float *t, size_t ns, size_t n, uint32_t seed)
{
    for (size_t j = 0; j < 2 * ns; j++)
        t[j] = rnd(&seed) * (float)n * 0.999f;
}

static void nufft_run(int ct, int et, float *out)
{
    size_t dims[2] = {N_N, N_N}, np = N_N * N_N;
    float *t = malloc(2 * N_S * sizeof *t);
    float complex *img = kw_alloc(np * sizeof *img), *y = kw_alloc(N_S * sizeof *y);
    float complex *back = kw_alloc(np * sizeof *back), *cv = kw_alloc(N_S * sizeof *cv);
    cr_assert(t && img && y && back && cv);
    traj_2d(t, N_S, N_N, 3);
    fill(img, np, 9);
    omp_set_num_threads(ct);
    kw_nufft_plan *p;
    cr_assert_eq(kw_nufft_create(&p, 2, dims, N_S, t, NULL), KW_OK, "%s", kw_last_error());
    kw_nufft_info info;
    kw_nufft_get_info(p, &info);
    cr_assert_eq(info.nthreads, ct, "the plan records the threads at create");
    omp_set_num_threads(et);
    cr_assert_eq(kw_nufft_forward(p, img, y, 1), KW_OK);
    cr_assert_eq(kw_nufft_adjoint(p, y, back, 1), KW_OK);
    cr_assert_eq(kw_nufft_convolve(p, y, cv), KW_OK);
    memcpy(out, y, N_S * sizeof *y);
    memcpy(out + 2 * N_S, back, np * sizeof *back);
    memcpy(out + 2 * (N_S + np), cv, N_S * sizeof *cv);
    kw_nufft_destroy(p);
    free(t);
    kw_free(img);
    kw_free(y);
    kw_free(back);
    kw_free(cv);
}

/* Made at 1 vs 4 threads: the oversampled FFT is FFTW's single- vs
 * multi-threaded plan (sums may be ordered differently): within rounding. */
Test(threads, nufft)
{
    check(nufft_run, 2 * (2 * N_S + N_N * N_N), 0, 1e-5, "nufft forward, adjoint, convolve");
}

static void dcf_run(int ct, int et, float *out)
{
    (void)et; /* one call: plans and runs at the same count */
    size_t dims[2] = {N_N, N_N};
    float *t = malloc(2 * N_S * sizeof *t);
    cr_assert(t);
    traj_2d(t, N_S, N_N, 4);
    omp_set_num_threads(ct);
    cr_assert_eq(kw_dcf_pipe(2, dims, N_S, t, 5, NULL, out), KW_OK, "%s", kw_last_error());
    free(t);
}

/* Spreading runs tile colour by colour (no two threads add into one grid
 * point), interpolation writes each sample once, no FFT: bit-identical. */
Test(threads, dcf_pipe) { check(dcf_run, N_S, 1, 0, "pipe density compensation"); }

/* ---- encoder and solvers ---------------------------------------------------- */

enum { E_NC = 4, E_NY = 384, E_NX = 256, E_NP = E_NY * E_NX };

static float complex *g_sens;
static uint8_t *g_mask;

static void enc_data(void)
{
    g_sens = kw_alloc(E_NC * E_NP * sizeof *g_sens);
    g_mask = malloc(E_NP);
    cr_assert(g_sens && g_mask);
    coil_maps(g_sens, E_NC, E_NY, E_NX);
    for (size_t y = 0; y < E_NY; y++)
        for (size_t x = 0; x < E_NX; x++)
            g_mask[y * E_NX + x] = y % 2 == 0 || (y >= 176 && y < 208);
}

/* The test image: a disc of 1 and a smaller one of 0.5 (piecewise constant). */
static void phantom(float complex *x)
{
    for (size_t y = 0; y < E_NY; y++)
        for (size_t c = 0; c < E_NX; c++) {
            double u = ((double)c - E_NX / 2) / (E_NX / 2), v = ((double)y - E_NY / 2) / (E_NY / 2);
            double r2 = u * u + v * v, q2 = (u - 0.3) * (u - 0.3) + v * v;
            x[y * E_NX + c] = r2 < 0.6 ? (q2 < 0.04 ? 0.5f : 1.0f) : 0.0f;
        }
}

/* A 2-D encoder with the given coils and sampling, other options default. */
static kw_status enc_make(kw_encoder **e, const size_t *dims, size_t nc, const float complex *sens,
                          const uint8_t *mask, size_t ns, const float *traj)
{
    kw_encoder_options o;
    kw_encoder_options_init(&o);
    o.ncoils = nc;
    o.sens = sens;
    o.mask = mask;
    o.nsamples = ns;
    o.trajectory = traj;
    return kw_encoder_create(e, 2, dims, &o);
}

static void encoder_run(int ct, int et, float *out)
{
    enc_data();
    float complex *x = kw_alloc(E_NP * sizeof *x), *y = kw_alloc(E_NC * E_NP * sizeof *y);
    float complex *a = kw_alloc(E_NP * sizeof *a), *nx = kw_alloc(E_NP * sizeof *nx);
    cr_assert(x && y && a && nx);
    phantom(x);
    size_t dims[2] = {E_NY, E_NX};
    omp_set_num_threads(ct);
    kw_encoder *e;
    cr_assert_eq(enc_make(&e, dims, E_NC, g_sens, g_mask, 0, NULL),
                 KW_OK, "%s", kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_encoder_forward(e, x, y), KW_OK);
    cr_assert_eq(kw_encoder_adjoint(e, y, a), KW_OK);
    cr_assert_eq(kw_encoder_normal(e, x, nx), KW_OK);
    memcpy(out, a, E_NP * sizeof *a);
    memcpy(out + 2 * E_NP, nx, E_NP * sizeof *nx);
    kw_encoder_destroy(e);
    kw_free(x);
    kw_free(y);
    kw_free(a);
    kw_free(nx);
    kw_free(g_sens);
    free(g_mask);
}

/* Cartesian E: the FFT (single-threaded FFTW) and elementwise coil loops:
 * bit-identical. */
Test(threads, encoder_cartesian) { check(encoder_run, 4 * E_NP, 1, 0, "cartesian encoder"); }

static void nc_encoder_run(int ct, int et, float *out)
{
    size_t dims[2] = {N_N, N_N}, np = N_N * N_N;
    float *t = malloc(2 * N_S * sizeof *t);
    float complex *s = kw_alloc(3 * np * sizeof *s), *x = kw_alloc(np * sizeof *x);
    float complex *y = kw_alloc(3 * N_S * sizeof *y), *nx = kw_alloc(np * sizeof *nx);
    cr_assert(t && s && x && y && nx);
    traj_2d(t, N_S, N_N, 8);
    coil_maps(s, 3, N_N, N_N);
    fill(x, np, 2);
    omp_set_num_threads(ct);
    kw_encoder *e;
    cr_assert_eq(enc_make(&e, dims, 3, s, NULL, N_S, t), KW_OK, "%s",
                 kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_encoder_forward(e, x, y), KW_OK);
    cr_assert_eq(kw_encoder_normal(e, x, nx), KW_OK);
    memcpy(out, y, 3 * N_S * sizeof *y);
    memcpy(out + 6 * N_S, nx, np * sizeof *nx);
    kw_encoder_destroy(e);
    free(t);
    kw_free(s);
    kw_free(x);
    kw_free(y);
    kw_free(nx);
}

/* Non-Cartesian E (NUFFT, Toeplitz normal): FFTW threaded or not: rounding. */
Test(threads, encoder_noncartesian)
{
    check(nc_encoder_run, 6 * N_S + 2 * N_N * N_N, 0, 1e-5, "non-cartesian encoder");
}

static void solver_run(int ct, int et, float *out, kw_regulariser reg, int admm)
{
    enc_data();
    float complex *x = kw_alloc(E_NP * sizeof *x), *y = kw_alloc(E_NC * E_NP * sizeof *y);
    cr_assert(x && y);
    phantom(x);
    size_t dims[2] = {E_NY, E_NX};
    omp_set_num_threads(ct);
    kw_encoder *e;
    cr_assert_eq(enc_make(&e, dims, E_NC, g_sens, g_mask, 0, NULL),
                 KW_OK, "%s", kw_last_error());
    kw_solver_options o;
    kw_solver_options_init(&o);
    o.iterations = 4;
    o.stop = 1e-9;
    o.lambda = reg ? 1e-3 : 0;
    o.reg = reg;
    o.inner = 3;
    kw_solver *s;
    cr_assert_eq(kw_solver_create(&s, e, 2, dims, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_encoder_forward(e, x, y), KW_OK);
    memset(x, 0, E_NP * sizeof *x);
    omp_set_num_threads(et);
    kw_status st = reg == KW_REG_NONE ? kw_cg_sense(s, y, x, NULL, NULL)
                   : admm             ? kw_admm(s, y, x, NULL, NULL)
                                      : kw_fista(s, y, x, NULL, NULL);
    cr_assert_eq(st, KW_OK, "%s", kw_last_error());
    memcpy(out, x, E_NP * sizeof *x);
    kw_solver_destroy(s);
    kw_encoder_destroy(e);
    kw_free(x);
    kw_free(y);
    kw_free(g_sens);
    free(g_mask);
}

static void cg_run(int ct, int et, float *out) { solver_run(ct, et, out, KW_REG_NONE, 0); }
static void fista_run(int ct, int et, float *out) { solver_run(ct, et, out, KW_REG_WAVELET, 0); }
static void admm_run(int ct, int et, float *out) { solver_run(ct, et, out, KW_REG_TV, 1); }

/* The solvers' inner products are summed per thread over fixed blocks, then
 * in thread order (cg.c): bit-identical for the same create-time count; one
 * vs four partial sums differ by rounding, which four iterations carry into
 * the image at the 1e-6 level. */
Test(threads, cg_sense) { check(cg_run, 2 * E_NP, 0, 1e-5, "cg-sense"); }
Test(threads, fista_wavelet) { check(fista_run, 2 * E_NP, 0, 1e-5, "fista wavelet"); }
Test(threads, admm_tv) { check(admm_run, 2 * E_NP, 0, 1e-5, "admm tv"); }

/* ---- wavelet, TV ------------------------------------------------------------ */

enum { W_NY = 512, W_NX = 256, W_NP = W_NY * W_NX };

static void wavelet_run(int ct, int et, float *out)
{
    float complex *x = kw_alloc(W_NP * sizeof *x), *c = kw_alloc(W_NP * sizeof *c);
    cr_assert(x && c);
    fill(x, W_NP, 17);
    omp_set_num_threads(ct);
    kw_wavelet_plan *p;
    cr_assert_eq(kw_wavelet_create(&p, 4, W_NY, W_NX, 3), KW_OK, "%s", kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_wavelet_forward_c(p, x, c), KW_OK);
    memcpy(out, c, W_NP * sizeof *c);
    cr_assert_eq(kw_wavelet_inverse_c(p, c, c), KW_OK);
    memcpy(out + 2 * W_NP, c, W_NP * sizeof *c);
    kw_wavelet_destroy(p);
    kw_free(x);
    kw_free(c);
}

/* Each coefficient is computed by one thread in a fixed order: bit-identical. */
Test(threads, wavelet) { check(wavelet_run, 4 * W_NP, 1, 0, "db4 wavelet"); }

static void tv_run(int ct, int et, float *out)
{
    (void)ct; /* functions, no plan */
    size_t dims[2] = {W_NY, W_NX};
    float complex *u = kw_alloc(W_NP * sizeof *u), *g = kw_alloc(2 * W_NP * sizeof *g);
    float complex *p = kw_alloc(2 * W_NP * sizeof *p), *v = kw_alloc(W_NP * sizeof *v);
    cr_assert(u && g && p && v);
    fill(u, W_NP, 31);
    omp_set_num_threads(et);
    kw_tv_grad(2, dims, u, g);
    memcpy(out, g, 2 * W_NP * sizeof *g);
    kw_tv_grad_adjoint(2, dims, g, v);
    memcpy(out + 4 * W_NP, v, W_NP * sizeof *v);
    kw_tv_prox(2, dims, u, 0.1, 3, p, g, v);
    memcpy(out + 6 * W_NP, v, W_NP * sizeof *v);
    out[8 * W_NP] = (float)kw_tv_value(2, dims, u, g);
    kw_free(u);
    kw_free(g);
    kw_free(p);
    kw_free(v);
}

/* Elementwise loops, the value summed serially: bit-identical. */
Test(threads, tv) { check(tv_run, 8 * W_NP + 1, 1, 0, "tv grad, adjoint, prox, value"); }

/* ---- PSF, TPSF -------------------------------------------------------------- */

static void psf_run(int ct, int et, float *out)
{
    enum { PY = 256, PX = 512, PN = PY * PX, M = 48, NS = 700 };
    size_t dims[2] = {PY, PX};
    float *w = malloc(PN * sizeof *w), *k = malloc(2 * NS * sizeof *k);
    float complex *psf = kw_alloc(PN * sizeof *psf), *nd = kw_alloc(M * M * sizeof *nd);
    cr_assert(w && k && psf && nd);
    uint32_t sd = 77;
    for (size_t i = 0; i < PN; i++)
        w[i] = rnd(&sd) > 0.2f ? 1.0f : 0.0f;
    traj_2d(k, NS, 64, 78);
    omp_set_num_threads(ct);
    kw_psf_plan *p;
    cr_assert_eq(kw_psf_create(&p, 2, dims), KW_OK, "%s", kw_last_error());
    kw_tpsf_plan *tp;
    cr_assert_eq(kw_tpsf_create(&tp, PY * 2, PX / 2, 4, 3), KW_OK, "%s", kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_psf_execute(p, w, psf), KW_OK);
    memcpy(out, psf, PN * sizeof *psf);
    double coh[3];
    cr_assert_eq(kw_tpsf_execute(tp, w, coh), KW_OK);
    for (int l = 0; l < 3; l++)
        out[2 * PN + l] = (float)coh[l];
    cr_assert_eq(kw_psf_ndft(k, 2, NULL, NS, 64, M, nd, NULL, NULL), KW_OK);
    memcpy(out + 2 * PN + 3, nd, M * M * sizeof *nd);
    kw_psf_destroy(p);
    kw_tpsf_destroy(tp);
    free(w);
    free(k);
    kw_free(psf);
    kw_free(nd);
}

/* FFT modulation, wavelet and NDFT loops are elementwise: bit-identical. */
Test(threads, psf_tpsf) { check(psf_run, 2 * 256 * 512 + 3 + 2 * 48 * 48, 1, 0, "psf, tpsf, ndft psf"); }

/* ---- coil sensitivities, combination, fused RSS ----------------------------- */

enum { C_NC = 4, C_N = 64, C_NP = C_N * C_N };

static void coil_run(int ct, int et, float *out)
{
    (void)ct; /* functions, no plan */
    size_t d[3] = {1, C_N, C_N};
    float complex *m = kw_alloc(C_NC * C_NP * sizeof *m), *k = kw_alloc(C_NC * C_NP * sizeof *k);
    float complex *s = kw_alloc(C_NC * C_NP * sizeof *s), *o = kw_alloc(C_NP * sizeof *o);
    float complex *vec = kw_alloc(C_NC * C_NP * sizeof *vec), *w = kw_alloc(C_NC * C_NC * sizeof *w);
    float *rss = malloc(C_NP * sizeof *rss);
    uint8_t *mask = malloc(C_NP);
    cr_assert(m && k && s && o && vec && w && rss && mask);
    coil_maps(m, C_NC, C_N, C_N);
    for (size_t i = 0; i < C_NC * C_NP; i++)
        m[i] *= (float)(1 + (i % C_NP) % 7) * 0.2f;
    memcpy(k, m, C_NC * C_NP * sizeof *k);
    kw_fft_plan *f;
    cr_assert_eq(kw_fft_create(&f, 2, d + 1, C_NC, KW_FFT_ESTIMATE), KW_OK);
    kw_fft_forward(f, k);
    kw_fft_destroy(f);
    for (size_t c = 0; c < C_NC; c++)
        for (size_t y = 0; y < C_N; y++)
            if (y % 2 && (y < 24 || y >= 40))
                memset(k + (c * C_N + y) * C_N, 0, C_N * sizeof *k);
    omp_set_num_threads(et);
    kw_cart_mask(k, C_NC, C_NP, mask);
    kw_cart_sampling cs;
    cr_assert_eq(kw_cart_sampling_analyse(mask, d, &cs), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_coilsens_walsh(k, C_NC, d, &cs, 0.05, s), KW_OK, "%s", kw_last_error());
    size_t at = 0;
    memcpy(out + at, s, C_NC * C_NP * sizeof *s);
    at += 2 * C_NC * C_NP;
    cr_assert_eq(kw_combine_adaptive(m, C_NC, d, 2, o, vec), KW_OK, "%s", kw_last_error());
    memcpy(out + at, o, C_NP * sizeof *o);
    at += 2 * C_NP;
    kw_combine_optimal(m, s, C_NC, C_NP, o);
    memcpy(out + at, o, C_NP * sizeof *o);
    at += 2 * C_NP;
    kw_combine_rss(m, C_NC, C_NP, rss);
    memcpy(out + at, rss, C_NP * sizeof *rss);
    at += C_NP;
    float complex cov[C_NC * C_NC] = {0};
    for (int i = 0; i < C_NC; i++)
        for (int j = 0; j < C_NC; j++)
            cov[i * C_NC + j] = i == j ? 1.0f + 0.1f * (float)i : 0.1f + 0.05f * I * (float)(i - j);
    cr_assert_eq(kw_prewhiten_matrix(cov, C_NC, w), KW_OK, "%s", kw_last_error());
    kw_prewhiten_apply(w, C_NC, C_NP, m);
    memcpy(out + at, m, C_NC * C_NP * sizeof *m);
    kw_free(m);
    kw_free(k);
    kw_free(s);
    kw_free(o);
    kw_free(vec);
    kw_free(w);
    free(rss);
    free(mask);
}

/* Per-pixel work, one thread per pixel: bit-identical. */
Test(threads, coilsens_combine)
{
    check(coil_run, 4 * C_NC * C_NP + 5 * C_NP, 1, 0, "walsh maps, combinations, prewhitening");
}

static void rss_run(int ct, int et, float *out)
{
    enum { RC = 8, RN = 128, RP = RN * RN };
    size_t dims[2] = {RN, RN};
    float complex *k = kw_alloc(RC * RP * sizeof *k);
    cr_assert(k);
    fill(k, RC * RP, 41);
    omp_set_num_threads(ct);
    cr_assert_eq(kw_fft_setup(0), KW_OK); /* kw_fft_threads() = ct: the rss plan's threads */
    kw_rssrecon *r;
    cr_assert_eq(kw_rssrecon_create(&r, 2, dims, RC, KW_FFT_ESTIMATE), KW_OK, "%s",
                 kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_rssrecon_execute(r, k, out), KW_OK, "%s", kw_last_error());
    kw_rssrecon_destroy(r);
    kw_free(k);
}

/* Fixed coil groups summed in order: bit-identical for any thread count
 * (kw_rssrecon.h). */
Test(threads, rssrecon) { check(rss_run, 128 * 128, 1, 0, "fused rss recon"); }

/* ---- the pipeline objects: kw_acquisition and kw_recon ------------------------
 * They bind the thread count at create like the building blocks: the run made
 * at one count and executed at another equals the run made and executed at
 * the first, bit for bit. Across create-time counts the sums of the
 * simulator's noise-free k-space and of CG may be ordered differently:
 * within 1e-5 of the largest value (single-precision rounding). */

#include "kw_acquire.h"
#include "kw_pattern.h"
#include "kw_recon.h"

enum { P_N = 64, P_NC = 4, P_NP = P_N * P_N };

/* weave, 64 x 64, 4 coils, R = 2 with 16 calibration lines, seeded noise */
static void acquire(int ct, int et, float complex *ks, float *truth, float complex *maps)
{
    kw_pattern_options po;
    kw_pattern_options_init(&po);
    po.kind = KW_PATTERN_UNIFORM;
    po.dims[0] = P_N, po.dims[1] = P_N, po.accel[0] = 2, po.acs[0] = 16;
    kw_pattern *pat = NULL;
    cr_assert_eq(kw_pattern_create(&pat, &po), KW_OK, "%s", kw_last_error());
    kw_acquisition_options ao;
    kw_acquisition_options_init(&ao);
    ao.phantom = "weave", ao.dims[2] = P_N, ao.fov_m[2] = 0.24, ao.coils = P_NC, ao.snr = 40;
    ao.seed = 5, ao.mask = kw_pattern_mask(pat), ao.mask_ndim = 2;
    ao.mask_dims[0] = P_N, ao.mask_dims[1] = P_N;
    omp_set_num_threads(ct);
    kw_acquisition *a = NULL;
    cr_assert_eq(kw_acquisition_create(&a, &ao), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_acquisition_kspace_count(a), P_NC * P_NP);
    omp_set_num_threads(et);
    cr_assert_eq(kw_acquisition_execute(a, ks, truth, maps, NULL, NULL), KW_OK, "%s",
                 kw_last_error());
    kw_acquisition_destroy(a);
    kw_pattern_destroy(pat);
}

static void acquisition_run(int ct, int et, float *out)
{
    float complex *ks = kw_alloc(P_NC * P_NP * sizeof *ks), *maps = kw_alloc(P_NC * P_NP * sizeof *maps);
    float *truth = kw_alloc(P_NP * sizeof *truth);
    cr_assert(ks && maps && truth);
    acquire(ct, et, ks, truth, maps);
    memcpy(out, ks, P_NC * P_NP * sizeof *ks);
    memcpy(out + 2 * P_NC * P_NP, truth, P_NP * sizeof *truth);
    kw_free(ks), kw_free(maps), kw_free(truth);
}

Test(threads, acquisition) { check(acquisition_run, 2 * P_NC * P_NP + P_NP, 0, 1e-5, "acquisition"); }

/* One acquisition (made at one thread) reconstructed by `method`. */
static void recon_run(int ct, int et, float *out, const char *method)
{
    float complex *ks = kw_alloc(P_NC * P_NP * sizeof *ks), *maps = kw_alloc(P_NC * P_NP * sizeof *maps);
    float *truth = kw_alloc(P_NP * sizeof *truth);
    cr_assert(ks && maps && truth);
    acquire(1, 1, ks, truth, maps);
    const size_t kd[3] = {P_NC, P_N, P_N};
    kw_recon_options ro;
    kw_recon_options_init(&ro);
    ro.method = method, ro.combine = "optimal", ro.iterations = 8;
    kw_recon_geometry g = {.ndim = 3, .dims = kd, .sens = maps, .sens_ndim = 3, .sens_dims = kd};
    omp_set_num_threads(ct);
    kw_recon *r = NULL;
    cr_assert_eq(kw_recon_create(&r, &g, &ro), KW_OK, "%s: %s", method, kw_last_error());
    omp_set_num_threads(et);
    cr_assert_eq(kw_recon_execute(r, ks, out, NULL, NULL, NULL), KW_OK, "%s: %s", method,
                 kw_last_error());
    kw_recon_destroy(r);
    kw_free(ks), kw_free(maps), kw_free(truth);
}

static void recon_fft_run(int ct, int et, float *out) { recon_run(ct, et, out, "fft"); }
static void recon_sense_run(int ct, int et, float *out) { recon_run(ct, et, out, "sense"); }
static void recon_grappa_run(int ct, int et, float *out) { recon_run(ct, et, out, "grappa"); }
static void recon_cgsense_run(int ct, int et, float *out) { recon_run(ct, et, out, "cg-sense"); }
static void recon_cstv_run(int ct, int et, float *out) { recon_run(ct, et, out, "cs-tv"); }

Test(threads, recon_fft) { check(recon_fft_run, P_NP, 0, 1e-5, "recon fft"); }
Test(threads, recon_sense) { check(recon_sense_run, P_NP, 0, 1e-5, "recon sense"); }
Test(threads, recon_grappa) { check(recon_grappa_run, P_NP, 0, 1e-5, "recon grappa"); }
Test(threads, recon_cg_sense) { check(recon_cgsense_run, P_NP, 0, 1e-5, "recon cg-sense"); }
Test(threads, recon_cs_tv) { check(recon_cstv_run, P_NP, 0, 1e-5, "recon cs-tv"); }

/* ---- objects made, run and destroyed in several threads at once -----------
 * FFTW's planner, plan destruction and its process-wide thread setting may
 * not be entered by two threads at once; the library holds one lock around
 * them (libencode/fft_lock.h). Four threads each make, run and destroy
 * acquisitions and reconstructions (which plan as they run) of several
 * methods, twice over; every result equals the one made alone, bit for
 * bit. (The lock came from a crash seen from Python threads, SIGFPE inside
 * FFTW's planner: tests/python/test_recon.py's threads test failed or
 * crashed in 3 of 5 runs without it and passed 16 of 16 with it. This test
 * did not reproduce the crash without the lock, so it checks the results of
 * parallel use, not the race itself.) */
Test(threads, objects_made_in_parallel_threads)
{
    static const char *const methods[] = {"fft", "sense", "grappa", "cg-sense"};
    enum { NM = 4, REPS = 2 };
    cr_assert_eq(kw_fft_setup(2), KW_OK); /* FFTW's threads on, as the command and Python */
    float *want = kw_alloc(NM * P_NP * sizeof *want);
    cr_assert(want);
    for (int m = 0; m < NM; m++)
        recon_run(1, 1, want + m * P_NP, methods[m]);
    int bad = 0;
#pragma omp parallel num_threads(4) reduction(+ : bad)
    {
        float *got = kw_alloc(P_NP * sizeof *got);
        for (int rep = 0; rep < REPS && got; rep++) {
            int m = (omp_get_thread_num() + rep) % NM;
            float complex *ks = kw_alloc(P_NC * P_NP * sizeof *ks);
            float complex *maps = kw_alloc(P_NC * P_NP * sizeof *maps);
            float *truth = kw_alloc(P_NP * sizeof *truth);
            kw_pattern_options po;
            kw_pattern_options_init(&po);
            po.kind = KW_PATTERN_UNIFORM;
            po.dims[0] = P_N, po.dims[1] = P_N, po.accel[0] = 2, po.acs[0] = 16;
            kw_pattern *pat = NULL;
            kw_acquisition_options ao;
            kw_acquisition_options_init(&ao);
            ao.phantom = "weave", ao.dims[2] = P_N, ao.fov_m[2] = 0.24, ao.coils = P_NC;
            ao.snr = 40, ao.seed = 5, ao.mask_ndim = 2;
            ao.mask_dims[0] = P_N, ao.mask_dims[1] = P_N;
            kw_acquisition *a = NULL;
            kw_recon *r = NULL;
            const size_t kd[3] = {P_NC, P_N, P_N};
            kw_recon_options ro;
            kw_recon_options_init(&ro);
            ro.method = methods[m], ro.combine = "optimal", ro.iterations = 8;
            kw_recon_geometry g = {.ndim = 3, .dims = kd, .sens = maps, .sens_ndim = 3,
                                   .sens_dims = kd};
            int ok = ks && maps && truth && !kw_pattern_create(&pat, &po);
            if (ok) {
                ao.mask = kw_pattern_mask(pat);
                ok = !kw_acquisition_create(&a, &ao) &&
                     !kw_acquisition_execute(a, ks, truth, maps, NULL, NULL) &&
                     !kw_recon_create(&r, &g, &ro) &&
                     !kw_recon_execute(r, ks, got, NULL, NULL, NULL);
            }
            bad += !ok || memcmp(got, want + m * P_NP, P_NP * sizeof *got) != 0;
            kw_recon_destroy(r);
            kw_acquisition_destroy(a);
            kw_pattern_destroy(pat);
            kw_free(ks), kw_free(maps), kw_free(truth);
        }
        kw_free(got);
    }
    cr_expect_eq(bad, 0, "%d of %d parallel runs failed or differed", bad, 4 * REPS);
    kw_free(want);
}
