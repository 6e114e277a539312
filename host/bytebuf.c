/* bytebuf.c - a growing byte buffer (bytebuf.h). */
#include "bytebuf.h"

#include <stdlib.h>
#include <string.h>

void tl_bytebuf_put(tl_bytebuf *b, const uint8_t *d, size_t n)
{
    if (b->failed || n == 0u)
        return;
    if (b->len + n > b->cap) {
        size_t cap = b->cap ? b->cap : 65536u;
        while (cap < b->len + n)
            cap *= 2u;
        uint8_t *q = realloc(b->p, cap);
        if (q == NULL) {
            b->failed = 1;
            return;
        }
        b->p = q;
        b->cap = cap;
    }
    memcpy(b->p + b->len, d, n);
    b->len += n;
}
