/* test_fft.c - the fixed-point real FFT against FFTW double and its noise model. */
#include <fftw3.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "noise_model.h"
#include "rng.h"
#include "spec_arith.h"
#include "tl_fft.h"
#include "tl_test.h"

typedef struct fft_bench {
    tl_fft *f;
    int32_t *y, *X;
    double *yd;
    fftw_complex *Z;
    fftw_plan plan;
    uint32_t points;
} fft_bench;

static void bench_open(fft_bench *b, uint32_t points, uint32_t mask, tl_rounding mode)
{
    b->points = points;
    b->f = malloc(sizeof *b->f);
    b->y = malloc(sizeof(int32_t) * points);
    b->X = malloc(sizeof(int32_t) * points);
    b->yd = fftw_malloc(sizeof(double) * points);
    b->Z = fftw_malloc(sizeof(fftw_complex) * (points / 2u + 1u));
    assert_non_null(b->f);
    assert_int_equal(tl_fft_init(b->f, points, mask, mode), TL_OK);
    b->plan = fftw_plan_dft_r2c_1d((int)points, b->yd, b->Z, FFTW_ESTIMATE);
}

static void bench_close(fft_bench *b)
{
    fftw_destroy_plan(b->plan);
    free(b->f);
    free(b->y);
    free(b->X);
    fftw_free(b->yd);
    fftw_free(b->Z);
}

/* Transform b->y both ways; accumulate signal and error power (firmware units). */
static void run_both(fft_bench *b, uint32_t sat[TL_MAX_FFT_STAGES + 1u], double *sig, double *err)
{
    for (uint32_t n = 0; n < b->points; n++)
        b->yd[n] = b->y[n];
    tl_fft_execute(b->f, b->y, b->X, sat);
    fftw_execute(b->plan);
    const double sc = ldexp(1.0, -(int)b->f->total_shift);
    for (uint32_t k = 0; k < b->points / 2u; k++) {
        const double rr = b->Z[k][0] * sc, ri = b->Z[k][1] * sc;
        const double er = b->X[2u * k] - rr, ei = b->X[2u * k + 1u] - ri;
        *sig += rr * rr + ri * ri;
        *err += er * er + ei * ei;
    }
}

/* SQNR on Gaussian noise with RMS 1/8 of the int32 input word's full scale.
 * Threshold 120 dB: general-purpose 32-bit fixed-point FFT libraries reach
 * 126-129 dB on such input (measured figures quoted in the chain issue; from
 * the measurement, no published source). The model: Oppenheim and Schafer,
 * Discrete-Time Signal Processing 2nd ed. sect. 9.7, and Welch 1969 (IEEE
 * Trans. AU-17(2)): independent rounding errors propagated with each later
 * stage's power gain; tolerance 3 dB as the issue asks. */
static void sqnr_case(uint32_t points, tl_rounding mode, double *measured, double *predicted)
{
    fft_bench b;
    bench_open(&b, points, TL_FFT_SCALE_AUTO, mode);
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("sqnr", 20261201u) + points + (uint64_t)mode);
    const double rms = ldexp(1.0, 31) / 8.0;
    uint32_t sat[TL_MAX_FFT_STAGES + 1u] = { 0 };
    double sig = 0.0, err = 0.0;
    const unsigned trials = points >= 8192u ? 24u : 64u;
    for (unsigned t = 0; t < trials; t++) {
        for (uint32_t n = 0; n < points; n++)
            b.y[n] = (int32_t)lround(rms * tl_rng_normal(&rng));
        run_both(&b, sat, &sig, &err);
    }
    for (unsigned s = 0; s <= TL_MAX_FFT_STAGES; s++)
        assert_int_equal(sat[s], 0);
    tl_noise_prediction np;
    assert_int_equal(tl_noise_predict(points, b.f->scale_mask, mode, 0, 0, &np), 0);
    /* E|X|^2 = N sigma^2 / 4^T for white real input */
    *predicted = 10.0 * log10(np.fft_gain * rms * rms / np.fft_noise);
    *measured = 10.0 * log10(sig / err);
    bench_close(&b);
}

static void test_sqnr_default_size(void **state)
{
    (void)state;
    double m, p;
    sqnr_case(8192u, TL_ROUND_HALF_EVEN, &m, &p);
    printf("    N=8192 half-even: SQNR measured %.2f dB, predicted %.2f dB\n", m, p);
    assert_true(m >= 120.0);
    TL_ASSERT_NEAR(m, p, 3.0);
}

static void test_sqnr_all_sizes_and_modes(void **state)
{
    (void)state;
    const tl_rounding modes[3] = { TL_ROUND_TRUNCATE, TL_ROUND_HALF_UP, TL_ROUND_HALF_EVEN };
    for (uint32_t n = TL_MIN_POINTS; n <= TL_MAX_POINTS; n *= 2u) {
        for (int i = 0; i < 3; i++) {
            double m, p;
            sqnr_case(n, modes[i], &m, &p);
            printf("    N=%5u mode %d: SQNR measured %.2f dB, predicted %.2f dB\n", n, (int)modes[i], m, p);
            assert_true(m >= 120.0);
            TL_ASSERT_NEAR(m, p, 3.0);
        }
    }
}

/* The stage plan of the spec: radix-2 first for odd log2(N/2), then radix-4. */
static void test_stage_plan(void **state)
{
    (void)state;
    tl_fft *f = malloc(sizeof *f);
    assert_int_equal(tl_fft_init(f, 256u, TL_FFT_SCALE_AUTO, TL_ROUND_HALF_EVEN), TL_OK);
    assert_int_equal(f->stages, 4);
    assert_int_equal(f->radix[0], 2);
    assert_int_equal(f->radix[1], 4);
    assert_int_equal(f->radix[3], 4);
    assert_int_equal(f->scale_mask, 0x7Fu);
    assert_int_equal(f->total_shift, 7);
    assert_int_equal(tl_fft_init(f, 8192u, TL_FFT_SCALE_AUTO, TL_ROUND_HALF_EVEN), TL_OK);
    assert_int_equal(f->stages, 6);
    for (unsigned s = 0; s < 6; s++) {
        assert_int_equal(f->radix[s], 4);
        assert_int_equal(f->shift[s], 2);
    }
    assert_int_equal(f->split_shift, 0);
    /* mask 0b1_0101_0101_0101: one bit per radix-4 stage, plus the split */
    assert_int_equal(tl_fft_init(f, 8192u, 0x1555u, TL_ROUND_HALF_EVEN), TL_OK);
    for (unsigned s = 0; s < 6; s++)
        assert_int_equal(f->shift[s], 1);
    assert_int_equal(f->split_shift, 1);
    assert_int_equal(f->total_shift, 7);
    free(f);
}

static void test_init_rejects(void **state)
{
    (void)state;
    tl_fft *f = malloc(sizeof *f);
    assert_int_equal(tl_fft_init(NULL, 8192u, 0, TL_ROUND_HALF_EVEN), TL_E_NULL);
    assert_int_equal(tl_fft_init(f, 128u, 0, TL_ROUND_HALF_EVEN), TL_E_POINTS);
    assert_int_equal(tl_fft_init(f, 3000u, 0, TL_ROUND_HALF_EVEN), TL_E_POINTS);
    assert_int_equal(tl_fft_init(f, 2u * TL_MAX_POINTS, 0, TL_ROUND_HALF_EVEN), TL_E_POINTS);
    assert_int_equal(tl_fft_init(f, 8192u, 0x1FFFu, TL_ROUND_HALF_EVEN), TL_OK);   /* bits 0..12 */
    assert_int_equal(tl_fft_init(f, 8192u, 0x2000u, TL_ROUND_HALF_EVEN), TL_E_SCALING);
    assert_int_equal(tl_fft_init(f, 8192u, 0, (tl_rounding)3), TL_E_ROUNDING);
    free(f);
}

/* A constant input goes to bin 0 only, exactly: X[0] = c N / 2^T (no
 * rounding happens because every partial sum is a multiple of the shift). */
static void test_dc_exact(void **state)
{
    (void)state;
    fft_bench b;
    bench_open(&b, 8192u, TL_FFT_SCALE_AUTO, TL_ROUND_HALF_EVEN);
    for (uint32_t n = 0; n < 8192u; n++)
        b.y[n] = 1 << 20;
    uint32_t sat[TL_MAX_FFT_STAGES + 1u] = { 0 };
    tl_fft_execute(b.f, b.y, b.X, sat);
    assert_int_equal(b.X[0], (1 << 20) * 2); /* 2^20 * 8192 / 2^12 */
    assert_int_equal(b.X[1], 0);
    for (uint32_t k = 1; k < 4096u; k++) {
        assert_int_equal(b.X[2u * k], 0);
        assert_int_equal(b.X[2u * k + 1u], 0);
    }
    bench_close(&b);
}

/* A full-scale sine (amplitude 2^30 = 1.0 in the filterbank's Q30, and the
 * largest branch gain 1.42 the Q30 headroom allows) never overflows with the
 * default mask, at bin centres and between bins; the bin value is A N/2 / 2^T
 * within the round-off. */
static void test_full_scale_sine_default_mask(void **state)
{
    (void)state;
    const double amps[2] = { ldexp(1.0, 30), 1.42 * ldexp(1.0, 30) };
    const double bins[4] = { 1000.0, 1000.5, 17.25, 4000.0 };
    fft_bench b;
    bench_open(&b, 8192u, TL_FFT_SCALE_AUTO, TL_ROUND_HALF_EVEN);
    tl_noise_prediction np;
    assert_int_equal(tl_noise_predict(8192u, b.f->scale_mask, TL_ROUND_HALF_EVEN, 0, 0, &np), 0);
    for (int a = 0; a < 2; a++) {
        for (int i = 0; i < 4; i++) {
            for (uint32_t n = 0; n < 8192u; n++)
                b.y[n] = (int32_t)lround(amps[a] * cos(2.0 * M_PI * bins[i] * n / 8192.0 + 0.3));
            uint32_t sat[TL_MAX_FFT_STAGES + 1u] = { 0 };
            double sig = 0, err = 0;
            run_both(&b, sat, &sig, &err);
            for (unsigned s = 0; s <= TL_MAX_FFT_STAGES; s++)
                assert_int_equal(sat[s], 0);
            /* the model (sect. 9.7) assumes noise-like data; a pure tone makes
             * many partial sums exact, so it bounds the error from above */
            const double pred = 10.0 * log10(sig / (4096.0 * np.fft_noise));
            printf("    sine %.3g at bin %.2f: SQNR %.1f dB, predicted %.1f dB\n", amps[a], bins[i],
                   10.0 * log10(sig / err), pred);
            assert_true(10.0 * log10(sig / err) >= pred - 3.0);
            if (bins[i] == 1000.0) {
                const double mag = hypot((double)b.X[2000], (double)b.X[2001]);
                TL_ASSERT_NEAR(mag, amps[a] * 4096.0 / 4096.0, 4.0);
            }
        }
    }
    bench_close(&b);
}

/* Too little scaling (mask 0): the same sine overflows; every overflow is
 * counted and the output sits at the rails instead of wrapping. */
static void test_overflow_saturates(void **state)
{
    (void)state;
    fft_bench b;
    bench_open(&b, 8192u, 0u, TL_ROUND_HALF_EVEN);
    for (uint32_t n = 0; n < 8192u; n++)
        b.y[n] = (int32_t)lround(ldexp(1.0, 30) * cos(2.0 * M_PI * 1000.0 * n / 8192.0));
    uint32_t sat[TL_MAX_FFT_STAGES + 1u] = { 0 };
    tl_fft_execute(b.f, b.y, b.X, sat);
    uint32_t total = 0;
    for (unsigned s = 0; s <= TL_MAX_FFT_STAGES; s++)
        total += sat[s];
    printf("    mask 0, full-scale sine: %u saturations, per stage %u %u %u %u %u %u split %u\n", total, sat[0], sat[1],
           sat[2], sat[3], sat[4], sat[5], sat[6]);
    assert_true(total > 0);
    /* the tone bin sits at a rail: large, not wrapped to a small value */
    const int32_t re = b.X[2000], im = b.X[2001];
    assert_true(re == TL_S32_SAT_MAX || re == TL_S32_SAT_MIN || im == TL_S32_SAT_MAX || im == TL_S32_SAT_MIN);
    assert_true(hypot((double)re, (double)im) >= (double)TL_S32_SAT_MAX);
    for (uint32_t k = 0; k < 8192u; k++)
        assert_true(b.X[k] >= TL_S32_SAT_MIN && b.X[k] <= TL_S32_SAT_MAX);
    bench_close(&b);
}

/* The same input twice gives the same bytes (no hidden state between calls). */
static void test_repeatable(void **state)
{
    (void)state;
    fft_bench b;
    bench_open(&b, 4096u, TL_FFT_SCALE_AUTO, TL_ROUND_HALF_UP);
    tl_rng rng;
    tl_rng_seed(&rng, 99);
    for (uint32_t n = 0; n < 4096u; n++)
        b.y[n] = (int32_t)lround(ldexp(1.0, 27) * tl_rng_normal(&rng));
    uint32_t sat[TL_MAX_FFT_STAGES + 1u] = { 0 };
    int32_t *first = malloc(sizeof(int32_t) * 4096u);
    tl_fft_execute(b.f, b.y, b.X, sat);
    memcpy(first, b.X, sizeof(int32_t) * 4096u);
    tl_fft_execute(b.f, b.y, b.X, sat);
    assert_memory_equal(first, b.X, sizeof(int32_t) * 4096u);
    free(first);
    bench_close(&b);
}

/* Byte identity with the plain statement of the spec (tests/spec_arith.c,
 * the exact-integer oracle; source: docs/fixed-point.md section 4): every
 * size, rounding mode and a spread of scaling masks (default, none, all
 * bits, random), on inputs that reach every path: Gaussian at 1/8 of full
 * scale, uniform over the whole int32 range (including -2^31, which the
 * symmetric saturation never returns), and constant full-scale words that
 * saturate with too little scaling. Every output word and every
 * per-stage saturation count must agree. */
static void test_identical_to_spec(void **state)
{
    (void)state;
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("fft_spec", 20261202u));
    tl_fft *f = malloc(sizeof *f);
    int32_t *y = malloc(sizeof(int32_t) * TL_MAX_POINTS);
    int32_t *X = malloc(sizeof(int32_t) * TL_MAX_POINTS);
    int32_t *Xs = malloc(sizeof(int32_t) * TL_MAX_POINTS);
    assert_non_null(f);
    assert_non_null(y);
    assert_non_null(X);
    assert_non_null(Xs);
    unsigned compared = 0, saturating = 0;
    for (uint32_t points = TL_MIN_POINTS; points <= TL_MAX_POINTS; points *= 2u) {
        uint32_t masks[5];
        spec_fft_masks(points, &rng, masks);
        for (int mode = TL_ROUND_TRUNCATE; mode <= TL_ROUND_HALF_EVEN; mode++) {
            for (unsigned mi = 0; mi < 5u; mi++) {
                assert_int_equal(tl_fft_init(f, points, masks[mi], (tl_rounding)mode), TL_OK);
                for (unsigned kind = 0; kind < 3u; kind++) {
                    spec_fft_input(y, points, kind, &rng);
                    uint32_t sat[TL_MAX_FFT_STAGES + 1u] = { 0 }, sat_s[TL_MAX_FFT_STAGES + 1u] = { 0 };
                    tl_fft_execute(f, y, X, sat);
                    spec_fft_execute(f, y, Xs, sat_s);
                    if (memcmp(X, Xs, sizeof(int32_t) * points) != 0 || memcmp(sat, sat_s, sizeof sat) != 0) {
                        uint32_t i = 0;
                        while (i < points && X[i] == Xs[i])
                            i++;
                        fail_msg("points %u mode %d mask 0x%x input %u: word %u is %d, the spec gives %d "
                                 "(saturations stage 0: %u vs %u)", points, mode, f->scale_mask, kind, i,
                                 i < points ? X[i] : 0, i < points ? Xs[i] : 0, sat[0], sat_s[0]);
                    }
                    for (uint32_t st = 0; st <= f->stages; st++)
                        saturating += sat[st] != 0u;
                    compared++;
                }
            }
        }
    }
    /* the inputs did reach the saturating path (not a test that cannot fail) */
    assert_true(saturating > 50u);
    printf("fft: %u transforms identical to the spec, %u stage counts with saturations\n", compared, saturating);
    free(f);
    free(y);
    free(X);
    free(Xs);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_stage_plan),
        cmocka_unit_test(test_init_rejects),
        cmocka_unit_test(test_dc_exact),
        cmocka_unit_test(test_full_scale_sine_default_mask),
        cmocka_unit_test(test_overflow_saturates),
        cmocka_unit_test(test_repeatable),
        cmocka_unit_test(test_identical_to_spec),
        cmocka_unit_test(test_sqnr_default_size),
        cmocka_unit_test(test_sqnr_all_sizes_and_modes),
    };
    return cmocka_run_group_tests_name("fft", tests, NULL, NULL);
}
