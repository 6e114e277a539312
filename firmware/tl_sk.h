/*
 * tl_sk.h - spectral kurtosis sums: per channel of each auto-power, over
 * blocks of M consecutive spectra, S1 = sum of P and S2 = sum of P^2.
 *
 * P is the sum of N consecutive detected powers of a channel (N = 1: one
 * spectrum's round(|X|^2 / 2^det_shift), the value the integrator adds), so
 * a block spans M x N spectra. The ground forms the generalized SK
 * estimator of Nita and Gary 2010 (MNRAS 406, L60) with d = 1:
 * SK = (M N + 1)/(M - 1) (M S2 / S1^2 - 1). N > 1 shrinks the blocks per
 * integration (and the downlink) by N, at the price of averaging out
 * interference that switches faster than N spectra.
 *
 * Widths (docs/fixed-point.md section 6b):
 *   P   uint64: N <= 2^16 powers below 2^48 cannot overflow; beyond, P
 *       saturates at UINT64_MAX and is counted.
 *   S1  uint64: M <= 2^16 values of P < 2^48 cannot overflow (2^64); a
 *       larger P can, so the sum saturates at UINT64_MAX and is counted.
 *   S2  128 bits as (hi, lo) uint64 words: P^2 < 2^128 is exact (formed
 *       from 32-bit halves, no 128-bit type needed), and M <= 2^16 squares
 *       of P < 2^56 cannot overflow; beyond, the sum saturates at 2^128 - 1
 *       and is counted. S2 is therefore exact whenever it is not saturated:
 *       no precision is lost before the ground divides.
 * Only spectra the integrator keeps in the antenna state enter a block.
 * A block that an integration's end cuts short is dropped and counted
 * (tl_chain.h).
 */
#ifndef TL_SK_H
#define TL_SK_H

#include <stdint.h>
#include "tl_limits.h"
#include "tl_status.h"

#define TL_SK_MIN_SPECTRA 16u     /* smallest M */
#define TL_SK_MAX_SPECTRA 65536u  /* largest M: keeps the widths above */
#define TL_SK_MAX_ACCUMULATE 65536u /* largest N */

typedef struct tl_sk {
    uint32_t m;          /* values of P per block; 0 = off */
    uint32_t n;          /* spectra summed into each P, 1 .. TL_SK_MAX_ACCUMULATE */
    uint32_t inner;      /* spectra in the running P */
    uint32_t channels;   /* N/2 */
    uint32_t inputs;     /* 1 or 2 */
    uint32_t count;      /* spectra in the running block */
    uint32_t sat;        /* channel sums saturated in the running block (S1 or S2), saturating count */
    uint64_t s1[TL_MAX_INPUTS][TL_MAX_CHANNELS];
    uint64_t s2_hi[TL_MAX_INPUTS][TL_MAX_CHANNELS];
    uint64_t s2_lo[TL_MAX_INPUTS][TL_MAX_CHANNELS];
    uint64_t p[TL_MAX_INPUTS][TL_MAX_CHANNELS];  /* the running P (N > 1) */
} tl_sk;

/* m = 0 (off) or TL_SK_MIN_SPECTRA .. TL_SK_MAX_SPECTRA values per block;
 * n = 1 .. TL_SK_MAX_ACCUMULATE spectra per value; channels 1 ..
 * TL_MAX_CHANNELS; inputs 1 .. TL_MAX_INPUTS. Returns TL_OK, TL_E_NULL,
 * TL_E_SK (m or n out of range), TL_E_POINTS or TL_E_INPUTS; all sums zero. */
tl_status tl_sk_init(tl_sk *sk, uint32_t m, uint32_t n, uint32_t channels, uint32_t inputs);

/* Zero the sums and the block's counters. */
void tl_sk_reset(tl_sk *sk);

/* Add one spectrum's powers p[0 .. channels-1] of `input` (no effect when
 * off). Call once per input, then tl_sk_spectrum_done once. */
void tl_sk_add(tl_sk *sk, uint32_t input, const uint64_t *p);

/* Count the spectrum; returns 1 when the block holds m values (m x n
 * spectra). */
int tl_sk_spectrum_done(tl_sk *sk);

/* P^2 as (hi, lo): exact, from 32-bit halves. */
void tl_sk_square(uint64_t p, uint64_t *hi, uint64_t *lo);

#endif
