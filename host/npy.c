/* npy.c - NumPy .npy version 1.0 writer (see npy.h). */
#include "npy.h"

#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include "atomic_file.h"

enum npy_kind { NPY_NONE, NPY_U8, NPY_I8, NPY_F8, NPY_U1 };

#define NPY_PREFIX 10u        /* magic 6 + version 2 + HEADER_LEN 2 */
#define NPY_CHUNK 4096u       /* bytes staged before each fwrite */

static enum npy_kind kind_of(const char *descr)
{
    if (descr == NULL)
        return NPY_NONE;
    if (strcmp(descr, "<u8") == 0)
        return NPY_U8;
    if (strcmp(descr, "<i8") == 0)
        return NPY_I8;
    if (strcmp(descr, "<f8") == 0)
        return NPY_F8;
    if (strcmp(descr, "|u1") == 0)
        return NPY_U1;
    return NPY_NONE;
}

static size_t item_size(enum npy_kind k)
{
    return k == NPY_U1 ? 1u : 8u;
}

size_t tl_npy_header(char *out, size_t cap, const char *descr, size_t rows, size_t cols)
{
    if (kind_of(descr) == NPY_NONE)
        return 0;
    char dict[TL_NPY_HEADER_MAX];
    int n;
    if (cols == 0)
        n = snprintf(dict, sizeof dict, "{'descr': '%s', 'fortran_order': False, 'shape': (%zu,), }", descr, rows);
    else
        n = snprintf(dict, sizeof dict, "{'descr': '%s', 'fortran_order': False, 'shape': (%zu, %zu), }", descr, rows,
                     cols);
    if (n < 0 || (size_t)n >= sizeof dict)
        return 0;
    /* prefix + dict + at least the '\n', rounded up to the alignment */
    const size_t total = (NPY_PREFIX + (size_t)n + 1u + TL_NPY_ALIGN - 1u) / TL_NPY_ALIGN * TL_NPY_ALIGN;
    if (total > TL_NPY_HEADER_MAX)
        return 0;
    if (out == NULL || cap < total)
        return total;
    const size_t hlen = total - NPY_PREFIX;
    memcpy(out, "\x93NUMPY", 6);
    out[6] = 1; /* major */
    out[7] = 0; /* minor */
    out[8] = (char)(unsigned char)(hlen & 0xFFu);
    out[9] = (char)(unsigned char)((hlen >> 8) & 0xFFu);
    memcpy(out + NPY_PREFIX, dict, (size_t)n);
    memset(out + NPY_PREFIX + n, ' ', total - NPY_PREFIX - (size_t)n - 1u);
    out[total - 1u] = '\n';
    return total;
}

typedef struct npy_job {
    enum npy_kind kind;
    const char *header;
    size_t header_len;
    size_t count;
    const void *data;
} npy_job;

/* The 64-bit pattern of element i as it is to be stored. */
static uint64_t bits_of(const npy_job *j, size_t i)
{
    switch (j->kind) {
    case NPY_U8:
        return ((const uint64_t *)j->data)[i];
    case NPY_I8:
        return (uint64_t)((const int64_t *)j->data)[i]; /* two's complement, modulo 2^64 */
    case NPY_F8: {
        const double d = ((const double *)j->data)[i];
        uint64_t u;
        memcpy(&u, &d, sizeof u); /* IEEE-754 binary64 bit pattern as a number */
        return u;
    }
    default:
        return ((const uint8_t *)j->data)[i];
    }
}

static int write_job(FILE *f, void *ctx)
{
    const npy_job *j = ctx;
    if (fwrite(j->header, 1, j->header_len, f) != j->header_len)
        return -1;
    unsigned char buf[NPY_CHUNK];
    const size_t isz = item_size(j->kind);
    size_t fill = 0;
    for (size_t i = 0; i < j->count; i++) {
        const uint64_t v = bits_of(j, i);
        for (size_t b = 0; b < isz; b++)
            buf[fill++] = (unsigned char)((v >> (8u * b)) & 0xFFu); /* least significant byte first */
        if (fill == sizeof buf) {
            if (fwrite(buf, 1, fill, f) != fill)
                return -1;
            fill = 0;
        }
    }
    if (fill > 0 && fwrite(buf, 1, fill, f) != fill)
        return -1;
    return 0;
}

int tl_npy_write(const char *path, const char *descr, size_t rows, size_t cols, const void *data, char *err,
                 size_t cap)
{
    if (path == NULL) {
        snprintf(err, cap, "(null path): no file name given for the .npy array");
        return -1;
    }
    const enum npy_kind kind = kind_of(descr);
    if (kind == NPY_NONE) {
        snprintf(err, cap, "%s: unsupported .npy element type '%s' (want <u8, <i8, <f8 or |u1)", path,
                 descr ? descr : "(null)");
        return -1;
    }
    size_t count = rows;
    if (cols != 0) {
        if (rows != 0 && cols > SIZE_MAX / item_size(kind) / rows) {
            snprintf(err, cap, "%s: array of %zu x %zu elements is too large", path, rows, cols);
            return -1;
        }
        count = rows * cols;
    } else if (rows > SIZE_MAX / item_size(kind)) {
        snprintf(err, cap, "%s: array of %zu elements is too large", path, rows);
        return -1;
    }
    if (count > 0 && data == NULL) {
        snprintf(err, cap, "%s: no data for %zu elements", path, count);
        return -1;
    }
    char header[TL_NPY_HEADER_MAX];
    const size_t hl = tl_npy_header(header, sizeof header, descr, rows, cols);
    if (hl == 0) {
        snprintf(err, cap, "%s: cannot build the .npy header", path);
        return -1;
    }
    npy_job job = {kind, header, hl, count, data};
    return tl_atomic_write(path, write_job, &job, err, cap);
}
