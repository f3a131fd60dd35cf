/* params_int.h: the hidden helpers of the named-parameter inputs
 * (pattern_params.c, acquire_params.c; kw_params.h): key lookup, the
 * spelling of other keys in messages, and the readers of the texts with the
 * command line's messages (not a public header). */
#ifndef KW_PARAMS_INT_H
#define KW_PARAMS_INT_H

#include <stddef.h>

#include "kw_params.h"

/* Edit distance of two short keys (Levenshtein; 99 over 32 characters),
 * for a suggestion of a near miss. */
int kw_param_distance(const char *a, const char *b);

/* The index of `key` in `keys` (terminated by a NULL name), or -1 with
 * KW_EINVAL "<key>: unknown key" (" (did you mean '<known>'?)" for a near
 * miss) set. */
int kw_param_find(const kw_param_key *keys, const char *key);

/* KW_EINVAL naming `param`: "unknown <what> '<value>'; did you mean
 * '<near>'? (one of: a, b, c)" (the suggestion only for a near miss by edit
 * distance). `names` is terminated by NULL. Returns KW_EINVAL. */
kw_status kw_param_choice_error(const char *param, const char *what, const char *value,
                                const char *const *names);

/* The closest of `names` (NULL-terminated) to `value` when it is a near
 * miss (edit distance under 3 and under its length), else NULL. */
const char *kw_param_near(const char *value, const char *const *names);

/* A key as `sp` spells it, with " value" / "=value" when value is not
 * NULL, into one of the rotating buffers of `sb` (valid until reused). */
typedef struct kw_param_names {
    char buf[6][64];
    int next;
} kw_param_names;
const char *kw_param_spell(kw_param_names *sb, const kw_param_spelling *sp, const char *key,
                           const char *value);

/* The texts, with the messages the command line gives ("'%s' is not a
 * whole number", kw_unit_parse's reason, "empty value"); errors name key. */
kw_status kw_param_whole(const char *key, const char *text, long *v);
kw_status kw_param_number(const char *key, const char *text, double *v);
kw_status kw_param_quantity(const char *key, const char *text, kw_unit_kind unit, double *v);
kw_status kw_param_flag(const char *key, const char *text, int *v);
kw_status kw_param_text(const char *key, const char *text);

#endif
