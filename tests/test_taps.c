/*
 * test_taps.c - coefficient table images (firmware/tl_taps.h): write and
 * load round trip, every rejection path (with the destination left
 * untouched), the built-in default, and regeneration of the committed
 * default table source.
 *
 * Images for the rejection tests are assembled here byte by byte from the
 * layout drawn in tl_taps.h, not with tl_taps_write_image, so that exactly
 * one thing is wrong in each. Their CRC is computed with tl_crc32c, which
 * test_crc32c.c checks against published values.
 */
#include "tl_test.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "rng.h"
#include "tables_gen.h"
#include "taps_design.h"
#include "tl_crc32c.h"
#include "tl_taps.h"

#define CANARY 0xA5u

/* Fields of a raw image; any of them may be invalid. */
typedef struct raw_image {
    uint8_t magic[4];
    uint8_t version, window, taps, bits;
    uint32_t points;
    uint8_t shift;
    uint8_t reserved[3];
} raw_image;

static raw_image good_fields(uint32_t points, uint8_t taps, uint8_t shift)
{
    const raw_image f = { { 'T', 'L', 'T', 'P' }, 1u, TL_WINDOW_HANN, taps, 18u, points, shift, { 0, 0, 0 } };
    return f;
}

static void put_be32(uint8_t *p, uint32_t v)
{
    p[0] = (uint8_t)(v >> 24);
    p[1] = (uint8_t)(v >> 16);
    p[2] = (uint8_t)(v >> 8);
    p[3] = (uint8_t)v;
}

static uint32_t get_be32(const uint8_t *p)
{
    return ((uint32_t)p[0] << 24) | ((uint32_t)p[1] << 16) | ((uint32_t)p[2] << 8) | (uint32_t)p[3];
}

/* int32 with the two's complement bit pattern u. */
static int32_t s32_from_bits(uint32_t u)
{
    return (u <= 0x7FFFFFFFu) ? (int32_t)u : (int32_t)(-(int64_t)(~u) - 1);
}

/* CRC-32C of everything before the last 4 bytes, stored in them. */
static void seal(uint8_t *img, size_t len)
{
    put_be32(&img[len - 4u], tl_crc32c(img, len - 4u));
}

/* Assemble an image of `count` coefficients with a correct CRC; the caller
 * frees it. count is independent of the header so the length can be made
 * to match a header that is invalid in some other way. */
static uint8_t *raw_build(const raw_image *f, const int32_t *coef, size_t count, size_t *len)
{
    *len = 16u + 4u * count + 4u;
    uint8_t *img = malloc(*len + 8u); /* + room for a "one byte long" test */
    assert_non_null(img);
    memset(img, 0, *len + 8u);
    memcpy(img, f->magic, 4);
    img[4] = f->version;
    img[5] = f->window;
    img[6] = f->taps;
    img[7] = f->bits;
    put_be32(&img[8], f->points);
    img[12] = f->shift;
    memcpy(&img[13], f->reserved, 3);
    for (size_t i = 0; i < count; i++)
        put_be32(&img[16u + 4u * i], (uint32_t)(coef != NULL ? coef[i] : (int32_t)(i % 2001u) - 1000));
    seal(img, *len);
    return img;
}

static tl_taps *new_taps(void)
{
    tl_taps *t = calloc(1, sizeof *t);
    assert_non_null(t);
    return t;
}

/* Destination with a canary pattern and a snapshot to compare against. */
typedef struct guarded {
    tl_taps *dst;
    tl_taps *snap;
} guarded;

static guarded guard_new(void)
{
    guarded g = { new_taps(), new_taps() };
    memset(g.dst, CANARY, sizeof *g.dst);
    memcpy(g.snap, g.dst, sizeof *g.dst);
    return g;
}

static void guard_free(guarded *g)
{
    free(g->dst);
    free(g->snap);
}

/* Expect load and check to return `want`, with dst and the geometry
 * outputs untouched. */
static void expect_reject(const uint8_t *img, size_t len, tl_status want, const char *what)
{
    guarded g = guard_new();
    const tl_status st = tl_taps_load_image(g.dst, img, len);
    if (st != want)
        fail_msg("%s: load returned %s, expected %s", what, tl_status_name(st), tl_status_name(want));
    if (memcmp(g.dst, g.snap, sizeof *g.dst) != 0)
        fail_msg("%s: a rejected image wrote the destination", what);
    uint32_t points = 0xDEADBEEFu, taps = 0xCAFEF00Du;
    const tl_status cs = tl_taps_check_image(img, len, &points, &taps);
    if (cs != want)
        fail_msg("%s: check returned %s, expected %s", what, tl_status_name(cs), tl_status_name(want));
    assert_int_equal(points, 0xDEADBEEFu);
    assert_int_equal(taps, 0xCAFEF00Du);
    guard_free(&g);
}

static uint8_t *designed_image(unsigned window, uint32_t taps, uint32_t points, tl_taps **t_out, size_t *len)
{
    tl_taps *t = new_taps();
    assert_int_equal(tl_taps_design(window, taps, points, t, NULL), 0);
    const size_t cap = TL_TAPS_IMAGE_BYTES(taps, points) + 8u;
    uint8_t *img = malloc(cap);
    assert_non_null(img);
    assert_int_equal(tl_taps_write_image(t, img, cap, len), TL_OK);
    *t_out = t;
    return img;
}

/* ---- round trip ------------------------------------------------------------ */

static void write_load_round_trip(void **state)
{
    (void)state;
    const struct { unsigned window; uint32_t taps, points; } designs[] = {
        { TL_WINDOW_HANN, 4, 256 },
        { TL_WINDOW_HANN, 1, 256 },
        { TL_WINDOW_BLACKMAN_HARRIS4, 16, 512 },
        { TL_WINDOW_RECTANGULAR, 2, 1024 },
    };
    for (size_t d = 0; d < sizeof designs / sizeof designs[0]; d++) {
        tl_taps *t;
        size_t len = 0;
        uint8_t *img = designed_image(designs[d].window, designs[d].taps, designs[d].points, &t, &len);
        const size_t count = (size_t)designs[d].taps * designs[d].points;
        assert_int_equal(len, 16u + 4u * count + 4u);
        assert_int_equal(len, TL_TAPS_IMAGE_BYTES(designs[d].taps, designs[d].points));
        /* header bytes as drawn in tl_taps.h */
        const uint8_t head[16] = { 'T', 'L', 'T', 'P', 1, (uint8_t)designs[d].window, (uint8_t)designs[d].taps, 18,
                                   (uint8_t)(designs[d].points >> 24), (uint8_t)(designs[d].points >> 16),
                                   (uint8_t)(designs[d].points >> 8), (uint8_t)designs[d].points,
                                   (uint8_t)t->shift, 0, 0, 0 };
        assert_memory_equal(img, head, 16);
        for (size_t i = 0; i < count; i++)
            assert_int_equal(get_be32(&img[16u + 4u * i]), (uint32_t)t->coef[i]);
        /* trailing CRC: over every byte before it, and as recorded */
        assert_int_equal(get_be32(&img[len - 4u]), tl_crc32c(img, len - 4u));
        assert_int_equal(t->crc, tl_crc32c(img, len - 4u));
        assert_int_equal(tl_taps_image_crc(t), t->crc);
        assert_int_equal(tl_taps_crc_of(t->points, t->taps, t->shift, t->window, t->coef), t->crc);

        /* load into a canary-filled destination: the whole struct matches */
        guarded g = guard_new();
        assert_int_equal(tl_taps_load_image(g.dst, img, len), TL_OK);
        assert_memory_equal(g.dst, t, sizeof *t);
        for (size_t i = count; i < TL_TAPS_MAX_COEFS; i++)
            assert_int_equal(g.dst->coef[i], 0); /* "the rest is zero" */
        /* and writes back byte-identical */
        uint8_t *again = malloc(len);
        assert_non_null(again);
        size_t len2 = 0;
        assert_int_equal(tl_taps_write_image(g.dst, again, len, &len2), TL_OK);
        assert_int_equal(len2, len);
        assert_memory_equal(again, img, len);
        free(again);
        guard_free(&g);
        free(img);
        free(t);
    }
}

static void write_image_capacity(void **state)
{
    (void)state;
    tl_taps *t;
    size_t len = 0;
    uint8_t *img = designed_image(TL_WINDOW_HANN, 4, 256, &t, &len);
    uint8_t *out = malloc(len + 16u);
    assert_non_null(out);
    /* one byte too small: nothing written, *len untouched */
    memset(out, CANARY, len + 16u);
    size_t got = 12345;
    assert_int_equal(tl_taps_write_image(t, out, len - 1u, &got), TL_E_TABLE_SIZE);
    assert_int_equal(got, 12345);
    for (size_t i = 0; i < len + 16u; i++)
        assert_int_equal(out[i], CANARY);
    /* exact size: written, nothing past the end */
    assert_int_equal(tl_taps_write_image(t, out, len, &got), TL_OK);
    assert_int_equal(got, len);
    assert_memory_equal(out, img, len);
    for (size_t i = len; i < len + 16u; i++)
        assert_int_equal(out[i], CANARY);
    assert_int_equal(tl_taps_write_image(NULL, out, len, &got), TL_E_NULL);
    assert_int_equal(tl_taps_write_image(t, NULL, len, &got), TL_E_NULL);
    assert_int_equal(tl_taps_write_image(t, out, len, NULL), TL_E_NULL);
    free(out);
    free(img);
    free(t);
}

static void check_image_geometry(void **state)
{
    (void)state;
    tl_taps *t;
    size_t len = 0;
    uint8_t *img = designed_image(TL_WINDOW_HAMMING, 8, 2048, &t, &len);
    uint32_t points = 0, taps = 0;
    assert_int_equal(tl_taps_check_image(img, len, &points, &taps), TL_OK);
    assert_int_equal(points, 2048);
    assert_int_equal(taps, 8);
    points = 0;
    assert_int_equal(tl_taps_check_image(img, len, &points, NULL), TL_OK);
    assert_int_equal(points, 2048);
    taps = 0;
    assert_int_equal(tl_taps_check_image(img, len, NULL, &taps), TL_OK);
    assert_int_equal(taps, 8);
    assert_int_equal(tl_taps_check_image(img, len, NULL, NULL), TL_OK);
    free(img);
    free(t);
}

/* ---- rejections --------------------------------------------------------------- */

static void reject_null(void **state)
{
    (void)state;
    size_t len = 0;
    const raw_image f = good_fields(256, 1, 16);
    uint8_t *img = raw_build(&f, NULL, 256, &len);
    tl_taps *t = new_taps();
    assert_int_equal(tl_taps_load_image(NULL, img, len), TL_E_NULL);
    assert_int_equal(tl_taps_load_image(t, NULL, len), TL_E_NULL);
    assert_int_equal(tl_taps_check_image(NULL, len, NULL, NULL), TL_E_NULL);
    expect_reject(NULL, len, TL_E_NULL, "NULL image");
    /* the good image itself loads (the rejections below differ from it in one thing) */
    assert_int_equal(tl_taps_load_image(t, img, len), TL_OK);
    assert_int_equal(t->points, 256);
    assert_int_equal(t->taps, 1);
    assert_int_equal(t->shift, 16);
    assert_int_equal(t->coef[3], -997);
    free(t);
    free(img);
}

static void reject_too_short(void **state)
{
    (void)state;
    size_t len = 0;
    const raw_image f = good_fields(256, 1, 16);
    uint8_t *img = raw_build(&f, NULL, 256, &len);
    const size_t shorts[] = { 0, 1, 4, 15, 16, 19 };
    for (size_t i = 0; i < sizeof shorts / sizeof shorts[0]; i++) {
        char what[64];
        snprintf(what, sizeof what, "length %zu", shorts[i]);
        expect_reject(img, shorts[i], TL_E_TABLE_SIZE, what);
    }
    free(img);
}

static void reject_length_off_by_one(void **state)
{
    (void)state;
    tl_taps *t;
    size_t len = 0;
    uint8_t *img = designed_image(TL_WINDOW_HANN, 4, 256, &t, &len);
    expect_reject(img, len - 1u, TL_E_TABLE_SIZE, "one byte short");
    expect_reject(img, len + 1u, TL_E_TABLE_SIZE, "one byte long"); /* designed_image allocated 8 spare bytes */
    /* one whole coefficient short, with the CRC moved and recomputed */
    seal(img, len - 4u);
    expect_reject(img, len - 4u, TL_E_TABLE_SIZE, "one coefficient short");
    free(img);
    free(t);
}

static void reject_header_fields(void **state)
{
    (void)state;
    struct { const char *what; unsigned field; uint8_t value; } bad[] = {
        { "magic[0]", 0, 'X' }, { "magic[1]", 1, 'l' }, { "magic[2]", 2, 0 }, { "magic[3]", 3, 'Q' },
        { "version 0", 4, 0 }, { "version 2", 4, 2 }, { "version 255", 4, 255 },
        { "bits 16", 7, 16 }, { "bits 17", 7, 17 }, { "bits 19", 7, 19 }, { "bits 32", 7, 32 }, { "bits 0", 7, 0 },
        { "reserved[0] 1", 13, 1 }, { "reserved[1] 1", 14, 1 }, { "reserved[2] 1", 15, 1 },
        { "reserved[0] 0x80", 13, 0x80 }, { "reserved[2] 0xFF", 15, 0xFF },
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        raw_image f = good_fields(256, 2, 16);
        switch (bad[i].field) {
        case 0: case 1: case 2: case 3: f.magic[bad[i].field] = bad[i].value; break;
        case 4: f.version = bad[i].value; break;
        case 7: f.bits = bad[i].value; break;
        default: f.reserved[bad[i].field - 13u] = bad[i].value; break;
        }
        size_t len = 0;
        uint8_t *img = raw_build(&f, NULL, 512, &len); /* length and CRC correct */
        expect_reject(img, len, TL_E_TABLE_FORMAT, bad[i].what);
        free(img);
    }
}

static void reject_taps(void **state)
{
    (void)state;
    size_t len = 0;
    /* taps 0: an image of zero coefficients, 20 bytes, correct CRC */
    raw_image f = good_fields(256, 0, 16);
    uint8_t *img = raw_build(&f, NULL, 0, &len);
    assert_int_equal(len, 20);
    expect_reject(img, len, TL_E_TAPS, "taps 0");
    free(img);
    /* taps TL_MAX_TAPS + 1, full length for it, correct CRC */
    f = good_fields(256, (uint8_t)(TL_MAX_TAPS + 1u), 16);
    img = raw_build(&f, NULL, (size_t)(TL_MAX_TAPS + 1u) * 256u, &len);
    expect_reject(img, len, TL_E_TAPS, "taps TL_MAX_TAPS + 1");
    free(img);
    f = good_fields(256, 255, 16);
    img = raw_build(&f, NULL, 255u * 256u, &len);
    expect_reject(img, len, TL_E_TAPS, "taps 255");
    free(img);
    /* the bounds themselves load */
    tl_taps *t = new_taps();
    f = good_fields(256, 1, 16);
    img = raw_build(&f, NULL, 256, &len);
    assert_int_equal(tl_taps_load_image(t, img, len), TL_OK);
    assert_int_equal(t->taps, 1);
    free(img);
    f = good_fields(256, (uint8_t)TL_MAX_TAPS, 16);
    img = raw_build(&f, NULL, (size_t)TL_MAX_TAPS * 256u, &len);
    assert_int_equal(tl_taps_load_image(t, img, len), TL_OK);
    assert_int_equal(t->taps, TL_MAX_TAPS);
    free(img);
    free(t);
}

static void reject_points(void **state)
{
    (void)state;
    const uint32_t bad[] = { 1000, 384, 257, 255, 128, 2u * TL_MAX_POINTS, 0, TL_MAX_POINTS + 256u };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        raw_image f = good_fields(bad[i], 1, 16);
        size_t len = 0;
        uint8_t *img = raw_build(&f, NULL, bad[i], &len); /* length matches the header */
        char what[64];
        snprintf(what, sizeof what, "points %u", (unsigned)bad[i]);
        expect_reject(img, len, TL_E_POINTS, what);
        free(img);
    }
    /* the bounds themselves load */
    const uint32_t good[] = { TL_MIN_POINTS, TL_MAX_POINTS };
    tl_taps *t = new_taps();
    for (size_t i = 0; i < 2u; i++) {
        raw_image f = good_fields(good[i], 1, 16);
        size_t len = 0;
        uint8_t *img = raw_build(&f, NULL, good[i], &len);
        assert_int_equal(tl_taps_load_image(t, img, len), TL_OK);
        assert_int_equal(t->points, good[i]);
        free(img);
    }
    free(t);
}

static void reject_shift(void **state)
{
    (void)state;
    const uint8_t bad[] = { 14, 41, 0, 255 };
    for (size_t i = 0; i < sizeof bad; i++) {
        raw_image f = good_fields(256, 1, bad[i]);
        size_t len = 0;
        uint8_t *img = raw_build(&f, NULL, 256, &len);
        char what[64];
        snprintf(what, sizeof what, "shift %u", (unsigned)bad[i]);
        expect_reject(img, len, TL_E_TABLE_FORMAT, what);
        free(img);
    }
    tl_taps *t = new_taps();
    const uint8_t good[] = { 15, 40 };
    for (size_t i = 0; i < sizeof good; i++) {
        raw_image f = good_fields(256, 1, good[i]);
        size_t len = 0;
        uint8_t *img = raw_build(&f, NULL, 256, &len);
        assert_int_equal(tl_taps_load_image(t, img, len), TL_OK);
        assert_int_equal(t->shift, good[i]);
        free(img);
    }
    free(t);
}

static void reject_flipped_bit(void **state)
{
    (void)state;
    tl_taps *t;
    size_t len = 0;
    uint8_t *img = designed_image(TL_WINDOW_HANN, 4, 256, &t, &len);
    /* positions where a flip leaves every field and coefficient valid, so
     * only the CRC can catch it: the window byte (where the result is still a
     * window id), low bytes of
     * coefficients across the table, and every bit of the CRC itself */
    const size_t coef_bytes[] = { 16 + 3, 16 + 2, 16 + 4 * 100 + 3, 16 + 4 * 511 + 3, 16 + 4 * 512 + 2,
                                  16 + 4 * 700 + 2, 16 + 4 * 1023 + 3, 16 + 4 * 1023 + 2 };
    unsigned flips = 0;
    for (unsigned bit = 0; bit < 8u; bit++) {
        img[5] ^= (uint8_t)(1u << bit);
        /* Hann (1) with one bit flipped: 0 and 3 are valid window ids, so
         * only the CRC catches them; any other value is not a window id */
        const unsigned w = img[5];
        expect_reject(img, len, (w <= 4u || w == 255u) ? TL_E_TABLE_CRC : TL_E_TABLE_FORMAT, "window byte flipped");
        img[5] ^= (uint8_t)(1u << bit);
        flips++;
    }
    for (size_t i = 0; i < sizeof coef_bytes / sizeof coef_bytes[0]; i++)
        for (unsigned bit = 0; bit < 8u; bit += 3u) {
            const size_t pos = coef_bytes[i];
            img[pos] ^= (uint8_t)(1u << bit);
            /* precondition: the flipped coefficient is still in range */
            const size_t at = (pos - 16u) & ~(size_t)3u;
            const int32_t c = s32_from_bits(get_be32(&img[16u + at]));
            assert_true(c >= TL_TAPS_COEF_MIN && c <= TL_TAPS_COEF_MAX);
            char what[64];
            snprintf(what, sizeof what, "bit %u of byte %zu flipped", bit, pos);
            expect_reject(img, len, TL_E_TABLE_CRC, what);
            img[pos] ^= (uint8_t)(1u << bit);
            flips++;
        }
    for (unsigned bit = 0; bit < 32u; bit++) {
        img[len - 4u + bit / 8u] ^= (uint8_t)(1u << (bit % 8u));
        expect_reject(img, len, TL_E_TABLE_CRC, "CRC bit flipped");
        img[len - 4u + bit / 8u] ^= (uint8_t)(1u << (bit % 8u));
        flips++;
    }
    assert_int_equal(flips, 8u + 8u * 3u + 32u);
    /* restored: loads again */
    uint32_t points = 0, taps = 0;
    assert_int_equal(tl_taps_check_image(img, len, &points, &taps), TL_OK);
    assert_int_equal(points, 256);
    assert_int_equal(taps, 4);
    free(img);
    free(t);
}

/* The window id must be one of tl_window (0..4) or 255 "other", even with
 * a correct CRC; writing refuses a struct whose geometry the build cannot
 * hold (nothing is read past coef[]). */
static void reject_window_and_bad_struct(void **state)
{
    (void)state;
    const size_t count = 4u * 256u;
    int32_t *coef = calloc(count, sizeof *coef);
    const uint8_t ids[] = { 0, 4, 255, 5, 17, 254 };
    const tl_status want[] = { TL_OK, TL_OK, TL_OK, TL_E_TABLE_FORMAT, TL_E_TABLE_FORMAT, TL_E_TABLE_FORMAT };
    for (size_t i = 0; i < sizeof ids; i++) {
        raw_image f = good_fields(256, 4, 16);
        f.window = ids[i];
        size_t len = 0;
        uint8_t *img = raw_build(&f, coef, count, &len); /* CRC correct */
        if (want[i] == TL_OK) {
            tl_taps *t = new_taps();
            assert_int_equal(tl_taps_load_image(t, img, len), TL_OK);
            assert_int_equal(t->window, ids[i]);
            free(t);
        } else {
            expect_reject(img, len, want[i], "window id");
        }
        free(img);
    }
    tl_taps *t = new_taps();
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, 4, 256, t, NULL), 0);
    uint8_t *out = malloc(TL_TAPS_IMAGE_BYTES(4, 256));
    size_t len = 12345;
    t->taps = TL_MAX_TAPS + 1u;
    assert_int_equal(tl_taps_write_image(t, out, TL_TAPS_IMAGE_BYTES(4, 256), &len), TL_E_TAPS);
    assert_int_equal(tl_taps_image_crc(t), 0u);
    t->taps = 4u;
    t->points = 2u * TL_MAX_POINTS;
    assert_int_equal(tl_taps_write_image(t, out, TL_TAPS_IMAGE_BYTES(4, 256), &len), TL_E_POINTS);
    t->points = 256u;
    t->window = 9u;
    assert_int_equal(tl_taps_write_image(t, out, TL_TAPS_IMAGE_BYTES(4, 256), &len), TL_E_TABLE_FORMAT);
    assert_int_equal(len, 12345); /* nothing reported written */
    free(out);
    free(t);
    free(coef);
}

static void reject_coef_range(void **state)
{
    (void)state;
    const size_t count = 4u * 256u;
    int32_t *coef = calloc(count, sizeof *coef);
    assert_non_null(coef);
    const size_t where[] = { 0, 517, count - 1u };
    const int32_t bad[] = { 131072, -131073, INT32_MAX, INT32_MIN, 1 << 20 };
    tl_taps *t = new_taps();
    for (size_t w = 0; w < 3u; w++) {
        for (size_t b = 0; b < sizeof bad / sizeof bad[0]; b++) {
            memset(coef, 0, count * sizeof *coef);
            coef[where[w]] = bad[b];
            const raw_image f = good_fields(256, 4, 16);
            size_t len = 0;
            uint8_t *img = raw_build(&f, coef, count, &len); /* CRC correct */
            char what[64];
            snprintf(what, sizeof what, "coefficient %ld at %zu", (long)bad[b], where[w]);
            expect_reject(img, len, TL_E_TABLE_RANGE, what);
            free(img);
        }
        /* the 18-bit extremes themselves load */
        memset(coef, 0, count * sizeof *coef);
        coef[where[w]] = TL_TAPS_COEF_MAX;
        coef[(where[w] + 1u) % count] = TL_TAPS_COEF_MIN;
        const raw_image f = good_fields(256, 4, 16);
        size_t len = 0;
        uint8_t *img = raw_build(&f, coef, count, &len);
        assert_int_equal(tl_taps_load_image(t, img, len), TL_OK);
        assert_int_equal(t->coef[where[w]], 131071);
        assert_int_equal(t->coef[(where[w] + 1u) % count], -131072);
        free(img);
    }
    assert_int_equal(TL_TAPS_COEF_MAX, 131071);   /* 2^17 - 1 */
    assert_int_equal(TL_TAPS_COEF_MIN, -131072);  /* -2^17 */
    free(t);
    free(coef);
}

/* ---- the built-in default ------------------------------------------------------- */

static void default_table(void **state)
{
    (void)state;
    guarded g = guard_new();
    assert_int_equal(tl_taps_default(g.dst), TL_OK);
    const tl_taps *d = g.dst;
    assert_int_equal(d->points, TL_TAPS_DEFAULT_POINTS);
    assert_int_equal(d->taps, TL_TAPS_DEFAULT_TAPS);
    assert_int_equal(d->window, TL_WINDOW_HANN);
    assert_true(d->shift >= TL_TAPS_MIN_SHIFT && d->shift <= TL_TAPS_MAX_SHIFT);
    assert_int_equal(d->crc, tl_taps_image_crc(d));
    assert_int_equal(d->crc, tl_taps_default_crc32c);
    const size_t count = (size_t)d->taps * d->points;
    for (size_t i = count; i < TL_TAPS_MAX_COEFS; i++)
        assert_int_equal(d->coef[i], 0);
    /* it is the design the generator makes */
    tl_taps *ref = new_taps();
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, TL_TAPS_DEFAULT_TAPS, TL_TAPS_DEFAULT_POINTS, ref, NULL), 0);
    assert_memory_equal(d, ref, sizeof *ref);
    /* peak coefficient at the centre: h = 1 scaled to the largest 2^S that
     * fits 18 bits, 2^16 (taps_design.h: largest S with max|h| 2^S <= 131071) */
    assert_int_equal(d->shift, 16);
    assert_int_equal(d->coef[count / 2u], 65536);
    /* and it survives an image round trip */
    const size_t cap = TL_TAPS_IMAGE_BYTES(d->taps, d->points);
    uint8_t *img = malloc(cap);
    assert_non_null(img);
    size_t len = 0;
    assert_int_equal(tl_taps_write_image(d, img, cap, &len), TL_OK);
    assert_int_equal(get_be32(&img[len - 4u]), tl_taps_default_crc32c);
    assert_int_equal(tl_taps_load_image(ref, img, len), TL_OK);
    assert_memory_equal(ref, d, sizeof *ref);
    assert_int_equal(tl_taps_default(NULL), TL_E_NULL);
    free(img);
    free(ref);
    guard_free(&g);
}

static void default_source_regenerates(void **state)
{
    (void)state;
    tl_test_generated_matches("firmware/tl_taps_default.c", tl_gen_default_taps_source, 100000u); /* 32768 coefficients */
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(write_load_round_trip),
        cmocka_unit_test(write_image_capacity),
        cmocka_unit_test(check_image_geometry),
        cmocka_unit_test(reject_null),
        cmocka_unit_test(reject_too_short),
        cmocka_unit_test(reject_length_off_by_one),
        cmocka_unit_test(reject_header_fields),
        cmocka_unit_test(reject_taps),
        cmocka_unit_test(reject_points),
        cmocka_unit_test(reject_shift),
        cmocka_unit_test(reject_flipped_bit),
        cmocka_unit_test(reject_coef_range),
        cmocka_unit_test(reject_window_and_bad_struct),
        cmocka_unit_test(default_table),
        cmocka_unit_test(default_source_regenerates),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
