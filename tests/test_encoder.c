/* test_encoder.c: the encoding operator E, its adjoint and the normal
 * operator, Cartesian and non-Cartesian, 2-D and 3-D.
 * Adjointness <E x, y> = <x, E^H y> to 1e-5 relative (issue 7); the
 * Toeplitz normal operator (Wajer & Pruessmann 2001; Fessler et al. 2005)
 * against E^H W E applied directly; E on a full Cartesian grid with one
 * coil of ones against kw_fft (the centered unitary DFT). */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_encoder.h"
#include "kw_fft.h"

static double urand(unsigned *s)
{
    *s = *s * 1664525u + 1013904223u;
    return (*s >> 8) / 16777216.0;
}

static void fill(float complex *a, size_t n, unsigned seed)
{
    for (size_t i = 0; i < n; i++)
        a[i] = (float)(urand(&seed) - 0.5) + I * (float)(urand(&seed) - 0.5);
}

static double complex dot(const float complex *a, const float complex *b, size_t n)
{
    double complex s = 0;
    for (size_t i = 0; i < n; i++)
        s += (double complex)a[i] * conj((double complex)b[i]);
    return s;
}

static double rel(const float complex *a, const float complex *b, size_t n)
{
    double num = 0, den = 0;
    for (size_t i = 0; i < n; i++) {
        num += pow(cabs(a[i] - b[i]), 2);
        den += pow(cabs(b[i]), 2);
    }
    return sqrt(num / den);
}

typedef struct {
    int ndim;
    size_t dims[3];
    size_t ncoils;
    int noncart;
    int use_weights;
} ecase;

static void run_case(const ecase *c)
{
    size_t np = 1;
    for (int d = 0; d < c->ndim; d++)
        np *= c->dims[d];
    unsigned seed = 3;
    size_t ns = c->noncart ? np + np / 3 : np;
    float complex *sens = malloc(c->ncoils * np * sizeof *sens);
    fill(sens, c->ncoils * np, 21);
    uint8_t *mask = NULL;
    float *traj = NULL, *w = NULL;
    if (c->noncart) {
        traj = malloc(ns * c->ndim * sizeof *traj);
        for (size_t j = 0; j < ns; j++)
            for (int a = 0; a < c->ndim; a++) {
                double h = c->dims[c->ndim - 1 - a] / 2.0;
                float v = (float)(-h + 2 * h * urand(&seed));
                traj[j * c->ndim + a] = v >= h ? (float)-h : v;
            }
    } else {
        mask = malloc(np);
        for (size_t k = 0; k < np; k++)
            mask[k] = urand(&seed) < 0.4;
    }
    if (c->use_weights) {
        w = malloc(ns * sizeof *w);
        for (size_t j = 0; j < ns; j++)
            w[j] = (float)(0.2 + urand(&seed));
    }
    kw_encoder *e, *ed = NULL;
    kw_encoder_options o;
    kw_encoder_options_init(&o);
    o.ncoils = c->ncoils;
    o.sens = sens;
    o.mask = mask;
    o.nsamples = ns;
    o.trajectory = traj;
    o.weights = w;
    o.tolerance = 1e-6;
    o.nthreads = 2;
    cr_assert_eq(kw_encoder_create(&e, c->ndim, c->dims, &o), KW_OK, "%s", kw_last_error());
    size_t nk = kw_encoder_kpoints(e);
    float complex *x = malloc(np * sizeof *x), *x2 = malloc(np * sizeof *x);
    float complex *y = malloc(c->ncoils * nk * sizeof *y), *ey = malloc(c->ncoils * nk * sizeof *y);
    float complex *n1 = malloc(np * sizeof *x), *n2 = malloc(np * sizeof *x);
    fill(x, np, 8);
    fill(y, c->ncoils * nk, 9);
    if (mask) /* data live on the sampled points */
        for (size_t q = 0; q < c->ncoils; q++)
            for (size_t k = 0; k < nk; k++)
                if (!mask[k])
                    y[q * nk + k] = 0;
    cr_assert_eq(kw_encoder_forward(e, x, ey), KW_OK);
    cr_assert_eq(kw_encoder_adjoint(e, y, x2), KW_OK);
    double complex l = dot(ey, y, c->ncoils * nk), r = dot(x, x2, np);
    cr_expect(cabs(l - r) <= 1e-5 * cabs(l), "adjointness %g", cabs(l - r) / cabs(l));
    /* the normal operator against adjoint(W forward) */
    cr_assert_eq(kw_encoder_normal(e, x, n1), KW_OK);
    for (size_t q = 0; q < c->ncoils; q++)
        for (size_t k = 0; k < nk; k++)
            ey[q * nk + k] *= w ? w[k] : 1.0f;
    cr_assert_eq(kw_encoder_adjoint(e, ey, n2), KW_OK);
    double en = rel(n1, n2, np);
    cr_expect(en <= 2e-5, "normal vs adjoint(forward): %g", en);
    /* <N x, x> real and positive (Hermitian, positive semi-definite) */
    double complex nxx = dot(n1, x, np);
    cr_expect(fabs(cimag(nxx)) <= 1e-5 * fabs(creal(nxx)) && creal(nxx) > 0);
    if (c->noncart) {
        o.direct_normal = 1;
        o.mask = NULL;
        cr_assert_eq(kw_encoder_create(&ed, c->ndim, c->dims, &o), KW_OK);
        cr_assert_eq(kw_encoder_normal(ed, x, n2), KW_OK);
        cr_expect(rel(n1, n2, np) <= 2e-5, "Toeplitz vs direct: %g", rel(n1, n2, np));
        kw_encoder_destroy(ed);
    }
    kw_encoder_destroy(e);
    free(sens); free(mask); free(traj); free(w); free(x); free(x2); free(y); free(ey);
    free(n1); free(n2);
}

Test(encoder, cartesian_2d) { ecase c = {2, {12, 10, 0}, 3, 0, 0}; run_case(&c); }
Test(encoder, cartesian_2d_weights) { ecase c = {2, {12, 10, 0}, 2, 0, 1}; run_case(&c); }
Test(encoder, cartesian_3d) { ecase c = {3, {6, 8, 10}, 2, 0, 0}; run_case(&c); }
Test(encoder, noncart_2d) { ecase c = {2, {16, 12, 0}, 3, 1, 0}; run_case(&c); }
Test(encoder, noncart_2d_weights) { ecase c = {2, {16, 12, 0}, 2, 1, 1}; run_case(&c); }
Test(encoder, noncart_2d_odd) { ecase c = {2, {15, 11, 0}, 2, 1, 1}; run_case(&c); }
Test(encoder, noncart_3d) { ecase c = {3, {8, 6, 10}, 2, 1, 1}; run_case(&c); }

/* One coil of ones, full grid: E is the centered unitary DFT. */
Test(encoder, single_coil_is_fft)
{
    size_t d[2] = {8, 6};
    kw_encoder *e;
    cr_assert_eq(kw_encoder_create(&e, 2, d, NULL), KW_OK);
    float complex x[48], y[48], f[48];
    fill(x, 48, 4);
    for (int i = 0; i < 48; i++)
        f[i] = x[i];
    kw_fft_plan *p;
    kw_fft_create(&p, 2, d, 1, KW_FFT_ESTIMATE);
    kw_fft_forward(p, f);
    kw_encoder_forward(e, x, y);
    cr_expect(rel(y, f, 48) < 1e-6);
    kw_fft_destroy(p);
    kw_encoder_destroy(e);
}

Test(encoder, bad_input)
{
    size_t d[2] = {8, 8};
    kw_encoder *e = NULL;
    float w[64];
    for (int i = 0; i < 64; i++)
        w[i] = 1;
    w[5] = -1;
    kw_encoder_options o;
    kw_encoder_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    cr_expect_eq(o.ncoils, 1);
    o.weights = w;
    cr_expect_eq(kw_encoder_create(&e, 2, d, &o), KW_ERANGE);
    kw_encoder_options_init(&o);
    o.ncoils = 2; /* two coils need maps */
    cr_expect_eq(kw_encoder_create(&e, 2, d, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "sens");
    float tr[2] = {4.0f, 0.0f};
    kw_encoder_options_init(&o);
    o.nsamples = 1;
    o.trajectory = tr;
    cr_expect_eq(kw_encoder_create(&e, 2, d, &o), KW_ERANGE);
    kw_encoder_options_init(&o);
    o.struct_size = 0; /* never initialised */
    cr_expect_eq(kw_encoder_create(&e, 2, d, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect(e == NULL);
    kw_encoder_destroy(NULL);
}

/* The centered unitary DFT written out (kw_fft.h's definition, the one of
 * numpy's fftshift(fftn(ifftshift(x), norm="ortho"))): X[k] = prod(N)^-1/2
 * sum_n x[n] exp(-+2 pi i sum_d (k_d - N_d/2)(n_d - N_d/2) / N_d), index
 * N_d/2 rounded down, in double. sgn -1: forward, +1: inverse. */
static void direct_dft(int nd, const size_t *dims, const double complex *in,
                       double complex *out, int sgn)
{
    size_t np = 1, D[3] = {1, 1, 1};
    for (int d = 0; d < nd; d++) {
        np *= dims[d];
        D[3 - nd + d] = dims[d];
    }
    for (size_t k = 0; k < np; k++) {
        size_t kk[3] = {k / (D[1] * D[2]), (k / D[2]) % D[1], k % D[2]};
        double complex s = 0;
        for (size_t n = 0; n < np; n++) {
            size_t nn[3] = {n / (D[1] * D[2]), (n / D[2]) % D[1], n % D[2]};
            double ph = 0;
            for (int d = 0; d < 3; d++) {
                double c = (double)(D[d] / 2);
                ph += ((double)kk[d] - c) * ((double)nn[d] - c) / (double)D[d];
            }
            s += in[n] * cexp(sgn * 2 * M_PI * I * ph);
        }
        out[k] = s / sqrt((double)np);
    }
}

static double rel_d(const float complex *a, const double complex *b, size_t n)
{
    double num = 0, den = 0;
    for (size_t i = 0; i < n; i++) {
        num += pow(cabs(a[i] - b[i]), 2);
        den += pow(cabs(b[i]), 2);
    }
    return sqrt(num / den);
}

/* E, E^H and E^H W E of a masked, weighted Cartesian encoder against the
 * formulas of kw_encoder.h evaluated with the direct DFT above in double:
 * every axis even (the fused, coil-by-coil path with the centering folded
 * into the sensitivity passes) and with an odd axis (the batched path); one
 * coil without maps. */
static void direct_case(int nd, const size_t *dims, size_t nc, int threads)
{
    size_t np = 1;
    for (int d = 0; d < nd; d++)
        np *= dims[d];
    unsigned seed = 11;
    float complex *sens = malloc(nc * np * sizeof *sens), *x = malloc(np * sizeof *x);
    float complex *y = malloc(nc * np * sizeof *y), *ey = malloc(nc * np * sizeof *y);
    float complex *xa = malloc(np * sizeof *x), *xn = malloc(np * sizeof *x);
    double complex *t = malloc(np * sizeof *t), *f = malloc(np * sizeof *f);
    double complex *ra = calloc(np, sizeof *ra), *rn = calloc(np, sizeof *rn);
    double complex *rf = malloc(nc * np * sizeof *rf);
    uint8_t *mask = malloc(np);
    float *w = malloc(np * sizeof *w);
    fill(sens, nc * np, 31);
    if (nc == 1) /* one coil: no maps given, ones */
        for (size_t i = 0; i < np; i++)
            sens[i] = 1;
    fill(x, np, 32);
    fill(y, nc * np, 33);
    for (size_t k = 0; k < np; k++) {
        mask[k] = urand(&seed) < 0.5;
        w[k] = (float)(0.25 + urand(&seed));
    }
    kw_encoder_options o;
    kw_encoder_options_init(&o);
    o.ncoils = nc;
    o.sens = nc == 1 ? NULL : sens;
    o.mask = mask;
    o.weights = w;
    o.nthreads = threads;
    kw_encoder *e;
    cr_assert_eq(kw_encoder_create(&e, nd, dims, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_encoder_forward(e, x, ey), KW_OK);
    cr_assert_eq(kw_encoder_adjoint(e, y, xa), KW_OK);
    cr_assert_eq(kw_encoder_normal(e, x, xn), KW_OK);
    for (size_t c = 0; c < nc; c++) {
        /* forward: M F (S_c x) */
        for (size_t i = 0; i < np; i++)
            t[i] = (double complex)sens[c * np + i] * x[i];
        direct_dft(nd, dims, t, f, -1);
        for (size_t k = 0; k < np; k++)
            rf[c * np + k] = mask[k] ? f[k] : 0;
        /* normal: conj(S_c) F^H (M W F (S_c x)) */
        for (size_t k = 0; k < np; k++)
            f[k] *= mask[k] ? w[k] : 0;
        direct_dft(nd, dims, f, t, 1);
        for (size_t i = 0; i < np; i++)
            rn[i] += conj((double complex)sens[c * np + i]) * t[i];
        /* adjoint: conj(S_c) F^H (M y_c) */
        for (size_t k = 0; k < np; k++)
            f[k] = mask[k] ? (double complex)y[c * np + k] : 0;
        direct_dft(nd, dims, f, t, 1);
        for (size_t i = 0; i < np; i++)
            ra[i] += conj((double complex)sens[c * np + i]) * t[i];
    }
    /* single-precision FFTs of a few hundred points: 1e-6 typical (from
     * memory: FFT rounding grows as eps log N) */
    cr_expect(rel_d(ey, rf, nc * np) < 2e-6, "forward vs direct DFT: %g", rel_d(ey, rf, nc * np));
    cr_expect(rel_d(xa, ra, np) < 2e-6, "adjoint vs direct DFT: %g", rel_d(xa, ra, np));
    cr_expect(rel_d(xn, rn, np) < 2e-6, "normal vs direct DFT: %g", rel_d(xn, rn, np));
    /* forward in place over its input (x the first image of y), as the
     * batched path allowed: x is read whole before y is written */
    float complex *yy = malloc(nc * np * sizeof *yy);
    for (size_t i = 0; i < np; i++)
        yy[i] = x[i];
    cr_assert_eq(kw_encoder_forward(e, yy, yy), KW_OK);
    cr_expect(memcmp(yy, ey, nc * np * sizeof *yy) == 0, "forward over its input");
    /* and the adjoint into its input */
    memcpy(yy, y, nc * np * sizeof *yy);
    cr_assert_eq(kw_encoder_adjoint(e, yy, yy), KW_OK);
    cr_expect(memcmp(yy, xa, np * sizeof *yy) == 0, "adjoint over its input");
    kw_encoder_destroy(e);
    free(sens); free(x); free(y); free(ey); free(xa); free(xn); free(t); free(f);
    free(ra); free(rn); free(rf); free(mask); free(w); free(yy);
}

Test(encoder, cartesian_direct_2d) { size_t d[2] = {8, 6}; direct_case(2, d, 3, 1); }
Test(encoder, cartesian_direct_3d) { size_t d[3] = {4, 6, 4}; direct_case(3, d, 2, 2); }
Test(encoder, cartesian_direct_odd) { size_t d[2] = {7, 6}; direct_case(2, d, 2, 1); }
Test(encoder, cartesian_direct_3d_odd) { size_t d[3] = {4, 5, 6}; direct_case(3, d, 2, 1); }
Test(encoder, cartesian_direct_1coil) { size_t d[2] = {6, 10}; direct_case(2, d, 1, 2); }

/* Images above the passes' threading threshold (65536 samples) on two
 * threads: the normal operator against adjoint(W forward). */
Test(encoder, cartesian_threaded_passes)
{
    ecase c = {2, {256, 320, 0}, 2, 0, 1};
    run_case(&c);
}
