/*
 * tl_pfb.h - polyphase filterbank front end (one antenna input).
 *
 * Critically sampled: every N new samples (a frame) give one N-point block
 * for the real FFT. With frames f_0 (oldest) .. f_{P-1} (newest) in the
 * history and the table's c[n] = h[n] * 2^S:
 *
 *     acc[n] = sum_{p=0}^{P-1} c[p*N + n] * f_p[n]          (exact, int64)
 *     y[n]   = sat32( round(acc[n] / 2^(S - 15)) )           (Q30 output)
 *
 * Formats: samples f are int16 in Q15 (ADC codes left-aligned: full scale is
 * [-1, 1)); c is 18-bit (|c| <= 2^17); |acc| <= 16 * 2^17 * 2^15 = 2^36, so
 * int64 never overflows. y is Q30: a full-scale input gives |y| near 1.0 =
 * 2^30, leaving one bit of headroom for branch gains sum_p |h| up to 2;
 * beyond that y saturates symmetrically at +-(2^31 - 1) and is counted.
 * Rounding is the configured tl_rounding (one rounding point).
 *
 * The first P-1 frames only fill the history: no output until P frames.
 * Ownership: the caller owns the struct and the table it points to; the
 * table must outlive the filterbank and stay unchanged while in use.
 */
#ifndef TL_PFB_H
#define TL_PFB_H

#include <stddef.h>
#include <stdint.h>
#include "tl_fixed.h"
#include "tl_limits.h"
#include "tl_status.h"
#include "tl_taps.h"

#define TL_PFB_INPUT_FRAC_BITS 15u  /* Q15 samples */
#define TL_PFB_OUTPUT_FRAC_BITS 30u /* Q30 output */

typedef struct tl_pfb {
    const tl_taps *table;   /* coefficients (not owned) */
    uint32_t points;        /* N */
    uint32_t taps;          /* P */
    uint32_t out_shift;     /* S + 15 - 30 = S - 15 bits dropped by the output rounding */
    tl_rounding rounding;
    uint32_t newest;        /* ring slot of the newest complete frame */
    uint32_t frames;        /* complete frames held, saturates at P */
    int16_t history[TL_MAX_TAPS * TL_MAX_POINTS]; /* P frames of N samples, ring of slots */
} tl_pfb;

/* Validate and start an empty filterbank for `table`.
 * Returns TL_OK, TL_E_NULL, TL_E_ROUNDING, TL_E_TABLE_FORMAT (shift out of
 * range), TL_E_TAPS or TL_E_POINTS (table geometry outside the build's range).
 * Taps and points come from the table. */
tl_status tl_pfb_init(tl_pfb *pfb, const tl_taps *table, tl_rounding rounding);

/* Forget all history (the next P-1 frames give no output). */
void tl_pfb_reset(tl_pfb *pfb);

/* Where the caller writes the next frame's N samples before tl_pfb_commit. */
int16_t *tl_pfb_next_frame(tl_pfb *pfb);

/* Take the frame written at tl_pfb_next_frame as the newest. If P frames are
 * held, write y[0 .. N-1] (Q30) and return 1, else return 0 and leave y
 * untouched. Adds the number of saturated outputs to *sat. */
int tl_pfb_commit(tl_pfb *pfb, int32_t *y, uint32_t *sat);

#endif
