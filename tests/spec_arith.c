/* spec_arith.c - the plain statement of the arithmetic spec (see spec_arith.h). */
#include "spec_arith.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "tl_twiddle.h"

static int32_t spec_store(int64_t v, unsigned s, tl_rounding mode, uint32_t *ovf)
{
    int32_t r = tl_sat_s32(tl_round_shr_s64(v, s, mode), ovf);
#if TL_FFT_DATA_BITS < 32
    {
        const unsigned drop = 32u - (unsigned)TL_FFT_DATA_BITS;
        r = (int32_t)(tl_round_shr_s64(r, drop, mode) * ((int64_t)1 << drop));
    }
#endif
    return r;
}

static void spec_radix2(const tl_fft *f, int32_t *w, uint32_t st, uint32_t *ovf)
{
    const unsigned sh = TL_TWIDDLE_FRAC_BITS + f->shift[st];
    for (uint32_t b = 0; b < f->size; b += 2u) {
        const int64_t ar = w[2u * b], ai = w[2u * b + 1u];
        const int64_t br = w[2u * b + 2u], bi = w[2u * b + 3u];
        w[2u * b] = spec_store((ar + br) * TL_TWIDDLE_ONE, sh, f->rounding, ovf);
        w[2u * b + 1u] = spec_store((ai + bi) * TL_TWIDDLE_ONE, sh, f->rounding, ovf);
        w[2u * b + 2u] = spec_store((ar - br) * TL_TWIDDLE_ONE, sh, f->rounding, ovf);
        w[2u * b + 3u] = spec_store((ai - bi) * TL_TWIDDLE_ONE, sh, f->rounding, ovf);
    }
}

static void spec_radix4(const tl_fft *f, int32_t *w, uint32_t st, uint32_t n_prev, uint32_t *ovf)
{
    const uint32_t n_cur = 4u * n_prev;
    const unsigned sh = TL_TWIDDLE_FRAC_BITS + f->shift[st];
    const tl_rounding mode = f->rounding;
    for (uint32_t base = 0; base < f->size; base += n_cur) {
        for (uint32_t k = 0; k < n_prev; k++) {
            /* the twiddles straight from the table, not from the plan */
            int32_t t[6];
            for (uint32_t q = 1; q <= 3u; q++)
                tl_twiddle(q * k * (TL_TWIDDLE_TURN / n_cur), &t[2u * q - 2u], &t[2u * q - 1u]);
            int32_t *p0 = &w[2u * (base + k)];
            int32_t *p1 = p0 + 2u * n_prev;
            int32_t *p2 = p1 + 2u * n_prev;
            int32_t *p3 = p2 + 2u * n_prev;
            const int64_t t0r = (int64_t)p0[0] * TL_TWIDDLE_ONE;
            const int64_t t0i = (int64_t)p0[1] * TL_TWIDDLE_ONE;
            const int64_t t1r = (int64_t)p1[0] * t[0] - (int64_t)p1[1] * t[1];
            const int64_t t1i = (int64_t)p1[0] * t[1] + (int64_t)p1[1] * t[0];
            const int64_t t2r = (int64_t)p2[0] * t[2] - (int64_t)p2[1] * t[3];
            const int64_t t2i = (int64_t)p2[0] * t[3] + (int64_t)p2[1] * t[2];
            const int64_t t3r = (int64_t)p3[0] * t[4] - (int64_t)p3[1] * t[5];
            const int64_t t3i = (int64_t)p3[0] * t[5] + (int64_t)p3[1] * t[4];
            const int64_t s02r = t0r + t2r, s02i = t0i + t2i;
            const int64_t d02r = t0r - t2r, d02i = t0i - t2i;
            const int64_t s13r = t1r + t3r, s13i = t1i + t3i;
            const int64_t d13r = t1r - t3r, d13i = t1i - t3i;
            p0[0] = spec_store(s02r + s13r, sh, mode, ovf);
            p0[1] = spec_store(s02i + s13i, sh, mode, ovf);
            p1[0] = spec_store(d02r + d13i, sh, mode, ovf);
            p1[1] = spec_store(d02i - d13r, sh, mode, ovf);
            p2[0] = spec_store(s02r - s13r, sh, mode, ovf);
            p2[1] = spec_store(s02i - s13i, sh, mode, ovf);
            p3[0] = spec_store(d02r - d13i, sh, mode, ovf);
            p3[1] = spec_store(d02i + d13r, sh, mode, ovf);
        }
    }
}

static void spec_split(const tl_fft *f, const int32_t *Z, int32_t *X, uint32_t *ovf)
{
    const uint32_t L = f->size;
    const unsigned sh = TL_TWIDDLE_FRAC_BITS + 1u + f->split_shift;
    const tl_rounding mode = f->rounding;
    for (uint32_t k = 0; k <= L / 2u; k++) {
        const uint32_t km = (L - k) % L;
        const int64_t zr = Z[2u * k], zi = Z[2u * k + 1u];
        const int64_t mr = Z[2u * km], mi = -(int64_t)Z[2u * km + 1u];
        const int64_t ar = zr + mr, ai = zi + mi;
        const int64_t br = zr - mr, bi = zi - mi;
        int32_t twr, twi;
        tl_twiddle(k * (TL_TWIDDLE_TURN / f->points), &twr, &twi);
        const int64_t c = twr, sn = -(int64_t)twi;
        const int64_t xr = ar * TL_TWIDDLE_ONE + c * bi - sn * br;
        const int64_t xi = ai * TL_TWIDDLE_ONE - c * br - sn * bi;
        X[2u * k] = spec_store(xr, sh, mode, ovf);
        X[2u * k + 1u] = spec_store(xi, sh, mode, ovf);
        if (k != 0u && k != L / 2u) {
            const int64_t ar2 = mr, ai2 = -mi;
            const int64_t cr = zr, ci = -zi;
            const int64_t Ar = ar2 + cr, Ai = ai2 + ci;
            const int64_t Br = ar2 - cr, Bi = ai2 - ci;
            const int64_t yr = Ar * TL_TWIDDLE_ONE + (-c) * Bi - sn * Br;
            const int64_t yi = Ai * TL_TWIDDLE_ONE - (-c) * Br - sn * Bi;
            X[2u * km] = spec_store(yr, sh, mode, ovf);
            X[2u * km + 1u] = spec_store(yi, sh, mode, ovf);
        }
    }
}

void spec_fft_execute(const tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u])
{
    const uint32_t L = f->size;
    int32_t *w = malloc(sizeof *w * 2u * L);
    if (w == NULL)
        abort();
    for (uint32_t pos = 0; pos < L; pos++) {
        const uint32_t n = f->perm[pos];
        w[2u * pos] = y[2u * n];
        w[2u * pos + 1u] = y[2u * n + 1u];
    }
    uint32_t n_prev = 1;
    for (uint32_t st = 0; st < f->stages; st++) {
        uint32_t ovf = 0;
        if (f->radix[st] == 2u)
            spec_radix2(f, w, st, &ovf);
        else
            spec_radix4(f, w, st, n_prev, &ovf);
        tl_count_add(&sat[st], ovf);
        n_prev *= f->radix[st];
    }
    uint32_t ovf = 0;
    spec_split(f, w, X, &ovf);
    tl_count_add(&sat[f->stages], ovf);
    free(w);
}

uint32_t spec_pfb_output(const tl_taps *t, const int16_t *const *frames, tl_rounding mode, int32_t *y)
{
    const uint32_t N = t->points, P = t->taps;
    const unsigned shift = t->shift + TL_PFB_INPUT_FRAC_BITS - TL_PFB_OUTPUT_FRAC_BITS;
    uint32_t ovf = 0;
    for (uint32_t n = 0; n < N; n++) {
        int64_t acc = 0;
        for (uint32_t p = 0; p < P; p++)
            acc += (int64_t)t->coef[p * N + n] * frames[p][n];
        y[n] = tl_sat_s32(tl_round_shr_s64(acc, shift, mode), &ovf);
    }
    return ovf;
}

void spec_fft_masks(uint32_t points, tl_rng *rng, uint32_t masks[5])
{
    uint32_t m = 0; /* log2(points / 2) */
    while ((2u << m) < points)
        m++;
    masks[0] = TL_FFT_SCALE_AUTO;
    masks[1] = 0u;
    masks[2] = (2u << m) - 1u;
    masks[3] = (uint32_t)(tl_rng_u64(rng) & ((2u << m) - 1u));
    masks[4] = (uint32_t)(tl_rng_u64(rng) & ((2u << m) - 1u));
}

void spec_fft_input(int32_t *y, uint32_t points, unsigned kind, tl_rng *rng)
{
    for (uint32_t n = 0; n < points; n++) {
        if (kind == 0u)
            y[n] = (int32_t)lround(ldexp(1.0, 28) * tl_rng_normal(rng));
        else if (kind == 1u)
            y[n] = (int32_t)(uint32_t)tl_rng_u64(rng);
        else
            y[n] = (n & 1u) ? INT32_MIN : INT32_MAX;
    }
    if (kind == 1u)
        y[points / 3u] = INT32_MIN;
}
