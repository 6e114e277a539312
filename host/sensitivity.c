/* sensitivity.c - radiometer noise, feature significance and the firmware's
 * structure in calibrated spectra (see sensitivity.h). */
#include "sensitivity.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "budget.h"
#include "calibrate.h"
#include "sky_model.h"
#include "taps_design.h"
#include "tl_switch.h"

#define MAXB 12u /* foreground order 8 + 1, plus the feature */

/* Invert the symmetric m x m matrix a (Gauss-Jordan with partial pivoting)
 * into inv. Returns 0, or -1 when singular. */
static int invert(double a[MAXB][MAXB], unsigned m, double inv[MAXB][MAXB])
{
    double aug[MAXB][2 * MAXB];
    for (unsigned i = 0; i < m; i++)
        for (unsigned j = 0; j < m; j++) {
            aug[i][j] = a[i][j];
            aug[i][m + j] = i == j ? 1.0 : 0.0;
        }
    for (unsigned c = 0; c < m; c++) {
        unsigned piv = c;
        for (unsigned r = c + 1u; r < m; r++)
            if (fabs(aug[r][c]) > fabs(aug[piv][c]))
                piv = r;
        if (!(fabs(aug[piv][c]) > 0.0))
            return -1;
        for (unsigned j = 0; j < 2u * m; j++) {
            const double t = aug[c][j];
            aug[c][j] = aug[piv][j];
            aug[piv][j] = t;
        }
        const double d = aug[c][c];
        for (unsigned j = 0; j < 2u * m; j++)
            aug[c][j] /= d;
        for (unsigned r = 0; r < m; r++) {
            if (r == c)
                continue;
            const double f = aug[r][c];
            for (unsigned j = 0; j < 2u * m; j++)
                aug[r][j] -= f * aug[c][j];
        }
    }
    for (unsigned i = 0; i < m; i++)
        for (unsigned j = 0; j < m; j++)
            inv[i][j] = aug[i][m + j];
    return 0;
}

static void basis(double f, double f0, unsigned order, double *b)
{
    const double lf = log(f / f0), pl = pow(f / f0, -2.5);
    double lp = 1.0;
    for (unsigned j = 0; j <= order; j++) {
        b[j] = pl * lp;
        lp *= lf;
    }
}

/* Weighted projection residual: y - X (X^T W X)^-1 X^T W y over the
 * foreground basis. */
int tl_sensitivity_foreground_resid(const double *f_hz, const double *y, const double *w, uint32_t n, double f0_hz,
                                    unsigned order, double *resid)
{
    const unsigned m = order + 1u;
    if (m + 1u > MAXB || n < m)
        return -1;
    double A[MAXB][MAXB] = { { 0 } }, inv[MAXB][MAXB], bv[MAXB] = { 0 }, x[MAXB] = { 0 }, b[MAXB];
    for (uint32_t i = 0; i < n; i++) {
        basis(f_hz[i], f0_hz, order, b);
        for (unsigned r = 0; r < m; r++) {
            bv[r] += w[i] * b[r] * y[i];
            for (unsigned q = 0; q < m; q++)
                A[r][q] += w[i] * b[r] * b[q];
        }
    }
    if (invert(A, m, inv) != 0)
        return -1;
    for (unsigned r = 0; r < m; r++)
        for (unsigned q = 0; q < m; q++)
            x[r] += inv[r][q] * bv[q];
    for (uint32_t i = 0; i < n; i++) {
        basis(f_hz[i], f0_hz, order, b);
        double model = 0.0;
        for (unsigned r = 0; r < m; r++)
            model += x[r] * b[r];
        resid[i] = y[i] - model;
    }
    return 0;
}

uint64_t tl_sensitivity_seed(uint64_t scenario_seed, uint32_t realisation)
{
    /* splitmix64 finaliser (Steele, Lea and Flood, OOPSLA 2014) of the pair */
    uint64_t z = scenario_seed + 0x9E3779B97F4A7C15ull * ((uint64_t)realisation + 1u);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

/* Fractions of the switch cycle the firmware keeps per state, from its own
 * switch logic walked over the second cycle (the first may start with a
 * change the later ones do not have). */
static int keep_fractions(const tl_config *c, double keep[TL_STATES], double *discard)
{
    for (unsigned i = 0; i < TL_STATES; i++)
        keep[i] = 0.0;
    if (c->switch_steps == 0u) {
        keep[0] = 1.0;
        *discard = 0.0;
        return 0;
    }
    tl_switch sw;
    if (tl_switch_init(&sw, c->switch_steps, c->switch_state, c->switch_dwell, c->switch_discard) != TL_OK)
        return -1;
    uint64_t cycle = 0;
    for (uint32_t i = 0; i < c->switch_steps; i++)
        cycle += c->switch_dwell[i];
    uint64_t kept[TL_STATES] = { 0 }, dropped = 0;
    for (uint64_t n = 0; n < 2u * cycle; n++) {
        const uint32_t st = tl_switch_state(&sw);
        const int k = tl_switch_keep(&sw);
        if (n >= cycle) {
            if (k && st < TL_STATES)
                kept[st]++;
            else
                dropped++;
        }
        tl_switch_advance(&sw);
    }
    for (unsigned i = 0; i < TL_STATES; i++)
        keep[i] = (double)kept[i] / (double)cycle;
    *discard = (double)dropped / (double)cycle;
    return 0;
}

/* ADC rounding noise in kelvin at the ADC: Delta^2/12 codes^2 white over
 * 0 .. fs/2, against the generator's level (antenna-state variance
 * sigma^2 codes^2 = psd_per_kelvin x integral of T_0(f) df). */
static double quant_kelvin(const tl_scenario *s)
{
    const double fs = s->sky.sample_rate_hz, half = fs / 2.0;
    const unsigned grid = 65536u;
    double integral = 0.0;
    for (unsigned i = 0; i < grid; i++) {
        const double f = (i + 0.5) * half / grid;
        integral += tl_sky_temperature_state(&s->sky, 0, f) * half / grid;
    }
    const double rms = s->sky.rms_fs * pow(10.0, s->drive_db / 20.0) * ldexp(1.0, (int)s->cfg.adc_bits - 1);
    const double psd_per_k = rms * rms / integral;  /* codes^2 / Hz / K */
    return (1.0 / 12.0) / half / psd_per_k;
}

int tl_sensitivity_compute(const tl_scenario *s, double hours, double duty, tl_sensitivity *o, char *err, size_t cap)
{
    memset(o, 0, sizeof *o);
    if (!(hours > 0.0) || !(duty > 0.0) || duty > 1.0) {
        snprintf(err, cap, "sensitivity: hours = %g must be > 0 and duty cycle = %g in (0, 1]", hours, duty);
        return -1;
    }
    tl_scenario_band(s, &o->lo, &o->hi);
    o->channel_hz = tl_scenario_channel_hz(s);
    o->hours = hours;
    o->duty = duty;
    if (keep_fractions(&s->cfg, o->keep, &o->discard) != 0) {
        snprintf(err, cap, "sensitivity: [switching] sequence does not start in the firmware");
        return -1;
    }
    const int sw = s->cfg.switch_steps > 0u;
    const double total_spectra = duty * hours * 3600.0 * o->channel_hz; /* one spectrum per points / fs s */
    for (unsigned i = 0; i < TL_STATES; i++)
        o->spectra[i] = total_spectra * o->keep[i];
    tl_taps *t = malloc(sizeof *t);
    if (t == NULL || tl_taps_design(s->window, s->cfg.taps, s->cfg.points, t, NULL) != 0) {
        free(t);
        snprintf(err, cap, "sensitivity: cannot design the filterbank table");
        return -1;
    }
    o->radiometer_factor = tl_radiometer_factor(t, o->spectra[0] > 4e9 ? 4000000000u : (uint32_t)o->spectra[0] + 1u);
    free(t);
    o->t_quant_k = quant_kelvin(s);
    const double r = o->radiometer_factor, tns = s->sky.noise_excess_k;
    const unsigned order = s->fit_order;
    static double fk[TL_MAX_CHANNELS];
    uint32_t n = 0;
    for (uint32_t k = o->lo; k < o->hi; k++) {
        const double f = k * o->channel_hz;
        for (unsigned st = 0; st < TL_STATES; st++)
            o->t_sys_k[st][k] = tl_sky_temperature_state(&s->sky, st, f) + o->t_quant_k;
        const double a = o->t_sys_k[0][k], l = o->t_sys_k[1][k], h = o->t_sys_k[2][k];
        if (sw) {
            const double d = h - l;
            const double sa = r * a / sqrt(o->spectra[0]), sl = r * l / sqrt(o->spectra[1]),
                         sh = r * h / sqrt(o->spectra[2]);
            const double ga = tns / d, gl = tns * (a - h) / (d * d), gh = -tns * (a - l) / (d * d);
            o->sigma_k[k] = sqrt(ga * ga * sa * sa + gl * gl * sl * sl + gh * gh * sh * sh);
        } else {
            const double g = tl_sky_bandpass(&s->sky, f);
            o->sigma_k[k] = g > 0.0 ? r * a / sqrt(o->spectra[0]) / g : INFINITY;
        }
        fk[n++] = f;
    }
    /* the feature: T_ant with the trough minus T_ant without it */
    tl_sky_params flat = s->sky;
    flat.trough_depth_k = 0.0;
    for (uint32_t k = o->lo; k < o->hi; k++) {
        const double f = k * o->channel_hz;
        o->feature_k[k] = tl_sky_antenna_k(&s->sky, f) - tl_sky_antenna_k(&flat, f);
    }
    o->depth_k = s->sky.trough_depth_k;
    const double f0 = 0.5 * (fk[0] + fk[n - 1u]);
    /* generalized least squares: foreground columns and the feature template
     * (unit depth), weights 1 / sigma^2 */
    const unsigned m = order + 2u;
    double A[MAXB][MAXB] = { { 0 } }, inv[MAXB][MAXB], b[MAXB];
    static double w[TL_MAX_CHANNELS], y[TL_MAX_CHANNELS], res[TL_MAX_CHANNELS];
    for (uint32_t i = 0; i < n; i++) {
        const uint32_t k = o->lo + i;
        w[i] = 1.0 / (o->sigma_k[k] * o->sigma_k[k]);
        y[i] = o->feature_k[k];
        basis(fk[i], f0, order, b);
        b[m - 1u] = o->depth_k > 0.0 ? y[i] / o->depth_k : 0.0;
        for (unsigned p = 0; p < m; p++)
            for (unsigned q = 0; q < m; q++)
                A[p][q] += w[i] * b[p] * b[q];
    }
    if (tl_sensitivity_foreground_resid(fk, y, w, n, f0, order, res) != 0) {
        snprintf(err, cap, "sensitivity: the foreground fit of order %u is singular over %u channels", order, n);
        return -1;
    }
    for (uint32_t i = 0; i < n; i++) {
        const uint32_t k = o->lo + i;
        o->perp_k[k] = res[i];
        o->snr[k] = res[i] / o->sigma_k[k];
    }
    if (o->depth_k > 0.0 && m >= 1u && invert(A, m, inv) == 0 && inv[m - 1u][m - 1u] > 0.0) {
        o->amp_sigma_k = sqrt(inv[m - 1u][m - 1u]);
        o->significance = o->depth_k / o->amp_sigma_k;
        o->hours_detect = hours * pow(TL_SENS_DETECT_SIGMA / o->significance, 2.0);
    } else {
        o->amp_sigma_k = INFINITY;
        o->significance = 0.0;
        o->hours_detect = INFINITY;
    }
    o->night_hours = TL_SYNODIC_MONTH_DAYS / 2.0 * 24.0 * s->bud_night_fraction;
    o->nights_detect = o->night_hours > 0.0 ? o->hours_detect / o->night_hours : INFINITY;
    return 0;
}

/* Two-point calibration of one channel from mean powers (calibrate.h). */
static double cal_point(double a, double l, double h, double t_load, double t_ns)
{
    return t_load + t_ns * (a - l) / (h - l);
}

int tl_sensitivity_fidelity(const tl_scenario *s, const tl_run_result *r, const tl_sensitivity *sens,
                            tl_sens_fidelity *o)
{
    memset(o, 0, sizeof *o);
    const tl_fid_result *fr = &r->fid;
    if (!r->cal.done || fr->ref_spectra[0] == 0u || fr->ref_spectra[1] == 0u || fr->ref_spectra[2] == 0u)
        return -1;
    const uint32_t lo = sens->lo, hi = sens->hi;
    const double df = sens->channel_hz, t_load = s->sky.load_k, t_ns = s->sky.noise_excess_k;
    static double fk[TL_MAX_CHANNELS], y[TL_MAX_CHANNELS], w[TL_MAX_CHANNELS], res[TL_MAX_CHANNELS];
    static uint32_t idx[TL_MAX_CHANNELS];
    o->inputs = fr->product.inputs;
    double margin = 0.0, frac = 0.0;
    for (uint32_t i = 0; i < o->inputs; i++) {
        uint32_t n = 0;
        for (uint32_t k = lo; k < hi; k++) {
            const double tf = r->cal.t_ant[i][k], sg = r->cal.sigma[i][k];
            if (!isfinite(tf) || !(sg > 0.0))
                continue;
            const double a = fr->ref_auto[0][i][k] / fr->ref_spectra[0];
            const double l = fr->ref_auto[1][i][k] / fr->ref_spectra[1];
            const double h = fr->ref_auto[2][i][k] / fr->ref_spectra[2];
            if (!(h > l))
                continue;
            fk[n] = k * df;
            y[n] = tf - cal_point(a, l, h, t_load, t_ns);
            w[n] = 1.0 / (sg * sg);
            idx[n] = k;
            n++;
        }
        if (n < s->fit_order + 2u)
            return -1;
        const double f0 = 0.5 * (fk[0] + fk[n - 1u]);
        if (tl_sensitivity_foreground_resid(fk, y, w, n, f0, s->fit_order, res) != 0)
            return -1;
        double ss = 0.0, mx = 0.0;
        for (uint32_t j = 0; j < n; j++) {
            const uint32_t k = idx[j];
            o->diff_k[i][k] = y[j];
            o->resid_k[i][k] = res[j];
            const double u = res[j] * sqrt(w[j]);
            ss += u * u;
            mx = fmax(mx, fabs(u));
            if (sens->sigma_k[k] > 0.0)
                margin = fmax(margin, fabs(res[j]) / sens->sigma_k[k]);
        }
        o->resid_rms[i] = sqrt(ss / n);
        o->resid_max[i] = mx;
        frac = fmax(frac, o->resid_rms[i]);
    }
    o->noise_fraction = frac;
    o->margin_at_hours = margin;
    o->done = 1;
    return 0;
}
