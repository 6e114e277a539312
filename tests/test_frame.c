/*
 * test_frame.c - TM transfer frames behind the attached sync marker
 * (firmware/tl_frame.h): the ASM and the header bits byte for byte, first
 * header pointers when packets span frames and when fill ends a frame,
 * frame counts wrapping at 256, the FECF catching corruption, the sync
 * search against a brute-force search, and a round trip packets -> frames
 * -> (junk and damage) -> frames -> packets, reassembled here by the rules
 * of docs/icd.md independently of the builder.
 */
#include "tl_test.h"

#include <stdlib.h>
#include <string.h>
#include "rng.h"
#include "tl_frame.h"
#include "tl_packet.h"

/* ---- helpers -------------------------------------------------------------- */

/* Bitwise CRC-16/IBM-3740 (RevEng catalogue: poly 0x1021, init 0xFFFF, no
 * reflection, no xorout), independent of the firmware table. */
static uint16_t ref_crc16(const uint8_t *p, size_t n)
{
    uint16_t crc = 0xFFFFu;
    for (size_t i = 0; i < n; i++) {
        crc = (uint16_t)(crc ^ ((unsigned)p[i] << 8));
        for (int b = 0; b < 8; b++)
            crc = (crc & 0x8000u) ? (uint16_t)((crc << 1) ^ 0x1021u) : (uint16_t)(crc << 1);
    }
    return crc;
}

/* Attached sync marker 0x1ACFFC1D, CCSDS 131.0-B (given in the project brief;
 * [memory]) */
static const uint8_t ASM_BYTES[4] = { 0x1A, 0xCF, 0xFC, 0x1D };

typedef struct capture {
    uint8_t *buf;
    size_t len, cap;
    unsigned frames;
    size_t wire_len;   /* every frame must have this length */
} capture;

static void sink_capture(void *user, const uint8_t *wire, size_t len)
{
    capture *c = user;
    if (len != c->wire_len)
        fail_msg("sink got %zu octets, expected %zu", len, c->wire_len);
    if (c->len + len > c->cap) {
        c->cap = (c->cap + len) * 2u;
        c->buf = realloc(c->buf, c->cap);
        if (c->buf == NULL)
            abort();
    }
    memcpy(c->buf + c->len, wire, len);
    c->len += len;
    c->frames++;
}

static void capture_init(capture *c, uint32_t frame_len)
{
    memset(c, 0, sizeof *c);
    c->wire_len = (size_t)frame_len + 4u;
}

static const uint8_t *frame_at(const capture *c, unsigned k)
{
    assert_true(k < c->frames);
    return c->buf + (size_t)k * c->wire_len;
}

/* A telemetry packet of exactly `total` octets (>= 15), APID 0x100, content
 * from the seed. */
static size_t make_packet(tl_packet_writer *w, size_t total, uint8_t seed, uint8_t *dst)
{
    uint8_t user[4080];
    for (size_t i = 0; i + 15u < total; i++)
        user[i] = (uint8_t)(seed + 3u * i);
    size_t n = 0;
    assert_int_equal(tl_packet_write(w, 0x100, (tl_cuc){ seed, 0u }, user, total - 15u, dst, 4095, &n), TL_OK);
    assert_int_equal(n, total);
    return n;
}

/* Expected header octets for SCID, VCID, counts and FHP (computed here, not
 * by the builder): see the bit arithmetic in asm_and_header_bits. */
static void expect_header(const uint8_t *wire, unsigned scid, unsigned vcid, unsigned count, unsigned fhp)
{
    const unsigned w0 = (0u << 14) | (scid << 4) | (vcid << 1) | 0u;
    const unsigned w2 = (0u << 15) | (0u << 14) | (0u << 13) | (3u << 11) | fhp;
    const uint8_t want[10] = { 0x1A, 0xCF, 0xFC, 0x1D, (uint8_t)(w0 >> 8), (uint8_t)w0, (uint8_t)count,
                               (uint8_t)count, (uint8_t)(w2 >> 8), (uint8_t)w2 };
    assert_memory_equal(wire, want, 10);
}

static void expect_fecf(const uint8_t *wire, size_t frame_len)
{
    const uint16_t c = ref_crc16(wire + 4, frame_len - 2u);
    assert_int_equal(wire[4 + frame_len - 2u], c >> 8);
    assert_int_equal(wire[4 + frame_len - 1u], c & 0xFFu);
}

/* ---- layout --------------------------------------------------------------- */

static void asm_and_header_bits(void **state)
{
    (void)state;
    /* Header bits (CCSDS 132.0-B-2 transfer frame primary header [memory],
     * as in the project brief), SCID 0x2A5 = 10 1010 0101, VCID 5 = 101:
     *   octets 0-1: version 00 | SCID 1010100101 | VCID 101 | OCF flag 0
     *             = 00 1010 1001 0110 10 -> 0010 1010 0101 1010 = 0x2A5A
     *             (= 0x2A5 << 4 | 5 << 1)
     *   octets 2, 3: master and virtual channel frame counts
     *   octets 4-5: sec. header 0 | sync 0 | order 0 | segment id 11 | FHP
     *             = 0x1800 | FHP: FHP 0 -> 18 00, 0x7FF -> 1F FF,
     *               0x7FE -> 1F FE, 60 = 0x03C -> 18 3C, 40 = 0x028 -> 18 28 */
    enum { L = 128, D = 120 };
    static tl_frame_builder fb;
    capture cap;
    capture_init(&cap, L);
    assert_int_equal(tl_frame_builder_init(&fb, L, 0x2A5, 5, sink_capture, &cap), TL_OK);
    /* 0xA7 idle frames: counts 0 .. 0xA6 */
    for (unsigned k = 0; k < 0xA7u; k++)
        assert_int_equal(tl_frame_put_idle_frame(&fb), TL_OK);
    assert_int_equal(cap.frames, 0xA7u);
    for (unsigned k = 0; k < 0xA7u; k++) {
        const uint8_t *f = frame_at(&cap, k);
        expect_header(f, 0x2A5, 5, k, 0x7FE);
        for (unsigned i = 0; i < D; i++)
            assert_int_equal(f[10 + i], 0x55);
        expect_fecf(f, L);
    }
    const uint8_t *f0 = frame_at(&cap, 0x10);
    const uint8_t hdr10[10] = { 0x1A, 0xCF, 0xFC, 0x1D, 0x2A, 0x5A, 0x10, 0x10, 0x1F, 0xFE };
    assert_memory_equal(f0, hdr10, 10);

    /* a 300-octet packet, then a 100-octet packet, then a flush */
    tl_packet_writer w;
    assert_int_equal(tl_packet_writer_init(&w, 4095), TL_OK);
    static uint8_t p1[4095], p2[4095];
    make_packet(&w, 300, 1, p1);
    make_packet(&w, 100, 2, p2);
    assert_int_equal(tl_frame_put_packet(&fb, p1, 300), TL_OK);
    assert_int_equal(cap.frames, 0xA7u + 2u); /* 300 = 120 + 120 + 60 */
    assert_int_equal(tl_frame_put_packet(&fb, p2, 100), TL_OK);
    assert_int_equal(cap.frames, 0xA7u + 3u); /* 60 + 60 fills the third */
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    assert_int_equal(cap.frames, 0xA7u + 4u);

    const uint8_t *f;
    f = frame_at(&cap, 0xA7); /* P1 octets 0..119, P1 starts at 0 */
    const uint8_t hdrA7[10] = { 0x1A, 0xCF, 0xFC, 0x1D, 0x2A, 0x5A, 0xA7, 0xA7, 0x18, 0x00 };
    assert_memory_equal(f, hdrA7, 10);
    assert_memory_equal(f + 10, p1, D);
    expect_fecf(f, L);
    f = frame_at(&cap, 0xA8); /* P1 octets 120..239: no packet starts */
    const uint8_t hdrA8[10] = { 0x1A, 0xCF, 0xFC, 0x1D, 0x2A, 0x5A, 0xA8, 0xA8, 0x1F, 0xFF };
    assert_memory_equal(f, hdrA8, 10);
    assert_memory_equal(f + 10, p1 + 120, D);
    expect_fecf(f, L);
    f = frame_at(&cap, 0xA9); /* P1 240..299 then P2 0..59: P2 starts at 60 */
    const uint8_t hdrA9[10] = { 0x1A, 0xCF, 0xFC, 0x1D, 0x2A, 0x5A, 0xA9, 0xA9, 0x18, 0x3C };
    assert_memory_equal(f, hdrA9, 10);
    assert_memory_equal(f + 10, p1 + 240, 60);
    assert_memory_equal(f + 70, p2, 60);
    expect_fecf(f, L);
    f = frame_at(&cap, 0xAA); /* P2 60..99 (40 octets), then an 80-octet idle packet at 40 */
    const uint8_t hdrAA[10] = { 0x1A, 0xCF, 0xFC, 0x1D, 0x2A, 0x5A, 0xAA, 0xAA, 0x18, 0x28 };
    assert_memory_equal(f, hdrAA, 10);
    assert_memory_equal(f + 10, p2 + 60, 40);
    /* idle packet: APID 2047, unsegmented, idle count 0, length field 80 - 7 = 73 */
    const uint8_t idle_hdr[6] = { 0x07, 0xFF, 0xC0, 0x00, 0x00, 73 };
    assert_memory_equal(f + 50, idle_hdr, 6);
    for (unsigned i = 56; i < 10u + D; i++)
        assert_int_equal(f[i], 0x55);
    expect_fecf(f, L);

    /* other corners of the first word: SCID 0x3FF, VCID 7 -> 0x3FF0 | 0xE =
     * 0x3FFE; SCID 1, VCID 0 -> 0x0010; SCID 0, VCID 1 -> 0x0002 */
    const struct { uint16_t scid; uint8_t vcid; uint8_t b0, b1; } id[] = {
        { 0x3FF, 7, 0x3F, 0xFE }, { 1, 0, 0x00, 0x10 }, { 0, 1, 0x00, 0x02 }, { 0x200, 0, 0x20, 0x00 },
    };
    for (size_t i = 0; i < sizeof id / sizeof id[0]; i++) {
        capture c2;
        capture_init(&c2, 2048);
        assert_int_equal(tl_frame_builder_init(&fb, 2048, id[i].scid, id[i].vcid, sink_capture, &c2), TL_OK);
        assert_int_equal(tl_frame_put_idle_frame(&fb), TL_OK);
        assert_int_equal(c2.frames, 1u);
        assert_int_equal(c2.buf[4], id[i].b0);
        assert_int_equal(c2.buf[5], id[i].b1);
        expect_header(c2.buf, id[i].scid, id[i].vcid, 0, 0x7FE);
        expect_fecf(c2.buf, 2048);
        free(c2.buf);
    }
    free(cap.buf);
}

static void frame_counts_wrap(void **state)
{
    (void)state;
    static tl_frame_builder fb;
    capture cap;
    capture_init(&cap, 200);
    assert_int_equal(tl_frame_builder_init(&fb, 200, 77, 2, sink_capture, &cap), TL_OK);
    for (unsigned k = 0; k < 600u; k++)
        assert_int_equal(tl_frame_put_idle_frame(&fb), TL_OK);
    /* 8-bit counts (CCSDS 132.0-B-2 [memory]): frame k carries k mod 256 */
    for (unsigned k = 0; k < 600u; k++) {
        const uint8_t *f = frame_at(&cap, k);
        assert_int_equal(f[6], k % 256u);
        assert_int_equal(f[7], k % 256u);
    }
    assert_int_equal(frame_at(&cap, 255)[6], 255);
    assert_int_equal(frame_at(&cap, 256)[6], 0);
    assert_int_equal(fb.frames, 600u);
    /* reset starts the counts again */
    tl_frame_builder_reset(&fb);
    assert_int_equal(tl_frame_put_idle_frame(&fb), TL_OK);
    assert_int_equal(frame_at(&cap, 600)[6], 0);
    free(cap.buf);
}

/* Flush: an idle packet when 7 or more octets are left, fill octets 0x55
 * when 1 .. 6 are left, nothing when the frame is empty. */
static void flush_fill_and_fhp(void **state)
{
    (void)state;
    enum { L = 128, D = 120 };
    static tl_frame_builder fb;
    capture cap;
    capture_init(&cap, L);
    assert_int_equal(tl_frame_builder_init(&fb, L, 9, 1, sink_capture, &cap), TL_OK);
    tl_packet_writer w;
    assert_int_equal(tl_packet_writer_init(&w, 4095), TL_OK);
    static uint8_t p[4095];
    const uint8_t *f;

    /* 115 octets, flush: 5 fill octets at 115..119, FHP 0 */
    make_packet(&w, 115, 3, p);
    assert_int_equal(tl_frame_put_packet(&fb, p, 115), TL_OK);
    assert_int_equal(cap.frames, 0u);
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    assert_int_equal(cap.frames, 1u);
    f = frame_at(&cap, 0);
    expect_header(f, 9, 1, 0, 0);
    assert_memory_equal(f + 10, p, 115);
    for (unsigned i = 10u + 115u; i < 10u + D; i++)
        assert_int_equal(f[i], 0x55);
    /* a second flush has nothing to do */
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    assert_int_equal(cap.frames, 1u);

    /* 235 octets = 120 + 115: the second frame holds no packet start, and its
     * 5 fill octets leave the FHP at 0x7FF */
    make_packet(&w, 235, 4, p);
    assert_int_equal(tl_frame_put_packet(&fb, p, 235), TL_OK);
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    assert_int_equal(cap.frames, 3u);
    expect_header(frame_at(&cap, 1), 9, 1, 1, 0);
    f = frame_at(&cap, 2);
    expect_header(f, 9, 1, 2, 0x7FF);
    assert_memory_equal(f + 10, p + 120, 115);
    for (unsigned i = 10u + 115u; i < 10u + D; i++)
        assert_int_equal(f[i], 0x55);
    expect_fecf(f, L);

    /* exactly one data field: the frame goes out at once, flush adds nothing;
     * the next packet starts the next frame at 0 */
    make_packet(&w, 120, 5, p);
    assert_int_equal(tl_frame_put_packet(&fb, p, 120), TL_OK);
    assert_int_equal(cap.frames, 4u);
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    assert_int_equal(cap.frames, 4u);
    expect_header(frame_at(&cap, 3), 9, 1, 3, 0);

    /* 113 octets: 7 left, the shortest idle packet 07 FF C0 00 00 00 55 */
    make_packet(&w, 113, 6, p);
    assert_int_equal(tl_frame_put_packet(&fb, p, 113), TL_OK);
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    f = frame_at(&cap, 4);
    expect_header(f, 9, 1, 4, 0);
    const uint8_t idle7[7] = { 0x07, 0xFF, 0xC0, 0x00, 0x00, 0x00, 0x55 };
    assert_memory_equal(f + 10 + 113, idle7, 7);

    /* 114 octets: 6 left, fill; the idle count moved by one packet only */
    make_packet(&w, 114, 7, p);
    assert_int_equal(tl_frame_put_packet(&fb, p, 114), TL_OK);
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    f = frame_at(&cap, 5);
    for (unsigned i = 10u + 114u; i < 10u + D; i++)
        assert_int_equal(f[i], 0x55);
    assert_int_equal(fb.idle_count, 1u);

    /* put_idle_frame with a partial frame: flush (a 20-octet packet leaves
     * 100: idle packet, count 1), then the all-idle frame */
    make_packet(&w, 20, 8, p);
    assert_int_equal(tl_frame_put_packet(&fb, p, 20), TL_OK);
    assert_int_equal(tl_frame_put_idle_frame(&fb), TL_OK);
    assert_int_equal(cap.frames, 8u);
    f = frame_at(&cap, 6);
    expect_header(f, 9, 1, 6, 0);
    const uint8_t idle100[6] = { 0x07, 0xFF, 0xC0, 0x01, 0x00, 100 - 7 };
    assert_memory_equal(f + 10 + 20, idle100, 6);
    f = frame_at(&cap, 7);
    expect_header(f, 9, 1, 7, 0x7FE);
    expect_fecf(f, L);
    free(cap.buf);
}

static void builder_checks(void **state)
{
    (void)state;
    static tl_frame_builder fb;
    capture cap;
    capture_init(&cap, 128);
    memset(&fb, 0x77, sizeof fb);
    /* 128 .. 2048 octets (2048: the CCSDS 132.0-B maximum [memory]) */
    assert_int_equal(tl_frame_builder_init(&fb, 127, 0, 0, sink_capture, &cap), TL_E_FRAME_LEN);
    assert_int_equal(tl_frame_builder_init(&fb, 2049, 0, 0, sink_capture, &cap), TL_E_FRAME_LEN);
    assert_int_equal(tl_frame_builder_init(&fb, 128, 1024, 0, sink_capture, &cap), TL_E_FIELD_RANGE);
    assert_int_equal(tl_frame_builder_init(&fb, 128, 0, 8, sink_capture, &cap), TL_E_FIELD_RANGE);
    assert_int_equal(tl_frame_builder_init(&fb, 128, 0, 0, NULL, &cap), TL_E_NULL);
    assert_int_equal(tl_frame_builder_init(NULL, 128, 0, 0, sink_capture, &cap), TL_E_NULL);
    assert_int_equal(fb.frame_len, 0x77777777u); /* untouched */
    static tl_frame_builder z;
    memset(&z, 0, sizeof z);
    const uint8_t idle7[7] = { 0x07, 0xFF, 0xC0, 0x00, 0x00, 0x00, 0x55 };
    assert_int_equal(tl_frame_put_packet(&z, idle7, 7), TL_E_NOT_INIT);
    assert_int_equal(tl_frame_flush(&z), TL_E_NOT_INIT);
    assert_int_equal(tl_frame_put_idle_frame(&z), TL_E_NOT_INIT);
    assert_int_equal(tl_frame_builder_init(&fb, 128, 0, 0, sink_capture, &cap), TL_OK);
    /* the packet's length field must match len */
    assert_int_equal(tl_frame_put_packet(&fb, idle7, 7), TL_OK);
    assert_int_equal(tl_frame_put_packet(&fb, idle7, 8), TL_E_FORMAT);
    assert_int_equal(tl_frame_put_packet(&fb, idle7, 6), TL_E_FORMAT);
    assert_int_equal(tl_frame_put_packet(&fb, NULL, 7), TL_E_NULL);
    assert_int_equal(fb.fill, 7u);
    assert_int_equal(TL_FRAME_MAX_EMIT(4095, 128), 35u); /* ceil(4095 / 120) */
    free(cap.buf);
}

/* ---- parser ----------------------------------------------------------------- */

static void parse_fields_and_rejects(void **state)
{
    (void)state;
    enum { L = 128 };
    static tl_frame_builder fb;
    capture cap;
    capture_init(&cap, L);
    assert_int_equal(tl_frame_builder_init(&fb, L, 0x155, 6, sink_capture, &cap), TL_OK);
    tl_packet_writer w;
    assert_int_equal(tl_packet_writer_init(&w, 4095), TL_OK);
    static uint8_t p[4095];
    make_packet(&w, 50, 9, p);
    assert_int_equal(tl_frame_put_idle_frame(&fb), TL_OK);
    assert_int_equal(tl_frame_put_packet(&fb, p, 50), TL_OK);
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    assert_int_equal(cap.frames, 2u);
    const size_t W = L + 4u;
    uint8_t *b = malloc(W); /* exactly one frame: reads past it trip ASan */
    assert_non_null(b);
    memcpy(b, frame_at(&cap, 1), W);
    tl_frame_view v;
    assert_int_equal(tl_frame_parse(b, W, L, &v), TL_OK);
    assert_int_equal(v.scid, 0x155);
    assert_int_equal(v.vcid, 6);
    assert_int_equal(v.mc_count, 1);
    assert_int_equal(v.vc_count, 1);
    assert_int_equal(v.sync_flag, 0);
    assert_int_equal(v.order_flag, 0);
    assert_int_equal(v.seg_id, 3);
    assert_int_equal(v.fhp, 0);
    assert_ptr_equal(v.data, b + 10);
    assert_int_equal(v.data_len, 120u);
    assert_memory_equal(v.data, p, 50);
    /* every truncation */
    for (size_t n = 0; n < W; n++)
        assert_int_equal(tl_frame_parse(b, n, L, &v), TL_E_SPACE);
    /* every octet changed to each of its 255 other values: the ASM compare or
     * the FECF rejects it (CRC-16 detects every burst up to 16 bits: common
     * practice, no source) */
    unsigned rejected = 0;
    for (size_t at = 0; at < W; at++) {
        for (unsigned x = 1; x < 256u; x++) {
            b[at] ^= (uint8_t)x;
            if (tl_frame_parse(b, W, L, &v) == TL_E_FORMAT)
                rejected++;
            b[at] ^= (uint8_t)x;
        }
    }
    assert_int_equal(rejected, 132u * 255u);
    /* header checks independent of the FECF: version 01, OCF flag 1 and frame
     * secondary header flag 1, each with a correct FECF, are refused */
    const struct { size_t at; uint8_t x; } hdr[] = { { 4, 0x40 }, { 5, 0x01 }, { 8, 0x80 } };
    for (size_t i = 0; i < 3; i++) {
        b[hdr[i].at] ^= hdr[i].x;
        const uint16_t c = ref_crc16(b + 4, L - 2u);
        const uint8_t save[2] = { b[W - 2], b[W - 1] };
        b[W - 2] = (uint8_t)(c >> 8);
        b[W - 1] = (uint8_t)c;
        assert_int_equal(tl_frame_parse(b, W, L, &v), TL_E_FORMAT);
        b[hdr[i].at] ^= hdr[i].x;
        b[W - 2] = save[0];
        b[W - 1] = save[1];
    }
    assert_int_equal(tl_frame_parse(b, W, L, &v), TL_OK);
    /* the wrong managed length fails the FECF; out-of-range lengths are refused */
    uint8_t *b2 = malloc(W + 1u);
    assert_non_null(b2);
    memcpy(b2, b, W);
    b2[W] = 0x5A;
    assert_int_equal(tl_frame_parse(b2, W + 1u, L + 1u, &v), TL_E_FORMAT);
    assert_int_equal(tl_frame_parse(b2, W + 1u, L, &v), TL_OK);
    /* but a CRC without a final xor does not see zero octets appended to a
     * valid codeword (the register stays 0): the ends must agree on the frame
     * length (follows from the RevEng parameters; docs/icd.md) */
    b2[W] = 0x00;
    assert_int_equal(tl_frame_parse(b2, W + 1u, L + 1u, &v), TL_OK);
    free(b2);
    assert_int_equal(tl_frame_parse(b, W, 127, &v), TL_E_FRAME_LEN);
    assert_int_equal(tl_frame_parse(b, W, 2049, &v), TL_E_FRAME_LEN);
    assert_int_equal(tl_frame_parse(NULL, W, L, &v), TL_E_NULL);
    free(b);
    free(cap.buf);
}

/* Brute force: first full match, else the first tail that is a proper
 * prefix of the ASM, else len. */
static size_t naive_asm(const uint8_t *b, size_t len, int *found)
{
    for (size_t p = 0; p + 4u <= len; p++)
        if (memcmp(b + p, ASM_BYTES, 4) == 0) {
            *found = 1;
            return p;
        }
    *found = 0;
    for (size_t p = len >= 3u ? len - 3u : 0u; p < len; p++)
        if (memcmp(b + p, ASM_BYTES, len - p) == 0)
            return p;
    return len;
}

static void find_asm(void **state)
{
    (void)state;
    size_t off = 99;
    const uint8_t a[] = { 0x1A, 0xCF, 0xFC, 0x1D, 0x00 };
    assert_int_equal(tl_frame_find_asm(a, sizeof a, &off), TL_OK);
    assert_int_equal(off, 0u);
    const uint8_t b[] = { 0x00, 0x1A, 0x1A, 0xCF, 0xFC, 0x1D };
    assert_int_equal(tl_frame_find_asm(b, sizeof b, &off), TL_OK);
    assert_int_equal(off, 2u);
    const uint8_t c[] = { 0x1A, 0xCF, 0xFC, 0x00, 0x1A, 0xCF };
    assert_int_equal(tl_frame_find_asm(c, sizeof c, &off), TL_E_SPACE);
    assert_int_equal(off, 4u); /* keep "1A CF" */
    const uint8_t d[] = { 0x1A, 0xCF, 0xFC, 0x1C, 0x1D, 0x00 };
    assert_int_equal(tl_frame_find_asm(d, sizeof d, &off), TL_E_SPACE);
    assert_int_equal(off, 6u);
    assert_int_equal(tl_frame_find_asm(d, 0, &off), TL_E_SPACE);
    assert_int_equal(off, 0u);
    assert_int_equal(tl_frame_find_asm(d, 3, &off), TL_E_SPACE); /* 1A CF FC */
    assert_int_equal(off, 0u);
    assert_int_equal(tl_frame_find_asm(NULL, 3, &off), TL_E_NULL);
    /* random buffers over the ASM's own octets and 0x00, so partial matches are common */
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("find_asm", 0xF2A3E001u));
    const uint8_t alphabet[5] = { 0x1A, 0xCF, 0xFC, 0x1D, 0x00 };
    unsigned found_count = 0;
    for (unsigned trial = 0; trial < 200000u; trial++) {
        const size_t len = (size_t)(tl_rng_u64(&r) % 24u);
        uint8_t *buf = malloc(len > 0 ? len : 1);
        assert_non_null(buf);
        for (size_t i = 0; i < len; i++)
            buf[i] = (tl_rng_u64(&r) % 3u) ? ASM_BYTES[i % 4u] : alphabet[tl_rng_u64(&r) % 5u];
        int found = 0;
        const size_t want = naive_asm(buf, len, &found);
        const tl_status st = tl_frame_find_asm(buf, len, &off);
        if (st != (found ? TL_OK : TL_E_SPACE) || off != want)
            fail_msg("trial %u len %zu: %s at %zu, brute force %s at %zu", trial, len, tl_status_name(st), off,
                     found ? "found" : "not found", want);
        found_count += (unsigned)found;
        free(buf);
    }
    assert_true(found_count > 10000u && found_count < 190000u); /* both branches exercised */
}

/* ---- round trip ------------------------------------------------------------- */

/* The ground's reassembly, written from the rules in docs/icd.md:
 * frames in VC count order; after a gap (or at start) skip to the FHP of
 * the next frame that has one; at a packet boundary an octet whose top three
 * bits are not 000 starts fill that runs to the end of the data field; FHP
 * 0x7FE frames are all idle data. */
typedef struct ground {
    uint8_t pkt[65542];
    size_t have;
    int in_sync, have_vc;
    uint8_t next_vc;
    unsigned gaps, fhp_checked, joined, skipped, idle_frames, idle_packets, fills;
    /* expected telemetry packets, in order */
    const uint8_t *orig;
    const size_t *off, *len;
    const size_t *expect;  /* indices of the packets that should arrive */
    size_t n_expect, got;
} ground;

static void deliver(ground *g, const uint8_t *p, size_t n)
{
    tl_packet_view v;
    assert_int_equal(tl_packet_parse(p, n, &v), TL_OK);
    assert_int_equal(v.packet_len, n);
    if (v.apid == TL_PACKET_APID_IDLE) {
        g->idle_packets++;
        return;
    }
    if (g->got >= g->n_expect)
        fail_msg("packet %zu arrived, only %zu expected", g->got, g->n_expect);
    const size_t k = g->expect[g->got];
    if (g->len[k] != n || memcmp(g->orig + g->off[k], p, n) != 0)
        fail_msg("packet %zu (original %zu, %zu octets) differs, got %zu octets", g->got, k, g->len[k], n);
    g->got++;
}

static void ground_frame(ground *g, const tl_frame_view *v)
{
    if (g->have_vc && v->vc_count != g->next_vc) {
        g->gaps++;
        g->in_sync = 0;
        g->have = 0;
    }
    g->have_vc = 1;
    g->next_vc = (uint8_t)(v->vc_count + 1u);
    if (v->fhp == TL_FRAME_FHP_IDLE) {
        for (size_t i = 0; i < v->data_len; i++)
            assert_int_equal(v->data[i], 0x55);
        assert_true(!g->in_sync || g->have == 0u); /* only ever sent between packets */
        g->idle_frames++;
        return;
    }
    const int from_start = g->in_sync;
    size_t pos = 0;
    if (!g->in_sync) {
        if (v->fhp == TL_FRAME_FHP_NONE) {
            g->skipped++;
            return;
        }
        assert_true(v->fhp < v->data_len);
        g->joined++;
        pos = v->fhp;
        g->in_sync = 1;
        g->have = 0;
    }
    size_t first_start = TL_FRAME_FHP_NONE;
    while (pos < v->data_len) {
        if (g->have == 0u) {
            if ((v->data[pos] & 0xE0u) != 0u) { /* not packet version 000: fill */
                assert_true(v->data_len - pos < 7u);
                for (size_t i = pos; i < v->data_len; i++)
                    assert_int_equal(v->data[i], 0x55);
                g->fills++;
                break;
            }
            if (first_start == TL_FRAME_FHP_NONE)
                first_start = pos;
        }
        size_t need = g->have < 6u ? 6u - g->have
                                   : 6u + (((size_t)g->pkt[4] << 8) | g->pkt[5]) + 1u - g->have;
        if (need > v->data_len - pos)
            need = v->data_len - pos;
        memcpy(g->pkt + g->have, v->data + pos, need);
        g->have += need;
        pos += need;
        if (g->have > 6u && g->have == 6u + (((size_t)g->pkt[4] << 8) | g->pkt[5]) + 1u) {
            deliver(g, g->pkt, g->have);
            g->have = 0;
        }
    }
    if (from_start) { /* the FHP must name the first packet start we met */
        if (v->fhp != first_start)
            fail_msg("frame VC %u: FHP 0x%03X, first packet starts at 0x%03zX", v->vc_count, v->fhp, first_start);
        g->fhp_checked++;
    }
}

static void round_trip(tl_rng *r, uint32_t frame_len, unsigned npkt, int damage)
{
    printf("[ INFO     ] round trip: frame length %u, %u packets, %s\n", frame_len, npkt,
           damage ? "junk and damaged frames" : "clean");
    static tl_frame_builder fb;
    capture cap;
    capture_init(&cap, frame_len);
    assert_int_equal(tl_frame_builder_init(&fb, frame_len, 0x1AB, 3, sink_capture, &cap), TL_OK);
    tl_packet_writer w;
    assert_int_equal(tl_packet_writer_init(&w, 4095), TL_OK);
    uint8_t *orig = malloc((size_t)npkt * 4095u);
    size_t *off = malloc(sizeof *off * npkt), *len = malloc(sizeof *len * npkt);
    unsigned *first = malloc(sizeof *first * npkt), *last = malloc(sizeof *last * npkt);
    assert_true(orig && off && len && first && last);
    static uint8_t user[4080];
    size_t total = 0;
    for (unsigned i = 0; i < npkt; i++) {
        const size_t ulen = (tl_rng_u64(r) & 1u) ? (size_t)(tl_rng_u64(r) % 200u) : (size_t)(tl_rng_u64(r) % 4081u);
        for (size_t k = 0; k < ulen; k++)
            user[k] = (uint8_t)tl_rng_u64(r);
        const uint16_t apid = (uint16_t)(tl_rng_u64(r) % 3u);
        const tl_cuc t = { i, (uint16_t)tl_rng_u64(r) };
        assert_int_equal(tl_packet_write(&w, apid, t, user, ulen, orig + total, 4095, &len[i]), TL_OK);
        off[i] = total;
        first[i] = fb.frames;
        assert_int_equal(tl_frame_put_packet(&fb, orig + total, len[i]), TL_OK);
        last[i] = fb.fill == 0u ? fb.frames - 1u : fb.frames;
        total += len[i];
        const uint64_t x = tl_rng_u64(r) % 100u;
        if (x < 4u)
            assert_int_equal(tl_frame_flush(&fb), TL_OK);
        else if (x < 6u)
            assert_int_equal(tl_frame_put_idle_frame(&fb), TL_OK);
    }
    assert_int_equal(tl_frame_flush(&fb), TL_OK);
    assert_int_equal(fb.fill, 0u);
    const unsigned nframes = cap.frames;
    assert_int_equal(fb.frames, nframes);

    /* the received stream: frames, with junk between some and a bit flipped
     * in some (anywhere, ASM included) */
    const size_t W = cap.wire_len;
    uint8_t *bad = calloc(nframes, 1);
    uint8_t *rx = malloc((size_t)nframes * (W + 40u));
    assert_true(bad && rx);
    size_t rxlen = 0;
    unsigned nbad = 0;
    for (unsigned k = 0; k < nframes; k++) {
        if (damage && tl_rng_u64(r) % 8u == 0u) {
            const size_t junk = (size_t)(tl_rng_u64(r) % 40u);
            for (size_t i = 0; i < junk; i++)
                rx[rxlen++] = (uint8_t)tl_rng_u64(r);
        }
        memcpy(rx + rxlen, frame_at(&cap, k), W);
        if (damage && tl_rng_u64(r) % 12u == 0u) {
            const size_t bit = (size_t)(tl_rng_u64(r) % (W * 8u));
            rx[rxlen + bit / 8u] ^= (uint8_t)(0x80u >> (bit % 8u));
            bad[k] = 1;
            nbad++;
        }
        rxlen += W;
    }
    /* what must arrive: every packet whose frames all arrived intact */
    size_t *expect = malloc(sizeof *expect * npkt);
    assert_non_null(expect);
    size_t n_expect = 0;
    for (unsigned i = 0; i < npkt; i++) {
        int ok = 1;
        for (unsigned k = first[i]; k <= last[i]; k++)
            ok &= !bad[k];
        if (ok)
            expect[n_expect++] = i;
    }
    /* the ground: sync search, frame check, reassembly */
    ground *g = calloc(1, sizeof *g);
    assert_non_null(g);
    g->orig = orig;
    g->off = off;
    g->len = len;
    g->expect = expect;
    g->n_expect = n_expect;
    size_t pos = 0;
    unsigned good_frames = 0, rejected = 0;
    for (;;) {
        size_t at = 0;
        if (tl_frame_find_asm(rx + pos, rxlen - pos, &at) != TL_OK)
            break;
        pos += at;
        tl_frame_view v;
        const tl_status st = tl_frame_parse(rx + pos, rxlen - pos, frame_len, &v);
        if (st == TL_E_SPACE)
            break;
        if (st != TL_OK) {
            rejected++;
            pos += 1; /* look for the next ASM past this one */
            continue;
        }
        assert_int_equal(v.scid, 0x1AB);
        assert_int_equal(v.vcid, 3);
        assert_int_equal(v.seg_id, 3);
        ground_frame(g, &v);
        good_frames++;
        pos += W;
    }
    assert_int_equal(good_frames, nframes - nbad);
    assert_int_equal(g->got, n_expect);
    assert_true(g->fhp_checked > 0u);
    if (!damage) {
        assert_int_equal(n_expect, npkt);
        assert_int_equal(g->gaps, 0u);
        assert_int_equal(rejected, 0u);
        /* the first frame is joined at its FHP; every later frame's FHP is checked,
         * except all-idle frames */
        assert_int_equal(g->joined, 1u);
        assert_int_equal(g->skipped, 0u);
        assert_int_equal(g->fhp_checked + g->idle_frames + 1u, nframes);
    } else {
        assert_true(nbad > 0u && n_expect < npkt);
        assert_true(g->gaps > 0u && g->joined > 1u);
    }
    assert_int_equal(g->fhp_checked + g->joined + g->skipped + g->idle_frames, good_frames);
    printf("[ INFO     ] %u frames (%u damaged), %zu of %u packets back, %u idle packets, %u fills, "
           "%u FHPs checked\n",
           nframes, nbad, g->got, npkt, g->idle_packets, g->fills, g->fhp_checked);
    free(g);
    free(expect);
    free(rx);
    free(bad);
    free(last);
    free(first);
    free(len);
    free(off);
    free(orig);
    free(cap.buf);
}

static void round_trip_clean(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("round_trip_clean", 0xF2A3E002u));
    round_trip(&r, 128, 1500, 0);
    round_trip(&r, 2048, 1500, 0);
    round_trip(&r, 128u + (uint32_t)(tl_rng_u64(&r) % 1921u), 1500, 0);
}

static void round_trip_damaged(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("round_trip_damaged", 0xF2A3E003u));
    round_trip(&r, 128, 1500, 1);
    round_trip(&r, 1115, 1500, 1);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(asm_and_header_bits),
        cmocka_unit_test(frame_counts_wrap),
        cmocka_unit_test(flush_fill_and_fhp),
        cmocka_unit_test(builder_checks),
        cmocka_unit_test(parse_fields_and_rejects),
        cmocka_unit_test(find_asm),
        cmocka_unit_test(round_trip_clean),
        cmocka_unit_test(round_trip_damaged),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
