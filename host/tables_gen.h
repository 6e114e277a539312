/*
 * tables_gen.h - writers of the committed firmware tables (host).
 *
 * firmware/tl_twiddle_table.c and firmware/tl_taps_default.c are produced by
 * these functions (`tidelock tables twiddle-source FILE`, `tidelock tables
 * taps-source FILE`) and compared with the committed files by
 * tests/test_twiddle.c and tests/test_taps.c.
 */
#ifndef TL_HOST_TABLES_GEN_H
#define TL_HOST_TABLES_GEN_H

#include <stdint.h>
#include <stdio.h>
#include "tl_taps.h"
#include "tl_limits.h"

/* round(2^29 cos(2 pi i / TL_TWIDDLE_TURN)), i = 0 .. TL_TWIDDLE_QUARTER, into c. */
void tl_gen_twiddle_cos(int32_t c[TL_TWIDDLE_QUARTER + 1u]);

/* Write the C source of the twiddle table. Returns 0 or -1 on a write error. */
int tl_gen_twiddle_source(FILE *out);

/* Write the C source of the default coefficient table (8192 points, 4 taps, Hann). */
int tl_gen_default_taps_source(FILE *out);

/* Write a generated source to `path` atomically: into path.tmp, then rename.
 * On failure nothing is left behind and err (cap bytes) gets one line naming
 * the file. Returns 0 or -1. */
int tl_gen_write_file(const char *path, int (*gen)(FILE *out), char *err, size_t cap);

/* The default table's design parameters. */
#define TL_GEN_DEFAULT_WINDOW TL_WINDOW_HANN

#endif
