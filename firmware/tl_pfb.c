/* tl_pfb.c - polyphase filterbank (see tl_pfb.h for the arithmetic). */
#include "tl_pfb.h"
#if defined(TL_SIMD_X86)
#include "x86/tl_simd_x86.h" /* host build on x86-64 only (Makefile) */
#endif

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

/* y[n] = sat32(round(acc[n] / 2^s)), acc[n] = sum_p coef[p][n] frame[p][n]
 * exact in int64 (|acc| <= 2^36), four outputs at a time through
 * tl_round_sat_s32_group (N is a multiple of 4). Written once and
 * instantiated with P and the rounding known at compile time for the
 * default table, and with run-time values otherwise. */
static TL_ALWAYS_INLINE void filter(const int16_t *const *frame, const int32_t *const *coef, uint32_t N, uint32_t P,
                                    tl_round_bias rb, int32_t *y, uint32_t *ovf)
{
    for (uint32_t n = 0; n < N; n += 4u) {
        int64_t a0 = 0, a1 = 0, a2 = 0, a3 = 0; /* four outputs in registers */
#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC unroll 4
#endif
        for (uint32_t p = 0; p < P; p++) {
            const int32_t *c = &coef[p][n];
            const int16_t *f = &frame[p][n];
            a0 += (int64_t)c[0] * f[0];
            a1 += (int64_t)c[1] * f[1];
            a2 += (int64_t)c[2] * f[2];
            a3 += (int64_t)c[3] * f[3];
        }
        const int64_t acc[4] = { a0, a1, a2, a3 };
        tl_round_sat_s32_group(acc, 4u, rb, &y[n], ovf);
    }
}

/* The same with S = 15 (no output shift): y[n] = sat32(acc[n]). */
static void filter_unshifted(const int16_t *const *frame, const int32_t *const *coef, uint32_t N, uint32_t P,
                             int32_t *y, uint32_t *ovf)
{
    for (uint32_t n = 0; n < N; n++) {
        int64_t acc = 0;
        for (uint32_t p = 0; p < P; p++)
            acc += (int64_t)coef[p][n] * frame[p][n];
        y[n] = tl_sat_s32_fast(acc, ovf);
    }
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
    const unsigned sh = pfb->out_shift;
#if defined(TL_SIMD_X86)
    if (sh >= 1u && sh <= 32u && tl_simd_x86_active()) { /* AVX2 twin, same integers */
        const tl_round_bias rb = tl_round_bias_make(sh, pfb->rounding);
        tl_pfb_filter_avx2(frame, coef, N, P, &rb, y, &ovf);
    } else
#endif
    {
        if (P == 4u && sh == 1u && pfb->rounding == TL_ROUND_HALF_EVEN)
            filter(frame, coef, N, 4u, tl_round_bias_make(1u, TL_ROUND_HALF_EVEN), y, &ovf); /* the default table */
        else if (sh != 0u)
            filter(frame, coef, N, P, tl_round_bias_make(sh, pfb->rounding), y, &ovf);
        else
            filter_unshifted(frame, coef, N, P, y, &ovf);
    }
    tl_count_add(sat, ovf);
    return 1;
}
