/*
 * io_semihost.c - runner_io.h for the bare-metal Cortex-M7: files on the
 * host through semihosting (bulk vectors move at the emulator's memory
 * speed), the command line from QEMU's -semihosting-config arg=... list.
 */
#include <stddef.h>
#include <stdint.h>
#include "../runner_io.h"
#include "semihost.h"

long rio_open(const char *path, int write)
{
    uint32_t block[3] = { (uint32_t)(uintptr_t)path, write ? SEMIHOST_MODE_WB : SEMIHOST_MODE_RB, semihost_length(path) };
    const long h = semihost_call(SEMIHOST_OPEN, block);
    return h < 0 ? -1 : h;
}

long rio_length(long h)
{
    uint32_t block[1] = { (uint32_t)h };
    const long n = semihost_call(SEMIHOST_FLEN, block);
    return n < 0 ? -1 : n;
}

long rio_read(long h, uint8_t *buf, size_t n)
{
    uint32_t block[3] = { (uint32_t)h, (uint32_t)(uintptr_t)buf, (uint32_t)n };
    const long left = semihost_call(SEMIHOST_READ, block); /* octets NOT read */
    if (left < 0 || (unsigned long)left > n)
        return -1;
    return (long)(n - (size_t)left);
}

int rio_write(long h, const uint8_t *buf, size_t n)
{
    uint32_t block[3] = { (uint32_t)h, (uint32_t)(uintptr_t)buf, (uint32_t)n };
    return semihost_call(SEMIHOST_WRITE, block) == 0 ? 0 : -1; /* octets NOT written */
}

int rio_close(long h)
{
    uint32_t block[1] = { (uint32_t)h };
    return semihost_call(SEMIHOST_CLOSE, block) == 0 ? 0 : -1;
}

int rio_rename(const char *from, const char *to)
{
    uint32_t block[4] = { (uint32_t)(uintptr_t)from, semihost_length(from), (uint32_t)(uintptr_t)to, semihost_length(to) };
    return semihost_call(SEMIHOST_RENAME, block) == 0 ? 0 : -1;
}

int rio_remove(const char *path)
{
    uint32_t block[2] = { (uint32_t)(uintptr_t)path, semihost_length(path) };
    return semihost_call(SEMIHOST_REMOVE, block) == 0 ? 0 : -1;
}

void rio_say(const char *text)
{
    semihost_say(text);
}

/* The command line as QEMU passes it (arguments joined by spaces), split
 * into at most 8 words. */
int main(void)
{
    static char cmdline[1024];
    static char *argv[9];
    uint32_t block[2] = { (uint32_t)(uintptr_t)cmdline, sizeof cmdline - 1u };
    int argc = 0;
    if (semihost_call(SEMIHOST_GET_CMDLINE, block) == 0) {
        cmdline[block[1] < sizeof cmdline ? block[1] : sizeof cmdline - 1u] = '\0';
        char *p = cmdline;
        while (*p != '\0' && argc < 8) {
            while (*p == ' ')
                *p++ = '\0';
            if (*p == '\0')
                break;
            argv[argc++] = p;
            while (*p != '\0' && *p != ' ')
                p++;
        }
    }
    argv[argc] = NULL;
    return runner_main(argc, argv);
}
