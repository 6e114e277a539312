/*
 * test_encode.c - spectral encodings (firmware/tl_encode.h) and their
 * ground-side decoder (host/spectral_decode.h).
 *
 * External references:
 *  - liblz4 (Debian) LZ4_decompress_safe, to read the LZ4 block of a payload
 *    independently of our decoder;
 *  - the noise-bounded scheme of Masui et al. 2015 (Astronomy and Computing
 *    12, 181) [cited]: step <= f sigma, added variance step^2/12;
 *  - the radiometer equation (Dicke 1946; ../shared/sources.md [computed]):
 *    a sum of M powers is Gamma(M) distributed, std/mean = 1/sqrt(M);
 *  - quantization noise Delta^2/12 (Kester, MT-001; sources.md [doc]);
 *  - analytic formulas computed in the test: the bound f P / sqrt(M) in
 *    double precision, the statistical error of a variance estimate, the
 *    entropy of a discretised Gaussian.
 */
#include "tl_test.h"

#include <lz4.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "rng.h"
#include "spectral_decode.h"
#include "tl_encode.h"

#define NCH TL_ENCODE_MAX_CHANNELS

static tl_encode enc;                                   /* ~16 KiB, like a flight context */
static uint8_t payload[TL_ENCODE_BOUNDED_BOUND(NCH, 1u) + 64u];

enum { CANARY = 0xC5 };

/* f = 0.1 as the largest Q16 value not above it (6553 / 65536 = 0.09999),
 * and f = 0.5 exactly. */
#define F_TENTH_Q16 6553u
#define F_HALF_Q16 32768u

static const char *tname(uint32_t t)
{
    return t == TL_ENCODE_BIT_PLANES ? "bit planes" : "bytes";
}

/* ---- independent model of the pipeline (tl_encode.h, steps 2 to 5) ---- */

/* Zigzag: 0, -1, 1, -2, 2 ... -> 0, 1, 2, 3, 4 ... (the signed-to-unsigned
 * map of variable-length integer encodings; common practice, no source). */
static uint64_t model_zigzag(int64_t d)
{
    return d >= 0 ? 2u * (uint64_t)d : 2u * (uint64_t)(-(d + 1)) + 1u;
}

/* The transposed bytes the encoder must hand to LZ4, from the values u
 * (already quantized), computed the slow obvious way. */
static void model_transposed(const uint64_t *u, const unsigned *k, uint32_t n, uint32_t transpose, int is_signed,
                             uint8_t *out)
{
    memset(out, 0, 8u * (size_t)n);
    for (uint32_t i = 0; i < n; i++) {
        uint64_t p = 0;
        if (i > 0u) {
            if (k[i] == k[i - 1u]) {
                p = u[i - 1u];
            } else if (k[i] < k[i - 1u]) {
                p = u[i - 1u] * ((uint64_t)1 << (k[i - 1u] - k[i])); /* mod 2^64 */
            } else {
                /* floor division by 2^sh, of the signed value for int64:
                 * floor(x / 2^sh) = -floor((-x - 1) / 2^sh) - 1 for x < 0 */
                const unsigned sh = k[i] - k[i - 1u];
                const uint64_t x = u[i - 1u];
                if (is_signed && x > (uint64_t)INT64_MAX)
                    p = ~((~x) >> sh); /* ~x = -x - 1 >= 0 as a number */
                else
                    p = x >> sh;
            }
        }
        const uint64_t dd = u[i] - p;
        const int64_t d = dd > (uint64_t)INT64_MAX ? -(int64_t)(~dd) - 1 : (int64_t)dd;
        const uint64_t z = model_zigzag(d);
        for (unsigned b = 0; b < 64u; b++) {
            const unsigned bit = (unsigned)((z >> (63u - b)) & 1u);
            if (transpose == TL_ENCODE_BIT_PLANES) {
                const size_t t = (size_t)b * n + i;
                out[t / 8u] |= (uint8_t)(bit << (7u - t % 8u));
            } else {
                const size_t t = (size_t)(b / 8u) * n + i;
                out[t] |= (uint8_t)(bit << (7u - b % 8u));
            }
        }
    }
}

static uint32_t be16(const uint8_t *p)
{
    return ((uint32_t)p[0] << 8) | p[1];
}

/* Check the header bytes of a payload of `len` bytes [layout: tl_encode.h,
 * docs/encoding.md]. */
static void check_header(const uint8_t *p, size_t len, uint32_t encoding, uint32_t type, uint32_t transpose,
                         uint32_t n, uint32_t block)
{
    const uint32_t steps = block ? (n + block - 1u) / block : 0u;
    assert_int_equal(p[0], 1u);
    assert_int_equal(p[1], encoding);
    assert_int_equal(p[2], type);
    assert_int_equal(p[3], transpose);
    assert_int_equal(be16(p + 4), n);
    assert_int_equal(be16(p + 6), block);
    assert_int_equal(be16(p + 8), steps);
    assert_int_equal(12u + steps + be16(p + 10), len);
}

/* The worked example of docs/encoding.md: 300 unsigned channels,
 * noise-bounded, B = 32, bit planes: header bytes
 * 01 02 00 01 | 01 2C | 00 20 | 00 0A | L (2 bytes), then 10 step bytes. */
static void header_example(void **state)
{
    (void)state;
    static uint64_t v[300];
    for (uint32_t i = 0; i < 300u; i++)
        v[i] = ((uint64_t)1 << 36) + 4096u * i;
    const tl_bound_cfg cfg = { 1024, F_TENTH_Q16, 32, TL_ENCODE_BIT_PLANES };
    size_t w = 0;
    assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, 300, &cfg, payload, sizeof payload, &w), TL_OK);
    const uint8_t want[10] = { 0x01, 0x02, 0x00, 0x01, 0x01, 0x2C, 0x00, 0x20, 0x00, 0x0A };
    assert_memory_equal(payload, want, 10);
    assert_int_equal(w, 12u + 10u + be16(payload + 10));
    /* k = floor(log2(0.09999 x 2^36 / 32)) = 27 for every block:
     * 2^27 <= 0.09999 x 2^31 = 2.147e8 < 2^28 [computed] */
    for (unsigned b = 0; b < 10u; b++)
        assert_int_equal(payload[12u + b], 27u);
}

/* ---- lossless ---- */

static void lossless_u64_case(const uint64_t *v, uint32_t n, uint32_t transpose)
{
    size_t w = 0;
    assert_int_equal(tl_encode_lossless_u64(&enc, v, n, transpose, payload, sizeof payload, &w), TL_OK);
    assert_true(w <= TL_ENCODE_LOSSLESS_BOUND(n));
    check_header(payload, w, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_UNSIGNED, transpose, n, 0);
    /* the LZ4 block, read by liblz4 (the reference decoder), holds exactly
     * the bytes of the pipeline as documented, computed by the model above */
    static uint8_t raw[8u * NCH + 1u], want[8u * NCH];
    const int got = LZ4_decompress_safe((const char *)payload + 12, (char *)raw, (int)(w - 12u), (int)(8u * n));
    assert_int_equal(got, (int)(8u * n));
    static unsigned k0[NCH];
    memset(k0, 0, sizeof k0);
    model_transposed(v, k0, n, transpose, 0, want);
    assert_memory_equal(raw, want, 8u * n);
    /* and our decoder restores every value exactly, step 1 */
    static uint64_t back[NCH], step[NCH];
    tl_spectral_header h;
    assert_int_equal(tl_spectral_decode_u64(payload, w, back, step, NCH, &h), TL_OK);
    assert_int_equal(h.count, n);
    for (uint32_t i = 0; i < n; i++) {
        if (back[i] != v[i])
            fail_msg("%s, n = %u: channel %u decoded 0x%016llX, sent 0x%016llX", tname(transpose), n, i,
                     (unsigned long long)back[i], (unsigned long long)v[i]);
        assert_int_equal(step[i], 1u);
    }
}

static void lossless_i64_case(const int64_t *v, uint32_t n, uint32_t transpose)
{
    size_t w = 0;
    assert_int_equal(tl_encode_lossless_i64(&enc, v, n, transpose, payload, sizeof payload, &w), TL_OK);
    check_header(payload, w, TL_ENCODE_ID_LOSSLESS, TL_ENCODE_SIGNED, transpose, n, 0);
    static uint8_t raw[8u * NCH], want[8u * NCH];
    static uint64_t bits[NCH];
    static unsigned k0[NCH];
    memset(k0, 0, sizeof k0);
    for (uint32_t i = 0; i < n; i++)
        bits[i] = (uint64_t)v[i];
    const int got = LZ4_decompress_safe((const char *)payload + 12, (char *)raw, (int)(w - 12u), (int)(8u * n));
    assert_int_equal(got, (int)(8u * n));
    model_transposed(bits, k0, n, transpose, 1, want);
    assert_memory_equal(raw, want, 8u * n);
    static int64_t back[NCH];
    assert_int_equal(tl_spectral_decode_i64(payload, w, back, NULL, NCH, NULL), TL_OK);
    for (uint32_t i = 0; i < n; i++)
        if (back[i] != v[i])
            fail_msg("%s, n = %u: channel %u decoded %lld, sent %lld", tname(transpose), n, i, (long long)back[i],
                     (long long)v[i]);
}

static void lossless_round_trip(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("lossless_round_trip", 0xE0C1u));
    static uint64_t u[NCH];
    static int64_t s[NCH];
    for (uint32_t t = 0; t < 2u; t++) {
        /* extremes: 0 and UINT64_MAX alternating (deltas of +-(2^64 - 1)
         * wrap to -1 / +1), 2^63 neighbours */
        const uint64_t ue[] = { 0, UINT64_MAX, 0, UINT64_MAX, 1, UINT64_MAX - 1u, (uint64_t)1 << 63,
                                ((uint64_t)1 << 63) - 1u, UINT64_MAX, UINT64_MAX, 0, 0, 12345 };
        lossless_u64_case(ue, (uint32_t)(sizeof ue / sizeof ue[0]), t);
        const int64_t se[] = { INT64_MIN, INT64_MAX, INT64_MIN, INT64_MAX, 0, -1, 1, INT64_MIN + 1, INT64_MAX - 1,
                               -1, INT64_MIN, INT64_MIN, INT64_MAX };
        lossless_i64_case(se, (uint32_t)(sizeof se / sizeof se[0]), t);
        /* one channel: the first value is sent absolute */
        lossless_u64_case(&ue[1], 1, t);
        lossless_i64_case(&se[0], 1, t);
        /* every count 1 .. 40 (bit-plane byte boundaries), then the maximum */
        for (uint32_t n = 1; n <= NCH; n = (n < 40u) ? n + 1u : (n < NCH / 2u ? n * 2u : NCH)) {
            for (uint32_t i = 0; i < n; i++) {
                u[i] = tl_rng_u64(&r);
                const uint64_t mag = tl_rng_u64(&r) >> (tl_rng_u64(&r) % 64u);
                s[i] = (i & 1u) ? -(int64_t)(mag >> 1) - 1 : (int64_t)(mag >> 1); /* alternating signs */
            }
            lossless_u64_case(u, n, t);
            lossless_i64_case(s, n, t);
            if (n == NCH)
                break;
        }
        /* a smooth spectrum with noise: small deltas, compresses */
        for (uint32_t i = 0; i < NCH; i++)
            u[i] = (uint64_t)llround(ldexp(1.0, 40) * pow(1.0 + i / 64.0, -2.5) * (1.0 + tl_rng_normal(&r) / 32.0));
        lossless_u64_case(u, NCH, t);
        size_t w = 0;
        assert_int_equal(tl_encode_lossless_u64(&enc, u, NCH, t, payload, sizeof payload, &w), TL_OK);
        printf("lossless, %u smooth channels (M = 1024 noise), %s: %zu bytes, %.2f bits/channel\n", NCH, tname(t),
               w, 8.0 * (double)w / NCH);
        assert_true(w < 8u * NCH * 6u / 10u);
    }
}

/* ---- simulated integrated spectra ---- */

/* Gamma(shape, 1) by Marsaglia and Tsang, "A simple method for generating
 * gamma variables", ACM TOMS 26(3), 2000 [cited], shape >= 1. */
static double gamma_draw(tl_rng *r, double shape)
{
    const double d = shape - 1.0 / 3.0, c = 1.0 / sqrt(9.0 * d);
    for (;;) {
        double x, v;
        do {
            x = tl_rng_normal(r);
            v = 1.0 + c * x;
        } while (v <= 0.0);
        v = v * v * v;
        const double uu = tl_rng_uniform(r);
        if (uu < 1.0 - 0.0331 * x * x * x * x)
            return d * v;
        if (log(uu) < 0.5 * x * x + d * (1.0 - v + log(v)))
            return d * v;
    }
}

/* Mean of channel i: a power law, index -2.5 (common practice, no source),
 * 2^40 at the first channel, falling by 2.75x across 1024 channels (a slice
 * of a wider spectrum, as one packet carries). */
static double law_mean(uint32_t i)
{
    return ldexp(1.0, 40) * pow(1.0 + i / 2048.0, -2.5);
}

/* One integrated spectrum: P[i] = mean_i / M x Gamma(M), as uint64 sums. */
static void gamma_spectrum(tl_rng *r, uint64_t *p, uint32_t n, uint32_t M)
{
    for (uint32_t i = 0; i < n; i++)
        p[i] = (uint64_t)llround(law_mean(i) / M * gamma_draw(r, M));
}

static void gamma_generator_check(void **state)
{
    (void)state;
    /* the simulation itself: P / mean has mean 1 and variance 1/M (Gamma(M)
     * scaled; sources.md, radiometer equation [computed]); 65536 draws give
     * a 1-sigma error of sqrt(2/65536) = 0.55% on the variance, test 4% */
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("gamma_generator_check", 0xE0C2u));
    const uint32_t M = 1024;
    const unsigned n = 65536;
    double s1 = 0, s2 = 0;
    for (unsigned i = 0; i < n; i++) {
        const double x = gamma_draw(&r, M) / M;
        s1 += x;
        s2 += x * x;
    }
    const double mean = s1 / n, var = s2 / n - mean * mean;
    TL_ASSERT_NEAR(mean, 1.0, 5.0 / sqrt((double)M * n));
    TL_ASSERT_NEAR(var * M, 1.0, 0.04);
}

/* Decode a bounded unsigned payload and check every channel:
 *  |decoded - P| <= step/2 (exactly, in integers), and for k >= 1
 *  step <= f R / sqrt(M) in double precision [cited: Masui et al. 2015's
 *  criterion], and k = 0 only where the bound is below 2 (so a step of 2
 *  would already break it) ... per block: the step is the largest power of
 *  two under the smallest bound of the block (within the 2^-31 truncation
 *  the header documents).
 * Returns the decoded values in back and steps in step. */
static void check_bounded_u64(const uint64_t *v, const uint64_t *ref, uint32_t n, const tl_bound_cfg *cfg,
                              size_t w, uint64_t *back, uint64_t *step)
{
    check_header(payload, w, TL_ENCODE_ID_BOUNDED, TL_ENCODE_UNSIGNED, cfg->transpose, n, cfg->block);
    assert_int_equal(tl_spectral_decode_u64(payload, w, back, step, NCH, NULL), TL_OK);
    const double f = cfg->fraction_q16 / 65536.0, sm = sqrt((double)cfg->spectra);
    for (uint32_t i = 0; i < n; i++) {
        const uint64_t err = back[i] >= v[i] ? back[i] - v[i] : v[i] - back[i];
        if (err > step[i] / 2u)
            fail_msg("channel %u: |%llu - %llu| > step %llu / 2", i, (unsigned long long)back[i],
                     (unsigned long long)v[i], (unsigned long long)step[i]);
        const double bound = f * (double)(ref ? ref[i] : v[i]) / sm;
        if (step[i] > 1u && (double)step[i] > bound)
            fail_msg("channel %u: step %llu > f R / sqrt(M) = %.6g", i, (unsigned long long)step[i], bound);
        if (step[i] == 1u)
            assert_true(err == 0u);
    }
    for (uint32_t b0 = 0; b0 < n; b0 += cfg->block) {
        const uint32_t b1 = (b0 + cfg->block < n) ? b0 + cfg->block : n;
        double lo = INFINITY;
        for (uint32_t i = b0; i < b1; i++) {
            assert_int_equal(step[i], step[b0]); /* one step per block */
            const double bnd = f * (double)(ref ? ref[i] : v[i]) / sm;
            lo = bnd < lo ? bnd : lo;
        }
        /* not needlessly fine: twice the step would exceed the block's
         * smallest bound (up to the documented roundings: sqrt(M) up by at
         * most 2^-16 relative, R truncated to 32 bits) */
        if (lo >= 2.0 && step[b0] < ((uint64_t)1 << TL_ENCODE_MAX_STEP_LOG2) &&
            2.0 * (double)step[b0] <= lo * (1.0 - 1e-5))
            fail_msg("block at %u: step %llu, yet %.6g is allowed", b0, (unsigned long long)step[b0], lo);
    }
}

static void bounded_error_and_step(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("bounded_error_and_step", 0xE0C3u));
    static uint64_t p[NCH], back[NCH], step[NCH];
    const uint32_t fr[] = { F_TENTH_Q16, F_HALF_Q16, TL_ENCODE_FRACTION_MIN_Q16, TL_ENCODE_FRACTION_MAX_Q16 };
    const uint32_t Ms[] = { 1024, 1, 3, 1u << 24 };
    const uint32_t blocks[] = { 16, 32, 1, 7, NCH };
    for (size_t fi = 0; fi < 4; fi++)
        for (size_t mi = 0; mi < 4; mi++)
            for (size_t bi = 0; bi < 5; bi++)
                for (uint32_t t = 0; t < 2u; t++) {
                    const tl_bound_cfg cfg = { Ms[mi], fr[fi], blocks[bi], t };
                    gamma_spectrum(&r, p, NCH, 1024);
                    if (mi == 1) /* tiny values too: the bound falls below 1 */
                        for (uint32_t i = 0; i < NCH; i += 3u)
                            p[i] >>= (i % 50u);
                    size_t w = 0;
                    assert_int_equal(tl_encode_bounded_u64(&enc, p, NULL, NCH, &cfg, payload, sizeof payload, &w),
                                     TL_OK);
                    assert_true(w <= TL_ENCODE_BOUNDED_BOUND(NCH, cfg.block));
                    check_bounded_u64(p, NULL, NCH, &cfg, w, back, step);
                }
    /* extremes: values at the top of the range, f = 1, M = 1 (k up to 62;
     * q 2^k may exceed UINT64_MAX and is saturated, still within step/2) */
    const uint64_t top[] = { UINT64_MAX, UINT64_MAX - 1u, (uint64_t)1 << 63, ((uint64_t)3 << 62) + 12345u, 0, 1, 2, 3 };
    for (uint32_t t = 0; t < 2u; t++) {
        const tl_bound_cfg cfg = { 1, TL_ENCODE_FRACTION_MAX_Q16, 2, t };
        size_t w = 0;
        assert_int_equal(tl_encode_bounded_u64(&enc, top, NULL, 8, &cfg, payload, sizeof payload, &w), TL_OK);
        check_bounded_u64(top, NULL, 8, &cfg, w, back, step);
        assert_int_equal(step[0], (uint64_t)1 << 62); /* the cap TL_ENCODE_MAX_STEP_LOG2 */
        assert_int_equal(back[0], UINT64_MAX);        /* 4 x 2^62 saturated */
    }
    /* the pipeline bytes for a bounded payload match the model (quantized
     * values, per-block k, rescaled prediction across blocks) */
    for (uint32_t t = 0; t < 2u; t++) {
        const tl_bound_cfg cfg = { 1024, F_TENTH_Q16, 16, t };
        for (uint32_t i = 0; i < NCH; i++) /* steep: k changes between blocks, both ways */
            p[i] = (uint64_t)llround(ldexp(1.0, 30 + (int)(8.0 * sin(i / 40.0))) * (1.0 + tl_rng_normal(&r) / 32.0));
        size_t w = 0;
        assert_int_equal(tl_encode_bounded_u64(&enc, p, NULL, NCH, &cfg, payload, sizeof payload, &w), TL_OK);
        check_bounded_u64(p, NULL, NCH, &cfg, w, back, step);
        static uint64_t q[NCH];
        static unsigned k[NCH];
        static uint8_t raw[8u * NCH], want[8u * NCH];
        unsigned changes = 0;
        for (uint32_t i = 0; i < NCH; i++) {
            k[i] = (unsigned)payload[12u + i / 16u];
            q[i] = back[i] >> k[i]; /* exact: back = q 2^k, no saturation here */
            assert_int_equal(q[i] << k[i], back[i]);
            changes += (i > 0u && k[i] != k[i - 1u]);
        }
        assert_true(changes >= 10u);
        const size_t steps = NCH / 16u;
        const int got = LZ4_decompress_safe((const char *)payload + 12 + steps, (char *)raw, (int)(w - 12u - steps),
                                            (int)(8u * NCH));
        assert_int_equal(got, (int)(8u * NCH));
        model_transposed(q, k, NCH, t, 0, want);
        assert_memory_equal(raw, want, 8u * NCH);
        /* ties: q = round(P / 2^k) with ties to even (tl_round_shr_u64) */
        for (uint32_t i = 0; i < NCH; i++) {
            const uint64_t fl = p[i] >> k[i], rem = p[i] - (fl << k[i]);
            const uint64_t half = k[i] ? (uint64_t)1 << (k[i] - 1u) : 1u;
            const uint64_t want_q = k[i] == 0u ? p[i] : rem > half ? fl + 1u : rem < half ? fl : fl + (fl & 1u);
            assert_int_equal(q[i], want_q);
        }
    }
}

/* Cross-power: sums of Re(X conj Y) over M spectra of two correlated complex
 * Gaussian inputs, scaled to integers; reference min(P0, P1). */
static void bounded_cross_power(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("bounded_cross_power", 0xE0C4u));
    enum { N = 512, M = 256 };
    static uint64_t p0[N], p1[N], ref[N], step[N];
    static int64_t c[N], back[N];
    for (uint32_t i = 0; i < N; i++) {
        const double rho = 0.9 * sin(i / 30.0), g = 1.0 + i / 256.0; /* correlation of any sign */
        double a0 = 0, a1 = 0, cr = 0;
        for (unsigned m = 0; m < M; m++) {
            const double xr = tl_rng_normal(&r), xi = tl_rng_normal(&r);
            const double nr = tl_rng_normal(&r), ni = tl_rng_normal(&r);
            const double yr = g * (rho * xr + sqrt(1 - rho * rho) * nr), yi = g * (rho * xi + sqrt(1 - rho * rho) * ni);
            a0 += xr * xr + xi * xi;
            a1 += yr * yr + yi * yi;
            cr += xr * yr + xi * yi;
        }
        const double scale = ldexp(1.0, 28);
        p0[i] = (uint64_t)llround(a0 * scale);
        p1[i] = (uint64_t)llround(a1 * scale);
        c[i] = (int64_t)llround(cr * scale);
        ref[i] = p0[i] < p1[i] ? p0[i] : p1[i];
    }
    for (unsigned pass = 0; pass < 4u; pass++) {
        const uint32_t t = pass & 1u;
        const int with_ref = pass < 2u;
        const tl_bound_cfg cfg = { M, F_HALF_Q16, 16, t };
        size_t w = 0;
        assert_int_equal(tl_encode_bounded_i64(&enc, c, with_ref ? ref : NULL, N, &cfg, payload, sizeof payload, &w),
                         TL_OK);
        check_header(payload, w, TL_ENCODE_ID_BOUNDED, TL_ENCODE_SIGNED, t, N, 16);
        assert_int_equal(tl_spectral_decode_i64(payload, w, back, step, N, NULL), TL_OK);
        unsigned coarse = 0;
        for (uint32_t i = 0; i < N; i++) {
            const double err = fabs((double)back[i] - (double)c[i]);
            if (err > (double)(step[i] / 2u))
                fail_msg("cross channel %u: error %.0f > step/2 = %llu", i, err, (unsigned long long)step[i] / 2u);
            /* sigma scale of the cross-power: sqrt(P0 P1 / M) (header's
             * argument; common practice, no source) */
            const double scale = sqrt((double)p0[i] * (double)p1[i] / M);
            const double rbound = 0.5 * (with_ref ? (double)ref[i] : fabs((double)c[i])) / sqrt((double)M);
            if (step[i] > 1u) {
                assert_true((double)step[i] <= rbound);
                assert_true((double)step[i] <= 0.5 * scale);
            }
            coarse += (step[i] > 1u);
        }
        assert_true(coarse > N / 2u);
        /* the bytes: quantized values (q = decoded / step, exact), per-block
         * k, arithmetic (floor) rescaling of negative predictions */
        static uint64_t q[N];
        static unsigned k[N];
        static uint8_t raw[8u * N], want[8u * N];
        for (uint32_t i = 0; i < N; i++) {
            k[i] = (unsigned)payload[12u + i / 16u];
            q[i] = (uint64_t)(back[i] / (int64_t)step[i]);
            assert_true(q[i] * step[i] == (uint64_t)back[i]);
        }
        const size_t steps = N / 16u;
        const int got = LZ4_decompress_safe((const char *)payload + 12 + steps, (char *)raw, (int)(w - 12u - steps),
                                            (int)(8u * N));
        assert_int_equal(got, (int)(8u * N));
        model_transposed(q, k, N, t, 1, want);
        assert_memory_equal(raw, want, 8u * N);
        printf("cross-power, %s, reference %s: %zu bytes for %u channels\n", tname(t),
               with_ref ? "min(P0, P1)" : "|C|", w, N);
    }
}

/* Entropy in bits of a Gaussian of standard deviation s (in steps)
 * discretised to integers: -sum p_j log2 p_j with p_j the Gaussian mass of
 * [j - 1/2, j + 1/2] (Shannon entropy of the discretised law; [computed]
 * here from erfc). */
static double gauss_entropy_bits(double s)
{
    if (s < 1e-9)
        return 0.0;
    double h = 0;
    assert_true(s < 1e6);
    const long lim = (long)ceil(12.0 * s) + 1;
    for (long j = -lim; j <= lim; j++) {
        const double pj = 0.5 * (erfc(-(j + 0.5) / (s * M_SQRT2)) - erfc(-(j - 0.5) / (s * M_SQRT2)));
        if (pj > 0)
            h -= pj * log2(pj);
    }
    return h;
}

static void bounded_statistics_case(tl_rng *r, uint32_t fq16, uint32_t block, uint32_t transpose, int assert_bits)
{
    const uint32_t M = 1024, R = 48;
    static uint64_t p[NCH], back[NCH], step[NCH];
    double sum_norm = 0, sum_norm_e = 0, h_sum = 0;
    size_t n_err = 0, n_h = 0, bytes_lz4 = 0, bytes_total = 0, bytes_lossless = 0;
    for (uint32_t real = 0; real < R; real++) {
        gamma_spectrum(r, p, NCH, M);
        const tl_bound_cfg cfg = { M, fq16, block, transpose };
        size_t w = 0, wl = 0;
        assert_int_equal(tl_encode_bounded_u64(&enc, p, NULL, NCH, &cfg, payload, sizeof payload, &w), TL_OK);
        check_bounded_u64(p, NULL, NCH, &cfg, w, back, step);
        bytes_total += w;
        bytes_lz4 += be16(payload + 10);
        for (uint32_t i = 0; i < NCH; i++) {
            const double e = (double)(int64_t)(back[i] - p[i]), st = (double)step[i];
            assert_true(step[i] > 1u); /* with M = 1024 and these levels, every step is coarse */
            sum_norm += e * e / (st * st / 12.0);
            sum_norm_e += e / st;
            n_err++;
        }
        /* width of the quantized delta: within each block (one step), the
         * sample standard deviation of q[i] - q[i-1] */
        for (uint32_t b0 = 0; b0 < NCH; b0 += block) {
            const uint32_t b1 = b0 + block < NCH ? b0 + block : NCH;
            double s1 = 0, s2 = 0;
            unsigned m = 0;
            for (uint32_t i = b0 + 1u; i < b1; i++) {
                const double d = (double)((int64_t)(back[i] - back[i - 1u]) / (int64_t)step[b0]);
                s1 += d;
                s2 += d * d;
                m++;
            }
            if (m < 2u)
                continue;
            const double var = (s2 - s1 * s1 / m) / (m - 1u);
            h_sum += gauss_entropy_bits(sqrt(var)) * (b1 - b0);
            n_h += b1 - b0;
        }
        assert_int_equal(tl_encode_lossless_u64(&enc, p, NCH, transpose, payload, sizeof payload, &wl), TL_OK);
        bytes_lossless += wl;
    }
    /* added noise variance = step^2/12 [doc: Kester MT-001; cited: Masui
     * et al. 2015]: the mean of e^2 / (step^2/12) is 1. Its statistical
     * error: for e uniform over a step, (e/step)^2 has variance
     * 1/80 - 1/144 = 1/180, so the mean of 12 (e/step)^2 has standard error
     * 12 sqrt(1/180 / n) [computed] */
    const double ratio = sum_norm / n_err;
    const double sigma = 12.0 * sqrt(1.0 / 180.0 / n_err);
    const double mean_e = sum_norm_e / n_err;
    const double bits = 8.0 * bytes_lz4 / ((double)R * NCH), bits_all = 8.0 * bytes_total / ((double)R * NCH);
    const double h = h_sum / n_h, bits_lossless = 8.0 * bytes_lossless / ((double)R * NCH);
    printf("f = %.4f, B = %2u, %-10s: error variance / (step^2/12) = %.4f (1-sigma %.4f); "
           "mean error %+.4f step\n",
           fq16 / 65536.0, block, tname(transpose), ratio, sigma, mean_e);
    printf("    bits/channel: LZ4 block %.3f, whole payload %.3f, entropy of the quantized delta %.3f "
           "(block %+.3f, payload %+.3f); lossless %.3f bits, ratio %.2f\n",
           bits, bits_all, h, bits - h, bits_all - h, bits_lossless, bits_lossless / bits_all);
    assert_true(5.0 * sigma < 0.05); /* the 5% test is at least 5 sigma wide */
    TL_ASSERT_NEAR(ratio, 1.0, 0.05);
    /* rounding ties to even: no bias; 5 sigma of a uniform's mean */
    TL_ASSERT_NEAR(mean_e, 0.0, 5.0 * sqrt(1.0 / 12.0 / n_err));
    if (assert_bits) {
        /* the coded residual (the LZ4 block) within 1.5 bits per channel of
         * the entropy of the residual it codes */
        if (!(fabs(bits - h) <= 1.5))
            fail_msg("LZ4 block %.3f bits/channel vs entropy %.3f: more than 1.5 bits apart", bits, h);
        /* with B = 32 even the whole payload (12 header bytes and one step
         * byte per block, 0.34 bits/channel here) stays within 1.5 bits */
        if (block >= 32u && !(fabs(bits_all - h) <= 1.5))
            fail_msg("payload %.3f bits/channel vs entropy %.3f: more than 1.5 bits apart", bits_all, h);
    }
    assert_true(bits_all < bits_lossless);
}

static void bounded_statistics(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("bounded_statistics", 0xE0C5u));
    const uint32_t fr[] = { F_TENTH_Q16, F_HALF_Q16 };
    const uint32_t blocks[] = { 16, 32 };
    for (size_t fi = 0; fi < 2; fi++)
        for (size_t bi = 0; bi < 2; bi++)
            for (uint32_t t = 0; t < 2u; t++)
                bounded_statistics_case(&r, fr[fi], blocks[bi], t, t == TL_ENCODE_BIT_PLANES);
}

/* ---- errors ---- */

static void argument_errors(void **state)
{
    (void)state;
    static uint64_t v[NCH + 1u];
    static int64_t s[NCH + 1u];
    for (uint32_t i = 0; i <= NCH; i++) {
        v[i] = 1000u + i;
        s[i] = -(int64_t)i;
    }
    size_t w = 99;
    tl_bound_cfg cfg = { 1024, F_TENTH_Q16, 16, TL_ENCODE_BYTE_SHUFFLE };
    assert_int_equal(tl_encode_lossless_u64(NULL, v, 4, 0, payload, sizeof payload, &w), TL_E_NULL);
    assert_int_equal(w, 0u);
    assert_int_equal(tl_encode_lossless_u64(&enc, NULL, 4, 0, payload, sizeof payload, &w), TL_E_NULL);
    assert_int_equal(tl_encode_lossless_i64(&enc, s, 4, 0, NULL, sizeof payload, &w), TL_E_NULL);
    assert_int_equal(tl_encode_lossless_i64(&enc, s, 4, 0, payload, sizeof payload, NULL), TL_E_NULL);
    assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, 4, NULL, payload, sizeof payload, &w), TL_E_NULL);
    assert_int_equal(tl_encode_bounded_i64(&enc, NULL, NULL, 4, &cfg, payload, sizeof payload, &w), TL_E_NULL);
    assert_int_equal(tl_encode_lossless_u64(&enc, v, 0, 0, payload, sizeof payload, &w), TL_E_ENCODING);
    assert_int_equal(tl_encode_lossless_u64(&enc, v, NCH + 1u, 0, payload, sizeof payload, &w), TL_E_ENCODING);
    assert_int_equal(tl_encode_lossless_i64(&enc, s, 4, 2, payload, sizeof payload, &w), TL_E_ENCODING);
    assert_int_equal(tl_encode_lossless_u64(&enc, v, NCH, 1, payload, sizeof payload, &w), TL_OK);
    cfg.block = 0;
    assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, 4, &cfg, payload, sizeof payload, &w), TL_E_ENCODING);
    cfg.block = NCH + 1u;
    assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, 4, &cfg, payload, sizeof payload, &w), TL_E_ENCODING);
    cfg.block = NCH;
    assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, 4, &cfg, payload, sizeof payload, &w), TL_OK);
    cfg.transpose = 7;
    assert_int_equal(tl_encode_bounded_i64(&enc, s, NULL, 4, &cfg, payload, sizeof payload, &w), TL_E_ENCODING);
    cfg.transpose = 0;
    /* f range 1/64 .. 1 */
    const uint32_t fbad[] = { 0, TL_ENCODE_FRACTION_MIN_Q16 - 1u, TL_ENCODE_FRACTION_MAX_Q16 + 1u, UINT32_MAX };
    for (size_t i = 0; i < 4; i++) {
        cfg.fraction_q16 = fbad[i];
        assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, 4, &cfg, payload, sizeof payload, &w),
                         TL_E_NOISE_FRACTION);
        assert_int_equal(w, 0u);
    }
    cfg.fraction_q16 = TL_ENCODE_FRACTION_MIN_Q16;
    assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, 4, &cfg, payload, sizeof payload, &w), TL_OK);
    cfg.fraction_q16 = TL_ENCODE_FRACTION_MAX_Q16;
    assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, 4, &cfg, payload, sizeof payload, &w), TL_OK);
    /* spectra 1 .. TL_MAX_INTEGRATION */
    cfg.spectra = 0;
    assert_int_equal(tl_encode_bounded_i64(&enc, s, NULL, 4, &cfg, payload, sizeof payload, &w), TL_E_INTEGRATION);
    cfg.spectra = TL_MAX_INTEGRATION + 1u;
    assert_int_equal(tl_encode_bounded_i64(&enc, s, NULL, 4, &cfg, payload, sizeof payload, &w), TL_E_INTEGRATION);
    cfg.spectra = TL_MAX_INTEGRATION;
    assert_int_equal(tl_encode_bounded_i64(&enc, s, NULL, 4, &cfg, payload, sizeof payload, &w), TL_OK);
}

/* dst_cap one byte short: TL_E_SPACE, written 0, dst[0] = 0, canary after
 * the buffer untouched; exact capacity works. */
static void space_case(int bounded, uint32_t n, uint32_t t, const uint64_t *v)
{
    const tl_bound_cfg cfg = { 1024, F_TENTH_Q16, 16, t };
    size_t need = 0;
    tl_status st = bounded ? tl_encode_bounded_u64(&enc, v, NULL, n, &cfg, payload, sizeof payload, &need)
                           : tl_encode_lossless_u64(&enc, v, n, t, payload, sizeof payload, &need);
    assert_int_equal(st, TL_OK);
    static uint8_t first[sizeof payload];
    memcpy(first, payload, need);
    const size_t caps[] = { need, need - 1u, need / 2u, 12u + n / 16u, 12u, 5u, 1u, 0u };
    for (size_t c = 0; c < sizeof caps / sizeof caps[0]; c++) {
        const size_t cap = caps[c];
        memset(payload, 0x77, cap);
        memset(payload + cap, CANARY, 64);
        size_t w = 1234;
        st = bounded ? tl_encode_bounded_u64(&enc, v, NULL, n, &cfg, payload, cap, &w)
                     : tl_encode_lossless_u64(&enc, v, n, t, payload, cap, &w);
        for (size_t i = 0; i < 64u; i++)
            if (payload[cap + i] != CANARY)
                fail_msg("cap %zu of %zu: byte %zu after the buffer written", cap, need, i);
        if (cap == need) {
            assert_int_equal(st, TL_OK);
            assert_int_equal(w, need);
            assert_memory_equal(payload, first, need); /* same bytes whatever the capacity */
        } else {
            assert_int_equal(st, TL_E_SPACE);
            assert_int_equal(w, 0u);
            if (cap > 0u) /* never looks like a payload */
                assert_int_equal(payload[0], 0u);
        }
    }
}

static void space_one_byte_short(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("space_one_byte_short", 0xE0C6u));
    static uint64_t v[NCH];
    gamma_spectrum(&r, v, NCH, 1024);
    for (uint32_t t = 0; t < 2u; t++) {
        space_case(0, NCH, t, v);
        space_case(1, NCH, t, v);
        space_case(0, 3, t, v);
        space_case(1, 20, t, v);
    }
    for (uint32_t i = 0; i < NCH; i++)
        v[i] = tl_rng_u64(&r); /* incompressible: the LZ4 block is at its bound */
    space_case(0, NCH, 0, v);
    size_t w = 0;
    assert_int_equal(tl_encode_lossless_u64(&enc, v, NCH, 0, payload, TL_ENCODE_LOSSLESS_BOUND(NCH), &w), TL_OK);
}

/* ---- the decoder on malformed and hostile payloads ---- */

static void decoder_rejects_malformed(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("decoder_rejects_malformed", 0xE0C7u));
    enum { N = 200 };
    static uint64_t v[N], back[N], step[N];
    static int64_t sback[N];
    gamma_spectrum(&r, v, N, 1024);
    const tl_bound_cfg cfg = { 1024, F_HALF_Q16, 16, TL_ENCODE_BIT_PLANES };
    size_t w = 0;
    assert_int_equal(tl_encode_bounded_u64(&enc, v, NULL, N, &cfg, payload, sizeof payload, &w), TL_OK);
    static uint8_t good[sizeof payload], bad[sizeof payload + 1u];
    memcpy(good, payload, w);
    assert_int_equal(tl_spectral_decode_u64(good, w, back, step, N, NULL), TL_OK);
    /* wrong type, too small an output, NULLs */
    assert_int_equal(tl_spectral_decode_i64(good, w, sback, NULL, N, NULL), TL_E_ENCODING);
    assert_int_equal(tl_spectral_decode_u64(good, w, back, NULL, N - 1u, NULL), TL_E_SPACE);
    assert_int_equal(tl_spectral_decode_u64(NULL, w, back, NULL, N, NULL), TL_E_NULL);
    assert_int_equal(tl_spectral_decode_u64(good, w, NULL, NULL, N, NULL), TL_E_NULL);
    /* every truncation, and one byte too many */
    for (size_t len = 0; len < w; len++) {
        uint8_t *cut = malloc(len ? len : 1u); /* exact size: ASan sees any overread */
        assert_non_null(cut);
        memcpy(cut, good, len);
        assert_int_equal(tl_spectral_decode_u64(cut, len, back, step, N, NULL), TL_E_FORMAT);
        free(cut);
    }
    memcpy(bad, good, w);
    bad[w] = 0;
    assert_int_equal(tl_spectral_decode_u64(bad, w + 1u, back, step, N, NULL), TL_E_FORMAT);
    /* each header field out of range */
    struct {
        size_t off;
        uint8_t val;
    } const muts[] = {
        { 0, 0 }, { 0, 2 },       /* version */
        { 1, 0 }, { 1, 3 },       /* encoding */
        { 2, 2 },                 /* value type */
        { 3, 2 },                 /* transpose */
        { 4, 0 },                 /* count 0 (bytes 4 and 5 both set to 0 below) */
        { 8, 1 },                 /* step count */
        { 12, 63 }, { 13, 200 },  /* k above 62 */
        { 10, 0xFF },             /* LZ4 length disagrees with the payload length */
    };
    for (size_t m = 0; m < sizeof muts / sizeof muts[0]; m++) {
        memcpy(bad, good, w);
        if (muts[m].off == 4u) {
            bad[4] = 0;
            bad[5] = 0;
        } else {
            bad[muts[m].off] = muts[m].val;
        }
        assert_int_equal(tl_spectral_decode_u64(bad, w, back, step, N, NULL), TL_E_FORMAT);
    }
    memcpy(bad, good, w);
    bad[4] = 0x10; /* count 4097 > the format maximum */
    bad[5] = 0x01;
    assert_int_equal(tl_spectral_decode_u64(bad, w, back, step, N, NULL), TL_E_FORMAT);
    memcpy(bad, good, w);
    bad[1] = TL_ENCODE_ID_LOSSLESS; /* lossless with a block size */
    assert_int_equal(tl_spectral_decode_u64(bad, w, back, step, N, NULL), TL_E_FORMAT);
    memcpy(bad, good, w);
    bad[7] = 17; /* block 17: ceil(200/17) = 12 != 13 steps */
    assert_int_equal(tl_spectral_decode_u64(bad, w, back, step, N, NULL), TL_E_FORMAT);
    /* count one lower than the LZ4 block holds: decodes to more than 8N */
    memcpy(bad, good, w);
    bad[5] = N - 1u;
    bad[9] = (N - 1u + 15u) / 16u; /* 13 steps still */
    assert_int_equal(tl_spectral_decode_u64(bad, w, back, step, N, NULL), TL_E_FORMAT);
    /* a valid LZ4 block of 8N - 1 bytes under a correct-looking header */
    {
        static uint8_t raw[8u * N], blk[LZ4_COMPRESSBOUND(8 * N)];
        memset(raw, 0, sizeof raw);
        const int bl = LZ4_compress_default((const char *)raw, (char *)blk, (int)sizeof raw - 1, (int)sizeof blk);
        assert_true(bl > 0);
        const uint8_t hdr[12] = { 1, 1, 0, 0, 0, N, 0, 0, 0, 0, (uint8_t)(bl >> 8), (uint8_t)bl };
        memcpy(bad, hdr, 12);
        memcpy(bad + 12, blk, (size_t)bl);
        assert_int_equal(tl_spectral_decode_u64(bad, 12u + (size_t)bl, back, step, N, NULL), TL_E_FORMAT);
        /* and with the full 8N bytes it is a valid lossless payload of zeros */
        const int bl2 = LZ4_compress_default((const char *)raw, (char *)blk, (int)sizeof raw, (int)sizeof blk);
        bad[10] = (uint8_t)(bl2 >> 8);
        bad[11] = (uint8_t)bl2;
        memcpy(bad + 12, blk, (size_t)bl2);
        assert_int_equal(tl_spectral_decode_u64(bad, 12u + (size_t)bl2, back, step, N, NULL), TL_OK);
        for (uint32_t i = 0; i < N; i++)
            assert_int_equal(back[i], 0u);
    }
    /* every single-byte corruption of the LZ4 block and the step bytes:
     * a status, never a crash (ASan/UBSan build), and when it decodes the
     * values stay within reach of the step bytes' meaning */
    unsigned ok = 0, rejected = 0;
    for (size_t pos = 12; pos < w; pos++)
        for (unsigned x = 0; x < 3u; x++) {
            memcpy(bad, good, w);
            bad[pos] ^= (uint8_t)(x == 0u ? 0x01u : x == 1u ? 0x80u : 0xFFu);
            const tl_status st = tl_spectral_decode_u64(bad, w, back, step, N, NULL);
            assert_true(st == TL_OK || st == TL_E_FORMAT);
            ok += (st == TL_OK);
            rejected += (st == TL_E_FORMAT);
        }
    printf("single-byte corruptions: %u decoded (to other values), %u rejected\n", ok, rejected);
    assert_true(rejected > 0u);
    /* random bytes behind a plausible header, random lengths */
    for (unsigned trial = 0; trial < 3000u; trial++) {
        const size_t len = 12u + (size_t)(tl_rng_u64(&r) % 600u);
        uint8_t *rb = malloc(len);
        assert_non_null(rb);
        for (size_t i = 0; i < len; i++)
            rb[i] = (uint8_t)tl_rng_u64(&r);
        rb[0] = 1;
        rb[1] = (uint8_t)(1u + (trial & 1u));
        rb[2] = 0;
        rb[3] = (uint8_t)((trial >> 1) & 1u);
        rb[4] = 0;
        rb[5] = (uint8_t)(1u + tl_rng_u64(&r) % N);
        const uint32_t n = rb[5], blk = (trial & 1u) ? 16u : 0u, steps = blk ? (n + 15u) / 16u : 0u;
        rb[6] = 0;
        rb[7] = (uint8_t)blk;
        rb[8] = 0;
        rb[9] = (uint8_t)steps;
        if (len > 12u + steps) {
            rb[10] = (uint8_t)((len - 12u - steps) >> 8);
            rb[11] = (uint8_t)(len - 12u - steps);
        }
        for (uint32_t b = 0; b < steps && 12u + b < len; b++)
            rb[12u + b] %= 63u;
        const tl_status st = tl_spectral_decode_u64(rb, len, back, step, N, NULL);
        assert_true(st == TL_OK || st == TL_E_FORMAT);
        free(rb);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(header_example),
        cmocka_unit_test(lossless_round_trip),
        cmocka_unit_test(gamma_generator_check),
        cmocka_unit_test(bounded_error_and_step),
        cmocka_unit_test(bounded_cross_power),
        cmocka_unit_test(bounded_statistics),
        cmocka_unit_test(argument_errors),
        cmocka_unit_test(space_one_byte_short),
        cmocka_unit_test(decoder_rejects_malformed),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
