/*
 * tl_fft.h - fixed-point real FFT: an N/2-point complex FFT plus the
 * real-input split. The arithmetic is frozen by docs/fixed-point.md
 * (arithmetic spec TL-ARITH version TL_ARITH_VERSION); any implementation
 * must give these bytes.
 *
 * Input:  y[0 .. N-1], int32 (the filterbank's Q30 output).
 * Output: X[k] for channels k = 0 .. N/2 - 1 (Nyquist not produced), int32
 *         re/im interleaved: X[2k] = Re, X[2k+1] = Im, scaled by
 *         2^-(total shift) relative to the exact DFT sum_n y[n] e^{-2 pi j nk/N}.
 *
 * Structure (L = N/2, m = log2 L): z[n] = y[2n] + j y[2n+1] is loaded in
 * digit-reversed order; decimation-in-time stages follow: one radix-2 stage
 * first when m is odd, then radix-4 stages. Each butterfly output is
 *     round( sum_q a_q * w_q  /  2^(29 + shift_stage) ),  saturated,
 * where w_q are Q29 twiddles (w_0 = 2^29 exactly) and the sum is exact in
 * int64 (|sum| < 2^62.5): ONE rounding point per output value. The split is
 *     X[k] = round( (A*2^29 - j*W_N^k*B) / 2^(30 + shift_split) ),
 *     A = Z[k] + conj(Z[L-k]),  B = Z[k] - conj(Z[L-k]),  Z[L] = Z[0],
 * also with one rounding point. Saturation is symmetric at +-(2^31 - 1).
 *
 * Scaling mask: bit b (b = 0 .. m-1) halves the output of binary stage b;
 * a radix-4 stage covering binary stages b, b+1 shifts by the number of
 * those bits set; the radix-2 stage (odd m) is binary stage 0. Bit m adds
 * one extra halving to the split (whose /2 is part of the math, not the mask).
 * Default: bits 0 .. m-1 set, bit m clear: total shift m, so X = DFT / L.
 * With the Q30 filterbank output (|y| < 2^30 * 1.42) no stage can overflow,
 * which covers a full-scale sine (see docs/fixed-point.md section 4).
 *
 * Ownership: the caller owns the struct (work buffers and twiddles live in
 * it). One plan can serve several inputs in turn; it is not reentrant.
 */
#ifndef TL_FFT_H
#define TL_FFT_H

#include <stddef.h>
#include <stdint.h>
#include "tl_fixed.h"
#include "tl_limits.h"
#include "tl_status.h"

/* Version of the arithmetic spec in docs/fixed-point.md. Bump it (and
 * regenerate vectors) whenever any output byte could change. */
#define TL_ARITH_VERSION 1u

/* Test-only: narrow the FFT data word to this many bits after every stage,
 * to demonstrate that the fidelity tests can fail. Flight and normal builds
 * keep 32. */
#ifndef TL_FFT_DATA_BITS
#define TL_FFT_DATA_BITS 32
#endif
#if TL_FFT_DATA_BITS < 8 || TL_FFT_DATA_BITS > 32
#error "TL_FFT_DATA_BITS must be from 8 to 32"
#endif

#define TL_FFT_SCALE_AUTO 0xFFFFFFFFu /* ask init for the default mask */

typedef struct tl_fft {
    uint32_t points;      /* N (real) */
    uint32_t size;        /* L = N/2 (complex) */
    uint32_t log2size;    /* m */
    uint32_t stages;      /* radix stages */
    uint32_t scale_mask;  /* resolved mask */
    tl_rounding rounding;
    uint8_t radix[TL_MAX_FFT_STAGES];      /* 2 or 4, in execution order */
    uint8_t shift[TL_MAX_FFT_STAGES];      /* output shift per stage, 0..2 */
    uint8_t split_shift;                   /* 0 or 1 extra */
    uint32_t total_shift;                  /* sum of all stage shifts and split extra */
    uint32_t tw_offset[TL_MAX_FFT_STAGES]; /* start of each stage's twiddles in tw */
    uint16_t perm[TL_MAX_CHANNELS];        /* work[pos] = z[perm[pos]] */
    int32_t tw[2u * TL_MAX_CHANNELS];      /* radix-4 twiddles, (re,im) x 3 per k */
    int32_t split_tw[TL_MAX_CHANNELS + 2u];/* W_N^k, k = 0 .. L/2, (re,im) */
    int32_t work[2u * TL_MAX_CHANNELS];    /* complex work buffer, re/im interleaved */
} tl_fft;

/* The default mask for a real transform of `points` samples: (1 << m) - 1. */
uint32_t tl_fft_default_mask(uint32_t points);

/* Plan a transform. scale_mask may be TL_FFT_SCALE_AUTO.
 * Returns TL_OK, TL_E_NULL, TL_E_POINTS (not a power of two in
 * [TL_MIN_POINTS, TL_MAX_POINTS]), TL_E_SCALING (bits above bit m),
 * TL_E_ROUNDING. */
tl_status tl_fft_init(tl_fft *f, uint32_t points, uint32_t scale_mask, tl_rounding rounding);

/* Transform y (N int32) into X (N int32: L complex channels). y and X must
 * not overlap the plan. Adds saturation counts per radix stage to
 * sat[0 .. stages-1] and the split's to sat[stages] (sat has
 * TL_MAX_FFT_STAGES + 1 entries). Never writes outside X[0 .. N-1]. */
void tl_fft_execute(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u]);

#endif
