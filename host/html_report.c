/* html_report.c - the self-contained HTML page (see html_report.h). */
#include "html_report.h"
#include "acquisition.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "atomic_file.h"
#include "fidelity.h"

size_t tl_base64(const unsigned char *src, size_t n, char *dst)
{
    static const char tab[] = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/=";
    size_t o = 0;
    for (size_t i = 0; i < n; i += 3) {
        const unsigned v = (unsigned)src[i] << 16 | (i + 1 < n ? (unsigned)src[i + 1] << 8 : 0u) |
                           (i + 2 < n ? (unsigned)src[i + 2] : 0u);
        dst[o++] = tab[(v >> 18) & 63u];
        dst[o++] = tab[(v >> 12) & 63u];
        dst[o++] = tab[i + 1 < n ? (v >> 6) & 63u : 64u]; /* tab[64] is the pad '=' */
        dst[o++] = tab[i + 2 < n ? v & 63u : 64u];
    }
    dst[o] = '\0';
    return o;
}

static void put_escaped(FILE *f, const char *s)
{
    for (; *s; s++) {
        switch (*s) {
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '&': fputs("&amp;", f); break;
        case '"': fputs("&quot;", f); break;
        default: fputc(*s, f); break;
        }
    }
}

typedef struct page {
    const char *title, *intro, *dir;
    const tl_html_row *rows;
    unsigned nrows;
    const tl_figures *figs;
    char *err;
    size_t cap;
} page;

static int read_all(const char *path, unsigned char **buf, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return -1;
    size_t cap = 1u << 16, n = 0;
    unsigned char *p = malloc(cap);
    while (p != NULL) {
        const size_t got = fread(p + n, 1, cap - n, f);
        n += got;
        if (n < cap)
            break;
        unsigned char *q = realloc(p, cap * 2u);
        if (q == NULL) {
            free(p);
            p = NULL;
            break;
        }
        p = q;
        cap *= 2u;
    }
    const int bad = ferror(f) || p == NULL;
    fclose(f);
    if (bad) {
        free(p);
        return -1;
    }
    *buf = p;
    *len = n;
    return 0;
}

static int write_page(FILE *f, void *ctx)
{
    const page *pg = ctx;
    fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>", f);
    put_escaped(f, pg->title);
    fputs("</title>\n<style>\n"
          "body { font-family: sans-serif; max-width: 960px; margin: 2em auto; color: #000; background: #fff; }\n"
          "table { border-collapse: collapse; width: 100%; margin: 1em 0; }\n"
          "th, td { border: 1px solid #444; padding: 0.4em 0.6em; text-align: left; vertical-align: top; }\n"
          "th { background: #e8e8e8; width: 32%; }\n"
          "figure { margin: 2em 0; } img { width: 100%; height: auto; border: 1px solid #888; }\n"
          "figcaption { font-size: 0.92em; margin-top: 0.4em; }\n"
          "</style>\n</head>\n<body>\n<h1>", f);
    put_escaped(f, pg->title);
    fputs("</h1>\n", f);
    if (pg->intro != NULL) {
        fputs("<p>", f);
        put_escaped(f, pg->intro);
        fputs("</p>\n", f);
    }
    fputs("<table id=\"summary\">\n", f);
    for (unsigned i = 0; i < pg->nrows; i++) {
        fputs("<tr><th>", f);
        put_escaped(f, pg->rows[i].item);
        fputs("</th><td>", f);
        put_escaped(f, pg->rows[i].value);
        fputs("</td></tr>\n", f);
    }
    fputs("</table>\n", f);
    for (unsigned i = 0; i < pg->figs->n; i++) {
        const tl_figure *g = &pg->figs->fig[i];
        char path[4400];
        snprintf(path, sizeof path, "%s/%s.png", pg->dir, g->name);
        unsigned char *png = NULL;
        size_t len = 0;
        if (read_all(path, &png, &len) != 0) {
            snprintf(pg->err, pg->cap, "%s: cannot read it back for the page", path);
            return -1;
        }
        char *b64 = malloc(4u * ((len + 2u) / 3u) + 1u);
        if (b64 == NULL) {
            free(png);
            snprintf(pg->err, pg->cap, "%s: out of memory", path);
            return -1;
        }
        tl_base64(png, len, b64);
        free(png);
        fprintf(f, "<figure id=\"%s\">\n<h2>", g->name);
        put_escaped(f, g->title);
        fprintf(f, "</h2>\n<a href=\"%s.svg\"><img src=\"data:image/png;base64,%s\" alt=\"", g->name, b64);
        free(b64);
        put_escaped(f, g->title);
        fputs("\"></a>\n<figcaption>", f);
        put_escaped(f, g->caption);
        fprintf(f, " Files: <a href=\"%s.png\">%s.png</a>, <a href=\"%s.svg\">%s.svg</a>.</figcaption>\n</figure>\n",
                g->name, g->name, g->name, g->name);
    }
    fputs("<p>Written by tidelock. Every number above is recomputed by each run; docs/sensitivity.md states the "
          "formulas and their sources.</p>\n</body>\n</html>\n",
          f);
    return ferror(f) ? -1 : 0;
}

int tl_html_write(const char *path, const char *title, const char *intro, const tl_html_row *rows, unsigned nrows,
                  const char *dir, const tl_figures *figs, char *err, size_t cap)
{
    char inner[1024] = "";
    page pg = { title, intro, dir, rows, nrows, figs, inner, sizeof inner };
    if (tl_atomic_write(path, write_page, &pg, err, cap) != 0) {
        if (inner[0] != '\0')
            snprintf(err, cap, "%s", inner);
        return -1;
    }
    return 0;
}

static void row(tl_html_row *rows, unsigned *n, const char *item, const char *fmt, ...)
    __attribute__((format(printf, 3, 0)));

static void row(tl_html_row *rows, unsigned *n, const char *item, const char *fmt, ...)
{
    if (*n >= TL_HTML_ROWS_MAX)
        return;
    snprintf(rows[*n].item, sizeof rows[*n].item, "%s", item);
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(rows[*n].value, sizeof rows[*n].value, fmt, ap);
    va_end(ap);
    (*n)++;
}

static void budget_rows(const tl_scenario *s, const tl_budget *b, tl_html_row *rows, unsigned *n)
{
    tl_budget_bars bb;
    tl_figures_budget_bars(s, b, &bb);
    const tl_plot_bar *t = &bb.bar[bb.tightest];
    row(rows, n, "Which budget is tightest?", "%s: %.4g %s of %.4g %s (%.1f%% used); the budget %s", t->name, t->used,
        t->unit, t->allocation, t->unit, 100.0 * t->used / t->allocation,
        b->closed ? "closes (every margin >= 0)" : "does NOT close");
    for (unsigned i = 0; i < bb.n; i++) {
        char item[128];
        snprintf(item, sizeof item, "budget: %s", bb.bar[i].name);
        row(rows, n, item, "%.4g %s of %.4g %s (margin %+.1f%%)", bb.bar[i].used, bb.bar[i].unit,
            bb.bar[i].allocation, bb.bar[i].unit, 100.0 * (1.0 - bb.bar[i].used / bb.bar[i].allocation));
    }
}

static json_t *num(double v)
{
    return isfinite(v) ? json_real(v) : json_null();
}

static int dump_json(FILE *f, void *ctx)
{
    return json_dumpf((json_t *)ctx, f, JSON_INDENT(2) | JSON_REAL_PRECISION(10)) == 0 ? 0 : -1;
}

/* DIR/sensitivity.json: the prediction, per channel and in all, and the
 * fixed-minus-float margin (docs/sensitivity.md). */
static int write_sensitivity_json(const char *dir, const tl_scenario *s, const tl_sensitivity *o,
                                  const tl_sens_fidelity *fid, char *err, size_t cap)
{
    json_t *root = json_object(), *f = json_array(), *sg = json_array(), *fe = json_array(), *pe = json_array(),
           *sn = json_array();
    for (uint32_t k = o->lo; k < o->hi; k++) {
        json_array_append_new(f, json_real(k * o->channel_hz / 1e6));
        json_array_append_new(sg, num(o->sigma_k[k]));
        json_array_append_new(fe, num(o->feature_k[k]));
        json_array_append_new(pe, num(o->perp_k[k]));
        json_array_append_new(sn, num(o->snr[k]));
    }
    json_object_set_new(root, "hours", json_real(o->hours));
    json_object_set_new(root, "duty_cycle", json_real(o->duty));
    json_object_set_new(root, "channel_hz", json_real(o->channel_hz));
    json_object_set_new(root, "kept_fraction", json_pack("{s:f, s:f, s:f, s:f}", "antenna", o->keep[0], "load",
                                                         o->keep[1], "noise", o->keep[2], "discarded", o->discard));
    json_object_set_new(root, "radiometer_factor", json_real(o->radiometer_factor));
    json_object_set_new(root, "adc_rounding_k", json_real(o->t_quant_k));
    json_object_set_new(root, "feature_depth_k", json_real(o->depth_k));
    json_object_set_new(root, "foreground_order", json_integer(s->fit_order));
    json_object_set_new(root, "amplitude_sigma_k", num(o->amp_sigma_k));
    json_object_set_new(root, "significance", num(o->significance));
    json_object_set_new(root, "hours_for_5_sigma", num(o->hours_detect));
    json_object_set_new(root, "observing_hours_per_lunar_night", json_real(o->night_hours));
    json_object_set_new(root, "lunar_nights_for_5_sigma", num(o->nights_detect));
    if (fid->done)
        json_object_set_new(root, "fixed_minus_float",
                            json_pack("{s:o, s:o, s:o, s:o}", "noise_fraction", num(fid->noise_fraction), "rms_input0",
                                      num(fid->resid_rms[0]), "max_input0", num(fid->resid_max[0]),
                                      "margin_at_hours", num(fid->margin_at_hours)));
    json_object_set_new(root, "frequency_mhz", f);
    json_object_set_new(root, "sigma_k", sg);
    json_object_set_new(root, "feature_k", fe);
    json_object_set_new(root, "feature_after_fit_k", pe);
    json_object_set_new(root, "snr", sn);
    char path[4400];
    snprintf(path, sizeof path, "%s/sensitivity.json", dir);
    const int rc = tl_atomic_write(path, dump_json, root, err, cap);
    json_decref(root);
    return rc;
}

int tl_html_report_run(const char *dir, const tl_scenario *s, const tl_run_result *r, FILE *out, char *err,
                       size_t cap)
{
    tl_sensitivity *sens = calloc(1, sizeof *sens);
    tl_sens_fidelity *fid = calloc(1, sizeof *fid);
    tl_budget *b = calloc(1, sizeof *b);
    tl_figures *figs = calloc(1, sizeof *figs);
    tl_html_row *rows = calloc(TL_HTML_ROWS_MAX, sizeof *rows);
    int rc = -1;
    if (!sens || !fid || !b || !figs || !rows) {
        snprintf(err, cap, "%s/report.html: out of memory", dir);
        goto out;
    }
    /* the observing duty cycle of [sensitivity] times the fraction of the
     * samples the processor keeps up with ([processor], docs/acquisition.md) */
    const double proc_duty = tl_acq_scenario_duty(s);
    if (proc_duty <= 0.0) {
        snprintf(err, cap, "scenario %s: [processor] values out of range for the acquisition model", s->name);
        goto out;
    }
    if (tl_sensitivity_compute(s, s->sens_hours, s->sens_duty * proc_duty, sens, err, cap) != 0)
        goto out;
    if (r->cal.done)
        (void)tl_sensitivity_fidelity(s, r, sens, fid); /* fid->done stays 0 when it cannot */
    if (write_sensitivity_json(dir, s, sens, fid, err, cap) != 0)
        goto out;
    if (tl_budget_compute(s, b, err, cap) != 0)
        goto out;
    if (tl_figures_run(dir, s, r, sens, fid, b, figs, err, cap) != 0)
        goto out;
    unsigned n = 0;
    const int detected = sens->significance >= TL_SENS_DETECT_SIGMA;
    if (s->sky.trough_depth_k > 0.0) {
        row(rows, &n, "Does the scenario detect its feature?",
            "%s: %.3g sigma after %g h of co-added observing (duty cycle %.3g), against %.0f sigma needed "
            "(%.3g K feature at %.3g MHz, %.3g MHz wide, fitted jointly with a log-polynomial foreground of order %u)",
            detected ? "YES" : "NO", sens->significance, sens->hours, sens->duty, TL_SENS_DETECT_SIGMA,
            s->sky.trough_depth_k, s->sky.trough_centre_hz / 1e6, s->sky.trough_width_hz / 1e6, s->fit_order);
        row(rows, &n, "How many lunar nights does a 5 sigma detection need?",
            "%.3g lunar nights = %.3g h of observing (%.1f h per night: half of %.6g days x night fraction %.2f)",
            sens->nights_detect, sens->hours_detect, sens->night_hours, TL_SYNODIC_MONTH_DAYS, s->bud_night_fraction);
    } else {
        row(rows, &n, "Does the scenario detect its feature?", "the scenario has no feature ([sky] trough_depth_k = 0)");
    }
    if (fid->done)
        row(rows, &n, "How much of the noise does the firmware add?",
            "%.2g of the radiometer noise (rms of fixed minus float after calibration and the foreground fit, "
            "worst input; a random error keeps this ratio at any length); fidelity margin at %g h: at most %.2g "
            "of the noise per channel, taking the whole difference as systematic",
            fid->noise_fraction, s->sens_hours, fid->margin_at_hours);
    else
        row(rows, &n, "How much of the noise does the firmware add?",
            "not measured: the scenario does not switch, so there is no calibrated spectrum");
    budget_rows(s, b, rows, &n);
    char why[1024] = "";
    const int fails = tl_fidelity_verdict(&r->fid, why, sizeof why);
    row(rows, &n, "Chain fidelity verdict", "%s%s%s", fails ? "FAIL: " : "PASS (margins, bias and chi-squared within limits)",
        fails ? why : "", "");
    const tl_stats *st = &r->fid.stats;
    uint64_t ev = 0;
    for (unsigned i = 0; i < TL_MAX_INPUTS; i++) {
        ev += st->adc_clips[i] + st->pfb_sat[i];
        for (unsigned g = 0; g <= TL_MAX_FFT_STAGES; g++)
            ev += st->fft_sat[i][g];
    }
    for (unsigned q = 0; q < 4u; q++)
        ev += st->acc_sat[q];
    row(rows, &n, "Overflow and saturation events", "%llu in %u spectra (ADC clips, filterbank, FFT, accumulators)",
        (unsigned long long)ev, r->fid.spectra);
    if (r->cal.done)
        row(rows, &n, "Calibration against the model", "chi-squared per channel %.3f (input 0) over %u channels",
            r->cal.chi2_red[0], r->cal.channels);
    const uint32_t kmid = (sens->lo + sens->hi) / 2u;
    row(rows, &n, "Radiometer noise (prediction)",
        "%.3g K per %.3g kHz channel at %.2f MHz after %g h; switch cycle kept: antenna %.3f, load %.3f, noise %.3f, "
        "discarded %.3f; filterbank factor r = %.4f; ADC rounding %.2g K",
        sens->sigma_k[kmid], sens->channel_hz / 1e3, kmid * sens->channel_hz / 1e6, sens->hours, sens->keep[0],
        sens->keep[1], sens->keep[2], sens->discard, sens->radiometer_factor, sens->t_quant_k);
    char title[256], intro[512];
    snprintf(title, sizeof title, "tidelock run: %s", s->name);
    snprintf(intro, sizeof intro, "%s. One integration of %u spectra simulated through the firmware; the "
                                  "sensitivity is predicted for %g h of co-added observing ([sensitivity] hours).",
             s->description, r->fid.spectra, s->sens_hours);
    char path[4400];
    snprintf(path, sizeof path, "%s/report.html", dir);
    if (tl_html_write(path, title, intro, rows, n, dir, figs, err, cap) != 0)
        goto out;
    if (out != NULL) {
        if (s->sky.trough_depth_k > 0.0)
            fprintf(out,
                    "sensitivity (%g h, duty %.3g): feature %.3g sigma (%s); 5 sigma after %.3g h = %.3g lunar nights\n",
                    sens->hours, sens->duty, sens->significance, detected ? "detected" : "not detected",
                    sens->hours_detect, sens->nights_detect);
        else
            fprintf(out, "sensitivity (%g h, duty %.3g): %.3g K per channel at %.2f MHz; the scenario has no feature\n",
                    sens->hours, sens->duty, sens->sigma_k[kmid], kmid * sens->channel_hz / 1e6);
        if (fid->done)
            fprintf(out, "firmware in the calibrated spectrum: %.2g of the noise (rms), at most %.2g at %g h\n",
                    fid->noise_fraction, fid->margin_at_hours, s->sens_hours);
        fprintf(out, "report: %s (%u figures, PNG and SVG beside it)\n", path, figs->n);
    }
    rc = 0;
out:
    free(sens);
    free(fid);
    free(b);
    free(figs);
    free(rows);
    return rc;
}

int tl_html_report_budget(const char *dir, const tl_scenario *s, const tl_budget *b, FILE *out, char *err,
                          size_t cap)
{
    tl_figures figs;
    memset(&figs, 0, sizeof figs);
    if (tl_figures_budget(dir, s, b, &figs, err, cap) != 0)
        return -1;
    tl_html_row rows[TL_HTML_ROWS_MAX];
    unsigned n = 0;
    budget_rows(s, b, rows, &n);
    row(rows, &n, "Data rate while observing", "%.1f bit/s (%.3f MB per hour; %.2f MB per lunar night)", b->rate_bps,
        b->per_hour / 1e6, b->per_night / 1e6);
    row(rows, &n, "Flight product", "%u spectra = %.1f s, %.0f octets on the link (frames %.1f%% efficient)",
        b->flight_spectra, b->product_s, b->link_octets, 100.0 * b->frame_efficiency);
    char title[256], path[4400];
    snprintf(title, sizeof title, "tidelock budget: %s", s->name);
    snprintf(path, sizeof path, "%s/budget.html", dir);
    if (tl_html_write(path, title, s->description, rows, n, dir, &figs, err, cap) != 0)
        return -1;
    if (out != NULL)
        fprintf(out, "report: %s\n", path);
    return 0;
}
