/*
 * test_command.c - every configuration and table load is validated whole;
 * an invalid one is refused with a status and leaves the running
 * configuration untouched (docs/faults.md "Commands and table loads",
 * docs/icd.md 8.3):
 *  - one table of boundaries, a row per limit of every field of tl_config,
 *    tl_downlink_config, the frame builder settings and the run setup
 *    record: the documented minimum and maximum accepted, min - 1 and
 *    max + 1 refused with the right status. Each row names where its range
 *    comes from. Every row runs through
 *      the host API: tl_link_setup_decode, then tl_config_check /
 *        tl_downlink_config_check / tl_frame_builder_check and
 *        tl_link_setup_check (naming the field's record offset), then the
 *        init call on a RUNNING chain, downlink, frame builder and hil_run,
 *        whose bytes must not change when it refuses;
 *      the link: the target (hil/link_target.c, in process) runs a
 *        configuration, takes samples, gets the row's CONFIG, and must
 *        answer ACK or ERROR with the status and the field's offset, then
 *        take more samples;
 *  - a run that is sent bad CONFIGs and bad or partial TABLE transfers in
 *    the middle gives, frame for frame, the bytes of a run that never saw
 *    them;
 *  - tl_chain_load_taps with bad images leaves a running chain's bytes as
 *    they were.
 */
#include "tl_test.h"

#include <stdlib.h>
#include <string.h>

#include "../hil/hil_run.h"
#include "../hil/link_target.h"
#include "rng.h"
#include "tl_bytes.h"
#include "tl_chain.h"
#include "tl_downlink.h"
#include "tl_frame.h"
#include "tl_link.h"
#include "tl_taps.h"

/* ---- the base setup every row starts from ------------------------------------------ */

#define NONE 0xFFFFFFFFu /* no second / third field */

static tl_link_setup base_setup(void)
{
    tl_link_setup s;
    memset(&s, 0, sizeof s);
    tl_config_default(&s.chain); /* 8192 points, 4 taps: the built-in table */
    s.chain.integration = 2;
    for (uint32_t i = 0; i < TL_MAX_SWITCH_STEPS; i++)
        s.chain.switch_dwell[i] = 1; /* unused while switch_steps is 0; lets a row set steps alone */
    tl_downlink_config_default(&s.dl);
    s.frame_len = 1024;
    s.scid = 0x2A;
    s.vcid = 1;
    return s;
}

/* A coefficient table image of any geometry (window "other", shift 17). */
static uint8_t *make_image(uint32_t points, uint32_t taps, size_t *len)
{
    tl_taps *t = calloc(1, sizeof *t);
    assert_non_null(t);
    t->points = points;
    t->taps = taps;
    t->shift = 17;
    t->window = TL_WINDOW_OTHER;
    for (size_t i = 0; i < (size_t)points * taps; i++)
        t->coef[i] = (int32_t)(i % 7u) - 3;
    const size_t cap = TL_TAPS_IMAGE_BYTES(taps, points);
    uint8_t *img = malloc(cap);
    assert_non_null(img);
    assert_int_equal(tl_taps_write_image(t, img, cap, len), TL_OK);
    free(t);
    return img;
}

/* ---- the boundaries ------------------------------------------------------------------ */

typedef struct row {
    const char *what;
    uint32_t off, value;   /* the field under test (record offset) and its value */
    uint32_t off2, value2; /* fields the row needs as well (NONE: none) */
    uint32_t off3, value3;
    tl_status want;
    uint32_t at;           /* record offset the refusal names (NONE: off) */
    const char *source;
} row;

#define R(what, off, value, want, source) { what, off, value, NONE, 0, NONE, 0, want, NONE, source }
#define R2(what, off, value, o2, v2, want, source) { what, off, value, o2, v2, NONE, 0, want, NONE, source }

#define O(f) TL_LINK_SETUP_OFF_##f
#define SW_STATE(i) (TL_LINK_SETUP_OFF_SWITCH + 8u * (i))
#define SW_DWELL(i) (TL_LINK_SETUP_OFF_SWITCH + 8u * (i) + 4u)

/* Where the ranges come from. */
#define S_CFG "tl_chain.h tl_config comment, tl_limits.h maxima"
#define S_SW "tl_switch.h tl_switch_init: steps 0..8, state < TL_STATES, dwell 1..2^24, discard below every dwell"
#define S_SK "tl_sk.h / tl_chain.h: sk_spectra 0 or 16..65536, sk_accumulate 1..65536 (0 taken as 1), M x N <= integration"
#define S_FFT "tl_fft.h tl_fft_init: mask bits 0..log2(points/2) only, or TL_FFT_SCALE_AUTO"
#define S_APID "CCSDS 133.0-B-2: APID 11 bits, 2047 (all ones) reserved for idle packets (sources.md [cited]); tl_downlink.h: three distinct APIDs"
#define S_PKT "tl_downlink.h: max_packet TL_DL_MIN_PACKET (512) .. TL_PACKET_MAX_LEN (4095)"
#define S_ENC "tl_downlink.h / tl_encode.h: encoding 1 (lossless) or 2 (bounded), transpose 0 or 1, block 1..255 when bounded"
#define S_FRAC "tl_encode.h: fraction_q16 TL_ENCODE_FRACTION_MIN_Q16 (1024) .. _MAX_Q16 (65536) when bounded"
#define S_RATE "tl_downlink.h: sample_rate_hz 1 .. 2^32 - 1"
#define S_FLEN "docs/icd.md 5.1: L 128 .. 2048 octets; 2048 the CCSDS 132.0-B-2 maximum [memory]"
#define S_SCID "CCSDS 132.0-B-2: spacecraft id 10 bits (0..1023) [memory]; tl_frame.h TL_FRAME_SCID_MAX"
#define S_VCID "CCSDS 132.0-B-2: virtual channel id 3 bits (0..7) [memory]; tl_frame.h TL_FRAME_VCID_MAX"
#define S_REC "tl_link.h / docs/icd.md 8.4: each record word must fit the integer it goes into"

static const row rows[] = {
    /* ---- tl_config ---- */
    R("points min", O(POINTS), 256, TL_OK, S_CFG " (TL_MIN_POINTS)"),
    R("points min-1", O(POINTS), 255, TL_E_POINTS, S_CFG),
    R("points below min, a power of two", O(POINTS), 128, TL_E_POINTS, S_CFG),
    R("points max", O(POINTS), TL_MAX_POINTS, TL_OK, S_CFG " (TL_MAX_POINTS)"),
    R("points max+1", O(POINTS), TL_MAX_POINTS + 1u, TL_E_POINTS, S_CFG),
    R("points not a power of two", O(POINTS), 1000, TL_E_POINTS, S_CFG),
    R("taps min", O(TAPS), 1, TL_OK, S_CFG),
    R("taps min-1", O(TAPS), 0, TL_E_TAPS, S_CFG),
    R("taps max", O(TAPS), TL_MAX_TAPS, TL_OK, S_CFG " (TL_MAX_TAPS)"),
    R("taps max+1", O(TAPS), TL_MAX_TAPS + 1u, TL_E_TAPS, S_CFG),
    R("inputs min", O(INPUTS), 1, TL_OK, S_CFG),
    R("inputs min-1", O(INPUTS), 0, TL_E_INPUTS, S_CFG),
    R("inputs max", O(INPUTS), TL_MAX_INPUTS, TL_OK, S_CFG " (TL_MAX_INPUTS)"),
    R("inputs max+1", O(INPUTS), TL_MAX_INPUTS + 1u, TL_E_INPUTS, S_CFG),
    R("adc_bits min", O(ADC_BITS), TL_MIN_ADC_BITS, TL_OK, S_CFG " (TL_MIN_ADC_BITS)"),
    R("adc_bits min-1", O(ADC_BITS), TL_MIN_ADC_BITS - 1u, TL_E_ADC_BITS, S_CFG),
    R("adc_bits max", O(ADC_BITS), TL_MAX_ADC_BITS, TL_OK, S_CFG " (TL_MAX_ADC_BITS)"),
    R("adc_bits max+1", O(ADC_BITS), TL_MAX_ADC_BITS + 1u, TL_E_ADC_BITS, S_CFG),
    R("integration min", O(INTEGRATION), 1, TL_OK, S_CFG),
    R("integration min-1", O(INTEGRATION), 0, TL_E_INTEGRATION, S_CFG),
    R("integration max", O(INTEGRATION), TL_MAX_INTEGRATION, TL_OK, S_CFG " (TL_MAX_INTEGRATION = 2^24)"),
    R("integration max+1", O(INTEGRATION), TL_MAX_INTEGRATION + 1u, TL_E_INTEGRATION, S_CFG),
    R("fft_scale_mask min", O(SCALE_MASK), 0, TL_OK, S_FFT),
    R("fft_scale_mask max (8192 points)", O(SCALE_MASK), 8191, TL_OK, S_FFT),
    R("fft_scale_mask max+1", O(SCALE_MASK), 8192, TL_E_SCALING, S_FFT),
    R("fft_scale_mask automatic", O(SCALE_MASK), TL_FFT_SCALE_AUTO, TL_OK, S_FFT),
    R("fft_scale_mask automatic-1", O(SCALE_MASK), TL_FFT_SCALE_AUTO - 1u, TL_E_SCALING, S_FFT),
    R("rounding min", O(ROUNDING), TL_ROUND_TRUNCATE, TL_OK, "tl_fixed.h tl_rounding 0..2"),
    R("rounding max", O(ROUNDING), TL_ROUND_HALF_EVEN, TL_OK, "tl_fixed.h tl_rounding 0..2"),
    R("rounding max+1", O(ROUNDING), TL_ROUND_HALF_EVEN + 1u, TL_E_ROUNDING, "tl_fixed.h tl_rounding 0..2"),
    R("det_shift min", O(DET_SHIFT), 0, TL_OK, S_CFG),
    R("det_shift max", O(DET_SHIFT), TL_MAX_DET_SHIFT, TL_OK, S_CFG " (TL_MAX_DET_SHIFT)"),
    R("det_shift max+1", O(DET_SHIFT), TL_MAX_DET_SHIFT + 1u, TL_E_DET_SHIFT, S_CFG),
    R("det_shift automatic", O(DET_SHIFT), TL_DET_SHIFT_AUTO, TL_OK, S_CFG " (TL_DET_SHIFT_AUTO)"),
    R("det_shift automatic-1", O(DET_SHIFT), TL_DET_SHIFT_AUTO - 1u, TL_E_DET_SHIFT, S_CFG),
    R("switch_steps min", O(SWITCH_STEPS), 0, TL_OK, S_SW),
    R("switch_steps max", O(SWITCH_STEPS), TL_MAX_SWITCH_STEPS, TL_OK, S_SW),
    R("switch_steps max+1", O(SWITCH_STEPS), TL_MAX_SWITCH_STEPS + 1u, TL_E_SWITCH, S_SW),
    R2("switch_state min", SW_STATE(0), TL_STATE_ANTENNA, O(SWITCH_STEPS), 1, TL_OK, S_SW),
    R2("switch_state max", SW_STATE(0), TL_STATES - 1u, O(SWITCH_STEPS), 1, TL_OK, S_SW),
    R2("switch_state max+1", SW_STATE(0), TL_STATES, O(SWITCH_STEPS), 1, TL_E_SWITCH, S_SW),
    R2("switch_state max+1, last step", SW_STATE(7), TL_STATES, O(SWITCH_STEPS), 8, TL_E_SWITCH, S_SW),
    R2("switch_dwell min", SW_DWELL(0), 1, O(SWITCH_STEPS), 1, TL_OK, S_SW),
    R2("switch_dwell min-1", SW_DWELL(0), 0, O(SWITCH_STEPS), 1, TL_E_SWITCH, S_SW),
    R2("switch_dwell max", SW_DWELL(0), TL_MAX_INTEGRATION, O(SWITCH_STEPS), 1, TL_OK, S_SW),
    R2("switch_dwell max+1", SW_DWELL(0), TL_MAX_INTEGRATION + 1u, O(SWITCH_STEPS), 1, TL_E_SWITCH, S_SW),
    R2("switch_dwell min-1, last step", SW_DWELL(7), 0, O(SWITCH_STEPS), 8, TL_E_SWITCH, S_SW),
    R("switch_discard min", O(SWITCH_DISCARD), 0, TL_OK, S_SW),
    R("switch_discard without steps", O(SWITCH_DISCARD), 1, TL_E_SWITCH, S_SW),
    { "switch_discard max (dwell - 1)", O(SWITCH_DISCARD), 4, O(SWITCH_STEPS), 1, SW_DWELL(0), 5, TL_OK, NONE, S_SW },
    { "switch_discard max+1 (= dwell)", O(SWITCH_DISCARD), 5, O(SWITCH_STEPS), 1, SW_DWELL(0), 5, TL_E_SWITCH, NONE,
      S_SW },
    R("sk_spectra off", O(SK_SPECTRA), 0, TL_OK, S_SK),
    R2("sk_spectra min", O(SK_SPECTRA), TL_SK_MIN_SPECTRA, O(INTEGRATION), TL_SK_MIN_SPECTRA, TL_OK, S_SK),
    R2("sk_spectra min-1", O(SK_SPECTRA), TL_SK_MIN_SPECTRA - 1u, O(INTEGRATION), 64, TL_E_SK, S_SK),
    R2("sk_spectra max", O(SK_SPECTRA), TL_SK_MAX_SPECTRA, O(INTEGRATION), TL_SK_MAX_SPECTRA, TL_OK, S_SK),
    R2("sk_spectra max+1", O(SK_SPECTRA), TL_SK_MAX_SPECTRA + 1u, O(INTEGRATION), TL_MAX_INTEGRATION, TL_E_SK, S_SK),
    R2("sk_spectra above the integration", O(SK_SPECTRA), 17, O(INTEGRATION), 16, TL_E_SK, S_SK),
    R("sk_accumulate 0 (taken as 1)", O(SK_ACCUMULATE), 0, TL_OK, S_SK),
    R("sk_accumulate min", O(SK_ACCUMULATE), 1, TL_OK, S_SK),
    R("sk_accumulate max", O(SK_ACCUMULATE), TL_SK_MAX_ACCUMULATE, TL_OK, S_SK),
    R("sk_accumulate max+1", O(SK_ACCUMULATE), TL_SK_MAX_ACCUMULATE + 1u, TL_E_SK, S_SK),
    { "sk M x N above the integration", O(SK_ACCUMULATE), 2, O(SK_SPECTRA), 16, O(INTEGRATION), 31, TL_E_SK,
      O(SK_SPECTRA), S_SK },
    /* ---- tl_downlink_config (defaults: APIDs 0x101, 0x102, 0x103) ---- */
    R("apid_science min", O(APID_SCIENCE), 0, TL_OK, S_APID),
    R("apid_science max", O(APID_SCIENCE), TL_PACKET_APID_MAX, TL_OK, S_APID),
    R("apid_science max+1 (idle APID)", O(APID_SCIENCE), TL_PACKET_APID_IDLE, TL_E_APID, S_APID),
    R("apid_hk min", O(APID_HK), 0, TL_OK, S_APID),
    R("apid_hk max", O(APID_HK), TL_PACKET_APID_MAX, TL_OK, S_APID),
    R("apid_hk max+1 (idle APID)", O(APID_HK), TL_PACKET_APID_IDLE, TL_E_APID, S_APID),
    R("apid_sk min", O(APID_SK), 0, TL_OK, S_APID),
    R("apid_sk max", O(APID_SK), TL_PACKET_APID_MAX, TL_OK, S_APID),
    R("apid_sk max+1 (idle APID)", O(APID_SK), TL_PACKET_APID_IDLE, TL_E_APID, S_APID),
    { "apid_science equal to apid_hk", O(APID_SCIENCE), 0x102, NONE, 0, NONE, 0, TL_E_APID, O(APID_HK), S_APID },
    R("apid_sk equal to apid_science", O(APID_SK), 0x101, TL_E_APID, S_APID),
    R("max_packet min", O(MAX_PACKET), TL_DL_MIN_PACKET, TL_OK, S_PKT),
    R("max_packet min-1", O(MAX_PACKET), TL_DL_MIN_PACKET - 1u, TL_E_PACKET_LEN, S_PKT),
    R("max_packet max", O(MAX_PACKET), TL_PACKET_MAX_LEN, TL_OK, S_PKT),
    R("max_packet max+1", O(MAX_PACKET), TL_PACKET_MAX_LEN + 1u, TL_E_PACKET_LEN, S_PKT),
    R("encoding min", O(ENCODING), TL_ENCODE_ID_LOSSLESS, TL_OK, S_ENC),
    R("encoding min-1", O(ENCODING), TL_ENCODE_ID_LOSSLESS - 1u, TL_E_ENCODING, S_ENC),
    R("encoding max", O(ENCODING), TL_ENCODE_ID_BOUNDED, TL_OK, S_ENC),
    R("encoding max+1", O(ENCODING), TL_ENCODE_ID_BOUNDED + 1u, TL_E_ENCODING, S_ENC),
    R("transpose min", O(TRANSPOSE), TL_ENCODE_BYTE_SHUFFLE, TL_OK, S_ENC),
    R("transpose max", O(TRANSPOSE), TL_ENCODE_BIT_PLANES, TL_OK, S_ENC),
    R("transpose max+1", O(TRANSPOSE), TL_ENCODE_BIT_PLANES + 1u, TL_E_ENCODING, S_ENC),
    R2("fraction_q16 min", O(FRACTION), TL_ENCODE_FRACTION_MIN_Q16, O(ENCODING), TL_ENCODE_ID_BOUNDED, TL_OK, S_FRAC),
    R2("fraction_q16 min-1", O(FRACTION), TL_ENCODE_FRACTION_MIN_Q16 - 1u, O(ENCODING), TL_ENCODE_ID_BOUNDED,
       TL_E_NOISE_FRACTION, S_FRAC),
    R2("fraction_q16 max", O(FRACTION), TL_ENCODE_FRACTION_MAX_Q16, O(ENCODING), TL_ENCODE_ID_BOUNDED, TL_OK, S_FRAC),
    R2("fraction_q16 max+1", O(FRACTION), TL_ENCODE_FRACTION_MAX_Q16 + 1u, O(ENCODING), TL_ENCODE_ID_BOUNDED,
       TL_E_NOISE_FRACTION, S_FRAC),
    R("fraction_q16 not checked when lossless", O(FRACTION), 0, TL_OK, S_FRAC),
    R2("block min", O(BLOCK), 1, O(ENCODING), TL_ENCODE_ID_BOUNDED, TL_OK, S_ENC),
    R2("block min-1", O(BLOCK), 0, O(ENCODING), TL_ENCODE_ID_BOUNDED, TL_E_ENCODING, S_ENC),
    R2("block max", O(BLOCK), 255, O(ENCODING), TL_ENCODE_ID_BOUNDED, TL_OK, S_ENC),
    R2("block max+1", O(BLOCK), 256, O(ENCODING), TL_ENCODE_ID_BOUNDED, TL_E_ENCODING, S_ENC),
    R("mode min", O(MODE), 0, TL_OK, "tl_downlink.h: mode is any octet"),
    R("mode max", O(MODE), 255, TL_OK, "tl_downlink.h: mode is any octet"),
    R("sample_rate_hz min", O(SAMPLE_RATE), 1, TL_OK, S_RATE),
    R("sample_rate_hz min-1", O(SAMPLE_RATE), 0, TL_E_TIME_RANGE, S_RATE),
    R("sample_rate_hz max", O(SAMPLE_RATE), 0xFFFFFFFFu, TL_OK, S_RATE),
    R("epoch coarse max", O(EPOCH_COARSE), 0xFFFFFFFFu, TL_OK, "CCSDS 301.0-B-4 CUC, 4 coarse octets (sources.md)"),
    R("epoch fine max", O(EPOCH_FINE), 0xFFFFu, TL_OK, "CCSDS 301.0-B-4 CUC, 2 fine octets (sources.md)"),
    /* ---- frame builder ---- */
    R("frame_len min", O(FRAME_LEN), TL_FRAME_MIN_LEN, TL_OK, S_FLEN),
    R("frame_len min-1", O(FRAME_LEN), TL_FRAME_MIN_LEN - 1u, TL_E_FRAME_LEN, S_FLEN),
    R("frame_len max", O(FRAME_LEN), TL_FRAME_MAX_LEN, TL_OK, S_FLEN),
    R("frame_len max+1", O(FRAME_LEN), TL_FRAME_MAX_LEN + 1u, TL_E_FRAME_LEN, S_FLEN),
    R("scid min", O(SCID), 0, TL_OK, S_SCID),
    R("scid max", O(SCID), 1023, TL_OK, S_SCID),
    R("scid max+1", O(SCID), 1024, TL_E_FIELD_RANGE, S_SCID),
    R("vcid min", O(VCID), 0, TL_OK, S_VCID),
    R("vcid max", O(VCID), 7, TL_OK, S_VCID),
    R("vcid max+1", O(VCID), 8, TL_E_FIELD_RANGE, S_VCID),
    /* ---- the setup record itself ---- */
    R("record version min-1", O(VERSION), 0, TL_E_FORMAT, S_REC " (version 1 only)"),
    R("record version max+1", O(VERSION), 2, TL_E_FORMAT, S_REC " (version 1 only)"),
    R2("record switch_state 256", SW_STATE(0), 256, O(SWITCH_STEPS), 1, TL_E_FIELD_RANGE, S_REC " (octet)"),
    R2("record switch_state 256, last step", SW_STATE(7), 256, O(SWITCH_STEPS), 8, TL_E_FIELD_RANGE, S_REC),
    R("record apid_science 65536", O(APID_SCIENCE), 65536, TL_E_FIELD_RANGE, S_REC " (16 bits)"),
    R("record apid_hk 65536", O(APID_HK), 65536, TL_E_FIELD_RANGE, S_REC " (16 bits)"),
    R("record apid_sk 65536", O(APID_SK), 65536, TL_E_FIELD_RANGE, S_REC " (16 bits)"),
    R("record mode 256", O(MODE), 256, TL_E_FIELD_RANGE, S_REC " (octet)"),
    R("record epoch fine 65536", O(EPOCH_FINE), 65536, TL_E_FIELD_RANGE, S_REC " (16 bits)"),
    R("record scid 65535 (fits the record, not the frame)", O(SCID), 65535, TL_E_FIELD_RANGE, S_SCID),
    R("record scid 65536", O(SCID), 65536, TL_E_FIELD_RANGE, S_REC " (16 bits)"),
    R("record vcid 255 (fits the record, not the frame)", O(VCID), 255, TL_E_FIELD_RANGE, S_VCID),
    R("record vcid 256", O(VCID), 256, TL_E_FIELD_RANGE, S_REC " (octet)"),
};

enum { G_CHAIN, G_DOWNLINK, G_FRAME, G_RECORD };

static int group_of(uint32_t off)
{
    if (off == O(FRAME_LEN) || off == O(SCID) || off == O(VCID))
        return G_FRAME;
    if ((off >= O(APID_SCIENCE) && off < O(FRAME_LEN)) || off == O(APID_SK))
        return G_DOWNLINK;
    return off == O(VERSION) ? G_RECORD : G_CHAIN;
}

static void row_record(const row *r, uint8_t rec[TL_LINK_SETUP_OCTETS])
{
    const tl_link_setup b = base_setup();
    assert_int_equal(tl_link_setup_encode(&b, rec, TL_LINK_SETUP_OCTETS), TL_OK);
    if (r->off2 != NONE)
        tl_put_be32(rec + r->off2, r->value2);
    if (r->off3 != NONE)
        tl_put_be32(rec + r->off3, r->value3);
    tl_put_be32(rec + r->off, r->value);
}

static uint32_t row_at(const row *r)
{
    return r->at != NONE ? r->at : r->off;
}

/* The row needs a table other than the built-in one. */
static int row_table(const tl_link_setup *s)
{
    return s->chain.points != TL_TAPS_DEFAULT_POINTS || s->chain.taps != TL_TAPS_DEFAULT_TAPS;
}

/* ---- host API ---------------------------------------------------------------------- */

typedef struct running {
    tl_chain *chain, *chain_snap, *scratch_chain;
    tl_downlink *dl, *dl_snap, *scratch_dl;
    tl_frame_builder *fb, *fb_snap, *scratch_fb;
    hil_run *run, *run_snap;
} running;

static size_t sink_octets;
static void count_sink(void *user, const uint8_t *wire, size_t len)
{
    (void)user;
    (void)wire;
    sink_octets += len;
}
static void count_packets(void *user, const uint8_t *packet, size_t len)
{
    (void)user;
    (void)packet;
    sink_octets += len;
}

static void noise16(int16_t *x, size_t n, tl_rng *r)
{
    for (size_t i = 0; i < n; i++)
        x[i] = (int16_t)(uint16_t)((tl_rng_u64(r) >> 48) & 0xFFFCu); /* 14-bit codes, left-aligned */
}

/* Start every object with the base setup and give it some history. */
static void start_running(running *R)
{
    const tl_link_setup b = base_setup();
    tl_rng rng;
    tl_rng_seed(&rng, 7);
    const size_t n = 5u * 8192u + 3000u; /* one integration (2 spectra, 4 taps) and part of the next */
    int16_t *in0 = malloc(n * sizeof *in0), *in1 = malloc(n * sizeof *in1);
    assert_non_null(in0);
    assert_non_null(in1);
    noise16(in0, n, &rng);
    noise16(in1, n, &rng);

    R->chain = tl_test_chain();
    R->chain_snap = tl_test_chain();
    R->scratch_chain = tl_test_chain();
    assert_int_equal(tl_chain_init(R->chain, &b.chain, NULL, 0), TL_OK);
    tl_product *p = tl_test_product();
    assert_int_equal(tl_test_push_all(R->chain, in0, in1, n, p), 1u);
    assert_int_equal(R->chain->fill, 3000u);

    R->dl = calloc(1, sizeof *R->dl);
    R->dl_snap = calloc(1, sizeof *R->dl_snap);
    R->scratch_dl = calloc(1, sizeof *R->scratch_dl);
    assert_int_equal(tl_downlink_init(R->dl, &b.dl), TL_OK);
    sink_octets = 0;
    assert_int_equal(tl_downlink_product(R->dl, p, 1, count_packets, NULL), TL_OK);
    assert_true(R->dl->stats.packets_science > 0u && sink_octets > 0u);

    R->fb = calloc(1, sizeof *R->fb);
    R->fb_snap = calloc(1, sizeof *R->fb_snap);
    R->scratch_fb = calloc(1, sizeof *R->scratch_fb);
    assert_int_equal(tl_frame_builder_init(R->fb, b.frame_len, b.scid, b.vcid, count_sink, NULL), TL_OK);
    const uint8_t pkt[7] = { 0x01, 0x01, 0xC0, 0x00, 0x00, 0x00, 0xAB }; /* 6 + 0 + 1 octets */
    assert_int_equal(tl_frame_put_packet(R->fb, pkt, sizeof pkt), TL_OK);
    assert_int_equal(R->fb->fill, 7u);

    R->run = calloc(1, sizeof *R->run);
    R->run_snap = calloc(1, sizeof *R->run_snap);
    assert_non_null(R->run);
    assert_int_equal(hil_run_start(R->run, &b, NULL, 0, count_sink, NULL), TL_OK);
    assert_int_equal(hil_run_push(R->run, in0, in1, n), TL_OK);
    assert_int_equal(R->run->products, 1u);

    memcpy(R->chain_snap, R->chain, sizeof *R->chain);
    memcpy(R->dl_snap, R->dl, sizeof *R->dl);
    memcpy(R->fb_snap, R->fb, sizeof *R->fb);
    memcpy(R->run_snap, R->run, sizeof *R->run);
    free(p);
    free(in0);
    free(in1);
}

static void stop_running(running *R)
{
    free(R->chain);
    free(R->chain_snap);
    free(R->scratch_chain);
    free(R->dl);
    free(R->dl_snap);
    free(R->scratch_dl);
    free(R->fb);
    free(R->fb_snap);
    free(R->scratch_fb);
    free(R->run);
    free(R->run_snap);
}

#define UNCHANGED(R, kind, obj, snap)                                                                                 \
    do {                                                                                                              \
        if (memcmp((R)->obj, (R)->snap, sizeof *(R)->obj) != 0)                                                       \
            fail_msg("row '%s': the refused %s changed the running %s", r->what, kind, #obj);                         \
    } while (0)

static void host_row(running *R, const row *r)
{
    uint8_t rec[TL_LINK_SETUP_OCTETS];
    row_record(r, rec);
    tl_link_setup s;
    uint32_t bad = NONE;
    const tl_status dec = tl_link_setup_decode(rec, sizeof rec, &s, &bad);
    if (dec != TL_OK) { /* refused by the record itself */
        if (dec != r->want || bad != row_at(r))
            fail_msg("row '%s' (%s): decode gave %s at offset %u, expected %s at %u", r->what, r->source,
                     tl_status_name(dec), (unsigned)bad, tl_status_name(r->want), (unsigned)row_at(r));
        return;
    }
    /* the module's own check */
    const int g = group_of(r->off);
    tl_status st = TL_OK;
    if (g == G_CHAIN)
        st = tl_config_check(&s.chain);
    else if (g == G_DOWNLINK)
        st = tl_downlink_config_check(&s.dl);
    else if (g == G_FRAME)
        st = tl_frame_builder_check(s.frame_len, s.scid, s.vcid);
    if (st != r->want)
        fail_msg("row '%s' (%s): module check gave %s, expected %s", r->what, r->source, tl_status_name(st),
                 tl_status_name(r->want));
    /* the whole setup, naming the field */
    bad = NONE;
    st = tl_link_setup_check(&s, &bad);
    if (st != r->want || (st != TL_OK && bad != row_at(r)))
        fail_msg("row '%s' (%s): tl_link_setup_check gave %s at offset %u (%s), expected %s at %u", r->what,
                 r->source, tl_status_name(st), (unsigned)bad, tl_link_setup_field_name(bad),
                 tl_status_name(r->want), (unsigned)row_at(r));
    /* the init calls on running objects: accepted on a copy, refused on the running one (no change) */
    if (g == G_CHAIN) {
        size_t len = 0;
        uint8_t *img = r->want == TL_OK && row_table(&s) ? make_image(s.chain.points, s.chain.taps, &len) : NULL;
        tl_chain *c = r->want == TL_OK ? R->scratch_chain : R->chain;
        if (c == R->scratch_chain)
            memcpy(c, R->chain, sizeof *c);
        st = tl_chain_init(c, &s.chain, img, len);
        free(img);
        if (st != r->want)
            fail_msg("row '%s': tl_chain_init gave %s", r->what, tl_status_name(st));
        UNCHANGED(R, "configuration", chain, chain_snap);
    } else if (g == G_DOWNLINK) {
        tl_downlink *d = r->want == TL_OK ? R->scratch_dl : R->dl;
        if (d == R->scratch_dl)
            memcpy(d, R->dl, sizeof *d);
        st = tl_downlink_init(d, &s.dl);
        if (st != r->want)
            fail_msg("row '%s': tl_downlink_init gave %s", r->what, tl_status_name(st));
        UNCHANGED(R, "configuration", dl, dl_snap);
    } else if (g == G_FRAME) {
        tl_frame_builder *f = r->want == TL_OK ? R->scratch_fb : R->fb;
        if (f == R->scratch_fb)
            memcpy(f, R->fb, sizeof *f);
        /* the builder takes uint16/uint8: a value wider than those is a record row above */
        st = tl_frame_builder_init(f, s.frame_len, s.scid, s.vcid, count_sink, NULL);
        if (st != r->want)
            fail_msg("row '%s': tl_frame_builder_init gave %s", r->what, tl_status_name(st));
        UNCHANGED(R, "configuration", fb, fb_snap);
    }
    if (r->want != TL_OK) { /* the whole run refuses it too, and stays as it was */
        st = hil_run_start(R->run, &s, NULL, 0, count_sink, NULL);
        if (st != r->want)
            fail_msg("row '%s': hil_run_start gave %s", r->what, tl_status_name(st));
        UNCHANGED(R, "setup", run, run_snap);
    }
}

static void boundaries_host_api(void **state)
{
    (void)state;
    running R;
    start_running(&R);
    unsigned ok = 0, refused = 0;
    for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++) {
        host_row(&R, &rows[i]);
        if (rows[i].want == TL_OK)
            ok++;
        else
            refused++;
    }
    printf("    host API: %u boundary rows accepted, %u refused, running objects unchanged by every refusal\n", ok,
           refused);
    stop_running(&R);
}

/* Every field of the two structs has a row (the sizes tl_link.c asserts). */
static void every_field_has_a_row(void **state)
{
    (void)state;
    for (uint32_t off = 0; off < TL_LINK_SETUP_OCTETS; off += 4u) {
        /* switch steps: the rows test step 0 and step 7 */
        uint32_t want = off;
        if (off >= O(SWITCH) && off < O(APID_SCIENCE) && off >= SW_STATE(1) && off < SW_STATE(7))
            continue;
        unsigned n = 0;
        for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++)
            n += rows[i].off == want;
        if (n == 0)
            fail_msg("no boundary row for record field '%s' at offset %u", tl_link_setup_field_name(off),
                     (unsigned)off);
    }
}

/* ---- the link, in process -------------------------------------------------------------- */

#define STREAM_CAP (8u << 20)
#define FRAMES_CAP (8u << 20)

typedef struct reply {
    uint8_t type;
    uint16_t seq;
    uint16_t status;  /* ERROR */
    uint32_t detail;  /* ERROR */
    uint32_t frames;  /* ACK: frames sent since CONFIG */
} reply;

static uint8_t *stream, *frames;
static size_t stream_len, stream_at, frames_len, n_replies, damaged;
static uint16_t seq_next;
static reply replies[4096];
static uint8_t enc_work[TL_LINK_MAX_BODY], ans_work[TL_LINK_MAX_BODY];
static tl_link_rx rx_ans;

static int get_octet(void *ctx)
{
    (void)ctx;
    return stream_at < stream_len ? stream[stream_at++] : -1;
}

static void put_octets(void *ctx, const uint8_t *p, size_t n)
{
    (void)ctx;
    for (size_t i = 0; i < n; i++) {
        if (!tl_link_rx_put(&rx_ans, p[i]))
            continue;
        tl_link_msg m;
        if (tl_link_decode(rx_ans.buf, rx_ans.fill, ans_work, sizeof ans_work, &m) != TL_OK) {
            damaged++;
            continue;
        }
        if (m.type == TL_LINK_T_FRAMES) {
            if (frames_len + m.len <= FRAMES_CAP) {
                memcpy(frames + frames_len, m.payload, m.len);
                frames_len += m.len;
            }
            continue;
        }
        if ((m.type != TL_LINK_T_ACK && m.type != TL_LINK_T_ERROR) || m.len < 2u ||
            n_replies == sizeof replies / sizeof replies[0])
            continue;
        reply *r = &replies[n_replies++];
        memset(r, 0, sizeof *r);
        r->type = m.type;
        r->seq = tl_get_be16(m.payload);
        if (m.type == TL_LINK_T_ERROR && m.len >= 8u) {
            r->status = tl_get_be16(m.payload + 2);
            r->detail = tl_get_be32(m.payload + 4);
        }
        if (m.type == TL_LINK_T_ACK && m.len >= 10u)
            r->frames = tl_get_be32(m.payload + 6);
    }
}

static void session_begin(void)
{
    if (stream == NULL) {
        stream = malloc(STREAM_CAP);
        frames = malloc(FRAMES_CAP);
        assert_non_null(stream);
        assert_non_null(frames);
    }
    stream_len = stream_at = frames_len = n_replies = damaged = 0;
    seq_next = 0;
    tl_link_rx_reset(&rx_ans);
}

static void session_run(void)
{
    const link_port port = { get_octet, put_octets, NULL };
    assert_int_equal(link_target_serve(&port, TL_LINK_MODE_BENCH, NULL), 0);
    assert_int_equal(damaged, 0);
}

static uint16_t send_msg(uint8_t type, const uint8_t *p, size_t n)
{
    size_t wl = 0;
    assert_true(stream_len + TL_LINK_MAX_WIRE <= STREAM_CAP);
    assert_int_equal(tl_link_encode(type, seq_next, p, n, enc_work, sizeof enc_work, stream + stream_len,
                                    STREAM_CAP - stream_len, &wl),
                     TL_OK);
    stream_len += wl;
    return seq_next++;
}

static uint16_t send_config(const uint8_t rec[TL_LINK_SETUP_OCTETS], uint32_t table_len)
{
    uint8_t msg[4u + TL_LINK_SETUP_OCTETS];
    tl_put_be32(msg, table_len);
    memcpy(msg + 4, rec, TL_LINK_SETUP_OCTETS);
    return send_msg(TL_LINK_T_CONFIG, msg, sizeof msg);
}

static uint16_t send_base_config(void)
{
    uint8_t rec[TL_LINK_SETUP_OCTETS];
    const tl_link_setup b = base_setup();
    assert_int_equal(tl_link_setup_encode(&b, rec, sizeof rec), TL_OK);
    return send_config(rec, 0);
}

/* TABLE pieces of img[0 .. upto) of an image of `total` octets; returns the last sequence. */
static uint16_t send_table(const uint8_t *img, size_t upto, size_t total)
{
    static uint8_t msg[TL_LINK_MAX_PAYLOAD];
    const size_t piece = TL_LINK_MAX_PAYLOAD - 8u;
    uint16_t last = 0;
    for (size_t off = 0; off < upto; off += piece) {
        const size_t k = upto - off < piece ? upto - off : piece;
        tl_put_be32(msg, (uint32_t)off);
        tl_put_be32(msg + 4, (uint32_t)total);
        memcpy(msg + 8, img + off, k);
        last = send_msg(TL_LINK_T_TABLE, msg, 8u + k);
    }
    return last;
}

/* SAMPLES messages of sets [from, to) of the two inputs. */
static void send_samples(const int16_t *in0, const int16_t *in1, size_t from, size_t to)
{
    static uint8_t msg[TL_LINK_MAX_PAYLOAD];
    const size_t per = TL_LINK_MAX_PAYLOAD / 4u;
    for (size_t at = from; at < to; at += per) {
        const size_t k = to - at < per ? to - at : per;
        for (size_t i = 0; i < k; i++) {
            tl_put_be16(msg + 4u * i, (uint16_t)in0[at + i]);
            tl_put_be16(msg + 4u * i + 2u, (uint16_t)in1[at + i]);
        }
        send_msg(TL_LINK_T_SAMPLES, msg, 4u * k);
    }
}

static const reply *reply_to(uint16_t seq)
{
    for (size_t i = 0; i < n_replies; i++)
        if (replies[i].seq == seq)
            return &replies[i];
    fail_msg("no answer to message %u", (unsigned)seq);
    return NULL;
}

static void expect_ack(uint16_t seq, const char *what)
{
    const reply *a = reply_to(seq);
    if (a->type != TL_LINK_T_ACK)
        fail_msg("%s: message %u answered ERROR %s detail %u, expected ACK", what, (unsigned)seq,
                 tl_status_name((tl_status)a->status), (unsigned)a->detail);
}

static void expect_error(uint16_t seq, tl_status st, uint32_t detail, const char *what)
{
    const reply *a = reply_to(seq);
    if (a->type != TL_LINK_T_ERROR || a->status != (uint16_t)st || a->detail != detail)
        fail_msg("%s: message %u answered %s %s detail %u, expected ERROR %s detail %u", what, (unsigned)seq,
                 a->type == TL_LINK_T_ACK ? "ACK" : "ERROR", tl_status_name((tl_status)a->status),
                 (unsigned)a->detail, tl_status_name(st), (unsigned)detail);
}

static void boundaries_over_link(void **state)
{
    (void)state;
    static int16_t in0[2048], in1[2048];
    tl_rng rng;
    tl_rng_seed(&rng, 9);
    noise16(in0, 2048, &rng);
    noise16(in1, 2048, &rng);
    unsigned ok = 0, refused = 0;
    for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++) {
        const row *r = &rows[i];
        uint8_t rec[TL_LINK_SETUP_OCTETS];
        row_record(r, rec);
        tl_link_setup s;
        const int decodes = tl_link_setup_decode(rec, sizeof rec, &s, NULL) == TL_OK;
        session_begin();
        const uint16_t c0 = send_base_config();
        send_samples(in0, in1, 0, 1024); /* a run is going */
        size_t len = 0;
        uint8_t *img = NULL;
        uint32_t tlen = 0;
        if (decodes && r->want == TL_OK && row_table(&s)) {
            img = make_image(s.chain.points, s.chain.taps, &len);
            send_table(img, len, len);
            tlen = (uint32_t)len;
        }
        const uint16_t c1 = send_config(rec, tlen);
        const uint16_t after = seq_next; /* samples again: the old run (refused) or the new one goes on */
        send_samples(in0, in1, 1024, 2048);
        session_run();
        free(img);
        expect_ack(c0, r->what);
        if (r->want == TL_OK) {
            expect_ack(c1, r->what);
            ok++;
        } else {
            expect_error(c1, r->want, row_at(r), r->what);
            refused++;
        }
        expect_ack(after, r->what);
    }
    printf("    link: %u boundary rows ACKed, %u answered ERROR with the field's offset\n", ok, refused);
}

/* ---- a run that refuses commands goes on as if it never saw them --------------------- */

static void refused_commands_leave_the_run(void **state)
{
    (void)state;
    const size_t n = 5u * 8192u * 2u + 5000u; /* two integrations (2 spectra, 4 taps) and a bit */
    int16_t *in0 = malloc(n * sizeof *in0), *in1 = malloc(n * sizeof *in1);
    assert_non_null(in0);
    assert_non_null(in1);
    tl_rng rng;
    const uint64_t seed = tl_test_seed("refused_commands_leave_the_run", 21);
    tl_rng_seed(&rng, seed);
    noise16(in0, n, &rng);
    noise16(in1, n, &rng);
    const tl_link_setup b = base_setup();
    uint8_t good[TL_LINK_SETUP_OCTETS], rec[TL_LINK_SETUP_OCTETS];
    assert_int_equal(tl_link_setup_encode(&b, good, sizeof good), TL_OK);
    size_t l256 = 0;
    uint8_t *img256 = make_image(256, 4, &l256);
    uint8_t *bad256 = malloc(l256);
    assert_non_null(bad256);
    memcpy(bad256, img256, l256);
    bad256[l256 / 2u] ^= 0x01u; /* one coefficient bit: the CRC-32C no longer matches */

    /* the reference: configuration, samples, end */
    session_begin();
    send_config(good, 0);
    send_samples(in0, in1, 0, n);
    const uint16_t end_ref = send_msg(TL_LINK_T_END, NULL, 0);
    session_run();
    expect_ack(end_ref, "reference END");
    const uint32_t frames_ref = reply_to(end_ref)->frames;
    const size_t len_ref = frames_len;
    uint8_t *ref = malloc(len_ref);
    assert_non_null(ref);
    memcpy(ref, frames, len_ref);
    assert_true(frames_ref > 0u);
    assert_int_equal(len_ref, (size_t)frames_ref * TL_FRAME_WIRE_LEN(b.frame_len));

    /* the same, with refused commands in the middle of the first integration and between the two */
    session_begin();
    send_config(good, 0);
    send_samples(in0, in1, 0, 20000);
    memcpy(rec, good, sizeof rec);
    tl_put_be32(rec + O(POINTS), 1000);
    const uint16_t e1 = send_config(rec, 0);
    memcpy(rec, good, sizeof rec);
    tl_put_be32(rec + O(APID_HK), TL_PACKET_APID_IDLE);
    const uint16_t e2 = send_config(rec, 0);
    memcpy(rec, good, sizeof rec);
    tl_put_be32(rec + O(VCID), 8);
    const uint16_t e3 = send_config(rec, 0);
    memcpy(rec, good, sizeof rec);
    tl_put_be32(rec + O(SCID), 65536);
    const uint16_t e4 = send_config(rec, 0);
    memcpy(rec, good, sizeof rec);
    tl_put_be32(rec + O(VERSION), 2);
    const uint16_t e5 = send_config(rec, 0);
    const uint16_t e6 = send_config(good, 1234); /* a table that was never loaded */
    send_samples(in0, in1, 20000, 50000);
    /* a partial table, then a CONFIG that names it */
    send_table(img256, l256 / 2u, l256);
    memcpy(rec, good, sizeof rec);
    tl_put_be32(rec + O(POINTS), 256);
    const uint16_t e7 = send_config(rec, (uint32_t)l256);
    /* a whole table whose CRC fails: refused at its last piece, and the CONFIG after it */
    const uint16_t e8 = send_table(bad256, l256, l256);
    const uint16_t e9 = send_config(rec, (uint32_t)l256);
    send_samples(in0, in1, 50000, 70000);
    /* a good table of the wrong geometry for the configuration */
    send_table(img256, l256, l256);
    const uint16_t e10 = send_config(good, (uint32_t)l256);
    /* a CONFIG of the wrong length */
    const uint16_t e11 = send_msg(TL_LINK_T_CONFIG, good, sizeof good);
    send_samples(in0, in1, 70000, n);
    const uint16_t end = send_msg(TL_LINK_T_END, NULL, 0);
    session_run();
    expect_error(e1, TL_E_POINTS, O(POINTS), "points 1000");
    expect_error(e2, TL_E_APID, O(APID_HK), "apid_hk 2047");
    expect_error(e3, TL_E_FIELD_RANGE, O(VCID), "vcid 8");
    expect_error(e4, TL_E_FIELD_RANGE, O(SCID), "scid 65536");
    expect_error(e5, TL_E_FORMAT, O(VERSION), "record version 2");
    expect_error(e6, TL_E_TABLE_SIZE, 1234, "table never loaded");
    expect_error(e7, TL_E_TABLE_SIZE, (uint32_t)l256, "partial table");
    expect_error(e8, TL_E_TABLE_CRC, (uint32_t)l256, "table with a bad CRC");
    expect_error(e9, TL_E_TABLE_SIZE, (uint32_t)l256, "CONFIG naming the refused table");
    expect_error(e10, TL_E_TABLE_MISMATCH, (uint32_t)l256, "256-point table for 8192 points");
    expect_error(e11, TL_E_FORMAT, 0, "CONFIG without its table length");
    expect_ack(end, "END after refusals");
    if (reply_to(end)->frames != frames_ref || frames_len != len_ref || memcmp(frames, ref, len_ref) != 0)
        fail_msg("the run with refused commands sent %u frames (%zu octets), the reference %u (%zu octets): they "
                 "differ (seed %llu)",
                 (unsigned)reply_to(end)->frames, frames_len, (unsigned)frames_ref, len_ref,
                 (unsigned long long)seed);
    printf("    %u frames, byte for byte those of the run that never saw the 11 refused commands\n",
           (unsigned)frames_ref);

    /* and a good table sent during the run replaces the running one only with its CONFIG */
    session_begin();
    send_config(good, 0);
    send_samples(in0, in1, 0, 20000);
    const uint16_t t = send_table(img256, l256, l256);
    memcpy(rec, good, sizeof rec);
    tl_put_be32(rec + O(POINTS), 256);
    const uint16_t c = send_config(rec, (uint32_t)l256);
    const uint16_t c2 = send_config(rec, (uint32_t)l256); /* the table was used: the next CONFIG needs its own */
    session_run();
    expect_ack(t, "table during a run");
    expect_ack(c, "CONFIG with the table");
    expect_error(c2, TL_E_TABLE_SIZE, (uint32_t)l256, "CONFIG after the table was used");

    free(ref);
    free(img256);
    free(bad256);
    free(in0);
    free(in1);
}

/* The setup record's own length (docs/icd.md 8.4): 176 octets only. */
static void record_length(void **state)
{
    (void)state;
    const tl_link_setup b = base_setup();
    uint8_t rec[TL_LINK_SETUP_OCTETS + 1u];
    assert_int_equal(tl_link_setup_encode(&b, rec, sizeof rec), TL_OK);
    tl_link_setup s;
    uint32_t bad = NONE;
    assert_int_equal(tl_link_setup_decode(rec, TL_LINK_SETUP_OCTETS, &s, &bad), TL_OK);
    assert_int_equal(tl_link_setup_decode(rec, TL_LINK_SETUP_OCTETS - 1u, &s, &bad), TL_E_FORMAT);
    assert_int_equal(bad, O(VERSION));
    bad = NONE;
    assert_int_equal(tl_link_setup_decode(rec, TL_LINK_SETUP_OCTETS + 1u, &s, &bad), TL_E_FORMAT);
    assert_int_equal(bad, O(VERSION));
    assert_int_equal(tl_link_setup_check(NULL, &bad), TL_E_NULL);
    assert_int_equal(tl_config_check(NULL), TL_E_NULL);
    assert_int_equal(tl_downlink_config_check(NULL), TL_E_NULL);
}

/* tl_chain_load_taps: a bad image on a running chain changes no byte of it. */
static void table_load_refused_leaves_chain(void **state)
{
    (void)state;
    running R;
    start_running(&R);
    size_t l4 = 0, l2 = 0;
    uint8_t *good = make_image(8192, 4, &l4);
    uint8_t *other = make_image(8192, 2, &l2);
    uint8_t *bad = malloc(l4);
    assert_non_null(bad);
    struct {
        const char *what;
        size_t len;
        size_t flip;
        tl_status want;
    } cases[] = {
        { "CRC-32C mismatch", l4, l4 / 2u, TL_E_TABLE_CRC },
        { "bad magic", l4, 0, TL_E_TABLE_FORMAT },
        { "truncated by one octet", l4 - 1u, (size_t)-1, TL_E_TABLE_SIZE },
        { "header only", TL_TAPS_HEADER_BYTES, (size_t)-1, TL_E_TABLE_SIZE },
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        memcpy(bad, good, l4);
        if (cases[i].flip != (size_t)-1)
            bad[cases[i].flip] ^= 0x01u;
        const tl_status st = tl_chain_load_taps(R.chain, bad, cases[i].len);
        if (st != cases[i].want)
            fail_msg("%s: tl_chain_load_taps gave %s, expected %s", cases[i].what, tl_status_name(st),
                     tl_status_name(cases[i].want));
        assert_memory_equal(R.chain, R.chain_snap, sizeof *R.chain);
    }
    /* a good image of another geometry: TL_E_TABLE_MISMATCH, nothing changed */
    assert_int_equal(tl_chain_load_taps(R.chain, other, l2), TL_E_TABLE_MISMATCH);
    assert_memory_equal(R.chain, R.chain_snap, sizeof *R.chain);
    /* tl_chain_init with the same bad images on the running chain: nothing changed either */
    tl_config cfg = R.chain->cfg;
    memcpy(bad, good, l4);
    bad[l4 / 2u] ^= 0x01u;
    assert_int_equal(tl_chain_init(R.chain, &cfg, bad, l4), TL_E_TABLE_CRC);
    assert_memory_equal(R.chain, R.chain_snap, sizeof *R.chain);
    assert_int_equal(tl_chain_init(R.chain, &cfg, other, l2), TL_E_TABLE_MISMATCH);
    assert_memory_equal(R.chain, R.chain_snap, sizeof *R.chain);
    /* the good one is taken, and the running integration restarts (tl_chain.h) */
    assert_int_equal(tl_chain_load_taps(R.chain, good, l4), TL_OK);
    assert_int_equal(R.chain->spectra, 0u);
    assert_int_equal(R.chain->fill, 0u);
    free(good);
    free(other);
    free(bad);
    stop_running(&R);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(every_field_has_a_row),
        cmocka_unit_test(boundaries_host_api),
        cmocka_unit_test(record_length),
        cmocka_unit_test(table_load_refused_leaves_chain),
        cmocka_unit_test(boundaries_over_link),
        cmocka_unit_test(refused_commands_leave_the_run),
    };
    const int rc = cmocka_run_group_tests(tests, NULL, NULL);
    free(stream);
    free(frames);
    return rc;
}
