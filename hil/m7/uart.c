/* uart.c - polled CMSDK APB UART0 (uart.h). */
#include "uart.h"

static volatile uint32_t *reg(uint32_t off)
{
    return (volatile uint32_t *)(uintptr_t)(UART0_BASE + off);
}

void uart_init(uint32_t bauddiv)
{
    *reg(UART_BAUDDIV) = bauddiv < 16u ? 16u : bauddiv;
    *reg(UART_CTRL) = UART_CTRL_TX_EN | UART_CTRL_RX_EN;
}

int uart_get(void)
{
    while ((*reg(UART_STATE) & UART_STATE_RX_FULL) == 0u) {
    }
    return (int)(*reg(UART_DATA) & 0xFFu);
}

void uart_put(const uint8_t *p, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        while ((*reg(UART_STATE) & UART_STATE_TX_FULL) != 0u) {
        }
        *reg(UART_DATA) = p[i];
    }
}
