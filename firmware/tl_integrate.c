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
    it->check = 0;
}

/* Record a saturation of one channel: flag it, count it the first time
 * (the flag octet grows by `bit`, the count by 1: both go into check). */
static void mark(tl_integrator *it, uint32_t k, uint8_t bit, uint32_t which)
{
    if ((it->flags[k] & bit) == 0u) {
        it->flags[k] = (uint8_t)(it->flags[k] | bit);
        it->sat_channels[which]++;
        it->check += (uint64_t)bit + 1u;
    }
}

int tl_integrate_verify(const tl_integrator *it)
{
    const uint32_t n = it->channels < TL_MAX_CHANNELS ? it->channels : TL_MAX_CHANNELS;
    uint64_t s = 0;
    for (uint32_t i = 0; i < 4u; i++)
        s += it->sat_channels[i];
    for (uint32_t k = 0; k < n; k++) {
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            s += it->auto_sum[i][k];
        s += (uint64_t)it->cross_re[k] + (uint64_t)it->cross_im[k] + it->flags[k];
    }
    return s == it->check;
}

/* A sum that saturated (tl_sat_add_u64 or tl_sat_add_s64 stopped it at
 * its limit), out of the hot loop: flag and count the channel; returns
 * what the word really changed by (new - old) minus the term the loop
 * counted. */
static TL_NOINLINE uint64_t saturated(tl_integrator *it, uint32_t k, uint64_t now, uint64_t old, uint64_t term,
                                      uint8_t bit, uint32_t which)
{
    mark(it, k, bit, which);
    return now - old - term;
}

void tl_integrate_power(tl_integrator *it, uint32_t input, const uint64_t *P)
{
    uint64_t *acc = it->auto_sum[input];
    const uint8_t bit = (input == 0u) ? TL_FLAG_SAT_AUTO0 : TL_FLAG_SAT_AUTO1;
#if defined(TL_SIMD_X86)
    if (tl_simd_x86_active()) { /* AVX2 twin, same sums, flags, counts and check */
        tl_integrate_power_avx2(acc, P, it->channels, it->flags, bit, &it->sat_channels[input], &it->check);
        return;
    }
#endif
    uint64_t grew = 0; /* what the sums grew by, mod 2^64 */
    for (uint32_t k = 0; k < it->channels; k++) {
        uint32_t sat = 0;
        const uint64_t old = acc[k], p = P[k];
        acc[k] = tl_sat_add_u64(old, p, &sat);
        grew += p;
        if (sat != 0u)
            grew += saturated(it, k, acc[k], old, p, bit, input);
    }
    it->check += grew;
}

/* One part (re or im) of the cross-power sums; returns what its words grew
 * by, mod 2^64. The parts go in separate loops so that a 32-bit target
 * keeps every 64-bit value of the loop in registers. */
static uint64_t cross_part(tl_integrator *it, int64_t *acc, const int64_t *b, uint8_t bit, uint32_t which)
{
    uint64_t grew = 0;
    for (uint32_t k = 0; k < it->channels; k++) {
        uint32_t sat = 0;
        const int64_t old = acc[k], v = b[k];
        acc[k] = tl_sat_add_s64(old, v, &sat);
        grew += (uint64_t)v;
        if (sat != 0u)
            grew += saturated(it, k, (uint64_t)acc[k], (uint64_t)old, (uint64_t)v, bit, which);
    }
    return grew;
}

void tl_integrate_cross(tl_integrator *it, const int64_t *re, const int64_t *im)
{
#if defined(TL_SIMD_X86)
    if (tl_simd_x86_active()) { /* AVX2 twin, same sums, flags, counts and check */
        tl_integrate_cross_avx2(it->cross_re, it->cross_im, re, im, it->channels, it->flags, TL_FLAG_SAT_CROSS_RE,
                                TL_FLAG_SAT_CROSS_IM, &it->sat_channels[2], &it->check);
        return;
    }
#endif
    const uint64_t grew = cross_part(it, it->cross_re, re, TL_FLAG_SAT_CROSS_RE, 2u) +
                          cross_part(it, it->cross_im, im, TL_FLAG_SAT_CROSS_IM, 3u);
    it->check += grew;
}
