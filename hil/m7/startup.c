/*
 * startup.c - reset and fault handling of the bare-metal Cortex-M7 build
 * (QEMU's mps2-an500 board: code in SSRAM1 at 0x00000000, data in
 * SSRAM2/3 at 0x20000000; hil/m7/m7.ld places them).
 *
 * The vector table holds the initial stack pointer and the handlers. Reset
 * copies .data from its load address, zeroes .bss, runs main and ends the
 * program through semihosting with main's status. No floating point is
 * used, so the FPU is never switched on: an FPU instruction would fault.
 */
#include <stdint.h>
#include "semihost.h"

extern uint32_t __data_load[], __data_start[], __data_end[], __bss_start[], __bss_end[], __stack_bottom[],
    __stack_top[];
int main(void);

#define STACK_FILL 0x5AC3A53Cu

/* Octets of the stack ever written: the words from the bottom that still
 * hold the fill pattern were never reached. */
static uint32_t stack_used(void)
{
    const uint32_t *p = __stack_bottom;
    while ((uintptr_t)p < (uintptr_t)__stack_top && *p == STACK_FILL)
        p++;
    return (uint32_t)((uintptr_t)__stack_top - (uintptr_t)p);
}

static void say_stack(int status)
{
    char text[96] = "Cortex-M7: stack used ";
    char *q = text;
    while (*q != '\0')
        q++;
    uint32_t v = stack_used(), div = 1000000000u;
    while (div > 1u && v / div == 0u)
        div /= 10u;
    for (; div > 0u; div /= 10u)
        *q++ = (char)('0' + (int)((v / div) % 10u));
    const char *tail = " octets";
    while (*tail != '\0')
        *q++ = *tail++;
    *q = '\0';
    if (status == 0)
        semihost_say(text);
}

void reset_handler(void);
void fault_handler(void);

void reset_handler(void)
{
    uint32_t *src = __data_load, *dst = __data_start;
    while ((uintptr_t)dst < (uintptr_t)__data_end)
        *dst++ = *src++;
    for (dst = __bss_start; (uintptr_t)dst < (uintptr_t)__bss_end; dst++)
        *dst = 0u;
    /* fill the stack below the live part (reset uses a few words at the top) */
    for (dst = __stack_bottom; (uintptr_t)dst < (uintptr_t)__stack_top - 256u; dst++)
        *dst = STACK_FILL;
    const int status = main();
    say_stack(status);
    semihost_exit(status);
}

void fault_handler(void)
{
    semihost_say("vector-runner: Cortex-M7 fault (hard fault, memory, bus or usage fault)");
    semihost_exit(3);
}

typedef void (*handler)(void);

/* Cortex-M exception vectors 0 .. 15 (ARMv7-M Architecture Reference
 * Manual, B1.5.2 [memory]); no interrupt is enabled. */
__attribute__((section(".vectors"), used)) static const handler vector_table[16] = {
    (handler)(uintptr_t)__stack_top, /* 0: initial main stack pointer */
    reset_handler,                   /* 1: reset */
    fault_handler,                   /* 2: NMI */
    fault_handler,                   /* 3: hard fault */
    fault_handler,                   /* 4: memory management fault */
    fault_handler,                   /* 5: bus fault */
    fault_handler,                   /* 6: usage fault */
    0, 0, 0, 0,                      /* 7 .. 10: reserved */
    fault_handler,                   /* 11: SVCall */
    fault_handler,                   /* 12: debug monitor */
    0,                               /* 13: reserved */
    fault_handler,                   /* 14: PendSV */
    fault_handler,                   /* 15: SysTick */
};
