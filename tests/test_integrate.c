/*
 * test_integrate.c - saturating 64-bit integration (firmware/tl_integrate.h):
 * exact sums, saturation flags and per-channel counts, reset, the
 * split-integration identity, and the upset check of the running sums.
 */
#include "tl_test.h"

#include <stdlib.h>
#include <string.h>
#include "rng.h"
#include "tl_integrate.h"

typedef __int128 i128;

static tl_integrator *new_integrator(uint32_t channels)
{
    tl_integrator *it = malloc(sizeof *it);
    assert_non_null(it);
    memset(it, 0xA5, sizeof *it); /* garbage: reset must clear it all */
    tl_integrate_reset(it, channels);
    return it;
}

static int64_t s64_from_bits(uint64_t u)
{
    return (u <= (uint64_t)INT64_MAX) ? (int64_t)u : -(int64_t)(~u) - 1;
}

static void assert_all_clear(const tl_integrator *it)
{
    assert_int_equal(it->spectra, 0);
    for (unsigned i = 0; i < 4u; i++)
        assert_int_equal(it->sat_channels[i], 0);
    for (uint32_t k = 0; k < TL_MAX_CHANNELS; k++) {
        for (unsigned i = 0; i < TL_MAX_INPUTS; i++)
            assert_true(it->auto_sum[i][k] == 0u);
        assert_true(it->cross_re[k] == 0);
        assert_true(it->cross_im[k] == 0);
        assert_int_equal(it->flags[k], 0);
    }
}

static void reset_clears_everything(void **state)
{
    (void)state;
    tl_integrator *it = new_integrator(300);
    assert_int_equal(it->channels, 300);
    assert_all_clear(it); /* every channel up to TL_MAX_CHANNELS, not only 300 */
    /* dirty it with sums and saturations, then reset to another size */
    uint64_t P[300];
    int64_t re[300], im[300];
    for (unsigned k = 0; k < 300u; k++) {
        P[k] = UINT64_MAX - k;
        re[k] = INT64_MAX - (int64_t)k;
        im[k] = INT64_MIN + (int64_t)k;
    }
    tl_integrate_power(it, 0, P);
    tl_integrate_power(it, 0, P);
    tl_integrate_power(it, 1, P);
    tl_integrate_power(it, 1, P);
    tl_integrate_cross(it, re, im);
    tl_integrate_cross(it, re, im);
    it->spectra = 2;
    assert_true(it->sat_channels[0] > 0u);
    tl_integrate_reset(it, TL_MAX_CHANNELS);
    assert_int_equal(it->channels, TL_MAX_CHANNELS);
    assert_all_clear(it);
    free(it);
}

static void sums_are_exact(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("integrate_sums_are_exact", 0x1A7E6001u));
    enum { C = 1000, M = 64 };
    tl_integrator *it = new_integrator(C);
    static i128 want_auto[2][C], want_re[C], want_im[C];
    memset(want_auto, 0, sizeof want_auto);
    memset(want_re, 0, sizeof want_re);
    memset(want_im, 0, sizeof want_im);
    uint64_t P[C];
    int64_t re[C], im[C];
    for (unsigned m = 0; m < M; m++) {
        for (unsigned input = 0; input < 2u; input++) {
            /* up to 2^57 each: 64 of them stay below 2^63, sums use every bit */
            for (unsigned k = 0; k < C; k++) {
                P[k] = tl_rng_u64(&r) >> 7;
                want_auto[input][k] += P[k];
            }
            tl_integrate_power(it, input, P);
        }
        for (unsigned k = 0; k < C; k++) {
            re[k] = s64_from_bits(tl_rng_u64(&r)) / 128; /* |.| < 2^56 */
            im[k] = s64_from_bits(tl_rng_u64(&r)) / 128;
            want_re[k] += re[k];
            want_im[k] += im[k];
        }
        tl_integrate_cross(it, re, im);
    }
    for (unsigned k = 0; k < C; k++) {
        assert_true((i128)it->auto_sum[0][k] == want_auto[0][k]);
        assert_true((i128)it->auto_sum[1][k] == want_auto[1][k]);
        assert_true((i128)it->cross_re[k] == want_re[k]);
        assert_true((i128)it->cross_im[k] == want_im[k]);
        assert_int_equal(it->flags[k], 0);
    }
    for (unsigned i = 0; i < 4u; i++)
        assert_int_equal(it->sat_channels[i], 0);
    /* channels past `channels` are not touched */
    for (uint32_t k = C; k < TL_MAX_CHANNELS; k++) {
        assert_true(it->auto_sum[0][k] == 0u && it->auto_sum[1][k] == 0u);
        assert_true(it->cross_re[k] == 0 && it->cross_im[k] == 0);
    }
    free(it);
}

static void auto_saturates_at_max(void **state)
{
    (void)state;
    enum { C = 8 };
    tl_integrator *it = new_integrator(C);
    uint64_t P[C] = { 0 };
    for (unsigned input = 0; input < 2u; input++) {
        /* channel 2: reach UINT64_MAX exactly (no saturation), then go past */
        P[2] = UINT64_MAX - 10u;
        P[5] = UINT64_MAX / 2u + 1u; /* channel 5 saturates on the second add */
        tl_integrate_power(it, input, P);
        assert_true(it->auto_sum[input][2] == UINT64_MAX - 10u);
        assert_int_equal(it->sat_channels[input], 0);
        P[2] = 10;
        tl_integrate_power(it, input, P);
        assert_true(it->auto_sum[input][2] == UINT64_MAX); /* exactly, not saturated */
        assert_true(it->auto_sum[input][5] == UINT64_MAX); /* 2^64: saturated */
        assert_int_equal(it->sat_channels[input], 1);
        P[2] = 1;
        P[5] = 0;
        tl_integrate_power(it, input, P);
        assert_true(it->auto_sum[input][2] == UINT64_MAX); /* saturated now */
        assert_int_equal(it->sat_channels[input], 2);
        /* saturating again and again: counted once per channel */
        P[2] = UINT64_MAX;
        P[5] = 7;
        for (unsigned rep = 0; rep < 5u; rep++)
            tl_integrate_power(it, input, P);
        assert_true(it->auto_sum[input][2] == UINT64_MAX);
        assert_true(it->auto_sum[input][5] == UINT64_MAX);
        assert_int_equal(it->sat_channels[input], 2);
        P[2] = 0;
        P[5] = 0;
    }
    const uint8_t both = TL_FLAG_SAT_AUTO0 | TL_FLAG_SAT_AUTO1;
    for (unsigned k = 0; k < C; k++) {
        assert_int_equal(it->flags[k], (k == 2u || k == 5u) ? both : 0u);
        if (k != 2u && k != 5u)
            assert_true(it->auto_sum[0][k] == 0u && it->auto_sum[1][k] == 0u);
    }
    assert_int_equal(it->sat_channels[2], 0);
    assert_int_equal(it->sat_channels[3], 0);
    free(it);
}

static void auto_inputs_independent(void **state)
{
    (void)state;
    enum { C = 4 };
    tl_integrator *it = new_integrator(C);
    uint64_t big[C] = { UINT64_MAX, 0, 0, 0 }, one[C] = { 1, 1, 1, 1 };
    tl_integrate_power(it, 1, big);
    tl_integrate_power(it, 1, one); /* input 1, channel 0 saturates */
    tl_integrate_power(it, 0, one);
    assert_int_equal(it->flags[0], TL_FLAG_SAT_AUTO1);
    assert_int_equal(it->sat_channels[0], 0);
    assert_int_equal(it->sat_channels[1], 1);
    assert_true(it->auto_sum[0][0] == 1u);
    assert_true(it->auto_sum[1][0] == UINT64_MAX);
    assert_true(it->auto_sum[1][1] == 1u);
    free(it);
}

static void cross_saturates_both_ends(void **state)
{
    (void)state;
    enum { C = 6 };
    tl_integrator *it = new_integrator(C);
    int64_t re[C] = { 0 }, im[C] = { 0 };
    /* channel 1: re to the top; channel 3: im to the bottom; channel 4: both */
    re[1] = INT64_MAX - 3;
    im[3] = INT64_MIN + 3;
    re[4] = INT64_MIN;
    im[4] = INT64_MAX;
    tl_integrate_cross(it, re, im);
    for (unsigned i = 0; i < 4u; i++)
        assert_int_equal(it->sat_channels[i], 0);
    re[1] = 3;   /* lands on INT64_MAX exactly: no saturation */
    im[3] = -3;  /* lands on INT64_MIN exactly */
    re[4] = 0;
    im[4] = 0;
    tl_integrate_cross(it, re, im);
    assert_true(it->cross_re[1] == INT64_MAX);
    assert_true(it->cross_im[3] == INT64_MIN);
    assert_int_equal(it->sat_channels[2], 0);
    assert_int_equal(it->sat_channels[3], 0);
    re[1] = 1;
    im[3] = -1;
    re[4] = -1;
    im[4] = 1;
    tl_integrate_cross(it, re, im);
    assert_true(it->cross_re[1] == INT64_MAX);
    assert_true(it->cross_im[3] == INT64_MIN);
    assert_true(it->cross_re[4] == INT64_MIN);
    assert_true(it->cross_im[4] == INT64_MAX);
    assert_int_equal(it->sat_channels[2], 2); /* re: channels 1 and 4 */
    assert_int_equal(it->sat_channels[3], 2); /* im: channels 3 and 4 */
    assert_int_equal(it->flags[1], TL_FLAG_SAT_CROSS_RE);
    assert_int_equal(it->flags[3], TL_FLAG_SAT_CROSS_IM);
    assert_int_equal(it->flags[4], TL_FLAG_SAT_CROSS_RE | TL_FLAG_SAT_CROSS_IM);
    assert_int_equal(it->flags[0], 0);
    assert_int_equal(it->flags[2], 0);
    assert_int_equal(it->flags[5], 0);
    /* come back from the rail and saturate again, at the other end too:
     * still one count per channel and type; the sum never wraps */
    re[1] = INT64_MIN;
    im[3] = INT64_MAX;
    re[4] = 0;
    im[4] = 0;
    tl_integrate_cross(it, re, im);
    assert_true(it->cross_re[1] == -1); /* INT64_MAX + INT64_MIN */
    assert_true(it->cross_im[3] == -1);
    tl_integrate_cross(it, re, im);
    tl_integrate_cross(it, re, im);
    assert_true(it->cross_re[1] == INT64_MIN);
    assert_true(it->cross_im[3] == INT64_MAX);
    assert_int_equal(it->sat_channels[2], 2);
    assert_int_equal(it->sat_channels[3], 2);
    assert_int_equal(it->sat_channels[0], 0);
    assert_int_equal(it->sat_channels[1], 0);
    assert_int_equal(it->flags[1], TL_FLAG_SAT_CROSS_RE);
    assert_int_equal(it->flags[3], TL_FLAG_SAT_CROSS_IM);
    free(it);
}

static void many_channels_counted(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("integrate_many_channels_counted", 0x1A7E6002u));
    enum { C = 2048 };
    tl_integrator *it = new_integrator(C);
    static uint64_t P[C];
    static int64_t re[C], im[C];
    static i128 sum_p[C], sum_re[C], sum_im[C];
    static uint8_t flag[C];
    memset(sum_p, 0, sizeof sum_p);
    memset(sum_re, 0, sizeof sum_re);
    memset(sum_im, 0, sizeof sum_im);
    memset(flag, 0, sizeof flag);
    /* large random values: many channels saturate at different times, some
     * repeatedly; an independent model tracks the saturating sums */
    for (unsigned m = 0; m < 12u; m++) {
        for (unsigned k = 0; k < C; k++) {
            P[k] = tl_rng_u64(&r) >> (3u + (unsigned)(k % 8u));
            re[k] = s64_from_bits(tl_rng_u64(&r)) / ((int64_t)1 << (2u + k % 5u));
            im[k] = s64_from_bits(tl_rng_u64(&r)) / ((int64_t)1 << (2u + k % 7u));
            i128 s = sum_p[k] + P[k];
            if (s > (i128)UINT64_MAX) {
                s = UINT64_MAX;
                flag[k] |= TL_FLAG_SAT_AUTO0;
            }
            sum_p[k] = s;
            s = sum_re[k] + re[k];
            if (s > INT64_MAX || s < INT64_MIN) {
                s = (s > 0) ? INT64_MAX : INT64_MIN;
                flag[k] |= TL_FLAG_SAT_CROSS_RE;
            }
            sum_re[k] = s;
            s = sum_im[k] + im[k];
            if (s > INT64_MAX || s < INT64_MIN) {
                s = (s > 0) ? INT64_MAX : INT64_MIN;
                flag[k] |= TL_FLAG_SAT_CROSS_IM;
            }
            sum_im[k] = s;
        }
        tl_integrate_power(it, 0, P);
        tl_integrate_cross(it, re, im);
    }
    uint32_t n_auto = 0, n_re = 0, n_im = 0;
    for (unsigned k = 0; k < C; k++) {
        assert_true((i128)it->auto_sum[0][k] == sum_p[k]);
        assert_true((i128)it->cross_re[k] == sum_re[k]);
        assert_true((i128)it->cross_im[k] == sum_im[k]);
        assert_int_equal(it->flags[k], flag[k]);
        n_auto += (flag[k] & TL_FLAG_SAT_AUTO0) ? 1u : 0u;
        n_re += (flag[k] & TL_FLAG_SAT_CROSS_RE) ? 1u : 0u;
        n_im += (flag[k] & TL_FLAG_SAT_CROSS_IM) ? 1u : 0u;
    }
    /* the draw saturates some channels of each type and leaves others exact */
    assert_true(n_auto > 0u && n_auto < C);
    assert_true(n_re > 0u && n_re < C);
    assert_true(n_im > 0u && n_im < C);
    assert_int_equal(it->sat_channels[0], n_auto);
    assert_int_equal(it->sat_channels[1], 0);
    assert_int_equal(it->sat_channels[2], n_re);
    assert_int_equal(it->sat_channels[3], n_im);
    free(it);
}

static void split_integration_adds_up(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("integrate_split_adds_up", 0x1A7E6003u));
    enum { C = 512, M = 60, J = 4 };
    tl_integrator *whole = new_integrator(C);
    tl_integrator *piece[J];
    for (unsigned j = 0; j < J; j++)
        piece[j] = new_integrator(C);
    static uint64_t P0[M][C], P1[M][C];
    static int64_t re[M][C], im[M][C];
    for (unsigned m = 0; m < M; m++)
        for (unsigned k = 0; k < C; k++) {
            P0[m][k] = tl_rng_u64(&r) >> 8; /* < 2^56: 60 of them stay below 2^62 */
            P1[m][k] = tl_rng_u64(&r) >> 8;
            re[m][k] = s64_from_bits(tl_rng_u64(&r)) / 256;
            im[m][k] = s64_from_bits(tl_rng_u64(&r)) / 256;
        }
    for (unsigned m = 0; m < M; m++) {
        tl_integrator *p = piece[m / (M / J)]; /* J consecutive pieces of M/J spectra */
        tl_integrate_power(whole, 0, P0[m]);
        tl_integrate_power(whole, 1, P1[m]);
        tl_integrate_cross(whole, re[m], im[m]);
        tl_integrate_power(p, 0, P0[m]);
        tl_integrate_power(p, 1, P1[m]);
        tl_integrate_cross(p, re[m], im[m]);
    }
    /* add the pieces' sums through a third integrator */
    tl_integrator *added = new_integrator(C);
    for (unsigned j = 0; j < J; j++) {
        tl_integrate_power(added, 0, piece[j]->auto_sum[0]);
        tl_integrate_power(added, 1, piece[j]->auto_sum[1]);
        tl_integrate_cross(added, piece[j]->cross_re, piece[j]->cross_im);
    }
    for (unsigned k = 0; k < C; k++) {
        i128 w0 = 0, w1 = 0, wr = 0, wi = 0;
        for (unsigned m = 0; m < M; m++) {
            w0 += P0[m][k];
            w1 += P1[m][k];
            wr += re[m][k];
            wi += im[m][k];
        }
        assert_true((i128)whole->auto_sum[0][k] == w0);
        assert_true((i128)whole->auto_sum[1][k] == w1);
        assert_true((i128)whole->cross_re[k] == wr);
        assert_true((i128)whole->cross_im[k] == wi);
        assert_true(added->auto_sum[0][k] == whole->auto_sum[0][k]);
        assert_true(added->auto_sum[1][k] == whole->auto_sum[1][k]);
        assert_true(added->cross_re[k] == whole->cross_re[k]);
        assert_true(added->cross_im[k] == whole->cross_im[k]);
        assert_int_equal(added->flags[k], 0);
    }
    /* a piece is not the whole: the pieces' sums are genuinely partial */
    assert_true(piece[0]->auto_sum[0][0] < whole->auto_sum[0][0]);
    for (unsigned j = 0; j < J; j++)
        free(piece[j]);
    free(added);
    free(whole);
}

/* The check of the running sums (tl_integrate.h): after spectra that
 * saturate every kind of sum it still verifies, equals the wrapping sum of
 * the covered words written out here, and one flipped bit in any covered
 * word, at any bit position, or in the check itself, makes the verify fail
 * (a single flip changes the sum by +-2^b, never 0 mod 2^64: arithmetic,
 * no source needed). Words past `channels` are not covered. */
static void check_finds_every_flip(void **state)
{
    (void)state;
    enum { C = 37 };
    tl_integrator *it = new_integrator(C);
    assert_true(tl_integrate_verify(it));
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("integrate_check", 7u));
    uint64_t P[C];
    int64_t re[C], im[C];
    for (unsigned sp = 0; sp < 12u; sp++) {
        for (uint32_t k = 0; k < C; k++) {
            const int big = (k % 5u) == 0u; /* these channels saturate within a few spectra */
            P[k] = big ? (tl_rng_u64(&rng) >> 1) : (tl_rng_u64(&rng) >> 30);
            re[k] = big ? (int64_t)(tl_rng_u64(&rng) >> 2) : (int64_t)(tl_rng_u64(&rng) >> 34) - (INT64_C(1) << 29);
            im[k] = big ? -(int64_t)(tl_rng_u64(&rng) >> 2) : (int64_t)(tl_rng_u64(&rng) >> 34) - (INT64_C(1) << 29);
        }
        tl_integrate_power(it, 0u, P);
        tl_integrate_power(it, 1u, P);
        tl_integrate_cross(it, re, im);
        assert_true(tl_integrate_verify(it));
    }
    for (unsigned q = 0; q < 4u; q++)
        assert_true(it->sat_channels[q] > 0u);
    uint64_t sum = 0;
    for (unsigned q = 0; q < 4u; q++)
        sum += it->sat_channels[q];
    for (uint32_t k = 0; k < C; k++)
        sum += it->auto_sum[0][k] + it->auto_sum[1][k] + (uint64_t)it->cross_re[k] + (uint64_t)it->cross_im[k] +
               it->flags[k];
    assert_true(sum == it->check);
    /* every bit of every covered word */
    unsigned flips = 0;
    uint8_t *words[] = { (uint8_t *)it->auto_sum[0], (uint8_t *)it->auto_sum[1], (uint8_t *)it->cross_re,
                         (uint8_t *)it->cross_im };
    for (unsigned w = 0; w < 4u; w++)
        for (uint32_t bit = 0; bit < 64u * C; bit++) {
            words[w][bit / 8u] ^= (uint8_t)(1u << (bit % 8u));
            assert_false(tl_integrate_verify(it));
            words[w][bit / 8u] ^= (uint8_t)(1u << (bit % 8u));
            flips++;
        }
    for (uint32_t bit = 0; bit < 8u * C; bit++) {
        it->flags[bit / 8u] ^= (uint8_t)(1u << (bit % 8u));
        assert_false(tl_integrate_verify(it));
        it->flags[bit / 8u] ^= (uint8_t)(1u << (bit % 8u));
        flips++;
    }
    for (uint32_t bit = 0; bit < 32u * 4u; bit++) {
        it->sat_channels[bit / 32u] ^= 1u << (bit % 32u);
        assert_false(tl_integrate_verify(it));
        it->sat_channels[bit / 32u] ^= 1u << (bit % 32u);
        flips++;
    }
    for (uint32_t bit = 0; bit < 64u; bit++) {
        it->check ^= UINT64_C(1) << bit;
        assert_false(tl_integrate_verify(it));
        it->check ^= UINT64_C(1) << bit;
        flips++;
    }
    assert_true(tl_integrate_verify(it));
    /* past the channels in use: not covered, not output */
    it->auto_sum[0][C] ^= 1u;
    assert_true(tl_integrate_verify(it));
    it->auto_sum[0][C] ^= 1u;
    printf("    check: %u single-bit flips, every one found\n", flips);
    tl_integrate_reset(it, C);
    assert_true(tl_integrate_verify(it));
    assert_true(it->check == 0u);
    free(it);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(reset_clears_everything),
        cmocka_unit_test(sums_are_exact),
        cmocka_unit_test(auto_saturates_at_max),
        cmocka_unit_test(auto_inputs_independent),
        cmocka_unit_test(cross_saturates_both_ends),
        cmocka_unit_test(many_channels_counted),
        cmocka_unit_test(split_integration_adds_up),
        cmocka_unit_test(check_finds_every_flip),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
