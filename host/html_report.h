/*
 * html_report.h - one self-contained HTML page per command: a summary table
 * answering a newcomer's questions, then every figure (run_figures.h).
 *
 * The PNG of each figure is embedded in the page as a base64 data URI, so
 * the page is one file that can be mailed or archived alone and still shows
 * everything; the same PNG and its SVG stay beside it in the folder, and
 * each figure links to its SVG (the vector copy for print). The page uses
 * no script and no external style or font.
 *
 *   tidelock run     DIR/report.html   detected? (significance), lunar nights
 *                                      for 5 sigma, the firmware's share of
 *                                      the noise (fidelity margin), the
 *                                      tightest budget, the fidelity verdict
 *   tidelock budget  DIR/budget.html   the budgets against their allocations
 *
 * `run` also writes DIR/sensitivity.json: the prediction per channel
 * (frequency, noise, feature before and after the foreground fit, snr) and
 * in all (significance, hours and lunar nights for 5 sigma), and the
 * fixed-minus-float figures.
 *
 * Every file goes through tl_atomic_write.
 */
#ifndef TL_HOST_HTML_REPORT_H
#define TL_HOST_HTML_REPORT_H

#include <stddef.h>
#include <stdio.h>
#include "budget.h"
#include "run.h"
#include "run_figures.h"
#include "scenario.h"
#include "sensitivity.h"

typedef struct tl_html_row {
    char item[128];
    char value[512];
} tl_html_row;

#define TL_HTML_ROWS_MAX 24u

/* Write a page to path: title, the summary rows (item, value), then each
 * figure of figs with its PNG (read from dir) embedded and a link to its
 * SVG. Returns 0, or -1 with one line in err naming the file. */
int tl_html_write(const char *path, const char *title, const char *intro, const tl_html_row *rows, unsigned nrows,
                  const char *dir, const tl_figures *figs, char *err, size_t cap);

/* Everything `tidelock run` adds to DIR after its other outputs: the
 * sensitivity budget at [sensitivity] hours (sensitivity.json), the fixed-minus-float margin,
 * the downlink budget, the figures and DIR/report.html. A few summary
 * lines go to out (NULL: none). Returns 0, or -1 with one line in err. */
int tl_html_report_run(const char *dir, const tl_scenario *s, const tl_run_result *r, FILE *out, char *err,
                       size_t cap);

/* `tidelock budget`'s figure and DIR/budget.html. */
int tl_html_report_budget(const char *dir, const tl_scenario *s, const tl_budget *b, FILE *out, char *err,
                          size_t cap);

/* base64 (RFC 4648, with padding) of n octets into dst (at least
 * 4 ((n + 2) / 3) + 1 bytes, NUL-terminated). Returns the length. */
size_t tl_base64(const unsigned char *src, size_t n, char *dst);

#endif
