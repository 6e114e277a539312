/*
 * tl_crc32c.h - CRC-32C (Castagnoli), used to check coefficient tables.
 *
 * Parameters (RevEng catalogue name CRC-32/ISCSI): reflected polynomial
 * 0x82F63B78 (normal 0x1EDC6F41), initial value 0xFFFFFFFF, reflected input
 * and output, final xor 0xFFFFFFFF. Check value for the ASCII bytes
 * "123456789" is 0xE3069283. Two steps per byte through a 16-entry table
 * (64 octets of constants); it runs when a table is loaded and when the
 * scrubber checks tables and configuration (tl_scrub.h).
 *
 * Streaming use: c = TL_CRC32C_INIT; c = tl_crc32c_update(c, p, n) ...;
 * crc = tl_crc32c_final(c).
 */
#ifndef TL_CRC32C_H
#define TL_CRC32C_H

#include <stddef.h>
#include <stdint.h>

#define TL_CRC32C_INIT 0xFFFFFFFFu

/* Feed len bytes at data (data may be NULL only when len is 0). */
uint32_t tl_crc32c_update(uint32_t crc, const uint8_t *data, size_t len);

/* Feed one 32-bit word as four big-endian bytes. */
uint32_t tl_crc32c_update_be32(uint32_t crc, uint32_t word);

/* Final xor: the CRC value to store or compare. */
static inline uint32_t tl_crc32c_final(uint32_t crc) { return crc ^ 0xFFFFFFFFu; }

/* One-shot CRC-32C of a buffer. */
uint32_t tl_crc32c(const uint8_t *data, size_t len);

#endif
