/*
 * tl_simd_x86.h - AVX2 twins of the hot loops, for the x86-64 HOST build only.
 *
 * Why here: firmware/<name>.c is flight code and `make purity` compiles it with
 * -mgeneral-regs-only; these kernels use vector registers, so they live in
 * firmware/x86/ (not matched by firmware/<name>.c: the purity check, the
 * Cortex-M7 and PowerPC builds never see them). The Makefile adds
 * firmware/x86/tl_simd_avx2.c to the host library on x86-64 and defines
 * TL_SIMD_X86 for the rel and san firmware objects only; with TL_SIMD_X86
 * undefined (flight, cross targets, purity, the degraded build) the
 * firmware never calls anything declared here.
 *
 * Each kernel computes exactly the integers of its portable twin
 * (docs/fixed-point.md: same 64-bit products, same sums, one rounding at
 * the same point with the same bias, the same saturation and count).
 * tests/test_simd_x86.c runs both paths on every golden vector and on the
 * spec comparison inputs and compares every word and every count.
 *
 * Selection: at run time, the first call of tl_simd_x86_active() asks the
 * CPU (__builtin_cpu_supports: AVX2 and SSE4.2); tl_simd_x86_enable(0) forces the
 * portable path (tests, bench), tl_simd_x86_enable(1) returns to the
 * automatic choice. The setting is process-wide (relaxed atomics): set it
 * before starting replay threads.
 */
#ifndef TL_SIMD_X86_H
#define TL_SIMD_X86_H

#include <stddef.h>
#include <stdint.h>
#include "tl_fixed.h"

/* 1 if the AVX2 kernels are used (CPU supports AVX2 and not disabled). */
int tl_simd_x86_active(void);

/* 0: force the portable path; nonzero: AVX2 when the CPU has it. */
void tl_simd_x86_enable(int on);

/* Number of AVX2 kernel calls so far in this process (one per filterbank
 * output frame, FFT stage or detection call; the tests use it to show that
 * the path under test really ran). */
uint64_t tl_simd_x86_calls(void);

/* Filterbank: y[n] = sat32(round(sum_p coef[p][n] frame[p][n] / 2^rb.s)),
 * n < N (N a multiple of 8), 1 <= rb.s <= 32, saturations added to *ovf. */
void tl_pfb_filter_avx2(const int16_t *const *frame, const int32_t *const *coef, uint32_t N, uint32_t P,
                        const tl_round_bias *rb, int32_t *y, uint32_t *ovf);

/* One radix-4 DIT stage in place on w (size complex points), n_prev >= 4
 * and a multiple of 4; tw as tl_fft's table for this stage; rb for
 * 29 + stage shift bits (<= 32). */
void tl_fft_radix4_avx2(int32_t *w, uint32_t size, uint32_t n_prev, const int32_t *tw, const tl_round_bias *rb,
                        uint32_t *ovf);

/* The radix-4 stage with n_prev = 2 (the second stage when log2 L is odd):
 * tw = this stage's six twiddle pairs, size a multiple of 16. */
void tl_fft_radix4_np2_avx2(int32_t *w, uint32_t size, const int32_t *tw, const tl_round_bias *rb, uint32_t *ovf);

/* The first FFT stage when it is radix-2 (log2 L odd), fused with the
 * digit-reversed load, as tl_fft.c first_radix2_k; size a multiple of 8. */
void tl_fft_first2_avx2(int32_t *w, const int32_t *y, const uint16_t *perm, uint32_t size, int64_t one,
                        const tl_round_bias *rb, uint32_t *ovf);

/* The first FFT stage when it is radix-4 (log2 L even), fused with the
 * digit-reversed load of y, as tl_fft.c first_radix4_k: L = size a multiple
 * of 16, one = 1 (rb for the stage shift) or 2^29 (rb for 29 + shift). */
void tl_fft_first4_avx2(int32_t *w, const int32_t *y, const uint16_t *perm, uint32_t size, int64_t one,
                        const tl_round_bias *rb, uint32_t *ovf);

/* The real-FFT split of tl_fft.c for k = 1 .. K - 1 (and their mirrors
 * L - k), K - 1 the largest multiple of 4 below L/2; returns K, where the
 * portable loop goes on. Z: the complex FFT (L points), tw: W_N^k pairs,
 * rb for 30 + split shift bits. */
uint32_t tl_fft_split_avx2(const int32_t *Z, int32_t *X, uint32_t L, const int32_t *tw, const tl_round_bias *rb,
                           uint32_t *ovf);

/* Detection: P[k] = (p + add + ((p >> shift) & odd)) >> shift with
 * p = Xr^2 + Xi^2 (tl_detect_power's arithmetic), k < channels. */
void tl_detect_power_avx2(const int32_t *X, uint32_t channels, unsigned shift, uint64_t add, uint64_t odd,
                          uint64_t *P);

/* Integration: acc[k] = acc[k] + P[k] saturated at UINT64_MAX
 * (tl_sat_add_u64), k < n; a channel that saturates gets `bit` in
 * flags[k] and, the first time, *count += 1 (tl_integrate.c mark);
 * *check grows by every change (new minus old words, bit + 1 per mark). */
void tl_integrate_power_avx2(uint64_t *acc, const uint64_t *P, uint32_t n, uint8_t *flags, uint8_t bit,
                             uint32_t *count, uint64_t *check);

/* The same for the cross-power sums (tl_sat_add_s64 on re and im, flag
 * bits bit_re and bit_im, counts count[0] and count[1]). */
void tl_integrate_cross_avx2(int64_t *acc_re, int64_t *acc_im, const int64_t *re, const int64_t *im, uint32_t n,
                             uint8_t *flags, uint8_t bit_re, uint8_t bit_im, uint32_t count[2], uint64_t *check);

/* tl_crc32c_update (the register value, no inversion) with the SSE4.2
 * crc32 instruction. Not counted by tl_simd_x86_calls. */
uint32_t tl_crc32c_update_sse42(uint32_t crc, const uint8_t *data, size_t len);

/* The chain's input copy and ADC statistics (tl_chain.c copy_in): dst[i] =
 * src[i], *clips = #(v >= hi) + #(v == INT16_MIN), hist[(v + 32768) >> 12]
 * += 1 (hist is added to, clips and sumsq are set), *sumsq = sum of
 * (|v| >> drop)^2; n <= 2^32 - 1, drop <= 15. */
void tl_adc_copy_avx2(const int16_t *src, int16_t *dst, uint32_t n, int16_t hi, unsigned drop, uint32_t *clips,
                      uint32_t hist[16], uint64_t *sumsq);

#endif
