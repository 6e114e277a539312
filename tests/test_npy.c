/*
 * test_npy.c - the .npy writer (host/npy.h) and the spectrum files
 * (host/spectra_out.h): header bytes against the format specification,
 * little-endian data on any host, NumPy reading back every value, exact CSV
 * rows, and failures that name the file and leave nothing behind.
 *
 * Format source for every .npy check: the numpy.lib.format documentation
 * ("NPY format", format version 1.0), which restates NumPy Enhancement
 * Proposal 1 (NEP 1). When Debian's NumPy is installed (/usr/bin/python3
 * imports numpy) the files are also read with numpy.load, an independent
 * reader; otherwise a note is printed and the byte-level checks still run.
 */
#include "tl_test.h"

#include <dirent.h>
#include <errno.h>
#include <float.h>
#include <inttypes.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>
#include "atomic_file.h"
#include "npy.h"
#include "spectra_out.h"

#define PY "/usr/bin/python3"

/* ---- helpers ------------------------------------------------------------ */

static int numpy_present(void)
{
    static int known = -1;
    if (known < 0) {
        const int st = system(PY " -c 'import numpy' >/dev/null 2>&1");
        known = st != -1 && WIFEXITED(st) && WEXITSTATUS(st) == 0;
        if (!known)
            printf("    note: numpy not importable by " PY "; numpy.load checks skipped, byte-level checks run\n");
    }
    return known;
}

static void make_dir(char *out, size_t cap)
{
    snprintf(out, cap, "/tmp/tl_npy_XXXXXX");
    assert_non_null(mkdtemp(out));
}

/* Remove dir and everything directly in it (files and empty folders). */
static void remove_dir(const char *dir)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return;
    struct dirent *e;
    char path[4096];
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        if (remove(path) != 0)
            fail_msg("cannot remove %s: %s", path, strerror(errno));
    }
    closedir(d);
    assert_int_equal(rmdir(dir), 0);
}

static int cmp_str(const void *a, const void *b)
{
    return strcmp(*(const char *const *)a, *(const char *const *)b);
}

/* Names in dir, sorted, joined by single spaces. */
static void listing(const char *dir, char *out, size_t cap)
{
    char *names[64];
    size_t n = 0;
    DIR *d = opendir(dir);
    assert_non_null(d);
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        assert_true(n < 64u);
        names[n++] = strdup(e->d_name);
    }
    closedir(d);
    qsort(names, n, sizeof names[0], cmp_str);
    out[0] = '\0';
    for (size_t i = 0; i < n; i++) {
        if (i > 0)
            strncat(out, " ", cap - strlen(out) - 1u);
        strncat(out, names[i], cap - strlen(out) - 1u);
        free(names[i]);
    }
}

static void assert_listing(const char *dir, const char *want)
{
    char got[2048];
    listing(dir, got, sizeof got);
    if (strcmp(got, want) != 0)
        fail_msg("%s holds [%s], expected [%s]", dir, got, want);
}

static unsigned char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        fail_msg("cannot open %s: %s", path, strerror(errno));
    size_t cap = 4096, n = 0;
    unsigned char *buf = malloc(cap);
    assert_non_null(buf);
    size_t got;
    while ((got = fread(buf + n, 1, cap - n, f)) > 0) {
        n += got;
        if (n == cap) {
            cap *= 2u;
            buf = realloc(buf, cap);
            assert_non_null(buf);
        }
    }
    fclose(f);
    *len = n;
    return buf;
}

static int write_text(FILE *f, void *ctx)
{
    return fputs((const char *)ctx, f) == EOF ? -1 : 0;
}

static uint64_t f64_bits(double d)
{
    uint64_t u;
    memcpy(&u, &d, sizeof u);
    return u;
}

static size_t item_size(const char *descr)
{
    return strcmp(descr, "|u1") == 0 ? 1u : 8u;
}

/*
 * The header the format requires, built here from the specification text
 * (numpy.lib.format documentation, "Format Version 1.0"): 6-byte magic
 * "\x93NUMPY", major 1, minor 0, HEADER_LEN as a 2-byte little-endian
 * unsigned short, then HEADER_LEN bytes: the dict literal with keys descr,
 * fortran_order and shape, padded with spaces (\x20) and terminated by '\n'
 * so that 6 + 2 + 2 + HEADER_LEN is evenly divisible by 64.
 */
static void assert_header_bytes(const unsigned char *h, size_t len, const char *descr, size_t rows, size_t cols)
{
    char dict[256];
    if (cols == 0)
        snprintf(dict, sizeof dict, "{'descr': '%s', 'fortran_order': False, 'shape': (%zu,), }", descr, rows);
    else
        snprintf(dict, sizeof dict, "{'descr': '%s', 'fortran_order': False, 'shape': (%zu, %zu), }", descr, rows,
                 cols);
    const size_t dl = strlen(dict);
    assert_true(len >= 10u + dl + 1u);
    assert_memory_equal(h, "\x93NUMPY", 6);            /* magic: \x93 then ASCII NUMPY */
    assert_int_equal(h[6], 1);                          /* major version 1 */
    assert_int_equal(h[7], 0);                          /* minor version 0 */
    const size_t hlen = (size_t)h[8] | (size_t)h[9] << 8; /* little-endian unsigned short */
    const size_t total = 10u + hlen;
    assert_int_equal(total % 64u, 0);                   /* current alignment: 64 */
    assert_int_equal(total % 16u, 0);                   /* older readers' alignment: 16 (from memory) */
    assert_true(total <= len);
    assert_memory_equal(h + 10, dict, dl);              /* the dict text exactly */
    for (size_t i = 10u + dl; i + 1u < total; i++)
        if (h[i] != ' ')
            fail_msg("header byte %zu is 0x%02x, expected a space", i, h[i]);
    assert_int_equal(h[total - 1u], '\n');              /* terminated by a newline */
    assert_true(total - 64u < 10u + dl + 1u);           /* no more padding than alignment needs */
}

/* Expected data: element i's bit pattern bits[i], least significant byte first. */
static void assert_le_data(const unsigned char *d, const uint64_t *bits, size_t n, size_t isz)
{
    for (size_t i = 0; i < n; i++)
        for (size_t b = 0; b < isz; b++) {
            const unsigned want = (unsigned)((bits[i] >> (8u * b)) & 0xFFu);
            if (d[i * isz + b] != want)
                fail_msg("element %zu byte %zu is 0x%02x, expected 0x%02x", i, b, d[i * isz + b], want);
        }
}

/* Byte-level check of a whole file: header per the specification, then
 * exactly n = rows (* cols) elements, little-endian, nothing after. */
static void check_bytes(const char *path, const char *descr, size_t rows, size_t cols, const uint64_t *bits)
{
    size_t len;
    unsigned char *buf = slurp(path, &len);
    assert_header_bytes(buf, len, descr, rows, cols);
    const size_t hl = 10u + ((size_t)buf[8] | (size_t)buf[9] << 8);
    const size_t n = cols == 0 ? rows : rows * cols;
    assert_int_equal(len, hl + n * item_size(descr));
    assert_le_data(buf + hl, bits, n, item_size(descr));
    free(buf);
}

/*
 * numpy.load check: /usr/bin/python3 reads the file with numpy (version via
 * numpy.lib.format.read_magic, then numpy.load) and prints
 *   "MAJOR.MINOR DTYPE SHAPE C_CONTIGUOUS v0 v1 ..."
 * with integers in decimal and floats as float.hex(); each value is parsed
 * back and compared bit for bit with what was written.
 */
static const char numpy_script[] =
    "import sys, numpy as np\n"
    "from numpy.lib import format as F\n"
    "p = sys.argv[1]\n"
    "f = open(p, \"rb\"); v = F.read_magic(f); f.close()\n"
    "a = np.load(p, allow_pickle=False)\n"
    "vals = [x.hex() if isinstance(x, float) else str(x) for x in a.reshape(-1).tolist()]\n"
    "print(\"%d.%d\" % v, a.dtype.str, \",\".join(str(d) for d in a.shape) or \"-\", int(a.flags.c_contiguous),"
    " \" \".join(vals))\n";

static void check_numpy(const char *path, const char *descr, size_t rows, size_t cols, const uint64_t *bits)
{
    char cmd[8192];
    snprintf(cmd, sizeof cmd, PY " -c '%s' '%s' 2>&1", numpy_script, path);
    FILE *p = popen(cmd, "r");
    assert_non_null(p);
    char *line = NULL;
    size_t lcap = 0;
    const ssize_t got = getline(&line, &lcap, p);
    const int st = pclose(p);
    if (got <= 0 || st != 0)
        fail_msg("numpy could not load %s (status %d): %s", path, st, got > 0 ? line : "(no output)");
    char version[16], dtype[16], shape[64];
    int contiguous = -1, used = 0;
    if (sscanf(line, "%15s %15s %63s %d%n", version, dtype, shape, &contiguous, &used) != 4)
        fail_msg("unexpected numpy output for %s: %s", path, line);
    char want_shape[64];
    if (cols == 0)
        snprintf(want_shape, sizeof want_shape, "%zu", rows);
    else
        snprintf(want_shape, sizeof want_shape, "%zu,%zu", rows, cols);
    assert_string_equal(version, "1.0");
    assert_string_equal(dtype, descr); /* numpy's dtype.str: '<u8', '<i8', '<f8', '|u1' */
    assert_string_equal(shape, want_shape);
    assert_int_equal(contiguous, 1);
    const size_t n = cols == 0 ? rows : rows * cols;
    const char *s = line + used;
    for (size_t i = 0; i < n; i++) {
        char *end;
        uint64_t v;
        errno = 0;
        if (strcmp(descr, "<f8") == 0)
            v = f64_bits(strtod(s, &end)); /* C99 strtod reads float.hex() output and inf */
        else if (strcmp(descr, "<i8") == 0)
            v = (uint64_t)strtoll(s, &end, 10);
        else
            v = strtoull(s, &end, 10);
        if (end == s || errno != 0)
            fail_msg("%s: numpy value %zu unreadable at '%.40s'", path, i, s);
        if (v != bits[i])
            fail_msg("%s: numpy reads element %zu as bits 0x%016" PRIx64 ", written 0x%016" PRIx64, path, i, v,
                     bits[i]);
        s = end;
    }
    while (*s == ' ')
        s++;
    assert_true(*s == '\n' || *s == '\0'); /* no values beyond n */
    free(line);
}

static void check_file(const char *path, const char *descr, size_t rows, size_t cols, const uint64_t *bits)
{
    check_bytes(path, descr, rows, cols, bits);
    if (numpy_present())
        check_numpy(path, descr, rows, cols, bits);
}

/* ---- (a) header --------------------------------------------------------- */

static void header_matches_specification(void **state)
{
    (void)state;
    unsigned char h[TL_NPY_HEADER_MAX + 16];

    /* 1-D uint64 of 4096: the dict is 60 characters, so 10 + 60 + '\n' = 71
     * rounds up to 128 and HEADER_LEN = 118 = 0x0076 (worked by hand). */
    memset(h, 0xEE, sizeof h);
    assert_int_equal(tl_npy_header((char *)h, sizeof h, "<u8", 4096, 0), 128);
    assert_int_equal(strlen("{'descr': '<u8', 'fortran_order': False, 'shape': (4096,), }"), 60);
    assert_int_equal(h[8], 0x76);
    assert_int_equal(h[9], 0x00);
    assert_memory_equal(h + 10, "{'descr': '<u8', 'fortran_order': False, 'shape': (4096,), }", 60);
    assert_header_bytes(h, 128, "<u8", 4096, 0);
    assert_int_equal(h[128], 0xEE); /* nothing past the header */

    /* 2-D shapes use the tuple "(R, C)" (Python's tuple repr, from memory) */
    assert_int_equal(tl_npy_header((char *)h, sizeof h, "|u1", 3, 2), 128);
    assert_memory_equal(h + 10, "{'descr': '|u1', 'fortran_order': False, 'shape': (3, 2), }", 59);
    assert_header_bytes(h, 128, "|u1", 3, 2);
    assert_int_equal(tl_npy_header((char *)h, sizeof h, "<i8", 8192, 2), 128);
    assert_header_bytes(h, 128, "<i8", 8192, 2);
    assert_int_equal(tl_npy_header((char *)h, sizeof h, "<f8", 0, 0), 128);
    assert_memory_equal(h + 10, "{'descr': '<f8', 'fortran_order': False, 'shape': (0,), }", 57);
    assert_header_bytes(h, 128, "<f8", 0, 0);

    /* the widest dimensions still fit the documented bound */
    const size_t big = SIZE_MAX;
    const size_t hl = tl_npy_header((char *)h, sizeof h, "<u8", big, big);
    assert_true(hl > 0 && hl <= TL_NPY_HEADER_MAX);
    assert_header_bytes(h, hl, "<u8", big, big);

    /* asking the length, a short buffer, unknown types */
    assert_int_equal(tl_npy_header(NULL, 0, "<u8", 4096, 0), 128);
    memset(h, 0xEE, sizeof h);
    assert_int_equal(tl_npy_header((char *)h, 127, "<u8", 4096, 0), 128);
    for (size_t i = 0; i < sizeof h; i++)
        assert_int_equal(h[i], 0xEE); /* too small: untouched */
    assert_int_equal(tl_npy_header((char *)h, sizeof h, ">u8", 1, 0), 0);
    assert_int_equal(tl_npy_header((char *)h, sizeof h, "<u4", 1, 0), 0);
    assert_int_equal(tl_npy_header((char *)h, sizeof h, NULL, 1, 0), 0);
}

/* ---- (b) data bytes ----------------------------------------------------- */

static void data_is_little_endian(void **state)
{
    (void)state;
    char dir[64], path[128];
    make_dir(dir, sizeof dir);
    size_t len;
    unsigned char *b;

    /* uint64: least significant byte first (format: '<' = little-endian) */
    const uint64_t u[3] = {UINT64_C(0x0102030405060708), UINT64_MAX, 0};
    snprintf(path, sizeof path, "%s/u.npy", dir);
    char err[512] = "";
    assert_int_equal(tl_npy_write(path, "<u8", 3, 0, u, err, sizeof err), 0);
    b = slurp(path, &len);
    assert_int_equal(len, 128 + 24);
    assert_header_bytes(b, len, "<u8", 3, 0);
    assert_memory_equal(b + 128, "\x08\x07\x06\x05\x04\x03\x02\x01", 8);
    assert_memory_equal(b + 136, "\xff\xff\xff\xff\xff\xff\xff\xff", 8);
    assert_memory_equal(b + 144, "\x00\x00\x00\x00\x00\x00\x00\x00", 8);
    free(b);

    /* int64: two's complement (-1 all ones; -2 = 0xFF..FE; INT64_MIN = 0x80 00..;
     * -0x0102030405060708 = 0xFEFDFCFBFAF9F8F8, worked by hand) */
    const int64_t s[4] = {-1, -2, INT64_MIN, -INT64_C(0x0102030405060708)};
    snprintf(path, sizeof path, "%s/s.npy", dir);
    assert_int_equal(tl_npy_write(path, "<i8", 2, 2, s, err, sizeof err), 0);
    b = slurp(path, &len);
    assert_int_equal(len, 128 + 32);
    assert_header_bytes(b, len, "<i8", 2, 2);
    assert_memory_equal(b + 128, "\xff\xff\xff\xff\xff\xff\xff\xff", 8);
    assert_memory_equal(b + 136, "\xfe\xff\xff\xff\xff\xff\xff\xff", 8);
    assert_memory_equal(b + 144, "\x00\x00\x00\x00\x00\x00\x00\x80", 8);
    assert_memory_equal(b + 152, "\xf8\xf8\xf9\xfa\xfb\xfc\xfd\xfe", 8);
    free(b);

    /* float64: IEEE 754 binary64 patterns (from memory): 1.0 = 0x3FF0000000000000,
     * -2.5 = 0xC004000000000000, 0.1 = 0x3FB999999999999A, -0.0 = 0x8000000000000000 */
    const double d[4] = {1.0, -2.5, 0.1, -0.0};
    snprintf(path, sizeof path, "%s/d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<f8", 4, 0, d, err, sizeof err), 0);
    b = slurp(path, &len);
    assert_int_equal(len, 128 + 32);
    assert_header_bytes(b, len, "<f8", 4, 0);
    assert_memory_equal(b + 128, "\x00\x00\x00\x00\x00\x00\xf0\x3f", 8);
    assert_memory_equal(b + 136, "\x00\x00\x00\x00\x00\x00\x04\xc0", 8);
    assert_memory_equal(b + 144, "\x9a\x99\x99\x99\x99\x99\xb9\x3f", 8);
    assert_memory_equal(b + 152, "\x00\x00\x00\x00\x00\x00\x00\x80", 8);
    free(b);

    /* uint8: one byte each, '|' = byte order not applicable */
    const uint8_t c[5] = {0x00, 0x01, 0x7F, 0x80, 0xFF};
    snprintf(path, sizeof path, "%s/c.npy", dir);
    assert_int_equal(tl_npy_write(path, "|u1", 5, 0, c, err, sizeof err), 0);
    b = slurp(path, &len);
    assert_int_equal(len, 128 + 5);
    assert_header_bytes(b, len, "|u1", 5, 0);
    assert_memory_equal(b + 128, "\x00\x01\x7f\x80\xff", 5);
    free(b);

    assert_listing(dir, "c.npy d.npy s.npy u.npy");
    remove_dir(dir);
}

/* ---- (c) every dtype and shape, read back by numpy ---------------------- */

static void numpy_reads_every_value(void **state)
{
    (void)state;
    numpy_present(); /* prints the note once when absent */
    char dir[64], path[128], err[512] = "";
    make_dir(dir, sizeof dir);
    enum { NU = 5000, NB = 4099 };
    uint64_t *u = malloc(NU * sizeof *u), *bits = malloc(NU * sizeof *bits);
    uint8_t *c = malloc(NB);
    assert_non_null(u);
    assert_non_null(bits);
    assert_non_null(c);

    /* uint64, 1-D, 40000 data bytes (several write chunks); 2^53 + 1 is the
     * first integer a double cannot hold (from memory) */
    for (size_t i = 0; i < NU; i++)
        u[i] = (uint64_t)i * UINT64_C(0x9E3779B97F4A7C15);
    u[1] = UINT64_MAX;
    u[2] = (UINT64_C(1) << 53) + 1u;
    u[3] = UINT64_C(1) << 63;
    snprintf(path, sizeof path, "%s/u1d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<u8", NU, 0, u, err, sizeof err), 0);
    check_file(path, "<u8", NU, 0, u);
    /* uint64, 2-D (3, 4), C order: element (r, c) is data[r * 4 + c] */
    snprintf(path, sizeof path, "%s/u2d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<u8", 3, 4, u, err, sizeof err), 0);
    check_file(path, "<u8", 3, 4, u);

    /* int64 */
    const int64_t s[8] = {0, -1, 1, INT64_MIN, INT64_MAX, -(INT64_C(1) << 53) - 1, 123456789012345678, -42};
    for (size_t i = 0; i < 8u; i++)
        bits[i] = (uint64_t)s[i];
    snprintf(path, sizeof path, "%s/s1d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<i8", 8, 0, s, err, sizeof err), 0);
    check_file(path, "<i8", 8, 0, bits);
    snprintf(path, sizeof path, "%s/s2d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<i8", 4, 2, s, err, sizeof err), 0);
    check_file(path, "<i8", 4, 2, bits);

    /* float64, including signed zero, extremes, a subnormal and infinities */
    const double d[12] = {0.0, -0.0, 1.0, 0.1, -2.5, DBL_MAX, -DBL_MAX, DBL_MIN, 4.9406564584124654e-324,
                          INFINITY, -INFINITY, 3.141592653589793};
    for (size_t i = 0; i < 12u; i++)
        bits[i] = f64_bits(d[i]);
    snprintf(path, sizeof path, "%s/d1d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<f8", 12, 0, d, err, sizeof err), 0);
    check_file(path, "<f8", 12, 0, bits);
    snprintf(path, sizeof path, "%s/d2d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<f8", 2, 6, d, err, sizeof err), 0);
    check_file(path, "<f8", 2, 6, bits);

    /* uint8: every value, over a chunk boundary */
    for (size_t i = 0; i < NB; i++) {
        c[i] = (uint8_t)(i * 7u + 3u);
        bits[i] = c[i];
    }
    snprintf(path, sizeof path, "%s/b1d.npy", dir);
    assert_int_equal(tl_npy_write(path, "|u1", NB, 0, c, err, sizeof err), 0);
    check_file(path, "|u1", NB, 0, bits);
    snprintf(path, sizeof path, "%s/b2d.npy", dir);
    assert_int_equal(tl_npy_write(path, "|u1", 16, 16, c, err, sizeof err), 0);
    check_file(path, "|u1", 16, 16, bits);

    /* empty arrays: shape (0,) and (0, 2), no data bytes, NULL data allowed */
    snprintf(path, sizeof path, "%s/e1d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<f8", 0, 0, NULL, err, sizeof err), 0);
    check_file(path, "<f8", 0, 0, bits);
    snprintf(path, sizeof path, "%s/e2d.npy", dir);
    assert_int_equal(tl_npy_write(path, "<i8", 0, 2, NULL, err, sizeof err), 0);
    check_file(path, "<i8", 0, 2, bits);

    assert_listing(dir, "b1d.npy b2d.npy d1d.npy d2d.npy e1d.npy e2d.npy s1d.npy s2d.npy u1d.npy u2d.npy");
    free(u);
    free(bits);
    free(c);
    remove_dir(dir);
}

/* ---- (d) spectrum files ------------------------------------------------- */

#define NCH 8u

static tl_product *synthetic_product(void)
{
    tl_product *p = calloc(1, sizeof *p);
    assert_non_null(p);
    p->channels = NCH;
    p->points = 2u * NCH;
    p->inputs = 2;
    const uint64_t a0[NCH] = {0, 1, (UINT64_C(1) << 53) + 1u, UINT64_MAX, UINT64_C(12345678901234567890), 42,
                              UINT64_C(1) << 63, 7};
    const uint64_t a1[NCH] = {5, (UINT64_C(1) << 53) + 3u, 0, 1000000, UINT64_MAX - 1u, UINT64_MAX, 9, 10};
    const int64_t re[NCH] = {-1, INT64_MIN, INT64_MAX, 0, -(INT64_C(1) << 53) - 1, 3, -4, INT64_MIN};
    const int64_t im[NCH] = {2, -9007199254740993, -5, 6, 0, -7, INT64_MAX, INT64_MIN};
    memcpy(p->auto_power[0], a0, sizeof a0);
    memcpy(p->auto_power[1], a1, sizeof a1);
    memcpy(p->cross_re, re, sizeof re);
    memcpy(p->cross_im, im, sizeof im);
    p->flags[1] = TL_FLAG_SAT_CROSS_RE;
    p->flags[3] = TL_FLAG_SAT_AUTO0;
    p->flags[5] = TL_FLAG_SAT_AUTO1;
    p->flags[6] = TL_FLAG_SAT_CROSS_IM;
    p->flags[7] = TL_FLAG_SAT_AUTO0 | TL_FLAG_SAT_AUTO1 | TL_FLAG_SAT_CROSS_RE | TL_FLAG_SAT_CROSS_IM;
    return p;
}

/* Sample rate 100/3 MHz over 16 points: channel k at k * 100/48 MHz, so
 * rows need rounding to 6 decimals (2.0833333.. -> 2.083333, 10.416666.. ->
 * 10.416667; worked by hand). */
#define RATE (100e6 / 3.0)

static void assert_file_text(const char *path, const char *const *lines, size_t n)
{
    size_t len;
    unsigned char *b = slurp(path, &len);
    char *text = malloc(len + 1u);
    assert_non_null(text);
    memcpy(text, b, len);
    text[len] = '\0';
    free(b);
    assert_true(len > 0);
    assert_int_equal(text[len - 1u], '\n'); /* last row terminated */
    size_t rows = 0;
    char *save = NULL;
    for (char *l = strtok_r(text, "\n", &save); l != NULL; l = strtok_r(NULL, "\n", &save), rows++) {
        if (rows >= n)
            fail_msg("%s: extra line %zu '%s'", path, rows + 1u, l);
        if (strcmp(l, lines[rows]) != 0)
            fail_msg("%s line %zu is '%s', expected '%s'", path, rows + 1u, l, lines[rows]);
    }
    assert_int_equal(rows, n); /* header + one row per channel */
    free(text);
}

static void spectra_files_exact(void **state)
{
    (void)state;
    tl_product *p = synthetic_product();
    char dir[64], path[128], err[512] = "";
    make_dir(dir, sizeof dir);
    assert_int_equal(tl_spectra_write(dir, p, RATE, 1, 1, err, sizeof err), 0);
    assert_listing(dir, "auto0.csv auto0.npy auto1.csv auto1.npy cross.csv cross.npy flags.npy frequency_mhz.npy");

    /* powers as decimal integers: UINT64_MAX = 18446744073709551615, INT64_MIN =
     * -9223372036854775808 (C11 7.20.2 limits), 2^53 + 1 = 9007199254740993,
     * 2^63 = 9223372036854775808 (from memory) */
    static const char *const auto0[] = {
        "frequency_mhz,power,saturated",
        "0.000000,0,0",
        "2.083333,1,0",
        "4.166667,9007199254740993,0",
        "6.250000,18446744073709551615,1",
        "8.333333,12345678901234567890,0",
        "10.416667,42,0",
        "12.500000,9223372036854775808,0",
        "14.583333,7,1",
    };
    static const char *const auto1[] = {
        "frequency_mhz,power,saturated",
        "0.000000,5,0",
        "2.083333,9007199254740995,0",
        "4.166667,0,0",
        "6.250000,1000000,0",
        "8.333333,18446744073709551614,0",
        "10.416667,18446744073709551615,1",
        "12.500000,9,0",
        "14.583333,10,1",
    };
    static const char *const cross[] = {
        "frequency_mhz,re,im,saturated",
        "0.000000,-1,2,0",
        "2.083333,-9223372036854775808,-9007199254740993,1",
        "4.166667,9223372036854775807,-5,0",
        "6.250000,0,6,0",
        "8.333333,-9007199254740993,0,0",
        "10.416667,3,-7,0",
        "12.500000,-4,9223372036854775807,1",
        "14.583333,-9223372036854775808,-9223372036854775808,1",
    };
    snprintf(path, sizeof path, "%s/auto0.csv", dir);
    assert_file_text(path, auto0, 9);
    snprintf(path, sizeof path, "%s/auto1.csv", dir);
    assert_file_text(path, auto1, 9);
    snprintf(path, sizeof path, "%s/cross.csv", dir);
    assert_file_text(path, cross, 9);

    /* .npy: the same integers exactly, frequencies as doubles */
    uint64_t bits[2u * NCH];
    for (uint32_t k = 0; k < NCH; k++) {
        const double f = (double)k * RATE / 16.0 / 1e6;
        TL_ASSERT_NEAR(f, (double)k * 100.0 / 48.0, 1e-12);
        bits[k] = f64_bits(f);
    }
    snprintf(path, sizeof path, "%s/frequency_mhz.npy", dir);
    check_file(path, "<f8", NCH, 0, bits);
    snprintf(path, sizeof path, "%s/auto0.npy", dir);
    check_file(path, "<u8", NCH, 0, p->auto_power[0]);
    snprintf(path, sizeof path, "%s/auto1.npy", dir);
    check_file(path, "<u8", NCH, 0, p->auto_power[1]);
    for (uint32_t k = 0; k < NCH; k++) {
        bits[2u * k] = (uint64_t)p->cross_re[k];
        bits[2u * k + 1u] = (uint64_t)p->cross_im[k];
    }
    snprintf(path, sizeof path, "%s/cross.npy", dir);
    check_file(path, "<i8", NCH, 2, bits);
    const uint64_t flags[NCH] = {0, 0x04, 0, 0x01, 0, 0x02, 0x08, 0x0F};
    snprintf(path, sizeof path, "%s/flags.npy", dir);
    check_file(path, "|u1", NCH, 0, flags);
    remove_dir(dir);

    /* one input: no cross files; each format on its own */
    p->inputs = 1;
    make_dir(dir, sizeof dir);
    assert_int_equal(tl_spectra_write(dir, p, RATE, 1, 0, err, sizeof err), 0);
    assert_listing(dir, "auto0.csv");
    snprintf(path, sizeof path, "%s/auto0.csv", dir);
    assert_file_text(path, auto0, 9);
    remove_dir(dir);
    make_dir(dir, sizeof dir);
    assert_int_equal(tl_spectra_write(dir, p, RATE, 0, 1, err, sizeof err), 0);
    assert_listing(dir, "auto0.npy flags.npy frequency_mhz.npy");
    snprintf(path, sizeof path, "%s/auto0.npy", dir);
    check_file(path, "<u8", NCH, 0, p->auto_power[0]);

    /* bad arguments: -1, one line naming the folder, nothing written */
    p->inputs = 3;
    assert_int_equal(tl_spectra_write(dir, p, RATE, 1, 1, err, sizeof err), -1);
    p->inputs = 2;
    assert_non_null(strstr(err, dir));
    assert_null(strchr(err, '\n'));
    p->channels = 0;
    assert_int_equal(tl_spectra_write(dir, p, RATE, 1, 1, err, sizeof err), -1);
    p->channels = TL_MAX_CHANNELS + 1u;
    assert_int_equal(tl_spectra_write(dir, p, RATE, 1, 1, err, sizeof err), -1);
    p->channels = NCH;
    assert_int_equal(tl_spectra_write(dir, p, 0.0, 1, 1, err, sizeof err), -1);
    assert_int_equal(tl_spectra_write(dir, p, NAN, 1, 1, err, sizeof err), -1);
    assert_int_equal(tl_spectra_write(dir, NULL, RATE, 1, 1, err, sizeof err), -1);
    assert_listing(dir, "auto0.npy flags.npy frequency_mhz.npy");
    remove_dir(dir);
    free(p);
}

/* ---- (e) failures ------------------------------------------------------- */

static void failures_name_the_file_and_leave_nothing(void **state)
{
    (void)state;
    tl_product *p = synthetic_product();
    char dir[64], out[128], path[160], err[512];
    make_dir(dir, sizeof dir);

    /* DIR below a regular file cannot hold files, even for root (ENOTDIR) */
    snprintf(path, sizeof path, "%s/blocker", dir);
    assert_int_equal(tl_atomic_write(path, write_text, "not a folder\n", err, sizeof err), 0);
    snprintf(out, sizeof out, "%s/blocker/out", dir);
    err[0] = '\0';
    assert_int_equal(tl_spectra_write(out, p, RATE, 1, 1, err, sizeof err), -1);
    printf("    %s\n", err);
    assert_non_null(strstr(err, "/blocker/out/auto0.csv")); /* the first file it tried */
    assert_null(strchr(err, '\n'));
    err[0] = '\0';
    assert_int_equal(tl_spectra_write(out, p, RATE, 0, 1, err, sizeof err), -1);
    assert_non_null(strstr(err, "/blocker/out/frequency_mhz.npy"));
    assert_null(strchr(err, '\n'));
    snprintf(path, sizeof path, "%s/missing/x.npy", dir);
    err[0] = '\0';
    assert_int_equal(tl_npy_write(path, "<u8", NCH, 0, p->auto_power[0], err, sizeof err), -1);
    assert_non_null(strstr(err, path));
    assert_null(strchr(err, '\n'));
    assert_listing(dir, "blocker");

    /* a folder denied by permissions (not enforced for root, so only then) */
    if (geteuid() != 0) {
        snprintf(out, sizeof out, "%s/ro", dir);
        assert_int_equal(mkdir(out, 0555), 0);
        err[0] = '\0';
        assert_int_equal(tl_spectra_write(out, p, RATE, 1, 1, err, sizeof err), -1);
        assert_non_null(strstr(err, "/ro/auto0.csv"));
        assert_listing(out, "");
        assert_int_equal(rmdir(out), 0);
    } else {
        printf("    note: running as root; permission-denied folder not testable, ENOTDIR cases used\n");
    }

    /* failure part-way: a folder sits where cross.npy goes, so its rename
     * fails; the error names cross.npy, the files before it stay whole, the
     * temporary is gone and flags.npy (after it) is not written */
    snprintf(out, sizeof out, "%s/part", dir);
    assert_int_equal(mkdir(out, 0755), 0);
    snprintf(path, sizeof path, "%s/cross.npy", out);
    assert_int_equal(mkdir(path, 0755), 0);
    err[0] = '\0';
    assert_int_equal(tl_spectra_write(out, p, RATE, 0, 1, err, sizeof err), -1);
    printf("    %s\n", err);
    assert_non_null(strstr(err, "/part/cross.npy"));
    assert_null(strchr(err, '\n'));
    assert_listing(out, "auto0.npy auto1.npy cross.npy frequency_mhz.npy");
    snprintf(path, sizeof path, "%s/auto1.npy", out);
    check_file(path, "<u8", NCH, 0, p->auto_power[1]);
    snprintf(path, sizeof path, "%s/cross.npy", out);
    struct stat st;
    assert_int_equal(stat(path, &st), 0);
    assert_true(S_ISDIR(st.st_mode)); /* left as it was */
    assert_int_equal(rmdir(path), 0);
    remove_dir(out);

    /* the .npy writer's own refusals: unknown type, missing data; no file */
    snprintf(path, sizeof path, "%s/bad.npy", dir);
    err[0] = '\0';
    assert_int_equal(tl_npy_write(path, "<u4", 1, 0, p->auto_power[0], err, sizeof err), -1);
    assert_non_null(strstr(err, path));
    assert_non_null(strstr(err, "<u4"));
    err[0] = '\0';
    assert_int_equal(tl_npy_write(path, "<u8", 4, 0, NULL, err, sizeof err), -1);
    assert_non_null(strstr(err, path));
    err[0] = '\0';
    assert_int_equal(tl_npy_write(path, "<u8", SIZE_MAX / 4u, 4, p->auto_power[0], err, sizeof err), -1);
    assert_non_null(strstr(err, "too large"));
    assert_listing(dir, "blocker");

    remove_dir(dir);
    free(p);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(header_matches_specification),
        cmocka_unit_test(data_is_little_endian),
        cmocka_unit_test(numpy_reads_every_value),
        cmocka_unit_test(spectra_files_exact),
        cmocka_unit_test(failures_name_the_file_and_leave_nothing),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
