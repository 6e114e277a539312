/*
 * fuzz_link.c - libFuzzer target: the link parser (firmware/tl_link.h: the
 * receiver, COBS, the frame decoder, the setup record) and the target that
 * serves it (hil/link_target.h), on arbitrary octets.
 *
 * Input: one mode octet, then the body.
 *   mode bit 0 set: the body is the wire itself (COBS frames and 0x00
 *     delimiters, or garbage), fed octet by octet to link_target_serve;
 *   mode bit 0 clear: the body is a list of messages, each
 *     type (1), length (2, big-endian, taken mod TL_LINK_MAX_PAYLOAD + 1),
 *     payload (as many octets as remain, up to the length);
 *     the harness encodes each with tl_link_encode (sequence numbers from
 *     0, or the mode's bit 1 set: every third repeats the previous one) so
 *     the fuzzer reaches the target's message handling behind the CRC.
 *
 * Checked on every input (abort() is the failure):
 *   - tl_cobs_decode(tl_cobs_encode(body)) is the body, and the encoding
 *     holds no 0x00 and is at most TL_COBS_BOUND long (tl_link.h);
 *   - tl_link_decode of the body as one frame: on TL_OK, re-encoding the
 *     message and decoding it again gives the same type, sequence and
 *     payload;
 *   - tl_link_setup_decode of the body: on TL_OK, encode and decode again
 *     give the same record; on an error the field named is a real field;
 *   - every frame the target sends back decodes with tl_link_decode (no
 *     fault injection is asked for, so every answer must be well formed).
 */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "link_target.h"
#include "tl_bytes.h"
#include "tl_link.h"

static uint8_t stream[1u << 18];
static uint8_t enc[TL_COBS_BOUND(1u << 16) + 16u];
static uint8_t dec[1u << 16];
static uint8_t work[TL_LINK_MAX_BODY];
static uint8_t work2[TL_LINK_MAX_BODY];
static uint8_t wire[TL_LINK_MAX_WIRE];

typedef struct feed {
    const uint8_t *p;
    size_t n, at;
} feed;

static tl_link_rx answers_rx;
static uint8_t answers_work[TL_LINK_MAX_BODY];
static uint64_t answers;

static int get_octet(void *ctx)
{
    feed *f = ctx;
    return f->at < f->n ? f->p[f->at++] : -1;
}

static void put_octets(void *ctx, const uint8_t *p, size_t n)
{
    (void)ctx;
    for (size_t i = 0; i < n; i++) {
        if (!tl_link_rx_put(&answers_rx, p[i]))
            continue;
        tl_link_msg m;
        if (tl_link_decode(answers_rx.buf, answers_rx.fill, answers_work, sizeof answers_work, &m) != TL_OK)
            abort(); /* the target sent a malformed frame */
        answers++;
    }
}

static void check_cobs(const uint8_t *d, size_t n)
{
    if (n > sizeof dec)
        return;
    const size_t e = tl_cobs_encode(d, n, enc, sizeof enc);
    if (e == 0 || e > TL_COBS_BOUND(n) || memchr(enc, 0, e) != NULL)
        abort();
    size_t back = 0;
    if (tl_cobs_decode(enc, e, dec, sizeof dec, &back) != TL_OK || back != n || memcmp(dec, d, n) != 0)
        abort();
    /* decoding arbitrary octets never writes past its buffer (ASan checks) */
    (void)tl_cobs_decode(d, n, dec, n / 2u, &back);
}

static void check_frame(const uint8_t *d, size_t n)
{
    tl_link_msg m;
    if (tl_link_decode(d, n, work, sizeof work, &m) != TL_OK)
        return;
    if (m.len > TL_LINK_MAX_PAYLOAD)
        abort();
    size_t wl = 0;
    if (tl_link_encode(m.type, m.seq, m.payload, m.len, work2, sizeof work2, wire, sizeof wire, &wl) != TL_OK)
        abort();
    if (wl < 2 || wire[wl - 1] != 0)
        abort();
    tl_link_msg m2;
    if (tl_link_decode(wire, wl - 1, answers_work, sizeof answers_work, &m2) != TL_OK || m2.type != m.type ||
        m2.seq != m.seq || m2.len != m.len || memcmp(m2.payload, m.payload, m.len) != 0)
        abort();
}

static void check_setup(const uint8_t *d, size_t n)
{
    tl_link_setup s1, s2;
    uint32_t bad = 0xFFFFFFFFu;
    memset(&s1, 0, sizeof s1);
    memset(&s2, 0, sizeof s2);
    const tl_status st = tl_link_setup_decode(d, n, &s1, &bad);
    if (st != TL_OK) {
        if (st != TL_E_FORMAT && st != TL_E_FIELD_RANGE)
            abort();
        if (st == TL_E_FIELD_RANGE && strcmp(tl_link_setup_field_name(bad), "?") == 0)
            abort(); /* the error names no field */
        return;
    }
    uint8_t r1[TL_LINK_SETUP_OCTETS], r2[TL_LINK_SETUP_OCTETS];
    if (tl_link_setup_encode(&s1, r1, sizeof r1) != TL_OK)
        abort();
    if (tl_link_setup_decode(r1, sizeof r1, &s2, &bad) != TL_OK)
        abort();
    if (tl_link_setup_encode(&s2, r2, sizeof r2) != TL_OK || memcmp(r1, r2, sizeof r1) != 0)
        abort();
}

/* The message list of a structured input, encoded into stream[]. */
static size_t build_stream(const uint8_t *d, size_t n, int repeat)
{
    size_t out = 0, at = 0;
    uint16_t seq = 0;
    unsigned k = 0;
    while (at + 3 <= n) {
        const uint8_t type = d[at];
        size_t len = tl_get_be16(d + at + 1) % (TL_LINK_MAX_PAYLOAD + 1u);
        at += 3;
        if (len > n - at)
            len = n - at;
        if (repeat && ++k % 3u == 0u)
            seq = (uint16_t)(seq - 1u);
        size_t wl = 0;
        if (out + TL_LINK_MAX_WIRE > sizeof stream)
            break;
        if (tl_link_encode(type, seq, d + at, len, work2, sizeof work2, stream + out, sizeof stream - out, &wl) !=
            TL_OK)
            abort();
        out += wl;
        at += len;
        seq++;
    }
    return out;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1)
        return 0;
    const uint8_t mode = data[0];
    const uint8_t *d = data + 1;
    const size_t n = size - 1;
    check_cobs(d, n);
    check_frame(d, n);
    check_setup(d, n);

    feed f = { d, n, 0 };
    if (!(mode & 1u)) {
        f.p = stream;
        f.n = build_stream(d, n, (mode & 2u) != 0);
    }
    tl_link_rx_reset(&answers_rx);
    answers = 0;
    const link_port port = { get_octet, put_octets, &f };
    link_target_serve(&port, (mode & 4u) ? TL_LINK_MODE_FLIGHT : TL_LINK_MODE_BENCH, NULL);
    if (answers == 0)
        abort(); /* the start-up STATUS is always sent */
    return 0;
}
