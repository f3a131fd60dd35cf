/* test_psf.c: point-spread functions against closed forms. The match with
 * numpy's FFT and a direct NDFT, the FWHM against the Dirichlet kernel and
 * the transform point spread against pywt are in tests/ref/test_pattern_psf.py. */
#include <criterion/criterion.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>

#include "kw_psf.h"

static void psf_of(const float *w, size_t ny, size_t nx, float complex *psf)
{
    kw_psf_plan *p;
    size_t dims[2] = {ny, nx};
    cr_assert_eq(kw_psf_create(&p, 2, dims), KW_OK);
    cr_assert_eq(kw_psf_execute(p, w, psf), KW_OK);
    kw_psf_destroy(p);
}

/* Uniform undersampling by R of N lines (closed form, sampling theorem:
 * the DFT of a comb of period R is a comb of period N/R with weight 1/R):
 * psf(y) = 1/R at y = j N/R and 0 elsewhere; the peak sidelobe is 1 at
 * N/R; energy outside the main lobe = 1 - 1/R (R equal replicas). */
Test(psf, uniform_R_replicas_closed_form)
{
    const size_t ny = 96, nx = 8;
    const int Rs[] = {2, 3, 4, 6};
    for (int t = 0; t < 4; t++) {
        int R = Rs[t];
        float *w = calloc(ny * nx, sizeof *w);
        float complex *psf = malloc(ny * nx * sizeof *psf);
        for (size_t y = 0; y < ny; y++)
            for (size_t x = 0; x < nx; x++)
                w[y * nx + x] = ((long)y - 48) % R == 0;
        psf_of(w, ny, nx, psf);
        for (size_t y = 0; y < ny; y++)
            for (size_t x = 0; x < nx; x++) {
                long dy = (long)y - 48;
                double want = (x == nx / 2 && dy % (long)(ny / R) == 0) ? 1.0 / R : 0.0;
                cr_expect(cabs(psf[y * nx + x] - want) < 1e-6, "R %d (%zu,%zu): %g vs %g", R,
                          y, x, cabs(psf[y * nx + x]), want);
            }
        kw_psf_metrics m;
        size_t dims[2] = {ny, nx};
        cr_assert_eq(kw_psf_measure(psf, 2, dims, &m), KW_OK);
        cr_expect(fabs(m.peak - 1.0 / R) < 1e-6);
        cr_expect(fabs(m.peak_sidelobe - 1.0) < 1e-5, "R %d sidelobe %g", R, m.peak_sidelobe);
        cr_expect_eq(labs(m.sidelobe_at[0]), (long)(ny / R), "at %ld", m.sidelobe_at[0]);
        cr_expect_eq(m.sidelobe_at[1], 0);
        cr_expect(fabs(m.energy_outside - (1.0 - 1.0 / R)) < 1e-5, "R %d: %g", R,
                  m.energy_outside);
        double gap;
        cr_assert_eq(kw_mask_gap(w, ny, nx, &gap), KW_OK);
        cr_expect_eq(gap, (double)R);
        free(w);
        free(psf);
    }
}

/* A fully sampled grid: a unit delta (FWHM one pixel with linear
 * interpolation between 1 and 0, no sidelobe, no energy outside). */
Test(psf, full_grid_is_a_delta)
{
    const size_t ny = 32, nx = 16;
    float *w = malloc(ny * nx * sizeof *w);
    float complex *psf = malloc(ny * nx * sizeof *psf);
    for (size_t i = 0; i < ny * nx; i++)
        w[i] = 1;
    psf_of(w, ny, nx, psf);
    kw_psf_metrics m;
    size_t dims[2] = {ny, nx};
    cr_assert_eq(kw_psf_measure(psf, 2, dims, &m), KW_OK);
    cr_expect(fabs(m.peak - 1) < 1e-6);
    cr_expect(fabs(m.fwhm[0] - 1) < 1e-6 && fabs(m.fwhm[1] - 1) < 1e-6);
    cr_expect(m.peak_sidelobe < 1e-6);
    cr_expect(m.energy_outside < 1e-6);
    double gap;
    cr_assert_eq(kw_mask_gap(w, ny, nx, &gap), KW_OK);
    cr_expect_eq(gap, 1.0);
    free(w);
    free(psf);
}

/* Gaps: a 2x2 lattice has gap 2; the missing start of partial Fourier is
 * not a gap. */
Test(psf, gap_definition)
{
    float w[16 * 16];
    for (size_t y = 0; y < 16; y++)
        for (size_t x = 0; x < 16; x++)
            w[y * 16 + x] = (y % 2 == 0 && x % 2 == 0);
    double g;
    cr_assert_eq(kw_mask_gap(w, 16, 16, &g), KW_OK);
    cr_expect_eq(g, 2.0);
    for (size_t y = 0; y < 16; y++)
        for (size_t x = 0; x < 16; x++)
            w[y * 16 + x] = y >= 6;
    cr_assert_eq(kw_mask_gap(w, 16, 16, &g), KW_OK);
    cr_expect_eq(g, 1.0);
}

/* The direct NDFT on Cartesian integer positions equals the FFT PSF. */
Test(psf, ndft_on_a_grid_matches_fft)
{
    const size_t n = 16;
    float k[16 * 16 * 2], w[16 * 16];
    size_t s = 0;
    for (size_t y = 0; y < n; y++)
        for (size_t x = 0; x < n; x++)
            if ((y * 7 + x * 3) % 5 != 0) {
                k[2 * s] = (float)((long)x - 8);
                k[2 * s + 1] = (float)((long)y - 8);
                s++;
            }
    float complex a[256], b[256];
    cr_assert_eq(kw_psf_ndft(k, 2, NULL, s, n, n, a, NULL, NULL), KW_OK);
    for (size_t y = 0; y < n; y++)
        for (size_t x = 0; x < n; x++)
            w[y * n + x] = (y * 7 + x * 3) % 5 != 0;
    psf_of(w, n, n, b);
    for (size_t i = 0; i < 256; i++)
        cr_expect(cabsf(a[i] - b[i]) < 1e-6f, "%zu", i);
}

Test(psf, bad_input)
{
    kw_psf_plan *p;
    size_t d[2] = {0, 4};
    cr_expect_eq(kw_psf_create(&p, 2, d), KW_EINVAL);
    cr_expect_eq(kw_psf_create(&p, 4, d), KW_EINVAL);
    float complex z[4] = {0};
    kw_psf_metrics m;
    size_t d2[2] = {2, 2};
    cr_expect_eq(kw_psf_measure(z, 2, d2, &m), KW_ENUMERIC);
    kw_psf_destroy(NULL);
    kw_tpsf_destroy(NULL);
}
