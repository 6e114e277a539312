/*
 * tl_fixed.h - the fixed-point primitives every stage uses.
 *
 * Small static inline functions with exact, documented rounding and
 * saturation. Nothing here depends on implementation-defined behaviour:
 * right shifts of negative numbers are written so that C11 defines them
 * (tests/test_fixed.c pins the results), and no function shifts a negative
 * value left.
 *
 * Rounding of v / 2^s (s >= 1) to an integer, by mode:
 *   TL_ROUND_TRUNCATE   floor(v / 2^s): drop the low bits (two's complement).
 *                       Mean error -(2^s - 1) / 2^(s+1) output LSB: biased.
 *   TL_ROUND_HALF_UP    floor(v / 2^s + 1/2): ties go towards +infinity.
 *                       Mean error +2^-(s+1) output LSB on uniform low bits.
 *   TL_ROUND_HALF_EVEN  nearest, ties to the even result. Mean error zero.
 * With s = 0 every mode returns v unchanged.
 */
#ifndef TL_FIXED_H
#define TL_FIXED_H

#include <stdint.h>

/* Inline even across many call sites: the FFT and filterbank kernels are
 * written once and instantiated with compile-time rounding constants for
 * the default configuration (GCC and Clang; other compilers just inline). */
#if defined(__GNUC__)
#define TL_ALWAYS_INLINE inline __attribute__((always_inline))
#else
#define TL_ALWAYS_INLINE inline
#endif

/* Keep a rarely taken path out of a hot loop, so that the loop's registers
 * are not spent on it. */
#if defined(__GNUC__)
#define TL_NOINLINE __attribute__((noinline))
#else
#define TL_NOINLINE
#endif

typedef enum tl_rounding {
    TL_ROUND_TRUNCATE = 0,
    TL_ROUND_HALF_UP = 1,
    TL_ROUND_HALF_EVEN = 2
} tl_rounding;

#define TL_S32_SAT_MAX ((int32_t)0x7FFFFFFF)   /* +2^31 - 1 */
#define TL_S32_SAT_MIN (-TL_S32_SAT_MAX)       /* -2^31 + 1: saturation is symmetric */

/* floor(v / 2^s) for 0 <= s <= 63. For v < 0 uses ~v = -v - 1 >= 0, so the
 * shifted operand is never negative: floor(v/2^s) = ~(~v >> s). */
static inline int64_t tl_floor_shr_s64(int64_t v, unsigned s)
{
    return (v >= 0) ? (v >> s) : ~((~v) >> s);
}

/* Increment (0 or 1) that turns floor(v / 2^s) into the rounded result.
 * low = v mod 2^s (0 <= low < 2^s), odd = floor result & 1, 1 <= s <= 63. */
static inline uint64_t tl_round_increment(uint64_t low, uint64_t odd, unsigned s, tl_rounding mode)
{
    const uint64_t half = (uint64_t)1 << (s - 1u);
    switch (mode) {
    case TL_ROUND_HALF_UP:
        return (low >= half) ? 1u : 0u;
    case TL_ROUND_HALF_EVEN:
        /* increment iff low > half, or low == half and the floor is odd */
        return (low + odd + half - 1u) >> s;
    case TL_ROUND_TRUNCATE:
    default:
        return 0u;
    }
}

/* v / 2^s rounded by mode, 0 <= s <= 62. Never overflows: the increment is
 * at most 1 and floor(v/2^s) <= INT64_MAX / 2 for s >= 1. */
static inline int64_t tl_round_shr_s64(int64_t v, unsigned s, tl_rounding mode)
{
    if (s == 0u)
        return v;
    const int64_t q = tl_floor_shr_s64(v, s);
    const uint64_t low = (uint64_t)v & (((uint64_t)1 << s) - 1u);
    return q + (int64_t)tl_round_increment(low, (uint64_t)q & 1u, s, mode);
}

/* Branch-free twin of tl_round_shr_s64 for the inner loops, for
 * -2^63 <= v < 3 * 2^61 (about 2^62.58) and 1 <= s <= 62: every FFT
 * butterfly sum (|v| < 2^62.4) and filterbank accumulator (|v| <= 2^36) is
 * in that range (docs/fixed-point.md sections 3 and 4). Same result for every
 * such v, s and mode (tests/test_fixed.c compares the two).
 *
 * The value is moved to offset binary, U = v + 2^63 (0 <= U < 2^64, order
 * kept, bits 0 .. 62 unchanged), so only unsigned shifts are used:
 *     floor((v + bias) / 2^s) = ((U + bias) >> s) - 2^(63 - s)
 * and every rounding mode is one bias:
 *     truncate   bias = 0
 *     half-up    bias = 2^(s-1)
 *     half-even  bias = 2^(s-1) - 1 + (bit s of v)
 * (half-even: low > half carries, low == half carries iff the floor is odd,
 * low < half never). tl_round_bias precomputes the constant part. */
typedef struct tl_round_bias {
    uint64_t add;      /* 2^63 + constant part of the bias */
    uint64_t odd_mask; /* 1 for half-even (bit s of v joins the bias), else 0 */
    uint64_t sub;      /* 2^(63 - s) */
    uint64_t add_max;  /* MAX * 2^s + constant part of the bias (s <= 32) */
    unsigned s;
    tl_rounding mode;
} tl_round_bias;

static TL_ALWAYS_INLINE tl_round_bias tl_round_bias_make(unsigned s, tl_rounding mode)
{
    const uint64_t half = (uint64_t)1 << (s - 1u);
    tl_round_bias b;
    b.add = ((uint64_t)1 << 63) + (mode == TL_ROUND_HALF_EVEN ? half - 1u : mode == TL_ROUND_HALF_UP ? half : 0u);
    b.odd_mask = (mode == TL_ROUND_HALF_EVEN) ? 1u : 0u;
    b.sub = (uint64_t)1 << (63u - s);
    b.add_max = (b.add - ((uint64_t)1 << 63)) + (s <= 32u ? (uint64_t)TL_S32_SAT_MAX << s : 0u);
    b.s = s;
    b.mode = mode;
    return b;
}

/* v / 2^b.s rounded as b was made for; -2^63 <= v < 3 * 2^61 (then
 * U + bias < 2^63 + 3 * 2^61 + 2^61 = 2^64: no wrap). */
static TL_ALWAYS_INLINE int64_t tl_round_shr_s64_fast(int64_t v, tl_round_bias b)
{
    const uint64_t u = (uint64_t)v + b.add + (((uint64_t)v >> b.s) & b.odd_mask);
    /* u >> s < 2^(64 - s) <= 2^63: converts to int64 without loss */
    return (int64_t)(u >> b.s) - (int64_t)b.sub;
}

/* tl_sat_s32(tl_round_shr_s64_fast(v, b), ovf) with the clamp done before
 * the offset is removed: r = (U + bias) >> s is clamped to
 * [2^(63-s) - MAX, 2^(63-s) + MAX] (unsigned compares), which needs one
 * subtraction fewer when b is a compile-time constant with s <= 31 (the
 * low 32 bits of 2^(63-s) are then zero). Same result, same count, for
 * -2^63 <= v < 3 * 2^61 and 1 <= s <= 32 (then 2^(63-s) > MAX). */
static TL_ALWAYS_INLINE int32_t tl_round_sat_s32_fast(int64_t v, tl_round_bias b, uint32_t *ovf)
{
    const uint64_t u = (uint64_t)v + b.add + (((uint64_t)v >> b.s) & b.odd_mask);
    uint64_t r = u >> b.s;
    const uint64_t lo = b.sub - (uint64_t)TL_S32_SAT_MAX, hi = b.sub + (uint64_t)TL_S32_SAT_MAX;
    *ovf += (uint32_t)(r - lo > hi - lo); /* r < lo wraps to a large value */
    r = (r < lo) ? lo : r;
    r = (r > hi) ? hi : r;
    return (int32_t)((int64_t)r - (int64_t)b.sub);
}

/* The in-range test of a whole butterfly at once: D = round(v / 2^s) + MAX
 * (mode of b), computed as ((v + MAX 2^s + bias) mod 2^64) >> s, for
 * -2^63 <= v < 3 * 2^61 and 1 <= s <= 32.
 *   - round(v / 2^s) in [-MAX, MAX]  <=>  D <= 2 MAX  <=>  (D + 1) >> 32 == 0,
 *     and then D - MAX is exactly tl_round_shr_s64(v, s, mode);
 *   - above the range: D >= 2 MAX + 1 (no wrap: v + MAX 2^s + bias < 2^64);
 *   - below the range: the sum wraps, so D >= 2^(63-s) + MAX >= 2^32 - 1.
 * D < 2^63, so D + 1 never wraps. A caller ORs D + 1 over several outputs
 * and, if bit 32 or above is set, redoes them with tl_round_sat_s32_fast. */
static TL_ALWAYS_INLINE uint64_t tl_round_offset_s64(int64_t v, tl_round_bias b)
{
    return ((uint64_t)v + b.add_max + (((uint64_t)v >> b.s) & b.odd_mask)) >> b.s;
}

/* D - MAX for an in-range D (D <= 2 MAX), as int32. */
static TL_ALWAYS_INLINE int32_t tl_round_offset_value(uint64_t d)
{
    return (int32_t)((int64_t)d - (int64_t)TL_S32_SAT_MAX);
}

/* r[i] = tl_sat_s32(tl_round_shr_s64(v[i], s, mode), ovf) for i < n,
 * n = 4 or 8: the in-range fast path for the whole group, and the exact
 * clamp-and-count path for the group only when one is out of range.
 * Preconditions of tl_round_offset_s64. Written out value by value (no
 * loop over an array): as a loop over v[], gcc vectorized it by storing the
 * sums one by one and reloading them two at a time, a store-to-load
 * forwarding stall that made the FFT slower than before although it ran
 * fewer instructions (docs/performance.md). */
static TL_ALWAYS_INLINE void tl_round_sat_s32_group(const int64_t *v, unsigned n, tl_round_bias b, int32_t *r,
                                                    uint32_t *ovf)
{
    const uint64_t d0 = tl_round_offset_s64(v[0], b), d1 = tl_round_offset_s64(v[1], b);
    const uint64_t d2 = tl_round_offset_s64(v[2], b), d3 = tl_round_offset_s64(v[3], b);
    uint64_t any = (d0 + 1u) | (d1 + 1u) | (d2 + 1u) | (d3 + 1u);
    uint64_t d4 = 0, d5 = 0, d6 = 0, d7 = 0;
    if (n == 8u) {
        d4 = tl_round_offset_s64(v[4], b);
        d5 = tl_round_offset_s64(v[5], b);
        d6 = tl_round_offset_s64(v[6], b);
        d7 = tl_round_offset_s64(v[7], b);
        any |= (d4 + 1u) | (d5 + 1u) | (d6 + 1u) | (d7 + 1u);
    }
    if ((any >> 32) == 0u) {
        r[0] = tl_round_offset_value(d0);
        r[1] = tl_round_offset_value(d1);
        r[2] = tl_round_offset_value(d2);
        r[3] = tl_round_offset_value(d3);
        if (n == 8u) {
            r[4] = tl_round_offset_value(d4);
            r[5] = tl_round_offset_value(d5);
            r[6] = tl_round_offset_value(d6);
            r[7] = tl_round_offset_value(d7);
        }
    } else {
        for (unsigned i = 0; i < n; i++)
            r[i] = tl_round_sat_s32_fast(v[i], b, ovf);
    }
}

/* tl_sat_s32 without branches: the same result and the same count. */
static TL_ALWAYS_INLINE int32_t tl_sat_s32_fast(int64_t v, uint32_t *ovf)
{
    /* out of range iff v + MAX is outside [0, 2 MAX], as unsigned */
    *ovf += (uint32_t)((uint64_t)(v + (int64_t)TL_S32_SAT_MAX) > 2u * (uint64_t)TL_S32_SAT_MAX);
    v = (v > (int64_t)TL_S32_SAT_MAX) ? (int64_t)TL_S32_SAT_MAX : v;
    v = (v < (int64_t)TL_S32_SAT_MIN) ? (int64_t)TL_S32_SAT_MIN : v;
    return (int32_t)v;
}

/* v / 2^s rounded by mode for unsigned v, 0 <= s <= 63. Never overflows for
 * s >= 1: the floor is at most 2^(64-s) - 1 and the increment at most 1. */
static inline uint64_t tl_round_shr_u64(uint64_t v, unsigned s, tl_rounding mode)
{
    if (s == 0u)
        return v;
    const uint64_t q = v >> s;
    const uint64_t low = v & (((uint64_t)1 << s) - 1u);
    return q + tl_round_increment(low, q & 1u, s, mode);
}

/* Clamp v to [TL_S32_SAT_MIN, TL_S32_SAT_MAX]; adds 1 to *ovf when it clamps.
 * The symmetric range keeps |x|^2 and x*y of two results below 2^62, so
 * detection never overflows 64 bits. */
static inline int32_t tl_sat_s32(int64_t v, uint32_t *ovf)
{
    if (v > (int64_t)TL_S32_SAT_MAX) {
        *ovf += 1u;
        return TL_S32_SAT_MAX;
    }
    if (v < (int64_t)TL_S32_SAT_MIN) {
        *ovf += 1u;
        return TL_S32_SAT_MIN;
    }
    return (int32_t)v;
}

/* a + b saturated at UINT64_MAX; sets *sat to 1 when it saturates. */
static inline uint64_t tl_sat_add_u64(uint64_t a, uint64_t b, uint32_t *sat)
{
    const uint64_t r = a + b; /* unsigned wrap is defined */
    if (r < a) {
        *sat = 1u;
        return UINT64_MAX;
    }
    return r;
}

/* a + b saturated to [INT64_MIN, INT64_MAX]; sets *sat to 1 when it saturates.
 * Computed in unsigned arithmetic so the wrap is defined, then checked by sign. */
static inline int64_t tl_sat_add_s64(int64_t a, int64_t b, uint32_t *sat)
{
    const uint64_t ur = (uint64_t)a + (uint64_t)b;
    /* overflow iff a and b share a sign and the result's sign differs */
    const uint64_t ovf = ((~((uint64_t)a ^ (uint64_t)b)) & ((uint64_t)a ^ ur)) >> 63;
    if (ovf != 0u) {
        *sat = 1u;
        return (a < 0) ? INT64_MIN : INT64_MAX;
    }
    /* ur is in range: convert through the bit pattern without an
     * implementation-defined conversion of an out-of-range unsigned value. */
    return (ur <= (uint64_t)INT64_MAX) ? (int64_t)ur : -(int64_t)(~ur) - 1;
}

/* Saturating counter increment by n (counts stop at UINT32_MAX). */
static inline void tl_count_add(uint32_t *counter, uint32_t n)
{
    const uint32_t r = *counter + n;
    *counter = (r < *counter) ? UINT32_MAX : r;
}

#endif
