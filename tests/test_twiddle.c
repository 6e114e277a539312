/*
 * test_twiddle.c - the committed quarter-wave cosine table and the twiddle
 * lookup (firmware/tl_twiddle.h): regeneration, recorded CRC, accuracy
 * against libm, exact trivial twiddles and conjugate symmetry.
 */
#include "tl_test.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "tables_gen.h"
#include "tl_crc32c.h"
#include "tl_twiddle.h"

static void source_regenerates(void **state)
{
    (void)state;
    tl_test_generated_matches("firmware/tl_twiddle_table.c", tl_gen_twiddle_source, 80000u); /* 8193 values */
}

static void table_matches_generator(void **state)
{
    (void)state;
    static int32_t c[TL_TWIDDLE_QUARTER + 1u];
    tl_gen_twiddle_cos(c);
    assert_memory_equal(c, tl_twiddle_cos, sizeof c);
    assert_int_equal(TL_TWIDDLE_TURN, 32768);
    assert_int_equal(TL_TWIDDLE_QUARTER, 8192);
    assert_int_equal(TL_TWIDDLE_ONE, 536870912); /* 2^29 */
}

static void recorded_crc(void **state)
{
    (void)state;
    /* the table as big-endian bytes, through the one-shot CRC */
    const size_t n = TL_TWIDDLE_QUARTER + 1u;
    uint8_t *bytes = malloc(4u * n);
    assert_non_null(bytes);
    for (size_t i = 0; i < n; i++) {
        const uint32_t w = (uint32_t)tl_twiddle_cos[i];
        bytes[4u * i] = (uint8_t)(w >> 24);
        bytes[4u * i + 1u] = (uint8_t)(w >> 16);
        bytes[4u * i + 2u] = (uint8_t)(w >> 8);
        bytes[4u * i + 3u] = (uint8_t)w;
    }
    assert_int_equal(tl_crc32c(bytes, 4u * n), tl_twiddle_cos_crc32c);
    /* a one-LSB change in any sampled entry would change it */
    for (size_t i = 0; i < n; i += 511u) {
        bytes[4u * i + 3u] ^= 1u;
        assert_true(tl_crc32c(bytes, 4u * n) != tl_twiddle_cos_crc32c);
        bytes[4u * i + 3u] ^= 1u;
    }
    free(bytes);
}

/* |got - 2^29 x| <= 0.5 LSB (+ 1e-9 for libm's own error). */
static void expect_q29(int32_t got, double x, uint32_t t, const char *part)
{
    const double want = ldexp(x, 29);
    if (!(fabs((double)got - want) <= 0.5 + 1e-9))
        fail_msg("tl_twiddle(%u) %s = %ld, expected %.6f (error %.6f LSB)", (unsigned)t, part, (long)got, want,
                 (double)got - want);
}

static void accuracy_every_index(void **state)
{
    (void)state;
    double worst = 0.0;
    for (uint32_t t = 0; t < TL_TWIDDLE_TURN; t++) {
        int32_t re = 0x7EADBEEF, im = 0x7EADBEEF;
        tl_twiddle(t, &re, &im);
        const double theta = 2.0 * M_PI * (double)t / 32768.0;
        /* W^t = exp(-j theta) = cos(theta) - j sin(theta) */
        expect_q29(re, cos(theta), t, "re");
        expect_q29(im, -sin(theta), t, "im");
        const double e = fmax(fabs((double)re - ldexp(cos(theta), 29)), fabs((double)im + ldexp(sin(theta), 29)));
        worst = fmax(worst, e);
    }
    /* rounding to nearest: the worst error over 32768 values gets close to
     * half an LSB (and is never 0 for an irrational table) */
    assert_true(worst > 0.45 && worst <= 0.5 + 1e-9);
}

static void trivial_twiddles_exact(void **state)
{
    (void)state;
    const int32_t one = 536870912; /* 2^29 */
    const struct { uint32_t t; int32_t re, im; } exact[] = {
        { 0, one, 0 },       /* 1 */
        { 8192, 0, -one },   /* -j */
        { 16384, -one, 0 },  /* -1 */
        { 24576, 0, one },   /* +j */
    };
    for (size_t i = 0; i < 4u; i++) {
        int32_t re = 12345, im = 12345;
        tl_twiddle(exact[i].t, &re, &im);
        assert_int_equal(re, exact[i].re);
        assert_int_equal(im, exact[i].im);
    }
    /* W^4096 = (1 - j)/sqrt(2): round(2^29 / sqrt(2)) = 379625062 (2^29 /
     * sqrt(2) = 379625062.497 [computed]) */
    int32_t re = 0, im = 0;
    tl_twiddle(4096, &re, &im);
    assert_int_equal(re, 379625062);
    assert_int_equal(im, -379625062);
}

static void conjugate_symmetry(void **state)
{
    (void)state;
    for (uint32_t t = 0; t < TL_TWIDDLE_TURN; t++) {
        int32_t ar, ai, br, bi;
        tl_twiddle(t, &ar, &ai);
        tl_twiddle(TL_TWIDDLE_TURN - t, &br, &bi); /* t = 0 gives the full turn, taken modulo */
        if (br != ar || bi != -ai)
            fail_msg("tl_twiddle(%u) = (%ld, %ld) but tl_twiddle(%u) = (%ld, %ld)", (unsigned)t, (long)ar, (long)ai,
                     (unsigned)(TL_TWIDDLE_TURN - t), (long)br, (long)bi);
    }
    /* half-turn symmetry W^(t + T/2) = -W^t, also exact by folding */
    for (uint32_t t = 0; t < TL_TWIDDLE_TURN / 2u; t++) {
        int32_t ar, ai, br, bi;
        tl_twiddle(t, &ar, &ai);
        tl_twiddle(t + TL_TWIDDLE_TURN / 2u, &br, &bi);
        assert_int_equal(br, -ar);
        assert_int_equal(bi, -ai);
    }
}

static void index_modulo_turn(void **state)
{
    (void)state;
    const uint32_t ts[] = { 0, 1, 4096, 8191, 8192, 16383, 24577, 32767 };
    for (size_t i = 0; i < sizeof ts / sizeof ts[0]; i++) {
        int32_t ar, ai;
        tl_twiddle(ts[i], &ar, &ai);
        const uint32_t wraps[] = { ts[i] + 32768u, ts[i] + 5u * 32768u, ts[i] + 131071u * 32768u };
        for (size_t k = 0; k < 3u; k++) {
            int32_t br, bi;
            tl_twiddle(wraps[k], &br, &bi);
            assert_int_equal(br, ar);
            assert_int_equal(bi, ai);
        }
    }
    /* UINT32_MAX = 2^32 - 1 is -1 modulo 32768: W^-1 = conj(W^1) */
    int32_t ar, ai, br, bi;
    tl_twiddle(1, &ar, &ai);
    tl_twiddle(UINT32_MAX, &br, &bi);
    assert_int_equal(br, ar);
    assert_int_equal(bi, -ai);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(source_regenerates),
        cmocka_unit_test(table_matches_generator),
        cmocka_unit_test(recorded_crc),
        cmocka_unit_test(accuracy_every_index),
        cmocka_unit_test(trivial_twiddles_exact),
        cmocka_unit_test(conjugate_symmetry),
        cmocka_unit_test(index_modulo_turn),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
