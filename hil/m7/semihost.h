/*
 * semihost.h - Arm semihosting calls used by the Cortex-M7 build (Arm's
 * "Semihosting for AArch32 and AArch64", version 2: BKPT 0xAB in Thumb
 * state, operation number in r0, parameter block address in r1, result in
 * r0 [memory]). QEMU implements them with -semihosting-config enable=on,
 * target=native. On a board without a debugger attached, BKPT faults.
 */
#ifndef HIL_SEMIHOST_H
#define HIL_SEMIHOST_H

#include <stddef.h>
#include <stdint.h>

#define SEMIHOST_OPEN 0x01u
#define SEMIHOST_CLOSE 0x02u
#define SEMIHOST_WRITE 0x05u
#define SEMIHOST_READ 0x06u
#define SEMIHOST_FLEN 0x0Cu
#define SEMIHOST_REMOVE 0x0Eu
#define SEMIHOST_RENAME 0x0Fu
#define SEMIHOST_GET_CMDLINE 0x15u
#define SEMIHOST_EXIT_EXTENDED 0x20u
#define SEMIHOST_APPLICATION_EXIT 0x20026u /* ADP_Stopped_ApplicationExit */

/* Open modes (fopen's "rb", "wb", "a"). */
#define SEMIHOST_MODE_RB 1u
#define SEMIHOST_MODE_WB 5u
#define SEMIHOST_MODE_A 8u

long semihost_call(uint32_t op, void *block);
/* End the program with exit status `status` (never returns). */
__attribute__((noreturn)) void semihost_exit(int status);
/* Length of a NUL-terminated string (no C library here). */
uint32_t semihost_length(const char *s);
/* Text and a newline on the host's standard error. */
void semihost_say(const char *text);

#endif
