/*
 * sky_noise.h - Gaussian antenna voltages shaped like a low-frequency sky
 * plus receiver noise, quantized by an ADC (host; the default scenario's
 * source until the full simulator arrives).
 *
 * Noise temperature seen at the ADC, per input, versus frequency f:
 *     T(f) = (T_sky(f) + T_rx) * G_hp(f) * G_lp(f)
 *     T_sky(f) = t0 * (f / f0)^-index     (default 180 K (f/180 MHz)^-2.6,
 *                Furlanetto, Oh and Briggs, Phys. Rep. 433, 181, 2006; from memory)
 *     G_hp = x^2n / (1 + x^2n), x = f / f_hp;   G_lp = 1 / (1 + (f / f_lp)^2m)
 * (Butterworth power responses). The shape is imposed by a linear-phase FIR
 * (2047 taps, frequency-sampled and Blackman-windowed) on white Gaussian
 * noise, normalised to unit output variance, then scaled to the requested
 * RMS in units of ADC full scale. With two inputs a fraction `coherence` of
 * the white noise is common to both (a stand-in for a shared sky), so their
 * cross-power is non-zero. Samples are rounded to the ADC's codes, clipped
 * at its range and left-aligned in int16 (Q15), as the firmware expects.
 */
#ifndef TL_HOST_SKY_NOISE_H
#define TL_HOST_SKY_NOISE_H

#include <stddef.h>
#include <stdint.h>

typedef struct tl_sky_params {
    double sample_rate_hz;
    double sky_t0_k, sky_f0_hz, sky_index;
    double receiver_k;
    double highpass_hz;
    unsigned highpass_order;
    double lowpass_hz;
    unsigned lowpass_order;
    unsigned white;     /* 1: skip shaping (flat spectrum) */
    double coherence;   /* 0 .. 1 */
    double rms_fs;      /* RMS voltage / ADC full scale (full scale = 2^(bits-1) codes) */
    unsigned adc_bits;  /* 8 .. 16 */
    unsigned inputs;    /* 1 or 2 */
    uint64_t seed;
} tl_sky_params;

typedef struct tl_sky tl_sky; /* opaque; host-allocated */

/* The demo defaults (see docs/scenario in README): 102.4 Msample/s, sky as
 * above, 300 K receiver, 5 MHz order-4 high-pass, 45 MHz order-8 low-pass,
 * coherence 0.5, RMS 1/8 of full scale, 14-bit ADC, 2 inputs, seed 1. */
void tl_sky_default(tl_sky_params *p);

/* Shaped noise temperature T(f) in kelvin (before normalisation). */
double tl_sky_temperature(const tl_sky_params *p, double f_hz);

/* Create a generator; NULL on bad parameters or out of memory. */
tl_sky *tl_sky_open(const tl_sky_params *p);
void tl_sky_close(tl_sky *s);

/* Next n samples per input (in1 ignored, may be NULL, for one input). */
void tl_sky_fill(tl_sky *s, int16_t *in0, int16_t *in1, size_t n);

/* Samples at the ADC's most negative or most positive code so far, per
 * input (the firmware's definition of a clip: a code at a rail). */
uint64_t tl_sky_clipped(const tl_sky *s, unsigned input);

#endif
