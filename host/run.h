/*
 * run.h - run a scenario: sky voltages through the firmware chain and the
 * references, and the fidelity figures (used by `tidelock run` and tests).
 */
#ifndef TL_HOST_RUN_H
#define TL_HOST_RUN_H

#include "fidelity.h"
#include "scenario.h"

#include "acquisition.h"
#include "calibrate.h"
#include "downlink_out.h"

/* With a switch sequence: the calibrated antenna temperature of each input
 * against the model's, over the science band (channels [band_lo, band_hi)). */
typedef struct tl_cal_report {
    int done;                                 /* 1 when the scenario switches */
    double t_ant[TL_MAX_INPUTS][TL_MAX_CHANNELS];   /* calibrated, K (NAN where undefined) */
    double sigma[TL_MAX_INPUTS][TL_MAX_CHANNELS];   /* its propagated noise, K */
    double t_model[TL_MAX_CHANNELS];                /* the model's antenna temperature, K */
    double chi2_red[TL_MAX_INPUTS];           /* sum ((t_ant - t_model) / sigma)^2 / channels */
    uint32_t channels;                        /* channels in the comparison */
    uint32_t beyond3[TL_MAX_INPUTS];          /* of them, |t_ant - t_model| > 3 sigma */
    tl_trough_fit fit[TL_MAX_INPUTS];         /* foreground + trough fit (when the model has a trough) */
    double radiometer_factor;
} tl_cal_report;

/* Spectral kurtosis of a run ([flagging] sk_block > 0): the firmware's
 * block sums, the ground's estimator (spectral_kurtosis.h) and the mask.
 * A channel is masked when it is flagged (either tail) in at least
 * mask_blocks of the blocks on some input: the smallest count that
 * Gaussian noise reaches with probability at most 1e-3 (binomial, with the
 * configured false-alarm rate), and never more than the blocks. */
typedef struct tl_sk_report {
    int done;
    uint32_t m, n, nblocks, inputs, channels; /* M values of N spectra per block */
    double false_alarm, lo, hi;       /* thresholds on SK */
    uint32_t mask_blocks;
    tl_sk_block *blocks;              /* nblocks, malloc'd (tl_run_release frees) */
    uint32_t *flag_count[TL_MAX_INPUTS]; /* per channel: blocks flagged, malloc'd */
    uint64_t flagged_low[TL_MAX_INPUTS], flagged_high[TL_MAX_INPUTS], values[TL_MAX_INPUTS];
    uint64_t band_flagged[TL_MAX_INPUTS], band_values[TL_MAX_INPUTS]; /* in the science band */
    uint8_t mask[TL_MAX_CHANNELS];    /* 1 = masked */
    uint32_t masked, masked_in_band;
    uint32_t dropped;                 /* spectra of blocks cut short */
} tl_sk_report;

typedef struct tl_run_result {
    tl_fid_result fid;
    uint64_t generator_clips[2];  /* samples the sky generator clipped, per input */
    double seconds;               /* wall time of the run */
    tl_cal_report cal;
    tl_dl_result dl;              /* the product's packets and frames (downlink_out.h) */
    tl_sk_report sk;              /* spectral kurtosis, when the scenario asks */
    tl_acq_report acq;            /* the processor-speed model's pass ([processor] model = true) */
    tl_product *experienced;      /* that pass's product when it dropped blocks (malloc'd; the packets carry
                                   * it), else NULL: nothing dropped, the fidelity product carries its counters */
} tl_run_result;

/* Free what a run allocated inside r (the kurtosis blocks); r itself stays. */
void tl_run_release(tl_run_result *r);

/* Spectral kurtosis of s on its own sky: the firmware chain alone over one
 * integration with s->cfg.sk_spectra, every block taken, the estimator and
 * flags per channel and block, the mask. *p receives the product (it is
 * the run's product: the same samples through the same chain). Returns
 * TL_OK or the first error; on error nothing stays allocated. */
tl_status tl_run_kurtosis(const tl_scenario *s, tl_product *p, tl_sk_report *sk);

/* Calibrate a switched product against the scenario's model (tl_run_scenario
 * calls it). Returns 0, or -1 when a state has no spectra. */
int tl_run_calibrate(const tl_scenario *s, const tl_product *p, tl_cal_report *c);

/* The same, leaving out channels with mask[k] != 0 (NULL: none): their
 * calibrated temperature is NAN, and the chi-squared and the trough fit
 * use the other channels. */
int tl_run_calibrate_masked(const tl_scenario *s, const tl_product *p, const uint8_t *mask, tl_cal_report *c);

/* Run s with any voltage source: the firmware chain, the references, the
 * fidelity figures, and the calibration when s switches. set_state (may be
 * NULL) is told the switch state before each frame. The run's clip counts
 * are left to the caller. Returns TL_OK or the first error. */
tl_status tl_run_with_source(const tl_scenario *s, tl_fid_source source, void (*set_state)(void *, uint32_t),
                             void *source_state, tl_run_result *r, void (*progress)(void *, uint32_t, uint32_t),
                             void *progress_ctx);

/* A progress callback for the runs: a bar on stderr when ctx points to a
 * non-zero int (the caller decides: a terminal, not quiet). */
void tl_run_progress_bar(void *ctx, uint32_t done, uint32_t total);

/* The firmware chain alone on s's sky (no references, no fidelity): one
 * integration of s->spectra spectra into *p, switching as s says. For the
 * budgets, which need the product and not the comparison. Returns TL_OK or
 * the first error. */
tl_status tl_run_firmware(const tl_scenario *s, tl_product *p);

/* Run s at its drive level. progress (may be NULL) is called after each
 * block with (ctx, done, total). Returns TL_OK or the first error. */
tl_status tl_run_scenario(const tl_scenario *s, tl_run_result *r, void (*progress)(void *, uint32_t, uint32_t),
                          void *progress_ctx);

#endif
