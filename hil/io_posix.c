/* io_posix.c - runner_io.h on POSIX (the host and the PowerPC builds). */
#include <fcntl.h>
#include <stdio.h>
#include <sys/stat.h>
#include <unistd.h>
#include "runner_io.h"

long rio_open(const char *path, int write)
{
    const int fd = write ? open(path, O_WRONLY | O_CREAT | O_TRUNC, 0644) : open(path, O_RDONLY);
    return fd < 0 ? -1 : (long)fd;
}

long rio_length(long h)
{
    struct stat st;
    if (fstat((int)h, &st) != 0 || !S_ISREG(st.st_mode) || st.st_size > 0x7FFFFFFF)
        return -1;
    return (long)st.st_size;
}

long rio_read(long h, uint8_t *buf, size_t n)
{
    const ssize_t r = read((int)h, buf, n);
    return r < 0 ? -1 : (long)r;
}

int rio_write(long h, const uint8_t *buf, size_t n)
{
    while (n > 0u) {
        const ssize_t w = write((int)h, buf, n);
        if (w <= 0)
            return -1;
        buf += w;
        n -= (size_t)w;
    }
    return 0;
}

int rio_close(long h)
{
    return close((int)h) == 0 ? 0 : -1;
}

int rio_rename(const char *from, const char *to)
{
    return rename(from, to) == 0 ? 0 : -1;
}

int rio_remove(const char *path)
{
    return unlink(path) == 0 ? 0 : -1;
}

void rio_say(const char *text)
{
    fprintf(stderr, "%s\n", text);
}

int main(int argc, char **argv)
{
    return runner_main(argc, argv);
}
