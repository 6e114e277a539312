/*
 * tl_cuc.h - CCSDS unsegmented time code (CUC, CCSDS 301.0-B-4)
 * with an explicit P-field: the time stamp in every telemetry packet's
 * secondary header.
 *
 * Wire format, 7 octets, big-endian:
 *
 *   octet 0     P-field 0x1E:
 *                 bit 7     extension flag       0 (no second P-field octet)
 *                 bits 6..4 time code id         001 (CUC, epoch 1958-01-01 TAI)
 *                 bits 3..2 coarse octets - 1    11  (4 octets)
 *                 bits 1..0 fine octets          10  (2 octets)
 *   octets 1-4  coarse time, seconds since the epoch, 0 .. 2^32 - 1
 *   octets 5-6  fine time, units of 2^-16 s, 0 .. 65535
 *
 * The epoch is the CCSDS epoch, 1958-01-01T00:00:00 TAI; the coarse counter
 * counts SI seconds (no leap seconds) and rolls over after 2^32 s (in 2094).
 * Time values travel as tl_cuc {coarse, fine}; the time they stand for is
 * coarse + fine / 65536 seconds after the epoch.
 */
#ifndef TL_CUC_H
#define TL_CUC_H

#include <stddef.h>
#include <stdint.h>
#include "tl_status.h"

/* P-field fields (CCSDS 301.0-B-4) */
#define TL_CUC_PF_EXT_MASK 0x80u       /* extension flag */
#define TL_CUC_PF_ID_MASK 0x70u        /* time code identification */
#define TL_CUC_PF_ID_SHIFT 4u
#define TL_CUC_PF_ID_CCSDS_EPOCH 1u    /* 001: 1958-01-01 TAI epoch, level 1 */
#define TL_CUC_PF_COARSE_MASK 0x0Cu    /* coarse octets minus 1 */
#define TL_CUC_PF_COARSE_SHIFT 2u
#define TL_CUC_PF_FINE_MASK 0x03u      /* fine octets */
#define TL_CUC_COARSE_OCTETS 4u
#define TL_CUC_FINE_OCTETS 2u
/* The P-field this format uses: 0x1E. */
#define TL_CUC_PFIELD ((TL_CUC_PF_ID_CCSDS_EPOCH << TL_CUC_PF_ID_SHIFT) \
                       | ((TL_CUC_COARSE_OCTETS - 1u) << TL_CUC_PF_COARSE_SHIFT) | TL_CUC_FINE_OCTETS)

/* Offsets in the 7-octet code */
#define TL_CUC_OFF_PFIELD 0u
#define TL_CUC_OFF_COARSE 1u
#define TL_CUC_OFF_FINE 5u
#define TL_CUC_OCTETS 7u               /* P-field + T-field */
#define TL_CUC_FINE_PER_SECOND 65536u  /* fine units per second */

/* A time: coarse seconds + fine / 65536 s after 1958-01-01 TAI. */
typedef struct tl_cuc {
    uint32_t coarse;  /* s */
    uint16_t fine;    /* 2^-16 s */
} tl_cuc;

/* Write t as the 7 octets above at dst (dst_cap bytes available).
 * Returns TL_OK, TL_E_NULL (dst NULL) or TL_E_SPACE (dst_cap < 7).
 * Writes exactly 7 bytes on TL_OK and nothing on error; never writes past
 * dst + 7. */
tl_status tl_cuc_encode(tl_cuc t, uint8_t *dst, size_t dst_cap);

/* Read a 7-octet code at src (avail bytes readable) into *t.
 * Returns TL_OK, TL_E_NULL (src or t NULL), TL_E_SPACE (avail < 7) or
 * TL_E_FORMAT (P-field not 0x1E: another epoch, width or an extension).
 * Reads at most 7 bytes; *t is written only on TL_OK. */
tl_status tl_cuc_decode(const uint8_t *src, size_t avail, tl_cuc *t);

/*
 * The time of sample number `samples` of a stream sampled at rate_hz whose
 * sample 0 was taken at `start`:
 *
 *     t = start + samples / rate_hz   seconds,
 *
 * computed in integers only. The fraction of a second is rounded to the
 * nearest 2^-16 s, ties upward (away from zero); a fraction that rounds to
 * 65536 carries into the coarse seconds. The result is exact to within
 * 2^-17 s.
 *
 * Bounds: samples 0 .. 2^64 - 1 (the interface promise is 0 .. 2^63) and
 * rate_hz 1 .. 2^32 - 1. No intermediate overflows: with q = samples /
 * rate_hz and r = samples % rate_hz < 2^32, the rounding computes
 * (r * 2^17 + rate_hz) / (2 * rate_hz), whose numerator is below
 * 2^49 + 2^32; the coarse sum start.coarse + q + carry is compared against
 * 2^32 - 1 before it is formed (the carry is 0 or 1).
 *
 * Returns TL_OK, TL_E_NULL (t NULL) or TL_E_TIME_RANGE (rate_hz is 0, or the
 * result lies at or beyond 2^32 s after the epoch, which the 4-octet coarse
 * field cannot hold). *t is written only on TL_OK.
 */
tl_status tl_cuc_from_samples(tl_cuc start, uint64_t samples, uint32_t rate_hz, tl_cuc *t);

#endif
