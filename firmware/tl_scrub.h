/*
 * tl_scrub.h - scrubbing: the tables and configuration the running chain
 * reads from RAM are checked against stored CRC-32Cs (tl_crc32c.h) and
 * restored from a protected copy when a bit of them has flipped (a single
 * event upset, SEU).
 *
 * Regions (each with its own stored CRC-32C, computed when the chain is
 * initialised or a table is loaded):
 *   TL_SCRUB_TAPS    the coefficient table tl_chain.taps: its five header
 *                    words and the taps x points coefficients in use.
 *   TL_SCRUB_FFT     the FFT plan's tables tl_chain.fft: the digit-reversal
 *                    permutation (L entries), the radix-4 twiddles in use and
 *                    the split twiddles (L/2 + 1 complex values).
 *   TL_SCRUB_CONFIG  everything else the processing reads as a parameter:
 *                    the resolved tl_config, the ADC clip code, each
 *                    filterbank's table pointer, points, taps, output shift
 *                    and rounding, the FFT plan's scalars (sizes, stage
 *                    radices, shifts, twiddle offsets), the switch sequence
 *                    (steps, states, dwells, discard), the spectral kurtosis
 *                    parameters (m, n, channels, inputs) and each
 *                    integrator's channel count.
 * Span offsets are compile-time offsets into tl_chain and span lengths
 * follow from the geometry fixed when the scrubber is armed, clamped to the
 * build's maxima at every use, so no flipped bit anywhere (the scrubber's
 * own fields included) can make it read or write outside those arrays.
 *
 * "Protected copy": on the target the scrubber's copy lives in a second RAM
 * bank (or EDAC-protected memory) away from the working copy; here it is a
 * second copy inside tl_scrub with its own stored CRC-32C, checked before
 * every restore (a restore from a bad copy is refused and counted). The FFT
 * plan has no copy: it is rebuilt by tl_fft_init from the constant twiddle
 * table (tl_twiddle_table.c, in flash/ROM on the target) and the restored
 * configuration.
 *
 * A restore re-derives the stored CRC from the restored bytes, so a flip
 * of a stored CRC costs one false mismatch (and one flagged product), not
 * a mismatch on every later check.
 *
 * Schedule (tl_chain calls these; nothing else needs to):
 *   - CONFIG (294 octets on the host, 286 on 32-bit targets) is checked
 *     whole before every piece of samples tl_chain_push takes in, before
 *     every spectrum and in every take, before any range check of the
 *     running state relies on it;
 *   - TAPS and FFT are walked in slices of TL_SCRUB_SLICE_OCTETS octets, one
 *     slice every `period` frames (one frame per spectrum once the
 *     filterbank is full; tl_chain_set_scrub_period, default
 *     TL_SCRUB_DEFAULT_PERIOD = 1): the cost per spectrum is bounded by one
 *     slice; a whole pass takes (ceil(TAPS octets / slice) + ceil(FFT
 *     octets / slice)) x period frames;
 *   - every region is checked whole before each product is released
 *     (tl_chain_take), so a corruption that existed at any time during an
 *     integration is found before that integration leaves the chain;
 *   - at the same release, every integration bank's running sums are
 *     verified against their check (tl_integrate_verify); a failure cannot
 *     be repaired and counts as a running-state fault
 *     (tl_scrub_state_fault), which flags the integration.
 * A mismatch restores the region, is counted, and marks the running
 * integration: tl_chain_take sets TL_FLAG_UPSET on every channel of it.
 * Ownership: tl_chain holds the scrubber by value.
 */
#ifndef TL_SCRUB_H
#define TL_SCRUB_H

#include <stddef.h>
#include <stdint.h>
#include "tl_limits.h"
#include "tl_status.h"
#include "tl_taps.h"

#define TL_SCRUB_TAPS 0u
#define TL_SCRUB_FFT 1u
#define TL_SCRUB_CONFIG 2u
#define TL_SCRUB_REGIONS 3u

/* tl_scrub_counts.last_bad: 0 none yet, 1 + region, or TL_SCRUB_LAST_STATE
 * when a range check of the chain's running state failed. */
#define TL_SCRUB_LAST_NONE 0u
#define TL_SCRUB_LAST_STATE 4u

#define TL_SCRUB_SLICE_OCTETS 1024u     /* table octets checked per slice */
#define TL_SCRUB_DEFAULT_PERIOD 1u      /* frames per slice */
#define TL_SCRUB_MAX_PERIOD 65536u
#define TL_SCRUB_CONFIG_OCTETS 512u     /* room for the CONFIG region's copy */

/* Counters since init, saturating at UINT32_MAX. */
typedef struct tl_scrub_counts {
    uint32_t passes;                          /* complete passes over TAPS and FFT */
    uint32_t mismatches[TL_SCRUB_REGIONS];    /* checks whose CRC differed */
    uint32_t restores[TL_SCRUB_REGIONS];      /* restores from the protected copy (or the rebuilt plan) */
    uint32_t state_faults;                    /* running-state range checks failed (and repaired) */
    uint32_t last_bad;                        /* TL_SCRUB_LAST_* or 1 + region */
} tl_scrub_counts;

typedef struct tl_scrub {
    uint32_t period;          /* frames per table slice, 1 .. TL_SCRUB_MAX_PERIOD */
    uint32_t countdown;       /* frames until the next slice */
    uint32_t region;          /* slice cursor: TL_SCRUB_TAPS or TL_SCRUB_FFT */
    uint32_t offset;          /* octets of that region already folded into crc */
    uint32_t crc;             /* running CRC-32C of the region so far */
    uint32_t touched;         /* non-zero: a mismatch or state fault since the last release */
    uint32_t points;          /* geometry fixed when armed (clamped to the maxima at every use): N */
    uint32_t taps;            /* P */
    uint32_t tw_used;         /* radix-4 twiddle words in use */
    uint32_t ref[TL_SCRUB_REGIONS];  /* stored CRC-32C per region */
    uint32_t touched_copy;    /* a second `touched`, apart from it: either one non-zero flags the
                               * integration, so one flipped bit cannot clear the mark */
    tl_scrub_counts counts;
    uint32_t copy_crc;        /* CRC-32C of the protected copy: the TAPS span then the CONFIG spans */
    uint8_t config_copy[TL_SCRUB_CONFIG_OCTETS];
    uint8_t taps_copy[TL_TAPS_HEADER_BYTES + 4u + 4u * TL_TAPS_MAX_COEFS];
} tl_scrub;

struct tl_chain;

/* Fix the regions of chain c as it is now (just initialised, all good),
 * store their CRCs and the protected copy, and restart the slice cursor.
 * period 0 means TL_SCRUB_DEFAULT_PERIOD. Counters are zeroed when
 * `keep_counts` is 0. Returns TL_OK, TL_E_NULL, or TL_E_SCRUB (period above
 * TL_SCRUB_MAX_PERIOD); on error nothing is written. */
tl_status tl_scrub_arm(tl_scrub *s, const struct tl_chain *c, uint32_t period, int keep_counts);

/* CRC-32C of region r of chain c over the spans fixed by tl_scrub_arm
 * (0 for r >= TL_SCRUB_REGIONS). */
uint32_t tl_scrub_region_crc(const tl_scrub *s, const struct tl_chain *c, uint32_t r);

/* Check region r whole; on mismatch restore it, count, mark touched.
 * Returns 1 if it was bad, else 0. A restore counts in restores[r] when
 * the region holds the protected bytes afterwards; it is refused (and not
 * counted) when the protected copy fails its own CRC. */
int tl_scrub_check(tl_scrub *s, struct tl_chain *c, uint32_t r);

/* Once per frame, before its spectrum is processed (after the caller has
 * checked CONFIG with tl_scrub_check): one table slice when the period has
 * elapsed. Returns a bit mask (1 << region) of the regions found bad. */
uint32_t tl_scrub_spectrum(tl_scrub *s, struct tl_chain *c);

/* Every region whole (the release check). Returns the bad-region mask. */
uint32_t tl_scrub_all(tl_scrub *s, struct tl_chain *c);

/* Count a running-state fault: a failed range check (tl_chain repairs
 * it) or a bank of running sums failing its check at release. */
void tl_scrub_state_fault(tl_scrub *s);

#endif
