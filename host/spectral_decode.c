/* spectral_decode.c - ground-side decoder of tl_encode payloads (see spectral_decode.h). */
#include "spectral_decode.h"

#include <lz4.h>
#include <string.h>

static uint32_t get_be16(const uint8_t *p)
{
    return ((uint32_t)p[0] << 8) | (uint32_t)p[1];
}

tl_status tl_spectral_header_read(const uint8_t *payload, size_t len, tl_spectral_header *h)
{
    if (payload == NULL || h == NULL)
        return TL_E_NULL;
    memset(h, 0, sizeof *h);
    if (len < TL_ENCODE_HEADER_BYTES)
        return TL_E_FORMAT;
    h->version = payload[TL_ENCODE_OFF_VERSION];
    h->encoding = payload[TL_ENCODE_OFF_ENCODING];
    h->type = payload[TL_ENCODE_OFF_TYPE];
    h->transpose = payload[TL_ENCODE_OFF_TRANSPOSE];
    h->count = get_be16(payload + TL_ENCODE_OFF_COUNT);
    h->block = get_be16(payload + TL_ENCODE_OFF_BLOCK);
    h->steps = get_be16(payload + TL_ENCODE_OFF_STEPS);
    h->lz4_len = get_be16(payload + TL_ENCODE_OFF_LZ4_LEN);
    if (h->version != TL_ENCODE_VERSION)
        return TL_E_FORMAT;
    if (h->encoding != TL_ENCODE_ID_LOSSLESS && h->encoding != TL_ENCODE_ID_BOUNDED)
        return TL_E_FORMAT;
    if (h->type != TL_ENCODE_UNSIGNED && h->type != TL_ENCODE_SIGNED)
        return TL_E_FORMAT;
    if (h->transpose != TL_ENCODE_BYTE_SHUFFLE && h->transpose != TL_ENCODE_BIT_PLANES)
        return TL_E_FORMAT;
    if (h->count == 0u || h->count > TL_ENCODE_FORMAT_MAX_CHANNELS)
        return TL_E_FORMAT;
    if (h->encoding == TL_ENCODE_ID_LOSSLESS) {
        if (h->block != 0u || h->steps != 0u)
            return TL_E_FORMAT;
    } else {
        if (h->block == 0u || h->block > TL_ENCODE_FORMAT_MAX_CHANNELS)
            return TL_E_FORMAT;
        if (h->steps != (h->count + h->block - 1u) / h->block)
            return TL_E_FORMAT;
    }
    if (h->lz4_len == 0u || len != (size_t)TL_ENCODE_HEADER_BYTES + h->steps + h->lz4_len)
        return TL_E_FORMAT;
    for (uint32_t b = 0; b < h->steps; b++)
        if (payload[TL_ENCODE_HEADER_BYTES + b] > TL_ENCODE_MAX_STEP_LOG2)
            return TL_E_FORMAT;
    return TL_OK;
}

static int64_t s64_from_bits(uint64_t u)
{
    return (u <= (uint64_t)INT64_MAX) ? (int64_t)u : -(int64_t)(~u) - 1;
}

/* Same rule as the encoder (tl_encode.h, pipeline step 2). */
static uint64_t predict(uint64_t prev, unsigned k_prev, unsigned k, int is_signed)
{
    if (k == k_prev)
        return prev;
    if (k < k_prev)
        return prev << (k_prev - k);
    if (is_signed) {
        const int64_t p = s64_from_bits(prev);
        const unsigned s = k - k_prev;
        return (uint64_t)((p >= 0) ? (p >> s) : ~((~p) >> s)); /* floor(p / 2^s) */
    }
    return prev >> (k - k_prev);
}

static uint64_t unzigzag(uint64_t z)
{
    return (z >> 1) ^ (0u - (z & 1u));
}

static uint64_t gather(const uint8_t *raw, uint32_t transpose, uint32_t n, uint32_t i)
{
    uint64_t z = 0;
    if (transpose == TL_ENCODE_BYTE_SHUFFLE) {
        for (unsigned j = 0; j < 8u; j++)
            z |= (uint64_t)raw[(size_t)j * n + i] << (56u - 8u * j);
        return z;
    }
    for (unsigned b = 0; b < 64u; b++) {
        const size_t t = (size_t)b * n + i;
        z |= (uint64_t)((raw[t >> 3] >> (7u - (unsigned)(t & 7u))) & 1u) << (63u - b);
    }
    return z;
}

static uint64_t dequantize_u64(uint64_t q, unsigned k)
{
    if (k == 0u)
        return q;
    return (q > (UINT64_MAX >> k)) ? UINT64_MAX : q << k;
}

static int64_t dequantize_s64(uint64_t bits, unsigned k)
{
    const int64_t q = s64_from_bits(bits);
    if (k == 0u)
        return q;
    const int64_t hi = INT64_MAX >> k; /* 2^(63-k) - 1 */
    if (q > hi)
        return INT64_MAX;
    if (q < -hi - 1)
        return INT64_MIN;
    return q * ((int64_t)1 << k);
}

/* Decode into exactly one of vu / vs. */
static tl_status decode(const uint8_t *payload, size_t len, uint64_t *vu, int64_t *vs, uint64_t *steps, size_t cap,
                        tl_spectral_header *hout)
{
    tl_spectral_header h;
    const tl_status st = tl_spectral_header_read(payload, len, &h);
    if (hout != NULL)
        *hout = h;
    if (st != TL_OK)
        return st;
    const uint32_t want = (vs != NULL) ? TL_ENCODE_SIGNED : TL_ENCODE_UNSIGNED;
    if (h.type != want)
        return TL_E_ENCODING;
    if (cap < h.count)
        return TL_E_SPACE;

    uint8_t raw[8u * TL_ENCODE_FORMAT_MAX_CHANNELS];
    const int raw_len = (int)(8u * h.count);
    const uint8_t *block = payload + TL_ENCODE_HEADER_BYTES + h.steps;
    const int got = LZ4_decompress_safe((const char *)block, (char *)raw, (int)h.lz4_len, raw_len);
    if (got != raw_len)
        return TL_E_FORMAT;

    const uint8_t *kbytes = payload + TL_ENCODE_HEADER_BYTES;
    const int is_signed = (vs != NULL);
    uint64_t prev = 0;
    unsigned k_prev = 0;
    for (uint32_t i = 0; i < h.count; i++) {
        const unsigned k = (h.block != 0u) ? kbytes[i / h.block] : 0u;
        const uint64_t p = (i == 0u) ? 0u : predict(prev, k_prev, k, is_signed);
        const uint64_t u = p + unzigzag(gather(raw, h.transpose, h.count, i));
        if (is_signed)
            vs[i] = dequantize_s64(u, k);
        else
            vu[i] = dequantize_u64(u, k);
        if (steps != NULL)
            steps[i] = (uint64_t)1 << k;
        prev = u;
        k_prev = k;
    }
    return TL_OK;
}

tl_status tl_spectral_decode_u64(const uint8_t *payload, size_t len, uint64_t *values, uint64_t *steps, size_t cap,
                                 tl_spectral_header *h)
{
    if (payload == NULL || values == NULL)
        return TL_E_NULL;
    return decode(payload, len, values, NULL, steps, cap, h);
}

tl_status tl_spectral_decode_i64(const uint8_t *payload, size_t len, int64_t *values, uint64_t *steps, size_t cap,
                                 tl_spectral_header *h)
{
    if (payload == NULL || values == NULL)
        return TL_E_NULL;
    return decode(payload, len, NULL, values, steps, cap, h);
}
