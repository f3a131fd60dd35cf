/* protofile.c: the text of `key = value` protocol files split into keys and
 * values (no I/O: reading the file is the caller's business). */
#include "protofile.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int is_space(char c) { return c == ' ' || c == '\t' || c == '\r'; }

static int is_key_char(char c)
{
    return (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') || c == '-' || c == '_';
}

kw_status kw_protofile_parse(const char *buf, size_t len, kw_protofile_fn fn, void *user)
{
    KW_FAIL_IF(!buf && len, KW_EINVAL, "protocol: no buffer");
    KW_FAIL_IF(!fn, KW_EINVAL, "protocol: no callback");
    char line[KW_PROTOFILE_MAX_LINE + 1];
    size_t i = 0;
    int lineno = 0;
    while (i < len) {
        lineno++;
        size_t n = 0;
        while (i < len && buf[i] != '\n') {
            KW_FAIL_IF(buf[i] == '\0', KW_EFORMAT, "line %d: NUL byte in a text file", lineno);
            KW_FAIL_IF(n >= KW_PROTOFILE_MAX_LINE, KW_EFORMAT, "line %d: longer than %d bytes",
                       lineno, KW_PROTOFILE_MAX_LINE);
            line[n++] = buf[i++];
        }
        if (i < len)
            i++; /* the newline */
        line[n] = '\0';
        char *hash = strchr(line, '#');
        if (hash)
            *hash = '\0';
        char *s = line;
        while (is_space(*s))
            s++;
        char *end = s + strlen(s);
        while (end > s && is_space(end[-1]))
            *--end = '\0';
        if (!*s)
            continue;
        char *eq = strchr(s, '=');
        KW_FAIL_IF(!eq, KW_EFORMAT, "line %d: expected 'key = value', found no '='", lineno);
        char *kend = eq;
        while (kend > s && is_space(kend[-1]))
            kend--;
        KW_FAIL_IF(kend == s, KW_EFORMAT, "line %d: empty key before '='", lineno);
        KW_FAIL_IF((size_t)(kend - s) > KW_PROTOFILE_MAX_KEY, KW_EFORMAT,
                   "line %d: key longer than %d characters", lineno, KW_PROTOFILE_MAX_KEY);
        for (char *c = s; c < kend; c++)
            KW_FAIL_IF(!is_key_char(*c), KW_EFORMAT,
                       "line %d: key may hold only a-z, 0-9, '-' and '_'", lineno);
        *kend = '\0';
        char *val = eq + 1;
        while (is_space(*val))
            val++;
        KW_FAIL_IF(!*val, KW_EFORMAT, "line %d: %s: empty value", lineno, s);
        kw_status st = fn(user, s, val, lineno);
        if (st) {
            char why[512];
            snprintf(why, sizeof why, "%s", kw_last_error());
            return kw_set_error(st, "line %d: %s", lineno, why);
        }
    }
    return KW_OK;
}
