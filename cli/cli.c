/* cli.c: error lines, option tables and progress for the `kweave` verbs. */
#include "cli.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "npy.h"
#include "kw_params.h"

int kw_cli_quiet;

/* ---- memory limit -------------------------------------------------------------- */

static size_t max_memory; /* 0 until set or first asked for */

/* Half the physical memory (common practice, no source: leaves room for the
 * system and for a second copy of the data), at least 64 MiB; 16 GiB when
 * the system does not say. */
static size_t default_memory_limit(void)
{
    long pages = sysconf(_SC_PHYS_PAGES), psize = sysconf(_SC_PAGE_SIZE);
    if (pages <= 0 || psize <= 0)
        return (size_t)16 << 30;
    double half = 0.5 * (double)pages * (double)psize;
    if (half > (double)(SIZE_MAX / 2))
        return SIZE_MAX / 2;
    size_t v = (size_t)half;
    return v < ((size_t)64 << 20) ? ((size_t)64 << 20) : v;
}

size_t kw_cli_memory_limit(void)
{
    if (!max_memory)
        max_memory = default_memory_limit();
    return max_memory;
}

int kw_cli_parse_bytes(const char *s, size_t *bytes, char *why, size_t whylen)
{
    static const struct {
        const char *name;
        double mult;
    } units[] = {{"", 1},         {"B", 1},           {"KiB", 1024.0},
                 {"MiB", 1048576.0}, {"GiB", 1073741824.0}, {"TiB", 1099511627776.0},
                 {"kB", 1e3},      {"KB", 1e3},        {"MB", 1e6},
                 {"GB", 1e9},      {"TB", 1e12},       {"K", 1024.0},
                 {"M", 1048576.0}, {"G", 1073741824.0}, {"T", 1099511627776.0}};
    const char *p = s;
    while (isspace((unsigned char)*p))
        p++;
    if (!isdigit((unsigned char)*p) && *p != '.') {
        snprintf(why, whylen, "'%s' is not a size (e.g. 2GiB, 512MiB)", s);
        return -1;
    }
    char *end;
    errno = 0;
    double v = strtod(p, &end);
    if (errno || end == p || !isfinite(v)) {
        snprintf(why, whylen, "'%s' is not a size (e.g. 2GiB, 512MiB)", s);
        return -1;
    }
    while (isspace((unsigned char)*end))
        end++;
    char unit[8];
    size_t k = 0;
    while (*end && !isspace((unsigned char)*end) && k + 1 < sizeof unit)
        unit[k++] = *end++;
    unit[k] = '\0';
    while (isspace((unsigned char)*end))
        end++;
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++) {
        if (*end == '\0' && strcmp(unit, units[i].name) == 0) {
            double b = v * units[i].mult;
            if (!(b >= 1.0) || b >= 9.2e18 || b > (double)SIZE_MAX) {
                snprintf(why, whylen, "'%s' is not a usable size (1 byte .. 8 EiB)", s);
                return -1;
            }
            *bytes = (size_t)b;
            return 0;
        }
    }
    snprintf(why, whylen, "'%s': unknown unit (use B, KiB, MiB, GiB, TiB, kB, MB, GB, TB)", s);
    return -1;
}

int kw_cli_fail(const char *what, const char *fmt, ...)
{
    char why[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(why, sizeof why, fmt, ap);
    va_end(ap);
    kw_cli_progress_done();
    fprintf(stderr, "kweave: error: %s: %s\n", what, why);
    return KW_EXIT_USAGE;
}

static int exit_code(kw_status st)
{
    switch (st) {
    case KW_EINVAL:
    case KW_EFORMAT:
    case KW_ERANGE:
    case KW_ENUMERIC:
    case KW_EINFEASIBLE:
    case KW_ENOTSUP:
    case KW_EIO:
    case KW_ENOMEM: /* sizes are checked before allocation: too big is bad input */
        return KW_EXIT_USAGE;
    default:
        return KW_EXIT_INTERNAL;
    }
}

/* A size for the max-memory line: "50 MiB", "1.5 GiB", "12.0 MiB". */
static const char *fmt_size(size_t b, int whole, char *buf, size_t n)
{
    static const char *unit[] = {"bytes", "KiB", "MiB", "GiB", "TiB"};
    double v = (double)b;
    int u = 0;
    while (v >= 1024.0 && u < 4) {
        v /= 1024.0;
        u++;
    }
    if (u == 0)
        snprintf(buf, n, "%zu bytes", b);
    else
        snprintf(buf, n, whole ? "%.3g %s" : "%.1f %s", v, unit[u]);
    return buf;
}

/* A KW_ENOMEM after the budget refused an allocation (kw_memory_refusals)
 * becomes one line naming max-memory and what was asked; a failure whose
 * reason already names the limit (the .npy size check) keeps its words.
 * -1 when the failure is something else. */
static int budget_status(kw_status st)
{
    size_t asked, held;
    if (st != KW_ENOMEM || !kw_memory_refusals(&asked, &held) ||
        strstr(kw_last_error(), "max-memory"))
        return -1;
    char a[32], h[32], l[32];
    return kw_cli_fail("max-memory", "the run needs more than %s (asked for %s more with %s "
                       "held); raise --max-memory", fmt_size(kw_memory_limit(), 1, l, sizeof l),
                       fmt_size(asked, 0, a, sizeof a), fmt_size(held, 0, h, sizeof h));
}

int kw_cli_status(kw_status st, const char *context)
{
    int rc = budget_status(st);
    if (rc >= 0)
        return rc;
    const char *why = kw_last_error();
    if (!why || !*why)
        why = kw_strerror(st);
    kw_cli_progress_done();
    if (context && *context)
        fprintf(stderr, "kweave: error: %s: %s\n", context, why);
    else
        fprintf(stderr, "kweave: error: %s\n", why);
    return exit_code(st);
}

int kw_cli_lib_status(kw_status st, const char *context, const kw_cli_param *map)
{
    int rc = budget_status(st);
    if (rc >= 0)
        return rc;
    const char *param = kw_last_error_param();
    for (const kw_cli_param *m = map; m && param[0] && m->param; m++) {
        if (strcmp(m->param, param) == 0) {
            const char *why = kw_last_error_reason();
            kw_cli_progress_done();
            fprintf(stderr, "kweave: error: --%s: %s\n", m->option, why[0] ? why : kw_strerror(st));
            return exit_code(st);
        }
    }
    return kw_cli_status(st, context);
}

/* The argument's placeholder, by type: a physical quantity by its kind
 * ("--fov LENGTH", "--slew SLEW"), an integer N, a plain number X, a file
 * FILE or a folder DIR (a string option whose help names one), any other
 * text by the option's name in capitals ("--method METHOD"). */
static const char *unit_word(kw_unit_kind u)
{
    switch (u) {
    case KW_UNIT_LENGTH: return "LENGTH";
    case KW_UNIT_FIELD: return "FIELD";
    case KW_UNIT_GRADIENT: return "GRADIENT";
    case KW_UNIT_SLEW: return "SLEW";
    case KW_UNIT_FREQUENCY: return "FREQ";
    case KW_UNIT_TIME: return "TIME";
    case KW_UNIT_TEMPERATURE: return "TEMP";
    case KW_UNIT_ANGLE: return "ANGLE";
    case KW_UNIT_PPM: return "PPM";
    default: return "X";
    }
}

static const kw_opt_arg *next_args, *help_args; /* set for, used by one parse */
static const kw_param_key *next_keys, *help_keys;

const char KW_OPT_KEY_HELP[] = "(the library key's help)";

/* An option's help: its own, or its library key's (KW_OPT_KEY_HELP). */
static const char *opt_help(const kw_opt *o)
{
    if (o->help != KW_OPT_KEY_HELP)
        return o->help;
    for (const kw_param_key *k = help_keys; k && k->name; k++)
        if (strcmp(k->name, o->name) == 0)
            return k->help;
    return o->help;
}

void kw_opts_set_args(const kw_opt_arg *list) { next_args = list; }

static const char *unit_word(kw_unit_kind u);

void kw_opts_set_args_from_keys(const kw_param_key *keys, const kw_opt_arg *extra)
{
    static kw_opt_arg buf[128];
    size_t n = 0;
    next_keys = keys;
    for (; extra && extra->name && n + 1 < sizeof buf / sizeof buf[0]; extra++)
        buf[n++] = *extra;
    for (; keys && keys->name && n + 1 < sizeof buf / sizeof buf[0]; keys++) {
        const char *w = NULL;
        switch (keys->type) {
        case KW_PARAM_WHOLE: w = "N"; break;
        case KW_PARAM_NUMBER: w = "X"; break;
        case KW_PARAM_QUANTITY:
        case KW_PARAM_QUANTITIES: w = unit_word(keys->unit); break;
        case KW_PARAM_BANDWIDTH: w = "BANDWIDTH"; break;
        case KW_PARAM_ARRAY: w = "FILE"; break;
        default: break; /* names, sizes, number lists: the option's name */
        }
        if (w)
            buf[n++] = (kw_opt_arg){keys->name, w};
    }
    buf[n] = (kw_opt_arg){NULL, NULL};
    next_args = buf;
}

static int help_names(const char *help, const char *const *words)
{
    for (; help && *words; words++)
        if (strstr(help, *words))
            return 1;
    return 0;
}

static void placeholder(const kw_opt *o, char *buf, size_t n)
{
    static const char *const files[] = {".npy", ".json", ".png", ".nii", ".h5", ".protocol",
                                        ".csv", "FILE", "protocol file", "PNG", "JSON",
                                        "picture", NULL};
    static const char *const dirs[] = {"folder", NULL};
    if (o->type == KW_OPT_FLAG || n < 2) {
        if (n)
            buf[0] = '\0';
        return;
    }
    const char *word = NULL;
    for (const kw_opt_arg *g = help_args; g && g->name && !word; g++)
        if (strcmp(g->name, o->name) == 0)
            word = g->arg;
    if (word)
        ;
    else if (o->type == KW_OPT_INT)
        word = "N";
    else if (o->type == KW_OPT_DOUBLE)
        word = "X";
    else if (o->type == KW_OPT_UNIT || (o->type == KW_OPT_STRING && o->unit != KW_UNIT_NONE))
        word = unit_word(o->unit); /* a string option may name its quantity for the help */
    else if (help_names(opt_help(o), dirs))
        word = "DIR";
    else if (help_names(opt_help(o), files))
        word = "FILE";
    if (word) {
        snprintf(buf, n, " %s", word);
        return;
    }
    size_t i = 0;
    buf[i++] = ' ';
    for (const char *c = o->name; *c && i + 1 < n; c++)
        buf[i++] = *c == '-' ? '_' : (char)toupper((unsigned char)*c);
    buf[i] = '\0';
}

/* One option line: the help text in a column; a left part too wide for the
 * column gets a line of its own with the help below it. */
static void help_line(const char *left, const char *help)
{
    enum { COL = 26 };
    if (strlen(left) <= COL - 4) /* at least two spaces before the help */
        printf("  %-*s%s\n", COL - 2 + 1, left, help);
    else
        printf("  %s\n  %-*s%s\n", left, COL - 2 + 1, "", help);
}

static void print_help(const kw_opt *table, const char *usage)
{
    printf("%s\n\nOptions:\n", usage);
    for (const kw_opt *o = table; o->name; o++) {
        if (!o->help)
            continue;
        char left[96], arg[64];
        placeholder(o, arg, sizeof arg);
        snprintf(left, sizeof left, "--%s%s", o->name, arg);
        help_line(left, opt_help(o));
    }
    help_line("--quiet", "no progress on stderr");
    help_line("--max-memory SIZE", "the most memory the run may hold (e.g. 2GiB; default: half the RAM)");
    help_line("--help", "this text");
}

/* Edit distance of a[0..na) and b (at most 31 characters each) counting
 * insertions, deletions, substitutions and swaps of neighbours ("kidn" is
 * one from "kind"): the optimal string alignment distance. */
static size_t edit_distance(const char *a, size_t na, const char *b)
{
    size_t nb = strlen(b);
    if (na > 31 || nb > 31)
        return 99;
    size_t d[32][32];
    for (size_t i = 0; i <= na; i++)
        d[i][0] = i;
    for (size_t j = 0; j <= nb; j++)
        d[0][j] = j;
    for (size_t i = 1; i <= na; i++)
        for (size_t j = 1; j <= nb; j++) {
            size_t best = d[i - 1][j - 1] + (a[i - 1] != b[j - 1]);
            if (d[i - 1][j] + 1 < best)
                best = d[i - 1][j] + 1;
            if (d[i][j - 1] + 1 < best)
                best = d[i][j - 1] + 1;
            if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] &&
                d[i - 2][j - 2] + 1 < best)
                best = d[i - 2][j - 2] + 1;
            d[i][j] = best;
        }
    return d[na][nb];
}

int kw_cli_choice_fail(const char *what, const char *noun, const char *value,
                       const char *const *names)
{
    char list[384];
    size_t used = 0;
    const char *best = NULL;
    size_t bd = 3, nv = value ? strlen(value) : 0;
    list[0] = '\0';
    for (size_t k = 0; names[k]; k++) {
        if (used < sizeof list)
            used += (size_t)snprintf(list + used, sizeof list - used, "%s%s", k ? ", " : "", names[k]);
        size_t d = value ? edit_distance(value, nv, names[k]) : 99;
        if (d < bd && d < nv) {
            bd = d;
            best = names[k];
        }
    }
    if (best)
        return kw_cli_fail(what, "unknown %s '%s'; did you mean '%s'? (one of: %s)", noun,
                           value ? value : "", best, list);
    return kw_cli_fail(what, "unknown %s '%s' (one of: %s)", noun, value ? value : "", list);
}

/* The option `name` (nlen characters) stands for: exactly, or in the other
 * spelling of -ise/-ize ("--analyze" for "--analyse"). */
static const kw_opt *find_option(const kw_opt *table, const char *name, size_t nlen)
{
    for (const kw_opt *t = table; t->name; t++)
        if (strlen(t->name) == nlen && strncmp(t->name, name, nlen) == 0)
            return t;
    for (const kw_opt *t = table; t->name; t++) {
        if (strlen(t->name) != nlen)
            continue;
        size_t i = 0;
        while (i < nlen && (name[i] == t->name[i] || (name[i] == 'z' && t->name[i] == 's')))
            i++;
        if (i == nlen)
            return t;
    }
    return NULL;
}

/* "unknown option" with the closest known option, when one is close. */
static int unknown_option(const char *arg, const kw_opt *table, const char *name, size_t nlen)
{
    const char *best = NULL;
    size_t bd = nlen < 5 ? 2 : 3;
    for (const kw_opt *t = table; t->name; t++) {
        if (!t->help)
            continue;
        size_t d = edit_distance(name, nlen, t->name);
        if (d < bd) {
            bd = d;
            best = t->name;
        }
    }
    if (best)
        return kw_cli_fail(arg, "unknown option; did you mean --%s? (see --help)", best);
    return kw_cli_fail(arg, "unknown option (see --help)");
}

static int set_value(const kw_opt *o, const char *val)
{
    char why[160];
    switch (o->type) {
    case KW_OPT_FLAG:
        *(int *)o->dest = 1;
        return -1;
    case KW_OPT_STRING:
        if (!*val)
            return kw_cli_fail(o->name, "empty value");
        *(const char **)o->dest = val;
        return -1;
    case KW_OPT_INT: {
        char *end;
        errno = 0;
        long v = strtol(val, &end, 10);
        if (end == val || *end || errno)
            return kw_cli_fail(o->name, "'%s' is not a whole number", val);
        *(long *)o->dest = v;
        return -1;
    }
    case KW_OPT_DOUBLE: {
        double v;
        if (kw_unit_parse(val, KW_UNIT_NONE, &v, why, sizeof why))
            return kw_cli_fail(o->name, "%s", why);
        *(double *)o->dest = v;
        return -1;
    }
    case KW_OPT_UNIT: {
        double v;
        if (kw_unit_parse(val, o->unit, &v, why, sizeof why))
            return kw_cli_fail(o->name, "%s", why);
        *(double *)o->dest = v;
        return -1;
    }
    }
    return kw_cli_fail(o->name, "internal: unknown option type");
}

int kw_opts_parse(int argc, char **argv, const kw_opt *table, const char *usage,
                  const char **positional, int maxpos, int *npos)
{
    help_args = next_args;
    next_args = NULL;
    help_keys = next_keys;
    next_keys = NULL;
    if (npos)
        *npos = 0;
    kw_npy_set_limit(kw_cli_memory_limit());
    kw_memory_set_limit(kw_cli_memory_limit());
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
            print_help(table, usage);
            return KW_EXIT_OK;
        }
        if (strcmp(a, "--quiet") == 0 || strcmp(a, "-q") == 0) {
            kw_cli_quiet = 1;
            continue;
        }
        if (strncmp(a, "--max-memory", 12) == 0 && (a[12] == '\0' || a[12] == '=')) {
            const char *val = a[12] == '=' ? a + 13 : (i + 1 < argc ? argv[++i] : NULL);
            char why[160];
            size_t b;
            if (!val)
                return kw_cli_fail("max-memory", "missing value (e.g. 2GiB)");
            if (kw_cli_parse_bytes(val, &b, why, sizeof why))
                return kw_cli_fail("max-memory", "%s", why);
            if (b < ((size_t)1 << 20))
                return kw_cli_fail("max-memory", "'%s' is too small to work in "
                                   "(at least 1MiB)", val);
            max_memory = b;
            kw_npy_set_limit(b);
            kw_memory_set_limit(b);
            continue;
        }
        if (strncmp(a, "--", 2) != 0 || a[2] == '\0') {
            if (positional && npos && *npos < maxpos) {
                positional[(*npos)++] = a;
                continue;
            }
            if (positional && npos && maxpos > 0)
                return kw_cli_fail(a, "one file too many (at most %d may follow; see --help)", maxpos);
            return kw_cli_fail(a, "unexpected argument (options start with --; see --help)");
        }
        const char *name = a + 2;
        const char *eq = strchr(name, '=');
        size_t nlen = eq ? (size_t)(eq - name) : strlen(name);
        const kw_opt *o = find_option(table, name, nlen);
        if (!o)
            return unknown_option(a, table, name, nlen);
        const char *val = NULL;
        if (o->type == KW_OPT_FLAG) {
            if (eq)
                return kw_cli_fail(o->name, "takes no value");
        } else if (eq) {
            val = eq + 1;
        } else {
            if (i + 1 >= argc)
                return kw_cli_fail(o->name, "missing value");
            val = argv[++i];
        }
        if (o->seen && *o->seen && o->type != KW_OPT_FLAG)
            return kw_cli_fail(o->name, "given more than once");
        int rc = set_value(o, val);
        if (rc >= 0)
            return rc;
        if (o->seen)
            *o->seen = 1;
    }
    return -1;
}

/* ---- progress ---------------------------------------------------------------- */

static int progress_drawn;
static struct timespec progress_t0;
static const char *progress_stage;

int kw_cli_progress(void *user, const kw_progress *p)
{
    (void)user;
    if (kw_cli_quiet || !isatty(STDERR_FILENO))
        return 0;
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    if (!progress_stage || !p->stage || strcmp(progress_stage, p->stage) != 0 ||
        p->iter <= 1) {
        progress_t0 = now;
        progress_stage = p->stage;
    }
    double el = (double)(now.tv_sec - progress_t0.tv_sec) +
                1e-9 * (double)(now.tv_nsec - progress_t0.tv_nsec);
    char eta[32] = "";
    if (p->niter > 0 && p->iter > 0 && p->iter < p->niter)
        snprintf(eta, sizeof eta, "  ETA %.1fs", el / p->iter * (p->niter - p->iter));
    char res[40] = "";
    if (!isnan(p->residual))
        snprintf(res, sizeof res, "  %s %.3e", p->residual_name ? p->residual_name : "residual",
                 p->residual);
    if (p->niter > 0)
        fprintf(stderr, "\r%s: %d/%d%s%s   ", p->stage ? p->stage : "", p->iter,
                p->niter, res, eta);
    else
        fprintf(stderr, "\r%s: %d%s   ", p->stage ? p->stage : "", p->iter, res);
    fflush(stderr);
    progress_drawn = 1;
    return 0;
}

void kw_cli_progress_done(void)
{
    if (progress_drawn) {
        fputc('\n', stderr);
        progress_drawn = 0;
    }
}
