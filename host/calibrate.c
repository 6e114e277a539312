/* calibrate.c - two-point calibration and the trough fit (see calibrate.h). */
#include "calibrate.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

double tl_radiometer_factor(const tl_taps *t, uint32_t M)
{
    const uint32_t N = t->points, P = t->taps;
    double e = 0.0;
    for (uint32_t n = 0; n < P * N; n++)
        e += (double)t->coef[n] * t->coef[n];
    double v = 1.0;
    for (uint32_t l = 1; l < P; l++) {
        double r = 0.0;
        for (uint32_t n = 0; n + l * N < P * N; n++)
            r += (double)t->coef[n] * t->coef[n + l * N];
        r /= e;
        v += 2.0 * (1.0 - (double)l / M) * r * r;
    }
    return sqrt(v);
}

int tl_calibrate(const tl_product *p, unsigned input, double t_load_k, double t_ns_k, double factor, double *t_ant,
                 double *sigma)
{
    const double na = p->antenna_spectra, nl = p->cal[0].spectra, nn = p->cal[1].spectra;
    if (na < 1 || nl < 1 || nn < 1 || input >= p->inputs)
        return -1;
    for (uint32_t k = 0; k < p->channels; k++) {
        const double a = (double)p->auto_power[input][k] / na;
        const double l = (double)p->cal[0].auto_power[input][k] / nl;
        const double h = (double)p->cal[1].auto_power[input][k] / nn;
        const double d = h - l;
        if (!(d > 0.0)) {
            t_ant[k] = NAN;
            sigma[k] = NAN;
            continue;
        }
        t_ant[k] = t_load_k + t_ns_k * (a - l) / d;
        const double sa = factor * a / sqrt(na), sl = factor * l / sqrt(nl), sh = factor * h / sqrt(nn);
        const double ga = t_ns_k / d, gl = t_ns_k * (a - h) / (d * d), gh = -t_ns_k * (a - l) / (d * d);
        sigma[k] = sqrt(ga * ga * sa * sa + gl * gl * sl * sl + gh * gh * sh * sh);
    }
    return 0;
}

double tl_calibrate_model(double t_ant_state, double t_load_state, double t_ns_state, double t_load_k, double t_ns_k)
{
    return t_load_k + t_ns_k * (t_ant_state - t_load_state) / (t_ns_state - t_load_state);
}

/* ---- weighted linear least squares ------------------------------------------ */

#define MAXP 12

/* Solve the normal equations (Gauss-Jordan with pivoting) for m parameters;
 * cov receives the inverse of the normal matrix. Returns 0 or -1. */
static int solve(double A[MAXP][MAXP], const double *b, unsigned m, double cov[MAXP][MAXP], double *x)
{
    double aug[MAXP][2 * MAXP + 1];
    for (unsigned i = 0; i < m; i++) {
        for (unsigned j = 0; j < m; j++) {
            aug[i][j] = A[i][j];
            aug[i][m + j] = (i == j) ? 1.0 : 0.0;
        }
        aug[i][2 * m] = b[i];
    }
    for (unsigned c = 0; c < m; c++) {
        unsigned piv = c;
        for (unsigned r = c + 1; r < m; r++)
            if (fabs(aug[r][c]) > fabs(aug[piv][c]))
                piv = r;
        if (!(fabs(aug[piv][c]) > 0.0))
            return -1;
        if (piv != c)
            for (unsigned j = 0; j <= 2 * m; j++) {
                const double t = aug[c][j];
                aug[c][j] = aug[piv][j];
                aug[piv][j] = t;
            }
        const double d = aug[c][c];
        for (unsigned j = 0; j <= 2 * m; j++)
            aug[c][j] /= d;
        for (unsigned r = 0; r < m; r++) {
            if (r == c)
                continue;
            const double f = aug[r][c];
            for (unsigned j = 0; j <= 2 * m; j++)
                aug[r][j] -= f * aug[c][j];
        }
    }
    for (unsigned i = 0; i < m; i++) {
        x[i] = aug[i][2 * m];
        for (unsigned j = 0; j < m; j++)
            cov[i][j] = aug[i][m + j];
    }
    return 0;
}

typedef struct fit_data {
    const double *f, *y, *s;
    uint32_t n;
    double f0;
    unsigned order;
    double q;
} fit_data;

static double trough_shape(double f, double c, double w, double q)
{
    return exp(-M_LN2 * pow(fabs(2.0 * (f - c) / w), 2.0 * q));
}

/* Linear fit at fixed (c, w); with_trough 0 fits the foreground alone.
 * Returns chi^2 (INFINITY on failure); depth and its sigma via pointers. */
static double fit_at(const fit_data *d, double c, double w, int with_trough, double *depth, double *depth_sigma)
{
    const unsigned m = d->order + 1u + (with_trough ? 1u : 0u);
    double A[MAXP][MAXP] = { { 0 } }, b[MAXP] = { 0 }, cov[MAXP][MAXP], x[MAXP], basis[MAXP];
    for (uint32_t i = 0; i < d->n; i++) {
        const double lf = log(d->f[i] / d->f0), pl = pow(d->f[i] / d->f0, -2.5), wgt = 1.0 / (d->s[i] * d->s[i]);
        double lp = 1.0;
        for (unsigned j = 0; j <= d->order; j++) {
            basis[j] = pl * lp;
            lp *= lf;
        }
        if (with_trough)
            basis[m - 1u] = -trough_shape(d->f[i], c, w, d->q);
        for (unsigned r = 0; r < m; r++) {
            b[r] += wgt * basis[r] * d->y[i];
            for (unsigned q = 0; q < m; q++)
                A[r][q] += wgt * basis[r] * basis[q];
        }
    }
    if (solve(A, b, m, cov, x) != 0)
        return INFINITY;
    double chi2 = 0.0;
    for (uint32_t i = 0; i < d->n; i++) {
        const double lf = log(d->f[i] / d->f0), pl = pow(d->f[i] / d->f0, -2.5);
        double model = 0.0, lp = 1.0;
        for (unsigned j = 0; j <= d->order; j++) {
            model += x[j] * pl * lp;
            lp *= lf;
        }
        if (with_trough)
            model -= x[m - 1u] * trough_shape(d->f[i], c, w, d->q);
        const double r = (d->y[i] - model) / d->s[i];
        chi2 += r * r;
    }
    if (depth != NULL && with_trough) {
        *depth = x[m - 1u];
        *depth_sigma = sqrt(cov[m - 1u][m - 1u]);
    }
    return chi2;
}

int tl_fit_trough(const double *f_hz, const double *y, const double *sigma, uint32_t n, double f0_hz,
                  unsigned order, double flatness, double c_lo, double c_hi, double w_lo, double w_hi,
                  tl_trough_fit *out)
{
    memset(out, 0, sizeof *out);
    if (n < order + 8u || order + 4u > MAXP || !(c_hi > c_lo) || !(w_hi >= w_lo) || !(w_lo > 0.0))
        return -1;
    const fit_data d = { f_hz, y, sigma, n, f0_hz, order, flatness };
    /* coarse grid: 200 centres x 12 widths (log-spaced) */
    double best = INFINITY, bc = c_lo, bw = w_lo;
    for (unsigned iw = 0; iw < 12u; iw++) {
        const double w = w_lo * pow(w_hi / w_lo, iw / 11.0);
        for (unsigned ic = 0; ic <= 200u; ic++) {
            const double c = c_lo + (c_hi - c_lo) * ic / 200.0;
            const double chi2 = fit_at(&d, c, w, 1, NULL, NULL);
            if (chi2 < best) {
                best = chi2;
                bc = c;
                bw = w;
            }
        }
    }
    /* refine centre and width together: alternate golden-section searches,
     * the centre within one grid step, the width within one grid ratio */
    const double step = (c_hi - c_lo) / 200.0, ratio = pow(w_hi / w_lo, 1.0 / 11.0);
    const double g = (sqrt(5.0) - 1.0) / 2.0;
    for (int round = 0; round < 4; round++) {
        double a = bc - step, b = bc + step;
        for (int it = 0; it < 40; it++) {
            const double x1 = b - g * (b - a), x2 = a + g * (b - a);
            if (fit_at(&d, x1, bw, 1, NULL, NULL) < fit_at(&d, x2, bw, 1, NULL, NULL))
                b = x2;
            else
                a = x1;
        }
        bc = 0.5 * (a + b);
        a = log(bw / ratio);
        b = log(bw * ratio);
        for (int it = 0; it < 40; it++) {
            const double x1 = b - g * (b - a), x2 = a + g * (b - a);
            if (fit_at(&d, bc, exp(x1), 1, NULL, NULL) < fit_at(&d, bc, exp(x2), 1, NULL, NULL))
                b = x2;
            else
                a = x1;
        }
        bw = exp(0.5 * (a + b));
    }
    double depth = 0.0, dsig = 0.0;
    best = fit_at(&d, bc, bw, 1, &depth, &dsig);
    /* marginal errors: the Gauss-Newton covariance (J^T W J)^-1 over all
     * parameters (foreground, depth, centre, width) at the best fit, so the
     * correlation of depth with width and centre is included */
    const unsigned nf = order + 1u, m = nf + 3u;
    double F[MAXP][MAXP] = { { 0 } }, cov[MAXP][MAXP], dummy_b[MAXP] = { 0 }, dummy_x[MAXP];
    for (uint32_t i = 0; i < n; i++) {
        double jrow[MAXP];
        const double lf = log(f_hz[i] / f0_hz), pl = pow(f_hz[i] / f0_hz, -2.5), wgt = 1.0 / (sigma[i] * sigma[i]);
        double lp = 1.0;
        for (unsigned j = 0; j < nf; j++) {
            jrow[j] = pl * lp;
            lp *= lf;
        }
        const double u = fabs(2.0 * (f_hz[i] - bc) / bw);
        const double gg = trough_shape(f_hz[i], bc, bw, flatness);
        const double dg_du = (u > 0.0) ? -gg * M_LN2 * 2.0 * flatness * pow(u, 2.0 * flatness - 1.0) : 0.0;
        const double du_dc = (f_hz[i] > bc ? -2.0 : 2.0) / bw, du_dw = -u / bw;
        jrow[nf] = -gg;
        jrow[nf + 1u] = -depth * dg_du * du_dc;
        jrow[nf + 2u] = -depth * dg_du * du_dw;
        for (unsigned r = 0; r < m; r++)
            for (unsigned q = 0; q < m; q++)
                F[r][q] += wgt * jrow[r] * jrow[q];
    }
    if (m <= MAXP && solve(F, dummy_b, m, cov, dummy_x) == 0 && cov[nf][nf] > 0.0 && cov[nf + 1u][nf + 1u] > 0.0) {
        dsig = sqrt(cov[nf][nf]);
        out->centre_sigma = sqrt(cov[nf + 1u][nf + 1u]);
        out->width_sigma = sqrt(cov[nf + 2u][nf + 2u]);
    } else {
        dsig = 0.0;
    }
    out->ok = isfinite(best) && dsig > 0.0;
    out->depth = depth;
    out->depth_sigma = dsig;
    out->centre = bc;
    out->width = bw;
    out->chi2 = best;
    out->dof = (double)n - (order + 1.0) - 3.0;
    out->significance = dsig > 0.0 ? depth / dsig : 0.0;
    out->chi2_no_trough = fit_at(&d, 0.0, 1.0, 0, NULL, NULL);
    return out->ok ? 0 : -1;
}
