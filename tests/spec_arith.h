/*
 * spec_arith.h - the arithmetic spec (docs/fixed-point.md sections 3 and 4)
 * written as plainly as possible, as the oracle of the byte-identity tests.
 *
 * This is the filterbank and FFT code of TL-ARITH version 1 as first
 * written: one int64 sum per output, tl_round_shr_s64 then tl_sat_s32 at
 * every rounding point, the permutation as its own pass, each stage and the
 * split as their own loops. The firmware's faster kernels must give the
 * same int32 words and the same saturation counts on every input
 * (tests/test_fft.c, tests/test_pfb.c).
 */
#ifndef SPEC_ARITH_H
#define SPEC_ARITH_H

#include <stdint.h>
#include "rng.h"
#include "tl_fft.h"
#include "tl_pfb.h"

/* X = FFT of y by the spec, using the plan f (its permutation, twiddles,
 * shifts, rounding; its work buffer is left unchanged: the oracle has its
 * own). sat as tl_fft_execute. */
void spec_fft_execute(const tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u]);

/* y[n] = sat32(round(sum_p c[pN + n] f_p[n] / 2^(S - 15))) for the frames
 * f_0 (oldest) .. f_{P-1} given as P pointers; returns the saturations. */
uint32_t spec_pfb_output(const tl_taps *t, const int16_t *const *frames, tl_rounding mode, int32_t *y);

/* The FFT comparison inputs shared by tests/test_fft.c and
 * tests/test_simd_x86.c. spec_fft_masks: the five scaling masks tried for
 * a transform of `points` (auto, none, all, two random). spec_fft_input:
 * input kind 0 Gaussian (RMS 2^28), 1 random words (one INT32_MIN), 2
 * alternating rails, which saturates. */
void spec_fft_masks(uint32_t points, tl_rng *rng, uint32_t masks[5]);
void spec_fft_input(int32_t *y, uint32_t points, unsigned kind, tl_rng *rng);

#endif
