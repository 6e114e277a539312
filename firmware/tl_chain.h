/*
 * tl_chain.h - the spectrometer chain: ADC samples in, integrated spectra out.
 *
 *   int16 Q15 samples --> tl_pfb (Q30) --> tl_fft (int32) --> tl_detect
 *   (64-bit, rounded shift) --> tl_integrate (64-bit sums) --> tl_product
 *
 * Use:
 *     static tl_chain chain;             // caller owns it (about 3.5 MB at host maxima)
 *     tl_config cfg; tl_config_default(&cfg); cfg.integration = 4096;
 *     st = tl_chain_init(&chain, &cfg, NULL, 0);   // NULL: built-in table
 *     while (samples left) {
 *         st = tl_chain_push(&chain, in0, in1, n, &used);
 *         in0 += used; in1 += used; n -= used;
 *         if (tl_chain_sk_ready(&chain)) tl_chain_take_sk(&chain, &block);
 *         if (tl_chain_ready(&chain)) tl_chain_take(&chain, &product);
 *     }
 *
 * Push takes any number of samples; a stream cut into any pieces gives the
 * same products byte for byte. Push stops right after the spectrum that
 * completes an integration or a spectral kurtosis block; until that
 * product (or block) is taken, push consumes nothing and returns
 * TL_E_BUSY. When both finish on the same spectrum, take the block first. No hidden globals: all state is in the
 * context; nothing is allocated.
 *
 * Capture blocks and gaps. When the ADC's samples arrive as capture blocks
 * and some are lost (they arrived while the processor was busy and found
 * no free buffer), the caller says so with tl_chain_gap between two
 * pushes; after every block it did push whole it calls tl_chain_block_kept.
 * A gap abandons the partly received frame, and the P - 1 spectra that
 * follow it (P = taps) are computed but not integrated: their filterbank
 * history holds frames from before the gap (docs/fixed-point.md, "Gaps").
 * They are counted in tl_product.discarded and in acq.gap_discarded.
 *
 * Upsets (tl_scrub.h, docs/faults.md): before every spectrum the chain
 * checks its configuration against its stored CRC-32C and one slice of its
 * tables, range-checks every field of the context it uses as an index, a
 * loop bound or a shift (in push, before each piece of samples, and in
 * take), and before releasing a product checks every table whole. A
 * mismatch is restored from the protected copy; a running-state field out
 * of range is repaired (frame fill, filterbank ring slot, switch step,
 * spectral kurtosis counts, the spectra counters, which must add up). Either
 * sets TL_FLAG_UPSET on every channel of the integration in progress. So no
 * bit flipped in tables or configuration can change a released spectrum
 * without the flag, and no bit flipped anywhere in the context can make the
 * chain index outside its arrays or loop without bound. A flip in a running
 * sum, a histogram count or a still-valid ring position is not detected
 * (docs/faults.md gives the measured fractions).
 */
#ifndef TL_CHAIN_H
#define TL_CHAIN_H

#include <stddef.h>
#include <stdint.h>
#include "tl_detect.h"
#include "tl_fft.h"
#include "tl_fixed.h"
#include "tl_integrate.h"
#include "tl_limits.h"
#include "tl_pfb.h"
#include "tl_scrub.h"
#include "tl_status.h"
#include "tl_sk.h"
#include "tl_switch.h"
#include "tl_taps.h"

#define TL_DET_SHIFT_AUTO 0xFFFFFFFFu /* ceil(log2(integration)): no sum can overflow */

/* Configuration: plain values, checked whole by tl_chain_init. */
typedef struct tl_config {
    uint32_t points;          /* real FFT size N: power of two, 256 .. TL_MAX_POINTS; channels = N/2 */
    uint32_t taps;            /* polyphase taps P: 1 .. TL_MAX_TAPS (1 = windowed FFT) */
    uint32_t inputs;          /* antenna inputs: 1 or 2 (2 adds the cross-power) */
    uint32_t adc_bits;        /* ADC resolution 8 .. 16; codes arrive left-aligned in int16 */
    uint32_t integration;     /* spectra per integration M: 1 .. 2^24 */
    uint32_t fft_scale_mask;  /* see tl_fft.h; TL_FFT_SCALE_AUTO for the default */
    uint32_t rounding;        /* tl_rounding for every rounding point */
    uint32_t det_shift;       /* 0 .. TL_MAX_DET_SHIFT, or TL_DET_SHIFT_AUTO */
    uint32_t switch_steps;    /* calibration switch sequence (tl_switch.h): 0 = antenna only */
    uint8_t switch_state[TL_MAX_SWITCH_STEPS];  /* TL_STATE_* per step */
    uint32_t switch_dwell[TL_MAX_SWITCH_STEPS]; /* frames (spectra) per step */
    uint32_t switch_discard;  /* spectra not integrated after each change of state */
    uint32_t sk_spectra;      /* spectral kurtosis values per block M (tl_sk.h): 0 = off, or 16 .. 65536,
                               * with M x sk_accumulate at most integration */
    uint32_t sk_accumulate;   /* spectra summed into each value N: 1 .. 65536 (0 is taken as 1) */
} tl_config;

/* Counters of one integration. Counts saturate at UINT32_MAX. */
#define TL_ADC_HIST_BINS 16u /* coarse ADC histogram: bin = (code word + 32768) >> 12 */

typedef struct tl_stats {
    uint32_t adc_clips[TL_MAX_INPUTS];   /* samples at the ADC's most negative or most positive code */
    uint64_t adc_sumsq[TL_MAX_INPUTS];   /* sum of code^2, code = ADC code (word / 2^(16 - adc_bits));
                                          * saturates at UINT64_MAX (a 16-bit ADC at full scale can
                                          * reach it after 2^34 samples; 1/8 of full scale never) */
    uint32_t adc_hist[TL_MAX_INPUTS][TL_ADC_HIST_BINS]; /* samples per sixteenth of the code range */
    uint32_t pfb_sat[TL_MAX_INPUTS];     /* filterbank outputs saturated */
    uint32_t fft_sat[TL_MAX_INPUTS][TL_MAX_FFT_STAGES + 1u]; /* per stage; split at [fft_stages] */
    uint32_t acc_sat[4];                 /* channels whose sum saturated: auto0, auto1, cross re, cross im */
} tl_stats;

/* Acquisition counters of one integration (tl_chain_block_kept,
 * tl_chain_gap). Counts saturate at UINT32_MAX / UINT64_MAX. A block
 * counts in the integration that is running when it is reported. */
typedef struct tl_acq_counts {
    uint32_t blocks_kept;     /* capture blocks pushed whole (tl_chain_block_kept) */
    uint32_t blocks_lost;     /* capture blocks lost (tl_chain_gap) */
    uint64_t samples_lost;    /* samples per input in the lost blocks */
    uint32_t gaps;            /* tl_chain_gap calls with at least one block or sample */
    uint32_t gap_discarded;   /* spectra not integrated: their filterbank history straddles a gap */
    uint32_t abandoned;       /* samples per input of partly received frames a gap cut short */
} tl_acq_counts;

/* Duty cycle in parts per million: blocks_kept x 10^6 / (blocks_kept +
 * blocks_lost), rounded down; 1000000 when no block was reported (the
 * caller pushed samples without capture blocks: nothing was lost). */
uint32_t tl_acq_duty_ppm(const tl_acq_counts *a);

/* Sums of one calibration state (reference load, or load plus noise source). */
typedef struct tl_cal_sums {
    uint32_t spectra;                                    /* spectra integrated in this state */
    uint32_t acc_sat[4];                                 /* saturated channels, as tl_stats.acc_sat */
    uint64_t auto_power[TL_MAX_INPUTS][TL_MAX_CHANNELS];
    int64_t cross_re[TL_MAX_CHANNELS];
    int64_t cross_im[TL_MAX_CHANNELS];
    uint8_t flags[TL_MAX_CHANNELS];
} tl_cal_sums;

/* A finished integration. The caller owns it (about 810 kB at host maxima).
 * auto_power, cross_re, cross_im and flags are the ANTENNA state's sums
 * (antenna_spectra of them); with switching, cal[0] holds the reference
 * load's and cal[1] the load plus noise source's. */
typedef struct tl_product {
    uint32_t arith_version;   /* TL_ARITH_VERSION */
    uint32_t index;           /* integration number since init, from 0 */
    uint32_t spectra;         /* spectra in the integration (= config integration), all states */
    uint32_t antenna_spectra; /* of them integrated into auto_power / cross (antenna state) */
    uint32_t discarded;       /* of them not integrated: after switch changes, and acq.gap_discarded after gaps */
    uint32_t sk_blocks;       /* spectral kurtosis blocks completed in this integration */
    uint32_t sk_dropped;      /* antenna spectra of the block the integration's end cut short (values x N
                               * plus the spectra of the running value) */
    uint32_t switch_steps;    /* 0: no switching */
    uint64_t first_frame;     /* frame number (N samples each, from 0) of the first spectrum's newest frame */
    uint32_t points, taps, inputs, channels;
    uint32_t fft_stages;      /* radix stages, so fft_sat[.][fft_stages] is the split */
    uint32_t fft_scale_mask;  /* resolved */
    uint32_t fft_total_shift; /* sum of stage shifts: X = DFT / 2^fft_total_shift */
    uint32_t det_shift;       /* resolved */
    uint32_t rounding;
    uint32_t window;          /* of the coefficient table */
    uint32_t taps_shift;      /* h = c / 2^taps_shift */
    uint32_t taps_crc;        /* CRC-32C of the coefficient table in use */
    tl_stats stats;
    tl_acq_counts acq;        /* capture blocks kept and lost, gaps (samples integrated per input in the
                               * antenna state: antenna_spectra x points; effective integration time:
                               * antenna_spectra x points / sample rate) */
    uint64_t auto_power[TL_MAX_INPUTS][TL_MAX_CHANNELS]; /* sum of round(|X|^2 / 2^det_shift) */
    int64_t cross_re[TL_MAX_CHANNELS];                   /* sum of round(Re X conj Y / 2^det_shift) */
    int64_t cross_im[TL_MAX_CHANNELS];
    uint8_t flags[TL_MAX_CHANNELS];                      /* TL_FLAG_* per channel */
    tl_cal_sums cal[TL_STATES - 1u];                     /* [0] load, [1] load + noise source */
    uint32_t upset;           /* 1: a table, the configuration or the running state was found corrupted
                               * during this integration (every channel carries TL_FLAG_UPSET) */
    tl_scrub_counts scrub;    /* the scrubber's counters since init, at release */
} tl_product;

/* One block of spectral kurtosis sums (tl_sk.h), taken with
 * tl_chain_take_sk. The caller owns it (about 400 kB at host maxima). */
typedef struct tl_sk_block {
    uint32_t index;           /* integration the block belongs to */
    uint32_t block;           /* block number within the integration, from 0 */
    uint32_t spectra;         /* M values */
    uint32_t accumulate;      /* N spectra per value */
    uint32_t inputs, channels;
    uint32_t det_shift;       /* P = round(|X|^2 / 2^det_shift) */
    uint32_t sat;             /* channel sums saturated (S1 or S2) */
    uint64_t first_frame;     /* frame number of the block's first spectrum's newest frame */
    uint64_t s1[TL_MAX_INPUTS][TL_MAX_CHANNELS];
    uint64_t s2_hi[TL_MAX_INPUTS][TL_MAX_CHANNELS];
    uint64_t s2_lo[TL_MAX_INPUTS][TL_MAX_CHANNELS];
} tl_sk_block;

typedef struct tl_chain {
    uint32_t initialised;     /* TL_CHAIN_MAGIC after a successful init */
    tl_config cfg;            /* as resolved */
    uint32_t fill;            /* samples of the current frame received */
    uint32_t ready;           /* 1 when a finished integration waits */
    uint32_t sk_ready;        /* 1 when a finished spectral kurtosis block waits */
    uint32_t sk_blocks;       /* blocks finished in the running integration */
    uint64_t sk_first_frame;  /* of the running block */
    uint32_t index;           /* integrations finished */
    uint64_t frames;          /* frames completed since init */
    uint64_t first_frame;     /* of the running integration */
    tl_stats stats;           /* of the running integration */
    uint16_t clip_hi;         /* most positive ADC code (left-aligned) */
    tl_taps taps;
    tl_pfb pfb[TL_MAX_INPUTS];
    tl_fft fft;
    tl_switch sw;
    uint32_t spectra;         /* spectra in the running integration, all states */
    uint32_t discarded;       /* of them not integrated (switch changes and gaps) */
    uint32_t gap_hold;        /* spectra still to discard after a gap: their history straddles it */
    tl_acq_counts acq;        /* of the running integration */
    tl_integrator integ[TL_STATES]; /* one bank per switch state */
    tl_sk sk;                 /* spectral kurtosis sums of the running block */
    int32_t y[TL_MAX_POINTS];
    int32_t X[TL_MAX_INPUTS][TL_MAX_POINTS];
    uint64_t power[TL_MAX_CHANNELS];
    int64_t cross_re[TL_MAX_CHANNELS];
    int64_t cross_im[TL_MAX_CHANNELS];
    tl_scrub scrub;           /* checks the tables and configuration above (tl_scrub.h) */
} tl_chain;

#define TL_CHAIN_MAGIC 0x544C4348u

/* Defaults: 8192 points, 4 taps, 2 inputs, 14-bit ADC, 2^20 spectra per
 * integration (about 84 s at 102.4 Msample/s), default FFT scaling,
 * round half to even, automatic detection shift, no switching. */
void tl_config_default(tl_config *cfg);

/* Resolve TL_FFT_SCALE_AUTO and TL_DET_SHIFT_AUTO as init would. */
uint32_t tl_config_det_shift(const tl_config *cfg);

/* Check every field of cfg and nothing else: no context, no table, nothing
 * written. The ranges are those of tl_config above; a switch sequence as
 * tl_switch_check; fft_scale_mask TL_FFT_SCALE_AUTO or below points.
 * Returns the first fault in this order: TL_OK, TL_E_NULL, TL_E_POINTS,
 * TL_E_TAPS, TL_E_INPUTS, TL_E_ADC_BITS, TL_E_INTEGRATION, TL_E_ROUNDING,
 * TL_E_DET_SHIFT, TL_E_SK, TL_E_SCALING, TL_E_SWITCH. */
tl_status tl_config_check(const tl_config *cfg);

/* Check every field of cfg (tl_config_check) and the table, then start the
 * chain with the coefficient table image `taps_image` (or the built-in
 * default when it is NULL). Returns TL_OK, TL_E_NULL, any status of
 * tl_config_check, any error of tl_taps_check_image, TL_E_TABLE_MISMATCH
 * (table taps/points differ from cfg), or TL_E_TABLE_CRC (the built-in
 * table is corrupted). On error *c is not written: a running chain keeps
 * running with its old configuration and table, byte for byte (a context
 * never initialised stays uninitialised). */
tl_status tl_chain_init(tl_chain *c, const tl_config *cfg, const uint8_t *taps_image, size_t image_len);

/* Replace the coefficient table while running. The image is checked whole;
 * on error nothing changes. On success the filterbank history and the
 * running integration restart. Returns as tl_taps_load_image, plus
 * TL_E_NOT_INIT and TL_E_TABLE_MISMATCH. */
tl_status tl_chain_load_taps(tl_chain *c, const uint8_t *taps_image, size_t image_len);

/* Scrub period: check one slice of the tables every `period` frames
 * (one per spectrum once the filterbank is full; tl_scrub.h; 0 = TL_SCRUB_DEFAULT_PERIOD, the value init sets). It does
 * not change any output byte, only how soon a corrupted table is found
 * within an integration (every table is checked whole before each release
 * whatever the period). Returns TL_OK, TL_E_NULL, TL_E_NOT_INIT or
 * TL_E_SCRUB (above TL_SCRUB_MAX_PERIOD; nothing changes). */
tl_status tl_chain_set_scrub_period(tl_chain *c, uint32_t period);

/* Restart: empty history, zero the running integration (counters since init kept). */
tl_status tl_chain_reset(tl_chain *c);

/* Feed `count` samples per input (in1 must be NULL for 1 input and non-NULL
 * for 2). *used receives how many were consumed. Returns TL_OK (check
 * tl_chain_ready), TL_E_BUSY (a product waits; nothing consumed), TL_E_NULL,
 * TL_E_NOT_INIT. */
tl_status tl_chain_push(tl_chain *c, const int16_t *in0, const int16_t *in1, size_t count, size_t *used);

/* One capture block of samples was pushed whole: count it
 * (acq.blocks_kept of the running integration). Returns TL_OK, TL_E_NULL,
 * TL_E_NOT_INIT. Never touches the samples or the sums. */
tl_status tl_chain_block_kept(tl_chain *c);

/* `blocks` capture blocks holding `samples` samples per input were lost
 * between the last push and the next. Counts them (acq.blocks_lost,
 * acq.samples_lost, acq.gaps); when blocks or samples is non-zero the
 * partly received frame, if any, is abandoned (its samples are counted in
 * acq.abandoned) and the next taps - 1 completed spectra are computed but
 * not integrated (acq.gap_discarded, included in discarded; a spectrum of
 * that window that falls in a switch discard window counts there only).
 * The frame counter (and so the packet time of later spectra) advances by
 * ceil((received + samples) / points) frames, received being the samples
 * of the abandoned frame: exact when blocks are whole frames. The switch
 * sequence does not advance for lost frames. Returns TL_OK, TL_E_NULL,
 * TL_E_NOT_INIT, or TL_E_BUSY when a product or a spectral kurtosis block
 * waits (take it first; nothing is counted). */
tl_status tl_chain_gap(tl_chain *c, uint32_t blocks, uint64_t samples);

/* Switch state (TL_STATE_*) of the frame being received now: a host
 * simulator asks before producing each frame's samples. */
uint32_t tl_chain_state(const tl_chain *c);

/* 1 when a finished integration waits to be taken. */
int tl_chain_ready(const tl_chain *c);

/* Copy the finished integration to *out and start the next one.
 * Returns TL_OK, TL_E_NULL, TL_E_NOT_INIT, TL_E_EMPTY, or TL_E_BUSY when a
 * spectral kurtosis block waits (take it first). */
tl_status tl_chain_take(tl_chain *c, tl_product *out);

/* 1 when a finished spectral kurtosis block waits to be taken. */
int tl_chain_sk_ready(const tl_chain *c);

/* Copy the finished block to *out (only the first `channels` entries of
 * each row are meaningful; the rest are zero) and start the next block.
 * Returns TL_OK, TL_E_NULL, TL_E_NOT_INIT, TL_E_EMPTY. */
tl_status tl_chain_take_sk(tl_chain *c, tl_sk_block *out);

#endif
