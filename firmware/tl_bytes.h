/*
 * tl_bytes.h - big-endian put/get of 16-, 32-, 48- and 64-bit unsigned
 * integers, one byte at a time.
 *
 * Every multi-octet field on the downlink is big-endian (most significant
 * octet first, as CCSDS numbers its octets). These helpers never depend on
 * the host's byte order or alignment: p may point anywhere, and exactly 2,
 * 4, 6 or 8 bytes at p are read or written, nothing else. p must not be NULL
 * and must have that many bytes; the caller checks the room first.
 */
#ifndef TL_BYTES_H
#define TL_BYTES_H

#include <stdint.h>

/* Write v as 2 bytes: p[0] = bits 15..8, p[1] = bits 7..0. */
static inline void tl_put_be16(uint8_t *p, uint16_t v)
{
    p[0] = (uint8_t)(v >> 8);
    p[1] = (uint8_t)v;
}

/* Write v as 4 bytes, most significant first. */
static inline void tl_put_be32(uint8_t *p, uint32_t v)
{
    p[0] = (uint8_t)(v >> 24);
    p[1] = (uint8_t)(v >> 16);
    p[2] = (uint8_t)(v >> 8);
    p[3] = (uint8_t)v;
}

/* Write the low 48 bits of v as 6 bytes, most significant first; bits 63..48
 * of v are ignored. */
static inline void tl_put_be48(uint8_t *p, uint64_t v)
{
    p[0] = (uint8_t)(v >> 40);
    p[1] = (uint8_t)(v >> 32);
    p[2] = (uint8_t)(v >> 24);
    p[3] = (uint8_t)(v >> 16);
    p[4] = (uint8_t)(v >> 8);
    p[5] = (uint8_t)v;
}

/* Write v as 8 bytes, most significant first. */
static inline void tl_put_be64(uint8_t *p, uint64_t v)
{
    tl_put_be32(p, (uint32_t)(v >> 32));
    tl_put_be32(p + 4, (uint32_t)v);
}

/* Read 2 bytes, most significant first. */
static inline uint16_t tl_get_be16(const uint8_t *p)
{
    return (uint16_t)(((uint32_t)p[0] << 8) | (uint32_t)p[1]);
}

/* Read 4 bytes, most significant first. */
static inline uint32_t tl_get_be32(const uint8_t *p)
{
    return ((uint32_t)p[0] << 24) | ((uint32_t)p[1] << 16) | ((uint32_t)p[2] << 8) | (uint32_t)p[3];
}

/* Read 6 bytes, most significant first, into bits 47..0 (bits 63..48 zero). */
static inline uint64_t tl_get_be48(const uint8_t *p)
{
    return ((uint64_t)tl_get_be16(p) << 32) | (uint64_t)tl_get_be32(p + 2);
}

/* Read 8 bytes, most significant first. */
static inline uint64_t tl_get_be64(const uint8_t *p)
{
    return ((uint64_t)tl_get_be32(p) << 32) | (uint64_t)tl_get_be32(p + 4);
}

#endif
