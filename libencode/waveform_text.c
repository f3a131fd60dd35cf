/* waveform_text.c: a waveform's inputs written as text: the ADC windows
 * "START:SAMPLES:DWELL[,...]" with units, and a plain table of samples
 * (kw_waveform.h: kw_waveform_adc_parse(), kw_waveform_table_parse()). */
#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kw_units.h"
#include "kw_waveform.h"

/* One window "START:N:DWELL" (s .. e, not terminated). */
static kw_status one_window(const char *s, size_t len, double raster, kw_waveform_adc *w)
{
    char buf[128], why[160];
    KW_FAIL_PARAM(len >= sizeof buf, KW_EINVAL, "adc", "'%.*s...': too long", 40, s);
    memcpy(buf, s, len);
    buf[len] = '\0';
    char *c1 = strchr(buf, ':'), *c2 = c1 ? strchr(c1 + 1, ':') : NULL;
    KW_FAIL_PARAM(!c1 || !c2 || strchr(c2 + 1, ':'), KW_EINVAL, "adc",
                  "'%s': expected START:SAMPLES:DWELL (e.g. 1.2ms:256:4us)", buf);
    *c1 = *c2 = '\0';
    char *end;
    long long v;
    double idx = strtod(buf, &end);
    if (*buf && !*end) {
        KW_FAIL_PARAM(kw_checked_whole(idx, 0, 1LL << 40, &v), KW_EINVAL, "adc",
                      "'%s': a sample index is a whole number >= 0", buf);
        w->start_s = (double)v * raster;
    } else {
        KW_FAIL_PARAM(kw_unit_parse(buf, KW_UNIT_TIME, &w->start_s, why, sizeof why), KW_EINVAL, "adc",
                      "start '%s': %s", buf, why);
    }
    double n = strtod(c1 + 1, &end);
    KW_FAIL_PARAM(!c1[1] || *end || kw_checked_whole(n, 1, 1LL << 28, &v), KW_EINVAL, "adc",
                  "samples '%s': a whole number from 1", c1 + 1);
    w->samples = (size_t)v;
    KW_FAIL_PARAM(kw_unit_parse(c2 + 1, KW_UNIT_TIME, &w->dwell_s, why, sizeof why), KW_EINVAL, "adc",
                  "dwell '%s': %s", c2 + 1, why);
    return KW_OK;
}

kw_status kw_waveform_adc_parse(const char *text, double raster_s, kw_waveform_adc **adc, size_t *n)
{
    KW_FAIL_PARAM(!text || !adc || !n, KW_EINVAL, "adc", "NULL argument");
    *adc = NULL;
    *n = 0;
    KW_FAIL_PARAM(!*text, KW_EINVAL, "adc", "no window given");
    size_t cap = 1;
    for (const char *p = text; *p; p++)
        cap += *p == ',';
    kw_waveform_adc *w = kw_alloc_n(cap, sizeof *w);
    KW_FAIL_IF(!w, KW_ENOMEM, "adc: out of memory");
    size_t k = 0;
    for (const char *p = text;; k++) {
        const char *e = strchr(p, ',');
        size_t len = e ? (size_t)(e - p) : strlen(p);
        kw_status st = one_window(p, len, raster_s, &w[k]);
        if (st) {
            kw_free(w);
            return st;
        }
        if (!e)
            break;
        p = e + 1;
    }
    *adc = w;
    *n = k + 1;
    return KW_OK;
}

/* the numbers of one line (comma, semicolon, tab or space separated) into
 * v (at most 4); -1 for a malformed number */
static int line_numbers(const char *s, const char *e, double *v)
{
    int k = 0;
    while (s < e) {
        while (s < e && (isspace((unsigned char)*s) || *s == ',' || *s == ';'))
            s++;
        if (s >= e)
            break;
        char *end;
        double x = strtod(s, &end);
        if (end == s || end > e || k >= 4)
            return -1;
        if (end < e && !isspace((unsigned char)*end) && *end != ',' && *end != ';')
            return -1;
        v[k++] = x;
        s = end;
    }
    return k;
}

kw_status kw_waveform_table_parse(const char *text, double **g, size_t *samples, int *axes)
{
    KW_FAIL_PARAM(!text || !g || !samples || !axes, KW_EINVAL, "waveform", "NULL argument");
    *g = NULL;
    *samples = 0;
    *axes = 0;
    size_t lines = 1, n = 0, lineno = 0;
    for (const char *p = text; *p; p++)
        lines += *p == '\n';
    double *out = kw_alloc_n(lines * 3, sizeof *out);
    KW_FAIL_IF(!out, KW_ENOMEM, "waveform: out of memory for %zu lines", lines);
    int na = 0;
    for (const char *p = text; *p;) {
        const char *e = strchr(p, '\n');
        if (!e)
            e = p + strlen(p);
        lineno++;
        const char *hash = memchr(p, '#', (size_t)(e - p));
        double v[4];
        int k = line_numbers(p, hash ? hash : e, v);
        /* a first line of words is a header (x,y,z) */
        int header = k < 0 && n == 0 && na == 0 && isalpha((unsigned char)*p);
        if (!header && k != 0) {
            if (k < 0 || k > 3 || (na && k != na)) {
                kw_free(out);
                return kw_set_error_param(KW_EFORMAT, "waveform", "line %zu: %s", lineno,
                                          k < 0 ? "not a row of numbers" : k > 3 ? "more than 3 axes"
                                                                                 : "a different number of columns");
            }
            na = k;
            for (int a = 0; a < k; a++)
                out[n * 3 + (size_t)a] = v[a];
            n++;
        }
        p = *e ? e + 1 : e;
    }
    if (!n) {
        kw_free(out);
        return kw_set_error_param(KW_EFORMAT, "waveform", "no rows of numbers");
    }
    for (size_t i = 0; i < n; i++) /* pack (n, 3) into (n, na) */
        for (int a = 0; a < na; a++)
            out[i * (size_t)na + (size_t)a] = out[i * 3 + (size_t)a];
    *g = out;
    *samples = n;
    *axes = na;
    return KW_OK;
}
