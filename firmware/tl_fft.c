/* tl_fft.c - fixed-point real FFT (arithmetic frozen in docs/fixed-point.md). */
#include "tl_fft.h"
#include "tl_twiddle.h"

#define TW_FRAC TL_TWIDDLE_FRAC_BITS

static uint32_t log2u(uint32_t v)
{
    uint32_t r = 0;
    while (v > 1u) {
        v >>= 1;
        r++;
    }
    return r;
}

uint32_t tl_fft_default_mask(uint32_t points)
{
    const uint32_t m = log2u(points / 2u);
    return (1u << m) - 1u;
}

/* Round a butterfly sum to int32 and saturate; TL_FFT_DATA_BITS < 32 narrows
 * the stored word (test-only degraded build). */
static inline int32_t store(int64_t v, unsigned s, tl_rounding mode, uint32_t *ovf)
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

tl_status tl_fft_init(tl_fft *f, uint32_t points, uint32_t scale_mask, tl_rounding rounding)
{
    if (f == NULL)
        return TL_E_NULL;
    if (points < TL_MIN_POINTS || points > TL_MAX_POINTS || (points & (points - 1u)) != 0u)
        return TL_E_POINTS;
    if (rounding != TL_ROUND_TRUNCATE && rounding != TL_ROUND_HALF_UP && rounding != TL_ROUND_HALF_EVEN)
        return TL_E_ROUNDING;
    const uint32_t L = points / 2u;
    const uint32_t m = log2u(L);
    if (scale_mask == TL_FFT_SCALE_AUTO)
        scale_mask = tl_fft_default_mask(points);
    if ((scale_mask >> (m + 1u)) != 0u)
        return TL_E_SCALING;

    f->points = points;
    f->size = L;
    f->log2size = m;
    f->scale_mask = scale_mask;
    f->rounding = rounding;

    /* stage plan: radix-2 first if m is odd, then radix-4 */
    uint32_t s = 0, bit = 0;
    if (m & 1u) {
        f->radix[s] = 2u;
        f->shift[s] = (uint8_t)(scale_mask & 1u);
        bit = 1u;
        s++;
    }
    while (bit < m) {
        f->radix[s] = 4u;
        f->shift[s] = (uint8_t)(((scale_mask >> bit) & 1u) + ((scale_mask >> (bit + 1u)) & 1u));
        bit += 2u;
        s++;
    }
    f->stages = s;
    f->split_shift = (uint8_t)((scale_mask >> m) & 1u);
    f->total_shift = f->split_shift;
    for (uint32_t i = 0; i < s; i++)
        f->total_shift += f->shift[i];

    /* digit reversal: position pos = d_1 + r_1 d_2 + r_1 r_2 d_3 + ...,
     * index n = d_S + r_S d_{S-1} + ... (stage 1 combines the top digit). */
    for (uint32_t pos = 0; pos < L; pos++) {
        uint32_t rem = pos, n = 0;
        for (uint32_t i = 0; i < s; i++) {
            const uint32_t d = rem % f->radix[i];
            rem /= f->radix[i];
            n = n * f->radix[i] + d;
        }
        f->perm[pos] = (uint16_t)n;
    }

    /* radix-4 stage twiddles W_{n_cur}^{qk}, q = 1..3, k < n_prev */
    uint32_t n_prev = 1, off = 0;
    for (uint32_t i = 0; i < s; i++) {
        const uint32_t n_cur = n_prev * f->radix[i];
        f->tw_offset[i] = off;
        if (f->radix[i] == 4u) {
            const uint32_t step = TL_TWIDDLE_TURN / n_cur;
            for (uint32_t k = 0; k < n_prev; k++) {
                for (uint32_t q = 1; q <= 3u; q++) {
                    tl_twiddle(q * k * step, &f->tw[off], &f->tw[off + 1u]);
                    off += 2u;
                }
            }
        }
        n_prev = n_cur;
    }
    /* split twiddles W_N^k, k = 0 .. L/2 */
    const uint32_t step = TL_TWIDDLE_TURN / points;
    for (uint32_t k = 0; k <= L / 2u; k++)
        tl_twiddle(k * step, &f->split_tw[2u * k], &f->split_tw[2u * k + 1u]);
    return TL_OK;
}

static void stage_radix2(tl_fft *f, uint32_t st, uint32_t *ovf)
{
    /* only ever the first stage: n_prev = 1, twiddles trivial */
    int32_t *w = f->work;
    const unsigned sh = TW_FRAC + f->shift[st];
    for (uint32_t b = 0; b < f->size; b += 2u) {
        const int64_t ar = w[2u * b], ai = w[2u * b + 1u];
        const int64_t br = w[2u * b + 2u], bi = w[2u * b + 3u];
        /* (a +- b) * 2^29, rounded by 29 + shift bits */
        w[2u * b] = store((ar + br) * TL_TWIDDLE_ONE, sh, f->rounding, ovf);
        w[2u * b + 1u] = store((ai + bi) * TL_TWIDDLE_ONE, sh, f->rounding, ovf);
        w[2u * b + 2u] = store((ar - br) * TL_TWIDDLE_ONE, sh, f->rounding, ovf);
        w[2u * b + 3u] = store((ai - bi) * TL_TWIDDLE_ONE, sh, f->rounding, ovf);
    }
}

static void stage_radix4(tl_fft *f, uint32_t st, uint32_t n_prev, uint32_t *ovf)
{
    int32_t *w = f->work;
    const uint32_t n_cur = 4u * n_prev;
    const unsigned sh = TW_FRAC + f->shift[st];
    const tl_rounding mode = f->rounding;
    const int32_t *tw = &f->tw[f->tw_offset[st]];
    for (uint32_t base = 0; base < f->size; base += n_cur) {
        for (uint32_t k = 0; k < n_prev; k++) {
            const int32_t *t = &tw[6u * k];
            int32_t *p0 = &w[2u * (base + k)];
            int32_t *p1 = p0 + 2u * n_prev;
            int32_t *p2 = p1 + 2u * n_prev;
            int32_t *p3 = p2 + 2u * n_prev;
            /* t_q = a_q * w_q in Q29, exact in int64 */
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
            p0[0] = store(s02r + s13r, sh, mode, ovf);
            p0[1] = store(s02i + s13i, sh, mode, ovf);
            p1[0] = store(d02r + d13i, sh, mode, ovf); /* d02 - j d13 */
            p1[1] = store(d02i - d13r, sh, mode, ovf);
            p2[0] = store(s02r - s13r, sh, mode, ovf);
            p2[1] = store(s02i - s13i, sh, mode, ovf);
            p3[0] = store(d02r - d13i, sh, mode, ovf); /* d02 + j d13 */
            p3[1] = store(d02i + d13r, sh, mode, ovf);
        }
    }
}

/* X[k] and X[L-k] from Z[k], Z[L-k] (k = 0 .. L/2). */
static void split(tl_fft *f, int32_t *X, uint32_t *ovf)
{
    const int32_t *Z = f->work;
    const uint32_t L = f->size;
    const unsigned sh = TW_FRAC + 1u + f->split_shift;
    const tl_rounding mode = f->rounding;
    for (uint32_t k = 0; k <= L / 2u; k++) {
        const uint32_t km = (L - k) % L; /* Z[L] = Z[0] */
        const int64_t zr = Z[2u * k], zi = Z[2u * k + 1u];
        const int64_t mr = Z[2u * km], mi = -(int64_t)Z[2u * km + 1u]; /* conj(Z[L-k]) */
        const int64_t ar = zr + mr, ai = zi + mi;
        const int64_t br = zr - mr, bi = zi - mi;
        const int64_t c = f->split_tw[2u * k];       /* cos(2 pi k / N) */
        const int64_t sn = -(int64_t)f->split_tw[2u * k + 1u]; /* sin(2 pi k / N) */
        /* -j W B = (c Bi - s Br) - j (c Br + s Bi) */
        const int64_t xr = ar * TL_TWIDDLE_ONE + c * bi - sn * br;
        const int64_t xi = ai * TL_TWIDDLE_ONE - c * br - sn * bi;
        X[2u * k] = store(xr, sh, mode, ovf);
        X[2u * k + 1u] = store(xi, sh, mode, ovf);
        if (k != 0u && k != L / 2u) {
            /* X[L-k]: swap roles, W_N^(L-k) = -conj(W_N^k): cos -> -c, sin -> s */
            const int64_t ar2 = mr, ai2 = -mi;       /* Z[L-k] */
            const int64_t cr = zr, ci = -zi;         /* conj(Z[k]) */
            const int64_t Ar = ar2 + cr, Ai = ai2 + ci;
            const int64_t Br = ar2 - cr, Bi = ai2 - ci;
            const int64_t yr = Ar * TL_TWIDDLE_ONE + (-c) * Bi - sn * Br;
            const int64_t yi = Ai * TL_TWIDDLE_ONE - (-c) * Br - sn * Bi;
            X[2u * km] = store(yr, sh, mode, ovf);
            X[2u * km + 1u] = store(yi, sh, mode, ovf);
        }
    }
}

void tl_fft_execute(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u])
{
    const uint32_t L = f->size;
    int32_t *w = f->work;
    for (uint32_t pos = 0; pos < L; pos++) {
        const uint32_t n = f->perm[pos] & (L - 1u); /* a flipped entry cannot index outside y */
        w[2u * pos] = y[2u * n];
        w[2u * pos + 1u] = y[2u * n + 1u];
    }
    uint32_t n_prev = 1;
    for (uint32_t st = 0; st < f->stages; st++) {
        uint32_t ovf = 0;
        if (f->radix[st] == 2u)
            stage_radix2(f, st, &ovf);
        else
            stage_radix4(f, st, n_prev, &ovf);
        tl_count_add(&sat[st], ovf);
        n_prev *= f->radix[st];
    }
    uint32_t ovf = 0;
    split(f, X, &ovf);
    tl_count_add(&sat[f->stages], ovf);
}
