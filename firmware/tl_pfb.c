/* tl_pfb.c - polyphase filterbank (see tl_pfb.h for the arithmetic). */
#include "tl_pfb.h"

tl_status tl_pfb_init(tl_pfb *pfb, const tl_taps *table, tl_rounding rounding)
{
    if (pfb == NULL || table == NULL)
        return TL_E_NULL;
    if (rounding != TL_ROUND_TRUNCATE && rounding != TL_ROUND_HALF_UP && rounding != TL_ROUND_HALF_EVEN)
        return TL_E_ROUNDING;
    if (table->shift < TL_TAPS_MIN_SHIFT || table->shift > TL_TAPS_MAX_SHIFT)
        return TL_E_TABLE_FORMAT;
    if (table->taps < 1u || table->taps > TL_MAX_TAPS)
        return TL_E_TAPS;
    if (table->points < TL_MIN_POINTS || table->points > TL_MAX_POINTS)
        return TL_E_POINTS;
    pfb->table = table;
    pfb->points = table->points;
    pfb->taps = table->taps;
    pfb->out_shift = table->shift + TL_PFB_INPUT_FRAC_BITS - TL_PFB_OUTPUT_FRAC_BITS;
    pfb->rounding = rounding;
    tl_pfb_reset(pfb);
    return TL_OK;
}

void tl_pfb_reset(tl_pfb *pfb)
{
    pfb->newest = pfb->taps - 1u;
    pfb->frames = 0u;
}

int16_t *tl_pfb_next_frame(tl_pfb *pfb)
{
    const uint32_t slot = (pfb->newest + 1u) % pfb->taps;
    return &pfb->history[(uint32_t)slot * pfb->points];
}

int tl_pfb_commit(tl_pfb *pfb, int32_t *y, uint32_t *sat)
{
    const uint32_t P = pfb->taps;
    const uint32_t N = pfb->points;
    pfb->newest = (pfb->newest + 1u) % P;
    if (pfb->frames < P)
        pfb->frames++;
    if (pfb->frames < P)
        return 0;

    /* frame p (0 = oldest) sits in slot (newest + 1 + p) mod P */
    const int16_t *frame[TL_MAX_TAPS];
    const int32_t *coef[TL_MAX_TAPS];
    for (uint32_t p = 0; p < P; p++) {
        frame[p] = &pfb->history[((pfb->newest + 1u + p) % P) * N];
        coef[p] = &pfb->table->coef[p * N];
    }
    uint32_t ovf = 0;
    for (uint32_t n = 0; n < N; n++) {
        int64_t acc = 0;
        for (uint32_t p = 0; p < P; p++)
            acc += (int64_t)coef[p][n] * frame[p][n];
        y[n] = tl_sat_s32(tl_round_shr_s64(acc, pfb->out_shift, pfb->rounding), &ovf);
    }
    tl_count_add(sat, ovf);
    return 1;
}
