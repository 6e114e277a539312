/*
 * replay_shard.h - a long replay cut into shards (`tidelock replay --shard
 * i/n`, `tidelock merge`): each shard runs the firmware chain over its
 * segment of the recording (replay_threads.h: spectra [M i / n,
 * M (i + 1) / n) with the filterbank's P - 1 overlap frames read again) and
 * writes its integer accumulators, the whole tl_product, to a shard file
 * (shard_file.h, kind TL_SHARD_REPLAY). The merge adds them exactly, in
 * shard order, and writes the spectra files `replay --threads N` writes
 * (spectra_out.h): byte for byte those of one machine. Like --threads, a
 * sharded replay is the firmware chain only (the double references and the
 * fidelity figures are floating point and are not sharded).
 *
 * Job digest: SHA-256 of the tool and arithmetic versions, the resolved
 * scenario, the bytes of the recording's .sigmf-meta and its datatype and
 * sample count: shards of another scenario or recording are refused.
 *
 * Payload (big-endian, every integer at its own width; docs/cluster.md):
 *   f64 sample rate (Hz), u32 csv flag, u32 npy flag, u32 M,
 *   u32 segment first spectrum, u32 segment spectra,
 *   u32 TL_MAX_INPUTS, u32 TL_ADC_HIST_BINS, u32 TL_MAX_FFT_STAGES + 1,
 *   u32 TL_STATES - 1 (the build's dimensions; a mismatch is refused),
 *   the product header (u32 arith_version, index, spectra, antenna_spectra,
 *   discarded, sk_blocks, sk_dropped, switch_steps, u64 first_frame, u32
 *   points, taps, inputs, channels, fft_stages, fft_scale_mask,
 *   fft_total_shift, det_shift, rounding, window, taps_shift, taps_crc),
 *   the counters (per input: u32 adc_clips, u64 adc_sumsq, u32 adc_hist[],
 *   u32 pfb_sat, u32 fft_sat[]; then u32 acc_sat[4]),
 *   the antenna sums and per calibration state (u32 spectra, u32 acc_sat[4])
 *   its sums, each as: per channel k < channels: u64 auto_power[i][k] for
 *   every input slot i, i64 cross_re[k], i64 cross_im[k], u8 flags[k].
 */
#ifndef TL_HOST_REPLAY_SHARD_H
#define TL_HOST_REPLAY_SHARD_H

#include <stddef.h>
#include <stdint.h>

#include "scenario.h"
#include "shard_file.h"
#include "tl_chain.h"

/* The job digest of replaying META (opened, its info in `datatype` and
 * `samples`) with scenario s. Returns 0 or -1 with one line in err. */
int tl_replay_shard_job(const char *meta, const char *datatype, uint64_t samples, const tl_scenario *s,
                        uint8_t job[32], char *err, size_t cap);

/* Run shard i of n of META and write it to DIR/shard-IIII-of-NNNN.tlshard
 * (the path goes to path_out, cap_path bytes). Returns 0 or -1 with one
 * line in err. */
int tl_replay_shard_run(const char *meta, size_t block_bytes, const tl_scenario *s, const uint8_t job[32],
                        uint32_t i, uint32_t n, const char *dir, char *path_out, size_t cap_path, tl_product *scratch,
                        char *err, size_t cap);

/* Merge a checked set (tl_shard_check_set) of replay shards into DIR's
 * spectra files. Returns 0 or -1 with one line in err naming the file. */
int tl_replay_shard_merge(const char *const *paths, const tl_shard *sh, size_t nfiles, const char *dir, char *err,
                          size_t cap);

#endif
