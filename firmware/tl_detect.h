/*
 * tl_detect.h - detection: power of each input and the cross-power.
 *
 * Inputs are FFT outputs X, Y (int32 re/im interleaved, symmetric range
 * |Re|, |Im| <= 2^31 - 1), so every product below is exact in 64 bits:
 *     |X|^2          = Xr^2 + Xi^2           <= 2 (2^31-1)^2 < 2^63 (uint64)
 *     Re(X conj(Y))  = Xr Yr + Xi Yi         |.| < 2^63           (int64)
 *     Im(X conj(Y))  = Xi Yr - Xr Yi         |.| < 2^63           (int64)
 * Each is then divided by 2^shift with the configured rounding (one rounding
 * point). A truncating shift would bias every channel by -(2^shift - 1)/2
 * input LSB per spectrum, which does not average down; half-even is unbiased.
 * With shift = ceil(log2 M) no sum of M results can overflow 64 bits.
 */
#ifndef TL_DETECT_H
#define TL_DETECT_H

#include <stdint.h>
#include "tl_fixed.h"

/* P[k] = round(|X[k]|^2 / 2^shift), k < channels; shift <= 63. */
void tl_detect_power(const int32_t *X, uint32_t channels, unsigned shift, tl_rounding mode, uint64_t *P);

/* C[k] = round(X[k] conj(Y[k]) / 2^shift): re[k], im[k], k < channels. */
void tl_detect_cross(const int32_t *X, const int32_t *Y, uint32_t channels, unsigned shift, tl_rounding mode,
                     int64_t *re, int64_t *im);

#endif
