/*
 * tl_encode.h - spectral encodings for the downlink (flight code).
 *
 * Encodes a run of consecutive channels of one integrated spectrum (uint64
 * auto-power sums or int64 cross-power sums, see tl_chain.h) into a payload
 * that decodes on its own: the ground may receive each packet alone.
 * docs/encoding.md is the long form; host/spectral_decode.h is the inverse.
 *
 * Two encodings:
 *
 *   lossless       the 64-bit values exactly.
 *   noise-bounded  each value quantized with a power-of-two step no larger
 *                  than f times its radiometer noise (after Masui et al.
 *                  2015, Astronomy and Computing 12, 181), then coded
 *                  exactly like the lossless one.
 *
 * Pipeline, both encodings (all arithmetic on uint64 bit patterns, mod 2^64):
 *   1. value u[i] (lossless: the value itself; noise-bounded: q[i] below),
 *      taken as its 64-bit two's complement pattern for int64 input;
 *   2. prediction p[i]: p[0] = 0 (the first channel is sent absolute);
 *      p[i] = u[i-1] when channels i-1 and i share a step; across a block
 *      boundary of the noise-bounded encoding, u[i-1] rescaled to the new
 *      step: u[i-1] << (k_prev - k) when the step shrinks, floor(u[i-1] /
 *      2^(k - k_prev)) (arithmetic for int64) when it grows;
 *   3. delta d = u[i] - p[i] mod 2^64, read as int64;
 *   4. zigzag z = 2d for d >= 0, -2d - 1 for d < 0 (as bit operations on
 *      uint64: (d << 1) ^ (0 - (d >> 63))), so small negative deltas are
 *      small numbers rather than runs of 0xFF bytes;
 *   5. transpose of the N zigzag words into 8N bytes, one of
 *        TL_ENCODE_BYTE_SHUFFLE: all most significant bytes (channel
 *          order), then all next bytes, ..., all least significant bytes;
 *          byte j*N + i = bits 63-8j .. 56-8j of z[i];
 *        TL_ENCODE_BIT_PLANES: bit planes from bit 63 down to bit 0, each
 *          plane N bits in channel order, packed most significant bit
 *          first without padding: stream bit t = b*N + i is bit 63-b of
 *          z[i], stored in byte t/8 at bit 7 - t%8;
 *   6. tl_lz4_compress of the 8N bytes.
 *
 * Noise-bounded quantization. For channel i, with R[i] the noise reference
 * (the value itself for auto-power, see tl_encode_bounded_u64), M spectra in
 * the sum and f = fraction_q16 / 2^16:
 *     k_i = the largest integer with 2^k_i <= f R[i] / sqrt(M),
 *           computed with integers only (below), clamped to 0 .. 62;
 *     per block of B channels: k = min of k_i over the block, one step
 *           byte per block in the payload;
 *     q[i] = round(v[i] / 2^k), ties to even (tl_round_shr_u64/_s64,
 *           TL_ROUND_HALF_EVEN); the ground's value is q[i] * 2^k.
 * The error |q 2^k - v| <= 2^(k-1) = step/2; with k = 0 it is zero (the
 * integer is sent exactly, even when f R / sqrt(M) < 1).
 *
 * The step bound, proof. An integer radiometer sum P of M spectra is
 * Gamma-distributed with std/mean = 1/sqrt(M), so sigma = P / sqrt(M).
 * Let a = fraction_q16, U = ceil(2^16 sqrt(M)) (exact integer square root of
 * M * 2^32, rounded up), s = max(0, bitlength(R) - 32), T = floor(R / 2^s)
 * (so T 2^s <= R and T < 2^32), X = a T < 2^49. The code finds the largest
 * integer e with U 2^e <= X from the bit lengths of U and X and one
 * comparison, and sets k = e + s. Then
 *     2^k 2^16 sqrt(M) <= 2^k U = 2^s (U 2^e) <= 2^s a T <= a R,
 * i.e. 2^k <= (a / 2^16) R / sqrt(M) = f R / sqrt(M). Clamping k down (to 62)
 * keeps the bound; k = 0 when e + s < 0 adds no error at all. Tightness:
 * U 2^(e+1) > X, so 2^k > f R / (2 sqrt(M)) up to the truncation of R to 32
 * bits and the rounding of U (relative 2^-31 and 2^-16): the step is the
 * largest power of two under the bound, within a factor 2.
 * Added noise: the rounding error is uniform over one step when sigma spans
 * many steps, with variance step^2/12 <= f^2 sigma^2 / 12 (f = 1: 1/12 of
 * the radiometer variance, +0.35 dB; f = 1/8: 1/768).
 *
 * Cross-power. The int64 sums have no noise of their own to scale from (a
 * fully correlated input can even make one part noiseless), so the step is
 * bounded through a reference the caller chooses: pass the auto-powers'
 * minimum, R[i] = min(P0[i], P1[i]) <= sqrt(P0[i] P1[i]), and the step is
 * <= f sqrt(P0 P1 / M), the cross-power's noise scale (for weakly correlated
 * inputs the real and imaginary parts each have std sqrt(P0 P1 / (2M))).
 * Without a reference (NULL) the magnitude |v[i]| is used; by Cauchy-Schwarz
 * |v| <= sqrt(P0 P1) (up to the detection rounding), so that also keeps
 * the bound, but its steps are finer than needed and compression suffers.
 *
 * Payload layout (all multi-byte fields big-endian, written byte by byte):
 *
 *   offset  size  field
 *   0       1     layout version, TL_ENCODE_VERSION (1)
 *   1       1     encoding: TL_ENCODE_ID_LOSSLESS (1) or TL_ENCODE_ID_BOUNDED (2)
 *   2       1     value type: TL_ENCODE_UNSIGNED (0, uint64) or TL_ENCODE_SIGNED (1, int64)
 *   3       1     transpose: TL_ENCODE_BYTE_SHUFFLE (0) or TL_ENCODE_BIT_PLANES (1)
 *   4       2     N, channels: 1 .. TL_ENCODE_FORMAT_MAX_CHANNELS
 *   6       2     B, channels per step block: 0 for lossless, else 1 .. 4096
 *   8       2     S, step bytes: 0 for lossless, else ceil(N / B)
 *   10      2     L, length of the LZ4 block in bytes
 *   12      S     k of each block, 0 .. TL_ENCODE_MAX_STEP_LOG2 (step = 2^k)
 *   12+S    L     LZ4 block; it decodes to exactly 8N bytes
 *
 * Payload length = 12 + S + L exactly.
 *
 * Memory: a tl_encode context (about 8N_max + 8 KiB: 16 KiB at the defaults)
 * is caller-owned and needs no initialisation; every call clears what it
 * uses, so the bytes depend only on the arguments. Nothing is allocated.
 * No floating point, no division: shifts, compares and multiplications.
 */
#ifndef TL_ENCODE_H
#define TL_ENCODE_H

#include <stddef.h>
#include <stdint.h>
#include "tl_lz4.h"
#include "tl_status.h"

/* Largest channel count of one call. The downlink cuts products into
 * packets of at most about 4 KiB, and 1024 channels are 8 KiB before
 * compression, so a call never needs more. A build may set 1 .. 4096. */
#ifndef TL_ENCODE_MAX_CHANNELS
#define TL_ENCODE_MAX_CHANNELS 1024u
#endif
/* Format limit: 8 x 4096 bytes keep the LZ4 input and its bound below 2^16. */
#define TL_ENCODE_FORMAT_MAX_CHANNELS 4096u
#if TL_ENCODE_MAX_CHANNELS < 1 || TL_ENCODE_MAX_CHANNELS > 4096
#error "TL_ENCODE_MAX_CHANNELS must be from 1 to 4096"
#endif

/* Payload header: field offsets and values (see the layout above). */
#define TL_ENCODE_VERSION 1u
#define TL_ENCODE_HEADER_BYTES 12u
#define TL_ENCODE_OFF_VERSION 0u
#define TL_ENCODE_OFF_ENCODING 1u
#define TL_ENCODE_OFF_TYPE 2u
#define TL_ENCODE_OFF_TRANSPOSE 3u
#define TL_ENCODE_OFF_COUNT 4u
#define TL_ENCODE_OFF_BLOCK 6u
#define TL_ENCODE_OFF_STEPS 8u
#define TL_ENCODE_OFF_LZ4_LEN 10u
#define TL_ENCODE_ID_LOSSLESS 1u
#define TL_ENCODE_ID_BOUNDED 2u
#define TL_ENCODE_UNSIGNED 0u
#define TL_ENCODE_SIGNED 1u
#define TL_ENCODE_BYTE_SHUFFLE 0u
#define TL_ENCODE_BIT_PLANES 1u

/* Noise fraction f as fraction_q16 = f * 2^16: 1/64 .. 1. */
#define TL_ENCODE_FRACTION_MIN_Q16 1024u   /* f = 1/64 */
#define TL_ENCODE_FRACTION_MAX_Q16 65536u  /* f = 1 */
#define TL_ENCODE_MAX_STEP_LOG2 62u        /* largest k (step 2^62) */

/* Largest payload for n channels (lossless), and for n channels in blocks
 * of b (noise-bounded). dst_cap of at least this never gives TL_E_SPACE.
 * For constants (they divide). */
#define TL_ENCODE_LOSSLESS_BOUND(n) (TL_ENCODE_HEADER_BYTES + TL_LZ4_BOUND(8u * (n)))
#define TL_ENCODE_BOUNDED_BOUND(n, b) (TL_ENCODE_HEADER_BYTES + ((n) + (b) - 1u) / (b) + TL_LZ4_BOUND(8u * (n)))

/* Noise-bounded parameters. */
typedef struct tl_bound_cfg {
    uint32_t spectra;      /* M, spectra summed into each value: 1 .. TL_MAX_INTEGRATION */
    uint32_t fraction_q16; /* f * 2^16, TL_ENCODE_FRACTION_MIN_Q16 .. _MAX_Q16 */
    uint32_t block;        /* B, channels sharing one step: 1 .. TL_ENCODE_MAX_CHANNELS (16 or 32 typical) */
    uint32_t transpose;    /* TL_ENCODE_BYTE_SHUFFLE or TL_ENCODE_BIT_PLANES */
} tl_bound_cfg;

/* Context: caller-owned, no initialisation needed. */
typedef struct tl_encode {
    tl_lz4 lz4;
    uint8_t shuffled[8u * TL_ENCODE_MAX_CHANNELS]; /* transposed zigzag words */
} tl_encode;

/*
 * Lossless encoding of v[0 .. count-1] (uint64 auto-power or int64
 * cross-power sums, any values including 0, UINT64_MAX, INT64_MIN/MAX).
 *
 *   e          context
 *   v          count values
 *   count      1 .. TL_ENCODE_MAX_CHANNELS
 *   transpose  TL_ENCODE_BYTE_SHUFFLE or TL_ENCODE_BIT_PLANES
 *   dst        payload out; dst_cap bytes available
 *              (TL_ENCODE_LOSSLESS_BOUND(count) always suffices)
 *   written    payload length on TL_OK, 0 otherwise
 *
 * Returns
 *   TL_OK          dst[0 .. *written-1] is the payload
 *   TL_E_NULL      e, v, dst or written is NULL
 *   TL_E_ENCODING  count is 0 or above TL_ENCODE_MAX_CHANNELS, or transpose unknown
 *   TL_E_SPACE     the payload does not fit dst_cap: retry with fewer channels.
 *                  dst[0] is then 0 (no valid version) when dst_cap >= 1
 *                  and the rest of dst[0 .. dst_cap-1] is unspecified.
 *
 * Never writes dst[dst_cap] or beyond, never allocates, never reads v past
 * count. Time O(count) (byte shuffle) or O(64 count) (bit planes).
 */
tl_status tl_encode_lossless_u64(tl_encode *e, const uint64_t *v, uint32_t count, uint32_t transpose, uint8_t *dst,
                                 size_t dst_cap, size_t *written);
tl_status tl_encode_lossless_i64(tl_encode *e, const int64_t *v, uint32_t count, uint32_t transpose, uint8_t *dst,
                                 size_t dst_cap, size_t *written);

/*
 * Noise-bounded encoding of v[0 .. count-1] (see the top of this file).
 *
 *   e          context
 *   v          count values: uint64 auto-power sums (_u64) or int64
 *              cross-power sums (_i64), each a sum of cfg->spectra spectra
 *   noise_ref  NULL, or count references R[i] (same units as v): the step
 *              of channel i is <= f R[i] / sqrt(M). NULL means R[i] = v[i]
 *              (_u64) or |v[i]| (_i64). For cross-power pass
 *              min(auto0[i], auto1[i]).
 *   count      1 .. TL_ENCODE_MAX_CHANNELS
 *   cfg        spectra M, fraction_q16, block B, transpose
 *   dst        payload out; dst_cap bytes available
 *              (TL_ENCODE_BOUNDED_BOUND(count, B) always suffices)
 *   written    payload length on TL_OK, 0 otherwise
 *
 * Returns
 *   TL_OK               dst[0 .. *written-1] is the payload
 *   TL_E_NULL           e, v, cfg, dst or written is NULL
 *   TL_E_ENCODING       count 0 or above TL_ENCODE_MAX_CHANNELS, block 0 or
 *                       above TL_ENCODE_MAX_CHANNELS, transpose unknown
 *   TL_E_INTEGRATION    spectra outside 1 .. TL_MAX_INTEGRATION
 *   TL_E_NOISE_FRACTION fraction_q16 outside TL_ENCODE_FRACTION_MIN_Q16 .. _MAX_Q16
 *   TL_E_SPACE          as for the lossless calls (dst[0] = 0 when dst_cap >= 1)
 *
 * Guarantees: in every channel the step 2^k <= f R[i] / sqrt(M) or k = 0,
 * and the ground's q 2^k differs from v[i] by at most 2^(k-1) (0 for k = 0).
 * Never writes dst[dst_cap] or beyond, never allocates. Time O(count)
 * (byte shuffle) or O(64 count) (bit planes).
 */
tl_status tl_encode_bounded_u64(tl_encode *e, const uint64_t *v, const uint64_t *noise_ref, uint32_t count,
                                const tl_bound_cfg *cfg, uint8_t *dst, size_t dst_cap, size_t *written);
tl_status tl_encode_bounded_i64(tl_encode *e, const int64_t *v, const uint64_t *noise_ref, uint32_t count,
                                const tl_bound_cfg *cfg, uint8_t *dst, size_t dst_cap, size_t *written);

#endif
