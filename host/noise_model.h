/*
 * noise_model.h - analytic round-off noise and bias of the fixed chain.
 *
 * Follows the additive-noise model of fixed-point FFTs (Oppenheim and
 * Schafer, Discrete-Time Signal Processing, 2nd ed., section 9.7; Welch,
 * IEEE Trans. Audio Electroacoust. AU-17(2), 1969): every rounding point
 * adds an independent error; an error added at one stage passes through the
 * later stages with their white-noise power gain r / 4^shift (r = radix).
 * Here every output has exactly one rounding point (docs/fixed-point.md), and
 * the error statistics of each rounding are computed exactly for the mode
 * and the number of bits dropped: an output whose twiddles are all trivial
 * (+-1, +-j) is an integer before the shift (discrete error); any other has
 * effectively uniform low bits (continuous error, variance 1/12 LSB^2).
 */
#ifndef TL_HOST_NOISE_MODEL_H
#define TL_HOST_NOISE_MODEL_H

#include <stdint.h>
#include "tl_fixed.h"

/* Mean and mean square (output LSB units) of the error made by rounding an
 * integer with uniformly distributed low bits by `bits` bits. */
void tl_round_error_moments(unsigned bits, tl_rounding mode, double *mean, double *mean_sq);

/* Same for effectively continuous values (bits -> infinity limit). */
void tl_round_error_moments_cont(tl_rounding mode, double *mean, double *mean_sq);

/* Power gain error of the transform itself, from the Q29 twiddles: the same
 * algorithm run in double with the committed (quantized) twiddles and no
 * rounding, against FFTW, on white noise (seeded, `trials` transforms). The
 * result is sum |X_q|^2 / sum |X|^2 - 1 over channels [lo, hi): a fixed,
 * multiplicative per-channel gain pattern (calibration removes it), which
 * the fidelity bias contains. Returns 0, or -1 on bad arguments. */
int tl_twiddle_gain_error(uint32_t points, uint32_t scale_mask, uint32_t lo, uint32_t hi, unsigned trials,
                          double *mean_gain_err);

/* The same per channel: g[k], k < points/2, from `trials` white-noise probes
 * through the noise-free double simulation (each probe's estimate scatters
 * by about the twiddle error itself, so 256 probes resolve ~1e-10). */
int tl_twiddle_gain_channels(uint32_t points, uint32_t scale_mask, unsigned trials, double *g);

typedef struct tl_noise_prediction {
    double fft_noise;      /* E|e|^2 per output channel from FFT rounding, output LSB^2 (complex) */
    double pfb_noise;      /* E|e|^2 per channel from the filterbank output rounding */
    double total_noise;    /* sum of the two */
    double det_mean;       /* mean error of the detection shift, in |X|^2 LSB (before the shift) */
    double twiddle_gain;   /* band power gain error from twiddle quantization (tl_twiddle_gain_error) */
    double fft_gain;       /* E|X|^2 / E|y|^2 for white real input y: N / 4^T */
} tl_noise_prediction;

/* Predict for a real transform of `points`, scaling mask (resolved), rounding
 * mode, filterbank output shift (S - 15) and detection shift. Returns 0, or -1
 * on bad arguments. */
int tl_noise_predict(uint32_t points, uint32_t scale_mask, tl_rounding mode, unsigned pfb_shift, unsigned det_shift,
                     tl_noise_prediction *out);

#endif
