/* tl_link.c - link frames and the run setup record (see tl_link.h). */
#include "tl_link.h"
#include <string.h>
#include "tl_bytes.h"
#include "tl_crc32c.h"
#include "tl_frame.h"

/* The record carries every field of these two structs. Their sizes are the
 * same on every target (32-bit fields, the switch states 8 octets, the
 * 16-bit APIDs in pairs); if one changes, a field was added or removed:
 * update the record, its version, docs/icd.md section 8.4 and the
 * vectors. */
_Static_assert(sizeof(tl_config) == 88u, "tl_config changed: update the setup record (tl_link.h)");
_Static_assert(sizeof(tl_downlink_config) == 48u, "tl_downlink_config changed: update the setup record (tl_link.h)");

/* ---- COBS (Cheshire and Baker 1999) ------------------------------------------ */

size_t tl_cobs_encode(const uint8_t *src, size_t n, uint8_t *dst, size_t cap)
{
    if (src == NULL || dst == NULL || cap < TL_COBS_BOUND(n))
        return 0u;
    size_t code_at = 0, out = 1;
    uint8_t code = 1;
    for (size_t i = 0; i < n; i++) {
        if (src[i] == 0u) {
            dst[code_at] = code;
            code_at = out++;
            code = 1;
        } else {
            dst[out++] = src[i];
            code++;
            if (code == 0xFFu && i + 1u < n) { /* a full block, and more to come */
                dst[code_at] = code;
                code_at = out++;
                code = 1;
            }
        }
    }
    dst[code_at] = code;
    return out;
}

tl_status tl_cobs_decode(const uint8_t *src, size_t n, uint8_t *dst, size_t cap, size_t *out_len)
{
    if (src == NULL || dst == NULL || out_len == NULL)
        return TL_E_NULL;
    size_t i = 0, out = 0;
    while (i < n) {
        const uint8_t code = src[i];
        if (code == 0u || (size_t)code - 1u > n - i - 1u)
            return TL_E_FORMAT;
        i++;
        for (uint8_t k = 1; k < code; k++) {
            if (src[i] == 0u)
                return TL_E_FORMAT;
            if (out >= cap)
                return TL_E_SPACE;
            dst[out++] = src[i++];
        }
        /* a code below 0xFF stands for a zero, except at the very end */
        if (code != 0xFFu && i < n) {
            if (out >= cap)
                return TL_E_SPACE;
            dst[out++] = 0u;
        }
    }
    *out_len = out;
    return TL_OK;
}

/* ---- link frames ------------------------------------------------------------- */

tl_status tl_link_encode(uint8_t type, uint16_t seq, const uint8_t *payload, size_t n, uint8_t *work,
                         size_t work_cap, uint8_t *wire, size_t cap, size_t *wire_len)
{
    if (work == NULL || wire == NULL || wire_len == NULL || (payload == NULL && n > 0u))
        return TL_E_NULL;
    if (n > TL_LINK_MAX_PAYLOAD)
        return TL_E_FORMAT;
    const size_t body = TL_LINK_HEADER_OCTETS + n + TL_LINK_CRC_OCTETS;
    if (work_cap < body || cap < TL_COBS_BOUND(body) + 1u)
        return TL_E_SPACE;
    work[0] = (uint8_t)TL_LINK_VERSION;
    work[1] = type;
    tl_put_be16(work + 2, seq);
    tl_put_be16(work + 4, (uint16_t)n);
    if (n > 0u)
        memcpy(work + TL_LINK_HEADER_OCTETS, payload, n);
    tl_put_be32(work + TL_LINK_HEADER_OCTETS + n, tl_crc32c(work, TL_LINK_HEADER_OCTETS + n));
    const size_t e = tl_cobs_encode(work, body, wire, cap - 1u);
    if (e == 0u)
        return TL_E_SPACE;
    wire[e] = 0u;
    *wire_len = e + 1u;
    return TL_OK;
}

tl_status tl_link_decode(const uint8_t *frame, size_t n, uint8_t *work, size_t work_cap, tl_link_msg *m)
{
    if (frame == NULL || work == NULL || m == NULL)
        return TL_E_NULL;
    size_t len = 0;
    if (tl_cobs_decode(frame, n, work, work_cap, &len) != TL_OK)
        return TL_E_FORMAT;
    if (len < TL_LINK_HEADER_OCTETS + TL_LINK_CRC_OCTETS || work[0] != TL_LINK_VERSION)
        return TL_E_FORMAT;
    const size_t pl = tl_get_be16(work + 4);
    if (pl > TL_LINK_MAX_PAYLOAD || len != TL_LINK_HEADER_OCTETS + pl + TL_LINK_CRC_OCTETS)
        return TL_E_FORMAT;
    if (tl_crc32c(work, TL_LINK_HEADER_OCTETS + pl) != tl_get_be32(work + TL_LINK_HEADER_OCTETS + pl))
        return TL_E_FORMAT;
    m->type = work[1];
    m->seq = tl_get_be16(work + 2);
    m->payload = work + TL_LINK_HEADER_OCTETS;
    m->len = pl;
    return TL_OK;
}

void tl_link_rx_reset(tl_link_rx *rx)
{
    rx->fill = 0;
    rx->overlong = 0;
}

int tl_link_rx_put(tl_link_rx *rx, uint8_t octet)
{
    if (rx->overlong == 2u) { /* the previous call delivered a frame */
        rx->fill = 0;
        rx->overlong = 0;
    }
    if (octet == 0u) {
        const int whole = rx->overlong == 0u && rx->fill > 0u;
        if (whole) {
            rx->overlong = 2u;
            return 1;
        }
        rx->fill = 0;
        rx->overlong = 0;
        return 0;
    }
    if (rx->overlong != 0u)
        return 0;
    if (rx->fill >= sizeof rx->buf) {
        rx->overlong = 1u;
        return 0;
    }
    rx->buf[rx->fill++] = octet;
    return 0;
}

const char *tl_link_setup_field_name(uint32_t offset)
{
    static const char *const names[] = {
        "version",      "points",         "taps",         "inputs",    "adc_bits",
        "integration",  "fft_scale_mask", "rounding",     "det_shift", "switch_steps",
        "switch_discard",
    };
    static const char *const tail[] = {
        "apid_science", "apid_hk",        "max_packet",   "encoding",    "transpose",
        "fraction_q16", "block",          "mode",         "sample_rate_hz", "epoch_coarse",
        "epoch_fine",   "frame_len",      "scid",         "vcid",        "sk_spectra",
        "apid_sk",      "sk_accumulate",
    };
    if (offset >= TL_LINK_SETUP_OCTETS)
        return "?";
    const uint32_t word = offset / 4u;
    if (offset < TL_LINK_SETUP_OFF_SWITCH)
        return names[word];
    if (offset < TL_LINK_SETUP_OFF_APID_SCIENCE)
        return ((offset - TL_LINK_SETUP_OFF_SWITCH) % 8u) < 4u ? "switch_state" : "switch_dwell";
    return tail[(offset - TL_LINK_SETUP_OFF_APID_SCIENCE) / 4u];
}

uint32_t tl_link_setup_field_max(uint32_t offset)
{
    if (offset >= TL_LINK_SETUP_OCTETS)
        return 0u;
    offset -= offset % 4u;
    if (offset == TL_LINK_SETUP_OFF_VERSION)
        return TL_LINK_SETUP_VERSION;
    if (offset >= TL_LINK_SETUP_OFF_SWITCH && offset < TL_LINK_SETUP_OFF_APID_SCIENCE)
        return ((offset - TL_LINK_SETUP_OFF_SWITCH) % 8u) == 0u ? 0xFFu : 0xFFFFFFFFu;
    switch (offset) {
    case TL_LINK_SETUP_OFF_APID_SCIENCE:
    case TL_LINK_SETUP_OFF_APID_HK:
    case TL_LINK_SETUP_OFF_APID_SK:
    case TL_LINK_SETUP_OFF_EPOCH_FINE:
    case TL_LINK_SETUP_OFF_SCID:
        return 0xFFFFu;
    case TL_LINK_SETUP_OFF_MODE:
    case TL_LINK_SETUP_OFF_VCID:
        return 0xFFu;
    default:
        return 0xFFFFFFFFu;
    }
}

tl_status tl_link_setup_encode(const tl_link_setup *s, uint8_t *dst, size_t cap)
{
    if (s == NULL || dst == NULL)
        return TL_E_NULL;
    if (cap < TL_LINK_SETUP_OCTETS)
        return TL_E_SPACE;
    uint8_t r[TL_LINK_SETUP_OCTETS];
    memset(r, 0, sizeof r);
    const tl_config *c = &s->chain;
    const tl_downlink_config *d = &s->dl;
    tl_put_be32(r + TL_LINK_SETUP_OFF_VERSION, TL_LINK_SETUP_VERSION);
    tl_put_be32(r + TL_LINK_SETUP_OFF_POINTS, c->points);
    tl_put_be32(r + TL_LINK_SETUP_OFF_TAPS, c->taps);
    tl_put_be32(r + TL_LINK_SETUP_OFF_INPUTS, c->inputs);
    tl_put_be32(r + TL_LINK_SETUP_OFF_ADC_BITS, c->adc_bits);
    tl_put_be32(r + TL_LINK_SETUP_OFF_INTEGRATION, c->integration);
    tl_put_be32(r + TL_LINK_SETUP_OFF_SCALE_MASK, c->fft_scale_mask);
    tl_put_be32(r + TL_LINK_SETUP_OFF_ROUNDING, c->rounding);
    tl_put_be32(r + TL_LINK_SETUP_OFF_DET_SHIFT, c->det_shift);
    tl_put_be32(r + TL_LINK_SETUP_OFF_SWITCH_STEPS, c->switch_steps);
    tl_put_be32(r + TL_LINK_SETUP_OFF_SWITCH_DISCARD, c->switch_discard);
    for (uint32_t i = 0; i < TL_MAX_SWITCH_STEPS; i++) {
        tl_put_be32(r + TL_LINK_SETUP_OFF_SWITCH + 8u * i, c->switch_state[i]);
        tl_put_be32(r + TL_LINK_SETUP_OFF_SWITCH + 8u * i + 4u, c->switch_dwell[i]);
    }
    tl_put_be32(r + TL_LINK_SETUP_OFF_APID_SCIENCE, d->apid_science);
    tl_put_be32(r + TL_LINK_SETUP_OFF_APID_HK, d->apid_hk);
    tl_put_be32(r + TL_LINK_SETUP_OFF_MAX_PACKET, d->max_packet);
    tl_put_be32(r + TL_LINK_SETUP_OFF_ENCODING, d->encoding);
    tl_put_be32(r + TL_LINK_SETUP_OFF_TRANSPOSE, d->transpose);
    tl_put_be32(r + TL_LINK_SETUP_OFF_FRACTION, d->fraction_q16);
    tl_put_be32(r + TL_LINK_SETUP_OFF_BLOCK, d->block);
    tl_put_be32(r + TL_LINK_SETUP_OFF_MODE, d->mode);
    tl_put_be32(r + TL_LINK_SETUP_OFF_SAMPLE_RATE, d->sample_rate_hz);
    tl_put_be32(r + TL_LINK_SETUP_OFF_EPOCH_COARSE, d->epoch.coarse);
    tl_put_be32(r + TL_LINK_SETUP_OFF_EPOCH_FINE, d->epoch.fine);
    tl_put_be32(r + TL_LINK_SETUP_OFF_FRAME_LEN, s->frame_len);
    tl_put_be32(r + TL_LINK_SETUP_OFF_SCID, s->scid);
    tl_put_be32(r + TL_LINK_SETUP_OFF_VCID, s->vcid);
    tl_put_be32(r + TL_LINK_SETUP_OFF_SK_SPECTRA, c->sk_spectra);
    tl_put_be32(r + TL_LINK_SETUP_OFF_APID_SK, d->apid_sk);
    tl_put_be32(r + TL_LINK_SETUP_OFF_SK_ACCUMULATE, c->sk_accumulate);
    memcpy(dst, r, sizeof r);
    return TL_OK;
}

tl_status tl_link_setup_decode(const uint8_t *src, size_t len, tl_link_setup *s, uint32_t *bad_field)
{
    if (src == NULL || s == NULL)
        return TL_E_NULL;
    if (len != TL_LINK_SETUP_OCTETS || tl_get_be32(src) != TL_LINK_SETUP_VERSION) {
        if (bad_field != NULL)
            *bad_field = TL_LINK_SETUP_OFF_VERSION;
        return TL_E_FORMAT;
    }
    for (uint32_t off = 4u; off < TL_LINK_SETUP_OCTETS; off += 4u) {
        if (tl_get_be32(src + off) > tl_link_setup_field_max(off)) {
            if (bad_field != NULL)
                *bad_field = off;
            return TL_E_FIELD_RANGE;
        }
    }
    tl_link_setup v;
    memset(&v, 0, sizeof v);
    tl_config *c = &v.chain;
    tl_downlink_config *d = &v.dl;
    c->points = tl_get_be32(src + TL_LINK_SETUP_OFF_POINTS);
    c->taps = tl_get_be32(src + TL_LINK_SETUP_OFF_TAPS);
    c->inputs = tl_get_be32(src + TL_LINK_SETUP_OFF_INPUTS);
    c->adc_bits = tl_get_be32(src + TL_LINK_SETUP_OFF_ADC_BITS);
    c->integration = tl_get_be32(src + TL_LINK_SETUP_OFF_INTEGRATION);
    c->fft_scale_mask = tl_get_be32(src + TL_LINK_SETUP_OFF_SCALE_MASK);
    c->rounding = tl_get_be32(src + TL_LINK_SETUP_OFF_ROUNDING);
    c->det_shift = tl_get_be32(src + TL_LINK_SETUP_OFF_DET_SHIFT);
    c->switch_steps = tl_get_be32(src + TL_LINK_SETUP_OFF_SWITCH_STEPS);
    c->switch_discard = tl_get_be32(src + TL_LINK_SETUP_OFF_SWITCH_DISCARD);
    for (uint32_t i = 0; i < TL_MAX_SWITCH_STEPS; i++) {
        c->switch_state[i] = (uint8_t)tl_get_be32(src + TL_LINK_SETUP_OFF_SWITCH + 8u * i);
        c->switch_dwell[i] = tl_get_be32(src + TL_LINK_SETUP_OFF_SWITCH + 8u * i + 4u);
    }
    d->apid_science = (uint16_t)tl_get_be32(src + TL_LINK_SETUP_OFF_APID_SCIENCE);
    d->apid_hk = (uint16_t)tl_get_be32(src + TL_LINK_SETUP_OFF_APID_HK);
    d->max_packet = tl_get_be32(src + TL_LINK_SETUP_OFF_MAX_PACKET);
    d->encoding = tl_get_be32(src + TL_LINK_SETUP_OFF_ENCODING);
    d->transpose = tl_get_be32(src + TL_LINK_SETUP_OFF_TRANSPOSE);
    d->fraction_q16 = tl_get_be32(src + TL_LINK_SETUP_OFF_FRACTION);
    d->block = tl_get_be32(src + TL_LINK_SETUP_OFF_BLOCK);
    d->mode = (uint8_t)tl_get_be32(src + TL_LINK_SETUP_OFF_MODE);
    d->config_id = 0u;
    d->sample_rate_hz = tl_get_be32(src + TL_LINK_SETUP_OFF_SAMPLE_RATE);
    d->epoch.coarse = tl_get_be32(src + TL_LINK_SETUP_OFF_EPOCH_COARSE);
    d->epoch.fine = (uint16_t)tl_get_be32(src + TL_LINK_SETUP_OFF_EPOCH_FINE);
    v.frame_len = tl_get_be32(src + TL_LINK_SETUP_OFF_FRAME_LEN);
    v.scid = (uint16_t)tl_get_be32(src + TL_LINK_SETUP_OFF_SCID);
    v.vcid = (uint8_t)tl_get_be32(src + TL_LINK_SETUP_OFF_VCID);
    c->sk_spectra = tl_get_be32(src + TL_LINK_SETUP_OFF_SK_SPECTRA);
    d->apid_sk = (uint16_t)tl_get_be32(src + TL_LINK_SETUP_OFF_APID_SK);
    c->sk_accumulate = tl_get_be32(src + TL_LINK_SETUP_OFF_SK_ACCUMULATE);
    *s = v;
    return TL_OK;
}

/* ---- whole-setup check ----------------------------------------------------------- */

/* The offset of the chain field behind a tl_config_check status. */
static uint32_t chain_field(const tl_config *c, tl_status st)
{
    switch (st) {
    case TL_E_POINTS: return TL_LINK_SETUP_OFF_POINTS;
    case TL_E_TAPS: return TL_LINK_SETUP_OFF_TAPS;
    case TL_E_INPUTS: return TL_LINK_SETUP_OFF_INPUTS;
    case TL_E_ADC_BITS: return TL_LINK_SETUP_OFF_ADC_BITS;
    case TL_E_INTEGRATION: return TL_LINK_SETUP_OFF_INTEGRATION;
    case TL_E_ROUNDING: return TL_LINK_SETUP_OFF_ROUNDING;
    case TL_E_DET_SHIFT: return TL_LINK_SETUP_OFF_DET_SHIFT;
    case TL_E_SCALING: return TL_LINK_SETUP_OFF_SCALE_MASK;
    case TL_E_SK:
        return c->sk_accumulate > TL_SK_MAX_ACCUMULATE ? TL_LINK_SETUP_OFF_SK_ACCUMULATE : TL_LINK_SETUP_OFF_SK_SPECTRA;
    default: break;
    }
    /* TL_E_SWITCH: the first field tl_switch_check refuses */
    if (c->switch_steps > TL_MAX_SWITCH_STEPS)
        return TL_LINK_SETUP_OFF_SWITCH_STEPS;
    for (uint32_t i = 0; i < c->switch_steps; i++) {
        if (c->switch_state[i] >= TL_STATES)
            return TL_LINK_SETUP_OFF_SWITCH + 8u * i;
        if (c->switch_dwell[i] < 1u || c->switch_dwell[i] > TL_MAX_INTEGRATION)
            return TL_LINK_SETUP_OFF_SWITCH + 8u * i + 4u;
        if (c->switch_discard >= c->switch_dwell[i])
            return TL_LINK_SETUP_OFF_SWITCH_DISCARD;
    }
    return TL_LINK_SETUP_OFF_SWITCH_DISCARD; /* discard with no steps, or not below a dwell */
}

/* The offset of the downlink field behind a tl_downlink_config_check status. */
static uint32_t downlink_field(const tl_downlink_config *d, tl_status st)
{
    switch (st) {
    case TL_E_APID:
        if (d->apid_science > TL_PACKET_APID_MAX)
            return TL_LINK_SETUP_OFF_APID_SCIENCE;
        if (d->apid_hk > TL_PACKET_APID_MAX || d->apid_hk == d->apid_science)
            return TL_LINK_SETUP_OFF_APID_HK;
        return TL_LINK_SETUP_OFF_APID_SK;
    case TL_E_PACKET_LEN: return TL_LINK_SETUP_OFF_MAX_PACKET;
    case TL_E_ENCODING:
        if (d->encoding != TL_ENCODE_ID_LOSSLESS && d->encoding != TL_ENCODE_ID_BOUNDED)
            return TL_LINK_SETUP_OFF_ENCODING;
        if (d->transpose != TL_ENCODE_BYTE_SHUFFLE && d->transpose != TL_ENCODE_BIT_PLANES)
            return TL_LINK_SETUP_OFF_TRANSPOSE;
        return TL_LINK_SETUP_OFF_BLOCK;
    case TL_E_NOISE_FRACTION: return TL_LINK_SETUP_OFF_FRACTION;
    default: return TL_LINK_SETUP_OFF_SAMPLE_RATE; /* TL_E_TIME_RANGE */
    }
}

tl_status tl_link_setup_check(const tl_link_setup *s, uint32_t *bad_field)
{
    if (s == NULL)
        return TL_E_NULL;
    uint32_t field = 0;
    tl_status st = tl_config_check(&s->chain);
    if (st != TL_OK) {
        field = chain_field(&s->chain, st);
    } else {
        st = tl_downlink_config_check(&s->dl);
        if (st != TL_OK) {
            field = downlink_field(&s->dl, st);
        } else {
            st = tl_frame_builder_check(s->frame_len, s->scid, s->vcid);
            field = st == TL_E_FRAME_LEN               ? TL_LINK_SETUP_OFF_FRAME_LEN
                    : s->scid > TL_FRAME_SCID_MAX      ? TL_LINK_SETUP_OFF_SCID
                                                       : TL_LINK_SETUP_OFF_VCID;
        }
    }
    if (st != TL_OK && bad_field != NULL)
        *bad_field = field;
    return st;
}
