/* tl_encode.c - lossless and noise-bounded spectral encodings (see tl_encode.h). */
#include "tl_encode.h"

#include <string.h>
#include "tl_fixed.h"
#include "tl_limits.h"

/* One call's job: exactly one of vu / vs is non-NULL. */
typedef struct enc_job {
    const uint64_t *vu;    /* unsigned values */
    const int64_t *vs;     /* signed values */
    const uint64_t *ref;   /* noise references, or NULL */
    uint32_t count;
    uint32_t encoding;     /* TL_ENCODE_ID_* */
    uint32_t transpose;
    uint32_t block;        /* 0 for lossless */
    uint32_t fraction_q16;
    uint64_t sqrt_m_q16;   /* ceil(2^16 sqrt(M)) */
} enc_job;

/* Number of significant bits of x (0 for 0): six fixed steps. */
static unsigned bitlen64(uint64_t x)
{
    unsigned n = 0;
    if ((x >> 32) != 0u) {
        n += 32u;
        x >>= 32;
    }
    if ((x >> 16) != 0u) {
        n += 16u;
        x >>= 16;
    }
    if ((x >> 8) != 0u) {
        n += 8u;
        x >>= 8;
    }
    if ((x >> 4) != 0u) {
        n += 4u;
        x >>= 4;
    }
    if ((x >> 2) != 0u) {
        n += 2u;
        x >>= 2;
    }
    if ((x >> 1) != 0u) {
        n += 1u;
        x >>= 1;
    }
    return n + (unsigned)x;
}

/* ceil(sqrt(x)): digit-by-digit square root, 32 steps at most, shifts and
 * subtractions only. */
static uint64_t isqrt_ceil(uint64_t x)
{
    uint64_t r = 0, rem = x, bit = (uint64_t)1 << 62;
    while (bit > rem)
        bit >>= 2;
    while (bit != 0u) {
        if (rem >= r + bit) {
            rem -= r + bit;
            r = (r >> 1) + bit;
        } else {
            r >>= 1;
        }
        bit >>= 2;
    }
    return (rem != 0u) ? r + 1u : r; /* rem = x - r^2 */
}

/* k of one channel: the largest k with 2^k <= f ref / sqrt(M), clamped to
 * 0 .. TL_ENCODE_MAX_STEP_LOG2 (proof in tl_encode.h). u = ceil(2^16 sqrt(M)),
 * a = f * 2^16. */
static unsigned step_log2(uint64_t ref, uint64_t u, uint32_t a)
{
    if (ref == 0u)
        return 0u;
    const unsigned br = bitlen64(ref);
    const unsigned s = (br > 32u) ? br - 32u : 0u;
    const uint64_t x = (uint64_t)a * (ref >> s); /* a <= 2^16, ref >> s < 2^32 */
    const unsigned bx = bitlen64(x), bu = bitlen64(u);
    int e; /* largest e with u 2^e <= x: d or d - 1, d = bx - bu */
    if (bx >= bu) {
        const unsigned d = bx - bu;
        e = ((u << d) <= x) ? (int)d : (int)d - 1;
    } else {
        const unsigned d = bu - bx;
        e = (u <= (x << d)) ? -(int)d : -(int)d - 1;
    }
    const int k = e + (int)s;
    if (k <= 0)
        return 0u;
    if (k > (int)TL_ENCODE_MAX_STEP_LOG2)
        return TL_ENCODE_MAX_STEP_LOG2;
    return (unsigned)k;
}

/* int64 from its two's complement pattern, without an implementation-defined
 * conversion. */
static int64_t s64_from_bits(uint64_t u)
{
    return (u <= (uint64_t)INT64_MAX) ? (int64_t)u : -(int64_t)(~u) - 1;
}

/* Prediction of channel i from channel i-1 (tl_encode.h, pipeline step 2). */
static uint64_t predict(uint64_t prev, unsigned k_prev, unsigned k, int is_signed)
{
    if (k == k_prev)
        return prev;
    if (k < k_prev)
        return prev << (k_prev - k);
    if (is_signed)
        return (uint64_t)tl_floor_shr_s64(s64_from_bits(prev), k - k_prev);
    return prev >> (k - k_prev);
}

static uint64_t zigzag(uint64_t d)
{
    return (d << 1) ^ (0u - (d >> 63));
}

/* Place zigzag word z of channel i into the transposed buffer. */
static void scatter(uint8_t *buf, uint32_t transpose, uint32_t count, uint32_t i, uint64_t z)
{
    if (transpose == TL_ENCODE_BYTE_SHUFFLE) {
        for (unsigned j = 0; j < 8u; j++)
            buf[(size_t)j * count + i] = (uint8_t)(z >> (56u - 8u * j));
        return;
    }
    for (unsigned b = 0; b < 64u; b++) {
        const size_t t = (size_t)b * count + i;
        buf[t >> 3] |= (uint8_t)(((z >> (63u - b)) & 1u) << (7u - (unsigned)(t & 7u)));
    }
}

static void put_be16(uint8_t *p, uint32_t v)
{
    p[0] = (uint8_t)(v >> 8);
    p[1] = (uint8_t)v;
}

static tl_status fail_space(uint8_t *dst, size_t dst_cap)
{
    if (dst_cap != 0u)
        dst[TL_ENCODE_OFF_VERSION] = 0u; /* no valid version: cannot pass for a payload */
    return TL_E_SPACE;
}

static uint64_t job_ref(const enc_job *j, uint32_t i)
{
    if (j->ref != NULL)
        return j->ref[i];
    if (j->vu != NULL)
        return j->vu[i];
    return (j->vs[i] >= 0) ? (uint64_t)j->vs[i] : 0u - (uint64_t)j->vs[i];
}

/* The value sent for channel i with step 2^k, as a uint64 bit pattern. */
static uint64_t job_value(const enc_job *j, uint32_t i, unsigned k)
{
    if (j->vu != NULL)
        return tl_round_shr_u64(j->vu[i], k, TL_ROUND_HALF_EVEN);
    return (uint64_t)tl_round_shr_s64(j->vs[i], k, TL_ROUND_HALF_EVEN);
}

static tl_status encode_job(tl_encode *e, const enc_job *j, uint8_t *dst, size_t dst_cap, size_t *written)
{
    uint32_t steps = 0;
    if (j->block != 0u)
        for (uint32_t start = 0; start < j->count; start += j->block)
            steps++;
    if (dst_cap < TL_ENCODE_HEADER_BYTES + (size_t)steps)
        return fail_space(dst, dst_cap);

    const size_t raw = 8u * (size_t)j->count;
    if (j->transpose == TL_ENCODE_BIT_PLANES)
        memset(e->shuffled, 0, raw);
    const int is_signed = (j->vs != NULL);
    uint64_t prev = 0;
    unsigned k_prev = 0;
    uint32_t i = 0, b = 0;
    while (i < j->count) {
        const uint32_t end = (j->block != 0u && j->count - i > j->block) ? i + j->block : j->count;
        unsigned k = 0;
        if (j->block != 0u) {
            k = TL_ENCODE_MAX_STEP_LOG2;
            for (uint32_t c = i; c < end; c++) {
                const unsigned kc = step_log2(job_ref(j, c), j->sqrt_m_q16, j->fraction_q16);
                k = (kc < k) ? kc : k;
            }
            dst[TL_ENCODE_HEADER_BYTES + b] = (uint8_t)k;
            b++;
        }
        for (uint32_t c = i; c < end; c++) {
            const uint64_t u = job_value(j, c, k);
            const uint64_t p = (c == 0u) ? 0u : predict(prev, k_prev, k, is_signed);
            scatter(e->shuffled, j->transpose, j->count, c, zigzag(u - p));
            prev = u;
            k_prev = k;
        }
        i = end;
    }

    const size_t head = TL_ENCODE_HEADER_BYTES + (size_t)steps;
    size_t lz_len = 0;
    const tl_status st = tl_lz4_compress(&e->lz4, e->shuffled, raw, dst + head, dst_cap - head, &lz_len);
    if (st != TL_OK)
        return (st == TL_E_SPACE) ? fail_space(dst, dst_cap) : st;

    dst[TL_ENCODE_OFF_VERSION] = (uint8_t)TL_ENCODE_VERSION;
    dst[TL_ENCODE_OFF_ENCODING] = (uint8_t)j->encoding;
    dst[TL_ENCODE_OFF_TYPE] = (uint8_t)(is_signed ? TL_ENCODE_SIGNED : TL_ENCODE_UNSIGNED);
    dst[TL_ENCODE_OFF_TRANSPOSE] = (uint8_t)j->transpose;
    put_be16(dst + TL_ENCODE_OFF_COUNT, j->count);
    put_be16(dst + TL_ENCODE_OFF_BLOCK, j->block);
    put_be16(dst + TL_ENCODE_OFF_STEPS, steps);
    put_be16(dst + TL_ENCODE_OFF_LZ4_LEN, (uint32_t)lz_len); /* < 2^16: TL_LZ4_BOUND(8 * 4096) */
    *written = head + lz_len;
    return TL_OK;
}

/* Checks shared by every entry point; v is the value array (either type). */
static tl_status check_common(const tl_encode *e, const void *v, uint32_t count, uint32_t transpose,
                              const uint8_t *dst, size_t *written)
{
    if (written == NULL)
        return TL_E_NULL;
    *written = 0;
    if (e == NULL || v == NULL || dst == NULL)
        return TL_E_NULL;
    if (count == 0u || count > TL_ENCODE_MAX_CHANNELS)
        return TL_E_ENCODING;
    if (transpose != TL_ENCODE_BYTE_SHUFFLE && transpose != TL_ENCODE_BIT_PLANES)
        return TL_E_ENCODING;
    return TL_OK;
}

static tl_status check_bound(const tl_bound_cfg *cfg)
{
    if (cfg->block == 0u || cfg->block > TL_ENCODE_MAX_CHANNELS)
        return TL_E_ENCODING;
    if (cfg->spectra == 0u || cfg->spectra > TL_MAX_INTEGRATION)
        return TL_E_INTEGRATION;
    if (cfg->fraction_q16 < TL_ENCODE_FRACTION_MIN_Q16 || cfg->fraction_q16 > TL_ENCODE_FRACTION_MAX_Q16)
        return TL_E_NOISE_FRACTION;
    return TL_OK;
}

tl_status tl_encode_lossless_u64(tl_encode *e, const uint64_t *v, uint32_t count, uint32_t transpose, uint8_t *dst,
                                 size_t dst_cap, size_t *written)
{
    const tl_status st = check_common(e, v, count, transpose, dst, written);
    if (st != TL_OK)
        return st;
    const enc_job j = { v, NULL, NULL, count, TL_ENCODE_ID_LOSSLESS, transpose, 0u, 0u, 0u };
    return encode_job(e, &j, dst, dst_cap, written);
}

tl_status tl_encode_lossless_i64(tl_encode *e, const int64_t *v, uint32_t count, uint32_t transpose, uint8_t *dst,
                                 size_t dst_cap, size_t *written)
{
    const tl_status st = check_common(e, v, count, transpose, dst, written);
    if (st != TL_OK)
        return st;
    const enc_job j = { NULL, v, NULL, count, TL_ENCODE_ID_LOSSLESS, transpose, 0u, 0u, 0u };
    return encode_job(e, &j, dst, dst_cap, written);
}

tl_status tl_encode_bounded_u64(tl_encode *e, const uint64_t *v, const uint64_t *noise_ref, uint32_t count,
                                const tl_bound_cfg *cfg, uint8_t *dst, size_t dst_cap, size_t *written)
{
    if (cfg == NULL) {
        if (written != NULL)
            *written = 0;
        return TL_E_NULL;
    }
    tl_status st = check_common(e, v, count, cfg->transpose, dst, written);
    if (st == TL_OK)
        st = check_bound(cfg);
    if (st != TL_OK)
        return st;
    const enc_job j = { v, NULL, noise_ref, count, TL_ENCODE_ID_BOUNDED, cfg->transpose, cfg->block,
                        cfg->fraction_q16, isqrt_ceil((uint64_t)cfg->spectra << 32) };
    return encode_job(e, &j, dst, dst_cap, written);
}

tl_status tl_encode_bounded_i64(tl_encode *e, const int64_t *v, const uint64_t *noise_ref, uint32_t count,
                                const tl_bound_cfg *cfg, uint8_t *dst, size_t dst_cap, size_t *written)
{
    if (cfg == NULL) {
        if (written != NULL)
            *written = 0;
        return TL_E_NULL;
    }
    tl_status st = check_common(e, v, count, cfg->transpose, dst, written);
    if (st == TL_OK)
        st = check_bound(cfg);
    if (st != TL_OK)
        return st;
    const enc_job j = { NULL, v, noise_ref, count, TL_ENCODE_ID_BOUNDED, cfg->transpose, cfg->block,
                        cfg->fraction_q16, isqrt_ceil((uint64_t)cfg->spectra << 32) };
    return encode_job(e, &j, dst, dst_cap, written);
}
