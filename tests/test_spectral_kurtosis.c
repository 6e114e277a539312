/*
 * test_spectral_kurtosis.c - the ground's spectral kurtosis (SK) estimator,
 * its moments and its false-alarm thresholds.
 *
 * Sources:
 * - G. M. Nita and D. E. Gary, "The generalized spectral kurtosis
 *   estimator", MNRAS 406, L60, 2010: the estimator, E[SK] = 1, the
 *   variance 4 M^2 / ((M - 1)(M + 2)(M + 3)) for N = 1, and the Monte
 *   Carlo values 0.0588 (M = 64) and 0.0153 (M = 256)
 *   (../shared/sources.md, "Spectral kurtosis" [cited]).
 * - Exact results derived here and stated beside each check [computed]:
 *   at M = 2 the estimator is (2N + 1) v^2 with v = 2 B - 1,
 *   B ~ Beta(N, N) (P_1 / S1 of two Gamma(N) powers), whose even moments
 *   are E v^(2j) = (1/2)_j / (N + 1/2)_j (rising factorials); the large-M
 *   means of SK under a burst and a carrier (derivations at the tests).
 * - The same thresholds computed independently with mpmath at 20 digits
 *   (adaptive quadrature of the Pearson type IV density in theta, the
 *   saddlepoint equations solved with mpmath.quad moments) [computed].
 * - Seeded Monte Carlo of complex Gaussian voltages (host/rng.h; |X|^2 of
 *   a complex normal is exponential power): every false-alarm check is a
 *   binomial count compared with its expectation.
 * Random tests print their seed (TL_TEST_SEED reruns them).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "rng.h"
#include "spectral_kurtosis.h"
#include "tl_test.h"

/* The same block counts under ASan: the whole file runs in about 30 s
 * (release) and 45 s (ASan + UBSan). */
/* Twelve tail counts are checked in the false-alarm test (about twenty in
 * all): at 4 sigma the chance that any of them fails by chance alone is
 * 20 x 6.3e-5 ~ 0.1%. */
#define NSIG 4.0

/* ---- simulation ---------------------------------------------------------------- */

typedef struct block_spec {
    uint32_t m, n;       /* powers per block, raw spectra per power */
    uint32_t burst;      /* the first `burst` powers of the block ... */
    double burst_gain;   /* ... are multiplied by this (noise plus an independent Gaussian burst) */
    double carrier;      /* constant amplitude added to every voltage; CNR = carrier^2 */
} block_spec;

/* One block of complex Gaussian voltages (E|x|^2 = 1) and its SK. */
static double block_sk(tl_rng *r, const block_spec *b)
{
    double s1 = 0.0, s2 = 0.0;
    for (uint32_t j = 0; j < b->m; j++) {
        double p = 0.0;
        for (uint32_t i = 0; i < b->n; i++) {
            const double re = tl_rng_normal(r) * M_SQRT1_2 + b->carrier, im = tl_rng_normal(r) * M_SQRT1_2;
            p += re * re + im * im;
        }
        if (j < b->burst)
            p *= b->burst_gain;
        s1 += p;
        s2 += p * p;
    }
    return tl_sk_estimate(s1, s2, b->m, b->n);
}

static double *simulate(tl_rng *r, const block_spec *b, size_t blocks)
{
    double *sk = malloc(blocks * sizeof *sk);
    assert_non_null(sk);
    for (size_t i = 0; i < blocks; i++)
        sk[i] = block_sk(r, b);
    return sk;
}

static block_spec noise(uint32_t m, uint32_t n)
{
    block_spec b = {m, n, 0u, 1.0, 0.0};
    return b;
}

static size_t count_below(const double *v, size_t n, double t)
{
    size_t c = 0;
    for (size_t i = 0; i < n; i++)
        c += v[i] < t;
    return c;
}

static size_t count_above(const double *v, size_t n, double t)
{
    size_t c = 0;
    for (size_t i = 0; i < n; i++)
        c += v[i] > t;
    return c;
}

/* binomial: |count - n p| in units of sqrt(n p (1 - p)) */
static double binomial_z(size_t count, size_t n, double p)
{
    return ((double)count - (double)n * p) / sqrt((double)n * p * (1.0 - p));
}

/* z with P(Z > z) = q for a standard normal, by bisection on erfc */
static double normal_upper_point(double q)
{
    double lo = 0.0, hi = 40.0;
    for (int i = 0; i < 200; i++) {
        const double mid = 0.5 * (lo + hi);
        if (0.5 * erfc(mid / M_SQRT2) > q)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

/* ---- the estimator and the exact moments ----------------------------------------- */

static void test_estimate_values(void **state)
{
    (void)state;
    /* powers {1, 3}: S1 = 4, S2 = 10, M = 2, N = 1:
     * SK = 3 / 1 x (2 x 10 / 16 - 1) = 0.75 [computed by hand] */
    TL_ASSERT_NEAR(tl_sk_estimate(4.0, 10.0, 2, 1), 0.75, 1e-15);
    /* equal powers: M S2 / S1^2 = 1, SK = 0 (a pure carrier) */
    TL_ASSERT_NEAR(tl_sk_estimate(256.0 * 3.0, 256.0 * 9.0, 256, 1), 0.0, 1e-15);
    /* one power holds everything: M S2 / S1^2 = M, SK = M N + 1 (the maximum) */
    TL_ASSERT_NEAR(tl_sk_estimate(5.0, 25.0, 64, 4), 257.0, 1e-12);
    /* scale free: SK of (c S1, c^2 S2) equals SK of (S1, S2) */
    TL_ASSERT_NEAR(tl_sk_estimate(1e6 * 70.0, 1e12 * 140.0, 64, 1), tl_sk_estimate(70.0, 140.0, 64, 1), 1e-12);
    assert_true(isnan(tl_sk_estimate(0.0, 1.0, 64, 1)));
    assert_true(isnan(tl_sk_estimate(-1.0, 1.0, 64, 1)));
    assert_true(isnan(tl_sk_estimate(1.0, -1.0, 64, 1)));
    assert_true(isnan(tl_sk_estimate(NAN, 1.0, 64, 1)));
    assert_true(isnan(tl_sk_estimate(1.0, INFINITY, 64, 1)));
    assert_true(isnan(tl_sk_estimate(1.0, 1.0, 1, 1)));
    assert_true(isnan(tl_sk_estimate(1.0, 1.0, 64, 0)));

    /* tl_sk_flag over five channels, with the flag of each case */
    const double s1[5] = {4.0, 768.0, 5.0, 0.0, 70.0};
    const double s2[5] = {10.0, 2304.0, 25.0, 1.0, 140.0};
    double sk[5];
    uint8_t flag[6];
    memset(flag, 0xEE, sizeof flag);
    tl_sk_flag(s1, s2, 5, 2, 1, 0.5, 2.0, sk, flag);
    TL_ASSERT_NEAR(sk[0], 0.75, 1e-15);
    assert_int_equal(flag[0], TL_SK_INSIDE);
    assert_int_equal(flag[1], TL_SK_LOW);  /* S2 / S1^2 = 1 / 256 < 1 / M: SK = 3 (2 / 256 - 1) < 0 */
    assert_int_equal(flag[2], TL_SK_HIGH); /* 3 x (2 - 1) = 3 > 2 */
    assert_int_equal(flag[3], TL_SK_INVALID);
    assert_true(isnan(sk[3]));
    TL_ASSERT_NEAR(sk[4], 3.0 * (2.0 * 140.0 / 4900.0 - 1.0), 1e-15);
    assert_int_equal(flag[4], TL_SK_LOW);
    assert_int_equal(flag[5], 0xEE); /* nothing past `channels` */
    tl_sk_flag(s1, s2, 5, 2, 1, 0.5, 2.0, NULL, flag); /* flags only */
    assert_int_equal(flag[2], TL_SK_HIGH);
}

static void test_moments_exact(void **state)
{
    (void)state;
    /* sources.md [cited]: N = 1 variance 4 M^2 / ((M - 1)(M + 2)(M + 3)) */
    for (uint32_t m = 2; m <= 1u << 20; m = m * 3u / 2u + 1u) {
        const double M = (double)m, want = 4.0 * M * M / ((M - 1.0) * (M + 2.0) * (M + 3.0));
        TL_ASSERT_NEAR(tl_sk_variance(m, 1) / want, 1.0, 1e-13);
    }
    /* the published Monte Carlo figures (two to three digits) [cited] */
    TL_ASSERT_NEAR(tl_sk_variance(64, 1), 0.0588, 5e-5);
    TL_ASSERT_NEAR(tl_sk_variance(256, 1), 0.0153, 1e-4);
    /* the 4 / M limit [cited] */
    TL_ASSERT_NEAR(tl_sk_variance(1000000, 1) * 1e6 / 4.0, 1.0, 1e-5);

    /* M = 2, any N [computed]: SK = c v^2, c = 2N + 1, E v^2 = 1 / c,
     * E v^4 = 3 / (c (c + 2)), E v^6 = 15 / (c (c + 2)(c + 4)),
     * E v^8 = 105 / (c (c + 2)(c + 4)(c + 6)); central moments by the
     * binomial expansion of (c v^2 - 1)^j. N = 1: mu2 = 4/5, mu3 = 16/35,
     * mu4 = 48/35. */
    const uint32_t ns[] = {1, 2, 5, 40};
    for (size_t i = 0; i < sizeof ns / sizeof ns[0]; i++) {
        const double c = 2.0 * ns[i] + 1.0;
        const double v2 = 1.0 / c, v4 = 3.0 / (c * (c + 2.0)), v6 = 15.0 / (c * (c + 2.0) * (c + 4.0)),
                     v8 = 105.0 / (c * (c + 2.0) * (c + 4.0) * (c + 6.0));
        const double mu2 = c * c * v4 - 2.0 * c * v2 + 1.0;
        const double mu3 = c * c * c * v6 - 3.0 * c * c * v4 + 3.0 * c * v2 - 1.0;
        const double mu4 = c * c * c * c * v8 - 4.0 * c * c * c * v6 + 6.0 * c * c * v4 - 4.0 * c * v2 + 1.0;
        printf("    M = 2, N = %u: mu2 %.12f (%.12f) mu3 %.12f (%.12f) mu4 %.12f (%.12f)\n", ns[i], tl_sk_variance(2, ns[i]),
               mu2, tl_sk_central_moment(2, ns[i], 3), mu3, tl_sk_central_moment(2, ns[i], 4), mu4);
        TL_ASSERT_NEAR(tl_sk_variance(2, ns[i]), mu2, 1e-12);
        TL_ASSERT_NEAR(tl_sk_central_moment(2, ns[i], 3), mu3, 1e-12);
        TL_ASSERT_NEAR(tl_sk_central_moment(2, ns[i], 4), mu4, 1e-11);
    }
    TL_ASSERT_NEAR(tl_sk_central_moment(2, 1, 3), 16.0 / 35.0, 1e-15);
    TL_ASSERT_NEAR(tl_sk_central_moment(2, 1, 4), 48.0 / 35.0, 1e-14);
    assert_true(isnan(tl_sk_variance(1, 1)));
    assert_true(isnan(tl_sk_variance(64, 0)));
    assert_true(isnan(tl_sk_central_moment(64, 1, 5)));
    assert_true(isnan(tl_sk_central_moment(64, 1, 1)));
    /* no overflow at the largest arguments: still ~ 2 (N + 1) / (N M) */
    const double big = tl_sk_variance(UINT32_MAX, UINT32_MAX);
    TL_ASSERT_NEAR(big * (double)UINT32_MAX, 2.0, 1e-6);
    assert_true(isfinite(tl_sk_central_moment(UINT32_MAX, UINT32_MAX, 4)));
}

/* ---- thresholds against an independent computation --------------------------------- */

static void test_thresholds_reference(void **state)
{
    (void)state;
    /* mpmath, 20 digits [computed]: lower from the saddlepoint, upper from
     * the Pearson type IV law, false-alarm split evenly */
    const struct {
        uint32_t m, n;
        double fa, lo, hi;
    } ref[] = {
        {64, 1, 0.0027, 0.506791266, 2.16598418}, {64, 1, 0.01, 0.554120263, 1.88947693},
        {256, 1, 0.0027, 0.703831007, 1.49596596}, {256, 1, 0.01, 0.737171408, 1.3981563},
        {64, 4, 0.0027, 0.537589937, 1.78296451},  {64, 4, 0.01, 0.587668904, 1.63161211},
    };
    for (size_t i = 0; i < sizeof ref / sizeof ref[0]; i++) {
        double lo = 0.0, hi = 0.0;
        assert_int_equal(tl_sk_thresholds(ref[i].m, ref[i].n, ref[i].fa, &lo, &hi), 0);
        printf("    M = %u, N = %u, false alarm %.4f: [%.9f, %.9f] (mpmath [%.9f, %.9f])\n", ref[i].m, ref[i].n,
               ref[i].fa, lo, hi, ref[i].lo, ref[i].hi);
        TL_ASSERT_NEAR(lo, ref[i].lo, 2e-8);
        TL_ASSERT_NEAR(hi, ref[i].hi, 2e-8);
        TL_ASSERT_NEAR(tl_sk_prob_below(ref[i].m, ref[i].n, lo), ref[i].fa / 2.0, 1e-9);
        TL_ASSERT_NEAR(tl_sk_prob_above(ref[i].m, ref[i].n, hi), ref[i].fa / 2.0, 1e-9);
    }
    /* the three-moment comparison, mpmath gammainc inversion [computed] */
    double lo3 = 0.0, hi3 = 0.0;
    assert_int_equal(tl_sk_thresholds_pearson3(64, 1, 0.0027, &lo3, &hi3), 0);
    TL_ASSERT_NEAR(lo3, 0.6007704129, 1e-8);
    TL_ASSERT_NEAR(hi3, 2.09012271, 1e-8);

    /* the tails are monotonic and the thresholds nest */
    double l1, h1, l2, h2;
    assert_int_equal(tl_sk_thresholds(1024, 1, 1e-6, &l1, &h1), 0);
    assert_int_equal(tl_sk_thresholds(1024, 1, 0.5, &l2, &h2), 0);
    assert_true(0.0 < l1 && l1 < l2 && l2 < 1.0 && 1.0 < h2 && h2 < h1);
    /* large M: thresholds close in as 1 +- z 2 / sqrt(M), z = 3.0 */
    assert_int_equal(tl_sk_thresholds(1u << 30, 1, 0.0027, &l1, &h1), 0);
    TL_ASSERT_NEAR((1.0 - l1) * sqrt(0x1p30) / 2.0, 3.0, 0.01);
    TL_ASSERT_NEAR((h1 - 1.0) * sqrt(0x1p30) / 2.0, 3.0, 0.01);

    /* refusals */
    assert_int_equal(tl_sk_thresholds(1, 1, 0.01, &l1, &h1), -1);
    assert_int_equal(tl_sk_thresholds(256, 0, 0.01, &l1, &h1), -1);
    assert_int_equal(tl_sk_thresholds(256, 1, 0.0, &l1, &h1), -1);
    assert_int_equal(tl_sk_thresholds(256, 1, 0.51, &l1, &h1), -1);
    assert_int_equal(tl_sk_thresholds(256, 1, NAN, &l1, &h1), -1);
    assert_int_equal(tl_sk_thresholds(256, 1, 0.01, NULL, &h1), -1);
    assert_int_equal(tl_sk_thresholds(256, 1, 0.01, &l1, NULL), -1);
    assert_int_equal(tl_sk_thresholds_pearson3(1, 1, 0.01, &l1, &h1), -1);
    /* The Pearson type IV region: the smallest M with 16 (r - 1) >
     * b1 (r - 2)^2 and r > 2, found with exact rational arithmetic from
     * the moments above [computed]: N = 1..13 -> 24, 16, 14, 14, 14, 16,
     * 17, 20, 24, 30, 40, 60, 120; none below 200 for N >= 14. */
    const uint32_t first[] = {24, 16, 14, 14, 14, 16, 17, 20, 24, 30, 40, 60, 120};
    for (uint32_t n = 1; n <= 13; n++) {
        l1 = h1 = -7.0;
        assert_int_equal(tl_sk_thresholds(first[n - 1] - 1u, n, 0.01, &l1, &h1), -1);
        TL_ASSERT_NEAR(l1, -7.0, 0.0); /* untouched */
        assert_int_equal(tl_sk_thresholds(first[n - 1], n, 0.01, &l1, &h1), 0);
        assert_true(isnan(tl_sk_prob_above(first[n - 1] - 1u, n, 2.0)));
    }
    assert_int_equal(tl_sk_thresholds(4096, 16, 0.01, &l1, &h1), -1);
    /* prob_below: 0 at and below 0, undefined in the upper half */
    TL_ASSERT_NEAR(tl_sk_prob_below(256, 1, 0.0), 0.0, 0.0);
    assert_true(isnan(tl_sk_prob_below(256, 1, 1.0)));
}

/* ---- Monte Carlo ------------------------------------------------------------------- */

/* brief test 1: mean 1 and the variance formula, M = 64 and 256 */
static void moments_case(tl_rng *r, uint32_t m, uint32_t n, size_t blocks)
{
    const block_spec b = noise(m, n);
    double *sk = simulate(r, &b, blocks);
    double mean = 0.0;
    for (size_t i = 0; i < blocks; i++)
        mean += sk[i];
    mean /= (double)blocks;
    double c2 = 0.0, c3 = 0.0, c4 = 0.0, c6 = 0.0;
    for (size_t i = 0; i < blocks; i++) {
        const double d = sk[i] - mean, d2 = d * d;
        c2 += d2;
        c3 += d2 * d;
        c4 += d2 * d2;
        c6 += d2 * d2 * d2;
    }
    const double B = (double)blocks;
    c2 /= B;
    c3 /= B;
    c4 /= B;
    c6 /= B;
    const double var = tl_sk_variance(m, n), mu3 = tl_sk_central_moment(m, n, 3);
    /* standard errors of the sample mean, variance and third moment */
    const double se_mean = sqrt(var / B), se_var = sqrt((c4 - c2 * c2) / B),
                 se_mu3 = sqrt((c6 - c3 * c3 - 6.0 * c4 * c2 + 9.0 * c2 * c2 * c2) / B);
    printf("    M = %u, N = %u, %zu blocks: mean %.5f (1, se %.5f); variance %.5f (formula %.5f, se %.2f%%); "
           "mu3 %.6f (formula %.6f, se %.6f)\n",
           m, n, blocks, mean, se_mean, c2, var, 100.0 * se_var / var, c3, mu3, se_mu3);
    TL_ASSERT_NEAR(mean, 1.0, NSIG * se_mean);
    TL_ASSERT_NEAR(c2 / var, 1.0, 0.05);     /* the brief's 5% */
    assert_true(0.05 * var > 4.0 * se_var);  /* ... is at least four standard errors */
    TL_ASSERT_NEAR(c2, var, NSIG * se_var);  /* and the closer check */
    TL_ASSERT_NEAR(c3, mu3, NSIG * se_mu3);
    free(sk);
}

static void test_mc_mean_variance(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk mean/variance", 64256));
    moments_case(&r, 64, 1, 200000);
    moments_case(&r, 256, 1, 100000);
}

/* brief test 2: each tail of tl_sk_thresholds at its configured rate */
static void test_mc_false_alarm(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk false alarm", 27));
    const uint32_t ms[] = {64, 256, 1024};
    const double fas[] = {0.0027, 0.01};
    const size_t blocks = 500000;
    for (size_t i = 0; i < 3; i++) {
        const block_spec b = noise(ms[i], 1);
        double *sk = simulate(&r, &b, blocks);
        for (size_t j = 0; j < 2; j++) {
            double lo, hi;
            assert_int_equal(tl_sk_thresholds(ms[i], 1, fas[j], &lo, &hi), 0);
            const size_t nl = count_below(sk, blocks, lo), nh = count_above(sk, blocks, hi);
            const double p = fas[j] / 2.0, zl = binomial_z(nl, blocks, p), zh = binomial_z(nh, blocks, p);
            printf("    M = %4u, false alarm %.4f, %zu blocks: [%.5f, %.5f]  below %.6f  above %.6f  "
                   "(each %.6f +- %.6f; z %+.2f %+.2f)\n",
                   ms[i], fas[j], blocks, lo, hi, (double)nl / (double)blocks, (double)nh / (double)blocks, p,
                   sqrt(p * (1.0 - p) / (double)blocks), zl, zh);
            assert_true(fabs(zl) <= NSIG);
            assert_true(fabs(zh) <= NSIG);
            /* the three-moment Pearson type III on the same blocks */
            double lo3, hi3;
            assert_int_equal(tl_sk_thresholds_pearson3(ms[i], 1, fas[j], &lo3, &hi3), 0);
            const size_t nl3 = count_below(sk, blocks, lo3), nh3 = count_above(sk, blocks, hi3);
            const double zl3 = binomial_z(nl3, blocks, p), zh3 = binomial_z(nh3, blocks, p);
            printf("      pearson III:                   [%.5f, %.5f]  below %.6f  above %.6f  (z %+.1f %+.1f)\n", lo3,
                   hi3, (double)nl3 / (double)blocks, (double)nh3 / (double)blocks, zl3, zh3);
            if (fas[j] < 0.005 && ms[i] <= 256)
                assert_true(zl3 > NSIG); /* its lower tail is far too heavy (z > 30 at these M) */
        }
        free(sk);
    }
}

/* x with tl_sk_prob_below(m, n, x) = p, by bisection (it is increasing) */
static double lower_point(uint32_t m, uint32_t n, double p)
{
    double a = 1e-9, b = 1.0 - 0.5 * sqrt(tl_sk_variance(m, n));
    for (int i = 0; i < 100; i++) {
        const double mid = 0.5 * (a + b), v = tl_sk_prob_below(m, n, mid);
        assert_false(isnan(v));
        if (v < p)
            a = mid;
        else
            b = mid;
    }
    return 0.5 * (a + b);
}

/* the saddlepoint lower tail also holds below the type IV region, where
 * tl_sk_thresholds refuses (M = 8 and 16, N = 1) */
static void test_mc_lower_tail_small_m(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk lower tail, small M", 816));
    const uint32_t ms[] = {8, 16};
    const double ps[] = {0.00135, 0.005};
    const size_t blocks = 500000;
    for (size_t i = 0; i < 2; i++) {
        const block_spec b = noise(ms[i], 1);
        double *sk = simulate(&r, &b, blocks);
        for (size_t j = 0; j < 2; j++) {
            const double x = lower_point(ms[i], 1, ps[j]);
            const size_t c = count_below(sk, blocks, x);
            const double z = binomial_z(c, blocks, ps[j]);
            printf("    M = %2u: P(SK < %.5f) = %.5f (saddlepoint), %.6f of %zu blocks (z %+.2f)\n", ms[i], x, ps[j],
                   (double)c / (double)blocks, blocks, z);
            assert_true(fabs(z) <= NSIG);
        }
        free(sk);
    }
}

/* brief test 3: a Gaussian 1 +- z sigma threshold (and the three-moment
 * Pearson type III) miss at M = 64; ours does not */
static void test_mc_gaussian_threshold_fails(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk gaussian threshold", 3));
    const uint32_t m = 64;
    const size_t blocks = 500000;
    const double fa = 0.0027, p = fa / 2.0, z = normal_upper_point(p);
    const block_spec b = noise(m, 1);
    double *sk = simulate(&r, &b, blocks);
    const double sd = sqrt(tl_sk_variance(m, 1));
    double lo, hi, lo3, hi3;
    assert_int_equal(tl_sk_thresholds(m, 1, fa, &lo, &hi), 0);
    assert_int_equal(tl_sk_thresholds_pearson3(m, 1, fa, &lo3, &hi3), 0);
    const struct {
        const char *name;
        double lo, hi;
    } c[3] = {{"gaussian", 1.0 - z * sd, 1.0 + z * sd}, {"pearson III", lo3, hi3}, {"tl_sk_thresholds", lo, hi}};
    double zz[3][2];
    for (int i = 0; i < 3; i++) {
        const size_t nl = count_below(sk, blocks, c[i].lo), nh = count_above(sk, blocks, c[i].hi);
        zz[i][0] = binomial_z(nl, blocks, p);
        zz[i][1] = binomial_z(nh, blocks, p);
        printf("    M = 64, false alarm 0.0027 (z = %.4f): %-16s [%.4f, %.4f]  below %.6f  above %.6f  "
               "(nominal %.6f each; z %+.1f %+.1f)\n",
               z, c[i].name, c[i].lo, c[i].hi, (double)nl / (double)blocks, (double)nh / (double)blocks, p, zz[i][0],
               zz[i][1]);
    }
    assert_true(fabs(zz[0][0]) > NSIG && fabs(zz[0][1]) > NSIG); /* Gaussian: both tails wrong */
    assert_true(fabs(zz[1][0]) > NSIG);                          /* Pearson III: lower tail wrong */
    assert_true(fabs(zz[2][0]) <= NSIG && fabs(zz[2][1]) <= NSIG);
    free(sk);
}

static double flagged_fraction(tl_rng *r, const block_spec *b, size_t blocks, double lo, double hi, int upper,
                               double *mean)
{
    size_t c = 0;
    double s = 0.0;
    for (size_t i = 0; i < blocks; i++) {
        const double v = block_sk(r, b);
        s += v;
        c += upper ? v > hi : v < lo;
    }
    *mean = s / (double)blocks;
    return (double)c / (double)blocks;
}

/* brief test 4a: a burst of 10% duty cycle.
 * Large-M mean [computed]: powers exponential with mean mu_j, E P^2 =
 * 2 mu_j^2, so M S2 / S1^2 -> 2 M sum mu^2 / (sum mu)^2 and
 *     SK -> 1 + 2 d (1 - d) s^2 / (1 + d s)^2
 * for a fraction d of the powers raised by a factor 1 + s. For d = 0.1,
 * s = 1 this is 1.149, about one standard deviation (0.124) above 1:
 * the upper threshold at 0.0027 (1.496) is 2.8 deviations further. */
static void test_mc_burst(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk burst", 10));
    const uint32_t m = 256, on = 26; /* 26 of 256 powers: duty cycle 10.2% */
    const double d = (double)on / (double)m;
    double lo, hi;
    assert_int_equal(tl_sk_thresholds(m, 1, 0.0027, &lo, &hi), 0);
    const size_t blocks = 100000;
    block_spec b = noise(m, 1);
    b.burst = on;
    b.burst_gain = 2.0; /* burst power equal to the noise */
    double mean;
    const double f1 = flagged_fraction(&r, &b, blocks, lo, hi, 1, &mean);
    const double want1 = 1.0 + 2.0 * d * (1.0 - d) / ((1.0 + d) * (1.0 + d));
    printf("    M = 256, duty %.3f, burst power = noise: mean SK %.4f (large-M %.4f), flagged above %.5f in %.4f "
           "of %zu blocks\n",
           d, mean, want1, hi, f1, blocks);
    /* the mean against the large-M value: the finite-M correction is
     * O(1/M) (the ratio S2 / S1^2), 0.01 allowed */
    TL_ASSERT_NEAR(mean, want1, 0.01);
    /* detected well above the false-alarm rate, but nowhere near every block */
    assert_true(f1 > 5.0 * 0.00135);
    assert_true(f1 < 0.2);
    /* scan the burst power: where is half, and 95%, of the blocks flagged? */
    const double gains[] = {2, 3, 4, 5, 6, 8, 10, 13, 16, 20, 25, 32, 40, 50, 64};
    const size_t ng = sizeof gains / sizeof gains[0], scan = 20000;
    double f[sizeof gains / sizeof gains[0]], mean_s[sizeof gains / sizeof gains[0]];
    double s50 = NAN, s95 = NAN;
    for (size_t i = 0; i < ng; i++) {
        b.burst_gain = gains[i];
        f[i] = flagged_fraction(&r, &b, scan, lo, hi, 1, &mean_s[i]);
        const double s = gains[i] - 1.0;
        printf("      burst/noise %5.1f: mean SK %.3f (large-M %.3f), flagged %.4f\n", s, mean_s[i],
               1.0 + 2.0 * d * (1.0 - d) * s * s / ((1.0 + d * s) * (1.0 + d * s)), f[i]);
        if (i > 0 && isnan(s50) && f[i - 1] < 0.5 && f[i] >= 0.5)
            s50 = gains[i - 1] - 1.0 + (0.5 - f[i - 1]) / (f[i] - f[i - 1]) * (gains[i] - gains[i - 1]);
        if (isnan(s95) && f[i] >= 0.95)
            s95 = s;
    }
    printf("    burst-to-noise power for 50%% flagged: %.2f; first scanned value with >= 95%%: %.0f\n", s50, s95);
    /* the 50% point, against the large-M mean reaching hi: 1 + 2 d (1 - d)
     * s^2 / (1 + d s)^2 = hi, i.e. x = sqrt((hi - 1) / (2 d (1 - d))),
     * s = x / (1 - d x); the SK distribution under a burst is skewed and
     * wider than under noise, so only within a factor 1.5 */
    const double x = sqrt((hi - 1.0) / (2.0 * d * (1.0 - d))), s50_pred = x / (1.0 - d * x);
    printf("    large-M mean at the threshold: burst/noise %.2f\n", s50_pred);
    assert_true(s50 > s50_pred / 1.5 && s50 < s50_pred * 1.5);
    assert_true(s95 >= 3.0 && s95 <= 63.0); /* reached inside the scan, above the 50% point */
}

/* brief test 4b: a steady carrier.
 * Large-M mean [computed]: P = |A + n|^2 with |A|^2 = c, E|n|^2 = 1:
 * E P = 1 + c, E P^2 = c^2 + 4 c + 2, so SK -> E P^2 / (E P)^2 - 1 =
 * (1 + 2 c) / (1 + c)^2: 0.1736 at c = 10, 0.0197 at c = 100. It crosses a
 * lower threshold L at c = ((1 - L) + sqrt(1 - L)) / L. */
static void test_mc_carrier(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk carrier", 100));
    const uint32_t m = 256;
    double lo, hi;
    assert_int_equal(tl_sk_thresholds(m, 1, 0.0027, &lo, &hi), 0);
    const size_t blocks = 10000;
    const double cnrs[] = {10.0, 100.0};
    for (int i = 0; i < 2; i++) {
        block_spec b = noise(m, 1);
        b.carrier = sqrt(cnrs[i]);
        double mean;
        const double f = flagged_fraction(&r, &b, blocks, lo, hi, 0, &mean);
        const double want = (1.0 + 2.0 * cnrs[i]) / ((1.0 + cnrs[i]) * (1.0 + cnrs[i]));
        printf("    M = 256, CNR %.0f: mean SK %.4f (large-M %.4f), flagged below %.4f in %.4f of %zu blocks\n",
               cnrs[i], mean, want, lo, f, blocks);
        TL_ASSERT_NEAR(mean, want, 0.01); /* O(1/M) finite-M correction */
        assert_true(f >= 0.999);
    }
    /* scan CNR from 0.1 to 10, 16 steps per decade */
    const size_t scan = 10000;
    double prev_f = 0.0, prev_c = 0.0, c50 = NAN;
    for (int i = 0; i <= 32; i++) {
        const double c = 0.1 * pow(10.0, i / 16.0);
        block_spec b = noise(m, 1);
        b.carrier = sqrt(c);
        double mean;
        const double f = flagged_fraction(&r, &b, scan, lo, hi, 0, &mean);
        if (i % 4 == 0 || (f >= 0.5 && isnan(c50)))
            printf("      CNR %7.4f (%+5.1f dB): mean SK %.4f, flagged %.4f\n", c, 10.0 * log10(c), mean, f);
        if (i > 0 && isnan(c50) && prev_f < 0.5 && f >= 0.5) /* interpolate in log CNR */
            c50 = prev_c * pow(c / prev_c, (0.5 - prev_f) / (f - prev_f));
        prev_f = f;
        prev_c = c;
    }
    const double c_pred = ((1.0 - lo) + sqrt(1.0 - lo)) / lo;
    printf("    CNR for 50%% flagged at M = 256, false alarm 0.0027: %.3f (%.2f dB); large-M mean at the "
           "threshold %.3f\n",
           c50, 10.0 * log10(c50), c_pred);
    assert_true(c50 > 0.1 && c50 < 10.0);
    assert_true(c50 > c_pred / 1.5 && c50 < c_pred * 1.5);
}

/* brief test 5: N > 1 */
static void test_mc_summed_spectra(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("sk N > 1", 4));
    moments_case(&r, 64, 4, 100000);
    moments_case(&r, 16, 16, 100000);
    /* and the thresholds' tails for N = 4 */
    const size_t blocks = 300000;
    const block_spec b = noise(64, 4);
    double *sk = simulate(&r, &b, blocks);
    double lo, hi;
    assert_int_equal(tl_sk_thresholds(64, 4, 0.01, &lo, &hi), 0);
    const size_t nl = count_below(sk, blocks, lo), nh = count_above(sk, blocks, hi);
    const double zl = binomial_z(nl, blocks, 0.005), zh = binomial_z(nh, blocks, 0.005);
    printf("    M = 64, N = 4, false alarm 0.01, %zu blocks: [%.5f, %.5f] below %.6f above %.6f (z %+.2f %+.2f)\n",
           blocks, lo, hi, (double)nl / (double)blocks, (double)nh / (double)blocks, zl, zh);
    assert_true(fabs(zl) <= NSIG && fabs(zh) <= NSIG);
    free(sk);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_estimate_values),
        cmocka_unit_test(test_moments_exact),
        cmocka_unit_test(test_thresholds_reference),
        cmocka_unit_test(test_mc_mean_variance),
        cmocka_unit_test(test_mc_false_alarm),
        cmocka_unit_test(test_mc_lower_tail_small_m),
        cmocka_unit_test(test_mc_gaussian_threshold_fails),
        cmocka_unit_test(test_mc_burst),
        cmocka_unit_test(test_mc_carrier),
        cmocka_unit_test(test_mc_summed_spectra),
    };
    return cmocka_run_group_tests_name("spectral_kurtosis", tests, NULL, NULL);
}
