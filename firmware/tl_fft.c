/* tl_fft.c - fixed-point real FFT (arithmetic frozen in docs/fixed-point.md). */
#include "tl_fft.h"
#include "tl_twiddle.h"
#if defined(TL_SIMD_X86) && TL_FFT_DATA_BITS == 32
#include "x86/tl_simd_x86.h" /* host build on x86-64 only (Makefile) */
#define FFT_SIMD 1
#else
#define FFT_SIMD 0
#endif

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

/* Round a butterfly sum to int32 and saturate (the branch-free helper of
 * tl_fixed.h: the same integers and counts as tl_round_shr_s64 followed by
 * tl_sat_s32); TL_FFT_DATA_BITS < 32 narrows the stored word (test-only
 * degraded build). */
static TL_ALWAYS_INLINE int32_t store(int64_t v, tl_round_bias rb, uint32_t *ovf)
{
    int32_t r = tl_round_sat_s32_fast(v, rb, ovf);
#if TL_FFT_DATA_BITS < 32
    {
        const unsigned drop = 32u - (unsigned)TL_FFT_DATA_BITS;
        r = (int32_t)(tl_round_shr_s64(r, drop, rb.mode) * ((int64_t)1 << drop));
    }
#endif
    return r;
}

/* Round and saturate n (4 or 8) butterfly sums v[] into r[]
 * (tl_round_sat_s32_group: r[i] = sat32(round(v[i] / 2^s)), clamps counted
 * in *ovf), then the test-only narrowing. */
static TL_ALWAYS_INLINE void store_group(const int64_t *v, unsigned n, tl_round_bias rb, int32_t *r, uint32_t *ovf)
{
    tl_round_sat_s32_group(v, n, rb, r, ovf);
#if TL_FFT_DATA_BITS < 32
    for (unsigned i = 0; i < n; i++) {
        const unsigned drop = 32u - (unsigned)TL_FFT_DATA_BITS;
        r[i] = (int32_t)(tl_round_shr_s64(r[i], drop, rb.mode) * ((int64_t)1 << drop));
    }
#endif
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

/* The stages below compute exactly the integers of docs/fixed-point.md
 * section 4 (same products, same sums, one rounding per output with the
 * same mode); only the order of the work and the way the rounding is
 * computed differ from the plain statement of the spec, which
 * tests/spec_arith.c keeps and tests/test_fft.c compares byte for byte.
 * Each kernel is written once (TL_ALWAYS_INLINE) and instantiated twice:
 * with the default rounding constants (half-even, default mask) known at
 * compile time, and with run-time constants for every other plan. */

/* First stage, radix-2 (m odd), fused with the digit-reversed load. Its
 * twiddles are trivial: the spec's value is (a +- b) 2^29 rounded by
 * 29 + shift bits, which rounds exactly like a +- b by `shift` bits (the
 * low 29 bits are zero), so rb is made for `shift` when it is 1 and for
 * 29 + shift (with the 2^29 product) when it is 0. */
static TL_ALWAYS_INLINE void first_radix2_k(tl_fft *f, const int32_t *y, uint32_t *ovf, tl_round_bias rb,
                                            int64_t one)
{
    int32_t *w = f->work;
    const uint16_t *perm = f->perm;
    const uint32_t mask = f->size - 1u; /* a flipped entry cannot index outside y */
    for (uint32_t b = 0; b < f->size; b += 2u) {
        const int32_t *za = &y[2u * ((uint32_t)perm[b] & mask)];
        const int32_t *zb = &y[2u * ((uint32_t)perm[b + 1u] & mask)];
        const int64_t ar = za[0], ai = za[1], br = zb[0], bi = zb[1];
        const int64_t v[4] = { (ar + br) * one, (ai + bi) * one, (ar - br) * one, (ai - bi) * one };
        store_group(v, 4u, rb, &w[2u * b], ovf);
    }
}

/* First stage, radix-4 (m even), fused with the digit-reversed load;
 * n_prev = 1, so every twiddle is W^0 = 2^29 (same argument as above). */
static TL_ALWAYS_INLINE void first_radix4_k(tl_fft *f, const int32_t *y, uint32_t *ovf, tl_round_bias rb,
                                            int64_t one)
{
    int32_t *w = f->work;
    const uint16_t *perm = f->perm;
    const uint32_t mask = f->size - 1u; /* a flipped entry cannot index outside y */
    for (uint32_t b = 0; b < f->size; b += 4u) {
        const int32_t *z0 = &y[2u * ((uint32_t)perm[b] & mask)];
        const int32_t *z1 = &y[2u * ((uint32_t)perm[b + 1u] & mask)];
        const int32_t *z2 = &y[2u * ((uint32_t)perm[b + 2u] & mask)];
        const int32_t *z3 = &y[2u * ((uint32_t)perm[b + 3u] & mask)];
        const int64_t s02r = (int64_t)z0[0] + z2[0], s02i = (int64_t)z0[1] + z2[1];
        const int64_t d02r = (int64_t)z0[0] - z2[0], d02i = (int64_t)z0[1] - z2[1];
        const int64_t s13r = (int64_t)z1[0] + z3[0], s13i = (int64_t)z1[1] + z3[1];
        const int64_t d13r = (int64_t)z1[0] - z3[0], d13i = (int64_t)z1[1] - z3[1];
        const int64_t v[8] = {
            (s02r + s13r) * one, (s02i + s13i) * one, /* out_0 */
            (d02r + d13i) * one, (d02i - d13r) * one, /* out_1 = d02 - j d13 */
            (s02r - s13r) * one, (s02i - s13i) * one, /* out_2 */
            (d02r - d13i) * one, (d02i + d13r) * one, /* out_3 = d02 + j d13 */
        };
        store_group(v, 8u, rb, &w[2u * b], ovf);
    }
}

/* A later radix-4 stage, in place; twiddles (re, im) x 3 per k, read in
 * order. */
static TL_ALWAYS_INLINE void stage_radix4_k(tl_fft *f, uint32_t st, uint32_t n_prev, uint32_t *ovf,
                                            tl_round_bias rb)
{
    int32_t *w = f->work;
    const uint32_t n_cur = 4u * n_prev;
    const int32_t *tw = &f->tw[f->tw_offset[st]];
    const uint32_t q = 2u * n_prev; /* words between the four inputs */
    const size_t q2 = 2u * (size_t)q, q3 = 3u * (size_t)q;
    for (uint32_t base = 0; base < f->size; base += n_cur) {
        int32_t *p0 = &w[2u * base];
        const int32_t *const end = p0 + q;
        const int32_t *t = tw;
        for (; p0 != end; p0 += 2, t += 6) {
            int32_t *p1 = p0 + q, *p2 = p0 + q2, *p3 = p0 + q3;
            /* t_q = a_q * w_q in Q29, exact in int64 */
            const int64_t t0r = (int64_t)p0[0] * TL_TWIDDLE_ONE, t0i = (int64_t)p0[1] * TL_TWIDDLE_ONE;
            const int64_t a1r = p1[0], a1i = p1[1];
            const int64_t t1r = a1r * t[0] - a1i * t[1], t1i = a1r * t[1] + a1i * t[0];
            const int64_t a2r = p2[0], a2i = p2[1];
            const int64_t t2r = a2r * t[2] - a2i * t[3], t2i = a2r * t[3] + a2i * t[2];
            const int64_t a3r = p3[0], a3i = p3[1];
            const int64_t t3r = a3r * t[4] - a3i * t[5], t3i = a3r * t[5] + a3i * t[4];
            const int64_t s02r = t0r + t2r, s02i = t0i + t2i;
            const int64_t d02r = t0r - t2r, d02i = t0i - t2i;
            const int64_t s13r = t1r + t3r, s13i = t1i + t3i;
            const int64_t d13r = t1r - t3r, d13i = t1i - t3i;
            const int64_t v[8] = {
                s02r + s13r, s02i + s13i, /* out_0 */
                d02r + d13i, d02i - d13r, /* out_1 = d02 - j d13 */
                s02r - s13r, s02i - s13i, /* out_2 */
                d02r - d13i, d02i + d13r, /* out_3 = d02 + j d13 */
            };
            int32_t r[8];
            store_group(v, 8u, rb, r, ovf);
            p0[0] = r[0];
            p0[1] = r[1];
            p1[0] = r[2];
            p1[1] = r[3];
            p2[0] = r[4];
            p2[1] = r[5];
            p3[0] = r[6];
            p3[1] = r[7];
        }
    }
}

/* X[k] and X[L-k] from Z[k], Z[L-k] (k = 0 .. L/2). With
 * a = Z[k] + conj(Z[L-k]), b = Z[k] - conj(Z[L-k]), W_N^k = c - j s and
 * P = c b_i - s b_r, Q = c b_r + s b_i (exact):
 *     X[k]   = round((a_r 2^29 + P) + j (a_i 2^29 - Q))
 *     X[L-k] = round((a_r 2^29 - P) + j (-a_i 2^29 - Q))
 * (the second from the spec's W_N^(L-k) = -conj(W_N^k)), so four products
 * serve both outputs. */
static TL_ALWAYS_INLINE void split_k(tl_fft *f, int32_t *X, uint32_t *ovf, tl_round_bias rb, int simd)
{
    const int32_t *Z = f->work;
    const uint32_t L = f->size;
    const int32_t *tw = f->split_tw;
    uint32_t k0 = 1u;
#if FFT_SIMD
    if (simd) /* the AVX2 twin does k = 1 .. k0 - 1 and their mirrors */
        k0 = tl_fft_split_avx2(Z, X, L, tw, &rb, ovf);
#else
    (void)simd;
#endif
    for (uint32_t k = k0; k < L / 2u; k++) {
        const uint32_t km = L - k;
        const int64_t zr = Z[2u * k], zi = Z[2u * k + 1u];
        const int64_t mr = Z[2u * km], mi = -(int64_t)Z[2u * km + 1u]; /* conj(Z[L-k]) */
        const int64_t ar = zr + mr, ai = zi + mi;
        const int64_t br = zr - mr, bi = zi - mi;
        const int64_t c = tw[2u * k];
        const int64_t sn = -(int64_t)tw[2u * k + 1u];
        const int64_t P = c * bi - sn * br, Q = c * br + sn * bi;
        const int64_t ar29 = ar * TL_TWIDDLE_ONE, ai29 = ai * TL_TWIDDLE_ONE;
        const int64_t v[4] = { ar29 + P, ai29 - Q, ar29 - P, -ai29 - Q };
        int32_t r[4];
        store_group(v, 4u, rb, r, ovf);
        X[2u * k] = r[0];
        X[2u * k + 1u] = r[1];
        X[2u * km] = r[2];
        X[2u * km + 1u] = r[3];
    }
    /* k = 0 (Z[L] = Z[0]) and k = L/2 (its own mirror): a_i = b_r = 0 */
    for (uint32_t k = 0; k <= L / 2u; k += L / 2u) {
        const int64_t ar = 2 * (int64_t)Z[2u * k], bi = 2 * (int64_t)Z[2u * k + 1u];
        const int64_t c = tw[2u * k];
        const int64_t sn = -(int64_t)tw[2u * k + 1u];
        X[2u * k] = store(ar * TL_TWIDDLE_ONE + c * bi, rb, ovf);
        X[2u * k + 1u] = store(-sn * bi, rb, ovf);
    }
}

/* Radix-4 stage st: the AVX2 twin (host build, n_prev >= 4: four
 * butterflies per vector) or the portable kernel; same integers. */
static TL_ALWAYS_INLINE void stage_radix4(tl_fft *f, uint32_t st, uint32_t n_prev, uint32_t *ovf, tl_round_bias rb,
                                          int simd)
{
#if FFT_SIMD
    if (simd && n_prev >= 4u) {
        tl_fft_radix4_avx2(f->work, f->size, n_prev, &f->tw[f->tw_offset[st]], &rb, ovf);
        return;
    }
    if (simd && n_prev == 2u) {
        tl_fft_radix4_np2_avx2(f->work, f->size, &f->tw[f->tw_offset[st]], &rb, ovf);
        return;
    }
#else
    (void)simd;
#endif
    stage_radix4_k(f, st, n_prev, ovf, rb);
}

/* First stage, radix-2: the AVX2 twin (host build) or the portable kernel. */
static TL_ALWAYS_INLINE void first_radix2(tl_fft *f, const int32_t *y, uint32_t *ovf, tl_round_bias rb, int64_t one,
                                          int simd)
{
#if FFT_SIMD
    if (simd) {
        tl_fft_first2_avx2(f->work, y, f->perm, f->size, one, &rb, ovf);
        return;
    }
#else
    (void)simd;
#endif
    first_radix2_k(f, y, ovf, rb, one);
}

/* First stage, radix-4: the AVX2 twin (host build) or the portable kernel. */
static TL_ALWAYS_INLINE void first_radix4(tl_fft *f, const int32_t *y, uint32_t *ovf, tl_round_bias rb, int64_t one,
                                          int simd)
{
#if FFT_SIMD
    if (simd) {
        tl_fft_first4_avx2(f->work, y, f->perm, f->size, one, &rb, ovf);
        return;
    }
#else
    (void)simd;
#endif
    first_radix4_k(f, y, ovf, rb, one);
}

#if FFT_SIMD
static int simd_on(void)
{
    return tl_simd_x86_active();
}
#endif

/* The default plan's constants: half-even, 2 bits per radix-4 stage, 1 for
 * the radix-2 stage, none extra in the split. */
static int default_plan(const tl_fft *f)
{
    return f->rounding == TL_ROUND_HALF_EVEN && f->scale_mask == tl_fft_default_mask(f->points);
}

static TL_ALWAYS_INLINE void run_default_k(tl_fft *f, const int32_t *y, int32_t *X,
                                           uint32_t sat[TL_MAX_FFT_STAGES + 1u], int simd)
{
    uint32_t ovf = 0;
    if (f->radix[0] == 2u)
        first_radix2(f, y, &ovf, tl_round_bias_make(1u, TL_ROUND_HALF_EVEN), 1, simd);
    else
        first_radix4(f, y, &ovf, tl_round_bias_make(2u, TL_ROUND_HALF_EVEN), 1, simd);
    tl_count_add(&sat[0], ovf);
    uint32_t n_prev = f->radix[0];
    for (uint32_t st = 1; st < f->stages; st++) {
        ovf = 0;
        stage_radix4(f, st, n_prev, &ovf, tl_round_bias_make(TW_FRAC + 2u, TL_ROUND_HALF_EVEN), simd);
        tl_count_add(&sat[st], ovf);
        n_prev *= 4u;
    }
    ovf = 0;
    split_k(f, X, &ovf, tl_round_bias_make(TW_FRAC + 1u, TL_ROUND_HALF_EVEN), simd);
    tl_count_add(&sat[f->stages], ovf);
}

static TL_ALWAYS_INLINE void run_any_k(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u],
                                       int simd)
{
    uint32_t ovf = 0;
    const tl_round_bias rb0 = tl_round_bias_make(TW_FRAC + f->shift[0], f->rounding);
    if (f->radix[0] == 2u)
        first_radix2(f, y, &ovf, rb0, TL_TWIDDLE_ONE, simd);
    else
        first_radix4(f, y, &ovf, rb0, TL_TWIDDLE_ONE, simd);
    tl_count_add(&sat[0], ovf);
    uint32_t n_prev = f->radix[0];
    for (uint32_t st = 1; st < f->stages; st++) {
        ovf = 0;
        stage_radix4(f, st, n_prev, &ovf, tl_round_bias_make(TW_FRAC + f->shift[st], f->rounding), simd);
        tl_count_add(&sat[st], ovf);
        n_prev *= 4u;
    }
    ovf = 0;
    split_k(f, X, &ovf, tl_round_bias_make(TW_FRAC + 1u + f->split_shift, f->rounding), simd);
    tl_count_add(&sat[f->stages], ovf);
}

/* The portable instantiations (simd = 0: exactly the flight code) and, in
 * the x86-64 host build, the ones with the AVX2 twins (simd = 1). */
static void run_default(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u])
{
    run_default_k(f, y, X, sat, 0);
}

static void run_any(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u])
{
    run_any_k(f, y, X, sat, 0);
}

#if FFT_SIMD
static void run_default_simd(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u])
{
    run_default_k(f, y, X, sat, 1);
}

static void run_any_simd(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u])
{
    run_any_k(f, y, X, sat, 1);
}
#endif

/* The portable transform. In the x86-64 host build it is kept out of line
 * so that gcc compiles it exactly as the flight build's tl_fft_execute
 * (inlined into the dispatcher it ran 149.0 instead of 142.6 instructions
 * per sample under callgrind at 4096 channels). */
#if FFT_SIMD
__attribute__((noinline))
#endif
static void execute_portable(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u])
{
    if (default_plan(f))
        run_default(f, y, X, sat);
    else
        run_any(f, y, X, sat);
}

void tl_fft_execute(tl_fft *f, const int32_t *y, int32_t *X, uint32_t sat[TL_MAX_FFT_STAGES + 1u])
{
#if FFT_SIMD
    if (simd_on()) {
        if (default_plan(f))
            run_default_simd(f, y, X, sat);
        else
            run_any_simd(f, y, X, sat);
        return;
    }
#endif
    execute_portable(f, y, X, sat);
}
