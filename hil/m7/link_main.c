/*
 * link_main.c - the Cortex-M7 link target: the link protocol on UART0
 * (hil/m7/uart.h), a bench unit with no faults. QEMU runs it with the UART
 * on a loopback TCP port (`tidelock hil --target qemu-m7:ELF`); on a board
 * the same image speaks on its serial line.
 */
#include <stddef.h>
#include <stdint.h>
#include "../link_target.h"
#include "tl_link.h"
#include "uart.h"

/* 25 MHz peripheral clock of the MPS2 board / 115200 baud [memory]; QEMU
 * only needs it to be at least 16 */
#define BAUDDIV 217u

static int get_octet(void *ctx)
{
    (void)ctx;
    return uart_get();
}

static void put_octets(void *ctx, const uint8_t *p, size_t n)
{
    (void)ctx;
    uart_put(p, n);
}

int main(void)
{
    uart_init(BAUDDIV);
    const link_port port = { get_octet, put_octets, NULL };
    return link_target_serve(&port, TL_LINK_MODE_BENCH, NULL);
}
