/*
 * test_sk.c - spectral kurtosis sums on board (firmware/tl_sk.h and their
 * place in tl_chain): the 128-bit square and sum are exact against the
 * compiler's 128-bit integers; saturation is counted; in the chain the
 * blocks' S1 add up to the integrated spectrum and their S2 to the squares
 * of the single-spectrum powers; on Gaussian noise the SK estimator of
 * Nita and Gary 2010 (MNRAS 406, L60) built from the firmware's sums has
 * mean 1 and the variance 4 M^2 / ((M - 1)(M + 2)(M + 3)) (sources.md).
 */
#include "tl_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "rng.h"
#include "sky_noise.h"
#include "taps_design.h"
#include "tl_chain.h"
#include "tl_sk.h"

typedef unsigned __int128 u128; /* GCC/Clang extension: the test's independent reference */

static u128 join(uint64_t hi, uint64_t lo)
{
    return ((u128)hi << 64) | lo;
}

static void test_square_exact(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk square", 71));
    const uint64_t edge[] = { 0, 1, 2, 0xFFFFFFFFu, 0x100000000u, 0x1FFFFFFFFu, UINT64_MAX, UINT64_MAX - 1u,
                              0x8000000000000000u, 0x7FFFFFFFFFFFFFFFu };
    for (size_t i = 0; i < sizeof edge / sizeof edge[0] + 200000u; i++) {
        const uint64_t p = i < sizeof edge / sizeof edge[0] ? edge[i] : tl_rng_u64(&r) >> (tl_rng_u64(&r) % 64u);
        uint64_t hi, lo;
        tl_sk_square(p, &hi, &lo);
        if (join(hi, lo) != (u128)p * p)
            fail_msg("square of %llu wrong", (unsigned long long)p);
    }
}

/* Sums over a block against 128-bit references; saturation counted and
 * held at the maximum. */
static void test_sums_and_saturation(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk sums", 72));
    static tl_sk sk;
    assert_int_equal(tl_sk_init(&sk, 16, 1, 0, 1), TL_E_POINTS);
    assert_int_equal(tl_sk_init(&sk, 15, 1, 8, 1), TL_E_SK);
    assert_int_equal(tl_sk_init(&sk, 65537, 1, 8, 1), TL_E_SK);
    assert_int_equal(tl_sk_init(&sk, 16, 1, 8, 3), TL_E_INPUTS);
    assert_int_equal(tl_sk_init(&sk, 16, 0, 8, 1), TL_E_SK);
    assert_int_equal(tl_sk_init(&sk, 16, 65537, 8, 1), TL_E_SK);
    assert_int_equal(tl_sk_init(&sk, 64, 1, 8, 2), TL_OK);
    u128 s1[2][8] = { { 0 } }, s2[2][8] = { { 0 } };
    uint64_t p[8];
    int done = 0;
    for (unsigned n = 0; n < 64; n++) {
        for (unsigned in = 0; in < 2; in++) {
            for (unsigned k = 0; k < 8; k++) {
                p[k] = tl_rng_u64(&r) >> (8u + 7u * k); /* 56 bits down to 7 */
                s1[in][k] += p[k];
                s2[in][k] += (u128)p[k] * p[k];
            }
            tl_sk_add(&sk, in, p);
        }
        done = tl_sk_spectrum_done(&sk);
        assert_int_equal(done, n == 63);
    }
    for (unsigned in = 0; in < 2; in++)
        for (unsigned k = 0; k < 8; k++) {
            assert_true((u128)sk.s1[in][k] == s1[in][k]);
            assert_true(join(sk.s2_hi[in][k], sk.s2_lo[in][k]) == s2[in][k]);
        }
    assert_int_equal(sk.sat, 0);
    /* P = 2^63 twice: S1 overflows (2^64) and saturates; P^2 = 2^126 twice
     * is 2^127, still exact; a third gives S2 beyond 2^128 - 1 */
    tl_sk_reset(&sk);
    for (unsigned k = 0; k < 8; k++)
        p[k] = 0x8000000000000000u;
    tl_sk_add(&sk, 0, p);
    tl_sk_add(&sk, 0, p);
    assert_true(sk.s1[0][0] == UINT64_MAX);
    assert_true(join(sk.s2_hi[0][0], sk.s2_lo[0][0]) == (u128)1 << 127);
    assert_int_equal(sk.sat, 8);
    tl_sk_add(&sk, 0, p);
    tl_sk_add(&sk, 0, p);
    assert_true(sk.s2_hi[0][0] == UINT64_MAX && sk.s2_lo[0][0] == UINT64_MAX);
    assert_true(sk.sat >= 16);
    /* off: nothing is added, no block ever completes */
    assert_int_equal(tl_sk_init(&sk, 0, 1, 8, 1), TL_OK);
    tl_sk_add(&sk, 0, p);
    assert_true(sk.s1[0][0] == 0);
    assert_int_equal(tl_sk_spectrum_done(&sk), 0);
}

/* Push, taking every block and product; returns blocks taken. */
static unsigned push_all(tl_chain *c, const int16_t *a, const int16_t *b, size_t n, tl_sk_block *blocks,
                         unsigned max_blocks, tl_product *out, unsigned *products)
{
    unsigned nb = 0;
    size_t done = 0;
    *products = 0;
    while (done < n) {
        size_t used = 0;
        const tl_status st = tl_chain_push(c, a + done, b ? b + done : NULL, n - done, &used);
        if (st != TL_OK)
            fail_msg("push: %s", tl_status_name(st));
        done += used;
        if (tl_chain_sk_ready(c)) {
            if (tl_chain_ready(c)) /* both on one spectrum: the block first */
                assert_int_equal(tl_chain_take(c, out), TL_E_BUSY);
            assert_true(nb < max_blocks);
            assert_int_equal(tl_chain_take_sk(c, &blocks[nb++]), TL_OK);
        }
        if (tl_chain_ready(c)) {
            assert_int_equal(tl_chain_take(c, out), TL_OK);
            (*products)++;
        }
    }
    return nb;
}

static void noise(int16_t *a, int16_t *b, size_t n, uint64_t seed)
{
    tl_sky_params p;
    tl_sky_default(&p);
    p.seed = seed;
    p.white = 1;
    tl_sky *s = tl_sky_open(&p);
    assert_non_null(s);
    tl_sky_fill(s, a, b, n);
    tl_sky_close(s);
}

/* In the chain: 4 blocks of 64 per integration of 256; the blocks' S1 sum
 * to the integrated auto-power exactly; S2 equals the squares of the
 * powers a second chain integrating one spectrum at a time reports. */
static void test_chain_blocks(void **state)
{
    (void)state;
    const uint32_t N = 8192, M = 256, B = 64;
    const size_t n = (size_t)(3u + M) * N;
    int16_t *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    noise(a, b, n, 5);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.integration = M;
    cfg.det_shift = 8;
    cfg.sk_spectra = B;
    tl_chain *c = tl_test_chain();
    tl_product *p = tl_test_product();
    tl_sk_block *blk = malloc(sizeof *blk * 8);
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    unsigned products = 0;
    const unsigned nb = push_all(c, a, b, n, blk, 8, p, &products);
    assert_int_equal(nb, 4);
    assert_int_equal(products, 1);
    assert_int_equal(p->sk_blocks, 4);
    assert_int_equal(p->sk_dropped, 0);
    /* the reference: the same samples, one spectrum per product */
    tl_config one = cfg;
    one.integration = 1;
    one.sk_spectra = 0;
    tl_chain *c1 = tl_test_chain();
    tl_product *p1 = tl_test_product();
    assert_int_equal(tl_chain_init(c1, &one, NULL, 0), TL_OK);
    static u128 s2[2][4096];
    memset(s2, 0, sizeof s2);
    unsigned spec = 0;
    size_t done = 0;
    while (done < n) {
        size_t used = 0;
        assert_int_equal(tl_chain_push(c1, a + done, b + done, n - done, &used), TL_OK);
        done += used;
        if (tl_chain_ready(c1)) {
            assert_int_equal(tl_chain_take(c1, p1), TL_OK);
            const unsigned blkno = spec / B;
            for (unsigned in = 0; in < 2; in++)
                for (unsigned k = 0; k < 4096; k++)
                    if (blkno == 1) /* check the second block in full */
                        s2[in][k] += (u128)p1->auto_power[in][k] * p1->auto_power[in][k];
            spec++;
        }
    }
    assert_int_equal(spec, M);
    for (unsigned in = 0; in < 2; in++)
        for (unsigned k = 0; k < 4096; k++) {
            u128 s1 = 0;
            for (unsigned j = 0; j < nb; j++)
                s1 += blk[j].s1[in][k];
            assert_true(s1 == (u128)p->auto_power[in][k]);
            assert_true(join(blk[1].s2_hi[in][k], blk[1].s2_lo[in][k]) == s2[in][k]);
        }
    assert_int_equal(blk[1].block, 1);
    assert_int_equal(blk[1].spectra, B);
    assert_int_equal(blk[1].det_shift, 8);
    /* the first block's first spectrum is frame 3 (after 3 history frames) */
    assert_int_equal(blk[0].first_frame, 3);
    assert_int_equal(blk[1].first_frame, 3 + B);
    free(a);
    free(b);
    free(blk);
    free(p);
    free(p1);
    free(c);
    free(c1);
}

/* N = 4 spectra per value: a block spans M x N = 64 spectra; S1 adds up
 * to the integration, S2 is the sum of squares of the 4-spectrum sums of
 * single-spectrum powers (a second chain integrating one at a time). */
static void test_chain_accumulated_values(void **state)
{
    (void)state;
    const uint32_t N = 8192, M = 128, B = 16, A = 4;
    const size_t n = (size_t)(3u + M) * N;
    int16_t *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    noise(a, b, n, 9);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.integration = M;
    cfg.det_shift = 8;
    cfg.sk_spectra = B;
    cfg.sk_accumulate = A;
    tl_chain *c = tl_test_chain();
    tl_product *p = tl_test_product();
    tl_sk_block *blk = malloc(sizeof *blk * 4);
    cfg.sk_accumulate = 9; /* 16 x 9 > 128 */
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_SK);
    cfg.sk_accumulate = A;
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    unsigned products = 0;
    assert_int_equal(push_all(c, a, b, n, blk, 4, p, &products), 2);
    assert_int_equal(blk[0].accumulate, A);
    assert_int_equal(blk[1].first_frame, 3 + B * A);
    tl_config one = cfg;
    one.integration = 1;
    one.sk_spectra = 0;
    tl_chain *c1 = tl_test_chain();
    tl_product *p1 = tl_test_product();
    assert_int_equal(tl_chain_init(c1, &one, NULL, 0), TL_OK);
    static uint64_t acc[4096];
    static u128 s2[4096];
    memset(acc, 0, sizeof acc);
    memset(s2, 0, sizeof s2);
    unsigned spec = 0;
    size_t done = 0;
    while (done < n) {
        size_t used = 0;
        assert_int_equal(tl_chain_push(c1, a + done, b + done, n - done, &used), TL_OK);
        done += used;
        if (!tl_chain_ready(c1))
            continue;
        assert_int_equal(tl_chain_take(c1, p1), TL_OK);
        if (spec >= B * A) { /* the second block: spectra 64 .. 127 */
            for (unsigned k = 0; k < 4096; k++)
                acc[k] += p1->auto_power[1][k];
            if ((spec + 1u) % A == 0u)
                for (unsigned k = 0; k < 4096; k++) {
                    s2[k] += (u128)acc[k] * acc[k];
                    acc[k] = 0;
                }
        }
        spec++;
    }
    for (unsigned k = 0; k < 4096; k++) {
        assert_true(join(blk[1].s2_hi[1][k], blk[1].s2_lo[1][k]) == s2[k]);
        assert_true((u128)blk[0].s1[0][k] + blk[1].s1[0][k] == (u128)p->auto_power[0][k]);
    }
    free(a);
    free(b);
    free(blk);
    free(p);
    free(p1);
    free(c);
    free(c1);
}

/* Configuration checks; a block cut short by the integration's end is
 * dropped and counted; with switching only antenna spectra enter. */
static void test_config_and_partial_blocks(void **state)
{
    (void)state;
    tl_config cfg;
    tl_config_default(&cfg);
    tl_chain *c = tl_test_chain();
    cfg.integration = 100;
    cfg.sk_spectra = 101;
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_SK);
    cfg.sk_spectra = 8;
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_SK);
    cfg.sk_spectra = 64; /* 100 = 64 + 36 dropped */
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    const uint32_t N = 8192;
    const size_t n = (size_t)(3u + 100u) * N;
    int16_t *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    noise(a, b, n, 6);
    tl_product *p = tl_test_product();
    tl_sk_block *blk = malloc(sizeof *blk * 4);
    unsigned products = 0;
    assert_int_equal(push_all(c, a, b, n, blk, 4, p, &products), 1);
    assert_int_equal(products, 1);
    assert_int_equal(p->sk_blocks, 1);
    assert_int_equal(p->sk_dropped, 36);
    /* switching: antenna 32, load 16, noise 16 (no discard), 128 spectra:
     * 64 antenna spectra = one block of 64 */
    tl_config_default(&cfg);
    cfg.integration = 128;
    cfg.sk_spectra = 64;
    cfg.switch_steps = 3;
    cfg.switch_state[0] = TL_STATE_ANTENNA;
    cfg.switch_dwell[0] = 32;
    cfg.switch_state[1] = TL_STATE_LOAD;
    cfg.switch_dwell[1] = 16;
    cfg.switch_state[2] = TL_STATE_NOISE;
    cfg.switch_dwell[2] = 16;
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    const size_t n2 = (size_t)(3u + 128u) * N;
    int16_t *a2 = malloc(n2 * sizeof *a2), *b2 = malloc(n2 * sizeof *b2);
    noise(a2, b2, n2, 7);
    assert_int_equal(push_all(c, a2, b2, n2, blk, 4, p, &products), 1);
    assert_int_equal(p->antenna_spectra, 64);
    assert_int_equal(p->sk_blocks, 1);
    assert_int_equal(p->sk_dropped, 0);
    /* S1 of the block = the antenna sums */
    for (unsigned k = 0; k < 4096; k++)
        assert_true(blk[0].s1[0][k] == p->auto_power[0][k]);
    free(a);
    free(b);
    free(a2);
    free(b2);
    free(blk);
    free(p);
    free(c);
}

/* The firmware's sums give the published SK statistics on Gaussian noise:
 * mean 1 and variance 4 M^2 / ((M - 1)(M + 2)(M + 3)) (Nita and Gary 2010;
 * sources.md: 0.0588 for M = 64 [cited, confirmed by Monte Carlo]), within
 * 5 %, over 450 channels (every other one, so neighbours sharing leakage
 * do not count twice) x 64 blocks of input 0's white noise through the
 * 4-tap filterbank at 1/8 of full scale. */
static void test_gaussian_statistics(void **state)
{
    (void)state;
    const uint32_t N = 2048, B = 64, blocks = 64, M = B * blocks;
    const size_t n = (size_t)(3u + M) * N;
    int16_t *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    noise(a, b, n, tl_test_seed("sk gaussian", 8));
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.points = N;
    cfg.integration = M;
    cfg.sk_spectra = B;
    /* a 2048-point table: the default design (Hann, 4 taps) at this size */
    tl_taps *t = malloc(sizeof *t);
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, 4, N, t, NULL), 0);
    const size_t cap = TL_TAPS_IMAGE_BYTES(4, N);
    uint8_t *img = malloc(cap);
    size_t len = 0;
    assert_int_equal(tl_taps_write_image(t, img, cap, &len), TL_OK);
    free(t);
    tl_chain *c = tl_test_chain();
    assert_int_equal(tl_chain_init(c, &cfg, img, len), TL_OK);
    tl_product *p = tl_test_product();
    tl_sk_block *blk = malloc(sizeof *blk * blocks);
    unsigned products = 0;
    assert_int_equal(push_all(c, a, b, n, blk, blocks, p, &products), blocks);
    double sum = 0.0, sum2 = 0.0;
    unsigned cnt = 0;
    for (unsigned j = 0; j < blocks; j++)
        for (unsigned in = 0; in < 1; in++) /* input 0: the inputs' noise is correlated */
            for (unsigned k = 50; k < 950; k += 2) { /* every other: neighbours share leakage */
                const double s1 = (double)blk[j].s1[in][k];
                const double s2 = ldexp((double)blk[j].s2_hi[in][k], 64) + (double)blk[j].s2_lo[in][k];
                const double sk = (B + 1.0) / (B - 1.0) * (B * s2 / (s1 * s1) - 1.0);
                sum += sk;
                sum2 += sk * sk;
                cnt++;
            }
    const double mean = sum / cnt, var = sum2 / cnt - mean * mean;
    const double want = 4.0 * B * B / ((B - 1.0) * (B + 2.0) * (B + 3.0));
    printf("    SK from the firmware's sums, M = %u, %u values: mean %.4f (1 +- %.4f), variance %.5f (formula %.5f)\n",
           B, cnt, mean, sqrt(want / cnt), var, want);
    assert_true(fabs(mean - 1.0) < 4.0 * sqrt(want / cnt));
    assert_true(fabs(var / want - 1.0) < 0.05);
    free(img);
    free(a);
    free(b);
    free(blk);
    free(p);
    free(c);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_square_exact),
        cmocka_unit_test(test_sums_and_saturation),
        cmocka_unit_test(test_chain_blocks),
        cmocka_unit_test(test_chain_accumulated_values),
        cmocka_unit_test(test_config_and_partial_blocks),
        cmocka_unit_test(test_gaussian_statistics),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
