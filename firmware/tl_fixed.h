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
