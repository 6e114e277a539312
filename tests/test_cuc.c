/*
 * test_cuc.c - CCSDS unsegmented time code (firmware/tl_cuc.h): the P-field,
 * the octet layout, round trips, and the sample-count conversion against
 * exact 128-bit integer arithmetic done here.
 */
#include "tl_test.h"

#include <string.h>
#include "rng.h"
#include "tl_cuc.h"

__extension__ typedef unsigned __int128 u128;

static void pfield(void **state)
{
    (void)state;
    /* CCSDS 301.0-B-4 P-field: extension 0 | time code id 001 (1958 TAI epoch)
     * | coarse octets - 1 = 3 (binary 11) | fine octets = 2 (binary 10):
     * 0 001 11 10 = 0x1E (../shared/sources.md [computed]) */
    assert_int_equal(TL_CUC_PFIELD, 0x1Eu);
    assert_int_equal((0u << 7) | (1u << 4) | (3u << 2) | 2u, TL_CUC_PFIELD);
    assert_int_equal(TL_CUC_OCTETS, 7u);
}

static void octet_layout(void **state)
{
    (void)state;
    /* P-field, then 4 coarse octets and 2 fine octets (CCSDS 301.0-B-4,
     * ../shared/sources.md [computed]); most significant octet first is
     * CCSDS practice (common practice, no source) */
    uint8_t b[9];
    memset(b, 0xEE, sizeof b);
    const tl_cuc t = { 0x01020304u, 0xA0B1u };
    assert_int_equal(tl_cuc_encode(t, b, 7), TL_OK);
    const uint8_t want[9] = { 0x1E, 0x01, 0x02, 0x03, 0x04, 0xA0, 0xB1, 0xEE, 0xEE };
    assert_memory_equal(b, want, sizeof want); /* nothing past 7 octets */
    /* extremes */
    const tl_cuc hi = { 0xFFFFFFFFu, 0xFFFFu };
    assert_int_equal(tl_cuc_encode(hi, b, 7), TL_OK);
    const uint8_t want_hi[7] = { 0x1E, 0xFF, 0xFF, 0xFF, 0xFF, 0xFF, 0xFF };
    assert_memory_equal(b, want_hi, 7);
    /* too little room or NULL: nothing written */
    memset(b, 0xEE, sizeof b);
    assert_int_equal(tl_cuc_encode(t, b, 6), TL_E_SPACE);
    assert_int_equal(tl_cuc_encode(t, NULL, 7), TL_E_NULL);
    for (unsigned i = 0; i < sizeof b; i++)
        assert_int_equal(b[i], 0xEEu);
}

static void decode_checks(void **state)
{
    (void)state;
    const uint8_t good[7] = { 0x1E, 0x12, 0x34, 0x56, 0x78, 0x9A, 0xBC };
    tl_cuc t = { 7u, 7u };
    assert_int_equal(tl_cuc_decode(good, 7, &t), TL_OK);
    assert_int_equal(t.coarse, 0x12345678u);
    assert_int_equal(t.fine, 0x9ABCu);
    /* every other P-field value is another code: rejected, *t untouched */
    unsigned rejected = 0;
    for (unsigned pf = 0; pf < 256u; pf++) {
        if (pf == 0x1Eu)
            continue;
        uint8_t b[7];
        memcpy(b, good, 7);
        b[0] = (uint8_t)pf;
        tl_cuc u = { 1u, 2u };
        assert_int_equal(tl_cuc_decode(b, 7, &u), TL_E_FORMAT);
        assert_int_equal(u.coarse, 1u);
        assert_int_equal(u.fine, 2u);
        rejected++;
    }
    assert_int_equal(rejected, 255u);
    /* truncated */
    for (size_t n = 0; n < 7u; n++)
        assert_int_equal(tl_cuc_decode(good, n, &t), TL_E_SPACE);
    assert_int_equal(tl_cuc_decode(NULL, 7, &t), TL_E_NULL);
    assert_int_equal(tl_cuc_decode(good, 7, NULL), TL_E_NULL);
}

static void round_trip(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("cuc_round_trip", 0xC0C00001u));
    for (unsigned i = 0; i < 100000u; i++) {
        const uint64_t x = tl_rng_u64(&r);
        const tl_cuc t = { (uint32_t)x, (uint16_t)(x >> 32) };
        uint8_t b[7];
        tl_cuc u;
        assert_int_equal(tl_cuc_encode(t, b, 7), TL_OK);
        assert_int_equal(tl_cuc_decode(b, 7, &u), TL_OK);
        if (u.coarse != t.coarse || u.fine != t.fine)
            fail_msg("round trip %08X.%04X -> %08X.%04X", t.coarse, t.fine, u.coarse, u.fine);
    }
}

/* Reference: the time in fine units, start * 65536 + round(samples * 65536 /
 * rate), ties up, as one exact 128-bit division (the firmware splits it into
 * quotient and remainder). Returns 0 when the result needs more than 32
 * coarse bits. [computed] */
static int ref_from_samples(tl_cuc start, uint64_t samples, uint32_t rate, tl_cuc *out)
{
    const u128 num = (u128)samples * 131072u + rate;
    const u128 ticks = ((u128)start.coarse << 16) + start.fine + num / ((u128)rate * 2u);
    if ((ticks >> 16) > 0xFFFFFFFFu)
        return 0;
    out->coarse = (uint32_t)(ticks >> 16);
    out->fine = (uint16_t)ticks;
    return 1;
}

static void check_samples(tl_cuc start, uint64_t samples, uint32_t rate)
{
    tl_cuc want, got = { 0xDEADBEEFu, 0xBEEFu };
    const int fits = ref_from_samples(start, samples, rate, &want);
    const tl_status st = tl_cuc_from_samples(start, samples, rate, &got);
    if (!fits) {
        if (st != TL_E_TIME_RANGE || got.coarse != 0xDEADBEEFu)
            fail_msg("start %08X.%04X + %llu / %u: beyond 2^32 s, got %s", start.coarse, start.fine,
                     (unsigned long long)samples, rate, tl_status_name(st));
        return;
    }
    if (st != TL_OK || got.coarse != want.coarse || got.fine != want.fine)
        fail_msg("start %08X.%04X + %llu / %u: %s %08X.%04X, exact %08X.%04X", start.coarse, start.fine,
                 (unsigned long long)samples, rate, tl_status_name(st), got.coarse, got.fine, want.coarse,
                 want.fine);
}

static void from_samples_by_hand(void **state)
{
    (void)state;
    tl_cuc t;
    const tl_cuc zero = { 0u, 0u };
    /* 72000 samples at 48 kHz = 1.5 s: fine 0.5 * 65536 = 32768 [computed by hand] */
    assert_int_equal(tl_cuc_from_samples(zero, 72000u, 48000u, &t), TL_OK);
    assert_int_equal(t.coarse, 1u);
    assert_int_equal(t.fine, 32768u);
    /* 1/3 s = 21845.33 fine units -> 21845; 2/3 s = 43690.67 -> 43691 [computed by hand] */
    assert_int_equal(tl_cuc_from_samples(zero, 1u, 3u, &t), TL_OK);
    assert_int_equal(t.fine, 21845u);
    assert_int_equal(tl_cuc_from_samples(zero, 2u, 3u, &t), TL_OK);
    assert_int_equal(t.fine, 43691u);
    /* a tie: 1 / 131072 s = 0.5 fine unit rounds up to 1 */
    assert_int_equal(tl_cuc_from_samples(zero, 1u, 131072u, &t), TL_OK);
    assert_int_equal(t.coarse, 0u);
    assert_int_equal(t.fine, 1u);
    /* a fraction rounding up to a whole second carries: (2^32 - 2) / (2^32 - 1) s
     * = 65535.99998 fine units -> 65536 -> 1 s exactly */
    assert_int_equal(tl_cuc_from_samples(zero, 0xFFFFFFFEu, 0xFFFFFFFFu, &t), TL_OK);
    assert_int_equal(t.coarse, 1u);
    assert_int_equal(t.fine, 0u);
    /* the fine sum carries: start .fine 0xFFFF (65535/65536 s) + 1/65536 s */
    const tl_cuc late = { 100u, 0xFFFFu };
    assert_int_equal(tl_cuc_from_samples(late, 1u, 65536u, &t), TL_OK);
    assert_int_equal(t.coarse, 101u);
    assert_int_equal(t.fine, 0u);
    /* 2^63 samples at 2^32 - 1 Hz = 2147483648.5 s (2^63 = (2^32 - 1)(2^31)
     * + 2^31, remainder 2^31 of 2^32 - 1, a hair over one half):
     * fine = round(2^31 * 65536 / (2^32 - 1)) = round(32768.0000076) = 32768 */
    assert_int_equal(tl_cuc_from_samples(zero, 1ull << 63, 0xFFFFFFFFu, &t), TL_OK);
    assert_int_equal(t.coarse, 2147483648u);
    assert_int_equal(t.fine, 32768u);
    /* the latest representable time and one fine unit later */
    const tl_cuc last = { 0xFFFFFFFFu, 0xFFFEu };
    assert_int_equal(tl_cuc_from_samples(last, 1u, 65536u, &t), TL_OK);
    assert_int_equal(t.coarse, 0xFFFFFFFFu);
    assert_int_equal(t.fine, 0xFFFFu);
    assert_int_equal(tl_cuc_from_samples(last, 2u, 65536u, &t), TL_E_TIME_RANGE);
    /* 2^63 samples at 1 Hz is far beyond 2^32 s */
    assert_int_equal(tl_cuc_from_samples(zero, 1ull << 63, 1u, &t), TL_E_TIME_RANGE);
    /* rate 0 and NULL */
    assert_int_equal(tl_cuc_from_samples(zero, 5u, 0u, &t), TL_E_TIME_RANGE);
    assert_int_equal(tl_cuc_from_samples(zero, 5u, 1u, NULL), TL_E_NULL);
}

static void from_samples_exact(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("from_samples_exact", 0xC0C00002u));
    /* the bounds: samples 0, 1, 2^63 - 1, 2^63, 2^64 - 1 and rates 1, 2,
     * 48000, 2^31, 2^32 - 2, 2^32 - 1, from starts 0 and near the end */
    const uint64_t s_edge[] = { 0u, 1u, 2u, 65535u, 65536u, 0x7FFFFFFFFFFFFFFFull, 0x8000000000000000ull,
                                0xFFFFFFFFFFFFFFFFull, 0xFFFFFFFFull, 0x100000000ull, 0xFFFFFFFE00000001ull };
    const uint32_t r_edge[] = { 1u, 2u, 3u, 48000u, 65536u, 131072u, 0x80000000u, 0xFFFFFFFEu, 0xFFFFFFFFu };
    const tl_cuc st_edge[] = { { 0u, 0u }, { 0u, 0xFFFFu }, { 12345u, 32768u }, { 0x7FFFFFFFu, 0x8000u },
                               { 0xFFFFFFFFu, 0u }, { 0xFFFFFFFEu, 0xFFFFu } };
    unsigned n = 0;
    for (size_t a = 0; a < sizeof s_edge / sizeof s_edge[0]; a++)
        for (size_t b = 0; b < sizeof r_edge / sizeof r_edge[0]; b++)
            for (size_t c = 0; c < sizeof st_edge / sizeof st_edge[0]; c++, n++)
                check_samples(st_edge[c], s_edge[a], r_edge[b]);
    assert_int_equal(n, 11u * 9u * 6u);
    /* random: samples of random bit length up to 63, any rate, any start;
     * plus mission-like cases (rate ~ 100 MHz, a day's samples) */
    for (unsigned i = 0; i < 300000u; i++) {
        const unsigned bits = (unsigned)(tl_rng_u64(&r) % 64u);
        const uint64_t samples = bits == 0u ? 0u : tl_rng_u64(&r) >> (64u - bits);
        uint32_t rate = (uint32_t)(tl_rng_u64(&r) >> (32u + tl_rng_u64(&r) % 32u));
        if (rate == 0u)
            rate = 1u;
        const uint64_t x = tl_rng_u64(&r);
        const tl_cuc start = { (i & 1u) ? (uint32_t)x : (uint32_t)(x >> 40), (uint16_t)(x >> 16) };
        check_samples(start, samples, rate);
        check_samples(start, tl_rng_u64(&r) % (86400ull * 100000000ull), 100000000u);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(pfield),
        cmocka_unit_test(octet_layout),
        cmocka_unit_test(decode_checks),
        cmocka_unit_test(round_trip),
        cmocka_unit_test(from_samples_by_hand),
        cmocka_unit_test(from_samples_exact),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
