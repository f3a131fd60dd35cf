/* html_report.h: report.html, one self-contained page per run of `kweave
 * demo` and `kweave sweep`: the numbers as tables, every picture the run
 * wrote embedded (base64 data: URIs) with a caption, the safety caution where
 * gradient, RF or timing numbers appear. No scripts, no external links; no
 * dates and no absolute paths, so that the same run gives the same bytes.
 * Written atomically (kw_outfile). */
#ifndef KW_HTML_REPORT_H
#define KW_HTML_REPORT_H

#include "kw_base.h"

struct cJSON;
struct kw_sweep;

/*! kw_html_demo(): DIR/report.html from the files the demo's steps wrote
 * into DIR (plan.json, kspace.json, recon.json, score.json, DIR/ *.png).
 * `scenario` is the scenario in words, `seed` the noise seed. */
kw_status kw_html_demo(const char *dir, const char *scenario, long seed);

/*! kw_html_sweep(): DIR/report.html of a sweep: the parameters shared by
 * every row, the mean scores over seeds, one row per experiment, the summary
 * plots (DIR/summary_*.png) and the pictures of DIR/pictures/ (rows as parsed
 * JSON objects, NULL for rows not done). */
kw_status kw_html_sweep(const struct kw_sweep *sw, struct cJSON *const *rows, const char *dir);

#endif
