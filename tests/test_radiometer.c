/*
 * test_radiometer.c - averaged noise follows the radiometer equation.
 *
 * An average of M powers |X|^2 of complex Gaussian noise is Gamma(M)
 * distributed: std/mean = 1/sqrt(M) (Dicke, Rev. Sci. Instrum. 17, 268,
 * 1946; sources.md [computed]) when the M spectra are independent, as
 * they are for the plain windowed FFT (P = 1: frames do not overlap). A
 * P-tap filterbank's spectra share input frames, so consecutive spectra of
 * one channel correlate with coefficient rho_l = sum_n h[n] h[n + lN] /
 * sum_n h^2 for white input, and the scatter grows to
 *     sqrt( (1/M) (1 + 2 sum_{l=1}^{P-1} (1 - l/M) rho_l^2) )
 * (variance of a mean of correlated Gamma-like terms; |rho|^2 is the power
 * correlation of complex Gaussian samples; common practice, no source).
 * White noise through the firmware chain: the scatter of an integrated
 * channel across many channels must match 1/sqrt(M) within 5% (the issue's
 * check) and, closer, the prediction above.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "calibrate.h"
#include "sky_noise.h"
#include "taps_design.h"
#include "tl_test.h"

static void scatter_case(uint32_t M, uint32_t taps, uint64_t seed)
{
    const uint32_t N = 8192;
    const unsigned products = 8; /* more (channel, product) pairs: ~0.6% precision */
    const size_t n = (size_t)(3u + M * products) * N;
    int16_t *x = malloc(n * sizeof *x);
    tl_sky_params p;
    tl_sky_default(&p);
    p.white = 1;
    p.inputs = 1;
    p.seed = seed;
    tl_sky *s = tl_sky_open(&p);
    assert_non_null(s);
    tl_sky_fill(s, x, NULL, n);
    tl_sky_close(s);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.inputs = 1;
    cfg.integration = M;
    cfg.taps = taps;
    tl_taps *t = malloc(sizeof *t);
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, taps, N, t, NULL), 0);
    uint8_t *img = malloc(TL_TAPS_IMAGE_BYTES(taps, N));
    size_t len = 0;
    assert_int_equal(tl_taps_write_image(t, img, TL_TAPS_IMAGE_BYTES(taps, N), &len), TL_OK);
    const double pred = tl_radiometer_factor(t, M); /* host/calibrate.h */
    tl_chain *c = tl_test_chain();
    tl_product *pr = tl_test_product();
    assert_int_equal(tl_chain_init(c, &cfg, img, len), TL_OK);
    /* channels away from DC and Nyquist, over every product */
    double s1 = 0, s2 = 0;
    const uint32_t lo = 16, hi = N / 2u - 16u;
    unsigned taken = 0;
    for (size_t done = 0; done < n;) {
        size_t used = 0;
        assert_int_equal(tl_chain_push(c, x + done, NULL, n - done, &used), TL_OK);
        done += used;
        if (!tl_chain_ready(c))
            continue;
        assert_int_equal(tl_chain_take(c, pr), TL_OK);
        taken++;
        for (uint32_t k = lo; k < hi; k++) {
            const double v = (double)pr->auto_power[0][k];
            s1 += v;
            s2 += v * v;
        }
    }
    assert_int_equal(taken, products);
    const double K = (double)(hi - lo) * products, mean = s1 / K, sd = sqrt((s2 - s1 * s1 / K) / (K - 1));
    const double ratio = sd / mean * sqrt((double)M);
    printf("    P = %u, M = %u: scatter/mean %.5f; x sqrt(M) = %.4f; predicted with lag correlation %.4f\n", taps, M,
           sd / mean, ratio, pred);
    TL_ASSERT_NEAR(ratio, 1.0, 0.05);
    /* the estimate's own precision over 8 x 4064 values is about 0.6%
     * (more for M = 16, whose Gamma kurtosis is higher): allow 3% */
    TL_ASSERT_NEAR(ratio, pred, 0.03);
    free(t);
    free(img);
    free(x);
    free(pr);
    free(c);
}

static void test_radiometer_scatter(void **state)
{
    (void)state;
    const uint64_t seed = tl_test_seed("radiometer", 3);
    scatter_case(16, 1, seed);
    scatter_case(256, 1, seed + 1);
    scatter_case(16, 4, seed + 2);
    scatter_case(256, 4, seed + 3);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_radiometer_scatter),
    };
    return cmocka_run_group_tests_name("radiometer", tests, NULL, NULL);
}
