/*
 * upset.h - upset injection: random single-bit flips into a live tl_chain
 * while it integrates a fixed input, each run compared with a clean run.
 *
 * The scene (small, so tens of thousands of trials take seconds): 256-point
 * transform (128 channels), 4 Hann taps, two inputs of Gaussian noise at
 * 1/8 of full scale on a 14-bit ADC (seeded), a three-step switch sequence
 * (antenna 8, load 4, load + noise source 4 frames, 3 discarded after each
 * change), `integration` spectra per product, `products` products. The
 * chain's downlink packets (firmware tl_downlink) and products are kept for
 * the clean run. Then every trial re-initialises the chain, picks one
 * target region, and flips `flips` random bits of it (uniform over the
 * region's bits), each at a random moment: before one of the pushes of a
 * quarter frame, or just before a product is taken. The products and
 * packets are compared with the clean run's.
 *
 * Per trial (each counted once per target):
 *   detected   the scrubber or a range check reported it (hk counters)
 *   flagged    some product carries the upset flag (TL_FLAG_UPSET)
 *   changed    some product's downlinked spectrum (sums, counts, time,
 *              saturation flags, header fields) differs from the clean one
 *   silent     some product changed without the upset flag: the failure
 *   hk_only    spectra identical, only the housekeeping packet differs
 *   no_effect  every packet identical, nothing flagged
 *   stopped    the chain refused to go on (an error status): products are
 *              missing, which the ground sees as a sequence gap
 *   watchdog   the run passed its event limit without finishing (a hang):
 *              must be 0
 * A trial can be detected and flagged and changed at once; silent implies
 * changed. The run is deterministic for a seed.
 */
#ifndef TL_HOST_UPSET_H
#define TL_HOST_UPSET_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

enum {
    TL_UPSET_TAPS = 0,    /* coefficient table in use */
    TL_UPSET_TWIDDLES,    /* FFT permutation, radix-4 and split twiddles in use */
    TL_UPSET_CONFIG,      /* the scrubber's CONFIG region */
    TL_UPSET_ACCUM,       /* running sums and saturation flags of every state, the integration counters */
    TL_UPSET_STATE,       /* fill, ring slots, switch position, spectra counters, filterbank history, scratch */
    TL_UPSET_SCRUBBER,    /* the scrubber's own fields, stored CRCs and protected copies */
    TL_UPSET_ANYWHERE,    /* any bit of the whole tl_chain (mostly unused capacity) */
    TL_UPSET_TARGETS
};

typedef struct tl_upset_opts {
    uint32_t trials;      /* per target, 1 .. 10^7 */
    uint32_t targets;     /* bit mask of TL_UPSET_* */
    uint64_t seed;
    uint32_t flips;       /* per trial, 1 .. 64 */
    uint32_t period;      /* scrub period in spectra, 0 = default */
    uint32_t integration; /* spectra per product, 16 .. 4096 */
    uint32_t products;    /* 1 .. 16 */
} tl_upset_opts;

typedef struct tl_upset_tally {
    uint64_t trials, injected;
    uint64_t detected, flagged, changed, silent, hk_only, no_effect, stopped, watchdog;
    uint64_t region_bits; /* size of the target */
} tl_upset_tally;

/* Target names ("taps", "twiddles", "config", "accumulators", "state",
 * "scrubber", "anywhere"); NULL past the end. */
const char *tl_upset_target_name(unsigned t);

/* Parse a comma-separated list of target names, or "all", or "tables"
 * (taps and twiddles). Returns the mask, 0 for an unknown name (its
 * position in *bad). */
uint32_t tl_upset_parse_targets(const char *list, const char **bad);

/* Defaults: 2000 trials per target, all targets, seed 1, 1 flip, default
 * period, 16 spectra per product, 3 products. */
void tl_upset_defaults(tl_upset_opts *o);

/* Run. Returns 0, or -1 with a one-line message in err. */
int tl_upset_run(const tl_upset_opts *o, tl_upset_tally tally[TL_UPSET_TARGETS], char *err, size_t cap);

/* One line: "upset: N flips in M trials: tables+config a detected ...". */
void tl_upset_print(FILE *f, const tl_upset_opts *o, const tl_upset_tally tally[TL_UPSET_TARGETS]);

/* JSON of the options and every target's tally. */
int tl_upset_write_json(FILE *f, const tl_upset_opts *o, const tl_upset_tally tally[TL_UPSET_TARGETS]);

#endif
