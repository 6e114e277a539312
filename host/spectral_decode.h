/*
 * spectral_decode.h - ground-side decoder of the payloads of
 * firmware/tl_encode.h (host; docs/encoding.md is the long form).
 *
 * A payload is checked whole before anything is trusted: every header field
 * against its allowed values, the step count against ceil(N / B), every
 * step byte against TL_ENCODE_MAX_STEP_LOG2, the payload length against
 * 12 + S + L exactly, and the LZ4 block must decode (liblz4's
 * LZ4_decompress_safe, bounded by 8N output bytes) to exactly 8N bytes.
 * Anything else is TL_E_FORMAT. No length field sizes a buffer: the only
 * scratch is a fixed 8 x TL_ENCODE_FORMAT_MAX_CHANNELS bytes on the stack.
 * Hostile bytes give a status, never a crash or a read outside the payload.
 *
 * Values returned:
 *   lossless       the uint64 / int64 values exactly; step 1 per channel.
 *   noise-bounded  q 2^k per channel (the dequantized value), and the step
 *                  2^k (1 when k = 0: that channel is exact). The true value
 *                  lies within step/2 of it; the rounding adds variance
 *                  step^2 / 12 for k >= 1. q 2^k beyond the type's range
 *                  (possible only for values within step/2 of UINT64_MAX,
 *                  INT64_MAX or INT64_MIN) is saturated to the range, which
 *                  keeps that bound.
 */
#ifndef TL_HOST_SPECTRAL_DECODE_H
#define TL_HOST_SPECTRAL_DECODE_H

#include <stddef.h>
#include <stdint.h>
#include "tl_encode.h"
#include "tl_status.h"

/* The header fields of a checked payload. */
typedef struct tl_spectral_header {
    uint32_t version;   /* TL_ENCODE_VERSION */
    uint32_t encoding;  /* TL_ENCODE_ID_LOSSLESS or TL_ENCODE_ID_BOUNDED */
    uint32_t type;      /* TL_ENCODE_UNSIGNED or TL_ENCODE_SIGNED */
    uint32_t transpose; /* TL_ENCODE_BYTE_SHUFFLE or TL_ENCODE_BIT_PLANES */
    uint32_t count;     /* N, 1 .. TL_ENCODE_FORMAT_MAX_CHANNELS */
    uint32_t block;     /* B (0 for lossless) */
    uint32_t steps;     /* S = ceil(N / B) (0 for lossless) */
    uint32_t lz4_len;   /* L */
} tl_spectral_header;

/* Check the header, the step bytes and the total length of payload[0 ..
 * len-1] (not the LZ4 block's contents) and fill *h.
 * Returns TL_OK, TL_E_NULL (payload or h NULL), TL_E_FORMAT. */
tl_status tl_spectral_header_read(const uint8_t *payload, size_t len, tl_spectral_header *h);

/* Decode a payload of unsigned values (auto-power).
 *   values  cap entries; receives N values
 *   steps   NULL, or cap entries receiving each channel's step (2^k; 1 for lossless)
 *   h       NULL, or receives the header
 * Returns TL_OK; TL_E_NULL (payload or values NULL); TL_E_FORMAT (malformed:
 * nothing to trust); TL_E_ENCODING (a well-formed payload of signed values:
 * use tl_spectral_decode_i64); TL_E_SPACE (cap < N). On any error the
 * contents of values and steps are unspecified. Never writes past cap
 * entries, never reads past payload[len - 1]. */
tl_status tl_spectral_decode_u64(const uint8_t *payload, size_t len, uint64_t *values, uint64_t *steps, size_t cap,
                                 tl_spectral_header *h);

/* The same for signed values (cross-power); TL_E_ENCODING for an unsigned
 * payload. */
tl_status tl_spectral_decode_i64(const uint8_t *payload, size_t len, int64_t *values, uint64_t *steps, size_t cap,
                                 tl_spectral_header *h);

#endif
