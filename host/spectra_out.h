/*
 * spectra_out.h - one integration's spectra as files a scientist can open:
 * CSV tables and NumPy .npy arrays, with the firmware's integers exactly.
 *
 * Files written into an existing folder DIR (each through tl_atomic_write,
 * so each appears whole or not at all):
 *
 *   CSV (want_csv)
 *     auto<i>.csv    for each input i: "frequency_mhz,power,saturated", then
 *                    one row per channel k: k * sample_rate / points in MHz
 *                    with 6 decimals, the uint64 power sum, and 1 when the
 *                    channel's TL_FLAG_SAT_AUTO<i> bit is set, else 0
 *     cross.csv      two inputs only: "frequency_mhz,re,im,saturated", the
 *                    int64 cross-power sums, and 1 when TL_FLAG_SAT_CROSS_RE
 *                    or TL_FLAG_SAT_CROSS_IM is set
 *   NPY (want_npy), format version 1.0 (see npy.h)
 *     frequency_mhz.npy  '<f8', shape (channels,)
 *     auto<i>.npy        '<u8', shape (channels,), for each input
 *     cross.npy          '<i8', shape (channels, 2): re, im; two inputs only
 *     flags.npy          '|u1', shape (channels,): the TL_FLAG_* bits
 *
 * Powers are never converted to floating point; only the frequency axis is.
 */
#ifndef TL_HOST_SPECTRA_OUT_H
#define TL_HOST_SPECTRA_OUT_H

#include <stddef.h>
#include "tl_chain.h"

/* Needs p->channels in 1 .. TL_MAX_CHANNELS, p->inputs 1 or 2, p->points > 0
 * and a finite sample_rate_hz > 0. Returns 0, or -1 with one line in err
 * (cap bytes) naming the file that failed (or DIR for a bad argument).
 * Files written before a failure stay; the failing file is left absent or
 * as it was, with no temporary behind. */
int tl_spectra_write(const char *dir, const tl_product *p, double sample_rate_hz, int want_csv, int want_npy, char *err,
                     size_t cap);

#endif
