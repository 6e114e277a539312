/* tl_detect.c - power and cross-power (see tl_detect.h). */
#include "tl_detect.h"
#if defined(TL_SIMD_X86)
#include "x86/tl_simd_x86.h" /* host build on x86-64 only (Makefile) */
#endif

/* The rounding of tl_round_shr_u64 as one bias, without branches:
 *     round(p / 2^s) = (p + bias) >> s,
 *     bias = 0 (truncate, or s = 0), 2^(s-1) (half-up),
 *            2^(s-1) - 1 + (bit s of p) (half-even),
 * exact for p < 2^63 (|X|^2 here), where p + bias cannot wrap. Same
 * integers as tl_round_shr_u64 (tests/test_detect.c checks every mode and
 * shift, ties included, against exact 128-bit arithmetic). */
void tl_detect_power(const int32_t *X, uint32_t channels, unsigned shift, tl_rounding mode, uint64_t *P)
{
    const uint64_t half = shift == 0u ? 0u : (uint64_t)1 << (shift - 1u);
    const uint64_t add = shift == 0u ? 0u
                         : mode == TL_ROUND_HALF_EVEN ? half - 1u
                         : mode == TL_ROUND_HALF_UP   ? half
                                                      : 0u;
    const uint64_t odd_mask = (shift != 0u && mode == TL_ROUND_HALF_EVEN) ? 1u : 0u;
#if defined(TL_SIMD_X86)
    if (tl_simd_x86_active()) { /* AVX2 twin, same integers */
        tl_detect_power_avx2(X, channels, shift, add, odd_mask, P);
        return;
    }
#endif
    for (uint32_t k = 0; k < channels; k++) {
        const int64_t xr = X[2u * k], xi = X[2u * k + 1u];
        const uint64_t p = (uint64_t)(xr * xr) + (uint64_t)(xi * xi);
        P[k] = (p + add + ((p >> shift) & odd_mask)) >> shift;
    }
}

void tl_detect_cross(const int32_t *X, const int32_t *Y, uint32_t channels, unsigned shift, tl_rounding mode,
                     int64_t *re, int64_t *im)
{
    for (uint32_t k = 0; k < channels; k++) {
        const int64_t xr = X[2u * k], xi = X[2u * k + 1u];
        const int64_t yr = Y[2u * k], yi = Y[2u * k + 1u];
        re[k] = tl_round_shr_s64(xr * yr + xi * yi, shift, mode);
        im[k] = tl_round_shr_s64(xi * yr - xr * yi, shift, mode);
    }
}
