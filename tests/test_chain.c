/* test_chain.c - the chain's API: configuration checks, streaming in any
 * pieces, product hand-over, table loading, counters and saturation. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sky_noise.h"
#include "taps_design.h"
#include "tl_chain.h"
#include "tl_test.h"

/* A designed table image (host-allocated); *len receives its size. */
static uint8_t *image_for(unsigned window, uint32_t taps, uint32_t points, size_t *len)
{
    tl_taps *t = malloc(sizeof *t);
    assert_int_equal(tl_taps_design(window, taps, points, t, NULL), 0);
    uint8_t *img = malloc(TL_TAPS_IMAGE_BYTES(taps, points));
    assert_int_equal(tl_taps_write_image(t, img, TL_TAPS_IMAGE_BYTES(taps, points), len), TL_OK);
    free(t);
    return img;
}

/* Sky-shaped noise at the nominal level, both inputs. */
static void noise(int16_t *in0, int16_t *in1, size_t n, uint64_t seed, double rms_fs)
{
    tl_sky_params p;
    tl_sky_default(&p);
    p.seed = seed;
    p.rms_fs = rms_fs;
    tl_sky *s = tl_sky_open(&p);
    assert_non_null(s);
    tl_sky_fill(s, in0, in1, n);
    tl_sky_close(s);
}

static void test_config_boundaries(void **state)
{
    (void)state;
    tl_chain *c = tl_test_chain();
    tl_config d, cfg;
    tl_config_default(&d);
    size_t len = 0;
    uint8_t *img256 = image_for(TL_WINDOW_HANN, 4, 256, &len);
    cfg = d; cfg.points = 256; assert_int_equal(tl_chain_init(c, &cfg, img256, len), TL_OK);
    cfg = d; cfg.points = 128; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_POINTS);
    cfg = d; cfg.points = 1000; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_POINTS);
    cfg = d; cfg.points = 2u * TL_MAX_POINTS; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_POINTS);
    size_t lenmax = 0;
    uint8_t *imgmax = image_for(TL_WINDOW_HANN, 1, TL_MAX_POINTS, &lenmax);
    cfg = d; cfg.points = TL_MAX_POINTS; cfg.taps = 1;
    assert_int_equal(tl_chain_init(c, &cfg, imgmax, lenmax), TL_OK);
    cfg = d; cfg.taps = 0; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_TAPS);
    cfg = d; cfg.taps = TL_MAX_TAPS + 1u; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_TAPS);
    cfg = d; cfg.inputs = 0; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_INPUTS);
    cfg = d; cfg.inputs = 3; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_INPUTS);
    cfg = d; cfg.inputs = 1; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    cfg = d; cfg.adc_bits = 7; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_ADC_BITS);
    cfg = d; cfg.adc_bits = 8; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    cfg = d; cfg.adc_bits = 16; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    cfg = d; cfg.adc_bits = 17; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_ADC_BITS);
    cfg = d; cfg.integration = 0; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_INTEGRATION);
    cfg = d; cfg.integration = 1; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    cfg = d; cfg.integration = 1u << 24; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    assert_int_equal(c->cfg.det_shift, 24);
    cfg = d; cfg.integration = (1u << 24) + 1u; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_INTEGRATION);
    cfg = d; cfg.fft_scale_mask = 0x1FFFu; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    cfg = d; cfg.fft_scale_mask = 0x2000u; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_SCALING);
    cfg = d; cfg.rounding = 3; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_ROUNDING);
    cfg = d; cfg.det_shift = TL_MAX_DET_SHIFT; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    cfg = d; cfg.det_shift = TL_MAX_DET_SHIFT + 1u; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_DET_SHIFT);
    /* a valid table for other geometry */
    cfg = d; cfg.points = 4096; assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_TABLE_MISMATCH);
    assert_int_equal(tl_chain_init(NULL, &d, NULL, 0), TL_E_NULL);
    assert_int_equal(tl_chain_init(c, NULL, NULL, 0), TL_E_NULL);
    /* a failed init leaves a running context running with its last good
     * configuration (det_shift TL_MAX_DET_SHIFT above; tests/test_command.c
     * compares the bytes), and a context never initialised unusable */
    size_t used = 99;
    int16_t x[4] = { 0 };
    assert_int_equal(c->cfg.det_shift, TL_MAX_DET_SHIFT);
    assert_int_equal(tl_chain_push(c, x, x, 4, &used), TL_OK);
    assert_int_equal(used, 4);
    memset(c, 0, sizeof *c);
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_E_TABLE_MISMATCH);
    assert_int_equal(tl_chain_push(c, x, x, 4, &used), TL_E_NOT_INIT);
    assert_int_equal(used, 0);
    free(img256);
    free(imgmax);
    free(c);
}

/* Automatic detection shift = ceil(log2 M): no sum of M can overflow. */
static void test_det_shift_auto(void **state)
{
    (void)state;
    tl_config cfg;
    tl_config_default(&cfg);
    const uint32_t m[6] = { 1, 2, 3, 4096, 4097, 1u << 24 };
    const uint32_t s[6] = { 0, 1, 2, 12, 13, 24 };
    for (int i = 0; i < 6; i++) {
        cfg.integration = m[i];
        assert_int_equal(tl_config_det_shift(&cfg), s[i]);
    }
    cfg.det_shift = 7;
    assert_int_equal(tl_config_det_shift(&cfg), 7);
}

/* Blocks of 1, 7 and 4096 samples give the same bytes as all at once, for
 * every product (the stream length is not a multiple of any of them). */
static void test_block_sizes_match_all_at_once(void **state)
{
    (void)state;
    const uint32_t N = 8192, M = 3, products = 2;
    const size_t n = (size_t)(TL_TAPS_DEFAULT_TAPS - 1u + M * products) * N + 123u;
    int16_t *in0 = malloc(n * sizeof *in0), *in1 = malloc(n * sizeof *in1);
    noise(in0, in1, n, tl_test_seed("blocks", 11), 0.125);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.integration = M;
    tl_chain *c = tl_test_chain();
    tl_product *all = calloc(products, sizeof *all), *p = tl_test_product();
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    for (size_t done = 0, k = 0; done < n;) {
        size_t used = 0;
        assert_int_equal(tl_chain_push(c, in0 + done, in1 + done, n - done, &used), TL_OK);
        done += used;
        if (tl_chain_ready(c))
            assert_int_equal(tl_chain_take(c, &all[k++]), TL_OK);
    }
    const size_t blocks[3] = { 1, 7, 4096 };
    for (int b = 0; b < 3; b++) {
        assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
        unsigned k = 0;
        for (size_t done = 0; done < n;) {
            const size_t step = blocks[b] < n - done ? blocks[b] : n - done;
            size_t off = 0;
            while (off < step) {
                size_t used = 0;
                assert_int_equal(tl_chain_push(c, in0 + done + off, in1 + done + off, step - off, &used), TL_OK);
                off += used;
                if (tl_chain_ready(c)) {
                    assert_int_equal(tl_chain_take(c, p), TL_OK);
                    assert_memory_equal(p, &all[k], sizeof *p);
                    k++;
                }
            }
            done += step;
        }
        assert_int_equal(k, products);
    }
    free(in0);
    free(in1);
    free(all);
    free(p);
    free(c);
}

/* take before a product is ready, push while one waits. */
static void test_hand_over(void **state)
{
    (void)state;
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.inputs = 1;
    cfg.integration = 2;
    tl_chain *c = tl_test_chain();
    tl_product *p = tl_test_product();
    assert_int_equal(tl_chain_take(c, p), TL_E_NOT_INIT);
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    assert_int_equal(tl_chain_take(c, p), TL_E_EMPTY);
    const size_t n = 8192u * 7u;
    int16_t *x = calloc(n, sizeof *x);
    size_t used = 0;
    assert_int_equal(tl_chain_push(c, x, NULL, n, &used), TL_OK);
    assert_int_equal(used, 8192u * 5u); /* 3 warm-up frames + 2 spectra */
    assert_true(tl_chain_ready(c));
    assert_int_equal(tl_chain_push(c, x, NULL, 10, &used), TL_E_BUSY);
    assert_int_equal(used, 0);
    assert_int_equal(tl_chain_take(c, p), TL_OK);
    assert_int_equal(p->index, 0);
    assert_int_equal(p->spectra, 2);
    assert_int_equal(p->first_frame, 3);
    assert_int_equal(p->arith_version, TL_ARITH_VERSION);
    assert_int_equal(p->taps_crc, tl_taps_default_crc32c);
    assert_int_equal(tl_chain_take(c, p), TL_E_EMPTY);
    assert_int_equal(tl_chain_push(c, x, NULL, 8192u * 2u, &used), TL_OK);
    assert_int_equal(tl_chain_take(c, p), TL_OK);
    assert_int_equal(p->index, 1);
    assert_int_equal(p->first_frame, 5);
    /* two inputs need the second pointer */
    cfg.inputs = 2;
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    assert_int_equal(tl_chain_push(c, x, NULL, 10, &used), TL_E_NULL);
    free(x);
    free(p);
    free(c);
}

/* A bad table load is rejected whole: nothing changes, the stream goes on
 * as if no load had been tried. A valid one restarts the pipeline. */
static void test_load_taps(void **state)
{
    (void)state;
    const uint32_t N = 8192, M = 2;
    const size_t n = (size_t)(3u + 2u * M) * N;
    int16_t *in0 = malloc(n * sizeof *in0), *in1 = malloc(n * sizeof *in1);
    noise(in0, in1, n, 21, 0.125);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.integration = M;
    tl_chain *a = tl_test_chain(), *b = tl_test_chain();
    tl_product *pa = tl_test_product(), *pb = tl_test_product();
    assert_int_equal(tl_chain_init(a, &cfg, NULL, 0), TL_OK);
    assert_int_equal(tl_chain_init(b, &cfg, NULL, 0), TL_OK);
    size_t len = 0, len2 = 0;
    uint8_t *img = image_for(TL_WINDOW_BLACKMAN_HARRIS4, 4, 8192, &len);
    uint8_t *other = image_for(TL_WINDOW_HANN, 4, 4096, &len2);
    const size_t half = n / 2u;
    tl_test_push_all(a, in0, in1, half, pa);
    tl_test_push_all(b, in0, in1, half, pb);
    img[100] ^= 0x10u; /* corrupt: CRC */
    assert_int_equal(tl_chain_load_taps(b, img, len), TL_E_TABLE_CRC);
    assert_int_equal(tl_chain_load_taps(b, other, len2), TL_E_TABLE_MISMATCH);
    assert_int_equal(tl_chain_load_taps(b, img, len - 1u), TL_E_TABLE_SIZE);
    tl_test_push_all(a, in0 + half, in1 + half, n - half, pa);
    tl_test_push_all(b, in0 + half, in1 + half, n - half, pb);
    assert_memory_equal(pa, pb, sizeof *pa);
    img[100] ^= 0x10u;
    assert_int_equal(tl_chain_load_taps(b, img, len), TL_OK);
    assert_int_equal(b->taps.window, TL_WINDOW_BLACKMAN_HARRIS4);
    assert_int_equal(b->pfb[0].frames, 0); /* history restarted */
    free(img);
    free(other);
    free(in0);
    free(in1);
    free(pa);
    free(pb);
    free(a);
    free(b);
}

/* Nominal noise leaves every counter and flag at zero. */
static void test_nominal_noise_counters_zero(void **state)
{
    (void)state;
    const uint32_t N = 8192, M = 16;
    const size_t n = (size_t)(3u + M) * N;
    int16_t *in0 = malloc(n * sizeof *in0), *in1 = malloc(n * sizeof *in1);
    noise(in0, in1, n, 31, 0.125);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.integration = M;
    tl_chain *c = tl_test_chain();
    tl_product *p = tl_test_product();
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    assert_int_equal(tl_test_push_all(c, in0, in1, n, p), 1);
    /* every saturation counter zero (the ADC statistics are not counters) */
    tl_stats zero;
    memset(&zero, 0, sizeof zero);
    assert_memory_equal(p->stats.adc_clips, zero.adc_clips, sizeof zero.adc_clips);
    assert_memory_equal(p->stats.pfb_sat, zero.pfb_sat, sizeof zero.pfb_sat);
    assert_memory_equal(p->stats.fft_sat, zero.fft_sat, sizeof zero.fft_sat);
    assert_memory_equal(p->stats.acc_sat, zero.acc_sat, sizeof zero.acc_sat);
    for (uint32_t k = 0; k < N / 2u; k++)
        assert_int_equal(p->flags[k], 0);
    /* the ADC statistics cover exactly the samples of the integration's
     * frames ((3 + M) frames of N: the first 3 fill the filterbank history
     * and belong to this first integration too), recomputed here directly:
     * sum of code^2 with code = word / 4 (14-bit ADC), the histogram by the
     * top 4 bits of the offset-binary word */
    for (unsigned in = 0; in < 2u; in++) {
        const int16_t *x = in ? in1 : in0;
        uint64_t ss = 0, hist[TL_ADC_HIST_BINS] = { 0 }, total = 0;
        for (size_t i = 0; i < n; i++) {
            const int32_t code = x[i] / 4;
            ss += (uint64_t)((int64_t)code * code);
            hist[(uint32_t)(x[i] + 32768) >> 12]++;
        }
        assert_int_equal(p->stats.adc_sumsq[in], ss);
        for (unsigned b = 0; b < TL_ADC_HIST_BINS; b++) {
            assert_int_equal(p->stats.adc_hist[in][b], hist[b]);
            total += p->stats.adc_hist[in][b];
        }
        assert_int_equal(total, n);
        /* RMS 1/8 of full scale: 8192 codes full scale -> about 1024 */
        const double rms = sqrt((double)ss / (double)n);
        printf("    input %u: ADC RMS %.1f codes (expected about 1024)\n", in, rms);
        assert_true(rms > 950.0 && rms < 1100.0);
    }
    free(in0);
    free(in1);
    free(p);
    free(c);
}

/* A full-scale tone with too little FFT scaling: overflow counters non-zero,
 * the tone channel saturated high (not wrapped); with the default mask the
 * same tone leaves the FFT counters at zero. ADC clips: a tone beyond full
 * scale is counted sample by sample. */
static void test_full_scale_tone(void **state)
{
    (void)state;
    const uint32_t N = 8192, M = 2;
    const size_t n = (size_t)(3u + M) * N;
    int16_t *x = malloc(n * sizeof *x);
    const double cyc = 1000.0 / N; /* channel 1000 centre */
    tl_test_tone(x, n, 8191.0 / 8192.0, cyc, 0.0, 0, 14); /* peak at the top code */
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.inputs = 1;
    cfg.integration = M;
    tl_chain *c = tl_test_chain();
    tl_product *p = tl_test_product();
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    tl_test_push_all(c, x, NULL, n, p);
    uint32_t fft = 0;
    for (unsigned s = 0; s <= TL_MAX_FFT_STAGES; s++)
        fft += p->stats.fft_sat[0][s];
    assert_int_equal(fft, 0);
    assert_int_equal(p->stats.pfb_sat[0], 0);
    const uint64_t ok_peak = p->auto_power[0][1000];
    cfg.fft_scale_mask = 0; /* no scaling at all */
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    tl_test_push_all(c, x, NULL, n, p);
    fft = 0;
    for (unsigned s = 0; s <= TL_MAX_FFT_STAGES; s++)
        fft += p->stats.fft_sat[0][s];
    printf("    mask 0: %u FFT saturations in %u spectra; tone channel %llu vs %llu with the default mask\n", fft, M,
           (unsigned long long)p->auto_power[0][1000], (unsigned long long)ok_peak);
    assert_true(fft > 0);
    /* saturated at least at the rail: |X| >= 2^31 - 1 per spectrum */
    const double rail = (double)TL_S32_SAT_MAX * TL_S32_SAT_MAX / ldexp(1.0, (int)p->det_shift) * M;
    assert_true((double)p->auto_power[0][1000] >= rail);
    /* over-driven ADC: 1.25 x full scale; clips counted = samples at a rail */
    tl_test_tone(x, n, 1.25, cyc, 0.1, 0, 14);
    uint32_t rails = 0;
    for (size_t i = 0; i < n; i++)
        rails += (x[i] == INT16_MIN) || (x[i] == (int16_t)(8191 * 4));
    cfg.fft_scale_mask = TL_FFT_SCALE_AUTO;
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    tl_test_push_all(c, x, NULL, n, p);
    printf("    1.25 x full scale: %u ADC clips counted, %u samples at a rail\n", p->stats.adc_clips[0], rails);
    assert_true(rails > 0);
    assert_int_equal(p->stats.adc_clips[0], rails);
    free(x);
    free(p);
    free(c);
}

/* Accumulators: with detection shift 0 a strong tone overflows 64 bits in a
 * few spectra: flagged, counted once, held at the maximum. The automatic
 * shift never lets it happen. */
static void test_accumulator_saturation(void **state)
{
    (void)state;
    const uint32_t N = 8192, M = 64;
    const size_t n = (size_t)(3u + M) * N;
    int16_t *x = malloc(n * sizeof *x), *y = malloc(n * sizeof *y);
    tl_test_tone(x, n, 0.999, 1000.0 / N, 0.0, 0, 16);
    tl_test_tone(y, n, 0.999, 1000.0 / N, 0.5, 0, 16);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.integration = M;
    cfg.adc_bits = 16;
    cfg.det_shift = 0;
    tl_chain *c = tl_test_chain();
    tl_product *p = tl_test_product();
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    tl_test_push_all(c, x, y, n, p);
    printf("    det shift 0: channel 1000 flags 0x%02x, saturated channels auto0 %u auto1 %u re %u im %u\n", p->flags[1000],
           p->stats.acc_sat[0], p->stats.acc_sat[1], p->stats.acc_sat[2], p->stats.acc_sat[3]);
    assert_true(p->flags[1000] & TL_FLAG_SAT_AUTO0);
    assert_true(p->flags[1000] & TL_FLAG_SAT_AUTO1);
    assert_true(p->flags[1000] & TL_FLAG_SAT_CROSS_RE);
    assert_int_equal(p->auto_power[0][1000], UINT64_MAX);
    assert_true(p->stats.acc_sat[0] >= 1 && p->stats.acc_sat[0] <= 3); /* the tone's channel and its neighbours */
    assert_int_equal(p->flags[2000], 0);
    cfg.det_shift = TL_DET_SHIFT_AUTO;
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    tl_test_push_all(c, x, y, n, p);
    for (unsigned i = 0; i < 4; i++)
        assert_int_equal(p->stats.acc_sat[i], 0);
    free(x);
    free(y);
    free(p);
    free(c);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_config_boundaries),
        cmocka_unit_test(test_det_shift_auto),
        cmocka_unit_test(test_block_sizes_match_all_at_once),
        cmocka_unit_test(test_hand_over),
        cmocka_unit_test(test_load_taps),
        cmocka_unit_test(test_nominal_noise_counters_zero),
        cmocka_unit_test(test_full_scale_tone),
        cmocka_unit_test(test_accumulator_saturation),
    };
    return cmocka_run_group_tests_name("chain", tests, NULL, NULL);
}
