/*
 * sha256.h - SHA-256 (FIPS 180-4, section 6.2) for the golden vector
 * manifest: every file's digest is recorded so a copy can be checked with
 * any SHA-256 tool. tests/test_vectors.c checks it against the FIPS 180-2
 * appendix examples and coreutils' sha256sum.
 */
#ifndef TL_HOST_SHA256_H
#define TL_HOST_SHA256_H

#include <stddef.h>
#include <stdint.h>

#define TL_SHA256_OCTETS 32u

typedef struct tl_sha256 {
    uint32_t h[8];
    uint64_t length;     /* message octets so far */
    uint8_t block[64];
    size_t fill;         /* octets in block */
} tl_sha256;

void tl_sha256_init(tl_sha256 *c);
void tl_sha256_update(tl_sha256 *c, const void *data, size_t len);
void tl_sha256_final(tl_sha256 *c, uint8_t digest[TL_SHA256_OCTETS]);

/* Digest of len octets as 64 lower-case hex digits and a NUL (hex: 65 bytes). */
void tl_sha256_hex(const void *data, size_t len, char hex[2 * TL_SHA256_OCTETS + 1]);

#endif
