/*
 * calibrate.h - ground calibration of switched spectra, and the fit that
 * looks for an absorption trough under a smooth foreground.
 *
 * Two-point (hot/cold, Y-factor) calibration against the reference load
 * (cold) and the load plus noise source (hot), per channel, from the mean
 * powers of the three states (Skou and Le Vine, Microwave Radiometer
 * Systems, ch. 10):
 *     T_ant = T_load + T_ns (P_ant - P_load) / (P_ns - P_load)
 * Gains and the receiver temperature cancel. Each mean power has relative
 * noise r / sqrt(N) (radiometer equation, Dicke 1946; r is the filterbank's
 * lag-correlation factor, docs/fixed-point.md section 8); the three are
 * independent and propagate to first order:
 *     dT/dP_ant  =  T_ns / (P_ns - P_load)
 *     dT/dP_load =  T_ns (P_ant - P_ns) / (P_ns - P_load)^2
 *     dT/dP_ns   = -T_ns (P_ant - P_load) / (P_ns - P_load)^2
 */
#ifndef TL_HOST_CALIBRATE_H
#define TL_HOST_CALIBRATE_H

#include <stdint.h>
#include "tl_chain.h"

/* Scatter of an average of M spectra times sqrt(M) for white input through
 * this table: sqrt(1 + 2 sum_{l=1}^{P-1} (1 - l/M) rho_l^2), rho_l the lag-l
 * correlation of the prototype (1 for P = 1). */
double tl_radiometer_factor(const tl_taps *t, uint32_t M);

/* Calibrate one input of a switched product: t_ant[k] and sigma[k] (kelvin)
 * for k < channels. factor: tl_radiometer_factor. Returns 0, or -1 when a
 * state has no spectra. Channels where P_ns <= P_load get NAN. */
int tl_calibrate(const tl_product *p, unsigned input, double t_load_k, double t_ns_k, double factor, double *t_ant,
                 double *sigma);

/* Model antenna temperature from the three states' temperatures at the
 * receiver input (the same equation applied to the model: gains and the
 * receiver cancel). */
double tl_calibrate_model(double t_ant_state, double t_load_state, double t_ns_state, double t_load_k, double t_ns_k);

/* Fit y(f) = (f/f0)^-2.5 sum_{i=0}^{order} a_i ln(f/f0)^i - A g(f; c, w, q)
 * with g = exp(-ln2 |2 (f - c) / w|^(2q)) (q = 1 Gaussian, larger q flat-
 * bottomed; w = full width at half depth), weights 1/sigma^2, over n points.
 * For each (c, w) the model is linear (weighted least squares); the best
 * point of a (c, w) grid is refined by alternating golden-section searches,
 * and the errors are marginal: the Gauss-Newton covariance (J^T W J)^-1 over
 * all parameters at the best fit. Foreground order at most 8. */
typedef struct tl_trough_fit {
    int ok;
    double depth, depth_sigma;        /* A, K */
    double centre, centre_sigma;      /* c, Hz */
    double width, width_sigma;        /* w, Hz */
    double chi2, dof;                 /* at the best fit */
    double significance;              /* depth / depth_sigma */
    double chi2_no_trough;            /* foreground alone, for comparison */
} tl_trough_fit;

int tl_fit_trough(const double *f_hz, const double *y, const double *sigma, uint32_t n, double f0_hz,
                  unsigned order, double flatness, double c_lo, double c_hi, double w_lo, double w_hi,
                  tl_trough_fit *out);

#endif
