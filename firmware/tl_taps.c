/* tl_taps.c - coefficient table images: check, load, write (see tl_taps.h). */
#include "tl_taps.h"
#include "tl_crc32c.h"

static uint32_t rd_be32(const uint8_t *p)
{
    return ((uint32_t)p[0] << 24) | ((uint32_t)p[1] << 16) | ((uint32_t)p[2] << 8) | (uint32_t)p[3];
}

static void wr_be32(uint8_t *p, uint32_t v)
{
    p[0] = (uint8_t)(v >> 24);
    p[1] = (uint8_t)(v >> 16);
    p[2] = (uint8_t)(v >> 8);
    p[3] = (uint8_t)v;
}

/* Two's complement bit pattern to int32 without implementation-defined conversion. */
static int32_t s32_from_bits(uint32_t u)
{
    return (u <= 0x7FFFFFFFu) ? (int32_t)u : (int32_t)(-(int64_t)(~u) - 1);
}

static int points_ok(uint32_t n)
{
    return n >= TL_MIN_POINTS && n <= TL_MAX_POINTS && (n & (n - 1u)) == 0u;
}

/* Geometry a tl_taps may hold: taps 1..TL_MAX_TAPS, points a power of two
 * in [TL_MIN_POINTS, TL_MAX_POINTS], so taps * points fits coef[]. */
static int geometry_ok(uint32_t taps, uint32_t points)
{
    return taps >= 1u && taps <= TL_MAX_TAPS && points_ok(points);
}

static int window_ok(uint32_t w)
{
    return w <= (uint32_t)TL_WINDOW_BLACKMAN_HARRIS4 || w == (uint32_t)TL_WINDOW_OTHER;
}

/* The 16 header bytes of an image with these fields. */
typedef struct taps_fields {
    uint32_t points, taps, shift, window;
} taps_fields;

static taps_fields fields_of(const tl_taps *t)
{
    const taps_fields f = { t->points, t->taps, t->shift, t->window };
    return f;
}

static void header_bytes(const taps_fields *t, uint8_t h[TL_TAPS_HEADER_BYTES])
{
    h[0] = TL_TAPS_MAGIC0;
    h[1] = TL_TAPS_MAGIC1;
    h[2] = TL_TAPS_MAGIC2;
    h[3] = TL_TAPS_MAGIC3;
    h[4] = (uint8_t)TL_TAPS_FORMAT_VERSION;
    h[5] = (uint8_t)t->window;
    h[6] = (uint8_t)t->taps;
    h[7] = (uint8_t)TL_TAPS_COEF_BITS;
    wr_be32(&h[8], t->points);
    h[12] = (uint8_t)t->shift;
    h[13] = 0u;
    h[14] = 0u;
    h[15] = 0u;
}

tl_status tl_taps_check_image(const uint8_t *img, size_t len, uint32_t *points_out, uint32_t *taps_out)
{
    if (img == NULL)
        return TL_E_NULL;
    if (len < TL_TAPS_HEADER_BYTES + 4u)
        return TL_E_TABLE_SIZE;
    if (img[0] != TL_TAPS_MAGIC0 || img[1] != TL_TAPS_MAGIC1 || img[2] != TL_TAPS_MAGIC2 ||
        img[3] != TL_TAPS_MAGIC3 || img[4] != TL_TAPS_FORMAT_VERSION || img[7] != TL_TAPS_COEF_BITS ||
        img[13] != 0u || img[14] != 0u || img[15] != 0u)
        return TL_E_TABLE_FORMAT;
    const uint32_t taps = img[6];
    const uint32_t points = rd_be32(&img[8]);
    const uint32_t shift = img[12];
    if (taps < 1u || taps > TL_MAX_TAPS)
        return TL_E_TAPS;
    if (!points_ok(points))
        return TL_E_POINTS;
    if (shift < TL_TAPS_MIN_SHIFT || shift > TL_TAPS_MAX_SHIFT || !window_ok(img[5]))
        return TL_E_TABLE_FORMAT;
    const size_t count = (size_t)taps * points;
    if (len != TL_TAPS_IMAGE_BYTES(taps, points))
        return TL_E_TABLE_SIZE;
    const size_t body = TL_TAPS_HEADER_BYTES + 4u * count;
    if (tl_crc32c(img, body) != rd_be32(&img[body]))
        return TL_E_TABLE_CRC;
    for (size_t i = 0; i < count; i++) {
        const int32_t c = s32_from_bits(rd_be32(&img[TL_TAPS_HEADER_BYTES + 4u * i]));
        if (c < TL_TAPS_COEF_MIN || c > TL_TAPS_COEF_MAX)
            return TL_E_TABLE_RANGE;
    }
    if (points_out != NULL)
        *points_out = points;
    if (taps_out != NULL)
        *taps_out = taps;
    return TL_OK;
}

tl_status tl_taps_load_image(tl_taps *dst, const uint8_t *img, size_t len)
{
    if (dst == NULL || img == NULL)
        return TL_E_NULL;
    uint32_t points = 0, taps = 0;
    const tl_status st = tl_taps_check_image(img, len, &points, &taps);
    if (st != TL_OK)
        return st;
    const size_t count = (size_t)taps * points;
    const size_t body = TL_TAPS_HEADER_BYTES + 4u * count;
    const uint32_t shift = img[12];
    /* all checks passed: now, and only now, write the destination */
    dst->points = points;
    dst->taps = taps;
    dst->shift = shift;
    dst->window = img[5];
    dst->crc = rd_be32(&img[body]);
    for (size_t i = 0; i < TL_TAPS_MAX_COEFS; i++)
        dst->coef[i] = (i < count) ? s32_from_bits(rd_be32(&img[TL_TAPS_HEADER_BYTES + 4u * i])) : 0;
    return TL_OK;
}

static uint32_t image_crc(const taps_fields *hdr, const int32_t *coef)
{
    uint8_t h[TL_TAPS_HEADER_BYTES];
    header_bytes(hdr, h);
    uint32_t crc = tl_crc32c_update(TL_CRC32C_INIT, h, sizeof h);
    const size_t count = (size_t)hdr->taps * hdr->points;
    for (size_t i = 0; i < count; i++)
        crc = tl_crc32c_update_be32(crc, (uint32_t)coef[i]);
    return tl_crc32c_final(crc);
}

uint32_t tl_taps_crc_of(uint32_t points, uint32_t taps, uint32_t shift, uint32_t window, const int32_t *coef)
{
    const taps_fields f = { points, taps, shift, window };
    return image_crc(&f, coef);
}

uint32_t tl_taps_image_crc(const tl_taps *t)
{
    if (!geometry_ok(t->taps, t->points))
        return 0u;
    const taps_fields f = fields_of(t);
    return image_crc(&f, t->coef);
}

tl_status tl_taps_write_image(const tl_taps *t, uint8_t *out, size_t cap, size_t *len)
{
    if (t == NULL || out == NULL || len == NULL)
        return TL_E_NULL;
    if (t->taps < 1u || t->taps > TL_MAX_TAPS)
        return TL_E_TAPS;
    if (!points_ok(t->points))
        return TL_E_POINTS;
    if (t->shift < TL_TAPS_MIN_SHIFT || t->shift > TL_TAPS_MAX_SHIFT || !window_ok(t->window))
        return TL_E_TABLE_FORMAT;
    const size_t count = (size_t)t->taps * t->points;
    const size_t need = TL_TAPS_IMAGE_BYTES(t->taps, t->points);
    if (cap < need)
        return TL_E_TABLE_SIZE;
    const taps_fields f = fields_of(t);
    header_bytes(&f, out);
    for (size_t i = 0; i < count; i++)
        wr_be32(&out[TL_TAPS_HEADER_BYTES + 4u * i], (uint32_t)t->coef[i]);
    wr_be32(&out[TL_TAPS_HEADER_BYTES + 4u * count], tl_crc32c(out, TL_TAPS_HEADER_BYTES + 4u * count));
    *len = need;
    return TL_OK;
}
