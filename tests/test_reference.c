/*
 * test_reference.c - the floating reference is itself checked: against a
 * direct DFT in long double (the definition, no FFT), and for bit-exact
 * repeatability on this machine (FFTW_ESTIMATE plan, -ffp-contract=off).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "reference.h"
#include "rng.h"
#include "taps_design.h"
#include "tl_test.h"

/* Direct evaluation of the reference's definition: filterbank sum, DFT by
 * its definition in long double, scaling by 2^-T, power by 2^-s. */
static void direct(const tl_taps *t, int16_t *const frames[], uint32_t T, uint32_t s, long double *P)
{
    const uint32_t N = t->points, P_ = t->taps;
    long double *y = malloc(sizeof(long double) * N);
    for (uint32_t n = 0; n < N; n++) {
        long double acc = 0;
        for (uint32_t p = 0; p < P_; p++)
            acc += (long double)t->coef[p * N + n] * frames[p][n];
        y[n] = ldexpl(acc, -(int)(t->shift - 15u));
    }
    for (uint32_t k = 0; k < N / 2u; k++) {
        long double re = 0, im = 0;
        for (uint32_t n = 0; n < N; n++) {
            const long double a = 2.0L * 3.141592653589793238462643383279502884L * (long double)((uint64_t)k * n % N) / N;
            re += y[n] * cosl(a);
            im -= y[n] * sinl(a);
        }
        re = ldexpl(re, -(int)T);
        im = ldexpl(im, -(int)T);
        P[k] = ldexpl(re * re + im * im, -(int)s);
    }
    free(y);
}

static void test_reference_matches_direct_dft(void **state)
{
    (void)state;
    const uint32_t N = 512, taps = 4, T = 8, s = 3;
    tl_taps *t = malloc(sizeof *t);
    assert_int_equal(tl_taps_design(TL_WINDOW_HAMMING, taps, N, t, NULL), 0);
    double *coef = malloc(sizeof(double) * taps * N);
    for (uint32_t n = 0; n < taps * N; n++)
        coef[n] = t->coef[n];
    tl_ref *r = tl_ref_open(coef, taps, N, t->shift, 1, T, s);
    assert_non_null(r);
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("reference", 8));
    int16_t *frames[4];
    for (uint32_t p = 0; p < taps; p++) {
        frames[p] = malloc(sizeof(int16_t) * N);
        for (uint32_t n = 0; n < N; n++)
            frames[p][n] = (int16_t)lround(4000.0 * tl_rng_normal(&rng));
    }
    for (uint32_t p = 0; p < taps; p++)
        assert_int_equal(tl_ref_push_frame(r, frames[p], NULL), p + 1u == taps);
    double *got = malloc(sizeof(double) * N / 2u);
    assert_int_equal(tl_ref_take(r, got, NULL, NULL, NULL), 1);
    long double *want = malloc(sizeof(long double) * N / 2u);
    direct(t, frames, T, s, want);
    long double sum = 0, err = 0;
    for (uint32_t k = 0; k < N / 2u; k++) {
        sum += want[k];
        err += fabsl((long double)got[k] - want[k]);
    }
    printf("    reference vs direct long-double DFT: mean |relative error| %.3Le\n", err / sum);
    /* FFTW's double round-off is ~1e-16 log N relative (FFTW accuracy notes,
     * from memory); 1e-13 leaves room and is far below any firmware effect */
    assert_true(err / sum < 1e-13);
    for (uint32_t p = 0; p < taps; p++)
        free(frames[p]);
    free(got);
    free(want);
    free(coef);
    free(t);
    tl_ref_close(r);
}

/* Same input, same bits: two references opened alike give identical sums. */
static void test_reference_repeatable(void **state)
{
    (void)state;
    const uint32_t N = 8192, taps = 4;
    tl_taps *t = malloc(sizeof *t);
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, taps, N, t, NULL), 0);
    double *coef = malloc(sizeof(double) * taps * N);
    for (uint32_t n = 0; n < taps * N; n++)
        coef[n] = t->coef[n];
    tl_ref *a = tl_ref_open(coef, taps, N, t->shift, 2, 12, 12);
    tl_ref *b = tl_ref_open(coef, taps, N, t->shift, 2, 12, 12);
    int16_t *x = malloc(sizeof(int16_t) * N), *y = malloc(sizeof(int16_t) * N);
    tl_rng rng;
    tl_rng_seed(&rng, 77);
    for (int f = 0; f < 8; f++) {
        for (uint32_t n = 0; n < N; n++) {
            x[n] = (int16_t)lround(4096.0 * tl_rng_normal(&rng));
            y[n] = (int16_t)lround(4096.0 * tl_rng_normal(&rng));
        }
        tl_ref_push_frame(a, x, y);
        tl_ref_push_frame(b, x, y);
    }
    double *s[2][4];
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 4; j++)
            s[i][j] = malloc(sizeof(double) * N / 2u);
    assert_int_equal(tl_ref_take(a, s[0][0], s[0][1], s[0][2], s[0][3]), 5);
    assert_int_equal(tl_ref_take(b, s[1][0], s[1][1], s[1][2], s[1][3]), 5);
    for (int j = 0; j < 4; j++)
        assert_memory_equal(s[0][j], s[1][j], sizeof(double) * N / 2u);
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 4; j++)
            free(s[i][j]);
    free(x);
    free(y);
    free(coef);
    free(t);
    tl_ref_close(a);
    tl_ref_close(b);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_reference_matches_direct_dft),
        cmocka_unit_test(test_reference_repeatable),
    };
    return cmocka_run_group_tests_name("reference", tests, NULL, NULL);
}
