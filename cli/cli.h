/* cli.h: what every `kweave` verb shares: exit codes, error lines, option
 * tables, progress on stderr, the safety caution. The CLI may print; the
 * libraries never do. */
#ifndef KW_CLI_H
#define KW_CLI_H

#include <stdio.h>

#include "kw_base.h"
#include "kw_units.h"

/* Exit codes (README "Exit codes"). */
enum {
    KW_EXIT_OK = 0,
    KW_EXIT_INTERNAL = 1, /* a failure of kweave itself */
    KW_EXIT_USAGE = 2,    /* bad usage or bad input */
    KW_EXIT_INFEASIBLE = 3 /* `plan`: the protocol breaks a hardware limit */
};

/* KW_SAFETY_CAUTION (kw_base.h) is printed under every report that touches
 * gradient switching, RF or timing. */

/*! kw_cli_fail(): print "kweave: error: <what>: <why>" on one line and
 * return KW_EXIT_USAGE (2). */
int kw_cli_fail(const char *what, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

/*! kw_cli_choice_fail(): an unknown value of an enumerated option: "unknown
 * <noun> '<value>'; did you mean '<near>'? (one of: a, b, c)" (the
 * suggestion only for a near miss by edit distance) under kw_cli_fail(what).
 * `names` ends with NULL. Returns KW_EXIT_USAGE (2). */
int kw_cli_choice_fail(const char *what, const char *noun, const char *value,
                       const char *const *names);

/*! kw_cli_status(): report a failed library/file call: prints
 * "kweave: error: <context>: <kw_last_error()>" and returns the exit code for
 * the status (2 for bad input, 1 for internal failures). */
int kw_cli_status(kw_status st, const char *context);

/* One entry of a verb's table from library parameter names
 * (kw_last_error_param()) to its option names (without "--"); the table ends
 * with {NULL, NULL}. */
typedef struct kw_cli_param {
    const char *param;
    const char *option;
} kw_cli_param;

/*! kw_cli_lib_status(): report a failed library call: when the library names
 * a parameter that `map` knows, prints "kweave: error: --OPTION: <reason>";
 * otherwise as kw_cli_status(). Returns the exit code for the status. */
int kw_cli_lib_status(kw_status st, const char *context, const kw_cli_param *map);

/* ---- option tables -------------------------------------------------------- */

typedef enum kw_opt_type {
    KW_OPT_FLAG,   /* no argument: *(int *)dest = 1 */
    KW_OPT_STRING, /* *(const char **)dest = argument */
    KW_OPT_INT,    /* *(long *)dest; integer */
    KW_OPT_DOUBLE, /* *(double *)dest; plain number */
    KW_OPT_UNIT    /* *(double *)dest; physical quantity of `unit` kind, SI */
} kw_opt_type;

typedef struct kw_opt {
    const char *name; /* without the leading "--" */
    kw_opt_type type;
    void *dest;
    kw_unit_kind unit; /* for KW_OPT_UNIT */
    int *seen;         /* optional: set to 1 when given */
    const char *help;  /* one line; NULL hides the option from --help */
} kw_opt;

/*! kw_opts_set_args(): placeholders for the help of the next kw_opts_parse
 * where the type does not tell ({name, "N"}, ..., {NULL, NULL}; text
 * options whose text is a number). By default: a unit kind's word
 * (LENGTH, TIME, ...; also for a string option whose `unit` names its
 * quantity), N for integers, X for numbers, FILE or DIR for a string whose
 * help names a file or a folder, else the option's name in capitals. */
typedef struct kw_opt_arg {
    const char *name, *arg;
} kw_opt_arg;
void kw_opts_set_args(const kw_opt_arg *list);

/*! kw_opts_set_args_from_keys(): the same from a library input's keys (their
 * types and units: N, X, LENGTH, ..., FILE for arrays), then `extra`
 * (may be NULL) for the verb's own options. */
struct kw_param_key;
void kw_opts_set_args_from_keys(const struct kw_param_key *keys, const kw_opt_arg *extra);

/*! KW_OPT_KEY_HELP: as an option's help, the help of the library key of the
 * same name among the keys given to kw_opts_set_args_from_keys() for the
 * parse (kw_param_key.help), so that the command and the library say it
 * once. */
extern const char KW_OPT_KEY_HELP[];

/*! kw_opts_parse(): parse argv[1..] ("--name value" or "--name=value").
 * Returns -1 when all went well, otherwise the exit code to return (0 after
 * --help printed `usage` and the table, 2 after an error line). Positional
 * arguments are refused unless `positional` is non-NULL, then they are
 * stored there (at most `maxpos`) and counted in *npos. */
int kw_opts_parse(int argc, char **argv, const kw_opt *table, const char *usage,
                  const char **positional, int maxpos, int *npos);

/* ---- shared state and progress ---------------------------------------------- */

extern int kw_cli_quiet; /* --quiet given: no progress output */

/*! kw_cli_memory_limit(): the most bytes the run may hold: --max-memory
 * (every verb, e.g. 2GiB, 512MiB), by default half the physical memory.
 * kw_opts_parse() hands it to the library's budget (kw_memory_set_limit:
 * every kw_alloc of the library and the CLI counts) and to
 * kw_npy_set_limit(); kw_cli_status() / kw_cli_lib_status() turn a KW_ENOMEM
 * after a refusal of the budget into "max-memory: the run needs more than
 * ...". */
size_t kw_cli_memory_limit(void);

/*! kw_cli_parse_bytes(): "2GiB", "512MiB", "1.5GB", "4096" (bytes) -> bytes;
 * -1 with a reason in `why` when it is not a size. */
int kw_cli_parse_bytes(const char *s, size_t *bytes, char *why, size_t whylen);

/*! kw_cli_progress(): a kw_progress_fn that draws one updating line on stderr
 * (stage, iteration, residual, ETA) when stderr is a terminal and not quiet.
 * `user` may be NULL. */
int kw_cli_progress(void *user, const kw_progress *p);

/*! kw_cli_progress_done(): end the progress line (newline) if one was drawn. */
void kw_cli_progress_done(void);

/* ---- verbs ----------------------------------------------------------------- */

int kw_cmd_plan(int argc, char **argv);
int kw_cmd_pattern(int argc, char **argv);
int kw_cmd_encode(int argc, char **argv);
int kw_cmd_recon(int argc, char **argv);
int kw_cmd_score(int argc, char **argv);
int kw_cmd_render(int argc, char **argv);
int kw_cmd_demo(int argc, char **argv);
int kw_cmd_sweep(int argc, char **argv);
int kw_cmd_preview(int argc, char **argv);
int kw_cmd_waveform(int argc, char **argv);

#endif
