/*
 * sky_model.h - what the simulator is asked to produce: noise temperature
 * in kelvin versus frequency at the receiver input, per switch state, plus
 * the narrow-band interferers and the ADC settings (host only).
 *
 * All temperatures are one-sided noise temperatures (power per unit
 * bandwidth / k_B). The same model applies to each input; with two inputs a
 * fraction `coherence` of the sky is common to both. docs/simulator.md
 * derives every formula and names its source.
 *
 * Sky (the antenna's signal), for f > 0:
 *     T_pl(f)   = sky_t0_k * (f / sky_f0_hz)^-sky_index
 *                 (180 K (f / 180 MHz)^-2.6 by default: Furlanetto, Oh and
 *                 Briggs, Phys. Rep. 433, 181, 2006; from memory)
 *     tau(f)    = (f / turnover_hz)^-2.1           free-free optical depth
 *     T_ff(f)   = T_pl(f) (1 - exp(-tau)) / tau      (emitting and absorbing
 *                 medium mixed; common practice, no source); turnover_hz = 0:
 *                 T_ff = T_pl
 *     D(f)      = trough_depth_k * exp(-ln2 |2 (f - trough_centre_hz) /
 *                 trough_width_hz|^(2 trough_flatness))   (flatness 1: a
 *                 Gaussian of full width at half depth trough_width_hz; > 1:
 *                 flat-bottomed, the same half-depth width)
 *     T_ant(f)  = T_ff(f) - D(f)
 * Front end (one gain for every source, so a load calibrates the antenna):
 *     G(f) = x^2n / (1 + x^2n) * 1 / (1 + (f / lowpass_hz)^2m)
 *            * 1 / (1 + Q^2 (f / f_r - f_r / f)^2)
 *     x = f / highpass_hz (Butterworth power responses, orders n and m) and
 *     the last factor the power response of a second-order resonator at
 *     f_r = resonance_hz with quality factor Q = resonance_q (omitted when
 *     resonance_hz = 0); common practice, no source.
 * At the receiver input, per switch state (tl_sky_temperature_state):
 *     state 0, antenna:              (T_ant(f) + receiver_k) G(f)
 *     state 1, reference load:       (load_k + receiver_k) G(f)
 *     state 2, load + noise source:  (load_k + noise_excess_k + receiver_k) G(f)
 * `white` replaces every shape by a constant: T_ant = sky_t0_k and G = 1
 * (no turnover, trough or bandpass).
 *
 * Interferers are added to the antenna state's voltage at the ADC (after
 * the front end): steady carriers and one gated carrier (burst), each of
 * power relative to a full-scale sine (0 dBFS: amplitude 2^(bits-1) codes).
 */
#ifndef TL_HOST_SKY_MODEL_H
#define TL_HOST_SKY_MODEL_H

#include <stdint.h>

#define TL_SKY_MAX_CARRIERS 4u
#define TL_SKY_STATES 3u

enum {
    TL_SKY_ANTENNA = 0,     /* sky (with trough and interferers) */
    TL_SKY_LOAD = 1,        /* reference load at load_k */
    TL_SKY_LOAD_NOISE = 2   /* load plus noise source: load_k + noise_excess_k */
};

/* A short list of numbers (a scenario key such as "carrier_mhz = 30, 41.5"). */
typedef struct tl_sky_list {
    unsigned n;                      /* 0 .. TL_SKY_MAX_CARRIERS */
    double v[TL_SKY_MAX_CARRIERS];
} tl_sky_list;

typedef struct tl_sky_params {
    double sample_rate_hz;
    /* sky */
    double sky_t0_k, sky_f0_hz, sky_index;
    double turnover_hz;              /* 0: no free-free turnover */
    double trough_depth_k;           /* 0: no 21-cm trough */
    double trough_centre_hz, trough_width_hz, trough_flatness;
    double coherence;                /* 0 .. 1, fraction of the sky common to both inputs */
    /* receiver and front end */
    double receiver_k;
    double highpass_hz;
    unsigned highpass_order;
    double lowpass_hz;
    unsigned lowpass_order;
    double resonance_hz, resonance_q;   /* resonance_hz 0: none */
    unsigned white;                  /* 1: flat spectra (T_ant = sky_t0_k, G = 1) */
    /* switch states */
    double load_k, noise_excess_k;
    /* interferers at the ADC, antenna state only */
    tl_sky_list carrier_hz, carrier_dbfs; /* same count: one power per carrier */
    double burst_hz;                 /* 0: no burst */
    double burst_dbfs, burst_duty, burst_period_us;
    /* ADC */
    double rms_fs;      /* antenna-state noise RMS / full scale (full scale = 2^(bits-1) codes) */
    double dc_offset_lsb;
    unsigned adc_bits;  /* 8 .. 16 */
    unsigned inputs;    /* 1 or 2 */
    uint64_t seed;
} tl_sky_params;

/* The demo defaults: 102.4 Msample/s; sky 180 K (f/180 MHz)^-2.6, no
 * turnover, no trough; 300 K receiver; 5 MHz order-4 high-pass, 45 MHz
 * order-8 low-pass, no resonance; coherence 0.5; load 300 K, noise source
 * 1000 K excess; no interferers; RMS 1/8 of full scale, no DC offset; 14-bit
 * ADC, 2 inputs, seed 1. */
void tl_sky_default(tl_sky_params *p);

/* Sky temperature T_ant(f) in kelvin (turnover and trough included,
 * bandpass and receiver not). */
double tl_sky_antenna_k(const tl_sky_params *p, double f_hz);

/* Front-end power gain G(f), 0 .. 1. */
double tl_sky_bandpass(const tl_sky_params *p, double f_hz);

/* Temperature at the receiver input in state 0, 1 or 2 (see above),
 * receiver and bandpass included; 0 for f <= 0 unless `white`, and for an
 * unknown state. */
double tl_sky_temperature_state(const tl_sky_params *p, unsigned state, double f_hz);

/* Same as tl_sky_temperature_state(p, TL_SKY_ANTENNA, f_hz). */
double tl_sky_temperature(const tl_sky_params *p, double f_hz);

/* Lowest T_ant(f) over (0, sample_rate/2] on a grid of 1/8192 of the
 * band (the trough may not dig below zero); *f_hz gets where. */
double tl_sky_antenna_min_k(const tl_sky_params *p, double *f_hz);

#endif
