/* kw_units.h: physical quantities written with their units ("256mm",
 * "40mT/m"), as on kweave's command line and in protocol files, for any
 * front end. Everything comes back in SI (m, s, T, T/m, T/m/s, Hz, K, rad). A number without a unit is refused for every kind except KW_UNIT_NONE
 * and KW_UNIT_ANGLE (degrees), so `--fov 256` is an error, not 256 m. */
#ifndef KW_UNITS_H
#define KW_UNITS_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum kw_unit_kind {
    KW_UNIT_NONE,        /* a plain number */
    KW_UNIT_LENGTH,      /* m, cm, mm, um */
    KW_UNIT_FIELD,       /* T, mT */
    KW_UNIT_GRADIENT,    /* T/m, mT/m, G/cm */
    KW_UNIT_SLEW,        /* T/m/s, mT/m/ms, T/m/ms */
    KW_UNIT_FREQUENCY,   /* Hz, kHz, MHz */
    KW_UNIT_TIME,        /* s, ms, us */
    KW_UNIT_TEMPERATURE, /* K, C (degrees Celsius) */
    KW_UNIT_ANGLE,       /* deg (default), rad */
    KW_UNIT_PPM          /* ppm -> parts (1e-6) */
} kw_unit_kind;

/*! kw_unit_parse(): parse "256mm", "40 mT/m", "3T", "4.6ms" as `kind`.
 * Returns KW_OK and the SI value, or KW_EINVAL with a reason in `why`
 * (the caller's buffer of `whylen` bytes; kw_last_error() is not touched)
 * (e.g. "missing unit (expected a length such as 256mm)"). Rejects NaN,
 * Inf, trailing garbage and units of another kind. */
KW_API kw_status kw_unit_parse(const char *s, kw_unit_kind kind, double *si,
                        char *why, size_t whylen);

/*! kw_unit_parse_bandwidth(): "32kHz" (across the FOV) or "250Hz/pixel"
 * (also "Hz/px"). *per_pixel tells which form was given. */
KW_API kw_status kw_unit_parse_bandwidth(const char *s, double *hz, int *per_pixel,
                                  char *why, size_t whylen);

/*! kw_unit_parse_list(): one to `max` comma-separated values of `kind`
 * ("256mm,192mm", "20uT/m,0,-5uT/m"; a bare 0 needs no unit). Returns the
 * count, or -1 with a reason in `why` (an empty entry, a trailing comma,
 * too many values, a bad value). */
KW_API int kw_unit_parse_list(const char *s, kw_unit_kind kind, double *si, int max, char *why,
                       size_t whylen);

/*! kw_unit_name(): the SI unit written for `kind` ("m", "T/m/s", ...). */
KW_API const char *kw_unit_name(kw_unit_kind kind);

#ifdef __cplusplus
}
#endif
#endif
