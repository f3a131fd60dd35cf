/* kw_params.h: what the named-parameter inputs share (kw_pattern_input in
 * kw_pattern.h, kw_acquisition_input in kw_acquire.h; the planner's is
 * kw_protocol_input in kw_plan_input.h): the description of a key, and how
 * their messages write the names of other keys.
 *
 * A named-parameter input takes each option as `key` and text, exactly as
 * the command line carries it ("256x192", "10ms", "250Hz/pixel"; units
 * through kw_units.h), checks it, and at finish applies the rules between
 * options and fills the object's options struct. Its keys are the option
 * names of the command without the dashes; errors name the key at fault in
 * kw_last_error_param(). A front end maps a key to its own spelling (the
 * command adds "--", the Python package writes '_' for '-').
 *
 * Threads: the tables are static and read-only. */
#ifndef KW_PARAMS_H
#define KW_PARAMS_H

#include "kw_base.h"
#include "kw_units.h"

#ifdef __cplusplus
extern "C" {
#endif

/* The form of a key's text. */
typedef enum kw_param_type {
    KW_PARAM_NAME = 0,    /* a word of a fixed list ("radial", "gre") */
    KW_PARAM_WHOLE,       /* a whole number ("8", "-1") */
    KW_PARAM_NUMBER,      /* a plain number ("0.75") */
    KW_PARAM_QUANTITY,    /* a number with its unit ("10ms"); an angle without
                           * a unit is in degrees */
    KW_PARAM_FLAG,        /* "1" or "0" ("true" / "false" too) */
    KW_PARAM_SIZES,       /* whole numbers joined by 'x' ("256x192") */
    KW_PARAM_NUMBERS,     /* numbers joined by 'x' ("2x2", "4.5") */
    KW_PARAM_QUANTITIES,  /* quantities joined by ',' ("256mm,192mm") */
    KW_PARAM_BANDWIDTH,   /* "32kHz" across the FOV or "250Hz/pixel" */
    KW_PARAM_ARRAY        /* an array the caller points the options to; setting
                           * the key only declares it given (text not read) */
} kw_param_type;

/* One key of an input. */
typedef struct kw_param_key {
    const char *name;     /* "coil-radius" */
    kw_param_type type;
    kw_unit_kind unit;    /* QUANTITY, QUANTITIES: the kind of quantity */
    const char *help;     /* what it is and its default, one line */
} kw_param_key;

/* How the messages of a finish write another key's name and an example of
 * its value ("not used by <kind radial>", "needs <snr>"): `prefix` before
 * the key (NULL: none), each '-' of the key written as `dash` (0: '-'),
 * `assign` between the key and a value (NULL: "="), and `rename` pairs
 * {key, name, key, name, ..., NULL} for keys a front end calls otherwise
 * (NULL: none). NULL for the whole: the keys as they are, "key=value". */
typedef struct kw_param_spelling {
    const char *prefix;
    char dash;
    const char *assign;
    const char *const *rename;
} kw_param_spelling;

#ifdef __cplusplus
}
#endif

#endif
