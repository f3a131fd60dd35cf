/* params.c: what the named-parameter inputs share (params_int.h). */
#include "params_int.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int kw_param_distance(const char *a, const char *b)
{
    size_t na = strlen(a), nb = strlen(b);
    if (na > 32 || nb > 32)
        return 99;
    int row[33];
    for (size_t j = 0; j <= nb; j++)
        row[j] = (int)j;
    for (size_t i = 1; i <= na; i++) {
        int diag = row[0];
        row[0] = (int)i;
        for (size_t j = 1; j <= nb; j++) {
            int up = row[j], best = diag + (a[i - 1] != b[j - 1]);
            if (up + 1 < best)
                best = up + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            row[j] = best;
            diag = up;
        }
    }
    return row[nb];
}

const char *kw_param_near(const char *value, const char *const *names)
{
    const char *best = NULL;
    int bd = 3;
    for (size_t k = 0; value && names[k]; k++) {
        int d = kw_param_distance(value, names[k]);
        if (d < bd && d < (int)strlen(value)) {
            bd = d;
            best = names[k];
        }
    }
    return best;
}

kw_status kw_param_choice_error(const char *param, const char *what, const char *value,
                                const char *const *names)
{
    char list[384];
    size_t used = 0;
    list[0] = '\0';
    for (size_t k = 0; names[k] && used < sizeof list; k++)
        used += (size_t)snprintf(list + used, sizeof list - used, "%s%s", k ? ", " : "", names[k]);
    const char *near = kw_param_near(value, names);
    if (near)
        return kw_set_error_param(KW_EINVAL, param, "unknown %s '%s'; did you mean '%s'? (one of: %s)",
                                  what, value ? value : "", near, list);
    return kw_set_error_param(KW_EINVAL, param, "unknown %s '%s' (one of: %s)", what,
                              value ? value : "", list);
}

int kw_param_find(const kw_param_key *keys, const char *key)
{
    if (!key) {
        kw_set_error_param(KW_EINVAL, "key", "NULL key");
        return -1;
    }
    int best = -1, bd = 3;
    for (int k = 0; keys[k].name; k++) {
        if (strcmp(keys[k].name, key) == 0)
            return k;
        int d = kw_param_distance(key, keys[k].name);
        if (d < bd && d < (int)strlen(key)) {
            bd = d;
            best = k;
        }
    }
    if (best >= 0)
        kw_set_error_param(KW_EINVAL, key, "unknown key (did you mean '%s'?)", keys[best].name);
    else
        kw_set_error_param(KW_EINVAL, key, "unknown key");
    return -1;
}

const char *kw_param_spell(kw_param_names *sb, const kw_param_spelling *sp, const char *key,
                           const char *value)
{
    char *out = sb->buf[sb->next++ % 6];
    const char *name = key;
    for (const char *const *r = sp ? sp->rename : NULL; r && r[0] && r[1]; r += 2)
        if (strcmp(r[0], key) == 0)
            name = r[1];
    const char *prefix = sp && sp->prefix ? sp->prefix : "";
    const char *assign = sp && sp->assign ? sp->assign : "=";
    char dash = sp && sp->dash ? sp->dash : '-';
    size_t n = (size_t)snprintf(out, 64, "%s", prefix);
    for (const char *c = name; *c && n + 1 < 64; c++)
        out[n++] = *c == '-' ? dash : *c;
    out[n] = '\0';
    if (value)
        snprintf(out + n, 64 - n, "%s%s", assign, value);
    return out;
}

kw_status kw_param_whole(const char *key, const char *text, long *v)
{
    char *end;
    errno = 0;
    long x = strtol(text, &end, 10);
    KW_FAIL_PARAM(end == text || *end || errno, KW_EINVAL, key, "'%s' is not a whole number",
                  text);
    *v = x;
    return KW_OK;
}

kw_status kw_param_quantity(const char *key, const char *text, kw_unit_kind unit, double *v)
{
    char why[160];
    if (kw_unit_parse(text, unit, v, why, sizeof why))
        return kw_set_error_param(KW_EINVAL, key, "%s", why);
    return KW_OK;
}

kw_status kw_param_number(const char *key, const char *text, double *v)
{
    return kw_param_quantity(key, text, KW_UNIT_NONE, v);
}

kw_status kw_param_flag(const char *key, const char *text, int *v)
{
    if (strcmp(text, "1") == 0 || strcmp(text, "true") == 0)
        *v = 1;
    else if (strcmp(text, "0") == 0 || strcmp(text, "false") == 0)
        *v = 0;
    else
        return kw_set_error_param(KW_EINVAL, key, "'%s' is not 1 or 0", text);
    return KW_OK;
}

kw_status kw_param_text(const char *key, const char *text)
{
    KW_FAIL_PARAM(!text, KW_EINVAL, key, "no value");
    KW_FAIL_PARAM(!*text, KW_EINVAL, key, "empty value");
    return KW_OK;
}
