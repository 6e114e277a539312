/*
 * atomic_file.h - never a half-written output file.
 *
 * tl_atomic_write writes through a callback into PATH.tmp.PID in the same
 * folder, flushes and closes it, and renames it over PATH only when every
 * step succeeded; on any failure the temporary file is removed and PATH is
 * left as it was (absent, or its previous content).
 */
#ifndef TL_HOST_ATOMIC_FILE_H
#define TL_HOST_ATOMIC_FILE_H

#include <stddef.h>
#include <stdio.h>

/* writer returns 0 on success. Returns 0, or -1 with one line in err
 * (cap bytes) naming path and the reason. */
int tl_atomic_write(const char *path, int (*writer)(FILE *f, void *ctx), void *ctx, char *err, size_t cap);

#endif
