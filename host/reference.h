/*
 * reference.h - the floating-point reference chain (host, FFTW, double).
 *
 * Same filterbank convention as firmware/tl_pfb.h, in double:
 *     y[n] = sum_p coef[p*N + n] * f_p[n] / 2^(S - 15)       (Q30 units)
 * then an FFTW r2c transform (FFTW_ESTIMATE plan, so the same machine gives
 * the same bits every run), X = DFT(y) / 2^T with T the firmware's total FFT
 * shift, power |X|^2 / 2^s and cross-power X conj(Y) / 2^s with s the
 * detection shift, accumulated in double. In these units a reference sum
 * and the firmware's integer sum estimate the same number.
 *
 * coef is either the firmware's quantized coefficients (as doubles: exact)
 * or the ideal unquantized prototype scaled by 2^S (taps_design.h), so the
 * two references separate arithmetic error from coefficient quantization.
 */
#ifndef TL_HOST_REFERENCE_H
#define TL_HOST_REFERENCE_H

#include <stdint.h>

typedef struct tl_ref tl_ref; /* opaque, host-allocated */

/* coef: taps*points values in units of 2^-S. Returns NULL on bad arguments
 * or out of memory. */
tl_ref *tl_ref_open(const double *coef, uint32_t taps, uint32_t points, uint32_t coef_shift, uint32_t inputs,
                    uint32_t fft_total_shift, uint32_t det_shift);
void tl_ref_close(tl_ref *r);

/* One frame of N samples per input (in1 ignored for one input). Returns 1
 * when a spectrum was produced and accumulated, 0 while filling history. */
int tl_ref_push_frame(tl_ref *r, const int16_t *in0, const int16_t *in1);

/* The same, for a switched sequence: the spectrum goes into the sums of
 * switch state `bank` (0 .. 2) if keep is 1, and is dropped if keep is 0. */
int tl_ref_push_frame_state(tl_ref *r, const int16_t *in0, const int16_t *in1, unsigned bank, int keep);

/* Copy the sums (channels = N/2 values each; pointers for absent products
 * may be NULL), zero them, and return the number of spectra they hold.
 * tl_ref_take is bank 0 (the antenna). */
uint32_t tl_ref_take(tl_ref *r, double *auto0, double *auto1, double *cross_re, double *cross_im);
uint32_t tl_ref_take_state(tl_ref *r, unsigned bank, double *auto0, double *auto1, double *cross_re,
                           double *cross_im);

/* The last spectrum, in firmware units (re/im interleaved, N/2 channels). */
const double *tl_ref_last_spectrum(const tl_ref *r, uint32_t input);

#endif
