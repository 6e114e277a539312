/*
 * test_kurtosis_run.c - spectral kurtosis end to end (host/run.h
 * tl_run_kurtosis and tl_run_scenario): the firmware's block sums through
 * the ground's estimator and thresholds (Nita and Gary 2010, MNRAS 406,
 * L60; docs/spectral-kurtosis.md). On Gaussian noise through the whole
 * chain each tail flags the configured rate within its binomial error; a
 * steady carrier far above the noise is flagged low in every block; an
 * intermittent carrier (10 % duty) at the channel's noise power is flagged
 * high in at least 95 % of blocks once the blocks are long enough to see
 * it; flagged channels are masked out of the calibration and listed; the
 * packets carry every block.
 */
#include "tl_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "ground.h"
#include "run.h"
#include "spectral_kurtosis.h"

/* White noise, one input, no switching, antenna only. */
static void white(tl_scenario *s, uint32_t channels, uint32_t spectra, uint32_t m)
{
    tl_scenario_nominal(s);
    s->sky.white = 1;
    s->cfg.inputs = 1;
    s->sky.inputs = 1;
    s->cfg.points = 2u * channels;
    s->spectra = spectra;
    s->cfg.integration = spectra;
    s->blocks = 16;
    s->flight_spectra = 0;
    s->cfg.sk_spectra = m;
    s->cfg.sk_accumulate = 1;
    s->band_lo_hz = 0.1 * s->sky.sample_rate_hz / 2.0;
    s->band_hi_hz = 0.9 * s->sky.sample_rate_hz / 2.0;
}

/* Mean |X|^2 per spectrum of channel k over all blocks (the detection
 * shift undone, so runs of different lengths compare). */
static double mean_power(const tl_sk_report *r, uint32_t k)
{
    double s = 0.0;
    for (uint32_t b = 0; b < r->nblocks; b++)
        s += (double)r->blocks[b].s1[0][k];
    return ldexp(s / ((double)r->nblocks * r->m * r->n), (int)r->blocks[0].det_shift);
}

static void release(tl_sk_report *r)
{
    tl_run_result *tmp = calloc(1, sizeof *tmp);
    tmp->sk = *r;
    tl_run_release(tmp);
    free(tmp);
    memset(r, 0, sizeof *r);
}

/* Through the chain (filterbank, FFT, detection, sums), Gaussian noise is
 * flagged at the configured rate in each tail: 1023 channels x 32 blocks,
 * 0.135 % per tail expected (44 +- 6.6), checked within 4 binomial
 * standard errors (the neighbouring channels' leakage makes the counts a
 * little more variable than independent trials). */
static void test_false_alarm_through_the_chain(void **state)
{
    (void)state;
    tl_scenario s;
    white(&s, 1024, 256u * 32u, 256);
    s.sky.seed = tl_test_seed("sk chain false alarm", 3);
    tl_product *p = tl_test_product();
    tl_sk_report *r = calloc(1, sizeof *r);
    assert_int_equal(tl_run_kurtosis(&s, p, r), TL_OK);
    assert_int_equal(r->nblocks, 32);
    const double n = (double)r->values[0], q = s.sk_false_alarm / 2.0;
    const double want = n * q, sd = sqrt(n * q * (1.0 - q));
    printf("    M = 256, %.0f channel-blocks: %llu below %.4f, %llu above %.4f (expected %.1f +- %.1f each)\n", n,
           (unsigned long long)r->flagged_low[0], r->lo, (unsigned long long)r->flagged_high[0], r->hi, want, sd);
    assert_true(fabs((double)r->flagged_low[0] - want) < 4.0 * sd);
    assert_true(fabs((double)r->flagged_high[0] - want) < 4.0 * sd);
    /* thresholds are the estimator's, for this M and rate */
    double lo, hi;
    assert_int_equal(tl_sk_thresholds(256, 1, s.sk_false_alarm, &lo, &hi), 0);
    assert_true(lo == r->lo && hi == r->hi);
    /* the block sums add up to the integrated spectrum */
    for (uint32_t k = 0; k < 1024; k++) {
        uint64_t sum = 0;
        for (uint32_t b = 0; b < r->nblocks; b++)
            sum += r->blocks[b].s1[0][k];
        assert_true(sum == p->auto_power[0][k]);
    }
    release(r);
    free(r);
    free(p);
}

/* A steady carrier 20 dB above the noise in its channel (CNR 100): SK
 * tends to 0 (docs/spectral-kurtosis.md: mean 0.0198 at CNR 100), below
 * the lower threshold in every block; the channel is masked. */
static void test_strong_carrier_flagged_low(void **state)
{
    (void)state;
    tl_scenario s;
    white(&s, 256, 256u * 16u, 256);
    const double df = s.sky.sample_rate_hz / s.cfg.points;
    const uint32_t k = 100;
    s.sky.carrier_hz.n = 1;
    s.sky.carrier_hz.v[0] = k * df;
    s.sky.carrier_dbfs.n = 1;
    s.sky.carrier_dbfs.v[0] = -20.0;
    tl_product *p = tl_test_product();
    tl_sk_report *r = calloc(1, sizeof *r);
    assert_int_equal(tl_run_kurtosis(&s, p, r), TL_OK);
    const double cnr = mean_power(r, k) / (0.5 * (mean_power(r, k - 10) + mean_power(r, k + 10))) - 1.0;
    uint32_t low = 0;
    for (uint32_t b = 0; b < r->nblocks; b++) {
        const tl_sk_block *blk = &r->blocks[b];
        const double s2 = ldexp((double)blk->s2_hi[0][k], 64) + (double)blk->s2_lo[0][k];
        low += tl_sk_estimate((double)blk->s1[0][k], s2, r->m, 1) < r->lo;
    }
    printf("    carrier at channel %u, CNR %.0f: flagged low in %u of %u blocks, masked %d\n", k, cnr, low, r->nblocks,
           r->mask[k]);
    assert_true(cnr > 50.0);
    assert_int_equal(low, r->nblocks);
    assert_int_equal(r->mask[k], 1);
    release(r);
    free(r);
    free(p);
}

/* An intermittent carrier on 10 % of the time at the power of the noise
 * in its channel. For a gated carrier of on-power s (in units of the
 * noise) and duty d, large-M SK tends to 1 + d (1 - d) s^2 / (1 + d s)^2
 * = 1.074 [computed from the moments of a non-central chi-squared with 2
 * degrees of freedom]; the standard deviation of SK is about 2/sqrt(M), so
 * blocks of M = 256 (0.125) cannot see it, while M = 32768 (0.011) puts the
 * mean 3 standard deviations above the upper threshold. The burst's power
 * is set from two short calibration runs (noise alone, and the carrier
 * always on) so that it equals the channel's noise. */
static void test_burst_flagged_high(void **state)
{
    (void)state;
    const uint32_t ch = 128, k = 40;
    tl_scenario s;
    white(&s, ch, 4096, 256);
    const double df = s.sky.sample_rate_hz / s.cfg.points;
    tl_product *p = tl_test_product();
    tl_sk_report *r = calloc(1, sizeof *r);
    /* 1. the channel's noise alone */
    assert_int_equal(tl_run_kurtosis(&s, p, r), TL_OK);
    const double noise = mean_power(r, k);
    release(r);
    /* 2. the carrier always on at -40 dBFS */
    s.sky.burst_hz = k * df;
    s.sky.burst_dbfs = -40.0;
    s.sky.burst_duty = 1.0;
    assert_int_equal(tl_run_kurtosis(&s, p, r), TL_OK);
    const double tone = mean_power(r, k) - noise;
    release(r);
    const double dbfs = -40.0 + 10.0 * log10(noise / tone);
    /* 3. on 10 % of each 1 ms, at the noise's power; blocks of 32768 */
    s.sky.burst_dbfs = dbfs;
    s.sky.burst_duty = 0.1;
    s.sky.burst_period_us = 1000.0;
    s.cfg.sk_spectra = 32768;
    s.spectra = 32768u * 12u;
    s.cfg.integration = s.spectra;
    assert_int_equal(tl_run_kurtosis(&s, p, r), TL_OK);
    const double on = (mean_power(r, k) - noise) / 0.1 / noise;
    uint32_t high = 0;
    double mean = 0.0;
    for (uint32_t b = 0; b < r->nblocks; b++) {
        const tl_sk_block *blk = &r->blocks[b];
        const double s2 = ldexp((double)blk->s2_hi[0][k], 64) + (double)blk->s2_lo[0][k];
        const double v = tl_sk_estimate((double)blk->s1[0][k], s2, r->m, 1);
        mean += v / r->nblocks;
        high += v > r->hi;
    }
    printf("    burst at %.2f dBFS (on-power %.2f x the noise, 10%% duty), M = 32768: mean SK %.4f (theory %.4f), "
           "above %.4f in %u of %u blocks; at M = 256 the threshold would be 1.496\n",
           dbfs, on, mean, 1.0 + 0.09 * on * on / ((1.0 + 0.1 * on) * (1.0 + 0.1 * on)), r->hi, high, r->nblocks);
    assert_true(fabs(on - 1.0) < 0.1);
    assert_true((double)high >= 0.95 * r->nblocks);
    assert_int_equal(r->mask[k], 1);
    release(r);
    free(r);
    free(p);
}

typedef struct mask_seen {
    int calls;
    uint32_t blocks, masked;
    uint8_t mask[TL_MAX_CHANNELS];
} mask_seen;

static int keep_mask(void *user, const tl_product *p, const tl_ground_product_info *in, tl_ground_product_note *note)
{
    (void)p;
    (void)note;
    mask_seen *m = user;
    m->calls++;
    m->blocks = in->sk_blocks;
    m->masked = in->sk_masked;
    if (in->sk_mask != NULL)
        memcpy(m->mask, in->sk_mask, in->channels);
    return 0;
}

/* The run: masked channels leave the calibration (NAN, not counted), the
 * summary lists them, and the downlink carries one set of packets per
 * block. */
static void test_run_masks_and_sends(void **state)
{
    (void)state;
    tl_scenario s;
    tl_scenario_default(&s);
    s.cfg.points = 2048;
    s.spectra = 2048;
    s.cfg.integration = 2048;
    s.blocks = 16;
    s.cfg.sk_spectra = 256; /* 2048 spectra: 976 antenna (the switch cycle) = 3 blocks */
    const double df = s.sky.sample_rate_hz / s.cfg.points;
    s.sky.carrier_hz.n = 1;
    s.sky.carrier_hz.v[0] = 400 * df; /* 20 MHz, in the 5-30 MHz band */
    s.sky.carrier_dbfs.n = 1;
    s.sky.carrier_dbfs.v[0] = -30.0;
    tl_run_result *r = calloc(1, sizeof *r);
    assert_int_equal(tl_run_scenario(&s, r, NULL, NULL), TL_OK);
    assert_true(r->sk.done);
    assert_int_equal(r->sk.nblocks, r->fid.product.antenna_spectra / 256u);
    assert_int_equal(r->sk.mask[400], 1);
    assert_true(isnan(r->cal.t_ant[0][400]));
    uint32_t lo, hi;
    tl_scenario_band(&s, &lo, &hi);
    assert_int_equal(r->cal.channels, hi - lo - r->sk.masked_in_band);
    /* SK packets: per block and input, ceil(1024 / n) packets of at most
     * 512 channels: at least 2 per block and input */
    assert_true(r->dl.packets_sk >= 2u * 2u * r->sk.nblocks);
    printf("    run: %u blocks, %u channels masked (%u in band), %u kurtosis packets (%llu octets)\n", r->sk.nblocks,
           r->sk.masked, r->sk.masked_in_band, r->dl.packets_sk, (unsigned long long)r->dl.octets_sk);
    /* the ground decoder, from the frames alone, finds the same blocks and
     * the same mask */
    uint8_t *frames = NULL;
    size_t flen = 0;
    char err[512];
    tl_dl_result dl;
    assert_int_equal(tl_downlink_out_make_all(&s, &r->fid.product, r->sk.blocks, r->sk.nblocks, &dl, NULL, NULL,
                                              &frames, &flen, err, sizeof err),
                     0);
    tl_ground_config gc;
    tl_ground_config_default(&gc);
    gc.frame_len = s.dl_frame_len;
    gc.sk_false_alarm = s.sk_false_alarm;
    mask_seen *seen = calloc(1, sizeof *seen);
    tl_ground *g = tl_ground_open(&gc, keep_mask, seen, err, sizeof err);
    assert_non_null(g);
    assert_int_equal(tl_ground_feed(g, frames, flen, err, sizeof err), 0);
    assert_int_equal(tl_ground_finish(g, err, sizeof err), 0);
    tl_ground_close(g);
    assert_int_equal(seen->calls, 1);
    assert_int_equal(seen->blocks, r->sk.nblocks);
    assert_int_equal(seen->masked, r->sk.masked);
    assert_memory_equal(seen->mask, r->sk.mask, s.cfg.points / 2u);
    free(seen);
    free(frames);
    tl_run_release(r);
    free(r);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_false_alarm_through_the_chain),
        cmocka_unit_test(test_strong_carrier_flagged_low),
        cmocka_unit_test(test_burst_flagged_high),
        cmocka_unit_test(test_run_masks_and_sends),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
