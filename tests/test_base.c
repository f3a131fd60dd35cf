/* test_base.c: status codes, error reasons, arrays, constants. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_base.h"

Test(base, strerror_covers_every_status)
{
    for (int s = KW_OK; s <= KW_EINTERNAL; s++)
        cr_expect(strcmp(kw_strerror((kw_status)s), "unknown status") != 0, "status %d", s);
    cr_expect_str_eq(kw_strerror((kw_status)99), "unknown status");
}

Test(base, fail_if_sets_reason)
{
    kw_clear_error();
    cr_expect_str_eq(kw_last_error(), "");
    kw_status st = kw_set_error(KW_ERANGE, "fov: %d is negative", -3);
    cr_expect_eq(st, KW_ERANGE);
    cr_expect_str_eq(kw_last_error(), "fov: -3 is negative");
}

Test(base, array_alloc_aligned_zeroed)
{
    kw_array a;
    size_t dims[3] = {3, 5, 7};
    cr_assert_eq(kw_array_alloc(&a, KW_C64, 3, dims), KW_OK);
    cr_expect_eq(kw_array_count(&a), 105u);
    cr_expect_eq(((uintptr_t)a.data) % 64, 0u);
    const float complex *z = a.data;
    for (size_t i = 0; i < 105; i++)
        cr_expect_eq(z[i], 0.0f);
    kw_array_free(&a);
    kw_array_free(&a); /* idempotent */
    kw_array_free(NULL);
}

Test(base, checked_bytes_overflow_and_limit)
{
    size_t dims[3] = {SIZE_MAX / 2, 4, 1}, n;
    cr_expect_eq(kw_checked_bytes(dims, 3, 8, 0, &n), KW_ENOMEM);
    size_t ok[2] = {1024, 1024};
    cr_expect_eq(kw_checked_bytes(ok, 2, 8, 0, &n), KW_OK);
    cr_expect_eq(n, 8u << 20);
    cr_expect_eq(kw_checked_bytes(ok, 2, 8, 1u << 20, &n), KW_ENOMEM);
    cr_expect(strstr(kw_last_error(), "MiB") != NULL);
}

Test(base, finite_check_names_index)
{
    kw_array a;
    size_t d = 4;
    kw_array_alloc(&a, KW_F32, 1, &d);
    cr_expect_eq(kw_array_all_finite(&a), KW_OK);
    ((float *)a.data)[2] = NAN;
    cr_expect_eq(kw_array_all_finite(&a), KW_ENUMERIC);
    cr_expect(strstr(kw_last_error(), "index 2") != NULL);
    kw_array_free(&a);
}

/* CODATA 2018 recommended values (NIST SP 961, 2019): gamma_p = 2.675 221 8744e8
 * rad/s/T; gamma_p/2pi = 42.577 478 518 MHz/T. The two must agree. */
Test(base, gyromagnetic_ratio_codata_2018)
{
    cr_expect_float_eq(KW_GAMMA_BAR_P, 42.577478518e6, 1e-3);
    cr_expect(fabs(KW_GAMMA_P / (2 * KW_PI) - KW_GAMMA_BAR_P) / KW_GAMMA_BAR_P < 1e-9);
}

/* kw_checked_whole(): the one checked conversion (issue 18). */
Test(base, checked_whole_refuses_before_any_cast)
{
    long long v = -7;
    cr_assert_eq(kw_checked_whole(42.0, 0, 100, &v), KW_OK);
    cr_assert_eq(v, 42);
    cr_assert_eq(kw_checked_whole(-3.0, -5, 5, &v), KW_OK);
    cr_assert_eq(v, -3);
    v = 9;
    cr_assert_eq(kw_checked_whole(2.5, 0, 100, &v), KW_ERANGE);
    cr_assert_eq(kw_checked_whole(1e300, 0, 1LL << 40, &v), KW_ERANGE);
    cr_assert_eq(kw_checked_whole(-1e300, -(1LL << 40), 0, &v), KW_ERANGE);
    cr_assert_eq(kw_checked_whole(NAN, 0, 100, &v), KW_ERANGE);
    cr_assert_eq(kw_checked_whole(INFINITY, 0, 100, &v), KW_ERANGE);
    cr_assert_eq(kw_checked_whole(9223372036854775807.0, 0, 1LL << 52, &v), KW_ERANGE);
    cr_assert_eq(kw_checked_whole(101.0, 0, 100, &v), KW_ERANGE);
    cr_assert_eq(v, 9); /* untouched on refusal */
}
