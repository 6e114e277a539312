/*
 * test_fixed.c - the fixed-point primitives of firmware/tl_fixed.h.
 *
 * Every result is compared with an exact reference computed here in a
 * different way: floor and rounding by integer division of non-negative
 * __int128 values (never by shifting), saturation by __int128 sums.
 * TL_ROUND_TRUNCATE is IEEE 754-2008 roundTowardNegative and
 * TL_ROUND_HALF_EVEN is roundTiesToEven (section 4.3) applied to the exact
 * quotient [memory]; TL_ROUND_HALF_UP (ties towards +infinity) has no IEEE
 * counterpart and follows the definition in tl_fixed.h.
 */
#include "tl_test.h"

#include <math.h>
#include <stdio.h>
#include <string.h>
#include "rng.h"
#include "tl_fixed.h"

typedef __int128 i128;

/* int64 with the two's complement bit pattern u, without an
 * implementation-defined conversion. */
static int64_t s64_from_bits(uint64_t u)
{
    return (u <= (uint64_t)INT64_MAX) ? (int64_t)u : -(int64_t)(~u) - 1;
}

/* floor(v / 2^s) by division of non-negative numbers only. */
static i128 ref_floor(i128 v, unsigned s)
{
    const i128 d = (i128)1 << s;
    if (v >= 0)
        return v / d;
    return -((-v + d - 1) / d); /* floor(-a/d) = -ceil(a/d) */
}

/* v / 2^s rounded by mode: floor, then compare twice the remainder with d. */
static i128 ref_round(i128 v, unsigned s, tl_rounding mode)
{
    if (s == 0u)
        return v;
    const i128 d = (i128)1 << s;
    const i128 q = ref_floor(v, s);
    const i128 r = v - q * d; /* 0 <= r < d */
    if (mode == TL_ROUND_TRUNCATE || 2 * r < d)
        return q;
    if (2 * r > d)
        return q + 1;
    /* exact tie */
    if (mode == TL_ROUND_HALF_UP)
        return q + 1;
    return (q % 2 == 0) ? q : q + 1;
}

static const tl_rounding modes[3] = { TL_ROUND_TRUNCATE, TL_ROUND_HALF_UP, TL_ROUND_HALF_EVEN };
static const char *const mode_names[3] = { "truncate", "half-up", "half-even" };

/* ---- tl_floor_shr_s64 ------------------------------------------------------ */

static void floor_hand_worked(void **state)
{
    (void)state;
    /* hand-worked: floor of the exact quotient */
    assert_int_equal(tl_floor_shr_s64(5, 0), 5);
    assert_int_equal(tl_floor_shr_s64(-5, 0), -5);
    assert_int_equal(tl_floor_shr_s64(5, 1), 2);    /* 2.5 */
    assert_int_equal(tl_floor_shr_s64(-1, 1), -1);  /* -0.5 */
    assert_int_equal(tl_floor_shr_s64(-2, 1), -1);  /* -1 exactly */
    assert_int_equal(tl_floor_shr_s64(-3, 1), -2);  /* -1.5 */
    assert_int_equal(tl_floor_shr_s64(-5, 2), -2);  /* -1.25 */
    assert_int_equal(tl_floor_shr_s64(-4, 2), -1);  /* -1 exactly */
    assert_int_equal(tl_floor_shr_s64(-1, 63), -1); /* tiny negative */
    assert_int_equal(tl_floor_shr_s64(1, 63), 0);
    assert_true(tl_floor_shr_s64(INT64_MIN, 0) == INT64_MIN);
    assert_true(tl_floor_shr_s64(INT64_MAX, 0) == INT64_MAX);
    assert_int_equal(tl_floor_shr_s64(INT64_MIN, 63), -1); /* -1 exactly */
    assert_int_equal(tl_floor_shr_s64(INT64_MAX, 63), 0);  /* 1 - 2^-63 */
    assert_int_equal(tl_floor_shr_s64(INT64_MIN, 62), -2);
    assert_int_equal(tl_floor_shr_s64(INT64_MIN + 1, 62), -2); /* -2 + 2^-62 */
    assert_int_equal(tl_floor_shr_s64(INT64_MAX, 62), 1);
    assert_true(tl_floor_shr_s64(INT64_MIN, 1) == -((int64_t)1 << 62));
    assert_true(tl_floor_shr_s64(INT64_MIN + 1, 1) == -((int64_t)1 << 62)); /* -2^62 + 0.5 */
    assert_true(tl_floor_shr_s64(INT64_MAX, 1) == ((int64_t)1 << 62) - 1);
}

static void floor_exhaustive_small(void **state)
{
    (void)state;
    for (unsigned s = 0; s <= 8u; s++)
        for (int64_t v = -4096; v <= 4096; v++) {
            const int64_t got = tl_floor_shr_s64(v, s);
            if ((i128)got != ref_floor(v, s))
                fail_msg("tl_floor_shr_s64(%lld, %u) = %lld, expected %lld", (long long)v, s, (long long)got,
                         (long long)ref_floor(v, s));
        }
}

static void floor_random_large(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("floor_random_large", 0x5EEDF100u));
    for (unsigned i = 0; i < 200000u; i++) {
        const unsigned mag = (unsigned)(tl_rng_u64(&r) % 63u); /* vary the magnitude */
        const int64_t v = s64_from_bits(tl_rng_u64(&r)) / ((int64_t)1 << mag);
        const unsigned s = (unsigned)(tl_rng_u64(&r) % 64u);
        const int64_t got = tl_floor_shr_s64(v, s);
        if ((i128)got != ref_floor(v, s))
            fail_msg("tl_floor_shr_s64(%lld, %u) = %lld, expected %lld", (long long)v, s, (long long)got,
                     (long long)ref_floor(v, s));
    }
}

/* ---- tl_round_shr_s64 / tl_round_shr_u64 ---------------------------------- */

typedef struct hand_case {
    int64_t v;
    unsigned s;
    int64_t want[3]; /* truncate, half-up, half-even */
} hand_case;

static void round_s64_hand_worked(void **state)
{
    (void)state;
    const int64_t two62 = (int64_t)1 << 62, two61 = (int64_t)1 << 61;
    /* hand-worked: the exact quotient is in the comment */
    const hand_case cases[] = {
        { 5, 0, { 5, 5, 5 } },
        { -5, 0, { -5, -5, -5 } },
        { INT64_MIN, 0, { INT64_MIN, INT64_MIN, INT64_MIN } },
        { INT64_MAX, 0, { INT64_MAX, INT64_MAX, INT64_MAX } },
        { 1, 1, { 0, 1, 0 } },        /* 0.5 tie, even result 0 */
        { -1, 1, { -1, 0, 0 } },      /* -0.5 tie, even result 0 */
        { 3, 1, { 1, 2, 2 } },        /* 1.5 tie, even result 2 */
        { -3, 1, { -2, -1, -2 } },    /* -1.5 tie, even result -2 */
        { 5, 1, { 2, 3, 2 } },        /* 2.5 */
        { -5, 1, { -3, -2, -2 } },    /* -2.5 */
        { 7, 1, { 3, 4, 4 } },        /* 3.5 */
        { -7, 1, { -4, -3, -4 } },    /* -3.5 */
        { 4, 1, { 2, 2, 2 } },        /* exact */
        { -4, 1, { -2, -2, -2 } },    /* exact */
        { 1, 2, { 0, 0, 0 } },        /* 0.25 */
        { -1, 2, { -1, 0, 0 } },      /* -0.25 */
        { 3, 2, { 0, 1, 1 } },        /* 0.75 */
        { -3, 2, { -1, -1, -1 } },    /* -0.75 */
        { 2, 2, { 0, 1, 0 } },        /* 0.5 */
        { -2, 2, { -1, 0, 0 } },      /* -0.5 */
        { 6, 2, { 1, 2, 2 } },        /* 1.5 */
        { -6, 2, { -2, -1, -2 } },    /* -1.5 */
        { 10, 2, { 2, 3, 2 } },       /* 2.5 */
        { -10, 2, { -3, -2, -2 } },   /* -2.5 */
        { 2047, 12, { 0, 0, 0 } },    /* 0.49976 */
        { 2048, 12, { 0, 1, 0 } },    /* 0.5 */
        { 2049, 12, { 0, 1, 1 } },    /* 0.50024 */
        { -2049, 12, { -1, -1, -1 } },
        { -2048, 12, { -1, 0, 0 } },
        { -2047, 12, { -1, 0, 0 } },
        { INT64_MAX, 1, { two62 - 1, two62, two62 } },         /* 2^62 - 0.5, floor odd */
        { INT64_MIN, 1, { -two62, -two62, -two62 } },          /* exact */
        { INT64_MIN + 1, 1, { -two62, -two62 + 1, -two62 } }, /* -2^62 + 0.5, floor even */
        { INT64_MAX, 62, { 1, 2, 2 } },                        /* 2 - 2^-62 */
        { INT64_MIN, 62, { -2, -2, -2 } },                     /* exact */
        { INT64_MIN + 1, 62, { -2, -2, -2 } },                 /* -2 + 2^-62 */
        { 3 * two61, 62, { 1, 2, 2 } },                        /* 1.5 */
        { -3 * two61, 62, { -2, -1, -2 } },                    /* -1.5 */
        { two61, 62, { 0, 1, 0 } },                            /* 0.5 */
        { -two61, 62, { -1, 0, 0 } },                          /* -0.5 */
        { -two61 - 1, 62, { -1, -1, -1 } },                    /* just below -0.5 */
        { two61 - 1, 62, { 0, 0, 0 } },                        /* just below 0.5 */
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
        for (unsigned m = 0; m < 3u; m++) {
            const int64_t got = tl_round_shr_s64(cases[i].v, cases[i].s, modes[m]);
            if (got != cases[i].want[m])
                fail_msg("tl_round_shr_s64(%lld, %u, %s) = %lld, expected %lld", (long long)cases[i].v, cases[i].s,
                         mode_names[m], (long long)got, (long long)cases[i].want[m]);
        }
}

typedef struct hand_case_u {
    uint64_t v;
    unsigned s;
    uint64_t want[3];
} hand_case_u;

static void round_u64_hand_worked(void **state)
{
    (void)state;
    const uint64_t two63 = (uint64_t)1 << 63, two62 = (uint64_t)1 << 62;
    const hand_case_u cases[] = {
        { 0, 0, { 0, 0, 0 } },
        { UINT64_MAX, 0, { UINT64_MAX, UINT64_MAX, UINT64_MAX } },
        { 1, 1, { 0, 1, 0 } },   /* 0.5 */
        { 3, 1, { 1, 2, 2 } },   /* 1.5 */
        { 5, 1, { 2, 3, 2 } },   /* 2.5 */
        { 5, 2, { 1, 1, 1 } },   /* 1.25 */
        { 7, 2, { 1, 2, 2 } },   /* 1.75 */
        { 10, 2, { 2, 3, 2 } },  /* 2.5 */
        { 14, 2, { 3, 4, 4 } },  /* 3.5 */
        { UINT64_MAX, 1, { two63 - 1, two63, two63 } },          /* 2^63 - 0.5, floor odd */
        { UINT64_MAX - 2, 1, { two63 - 2, two63 - 1, two63 - 2 } }, /* 2^63 - 1.5, floor even */
        { UINT64_MAX, 62, { 3, 4, 4 } },                          /* 4 - 2^-62 */
        { UINT64_MAX, 63, { 1, 2, 2 } },                          /* 2 - 2^-63 */
        { two63, 63, { 1, 1, 1 } },                               /* exact */
        { two62, 63, { 0, 1, 0 } },                               /* 0.5 */
        { 3 * two62, 63, { 1, 2, 2 } },                           /* 1.5 */
        { two62 - 1, 63, { 0, 0, 0 } },                           /* just below 0.5 */
        { two62 + 1, 63, { 0, 1, 1 } },                           /* just above 0.5 */
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
        for (unsigned m = 0; m < 3u; m++) {
            const uint64_t got = tl_round_shr_u64(cases[i].v, cases[i].s, modes[m]);
            if (got != cases[i].want[m])
                fail_msg("tl_round_shr_u64(%llu, %u, %s) = %llu, expected %llu", (unsigned long long)cases[i].v,
                         cases[i].s, mode_names[m], (unsigned long long)got, (unsigned long long)cases[i].want[m]);
        }
}

static void round_exhaustive_small(void **state)
{
    (void)state;
    unsigned long checked = 0;
    for (unsigned m = 0; m < 3u; m++)
        for (unsigned s = 1; s <= 8u; s++)
            for (int64_t v = -4096; v <= 4096; v++) {
                const int64_t got = tl_round_shr_s64(v, s, modes[m]);
                const i128 want = ref_round(v, s, modes[m]);
                if ((i128)got != want)
                    fail_msg("tl_round_shr_s64(%lld, %u, %s) = %lld, expected %lld", (long long)v, s, mode_names[m],
                             (long long)got, (long long)want);
                if (v >= 0) {
                    const uint64_t gu = tl_round_shr_u64((uint64_t)v, s, modes[m]);
                    if ((i128)gu != want)
                        fail_msg("tl_round_shr_u64(%lld, %u, %s) = %llu, expected %lld", (long long)v, s,
                                 mode_names[m], (unsigned long long)gu, (long long)want);
                }
                checked++;
            }
    assert_int_equal(checked, 3ul * 8ul * 8193ul);
}

static void round_random_large(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("round_random_large", 0x5EEDF101u));
    for (unsigned i = 0; i < 200000u; i++) {
        const unsigned mag = (unsigned)(tl_rng_u64(&r) % 63u); /* vary the magnitude */
        const uint64_t u = tl_rng_u64(&r) >> mag;
        const int64_t v = s64_from_bits(tl_rng_u64(&r)) / ((int64_t)1 << mag);
        const tl_rounding mode = modes[tl_rng_u64(&r) % 3u];
        const unsigned s63 = (unsigned)(tl_rng_u64(&r) % 63u); /* 0 .. 62 for the signed form */
        const unsigned s64 = (unsigned)(tl_rng_u64(&r) % 64u); /* 0 .. 63 for the unsigned form */
        const int64_t gs = tl_round_shr_s64(v, s63, mode);
        if ((i128)gs != ref_round(v, s63, mode))
            fail_msg("tl_round_shr_s64(%lld, %u, %d) = %lld, expected %lld", (long long)v, s63, (int)mode,
                     (long long)gs, (long long)ref_round(v, s63, mode));
        const uint64_t gu = tl_round_shr_u64(u, s64, mode);
        if ((i128)gu != ref_round(u, s64, mode))
            fail_msg("tl_round_shr_u64(%llu, %u, %d) = %llu, expected %llu", (unsigned long long)u, s64, (int)mode,
                     (unsigned long long)gu, (unsigned long long)ref_round(u, s64, mode));
    }
}

/* Exact ties at every shift: v = (2k + 1) 2^(s-1) for random k of both signs. */
static void round_ties_every_shift(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("round_ties_every_shift", 0x5EEDF102u));
    for (unsigned s = 1; s <= 62u; s++)
        for (unsigned i = 0; i < 200u; i++) {
            const int64_t kmax = ((int64_t)1 << (62u - s)) - 1; /* keeps |v| < 2^62 */
            const int64_t k = (int64_t)(tl_rng_u64(&r) % (uint64_t)(2 * kmax + 1)) - kmax;
            const int64_t v = (2 * k + 1) * ((int64_t)1 << (s - 1u));
            /* at a tie: truncate gives k, half-up k + 1, half-even the even one */
            assert_true(tl_round_shr_s64(v, s, TL_ROUND_TRUNCATE) == k);
            assert_true(tl_round_shr_s64(v, s, TL_ROUND_HALF_UP) == k + 1);
            assert_true(tl_round_shr_s64(v, s, TL_ROUND_HALF_EVEN) == ((k % 2 == 0) ? k : k + 1));
        }
}

/* Mean error over every pattern of the s low bits, for both parities of the
 * floor (a window of 2^(s+1) consecutive inputs), at a positive and a
 * negative offset. Errors are summed exactly in units of 2^-s output LSB:
 * e = result * 2^s - v. Expected means are the ones documented in
 * tl_fixed.h, worked out by hand: over low = 0 .. 2^s - 1,
 *   truncate   sum(-low)                          -> -(2^s - 1) / 2^(s+1)
 *   half-up    -sum_{low<h} low + sum_{low>=h} (2^s - low) = h -> 2^-(s+1)
 *   half-even  ties alternate -1/2, +1/2          -> 0                      */
static void round_mean_error(void **state)
{
    (void)state;
    const int64_t offsets[2] = { 1024, -4096 };
    for (unsigned s = 1; s <= 6u; s++)
        for (unsigned o = 0; o < 2u; o++)
            for (unsigned m = 0; m < 3u; m++) {
                const int64_t d = (int64_t)1 << s;
                const int64_t n = 2 * d; /* both parities of the floor */
                int64_t sum_s = 0, sum_u = 0;
                for (int64_t v = offsets[o]; v < offsets[o] + n; v++) {
                    sum_s += tl_round_shr_s64(v, s, modes[m]) * d - v;
                    if (v >= 0)
                        sum_u += (int64_t)tl_round_shr_u64((uint64_t)v, s, modes[m]) * d - v;
                }
                /* mean = sum / (n * 2^s); compare 2 * sum (exact integers) */
                int64_t want2;
                if (modes[m] == TL_ROUND_HALF_EVEN)
                    want2 = 0;                     /* mean 0 */
                else if (modes[m] == TL_ROUND_HALF_UP)
                    want2 = n;                     /* mean 2^-(s+1): 2 sum = n */
                else
                    want2 = -(d - 1) * n;          /* mean -(2^s-1)/2^(s+1): 2 sum = -(2^s-1) n */
                if (2 * sum_s != want2)
                    fail_msg("s=%u offset=%lld %s: mean error %.9g LSB, expected %.9g", s, (long long)offsets[o],
                             mode_names[m], (double)sum_s / (double)(n * d), (double)want2 / (double)(2 * n * d));
                if (offsets[o] >= 0 && 2 * sum_u != want2)
                    fail_msg("u64 s=%u %s: mean error %.9g LSB, expected %.9g", s, mode_names[m],
                             (double)sum_u / (double)(n * d), (double)want2 / (double)(2 * n * d));
            }
    /* spot values of the documented means (s = 3): -7/16, +1/16, 0 */
    int64_t sum[3] = { 0, 0, 0 };
    for (unsigned m = 0; m < 3u; m++)
        for (int64_t v = 0; v < 16; v++)
            sum[m] += tl_round_shr_s64(v, 3, modes[m]) * 8 - v;
    assert_int_equal(sum[0], -56); /* -56 / (16 * 8) = -7/16 */
    assert_int_equal(sum[1], 8);   /* 8 / 128 = 1/16 */
    assert_int_equal(sum[2], 0);
}

/* ---- saturation -------------------------------------------------------------- */

static void sat_s32_symmetric(void **state)
{
    (void)state;
    const int64_t big = 2147483647; /* 2^31 - 1 */
    uint32_t ovf = 5;
    assert_int_equal(TL_S32_SAT_MAX, 2147483647);
    assert_int_equal(TL_S32_SAT_MIN, -2147483647);
    /* in range: unchanged, no count */
    assert_int_equal(tl_sat_s32(0, &ovf), 0);
    assert_int_equal(tl_sat_s32(big, &ovf), 2147483647);
    assert_int_equal(tl_sat_s32(-big, &ovf), -2147483647);
    assert_int_equal(tl_sat_s32(-12345, &ovf), -12345);
    assert_int_equal(ovf, 5);
    /* clamps: each adds one */
    assert_int_equal(tl_sat_s32(big + 1, &ovf), 2147483647);
    assert_int_equal(ovf, 6);
    assert_int_equal(tl_sat_s32(-big - 1, &ovf), -2147483647); /* -2^31 is outside the symmetric range */
    assert_int_equal(ovf, 7);
    assert_int_equal(tl_sat_s32(INT64_MAX, &ovf), 2147483647);
    assert_int_equal(tl_sat_s32(INT64_MIN, &ovf), -2147483647);
    assert_int_equal(ovf, 9);
    /* a sweep across both edges: the count equals the number clamped */
    uint32_t count = 0, clamped = 0;
    for (int64_t v = -big - 300; v <= -big + 300; v++) {
        const int32_t y = tl_sat_s32(v, &count);
        clamped += (v < -big) ? 1u : 0u;
        assert_true((int64_t)y == ((v < -big) ? -big : v));
    }
    for (int64_t v = big - 300; v <= big + 300; v++) {
        const int32_t y = tl_sat_s32(v, &count);
        clamped += (v > big) ? 1u : 0u;
        assert_true((int64_t)y == ((v > big) ? big : v));
    }
    assert_int_equal(clamped, 600);
    assert_int_equal(count, clamped);
}

static void sat_add_u64_edges(void **state)
{
    (void)state;
    const uint64_t two63 = (uint64_t)1 << 63;
    uint32_t sat = 0;
    assert_true(tl_sat_add_u64(UINT64_MAX, 0, &sat) == UINT64_MAX);
    assert_true(tl_sat_add_u64(two63, two63 - 1u, &sat) == UINT64_MAX); /* exactly the maximum */
    assert_true(tl_sat_add_u64(0, 0, &sat) == 0u);
    assert_true(tl_sat_add_u64(123, 456, &sat) == 579u);
    assert_int_equal(sat, 0);
    assert_true(tl_sat_add_u64(UINT64_MAX, 1, &sat) == UINT64_MAX);
    assert_int_equal(sat, 1);
    sat = 0;
    assert_true(tl_sat_add_u64(two63, two63, &sat) == UINT64_MAX); /* 2^64 */
    assert_int_equal(sat, 1);
    sat = 0;
    assert_true(tl_sat_add_u64(UINT64_MAX, UINT64_MAX, &sat) == UINT64_MAX);
    assert_int_equal(sat, 1);
    sat = 0;
    assert_true(tl_sat_add_u64(1, UINT64_MAX, &sat) == UINT64_MAX);
    assert_int_equal(sat, 1);
}

static void sat_add_s64_edges(void **state)
{
    (void)state;
    uint32_t sat = 0;
    /* no saturation, including sums that land exactly on the ends */
    assert_true(tl_sat_add_s64(INT64_MAX, INT64_MIN, &sat) == -1);
    assert_true(tl_sat_add_s64(INT64_MAX, 0, &sat) == INT64_MAX);
    assert_true(tl_sat_add_s64(INT64_MIN, 0, &sat) == INT64_MIN);
    assert_true(tl_sat_add_s64(INT64_MAX - 5, 5, &sat) == INT64_MAX);
    assert_true(tl_sat_add_s64(INT64_MIN + 5, -5, &sat) == INT64_MIN);
    assert_true(tl_sat_add_s64(-1, -1, &sat) == -2);
    assert_true(tl_sat_add_s64(INT64_MIN, INT64_MAX, &sat) == -1);
    assert_true(tl_sat_add_s64(-7, 3, &sat) == -4);
    assert_int_equal(sat, 0);
    /* top end */
    assert_true(tl_sat_add_s64(INT64_MAX, 1, &sat) == INT64_MAX);
    assert_int_equal(sat, 1);
    sat = 0;
    assert_true(tl_sat_add_s64(INT64_MAX, INT64_MAX, &sat) == INT64_MAX);
    assert_int_equal(sat, 1);
    sat = 0;
    assert_true(tl_sat_add_s64(INT64_MAX - 5, 6, &sat) == INT64_MAX);
    assert_int_equal(sat, 1);
    /* bottom end */
    sat = 0;
    assert_true(tl_sat_add_s64(INT64_MIN, -1, &sat) == INT64_MIN);
    assert_int_equal(sat, 1);
    sat = 0;
    assert_true(tl_sat_add_s64(INT64_MIN, INT64_MIN, &sat) == INT64_MIN);
    assert_int_equal(sat, 1);
    sat = 0;
    assert_true(tl_sat_add_s64(-1, INT64_MIN, &sat) == INT64_MIN);
    assert_int_equal(sat, 1);
}

static void sat_add_random_vs_int128(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sat_add_random_vs_int128", 0x5EEDF103u));
    unsigned sat_u_count = 0, sat_hi = 0, sat_lo = 0, exact = 0;
    for (unsigned i = 0; i < 300000u; i++) {
        /* full-range and shifted-down operands, so both exact and saturating sums occur */
        const unsigned ma = (unsigned)(tl_rng_u64(&r) % 4u), mb = (unsigned)(tl_rng_u64(&r) % 4u);
        const uint64_t ua = tl_rng_u64(&r) >> ma, ub = tl_rng_u64(&r) >> mb;
        const int64_t a = s64_from_bits(tl_rng_u64(&r)) / ((int64_t)1 << ma);
        const int64_t b = s64_from_bits(tl_rng_u64(&r)) / ((int64_t)1 << mb);

        uint32_t su = 0;
        const uint64_t gu = tl_sat_add_u64(ua, ub, &su);
        const i128 wu = (i128)ua + (i128)ub;
        const int over_u = wu > (i128)UINT64_MAX;
        if ((i128)gu != (over_u ? (i128)UINT64_MAX : wu) || su != (over_u ? 1u : 0u))
            fail_msg("tl_sat_add_u64(%llu, %llu) = %llu sat %u", (unsigned long long)ua, (unsigned long long)ub,
                     (unsigned long long)gu, su);
        sat_u_count += (unsigned)over_u;

        uint32_t ss = 0;
        const int64_t gs = tl_sat_add_s64(a, b, &ss);
        const i128 ws = (i128)a + (i128)b;
        const i128 want = ws > INT64_MAX ? INT64_MAX : ws < INT64_MIN ? INT64_MIN : ws;
        const int over_s = ws > INT64_MAX || ws < INT64_MIN;
        if ((i128)gs != want || ss != (over_s ? 1u : 0u))
            fail_msg("tl_sat_add_s64(%lld, %lld) = %lld sat %u", (long long)a, (long long)b, (long long)gs, ss);
        sat_hi += (unsigned)(ws > INT64_MAX);
        sat_lo += (unsigned)(ws < INT64_MIN);
        exact += (unsigned)!over_s;
    }
    /* the draw must have exercised every branch */
    assert_true(sat_u_count > 1000u);
    assert_true(sat_hi > 1000u);
    assert_true(sat_lo > 1000u);
    assert_true(exact > 1000u);
}

static void count_add_saturates(void **state)
{
    (void)state;
    uint32_t c = 0;
    tl_count_add(&c, 5);
    assert_int_equal(c, 5);
    tl_count_add(&c, 0);
    assert_int_equal(c, 5);
    c = UINT32_MAX - 1u;
    tl_count_add(&c, 1);
    assert_true(c == UINT32_MAX);
    c = UINT32_MAX - 1u;
    tl_count_add(&c, 2);
    assert_true(c == UINT32_MAX);
    tl_count_add(&c, 0);
    assert_true(c == UINT32_MAX);
    tl_count_add(&c, 1);
    assert_true(c == UINT32_MAX);
    tl_count_add(&c, UINT32_MAX);
    assert_true(c == UINT32_MAX);
    c = 0x80000000u;
    tl_count_add(&c, 0x80000000u); /* 2^32 */
    assert_true(c == UINT32_MAX);
    c = 0x80000000u;
    tl_count_add(&c, 0x7FFFFFFFu); /* 2^32 - 1 exactly */
    assert_true(c == UINT32_MAX);
    c = 1000u;
    tl_count_add(&c, 0x7FFFFFFFu);
    assert_true(c == 0x7FFFFFFFu + 1000u);
}

/* ---- the branch-free twins used by the FFT and filterbank kernels ---------- */

/* tl_round_shr_s64_fast, tl_round_sat_s32_fast, tl_round_offset_s64 and
 * tl_round_sat_s32_group against the exact __int128 reference (ref_round and
 * a clamp at +-(2^31 - 1)) over their whole documented domain
 * -2^63 <= v < 3 * 2^61, 1 <= s <= 32 (62 for the first): random values at
 * every magnitude, ties and near-ties at every shift, and the edges of the
 * domain and of the int32 range. */
static void fast_twins_match(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("fixed_fast_twins", 0xF457u));
    const i128 vmax = ((i128)3 << 61) - 1, vmin = -((i128)1 << 63);
    unsigned checked = 0, clamped = 0;
    for (unsigned s = 1; s <= 62u; s++) {
        for (unsigned m = 0; m < 3u; m++) {
            const tl_round_bias b = tl_round_bias_make(s, modes[m]);
            for (unsigned i = 0; i < 4000u; i++) {
                i128 v;
                const unsigned kind = i % 8u;
                if (kind == 0u)
                    v = (i128)s64_from_bits(tl_rng_u64(&r)); /* any bit pattern */
                else if (kind == 1u)
                    v = (i128)s64_from_bits(tl_rng_u64(&r) >> (tl_rng_u64(&r) % 64u)); /* any magnitude */
                else if (kind == 2u)
                    v = -(i128)s64_from_bits(tl_rng_u64(&r) >> (tl_rng_u64(&r) % 64u));
                else if (kind == 3u || kind == 4u) { /* at and beside a tie */
                    const i128 q = (i128)s64_from_bits(tl_rng_u64(&r)) >> (s + 1u);
                    v = q * ((i128)1 << s) + ((i128)1 << (s - 1u)) + (i128)(tl_rng_u64(&r) % 3u) - 1;
                } else if (kind == 5u) { /* around the int32 clamp points */
                    const i128 edge = (i128)(i % 2u ? 1 : -1) * (((i128)TL_S32_SAT_MAX << s) + ((i128)1 << (s - 1u)));
                    v = edge + (i128)(tl_rng_u64(&r) % 5u) - 2 + ((i128)(tl_rng_u64(&r) % 3u) - 1) * ((i128)1 << s);
                } else if (kind == 6u)
                    v = (i % 2u) ? vmax - (i128)(tl_rng_u64(&r) % 4u) : vmin + (i128)(tl_rng_u64(&r) % 4u);
                else
                    v = (i128)(int64_t)(tl_rng_u64(&r) % 1000u) - 500;
                if (v > vmax)
                    v = vmax;
                if (v < vmin)
                    v = vmin;
                const int64_t v64 = (int64_t)v;
                const i128 want = ref_round(v, s, modes[m]);
                if ((i128)tl_round_shr_s64_fast(v64, b) != want)
                    fail_msg("tl_round_shr_s64_fast(%lld, %u, %s) = %lld, exact %lld", (long long)v64, s,
                             mode_names[m], (long long)tl_round_shr_s64_fast(v64, b), (long long)want);
                if (s > 32u)
                    continue;
                const int out = want > (i128)TL_S32_SAT_MAX || want < -(i128)TL_S32_SAT_MAX;
                const int32_t want32 = out ? (want > 0 ? TL_S32_SAT_MAX : -TL_S32_SAT_MAX) : (int32_t)want;
                uint32_t ovf = 7;
                const int32_t got = tl_round_sat_s32_fast(v64, b, &ovf);
                if (got != want32 || ovf != 7u + (uint32_t)out)
                    fail_msg("tl_round_sat_s32_fast(%lld, %u, %s) = %d (count +%u), exact %d (count +%d)",
                             (long long)v64, s, mode_names[m], got, ovf - 7u, want32, out);
                /* the group test: in range iff (D + 1) >> 32 == 0, and then D - MAX is the value */
                const uint64_t d = tl_round_offset_s64(v64, b);
                if (((d + 1u) >> 32 == 0u) == out || (!out && tl_round_offset_value(d) != want32))
                    fail_msg("tl_round_offset_s64(%lld, %u, %s) = %llu: wrong for the exact %lld", (long long)v64,
                             s, mode_names[m], (unsigned long long)d, (long long)want);
                /* a group of 8 with this value in one slot and in-range values elsewhere */
                int64_t g[8];
                int32_t gr[8], gw[8];
                for (unsigned k = 0; k < 8u; k++) {
                    g[k] = (int64_t)(tl_rng_u64(&r) % 2000001u) - 1000000;
                    gw[k] = (int32_t)ref_round(g[k], s, modes[m]);
                }
                g[i % 8u] = v64;
                gw[i % 8u] = want32;
                ovf = 0;
                tl_round_sat_s32_group(g, 8u, b, gr, &ovf);
                if (memcmp(gr, gw, sizeof gr) != 0 || ovf != (uint32_t)out)
                    fail_msg("tl_round_sat_s32_group with %lld in slot %u, s %u, %s: wrong result or count",
                             (long long)v64, i % 8u, s, mode_names[m]);
                /* and a group of 4, the value in slot i mod 4 */
                g[i % 8u] = g[(i + 4u) % 8u];
                gw[i % 8u] = gw[(i + 4u) % 8u];
                g[i % 4u] = v64;
                gw[i % 4u] = want32;
                ovf = 0;
                tl_round_sat_s32_group(g, 4u, b, gr, &ovf);
                if (memcmp(gr, gw, 4u * sizeof gr[0]) != 0 || ovf != (uint32_t)out)
                    fail_msg("tl_round_sat_s32_group (4) with %lld in slot %u, s %u, %s: wrong result or count",
                             (long long)v64, i % 4u, s, mode_names[m]);
                clamped += (unsigned)out;
                checked++;
            }
        }
    }
    assert_true(clamped > 1000u); /* the clamp paths were reached */
    printf("    fast twins: %u values checked at s = 1 .. 32, %u of them clamped\n", checked, clamped);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(floor_hand_worked),
        cmocka_unit_test(floor_exhaustive_small),
        cmocka_unit_test(floor_random_large),
        cmocka_unit_test(round_s64_hand_worked),
        cmocka_unit_test(round_u64_hand_worked),
        cmocka_unit_test(round_exhaustive_small),
        cmocka_unit_test(round_random_large),
        cmocka_unit_test(round_ties_every_shift),
        cmocka_unit_test(round_mean_error),
        cmocka_unit_test(sat_s32_symmetric),
        cmocka_unit_test(sat_add_u64_edges),
        cmocka_unit_test(sat_add_s64_edges),
        cmocka_unit_test(sat_add_random_vs_int128),
        cmocka_unit_test(count_add_saturates),
        cmocka_unit_test(fast_twins_match),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
