/*
 * test_packet.c - CCSDS space packets (firmware/tl_packet.h): the primary
 * header against the worked example and the bit layout of CCSDS 133.0-B-2,
 * our telemetry packet byte for byte, sequence counts, the length and APID
 * limits, and a parser that rejects every truncation and corruption.
 */
#include "tl_test.h"

#include <stdlib.h>
#include <string.h>
#include "rng.h"
#include "tl_packet.h"

/* Independent CRC for expected bytes: bitwise CRC-16/IBM-3740 (RevEng
 * catalogue parameters: poly 0x1021, init 0xFFFF, no reflection, no xorout). */
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

static void primary_header_worked_example(void **state)
{
    (void)state;
    /* ../shared/sources.md, CCSDS 133.0-B-2 worked example [computed]:
     * telemetry, APID 0x123, secondary header flag 0, unsegmented, count 5,
     * 10 data octets -> 01 23 C0 05 00 09 */
    const tl_packet_header h = { .version = 0, .type = TL_PACKET_TYPE_TM, .sec_flag = 0, .apid = 0x123,
                                 .seq_flags = TL_PACKET_SEQ_UNSEGMENTED, .count = 5, .data_len = 10 - 1 };
    uint8_t b[8];
    memset(b, 0xEE, sizeof b);
    assert_int_equal(tl_packet_header_encode(&h, b, 6), TL_OK);
    const uint8_t want[8] = { 0x01, 0x23, 0xC0, 0x05, 0x00, 0x09, 0xEE, 0xEE };
    assert_memory_equal(b, want, sizeof want);
    tl_packet_header d;
    assert_int_equal(tl_packet_header_decode(want, 6, &d), TL_OK);
    assert_int_equal(d.version, 0);
    assert_int_equal(d.type, 0);
    assert_int_equal(d.sec_flag, 0);
    assert_int_equal(d.apid, 0x123);
    assert_int_equal(d.seq_flags, 3);
    assert_int_equal(d.count, 5);
    assert_int_equal(d.data_len, 9);
    assert_int_equal(tl_packet_header_decode(want, 5, &d), TL_E_SPACE);
    assert_int_equal(tl_packet_header_encode(&h, b, 5), TL_E_SPACE);
}

/* Each field alone lands in its own bits (CCSDS 133.0-B-2 as given in
 * ../shared/sources.md [cited]: version bits 0-2, type bit 3, secondary
 * header flag bit 4, APID bits 5-15, sequence flags bits 16-17, count bits
 * 18-31, length bits 32-47; bit 0 is the most significant bit of octet 0). */
static void header_fields_in_their_bits(void **state)
{
    (void)state;
    struct {
        tl_packet_header h;
        uint8_t want[6];
    } c[] = {
        { { .version = 7 }, { 0xE0, 0, 0, 0, 0, 0 } },
        { { .type = 1 }, { 0x10, 0, 0, 0, 0, 0 } },
        { { .sec_flag = 1 }, { 0x08, 0, 0, 0, 0, 0 } },
        { { .apid = 0x7FF }, { 0x07, 0xFF, 0, 0, 0, 0 } },
        { { .apid = 0x400 }, { 0x04, 0x00, 0, 0, 0, 0 } },
        { { .seq_flags = 3 }, { 0, 0, 0xC0, 0, 0, 0 } },
        { { .seq_flags = 1 }, { 0, 0, 0x40, 0, 0, 0 } },
        { { .count = 0x3FFF }, { 0, 0, 0x3F, 0xFF, 0, 0 } },
        { { .count = 0x2001 }, { 0, 0, 0x20, 0x01, 0, 0 } },
        { { .data_len = 0xFFFF }, { 0, 0, 0, 0, 0xFF, 0xFF } },
        { { .data_len = 0x1234 }, { 0, 0, 0, 0, 0x12, 0x34 } },
    };
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        uint8_t b[6];
        assert_int_equal(tl_packet_header_encode(&c[i].h, b, 6), TL_OK);
        assert_memory_equal(b, c[i].want, 6);
        tl_packet_header d;
        assert_int_equal(tl_packet_header_decode(b, 6, &d), TL_OK);
        assert_int_equal(d.version, c[i].h.version);
        assert_int_equal(d.type, c[i].h.type);
        assert_int_equal(d.sec_flag, c[i].h.sec_flag);
        assert_int_equal(d.apid, c[i].h.apid);
        assert_int_equal(d.seq_flags, c[i].h.seq_flags);
        assert_int_equal(d.count, c[i].h.count);
        assert_int_equal(d.data_len, c[i].h.data_len);
    }
    /* a value wider than its field is refused, nothing written */
    const tl_packet_header wide[] = { { .version = 8 }, { .type = 2 }, { .sec_flag = 2 }, { .apid = 0x800 },
                                      { .seq_flags = 4 }, { .count = 0x4000 } };
    for (size_t i = 0; i < sizeof wide / sizeof wide[0]; i++) {
        uint8_t b[6] = { 0xEE, 0xEE, 0xEE, 0xEE, 0xEE, 0xEE };
        assert_int_equal(tl_packet_header_encode(&wide[i], b, 6), TL_E_FIELD_RANGE);
        for (int k = 0; k < 6; k++)
            assert_int_equal(b[k], 0xEE);
    }
}

static tl_packet_writer *new_writer(uint32_t max_len)
{
    static tl_packet_writer w;
    assert_int_equal(tl_packet_writer_init(&w, max_len), TL_OK);
    return &w;
}

static void telemetry_packet_layout(void **state)
{
    (void)state;
    tl_packet_writer *w = new_writer(256);
    const tl_cuc t = { 0x01020304u, 0x0506u };
    const uint8_t user[3] = { 'A', 'B', 'C' };
    uint8_t b[32];
    memset(b, 0xEE, sizeof b);
    size_t n = 0;
    assert_int_equal(tl_packet_write(w, 0x123, t, user, 3, b, sizeof b, &n), TL_OK);
    assert_int_equal(n, 18u);
    assert_int_equal(TL_PACKET_LEN(3), 18u);
    /* primary header: version 000, type 0, sec flag 1, APID 0x123 -> 0x0923;
     * unsegmented, count 0 -> 0xC000; data field 7 + 3 + 2 = 12 octets -> 11
     * (CCSDS 133.0-B-2, ../shared/sources.md [cited]); CUC P-field 0x1E +
     * coarse + fine (CCSDS 301.0-B-4, sources.md [computed]); user data; CRC
     * over octets 0..15 (ECSS-E-ST-70-41C packet error control,
     * CRC-16/IBM-3740, sources.md [doc + computed]) by the bitwise CRC here */
    uint8_t want[18] = { 0x09, 0x23, 0xC0, 0x00, 0x00, 0x0B, 0x1E, 0x01, 0x02, 0x03,
                         0x04, 0x05, 0x06, 'A', 'B', 'C', 0, 0 };
    const uint16_t crc = ref_crc16(want, 16);
    want[16] = (uint8_t)(crc >> 8);
    want[17] = (uint8_t)crc;
    assert_memory_equal(b, want, 18);
    for (size_t i = 18; i < sizeof b; i++)
        assert_int_equal(b[i], 0xEE); /* never past the packet */
    /* empty user data is a 15-octet packet, data length field 8 */
    memset(b, 0xEE, sizeof b);
    assert_int_equal(tl_packet_write(w, 0x123, t, NULL, 0, b, 15, &n), TL_OK);
    assert_int_equal(n, 15u);
    assert_int_equal(b[3], 0x01); /* second packet of APID 0x123 */
    assert_int_equal(b[5], 0x08);
    assert_int_equal(b[15], 0xEE);
    assert_int_equal(ref_crc16(b, 15), 0x0000u); /* residue [doc + computed] */
}

static void idle_packet_layout(void **state)
{
    (void)state;
    /* APID 2047 (all ones), no secondary header, unsegmented (../shared/sources.md
     * [cited]): the shortest idle packet is 6 + 1 octets, length field 0 */
    uint16_t count = 0;
    uint8_t b[120];
    memset(b, 0xEE, sizeof b);
    assert_int_equal(tl_packet_write_idle(&count, 7, b, 7), TL_OK);
    const uint8_t want[8] = { 0x07, 0xFF, 0xC0, 0x00, 0x00, 0x00, 0x55, 0xEE };
    assert_memory_equal(b, want, 8);
    assert_int_equal(count, 1u);
    /* count 16383 is written then wraps to 0; 100 octets: length field 93 */
    count = 16383;
    assert_int_equal(tl_packet_write_idle(&count, 100, b, 100), TL_OK);
    const uint8_t want2[6] = { 0x07, 0xFF, 0xFF, 0xFF, 0x00, 93 };
    assert_memory_equal(b, want2, 6);
    for (int i = 6; i < 100; i++)
        assert_int_equal(b[i], TL_PACKET_IDLE_OCTET);
    assert_int_equal(b[100], 0xEE);
    assert_int_equal(count, 0u);
    /* limits: 6 octets is no packet; 65543 exceeds the 16-bit length field */
    assert_int_equal(tl_packet_write_idle(&count, 6, b, sizeof b), TL_E_PACKET_LEN);
    assert_int_equal(tl_packet_write_idle(&count, 65543, b, sizeof b), TL_E_PACKET_LEN);
    assert_int_equal(tl_packet_write_idle(&count, 101, b, 100), TL_E_SPACE);
    assert_int_equal(tl_packet_write_idle(NULL, 7, b, 7), TL_E_NULL);
    assert_int_equal(count, 0u);
    uint8_t *big = malloc(65542);
    assert_non_null(big);
    assert_int_equal(tl_packet_write_idle(&count, 65542, big, 65542), TL_OK);
    assert_int_equal(big[4], 0xFF);
    assert_int_equal(big[5], 0xFF);
    tl_packet_view v;
    assert_int_equal(tl_packet_parse(big, 65542, &v), TL_OK);
    assert_int_equal(v.apid, 2047);
    assert_int_equal(v.packet_len, 65542u);
    assert_int_equal(v.user_len, 65536u);
    free(big);
}

static uint16_t count_of(const uint8_t *pkt)
{
    return (uint16_t)(((pkt[2] & 0x3Fu) << 8) | pkt[3]);
}

static void sequence_count_wraps_per_apid(void **state)
{
    (void)state;
    tl_packet_writer *w = new_writer(64);
    const tl_cuc t = { 1u, 2u };
    uint8_t b[64];
    /* APID 5 every packet, APID 2046 every 7th, APID 0 every 1000th: each counts
     * on its own and wraps from 16383 to 0 (CCSDS 133.0-B-2,
     * ../shared/sources.md [cited]) */
    unsigned n5 = 0, n2046 = 0, n0 = 0;
    for (unsigned i = 0; i < 40000u; i++) {
        assert_int_equal(tl_packet_write(w, 5, t, NULL, 0, b, sizeof b, NULL), TL_OK);
        assert_int_equal(count_of(b), n5 % 16384u);
        n5++;
        if (i % 7u == 0u) {
            assert_int_equal(tl_packet_write(w, 2046, t, NULL, 0, b, sizeof b, NULL), TL_OK);
            assert_int_equal(count_of(b), n2046 % 16384u);
            n2046++;
        }
        if (i % 1000u == 0u) {
            assert_int_equal(tl_packet_write(w, 0, t, NULL, 0, b, sizeof b, NULL), TL_OK);
            assert_int_equal(count_of(b), n0 % 16384u);
            n0++;
        }
    }
    assert_int_equal(n5, 40000u); /* passed 16384 and 32768: wrapped twice */
    assert_int_equal(n2046, 5715u);
    assert_int_equal(n0, 40u);
    /* the 16385th packet of APID 5 had count 0, the 16384th count 16383:
     * 40000 mod 16384 = 7232 is the next */
    assert_int_equal(tl_packet_write(w, 5, t, NULL, 0, b, sizeof b, NULL), TL_OK);
    assert_int_equal(count_of(b), 7232u);
    /* reset forgets every counter */
    tl_packet_writer_reset(w);
    assert_int_equal(tl_packet_write(w, 5, t, NULL, 0, b, sizeof b, NULL), TL_OK);
    assert_int_equal(count_of(b), 0u);
}

static void apid_limits(void **state)
{
    (void)state;
    tl_packet_writer *w = new_writer(64);
    const tl_cuc t = { 0u, 0u };
    uint8_t b[64];
    memset(b, 0xEE, sizeof b);
    /* 2047 is the idle APID; 2048 does not fit 11 bits (CCSDS 133.0-B-2) */
    assert_int_equal(tl_packet_write(w, 2047, t, NULL, 0, b, sizeof b, NULL), TL_E_APID);
    assert_int_equal(tl_packet_write(w, 2048, t, NULL, 0, b, sizeof b, NULL), TL_E_APID);
    assert_int_equal(tl_packet_write(w, 0xFFFF, t, NULL, 0, b, sizeof b, NULL), TL_E_APID);
    assert_int_equal(b[0], 0xEE);
    /* TL_PACKET_MAX_APIDS distinct APIDs fit, one more does not */
    for (unsigned a = 0; a < TL_PACKET_MAX_APIDS; a++)
        assert_int_equal(tl_packet_write(w, (uint16_t)(100u + a), t, NULL, 0, b, sizeof b, NULL), TL_OK);
    assert_int_equal(w->apids, TL_PACKET_MAX_APIDS);
    memset(b, 0xEE, sizeof b);
    assert_int_equal(tl_packet_write(w, 99, t, NULL, 0, b, sizeof b, NULL), TL_E_APID_FULL);
    assert_int_equal(b[0], 0xEE);
    /* the APIDs already known keep working, second count is 1 */
    assert_int_equal(tl_packet_write(w, 100, t, NULL, 0, b, sizeof b, NULL), TL_OK);
    assert_int_equal(count_of(b), 1u);
    assert_int_equal(tl_packet_write(w, (uint16_t)(100u + TL_PACKET_MAX_APIDS - 1u), t, NULL, 0, b, sizeof b, NULL),
                     TL_OK);
    assert_int_equal(count_of(b), 1u);
    /* a zeroed writer was never initialised */
    tl_packet_writer z;
    memset(&z, 0, sizeof z);
    assert_int_equal(tl_packet_write(&z, 1, t, NULL, 0, b, sizeof b, NULL), TL_E_NOT_INIT);
}

static void length_limits(void **state)
{
    (void)state;
    tl_packet_writer w;
    memset(&w, 0x5A, sizeof w);
    /* configured maximum 64 .. 4095 octets; 4095 keeps 4093 CRC-protected
     * octets (32744 bits) under the 32751-bit Hamming-distance-4 limit of
     * 0x1021 (../shared/sources.md [memory]) */
    assert_int_equal(tl_packet_writer_init(&w, 63), TL_E_PACKET_LEN);
    assert_int_equal(tl_packet_writer_init(&w, 4096), TL_E_PACKET_LEN);
    assert_int_equal(tl_packet_writer_init(&w, 0), TL_E_PACKET_LEN);
    assert_int_equal(w.max_len, 0x5A5A5A5Au); /* not written on error */
    assert_int_equal(tl_packet_writer_init(NULL, 100), TL_E_NULL);
    assert_int_equal(tl_packet_writer_init(&w, 64), TL_OK);
    assert_int_equal(TL_PACKET_MAX_USER(64), 49u);
    assert_int_equal(TL_PACKET_MAX_USER(4095), 4080u);
    const tl_cuc t = { 9u, 9u };
    static uint8_t user[4096];
    static uint8_t b[4200];
    size_t n = 0;
    /* 49 octets make a 64-octet packet, 50 are too many */
    assert_int_equal(tl_packet_write(&w, 1, t, user, 49, b, sizeof b, &n), TL_OK);
    assert_int_equal(n, 64u);
    n = 777;
    memset(b, 0xEE, sizeof b);
    assert_int_equal(tl_packet_write(&w, 1, t, user, 50, b, sizeof b, &n), TL_E_PACKET_LEN);
    assert_int_equal(n, 777u);
    assert_int_equal(b[0], 0xEE);
    /* room for all but one octet: TL_E_SPACE, nothing written */
    assert_int_equal(tl_packet_write(&w, 1, t, user, 49, b, 63, &n), TL_E_SPACE);
    assert_int_equal(b[0], 0xEE);
    assert_int_equal(tl_packet_write(&w, 1, t, NULL, 5, b, sizeof b, &n), TL_E_NULL);
    assert_int_equal(tl_packet_write(&w, 1, t, user, 5, NULL, sizeof b, &n), TL_E_NULL);
    /* none of the failures moved the count: the next packet of APID 1 is the 2nd */
    assert_int_equal(tl_packet_write(&w, 1, t, user, 49, b, 64, &n), TL_OK);
    assert_int_equal(count_of(b), 1u);
    assert_int_equal(b[64], 0xEE);
    /* the largest maximum */
    assert_int_equal(tl_packet_writer_init(&w, 4095), TL_OK);
    assert_int_equal(tl_packet_write(&w, 1, t, user, 4080, b, sizeof b, &n), TL_OK);
    assert_int_equal(n, 4095u);
    assert_int_equal(b[4], 0x0F); /* data length field 4095 - 7 = 4088 = 0x0FF8 */
    assert_int_equal(b[5], 0xF8);
    assert_int_equal(tl_packet_write(&w, 1, t, user, 4081, b, sizeof b, &n), TL_E_PACKET_LEN);
}

static void parse_round_trip(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("parse_round_trip", 0x9AC0E701u));
    tl_packet_writer *w = new_writer(4095);
    static uint8_t user[4080], b[4095];
    for (unsigned i = 0; i < 3000u; i++) {
        const uint16_t apid = (uint16_t)(tl_rng_u64(&r) % 4u * 511u); /* 0, 511, 1022, 1533 */
        const size_t len = (size_t)(tl_rng_u64(&r) % 4081u);
        const uint64_t x = tl_rng_u64(&r);
        const tl_cuc t = { (uint32_t)x, (uint16_t)(x >> 32) };
        for (size_t k = 0; k < len; k++)
            user[k] = (uint8_t)tl_rng_u64(&r);
        size_t n = 0;
        assert_int_equal(tl_packet_write(w, apid, t, user, len, b, sizeof b, &n), TL_OK);
        tl_packet_view v;
        assert_int_equal(tl_packet_parse(b, n, &v), TL_OK);
        assert_int_equal(v.packet_len, len + 15u);
        assert_int_equal(v.apid, apid);
        assert_int_equal(v.type, 0);
        assert_int_equal(v.sec_flag, 1);
        assert_int_equal(v.seq_flags, 3);
        assert_int_equal(v.time.coarse, t.coarse);
        assert_int_equal(v.time.fine, t.fine);
        assert_int_equal(v.user_len, len);
        assert_ptr_equal(v.user, b + 13);
        if (len > 0)
            assert_memory_equal(v.user, user, len);
        /* trailing bytes after the packet are not part of it */
        assert_int_equal(tl_packet_parse(b, sizeof b, &v), TL_OK);
        assert_int_equal(v.packet_len, len + 15u);
    }
}

/* One 40-octet packet, checked exhaustively from a buffer of exactly the
 * given size (so ASan catches any read past avail): every truncation needs
 * more bytes; every change of one octet to any of its 255 other values is
 * rejected (CRC-16 detects every error burst up to 16 bits: common practice,
 * no source). A changed length field may instead ask for more bytes. */
static void parse_rejects_truncation_and_corruption(void **state)
{
    (void)state;
    tl_packet_writer *w = new_writer(64);
    uint8_t user[25];
    for (int i = 0; i < 25; i++)
        user[i] = (uint8_t)(7 * i + 1);
    const tl_cuc t = { 0x5EEDF00Du, 0x1234u };
    uint8_t pkt[40];
    size_t n = 0;
    assert_int_equal(tl_packet_write(w, 0x2A5, t, user, sizeof user, pkt, sizeof pkt, &n), TL_OK);
    assert_int_equal(n, 40u);
    tl_packet_view v;
    for (size_t avail = 0; avail <= 40u; avail++) {
        uint8_t *b = malloc(avail > 0 ? avail : 1);
        assert_non_null(b);
        memcpy(b, pkt, avail);
        const tl_status st = tl_packet_parse(b, avail, &v);
        if (avail == 40u) {
            assert_int_equal(st, TL_OK);
        } else {
            assert_int_equal(st, TL_E_SPACE);
            assert_int_equal(v.packet_len, avail < 6u ? 6u : 40u);
        }
        free(b);
    }
    unsigned rejected = 0, need_more = 0;
    uint8_t *b = malloc(40);
    assert_non_null(b);
    for (size_t at = 0; at < 40u; at++) {
        for (unsigned x = 1; x < 256u; x++) {
            memcpy(b, pkt, 40);
            b[at] ^= (uint8_t)x;
            const tl_status st = tl_packet_parse(b, 40, &v);
            if (st == TL_E_SPACE && (at == 4u || at == 5u)) {
                need_more++;
                continue;
            }
            if (st != TL_E_FORMAT)
                fail_msg("octet %zu ^ 0x%02X: %s", at, x, tl_status_name(st));
            rejected++;
        }
    }
    free(b);
    assert_int_equal(rejected + need_more, 40u * 255u);
    /* the length field is 0x0021 (40 - 7). Octet 4 -> h = 0x01..0x0F announces
     * 256 h + 40 = 296 .. 3880 octets, within 4095: 15 ask for more; h >= 0x10
     * announces 4136 or more, over 4095 (format error, 240 values). Octet 5 -> 34..255 announces 41..262 octets:
     * 222 ask for more; 0..32 announce a shorter packet whose CRC fails.
     * 15 + 222 = 237 [computed by hand] */
    assert_int_equal(need_more, 237u);
    assert_int_equal(rejected, 40u * 255u - 237u);
    assert_int_equal(tl_packet_parse(NULL, 40, &v), TL_E_NULL);
    assert_int_equal(tl_packet_parse(pkt, 40, NULL), TL_E_NULL);
}

/* Every single-bit error in a maximum-length (4095-octet) packet is rejected
 * by the parser (Hamming distance 4 up to 32751 data bits, P. Koopman's CRC
 * tables, ../shared/sources.md [memory]). */
static void parse_rejects_bit_errors_in_max_packet(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("parse_rejects_bit_errors_in_max_packet", 0x9AC0E702u));
    tl_packet_writer *w = new_writer(4095);
    static uint8_t user[4080];
    for (size_t k = 0; k < sizeof user; k++)
        user[k] = (uint8_t)tl_rng_u64(&r);
    uint8_t *b = malloc(4095);
    assert_non_null(b);
    size_t n = 0;
    const tl_cuc t = { 1u, 1u };
    assert_int_equal(tl_packet_write(w, 77, t, user, sizeof user, b, 4095, &n), TL_OK);
    assert_int_equal(n, 4095u);
    tl_packet_view v;
    unsigned rejected = 0;
    for (size_t bit = 0; bit < 4095u * 8u; bit++) {
        b[bit / 8u] ^= (uint8_t)(0x80u >> (bit % 8u));
        if (tl_packet_parse(b, 4095, &v) != TL_OK)
            rejected++;
        b[bit / 8u] ^= (uint8_t)(0x80u >> (bit % 8u));
    }
    assert_int_equal(rejected, 32760u);
    assert_int_equal(tl_packet_parse(b, 4095, &v), TL_OK);
    free(b);
}

static void plausible_header(void **state)
{
    (void)state;
    tl_packet_writer *w = new_writer(200);
    uint8_t user[50] = { 0 };
    uint8_t pkt[65];
    const tl_cuc t = { 3u, 4u };
    assert_int_equal(tl_packet_write(w, 300, t, user, 50, pkt, sizeof pkt, NULL), TL_OK);
    assert_int_equal(tl_packet_plausible(pkt, 65, 200), 1);
    assert_int_equal(tl_packet_plausible(pkt, 7, 200), 1);  /* 7 octets are enough to judge */
    assert_int_equal(tl_packet_plausible(pkt, 6, 200), 0);
    assert_int_equal(tl_packet_plausible(pkt, 65, 65), 1);
    assert_int_equal(tl_packet_plausible(pkt, 65, 64), 0);  /* longer than the configured maximum */
    assert_int_equal(tl_packet_plausible(NULL, 65, 200), 0);
    /* each criterion alone: version, type, sec flag, idle APID, sequence flags,
     * length below 15 and above 4095, P-field */
    const struct { size_t at; uint8_t set; } bad[] = {
        { 0, 0x20 | 0x09 }, { 0, 0x10 | 0x09 }, { 0, 0x01 }, { 0, 0x0F }, { 2, 0x40 },
        { 4, 0x00 }, { 4, 0x10 }, { 6, 0x1F },
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        uint8_t b[65];
        memcpy(b, pkt, sizeof b);
        b[bad[i].at] = bad[i].set;
        if (bad[i].at == 0u && bad[i].set == 0x0Fu)
            b[1] = 0xFF; /* APID 2047 with the sec flag set */
        if (bad[i].at == 4u && bad[i].set == 0x00u)
            b[5] = 6;    /* 14 octets */
        assert_int_equal(tl_packet_plausible(b, sizeof b, 4095), 0);
    }
}

static void resync_in_a_raw_stream(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("resync_in_a_raw_stream", 0x9AC0E703u));
    tl_packet_writer *w = new_writer(512);
    uint8_t s[2000];
    size_t len = 0;
    for (int i = 0; i < 37; i++)
        s[len++] = (uint8_t)tl_rng_u64(&r);
    size_t at[3];
    uint8_t user[300];
    for (int k = 0; k < 3; k++) {
        for (size_t i = 0; i < sizeof user; i++)
            user[i] = (uint8_t)tl_rng_u64(&r);
        const tl_cuc t = { (uint32_t)k, 0u };
        size_t n = 0;
        at[k] = len;
        assert_int_equal(tl_packet_write(w, 42, t, user, 100u + 100u * (size_t)k, s + len, sizeof s - len, &n), TL_OK);
        len += n;
    }
    s[at[1] + 50] ^= 0x04; /* the second packet is damaged */
    size_t off = 999;
    assert_int_equal(tl_packet_resync(s, len, 512, &off), TL_OK);
    assert_int_equal(off, at[0]);
    /* after the first packet, the damaged one does not parse; resync from one
     * octet past its start finds the third */
    tl_packet_view v;
    assert_int_equal(tl_packet_parse(s + at[1], len - at[1], &v), TL_E_FORMAT);
    assert_int_equal(tl_packet_resync(s + at[1] + 1, len - at[1] - 1, 512, &off), TL_OK);
    assert_int_equal(at[1] + 1 + off, at[2]);
    /* the third packet cut short: resync points at its start and asks for more */
    assert_int_equal(tl_packet_resync(s + at[1] + 1, len - at[1] - 2, 512, &off), TL_E_SPACE);
    assert_int_equal(at[1] + 1 + off, at[2]);
    /* no packet in 37 junk octets: keep the last 6, where one might still start */
    assert_int_equal(tl_packet_resync(s, 37, 512, &off), TL_E_SPACE);
    assert_int_equal(off, 31u);
    assert_int_equal(tl_packet_resync(s, 3, 512, &off), TL_E_SPACE);
    assert_int_equal(off, 0u);
    assert_int_equal(tl_packet_resync(NULL, 3, 512, &off), TL_E_NULL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(primary_header_worked_example),
        cmocka_unit_test(header_fields_in_their_bits),
        cmocka_unit_test(telemetry_packet_layout),
        cmocka_unit_test(idle_packet_layout),
        cmocka_unit_test(sequence_count_wraps_per_apid),
        cmocka_unit_test(apid_limits),
        cmocka_unit_test(length_limits),
        cmocka_unit_test(parse_round_trip),
        cmocka_unit_test(parse_rejects_truncation_and_corruption),
        cmocka_unit_test(parse_rejects_bit_errors_in_max_packet),
        cmocka_unit_test(plausible_header),
        cmocka_unit_test(resync_in_a_raw_stream),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
