/*
 * spectral_kurtosis.h - the ground-side spectral kurtosis (SK) estimator,
 * its moments under Gaussian noise, and thresholds for a false-alarm rate.
 *
 * The firmware accumulates, per channel of an auto-power and per block of
 * M power values P_1..P_M, S1 = sum P_j and S2 = sum P_j^2. Each P_j is one
 * raw spectrum's |X|^2 (N = 1) or the sum of N raw spectra (N > 1); the
 * shape factor d is 1 (complex FFT power) throughout this module. The
 * generalized SK estimator (G. M. Nita and D. E. Gary, "The generalized
 * spectral kurtosis estimator", MNRAS 406, L60, 2010) is
 *
 *     SK = (M N + 1) / (M - 1) * (M S2 / S1^2 - 1),
 *
 * dimensionless, in [0, M N + 1], with E[SK] = 1 exactly for Gaussian
 * noise (P_j i.i.d. Gamma(N), any scale). A steady carrier drives it below
 * 1, intermittent power (bursts, pulses) above 1.
 *
 * Moments: under Gaussian noise P_j / S1 is Dirichlet(N, ..., N) and
 * independent of S1, so the central moments of SK are exact rational
 * functions of M and N (docs/spectral-kurtosis.md derives them). With
 * K = M N:
 *     mu2 = 2 N (N + 1) M^2 / ((M - 1)(K + 2)(K + 3))
 *     mu3 = 8 N (N + 1) M^3 (M N^2 + 4 M N - 5 N - 2)
 *           / ((M - 1)^2 (K + 2)(K + 3)(K + 4)(K + 5))
 *     mu4 = 12 N (N + 1) M^4 Q(M, N) / ((M - 1)^3 (K + 2) ... (K + 7)),
 *     Q = M^3 N^4 + M^3 N^3 + 3 M^2 N^4 + 68 M^2 N^3 + 125 M^2 N^2
 *         - 93 M N^3 - 245 M N^2 - 32 M N + 84 N^2 + 48 N + 24.
 * For N = 1, mu2 = 4 M^2 / ((M - 1)(M + 2)(M + 3)) -> 4 / M.
 *
 * Thresholds: each tail holds half the false-alarm rate. The lower tail
 * comes from a saddlepoint approximation of the exact conditional law, the
 * upper tail from a Pearson type IV law with the exact first four moments
 * (a three-moment Pearson type III fit misses both tails; see
 * docs/spectral-kurtosis.md). All functions are pure (no state, no
 * allocation) and thread-safe.
 */
#ifndef TL_HOST_SPECTRAL_KURTOSIS_H
#define TL_HOST_SPECTRAL_KURTOSIS_H

#include <stdint.h>

/* Flag values written by tl_sk_flag. */
enum {
    TL_SK_INSIDE = 0,  /* lo <= SK <= hi */
    TL_SK_LOW = 1,     /* SK < lo: power steadier than noise (a carrier) */
    TL_SK_HIGH = 2,    /* SK > hi: power more intermittent than noise (a burst) */
    TL_SK_INVALID = 3  /* SK not defined: S1 <= 0, S2 < 0 or either not a number */
};

/* The generalized SK estimator of one channel and block.
 * s1: sum of the M power values (any unit, > 0); s2: sum of their squares
 * (the same unit squared, >= 0); m: power values per block (>= 2); n: raw
 * spectra summed in each power value (>= 1). d = 1.
 * Returns SK (dimensionless); NAN when s1 <= 0, s2 < 0, either is not a
 * number, m < 2 or n < 1. Never clamps: values outside [0, M N + 1] (which
 * exact sums cannot give) pass through. */
double tl_sk_estimate(double s1, double s2, uint32_t m, uint32_t n);

/* Variance of SK under Gaussian noise (the mu2 above), exact for every
 * m >= 2 and n >= 1; NAN otherwise. */
double tl_sk_variance(uint32_t m, uint32_t n);

/* Central moment of the given order (2, 3 or 4) of SK under Gaussian
 * noise, exact (the formulas above); NAN for another order, m < 2 or
 * n < 1. Skewness = mu3 / mu2^1.5 (> 0 for every m, n), kurtosis =
 * mu4 / mu2^2. */
double tl_sk_central_moment(uint32_t m, uint32_t n, unsigned order);

/* P(SK < t) under Gaussian noise, by a saddlepoint approximation of the
 * exact conditional law (spectral_kurtosis.c; relative error O(1/M)).
 * Monte Carlo confirms it within binomial error at tails of 0.00135 and
 * 0.005 for M = 8, 16, 64, 256 and 1024 (tests/test_spectral_kurtosis.c).
 * Defined for
 * t <= 1 - 0.01 sqrt(mu2) (the lower tail); 0 for t <= 0; NAN above
 * that range, for m < 2 or n < 1. */
double tl_sk_prob_below(uint32_t m, uint32_t n, double t);

/* P(SK > t) under Gaussian noise from the Pearson type IV law with the
 * exact mu2, mu3, mu4 (spectral_kurtosis.c), any t. NAN when those
 * moments do not define a type IV law, and for m < 2 or n < 1. The type
 * IV region is m >= 24 for n = 1; m >= 16, 14, 14, 14, 16, 17, 20, 24,
 * 30, 40, 60, 120 for n = 2 to 13 (every larger m up to 2^32 - 1
 * included); no m for n >= 14, where the moments fall in the type VI
 * region. */
double tl_sk_prob_above(uint32_t m, uint32_t n, double t);

/* Two-sided thresholds for a false-alarm rate `false_alarm` (probability
 * per channel and block under Gaussian noise that SK falls outside
 * [lo, hi], in (0, 0.5]), half in each tail: *lo solves
 * tl_sk_prob_below(lo) = false_alarm / 2 and *hi solves
 * tl_sk_prob_above(hi) = false_alarm / 2. lo is >= 0 and below 1, hi
 * above 1. Monte Carlo confirms each tail within its binomial error for
 * M = 64, 256 and 1024 (tests/test_spectral_kurtosis.c).
 * Returns 0, or -1 (lo and hi untouched) for m < 2, n < 1, false_alarm
 * outside (0, 0.5] or not a number, null lo or hi, or (m, n) outside the
 * Pearson type IV region listed at tl_sk_prob_above. */
int tl_sk_thresholds(uint32_t m, uint32_t n, double false_alarm, double *lo, double *hi);

/* The three-moment alternative, for comparison only: a Pearson type III
 * (shifted gamma) law matched to mean 1 and the exact mu2 and mu3 (shape
 * 4 mu2^3 / mu3^2, scale mu3 / (2 mu2), origin 1 - 2 mu2^2 / mu3), each
 * tail false_alarm / 2. Its lower tail is ten times too likely at
 * M = 64 and about 20% too likely at M = 1024, its upper tail 40% and
 * 30% (docs/spectral-kurtosis.md); do not flag with it. Returns as tl_sk_thresholds, without the type IV condition. */
int tl_sk_thresholds_pearson3(uint32_t m, uint32_t n, double false_alarm, double *lo, double *hi);

/* SK and a flag for `channels` channels of one block: sk_out[c] =
 * tl_sk_estimate(s1[c], s2[c], m, n) and flag_out[c] one of TL_SK_*:
 * TL_SK_LOW when SK < lo, TL_SK_HIGH when SK > hi, TL_SK_INVALID when SK is
 * not defined (or m < 2, n < 1), else TL_SK_INSIDE. sk_out may be NULL
 * (flags only); s1, s2 and flag_out hold `channels` elements. Writes
 * nothing else. */
void tl_sk_flag(const double *s1, const double *s2, uint32_t channels, uint32_t m, uint32_t n, double lo, double hi,
                double *sk_out, uint8_t *flag_out);

/* The number of flagged blocks that masks a channel: the smallest k >= 1
 * with P(Binomial(blocks, false_alarm) >= k) <= 1e-3, at most blocks (so a
 * single false alarm never masks a channel of a long run). */
uint32_t tl_sk_mask_blocks(uint32_t blocks, double false_alarm);

#endif
