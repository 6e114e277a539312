/*
 * fidelity.h - how far the firmware's integrated spectra are from the
 * floating-point reference, in units of the radiometer noise.
 *
 * With a switch sequence in the configuration, the source is told the
 * firmware's switch state before each frame, the reference integrates each
 * state as the firmware does, and the fidelity figures are those of the
 * antenna state.
 *
 * One run feeds the same ADC samples to the firmware chain (tl_chain), to a
 * second firmware chain whose detection shift is the one a long integration
 * needs (the "flight" pass, used for extrapolation), and to two double
 * references (reference.h): one with the firmware's quantized coefficients,
 * one with the ideal ones. The M spectra are integrated in J blocks of M/J
 * (the firmware with the detection shift of M, so the block sums add up to
 * the M-spectrum sums exactly) to estimate per-channel standard errors.
 *
 * Per channel k of the science band, per product:
 *   auto:  d_k = (S_fix - S_ref) / S_ref
 *   cross: d_k = (C_fix - C_ref) / sqrt(S_xx S_yy / 2)   (each of Re, Im)
 * so d_k * sqrt(M) is the error in units of the radiometer noise of the sum.
 *   bias b       = mean_k d_k; its standard error from the scatter of the
 *                  band-mean over the J blocks
 *   scatter1     = rms_k of se(d_k) * sqrt(M): the random error of a single
 *                  spectrum, relative (the "per-spectrum scatter")
 *   margin       = max_k |d_k| sqrt(M)
 *   margin_ext   = (|b| + 3 se + |db_det|) sqrt(M') + max_k |d_k - b'| sqrt(M)
 *                  The bias grows as sqrt(M'); the random part, in noise
 *                  units, does not. b, se: main pass. db_det: the analytic
 *                  change of the detection rounding's mean between the two
 *                  shifts (zero for half-even). The flight pass (same FFT
 *                  outputs, flight shift) supplies the random part (b' is its
 *                  bias) and must itself agree with its predicted bias.
 *   chi2         = sum_k ((d_k - p_k - (b - bias_pred)) / se_k)^2 over K
 *                  channels, p_k the channel's own predicted bias (it carries
 *                  the twiddles' per-channel gain pattern, rms ~1e-9); with
 *                  se_k from J blocks each term is t^2 with J-1 degrees of
 *                  freedom; chi2_z is its deviation from K (J-1)/(J-3) in
 *                  standard units
 *   bias_pred    = the analytic bias (noise_model.h): E|e|^2 / P, plus the
 *                  detection shift's mean rounding error / P, plus the power
 *                  gain error g of the quantized twiddles (times C / noise
 *                  for the cross-power)
 *   m_reach      = (0.01 / (|b| + 2 se))^2: spectra co-added before the bias
 *                  bound reaches 0.01 of the noise
 */
#ifndef TL_HOST_FIDELITY_H
#define TL_HOST_FIDELITY_H

#include <stddef.h>
#include <stdint.h>
#include "tl_chain.h"

enum { TL_FID_AUTO0 = 0, TL_FID_AUTO1 = 1, TL_FID_CROSS_RE = 2, TL_FID_CROSS_IM = 3, TL_FID_PRODUCTS = 4 };

/* Sample source: write n samples per input (in1 is NULL for one input). */
typedef void (*tl_fid_source)(void *state, int16_t *in0, int16_t *in1, size_t n);

typedef struct tl_fid_setup {
    tl_config cfg;            /* integration and det_shift are set by the harness */
    const uint8_t *taps_image;/* NULL: built-in default table */
    size_t taps_len;
    unsigned window;          /* window of the table, for the ideal reference */
    uint32_t spectra;         /* M, a multiple of blocks */
    uint32_t blocks;          /* J >= 4 */
    uint32_t band_lo, band_hi;/* science channels [lo, hi) */
    uint32_t flight_spectra;  /* M' for the flight pass and extrapolation; 0: no flight pass */
    tl_fid_source source;
    void *source_state;
    void (*set_state)(void *source_state, uint32_t sw_state); /* before each frame: the switch state
                                                                  the firmware is in (may be NULL) */
    void (*progress)(void *ctx, uint32_t done, uint32_t total); /* per block; may be NULL */
    void *progress_ctx;
} tl_fid_setup;

typedef struct tl_fid_metrics {
    int present;
    double bias, bias_se, bias_pred;
    double scatter1;
    double margin;
    double chi2, chi2_dof, chi2_z;
    double max_dev;           /* max_k |d_k - b| sqrt(M) */
    double ideal_bias;        /* mean_k of d_k against the ideal-coefficient reference */
    double ideal_max;         /* max_k |d_k| sqrt(M) against it */
    double m_reach;
} tl_fid_metrics;

#define TL_FID_STATS_BLOCKS 1024u /* blocks whose own counters are kept (the scenario's maximum) */

typedef struct tl_fid_result {
    uint32_t spectra, blocks, channels, band_lo, band_hi;
    uint32_t det_shift, flight_det_shift, flight_spectra;
    tl_fid_metrics main[TL_FID_PRODUCTS];
    tl_fid_metrics flight[TL_FID_PRODUCTS];
    double margin_ext[TL_FID_PRODUCTS];      /* at flight_spectra, from the flight pass */
    tl_stats stats;                           /* main pass, summed over blocks */
    uint32_t sat_flags;                       /* channels with any saturation flag, main pass */
    double noise_pred_lsb2;                   /* predicted E|e|^2 per channel */
    double twiddle_gain;                      /* predicted band power gain error of the quantized twiddles */
    double mean_power_lsb2[TL_MAX_INPUTS];    /* band mean of |X|^2 per spectrum, firmware LSB^2 */
    double ref_auto[TL_STATES][TL_MAX_INPUTS][TL_MAX_CHANNELS]; /* the double reference (firmware's
                                                 coefficients) per switch state, summed over blocks, in the
                                                 firmware's units: the calibration of the reference */
    uint32_t ref_spectra[TL_STATES];          /* spectra in those sums */
    tl_stats block_stats[TL_FID_STATS_BLOCKS];/* the firmware's counters of each block (first blocks) */
    tl_status status;                         /* TL_OK or why the run stopped */
    tl_product product;                       /* the M-spectrum product: the J block products added
                                                 (equal to one M-spectrum integration, since sums are
                                                 exact; a channel that saturated in a block is flagged) */
} tl_fid_result;

/* Limits asserted at every drive level (docs/validation.md). */
#define TL_FID_MARGIN_MAX 0.01      /* max |d| sqrt(M), measured and extrapolated */
#define TL_FID_BIAS_MAX 1e-8        /* |band-averaged bias| */
#define TL_FID_BIAS_SE_MAX 3e-9     /* its standard error */
#define TL_FID_CHI2_Z_MAX 4.0       /* per-channel consistency */
#define TL_FID_PRED_SIGMAS 3.0      /* |bias - predicted| <= 3 se (+5% of predicted) */

/* Check a result against the limits. Writes one line per failed check into
 * why (cap bytes, may be NULL) and returns the number of failures. */
int tl_fidelity_verdict(const tl_fid_result *r, char *why, size_t cap);

/* "auto0", "auto1", "cross_re", "cross_im". */
const char *tl_fidelity_product_name(int product);

/* Run the measurement. Returns TL_OK or the first error (also in res->status). */
tl_status tl_fidelity_run(const tl_fid_setup *setup, tl_fid_result *res);

#endif
