/*
 * test_downlink.c - products into space packets (firmware/tl_downlink.h):
 * every packet decodes on its own and gives back its channels exactly
 * (lossless) or within step/2 (noise-bounded); the channel ranges tile the
 * spectrum; headers carry the fields the ICD names at the offsets it
 * names; the housekeeping packet round-trips; bad configurations are
 * refused; the packet time is the CUC of the first spectrum's frame.
 */
#include "tl_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "rng.h"
#include "spectral_decode.h"
#include "tl_bytes.h"
#include "tl_downlink.h"

#define MAX_PKTS 4096

typedef unsigned __int128 u128_t; /* GCC/Clang extension: the test's reference for S2 */

typedef struct capture {
    size_t n;
    size_t len[MAX_PKTS];
    uint8_t *pkt[MAX_PKTS];
} capture;

static void sink(void *user, const uint8_t *p, size_t len)
{
    capture *c = user;
    assert_true(c->n < MAX_PKTS);
    c->pkt[c->n] = malloc(len);
    memcpy(c->pkt[c->n], p, len);
    c->len[c->n++] = len;
}

static void capture_free(capture *c)
{
    for (size_t i = 0; i < c->n; i++)
        free(c->pkt[i]);
    c->n = 0;
}

/* A product with smooth, noisy sums like an integrated sky spectrum:
 * P_k = A (1 + k/64)^-2 (1 + e/sqrt(M)), cross = 0.3 P, a few flags. */
static void fill_product(tl_product *p, uint32_t channels, uint32_t inputs, int switching, tl_rng *r)
{
    memset(p, 0, sizeof *p);
    p->arith_version = TL_ARITH_VERSION;
    p->index = 7;
    p->points = 2u * channels;
    p->channels = channels;
    p->inputs = inputs;
    p->taps = 4;
    p->fft_stages = 6;
    p->det_shift = 13;
    p->fft_total_shift = 12;
    p->taps_crc = 0xA5A5F00Du;
    p->first_frame = 1000;
    p->spectra = 8192;
    p->antenna_spectra = switching ? 3904u : 8192u;
    p->discarded = switching ? 576u : 0u;
    p->switch_steps = switching ? 3u : 0u;
    const double M = 4096.0;
    for (uint32_t s = 0; s < 3u; s++) {
        for (uint32_t k = 0; k < channels; k++) {
            const double mean = 1e12 * pow(1.0 + k / 64.0, -2.0) * (1.0 + 0.2 * s);
            for (uint32_t i = 0; i < inputs; i++) {
                const double v = mean * (1.0 + tl_rng_normal(r) / sqrt(M));
                uint64_t *dst = s == 0 ? &p->auto_power[i][k] : &p->cal[s - 1].auto_power[i][k];
                *dst = (uint64_t)v;
            }
            const int64_t re = (int64_t)(0.3 * mean * (1.0 + tl_rng_normal(r) / sqrt(M)));
            const int64_t im = (int64_t)(0.05 * mean * tl_rng_normal(r) / sqrt(M));
            if (s == 0) {
                p->cross_re[k] = re;
                p->cross_im[k] = im;
            } else {
                p->cal[s - 1].cross_re[k] = re;
                p->cal[s - 1].cross_im[k] = im;
            }
        }
        if (s > 0)
            p->cal[s - 1].spectra = 1856;
    }
    /* saturation flags on three channels of the antenna state */
    p->auto_power[0][5] = UINT64_MAX;
    p->flags[5] = TL_FLAG_SAT_AUTO0;
    p->cross_im[channels - 1] = INT64_MIN + 1;
    p->flags[channels - 1] = TL_FLAG_SAT_CROSS_IM;
    p->flags[channels / 2] = TL_FLAG_SAT_AUTO0 | TL_FLAG_SAT_CROSS_RE;
    p->stats.adc_clips[0] = 3;
}

static const uint64_t *u_of(const tl_product *p, uint32_t s, uint32_t q)
{
    return s == 0 ? p->auto_power[q] : p->cal[s - 1].auto_power[q];
}

static const int64_t *i_of(const tl_product *p, uint32_t s, uint32_t q)
{
    if (s == 0)
        return q == 2 ? p->cross_re : p->cross_im;
    return q == 2 ? p->cal[s - 1].cross_re : p->cal[s - 1].cross_im;
}

static const uint8_t *flags_of(const tl_product *p, uint32_t s)
{
    return s == 0 ? p->flags : p->cal[s - 1].flags;
}

/* Decode every science packet alone and check it against the product;
 * returns the number of science packets. */
static size_t check_packets(const capture *c, const tl_product *p, const tl_downlink_config *cfg, double *worst_rel)
{
    const uint32_t states = p->switch_steps ? 3u : 1u, qn = p->inputs == 2 ? 4u : 1u;
    uint32_t next[3][4] = { { 0 } };
    uint32_t seq_sci = 0, seq_hk = 0;
    size_t science = 0;
    static uint64_t uv[TL_ENCODE_MAX_CHANNELS], steps[TL_ENCODE_MAX_CHANNELS];
    static int64_t iv[TL_ENCODE_MAX_CHANNELS];
    *worst_rel = 0.0;
    for (size_t n = 0; n < c->n; n++) {
        tl_packet_view v;
        assert_int_equal(tl_packet_parse(c->pkt[n], c->len[n], &v), TL_OK);
        assert_true(c->len[n] <= cfg->max_packet);
        if (v.apid == cfg->apid_hk) {
            assert_int_equal(v.count, seq_hk++);
            continue;
        }
        assert_int_equal(v.apid, cfg->apid_science);
        assert_int_equal(v.count, seq_sci++);
        tl_dl_science h;
        assert_int_equal(tl_downlink_parse_science(v.user, v.user_len, &h), TL_OK);
        assert_true(h.state < states && h.qty < qn);
        /* the ranges tile the spectrum in order */
        assert_int_equal(h.first, next[h.state][h.qty]);
        next[h.state][h.qty] = h.first + h.count;
        assert_int_equal(h.channels, p->channels);
        assert_int_equal(h.index, p->index);
        assert_int_equal(h.config_id, cfg->config_id);
        assert_int_equal(h.taps_crc, p->taps_crc);
        const uint8_t bit = (uint8_t)(1u << h.qty);
        for (uint32_t k = 0; k < h.count; k++) {
            const int set = h.bitmap != NULL && (h.bitmap[k / 8] & (0x80u >> (k % 8))) != 0;
            assert_int_equal(set, (flags_of(p, h.state)[h.first + k] & bit) != 0);
        }
        if (h.qty < 2) {
            assert_int_equal(tl_spectral_decode_u64(h.payload, h.payload_len, uv, steps, TL_ENCODE_MAX_CHANNELS, NULL),
                             TL_OK);
            const uint64_t *want = u_of(p, h.state, h.qty) + h.first;
            for (uint32_t k = 0; k < h.count; k++) {
                const double d = fabs((double)uv[k] - (double)want[k]);
                if (cfg->encoding == TL_ENCODE_ID_LOSSLESS)
                    assert_true(uv[k] == want[k]);
                else
                    assert_true(d <= (double)steps[k] / 2.0);
                if (want[k] > 0 && d / (double)want[k] > *worst_rel)
                    *worst_rel = d / (double)want[k];
            }
        } else {
            assert_int_equal(tl_spectral_decode_i64(h.payload, h.payload_len, iv, steps, TL_ENCODE_MAX_CHANNELS, NULL),
                             TL_OK);
            const int64_t *want = i_of(p, h.state, h.qty) + h.first;
            for (uint32_t k = 0; k < h.count; k++) {
                if (cfg->encoding == TL_ENCODE_ID_LOSSLESS)
                    assert_true(iv[k] == want[k]);
                else
                    assert_true(fabs((double)iv[k] - (double)want[k]) <= (double)steps[k] / 2.0);
            }
        }
        science++;
    }
    for (uint32_t s = 0; s < states; s++)
        for (uint32_t q = 0; q < qn; q++)
            assert_int_equal(next[s][q], p->channels);
    assert_int_equal(seq_hk, 1);
    return science;
}

/* Lossless and bounded, 1 and 2 inputs, with and without switching, small
 * and large packets: every packet decodes alone and gives its channels. */
static void test_every_packet_decodes_alone(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("downlink alone", 41));
    tl_product *p = tl_test_product();
    tl_downlink *d = malloc(sizeof *d);
    capture *c = calloc(1, sizeof *c);
    const uint32_t chans[] = { 128, 4096, 8192 };
    const uint32_t maxlen[] = { 512, 1500, 4095 };
    for (int enc = 0; enc < 2; enc++)
        for (size_t ci = 0; ci < 3; ci++)
            for (uint32_t inputs = 1; inputs <= 2; inputs++) {
                const int sw = ci != 0;
                fill_product(p, chans[ci], inputs, sw, &r);
                tl_downlink_config cfg;
                tl_downlink_config_default(&cfg);
                cfg.max_packet = maxlen[ci];
                cfg.encoding = enc ? TL_ENCODE_ID_BOUNDED : TL_ENCODE_ID_LOSSLESS;
                cfg.config_id = 0x12345678u;
                assert_int_equal(tl_downlink_init(d, &cfg), TL_OK);
                assert_int_equal(tl_downlink_product(d, p, 1, sink, c), TL_OK);
                double worst;
                const size_t sci = check_packets(c, p, &cfg, &worst);
                const double ratio = (double)d->stats.octets_raw / (double)d->stats.octets_science;
                printf("    %s, %u ch, %u input(s)%s, packets <= %u: %zu science packets, %llu octets for %llu raw "
                       "(x%.2f), worst relative error %.2e\n",
                       enc ? "bounded f=1/8" : "lossless", chans[ci], inputs, sw ? ", switching" : "",
                       maxlen[ci], sci, (unsigned long long)d->stats.octets_science,
                       (unsigned long long)d->stats.octets_raw, ratio, worst);
                assert_int_equal(d->stats.packets_science, sci);
                assert_int_equal(d->stats.packets_hk, 1);
                assert_int_equal(d->stats.channels_sent, chans[ci] * (sw ? 3u : 1u) * (inputs == 2 ? 4u : 1u));
                if (enc) /* f = 1/8 of the noise 1/sqrt(4096) per value: step/2 <= 1/128 of 1/64 */
                    assert_true(worst <= 1.0 / 8.0 / sqrt(1856.0) / 2.0 * 1.0001);
                capture_free(c);
            }
    free(c);
    free(d);
    free(p);
}

/* Packets are filled: every science packet but the last of each section
 * carries at least 90% of the user data room, or the encoder's channel
 * limit; otherwise the splitter wastes the link. */
static void test_packets_are_full(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("downlink full", 43));
    tl_product *p = tl_test_product();
    tl_downlink *d = malloc(sizeof *d);
    capture *c = calloc(1, sizeof *c);
    fill_product(p, 8192, 2, 0, &r);
    tl_downlink_config cfg;
    tl_downlink_config_default(&cfg);
    cfg.max_packet = 1024;
    assert_int_equal(tl_downlink_init(d, &cfg), TL_OK);
    assert_int_equal(tl_downlink_product(d, p, 1, sink, c), TL_OK);
    size_t partial = 0;
    double fill_sum = 0.0;
    size_t sci = 0;
    for (size_t n = 0; n < c->n; n++) {
        tl_packet_view v;
        tl_dl_science h;
        assert_int_equal(tl_packet_parse(c->pkt[n], c->len[n], &v), TL_OK);
        if (v.apid != cfg.apid_science)
            continue;
        assert_int_equal(tl_downlink_parse_science(v.user, v.user_len, &h), TL_OK);
        const int last = h.first + h.count == h.channels;
        const double fill = (double)c->len[n] / cfg.max_packet;
        fill_sum += fill;
        sci++;
        if (!last && fill < 0.9 && h.count < TL_ENCODE_MAX_CHANNELS)
            partial++;
    }
    printf("    %zu science packets of at most %u octets, mean fill %.3f, %zu under 90%% before a section end\n", sci,
           cfg.max_packet, fill_sum / sci, partial);
    assert_int_equal(partial, 0);
    capture_free(c);
    free(c);
    free(d);
    free(p);
}

/* Header fields at the offsets of the ICD, read back byte by byte. */
static void test_header_layout(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, 44);
    tl_product *p = tl_test_product();
    tl_downlink *d = malloc(sizeof *d);
    capture *c = calloc(1, sizeof *c);
    fill_product(p, 128, 2, 1, &r);
    tl_downlink_config cfg;
    tl_downlink_config_default(&cfg);
    cfg.mode = 0x5Au;
    cfg.config_id = 0xCAFEBABEu;
    cfg.epoch.coarse = 2000000000u;
    cfg.epoch.fine = 0;
    cfg.sample_rate_hz = 102400000u;
    assert_int_equal(tl_downlink_init(d, &cfg), TL_OK);
    assert_int_equal(tl_downlink_product(d, p, 0, sink, c), TL_OK);
    /* 3 states x 4 quantities of 128 channels: one packet each, then housekeeping */
    assert_int_equal(c->n, 13);
    const uint8_t *u = c->pkt[0] + TL_PACKET_OFF_USER;
    assert_int_equal(u[0], 1);          /* version */
    assert_int_equal(u[1], 1);          /* kind: spectrum */
    assert_int_equal(u[2], 0x5A);       /* mode */
    assert_int_equal(u[3], 0);          /* antenna */
    assert_int_equal(u[4], 0);          /* auto0 */
    assert_int_equal(u[5], TL_ARITH_VERSION);
    assert_int_equal(u[6], 13);
    assert_int_equal(u[7], 12);
    assert_int_equal(tl_get_be32(u + 8), 0xCAFEBABEu);
    assert_int_equal(tl_get_be32(u + 12), 7);
    assert_int_equal(tl_get_be32(u + 16), 3904);
    assert_int_equal(tl_get_be32(u + 20), 8192);
    assert_int_equal(tl_get_be32(u + 24), 576);
    assert_int_equal(tl_get_be16(u + 28), 128);
    assert_int_equal(tl_get_be16(u + 30), 0);
    assert_int_equal(tl_get_be16(u + 32), 128);
    /* bitmap (channel 5 and 64 of auto0 flagged), ADC clips seen */
    assert_int_equal(tl_get_be16(u + 34), TL_DL_F_BITMAP | TL_DL_F_ADC_CLIP);
    assert_int_equal(tl_get_be32(u + 36), 0xA5A5F00Du);
    assert_int_equal(u[40], 0x04); /* channel 5: bit 7 - 5 of octet 0 */
    assert_int_equal(u[48], 0x80); /* channel 64 = octet 8, bit 7 */
    /* order: states then quantities */
    for (size_t n = 0; n < 12; n++) {
        const uint8_t *h = c->pkt[n] + TL_PACKET_OFF_USER;
        assert_int_equal(h[3], n / 4);
        assert_int_equal(h[4], n % 4);
    }
    /* the time: epoch + first_frame x points samples = 2e9 s + 1000 x 256 /
     * 102.4e6 s = 2e9 s + 2.5 ms; fine = round(0.0025 x 65536) = 164 */
    tl_cuc t;
    assert_int_equal(tl_cuc_decode(c->pkt[0] + TL_PACKET_OFF_TIME, 7, &t), TL_OK);
    assert_int_equal(t.coarse, 2000000000u);
    assert_int_equal(t.fine, 164);
    /* housekeeping: table status 1 (the caller said the check failed) */
    tl_packet_view v;
    assert_int_equal(tl_packet_parse(c->pkt[12], c->len[12], &v), TL_OK);
    assert_int_equal(v.apid, 0x102);
    assert_int_equal(v.user_len, TL_DL_HK_OCTETS(7));
    tl_dl_hk hk;
    assert_int_equal(tl_downlink_parse_hk(v.user, v.user_len, &hk), TL_OK);
    assert_int_equal(hk.table_status, 1);
    assert_int_equal(hk.config_id, 0xCAFEBABEu);
    assert_int_equal(hk.firmware_version, TL_DL_FIRMWARE_VERSION);
    assert_int_equal(hk.in[0].adc_clips, 3);
    assert_int_equal(hk.state_spectra[0], 3904);
    assert_int_equal(hk.state_spectra[1], 1856);
    assert_int_equal(hk.switch_steps, 3);
    capture_free(c);
    free(c);
    free(d);
    free(p);
}

/* Housekeeping from a real chain run round-trips every counter. */
static void test_housekeeping_round_trip(void **state)
{
    (void)state;
    const uint32_t N = 512, M = 8;
    const size_t n = (size_t)(3u + M) * N;
    int16_t *in0 = malloc(n * sizeof *in0), *in1 = malloc(n * sizeof *in1);
    /* a full-scale tone on input 0 clips and overflows with no scaling */
    tl_test_tone(in0, n, 1.2, 0.125, 0.0, 0, 14);
    tl_test_tone(in1, n, 0.1, 0.0625, 0.0, 0, 14);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.points = N;
    cfg.integration = M;
    cfg.fft_scale_mask = 0;
    tl_chain *ch = tl_test_chain();
    tl_product *p = tl_test_product();
    assert_int_equal(tl_chain_init(ch, &cfg, NULL, 0), TL_E_TABLE_MISMATCH); /* built-in table is 8192 points */
    cfg.points = 8192;
    free(in0);
    free(in1);
    const size_t n2 = (size_t)(3u + M) * 8192u;
    in0 = malloc(n2 * sizeof *in0);
    in1 = malloc(n2 * sizeof *in1);
    tl_test_tone(in0, n2, 1.2, 0.125, 0.0, 0, 14);
    tl_test_tone(in1, n2, 0.1, 0.0625, 0.0, 0, 14);
    assert_int_equal(tl_chain_init(ch, &cfg, NULL, 0), TL_OK);
    assert_int_equal(tl_test_push_all(ch, in0, in1, n2, p), 1);
    tl_downlink *d = malloc(sizeof *d);
    capture *c = calloc(1, sizeof *c);
    tl_downlink_config dc;
    tl_downlink_config_default(&dc);
    dc.config_id = tl_downlink_config_id(&ch->cfg, p->taps_crc);
    assert_int_equal(tl_downlink_init(d, &dc), TL_OK);
    assert_int_equal(tl_downlink_product(d, p, 1, sink, c), TL_OK);
    tl_packet_view v;
    assert_int_equal(tl_packet_parse(c->pkt[c->n - 1], c->len[c->n - 1], &v), TL_OK);
    tl_dl_hk hk;
    assert_int_equal(tl_downlink_parse_hk(v.user, v.user_len, &hk), TL_OK);
    assert_int_equal(hk.inputs, 2);
    assert_int_equal(hk.fft_counters, p->fft_stages + 1);
    for (unsigned i = 0; i < 2; i++) {
        assert_int_equal(hk.in[i].adc_clips, p->stats.adc_clips[i]);
        assert_true(hk.in[i].adc_sumsq == p->stats.adc_sumsq[i]);
        assert_true(hk.in[i].adc_samples == n2);
        assert_int_equal(hk.in[i].pfb_sat, p->stats.pfb_sat[i]);
        for (unsigned k = 0; k <= p->fft_stages; k++)
            assert_int_equal(hk.in[i].fft_sat[k], p->stats.fft_sat[i][k]);
        for (unsigned b = 0; b < TL_ADC_HIST_BINS; b++)
            assert_int_equal(hk.in[i].adc_hist[b], p->stats.adc_hist[i][b]);
    }
    for (unsigned q = 0; q < 4; q++)
        assert_int_equal(hk.acc_sat[0][q], p->stats.acc_sat[q]);
    assert_true(hk.in[0].adc_clips > 0);
    /* input 1: a sine of amplitude 0.1 full scale has RMS 0.1/sqrt(2) of
     * 8192 codes = 579.2 [computed] */
    const double rms = sqrt((double)hk.in[1].adc_sumsq / (double)hk.in[1].adc_samples);
    printf("    housekeeping: input 0 clips %u, input 1 RMS %.1f codes (sine: 579.2)\n", hk.in[0].adc_clips, rms);
    assert_true(fabs(rms - 579.2) < 1.0);
    assert_int_equal(hk.config_id, dc.config_id);
    capture_free(c);
    free(c);
    free(d);
    free(p);
    free(ch);
    free(in0);
    free(in1);
}

/* The configuration id changes with every field that shapes the spectra. */
static void test_config_id(void **state)
{
    (void)state;
    tl_config a;
    tl_config_default(&a);
    const uint32_t base = tl_downlink_config_id(&a, 1u);
    assert_int_equal(base, tl_downlink_config_id(&a, 1u));
    assert_int_not_equal(base, tl_downlink_config_id(&a, 2u));
    tl_config b = a;
    b.points = 4096;
    assert_int_not_equal(base, tl_downlink_config_id(&b, 1u));
    b = a;
    b.rounding = 0;
    assert_int_not_equal(base, tl_downlink_config_id(&b, 1u));
    b = a;
    b.switch_steps = 1;
    b.switch_state[0] = 1;
    b.switch_dwell[0] = 5;
    const uint32_t s1 = tl_downlink_config_id(&b, 1u);
    assert_int_not_equal(base, s1);
    b.switch_dwell[0] = 6;
    assert_int_not_equal(s1, tl_downlink_config_id(&b, 1u));
    assert_int_equal(tl_downlink_config_id(NULL, 1u), 0u);
}

/* Bad configurations are refused and leave a context never initialised
 * unusable (a running one untouched: tests/test_command.c). */
static void test_init_refuses(void **state)
{
    (void)state;
    tl_downlink *d = calloc(1, sizeof *d);
    tl_downlink_config c;
    tl_downlink_config_default(&c);
    assert_int_equal(tl_downlink_init(NULL, &c), TL_E_NULL);
    assert_int_equal(tl_downlink_init(d, NULL), TL_E_NULL);
    c.apid_hk = c.apid_science;
    assert_int_equal(tl_downlink_init(d, &c), TL_E_APID);
    tl_downlink_config_default(&c);
    c.apid_science = 2047;
    assert_int_equal(tl_downlink_init(d, &c), TL_E_APID);
    tl_downlink_config_default(&c);
    c.max_packet = TL_DL_MIN_PACKET - 1u;
    assert_int_equal(tl_downlink_init(d, &c), TL_E_PACKET_LEN);
    c.max_packet = 4096;
    assert_int_equal(tl_downlink_init(d, &c), TL_E_PACKET_LEN);
    tl_downlink_config_default(&c);
    c.encoding = 3;
    assert_int_equal(tl_downlink_init(d, &c), TL_E_ENCODING);
    tl_downlink_config_default(&c);
    c.encoding = TL_ENCODE_ID_BOUNDED;
    c.fraction_q16 = TL_ENCODE_FRACTION_MIN_Q16 - 1u;
    assert_int_equal(tl_downlink_init(d, &c), TL_E_NOISE_FRACTION);
    c.fraction_q16 = 8192;
    c.block = 0;
    assert_int_equal(tl_downlink_init(d, &c), TL_E_ENCODING);
    tl_downlink_config_default(&c);
    c.sample_rate_hz = 0;
    assert_int_equal(tl_downlink_init(d, &c), TL_E_TIME_RANGE);
    tl_product *p = tl_test_product();
    capture *cap = calloc(1, sizeof *cap);
    assert_int_equal(tl_downlink_product(d, p, 1, sink, cap), TL_E_NOT_INIT);
    assert_int_equal(cap->n, 0);
    free(cap);
    free(p);
    free(d);
}

/* Spectral kurtosis blocks: every packet decodes alone; S1 exact, S2
 * exact (shift 0) or S2 / 2^s with s the bit length of the largest high
 * word; the channel ranges tile each input. */
static void test_sk_packets(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("downlink sk", 45));
    tl_sk_block *b = calloc(1, sizeof *b);
    tl_downlink *d = malloc(sizeof *d);
    capture *c = calloc(1, sizeof *c);
    static uint64_t v[TL_ENCODE_MAX_CHANNELS];
    for (int big = 0; big < 2; big++) {
        b->index = 3;
        b->block = 5;
        b->spectra = 256;
        b->accumulate = big ? 65536u : 1u;
        b->inputs = 2;
        b->channels = 4096;
        b->det_shift = 8;
        b->first_frame = 4000;
        for (uint32_t i = 0; i < 2; i++)
            for (uint32_t k = 0; k < 4096; k++) {
                const double mean = 1e7 * pow(1.0 + k / 64.0, -2.0);
                b->s1[i][k] = (uint64_t)(256.0 * mean * (1.0 + tl_rng_normal(&r) / 16.0));
                const double s2 = 2.0 * 256.0 * mean * mean * (big ? 1e6 : 1.0); /* E[P^2] = 2 mean^2 */
                b->s2_hi[i][k] = (uint64_t)ldexp(s2, -64);
                b->s2_lo[i][k] = (uint64_t)fmod(s2, 18446744073709551616.0);
            }
        tl_downlink_config cfg;
        tl_downlink_config_default(&cfg);
        assert_int_equal(tl_downlink_init(d, &cfg), TL_OK);
        assert_int_equal(tl_downlink_sk(d, b, sink, c), TL_OK);
        uint32_t next[2] = { 0, 0 };
        for (size_t n = 0; n < c->n; n++) {
            tl_packet_view pv;
            tl_dl_sk h;
            assert_int_equal(tl_packet_parse(c->pkt[n], c->len[n], &pv), TL_OK);
            assert_int_equal(pv.apid, 0x103);
            assert_int_equal(tl_downlink_parse_sk(pv.user, pv.user_len, &h), TL_OK);
            assert_int_equal(h.first, next[h.input]);
            next[h.input] += h.count;
            assert_int_equal(h.block, 5);
            assert_int_equal(h.spectra, 256);
            assert_int_equal(h.accumulate, big ? 65536u : 1u);
            assert_int_equal(tl_spectral_decode_u64(h.payload, h.payload_len, v, NULL, TL_ENCODE_MAX_CHANNELS, NULL),
                             TL_OK);
            for (uint32_t k = 0; k < h.count; k++) {
                const uint32_t ch = h.first + k;
                assert_true(v[k] == b->s1[h.input][ch]);
                const u128_t s2 = ((u128_t)b->s2_hi[h.input][ch] << 64) | b->s2_lo[h.input][ch];
                assert_true((u128_t)v[h.count + k] == (s2 >> h.s2_shift));
            }
            if (!big)
                assert_int_equal(h.s2_shift, 0);
            else
                assert_true(h.s2_shift > 0 && h.s2_shift <= 64);
        }
        assert_int_equal(next[0], 4096);
        assert_int_equal(next[1], 4096);
        printf("    SK block, 2 x 4096 channels%s: %u packets, %llu octets\n", big ? " (S2 above 2^64)" : "",
               d->stats.packets_sk, (unsigned long long)d->stats.octets_sk);
        capture_free(c);
    }
    free(b);
    free(d);
    free(c);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_every_packet_decodes_alone),
        cmocka_unit_test(test_packets_are_full),
        cmocka_unit_test(test_header_layout),
        cmocka_unit_test(test_housekeeping_round_trip),
        cmocka_unit_test(test_config_id),
        cmocka_unit_test(test_init_refuses),
        cmocka_unit_test(test_sk_packets),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
