/* tl_integrate.c - saturating 64-bit accumulation (see tl_integrate.h). */
#include "tl_integrate.h"
#include "tl_fixed.h"
#if defined(TL_SIMD_X86)
#include "x86/tl_simd_x86.h" /* host build on x86-64 only (Makefile) */
#endif

void tl_integrate_reset(tl_integrator *it, uint32_t channels)
{
    it->channels = channels;
    it->spectra = 0;
    for (uint32_t i = 0; i < 4u; i++)
        it->sat_channels[i] = 0;
    for (uint32_t k = 0; k < TL_MAX_CHANNELS; k++) {
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            it->auto_sum[i][k] = 0;
        it->cross_re[k] = 0;
        it->cross_im[k] = 0;
        it->flags[k] = 0;
    }
}

/* Record a saturation of one channel: flag it, count it the first time. */
static void mark(tl_integrator *it, uint32_t k, uint8_t bit, uint32_t which)
{
    if ((it->flags[k] & bit) == 0u) {
        it->flags[k] = (uint8_t)(it->flags[k] | bit);
        it->sat_channels[which]++;
    }
}

void tl_integrate_power(tl_integrator *it, uint32_t input, const uint64_t *P)
{
    uint64_t *acc = it->auto_sum[input];
    const uint8_t bit = (input == 0u) ? TL_FLAG_SAT_AUTO0 : TL_FLAG_SAT_AUTO1;
#if defined(TL_SIMD_X86)
    if (tl_simd_x86_active()) { /* AVX2 twin, same sums, flags and counts */
        tl_integrate_power_avx2(acc, P, it->channels, it->flags, bit, &it->sat_channels[input]);
        return;
    }
#endif
    for (uint32_t k = 0; k < it->channels; k++) {
        uint32_t sat = 0;
        acc[k] = tl_sat_add_u64(acc[k], P[k], &sat);
        if (sat != 0u)
            mark(it, k, bit, input);
    }
}

void tl_integrate_cross(tl_integrator *it, const int64_t *re, const int64_t *im)
{
#if defined(TL_SIMD_X86)
    if (tl_simd_x86_active()) { /* AVX2 twin, same sums, flags and counts */
        tl_integrate_cross_avx2(it->cross_re, it->cross_im, re, im, it->channels, it->flags, TL_FLAG_SAT_CROSS_RE,
                                TL_FLAG_SAT_CROSS_IM, &it->sat_channels[2]);
        return;
    }
#endif
    for (uint32_t k = 0; k < it->channels; k++) {
        uint32_t sr = 0, si = 0;
        it->cross_re[k] = tl_sat_add_s64(it->cross_re[k], re[k], &sr);
        it->cross_im[k] = tl_sat_add_s64(it->cross_im[k], im[k], &si);
        if (sr != 0u)
            mark(it, k, TL_FLAG_SAT_CROSS_RE, 2u);
        if (si != 0u)
            mark(it, k, TL_FLAG_SAT_CROSS_IM, 3u);
    }
}
