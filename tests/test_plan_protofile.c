/* test_plan_protofile.c: the `key = value` protocol-file parser. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "protofile.h"

typedef struct seen {
    int n;
    char key[8][64];
    char val[8][128];
    int line[8];
} seen;

static kw_status collect(void *user, const char *key, const char *value, int line)
{
    seen *s = user;
    if (s->n >= 8)
        return kw_set_error(KW_EINVAL, "too many");
    snprintf(s->key[s->n], sizeof s->key[0], "%s", key);
    snprintf(s->val[s->n], sizeof s->val[0], "%s", value);
    s->line[s->n++] = line;
    return KW_OK;
}

static kw_status refuse_b(void *user, const char *key, const char *value, int line)
{
    (void)user, (void)value, (void)line;
    return strcmp(key, "b") == 0 ? kw_set_error(KW_EINVAL, "b: unknown key") : KW_OK;
}

Test(protofile, lines_comments_whitespace)
{
    const char *t = "# header\n\n  fov = 256mm,192mm  # x,y\r\nmatrix=256x192\n\tte =\t5 ms\nlast = 1";
    seen s = {0};
    cr_assert_eq(kw_protofile_parse(t, strlen(t), collect, &s), KW_OK, "%s", kw_last_error());
    cr_assert_eq(s.n, 4);
    cr_expect_str_eq(s.key[0], "fov");
    cr_expect_str_eq(s.val[0], "256mm,192mm");
    cr_expect_eq(s.line[0], 3);
    cr_expect_str_eq(s.key[1], "matrix");
    cr_expect_str_eq(s.val[1], "256x192");
    cr_expect_str_eq(s.val[2], "5 ms");
    cr_expect_str_eq(s.key[3], "last"); /* no final newline */
    cr_expect_eq(s.line[3], 6);
}

Test(protofile, malformed_lines_name_the_line)
{
    struct {
        const char *text, *why;
    } cases[] = {
        {"a = 1\nno equals here\n", "line 2: expected 'key = value'"},
        {" = 3\n", "line 1: empty key"},
        {"fov =   # nothing\n", "line 1: fov: empty value"},
        {"Fov = 3\n", "line 1: key may hold only"},
        {"a b = 3\n", "line 1: key may hold only"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        seen s = {0};
        cr_expect_eq(kw_protofile_parse(cases[i].text, strlen(cases[i].text), collect, &s),
                     KW_EFORMAT, "'%s' accepted", cases[i].text);
        cr_expect(strstr(kw_last_error(), cases[i].why) != NULL, "'%s' -> '%s'", cases[i].text,
                  kw_last_error());
    }
    const char nul[] = "a = 1\nb = 2\0\n";
    seen s = {0};
    cr_expect_eq(kw_protofile_parse(nul, sizeof nul - 1, collect, &s), KW_EFORMAT);
    cr_expect(strstr(kw_last_error(), "line 2: NUL") != NULL, "%s", kw_last_error());
    char *longline = malloc(3000);
    memset(longline, 'x', 3000);
    memcpy(longline, "a = ", 4);
    cr_expect_eq(kw_protofile_parse(longline, 3000, collect, &s), KW_EFORMAT);
    free(longline);
}

Test(protofile, callback_error_gets_the_line)
{
    const char *t = "a = 1\nb = 2\n";
    cr_expect_eq(kw_protofile_parse(t, strlen(t), refuse_b, NULL), KW_EINVAL);
    cr_expect_str_eq(kw_last_error(), "line 2: b: unknown key");
}

Test(protofile, random_bytes_never_crash)
{
    /* a small deterministic fuzz: random bytes from a text-heavy alphabet */
    static const char alpha[] = "abz09-_ =#\n\r\t,.xXmMsT/\0\377";
    unsigned long long x = 88172645463325252ull;
    char buf[512];
    for (int it = 0; it < 3000; it++) {
        size_t n = (size_t)(it % 512);
        for (size_t i = 0; i < n; i++) {
            x ^= x << 13, x ^= x >> 7, x ^= x << 17;
            buf[i] = alpha[x % (sizeof alpha - 1)];
        }
        seen s = {0};
        kw_status st = kw_protofile_parse(buf, n, collect, &s);
        cr_assert(st == KW_OK || st == KW_EFORMAT || st == KW_EINVAL, "status %d", st);
    }
    cr_expect_eq(kw_protofile_parse(NULL, 0, collect, NULL), KW_OK);
}
