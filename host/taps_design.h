/*
 * taps_design.h - window functions and polyphase prototype filters (host).
 *
 * Windows are periodic (DFT-even) of length L: w[n] = sum_k (-1)^k a_k
 * cos(2 pi k n / L), the form for which F. J. Harris, Proc. IEEE 66(1), 1978
 * gives the figures of merit. The prototype of length L = P*N is
 *     P = 1:  h[n] = w[n]                          (plain windowed FFT)
 *     P >= 2: h[n] = w[n] * sinc((n - L/2) / N)   (sinc(x) = sin(pi x)/(pi x))
 * Quantization: shift S is the largest integer with max|h| * 2^S <= 131071,
 * c[n] = round(h[n] * 2^S) half away from zero, so h ~ c / 2^S exactly.
 */
#ifndef TL_HOST_TAPS_DESIGN_H
#define TL_HOST_TAPS_DESIGN_H

#include <stdint.h>
#include "tl_taps.h"

/* Window by name: "rectangular", "hann", "hamming", "blackman",
 * "blackman-harris4". Returns the tl_window or -1. */
int tl_window_from_name(const char *name);
const char *tl_window_name(unsigned window);

/* w[n], n < len, periodic window. Returns 0, or -1 for an unknown window. */
int tl_window_fill(unsigned window, uint32_t len, double *w);

/* Ideal prototype h[0 .. taps*points-1] (double). Returns 0 or -1. */
int tl_prototype_design(unsigned window, uint32_t taps, uint32_t points, double *h);

/* Design and quantize into *t (all of t written). Returns 0, or -1 when the
 * window is unknown or taps/points are out of the build's range. If h_ideal
 * is not NULL it receives the unquantized prototype scaled by 2^S (same
 * units as t->coef). */
int tl_taps_design(unsigned window, uint32_t taps, uint32_t points, tl_taps *t, double *h_ideal);

#endif
