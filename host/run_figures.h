/*
 * run_figures.h - the figures of the report (plot.h), from a run, its
 * sensitivity budget and the downlink budget. Each figure is DIR/NAME.png
 * and DIR/NAME.svg; the list says which were drawn, with a caption, for
 * the HTML page (html_report.h).
 *
 * From a run (tl_figures_run):
 *   sky_calibrated     the model's antenna temperature and the calibrated one
 *   fixed_minus_float  firmware minus double reference, calibrated, in units of
 *                      the run's radiometer noise, before and after the
 *                      foreground fit
 *   fit_residuals      calibrated minus the foreground fit, K, with the
 *                      injected feature and +-1 sigma of the run
 *   feature_vs_noise   the feature after the fit against +-1 sigma after the
 *                      co-added [sensitivity] hours, mK
 *   channel_response   one channel of the filterbank against the plain FFT
 *                      (rectangular and the table's window over one frame), dB
 *   counters           overflow and saturation counters per block of the
 *                      integration
 *   compression        bits per channel value by downlink encoding
 *   budget             resources used against allocations (tl_figures_budget_bars)
 */
#ifndef TL_HOST_RUN_FIGURES_H
#define TL_HOST_RUN_FIGURES_H

#include <stddef.h>
#include "budget.h"
#include "plot.h"
#include "run.h"
#include "scenario.h"
#include "sensitivity.h"

#define TL_FIGURES_MAX 12u
#define TL_FIGURES_BARS_MAX 8u

typedef struct tl_figure {
    char name[48];          /* file base name: NAME.png, NAME.svg */
    char title[128];
    char caption[480];
} tl_figure;

typedef struct tl_figures {
    tl_figure fig[TL_FIGURES_MAX];
    unsigned n;
} tl_figures;

/* The budget bars: one entry per resource, used against its allocation.
 * Another budget is one more line in tl_figures_budget_bars. */
typedef struct tl_budget_bars {
    tl_plot_bar bar[TL_FIGURES_BARS_MAX];
    unsigned n;
    unsigned tightest;      /* index of the highest used / allocation */
} tl_budget_bars;

void tl_figures_budget_bars(const tl_scenario *s, const tl_budget *b, tl_budget_bars *out);

/* Draw the run's figures into DIR (sens, fid may not be NULL; fid->done 0
 * skips the fixed-minus-float figure; b NULL skips the budget). Appends to
 * figs. Returns 0, or -1 with one line in err naming the file. */
int tl_figures_run(const char *dir, const tl_scenario *s, const tl_run_result *r, const tl_sensitivity *sens,
                   const tl_sens_fidelity *fid, const tl_budget *b, tl_figures *figs, char *err, size_t cap);

/* The budget's own figure (budget.png/.svg) into DIR. */
int tl_figures_budget(const char *dir, const tl_scenario *s, const tl_budget *b, tl_figures *figs, char *err,
                      size_t cap);

/* Channel response of a filterbank prototype h (taps x points values) at
 * offsets d[i] in channels from the channel centre, in dB relative to the
 * centre: 10 log10 |sum_n h[n] exp(-2 pi i d n / points)|^2 / |sum h|^2,
 * floored at -200 dB. */
void tl_figures_channel_response(const double *h, uint32_t len, uint32_t points, const double *d, size_t n,
                                 double *db);

#endif
