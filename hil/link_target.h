/*
 * link_target.h - the target side of the link protocol (firmware/tl_link.h,
 * docs/icd.md "Link protocol"): receive messages from a rig, run them
 * through hil_run, answer and send the transfer frames.
 *
 * Flow control is stop-and-wait: the rig sends one message and waits for
 * its answer (ACK, ERROR, STATUS, or NAK to send it again) before the next,
 * so the target never holds more than one message and never drops one,
 * however slow it is. A message whose sequence number repeats the last one
 * processed is answered again without being processed again (its answer
 * was lost). The same source runs on POSIX stdin/stdout (host, PowerPC)
 * and on the Cortex-M7's UART; all memory is static.
 */
#ifndef HIL_LINK_TARGET_H
#define HIL_LINK_TARGET_H

#include <stddef.h>
#include <stdint.h>

typedef struct link_port {
    int (*get)(void *ctx);                               /* next octet, or -1 when the stream ends */
    void (*put)(void *ctx, const uint8_t *p, size_t n);  /* send n octets */
    void *ctx;
} link_port;

/* Faults a bench test may ask for (all 0: none). */
typedef struct link_faults {
    uint32_t garbage_every;  /* before every Nth answer, send a few octets of garbage */
    uint32_t reset_at;       /* on the Nth message received, restart instead (as a power cycle) */
    uint32_t corrupt_at;     /* flip one bit in the middle of the Nth message sent */
} link_faults;

/* Announce the start-up (an unasked STATUS), then serve until get()
 * returns -1. mode is TL_LINK_MODE_*. Returns 0. */
int link_target_serve(const link_port *port, uint8_t mode, const link_faults *faults);

#endif
