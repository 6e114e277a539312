/*
 * bench_radix2.h - the bench's baseline: a straightforward radix-2 int32
 * real FFT, the kind a first fixed-point implementation would be. Only
 * `make bench` uses it, to put the firmware FFT stage's speed, instruction
 * count and SQNR beside a plain implementation of the same transform.
 *
 * Same size and the same Q idea as tl_fft: N real int32 inputs (Q30),
 * packed as N/2 complex values, bit-reversed, log2(N/2) radix-2
 * decimation-in-time stages with Q30 twiddles (twiddle product rounded,
 * then the butterfly sum halved and rounded: two rounding points per
 * butterfly), then the real split. Output X[k], k < N/2, re/im interleaved,
 * scaled as tl_fft's default: X = DFT / (N/2). No saturation and no
 * overflow checks: inputs are assumed well below full scale (the bench feeds
 * it the filterbank's output of noise at about 1/7 of the ADC's full scale).
 */
#ifndef BENCH_RADIX2_H
#define BENCH_RADIX2_H

#include <stdint.h>

typedef struct bench_radix2 {
    uint32_t points;  /* N */
    uint32_t size;    /* L = N/2 */
    uint32_t log2size;
    uint32_t *rev;    /* bit reversal of log2size bits, L entries */
    int32_t *tw;      /* Q30 W_L^k = exp(-2 pi j k / L), k < L/2, re/im interleaved */
    int32_t *tws;     /* Q30 W_N^k for the split, k < L, re/im interleaved */
    int32_t *work;    /* 2L values */
} bench_radix2;

/* points: power of two from 8 to 65536. Returns 0, or -1 (bad size, no memory). */
int bench_radix2_init(bench_radix2 *f, uint32_t points);
void bench_radix2_free(bench_radix2 *f);

/* y[0 .. N-1] in, X[0 .. N-1] out (N/2 complex channels). */
void bench_radix2_execute(bench_radix2 *f, const int32_t *y, int32_t *X);

#endif
