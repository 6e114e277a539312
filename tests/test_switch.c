/*
 * test_switch.c - the calibration switch sequence (firmware/tl_switch.h) and
 * the chain's per-state integration. The reference here is the rule itself
 * (Dicke-style switching with a discard window; Skou and Le Vine, Microwave
 * Radiometer Systems, ch. 10), counted independently in the test.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "tl_switch.h"
#include "tl_test.h"

static void test_init_rejects(void **state)
{
    (void)state;
    tl_switch sw;
    const uint8_t st[3] = { 0, 1, 2 };
    const uint32_t dw[3] = { 10, 5, 5 };
    assert_int_equal(tl_switch_init(&sw, 0, NULL, NULL, 0), TL_OK);
    assert_int_equal(tl_switch_init(&sw, 0, NULL, NULL, 1), TL_E_SWITCH); /* discard without steps */
    assert_int_equal(tl_switch_init(&sw, 3, st, dw, 4), TL_OK);
    assert_int_equal(tl_switch_init(&sw, 3, st, dw, 5), TL_E_SWITCH);     /* discard = a dwell */
    assert_int_equal(tl_switch_init(&sw, TL_MAX_SWITCH_STEPS + 1u, st, dw, 0), TL_E_SWITCH);
    assert_int_equal(tl_switch_init(&sw, 3, NULL, dw, 0), TL_E_NULL);
    const uint8_t bad_state[3] = { 0, 3, 1 };
    assert_int_equal(tl_switch_init(&sw, 3, bad_state, dw, 0), TL_E_SWITCH);
    const uint32_t zero_dwell[3] = { 10, 0, 5 };
    assert_int_equal(tl_switch_init(&sw, 3, st, zero_dwell, 0), TL_E_SWITCH);
    assert_int_equal(tl_switch_init(NULL, 0, NULL, NULL, 0), TL_E_NULL);
}

/* State and keep flag frame by frame against the rule counted here. */
static void test_sequence_rule(void **state)
{
    (void)state;
    tl_switch sw;
    const uint8_t st[4] = { 0, 1, 1, 2 }; /* two load steps in a row: no change between them */
    const uint32_t dw[4] = { 7, 3, 4, 5 };
    assert_int_equal(tl_switch_init(&sw, 4, st, dw, 2), TL_OK);
    unsigned step = 0, in_step = 0, in_state = 0;
    for (unsigned f = 0; f < 100; f++) {
        assert_int_equal(tl_switch_state(&sw), st[step]);
        assert_int_equal(tl_switch_keep(&sw), in_state >= 2u);
        tl_switch_advance(&sw);
        in_state++;
        if (++in_step == dw[step]) {
            const unsigned before = st[step];
            step = (step + 1u) % 4u;
            in_step = 0;
            if (st[step] != before)
                in_state = 0;
        }
    }
}

/* One input whose frames carry a bin-centred tone with an amplitude per
 * state; every frame of a state is then identical, so every spectrum kept in
 * a bank equals the single-state spectrum exactly when discard >= P - 1. */
static void run_tones(uint32_t discard, tl_product *p, uint64_t single[3])
{
    const uint32_t N = 8192, k0 = 500;
    const double amp[3] = { 0.10, 0.30, 0.60 };
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.inputs = 1;
    cfg.adc_bits = 16;
    cfg.integration = 60;
    cfg.switch_steps = 3;
    const uint8_t st[3] = { TL_STATE_ANTENNA, TL_STATE_LOAD, TL_STATE_NOISE };
    const uint32_t dw[3] = { 10, 6, 6 };
    memcpy(cfg.switch_state, st, sizeof st);
    memcpy(cfg.switch_dwell, dw, sizeof dw);
    cfg.switch_discard = discard;
    tl_chain *c = tl_test_chain();
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    int16_t *frame = malloc(sizeof(int16_t) * N);
    while (!tl_chain_ready(c)) {
        const uint32_t s = tl_chain_state(c);
        tl_test_tone(frame, N, amp[s], (double)k0 / N, 0.0, 0, 16);
        size_t used = 0;
        assert_int_equal(tl_chain_push(c, frame, NULL, N, &used), TL_OK);
        assert_int_equal(used, N);
    }
    assert_int_equal(tl_chain_take(c, p), TL_OK);
    /* single-state spectra: the same tone, no switching */
    for (uint32_t s = 0; s < 3; s++) {
        tl_config one = cfg;
        one.switch_steps = 0;
        one.switch_discard = 0;
        one.integration = 1;
        one.det_shift = tl_config_det_shift(&cfg); /* the same units as the switched run */
        assert_int_equal(tl_chain_init(c, &one, NULL, 0), TL_OK);
        tl_test_tone(frame, N, amp[s], (double)k0 / N, 0.0, 0, 16);
        while (!tl_chain_ready(c)) {
            size_t used = 0;
            assert_int_equal(tl_chain_push(c, frame, NULL, N, &used), TL_OK);
        }
        tl_product *q = tl_test_product();
        assert_int_equal(tl_chain_take(c, q), TL_OK);
        single[s] = q->auto_power[0][k0];
        free(q);
    }
    free(frame);
    free(c);
}

static void test_banks_separate_states(void **state)
{
    (void)state;
    tl_product *p = tl_test_product();
    uint64_t single[3];
    /* P = 4 taps: discard 3 keeps the states apart */
    run_tones(3, p, single);
    /* 60 spectra of a 22-frame cycle after 3 warm-up frames (which advance
     * the sequence): count each bank's spectra independently */
    uint32_t count[3] = { 0 }, dropped = 0;
    {
        const uint32_t dw[3] = { 10, 6, 6 };
        unsigned step = 0, in_step = 0, in_state = 0, produced = 0;
        for (unsigned f = 0; produced < 60; f++) {
            const int spectrum = f >= 3u;
            if (spectrum) {
                produced++;
                if (in_state >= 3u)
                    count[step]++;
                else
                    dropped++;
            }
            in_state++;
            if (++in_step == dw[step]) {
                step = (step + 1u) % 3u;
                in_step = 0;
                in_state = 0;
            }
        }
    }
    printf("    spectra: antenna %u, load %u, noise %u, discarded %u\n", p->antenna_spectra, p->cal[0].spectra,
           p->cal[1].spectra, p->discarded);
    assert_int_equal(p->spectra, 60);
    assert_int_equal(p->antenna_spectra, count[0]);
    assert_int_equal(p->cal[0].spectra, count[1]);
    assert_int_equal(p->cal[1].spectra, count[2]);
    assert_int_equal(p->discarded, dropped);
    assert_int_equal(p->antenna_spectra + p->cal[0].spectra + p->cal[1].spectra + p->discarded, 60);
    assert_int_equal(p->auto_power[0][500], (uint64_t)count[0] * single[0]);
    assert_int_equal(p->cal[0].auto_power[0][500], (uint64_t)count[1] * single[1]);
    assert_int_equal(p->cal[1].auto_power[0][500], (uint64_t)count[2] * single[2]);
    /* too short a discard mixes states: the load bank then differs */
    run_tones(1, p, single);
    assert_true(p->cal[0].auto_power[0][500] != (uint64_t)p->cal[0].spectra * single[1]);
    free(p);
}

/* Without switching the product is what it always was: every spectrum in
 * the antenna bank, the calibration banks empty. */
static void test_no_switching_is_antenna_only(void **state)
{
    (void)state;
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.inputs = 1;
    cfg.integration = 5;
    tl_chain *c = tl_test_chain();
    tl_product *p = tl_test_product();
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    const size_t n = 8u * 8192u;
    int16_t *x = calloc(n, sizeof *x);
    tl_test_tone(x, n, 0.2, 0.01, 0.0, 0, 14);
    assert_int_equal(tl_test_push_all(c, x, NULL, n, p), 1);
    assert_int_equal(p->antenna_spectra, 5);
    assert_int_equal(p->discarded, 0);
    assert_int_equal(p->cal[0].spectra, 0);
    assert_int_equal(p->cal[1].spectra, 0);
    assert_int_equal(tl_chain_state(c), TL_STATE_ANTENNA);
    free(x);
    free(p);
    free(c);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_init_rejects),
        cmocka_unit_test(test_sequence_rule),
        cmocka_unit_test(test_banks_separate_states),
        cmocka_unit_test(test_no_switching_is_antenna_only),
    };
    return cmocka_run_group_tests_name("switch", tests, NULL, NULL);
}
