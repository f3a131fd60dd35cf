/* test_nufft.c: the NUFFT against the exact non-uniform DFT in double
 * (DEVELOPERS.md: naive reference), on the Cartesian grid against the centered
 * unitary FFT, adjointness, the kernel's Fourier transform by quadrature,
 * and bad input. The NDFT itself is checked against numpy in
 * tests/ref/test_nufft_numpy.py. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_fft.h"
#include "kw_nufft.h"

/* Options from the defaults, then the fields a test sets (oversampling 0:
 * the plan's choice). */
static kw_nufft_options nopts(double tol, double alpha, int nthreads)
{
    kw_nufft_options o;
    kw_nufft_options_init(&o);
    o.tolerance = tol;
    o.oversampling = alpha;
    o.nthreads = nthreads;
    return o;
}

static double urand(unsigned *s)
{
    *s = *s * 1664525u + 1013904223u;
    return (*s >> 8) / 16777216.0;
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

/* random trajectory inside [-N/2, N/2) on every axis */
static float *rand_traj(int ndim, const size_t *dims, size_t ns, unsigned seed)
{
    float *t = malloc(ns * ndim * sizeof *t);
    for (size_t j = 0; j < ns; j++)
        for (int c = 0; c < ndim; c++) {
            double h = dims[ndim - 1 - c] / 2.0;
            float v = (float)(-h + 2 * h * urand(&seed));
            t[j * ndim + c] = v >= h ? (float)-h : v;
        }
    return t;
}

static void check_accuracy(int ndim, const size_t *dims, size_t ns, double tol,
                           double alpha)
{
    size_t np = 1;
    for (int d = 0; d < ndim; d++)
        np *= dims[d];
    float *tr = rand_traj(ndim, dims, ns, 11);
    unsigned seed = 5;
    const size_t batch = 2;
    float complex *x = malloc(batch * np * sizeof *x), *xr = malloc(np * sizeof *x);
    float complex *y = malloc(batch * ns * sizeof *y), *yr = malloc(ns * sizeof *y);
    float complex *xa = malloc(batch * np * sizeof *x), *yin = malloc(batch * ns * sizeof *y);
    for (size_t i = 0; i < batch * np; i++)
        x[i] = (float)(urand(&seed) - 0.5) + I * (float)(urand(&seed) - 0.5);
    for (size_t i = 0; i < batch * ns; i++)
        yin[i] = (float)(urand(&seed) - 0.5) + I * (float)(urand(&seed) - 0.5);
    kw_nufft_plan *p;
    kw_nufft_options o = nopts(tol, alpha, 2);
    cr_assert_eq(kw_nufft_create(&p, ndim, dims, ns, tr, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_nufft_forward(p, x, y, batch), KW_OK);
    cr_assert_eq(kw_nufft_adjoint(p, yin, xa, batch), KW_OK);
    for (size_t b = 0; b < batch; b++) {
        kw_ndft_forward(ndim, dims, ns, tr, x + b * np, yr);
        double ef = rel(y + b * ns, yr, ns);
        kw_ndft_adjoint(ndim, dims, ns, tr, yin + b * ns, xr);
        double ea = rel(xa + b * np, xr, np);
        cr_expect(ef <= tol, "%dD tol %g alpha %g forward rel err %g", ndim, tol, alpha, ef);
        cr_expect(ea <= tol, "%dD tol %g alpha %g adjoint rel err %g", ndim, tol, alpha, ea);
    }
    /* adjointness <A x, y> = <x, A^H y> (coil 0) */
    double complex l = 0, r = 0;
    for (size_t j = 0; j < ns; j++)
        l += (double complex)y[j] * conj((double complex)yin[j]);
    for (size_t i = 0; i < np; i++)
        r += (double complex)x[i] * conj((double complex)xa[i]);
    cr_expect(cabs(l - r) <= 1e-5 * cabs(l), "adjointness %g", cabs(l - r) / cabs(l));
    kw_nufft_destroy(p);
    free(tr); free(x); free(xr); free(y); free(yr); free(xa); free(yin);
}

/* Requested tolerance met against the exact NDFT (issue 7 check 1). */
Test(nufft, accuracy_2d_1e3) { size_t d[2] = {40, 36}; check_accuracy(2, d, 1500, 1e-3, 0); }
Test(nufft, accuracy_2d_1e6) { size_t d[2] = {40, 36}; check_accuracy(2, d, 1500, 1e-6, 0); }
Test(nufft, accuracy_2d_alpha125) { size_t d[2] = {32, 30}; check_accuracy(2, d, 1000, 1e-3, 1.25); }
Test(nufft, accuracy_2d_alpha15_1e5) { size_t d[2] = {32, 30}; check_accuracy(2, d, 1000, 1e-5, 1.5); }
Test(nufft, accuracy_2d_1e2) { size_t d[2] = {24, 24}; check_accuracy(2, d, 800, 1e-2, 0); }
Test(nufft, accuracy_3d_1e3) { size_t d[3] = {10, 12, 14}; check_accuracy(3, d, 800, 1e-3, 0); }
Test(nufft, accuracy_3d_1e6) { size_t d[3] = {10, 12, 14}; check_accuracy(3, d, 800, 1e-6, 0); }
Test(nufft, accuracy_3d_alpha125) { size_t d[3] = {8, 10, 12}; check_accuracy(3, d, 600, 1e-3, 1.25); }
/* odd image sizes: k = 0 at floor(N/2) */
Test(nufft, accuracy_2d_odd) { size_t d[2] = {33, 27}; check_accuracy(2, d, 900, 1e-4, 0); }
/* a grid large enough for many tiles and colour classes */
Test(nufft, accuracy_2d_tiles) { size_t d[2] = {96, 80}; check_accuracy(2, d, 600, 1e-4, 0); }

/* The NDFT on integer points equals the centered unitary DFT (kw_fft). */
static void cartesian_case(int ndim, const size_t *dims)
{
    size_t np = 1;
    for (int d = 0; d < ndim; d++)
        np *= dims[d];
    float *tr = malloc(np * ndim * sizeof *tr);
    for (size_t i = 0; i < np; i++) {
        size_t r = i;
        for (int d = ndim - 1; d >= 0; d--) {
            tr[i * ndim + (ndim - 1 - d)] = (float)((long)(r % dims[d]) - (long)(dims[d] / 2));
            r /= dims[d];
        }
    }
    unsigned seed = 9;
    float complex *x = malloc(np * sizeof *x), *f = malloc(np * sizeof *x);
    float complex *y = malloc(np * sizeof *x), *xa = malloc(np * sizeof *x);
    float complex *yd = malloc(np * sizeof *x);
    for (size_t i = 0; i < np; i++)
        f[i] = x[i] = (float)(urand(&seed) - 0.5) + I * (float)(urand(&seed) - 0.5);
    kw_fft_plan *fp;
    cr_assert_eq(kw_fft_create(&fp, ndim, dims, 1, KW_FFT_ESTIMATE), KW_OK);
    kw_fft_forward(fp, f);
    kw_nufft_plan *p;
    kw_nufft_options o = nopts(1e-6, 0, 1);
    cr_assert_eq(kw_nufft_create(&p, ndim, dims, np, tr, &o), KW_OK, "%s", kw_last_error());
    kw_nufft_forward(p, x, y, 1);
    kw_ndft_forward(ndim, dims, np, tr, x, yd);
    cr_expect(rel(y, f, np) < 1e-6, "nufft vs fft %g", rel(y, f, np));
    cr_expect(rel(yd, f, np) < 1e-6, "ndft vs fft %g", rel(yd, f, np));
    kw_nufft_adjoint(p, f, xa, 1); /* inverse of a unitary transform */
    cr_expect(rel(xa, x, np) < 1e-6, "adjoint round trip %g", rel(xa, x, np));
    kw_nufft_destroy(p);
    kw_fft_destroy(fp);
    free(tr); free(x); free(f); free(y); free(xa); free(yd);
}

Test(nufft, cartesian_equals_fft_2d) { size_t d[2] = {16, 20}; cartesian_case(2, d); }
Test(nufft, cartesian_equals_fft_3d) { size_t d[3] = {6, 8, 10}; cartesian_case(3, d); }
Test(nufft, cartesian_equals_fft_odd) { size_t d[2] = {9, 7}; cartesian_case(2, d); }

/* The deapodisation by the kernel's closed-form Fourier transform (Jackson
 * et al. 1991): the adjoint of one sample must be the plane wave
 * 1/sqrt(N) exp(+2 pi i k.n/N) (the definition in kw_nufft.h) at every
 * pixel, edges included, to the kernel's aliasing error. */
Test(nufft, single_sample_plane_wave)
{
    size_t d[2] = {32, 32};
    float tr[2] = {3.25f, -7.5f};
    kw_nufft_plan *p;
    kw_nufft_options o = nopts(1e-6, 2.0, 1);
    cr_assert_eq(kw_nufft_create(&p, 2, d, 1, tr, &o), KW_OK);
    float complex y = 1.0f, x[32 * 32];
    kw_nufft_adjoint(p, &y, x, 1);
    double err = 0;
    for (int a = 0; a < 32; a++)
        for (int b = 0; b < 32; b++) {
            double ph = 2 * KW_PI * (3.25 * (b - 16) / 32.0 - 7.5 * (a - 16) / 32.0);
            double complex ref = cexp(I * ph) / 32.0;
            double e = cabs(x[a * 32 + b] - ref) * 32.0;
            if (e > err)
                err = e;
        }
    cr_expect(err < 1e-5, "plane wave max rel err %g", err);
    kw_nufft_destroy(p);
}

/* Width chosen from the tolerance grows as the tolerance falls. */
Test(nufft, params_monotone)
{
    int w1, w2;
    double b1, b2;
    cr_assert_eq(kw_nufft_params(1e-2, 2.0, &w1, &b1), KW_OK);
    cr_assert_eq(kw_nufft_params(1e-6, 2.0, &w2, &b2), KW_OK);
    cr_expect(w2 > w1 && b2 > b1);
    /* Beatty et al. 2005 eq. 5 at W = 4, alpha = 2:
     * pi sqrt((4/2)^2 (1.5)^2 - 0.8) = pi sqrt(8.2) = 8.9962 */
    cr_assert_eq(kw_nufft_params(1e-3, 2.0, &w1, &b1), KW_OK);
    cr_expect_eq(w1, 4);
    cr_expect(fabs(b1 - KW_PI * sqrt(8.2)) < 1e-9, "beta %g", b1);
}

Test(nufft, bad_input)
{
    size_t d[2] = {16, 16};
    kw_nufft_plan *p = NULL;
    float out[2] = {8.0f, 0.0f}; /* k = N/2 is outside [-N/2, N/2) */
    cr_expect_eq(kw_nufft_create(&p, 2, d, 1, out, NULL), KW_ERANGE);
    cr_expect(strstr(kw_last_error(), "trajectory") != NULL);
    float nan[2] = {NAN, 0.0f};
    cr_expect_eq(kw_nufft_create(&p, 2, d, 1, nan, NULL), KW_ENUMERIC);
    float ok[2] = {1.0f, -8.0f};
    kw_nufft_options o = nopts(1e-7, 0, 1);
    cr_expect_eq(kw_nufft_create(&p, 2, d, 1, ok, &o), KW_ERANGE);
    o.tolerance = 1e-1;
    cr_expect_eq(kw_nufft_create(&p, 2, d, 1, ok, &o), KW_ERANGE);
    o.tolerance = 1e-3;
    o.oversampling = 3.0;
    cr_expect_eq(kw_nufft_create(&p, 2, d, 1, ok, &o), KW_ERANGE);
    o.oversampling = 1.25;
    o.tolerance = 1e-6; /* below the single-precision floor at alpha 1.25 */
    cr_expect_eq(kw_nufft_create(&p, 2, d, 1, ok, &o), KW_ERANGE);
    cr_expect_eq(kw_nufft_create(&p, 4, d, 1, ok, NULL), KW_EINVAL);
    cr_expect(p == NULL);
    kw_nufft_destroy(NULL);
}

/* The growable options struct (kw_base.h): init gives the documented
 * defaults, an uninitialised struct is refused naming "options", and a
 * struct from an older caller (struct_size short of nthreads and measure)
 * creates and takes the library's defaults for the fields it lacks. */
Test(nufft, options_struct_size)
{
    kw_nufft_options o;
    memset(&o, 0x5a, sizeof o);
    kw_nufft_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    cr_expect_eq(o.tolerance, 1e-3);
    cr_expect_eq(o.oversampling, 2.0);
    cr_expect_eq(o.nthreads, 0);
    cr_expect_eq(o.measure, 0);
    size_t d[2] = {16, 16};
    float tr[4] = {1.0f, -8.0f, 3.5f, 2.25f};
    kw_nufft_plan *p = (kw_nufft_plan *)&o;
    o.struct_size = 0; /* never initialised */
    cr_expect_eq(kw_nufft_create(&p, 2, d, 2, tr, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect(p == NULL);
    /* defaults, by NULL and by init */
    kw_nufft_info ref, got;
    cr_assert_eq(kw_nufft_create(&p, 2, d, 2, tr, NULL), KW_OK, "%s", kw_last_error());
    kw_nufft_get_info(p, &ref);
    kw_nufft_destroy(p);
    kw_nufft_options_init(&o);
    cr_assert_eq(kw_nufft_create(&p, 2, d, 2, tr, &o), KW_OK, "%s", kw_last_error());
    kw_nufft_get_info(p, &got);
    kw_nufft_destroy(p);
    cr_expect(got.width == ref.width && got.beta == ref.beta && got.tolerance == 1e-3 &&
              got.oversampling == 2.0 && got.nthreads == ref.nthreads);
    /* an older caller: what lies past its struct_size is not read */
    kw_nufft_options old = nopts(1e-6, 1.5, ref.nthreads + 3);
    old.measure = 1;
    old.struct_size = offsetof(kw_nufft_options, nthreads);
    cr_assert_eq(kw_nufft_create(&p, 2, d, 2, tr, &old), KW_OK, "%s", kw_last_error());
    kw_nufft_get_info(p, &got);
    kw_nufft_destroy(p);
    cr_expect_eq(got.tolerance, 1e-6);
    cr_expect_eq(got.oversampling, 1.5);
    cr_expect_eq(got.nthreads, ref.nthreads, "nthreads %d, the default %d", got.nthreads,
                 ref.nthreads);
    /* and the whole struct is read when it is all there */
    old.struct_size = sizeof old;
    cr_assert_eq(kw_nufft_create(&p, 2, d, 2, tr, &old), KW_OK, "%s", kw_last_error());
    kw_nufft_get_info(p, &got);
    kw_nufft_destroy(p);
    cr_expect_eq(got.nthreads, ref.nthreads + 3);
}
