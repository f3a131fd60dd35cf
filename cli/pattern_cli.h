/* pattern_cli.h: the parts of `kweave pattern` shared by cli/cmd_pattern.c
 * (options, generation, files), cli/pattern_read.c (reading a pattern file
 * for --analyse / --compare) and cli/pattern_report.c (text, JSON, PNG).
 * The methods are in libencode/kw_pattern.h and recon/kw_pattern_analysis.h. */
#ifndef KW_PATTERN_CLI_H
#define KW_PATTERN_CLI_H

#include <stdio.h>

#include "jsonio.h"

#include "kw_pattern_analysis.h"

/* one analysed pattern with the labels the reports show */
typedef struct kw_pattern_report {
    kw_pattern_analysis r;
    char name[256]; /* file or kind */
    char kind[32];  /* pattern kind if known, else "" */
} kw_pattern_report;

/* pattern_read.c: analyse the file `path` (npy + sidecar JSON); -1 on
 * success or the exit code (the error printed). psf_size 0: default. */
int kw_pattern_cli_analyse_file(const char *path, kw_pattern_report *a, long psf_size);

/* pattern_report.c */
/* the library's report (kw_pattern_analysis_json()) as an object */
cJSON *kw_pattern_cli_json(const kw_pattern_report *a);
void kw_pattern_cli_text(FILE *f, const kw_pattern_report *a);
int kw_pattern_cli_psf_png(const char *path, const kw_pattern_report *a);
kw_status kw_pattern_cli_gray_png(const char *path, const float *v, size_t h, size_t w);
int kw_pattern_cli_compare_png(const char *path, const kw_pattern_report *as, int n);
void kw_pattern_cli_compare_table(FILE *f, const kw_pattern_report *as, int n);

#endif
