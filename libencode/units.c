/* units.c: parsing of physical quantities with units. */
#include "kw_units.h"

#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct unit_def {
    const char *name;
    double scale; /* SI value of one unit */
    double offset; /* added after scaling (Celsius) */
} unit_def;

static const unit_def u_length[] = {{"m", 1, 0}, {"cm", 1e-2, 0}, {"mm", 1e-3, 0},
                                    {"um", 1e-6, 0}, {NULL, 0, 0}};
static const unit_def u_field[] = {{"T", 1, 0}, {"mT", 1e-3, 0}, {NULL, 0, 0}};
/* 1 G/cm = 1e-4 T / 1e-2 m = 0.01 T/m. */
static const unit_def u_grad[] = {{"T/m", 1, 0}, {"mT/m", 1e-3, 0}, {"uT/m", 1e-6, 0},
                                  {"G/cm", 1e-2, 0}, {NULL, 0, 0}};
static const unit_def u_slew[] = {{"T/m/s", 1, 0}, {"mT/m/ms", 1, 0},
                                  {"T/m/ms", 1e3, 0}, {"G/cm/ms", 10, 0},
                                  {NULL, 0, 0}};
static const unit_def u_freq[] = {{"Hz", 1, 0}, {"kHz", 1e3, 0}, {"MHz", 1e6, 0},
                                  {NULL, 0, 0}};
static const unit_def u_time[] = {{"s", 1, 0}, {"ms", 1e-3, 0}, {"us", 1e-6, 0},
                                  {NULL, 0, 0}};
static const unit_def u_temp[] = {{"K", 1, 0}, {"C", 1, 273.15}, {"degC", 1, 273.15},
                                  {NULL, 0, 0}};
static const unit_def u_angle[] = {{"deg", KW_PI / 180.0, 0}, {"rad", 1, 0},
                                   {NULL, 0, 0}};
static const unit_def u_ppm[] = {{"ppm", 1e-6, 0}, {NULL, 0, 0}};

static const struct {
    const unit_def *units;
    const char *what, *example;
} kinds[] = {
    [KW_UNIT_NONE] = {NULL, "number", "4"},
    [KW_UNIT_LENGTH] = {u_length, "length", "256mm"},
    [KW_UNIT_FIELD] = {u_field, "magnetic field", "3T"},
    [KW_UNIT_GRADIENT] = {u_grad, "gradient amplitude", "40mT/m"},
    [KW_UNIT_SLEW] = {u_slew, "slew rate", "150T/m/s"},
    [KW_UNIT_FREQUENCY] = {u_freq, "frequency", "32kHz"},
    [KW_UNIT_TIME] = {u_time, "time", "4.6ms"},
    [KW_UNIT_TEMPERATURE] = {u_temp, "temperature", "310K"},
    [KW_UNIT_ANGLE] = {u_angle, "angle", "15deg"},
    [KW_UNIT_PPM] = {u_ppm, "chemical shift", "3.4ppm"},
};

const char *kw_unit_name(kw_unit_kind kind)
{
    switch (kind) {
    case KW_UNIT_NONE: return "";
    case KW_UNIT_LENGTH: return "m";
    case KW_UNIT_FIELD: return "T";
    case KW_UNIT_GRADIENT: return "T/m";
    case KW_UNIT_SLEW: return "T/m/s";
    case KW_UNIT_FREQUENCY: return "Hz";
    case KW_UNIT_TIME: return "s";
    case KW_UNIT_TEMPERATURE: return "K";
    case KW_UNIT_ANGLE: return "rad";
    case KW_UNIT_PPM: return "";
    }
    return "";
}

/* Split "  12.5 mT/m " into the number and the unit text (spaces dropped). */
static kw_status split(const char *s, double *v, char *unit, size_t ulen,
                       char *why, size_t whylen)
{
    if (!s) {
        snprintf(why, whylen, "missing value");
        return KW_EINVAL;
    }
    while (isspace((unsigned char)*s))
        s++;
    if (!*s) {
        snprintf(why, whylen, "empty value");
        return KW_EINVAL;
    }
    /* strtod accepts "nan", "inf" and hex: allow only plain decimals. */
    const char *p = s;
    if (*p == '+' || *p == '-')
        p++;
    if (!isdigit((unsigned char)*p) && !(*p == '.' && isdigit((unsigned char)p[1]))) {
        snprintf(why, whylen, "'%.40s' is not a number", s);
        return KW_EINVAL;
    }
    if (p[0] == '0' && (p[1] == 'x' || p[1] == 'X')) {
        snprintf(why, whylen, "'%.40s' is not a decimal number", s);
        return KW_EINVAL;
    }
    char *end;
    double x = strtod(s, &end);
    if (!isfinite(x)) {
        snprintf(why, whylen, "'%.40s' is not a finite number", s);
        return KW_EINVAL;
    }
    size_t k = 0;
    const char *q = end;
    while (isspace((unsigned char)*q))
        q++;
    for (; *q && !isspace((unsigned char)*q); q++) {
        if (k + 1 >= ulen) {
            snprintf(why, whylen, "unit too long in '%.40s'", s);
            return KW_EINVAL;
        }
        unit[k++] = *q;
    }
    unit[k] = '\0';
    while (isspace((unsigned char)*q))
        q++;
    if (*q) {
        snprintf(why, whylen, "unit '%.30s' is not a single word", end);
        return KW_EINVAL;
    }
    *v = x;
    return KW_OK;
}

kw_status kw_unit_parse(const char *s, kw_unit_kind kind, double *si, char *why,
                        size_t whylen)
{
    char unit[32];
    double v;
    if ((unsigned)kind > KW_UNIT_PPM) {
        snprintf(why, whylen, "unknown unit kind");
        return KW_EINVAL;
    }
    kw_status st = split(s, &v, unit, sizeof unit, why, whylen);
    if (st)
        return st;
    const unit_def *defs = kinds[kind].units;
    if (!unit[0]) {
        if (kind == KW_UNIT_NONE) {
            *si = v;
            return KW_OK;
        }
        if (kind == KW_UNIT_ANGLE) {
            *si = v * KW_PI / 180.0;
            return KW_OK;
        }
        snprintf(why, whylen, "missing unit (expected a %s such as %s)",
                 kinds[kind].what, kinds[kind].example);
        return KW_EINVAL;
    }
    if (defs) {
        for (const unit_def *u = defs; u->name; u++) {
            if (strcmp(u->name, unit) == 0) {
                *si = v * u->scale + u->offset;
                return KW_OK;
            }
        }
    }
    snprintf(why, whylen, "unit '%s' is not a %s (e.g. %s)", unit,
             kinds[kind].what, kinds[kind].example);
    return KW_EINVAL;
}

kw_status kw_unit_parse_bandwidth(const char *s, double *hz, int *per_pixel,
                                  char *why, size_t whylen)
{
    char unit[32];
    double v;
    kw_status st = split(s, &v, unit, sizeof unit, why, whylen);
    if (st)
        return st;
    char *slash = strchr(unit, '/');
    int pp = 0;
    if (slash) {
        if (strcmp(slash, "/pixel") && strcmp(slash, "/px") && strcmp(slash, "/pix")) {
            snprintf(why, whylen,
                     "unit '%s' is not a bandwidth (e.g. 32kHz or 250Hz/pixel)",
                     unit);
            return KW_EINVAL;
        }
        *slash = '\0';
        pp = 1;
    }
    if (!unit[0]) {
        snprintf(why, whylen,
                 "missing unit (expected a bandwidth such as 32kHz or 250Hz/pixel)");
        return KW_EINVAL;
    }
    for (const unit_def *u = u_freq; u->name; u++) {
        if (strcmp(u->name, unit) == 0) {
            *hz = v * u->scale;
            *per_pixel = pp;
            return KW_OK;
        }
    }
    snprintf(why, whylen, "unit '%s%s' is not a bandwidth (e.g. 32kHz or 250Hz/pixel)",
             unit, pp ? "/pixel" : "");
    return KW_EINVAL;
}

int kw_unit_parse_list(const char *s, kw_unit_kind kind, double *si, int max, char *why,
                       size_t whylen)
{
    char buf[256];
    size_t len = strlen(s);
    if (len >= sizeof buf) {
        snprintf(why, whylen, "too long");
        return -1;
    }
    if (len == 0 || s[0] == ',' || s[len - 1] == ',' || strstr(s, ",,")) {
        snprintf(why, whylen, "an empty entry in '%s'", s);
        return -1;
    }
    memcpy(buf, s, len + 1);
    int k = 0;
    char *save = NULL;
    for (char *t = strtok_r(buf, ",", &save); t; t = strtok_r(NULL, ",", &save)) {
        if (k == max) {
            snprintf(why, whylen, "at most %d values", max);
            return -1;
        }
        char *end = NULL;
        double z = strtod(t, &end);
        while (end && (*end == ' ' || *end == '\t'))
            end++;
        if (end != t && z == 0 && *end == '\0') {
            si[k++] = 0; /* a bare zero needs no unit */
            continue;
        }
        if (kw_unit_parse(t, kind, &si[k], why, whylen))
            return -1;
        k++;
    }
    return k;
}
