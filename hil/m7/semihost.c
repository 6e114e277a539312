/* semihost.c - the Arm semihosting calls of semihost.h. */
#include <stddef.h>
#include <stdint.h>
#include "semihost.h"

long semihost_call(uint32_t op, void *block)
{
    register uint32_t r0 __asm__("r0") = op;
    register void *r1 __asm__("r1") = block;
    __asm__ volatile("bkpt 0xAB" : "+r"(r0) : "r"(r1) : "memory");
    return (long)(int32_t)r0;
}

void semihost_exit(int status)
{
    uint32_t block[2] = { SEMIHOST_APPLICATION_EXIT, (uint32_t)status };
    semihost_call(SEMIHOST_EXIT_EXTENDED, block);
    for (;;) {
    }
}

uint32_t semihost_length(const char *s)
{
    uint32_t n = 0;
    while (s[n] != '\0')
        n++;
    return n;
}

static long stderr_handle = -1;

void semihost_say(const char *text)
{
    if (stderr_handle < 0) {
        uint32_t block[3] = { (uint32_t)(uintptr_t)":tt", SEMIHOST_MODE_A, 3u };
        stderr_handle = semihost_call(SEMIHOST_OPEN, block);
        if (stderr_handle < 0)
            return;
    }
    uint32_t block[3] = { (uint32_t)stderr_handle, (uint32_t)(uintptr_t)text, semihost_length(text) };
    semihost_call(SEMIHOST_WRITE, block);
    uint32_t nl[3] = { (uint32_t)stderr_handle, (uint32_t)(uintptr_t)"\n", 1u };
    semihost_call(SEMIHOST_WRITE, nl);
}

