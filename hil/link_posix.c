/*
 * link_posix.c - the link target on standard input and output (the host
 * and PowerPC builds; `tidelock hil --target exec:...` starts it):
 *
 *     link-target [--mode bench|flight|locked] [--garbage-every N] [--reset-at N] [--corrupt-at N]
 *
 * The options are bench-test hooks for the rig's own tests: the mode the
 * unit reports, garbage before every Nth answer, a restart on the Nth
 * message received, one flipped bit in the Nth message sent. Without them
 * it is a bench unit with no faults.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "link_target.h"
#include "tl_link.h"

typedef struct io {
    uint8_t buf[65536];
    size_t at, fill;
} io;

static int get_octet(void *ctx)
{
    io *b = ctx;
    if (b->at == b->fill) {
        const ssize_t r = read(0, b->buf, sizeof b->buf);
        if (r <= 0)
            return -1;
        b->at = 0;
        b->fill = (size_t)r;
    }
    return b->buf[b->at++];
}

static void put_octets(void *ctx, const uint8_t *p, size_t n)
{
    (void)ctx;
    while (n > 0u) {
        const ssize_t w = write(1, p, n);
        if (w <= 0)
            exit(1);
        p += w;
        n -= (size_t)w;
    }
}

static int number(const char *s, uint32_t *v)
{
    char *end = NULL;
    const unsigned long x = strtoul(s, &end, 10);
    if (end == s || *end != '\0' || x > 0xFFFFFFFFul)
        return -1;
    *v = (uint32_t)x;
    return 0;
}

int main(int argc, char **argv)
{
    static io in;
    link_faults f = { 0, 0, 0 };
    uint8_t mode = TL_LINK_MODE_BENCH;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i], *v = i + 1 < argc ? argv[i + 1] : NULL;
        if (strcmp(a, "--mode") == 0 && v != NULL && strcmp(v, "bench") == 0)
            mode = TL_LINK_MODE_BENCH;
        else if (strcmp(a, "--mode") == 0 && v != NULL && strcmp(v, "flight") == 0)
            mode = TL_LINK_MODE_FLIGHT;
        else if (strcmp(a, "--mode") == 0 && v != NULL && strcmp(v, "locked") == 0)
            mode = TL_LINK_MODE_LOCKED;
        else if (strcmp(a, "--garbage-every") == 0 && v != NULL && number(v, &f.garbage_every) == 0)
            ;
        else if (strcmp(a, "--reset-at") == 0 && v != NULL && number(v, &f.reset_at) == 0)
            ;
        else if (strcmp(a, "--corrupt-at") == 0 && v != NULL && number(v, &f.corrupt_at) == 0)
            ;
        else {
            fprintf(stderr, "usage: link-target [--mode bench|flight|locked] [--garbage-every N] [--reset-at N] "
                            "[--corrupt-at N]\n");
            return 2;
        }
        i++;
    }
    const link_port port = { get_octet, put_octets, &in };
    return link_target_serve(&port, mode, &f);
}
