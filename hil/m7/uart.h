/*
 * uart.h - polled driver for UART0 of the mps2-an500 board, an Arm CMSDK
 * APB UART at 0x40004000 (Cortex-M System Design Kit Technical Reference
 * Manual, APB UART [memory]): DATA at +0x00, STATE at +0x04 (bit 0 TX
 * buffer full, bit 1 RX buffer full), CTRL at +0x08 (bit 0 TX enable, bit 1
 * RX enable), BAUDDIV at +0x10 (at least 16). QEMU connects it to the
 * first -serial (or -chardev) backend. No interrupts: the link's
 * stop-and-wait flow control never lets more than one octet wait.
 */
#ifndef HIL_UART_H
#define HIL_UART_H

#include <stddef.h>
#include <stdint.h>

#define UART0_BASE 0x40004000u
#define UART_DATA 0x00u
#define UART_STATE 0x04u
#define UART_CTRL 0x08u
#define UART_BAUDDIV 0x10u
#define UART_STATE_TX_FULL 0x01u
#define UART_STATE_RX_FULL 0x02u
#define UART_CTRL_TX_EN 0x01u
#define UART_CTRL_RX_EN 0x02u

/* Enable transmit and receive; bauddiv = peripheral clock / baud (>= 16). */
void uart_init(uint32_t bauddiv);
/* Wait for an octet and return it. */
int uart_get(void);
/* Send n octets, waiting for room before each. */
void uart_put(const uint8_t *p, size_t n);

#endif
