/* fuzz_common.h - a private temporary folder for the file-reading targets. */
#ifndef TL_FUZZ_COMMON_H
#define TL_FUZZ_COMMON_H

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

static char fuzz_dir[256];

static void fuzz_dir_remove(void)
{
    char cmd[300];
    if (fuzz_dir[0] == '\0')
        return;
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", fuzz_dir);
    if (system(cmd) != 0)
        fprintf(stderr, "fuzz: could not remove %s\n", fuzz_dir);
}

/* Make the folder once per process (under TMPDIR, else /tmp). */
static const char *fuzz_dir_get(void)
{
    if (fuzz_dir[0] != '\0')
        return fuzz_dir;
    const char *t = getenv("TMPDIR");
    snprintf(fuzz_dir, sizeof fuzz_dir, "%s/tl-fuzz-XXXXXX", t != NULL && *t ? t : "/tmp");
    if (mkdtemp(fuzz_dir) == NULL) {
        perror("fuzz: mkdtemp");
        abort();
    }
    atexit(fuzz_dir_remove);
    return fuzz_dir;
}

/* Write n octets to path, or abort. */
static void fuzz_write(const char *path, const void *p, size_t n)
{
    FILE *f = fopen(path, "wb");
    if (f == NULL || (n > 0 && fwrite(p, 1, n, f) != n) || fclose(f) != 0) {
        perror(path);
        abort();
    }
}

#endif
