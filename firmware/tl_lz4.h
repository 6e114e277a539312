/*
 * tl_lz4.h - a small compressor for the LZ4 block format (flight code).
 *
 * Output follows the LZ4 block format as published by the LZ4 project
 * (doc/lz4_Block_format.md), so any conforming LZ4 block decoder restores
 * the input; the ground uses liblz4's LZ4_decompress_safe. This is our own
 * compressor, written for bounded time and a fixed memory footprint.
 *
 * The format, as this compressor writes it. A block is a run of sequences:
 *
 *   token (1 byte): high nibble = literal count L (15: more bytes follow),
 *                   low nibble  = match length minus 4 (15: more bytes follow)
 *   [L - 15 as bytes of 255 ... then one byte < 255]   if L >= 15
 *   L literal bytes
 *   offset (2 bytes, little-endian, 1 .. 65535)          not in the last sequence
 *   [match length - 19 as bytes of 255 ... one < 255]   if match length >= 19
 *
 * The last sequence carries literals only. End rules (the format's, obeyed
 * here): the last 5 bytes of the input are literals; the last match starts
 * at least 12 bytes before the end of the input; an input shorter than 13
 * bytes is one literal-only sequence. An empty input is the single byte 0x00.
 *
 * Method. Greedy, single pass: at each position the 4 bytes there are
 * hashed, the hash table gives the last position with the same hash, and a
 * match of at least 4 bytes is taken when the bytes agree. The match is then
 * extended forward (up to the end-rule limit) and backward over pending
 * literals. After a match the position 2 bytes before its end is entered in
 * the table. Each input byte is hashed at most twice and compared a bounded
 * number of times, so the time is linear in the input length: O(1) work per
 * input position, no search chains, no skipping heuristics.
 *
 * Byte identity. The 4 bytes are read one by one and assembled
 * big-endian, h = ((b0<<24)|(b1<<16)|(b2<<8)|b3) * 2654435761 mod 2^32,
 * shifted right by 32 - TL_LZ4_HASH_LOG. No word loads, no alignment or
 * endianness assumption: the output bytes are the same on every target.
 *
 * Memory: the caller owns a tl_lz4 context holding the hash table,
 * 2^TL_LZ4_HASH_LOG entries of uint16 input positions (8 KiB at the default
 * 12). Each call clears it first, so the output depends only on the input.
 * Nothing is allocated; there are no globals.
 */
#ifndef TL_LZ4_H
#define TL_LZ4_H

#include <stddef.h>
#include <stdint.h>
#include "tl_status.h"

/* Hash table size: 2^TL_LZ4_HASH_LOG entries of uint16. A build may set
 * -DTL_LZ4_HASH_LOG=10 .. 14 (2 KiB .. 32 KiB); other values are rejected.
 * A larger table finds a few more matches; the format is unchanged. */
#ifndef TL_LZ4_HASH_LOG
#define TL_LZ4_HASH_LOG 12u
#endif
#if TL_LZ4_HASH_LOG < 10 || TL_LZ4_HASH_LOG > 14
#error "TL_LZ4_HASH_LOG must be from 10 to 14"
#endif
#define TL_LZ4_HASH_ENTRIES (1u << TL_LZ4_HASH_LOG)

/* Largest input of one call, in bytes (positions are stored as uint16). */
#define TL_LZ4_MAX_INPUT 65535u

/* Worst-case compressed size of n input bytes: the LZ4 project's
 * LZ4_COMPRESSBOUND. A dst_cap of at least this never gives TL_E_SPACE.
 * For sizing buffers at compile time (it divides: use it on constants). */
#define TL_LZ4_BOUND(n) ((n) + (n) / 255u + 16u)

/* Format constants (doc/lz4_Block_format.md). */
#define TL_LZ4_MIN_MATCH 4u      /* shortest match */
#define TL_LZ4_LAST_LITERALS 5u  /* the last 5 input bytes are literals */
#define TL_LZ4_MATCH_MARGIN 12u  /* the last match starts >= 12 bytes before the end */
#define TL_LZ4_MIN_INPUT 13u     /* shorter inputs are literals only */

/* Compressor context: caller-owned, no initialisation needed. */
typedef struct tl_lz4 {
    uint16_t table[TL_LZ4_HASH_ENTRIES]; /* last input position per hash */
} tl_lz4;

/*
 * Compress src[0 .. src_len-1] into one LZ4 block at dst.
 *
 *   z        context (its table is cleared and reused; contents on entry
 *            do not matter)
 *   src      input bytes; may be NULL only when src_len is 0
 *   src_len  0 .. TL_LZ4_MAX_INPUT bytes
 *   dst      output; may be NULL only when dst_cap is 0
 *   dst_cap  bytes available at dst; TL_LZ4_BOUND(src_len) always suffices
 *   written  receives the block length in bytes on TL_OK, 0 otherwise
 *
 * Returns
 *   TL_OK          dst[0 .. *written-1] is the block
 *   TL_E_NULL      z or written is NULL, or src/dst NULL with a nonzero length
 *   TL_E_ENCODING  src_len > TL_LZ4_MAX_INPUT
 *   TL_E_SPACE     the block does not fit in dst_cap bytes; dst[0 .. dst_cap-1]
 *                  then holds an unfinished block that must not be used
 *
 * Never writes dst[dst_cap] or beyond, never reads src[src_len] or beyond,
 * never allocates. Time linear in src_len plus clearing the table.
 */
tl_status tl_lz4_compress(tl_lz4 *z, const uint8_t *src, size_t src_len, uint8_t *dst, size_t dst_cap,
                          size_t *written);

#endif
