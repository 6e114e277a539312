/* tl_taps_builtin.c - the built-in default coefficient table (data in the
 * generated tl_taps_default.c), checked against its CRC before use. */
#include "tl_taps.h"

tl_status tl_taps_default(tl_taps *dst)
{
    if (dst == NULL)
        return TL_E_NULL;
    const size_t count = (size_t)tl_taps_default_taps * tl_taps_default_points;
    if (count > TL_TAPS_MAX_COEFS || tl_taps_default_points > TL_MAX_POINTS)
        return TL_E_TABLE_MISMATCH; /* this build's maxima cannot hold the default */
    /* check the CRC before dst is touched */
    if (tl_taps_crc_of(tl_taps_default_points, tl_taps_default_taps, tl_taps_default_shift, tl_taps_default_window,
                       tl_taps_default_coef) != tl_taps_default_crc32c)
        return TL_E_TABLE_CRC;
    dst->points = tl_taps_default_points;
    dst->taps = tl_taps_default_taps;
    dst->shift = tl_taps_default_shift;
    dst->window = tl_taps_default_window;
    dst->crc = tl_taps_default_crc32c;
    for (size_t i = 0; i < TL_TAPS_MAX_COEFS; i++)
        dst->coef[i] = (i < count) ? tl_taps_default_coef[i] : 0;
    return TL_OK;
}
