/*
 * bytebuf.h - a growing byte buffer for host code that collects packets,
 * frames or samples before writing them (downlink_out.c, vectors.c).
 * Start zeroed; after a failed allocation every further put is ignored and
 * `failed` stays set, so a caller checks once at the end.
 */
#ifndef TL_HOST_BYTEBUF_H
#define TL_HOST_BYTEBUF_H

#include <stddef.h>
#include <stdint.h>

typedef struct tl_bytebuf {
    uint8_t *p;     /* malloc'd; the owner frees it */
    size_t len, cap;
    int failed;
} tl_bytebuf;

/* Append n octets (d may be NULL only when n is 0). */
void tl_bytebuf_put(tl_bytebuf *b, const uint8_t *d, size_t n);

#endif
