/*
 * replay_threads.h - the firmware chain over a SigMF recording, split into
 * segments processed in parallel, giving exactly the serial product.
 *
 * The integration's M spectra are cut into `threads` segments of whole
 * spectra [a, b). Spectrum j's newest frame is frame j + P - 1 (P taps), so a
 * segment reads frames a .. b + P - 2: the P - 1 frames before its first
 * spectrum are the filterbank's overlap, read again by the segment's own
 * chain. Each segment runs its own tl_chain (integration b - a, the serial
 * run's resolved detection shift, the switch sequence advanced by a frames
 * with tl_switch_advance, so the state, the discard window and the integration
 * bank of every spectrum are the serial run's) and its own reader, which
 * reaches frame a by reading and dropping a x N samples (no seek: the
 * complex datatype's interpolator stays exact). The integer sums are then
 * added; the ADC counters of the overlap frames are taken out of every
 * segment but the first so each sample counts once.
 *
 * Exact, or refused with one line:
 *   - spectral kurtosis blocks ([flagging] sk_block > 0): refused;
 *   - a detection shift below ceil(log2 M) (a sum could saturate, and a
 *     saturated sum is not the sum of saturated parts): refused;
 *   - a segment counter at its saturation value (2^32 - 1): refused.
 * Memory: threads x (sizeof(tl_chain) + sizeof(tl_product) + block_bytes
 * + 2 x TL_REPLAY_CHUNK x 2 bytes + the reader's few kB), plus the caller's
 * *out; tl_replay_threads_bytes gives the figure. It does not grow with the
 * recording's length.
 */
#ifndef TL_HOST_REPLAY_THREADS_H
#define TL_HOST_REPLAY_THREADS_H

#include <stddef.h>
#include <stdint.h>

#include "scenario.h"
#include "tl_chain.h"

#define TL_REPLAY_MAX_THREADS 64u
#define TL_REPLAY_CHUNK 65536u /* samples per input per push */

/* Memory of a run with `threads` threads and reader blocks of block_bytes
 * (0: the reader's default), without *out. */
size_t tl_replay_threads_bytes(unsigned threads, size_t block_bytes);

/* The firmware product of one integration of s (s->spectra spectra, s->cfg)
 * over the recording META, with `threads` threads (1 .. TL_REPLAY_MAX_THREADS;
 * fewer segments when M < threads). The recording must hold
 * (P - 1 + M) x N samples per input and s->cfg.inputs channels. *out is
 * what tl_chain_take gives after pushing those samples through one chain.
 * Returns 0, or -1 with one line in err (cap bytes). */
int tl_replay_threads_product(const char *meta, size_t block_bytes, const tl_scenario *s, unsigned threads,
                              tl_product *out, char *err, size_t cap);

/* Segment k of n (1 <= n <= M) on its own, as --threads would run it:
 * spectra [M k / n, M (k + 1) / n), the same refusals, one line in err.
 * For k > 0 the counters of the P - 1 overlap frames are already taken out,
 * so adding the segments 1 .. n - 1 to segment 0 in order with
 * tl_replay_add_product gives exactly the serial product (the one
 * tl_replay_threads_product gives). Returns 0 or -1. */
int tl_replay_segment_product(const char *meta, size_t block_bytes, const tl_scenario *s, uint32_t k, uint32_t n,
                              tl_product *out, char *err, size_t cap);

/* out += p: sums, counters, spectra counts and flags, as the threads merge.
 * Returns 0, or -1 when a sum overflowed (cannot happen after the checks
 * above; kept as a guard). */
int tl_replay_add_product(tl_product *out, const tl_product *p);

#endif
