/* test_solver.c: CG-SENSE, FISTA and ADMM.
 * References: (1) for an orthogonal operator (one coil of ones, full
 * Cartesian grid: E^H E = I) the CS problem with R = ||Psi x||_1, Psi
 * orthogonal, has the closed form x* = Psi^H soft(Psi E^H y, lambda)
 * (Donoho 1995, IEEE Trans Inf Theory 41:613, soft thresholding; Beck &
 * Teboulle 2009 sec. 1); (2) noiseless data of a known image are
 * reconstructed exactly by CG-SENSE where E has full column rank
 * (Pruessmann et al. 2001); (3) TV against scipy.optimize in
 * tests/ref/test_cs_scipy.py. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_solvers.h"
#include "kw_tv.h"
#include "kw_wavelet.h"

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

/* smooth coil maps: c-th coil peaks at a different corner */
static float complex *coil_maps(size_t nc, size_t ny, size_t nx)
{
    float complex *s = malloc(nc * ny * nx * sizeof *s);
    for (size_t c = 0; c < nc; c++) {
        double cy = (c & 1) ? 0.0 : ny, cx = (c & 2) ? 0.0 : nx;
        for (size_t i = 0; i < ny; i++)
            for (size_t j = 0; j < nx; j++) {
                double d = hypot(i - cy, j - cx) / (double)nx;
                s[(c * ny + i) * nx + j] = (float)exp(-d) * cexpf(I * (float)(0.3 * c + 0.02 * j));
            }
    }
    return s;
}

static void phantom(float complex *x, size_t ny, size_t nx)
{
    for (size_t i = 0; i < ny; i++)
        for (size_t j = 0; j < nx; j++) {
            double u = (j - nx / 2.0) / (nx / 2.0), v = (i - ny / 2.0) / (ny / 2.0);
            double val = (u * u / 0.6 + v * v / 0.8 < 1) ? 1.0 : 0.0;
            if ((u - 0.2) * (u - 0.2) + v * v < 0.05)
                val = 0.4;
            x[i * nx + j] = (float)val;
        }
}

Test(solver, cg_sense_cartesian_r2_exact)
{
    size_t ny = 32, nx = 32, nc = 4, n = ny * nx, d[2] = {32, 32};
    float complex *sens = coil_maps(nc, ny, nx);
    uint8_t *mask = malloc(n);
    for (size_t i = 0; i < n; i++)
        mask[i] = ((i / nx) % 2 == 0) || ((i / nx) >= 12 && (i / nx) < 20);
    kw_encoder *e;
    cr_assert_eq(kw_encoder_create(&e, 2, d, &(kw_encoder_options){.struct_size = sizeof(kw_encoder_options), .ncoils = nc, .sens = sens, .mask = mask}), KW_OK);
    float complex *xt = malloc(n * sizeof *xt), *x = calloc(n, sizeof *x);
    float complex *y = malloc(nc * n * sizeof *y);
    phantom(xt, ny, nx);
    kw_encoder_forward(e, xt, y);
    kw_solver *s;
    kw_solver_options o;
    kw_solver_options_init(&o);
    o.iterations = 200;
    o.stop = 1e-7;
    cr_assert_eq(kw_solver_create(&s, e, 2, d, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_cg_sense(s, y, x, NULL, NULL), KW_OK, "%s", kw_last_error());
    cr_expect(rel(x, xt, n) < 1e-3, "CG-SENSE error %g", rel(x, xt, n));
    const kw_iter_record *r;
    size_t nr = kw_solver_log(s, &r);
    cr_expect(nr > 2 && r[nr - 1].change < r[0].change);
    kw_solver_destroy(s);
    kw_encoder_destroy(e);
    free(sens); free(mask); free(xt); free(x); free(y);
}

Test(solver, cg_sense_noncartesian_exact)
{
    size_t ny = 24, nx = 24, nc = 3, n = ny * nx, d[2] = {24, 24};
    size_t ns = 2 * n;
    float *tr = malloc(ns * 2 * sizeof *tr);
    unsigned seed = 1;
    for (size_t j = 0; j < 2 * ns; j++)
        tr[j] = (float)(-12 + 24 * urand(&seed)) * 0.999f;
    float complex *sens = coil_maps(nc, ny, nx);
    kw_encoder *e;
    kw_encoder_options eo;
    kw_encoder_options_init(&eo);
    eo.ncoils = nc;
    eo.sens = sens;
    eo.nsamples = ns;
    eo.trajectory = tr;
    eo.tolerance = 1e-6;
    eo.nthreads = 1;
    cr_assert_eq(kw_encoder_create(&e, 2, d, &eo), KW_OK);
    float complex *xt = malloc(n * sizeof *xt), *x = calloc(n, sizeof *x);
    float complex *y = malloc(nc * ns * sizeof *y);
    phantom(xt, ny, nx);
    kw_encoder_forward(e, xt, y);
    kw_solver *s;
    kw_solver_options o;
    kw_solver_options_init(&o);
    o.iterations = 300;
    o.stop = 1e-7;
    cr_assert_eq(kw_solver_create(&s, e, 2, d, &o), KW_OK);
    cr_assert_eq(kw_cg_sense(s, y, x, NULL, NULL), KW_OK, "%s", kw_last_error());
    cr_expect(rel(x, xt, n) < 1e-3, "CG-SENSE error %g", rel(x, xt, n));
    kw_solver_destroy(s);
    kw_encoder_destroy(e);
    free(tr); free(sens); free(xt); free(x); free(y);
}

/* orthogonal operator: FISTA and ADMM against the closed form */
static void closed_form_case(int admm)
{
    size_t ny = 32, nx = 32, n = ny * nx, d[2] = {32, 32};
    kw_encoder *e;
    cr_assert_eq(kw_encoder_create(&e, 2, d, NULL), KW_OK);
    float complex *xt = malloc(n * sizeof *xt), *y = malloc(n * sizeof *y);
    float complex *x = calloc(n, sizeof *x), *ref = malloc(n * sizeof *ref);
    phantom(xt, ny, nx);
    unsigned seed = 4;
    kw_encoder_forward(e, xt, y);
    for (size_t i = 0; i < n; i++)
        y[i] += 0.05f * (float)(urand(&seed) - 0.5) + 0.05f * I * (float)(urand(&seed) - 0.5);
    double lambda = 0.03;
    /* closed form: E^H y = inverse FFT; soft-threshold its db4 coefficients */
    kw_encoder_adjoint(e, y, ref);
    kw_wavelet_plan *w;
    cr_assert_eq(kw_wavelet_create(&w, 4, ny, nx, 3), KW_OK);
    kw_wavelet_forward_c(w, ref, ref);
    for (size_t i = 0; i < n; i++) {
        if (i / nx < (ny >> 3) && i % nx < (nx >> 3))
            continue; /* the coarsest approximation band (3 levels) is kept */
        float a = cabsf(ref[i]);
        ref[i] = a > lambda ? ref[i] * (1.0f - (float)lambda / a) : 0.0f;
    }
    kw_wavelet_inverse_c(w, ref, ref);
    kw_solver *s;
    kw_solver_options o;
    kw_solver_options_init(&o);
    o.iterations = 300;
    o.stop = 1e-8;
    o.lambda = lambda;
    o.reg = KW_REG_WAVELET;
    o.wavelet_order = 4;
    o.wavelet_levels = 3;
    o.inner = 5;
    cr_assert_eq(kw_solver_create(&s, e, 2, d, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(admm ? kw_admm(s, y, x, NULL, NULL) : kw_fista(s, y, x, NULL, NULL), KW_OK,
                 "%s", kw_last_error());
    cr_expect(rel(x, ref, n) < 1e-4, "%s vs closed form: %g", admm ? "admm" : "fista",
              rel(x, ref, n));
    /* the objective decreases to the closed form's value */
    double fx, fr;
    kw_solver_objective(s, y, x, &fx);
    kw_solver_objective(s, y, ref, &fr);
    cr_expect(fabs(fx - fr) <= 1e-5 * fr, "F %g vs %g", fx, fr);
    kw_wavelet_destroy(w);
    kw_solver_destroy(s);
    kw_encoder_destroy(e);
    free(xt); free(y); free(x); free(ref);
}

Test(solver, fista_wavelet_closed_form) { closed_form_case(0); }
Test(solver, admm_wavelet_closed_form) { closed_form_case(1); }

/* TV: FISTA and ADMM agree on an undersampled multi-coil problem, and the
 * objective falls monotonically enough to beat zero-filling's. */
Test(solver, tv_fista_admm_agree)
{
    size_t ny = 32, nx = 32, nc = 2, n = ny * nx, d[2] = {32, 32};
    float complex *sens = coil_maps(nc, ny, nx);
    uint8_t *mask = malloc(n);
    unsigned seed = 2;
    for (size_t i = 0; i < n; i++)
        mask[i] = urand(&seed) < 0.35 || ((i / nx) >= 14 && (i / nx) < 18);
    kw_encoder *e;
    cr_assert_eq(kw_encoder_create(&e, 2, d, &(kw_encoder_options){.struct_size = sizeof(kw_encoder_options), .ncoils = nc, .sens = sens, .mask = mask}), KW_OK);
    float complex *xt = malloc(n * sizeof *xt), *y = malloc(nc * n * sizeof *y);
    float complex *x1 = calloc(n, sizeof *x1), *x2 = calloc(n, sizeof *x2);
    phantom(xt, ny, nx);
    kw_encoder_forward(e, xt, y);
    kw_solver *s;
    kw_solver_options o;
    kw_solver_options_init(&o);
    o.iterations = 400;
    o.stop = 1e-9;
    o.lambda = 0.002;
    o.reg = KW_REG_TV;
    o.inner = 20;
    cr_assert_eq(kw_solver_create(&s, e, 2, d, &o), KW_OK);
    cr_assert_eq(kw_fista(s, y, x1, NULL, NULL), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_admm(s, y, x2, NULL, NULL), KW_OK, "%s", kw_last_error());
    double f1, f2;
    kw_solver_objective(s, y, x1, &f1);
    kw_solver_objective(s, y, x2, &f2);
    cr_expect(fabs(f1 - f2) <= 1e-3 * f1, "F fista %g admm %g", f1, f2);
    cr_expect(rel(x1, x2, n) < 1e-2, "fista vs admm %g", rel(x1, x2, n));
    cr_expect(rel(x1, xt, n) < 0.1, "TV error %g", rel(x1, xt, n));
    kw_solver_destroy(s);
    kw_encoder_destroy(e);
    free(sens); free(mask); free(xt); free(y); free(x1); free(x2);
}

/* D^H is the adjoint of D (periodic differences) */
Test(solver, tv_gradient_adjoint)
{
    size_t d[3] = {5, 6, 7}, n = 210;
    float complex *u = malloc(n * sizeof *u), *g = malloc(3 * n * sizeof *g);
    float complex *du = malloc(3 * n * sizeof *g), *dg = malloc(n * sizeof *u);
    unsigned seed = 3;
    for (size_t i = 0; i < n; i++)
        u[i] = (float)urand(&seed) + I * (float)urand(&seed);
    for (size_t i = 0; i < 3 * n; i++)
        g[i] = (float)urand(&seed) + I * (float)urand(&seed);
    kw_tv_grad(3, d, u, du);
    kw_tv_grad_adjoint(3, d, g, dg);
    double complex l = 0, r = 0;
    for (size_t i = 0; i < 3 * n; i++)
        l += (double complex)du[i] * conj((double complex)g[i]);
    for (size_t i = 0; i < n; i++)
        r += (double complex)u[i] * conj((double complex)dg[i]);
    cr_expect(cabs(l - r) < 1e-5 * cabs(l));
    free(u); free(g); free(du); free(dg);
}

Test(solver, bad_input)
{
    size_t d[2] = {8, 8};
    kw_encoder *e;
    kw_encoder_create(&e, 2, d, NULL);
    kw_solver *s = NULL;
    kw_solver_options o;
    kw_solver_options_init(&o);
    o.lambda = -1;
    cr_expect_eq(kw_solver_create(&s, e, 2, d, &o), KW_ERANGE);
    cr_expect(strstr(kw_last_error(), "lambda") != NULL);
    cr_expect_str_eq(kw_last_error_param(), "lambda");
    o.lambda = 0.1;
    o.stop = 2;
    cr_expect_eq(kw_solver_create(&s, e, 2, d, &o), KW_ERANGE);
    cr_expect_str_eq(kw_last_error_param(), "stop");
    o.stop = 0;
    o.iterations = 100001;
    cr_expect_eq(kw_solver_create(&s, e, 2, d, &o), KW_ERANGE);
    cr_expect_str_eq(kw_last_error_param(), "iterations");
    o.iterations = 0;
    size_t odd[2] = {7, 9};
    kw_encoder *e2;
    kw_encoder_create(&e2, 2, odd, NULL);
    o.stop = 0;
    o.reg = KW_REG_WAVELET;
    cr_expect_eq(kw_solver_create(&s, e2, 2, odd, &o), KW_ENOTSUP);
    cr_expect(s == NULL);
    kw_encoder_destroy(e);
    kw_encoder_destroy(e2);
    kw_solver_destroy(NULL);
}

/* FISTA-TV on a 16 x 16 image of one coil of ones (full Cartesian grid),
 * 5 iterations from zero, with the options `o`; x receives the result. */
static void tv_solve(kw_encoder *e, const float complex *y, const kw_solver_options *o,
                     float complex *x)
{
    size_t d[2] = {16, 16};
    kw_solver *s;
    cr_assert_eq(kw_solver_create(&s, e, 2, d, o), KW_OK, "%s", kw_last_error());
    memset(x, 0, 256 * sizeof *x);
    cr_assert_eq(kw_fista(s, y, x, NULL, NULL), KW_OK, "%s", kw_last_error());
    kw_solver_destroy(s);
}

/* The growable options struct (kw_base.h): init gives the documented
 * defaults, an uninitialised struct is refused naming "options", and a
 * struct from an older caller (struct_size short of `inner`, the last field)
 * creates and takes the default inner count: its solve equals, bit for bit,
 * the one with inner = 10, and differs from the one with the `inner` that
 * lies unread past its struct_size. */
Test(solver, options_struct_size)
{
    kw_solver_options o;
    memset(&o, 0x5a, sizeof o);
    kw_solver_options_init(&o);
    cr_expect_eq(o.struct_size, sizeof o);
    cr_expect_eq(o.iterations, 100);
    cr_expect_eq(o.stop, 1e-5);
    cr_expect_eq(o.lambda, 0.0);
    cr_expect_eq(o.reg, KW_REG_NONE);
    cr_expect_eq(o.wavelet_order, 4);
    cr_expect_eq(o.wavelet_levels, 0);
    cr_expect_eq(o.rho, 0.0);
    cr_expect_eq(o.inner, 10);
    size_t d[2] = {16, 16}, n = 256;
    kw_encoder *e;
    cr_assert_eq(kw_encoder_create(&e, 2, d, NULL), KW_OK, "%s", kw_last_error());
    kw_solver *s = (kw_solver *)&o;
    o.struct_size = 0; /* never initialised */
    cr_expect_eq(kw_solver_create(&s, e, 2, d, &o), KW_EINVAL);
    cr_expect_str_eq(kw_last_error_param(), "options");
    cr_expect(s == NULL);
    float complex *xt = malloc(n * sizeof *xt), *y = malloc(n * sizeof *y);
    float complex *xdef = malloc(n * sizeof *xdef), *xold = malloc(n * sizeof *xold);
    float complex *xone = malloc(n * sizeof *xone);
    phantom(xt, 16, 16);
    unsigned seed = 11;
    for (size_t i = 0; i < n; i++)
        xt[i] += 0.2f * (float)(urand(&seed) - 0.5);
    kw_encoder_forward(e, xt, y);
    kw_solver_options_init(&o);
    o.iterations = 5;
    o.stop = 1e-12;
    o.lambda = 0.05;
    o.reg = KW_REG_TV;
    tv_solve(e, y, &o, xdef); /* inner = 10, the default */
    kw_solver_options old = o;
    old.inner = 1;
    tv_solve(e, y, &old, xone);
    old.struct_size = offsetof(kw_solver_options, inner);
    tv_solve(e, y, &old, xold);
    cr_expect(memcmp(xold, xdef, n * sizeof *xold) == 0,
              "an older caller's solve differs from the default inner count's");
    cr_expect(memcmp(xone, xdef, n * sizeof *xone) != 0, "inner = 1 changes nothing here");
    kw_encoder_destroy(e);
    free(xt); free(y); free(xdef); free(xold); free(xone);
}

/* The progress callback names what it reports in the reports' words: CG its
 * relative residual, FISTA and ADMM the relative change (issue 17: the line
 * said "residual" where the JSON said "change"). */
typedef struct { int calls; const char *name; } seen_progress;

static int note_progress(void *user, const kw_progress *p)
{
    seen_progress *s = user;
    s->calls++;
    s->name = p->residual_name;
    return 0;
}

Test(solver, progress_names_what_it_reports)
{
    size_t ny = 16, nx = 16, n = ny * nx, d[2] = {16, 16};
    float complex *sens = coil_maps(1, ny, nx);
    kw_encoder *e;
    cr_assert_eq(kw_encoder_create(&e, 2, d, &(kw_encoder_options){.struct_size = sizeof(kw_encoder_options), .ncoils = 1, .sens = sens}), KW_OK);
    float complex *xt = malloc(n * sizeof *xt), *x = calloc(n, sizeof *x), *y = malloc(n * sizeof *y);
    phantom(xt, ny, nx);
    kw_encoder_forward(e, xt, y);
    kw_solver *s;
    kw_solver_options o;
    kw_solver_options_init(&o);
    o.iterations = 3;
    o.stop = 0;
    o.reg = KW_REG_TV;
    o.lambda = 1e-3;
    cr_assert_eq(kw_solver_create(&s, e, 2, d, &o), KW_OK, "%s", kw_last_error());
    seen_progress sp = {0, NULL};
    cr_assert_eq(kw_cg_sense(s, y, x, note_progress, &sp), KW_OK, "%s", kw_last_error());
    cr_expect(sp.calls > 0 && sp.name && strcmp(sp.name, "residual") == 0);
    sp = (seen_progress){0, NULL};
    cr_assert_eq(kw_fista(s, y, x, note_progress, &sp), KW_OK, "%s", kw_last_error());
    cr_expect(sp.calls > 0 && sp.name && strcmp(sp.name, "change") == 0);
    sp = (seen_progress){0, NULL};
    cr_assert_eq(kw_admm(s, y, x, note_progress, &sp), KW_OK, "%s", kw_last_error());
    cr_expect(sp.calls > 0 && sp.name && strcmp(sp.name, "change") == 0);
    kw_solver_destroy(s);
    kw_encoder_destroy(e);
    free(sens); free(xt); free(x); free(y);
}
