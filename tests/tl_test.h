/*
 * tl_test.h - helpers shared by the cmocka tests.
 *
 * Random tests are reproducible: tl_test_seed() returns TL_TEST_SEED from
 * the environment or the given default, and prints it, so a failure can be
 * rerun with the same seed: TL_TEST_SEED=1234 build/rel/test_fft.
 */
#ifndef TL_TEST_H
#define TL_TEST_H

#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <cmocka.h>

#include "tl_chain.h"

/* Seed from TL_TEST_SEED or `fallback`; printed once per call. */
uint64_t tl_test_seed(const char *test, uint64_t fallback);

/* Fill n left-aligned ADC samples (Q15) of a sine: amplitude `amp` of full
 * scale, `cycles` per sample, phase at sample index `start`, rounded to
 * `bits`-bit codes and clipped at the rails. */
void tl_test_tone(int16_t *x, size_t n, double amp, double cycles, double phase, uint64_t start, unsigned bits);

/* Heap-allocated zeroed chain and product (they are large); abort on OOM. */
tl_chain *tl_test_chain(void);
tl_product *tl_test_product(void);

/* Push n samples per input, taking every finished product into `out`
 * (the last one wins). Returns the number of products taken. Fails the
 * test on any error status. */
unsigned tl_test_push_all(tl_chain *c, const int16_t *in0, const int16_t *in1, size_t n, tl_product *out);

/* Assert that gen() writes exactly the bytes of the committed file `path`
 * (relative to the repository root, where the tests run) and at least
 * min_bytes of them; the failure names the first differing byte and says
 * "run make tables". */
void tl_test_generated_matches(const char *path, int (*gen)(FILE *out), size_t min_bytes);

/* Run a shell command; its stdout (and whatever the command redirects
 * there) goes into out (cap bytes, NUL-terminated). Returns the exit status,
 * or -1 if it did not exit normally. */
int tl_test_shell(const char *cmd, char *out, size_t cap);

/* Run the tidelock binary that sits next to this test binary (argv0) with
 * `args`, stderr and stdout into out. Returns the exit status. */
int tl_test_tool(const char *argv0, const char *args, char *out, size_t cap);

/* Number of newlines in s. */
int tl_test_lines(const char *s);

/* Assert |a - b| <= tol with a message naming both values. */
#define TL_ASSERT_NEAR(a, b, tol)                                                                                    \
    do {                                                                                                              \
        const double a_ = (a), b_ = (b), t_ = (tol);                                                                  \
        if (!(fabs(a_ - b_) <= t_))                                                                                   \
            fail_msg("%s = %.9g, expected %s = %.9g within %.3g", #a, a_, #b, b_, t_);                                \
    } while (0)

#endif
