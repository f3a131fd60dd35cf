/* test_phantom.c: analytic phantoms: limits and properties of the exact
 * transforms (the transforms themselves are checked against quadrature in
 * tests/ref/test_phantom_ref.py, the intensities against the published
 * tables in tests/ref/test_encode_cli.py). */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_phantom.h"
#include "kw_tissue.h"

/* F(0) is the area (volume): pi a b for an ellipse, 4 pi abc/3 for an
 * ellipsoid, 4ab and 8abc for rectangles and boxes (elementary geometry). */
Test(phantom, dc_is_area)
{
    kw_shape s = {.kind = KW_SHAPE_ELLIPSE, .center = {0.1, 0.2, 0}, .axes = {0.3, 0.2, 0}, .angle = 0.4};
    cr_expect(fabs(creal(kw_shape_ft(&s, 0, 0, 0)) - KW_PI * 0.06) < 1e-14);
    s.kind = KW_SHAPE_RECT;
    cr_expect(fabs(creal(kw_shape_ft(&s, 0, 0, 0)) - 4 * 0.06) < 1e-14);
    s.kind = KW_SHAPE_ELLIPSOID;
    s.axes[2] = 0.5;
    cr_expect(fabs(creal(kw_shape_ft(&s, 0, 0, 0)) - 4.0 / 3.0 * KW_PI * 0.03) < 1e-14);
    s.kind = KW_SHAPE_BOX;
    cr_expect(fabs(creal(kw_shape_ft(&s, 0, 0, 0)) - 8 * 0.03) < 1e-14);
}

/* Continuity across the small-argument series (no jump at the switch). */
Test(phantom, series_continuity)
{
    kw_shape s = {.kind = KW_SHAPE_ELLIPSE, .axes = {1, 1, 1}};
    for (int k = 0; k < 2; k++) {
        double z0 = k ? 0.1 : 1e-4; /* the switch points (ellipse, ellipsoid) */
        double f0 = z0 / (2 * KW_PI);
        double complex a = kw_shape_ft(&s, f0 * (1 - 1e-13), 0, 0);
        double complex b = kw_shape_ft(&s, f0 * (1 + 1e-13), 0, 0);
        cr_expect(cabs(a - b) < 1e-12 * cabs(a), "jump %g", cabs(a - b));
        s.kind = KW_SHAPE_ELLIPSOID;
    }
}

/* Shift theorem: moving the shape by c multiplies F by exp(-i 2 pi f.c). */
Test(phantom, shift_theorem)
{
    kw_shape a = {.kind = KW_SHAPE_ELLIPSE, .axes = {0.3, 0.1, 0}, .angle = 0.3};
    kw_shape b = a;
    b.center[0] = 0.2;
    b.center[1] = -0.1;
    double fx = 3.3, fy = -1.7;
    double complex want = kw_shape_ft(&a, fx, fy, 0) * cexp(-2 * I * KW_PI * (fx * 0.2 - fy * 0.1));
    cr_expect(cabs(kw_shape_ft(&b, fx, fy, 0) - want) < 1e-13);
}

Test(phantom, names_and_errors)
{
    kw_phantom p;
    for (const char *const *n = kw_phantom_names(); *n; n++)
        cr_expect_eq(kw_phantom_make(&p, *n), KW_OK, "%s", *n);
    cr_expect_eq(kw_phantom_make(&p, "brain"), KW_EINVAL);
    cr_expect(strstr(kw_last_error(), "brain") != NULL);
    cr_expect_eq(kw_phantom_make(&p, "weave"), KW_OK);
    cr_expect_eq(p.ndim, 2);
    cr_expect_eq(p.tissue, 1);
    cr_expect_eq(kw_phantom_make(&p, "weave3d"), KW_OK);
    cr_expect_eq(p.ndim, 3);
}

/* Tissue phantoms: a child replaces its parent: weight = own - parent, so
 * the rasterised image inside a vial equals the vial's own value. */
Test(phantom, replacement_weights)
{
    kw_phantom p;
    cr_assert_eq(kw_phantom_make(&p, "weave"), KW_OK);
    double w[KW_PHANTOM_MAX_SHAPES];
    kw_phantom_weights(&p, NULL, w);
    cr_expect(fabs(w[0] - p.shapes[0].value) < 1e-15);
    cr_expect(fabs(w[1] - (p.shapes[1].value - p.shapes[0].value)) < 1e-15);
    size_t dims[2] = {128, 128}; /* (ny, nx) */
    static float img[128 * 128];
    cr_assert_eq(kw_phantom_rasterize(&p, dims, NULL, 4, img), KW_OK);
    /* vial 1 (white matter) centred at (0, 0.55): row 64 - 0.55 * 64 ~ 29 */
    cr_expect(fabs(img[29 * 128 + 64] - kw_tissue_get(KW_TISSUE_WHITE_MATTER)->pd) < 1e-6);
    /* the centre-grid pixel (64, 64) lies in the gap between bars of group 2 */
    cr_expect(fabs(img[0] - 0.0f) < 1e-7);
}

Test(phantom, rasterize_rejects_bad_arguments)
{
    kw_phantom p;
    kw_phantom_make(&p, "shepp-logan");
    size_t dims[2] = {8, 8};
    float img[64];
    cr_expect_eq(kw_phantom_rasterize(&p, dims, NULL, 0, img), KW_EINVAL);
    cr_expect_eq(kw_phantom_rasterize_grid(&p, dims, NULL, 2, NAN, img), KW_EINVAL);
}
