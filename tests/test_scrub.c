/*
 * test_scrub.c - the scrubber (firmware/tl_scrub.h) inside the chain: a
 * flipped bit of each region is found within one scrub pass, the region is
 * restored byte for byte, counted in housekeeping, and the product is
 * flagged; the running state's range checks repair without writing
 * outside the context; housekeeping version 2 carries the scrub block and
 * version 1 still parses.
 */
#include "tl_test.h"

#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "rng.h"
#include "taps_design.h"
#include "tl_bytes.h"
#include "tl_chain.h"
#include "tl_crc32c.h"
#include "tl_downlink.h"
#include "tl_packet.h"

#define N 256u
#define P 4u
#define M 16u

typedef struct fixture {
    tl_chain *c;
    tl_product *p;
    uint8_t *img;
    size_t img_len;
    int16_t *in0, *in1;
    size_t total, off;
    tl_config cfg;
} fixture;

static void fx_init(fixture *f, uint32_t products)
{
    memset(f, 0, sizeof *f);
    tl_taps *t = malloc(sizeof *t);
    assert_non_null(t);
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, P, N, t, NULL), 0);
    f->img_len = TL_TAPS_IMAGE_BYTES(P, N);
    f->img = malloc(f->img_len);
    size_t len = 0;
    assert_int_equal(tl_taps_write_image(t, f->img, f->img_len, &len), TL_OK);
    free(t);
    f->total = (size_t)(P - 1u + products * M) * N;
    f->in0 = malloc(f->total * sizeof *f->in0);
    f->in1 = malloc(f->total * sizeof *f->in1);
    assert_non_null(f->in0);
    assert_non_null(f->in1);
    tl_rng r;
    tl_rng_seed(&r, 77u);
    for (size_t i = 0; i < f->total; i++) {
        f->in0[i] = (int16_t)(4 * (int32_t)(1024.0 * tl_rng_normal(&r)));
        f->in1[i] = (int16_t)(4 * (int32_t)(1024.0 * tl_rng_normal(&r)));
    }
    tl_config_default(&f->cfg);
    f->cfg.points = N;
    f->cfg.taps = P;
    f->cfg.integration = M;
    f->cfg.switch_steps = 2u;
    f->cfg.switch_state[0] = (uint8_t)TL_STATE_ANTENNA;
    f->cfg.switch_state[1] = (uint8_t)TL_STATE_LOAD;
    f->cfg.switch_dwell[0] = 8u;
    f->cfg.switch_dwell[1] = 8u;
    f->cfg.switch_discard = P - 1u;
    f->c = tl_test_chain();
    f->p = tl_test_product();
    assert_int_equal(tl_chain_init(f->c, &f->cfg, f->img, f->img_len), TL_OK);
}

static void fx_free(fixture *f)
{
    free(f->c);
    free(f->p);
    free(f->img);
    free(f->in0);
    free(f->in1);
}

/* Push one frame (or up to a product boundary); take a finished product.
 * Returns 1 if a product was taken. */
static int fx_frame(fixture *f)
{
    if (f->off >= f->total)
        fail_msg("input used up");
    size_t used = 0;
    const size_t n = f->total - f->off < N ? f->total - f->off : N;
    assert_int_equal(tl_chain_push(f->c, f->in0 + f->off, f->in1 + f->off, n, &used), TL_OK);
    f->off += used;
    if (tl_chain_ready(f->c)) {
        assert_int_equal(tl_chain_take(f->c, f->p), TL_OK);
        return 1;
    }
    return 0;
}

/* Take the next product. */
static void fx_product(fixture *f)
{
    while (!fx_frame(f))
        ;
}

/* Slices of one pass of the table walk, as tl_scrub.c spans the regions
 * (taps header + coefficients; then permutation + radix-4 twiddles + split
 * twiddles), each region cut into slices of its own: exact integer
 * arithmetic on the region sizes. */
static size_t pass_slices(const tl_chain *c)
{
    const size_t taps = offsetof(tl_taps, coef) + 4u * P * N;
    const size_t fft = 2u * (N / 2u) + 4u * c->scrub.tw_used + 4u * (N / 2u + 2u);
    const size_t S = TL_SCRUB_SLICE_OCTETS;
    return (taps + S - 1u) / S + (fft + S - 1u) / S;
}

/* CRC-32C: the 4-bit table form equals the bitwise definition (RFC 3720
 * section 12.1 / B.4: reflected polynomial 0x82F63B78, init and final xor
 * all ones) on random data, and the published check value. */
static void crc_nibble_equals_bitwise(void **state)
{
    (void)state;
    const uint8_t msg[] = { '1', '2', '3', '4', '5', '6', '7', '8', '9' };
    /* RevEng catalogue CRC-32/ISCSI check value [computed, ../shared/sources.md] */
    assert_int_equal(tl_crc32c(msg, sizeof msg), 0xE3069283u);
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("crc_nibble_equals_bitwise", 5u));
    uint8_t buf[777];
    for (size_t i = 0; i < sizeof buf; i++)
        buf[i] = (uint8_t)tl_rng_u64(&r);
    uint32_t crc = 0xFFFFFFFFu;
    for (size_t i = 0; i < sizeof buf; i++) {
        crc ^= buf[i];
        for (int b = 0; b < 8; b++)
            crc = (crc >> 1) ^ ((crc & 1u) ? 0x82F63B78u : 0u);
    }
    assert_int_equal(tl_crc32c(buf, sizeof buf), crc ^ 0xFFFFFFFFu);
}

/* A flipped coefficient bit is found within one pass of the walk, the
 * table comes back exactly, the counters say so, and the product of that
 * integration is flagged on every channel of every state. */
static void taps_flip_found_restored_flagged(void **state)
{
    (void)state;
    fixture f;
    fx_init(&f, 4u);
    fx_product(&f); /* a clean product first */
    assert_int_equal(f.p->upset, 0u);
    for (uint32_t k = 0; k < f.p->channels; k++)
        assert_int_equal(f.p->flags[k] & TL_FLAG_UPSET, 0u);
    tl_taps *good = malloc(sizeof *good);
    memcpy(good, &f.c->taps, sizeof *good);
    f.c->taps.coef[3u * N + 17u] ^= 1 << 9;
    /* one pass = ceil(walk / slice) slices, one slice per spectrum at
     * period 1 (exact integer arithmetic on the region sizes) */
    const size_t pass = pass_slices(f.c);
    uint32_t spectra = 0;
    while (f.c->scrub.counts.mismatches[TL_SCRUB_TAPS] == 0u) {
        fx_frame(&f);
        spectra++;
        assert_true(spectra <= 2u * pass); /* the walk may have been mid-pass */
    }
    assert_int_equal(memcmp(good, &f.c->taps, sizeof *good), 0);
    assert_int_equal(f.c->scrub.counts.restores[TL_SCRUB_TAPS], 1u);
    assert_int_equal(f.c->scrub.counts.last_bad, 1u + TL_SCRUB_TAPS);
    /* the integration in progress is flagged when it is taken */
    uint32_t before = f.c->index;
    while (f.c->index == before)
        fx_frame(&f);
    assert_int_equal(f.p->upset, 1u);
    for (uint32_t k = 0; k < f.p->channels; k++) {
        assert_int_equal(f.p->flags[k] & TL_FLAG_UPSET, TL_FLAG_UPSET);
        assert_int_equal(f.p->cal[0].flags[k] & TL_FLAG_UPSET, TL_FLAG_UPSET);
    }
    assert_int_equal(f.p->scrub.mismatches[TL_SCRUB_TAPS], 1u);
    /* and the next one is clean again */
    fx_product(&f);
    assert_int_equal(f.p->upset, 0u);
    free(good);
    fx_free(&f);
}

/* A flip made after the last spectrum and before the take is still found
 * (the release check) and flags that product. */
static void release_check_catches_late_flip(void **state)
{
    (void)state;
    fixture f;
    fx_init(&f, 2u);
    while (!tl_chain_ready(f.c)) {
        size_t used = 0;
        assert_int_equal(tl_chain_push(f.c, f.in0 + f.off, f.in1 + f.off, N, &used), TL_OK);
        f.off += used;
    }
    f.c->fft.tw[5] ^= 1 << 20;
    assert_int_equal(tl_chain_take(f.c, f.p), TL_OK);
    assert_int_equal(f.p->upset, 1u);
    assert_int_equal(f.p->scrub.mismatches[TL_SCRUB_FFT], 1u);
    assert_int_equal(f.p->scrub.restores[TL_SCRUB_FFT], 1u);
    fx_free(&f);
}

/* A configuration flip is found before the next spectrum uses it and the
 * configuration comes back exactly; the products equal a clean run's. */
static void config_flip_restored_before_use(void **state)
{
    (void)state;
    fixture a, b;
    fx_init(&a, 3u);
    fx_init(&b, 3u);
    fx_product(&a);
    fx_product(&b);
    tl_config good = b.c->cfg;
    b.c->cfg.det_shift ^= 2u; /* 4 -> 6: in range, wrong */
    fx_frame(&b);
    assert_int_equal(b.c->scrub.counts.mismatches[TL_SCRUB_CONFIG], 1u);
    assert_int_equal(b.c->scrub.counts.restores[TL_SCRUB_CONFIG], 1u);
    assert_int_equal(memcmp(&good, &b.c->cfg, sizeof good), 0);
    fx_frame(&a);
    fx_product(&a);
    fx_product(&b);
    /* restored before any spectrum used it: the sums are the clean run's,
     * but the product is flagged (the flip could have come mid-spectrum) */
    assert_int_equal(b.p->upset, 1u);
    assert_int_equal(a.p->upset, 0u);
    assert_int_equal(memcmp(a.p->auto_power, b.p->auto_power, sizeof a.p->auto_power), 0);
    assert_int_equal(memcmp(a.p->cross_re, b.p->cross_re, sizeof a.p->cross_re), 0);
    fx_free(&a);
    fx_free(&b);
}

/* Running-state fields far out of range: repaired, counted, flagged, and
 * nothing is written outside the context (the san build checks that). */
static void state_out_of_range_repaired(void **state)
{
    (void)state;
    fixture f;
    fx_init(&f, 3u);
    fx_product(&f);
    f.c->fill = 0x40000000u;
    f.c->pfb[1].newest = 0x1234u;
    f.c->sw.step = 0x80000000u;
    f.c->sk.count = 7u;
    assert_int_equal(tl_chain_state(f.c), TL_STATE_ANTENNA); /* bounded read */
    fx_frame(&f);
    assert_true(f.c->scrub.counts.state_faults >= 1u);
    assert_int_equal(f.c->scrub.counts.last_bad, TL_SCRUB_LAST_STATE);
    assert_true(f.c->fill < N);
    assert_true(f.c->pfb[1].newest < P);
    assert_true(f.c->sw.step < f.c->sw.steps);
    fx_product(&f);
    assert_int_equal(f.p->upset, 1u);
    /* a spectra counter that no longer adds up is found too */
    fx_frame(&f);
    f.c->spectra += 3u;
    const uint32_t faults = f.c->scrub.counts.state_faults;
    fx_frame(&f);
    assert_int_equal(f.c->scrub.counts.state_faults, faults + 1u);
    fx_free(&f);
}

/* The period: slices come every `period` spectra, so a pass takes period
 * times longer; out of range is refused. */
static void period_sets_the_pace(void **state)
{
    (void)state;
    fixture f;
    fx_init(&f, 12u);
    assert_int_equal(tl_chain_set_scrub_period(f.c, TL_SCRUB_MAX_PERIOD + 1u), TL_E_SCRUB);
    assert_int_equal(tl_chain_set_scrub_period(f.c, 4u), TL_OK);
    const size_t pass = pass_slices(f.c);
    assert_int_equal(pass, 7u); /* 4116 octets of table in 5 slices, 1784 of FFT tables in 2 */
    uint32_t frames = 0;
    while (f.c->scrub.counts.passes == 0u) {
        fx_frame(&f);
        frames++;
    }
    /* the walk steps on every frame (the P - 1 history frames too): the
     * first slice on the 4th frame, the pass ends with slice `pass` */
    assert_int_equal(frames, 4u * pass);
    fx_free(&f);
}

/* A flipped stored CRC costs one false mismatch: the restore re-derives it
 * from the protected copy, and later passes are clean. A flipped mark
 * cannot clear the flag: the second copy of it still flags. */
static void scrubber_own_flips(void **state)
{
    (void)state;
    fixture f;
    fx_init(&f, 6u);
    fx_product(&f);
    f.c->scrub.ref[TL_SCRUB_TAPS] ^= 0x00010000u;
    const uint32_t passes = f.c->scrub.counts.passes;
    while (f.c->scrub.counts.passes < passes + 2u)
        fx_frame(&f);
    assert_int_equal(f.c->scrub.counts.mismatches[TL_SCRUB_TAPS], 1u);
    assert_int_equal(f.c->scrub.counts.restores[TL_SCRUB_TAPS], 1u);
    assert_int_equal(f.c->scrub.ref[TL_SCRUB_TAPS], tl_scrub_region_crc(&f.c->scrub, f.c, TL_SCRUB_TAPS));
    fx_product(&f); /* the product of the false mismatch */
    assert_int_equal(f.p->upset, 1u);
    fx_product(&f);
    assert_int_equal(f.p->upset, 0u);
    assert_int_equal(f.c->scrub.counts.mismatches[TL_SCRUB_TAPS], 1u);
    /* a real mismatch, then its mark flipped back to 0 */
    f.c->fft.split_tw[9] ^= 4;
    while (f.c->scrub.counts.mismatches[TL_SCRUB_FFT] == 0u)
        fx_frame(&f);
    f.c->scrub.touched = 0u;
    fx_product(&f);
    assert_int_equal(f.p->upset, 1u);
    fx_free(&f);
}

typedef struct cap {
    uint8_t hk[1024];
    size_t hk_len;
    uint16_t sci_flags;
} cap;

static void sink(void *user, const uint8_t *pkt, size_t len)
{
    cap *c = user;
    tl_packet_view v;
    assert_int_equal(tl_packet_parse(pkt, len, &v), TL_OK);
    if (v.apid == 0x102u) {
        assert_true(v.user_len <= sizeof c->hk);
        memcpy(c->hk, v.user, v.user_len);
        c->hk_len = v.user_len;
    } else {
        tl_dl_science s;
        assert_int_equal(tl_downlink_parse_science(v.user, v.user_len, &s), TL_OK);
        c->sci_flags = (uint16_t)(c->sci_flags | s.flags);
    }
}

/* Housekeeping version 2 carries the scrub block (docs/icd.md 6.4); the
 * science header flags the upset; version 1 still parses. */
static void housekeeping_scrub_block(void **state)
{
    (void)state;
    fixture f;
    fx_init(&f, 2u);
    f.c->taps.coef[100] ^= 1;
    f.c->cfg.adc_bits ^= 1u;
    fx_product(&f);
    tl_downlink *d = malloc(sizeof *d);
    tl_downlink_config dc;
    tl_downlink_config_default(&dc);
    assert_int_equal(tl_downlink_init(d, &dc), TL_OK);
    cap c;
    memset(&c, 0, sizeof c);
    assert_int_equal(tl_downlink_product(d, f.p, 1, sink, &c), TL_OK);
    assert_int_equal(c.sci_flags & TL_DL_F_UPSET, TL_DL_F_UPSET);
    const uint32_t s = f.p->fft_stages + 1u;
    assert_int_equal(c.hk_len, TL_DL_HK_OCTETS(s));
    /* docs/icd.md 6.4: the acquisition block (32 octets), then the scrub block (36) */
    assert_int_equal(TL_DL_HK_OCTETS(s) - TL_DL_HK_V1_OCTETS(s), 32u + 36u);
    assert_int_equal(c.hk[0], 2u);
    tl_dl_hk h;
    assert_int_equal(tl_downlink_parse_hk(c.hk, c.hk_len, &h), TL_OK);
    assert_int_equal(h.scrub.mismatches[TL_SCRUB_TAPS], 1u);
    assert_int_equal(h.scrub.restores[TL_SCRUB_TAPS], 1u);
    assert_int_equal(h.scrub.mismatches[TL_SCRUB_CONFIG], 1u);
    assert_int_equal(h.scrub.restores[TL_SCRUB_CONFIG], 1u);
    assert_int_equal(h.scrub.mismatches[TL_SCRUB_FFT], 0u);
    assert_int_equal(h.scrub.passes, f.p->scrub.passes);
    assert_true(h.scrub.passes >= 1u);
    assert_int_equal(h.upset, 1u);
    /* the block's octets where the ICD puts them */
    const size_t o = TL_DL_HK_V1_OCTETS(s) + TL_DL_HK_ACQ_OCTETS;
    assert_int_equal(tl_get_be32(c.hk + o + 4u), 1u);  /* mismatches: coefficient table */
    assert_int_equal(tl_get_be32(c.hk + o + 12u), 1u); /* mismatches: configuration */
    assert_int_equal(tl_get_be32(c.hk + o + 16u), 1u); /* restores: coefficient table */
    assert_int_equal(c.hk[o + 33u], 1u);               /* upset */
    /* last region found bad: the configuration (checked before the walk reached the table) or the table */
    assert_true(c.hk[o + 32u] == 1u || c.hk[o + 32u] == 3u);
    /* version 1: the same without the block */
    c.hk[0] = 1u;
    assert_int_equal(tl_downlink_parse_hk(c.hk, TL_DL_HK_V1_OCTETS(s), &h), TL_OK);
    assert_int_equal(h.scrub.passes, 0u);
    assert_int_equal(h.upset, 0u);
    assert_int_equal(tl_downlink_parse_hk(c.hk, TL_DL_HK_OCTETS(s), &h), TL_E_FORMAT);
    c.hk[0] = 2u;
    c.hk[o + 33u] = 2u; /* upset must be 0 or 1 */
    assert_int_equal(tl_downlink_parse_hk(c.hk, c.hk_len, &h), TL_E_FORMAT);
    free(d);
    fx_free(&f);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(crc_nibble_equals_bitwise),
        cmocka_unit_test(taps_flip_found_restored_flagged),
        cmocka_unit_test(release_check_catches_late_flip),
        cmocka_unit_test(config_flip_restored_before_use),
        cmocka_unit_test(state_out_of_range_repaired),
        cmocka_unit_test(period_sets_the_pace),
        cmocka_unit_test(housekeeping_scrub_block),
        cmocka_unit_test(scrubber_own_flips),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
