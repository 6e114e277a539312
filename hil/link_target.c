/* link_target.c - the target side of the link protocol (link_target.h). */
#include "link_target.h"
#include "hil_run.h"
#include "tl_bytes.h"
#include "tl_link.h"

#define SAMPLE_BLOCK 2048u

static hil_run run;
static tl_link_rx rx;
static uint8_t work[TL_LINK_MAX_BODY];
static uint8_t tx_work[TL_LINK_MAX_BODY];
static uint8_t tx_wire[TL_LINK_MAX_WIRE];
static int16_t in0[SAMPLE_BLOCK], in1[SAMPLE_BLOCK];
/* TABLE pieces land here, never in the running chain's table: a run goes
 * on while a table arrives, and only a CONFIG whose setup and whole image
 * check replaces the running table (docs/icd.md 8.3). */
static uint8_t staged[TL_TAPS_IMAGE_BYTES(TL_MAX_TAPS, TL_MAX_POINTS)];

typedef struct state {
    const link_port *port;
    const link_faults *faults;
    uint8_t mode;
    uint16_t tx_seq;         /* sequence number of the next message sent */
    int synced;              /* a message has been processed since start-up or HELLO */
    uint16_t last_seq;       /* sequence number of the last message processed */
    uint8_t last_type;       /* its answer, kept to answer a repeat */
    uint8_t last_payload[TL_LINK_STATUS_OCTETS];
    size_t last_len;
    uint32_t answers;
    uint32_t received;
    uint32_t sent;
    uint32_t table_len, table_total;
    int running;
    uint32_t inputs;
} state;

static state S;

static void send_msg(uint8_t type, const uint8_t *payload, size_t n)
{
    size_t len = 0;
    if (tl_link_encode(type, S.tx_seq, payload, n, tx_work, sizeof tx_work, tx_wire, sizeof tx_wire, &len) != TL_OK)
        return;
    S.tx_seq++;
    if (++S.sent == S.faults->corrupt_at)
        tx_wire[len / 2u] ^= 0x10u;
    S.port->put(S.port->ctx, tx_wire, len);
}

static void answer(uint8_t type, const uint8_t *payload, size_t n)
{
    static const uint8_t junk[] = { 0x13, 0x37, 0x00, 0xA5, 0x00, 0x5A, 0xFF, 0x01, 0x00 };
    S.answers++;
    if (S.faults->garbage_every != 0u && S.answers % S.faults->garbage_every == 0u)
        S.port->put(S.port->ctx, junk, sizeof junk);
    S.last_type = type;
    S.last_len = n <= sizeof S.last_payload ? n : sizeof S.last_payload;
    for (size_t i = 0; i < S.last_len; i++)
        S.last_payload[i] = payload[i];
    send_msg(type, payload, n);
}

static void send_status(uint16_t acked, uint8_t startup)
{
    uint8_t p[TL_LINK_STATUS_OCTETS] = { 0 };
    tl_put_be16(p, acked);
    p[2] = (uint8_t)TL_LINK_VERSION;
    p[3] = S.mode;
    p[4] = startup;
    tl_put_be32(p + 6, TL_DL_FIRMWARE_VERSION);
    tl_put_be32(p + 10, TL_ARITH_VERSION);
    tl_put_be32(p + 14, TL_MAX_POINTS);
    tl_put_be32(p + 18, TL_MAX_TAPS);
    tl_put_be32(p + 22, TL_LINK_MAX_PAYLOAD);
    tl_put_be32(p + 26, (uint32_t)sizeof staged);
    if (startup)
        send_msg(TL_LINK_T_STATUS, p, sizeof p);
    else
        answer(TL_LINK_T_STATUS, p, sizeof p);
}

static void ack(uint16_t seq)
{
    uint8_t p[10];
    tl_put_be16(p, seq);
    tl_put_be32(p + 2, run.products);
    tl_put_be32(p + 6, run.fb.frames);
    answer(TL_LINK_T_ACK, p, sizeof p);
}

static void refuse(uint16_t seq, tl_status st, uint32_t detail)
{
    uint8_t p[8];
    tl_put_be16(p, seq);
    tl_put_be16(p + 2, (uint16_t)st);
    tl_put_be32(p + 4, detail);
    answer(TL_LINK_T_ERROR, p, sizeof p);
}

static void nak(uint8_t reason)
{
    uint8_t p[3];
    tl_put_be16(p, (uint16_t)(S.last_seq + 1u));
    p[2] = reason;
    send_msg(TL_LINK_T_NAK, p, sizeof p);
}

static void frames_out(void *user, const uint8_t *wire, size_t len)
{
    (void)user;
    send_msg(TL_LINK_T_FRAMES, wire, len);
}

static void restart(void)
{
    S.synced = 0;
    S.running = 0;
    S.table_len = 0;
    S.table_total = 0;
    tl_link_rx_reset(&rx);
    send_status(TL_LINK_NO_SEQUENCE, 1u);
}

static void on_table(uint16_t seq, const uint8_t *p, size_t n)
{
    if (n < 8u) {
        refuse(seq, TL_E_FORMAT, 0u);
        return;
    }
    const uint32_t off = tl_get_be32(p), total = tl_get_be32(p + 4);
    const size_t len = n - 8u;
    if (off == 0u)
        S.table_len = 0;
    if (total > sizeof staged || off != S.table_len || len > total - off) {
        S.table_len = 0;
        refuse(seq, TL_E_TABLE_SIZE, total);
        return;
    }
    for (size_t i = 0; i < len; i++)
        staged[off + i] = p[8 + i];
    S.table_len = off + (uint32_t)len;
    S.table_total = total;
    if (S.table_len == total) { /* the last piece: the whole image is checked now */
        const tl_status st = tl_taps_check_image(staged, total, NULL, NULL);
        if (st != TL_OK) {
            S.table_len = 0;
            refuse(seq, st, total);
            return;
        }
    }
    ack(seq);
}

/* A refused CONFIG changes nothing: a run in progress goes on with its
 * old setup and table (docs/icd.md 8.3). */
static void on_config(uint16_t seq, const uint8_t *p, size_t n)
{
    if (n != 4u + TL_LINK_SETUP_OCTETS) {
        refuse(seq, TL_E_FORMAT, 0u);
        return;
    }
    const uint32_t tlen = tl_get_be32(p);
    if (tlen != 0u && (tlen != S.table_len || tlen != S.table_total)) {
        refuse(seq, TL_E_TABLE_SIZE, tlen);
        return;
    }
    tl_link_setup setup;
    uint32_t bad = 0;
    tl_status st = tl_link_setup_decode(p + 4, TL_LINK_SETUP_OCTETS, &setup, &bad);
    if (st == TL_OK)
        st = tl_link_setup_check(&setup, &bad);
    if (st != TL_OK) {
        refuse(seq, st, bad);
        return;
    }
    st = hil_run_start(&run, &setup, tlen != 0u ? staged : NULL, tlen, frames_out, NULL);
    if (st != TL_OK) { /* the table: detail is its length */
        refuse(seq, st, tlen);
        return;
    }
    S.table_len = 0; /* a table is used by one CONFIG; the next needs its own transfer */
    S.running = 1;
    S.inputs = setup.chain.inputs;
    ack(seq);
}

static void on_samples(uint16_t seq, const uint8_t *p, size_t n)
{
    const size_t set = 2u * S.inputs;
    if (!S.running) {
        refuse(seq, TL_E_NOT_INIT, 0u);
        return;
    }
    if (n == 0u || n % set != 0u) {
        refuse(seq, TL_E_FORMAT, (uint32_t)n);
        return;
    }
    size_t sets = n / set;
    while (sets > 0u) {
        const size_t k = sets < SAMPLE_BLOCK ? sets : SAMPLE_BLOCK;
        for (size_t i = 0; i < k; i++) {
            in0[i] = (int16_t)tl_get_be16(p + i * set);
            if (S.inputs == 2u)
                in1[i] = (int16_t)tl_get_be16(p + i * set + 2u);
        }
        const tl_status st = hil_run_push(&run, in0, S.inputs == 2u ? in1 : NULL, k);
        if (st != TL_OK) {
            S.running = 0;
            refuse(seq, st, 0u);
            return;
        }
        p += k * set;
        sets -= k;
    }
    ack(seq);
}

static void on_message(const tl_link_msg *m)
{
    if (m->type == TL_LINK_T_HELLO) { /* always taken: a rig starting afresh */
        S.synced = 1;
        S.last_seq = m->seq;
        send_status(m->seq, 0u);
        return;
    }
    if (S.synced && m->seq == S.last_seq) { /* our answer was lost: say it again */
        send_msg(S.last_type, S.last_payload, S.last_len);
        return;
    }
    if (S.synced && m->seq != (uint16_t)(S.last_seq + 1u)) {
        nak(TL_LINK_NAK_SEQUENCE);
        return;
    }
    S.synced = 1;
    S.last_seq = m->seq;
    switch (m->type) {
    case TL_LINK_T_RESET:
        S.running = 0;
        S.table_len = 0;
        ack(m->seq);
        break;
    case TL_LINK_T_TABLE: on_table(m->seq, m->payload, m->len); break;
    case TL_LINK_T_CONFIG: on_config(m->seq, m->payload, m->len); break;
    case TL_LINK_T_SAMPLES: on_samples(m->seq, m->payload, m->len); break;
    case TL_LINK_T_END:
        if (!S.running) {
            refuse(m->seq, TL_E_NOT_INIT, 0u);
            break;
        }
        S.running = 0;
        {
            const tl_status st = hil_run_finish(&run);
            if (st != TL_OK)
                refuse(m->seq, st, 0u);
            else
                ack(m->seq);
        }
        break;
    default:
        S.last_seq = (uint16_t)(m->seq - 1u); /* not processed: the same number may come again */
        nak(TL_LINK_NAK_TYPE);
        break;
    }
}

int link_target_serve(const link_port *port, uint8_t mode, const link_faults *faults)
{
    static const link_faults none = { 0, 0, 0 };
    S.port = port;
    S.faults = faults != NULL ? faults : &none;
    S.mode = mode;
    S.tx_seq = 0;
    S.answers = 0;
    S.received = 0;
    S.sent = 0;
    restart();
    for (;;) {
        const int c = port->get(port->ctx);
        if (c < 0)
            return 0;
        if (!tl_link_rx_put(&rx, (uint8_t)c))
            continue;
        tl_link_msg m;
        if (tl_link_decode(rx.buf, rx.fill, work, sizeof work, &m) != TL_OK) {
            nak(TL_LINK_NAK_FRAME);
            continue;
        }
        S.received++;
        if (S.faults->reset_at != 0u && S.received == S.faults->reset_at) {
            restart();
            continue;
        }
        on_message(&m);
    }
}
