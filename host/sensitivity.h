/*
 * sensitivity.h - can the scenario see its 21-cm feature, and does the
 * firmware show in the calibrated spectra? (host; docs/sensitivity.md has the
 * formulas, their sources and the tested figures)
 *
 * Prediction (tl_sensitivity_compute), per channel k of the science band,
 * for a co-added observing time T with duty cycle eta:
 *   spectra per state   N_s = eta T B q_s, B = fs / points the channel width
 *                       (one spectrum per points / fs seconds), q_s the
 *                       fraction of the switch cycle the firmware keeps in
 *                       state s (the firmware's own tl_switch walked over
 *                       one cycle: dwell minus discarded spectra)
 *   power per state     P_s = T_s(f) + T_q, kelvin at the ADC: T_s the
 *                       sky model's state temperature (receiver, bandpass
 *                       included) and T_q the ADC's rounding noise, Delta^2
 *                       / 12 spread white over 0 .. fs/2 (Kester, MT-001),
 *                       in kelvin through the generator's level (the
 *                       antenna state's RMS fixes codes^2 per kelvin)
 *   noise of each mean  sigma_s = r P_s / sqrt(N_s): the radiometer equation
 *                       sigma = T_sys / sqrt(B tau) (Dicke 1946; Wilson,
 *                       Rohlfs and Huettemeister, Tools of Radio Astronomy,
 *                       ch. 4) with B tau = N_s and r the filterbank's
 *                       radiometer factor (calibrate.h)
 *   calibrated noise    the first-order propagation of calibrate.h through
 *                       T_ant = T_load + T_ns (P_ant - P_load) / (P_ns - P_load)
 *                       (without switching: sigma = r P_ant / sqrt(N) / G)
 * Feature: the model's trough as it appears in the calibrated spectrum,
 * -D(f), fitted jointly with the log-polynomial foreground of [fit]
 * (the basis of calibrate.h's trough fit, same f0) by generalized least
 * squares with weights 1/sigma_k^2 at the feature's known centre and
 * width: the amplitude's error sigma_A = sqrt((X^T W X)^-1_AA), and
 *   significance = depth / sigma_A
 *   snr_k        = D_perp(f_k) / sigma_k, D_perp the feature minus its
 *                  weighted projection on the foreground; sum_k snr_k^2 =
 *                  significance^2 exactly
 * The significance grows as sqrt(T), so a 5 sigma detection needs
 * T_5 = T (5 / significance)^2 hours, or T_5 / (night hours x
 * night_fraction) lunar nights (a night is half a synodic month).
 */
#ifndef TL_HOST_SENSITIVITY_H
#define TL_HOST_SENSITIVITY_H

#include <stdint.h>
#include "run.h"
#include "scenario.h"

#define TL_SENS_DETECT_SIGMA 5.0

typedef struct tl_sensitivity {
    uint32_t lo, hi;              /* science band channels [lo, hi) */
    double channel_hz;            /* B */
    double hours, duty;           /* T and eta */
    double keep[TL_STATES];       /* q_s: fraction of the cycle kept per state (antenna, load, noise) */
    double discard;               /* fraction discarded after switches */
    double radiometer_factor;     /* r */
    double t_quant_k;             /* T_q, K at the ADC */
    double spectra[TL_STATES];    /* N_s after T */
    double t_sys_k[TL_STATES][TL_MAX_CHANNELS];  /* P_s, K at the ADC */
    double sigma_k[TL_MAX_CHANNELS];   /* calibrated noise after T, K (0 outside the band) */
    double feature_k[TL_MAX_CHANNELS]; /* the model's feature, -D(f), K */
    double perp_k[TL_MAX_CHANNELS];    /* the feature after the foreground fit, K */
    double snr[TL_MAX_CHANNELS];       /* perp_k / sigma_k */
    double depth_k;               /* D's depth */
    double amp_sigma_k;           /* sigma_A after T */
    double significance;          /* depth / sigma_A (0 without a feature) */
    double hours_detect;          /* T_5 */
    double night_hours;           /* observing hours per lunar night */
    double nights_detect;         /* T_5 / night_hours (INFINITY when nights are not observed) */
} tl_sensitivity;

/* Predict for s at hours of co-added observing with duty cycle duty (0, 1].
 * Returns 0, or -1 with one line in err (cap bytes) on bad arguments or a
 * singular foreground fit. */
int tl_sensitivity_compute(const tl_scenario *s, double hours, double duty, tl_sensitivity *out, char *err,
                           size_t cap);

/* Firmware-induced structure in the calibrated spectrum of a run: the
 * fixed-point chain's calibrated temperature minus the double reference's
 * (the same samples), the same foreground fitted to the difference and
 * removed, in units of the radiometer noise. */
typedef struct tl_sens_fidelity {
    int done;
    uint32_t inputs;
    double diff_k[TL_MAX_INPUTS][TL_MAX_CHANNELS];   /* T_fix - T_ref, K (0 outside the band) */
    double resid_k[TL_MAX_INPUTS][TL_MAX_CHANNELS];  /* after the foreground fit, K */
    double resid_rms[TL_MAX_INPUTS];  /* rms_k resid / sigma_run: in the run's own noise units */
    double resid_max[TL_MAX_INPUTS];  /* max_k |resid| / sigma_run */
    double noise_fraction;        /* max over inputs of resid_rms: the firmware's random error over the
                                     radiometer noise (the same at any length for a random error) */
    double margin_at_hours;       /* max_k |resid| / sigma_k(T): every difference taken as systematic
                                     (an upper bound) at the co-added length of the sensitivity */
} tl_sens_fidelity;

/* From a run with switching (r->cal.done) and the prediction sens for the
 * same scenario. Returns 0, or -1 when the run did not calibrate. */
int tl_sensitivity_fidelity(const tl_scenario *s, const tl_run_result *r, const tl_sensitivity *sens,
                            tl_sens_fidelity *out);

/* Weighted least-squares fit of the foreground basis of [fit] (order
 * `order`, (f/f0)^-2.5 ln(f/f0)^i) to y with weights w over n points;
 * resid receives y minus the fit. Returns 0, or -1 when singular. */
int tl_sensitivity_foreground_resid(const double *f_hz, const double *y, const double *w, uint32_t n, double f0_hz,
                                    unsigned order, double *resid);

/* The per-realisation seed of a Monte Carlo over a scenario: a pure
 * function of (the scenario's seed, realisation) through the splitmix64
 * finaliser. */
uint64_t tl_sensitivity_seed(uint64_t scenario_seed, uint32_t realisation);

#endif
