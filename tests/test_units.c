/* test_units.c: physical quantities on the command line. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "kw_units.h"

static double parse_ok(const char *s, kw_unit_kind k)
{
    double v = NAN;
    char why[160] = "";
    kw_status st = kw_unit_parse(s, k, &v, why, sizeof why);
    cr_assert_eq(st, KW_OK, "'%s': %s", s, why);
    return v;
}

static void parse_bad(const char *s, kw_unit_kind k, const char *needle)
{
    double v;
    char why[160] = "";
    cr_expect_eq(kw_unit_parse(s, k, &v, why, sizeof why), KW_EINVAL, "'%s' accepted", s);
    cr_expect(strstr(why, needle) != NULL, "'%s': reason '%s' lacks '%s'", s, why, needle);
}

#define NEAR(a, b) cr_expect(fabs((a) - (b)) <= 1e-12 * fabs(b), "%g != %g", (a), (b))

Test(units, examples_from_the_issue)
{
    NEAR(parse_ok("256mm", KW_UNIT_LENGTH), 0.256);
    NEAR(parse_ok("0.25m", KW_UNIT_LENGTH), 0.25);
    NEAR(parse_ok("40mT/m", KW_UNIT_GRADIENT), 0.040);
    NEAR(parse_ok("150T/m/s", KW_UNIT_SLEW), 150.0);
    NEAR(parse_ok("3T", KW_UNIT_FIELD), 3.0);
    NEAR(parse_ok("32kHz", KW_UNIT_FREQUENCY), 32000.0);
    NEAR(parse_ok("4.6ms", KW_UNIT_TIME), 4.6e-3);
    NEAR(parse_ok(" 25 cm ", KW_UNIT_LENGTH), 0.25);
    /* 1 G/cm = 10 mT/m (1 G = 1e-4 T). */
    NEAR(parse_ok("4G/cm", KW_UNIT_GRADIENT), 0.04);
    NEAR(parse_ok("200mT/m/ms", KW_UNIT_SLEW), 200.0);
    NEAR(parse_ok("37C", KW_UNIT_TEMPERATURE), 310.15);
    NEAR(parse_ok("90", KW_UNIT_ANGLE), KW_PI / 2);
    NEAR(parse_ok("10us", KW_UNIT_TIME), 1e-5);
}

Test(units, bandwidth_both_forms)
{
    double hz;
    int pp;
    char why[160];
    cr_assert_eq(kw_unit_parse_bandwidth("250Hz/pixel", &hz, &pp, why, sizeof why), KW_OK);
    cr_expect_eq(pp, 1);
    NEAR(hz, 250.0);
    cr_assert_eq(kw_unit_parse_bandwidth("32kHz", &hz, &pp, why, sizeof why), KW_OK);
    cr_expect_eq(pp, 0);
    NEAR(hz, 32000.0);
    cr_expect_eq(kw_unit_parse_bandwidth("32", &hz, &pp, why, sizeof why), KW_EINVAL);
    cr_expect_eq(kw_unit_parse_bandwidth("32kHz/voxel", &hz, &pp, why, sizeof why), KW_EINVAL);
    cr_expect_eq(kw_unit_parse_bandwidth("32mm", &hz, &pp, why, sizeof why), KW_EINVAL);
}

Test(units, wrong_or_missing_unit_is_clear)
{
    parse_bad("256", KW_UNIT_LENGTH, "missing unit");
    parse_bad("3mT/m", KW_UNIT_FIELD, "not a magnetic field");
    parse_bad("nan mm", KW_UNIT_LENGTH, "not a number");
    parse_bad("inf", KW_UNIT_TIME, "not a number");
    parse_bad("", KW_UNIT_TIME, "empty");
    parse_bad("1e999mm", KW_UNIT_LENGTH, "finite");
    parse_bad("0x10mm", KW_UNIT_LENGTH, "decimal");
    parse_bad("mm", KW_UNIT_LENGTH, "not a number");
    parse_bad("12 m m", KW_UNIT_LENGTH, "single word");
}

/* Lists: "256mm,192mm", signs, a bare zero, and the malformed forms. The
 * SI values by hand: 20 uT/m = 2e-5 T/m; 1 G/cm = 0.01 T/m. */
Test(units, lists)
{
    double v[3];
    char why[200];
    cr_assert_eq(kw_unit_parse_list("256mm,192mm", KW_UNIT_LENGTH, v, 3, why, sizeof why), 2);
    NEAR(v[0], 0.256);
    NEAR(v[1], 0.192);
    cr_assert_eq(kw_unit_parse_list("20uT/m,0,-1G/cm", KW_UNIT_GRADIENT, v, 3, why, sizeof why), 3);
    NEAR(v[0], 2e-5);
    cr_expect_eq(v[1], 0.0);
    NEAR(v[2], -0.01);
    cr_expect_eq(kw_unit_parse_list("1mm,2mm,3mm,4mm", KW_UNIT_LENGTH, v, 3, why, sizeof why), -1);
    cr_expect(strstr(why, "at most 3") != NULL, "%s", why);
    cr_expect_eq(kw_unit_parse_list("1mm,,2mm", KW_UNIT_LENGTH, v, 3, why, sizeof why), -1);
    cr_expect(strstr(why, "empty") != NULL, "%s", why);
    cr_expect_eq(kw_unit_parse_list("1mm,", KW_UNIT_LENGTH, v, 3, why, sizeof why), -1);
    cr_expect_eq(kw_unit_parse_list("", KW_UNIT_LENGTH, v, 3, why, sizeof why), -1);
    cr_expect_eq(kw_unit_parse_list("1mm,2", KW_UNIT_LENGTH, v, 3, why, sizeof why), -1);
    cr_expect(strstr(why, "missing unit") != NULL, "%s", why);
    cr_expect_eq(kw_unit_parse_list("nanmm", KW_UNIT_LENGTH, v, 3, why, sizeof why), -1);
}
