/* sha256.c - SHA-256 as FIPS 180-4 section 6.2 computes it (sha256.h). */
#include "sha256.h"

#include <stdio.h>
#include <string.h>

/* FIPS 180-4 section 4.2.2: the first 32 bits of the fractional parts of
 * the cube roots of the first 64 primes. */
static const uint32_t K[64] = {
    0x428a2f98u, 0x71374491u, 0xb5c0fbcfu, 0xe9b5dba5u, 0x3956c25bu, 0x59f111f1u, 0x923f82a4u, 0xab1c5ed5u,
    0xd807aa98u, 0x12835b01u, 0x243185beu, 0x550c7dc3u, 0x72be5d74u, 0x80deb1feu, 0x9bdc06a7u, 0xc19bf174u,
    0xe49b69c1u, 0xefbe4786u, 0x0fc19dc6u, 0x240ca1ccu, 0x2de92c6fu, 0x4a7484aau, 0x5cb0a9dcu, 0x76f988dau,
    0x983e5152u, 0xa831c66du, 0xb00327c8u, 0xbf597fc7u, 0xc6e00bf3u, 0xd5a79147u, 0x06ca6351u, 0x14292967u,
    0x27b70a85u, 0x2e1b2138u, 0x4d2c6dfcu, 0x53380d13u, 0x650a7354u, 0x766a0abbu, 0x81c2c92eu, 0x92722c85u,
    0xa2bfe8a1u, 0xa81a664bu, 0xc24b8b70u, 0xc76c51a3u, 0xd192e819u, 0xd6990624u, 0xf40e3585u, 0x106aa070u,
    0x19a4c116u, 0x1e376c08u, 0x2748774cu, 0x34b0bcb5u, 0x391c0cb3u, 0x4ed8aa4au, 0x5b9cca4fu, 0x682e6ff3u,
    0x748f82eeu, 0x78a5636fu, 0x84c87814u, 0x8cc70208u, 0x90befffau, 0xa4506cebu, 0xbef9a3f7u, 0xc67178f2u,
};

static uint32_t rotr(uint32_t x, unsigned n)
{
    return (x >> n) | (x << (32u - n));
}

static void compress(uint32_t h[8], const uint8_t b[64])
{
    uint32_t w[64];
    for (unsigned t = 0; t < 16; t++)
        w[t] = (uint32_t)b[4 * t] << 24 | (uint32_t)b[4 * t + 1] << 16 | (uint32_t)b[4 * t + 2] << 8 |
               (uint32_t)b[4 * t + 3];
    for (unsigned t = 16; t < 64; t++) {
        const uint32_t s0 = rotr(w[t - 15], 7) ^ rotr(w[t - 15], 18) ^ (w[t - 15] >> 3);
        const uint32_t s1 = rotr(w[t - 2], 17) ^ rotr(w[t - 2], 19) ^ (w[t - 2] >> 10);
        w[t] = w[t - 16] + s0 + w[t - 7] + s1;
    }
    uint32_t a = h[0], bb = h[1], c = h[2], d = h[3], e = h[4], f = h[5], g = h[6], hh = h[7];
    for (unsigned t = 0; t < 64; t++) {
        const uint32_t t1 = hh + (rotr(e, 6) ^ rotr(e, 11) ^ rotr(e, 25)) + ((e & f) ^ (~e & g)) + K[t] + w[t];
        const uint32_t t2 = (rotr(a, 2) ^ rotr(a, 13) ^ rotr(a, 22)) + ((a & bb) ^ (a & c) ^ (bb & c));
        hh = g;
        g = f;
        f = e;
        e = d + t1;
        d = c;
        c = bb;
        bb = a;
        a = t1 + t2;
    }
    h[0] += a;
    h[1] += bb;
    h[2] += c;
    h[3] += d;
    h[4] += e;
    h[5] += f;
    h[6] += g;
    h[7] += hh;
}

void tl_sha256_init(tl_sha256 *c)
{
    /* FIPS 180-4 section 5.3.3: square roots of the first 8 primes */
    static const uint32_t h0[8] = { 0x6a09e667u, 0xbb67ae85u, 0x3c6ef372u, 0xa54ff53au,
                                    0x510e527fu, 0x9b05688cu, 0x1f83d9abu, 0x5be0cd19u };
    memcpy(c->h, h0, sizeof h0);
    c->length = 0;
    c->fill = 0;
}

void tl_sha256_update(tl_sha256 *c, const void *data, size_t len)
{
    const uint8_t *p = data;
    c->length += len;
    while (len > 0) {
        size_t take = 64u - c->fill;
        if (take > len)
            take = len;
        memcpy(c->block + c->fill, p, take);
        c->fill += take;
        p += take;
        len -= take;
        if (c->fill == 64u) {
            compress(c->h, c->block);
            c->fill = 0;
        }
    }
}

void tl_sha256_final(tl_sha256 *c, uint8_t digest[TL_SHA256_OCTETS])
{
    const uint64_t bits = c->length * 8u;
    const uint8_t one = 0x80, zero = 0;
    tl_sha256_update(c, &one, 1);
    while (c->fill != 56u)
        tl_sha256_update(c, &zero, 1);
    uint8_t len[8];
    for (unsigned i = 0; i < 8; i++)
        len[i] = (uint8_t)(bits >> (56u - 8u * i));
    tl_sha256_update(c, len, 8);
    for (unsigned i = 0; i < 8; i++) {
        digest[4 * i] = (uint8_t)(c->h[i] >> 24);
        digest[4 * i + 1] = (uint8_t)(c->h[i] >> 16);
        digest[4 * i + 2] = (uint8_t)(c->h[i] >> 8);
        digest[4 * i + 3] = (uint8_t)c->h[i];
    }
}

void tl_sha256_hex(const void *data, size_t len, char hex[2 * TL_SHA256_OCTETS + 1])
{
    tl_sha256 c;
    uint8_t d[TL_SHA256_OCTETS];
    tl_sha256_init(&c);
    tl_sha256_update(&c, data, len);
    tl_sha256_final(&c, d);
    for (unsigned i = 0; i < TL_SHA256_OCTETS; i++)
        snprintf(hex + 2 * i, 3, "%02x", d[i]);
}
