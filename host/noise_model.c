/* noise_model.c - analytic round-off noise (see noise_model.h). */
#include "noise_model.h"

#include <fftw3.h>
#include <math.h>
#include "rng.h"
#include <stdlib.h>
#include "tl_fft.h"
#include "tl_twiddle.h"

void tl_round_error_moments(unsigned bits, tl_rounding mode, double *mean, double *mean_sq)
{
    if (bits == 0u) {
        *mean = 0.0;
        *mean_sq = 0.0;
        return;
    }
    if (bits > 16u) { /* indistinguishable from the continuous limit */
        tl_round_error_moments_cont(mode, mean, mean_sq);
        if (mode == TL_ROUND_HALF_UP)
            *mean = ldexp(1.0, -(int)bits - 1);
        else if (mode == TL_ROUND_TRUNCATE)
            *mean = -0.5 + ldexp(1.0, -(int)bits - 1);
        return;
    }
    /* enumerate the low bits over two periods of the result's parity */
    const int64_t span = (int64_t)1 << (bits + 1u);
    double s = 0.0, s2 = 0.0;
    for (int64_t v = 0; v < span; v++) {
        const double e = (double)tl_round_shr_s64(v, bits, mode) - ldexp((double)v, -(int)bits);
        s += e;
        s2 += e * e;
    }
    *mean = s / (double)span;
    *mean_sq = s2 / (double)span;
}

void tl_round_error_moments_cont(tl_rounding mode, double *mean, double *mean_sq)
{
    if (mode == TL_ROUND_TRUNCATE) {
        *mean = -0.5;
        *mean_sq = 1.0 / 3.0;
    } else {
        *mean = 0.0;
        *mean_sq = 1.0 / 12.0;
    }
}

int tl_noise_predict(uint32_t points, uint32_t scale_mask, tl_rounding mode, unsigned pfb_shift, unsigned det_shift,
                     tl_noise_prediction *out)
{
    tl_fft *f = malloc(sizeof *f);
    if (f == NULL || out == NULL) {
        free(f);
        return -1;
    }
    if (tl_fft_init(f, points, scale_mask, mode) != TL_OK) {
        free(f);
        return -1;
    }
    double cm, cms;
    tl_round_error_moments_cont(mode, &cm, &cms);
    /* noise power added per complex output at each stage, then propagated */
    double noise = 0.0; /* at the current stage's output */
    uint32_t n_prev = 1;
    for (uint32_t st = 0; st < f->stages; st++) {
        const uint32_t r = f->radix[st];
        const double gain = (double)r / ldexp(1.0, 2 * f->shift[st]);
        noise *= gain;
        double dm, dms;
        tl_round_error_moments(f->shift[st], mode, &dm, &dms);
        /* fraction of outputs whose twiddles are all trivial */
        double trivial = 1.0;
        if (r == 4u) {
            uint32_t ntriv = 0;
            const int32_t *tw = &f->tw[f->tw_offset[st]];
            for (uint32_t k = 0; k < n_prev; k++) {
                int all = 1;
                for (uint32_t q = 0; q < 3u; q++) {
                    const int32_t re = tw[6u * k + 2u * q], im = tw[6u * k + 2u * q + 1u];
                    all = all && (re == 0 || im == 0);
                }
                ntriv += (uint32_t)all;
            }
            trivial = (double)ntriv / (double)n_prev;
        }
        noise += 2.0 * (trivial * dms + (1.0 - trivial) * cms);
        n_prev *= r;
    }
    /* split: X = Z_k (1 - jW)/2 + conj(Z_m) (1 + jW)/2: white-noise gain 1 */
    noise = noise / ldexp(1.0, 2 * f->split_shift) + 2.0 * cms;
    out->fft_noise = noise;
    out->fft_gain = (double)points / ldexp(1.0, 2 * (int)f->total_shift);
    double pm, pms;
    tl_round_error_moments(pfb_shift, mode, &pm, &pms);
    out->pfb_noise = pms * out->fft_gain;
    out->total_noise = out->fft_noise + out->pfb_noise;
    double dm, dms;
    tl_round_error_moments(det_shift, mode, &dm, &dms);
    (void)dms;
    out->det_mean = dm * ldexp(1.0, (int)det_shift);
    free(f);
    return 0;
}

/* The firmware's FFT algorithm in double: same permutation, stage order,
 * twiddle values (Q29 / 2^29) and scaling, no rounding or saturation. */
static void sim_fft(const tl_fft *f, const double *y, double *X, double *w)
{
    const uint32_t L = f->size;
    const double one = ldexp(1.0, (int)TL_TWIDDLE_FRAC_BITS);
    for (uint32_t pos = 0; pos < L; pos++) {
        w[2u * pos] = y[2u * f->perm[pos]];
        w[2u * pos + 1u] = y[2u * f->perm[pos] + 1u];
    }
    uint32_t n_prev = 1;
    for (uint32_t st = 0; st < f->stages; st++) {
        const double sc = ldexp(1.0, -(int)f->shift[st]);
        if (f->radix[st] == 2u) {
            for (uint32_t b = 0; b < L; b += 2u) {
                const double ar = w[2u * b], ai = w[2u * b + 1u], br = w[2u * b + 2u], bi = w[2u * b + 3u];
                w[2u * b] = (ar + br) * sc;
                w[2u * b + 1u] = (ai + bi) * sc;
                w[2u * b + 2u] = (ar - br) * sc;
                w[2u * b + 3u] = (ai - bi) * sc;
            }
        } else {
            const int32_t *tw = &f->tw[f->tw_offset[st]];
            for (uint32_t base = 0; base < L; base += 4u * n_prev) {
                for (uint32_t k = 0; k < n_prev; k++) {
                    double tr[4], ti[4];
                    for (uint32_t q = 0; q < 4u; q++) {
                        const double ar = w[2u * (base + q * n_prev + k)], ai = w[2u * (base + q * n_prev + k) + 1u];
                        const double cr = q ? tw[6u * k + 2u * (q - 1u)] / one : 1.0;
                        const double ci = q ? tw[6u * k + 2u * (q - 1u) + 1u] / one : 0.0;
                        tr[q] = ar * cr - ai * ci;
                        ti[q] = ar * ci + ai * cr;
                    }
                    const double out_r[4] = { tr[0] + tr[1] + tr[2] + tr[3], tr[0] + ti[1] - tr[2] - ti[3],
                                              tr[0] - tr[1] + tr[2] - tr[3], tr[0] - ti[1] - tr[2] + ti[3] };
                    const double out_i[4] = { ti[0] + ti[1] + ti[2] + ti[3], ti[0] - tr[1] - ti[2] + tr[3],
                                              ti[0] - ti[1] + ti[2] - ti[3], ti[0] + tr[1] - ti[2] - tr[3] };
                    for (uint32_t p = 0; p < 4u; p++) {
                        w[2u * (base + p * n_prev + k)] = out_r[p] * sc;
                        w[2u * (base + p * n_prev + k) + 1u] = out_i[p] * sc;
                    }
                }
            }
        }
        n_prev *= f->radix[st];
    }
    const double sc = ldexp(1.0, -(int)f->split_shift);
    for (uint32_t k = 0; k < L; k++) {
        const uint32_t km = (L - k) % L;
        const double zr = w[2u * k], zi = w[2u * k + 1u], mr = w[2u * km], mi = -w[2u * km + 1u];
        const double ar = zr + mr, ai = zi + mi, br = zr - mr, bi = zi - mi;
        /* W_N^k from the table, folded as the firmware does for k > L/2 */
        double c, sn;
        if (k <= L / 2u) {
            c = f->split_tw[2u * k] / one;
            sn = -f->split_tw[2u * k + 1u] / one;
        } else {
            c = -f->split_tw[2u * km] / one;
            sn = -f->split_tw[2u * km + 1u] / one;
        }
        X[2u * k] = (ar + c * bi - sn * br) / 2.0 * sc;
        X[2u * k + 1u] = (ai - c * br - sn * bi) / 2.0 * sc;
    }
}

int tl_twiddle_gain_error(uint32_t points, uint32_t scale_mask, uint32_t lo, uint32_t hi, unsigned trials,
                          double *mean_gain_err)
{
    tl_fft *f = malloc(sizeof *f);
    if (f == NULL || mean_gain_err == NULL || lo >= hi || hi > points / 2u ||
        tl_fft_init(f, points, scale_mask, TL_ROUND_HALF_EVEN) != TL_OK) {
        free(f);
        return -1;
    }
    double *y = fftw_malloc(sizeof(double) * points);
    double *X = calloc(points, sizeof(double)), *w = calloc(points, sizeof(double));
    fftw_complex *Z = fftw_malloc(sizeof(fftw_complex) * (points / 2u + 1u));
    fftw_plan plan = fftw_plan_dft_r2c_1d((int)points, y, Z, FFTW_ESTIMATE);
    tl_rng rng;
    tl_rng_seed(&rng, 0x7477u);
    const double sc = ldexp(1.0, -(int)f->total_shift);
    double num = 0.0, den = 0.0;
    for (unsigned t = 0; t < trials; t++) {
        for (uint32_t n = 0; n < points; n++)
            y[n] = tl_rng_normal(&rng);
        sim_fft(f, y, X, w);
        fftw_execute(plan);
        for (uint32_t k = lo; k < hi; k++) {
            const double rr = Z[k][0] * sc, ri = Z[k][1] * sc;
            const double ref = rr * rr + ri * ri;
            /* ratio of sums: the per-trial ratio has a heavy tail where |X| is small */
            num += X[2u * k] * X[2u * k] + X[2u * k + 1u] * X[2u * k + 1u] - ref;
            den += ref;
        }
    }
    *mean_gain_err = num / den;
    fftw_destroy_plan(plan);
    fftw_free(y);
    fftw_free(Z);
    free(X);
    free(w);
    free(f);
    return 0;
}

int tl_twiddle_gain_channels(uint32_t points, uint32_t scale_mask, unsigned trials, double *g)
{
    tl_fft *f = malloc(sizeof *f);
    if (f == NULL || g == NULL || trials == 0u || tl_fft_init(f, points, scale_mask, TL_ROUND_HALF_EVEN) != TL_OK) {
        free(f);
        return -1;
    }
    const uint32_t L = points / 2u;
    double *y = fftw_malloc(sizeof(double) * points);
    double *X = calloc(points, sizeof(double)), *w = calloc(points, sizeof(double));
    double *num = calloc(L, sizeof(double)), *den = calloc(L, sizeof(double));
    fftw_complex *Z = fftw_malloc(sizeof(fftw_complex) * (L + 1u));
    fftw_plan plan = fftw_plan_dft_r2c_1d((int)points, y, Z, FFTW_ESTIMATE);
    tl_rng rng;
    tl_rng_seed(&rng, 0x7478u);
    const double sc = ldexp(1.0, -(int)f->total_shift);
    for (unsigned t = 0; t < trials; t++) {
        for (uint32_t n = 0; n < points; n++)
            y[n] = tl_rng_normal(&rng);
        sim_fft(f, y, X, w);
        fftw_execute(plan);
        for (uint32_t k = 0; k < L; k++) {
            const double rr = Z[k][0] * sc, ri = Z[k][1] * sc;
            num[k] += X[2u * k] * X[2u * k] + X[2u * k + 1u] * X[2u * k + 1u] - (rr * rr + ri * ri);
            den[k] += rr * rr + ri * ri;
        }
    }
    for (uint32_t k = 0; k < L; k++)
        g[k] = num[k] / den[k];
    fftw_destroy_plan(plan);
    fftw_free(y);
    fftw_free(Z);
    free(X);
    free(w);
    free(num);
    free(den);
    free(f);
    return 0;
}
