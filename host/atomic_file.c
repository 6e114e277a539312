/* atomic_file.c - write to a temporary name, then rename (see atomic_file.h). */
#include "atomic_file.h"

#include <errno.h>
#include <string.h>
#include <unistd.h>

int tl_atomic_write(const char *path, int (*writer)(FILE *f, void *ctx), void *ctx, char *err, size_t cap)
{
    char tmp[4200];
    if (snprintf(tmp, sizeof tmp, "%s.tmp.%ld", path, (long)getpid()) >= (int)sizeof tmp) {
        snprintf(err, cap, "%s: path too long", path);
        return -1;
    }
    FILE *f = fopen(tmp, "wb");
    if (f == NULL) {
        snprintf(err, cap, "%s: cannot write: %s", path, strerror(errno));
        return -1;
    }
    const int rc = writer(f, ctx);
    const int werr = ferror(f);
    const int cerr = fclose(f);
    if (rc != 0 || werr != 0 || cerr != 0) {
        snprintf(err, cap, "%s: write failed%s%s", path, cerr ? ": " : "", cerr ? strerror(errno) : "");
        remove(tmp);
        return -1;
    }
    if (rename(tmp, path) != 0) {
        snprintf(err, cap, "%s: cannot rename into place: %s", path, strerror(errno));
        remove(tmp);
        return -1;
    }
    return 0;
}
