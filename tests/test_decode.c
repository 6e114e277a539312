/*
 * test_decode.c - the ground decoder (host/ground.h) and `tidelock decode`.
 *
 * Streams are made with the flight code: synthetic tl_product contents ->
 * tl_downlink_product -> space packets -> tl_frame_builder (transfer frames)
 * or back to back (raw). They are decoded with the library and checked:
 *  - clean: every product rebuilt exactly (lossless: every array equal;
 *    noise-bounded: equal to the payload's own dequantized value and within
 *    step/2 of the sum), every frame and packet ok;
 *  - damaged: frames dropped, repeated, swapped, bit-flipped, burst-hit,
 *    junk between them; packets dropped, repeated, swapped, flipped; files
 *    cut short. The test knows what it did and computes, from the rules of
 *    docs/icd.md section 5.5 and docs/ground-decoder.md, which packets can
 *    still arrive; the decoder's counts and its list of packets decoded must
 *    match exactly, and every packet that arrives yields exactly the
 *    channels of the clean decode;
 *  - hostile bytes: a report, never a crash (the san build runs it too);
 *  - the command line: exit codes, one-line errors, the folders it writes.
 * Sources: CCSDS 132.0-B-2 / 131.0-B (frames, ASM), CCSDS 133.0-B-2
 * (packets), CRC-16 detection limits (../shared/sources.md), liblz4 (the
 * payloads, through host/spectral_decode.c).
 */
#include <dirent.h>
#include <jansson.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "tl_test.h"

#include "ground.h"
#include "rng.h"
#include "scenario.h"
#include "spectral_decode.h"
#include "tl_bytes.h"
#include "tl_crc16.h"
#include "tl_downlink.h"
#include "tl_frame.h"
#include "tl_integrate.h"
#include "tl_packet.h"

static char argv0[4096];

/* figures printed at the end of each test and summed */
static uint64_t g_frames_decoded, g_injected, g_caught;

/* ---- synthetic products ----------------------------------------------------------- */

typedef struct spec {
    uint32_t channels, inputs, switching, index;
    uint64_t seed;
    int saturate;
} spec;

/* A product as tl_chain_take fills it, with made-up sums: auto-power
 * levels with load < antenna < load + noise (so it can be calibrated), a
 * few saturated channels (flagged), cross-power of both signs. */
static void gen_product(const spec *sp, tl_product *p)
{
    memset(p, 0, sizeof *p);
    tl_rng r;
    tl_rng_seed(&r, sp->seed);
    const uint32_t ch = sp->channels, states = sp->switching ? 3u : 1u;
    p->arith_version = TL_ARITH_VERSION;
    p->index = sp->index;
    p->channels = ch;
    p->points = 2u * ch;
    p->taps = 4;
    p->inputs = sp->inputs;
    p->antenna_spectra = 1000u + (uint32_t)(tl_rng_u64(&r) % 3000u);
    if (sp->switching) {
        p->cal[0].spectra = 500u + (uint32_t)(tl_rng_u64(&r) % 1000u);
        p->cal[1].spectra = 500u + (uint32_t)(tl_rng_u64(&r) % 1000u);
        p->discarded = 9;
        p->switch_steps = 3;
    }
    p->spectra = p->antenna_spectra + p->cal[0].spectra + p->cal[1].spectra + p->discarded;
    p->first_frame = (uint64_t)sp->index * 10u;
    p->fft_stages = 1u + (uint32_t)(tl_rng_u64(&r) % TL_MAX_FFT_STAGES);
    p->fft_total_shift = (uint32_t)(tl_rng_u64(&r) % 20u);
    p->det_shift = (uint32_t)(tl_rng_u64(&r) % 41u);
    p->taps_crc = (uint32_t)tl_rng_u64(&r);
    for (uint32_t i = 0; i < sp->inputs; i++) {
        p->stats.adc_clips[i] = (uint32_t)(tl_rng_u64(&r) % 100u);
        p->stats.adc_sumsq[i] = tl_rng_u64(&r) >> 8;
        p->stats.pfb_sat[i] = (uint32_t)(tl_rng_u64(&r) % 5u);
        for (uint32_t k = 0; k <= p->fft_stages; k++)
            p->stats.fft_sat[i][k] = (uint32_t)(tl_rng_u64(&r) % 3u);
        for (uint32_t b = 0; b < TL_ADC_HIST_BINS; b++)
            p->stats.adc_hist[i][b] = (uint32_t)(tl_rng_u64(&r) >> 40);
    }
    for (uint32_t q = 0; q < 4u; q++) {
        p->stats.acc_sat[q] = (uint32_t)(tl_rng_u64(&r) % 7u);
        p->cal[0].acc_sat[q] = (uint32_t)(tl_rng_u64(&r) % 7u);
        p->cal[1].acc_sat[q] = (uint32_t)(tl_rng_u64(&r) % 7u);
    }
    static const unsigned level[3] = { 41, 40, 43 }; /* antenna, load, load + noise (powers of two) */
    for (uint32_t s = 0; s < states; s++) {
        uint64_t *a[2] = { s ? p->cal[s - 1].auto_power[0] : p->auto_power[0],
                           s ? p->cal[s - 1].auto_power[1] : p->auto_power[1] };
        int64_t *re = s ? p->cal[s - 1].cross_re : p->cross_re, *im = s ? p->cal[s - 1].cross_im : p->cross_im;
        uint8_t *fl = s ? p->cal[s - 1].flags : p->flags;
        for (uint32_t k = 0; k < ch; k++) {
            const uint64_t shape = ((uint64_t)1 << level[s]) + ((uint64_t)k << (level[s] - 14u));
            for (uint32_t i = 0; i < sp->inputs; i++) {
                a[i][k] = shape + (tl_rng_u64(&r) >> 36);
                if (sp->saturate && tl_rng_u64(&r) % 97u == 0u) {
                    a[i][k] = UINT64_MAX;
                    fl[k] = (uint8_t)(fl[k] | (i ? TL_FLAG_SAT_AUTO1 : TL_FLAG_SAT_AUTO0));
                }
            }
            if (sp->inputs == 2u) {
                re[k] = (int64_t)(tl_rng_u64(&r) >> 35) - ((int64_t)1 << 28);
                im[k] = (int64_t)(tl_rng_u64(&r) >> 37) - ((int64_t)1 << 26);
                if (sp->saturate && tl_rng_u64(&r) % 89u == 0u) {
                    re[k] = (tl_rng_u64(&r) & 1u) ? INT64_MAX : INT64_MIN;
                    fl[k] = (uint8_t)(fl[k] | TL_FLAG_SAT_CROSS_RE);
                }
                if (sp->saturate && tl_rng_u64(&r) % 89u == 0u) {
                    im[k] = (tl_rng_u64(&r) & 1u) ? INT64_MAX : INT64_MIN;
                    fl[k] = (uint8_t)(fl[k] | TL_FLAG_SAT_CROSS_IM);
                }
            }
        }
    }
}

/* ---- streams made by the flight code ----------------------------------------------- */

typedef struct pkt_rec {
    size_t off, len;               /* in the raw packet stream */
    uint16_t apid, count;
    uint32_t ord;                  /* packets of its APID before it */
    uint32_t first_frame, last_frame;
    uint32_t product;              /* index into specs */
    int science;
    uint8_t state, qty;
    uint16_t first, n;
} pkt_rec;

typedef struct ref_product {
    int have;
    uint32_t channels, states, nq;
    uint64_t *v;   /* [3][4][channels], cross as two's complement bits */
    uint8_t *fl;   /* [3][channels] */
} ref_product;

typedef struct stream {
    const char *name;
    uint32_t frame_len, encoding;
    size_t wire;
    uint8_t *pk;                   /* raw packets */
    size_t pk_len, pk_cap;
    pkt_rec *p;
    size_t np, p_cap;
    uint8_t *fr;                   /* frames, each `wire` octets */
    size_t fr_len, fr_cap, nf;
    spec *specs;
    uint32_t nprod;
    uint32_t *pbegin, *pend;       /* packets [pbegin, pend) of each product */
    uint32_t ord[2];
    tl_frame_builder fb;
    tl_downlink *dl;
    uint16_t apid_sci, apid_hk, scid, vcid;
    uint32_t cur;                  /* product being packetised */
    ref_product *ref;              /* the clean decode */
} stream;

static void grow(uint8_t **b, size_t *cap, size_t need)
{
    if (need <= *cap)
        return;
    size_t c = *cap ? *cap : 65536u;
    while (c < need)
        c *= 2u;
    *b = realloc(*b, c);
    assert_non_null(*b);
    *cap = c;
}

static void frame_sink(void *user, const uint8_t *wire, size_t len)
{
    stream *st = user;
    assert_int_equal(len, st->wire);
    grow(&st->fr, &st->fr_cap, st->fr_len + len);
    memcpy(st->fr + st->fr_len, wire, len);
    st->fr_len += len;
    st->nf++;
}

static void packet_sink(void *user, const uint8_t *pkt, size_t len)
{
    stream *st = user;
    grow(&st->pk, &st->pk_cap, st->pk_len + len);
    memcpy(st->pk + st->pk_len, pkt, len);
    if (st->np == st->p_cap) {
        st->p_cap = st->p_cap ? 2u * st->p_cap : 1024u;
        st->p = realloc(st->p, st->p_cap * sizeof *st->p);
        assert_non_null(st->p);
    }
    pkt_rec *r = &st->p[st->np];
    memset(r, 0, sizeof *r);
    r->off = st->pk_len;
    r->len = len;
    tl_packet_view v;
    assert_int_equal(tl_packet_parse(pkt, len, &v), TL_OK);
    r->apid = v.apid;
    r->count = v.count;
    r->science = v.apid == st->apid_sci;
    r->ord = st->ord[r->science ? 0 : 1]++;
    r->product = st->cur;
    if (r->science) {
        tl_dl_science s;
        assert_int_equal(tl_downlink_parse_science(v.user, v.user_len, &s), TL_OK);
        r->state = s.state;
        r->qty = s.qty;
        r->first = s.first;
        r->n = s.count;
    }
    r->first_frame = st->fb.frames;
    assert_int_equal(tl_frame_put_packet(&st->fb, pkt, len), TL_OK);
    r->last_frame = st->fb.fill == 0u ? st->fb.frames - 1u : st->fb.frames;
    st->pk_len += len;
    st->np++;
}

typedef struct stream_cfg {
    uint32_t frame_len, encoding, transpose, max_packet, block, fraction_q16;
    uint16_t scid, vcid, apid_sci, apid_hk;
    uint32_t nprod;
    const uint32_t *channels; /* choices */
    uint32_t n_channels;
    int flushes;              /* flush / idle frames between products now and then */
    int calibratable;         /* two inputs, switched, nothing saturated */
} stream_cfg;

static uint32_t forced_config_id; /* non-zero: the configuration id of the next streams */
static int reversed_indices;      /* the integration indices of the next streams count down */

static stream *make_stream(const char *name, const stream_cfg *c, tl_rng *r)
{
    stream *st = calloc(1, sizeof *st);
    assert_non_null(st);
    st->name = name;
    st->frame_len = c->frame_len;
    st->encoding = c->encoding;
    st->wire = TL_FRAME_WIRE_LEN(c->frame_len);
    st->apid_sci = c->apid_sci;
    st->apid_hk = c->apid_hk;
    st->scid = c->scid;
    st->vcid = c->vcid;
    st->nprod = c->nprod;
    st->specs = calloc(c->nprod, sizeof *st->specs);
    st->pbegin = calloc(c->nprod, sizeof *st->pbegin);
    st->pend = calloc(c->nprod, sizeof *st->pend);
    st->ref = calloc(c->nprod, sizeof *st->ref);
    st->dl = malloc(sizeof *st->dl);
    assert_true(st->specs && st->pbegin && st->pend && st->ref && st->dl);
    tl_downlink_config dc;
    tl_downlink_config_default(&dc);
    dc.apid_science = c->apid_sci;
    dc.apid_hk = c->apid_hk;
    dc.max_packet = c->max_packet;
    dc.encoding = c->encoding;
    dc.transpose = c->transpose;
    dc.block = c->block;
    dc.fraction_q16 = c->fraction_q16;
    dc.config_id = (uint32_t)tl_rng_u64(r);
    if (forced_config_id != 0u)
        dc.config_id = forced_config_id;
    dc.mode = (uint8_t)(tl_rng_u64(r) % 4u);
    assert_int_equal(tl_downlink_init(st->dl, &dc), TL_OK);
    assert_int_equal(tl_frame_builder_init(&st->fb, c->frame_len, c->scid, (uint8_t)c->vcid, frame_sink, st), TL_OK);
    tl_product *p = tl_test_product();
    for (uint32_t i = 0; i < c->nprod; i++) {
        spec *sp = &st->specs[i];
        sp->channels = c->channels[tl_rng_u64(r) % c->n_channels];
        sp->inputs = c->calibratable ? 2u : 1u + (uint32_t)(tl_rng_u64(r) % 2u);
        sp->switching = c->calibratable ? 1u : (uint32_t)(tl_rng_u64(r) % 2u);
        sp->index = reversed_indices ? c->nprod - 1u - i : i;
        sp->seed = tl_rng_u64(r);
        sp->saturate = !c->calibratable;
        gen_product(sp, p);
        st->cur = i;
        st->pbegin[i] = (uint32_t)st->np;
        assert_int_equal(tl_downlink_product(st->dl, p, (int)(i % 2u), packet_sink, st), TL_OK);
        st->pend[i] = (uint32_t)st->np;
        const uint64_t x = tl_rng_u64(r) % 8u;
        if (c->flushes && x == 0u)
            assert_int_equal(tl_frame_flush(&st->fb), TL_OK);
        else if (c->flushes && x == 1u)
            assert_int_equal(tl_frame_put_idle_frame(&st->fb), TL_OK);
    }
    assert_int_equal(tl_frame_flush(&st->fb), TL_OK);
    free(p);
    printf("[ INFO     ] stream %s: %u products, %zu packets (%zu octets), %zu frames of %u octets (%zu octets)\n",
           name, st->nprod, st->np, st->pk_len, st->nf, st->frame_len, st->fr_len);
    return st;
}

static void free_stream(stream *st)
{
    for (uint32_t i = 0; i < st->nprod; i++) {
        free(st->ref[i].v);
        free(st->ref[i].fl);
    }
    free(st->ref);
    free(st->specs);
    free(st->pbegin);
    free(st->pend);
    free(st->pk);
    free(st->p);
    free(st->fr);
    free(st->dl);
    free(st);
}

static uint16_t frame_fhp(const stream *st, size_t k)
{
    return (uint16_t)(tl_get_be16(st->fr + k * st->wire + TL_FRAME_ASM_OCTETS + TL_FRAME_OFF_STATUS) &
                      TL_FRAME_FHP_MASK);
}

/* ---- decoding and checking products ------------------------------------------------- */

static const uint64_t *val_u(const tl_product *p, uint32_t s, uint32_t q)
{
    if (q < 2u)
        return s ? p->cal[s - 1].auto_power[q] : p->auto_power[q];
    const int64_t *x = q == 2u ? (s ? p->cal[s - 1].cross_re : p->cross_re) : (s ? p->cal[s - 1].cross_im : p->cross_im);
    return (const uint64_t *)(const void *)x; /* the same bits: compared, never computed with */
}

static const uint8_t *flags_u(const tl_product *p, uint32_t s)
{
    return s ? p->cal[s - 1].flags : p->flags;
}

enum { CHECK_ORIGINAL, CHECK_REF };

typedef struct check {
    stream *st;
    int mode;
    const uint8_t *delivered;      /* CHECK_REF: per packet, 1 if it must arrive */
    uint32_t products, complete, incomplete;
    uint64_t channels_compared, bounded_checked;
    tl_product *orig;
} check;

/* Clean decode: the product against the one that was sent. */
static void check_original(check *c, const tl_product *p, const tl_ground_product_info *in)
{
    stream *st = c->st;
    assert_true(in->index < st->nprod);
    const spec *sp = &st->specs[in->index];
    gen_product(sp, c->orig);
    const tl_product *o = c->orig;
    assert_true(in->complete);
    assert_int_equal(in->done, TL_GROUND_DONE_COMPLETE);
    assert_int_equal(in->missing_total, 0);
    assert_int_equal(p->index, o->index);
    assert_int_equal(p->channels, o->channels);
    assert_int_equal(p->points, o->points);
    assert_int_equal(p->inputs, o->inputs);
    assert_int_equal(p->spectra, o->spectra);
    assert_int_equal(p->antenna_spectra, o->antenna_spectra);
    assert_int_equal(p->discarded, o->discarded);
    assert_int_equal(p->switch_steps, o->switch_steps);
    assert_int_equal(p->cal[0].spectra, o->cal[0].spectra);
    assert_int_equal(p->cal[1].spectra, o->cal[1].spectra);
    assert_int_equal(p->det_shift, o->det_shift);
    assert_int_equal(p->fft_total_shift, o->fft_total_shift);
    assert_int_equal(p->arith_version, o->arith_version);
    assert_int_equal(p->taps_crc, o->taps_crc);
    assert_int_equal(p->fft_stages, o->fft_stages);
    assert_memory_equal(&p->stats, &o->stats, sizeof p->stats);
    assert_memory_equal(p->cal[0].acc_sat, o->cal[0].acc_sat, sizeof o->cal[0].acc_sat);
    assert_memory_equal(p->cal[1].acc_sat, o->cal[1].acc_sat, sizeof o->cal[1].acc_sat);
    const uint32_t states = sp->switching ? 3u : 1u, nq = sp->inputs == 2u ? 4u : 1u, ch = sp->channels;
    assert_int_equal(in->states, states);
    assert_int_equal(in->quantities, nq);
    for (uint32_t s = 0; s < states; s++)
        assert_memory_equal(flags_u(p, s), flags_u(o, s), ch);
    if (st->encoding == TL_ENCODE_ID_LOSSLESS) {
        for (uint32_t s = 0; s < states; s++)
            for (uint32_t q = 0; q < nq; q++)
                assert_memory_equal(val_u(p, s, q), val_u(o, s, q), ch * sizeof(uint64_t));
        c->channels_compared += (uint64_t)states * nq * ch;
    } else {
        /* each packet's payload decoded on its own (liblz4 behind
         * tl_spectral_decode): the product holds exactly its values, and
         * each is within step/2 of the sum that was sent */
        static uint64_t vu[TL_ENCODE_FORMAT_MAX_CHANNELS], steps[TL_ENCODE_FORMAT_MAX_CHANNELS];
        static int64_t vi[TL_ENCODE_FORMAT_MAX_CHANNELS];
        for (uint32_t i = st->pbegin[in->index]; i < st->pend[in->index]; i++) {
            const pkt_rec *r = &st->p[i];
            if (!r->science)
                continue;
            tl_packet_view v;
            assert_int_equal(tl_packet_parse(st->pk + r->off, r->len, &v), TL_OK);
            tl_dl_science s;
            assert_int_equal(tl_downlink_parse_science(v.user, v.user_len, &s), TL_OK);
            assert_true(s.flags & TL_DL_F_BOUNDED);
            tl_spectral_header h;
            if (r->qty < 2u) {
                assert_int_equal(tl_spectral_decode_u64(s.payload, s.payload_len, vu, steps, s.count, &h), TL_OK);
                const uint64_t *got = val_u(p, r->state, r->qty) + r->first, *sent = val_u(o, r->state, r->qty) + r->first;
                for (uint32_t k = 0; k < r->n; k++) {
                    assert_true(got[k] == vu[k]);
                    const uint64_t err = vu[k] > sent[k] ? vu[k] - sent[k] : sent[k] - vu[k];
                    if (err > steps[k] / 2u)
                        fail_msg("auto channel %u: |%llu - %llu| above step/2 = %llu", r->first + k,
                                 (unsigned long long)vu[k], (unsigned long long)sent[k],
                                 (unsigned long long)(steps[k] / 2u));
                }
            } else {
                assert_int_equal(tl_spectral_decode_i64(s.payload, s.payload_len, vi, steps, s.count, &h), TL_OK);
                const uint64_t *got = val_u(p, r->state, r->qty) + r->first, *sent = val_u(o, r->state, r->qty) + r->first;
                for (uint32_t k = 0; k < r->n; k++) {
                    assert_true(got[k] == (uint64_t)vi[k]);
                    const int64_t a = vi[k], b = (int64_t)sent[k];
                    const uint64_t err = a > b ? (uint64_t)a - (uint64_t)b : (uint64_t)b - (uint64_t)a;
                    assert_true(err <= steps[k] / 2u);
                }
            }
            assert_int_equal(h.encoding, TL_ENCODE_ID_BOUNDED);
            c->bounded_checked += r->n;
        }
        c->channels_compared += (uint64_t)states * nq * ch;
    }
    /* keep it as the reference for the damaged runs */
    ref_product *rf = &st->ref[in->index];
    assert_false(rf->have);
    rf->have = 1;
    rf->channels = ch;
    rf->states = states;
    rf->nq = nq;
    rf->v = malloc((size_t)12u * ch * sizeof *rf->v);
    rf->fl = malloc((size_t)3u * ch);
    assert_true(rf->v && rf->fl);
    for (uint32_t s = 0; s < 3u; s++) {
        memcpy(rf->fl + (size_t)s * ch, flags_u(p, s), ch);
        for (uint32_t q = 0; q < 4u; q++)
            memcpy(rf->v + ((size_t)s * 4u + q) * ch, val_u(p, s, q), ch * sizeof(uint64_t));
    }
}

static int covered_bit(const uint64_t *bits, uint32_t k)
{
    return (int)((bits[k / 64u] >> (k % 64u)) & 1u);
}

/* Damaged decode: the product against the clean decode. */
static void check_ref(check *c, const tl_product *p, const tl_ground_product_info *in)
{
    stream *st = c->st;
    assert_true(in->index < st->nprod);
    const ref_product *rf = &st->ref[in->index];
    assert_true(rf->have);
    assert_int_equal(p->channels, rf->channels);
    uint32_t want_sci = 0, got_sci = 0, hk = 0;
    for (uint32_t i = st->pbegin[in->index]; i < st->pend[in->index]; i++) {
        const pkt_rec *r = &st->p[i];
        want_sci += r->science;
        if (!c->delivered[i]) {
            continue;
        }
        if (!r->science) {
            hk = 1;
            continue;
        }
        got_sci++;
        /* a packet that arrived: its channels are there, exactly */
        for (uint32_t k = r->first; k < (uint32_t)r->first + r->n; k++)
            if (!covered_bit(in->covered[r->state][r->qty], k))
                fail_msg("%s: product %u state %u quantity %u channel %u of a packet that arrived is missing",
                         st->name, in->index, r->state, r->qty, k);
    }
    assert_int_equal(in->has_hk, hk);
    assert_int_equal(in->science_packets, got_sci);
    const int complete = hk && got_sci == want_sci;
    assert_int_equal(in->complete, complete);
    if (complete) {
        assert_int_equal(in->states, rf->states);
        assert_int_equal(in->quantities, rf->nq);
    }
    uint64_t missing = 0;
    for (uint32_t s = 0; s < in->states; s++)
        for (uint32_t q = 0; q < in->quantities; q++) {
            const uint64_t *got = val_u(p, s, q), *want = rf->v + ((size_t)s * 4u + q) * rf->channels;
            const uint8_t *fl = flags_u(p, s), *wfl = rf->fl + (size_t)s * rf->channels;
            const uint8_t bit = (uint8_t)(1u << q);
            for (uint32_t k = 0; k < rf->channels; k++) {
                if (covered_bit(in->covered[s][q], k)) {
                    if (got[k] != want[k] || (fl[k] & bit) != (wfl[k] & bit))
                        fail_msg("%s: product %u state %u quantity %u channel %u differs from the clean decode",
                                 st->name, in->index, s, q, k);
                    c->channels_compared++;
                } else {
                    assert_true(got[k] == 0u);
                    assert_true(fl[k] & TL_GROUND_FLAG_MISSING);
                    missing++;
                }
            }
        }
    assert_int_equal(in->missing_total, missing);
    if (complete)
        for (uint32_t s = 0; s < in->states; s++)
            assert_memory_equal(flags_u(p, s), rf->fl + (size_t)s * rf->channels, rf->channels);
}

static int on_product(void *user, const tl_product *p, const tl_ground_product_info *in, tl_ground_product_note *note)
{
    (void)note;
    check *c = user;
    c->products++;
    if (in->complete)
        c->complete++;
    else
        c->incomplete++;
    if (c->mode == CHECK_ORIGINAL)
        check_original(c, p, in);
    else
        check_ref(c, p, in);
    return 0;
}

static tl_ground_config ground_cfg(const stream *st, int raw)
{
    tl_ground_config gc;
    tl_ground_config_default(&gc);
    gc.raw = raw;
    gc.frame_len = st ? st->frame_len : 1024u;
    if (st) {
        gc.scid = st->scid;
        gc.vcid = st->vcid;
        gc.apid_science = st->apid_sci;
        gc.apid_hk = st->apid_hk;
    }
    return gc;
}

/* Feed bytes in random pieces (1 octet .. 150 kB), then finish. */
static tl_ground *decode_bytes(const tl_ground_config *gc, const uint8_t *b, size_t n, tl_rng *r, check *c)
{
    char err[1024];
    tl_ground *g = tl_ground_open(gc, c ? on_product : NULL, c, err, sizeof err);
    if (g == NULL)
        fail_msg("tl_ground_open: %s", err);
    size_t at = 0;
    while (at < n) {
        const uint64_t x = tl_rng_u64(r);
        size_t piece = (x % 4u == 0u) ? (size_t)(x >> 8) % 16u + 1u : (size_t)(x >> 8) % 150000u + 1u;
        if (piece > n - at)
            piece = n - at;
        if (tl_ground_feed(g, b + at, piece, err, sizeof err) != 0)
            fail_msg("tl_ground_feed: %s", err);
        at += piece;
    }
    if (tl_ground_finish(g, err, sizeof err) != 0)
        fail_msg("tl_ground_finish: %s", err);
    return g;
}

/* The statuses of the packets the decoder used, by (science?, ordinal):
 * mark[i] = 1 for each stream packet decoded. Packets are matched by APID
 * and sequence count (unique here: fewer than 16384 per APID). */
static void used_packets(const tl_ground *g, const stream *st, uint8_t *mark)
{
    size_t n = 0;
    uint64_t left = 0;
    const tl_ground_packet_entry *e = tl_ground_packets(g, &n, &left);
    assert_int_equal(left, 0);
    memset(mark, 0, st->np);
    /* index of packet by (apid kind, count) */
    uint32_t *by[2];
    by[0] = malloc(16384u * sizeof(uint32_t));
    by[1] = malloc(16384u * sizeof(uint32_t));
    assert_true(by[0] && by[1]);
    for (uint32_t i = 0; i < 16384u; i++)
        by[0][i] = by[1][i] = UINT32_MAX;
    for (size_t i = 0; i < st->np; i++) {
        assert_true(st->p[i].ord < 16384u);
        by[st->p[i].science ? 0 : 1][st->p[i].count] = (uint32_t)i;
    }
    for (size_t i = 0; i < n; i++) {
        if (e[i].status != TL_GP_OK && e[i].status != TL_GP_REORDERED)
            continue;
        const int sci = e[i].apid == st->apid_sci;
        assert_true(sci || e[i].apid == st->apid_hk);
        const uint32_t k = by[sci ? 0 : 1][e[i].count];
        assert_true(k != UINT32_MAX);
        if (mark[k])
            fail_msg("%s: packet %u (APID %u count %u) decoded twice", st->name, k, e[i].apid, e[i].count);
        mark[k] = 1;
    }
    free(by[0]);
    free(by[1]);
}

/* The clean decode of a stream (frames, then raw): everything exact; the
 * frames decode's products become the reference. */
static void clean_decode(stream *st, tl_rng *r)
{
    check c = { st, CHECK_ORIGINAL, NULL, 0, 0, 0, 0, 0, tl_test_product() };
    for (int raw = 0; raw <= 1; raw++) {
        if (raw) { /* the reference is kept from the frames decode; check raw against it */
            c.mode = CHECK_REF;
            uint8_t *all = malloc(st->np);
            assert_non_null(all);
            memset(all, 1, st->np);
            c.delivered = all;
        }
        c.products = c.complete = c.incomplete = 0;
        const tl_ground_config gc = ground_cfg(st, raw);
        tl_ground *g = decode_bytes(&gc, raw ? st->pk : st->fr, raw ? st->pk_len : st->fr_len, r, &c);
        const tl_ground_totals *t = tl_ground_totals_of(g);
        assert_int_equal(c.products, st->nprod);
        assert_int_equal(c.complete, st->nprod);
        assert_int_equal(t->products_complete, st->nprod);
        assert_int_equal(t->products_incomplete, 0);
        assert_int_equal(t->packets[TL_GP_OK], st->np);
        assert_int_equal(t->hk_packets, st->nprod);
        assert_int_equal(t->seq_missing + t->seq_gaps + t->seq_duplicates + t->seq_reordered + t->seq_restarts, 0);
        assert_int_equal(t->bytes_skipped, 0);
        assert_int_equal(t->bytes, raw ? st->pk_len : st->fr_len);
        if (!raw) {
            assert_int_equal(t->frames[TL_GF_OK], st->nf);
            assert_int_equal(t->frames_missing + t->sync_losses, 0);
            g_frames_decoded += st->nf;
        }
        for (unsigned s = 1; s < TL_GP_STATUSES; s++)
            assert_int_equal(t->packets[s], 0);
        assert_int_equal(tl_ground_clean(g), 1);
        if (st->encoding == TL_ENCODE_ID_BOUNDED)
            assert_int_equal(t->products_bounded, st->nprod);
        tl_ground_close(g);
        if (raw)
            free((void *)c.delivered);
    }
    printf("[ INFO     ] %s clean: %u products exact in frames and raw, %llu channel values compared%s\n", st->name,
           st->nprod, (unsigned long long)c.channels_compared,
           st->encoding == TL_ENCODE_ID_BOUNDED ? " (noise-bounded: each within step/2)" : "");
    if (st->encoding == TL_ENCODE_ID_BOUNDED)
        assert_true(c.bounded_checked > 0u);
    free(c.orig);
}

/* ---- what must arrive ---------------------------------------------------------------------- */

typedef struct expect {
    uint64_t ok, late, repeated, bad, missing, sync_losses, skipped, idle, truncated_frames;
    uint64_t dups, corrupt, resyncs, truncated_packets;
    uint64_t reordered[2], seq_missing[2];
    uint32_t complete, incomplete, hk_only;
} expect;

/* From the packets delivered and the arrival position at which each
 * completes: per APID, how many arrive behind a higher count, and how many
 * counts between the first and the last delivered never arrive. */
typedef struct done_at {
    uint64_t pos;
    uint32_t i;
} done_at;

static int by_pos(const void *a, const void *b)
{
    const done_at *x = a, *y = b;
    if (x->pos != y->pos)
        return x->pos < y->pos ? -1 : 1;
    return x->i < y->i ? -1 : x->i > y->i;
}

static void sequence_expect(const stream *st, const uint8_t *deliv, const uint64_t *pos, expect *ex)
{
    done_at *d = malloc(st->np * sizeof *d);
    assert_non_null(d);
    size_t n = 0;
    for (size_t i = 0; i < st->np; i++)
        if (deliv[i])
            d[n++] = (done_at){ pos[i], (uint32_t)i };
    qsort(d, n, sizeof *d, by_pos);
    for (int a = 0; a < 2; a++) {
        int64_t hi = -1, lo = -1;
        uint64_t cnt = 0;
        for (size_t j = 0; j < n; j++) {
            const pkt_rec *r = &st->p[d[j].i];
            if ((r->science ? 0 : 1) != a)
                continue;
            if ((int64_t)r->ord < hi)
                ex->reordered[a]++;
            else
                hi = r->ord;
            if (lo < 0 || (int64_t)r->ord < lo)
                lo = r->ord;
            cnt++;
        }
        ex->seq_missing[a] = cnt ? (uint64_t)(hi - lo + 1) - cnt : 0u;
    }
    free(d);
    /* products */
    for (uint32_t k = 0; k < st->nprod; k++) {
        uint32_t sci = 0, sci_got = 0, hk = 0;
        for (uint32_t i = st->pbegin[k]; i < st->pend[k]; i++) {
            sci += st->p[i].science;
            sci_got += st->p[i].science && deliv[i];
            hk |= !st->p[i].science && deliv[i];
        }
        if (hk && sci_got == sci)
            ex->complete++;
        else if (sci_got > 0u)
            ex->incomplete++;
        else if (hk)
            ex->hk_only++;
    }
}

/* Compare the decoder's report with what the test did. */
static void compare_report(const tl_ground *g, const stream *st, const expect *ex, const uint8_t *deliv, int raw,
                           const check *c)
{
    const tl_ground_totals *t = tl_ground_totals_of(g);
    uint8_t *mark = malloc(st->np);
    assert_non_null(mark);
    used_packets(g, st, mark);
    for (size_t i = 0; i < st->np; i++)
        if (mark[i] != deliv[i])
            fail_msg("%s: packet %zu (APID %u count %u, frames %u..%u) %s but should %s", st->name, i, st->p[i].apid,
                     st->p[i].count, st->p[i].first_frame, st->p[i].last_frame,
                     mark[i] ? "was decoded" : "was not decoded", deliv[i] ? "arrive" : "be lost");
    free(mark);
    if (!raw) {
        assert_int_equal(t->frames[TL_GF_OK], ex->ok);
        assert_int_equal(t->frames[TL_GF_OUT_OF_ORDER], ex->late);
        assert_int_equal(t->frames[TL_GF_REPEATED], ex->repeated);
        assert_int_equal(t->frames[TL_GF_BAD_FECF] + t->frames[TL_GF_BAD_HEADER], ex->bad);
        assert_int_equal(t->frames[TL_GF_INCONSISTENT] + t->frames[TL_GF_RESTART] + t->frames[TL_GF_OTHER_CHANNEL], 0);
        assert_int_equal(t->frames[TL_GF_TRUNCATED], ex->truncated_frames);
        assert_int_equal(t->frames_missing, ex->missing);
        assert_int_equal(t->sync_losses, ex->sync_losses);
        assert_int_equal(t->frames_idle, ex->idle);
        /* a frame that failed its FECF never lets a bad packet through */
        assert_int_equal(t->packets[TL_GP_CRC] + t->packets[TL_GP_BAD_HEADER], 0);
    } else {
        assert_int_equal(t->packets[TL_GP_CRC] + t->packets[TL_GP_BAD_HEADER], ex->corrupt);
        assert_int_equal(t->resyncs, ex->resyncs);
        assert_int_equal(t->seq_duplicates, ex->dups);
        assert_int_equal(t->packets[TL_GP_DUPLICATE], ex->dups);
    }
    assert_int_equal(t->bytes_skipped, ex->skipped);
    assert_int_equal(t->packets[TL_GP_TRUNCATED], ex->truncated_packets);
    tl_ground_apid_stats as;
    assert_int_equal(tl_ground_apid(g, st->apid_sci, &as), 1);
    assert_int_equal(as.reordered, ex->reordered[0]);
    assert_int_equal(as.missing, ex->seq_missing[0]);
    if (tl_ground_apid(g, st->apid_hk, &as)) {
        assert_int_equal(as.reordered, ex->reordered[1]);
        assert_int_equal(as.missing, ex->seq_missing[1]);
    }
    assert_int_equal(t->packets[TL_GP_REORDERED], ex->reordered[0] + ex->reordered[1]);
    assert_int_equal(t->packets[TL_GP_INCONSISTENT] + t->packets[TL_GP_LATE] + t->packets[TL_GP_BAD_PAYLOAD] +
                         t->packets[TL_GP_BAD_USER_DATA] + t->packets[TL_GP_TOO_MANY_CHANNELS] +
                         t->packets[TL_GP_OTHER_APID] + t->packets[TL_GP_RESTART],
                     0);
    assert_int_equal(t->products_complete, ex->complete);
    assert_int_equal(t->products_incomplete, ex->incomplete);
    assert_int_equal(t->products_no_spectra, ex->hk_only);
    assert_int_equal(c->complete, ex->complete);
    assert_int_equal(c->incomplete, ex->incomplete);
}

/* ---- frame damage ----------------------------------------------------------------------- */

enum { OP_NONE, OP_DROP, OP_DUP, OP_SWAP, OP_FLIP, OP_BURST, OP_SMASH, OP_JUNK, OP_KINDS };
enum { A_GOOD, A_DUP, A_BAD };

typedef struct arrival {
    uint32_t k;
    uint8_t kind;
} arrival;

typedef struct damage_count {
    uint64_t frames, injected_bad, caught_bad, drops, dups, swaps, junk, flips, bursts, smashes;
} damage_count;

static int has_asm(const uint8_t *b, size_t n)
{
    for (size_t i = 0; i + 4u <= n; i++)
        if (tl_get_be32(b + i) == TL_FRAME_ASM)
            return 1;
    return 0;
}

/* One campaign on a frame stream: `ops` damage sites, then decode and
 * compare. `allowed` is a mask of OP_* kinds. */
static void frame_campaign(stream *st, tl_rng *r, unsigned allowed, unsigned spacing, damage_count *dc)
{
    const size_t nf = st->nf, W = st->wire, L = st->frame_len;
    uint8_t *op = calloc(nf, 1);
    uint8_t *dropn = calloc(nf, 1);
    assert_true(op && dropn);
    unsigned kinds[OP_KINDS], nk = 0;
    for (unsigned k = 1; k < OP_KINDS; k++)
        if (allowed & (1u << k))
            kinds[nk++] = k;
    /* damage away from both ends (the first and last 8 frames stay clean) */
    for (size_t k = 8; k + 12u < nf; k += spacing + (size_t)(tl_rng_u64(r) % spacing)) {
        op[k] = (uint8_t)kinds[tl_rng_u64(r) % nk];
        if (op[k] == OP_DROP)
            dropn[k] = (uint8_t)(1u + tl_rng_u64(r) % 3u);
    }
    uint8_t *rx = malloc(nf * (W + 48u) + 64u);
    arrival *arr = malloc(2u * nf * sizeof *arr);
    assert_true(rx && arr);
    size_t rl = 0, na = 0;
    expect ex;
    memset(&ex, 0, sizeof ex);
    for (size_t k = 0; k < nf; k++) {
        switch (op[k]) {
        case OP_DROP:
            ex.missing += dropn[k];
            dc->drops += dropn[k];
            k += dropn[k] - 1u;
            continue;
        case OP_DUP:
            memcpy(rx + rl, st->fr + k * W, W);
            rl += W;
            arr[na++] = (arrival){ (uint32_t)k, A_GOOD };
            memcpy(rx + rl, st->fr + k * W, W);
            rl += W;
            arr[na++] = (arrival){ (uint32_t)k, A_DUP };
            ex.repeated++;
            dc->dups++;
            continue;
        case OP_SWAP:
            memcpy(rx + rl, st->fr + (k + 1u) * W, W);
            rl += W;
            arr[na++] = (arrival){ (uint32_t)(k + 1u), A_GOOD };
            memcpy(rx + rl, st->fr + k * W, W);
            rl += W;
            arr[na++] = (arrival){ (uint32_t)k, A_GOOD };
            dc->swaps++;
            k++;
            continue;
        case OP_FLIP: case OP_BURST: case OP_SMASH: {
            uint8_t *f = rx + rl;
            memcpy(f, st->fr + k * W, W);
            uint8_t *body = f + TL_FRAME_ASM_OCTETS; /* header, data field, FECF: L octets */
            if (op[k] == OP_FLIP) {
                /* 1 to 3 distinct bits: always caught, the CRC-16 of polynomial
                 * 0x1021 has Hamming distance 4 up to 32751 data bits
                 * (../shared/sources.md [memory], test_crc16.c) and a frame has
                 * at most 2046 * 8 = 16368 */
                const unsigned nb = 1u + (unsigned)(tl_rng_u64(r) % 3u);
                size_t bits[3];
                for (unsigned b = 0; b < nb; b++) {
                    size_t x;
                    int again;
                    do {
                        x = (size_t)(tl_rng_u64(r) % (L * 8u));
                        again = 0;
                        for (unsigned c2 = 0; c2 < b; c2++)
                            again |= bits[c2] == x;
                    } while (again);
                    bits[b] = x;
                    body[x / 8u] ^= (uint8_t)(0x80u >> (x % 8u));
                }
                dc->flips++;
            } else if (op[k] == OP_BURST) {
                /* a burst of 2 .. 16 bits (first and last flipped): any CRC of
                 * degree 16 with a non-zero constant term detects every burst
                 * of length <= 16 (W. W. Peterson and D. T. Brown, Proc. IRE
                 * 49, 228, 1961 [memory]) */
                const unsigned len = 2u + (unsigned)(tl_rng_u64(r) % 15u);
                const size_t start = (size_t)(tl_rng_u64(r) % (L * 8u - len + 1u));
                for (unsigned b = 0; b < len; b++)
                    if (b == 0u || b == len - 1u || (tl_rng_u64(r) & 1u)) {
                        const size_t x = start + b;
                        body[x / 8u] ^= (uint8_t)(0x80u >> (x % 8u));
                    }
                dc->bursts++;
            } else {
                /* 3 .. 64 octets overwritten with random bytes: caught unless
                 * the damaged frame happens to leave residue 0 (probability
                 * 2^-16); such a draw is made again (common practice, no source) */
                uint8_t keepb[64];
                const size_t len = 3u + (size_t)(tl_rng_u64(r) % 62u);
                const size_t start = (size_t)(tl_rng_u64(r) % (L - len + 1u));
                memcpy(keepb, body + start, len);
                do {
                    memcpy(body + start, keepb, len);
                    for (size_t b = 0; b < len; b++)
                        body[start + b] = (uint8_t)tl_rng_u64(r);
                } while (tl_crc16(body, L) == 0u || memcmp(keepb, body + start, len) == 0);
                dc->smashes++;
            }
            assert_true(tl_crc16(body, L) != 0u); /* the test's own check that the frame is damaged */
            rl += W;
            arr[na++] = (arrival){ (uint32_t)k, A_BAD };
            ex.bad++;
            ex.missing++;
            ex.sync_losses++;
            ex.skipped += W;
            dc->injected_bad++;
            continue;
        }
        case OP_JUNK: {
            const size_t jl = 1u + (size_t)(tl_rng_u64(r) % 40u);
            do {
                for (size_t b = 0; b < jl; b++)
                    rx[rl + b] = (uint8_t)tl_rng_u64(r);
            } while (has_asm(rx + rl, jl));
            rl += jl;
            ex.skipped += jl;
            ex.sync_losses++;
            dc->junk++;
        }
            /* fall through - the frame itself follows intact */
        default:
            memcpy(rx + rl, st->fr + k * W, W);
            rl += W;
            arr[na++] = (arrival){ (uint32_t)k, A_GOOD };
        }
    }
    /* which frames arrive in order and which late (docs/ground-decoder.md) */
    int32_t *inpos = malloc(nf * sizeof *inpos);
    uint8_t *got = calloc(nf, 1);
    uint64_t *apos = malloc(nf * sizeof *apos);
    assert_true(inpos && got && apos);
    int64_t highest = -1;
    int32_t in_order = 0;
    for (size_t a = 0; a < na; a++) {
        if (arr[a].kind != A_GOOD)
            continue;
        const uint32_t k = arr[a].k;
        apos[k] = a;
        if ((int64_t)k > highest) {
            highest = k;
            inpos[k] = in_order++;
            got[k] = 1;
            ex.ok++;
            ex.idle += frame_fhp(st, k) == TL_FRAME_FHP_IDLE;
        } else {
            got[k] = 2;
            ex.late++;
        }
    }
    /* which packets arrive: all their frames intact, and either one frame
     * (in order or late) or frames that arrived in order one after another */
    uint8_t *deliv = calloc(st->np, 1);
    uint64_t *pos = calloc(st->np, sizeof *pos);
    assert_true(deliv && pos);
    for (size_t i = 0; i < st->np; i++) {
        const uint32_t a = st->p[i].first_frame, b = st->p[i].last_frame;
        int ok;
        if (a == b) {
            ok = got[a] != 0;
        } else {
            ok = 1;
            for (uint32_t j = a; j <= b && ok; j++)
                ok = got[j] == 1 && (j == a || inpos[j] == inpos[j - 1u] + 1);
        }
        deliv[i] = (uint8_t)ok;
        pos[i] = ok ? apos[b] : 0u;
    }
    sequence_expect(st, deliv, pos, &ex);
    check c = { st, CHECK_REF, deliv, 0, 0, 0, 0, 0, NULL };
    const tl_ground_config gc = ground_cfg(st, 0);
    tl_ground *g = decode_bytes(&gc, rx, rl, r, &c);
    compare_report(g, st, &ex, deliv, 0, &c);
    const tl_ground_totals *t = tl_ground_totals_of(g);
    dc->caught_bad += t->frames[TL_GF_BAD_FECF] + t->frames[TL_GF_BAD_HEADER];
    dc->frames += na;
    g_frames_decoded += na;
    assert_int_equal(tl_ground_clean(g), ex.bad + ex.missing + ex.skipped == 0u && ex.incomplete == 0u);
    tl_ground_close(g);
    free(deliv);
    free(pos);
    free(inpos);
    free(got);
    free(apos);
    free(rx);
    free(arr);
    free(op);
    free(dropn);
}

/* ---- raw packet damage ---------------------------------------------------------------------- */

static void raw_campaign(stream *st, tl_rng *r, unsigned spacing, damage_count *dc)
{
    const size_t np = st->np;
    uint8_t *op = calloc(np, 1);
    assert_non_null(op);
    /* damage away from both ends: the last 40 packets (more than 4095
     * octets) stay clean, so a flipped length field never reaches the end */
    for (size_t i = 4; i + 40u < np; i += spacing + (size_t)(tl_rng_u64(r) % spacing)) {
        static const uint8_t kinds[] = { OP_DROP, OP_DUP, OP_SWAP, OP_FLIP, OP_JUNK };
        op[i] = kinds[tl_rng_u64(r) % sizeof kinds];
    }
    uint8_t *rx = malloc(2u * st->pk_len + 64u * np);
    uint8_t *deliv = calloc(np, 1);
    uint64_t *pos = calloc(np, sizeof *pos);
    assert_true(rx && deliv && pos);
    size_t rl = 0;
    uint64_t a = 0;
    expect ex;
    memset(&ex, 0, sizeof ex);
#define SEND(i)                                                                                                        \
    do {                                                                                                               \
        memcpy(rx + rl, st->pk + st->p[i].off, st->p[i].len);                                                          \
        rl += st->p[i].len;                                                                                            \
    } while (0)
    for (size_t i = 0; i < np; i++) {
        switch (op[i]) {
        case OP_DROP:
            dc->drops++;
            continue;
        case OP_DUP:
            SEND(i);
            SEND(i);
            deliv[i] = 1;
            pos[i] = a++;
            a++;
            ex.dups++;
            dc->dups++;
            continue;
        case OP_SWAP:
            SEND(i + 1u);
            deliv[i + 1u] = 1;
            pos[i + 1u] = a++;
            SEND(i);
            deliv[i] = 1;
            pos[i] = a++;
            dc->swaps++;
            i++;
            continue;
        case OP_FLIP: {
            /* 1 to 3 bits anywhere in a packet of at most 4095 octets:
             * caught by its CRC-16 (Hamming distance 4 up to 32751 bits,
             * ../shared/sources.md [memory]) or by a header check */
            uint8_t *q = rx + rl;
            SEND(i);
            const size_t L = st->p[i].len;
            const unsigned nb = 1u + (unsigned)(tl_rng_u64(r) % 3u);
            size_t bits[3];
            for (unsigned b = 0; b < nb; b++) {
                size_t x;
                int again;
                do {
                    x = (size_t)(tl_rng_u64(r) % (L * 8u));
                    again = 0;
                    for (unsigned c2 = 0; c2 < b; c2++)
                        again |= bits[c2] == x;
                } while (again);
                bits[b] = x;
                q[x / 8u] ^= (uint8_t)(0x80u >> (x % 8u));
            }
            tl_packet_view v;
            assert_int_not_equal(tl_packet_parse(q, L, &v), TL_OK); /* the test's own check */
            ex.corrupt++;
            ex.resyncs++;
            ex.skipped += L;
            dc->flips++;
            dc->injected_bad++;
            a++;
            continue;
        }
        case OP_JUNK: {
            const size_t jl = 1u + (size_t)(tl_rng_u64(r) % 60u);
            uint8_t *q = rx + rl;
            int bad;
            do { /* junk that cannot start a packet: version bits not 000 */
                for (size_t b = 0; b < jl; b++)
                    q[b] = (uint8_t)tl_rng_u64(r);
                q[0] = (uint8_t)(q[0] | 0x20u);
                size_t o = 0;
                bad = tl_packet_resync(q, jl, TL_PACKET_MAX_LEN, &o) == TL_OK; /* no valid packet inside */
            } while (bad);
            rl += jl;
            ex.skipped += jl;
            ex.resyncs++;
            ex.corrupt++; /* the junk fails as a packet header once */
            dc->junk++;
        }
            /* fall through */
        default:
            SEND(i);
            deliv[i] = 1;
            pos[i] = a++;
        }
    }
#undef SEND
    sequence_expect(st, deliv, pos, &ex);
    check c = { st, CHECK_REF, deliv, 0, 0, 0, 0, 0, NULL };
    const tl_ground_config gc = ground_cfg(st, 1);
    tl_ground *g = decode_bytes(&gc, rx, rl, r, &c);
    compare_report(g, st, &ex, deliv, 1, &c);
    const tl_ground_totals *t = tl_ground_totals_of(g);
    dc->caught_bad += t->packets[TL_GP_CRC] + t->packets[TL_GP_BAD_HEADER];
    tl_ground_close(g);
    free(rx);
    free(deliv);
    free(pos);
    free(op);
}

/* ---- tests: clean ----------------------------------------------------------------------------- */

static const uint32_t small_ch[] = { 256, 512, 1024 };
static const uint32_t all_ch[] = { 256, 512, 2048, 8192 };

static void round_trip_clean(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("round_trip_clean", 0x6D0C0DE1u));
    const stream_cfg cfgs[] = {
        { 1024, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BYTE_SHUFFLE, 4095, 16, 8192, 0x2A5, 5, 0x101, 0x102, 6, all_ch, 4, 1, 0 },
        { 2048, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BIT_PLANES, 1024, 16, 8192, 7, 0, 0x033, 0x7FE, 6, all_ch, 4, 1, 0 },
        { 700, TL_ENCODE_ID_BOUNDED, TL_ENCODE_BYTE_SHUFFLE, 4095, 16, 8192, 1, 1, 0x101, 0x102, 6, all_ch, 4, 1, 0 },
        { 128, TL_ENCODE_ID_BOUNDED, TL_ENCODE_BIT_PLANES, 512, 255, 65536, 9, 7, 0x101, 0x102, 4, small_ch, 3, 0, 0 },
    };
    static const char *const names[] = { "lossless/shuffle/1024", "lossless/bitplanes/2048",
                                         "bounded/shuffle/700", "bounded/bitplanes/128" };
    for (size_t i = 0; i < sizeof cfgs / sizeof cfgs[0]; i++) {
        stream *st = make_stream(names[i], &cfgs[i], &r);
        clean_decode(st, &r);
        free_stream(st);
    }
}

/* ---- tests: damage ----------------------------------------------------------------------------- */

static void report_damage(const char *what, const damage_count *dc)
{
    printf("[ INFO     ] %s: %llu frames decoded; injected %llu drops, %llu repeats, %llu swaps, %llu junk runs, "
           "%llu bad frames (%llu with 1-3 bit flips, %llu bursts <= 16 bits, %llu smashed runs): %llu caught, "
           "0 slipped through\n",
           what, (unsigned long long)dc->frames, (unsigned long long)dc->drops, (unsigned long long)dc->dups,
           (unsigned long long)dc->swaps, (unsigned long long)dc->junk, (unsigned long long)dc->injected_bad,
           (unsigned long long)dc->flips, (unsigned long long)dc->bursts, (unsigned long long)dc->smashes,
           (unsigned long long)dc->caught_bad);
}

static void damaged_frames(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("damaged_frames", 0x6D0C0DE2u));
    const stream_cfg cfgs[] = {
        { 128, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BYTE_SHUFFLE, 4095, 16, 8192, 0x155, 2, 0x101, 0x102, 60, small_ch, 3, 1, 0 },
        { 129u + (uint32_t)(tl_rng_u64(&r) % 128u), TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BIT_PLANES, 2048, 16, 8192, 3, 6,
          0x101, 0x102, 60, small_ch, 3, 1, 0 },
        { 200, TL_ENCODE_ID_BOUNDED, TL_ENCODE_BYTE_SHUFFLE, 1500, 16, 8192, 1023, 7, 0x101, 0x102, 60, small_ch, 3, 1,
          0 },
    };
    static const char *const names[] = { "frames-128", "frames-129..256", "frames-200-bounded" };
    damage_count total;
    memset(&total, 0, sizeof total);
    for (size_t i = 0; i < sizeof cfgs / sizeof cfgs[0]; i++) {
        stream *st = make_stream(names[i], &cfgs[i], &r);
        clean_decode(st, &r);
        damage_count dc;
        memset(&dc, 0, sizeof dc);
        const unsigned all = (1u << OP_DROP) | (1u << OP_DUP) | (1u << OP_SWAP) | (1u << OP_FLIP) | (1u << OP_BURST) |
                             (1u << OP_SMASH) | (1u << OP_JUNK);
        /* campaigns, in turn, until this stream has seen its share of frames */
        const struct {
            unsigned kinds, spacing;
        } plan[] = {
            { all, 6 },                                                    /* everything */
            { 1u << OP_FLIP, 5 },                                          /* 1-3 bit flips, dense */
            { (1u << OP_BURST) | (1u << OP_SMASH), 5 },                    /* bursts */
            { (1u << OP_DROP) | (1u << OP_DUP) | (1u << OP_SWAP), 5 },     /* counts */
            { all, 40 },                                                   /* sparse: most products complete */
            { all, 10 },
            { (1u << OP_FLIP) | (1u << OP_DROP), 8 },
        };
        const uint64_t target = i < 2u ? 40000u : 25000u;
        for (size_t k = 0; dc.frames < target || k < sizeof plan / sizeof plan[0]; k++)
            frame_campaign(st, &r, plan[k % (sizeof plan / sizeof plan[0])].kinds,
                           plan[k % (sizeof plan / sizeof plan[0])].spacing, &dc);
        report_damage(names[i], &dc);
        assert_int_equal(dc.caught_bad, dc.injected_bad);
        total.frames += dc.frames;
        total.injected_bad += dc.injected_bad;
        total.caught_bad += dc.caught_bad;
        total.drops += dc.drops;
        total.dups += dc.dups;
        total.swaps += dc.swaps;
        total.junk += dc.junk;
        total.flips += dc.flips;
        total.bursts += dc.bursts;
        total.smashes += dc.smashes;
        free_stream(st);
    }
    report_damage("all frame streams", &total);
    assert_true(total.frames >= 100000u);
    assert_true(total.flips > 1000u && total.bursts > 500u && total.drops > 500u && total.dups > 300u &&
                total.swaps > 300u && total.junk > 100u);
    g_injected += total.injected_bad;
    g_caught += total.caught_bad;
}

static void damaged_raw(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("damaged_raw", 0x6D0C0DE3u));
    const stream_cfg c = { 256, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BIT_PLANES, 600, 16, 8192, 1, 1, 0x101, 0x102, 40,
                           small_ch, 3, 0, 0 };
    stream *st = make_stream("raw", &c, &r);
    clean_decode(st, &r);
    damage_count dc;
    memset(&dc, 0, sizeof dc);
    for (int k = 0; k < 12; k++)
        raw_campaign(st, &r, 3u + (unsigned)k, &dc);
    printf("[ INFO     ] raw packets: %zu packets x 12 runs; injected %llu drops, %llu repeats, %llu swaps, %llu junk "
           "runs, %llu packets with 1-3 bit flips: all %llu flips caught by CRC or header checks\n",
           st->np, (unsigned long long)dc.drops, (unsigned long long)dc.dups, (unsigned long long)dc.swaps,
           (unsigned long long)dc.junk, (unsigned long long)dc.flips, (unsigned long long)dc.flips);
    assert_true(dc.flips > 100u && dc.drops > 50u && dc.swaps > 50u && dc.junk > 50u);
    g_injected += dc.flips;
    g_caught += dc.flips; /* each run's compare_report asserted corrupt == caught */
    free_stream(st);
}

/* Raw mode, regression: the fuzzer's input tests/fuzz/regress/ground/
 * raw-resync-split.bin (tests/fuzz/fuzz_ground.c, mode octet 0x01, split
 * octet 3, then 3508 octets: a packet with a bad CRC, 460 octets of junk, two
 * good packets). ground.h: "any split gives the same result". Before the
 * fix, the octets a resync left undecided at the end of a 184-octet block
 * were parsed unchecked, a header there announced a long packet, and the
 * decoder waited for it to the end: all 3508 octets skipped, both good
 * packets lost. Whole or in blocks of 1, 7, 184 or 1000, the decode must be
 * the same: 1 CRC error, 1 resync, 1479 octets skipped, 2 packets ok. */
static void raw_resync_any_split(void **state)
{
    (void)state;
    FILE *f = fopen("tests/fuzz/regress/ground/raw-resync-split.bin", "rb");
    assert_non_null(f);
    static uint8_t b[8192];
    const size_t n = fread(b, 1, sizeof b, f);
    fclose(f);
    assert_int_equal(n, 3510);
    assert_int_equal(b[0], 0x01);
    tl_ground_config gc;
    tl_ground_config_default(&gc);
    gc.raw = 1;
    gc.in_flight = 1; /* the fuzz target's mode octet 0x01: in-flight index 0 */
    gc.log_limit = 1000;
    const size_t splits[] = { 3508, 1, 7, 184, 1000 };
    for (size_t k = 0; k < sizeof splits / sizeof splits[0]; k++) {
        char err[256];
        tl_ground *g = tl_ground_open(&gc, NULL, NULL, err, sizeof err);
        assert_non_null(g);
        for (size_t at = 0; at < n - 2; at += splits[k]) {
            const size_t len = n - 2 - at < splits[k] ? n - 2 - at : splits[k];
            assert_int_equal(tl_ground_feed(g, b + 2 + at, len, err, sizeof err), 0);
        }
        assert_int_equal(tl_ground_finish(g, err, sizeof err), 0);
        const tl_ground_totals *t = tl_ground_totals_of(g);
        printf("[ INFO     ] raw resync, blocks of %zu: %llu skipped, %llu ok, %llu crc, %llu resyncs\n", splits[k],
               (unsigned long long)t->bytes_skipped, (unsigned long long)t->packets[TL_GP_OK],
               (unsigned long long)t->packets[TL_GP_CRC], (unsigned long long)t->resyncs);
        assert_int_equal(t->bytes, 3508);
        assert_int_equal(t->bytes_skipped, 1479);
        assert_int_equal(t->packets[TL_GP_OK], 2);
        assert_int_equal(t->packets[TL_GP_CRC], 1);
        assert_int_equal(t->resyncs, 1);
        tl_ground_close(g);
    }
}

/* A file cut short anywhere: what precedes the cut decodes, the frame or
 * packet cut is reported truncated, nothing else is lost. */
static void truncated_files(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("truncated_files", 0x6D0C0DE4u));
    const stream_cfg c = { 160, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BYTE_SHUFFLE, 2048, 16, 8192, 5, 2, 0x101, 0x102, 12,
                           small_ch, 3, 1, 0 };
    stream *st = make_stream("truncated", &c, &r);
    clean_decode(st, &r);
    uint64_t frames = 0;
    for (int raw = 0; raw <= 1; raw++)
        for (int trial = 0; trial < 12; trial++) {
            const size_t total = raw ? st->pk_len : st->fr_len;
            const size_t cut = total / 4u + (size_t)(tl_rng_u64(&r) % (total / 2u));
            expect ex;
            memset(&ex, 0, sizeof ex);
            uint8_t *deliv = calloc(st->np, 1);
            uint64_t *pos = calloc(st->np, sizeof *pos);
            assert_true(deliv && pos);
            if (!raw) {
                const size_t W = st->wire, whole = cut / W, rest = cut % W;
                ex.ok = whole;
                for (size_t k = 0; k < whole; k++)
                    ex.idle += frame_fhp(st, k) == TL_FRAME_FHP_IDLE;
                ex.truncated_frames = rest >= TL_FRAME_ASM_OCTETS;
                ex.skipped = rest;
                for (size_t i = 0; i < st->np; i++) {
                    deliv[i] = st->p[i].last_frame < whole;
                    pos[i] = i;
                    /* the packet in progress when the frames run out */
                    ex.truncated_packets += st->p[i].first_frame < whole && st->p[i].last_frame >= whole;
                }
                frames += whole;
            } else {
                for (size_t i = 0; i < st->np; i++) {
                    deliv[i] = st->p[i].off + st->p[i].len <= cut;
                    pos[i] = i;
                    if (st->p[i].off < cut && !deliv[i]) {
                        ex.truncated_packets = 1;
                        ex.skipped = cut - st->p[i].off;
                    }
                }
            }
            sequence_expect(st, deliv, pos, &ex);
            check ck = { st, CHECK_REF, deliv, 0, 0, 0, 0, 0, NULL };
            const tl_ground_config gc = ground_cfg(st, raw);
            tl_ground *g = decode_bytes(&gc, raw ? st->pk : st->fr, cut, &r, &ck);
            compare_report(g, st, &ex, deliv, raw, &ck);
            const int lost = ex.truncated_frames + ex.truncated_packets + ex.skipped + ex.incomplete + ex.hk_only > 0u;
            assert_int_equal(tl_ground_clean(g), !lost);
            tl_ground_close(g);
            free(deliv);
            free(pos);
        }
    printf("[ INFO     ] 24 cut files (12 frames, 12 raw): %llu whole frames before the cuts decoded, every cut "
           "frame and packet reported\n",
           (unsigned long long)frames);
    g_frames_decoded += frames;
    free_stream(st);
}

/* ---- tests: hostile input -------------------------------------------------------------------------- */

/* Feed bytes in both modes and return the totals of the frames mode;
 * whatever the bytes, the decoder returns. */
static void hostile(const char *what, const uint8_t *b, size_t n, tl_rng *r, tl_ground_totals *fr, tl_ground_totals *raw)
{
    for (int m = 0; m <= 1; m++) {
        tl_ground_config gc = ground_cfg(NULL, m);
        gc.frame_len = 128;
        tl_ground *g = decode_bytes(&gc, b, n, r, NULL);
        const tl_ground_totals *t = tl_ground_totals_of(g);
        assert_int_equal(t->bytes, n);
        char log[256];
        snprintf(log, sizeof log, "/tmp/tl_decode_hostile_%d.json", (int)getpid());
        char err[512];
        assert_int_equal(tl_ground_write_log(g, log, what, err, sizeof err), 0);
        json_error_t je;
        json_t *j = json_load_file(log, 0, &je);
        if (j == NULL)
            fail_msg("%s: the log is not JSON: %s line %d", what, je.text, je.line);
        json_decref(j);
        remove(log);
        *(m ? raw : fr) = *t;
        tl_ground_close(g);
    }
    printf("[ INFO     ] hostile %s (%zu octets): frames mode %llu bad FECF, %llu octets skipped; raw mode %llu resyncs, "
           "%llu octets skipped\n",
           what, n, (unsigned long long)fr->frames[TL_GF_BAD_FECF], (unsigned long long)fr->bytes_skipped,
           (unsigned long long)raw->resyncs, (unsigned long long)raw->bytes_skipped);
}

/* Put user data into a packet with a valid CRC, then into frames. */
static size_t make_packet(uint16_t apid, const uint8_t *user, size_t len, uint8_t *out)
{
    tl_packet_writer w;
    assert_int_equal(tl_packet_writer_init(&w, TL_PACKET_MAX_LEN), TL_OK);
    size_t n = 0;
    const tl_cuc t = { 1, 2 };
    assert_int_equal(tl_packet_write(&w, apid, t, user, len, out, TL_PACKET_MAX_LEN, &n), TL_OK);
    return n;
}

static void science_header(uint8_t *u, uint32_t channels, uint32_t first, uint32_t count, uint32_t index)
{
    memset(u, 0, TL_DL_HEADER_OCTETS);
    u[TL_DL_OFF_VERSION] = TL_DL_VERSION;
    u[TL_DL_OFF_KIND] = TL_DL_KIND_SPECTRUM;
    tl_put_be32(u + TL_DL_OFF_INDEX, index);
    tl_put_be32(u + TL_DL_OFF_STATE_SPECTRA, 10);
    tl_put_be32(u + TL_DL_OFF_SPECTRA, 10);
    tl_put_be16(u + TL_DL_OFF_CHANNELS, (uint16_t)channels);
    tl_put_be16(u + TL_DL_OFF_FIRST, (uint16_t)first);
    tl_put_be16(u + TL_DL_OFF_COUNT, (uint16_t)count);
}

typedef struct frames_out {
    uint8_t *b;
    size_t n, cap;
} frames_out;

static void collect(void *user, const uint8_t *wire, size_t len)
{
    frames_out *o = user;
    grow(&o->b, &o->cap, o->n + len);
    memcpy(o->b + o->n, wire, len);
    o->n += len;
}

/* Send a packet in frames and keep a raw copy. */
static void put_both(tl_frame_builder *fb, frames_out *raw, const uint8_t *pk, size_t len)
{
    assert_int_equal(tl_frame_put_packet(fb, pk, len), TL_OK);
    collect(raw, pk, len);
}

static void hostile_input(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("hostile_input", 0x6D0C0DE5u));
    const size_t n = 1u << 20;
    uint8_t *b = malloc(n + 65536u);
    assert_non_null(b);
    tl_ground_totals fr, raw;
    /* random bytes: nothing decodes, every octet accounted for */
    for (size_t i = 0; i < n; i++)
        b[i] = (uint8_t)tl_rng_u64(&r);
    hostile("random bytes", b, n, &r, &fr, &raw);
    assert_int_equal(fr.frames[TL_GF_OK], 0);
    assert_int_equal(fr.bytes_skipped, n);
    assert_int_equal(raw.packets[TL_GP_OK], 0);
    assert_int_equal(raw.bytes_skipped, n);
    assert_int_equal(raw.resyncs, 1);
    /* all zeros, all ones */
    memset(b, 0, n);
    hostile("zeros", b, n, &r, &fr, &raw);
    assert_int_equal(fr.bytes_skipped, n);
    assert_int_equal(raw.bytes_skipped, n);
    assert_int_equal(raw.packets[TL_GP_BAD_HEADER], 1); /* 00 00 .. : no secondary header flag */
    memset(b, 0xFF, n);
    hostile("0xFF", b, n, &r, &fr, &raw);
    assert_int_equal(fr.bytes_skipped, n);
    assert_int_equal(raw.bytes_skipped, n);
    /* markers followed by garbage, one every 132 octets (frame length 128) */
    const size_t nasm = n / 132u;
    for (size_t k = 0; k < nasm; k++) {
        tl_put_be32(b + k * 132u, TL_FRAME_ASM);
        for (size_t i = 4; i < 132u; i++)
            b[k * 132u + i] = (uint8_t)tl_rng_u64(&r);
    }
    hostile("markers + garbage", b, nasm * 132u, &r, &fr, &raw);
    assert_int_equal(fr.frames[TL_GF_BAD_FECF] + fr.frames[TL_GF_BAD_HEADER], nasm);
    assert_int_equal(fr.frames[TL_GF_OK], 0);
    assert_int_equal(fr.bytes_skipped, nasm * 132u);

    /* valid frames carrying hostile packets */
    frames_out fo = { NULL, 0, 0 }, ro = { NULL, 0, 0 };
    tl_frame_builder *fb = malloc(sizeof *fb);
    assert_non_null(fb);
    assert_int_equal(tl_frame_builder_init(fb, 128, 1, 0, collect, &fo), TL_OK);
    static uint8_t u[TL_PACKET_MAX_LEN], pk[TL_PACKET_ANY_MAX_LEN];
    size_t len;
    unsigned expect_payload = 0, expect_channels = 0, expect_user = 0;
    /* (a) a payload whose LZ4 block claims a literal run of 4 GB */
    science_header(u, 256, 0, 256, 0);
    uint8_t *pl = u + TL_DL_HEADER_OCTETS;
    pl[0] = TL_ENCODE_VERSION;
    pl[1] = TL_ENCODE_ID_LOSSLESS;
    pl[2] = TL_ENCODE_UNSIGNED;
    pl[3] = TL_ENCODE_BYTE_SHUFFLE;
    tl_put_be16(pl + 4, 256);
    tl_put_be16(pl + 6, 0);
    tl_put_be16(pl + 8, 0);
    const size_t lz = 1000;
    tl_put_be16(pl + 10, (uint16_t)lz);
    pl[12] = 0xF0; /* 15 literals, then length bytes of 255 (LZ4 block format, doc/lz4_Block_format.md) */
    memset(pl + 13, 0xFF, lz - 1u);
    len = make_packet(0x101, u, TL_DL_HEADER_OCTETS + 12u + lz, pk);
    put_both(fb, &ro, pk, len);
    expect_payload++;
    /* (b) a payload header announcing 65535 channels in a packet of 256 */
    tl_put_be16(pl + 4, 0xFFFF);
    len = make_packet(0x101, u, TL_DL_HEADER_OCTETS + 12u + lz, pk);
    put_both(fb, &ro, pk, len);
    expect_payload++;
    /* (c) a spectrum of 32768 channels (format allows 32768, the host 16384) */
    science_header(u, 32768, 0, 256, 1);
    len = make_packet(0x101, u, TL_DL_HEADER_OCTETS + 20u, pk);
    put_both(fb, &ro, pk, len);
    expect_channels++;
    /* (d) a science header with state 7 and one with count 60000 */
    science_header(u, 256, 0, 256, 2);
    u[TL_DL_OFF_STATE] = 7;
    len = make_packet(0x101, u, TL_DL_HEADER_OCTETS + 20u, pk);
    put_both(fb, &ro, pk, len);
    expect_user++;
    science_header(u, 32768, 0, 30000, 3);
    len = make_packet(0x101, u, TL_DL_HEADER_OCTETS + 20u, pk);
    put_both(fb, &ro, pk, len);
    expect_channels++;
    /* (e) an unknown kind, and housekeeping of the wrong length */
    u[TL_DL_OFF_KIND] = 9;
    len = make_packet(0x102, u, 100, pk);
    put_both(fb, &ro, pk, len);
    expect_user++;
    u[1] = TL_DL_KIND_HOUSEKEEPING;
    u[3] = 1;
    u[21] = 3;
    len = make_packet(0x102, u, 100, pk);
    put_both(fb, &ro, pk, len);
    expect_user++;
    /* (f) an idle packet of 65542 octets whose data is not idle data, and
     * a telemetry header announcing 65542 octets (impossible: at most 4095) */
    memset(pk, 0x55, sizeof pk);
    uint16_t idle = 0;
    assert_int_equal(tl_packet_write_idle(&idle, TL_PACKET_ANY_MAX_LEN, pk, sizeof pk), TL_OK);
    pk[40000] = 0x00;
    put_both(fb, &ro, pk, TL_PACKET_ANY_MAX_LEN);
    tl_put_be16(pk, 0x0800u | 0x101u);
    put_both(fb, &ro, pk, TL_PACKET_ANY_MAX_LEN);
    assert_int_equal(tl_frame_flush(fb), TL_OK);
    tl_ground_config gc = ground_cfg(NULL, 0);
    gc.frame_len = 128;
    tl_ground *g = decode_bytes(&gc, fo.b, fo.n, &r, NULL);
    const tl_ground_totals *t = tl_ground_totals_of(g);
    printf("[ INFO     ] hostile packets in valid frames: %llu bad payloads, %llu too many channels, %llu bad user "
           "data, %llu bad headers, %llu inconsistent frames\n",
           (unsigned long long)t->packets[TL_GP_BAD_PAYLOAD], (unsigned long long)t->packets[TL_GP_TOO_MANY_CHANNELS],
           (unsigned long long)t->packets[TL_GP_BAD_USER_DATA], (unsigned long long)t->packets[TL_GP_BAD_HEADER],
           (unsigned long long)t->frames[TL_GF_INCONSISTENT]);
    assert_int_equal(t->packets[TL_GP_BAD_PAYLOAD], expect_payload);
    assert_int_equal(t->packets[TL_GP_TOO_MANY_CHANNELS], expect_channels);
    assert_int_equal(t->packets[TL_GP_BAD_USER_DATA], expect_user);
    /* the bad idle packet, and the impossible header (which drops the frame's sync) */
    assert_int_equal(t->packets[TL_GP_BAD_HEADER], 2);
    assert_true(t->frames[TL_GF_INCONSISTENT] >= 1u);
    assert_int_equal(t->frames[TL_GF_BAD_FECF], 0);
    assert_int_equal(t->products_complete + t->products_incomplete, 0);
    assert_int_equal(tl_ground_clean(g), 0);
    tl_ground_close(g);
    /* the same packets raw: the bad idle packet (read whole: 65542 octets
     * is the most ever kept) starts a resync that skips it and the
     * impossible header after it */
    gc.raw = 1;
    g = decode_bytes(&gc, ro.b, ro.n, &r, NULL);
    t = tl_ground_totals_of(g);
    assert_int_equal(t->packets[TL_GP_BAD_PAYLOAD], expect_payload);
    assert_int_equal(t->packets[TL_GP_TOO_MANY_CHANNELS], expect_channels);
    assert_int_equal(t->packets[TL_GP_BAD_USER_DATA], expect_user);
    assert_int_equal(t->packets[TL_GP_BAD_HEADER], 1);
    assert_int_equal(t->resyncs, 1);
    assert_int_equal(t->bytes_skipped, 2u * TL_PACKET_ANY_MAX_LEN);
    tl_ground_close(g);
    free(ro.b);
    free(fo.b);
    free(fb);

    /* many integrations, none complete: at most in_flight stay open */
    tl_rng_seed(&r, 77);
    const stream_cfg c = { 128, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BYTE_SHUFFLE, 4095, 16, 8192, 1, 1, 0x101, 0x102, 100,
                           small_ch, 1, 0, 0 };
    reversed_indices = 1;
    stream *st = make_stream("many", &c, &r);
    reversed_indices = 0;
    uint8_t *rawb = malloc(st->pk_len);
    assert_non_null(rawb);
    size_t rl = 0;
    for (uint32_t k = 0; k < st->nprod; k++) /* indices counting down, without housekeeping */
        for (uint32_t i = st->pbegin[k]; i < st->pend[k]; i++)
            if (st->p[i].science) {
                memcpy(rawb + rl, st->pk + st->p[i].off, st->p[i].len);
                rl += st->p[i].len;
            }
    tl_ground_config gr = ground_cfg(st, 1);
    gr.in_flight = 4;
    g = decode_bytes(&gr, rawb, rl, &r, NULL);
    t = tl_ground_totals_of(g);
    assert_int_equal(t->products_incomplete, st->nprod);
    assert_int_equal(t->products_done[TL_GROUND_DONE_EVICTED], st->nprod - 4u);
    assert_int_equal(t->products_done[TL_GROUND_DONE_END], 4);
    tl_ground_close(g);
    /* the log keeps log_limit entries of each list and counts the rest */
    gr.log_limit = 10;
    g = decode_bytes(&gr, rawb, rl, &r, NULL);
    size_t kept = 0;
    uint64_t left = 0;
    tl_ground_packets(g, &kept, &left);
    assert_int_equal(kept, 10);
    uint64_t all = 0;
    for (unsigned k = 0; k < TL_GP_STATUSES; k++)
        all += tl_ground_totals_of(g)->packets[k];
    assert_int_equal(kept + left, all);
    assert_true(all >= st->nprod);
    tl_ground_close(g);
    free(rawb);
    free_stream(st);
    /* bad configurations are refused with the field and its range */
    char err[256];
    tl_ground_config bad = ground_cfg(NULL, 0);
    bad.frame_len = 127;
    assert_null(tl_ground_open(&bad, NULL, NULL, err, sizeof err));
    assert_non_null(strstr(err, "128 to 2048"));
    bad = ground_cfg(NULL, 0);
    bad.in_flight = 65;
    assert_null(tl_ground_open(&bad, NULL, NULL, err, sizeof err));
    assert_non_null(strstr(err, "1 to 64"));
    free(b);
}

static int exists(const char *dir, const char *name);
static void write_file(const char *path, const uint8_t *b, size_t n);

/* ---- tests: a sender that restarts ---------------------------------------------------------------- */

typedef struct two {
    stream *a, *b;
    uint32_t seen, complete;
    tl_product *orig;
} two;

static int on_two(void *user, const tl_product *p, const tl_ground_product_info *in, tl_ground_product_note *note)
{
    (void)note;
    two *t = user;
    const stream *st = t->seen < t->a->nprod ? t->a : t->b; /* the restart hands the first run's products over first */
    t->seen++;
    t->complete += (uint32_t)in->complete;
    assert_true(in->index < st->nprod);
    gen_product(&st->specs[in->index], t->orig);
    assert_int_equal(p->channels, t->orig->channels);
    assert_memory_equal(p->auto_power[0], t->orig->auto_power[0], p->channels * sizeof(uint64_t));
    return 0;
}

/* Two runs of the flight software back to back: frame and packet counts
 * and integration indices start again at 0. Every product of both runs
 * comes back whole. */
static void restarted_sender(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("restarted_sender", 0x6D0C0DE7u));
    tl_scenario sc;
    tl_scenario_default(&sc);
    const stream_cfg c = { sc.dl_frame_len, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BYTE_SHUFFLE, sc.dl_max_packet, 16, 8192,
                           (uint16_t)sc.dl_scid, (uint16_t)sc.dl_vcid, (uint16_t)sc.dl_apid_science,
                           (uint16_t)sc.dl_apid_hk, 3, small_ch, 3, 1, 0 };
    forced_config_id = 0x5EED0001u;
    stream *a = make_stream("first run", &c, &r), *b = make_stream("second run", &c, &r);
    forced_config_id = 0;
    for (int raw = 0; raw <= 1; raw++) {
        const size_t na = raw ? a->pk_len : a->fr_len, nb = raw ? b->pk_len : b->fr_len;
        uint8_t *buf = malloc(na + nb);
        assert_non_null(buf);
        memcpy(buf, raw ? a->pk : a->fr, na);
        memcpy(buf + na, raw ? b->pk : b->fr, nb);
        two t = { a, b, 0, 0, tl_test_product() };
        tl_ground_config gc = ground_cfg(a, raw);
        tl_ground *g = tl_ground_open(&gc, on_two, &t, NULL, 0);
        assert_non_null(g);
        assert_int_equal(tl_ground_feed(g, buf, na + nb, NULL, 0), 0);
        assert_int_equal(tl_ground_finish(g, NULL, 0), 0);
        const tl_ground_totals *tt = tl_ground_totals_of(g);
        assert_int_equal(t.seen, a->nprod + b->nprod);
        assert_int_equal(t.complete, a->nprod + b->nprod);
        assert_int_equal(tt->seq_restarts, 2); /* science and housekeeping */
        assert_int_equal(tt->packets[TL_GP_OK] + tt->packets[TL_GP_RESTART], a->np + b->np);
        if (!raw) {
            /* an 8-bit count cannot tell a restart from a gap unless the new
             * count is one it saw among the last 64 (docs/ground-decoder.md) */
            const uint32_t ha = (uint32_t)((a->nf - 1u) & 0xFFu);
            printf("[ INFO     ] restart after VC count %u: %s\n", ha, ha < 64u ? "seen as a restart" : "seen as a gap");
            assert_int_equal(tt->frames[TL_GF_RESTART], ha < 64u);
            assert_int_equal(tt->frames_missing, ha < 64u ? 0u : 255u - ha);
        }
        tl_ground_close(g);
        free(t.orig);
        if (!raw) { /* the command line names the second integration 0 apart */
            char dir[] = "/tmp/tl_decode_restart_XXXXXX";
            assert_non_null(mkdtemp(dir));
            char path[600], args[1400], out[8192], sub[700];
            snprintf(path, sizeof path, "%s/frames.bin", dir);
            write_file(path, buf, na + nb);
            snprintf(args, sizeof args, "decode %s -o %s/out -q", path, dir);
            tl_test_tool(argv0, args, out, sizeof out);
            snprintf(sub, sizeof sub, "%s/out", dir);
            assert_true(exists(sub, "integration-000000/auto0.npy"));
            assert_true(exists(sub, "integration-000000-config-5eed0001/auto0.npy"));
            snprintf(args, sizeof args, "rm -rf %s", dir);
            assert_int_equal(system(args), 0);
        }
        free(buf);
    }
    free_stream(a);
    free_stream(b);
}

/* ---- tests: the command line -------------------------------------------------------------------------- */

static int run(const char *args, char *out, size_t cap)
{
    return tl_test_tool(argv0, args, out, cap);
}

static void expect_one_line(const char *args, int want_rc, const char *must_contain)
{
    char out[8192];
    const int rc = run(args, out, sizeof out);
    printf("    tidelock %s -> %d: %s", args, rc, out);
    assert_int_equal(rc, want_rc);
    assert_int_equal(tl_test_lines(out), 1);
    if (strstr(out, must_contain) == NULL)
        fail_msg("message '%s' does not name '%s'", out, must_contain);
}

static int exists(const char *dir, const char *name)
{
    char p[1024];
    struct stat st;
    snprintf(p, sizeof p, "%s/%s", dir, name);
    return stat(p, &st) == 0;
}

static void write_file(const char *path, const uint8_t *b, size_t n)
{
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(b, 1, n, f), n);
    assert_int_equal(fclose(f), 0);
}

static void command_line(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("command_line", 0x6D0C0DE6u));
    /* a stream as the default scenario describes it: 4096 channels, two
     * inputs, switched, its frame length, spacecraft, channel and APIDs */
    tl_scenario s;
    tl_scenario_default(&s);
    const uint32_t ch[] = { s.cfg.points / 2u };
    const stream_cfg c = { s.dl_frame_len, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_BYTE_SHUFFLE, s.dl_max_packet, 16, 8192,
                           (uint16_t)s.dl_scid, (uint16_t)s.dl_vcid, (uint16_t)s.dl_apid_science,
                           (uint16_t)s.dl_apid_hk, 2, ch, 1, 0, 1 };
    stream *st = make_stream("cli", &c, &r);
    char dir[] = "/tmp/tl_decode_cli_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char frames[600], packets[600], damaged[600], args[2400], out[16384], sub[700];
    snprintf(frames, sizeof frames, "%s/frames.bin", dir);
    snprintf(packets, sizeof packets, "%s/packets.bin", dir);
    snprintf(damaged, sizeof damaged, "%s/damaged.bin", dir);
    write_file(frames, st->fr, st->fr_len);
    write_file(packets, st->pk, st->pk_len);
    /* clean: exit 0, one folder per integration as `tidelock run` writes them */
    snprintf(args, sizeof args, "decode %s -o %s/out", frames, dir);
    int rc = run(args, out, sizeof out);
    printf("    tidelock %s -> %d:\n%s", args, rc, out);
    assert_int_equal(rc, 0);
    assert_non_null(strstr(out, "2 complete, 0 incomplete"));
    assert_non_null(strstr(out, "everything decoded"));
    snprintf(sub, sizeof sub, "%s/out/integration-000000", dir);
    static const char *const files[] = { "auto0.npy", "auto1.npy", "cross.npy", "flags.npy", "frequency_mhz.npy",
                                         "auto0.csv", "auto1.csv", "cross.csv", "calibrated.csv", "calibrated.npy" };
    for (size_t i = 0; i < sizeof files / sizeof files[0]; i++)
        if (!exists(sub, files[i]))
            fail_msg("%s/%s missing", sub, files[i]);
    assert_false(exists(sub, "missing.json"));
    snprintf(sub, sizeof sub, "%s/out", dir);
    assert_true(exists(sub, "integration-000001/auto0.npy"));
    /* auto0.npy holds the sums sent, little-endian after the 128-octet header */
    {
        char path[900];
        snprintf(path, sizeof path, "%s/out/integration-000001/auto0.npy", dir);
        FILE *f = fopen(path, "rb");
        assert_non_null(f);
        static uint8_t buf[128 + 8 * 8192];
        const size_t got = fread(buf, 1, sizeof buf, f);
        fclose(f);
        assert_int_equal(got % 64u, 0); /* .npy: the data start on a 64-octet boundary (NEP 1) [doc] */
        const size_t hl = got - (size_t)ch[0] * 8u;
        tl_product *o = tl_test_product();
        gen_product(&st->specs[1], o);
        for (uint32_t k = 0; k < ch[0]; k += 97u) {
            uint64_t v = 0;
            for (int b = 7; b >= 0; b--)
                v = (v << 8) | buf[hl + 8u * k + (unsigned)b];
            assert_true(v == o->auto_power[0][k]);
        }
        free(o);
    }
    /* the log: JSON with every frame */
    {
        char path[900];
        snprintf(path, sizeof path, "%s/out/decode-log.json", dir);
        json_error_t je;
        json_t *j = json_load_file(path, 0, &je);
        assert_non_null(j);
        assert_int_equal(json_array_size(json_object_get(j, "frames")), st->nf);
        assert_int_equal(json_array_size(json_object_get(j, "packets")), st->np);
        assert_int_equal(json_array_size(json_object_get(j, "products")), 2);
        assert_int_equal(json_array_size(json_object_get(j, "housekeeping")), 2);
        assert_true(json_is_true(json_object_get(j, "clean")));
        json_t *tot = json_object_get(json_object_get(j, "totals"), "frames");
        assert_int_equal(json_integer_value(json_object_get(tot, "ok")), st->nf);
        json_decref(j);
    }
    /* raw packets */
    snprintf(args, sizeof args, "decode %s --raw -o %s/raw -q", packets, dir);
    rc = run(args, out, sizeof out);
    assert_int_equal(rc, 0);
    assert_int_equal(out[0], '\0');
    snprintf(sub, sizeof sub, "%s/raw", dir);
    assert_true(exists(sub, "integration-000000/cross.npy"));
    /* one bit flipped in a frame: exit 1, what decoded is still written,
     * the incomplete integration lists its missing channels */
    uint8_t *dmg = malloc(st->fr_len);
    assert_non_null(dmg);
    memcpy(dmg, st->fr, st->fr_len);
    dmg[3u * st->wire + 100u] ^= 0x10u;
    write_file(damaged, dmg, st->fr_len);
    free(dmg);
    snprintf(args, sizeof args, "decode %s -o %s/dmg", damaged, dir);
    rc = run(args, out, sizeof out);
    printf("    tidelock %s -> %d:\n%s", args, rc, out);
    assert_int_equal(rc, 1);
    assert_non_null(strstr(out, "1 bad FECF"));
    assert_non_null(strstr(out, "1 complete, 1 incomplete"));
    snprintf(sub, sizeof sub, "%s/dmg/integration-000000", dir);
    assert_true(exists(sub, "auto0.npy"));
    assert_true(exists(sub, "missing.json"));
    assert_false(exists(sub, "calibrated.npy")); /* not calibrated with channels missing */
    /* errors: one line, the right exit status, nothing written */
    snprintf(args, sizeof args, "decode %s/none.bin -o %s/x", dir, dir);
    expect_one_line(args, 1, "none.bin: cannot open");
    snprintf(sub, sizeof sub, "%s/x", dir);
    struct stat sb;
    assert_int_not_equal(stat(sub, &sb), 0);
    snprintf(args, sizeof args, "decode %s -o %s/x --frame-length 100", frames, dir);
    expect_one_line(args, 2, "from 128 to 2048");
    snprintf(args, sizeof args, "decode %s -o %s/x --frame-length 2049", frames, dir);
    expect_one_line(args, 2, "--frame-length: '2049'");
    snprintf(args, sizeof args, "decode %s -o %s/x --frame-length abc", frames, dir);
    expect_one_line(args, 2, "from 128 to 2048");
    snprintf(args, sizeof args, "decode %s --raw --frame-length 256 -o %s/x", frames, dir);
    expect_one_line(args, 2, "--raw");
    snprintf(args, sizeof args, "decode %s", frames);
    expect_one_line(args, 2, "-o DIR");
    expect_one_line("decode", 2, "input");
    snprintf(args, sizeof args, "decode %s -o %s/x --bogus", frames, dir);
    expect_one_line(args, 2, "unknown option '--bogus'");
    snprintf(args, sizeof args, "decode %s -o %s/frames.bin/sub", frames, dir); /* a folder below a file */
    expect_one_line(args, 1, "frames.bin/sub");
    /* a frame length one short of the one sent: the frames fail their FECF,
     * except those whose FECF ends in 0x00: with no final xor, the CRC
     * register after (data, FECF high octet) is then already 0 (the residue
     * property, docs/icd.md section 4 [computed]); exit 1 */
    snprintf(args, sizeof args, "decode %s -o %s/wrong --frame-length 1023 -q", frames, dir);
    assert_int_equal(run(args, out, sizeof out), 1);
    assert_int_equal(out[0], '\0');
    {
        char path[900];
        snprintf(path, sizeof path, "%s/wrong/decode-log.json", dir);
        json_t *j = json_load_file(path, 0, NULL);
        assert_non_null(j);
        json_t *tot = json_object_get(json_object_get(j, "totals"), "frames");
        /* the frames that pass are all but the bad ones, whatever their counts say */
        const json_int_t bad = json_integer_value(json_object_get(tot, "bad_fecf")) +
                               json_integer_value(json_object_get(tot, "bad_header")),
                         ok = (json_int_t)st->nf - bad;
        printf("    with --frame-length 1023: %lld of %zu frames bad FECF, %lld passed\n", (long long)bad, st->nf,
               (long long)ok);
        json_int_t zero_tail = 0;
        for (size_t k = 0; k < st->nf; k++)
            zero_tail += st->fr[k * st->wire + st->wire - 1u] == 0u;
        assert_int_equal(ok, zero_tail);
        json_decref(j);
    }
    /* help */
    assert_int_equal(run("decode --help", out, sizeof out), 0);
    assert_non_null(strstr(out, "usage: tidelock decode"));
    assert_non_null(strstr(out, "example: tidelock"));
    free_stream(st);
    snprintf(args, sizeof args, "rm -rf %s", dir);
    assert_int_equal(system(args), 0);
}

static int summary(void **state)
{
    (void)state;
    printf("[ INFO     ] test_decode: %llu frames decoded in all; %llu damaged frames and packets injected, %llu "
           "caught, none slipped through\n",
           (unsigned long long)g_frames_decoded, (unsigned long long)g_injected, (unsigned long long)g_caught);
    return 0;
}

int main(int argc, char **argv)
{
    (void)argc;
    snprintf(argv0, sizeof argv0, "%s", argv[0]);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(round_trip_clean), cmocka_unit_test(damaged_frames), cmocka_unit_test(damaged_raw),
        cmocka_unit_test(truncated_files),  cmocka_unit_test(hostile_input),  cmocka_unit_test(restarted_sender),
        cmocka_unit_test(command_line), cmocka_unit_test(raw_resync_any_split),
    };
    return cmocka_run_group_tests(tests, NULL, summary);
}
