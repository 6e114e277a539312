/* sweep.c - a grid of configurations into one table (sweep.h). */
#include "sweep.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "atomic_file.h"
#include "budget.h"
#include "run.h"
#include "sensitivity.h"
#include "sha256.h"
#include "version.h"

/* ---- the columns ------------------------------------------------------------
 * A column is a row of this table and a line in fill_row below. Columns
 * other work adds later (acquisition duty cycle, instructions per sample,
 * detection significance) go here the same way. */

typedef struct point_ctx {
    const tl_scenario *s;
    const tl_run_result *r;
    const tl_budget *b;
    double sigma; /* detection significance (sensitivity.h), nan without a feature */
} point_ctx;

static const tl_sweep_column columns[] = {
    { "margin_max", "noise units", "max over products and band channels of |d| sqrt(M) at the run's length", 'g' },
    { "margin_ext_max", "noise units", "the same extrapolated to [fidelity] extrapolate_to spectra (nan when 0)",
      'g' },
    { "bias_max_abs", "relative", "max over products of |band-mean bias d|", 'g' },
    { "bias_se_max", "relative", "max over products of the bias' standard error", 'g' },
    { "chi2_z_max_abs", "sigma", "max over products of |chi-squared z| of the per-channel errors", 'g' },
    { "fidelity_failures", "checks", "checks of the fidelity verdict that failed (0: PASS)", 'u' },
    { "sqnr_db", "dB", "input 0: band mean power over the predicted round-off power", 'g' },
    { "adc_clips", "samples", "ADC samples at a rail, all inputs", 'u' },
    { "pfb_saturations", "values", "filterbank outputs saturated, all inputs", 'u' },
    { "fft_saturations", "values", "FFT values saturated, all stages and inputs", 'u' },
    { "acc_saturations", "channels", "accumulator sums saturated (auto0, auto1, cross re, cross im)", 'u' },
    { "saturated_channels", "channels", "channels with any saturation flag", 'u' },
    { "det_shift", "bits", "detection shift as resolved", 'u' },
    { "product_octets", "octets", "the simulated integration's space packets (science, housekeeping, kurtosis)",
      'u' },
    { "compression", "ratio", "raw 64-bit sums over science packet octets, simulated integration", 'g' },
    { "flight_compression", "ratio", "the same for the flight-length product of the budget", 'g' },
    { "downlink_mb_per_day", "MB", "peak volume per Earth day on the link (budget)", 'g' },
    { "link_rate_bps", "bit/s", "link rate while observing (budget)", 'g' },
    { "storage_mb", "MB", "storage needed between relay passes (budget)", 'g' },
    { "allocation_margin", "fraction", "(allocation - need) / allocation per Earth day (budget)", 'g' },
    { "budget_closed", "flag", "1 when every budget margin is >= 0", 'u' },
    { "clock_mhz", "MHz", "processor clock ([processor])", 'g' },
    { "instructions_per_sample", "instructions", "per sample instant, all stages and inputs ([processor])", 'g' },
    { "processing_load", "ratio", "cycles per second needed over the clock (budget)", 'g' },
    { "duty_cycle", "fraction", "samples the processor keeps up with, closed form of the acquisition model", 'g' },
    { "duty_cycle_run", "fraction", "blocks processed in the run's model pass (nan when [processor] model = false)",
      'g' },
    { "detection_sigma", "sigma", "the feature's detection significance after [sensitivity] hours (nan without one)",
      'g' },
};
#define NCOLUMNS (sizeof columns / sizeof columns[0])
_Static_assert(NCOLUMNS <= TL_SWEEP_MAX_COLUMNS, "raise TL_SWEEP_MAX_COLUMNS");

const tl_sweep_column *tl_sweep_columns(uint32_t *n)
{
    *n = (uint32_t)NCOLUMNS;
    return columns;
}

static double max_metric(const tl_fid_result *f, int which)
{
    double m = NAN;
    for (int q = 0; q < TL_FID_PRODUCTS; q++) {
        const tl_fid_metrics *x = &f->main[q];
        if (!x->present)
            continue;
        const double v = which == 0 ? x->margin : which == 1 ? fabs(x->bias) : which == 2 ? x->bias_se : fabs(x->chi2_z);
        if (isnan(m) || v > m)
            m = v;
    }
    return m;
}

static double ratio(uint64_t a, uint64_t b)
{
    return b ? (double)a / (double)b : NAN;
}

/* One value per column, in the order of columns[]. */
static void fill_row(const point_ctx *c, double *v)
{
    const tl_fid_result *f = &c->r->fid;
    const tl_stats *st = &f->stats;
    const tl_dl_result *dl = &c->r->dl;
    double ext = NAN, adc = 0, pfb = 0, fft = 0, acc = 0;
    for (int q = 0; q < TL_FID_PRODUCTS && f->flight_spectra; q++)
        if (f->flight[q].present && (isnan(ext) || f->margin_ext[q] > ext))
            ext = f->margin_ext[q];
    for (uint32_t i = 0; i < c->s->cfg.inputs; i++) {
        adc += st->adc_clips[i];
        pfb += st->pfb_sat[i];
        for (uint32_t k = 0; k <= TL_MAX_FFT_STAGES; k++)
            fft += st->fft_sat[i][k];
    }
    for (int i = 0; i < 4; i++)
        acc += st->acc_sat[i];
    unsigned n = 0;
    v[n++] = max_metric(f, 0);
    v[n++] = ext;
    v[n++] = max_metric(f, 1);
    v[n++] = max_metric(f, 2);
    v[n++] = max_metric(f, 3);
    v[n++] = tl_fidelity_verdict(f, NULL, 0);
    v[n++] = f->noise_pred_lsb2 > 0.0 ? 10.0 * log10(f->mean_power_lsb2[0] / f->noise_pred_lsb2) : NAN;
    v[n++] = adc;
    v[n++] = pfb;
    v[n++] = fft;
    v[n++] = acc;
    v[n++] = f->sat_flags;
    v[n++] = f->product.det_shift;
    v[n++] = (double)(dl->octets_science + dl->octets_hk + dl->octets_sk);
    v[n++] = ratio(dl->octets_raw, dl->octets_science);
    v[n++] = ratio(c->b->flight.octets_raw, c->b->flight.octets_science);
    v[n++] = c->b->peak_per_earth_day / 1e6;
    v[n++] = c->b->rate_bps;
    v[n++] = c->b->storage_needed / 1e6;
    v[n++] = c->b->margin_allocation;
    v[n++] = c->b->closed;
    v[n++] = c->s->proc_clock_hz / 1e6;
    v[n++] = c->b->ips_total;
    v[n++] = c->b->load;
    v[n++] = tl_acq_scenario_duty(c->s);
    v[n++] = c->r->acq.done ? c->r->acq.experienced_duty : NAN;
    v[n++] = c->sigma;
    if (n != NCOLUMNS)
        abort(); /* a column without its line here: a programming error */
}

/* ---- the plan ---------------------------------------------------------------- */

/* Printable ASCII only (0x20 .. 0x7E): what a table cell, a header and a
 * one-line message can hold. */
static int printable(const char *s)
{
    for (; *s; s++)
        if ((unsigned char)*s < 0x20u || (unsigned char)*s > 0x7Eu)
            return 0;
    return 1;
}

void tl_sweep_plan_init(tl_sweep_plan *p, const tl_scenario *base, const char *origin)
{
    memset(p, 0, sizeof *p);
    p->base = *base;
    snprintf(p->origin, sizeof p->origin, "%s", origin);
}

int tl_sweep_add_axis(tl_sweep_plan *p, const char *arg, char *err, size_t cap)
{
    const char *eq = strchr(arg, '='), *dot = strchr(arg, '.');
    if (eq == NULL || dot == NULL || dot > eq || dot == arg || dot + 1 == eq) {
        snprintf(err, cap, "--vary '%s': must be section.key=value,value,... (e.g. instrument.channels=1024,2048)",
                 arg);
        return -1;
    }
    if (p->naxes >= TL_SWEEP_MAX_AXES) {
        snprintf(err, cap, "--vary '%s': at most %u --vary options", arg, TL_SWEEP_MAX_AXES);
        return -1;
    }
    tl_sweep_axis *a = &p->axis[p->naxes];
    memset(a, 0, sizeof *a);
    const size_t sl = (size_t)(dot - arg), kl = (size_t)(eq - dot - 1);
    if (sl >= sizeof a->section || kl >= sizeof a->key) {
        snprintf(err, cap, "--vary '%s': no such scenario key (see tidelock scenario --print)", arg);
        return -1;
    }
    memcpy(a->section, arg, sl);
    memcpy(a->key, dot + 1, kl);
    if (!printable(a->section) || !printable(a->key)) {
        snprintf(err, cap, "--vary: the key has a character outside printable ASCII");
        return -1;
    }
    /* the key must exist: set the base's own value on a copy */
    tl_scenario probe = p->base;
    char why[1024];
    char unknown[128];
    snprintf(unknown, sizeof unknown, "[%s] %s: unknown", a->section, a->key);
    if (tl_scenario_set(&probe, a->section, a->key, "", why, sizeof why) != 0 &&
        strncmp(why, unknown, strlen(unknown)) == 0) {
        snprintf(err, cap, "--vary %s.%s: %s", a->section, a->key, why);
        return -1;
    }
    for (uint32_t k = 0; k < p->naxes; k++)
        if (strcmp(p->axis[k].section, a->section) == 0 && strcmp(p->axis[k].key, a->key) == 0) {
            snprintf(err, cap, "--vary %s.%s: given twice (give all its values in one --vary)", a->section, a->key);
            return -1;
        }
    const char *v = eq + 1;
    for (;;) {
        const char *end = strchr(v, ',');
        const size_t n = end ? (size_t)(end - v) : strlen(v);
        if (n == 0 || n >= TL_SWEEP_VALUE_MAX) {
            snprintf(err, cap, "--vary %s.%s: value %u is %s (values: 1 to %u characters, separated by commas)",
                     a->section, a->key, a->n + 1u, n ? "too long" : "empty", TL_SWEEP_VALUE_MAX - 1u);
            return -1;
        }
        if (a->n >= TL_SWEEP_MAX_VALUES) {
            snprintf(err, cap, "--vary %s.%s: at most %u values", a->section, a->key, TL_SWEEP_MAX_VALUES);
            return -1;
        }
        memcpy(a->value[a->n], v, n);
        a->value[a->n][n] = '\0';
        if (!printable(a->value[a->n])) {
            snprintf(err, cap, "--vary %s.%s: value %u has a character outside printable ASCII", a->section, a->key,
                     a->n + 1u);
            return -1;
        }
        a->n++;
        if (end == NULL)
            break;
        v = end + 1;
    }
    p->naxes++;
    return 0;
}

/* The resolved text of s (tl_scenario_write), malloc'd. */
static char *scenario_text(const tl_scenario *s, size_t *len)
{
    char *buf = NULL;
    size_t n = 0;
    FILE *f = open_memstream(&buf, &n);
    if (f == NULL)
        return NULL;
    const int bad = tl_scenario_write(f, s) != 0;
    if (fclose(f) != 0 || bad) {
        free(buf);
        return NULL;
    }
    *len = n;
    return buf;
}

static void axis_values(const tl_sweep_plan *p, uint32_t index, uint32_t *vi)
{
    for (uint32_t a = p->naxes; a-- > 0;) {
        vi[a] = index % p->axis[a].n;
        index /= p->axis[a].n;
    }
}

/* Start a SHA-256 with `head` and then the base scenario's text: the point
 * seeds and the job digest both open this way. */
static int digest_start(tl_sha256 *h, const tl_sweep_plan *p, const char *head, size_t n, char *err, size_t cap)
{
    size_t len = 0;
    char *text = scenario_text(&p->base, &len);
    if (text == NULL) {
        snprintf(err, cap, "out of memory");
        return -1;
    }
    tl_sha256_init(h);
    tl_sha256_update(h, head, n);
    tl_sha256_update(h, text, len);
    free(text);
    return 0;
}

int tl_sweep_point(const tl_sweep_plan *p, uint32_t index, tl_scenario *s, char *err, size_t cap)
{
    uint32_t vi[TL_SWEEP_MAX_AXES] = { 0 };
    axis_values(p, index, vi);
    *s = p->base;
    char why[1024], where[320];
    snprintf(where, sizeof where, "%s (sweep point %u)", p->origin, index);
    for (uint32_t a = 0; a < p->naxes; a++)
        if (tl_scenario_set(s, p->axis[a].section, p->axis[a].key, p->axis[a].value[vi[a]], why, sizeof why) != 0) {
            snprintf(err, cap, "--vary %s.%s: %s", p->axis[a].section, p->axis[a].key, why);
            return -1;
        }
    if (tl_scenario_check(s, where, why, sizeof why) != 0) {
        size_t used = (size_t)snprintf(err, cap, "%s (with", why);
        for (uint32_t a = 0; a < p->naxes && used < cap; a++)
            used += (size_t)snprintf(err + used, cap - used, " %s.%s=%s", p->axis[a].section, p->axis[a].key,
                                     p->axis[a].value[vi[a]]);
        if (used < cap)
            snprintf(err + used, cap - used, ")");
        return -1;
    }
    tl_sha256 h;
    static const char tag[] = "tidelock sweep seed 1\n";
    if (digest_start(&h, p, tag, sizeof tag - 1u, err, cap) != 0)
        return -1;
    for (uint32_t a = 0; a < p->naxes; a++) {
        if (p->common_noise && (strcmp(p->axis[a].section, "sky") != 0 || strcmp(p->axis[a].key, "seed") != 0))
            continue;
        char line[256];
        const int n = snprintf(line, sizeof line, "%s.%s=%s\n", p->axis[a].section, p->axis[a].key,
                               p->axis[a].value[vi[a]]);
        tl_sha256_update(&h, line, (size_t)n);
    }
    uint8_t d[TL_SHA256_OCTETS];
    tl_sha256_final(&h, d);
    s->sky.seed = ((uint64_t)d[0] << 24) | ((uint64_t)d[1] << 16) | ((uint64_t)d[2] << 8) | d[3];
    return 0;
}

int tl_sweep_plan_check(tl_sweep_plan *p, char *err, size_t cap)
{
    uint64_t points = 1;
    for (uint32_t a = 0; a < p->naxes; a++) {
        points *= p->axis[a].n;
        if (points > TL_SWEEP_MAX_POINTS) {
            snprintf(err, cap, "--vary: the grid has more than %u points (at %s.%s)", TL_SWEEP_MAX_POINTS,
                     p->axis[a].section, p->axis[a].key);
            return -1;
        }
    }
    p->points = (uint32_t)points;
    tl_scenario s;
    for (uint32_t i = 0; i < p->points; i++)
        if (tl_sweep_point(p, i, &s, err, cap) != 0)
            return -1;
    tl_sha256 h;
    char line[512];
    int n = snprintf(line, sizeof line, "tidelock sweep job 1\ntool %s\narith %u\nnoise %s\n", TL_TOOL_VERSION,
                     (unsigned)TL_ARITH_VERSION, p->common_noise ? "common" : "per point");
    if (digest_start(&h, p, line, (size_t)n, err, cap) != 0)
        return -1;
    for (uint32_t a = 0; a < p->naxes; a++) {
        n = snprintf(line, sizeof line, "axis %s.%s %u\n", p->axis[a].section, p->axis[a].key, p->axis[a].n);
        tl_sha256_update(&h, line, (size_t)n);
        for (uint32_t k = 0; k < p->axis[a].n; k++) {
            tl_sha256_update(&h, p->axis[a].value[k], strlen(p->axis[a].value[k]));
            tl_sha256_update(&h, "\n", 1);
        }
    }
    tl_sha256_final(&h, p->job);
    return 0;
}

/* ---- running a point ------------------------------------------------------------ */

int tl_sweep_run_point(const tl_sweep_plan *p, uint32_t index, tl_sweep_row *row, char *err, size_t cap)
{
    tl_scenario *s = malloc(sizeof *s);
    tl_run_result *r = calloc(1, sizeof *r);
    tl_budget *b = calloc(1, sizeof *b);
    int rc = -1;
    if (s == NULL || r == NULL || b == NULL) {
        snprintf(err, cap, "out of memory");
        goto out;
    }
    if (tl_sweep_point(p, index, s, err, cap) != 0)
        goto out;
    const tl_status st = tl_run_scenario(s, r, NULL, NULL);
    if (st != TL_OK) {
        snprintf(err, cap, "sweep point %u: %s (%s)", index, tl_status_text(st), tl_status_name(st));
        goto out;
    }
    char why[1024];
    if (tl_budget_compute(s, b, why, sizeof why) != 0) {
        snprintf(err, cap, "sweep point %u: %s", index, why);
        goto out;
    }
    double sigma = NAN;
    if (s->sky.trough_depth_k > 0.0) {
        tl_sensitivity *sens = malloc(sizeof *sens);
        const double duty = tl_acq_scenario_duty(s);
        if (duty <= 0.0)
            snprintf(why, sizeof why, "[processor] values out of range for the acquisition model");
        if (sens == NULL || duty <= 0.0 ||
            tl_sensitivity_compute(s, s->sens_hours, s->sens_duty * duty, sens, why, sizeof why) != 0) {
            snprintf(err, cap, "sweep point %u: %s", index, sens == NULL ? "out of memory" : why);
            free(sens);
            goto out;
        }
        sigma = sens->significance;
        free(sens);
    }
    memset(row, 0, sizeof *row);
    row->index = index;
    row->seed = (uint32_t)s->sky.seed;
    const point_ctx c = { s, r, b, sigma };
    fill_row(&c, row->v);
    rc = 0;
out:
    if (r != NULL)
        tl_run_release(r);
    free(r);
    free(b);
    free(s);
    return rc;
}

/* ---- the tables ------------------------------------------------------------------ */

static void format_cell(char kind, double v, char *out, size_t cap)
{
    if (isnan(v))
        snprintf(out, cap, "nan");
    else if (isinf(v))
        snprintf(out, cap, v > 0 ? "inf" : "-inf");
    else if (kind == 'u')
        snprintf(out, cap, "%.0f", v);
    else
        snprintf(out, cap, "%.10g", v);
}

typedef struct table_ctx {
    const tl_sweep_plan *p;
    const tl_sweep_row *rows;
} table_ctx;

static void csv_text(FILE *f, const char *t)
{
    if (strpbrk(t, ",\"\n") == NULL) {
        fputs(t, f);
        return;
    }
    fputc('"', f);
    for (; *t; t++) {
        if (*t == '"')
            fputc('"', f);
        fputc(*t, f);
    }
    fputc('"', f);
}

static int write_csv(FILE *f, void *ctx)
{
    const table_ctx *c = ctx;
    const tl_sweep_plan *p = c->p;
    fputs("point", f);
    for (uint32_t a = 0; a < p->naxes; a++)
        fprintf(f, ",%s.%s", p->axis[a].section, p->axis[a].key);
    fputs(",seed", f);
    for (size_t k = 0; k < NCOLUMNS; k++)
        fprintf(f, ",%s", columns[k].name);
    fputc('\n', f);
    for (uint32_t i = 0; i < p->points; i++) {
        const tl_sweep_row *r = &c->rows[i];
        uint32_t vi[TL_SWEEP_MAX_AXES];
        axis_values(p, r->index, vi);
        fprintf(f, "%u", r->index);
        for (uint32_t a = 0; a < p->naxes; a++) {
            fputc(',', f);
            csv_text(f, p->axis[a].value[vi[a]]);
        }
        fprintf(f, ",%u", r->seed);
        for (size_t k = 0; k < NCOLUMNS; k++) {
            char cell[64];
            format_cell(columns[k].kind, r->v[k], cell, sizeof cell);
            fprintf(f, ",%s", cell);
        }
        fputc('\n', f);
    }
    return ferror(f) ? -1 : 0;
}

static json_t *cell_json(char kind, double v)
{
    if (!isfinite(v))
        return json_null();
    if (kind == 'u' && fabs(v) < 9007199254740992.0)
        return json_integer((json_int_t)v);
    return json_real(v);
}

static int write_json(FILE *f, void *ctx)
{
    const table_ctx *c = ctx;
    const tl_sweep_plan *p = c->p;
    char job[65];
    for (int k = 0; k < 32; k++)
        snprintf(job + 2 * k, 3, "%02x", p->job[k]);
    json_t *axes = json_array(), *cols = json_array(), *pts = json_array();
    for (uint32_t a = 0; a < p->naxes; a++) {
        json_t *vals = json_array();
        for (uint32_t k = 0; k < p->axis[a].n; k++)
            json_array_append_new(vals, json_string(p->axis[a].value[k]));
        char name[96];
        snprintf(name, sizeof name, "%s.%s", p->axis[a].section, p->axis[a].key);
        json_array_append_new(axes, json_pack("{s:s, s:o}", "key", name, "values", vals));
    }
    for (size_t k = 0; k < NCOLUMNS; k++)
        json_array_append_new(cols, json_pack("{s:s, s:s, s:s}", "name", columns[k].name, "unit", columns[k].unit,
                                              "meaning", columns[k].help));
    for (uint32_t i = 0; i < p->points; i++) {
        const tl_sweep_row *r = &c->rows[i];
        uint32_t vi[TL_SWEEP_MAX_AXES];
        axis_values(p, r->index, vi);
        json_t *o = json_object(), *params = json_object();
        json_object_set_new(o, "point", json_integer(r->index));
        for (uint32_t a = 0; a < p->naxes; a++) {
            char name[96];
            snprintf(name, sizeof name, "%s.%s", p->axis[a].section, p->axis[a].key);
            json_object_set_new(params, name, json_string(p->axis[a].value[vi[a]]));
        }
        json_object_set_new(o, "params", params);
        json_object_set_new(o, "seed", json_integer(r->seed));
        for (size_t k = 0; k < NCOLUMNS; k++)
            json_object_set_new(o, columns[k].name, cell_json(columns[k].kind, r->v[k]));
        json_array_append_new(pts, o);
    }
    json_t *root = json_pack("{s:s, s:s, s:s, s:s, s:I, s:o, s:o, s:o}", "scenario", p->base.name, "job", job,
                             "order", "first axis slowest, last axis fastest", "seeds",
                             p->common_noise ? "common: from the scenario and sky.seed only"
                                             : "per point: from the scenario and the point's values",
                             "points", (json_int_t)p->points, "axes", axes,
                             "columns", cols, "rows", pts);
    if (root == NULL)
        return -1;
    const int rc = json_dumpf(root, f, JSON_INDENT(1) | JSON_PRESERVE_ORDER | JSON_REAL_PRECISION(10));
    json_decref(root);
    if (rc != 0 || fputc('\n', f) == EOF)
        return -1;
    return 0;
}

int tl_sweep_write_tables(const char *dir, const tl_sweep_plan *p, const tl_sweep_row *rows, char *err, size_t cap)
{
    table_ctx c = { p, rows };
    char path[4200];
    snprintf(path, sizeof path, "%s/sweep.csv", dir);
    if (tl_atomic_write(path, write_csv, &c, err, cap) != 0)
        return -1;
    snprintf(path, sizeof path, "%s/sweep.json", dir);
    return tl_atomic_write(path, write_json, &c, err, cap);
}

/* ---- shards --------------------------------------------------------------------- */
/* Payload (big-endian; text = u32 length + octets):
 *   text scenario name, u32 common noise (0 or 1)
 *   u32 columns C, then C texts: the column names of the build that ran it
 *   u32 axes A, then per axis: text section, text key, u32 values V, V texts
 *   u32 points of the whole grid
 *   u32 rows R, then per row: u32 point, u32 seed, C x f64 (IEEE 754 bits) */

int tl_sweep_shard_payload(const tl_sweep_plan *p, const tl_sweep_row *rows, uint32_t nrows, tl_bytebuf *out)
{
    tl_shard_put_text(out, p->base.name);
    tl_shard_put_u32(out, p->common_noise);
    tl_shard_put_u32(out, (uint32_t)NCOLUMNS);
    for (size_t k = 0; k < NCOLUMNS; k++)
        tl_shard_put_text(out, columns[k].name);
    tl_shard_put_u32(out, p->naxes);
    for (uint32_t a = 0; a < p->naxes; a++) {
        tl_shard_put_text(out, p->axis[a].section);
        tl_shard_put_text(out, p->axis[a].key);
        tl_shard_put_u32(out, p->axis[a].n);
        for (uint32_t k = 0; k < p->axis[a].n; k++)
            tl_shard_put_text(out, p->axis[a].value[k]);
    }
    tl_shard_put_u32(out, p->points);
    tl_shard_put_u32(out, nrows);
    for (uint32_t i = 0; i < nrows; i++) {
        tl_shard_put_u32(out, rows[i].index);
        tl_shard_put_u32(out, rows[i].seed);
        for (size_t k = 0; k < NCOLUMNS; k++)
            tl_shard_put_f64(out, rows[i].v[k]);
    }
    return out->failed ? -1 : 0;
}

/* Read a payload's plan into *p (name, axes, points, job from the header). */
static int read_plan(const char *path, tl_shard_cursor *c, tl_sweep_plan *p, char *err, size_t cap)
{
    memset(p, 0, sizeof *p);
    tl_shard_get_text(c, p->base.name, sizeof p->base.name);
    p->common_noise = tl_shard_get_u32(c);
    if (!c->failed && p->common_noise > 1u) {
        snprintf(err, cap, "%s: common noise flag = %u: must be 0 or 1", path, p->common_noise);
        return -1;
    }
    const uint32_t ncol = tl_shard_get_u32(c);
    if (!c->failed && ncol != NCOLUMNS) {
        snprintf(err, cap, "%s: columns = %u: this tidelock's table has %u; merge with the build that ran the sweep",
                 path, ncol, (unsigned)NCOLUMNS);
        return -1;
    }
    for (uint32_t k = 0; k < ncol && !c->failed; k++) {
        char name[128];
        tl_shard_get_text(c, name, sizeof name);
        if (!c->failed && !printable(name)) {
            snprintf(err, cap, "%s: column %u: its name has a character outside printable ASCII", path, k);
            return -1;
        }
        if (!c->failed && strcmp(name, columns[k].name) != 0) {
            snprintf(err, cap, "%s: column %u = '%s': this tidelock's is '%s'; merge with the build that ran the sweep",
                     path, k, name, columns[k].name);
            return -1;
        }
    }
    p->naxes = tl_shard_get_u32(c);
    if (!c->failed && p->naxes > TL_SWEEP_MAX_AXES) {
        snprintf(err, cap, "%s: axes = %u: must be at most %u", path, p->naxes, TL_SWEEP_MAX_AXES);
        return -1;
    }
    uint64_t points = 1;
    for (uint32_t a = 0; a < p->naxes && !c->failed; a++) {
        tl_sweep_axis *x = &p->axis[a];
        tl_shard_get_text(c, x->section, sizeof x->section);
        tl_shard_get_text(c, x->key, sizeof x->key);
        x->n = tl_shard_get_u32(c);
        if (!c->failed && (x->n < 1u || x->n > TL_SWEEP_MAX_VALUES)) {
            snprintf(err, cap, "%s: axis %u values = %u: must be 1 to %u", path, a, x->n, TL_SWEEP_MAX_VALUES);
            return -1;
        }
        for (uint32_t k = 0; k < x->n; k++)
            tl_shard_get_text(c, x->value[k], sizeof x->value[k]);
        points *= x->n;
    }
    p->points = tl_shard_get_u32(c);
    if (c->failed) {
        snprintf(err, cap, "%s: payload: the sweep plan is cut short or malformed", path);
        return -1;
    }
    int text_ok = printable(p->base.name);
    for (uint32_t a = 0; a < p->naxes; a++) {
        text_ok &= printable(p->axis[a].section) && printable(p->axis[a].key) && p->axis[a].section[0] &&
                   p->axis[a].key[0] && strpbrk(p->axis[a].section, ",.\"") == NULL &&
                   strpbrk(p->axis[a].key, ",.\"") == NULL;
        for (uint32_t k = 0; k < p->axis[a].n; k++)
            text_ok &= printable(p->axis[a].value[k]) && p->axis[a].value[k][0] != '\0';
    }
    if (!text_ok) {
        snprintf(err, cap, "%s: payload: a name, key or value is empty or outside printable ASCII", path);
        return -1;
    }
    if (points != p->points || p->points > TL_SWEEP_MAX_POINTS) {
        snprintf(err, cap, "%s: points = %u: the axes give %llu (at most %u)", path, p->points,
                 (unsigned long long)points, TL_SWEEP_MAX_POINTS);
        return -1;
    }
    return 0;
}

int tl_sweep_merge(const char *const *paths, const tl_shard *sh, size_t nfiles, const char *dir, char *err,
                   size_t cap)
{
    tl_sweep_plan *p = malloc(sizeof *p), *q = malloc(sizeof *q);
    tl_sweep_row *rows = NULL;
    uint8_t *have = NULL;
    int rc = -1;
    if (p == NULL || q == NULL || nfiles == 0u) {
        snprintf(err, cap, nfiles == 0u ? "no shard to merge" : "out of memory");
        goto out;
    }
    for (size_t f = 0; f < nfiles; f++) {
        tl_shard_cursor c = { sh[f].payload, sh[f].len, 0, 0 };
        if (read_plan(paths[f], &c, f == 0 ? p : q, err, cap) != 0)
            goto out;
        if (f == 0) {
            memcpy(p->job, sh[0].job, sizeof p->job);
            rows = calloc(p->points, sizeof *rows);
            have = calloc(p->points, 1);
            if (rows == NULL || have == NULL) {
                snprintf(err, cap, "out of memory");
                goto out;
            }
        } else if (q->naxes != p->naxes || q->points != p->points || q->common_noise != p->common_noise || strcmp(q->base.name, p->base.name) != 0 ||
                   memcmp(q->axis, p->axis, sizeof q->axis) != 0) {
            snprintf(err, cap, "%s: its sweep grid differs from %s's", paths[f], paths[0]);
            goto out;
        }
        const uint32_t nrows = tl_shard_get_u32(&c);
        for (uint32_t r = 0; r < nrows && !c.failed; r++) {
            tl_sweep_row row;
            memset(&row, 0, sizeof row);
            row.index = tl_shard_get_u32(&c);
            row.seed = tl_shard_get_u32(&c);
            for (size_t k = 0; k < NCOLUMNS; k++)
                row.v[k] = tl_shard_get_f64(&c);
            if (c.failed)
                break;
            if (row.index >= p->points || row.index % sh[f].count != sh[f].index) {
                snprintf(err, cap, "%s: row for point %u: shard %u of %u runs the points p with p mod %u = %u", paths[f],
                         row.index, sh[f].index, sh[f].count, sh[f].count, sh[f].index);
                goto out;
            }
            if (have[row.index]) {
                snprintf(err, cap, "%s: point %u given twice", paths[f], row.index);
                goto out;
            }
            have[row.index] = 1;
            rows[row.index] = row;
        }
        if (c.failed || c.at != c.len) {
            snprintf(err, cap, "%s: payload: the rows are cut short or followed by extra octets", paths[f]);
            goto out;
        }
    }
    for (uint32_t i = 0; i < p->points; i++)
        if (!have[i]) {
            snprintf(err, cap, "point %u of %u is in no shard (shard %u of %u must hold it)", i, p->points,
                     i % sh[0].count, sh[0].count);
            goto out;
        }
    rc = tl_sweep_write_tables(dir, p, rows, err, cap);
out:
    free(p);
    free(q);
    free(rows);
    free(have);
    return rc;
}
