/* tl_cuc.c - CCSDS unsegmented time code (see tl_cuc.h). */
#include "tl_cuc.h"

#include "tl_bytes.h"

_Static_assert(TL_CUC_PFIELD == 0x1Eu, "CUC P-field: CCSDS epoch, 4 coarse + 2 fine octets");
_Static_assert(TL_CUC_OFF_FINE + TL_CUC_FINE_OCTETS == TL_CUC_OCTETS, "CUC layout");

#define TL_CUC_COARSE_MAX 0xFFFFFFFFu

tl_status tl_cuc_encode(tl_cuc t, uint8_t *dst, size_t dst_cap)
{
    if (dst == NULL)
        return TL_E_NULL;
    if (dst_cap < TL_CUC_OCTETS)
        return TL_E_SPACE;
    dst[TL_CUC_OFF_PFIELD] = (uint8_t)TL_CUC_PFIELD;
    tl_put_be32(dst + TL_CUC_OFF_COARSE, t.coarse);
    tl_put_be16(dst + TL_CUC_OFF_FINE, t.fine);
    return TL_OK;
}

tl_status tl_cuc_decode(const uint8_t *src, size_t avail, tl_cuc *t)
{
    if (src == NULL || t == NULL)
        return TL_E_NULL;
    if (avail < TL_CUC_OCTETS)
        return TL_E_SPACE;
    if (src[TL_CUC_OFF_PFIELD] != TL_CUC_PFIELD)
        return TL_E_FORMAT;
    t->coarse = tl_get_be32(src + TL_CUC_OFF_COARSE);
    t->fine = tl_get_be16(src + TL_CUC_OFF_FINE);
    return TL_OK;
}

tl_status tl_cuc_from_samples(tl_cuc start, uint64_t samples, uint32_t rate_hz, tl_cuc *t)
{
    if (t == NULL)
        return TL_E_NULL;
    if (rate_hz == 0u)
        return TL_E_TIME_RANGE;
    const uint64_t rate = rate_hz;
    const uint64_t whole = samples / rate;   /* whole seconds, < 2^64 */
    const uint64_t rem = samples % rate;     /* < 2^32 */
    /* round(rem * 65536 / rate), ties up: (2 * rem * 65536 + rate) / (2 * rate);
     * numerator < 2^49 + 2^32, result 0 .. 65536 */
    const uint64_t frac = (rem * (2u * (uint64_t)TL_CUC_FINE_PER_SECOND) + rate) / (2u * rate);
    const uint64_t fine_sum = (uint64_t)start.fine + frac;                 /* < 2^17 + 2^16 */
    const uint64_t carry = fine_sum / TL_CUC_FINE_PER_SECOND;              /* 0 or 1 */
    /* coarse = start.coarse + whole + carry must stay <= 2^32 - 1 */
    const uint64_t room = (uint64_t)TL_CUC_COARSE_MAX - (uint64_t)start.coarse;
    if (whole > room || carry > room - whole)
        return TL_E_TIME_RANGE;
    t->coarse = (uint32_t)((uint64_t)start.coarse + whole + carry);
    t->fine = (uint16_t)(fine_sum % TL_CUC_FINE_PER_SECOND);
    return TL_OK;
}
