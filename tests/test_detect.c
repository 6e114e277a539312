/*
 * test_detect.c - power and cross-power detection (firmware/tl_detect.h)
 * against exact __int128 products followed by an exact rounding computed
 * by integer division (not by the shifts of tl_fixed.h).
 */
#include "tl_test.h"

#include <stdlib.h>
#include <string.h>
#include "rng.h"
#include "tl_detect.h"

typedef __int128 i128;

#define M31 2147483647 /* 2^31 - 1, the symmetric input limit */

static const tl_rounding modes[3] = { TL_ROUND_TRUNCATE, TL_ROUND_HALF_UP, TL_ROUND_HALF_EVEN };
static const unsigned shifts[5] = { 0, 1, 12, 24, 40 };

static i128 ref_floor(i128 v, unsigned s)
{
    const i128 d = (i128)1 << s;
    return (v >= 0) ? v / d : -((-v + d - 1) / d);
}

/* v / 2^s rounded by mode; *tie set when v / 2^s is exactly halfway. */
static i128 ref_round(i128 v, unsigned s, tl_rounding mode, int *tie)
{
    *tie = 0;
    if (s == 0u)
        return v;
    const i128 d = (i128)1 << s;
    const i128 q = ref_floor(v, s);
    const i128 r = v - q * d;
    *tie = (2 * r == d);
    if (mode == TL_ROUND_TRUNCATE || 2 * r < d)
        return q;
    if (2 * r > d || mode == TL_ROUND_HALF_UP)
        return q + 1;
    return (q % 2 == 0) ? q : q + 1;
}

static int32_t rand_sym(tl_rng *r)
{
    /* uniform over [-(2^31 - 1), 2^31 - 1] */
    return (int32_t)((int64_t)(tl_rng_u64(r) % 4294967295u) - M31);
}

/* Run both detectors on `channels` channels and compare every output with
 * the exact reference. Returns the number of exact ties met. The output
 * arrays have one canary element past the end. */
static unsigned check_against_reference(const int32_t *X, const int32_t *Y, uint32_t channels, unsigned shift,
                                        tl_rounding mode)
{
    uint64_t *P = malloc((channels + 1u) * sizeof *P);
    int64_t *re = malloc((channels + 1u) * sizeof *re);
    int64_t *im = malloc((channels + 1u) * sizeof *im);
    assert_non_null(P);
    assert_non_null(re);
    assert_non_null(im);
    P[channels] = 0xC0FFEEu;
    re[channels] = 0x5A5A5A5A;
    im[channels] = -0x5A5A5A5A;
    unsigned ties = 0;
    for (unsigned input = 0; input < 2u; input++) {
        const int32_t *Z = (input == 0u) ? X : Y;
        tl_detect_power(Z, channels, shift, mode, P);
        for (uint32_t k = 0; k < channels; k++) {
            const i128 p = (i128)Z[2u * k] * Z[2u * k] + (i128)Z[2u * k + 1u] * Z[2u * k + 1u];
            int tie;
            const i128 want = ref_round(p, shift, mode, &tie);
            ties += (unsigned)tie;
            if ((i128)P[k] != want)
                fail_msg("power k=%u (%ld, %ld) shift %u mode %d: %llu, expected %llu", (unsigned)k,
                         (long)Z[2u * k], (long)Z[2u * k + 1u], shift, (int)mode, (unsigned long long)P[k],
                         (unsigned long long)want);
        }
    }
    tl_detect_cross(X, Y, channels, shift, mode, re, im);
    for (uint32_t k = 0; k < channels; k++) {
        const i128 xr = X[2u * k], xi = X[2u * k + 1u], yr = Y[2u * k], yi = Y[2u * k + 1u];
        /* X conj(Y) = (xr + j xi)(yr - j yi) */
        int tr, ti;
        const i128 wr = ref_round(xr * yr + xi * yi, shift, mode, &tr);
        const i128 wi = ref_round(xi * yr - xr * yi, shift, mode, &ti);
        ties += (unsigned)(tr + ti);
        if ((i128)re[k] != wr || (i128)im[k] != wi)
            fail_msg("cross k=%u X=(%ld, %ld) Y=(%ld, %ld) shift %u mode %d: (%lld, %lld), expected (%lld, %lld)",
                     (unsigned)k, (long)xr, (long)xi, (long)yr, (long)yi, shift, (int)mode, (long long)re[k],
                     (long long)im[k], (long long)wr, (long long)wi);
    }
    assert_true(P[channels] == 0xC0FFEEu); /* nothing written past `channels` */
    assert_true(re[channels] == 0x5A5A5A5A);
    assert_true(im[channels] == -0x5A5A5A5A);
    free(P);
    free(re);
    free(im);
    return ties;
}

static void sign_convention(void **state)
{
    (void)state;
    /* hand-worked: (1 + 2j) conj(3 + 4j) = (1 + 2j)(3 - 4j) = 11 + 2j */
    const int32_t X[2] = { 1, 2 }, Y[2] = { 3, 4 };
    int64_t re = 0, im = 0;
    uint64_t p = 0;
    for (unsigned m = 0; m < 3u; m++) {
        tl_detect_cross(X, Y, 1, 0, modes[m], &re, &im);
        assert_int_equal(re, 11);
        assert_int_equal(im, 2);
        tl_detect_cross(Y, X, 1, 0, modes[m], &re, &im); /* Y conj(X) = 11 - 2j */
        assert_int_equal(re, 11);
        assert_int_equal(im, -2);
        tl_detect_power(X, 1, 0, modes[m], &p);
        assert_int_equal(p, 5);
        tl_detect_power(Y, 1, 0, modes[m], &p);
        assert_int_equal(p, 25);
    }
    /* shift 1: 11/2 = 5.5 and 2/2 = 1; 25/2 = 12.5 */
    tl_detect_cross(X, Y, 1, 1, TL_ROUND_TRUNCATE, &re, &im);
    assert_int_equal(re, 5);
    assert_int_equal(im, 1);
    tl_detect_cross(X, Y, 1, 1, TL_ROUND_HALF_UP, &re, &im);
    assert_int_equal(re, 6);
    tl_detect_cross(X, Y, 1, 1, TL_ROUND_HALF_EVEN, &re, &im);
    assert_int_equal(re, 6);
    tl_detect_power(Y, 1, 1, TL_ROUND_HALF_EVEN, &p);
    assert_int_equal(p, 12);
    tl_detect_power(Y, 1, 1, TL_ROUND_HALF_UP, &p);
    assert_int_equal(p, 13);
    /* a negative tie: (1 + 0j) conj(0 + 1j) = -j, so im = -1 and -1/2 at shift 1 */
    const int32_t A[2] = { 1, 0 }, B[2] = { 0, 1 };
    tl_detect_cross(A, B, 1, 1, TL_ROUND_TRUNCATE, &re, &im);
    assert_int_equal(im, -1); /* floor(-0.5) */
    tl_detect_cross(A, B, 1, 1, TL_ROUND_HALF_UP, &re, &im);
    assert_int_equal(im, 0);  /* -0.5 up */
    tl_detect_cross(A, B, 1, 1, TL_ROUND_HALF_EVEN, &re, &im);
    assert_int_equal(im, 0);  /* -0.5 to even */
}

static void random_vs_int128(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("detect_random_vs_int128", 0xDE7EC701u));
    enum { C = 600 };
    int32_t X[2 * C], Y[2 * C];
    unsigned ties = 0;
    for (unsigned round = 0; round < 4u; round++) {
        for (unsigned i = 0; i < 2u * C; i++) {
            /* full range, and small values in a third of the channels so
             * that ties and small quotients occur too */
            X[i] = rand_sym(&r);
            Y[i] = rand_sym(&r);
            if (i % 3u == 0u) {
                X[i] = (int32_t)(X[i] / 65536);
                Y[i] = (int32_t)(Y[i] / 1048576);
            }
        }
        for (unsigned m = 0; m < 3u; m++)
            for (unsigned s = 0; s < 5u; s++)
                ties += check_against_reference(X, Y, C, shifts[s], modes[m]);
    }
    assert_true(ties > 0u);
}

static void extremes(void **state)
{
    (void)state;
    const int32_t vals[7] = { M31, -M31, M31 - 1, -(M31 - 1), 0, 1, -1 };
    enum { V = 7, PAIRS = V * V, C = PAIRS * PAIRS };
    int32_t *X = malloc(2u * C * sizeof *X), *Y = malloc(2u * C * sizeof *Y);
    assert_non_null(X);
    assert_non_null(Y);
    for (unsigned k = 0; k < C; k++) {
        const unsigned a = k / PAIRS, b = k % PAIRS;
        X[2u * k] = vals[a / V];
        X[2u * k + 1u] = vals[a % V];
        Y[2u * k] = vals[b / V];
        Y[2u * k + 1u] = vals[b % V];
    }
    for (unsigned m = 0; m < 3u; m++)
        for (unsigned s = 0; s < 5u; s++)
            (void)check_against_reference(X, Y, C, shifts[s], modes[m]);
    /* hand-worked largest magnitudes: 2 (2^31 - 1)^2 = 9223372028264841218 */
    const int32_t Xm[2] = { M31, M31 }, Ym[2] = { -M31, M31 }, Yc[2] = { M31, -M31 };
    uint64_t p = 0;
    int64_t re = 0, im = 0;
    tl_detect_power(Xm, 1, 0, TL_ROUND_HALF_EVEN, &p);
    assert_true(p == 9223372028264841218ull);
    tl_detect_power(Ym, 1, 0, TL_ROUND_HALF_EVEN, &p);
    assert_true(p == 9223372028264841218ull);
    tl_detect_cross(Xm, Ym, 1, 0, TL_ROUND_HALF_EVEN, &re, &im); /* (M + jM)(-M - jM) = -2jM^2 */
    assert_int_equal(re, 0);
    assert_true(im == -9223372028264841218ll);
    tl_detect_cross(Xm, Yc, 1, 0, TL_ROUND_HALF_EVEN, &re, &im); /* (M + jM)(M + jM) = 2jM^2 */
    assert_int_equal(re, 0);
    assert_true(im == 9223372028264841218ll);
    tl_detect_cross(Xm, Xm, 1, 0, TL_ROUND_HALF_EVEN, &re, &im); /* |X|^2 on the real axis */
    assert_true(re == 9223372028264841218ll);
    assert_int_equal(im, 0);
    /* shift 40: 9223372028264841218 / 2^40 = 8388607.99219 -> 8388607 / 8388608 */
    tl_detect_power(Xm, 1, 40, TL_ROUND_TRUNCATE, &p);
    assert_int_equal(p, 8388607);
    tl_detect_power(Xm, 1, 40, TL_ROUND_HALF_EVEN, &p);
    assert_int_equal(p, 8388608);
    tl_detect_cross(Xm, Ym, 1, 40, TL_ROUND_TRUNCATE, &re, &im);
    assert_int_equal(im, -8388608); /* floor(-8388607.99219) */
    tl_detect_cross(Xm, Ym, 1, 40, TL_ROUND_HALF_UP, &re, &im);
    assert_int_equal(im, -8388608);
    free(X);
    free(Y);
}

/* Inputs built so that every product lands exactly halfway between two
 * output values at the shift under test (a, b, c, d odd, below 2000):
 *   power: shift 1: (a, 2b) gives an odd |X|^2; even shift s: (a, b) 2^e with
 *          e = (s-2)/2 gives 2^(s-2) (a^2 + b^2) = 2^(s-1) * odd, because
 *          a^2 + b^2 = 2 mod 8 for odd a, b;
 *   cross: X = (a 2^i, 0), Y = (c 2^j, d 2^j), i + j = s - 1 gives
 *          re = ac 2^(s-1), im = -ad 2^(s-1). */
static int32_t rand_odd(tl_rng *r)
{
    const int32_t v = (int32_t)(2u * (tl_rng_u64(r) % 1000u) + 1u);
    return (tl_rng_u64(r) & 1u) ? v : -v;
}

static void exact_ties(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("detect_exact_ties", 0xDE7EC702u));
    enum { C = 256 };
    int32_t X[2 * C], Y[2 * C];
    for (unsigned s = 1; s < 5u; s++) {
        const unsigned sh = shifts[s];
        /* power ties in both inputs */
        for (unsigned k = 0; k < C; k++)
            for (unsigned in = 0; in < 2u; in++) {
                int32_t *Z = (in == 0u) ? X : Y;
                if (sh == 1u) {
                    Z[2u * k] = rand_odd(&r);
                    Z[2u * k + 1u] = 2 * rand_odd(&r);
                } else {
                    const int32_t e = (int32_t)1 << ((sh - 2u) / 2u);
                    Z[2u * k] = rand_odd(&r) * e;
                    Z[2u * k + 1u] = rand_odd(&r) * e;
                }
            }
        for (unsigned m = 0; m < 3u; m++)
            assert_true(check_against_reference(X, Y, C, sh, modes[m]) >= 2u * C);
        /* cross ties in both parts */
        const unsigned i = (sh - 1u) / 2u, j = sh - 1u - i;
        for (unsigned k = 0; k < C; k++) {
            X[2u * k] = rand_odd(&r) * ((int32_t)1 << i);
            X[2u * k + 1u] = 0;
            Y[2u * k] = rand_odd(&r) * ((int32_t)1 << j);
            Y[2u * k + 1u] = rand_odd(&r) * ((int32_t)1 << j);
        }
        for (unsigned m = 0; m < 3u; m++)
            assert_true(check_against_reference(X, Y, C, sh, modes[m]) >= 2u * C);
    }
}

static void zero_channels_writes_nothing(void **state)
{
    (void)state;
    const int32_t X[2] = { 5, 6 }, Y[2] = { 7, 8 };
    uint64_t p = 99;
    int64_t re = 98, im = 97;
    tl_detect_power(X, 0, 1, TL_ROUND_HALF_EVEN, &p);
    tl_detect_cross(X, Y, 0, 1, TL_ROUND_HALF_EVEN, &re, &im);
    assert_int_equal(p, 99);
    assert_int_equal(re, 98);
    assert_int_equal(im, 97);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(sign_convention),
        cmocka_unit_test(random_vs_int128),
        cmocka_unit_test(extremes),
        cmocka_unit_test(exact_ties),
        cmocka_unit_test(zero_channels_writes_nothing),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
