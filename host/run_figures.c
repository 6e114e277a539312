/* run_figures.c - the report's figures (see run_figures.h). */
#include "run_figures.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "downlink_out.h"
#include "sky_model.h"
#include "taps_design.h"

static int add_fig(tl_figures *f, const char *name, const char *title, const char *caption)
{
    if (f->n >= TL_FIGURES_MAX)
        return -1;
    tl_figure *g = &f->fig[f->n++];
    snprintf(g->name, sizeof g->name, "%s", name);
    snprintf(g->title, sizeof g->title, "%s", title);
    snprintf(g->caption, sizeof g->caption, "%s", caption);
    return 0;
}

static void base_path(char *out, size_t cap, const char *dir, const char *name)
{
    snprintf(out, cap, "%s/%s", dir, name);
}

void tl_figures_budget_bars(const tl_scenario *s, const tl_budget *b, tl_budget_bars *o)
{
    memset(o, 0, sizeof *o);
    /* one line per budget: name, used, allocation, unit */
    o->bar[o->n++] = (tl_plot_bar){ "downlink per Earth day", b->peak_per_earth_day / 1e6, s->bud_alloc_bytes_day / 1e6,
                                    "MB" };
    o->bar[o->n++] = (tl_plot_bar){ "link time per Earth day", b->link_hours_needed,
                                    s->bud_pass_h * 24.0 / s->bud_contact_h, "h" };
    o->bar[o->n++] = (tl_plot_bar){ "storage between passes", b->storage_needed / 1e6, s->bud_storage_bytes / 1e6,
                                    "MB" };
    o->bar[o->n++] = (tl_plot_bar){ "processor clock needed", b->cycles_per_s / 1e9, s->proc_clock_hz / 1e9,
                                    "GHz" };
    double worst = -1.0;
    for (unsigned i = 0; i < o->n; i++) {
        const double u = o->bar[i].used / o->bar[i].allocation;
        if (u > worst) {
            worst = u;
            o->tightest = i;
        }
    }
}

void tl_figures_channel_response(const double *h, uint32_t len, uint32_t points, const double *d, size_t n,
                                 double *db)
{
    double h0 = 0.0;
    for (uint32_t i = 0; i < len; i++)
        h0 += h[i];
    for (size_t j = 0; j < n; j++) {
        /* a rotating phasor instead of len calls to cos/sin, renormalised
         * every 1024 steps */
        const double w = -2.0 * M_PI * d[j] / points;
        const double cw = cos(w), sw = sin(w);
        double re = 0.0, im = 0.0, pr = 1.0, pi = 0.0;
        for (uint32_t i = 0; i < len; i++) {
            re += h[i] * pr;
            im += h[i] * pi;
            const double t = pr * cw - pi * sw;
            pi = pr * sw + pi * cw;
            pr = t;
            if ((i & 1023u) == 1023u) {
                pr = cos(w * (i + 1.0));
                pi = sin(w * (i + 1.0));
            }
        }
        const double p = (re * re + im * im) / (h0 * h0);
        db[j] = p > 1e-20 ? 10.0 * log10(p) : -200.0;
    }
}

static int fig_sky(const char *dir, const tl_scenario *s, const tl_run_result *r, tl_figures *figs, char *err,
                   size_t cap)
{
    const tl_cal_report *c = &r->cal;
    uint32_t lo, hi;
    tl_scenario_band(s, &lo, &hi);
    const uint32_t n = hi - lo;
    const double df = tl_scenario_channel_hz(s);
    double *x = malloc(n * sizeof *x), *m = malloc(n * sizeof *m), *y0 = malloc(n * sizeof *y0),
           *y1 = malloc(n * sizeof *y1);
    if (!x || !m || !y0 || !y1) {
        free(x), free(m), free(y0), free(y1);
        snprintf(err, cap, "%s: out of memory", dir);
        return -1;
    }
    for (uint32_t i = 0; i < n; i++) {
        const uint32_t k = lo + i;
        x[i] = k * df / 1e6;
        m[i] = c->t_model[k];
        y0[i] = c->t_ant[0][k];
        y1[i] = r->fid.product.inputs > 1u ? c->t_ant[1][k] : NAN;
    }
    const tl_plot_series ser[] = {
        { "input 0, calibrated", x, y0, n, TL_DASH_NONE, TL_MARK_CIRCLE, n / 120u + 1u, 0.35, 0 },
        { r->fid.product.inputs > 1u ? "input 1, calibrated" : NULL, x, y1, r->fid.product.inputs > 1u ? n : 0,
          TL_DASH_NONE, TL_MARK_CROSS, n / 120u + 1u, 0.0, 0 },
        { "sky model (antenna temperature)", x, m, n, TL_DASH_SOLID, TL_MARK_NONE, 0, 0.0, 2.0 },
    };
    char note[200];
    snprintf(note, sizeof note, "%u antenna spectra, two-point calibration against %.0f K and %.0f K", 
             r->fid.product.antenna_spectra, s->sky.load_k, s->sky.load_k + s->sky.noise_excess_k);
    const tl_plot_chart ch = { "Sky model and calibrated spectrum", "frequency (MHz)", "antenna temperature (K)",
                               TL_PLOT_LINEAR, TL_PLOT_LOG, 1, 1, 0, 0, 0, 0, ser, 3, NULL, NULL, NULL, 0, NULL, note };
    char path[4200];
    base_path(path, sizeof path, dir, "sky_calibrated");
    const int rc = tl_plot_lines(path, &ch, err, cap);
    free(x), free(m), free(y0), free(y1);
    if (rc == 0)
        add_fig(figs, "sky_calibrated", "Sky model and calibrated spectrum",
                "The model's antenna temperature (line) and each input's calibrated temperature from this one "
                "integration (markers, every few channels), log scale: the calibration follows the model within "
                "its noise (chi-squared per channel in the summary).");
    return rc;
}

static int fig_fixed_float(const char *dir, const tl_scenario *s, const tl_run_result *r,
                           const tl_sens_fidelity *fid, tl_figures *figs, char *err, size_t cap)
{
    uint32_t lo, hi;
    tl_scenario_band(s, &lo, &hi);
    const uint32_t n = hi - lo;
    const double df = tl_scenario_channel_hz(s);
    double *x = malloc(n * sizeof *x), *d0 = malloc(n * sizeof *d0), *r0 = malloc(n * sizeof *r0),
           *r1 = malloc(n * sizeof *r1);
    if (!x || !d0 || !r0 || !r1) {
        free(x), free(d0), free(r0), free(r1);
        snprintf(err, cap, "%s: out of memory", dir);
        return -1;
    }
    for (uint32_t i = 0; i < n; i++) {
        const uint32_t k = lo + i;
        const double sg0 = r->cal.sigma[0][k], sg1 = fid->inputs > 1u ? r->cal.sigma[1][k] : NAN;
        x[i] = k * df / 1e6;
        d0[i] = sg0 > 0 ? fid->diff_k[0][k] / sg0 : NAN;
        r0[i] = sg0 > 0 ? fid->resid_k[0][k] / sg0 : NAN;
        r1[i] = sg1 > 0 ? fid->resid_k[1][k] / sg1 : NAN;
    }
    const tl_plot_series ser[] = {
        { "input 0, before the foreground fit", x, d0, n, TL_DASH_DOTTED, TL_MARK_NONE, 0, 0.45, 1.2 },
        { "input 0, after the fit", x, r0, n, TL_DASH_SOLID, TL_MARK_NONE, 0, 0.0, 1.0 },
        { fid->inputs > 1u ? "input 1, after the fit" : NULL, x, r1, fid->inputs > 1u ? n : 0, TL_DASH_DASHED,
          TL_MARK_NONE, 0, 0.3, 1.0 },
    };
    char note[240];
    snprintf(note, sizeof note,
             "rms %.2e, max %.2e of the noise (input 0); as systematic at %g h at most %.2e of the noise",
             fid->resid_rms[0], fid->resid_max[0], s->sens_hours, fid->margin_at_hours);
    const tl_plot_chart ch = { "Fixed minus float, calibrated, in radiometer-noise units", "frequency (MHz)",
                               "(T_fixed - T_float) / sigma of this integration (1)", TL_PLOT_LINEAR, TL_PLOT_LINEAR,
                               1, 1, 0, 0, 0, 0, ser, 3, NULL, NULL, NULL, 0, NULL, note };
    char path[4200];
    base_path(path, sizeof path, dir, "fixed_minus_float");
    const int rc = tl_plot_lines(path, &ch, err, cap);
    free(x), free(d0), free(r0), free(r1);
    if (rc == 0)
        add_fig(figs, "fixed_minus_float", "Fixed minus float in noise units",
                "The firmware's calibrated temperature minus the double-precision reference's (the same samples), "
                "divided by this integration's radiometer noise, before and after the foreground fit. A random "
                "round-off error keeps this ratio at any integration length; a systematic one would grow as the "
                "square root of the length, which the summary's bound assumes.");
    return rc;
}

static int fig_residuals(const char *dir, const tl_scenario *s, const tl_run_result *r, const tl_sensitivity *sens,
                         tl_figures *figs, char *err, size_t cap)
{
    uint32_t lo, hi;
    tl_scenario_band(s, &lo, &hi);
    const uint32_t n0 = hi - lo;
    const double df = tl_scenario_channel_hz(s);
    double *x = calloc(n0, sizeof *x), *y = calloc(n0, sizeof *y), *w = calloc(n0, sizeof *w),
           *res = calloc(n0, sizeof *res), *feat = calloc(n0, sizeof *feat), *fres = calloc(n0, sizeof *fres),
           *bl = calloc(n0, sizeof *bl), *bh = calloc(n0, sizeof *bh), *xm = calloc(n0, sizeof *xm);
    int rc = -1;
    if (!x || !y || !w || !res || !feat || !fres || !bl || !bh || !xm) {
        snprintf(err, cap, "%s: out of memory", dir);
        goto out;
    }
    uint32_t n = 0;
    for (uint32_t k = lo; k < hi; k++) {
        const double t = r->cal.t_ant[0][k], sg = r->cal.sigma[0][k];
        if (!isfinite(t) || !(sg > 0.0))
            continue;
        x[n] = k * df;
        y[n] = t;
        w[n] = 1.0 / (sg * sg);
        feat[n] = sens->feature_k[k];
        n++;
    }
    if (n < s->fit_order + 2u || tl_sensitivity_foreground_resid(x, y, w, n, 0.5 * (x[0] + x[n - 1u]), s->fit_order,
                                                                 res) != 0 ||
        tl_sensitivity_foreground_resid(x, feat, w, n, 0.5 * (x[0] + x[n - 1u]), s->fit_order, fres) != 0) {
        snprintf(err, cap, "%s/fit_residuals.png: the foreground fit of order %u is singular", dir, s->fit_order);
        goto out;
    }
    for (uint32_t i = 0; i < n; i++) {
        xm[i] = x[i] / 1e6;
        bl[i] = -1.0 / sqrt(w[i]);
        bh[i] = 1.0 / sqrt(w[i]);
    }
    {
        const tl_plot_series ser[] = {
            { "input 0: calibrated minus foreground fit", xm, res, n, TL_DASH_SOLID, TL_MARK_NONE, 0, 0.0, 0.8 },
            { "injected feature (model)", xm, feat, n, TL_DASH_DASHED, TL_MARK_NONE, 0, 0.0, 2.2 },
            { "injected feature after the fit", xm, fres, n, TL_DASH_DOTTED, TL_MARK_NONE, 0, 0.0, 2.2 },
        };
        char note[200];
        snprintf(note, sizeof note, "foreground: log-polynomial of order %u; feature depth %.3g K", s->fit_order,
                 s->sky.trough_depth_k);
        const tl_plot_chart ch = { "Foreground-fit residuals and the injected feature", "frequency (MHz)",
                                   "temperature (K)", TL_PLOT_LINEAR, TL_PLOT_LINEAR, 1, 1, 0, 0, 0, 0, ser, 3,
                                   xm, bl, bh, n, "+-1 sigma of this integration", note };
        char path[4200];
        base_path(path, sizeof path, dir, "fit_residuals");
        rc = tl_plot_lines(path, &ch, err, cap);
    }
    if (rc == 0)
        add_fig(figs, "fit_residuals", "Foreground-fit residuals with the injected feature",
                "The calibrated spectrum of input 0 minus a weighted log-polynomial foreground fit, with this "
                "integration's +-1 sigma (gray band) and the injected feature before and after the same fit. In "
                "one integration the feature is far below the noise; the next figure shows it after the co-added "
                "observing time.");
out:
    free(x), free(y), free(w), free(res), free(feat), free(fres), free(bl), free(bh), free(xm);
    return rc;
}

static int fig_feature(const char *dir, const tl_scenario *s, const tl_sensitivity *sens, tl_figures *figs,
                       char *err, size_t cap)
{
    const uint32_t n = sens->hi - sens->lo;
    double *x = malloc(n * sizeof *x), *fe = malloc(n * sizeof *fe), *pe = malloc(n * sizeof *pe),
           *sg = malloc(n * sizeof *sg);
    if (!x || !fe || !pe || !sg) {
        free(x), free(fe), free(pe), free(sg);
        snprintf(err, cap, "%s: out of memory", dir);
        return -1;
    }
    for (uint32_t i = 0; i < n; i++) {
        const uint32_t k = sens->lo + i;
        x[i] = k * sens->channel_hz / 1e6;
        fe[i] = 1e3 * fabs(sens->feature_k[k]);
        pe[i] = 1e3 * fabs(sens->perp_k[k]);
        sg[i] = 1e3 * sens->sigma_k[k];
    }
    char band[80];
    snprintf(band, sizeof band, "radiometer noise per channel after %g h", sens->hours);
    const tl_plot_series ser[] = {
        { band, x, sg, n, TL_DASH_SOLID, TL_MARK_NONE, 0, 0.0, 2.4 },
        { "|injected feature|", x, fe, n, TL_DASH_DASHED, TL_MARK_NONE, 0, 0.0, 1.8 },
        { "|feature after the foreground fit|", x, pe, n, TL_DASH_DOTTED, TL_MARK_NONE, 0, 0.0, 2.0 },
    };
    char note[240];
    if (sens->depth_k > 0.0)
        snprintf(note, sizeof note,
                 "%g h x duty %.2f: detection significance %.3g sigma; 5 sigma after %.3g h (%.3g lunar nights)",
                 sens->hours, sens->duty, sens->significance, sens->hours_detect, sens->nights_detect);
    else
        snprintf(note, sizeof note, "%g h x duty %.2f; the scenario has no feature ([sky] trough_depth_k = 0)",
                 sens->hours, sens->duty);
    double lo = INFINITY, hi = 0.0;
    for (uint32_t i = 0; i < n; i++) {
        lo = fmin(lo, sg[i]);
        hi = fmax(hi, fmax(sg[i], fe[i]));
    }
    /* four decades below the noise floor at most: the fitted feature's zeros
     * would otherwise stretch the axis */
    const double ymin = fmax(1e-4 * lo, fmin(lo, hi) * 1e-3), ymax = hi * 2.0;
    const tl_plot_chart ch = { "Feature against the radiometer noise after the co-added time", "frequency (MHz)",
                               "temperature (mK)", TL_PLOT_LINEAR, TL_PLOT_LOG, 1, 0, 0, 0, ymin, ymax, ser, 3,
                               NULL, NULL, NULL, 0, NULL, note };
    char path[4200];
    base_path(path, sizeof path, dir, "feature_vs_noise");
    const int rc = tl_plot_lines(path, &ch, err, cap);
    free(x), free(fe), free(pe), free(sg);
    (void)s;
    if (rc == 0)
        add_fig(figs, "feature_vs_noise", "The feature against the noise after the co-added time",
                "Predicted (not simulated), log scale: the calibrated radiometer noise per channel after the "
                "scenario's [sensitivity] hours, the injected feature's magnitude, and what is left of it after "
                "the foreground fit (the fit absorbs its smooth part). The detection significance adds the "
                "channels' remaining feature over noise in quadrature (generalized least squares).");
    return rc;
}

static int fig_response(const char *dir, const tl_scenario *s, tl_figures *figs, char *err, size_t cap)
{
    const uint32_t N = s->cfg.points, P = s->cfg.taps;
    tl_taps *t = malloc(sizeof *t);
    double *h = malloc(sizeof(double) * N * P), *w1 = malloc(sizeof(double) * N), *rect = malloc(sizeof(double) * N);
    enum { NPTS = 321 };
    static double d[NPTS], pfb[NPTS], fr[NPTS], fw[NPTS];
    int rc = -1;
    if (!t || !h || !w1 || !rect || tl_taps_design(s->window, P, N, t, NULL) != 0 ||
        tl_window_fill(s->window, N, w1) != 0) {
        snprintf(err, cap, "%s/channel_response.png: cannot design the filterbank table", dir);
        goto out;
    }
    for (uint32_t i = 0; i < N * P; i++)
        h[i] = t->coef[i];
    for (uint32_t i = 0; i < N; i++)
        rect[i] = 1.0;
    for (unsigned i = 0; i < NPTS; i++)
        d[i] = -4.0 + 8.0 * i / (NPTS - 1.0);
    tl_figures_channel_response(h, N * P, N, d, NPTS, pfb);
    tl_figures_channel_response(rect, N, N, d, NPTS, fr);
    tl_figures_channel_response(w1, N, N, d, NPTS, fw);
    {
        char l1[96], l2[96];
        snprintf(l1, sizeof l1, "filterbank, %u taps (the firmware's table)", P);
        snprintf(l2, sizeof l2, "plain FFT, %s window over one frame", tl_window_name(s->window));
        const tl_plot_series ser[] = {
            { l1, d, pfb, NPTS, TL_DASH_SOLID, TL_MARK_NONE, 0, 0.0, 2.2 },
            { "plain FFT, rectangular", d, fr, NPTS, TL_DASH_DASHED, TL_MARK_NONE, 0, 0.35, 1.4 },
            { l2, d, fw, NPTS, TL_DASH_DOTTED, TL_MARK_NONE, 0, 0.0, 1.6 },
        };
        const tl_plot_chart ch = { "Channel response: filterbank against the plain FFT",
                                   "offset from the channel centre (channels)", "power response (dB)",
                                   TL_PLOT_LINEAR, TL_PLOT_LINEAR, 0, 0, -4.0, 4.0, -130.0, 5.0, ser, 3,
                                   NULL, NULL, NULL, 0, NULL, NULL };
        char path[4200];
        base_path(path, sizeof path, dir, "channel_response");
        rc = tl_plot_lines(path, &ch, err, cap);
    }
    if (rc == 0) {
        char cap2[400];
        snprintf(cap2, sizeof cap2,
                 "Power response of one channel to a tone, in dB against its offset from the channel centre: the "
                 "%u-tap polyphase filterbank (the quantized coefficient table) against a plain FFT of one frame, "
                 "rectangular and with the same window. Computed from the coefficients (DTFT), not measured.",
                 P);
        add_fig(figs, "channel_response", "Filterbank channel response against the plain FFT", cap2);
    }
out:
    free(t), free(h), free(w1), free(rect);
    return rc;
}

static int fig_counters(const char *dir, const tl_scenario *s, const tl_run_result *r, tl_figures *figs, char *err,
                        size_t cap)
{
    const tl_fid_result *f = &r->fid;
    const uint32_t J = f->blocks < TL_FID_STATS_BLOCKS ? f->blocks : TL_FID_STATS_BLOCKS;
    double *x = calloc(J, sizeof *x), *adc = calloc(J, sizeof *x), *pfb = calloc(J, sizeof *x),
           *fft = calloc(J, sizeof *x), *acc = calloc(J, sizeof *x);
    if (!x || !adc || !pfb || !fft || !acc || J == 0u) {
        free(x), free(adc), free(pfb), free(fft), free(acc);
        snprintf(err, cap, "%s/counters.png: no blocks to draw", dir);
        return -1;
    }
    double total = 0.0;
    for (uint32_t j = 0; j < J; j++) {
        const tl_stats *st = &f->block_stats[j];
        x[j] = j + 1.0;
        for (unsigned i = 0; i < TL_MAX_INPUTS; i++) {
            adc[j] += st->adc_clips[i];
            pfb[j] += st->pfb_sat[i];
            for (unsigned g = 0; g <= TL_MAX_FFT_STAGES; g++)
                fft[j] += st->fft_sat[i][g];
        }
        for (unsigned q = 0; q < 4u; q++)
            acc[j] += st->acc_sat[q];
        total += adc[j] + pfb[j] + fft[j] + acc[j];
    }
    const unsigned every = J / 24u + 1u;
    const tl_plot_series ser[] = {
        { "ADC clips (both inputs)", x, adc, J, TL_DASH_SOLID, TL_MARK_CIRCLE, every, 0.0, 1.5 },
        { "filterbank saturations", x, pfb, J, TL_DASH_DASHED, TL_MARK_SQUARE, every, 0.25, 1.5 },
        { "FFT saturations (all stages)", x, fft, J, TL_DASH_DOTTED, TL_MARK_TRIANGLE, every, 0.0, 1.5 },
        { "accumulator saturations", x, acc, J, TL_DASH_DASHDOT, TL_MARK_CROSS, every, 0.4, 1.5 },
    };
    char note[200], xl[120];
    snprintf(note, sizeof note, "%u blocks of %u spectra, %.0f events in all%s", f->blocks, f->spectra / f->blocks,
             total, total == 0.0 ? ": every counter 0" : "");
    snprintf(xl, sizeof xl, "block of the integration (%u spectra = %.3g s each)", f->spectra / f->blocks,
             (double)f->spectra / f->blocks * s->cfg.points / s->sky.sample_rate_hz);
    const tl_plot_chart ch = { "Overflow and saturation counters", xl, "events per block (count)", TL_PLOT_LINEAR,
                               TL_PLOT_LINEAR, 1, total == 0.0 ? 0 : 1, 0, 0, -0.5, 4.5, ser, 4, NULL, NULL, NULL,
                               0, NULL, note };
    char path[4200];
    base_path(path, sizeof path, dir, "counters");
    const int rc = tl_plot_lines(path, &ch, err, cap);
    free(x), free(adc), free(pfb), free(fft), free(acc);
    if (rc == 0)
        add_fig(figs, "counters", "Overflow and saturation counters per block",
                "The firmware's own counters in each block of the integration: ADC samples at a rail, filterbank "
                "outputs and FFT butterflies saturated, and channels whose 64-bit sum saturated.");
    return rc;
}

static int fig_compression(const char *dir, const tl_scenario *s, const tl_run_result *r, tl_figures *figs,
                           char *err, size_t cap)
{
    static const struct {
        const char *name;
        unsigned encoding, transpose;
    } enc[] = { { "lossless, byte shuffle", 0, 0 }, { "lossless, bit planes", 0, 1 },
                { "noise-bounded, bit planes", 1, 1 } };
    tl_plot_bar bars[3];
    char names[3][96];
    for (unsigned i = 0; i < 3u; i++) {
        tl_scenario q = *s;
        q.dl_encoding = enc[i].encoding;
        q.dl_transpose = enc[i].transpose;
        tl_dl_result d;
        if (tl_downlink_out_make(&q, &r->fid.product, &d, NULL, NULL, NULL, NULL, err, cap) != 0)
            return -1;
        const double values = (double)d.octets_raw / 8.0;
        if (enc[i].encoding == 1u)
            snprintf(names[i], sizeof names[i], "%s (f = %g)", enc[i].name, s->dl_fraction);
        else
            snprintf(names[i], sizeof names[i], "%s", enc[i].name);
        bars[i] = (tl_plot_bar){ names[i], values > 0 ? 8.0 * (double)d.octets_science / values : 0.0, 64.0,
                                 "bit" };
    }
    char path[4200];
    base_path(path, sizeof path, dir, "compression");
    if (tl_plot_bars(path, "Compressed bits per channel value by encoding",
                     "bits per channel value, science packets (raw sums: 64)", bars, 3, TL_BARS_ABSOLUTE, err,
                     cap) != 0)
        return -1;
    add_fig(figs, "compression", "Compressed bits per channel by encoding",
            "This run's product through the firmware's own downlink encoder in each encoding: science-packet "
            "bits per channel value (headers and CRCs included) against the 64 bits of a raw sum (the mark).");
    return 0;
}

int tl_figures_budget(const char *dir, const tl_scenario *s, const tl_budget *b, tl_figures *figs, char *err,
                      size_t cap)
{
    tl_budget_bars bb;
    tl_figures_budget_bars(s, b, &bb);
    char path[4200];
    base_path(path, sizeof path, dir, "budget");
    if (tl_plot_bars(path, "Budgets: used against allocated", "used, percent of the allocation (%)", bb.bar, bb.n,
                     TL_BARS_FRACTION, err, cap) != 0)
        return -1;
    add_fig(figs, "budget", "Budgets against allocations",
            "Each resource as a percentage of its allocation (the heavy mark at 100 %); a hatched bar is over. "
            "Downlink and storage come from the flight-length product packetised by the firmware's encoder.");
    return 0;
}

int tl_figures_run(const char *dir, const tl_scenario *s, const tl_run_result *r, const tl_sensitivity *sens,
                   const tl_sens_fidelity *fid, const tl_budget *b, tl_figures *figs, char *err, size_t cap)
{
    if (r->cal.done && fig_sky(dir, s, r, figs, err, cap) != 0)
        return -1;
    if (fid->done && fig_fixed_float(dir, s, r, fid, figs, err, cap) != 0)
        return -1;
    if (r->cal.done && fig_residuals(dir, s, r, sens, figs, err, cap) != 0)
        return -1;
    if (fig_feature(dir, s, sens, figs, err, cap) != 0)
        return -1;
    if (fig_response(dir, s, figs, err, cap) != 0)
        return -1;
    if (fig_counters(dir, s, r, figs, err, cap) != 0)
        return -1;
    if (fig_compression(dir, s, r, figs, err, cap) != 0)
        return -1;
    if (b != NULL && tl_figures_budget(dir, s, b, figs, err, cap) != 0)
        return -1;
    return 0;
}
