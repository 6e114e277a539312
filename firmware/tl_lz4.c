/* tl_lz4.c - greedy LZ4 block compressor (see tl_lz4.h for the format and method). */
#include "tl_lz4.h"

#include <string.h>

#define TL_LZ4_HASH_MULT 2654435761u /* Knuth's multiplicative hash constant, 2^32 / golden ratio */
#define TL_LZ4_NIBBLE_MAX 15u

/* The 4 bytes at p assembled big-endian: the same value on every target. */
static uint32_t lz4_read4(const uint8_t *p)
{
    return ((uint32_t)p[0] << 24) | ((uint32_t)p[1] << 16) | ((uint32_t)p[2] << 8) | (uint32_t)p[3];
}

static uint32_t lz4_hash(uint32_t four)
{
    return (uint32_t)(four * TL_LZ4_HASH_MULT) >> (32u - TL_LZ4_HASH_LOG);
}

/* Output cursor with the capacity check in one place. */
typedef struct lz4_out {
    uint8_t *dst;
    size_t cap;
    size_t pos;
} lz4_out;

/* Length continuation bytes for rest = length - 15: 255 ... then < 255.
 * Returns 0 when the output is full. Loops rest / 255 + 1 times. */
static int lz4_put_more(lz4_out *o, size_t rest)
{
    while (rest >= 255u) {
        if (o->pos >= o->cap)
            return 0;
        o->dst[o->pos++] = 255u;
        rest -= 255u;
    }
    if (o->pos >= o->cap)
        return 0;
    o->dst[o->pos++] = (uint8_t)rest;
    return 1;
}

/* One sequence: lit_len literals from lit, then (when match_len != 0) a
 * match of match_len >= 4 bytes at distance offset (1 .. 65535).
 * Returns 0 when the output is full. */
static int lz4_put_sequence(lz4_out *o, const uint8_t *lit, size_t lit_len, size_t offset, size_t match_len)
{
    const size_t ml_code = (match_len != 0u) ? match_len - TL_LZ4_MIN_MATCH : 0u;
    const unsigned hi = (lit_len >= TL_LZ4_NIBBLE_MAX) ? TL_LZ4_NIBBLE_MAX : (unsigned)lit_len;
    const unsigned lo = (ml_code >= TL_LZ4_NIBBLE_MAX) ? TL_LZ4_NIBBLE_MAX : (unsigned)ml_code;
    if (o->pos >= o->cap)
        return 0;
    o->dst[o->pos++] = (uint8_t)((hi << 4) | lo);
    if (lit_len >= TL_LZ4_NIBBLE_MAX && !lz4_put_more(o, lit_len - TL_LZ4_NIBBLE_MAX))
        return 0;
    if (o->cap - o->pos < lit_len)
        return 0;
    if (lit_len != 0u)
        memcpy(o->dst + o->pos, lit, lit_len);
    o->pos += lit_len;
    if (match_len == 0u)
        return 1;
    if (o->cap - o->pos < 2u)
        return 0;
    o->dst[o->pos++] = (uint8_t)(offset & 0xFFu); /* little-endian, as the format says */
    o->dst[o->pos++] = (uint8_t)(offset >> 8);
    if (ml_code >= TL_LZ4_NIBBLE_MAX && !lz4_put_more(o, ml_code - TL_LZ4_NIBBLE_MAX))
        return 0;
    return 1;
}

tl_status tl_lz4_compress(tl_lz4 *z, const uint8_t *src, size_t src_len, uint8_t *dst, size_t dst_cap,
                          size_t *written)
{
    if (z == NULL || written == NULL)
        return TL_E_NULL;
    *written = 0;
    if ((src == NULL && src_len != 0u) || (dst == NULL && dst_cap != 0u))
        return TL_E_NULL;
    if (src_len > TL_LZ4_MAX_INPUT)
        return TL_E_ENCODING;
    memset(z->table, 0, sizeof z->table);

    lz4_out o = { dst, dst_cap, 0u };
    if (src_len == 0u) { /* one token, no literals (src may be NULL) */
        if (dst_cap == 0u)
            return TL_E_SPACE;
        dst[0] = 0u;
        *written = 1u;
        return TL_OK;
    }
    size_t anchor = 0; /* first input byte not yet emitted */
    if (src_len >= TL_LZ4_MIN_INPUT) {
        const size_t last_start = src_len - TL_LZ4_MATCH_MARGIN; /* a match may start at <= this */
        const size_t match_end = src_len - TL_LZ4_LAST_LITERALS; /* and must end at <= this */
        size_t ip = 0;
        while (ip <= last_start) {
            const uint32_t four = lz4_read4(src + ip);
            const uint32_t h = lz4_hash(four);
            const size_t cand = z->table[h];
            z->table[h] = (uint16_t)ip;
            /* table entries are positions of this call (or 0 after the
             * clear), so cand < ip means a real earlier position */
            if (cand >= ip || lz4_read4(src + cand) != four) {
                ip++;
                continue;
            }
            size_t start = ip, from = cand;
            while (start > anchor && from > 0u && src[start - 1u] == src[from - 1u]) {
                start--;
                from--;
            }
            size_t end = ip + TL_LZ4_MIN_MATCH, from_end = cand + TL_LZ4_MIN_MATCH;
            while (end < match_end && src[end] == src[from_end]) {
                end++;
                from_end++;
            }
            if (!lz4_put_sequence(&o, src + anchor, start - anchor, ip - cand, end - start))
                return TL_E_SPACE;
            anchor = end;
            ip = end;
            /* end <= src_len - 5, so the 4 bytes at end - 2 are inside src */
            z->table[lz4_hash(lz4_read4(src + end - 2u))] = (uint16_t)(end - 2u);
        }
    }
    if (!lz4_put_sequence(&o, src + anchor, src_len - anchor, 0u, 0u))
        return TL_E_SPACE;
    *written = o.pos;
    return TL_OK;
}
