/* tl_test.c - helpers shared by the cmocka tests (see tl_test.h). */
#include "tl_test.h"

#include <libgen.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>

uint64_t tl_test_seed(const char *test, uint64_t fallback)
{
    const char *e = getenv("TL_TEST_SEED");
    const uint64_t seed = (e != NULL && *e != '\0') ? strtoull(e, NULL, 0) : fallback;
    printf("[ SEED     ] %s: %llu (rerun with TL_TEST_SEED=%llu)\n", test, (unsigned long long)seed,
           (unsigned long long)seed);
    return seed;
}

void tl_test_tone(int16_t *x, size_t n, double amp, double cycles, double phase, uint64_t start, unsigned bits)
{
    const double fs = ldexp(1.0, (int)bits - 1);
    const long hi = (1L << (bits - 1u)) - 1L, lo = -(1L << (bits - 1u));
    for (size_t i = 0; i < n; i++) {
        const double t = (double)(start + i);
        long code = lround(amp * fs * cos(2.0 * M_PI * cycles * t + phase));
        code = code > hi ? hi : code < lo ? lo : code;
        x[i] = (int16_t)(code * (1L << (16u - bits)));
    }
}

tl_chain *tl_test_chain(void)
{
    tl_chain *c = calloc(1, sizeof *c);
    if (c == NULL)
        abort();
    return c;
}

tl_product *tl_test_product(void)
{
    tl_product *p = calloc(1, sizeof *p);
    if (p == NULL)
        abort();
    return p;
}

unsigned tl_test_push_all(tl_chain *c, const int16_t *in0, const int16_t *in1, size_t n, tl_product *out)
{
    unsigned taken = 0;
    size_t done = 0;
    while (done < n) {
        size_t used = 0;
        const tl_status st = tl_chain_push(c, in0 + done, in1 ? in1 + done : NULL, n - done, &used);
        if (st != TL_OK)
            fail_msg("tl_chain_push: %s", tl_status_name(st));
        done += used;
        if (tl_chain_ready(c)) {
            const tl_status ts = tl_chain_take(c, out);
            if (ts != TL_OK)
                fail_msg("tl_chain_take: %s", tl_status_name(ts));
            taken++;
        }
    }
    return taken;
}

/* Read a whole stream into a malloc'd buffer. */
static char *slurp(FILE *f, size_t *n)
{
    size_t cap = 1u << 16, len = 0;
    char *buf = malloc(cap);
    assert_non_null(buf);
    for (;;) {
        if (len == cap) {
            cap *= 2u;
            buf = realloc(buf, cap);
            assert_non_null(buf);
        }
        const size_t got = fread(buf + len, 1, cap - len, f);
        len += got;
        if (got == 0)
            break;
    }
    assert_int_equal(ferror(f), 0);
    *n = len;
    return buf;
}

void tl_test_generated_matches(const char *path, int (*gen)(FILE *out), size_t min_bytes)
{
    FILE *tmp = tmpfile();
    assert_non_null(tmp);
    assert_int_equal(gen(tmp), 0);
    rewind(tmp);
    size_t n_gen = 0, n_com = 0;
    char *generated = slurp(tmp, &n_gen);
    fclose(tmp);
    FILE *com = fopen(path, "rb");
    if (com == NULL)
        fail_msg("cannot open %s (run the tests from the repository root)", path);
    char *committed = slurp(com, &n_com);
    fclose(com);
    assert_true(n_gen >= min_bytes);
    size_t first = 0;
    while (first < n_gen && first < n_com && generated[first] == committed[first])
        first++;
    if (n_gen != n_com || first != n_gen)
        fail_msg("%s differs from the generator (first difference at byte %zu; generated %zu bytes, committed %zu): "
                 "run make tables",
                 path, first, n_gen, n_com);
    free(generated);
    free(committed);
}

int tl_test_shell(const char *cmd, char *out, size_t cap)
{
    FILE *p = popen(cmd, "r");
    assert_non_null(p);
    const size_t n = fread(out, 1, cap - 1, p);
    out[n] = '\0';
    const int st = pclose(p);
    return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

int tl_test_tool(const char *argv0, const char *args, char *out, size_t cap)
{
    char self[4096], cmd[8192];
    snprintf(self, sizeof self, "%s", argv0);
    snprintf(cmd, sizeof cmd, "%s/tidelock %s 2>&1", dirname(self), args);
    return tl_test_shell(cmd, out, cap);
}

int tl_test_lines(const char *s)
{
    int n = 0;
    for (; *s; s++)
        n += *s == '\n';
    return n;
}
