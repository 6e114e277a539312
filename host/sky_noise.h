/*
 * sky_noise.h - stationary Gaussian voltages with the spectrum of
 * sky_model.h, switched between antenna, load and load plus noise source,
 * quantized by an ADC model (host; docs/simulator.md is the long form).
 *
 * Synthesis. Every noise component is its own continuously running stream
 * of white Gaussian samples (per input: sky, receiver, load, noise source;
 * input 1's sky is coherence x input 0's sky stream + sqrt(1 - coherence^2)
 * x its own, so the skies correlate by `coherence`), shaped by a
 * linear-phase FIR whose power response is the component's temperature
 * times the front-end gain G(f):
 *     sky:                  |H_sky(f)|^2 ~ T_ant(f) G(f)
 *     receiver, load, ns:   sqrt(T) x H_bp,  |H_bp(f)|^2 ~ G(f)
 * filtered by overlap-save with FFTW (no block-edge artefacts: the output
 * is exactly the linear convolution of the white stream). The antenna
 * state's voltage is sky + receiver + interferers, the load state's
 * receiver + load, the third receiver + load + noise source. Switching
 * picks another sum of the same running streams, so it never restarts a
 * filter: the samples after a switch are exactly those a generator that
 * had been in that state all along would give (tests/test_sky_model.c).
 *
 * The FIRs have 2047 taps, or more (up to 16383) when the trough, the
 * resonance or the high-pass corner is narrower than 16 x sample rate /
 * 2048; they are frequency-sampled on a grid 8 times finer than their
 * length, Blackman-windowed, and the windowing's smoothing is then
 * pre-compensated (up to 4 passes of target/realised). Realised against
 * the model: see tl_sky_design_error and docs/simulator.md.
 *
 * Level (one gain for all states): the ADC sees g x (stream sum), with g
 * fixed when the generator opens so that the antenna state's noise (sky
 * plus receiver, without interferers or DC offset) has RMS rms_fs x 2^(bits-1)
 * codes. Its one-sided power spectral density is then
 *     S(f) = tl_sky_psd_per_kelvin() x T_state(f)   [codes^2 / Hz]
 * for every state, so the load states calibrate the antenna state; times
 * (V_fullscale / 2^(bits-1))^2 it is in V^2/Hz.
 *
 * Randomness: xoshiro256** (host/rng.h) reseeded for every block of every
 * stream from (seed, stream, input, block) through the splitmix64 mixer, so
 * a stream's samples depend only on the seed and their index; normal
 * deviates by the ziggurat method (Marsaglia and Tsang, J. Stat. Softw.
 * 5(8), 2000; 256 layers). The same seed gives the same output bytes.
 *
 * ADC: code = g x v + dc_offset_lsb rounded to the nearest integer (ties to
 * even), clipped to the ADC's codes,
 * left-aligned in int16 (Q15) as the firmware expects. A code at either
 * rail counts as a clip (the firmware's definition).
 */
#ifndef TL_HOST_SKY_NOISE_H
#define TL_HOST_SKY_NOISE_H

#include <stddef.h>
#include <stdint.h>
#include "sky_model.h"

typedef struct tl_sky tl_sky; /* opaque; host-allocated */

enum {
    TL_SKY_FIR_SKY = 0,       /* sqrt(T_ant G) */
    TL_SKY_FIR_BANDPASS = 1   /* sqrt(G), for 1 K */
};

/* Create a generator in state TL_SKY_ANTENNA; NULL on bad parameters
 * (ranges as the scenario keys, no power in the antenna state, a carrier
 * at or above half the sample rate, mismatched carrier lists) or out of
 * memory. */
tl_sky *tl_sky_open(const tl_sky_params *p);
void tl_sky_close(tl_sky *s);

/* Next n samples per input (in1 ignored, may be NULL, for one input). */
void tl_sky_fill(tl_sky *s, int16_t *in0, int16_t *in1, size_t n);

/* Select the source of the following samples: TL_SKY_ANTENNA, TL_SKY_LOAD
 * or TL_SKY_LOAD_NOISE (others are ignored). Takes effect at the next
 * sample; no stream or filter restarts. */
void tl_sky_set_state(tl_sky *s, unsigned state);
unsigned tl_sky_state(const tl_sky *s);

/* Samples per input delivered so far. */
uint64_t tl_sky_position(const tl_sky *s);

/* Samples at the ADC's most negative or most positive code so far, per
 * input (the firmware's definition of a clip: a code at a rail). */
uint64_t tl_sky_clipped(const tl_sky *s, unsigned input);

/* The synthesis filters as built (for tests and reports): `which` is
 * TL_SKY_FIR_SKY or TL_SKY_FIR_BANDPASS; *len gets the tap count. Taps are
 * in sqrt(K) per unit-variance white input: the realised temperature of a
 * state is |H_sky(f)|^2 + receiver_k |H_bp(f)|^2 (antenna),
 * (load_k + receiver_k) |H_bp(f)|^2 (load), and so on, with
 * H(f) = sum_n h[n] exp(-2 pi i f n / fs). In white mode both are one tap,
 * sqrt(sky_t0_k) and 1. NULL for another `which`. */
const double *tl_sky_fir(const tl_sky *s, unsigned which, size_t *len);

/* Codes per unit of filtered stream (g above): the ADC sees g times the
 * sum of the filtered streams. */
double tl_sky_gain(const tl_sky *s);

/* One-sided PSD at the ADC per kelvin, codes^2 / Hz / K: 2 g^2 / fs. */
double tl_sky_psd_per_kelvin(const tl_sky *s);

/* Realised against model, checked when the filters were designed, on the
 * design grid (8 x taps points over the sample rate), for the antenna and
 * load states: *rel the largest |realised / model - 1| where the model is
 * at least 1e-3 of its peak, outside the edge bands; *floor the largest
 * |realised - model| / peak where the model is below that; *edge the
 * largest relative error inside the edge bands, the tl_sky_edge_hz()
 * next to DC and to half the sample rate, where every sampled spectrum
 * flattens (it is symmetric about both) and a sloping model cannot be
 * followed. Any pointer may be NULL. */
void tl_sky_design_error(const tl_sky *s, double *rel, double *floor, double *edge);

/* Width of each edge band: 8 x sample rate / (taps + 1). */
double tl_sky_edge_hz(const tl_sky *s);

enum { TL_SKY_STREAM_SKY, TL_SKY_STREAM_RECEIVER, TL_SKY_STREAM_LOAD, TL_SKY_STREAM_NOISE };

/* White samples w[first .. first + n) of one stream (for tests): `kind` is
 * a TL_SKY_STREAM_ value; unit variance, before any mixing. A state's
 * output sample k of an input is g x sum over its components of
 * sum_j h[j] x[k - j], h the component's taps (sqrt(T) x the bandpass's for
 * receiver, load and noise source) and x its stream (input 1's sky:
 * coherence x input 0's sky stream + sqrt(1 - coherence^2) x its own).
 * first >= -(taps - 1). Returns 0, or -1 for an unknown stream or input,
 * a first sample before that, or out of memory. */
int tl_sky_white(const tl_sky *s, unsigned kind, unsigned input, int64_t first, size_t n, double *dst);

#endif
