/*
 * runner_io.h - what the vector runner needs from its platform: whole-file
 * reads and writes by name, a line on the error stream, the command line.
 * hil/io_posix.c implements it with POSIX calls (host and PowerPC builds),
 * hil/m7/io_semihost.c with Arm semihosting (the emulated Cortex-M7).
 * Handles are small non-negative integers; -1 means failure.
 */
#ifndef HIL_RUNNER_IO_H
#define HIL_RUNNER_IO_H

#include <stddef.h>
#include <stdint.h>

/* Open for reading, or create/truncate for writing (write != 0). */
long rio_open(const char *path, int write);
/* Length of an open file in octets, or -1. */
long rio_length(long h);
/* Read up to n octets; returns the count (0 at the end) or -1. */
long rio_read(long h, uint8_t *buf, size_t n);
/* Write all n octets; 0 or -1. */
int rio_write(long h, const uint8_t *buf, size_t n);
/* 0 or -1. */
int rio_close(long h);
/* Rename from over to; 0 or -1. */
int rio_rename(const char *from, const char *to);
/* Remove a file; 0 or -1. */
int rio_remove(const char *path);
/* Write text and a newline to the error stream. */
void rio_say(const char *text);

/* The runner's entry point: argv[0] names the program. Returns the exit
 * status (0 success, 1 failure, 2 usage). */
int runner_main(int argc, char **argv);

#endif
