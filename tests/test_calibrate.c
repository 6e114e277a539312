/*
 * test_calibrate.c - two-point calibration and the trough fit (host/calibrate.h).
 * Sources: Skou and Le Vine, Microwave Radiometer Systems, ch. 10 (the
 * hot/cold calibration equation); Dicke 1946 (radiometer equation: an
 * average of N powers of Gaussian noise has relative scatter 1/sqrt(N));
 * first-order error propagation and the weighted least-squares covariance
 * (textbook statistics, common practice, no single source).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "calibrate.h"
#include "rng.h"
#include "taps_design.h"
#include "tl_test.h"

/* Gains and the receiver temperature cancel exactly. */
static void test_calibration_equation_exact(void **state)
{
    (void)state;
    tl_product *p = tl_test_product();
    p->channels = 64;
    p->inputs = 1;
    p->antenna_spectra = p->cal[0].spectra = p->cal[1].spectra = 1000;
    const double t_load = 300.0, t_ns = 1000.0, t_rx = 250.0;
    double t_true[64];
    for (uint32_t k = 0; k < 64; k++) {
        const double gain = 1e6 * (1.0 + 0.5 * sin(k * 0.3)); /* counts per kelvin, varies by channel */
        t_true[k] = 5000.0 + 100.0 * k;
        p->auto_power[0][k] = (uint64_t)llround(1000.0 * gain * (t_true[k] + t_rx));
        p->cal[0].auto_power[0][k] = (uint64_t)llround(1000.0 * gain * (t_load + t_rx));
        p->cal[1].auto_power[0][k] = (uint64_t)llround(1000.0 * gain * (t_load + t_ns + t_rx));
    }
    double t[64], s[64];
    assert_int_equal(tl_calibrate(p, 0, t_load, t_ns, 1.0, t, s), 0);
    for (uint32_t k = 0; k < 64; k++)
        TL_ASSERT_NEAR(t[k], t_true[k], 1e-6 * t_true[k]);
    /* a state without spectra cannot be calibrated */
    p->cal[1].spectra = 0;
    assert_int_equal(tl_calibrate(p, 0, t_load, t_ns, 1.0, t, s), -1);
    free(p);
}

/* The propagated sigma matches the scatter of calibrated temperatures when
 * each state's mean power is an average of N exponential powers (Gamma,
 * std/mean = 1/sqrt(N)). */
static void test_calibration_sigma_monte_carlo(void **state)
{
    (void)state;
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("calibrate", 4));
    const uint32_t K = 2000, N = 400;
    tl_product *p = tl_test_product();
    p->channels = K;
    p->inputs = 1;
    p->antenna_spectra = N;
    p->cal[0].spectra = N / 2u;
    p->cal[1].spectra = N / 2u;
    const double t_load = 300.0, t_ns = 1000.0, t_rx = 200.0, t_sky = 8000.0, g = 1e4;
    const uint32_t n_state[3] = { N, N / 2u, N / 2u };
    const double t_state[3] = { t_sky + t_rx, t_load + t_rx, t_load + t_ns + t_rx };
    for (uint32_t k = 0; k < K; k++) {
        for (int s = 0; s < 3; s++) {
            double sum = 0.0;
            for (uint32_t i = 0; i < n_state[s]; i++) /* |X|^2 of complex Gaussian noise is exponential */
                sum += -log(1.0 - tl_rng_uniform(&rng)) * g * t_state[s];
            const uint64_t v = (uint64_t)llround(sum);
            if (s == 0)
                p->auto_power[0][k] = v;
            else
                p->cal[s - 1].auto_power[0][k] = v;
        }
    }
    double *t = malloc(sizeof(double) * K), *sg = malloc(sizeof(double) * K);
    assert_int_equal(tl_calibrate(p, 0, t_load, t_ns, 1.0, t, sg), 0);
    double m = 0, v = 0, ms = 0;
    for (uint32_t k = 0; k < K; k++) {
        m += t[k];
        ms += sg[k];
    }
    m /= K;
    ms /= K;
    for (uint32_t k = 0; k < K; k++)
        v += (t[k] - m) * (t[k] - m);
    const double sd = sqrt(v / (K - 1));
    printf("    calibrated %.1f K (true %.1f), scatter %.1f K, propagated sigma %.1f K\n", m, t_sky, sd, ms);
    /* mean within 4 standard errors (plus the first-order bias of a ratio,
     * ~ sigma^2/T, small here); scatter within 5% of the propagated sigma */
    TL_ASSERT_NEAR(m, t_sky, 4.0 * sd / sqrt(K) + sd * sd / t_sky);
    TL_ASSERT_NEAR(sd / ms, 1.0, 0.05);
    free(t);
    free(sg);
    free(p);
}

/* Radiometer factor: 1 for a plain windowed FFT; the default 4-tap table's
 * lag correlation gives 1.027 (measured by test_radiometer.c). */
static void test_radiometer_factor(void **state)
{
    (void)state;
    tl_taps *t = malloc(sizeof *t);
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, 1, 8192, t, NULL), 0);
    TL_ASSERT_NEAR(tl_radiometer_factor(t, 256), 1.0, 1e-12);
    assert_int_equal(tl_taps_default(t), TL_OK);
    TL_ASSERT_NEAR(tl_radiometer_factor(t, 256), 1.0269, 0.0005);
    free(t);
}

/* The fit finds a planted trough: over many noise draws the pulls
 * (fit - truth) / sigma of depth and centre have mean ~0 and spread ~1,
 * which checks the estimates and their errors together. */
static void test_trough_fit_pulls(void **state)
{
    (void)state;
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("trough", 9));
    const uint32_t n = 400;
    const double f0 = 20e6, depth = 0.8, centre = 21.3e6, width = 3e6;
    double f[400], y[400], s[400];
    const unsigned trials = 24;
    double pd = 0, pd2 = 0, pc = 0, pc2 = 0, sig = 0;
    for (unsigned t = 0; t < trials; t++) {
        for (uint32_t i = 0; i < n; i++) {
            f[i] = 10e6 + 20e6 * i / (n - 1.0);
            const double lf = log(f[i] / f0);
            const double fg = 2e4 * pow(f[i] / f0, -2.5) * (1.0 + 0.01 * lf - 0.02 * lf * lf);
            const double tr = depth * exp(-M_LN2 * pow(fabs(2.0 * (f[i] - centre) / width), 2.0));
            s[i] = 0.1;
            y[i] = fg - tr + s[i] * tl_rng_normal(&rng);
        }
        tl_trough_fit fit;
        assert_int_equal(tl_fit_trough(f, y, s, n, f0, 3, 1.0, 12e6, 28e6, 2e6, 4e6, &fit), 0);
        const double zd = (fit.depth - depth) / fit.depth_sigma, zc = (fit.centre - centre) / fit.centre_sigma;
        pd += zd;
        pd2 += zd * zd;
        pc += zc;
        pc2 += zc * zc;
        sig += fit.significance;
        if (t == 0)
            printf("    fit: depth %.3f +- %.3f K (%.1f sigma), centre %.3f +- %.3f MHz, chi2/dof %.2f, "
                   "without trough %.0f\n",
                   fit.depth, fit.depth_sigma, fit.significance, fit.centre / 1e6, fit.centre_sigma / 1e6,
                   fit.chi2 / fit.dof, fit.chi2_no_trough);
        assert_true(fit.chi2 / fit.dof < 1.5);
        assert_true(fit.chi2_no_trough > fit.chi2 + 25.0);
    }
    const double md = pd / trials, sdd = sqrt(pd2 / trials - md * md);
    const double mc = pc / trials, sdc = sqrt(pc2 / trials - mc * mc);
    printf("    pulls over %u draws: depth mean %.2f sd %.2f; centre mean %.2f sd %.2f; mean significance %.1f\n",
           trials, md, sdd, mc, sdc, sig / trials);
    /* mean of 24 unit normals: sd 0.2; their sd: within ~0.6..1.4 */
    assert_true(fabs(md) < 0.8 && fabs(mc) < 0.8);
    assert_true(sdd > 0.6 && sdd < 1.5 && sdc > 0.6 && sdc < 1.5);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_calibration_equation_exact),
        cmocka_unit_test(test_calibration_sigma_monte_carlo),
        cmocka_unit_test(test_radiometer_factor),
        cmocka_unit_test(test_trough_fit_pulls),
    };
    return cmocka_run_group_tests_name("calibrate", tests, NULL, NULL);
}
