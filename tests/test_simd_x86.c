/*
 * test_simd_x86.c - the AVX2 twins (firmware/x86/) give the same bytes as
 * the portable firmware: every golden vector through both paths, and the
 * FFT, filterbank, detection, the ADC statistics and CRC-32C on inputs that reach every rounding mode,
 * every scaling and the saturating paths, compared word for word and count
 * for count. Sources: the portable firmware itself (which test_fft,
 * test_pfb and test_detect check against exact integer arithmetic and
 * tests/spec_arith.c, docs/fixed-point.md) and the committed vectors/.
 * On a CPU without AVX2, or a build without the twins, the tests say so and
 * are skipped (they cannot pass by comparing the portable path with itself:
 * each asserts that the AVX2 kernels were called).
 */
#include "tl_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "rng.h"
#include "spec_arith.h"
#include "tl_crc32c.h"
#include "tl_detect.h"
#include "tl_fft.h"
#include "tl_integrate.h"
#include "tl_pfb.h"
#include "vectors.h"

#if defined(__x86_64__) && defined(__GNUC__)
#include "x86/tl_simd_x86.h"

static int have_avx2(void **state)
{
    (void)state;
    tl_simd_x86_enable(1);
    if (!tl_simd_x86_active()) {
        printf("simd_x86: this CPU has no AVX2; the AVX2 twins are not tested here\n");
        return 0;
    }
    return 1;
}

/* Every committed vector, both paths: 0 mismatches each, and the AVX2
 * kernels ran during the first check and not during the second. */
static void test_vectors_both_paths(void **state)
{
    if (!have_avx2(state))
        skip();
    for (int on = 1; on >= 0; on--) {
        tl_simd_x86_enable(on);
        const uint64_t calls0 = tl_simd_x86_calls();
        char *text = NULL;
        size_t len = 0;
        FILE *out = open_memstream(&text, &len);
        char err[1024];
        const long bad = tl_vectors_check("vectors", out, err, sizeof err);
        fclose(out);
        const uint64_t calls = tl_simd_x86_calls() - calls0;
        tl_simd_x86_enable(1);
        if (bad != 0)
            fail_msg("%s path: %ld vector mismatches (%s):\n%s", on ? "AVX2" : "portable", bad,
                     bad < 0 ? err : "see below", text);
        free(text);
        if (on)
            assert_true(calls > 1000u); /* the twins did the work */
        else
            assert_int_equal(calls, 0);
        printf("simd_x86: vectors, %s path: 0 mismatches, %llu AVX2 kernel calls\n", on ? "AVX2" : "portable",
               (unsigned long long)calls);
    }
}

/* FFT: every size, mode, five masks, the three inputs of
 * test_fft.c:test_identical_to_spec; AVX2, portable and spec agree. */
static void test_fft_both_paths(void **state)
{
    if (!have_avx2(state))
        skip();
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("simd_fft", 20261203u));
    tl_fft *f = malloc(sizeof *f);
    int32_t *y = malloc(sizeof(int32_t) * TL_MAX_POINTS);
    int32_t *Xv = malloc(sizeof(int32_t) * TL_MAX_POINTS);
    int32_t *Xp = malloc(sizeof(int32_t) * TL_MAX_POINTS);
    int32_t *Xs = malloc(sizeof(int32_t) * TL_MAX_POINTS);
    assert_true(f && y && Xv && Xp && Xs);
    unsigned compared = 0, saturating = 0;
    const uint64_t calls0 = tl_simd_x86_calls();
    for (uint32_t points = TL_MIN_POINTS; points <= TL_MAX_POINTS; points *= 2u) {
        uint32_t masks[5];
        spec_fft_masks(points, &rng, masks);
        for (int mode = TL_ROUND_TRUNCATE; mode <= TL_ROUND_HALF_EVEN; mode++) {
            for (unsigned mi = 0; mi < 5u; mi++) {
                assert_int_equal(tl_fft_init(f, points, masks[mi], (tl_rounding)mode), TL_OK);
                for (unsigned kind = 0; kind < 3u; kind++) {
                    spec_fft_input(y, points, kind, &rng);
                    uint32_t sv[TL_MAX_FFT_STAGES + 1u] = { 0 }, sp[TL_MAX_FFT_STAGES + 1u] = { 0 },
                             ss[TL_MAX_FFT_STAGES + 1u] = { 0 };
                    tl_simd_x86_enable(1);
                    tl_fft_execute(f, y, Xv, sv);
                    tl_simd_x86_enable(0);
                    tl_fft_execute(f, y, Xp, sp);
                    tl_simd_x86_enable(1);
                    spec_fft_execute(f, y, Xs, ss);
                    for (uint32_t i = 0; i < points; i++)
                        if (Xv[i] != Xp[i] || Xv[i] != Xs[i])
                            fail_msg("points %u mode %d mask 0x%x input %u: word %u AVX2 %d, portable %d, spec %d",
                                     points, mode, f->scale_mask, kind, i, Xv[i], Xp[i], Xs[i]);
                    for (uint32_t st = 0; st <= f->stages; st++) {
                        if (sv[st] != sp[st] || sv[st] != ss[st])
                            fail_msg("points %u mode %d mask 0x%x input %u: stage %u saturations AVX2 %u, "
                                     "portable %u, spec %u", points, mode, f->scale_mask, kind, st, sv[st], sp[st],
                                     ss[st]);
                        saturating += sv[st] != 0u;
                    }
                    compared++;
                }
            }
        }
    }
    assert_true(saturating > 50u);                   /* the clamp-and-count path was reached */
    assert_true(tl_simd_x86_calls() - calls0 > 500u); /* and the AVX2 stages ran */
    printf("simd_x86: fft, %u transforms identical on both paths and the spec, %u stage counts with saturations\n",
           compared, saturating);
    free(f);
    free(y);
    free(Xv);
    free(Xp);
    free(Xs);
}

/* Filterbank: taps 1 .. 16, table shifts 15 .. 40, every mode, random
 * 18-bit coefficients and samples, and extreme ones that saturate. */
static void test_pfb_both_paths(void **state)
{
    if (!have_avx2(state))
        skip();
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("simd_pfb", 20261204u));
    tl_taps *t = calloc(1, sizeof *t);
    tl_pfb *a = malloc(sizeof *a), *b = malloc(sizeof *b);
    int32_t *ya = malloc(sizeof(int32_t) * TL_MAX_POINTS), *yb = malloc(sizeof(int32_t) * TL_MAX_POINTS);
    assert_true(t && a && b && ya && yb);
    static const uint32_t taps[] = { 1, 2, 3, 4, 7, 16 };
    static const uint32_t shifts[] = { 15, 16, 17, 20, 31, 40 };
    static const uint32_t pts[] = { 256, 1024, 4096 };
    unsigned frames_compared = 0, saturating = 0;
    const uint64_t calls0 = tl_simd_x86_calls();
    for (unsigned pi = 0; pi < 3u; pi++)
        for (unsigned ti = 0; ti < sizeof taps / sizeof taps[0]; ti++)
            for (unsigned si = 0; si < sizeof shifts / sizeof shifts[0]; si++)
                for (int mode = TL_ROUND_TRUNCATE; mode <= TL_ROUND_HALF_EVEN; mode++)
                    for (unsigned kind = 0; kind < 2u; kind++) {
                        const uint32_t N = pts[pi], P = taps[ti];
                        t->points = N;
                        t->taps = P;
                        t->shift = shifts[si];
                        for (uint32_t i = 0; i < P * N; i++)
                            t->coef[i] = kind == 0u ? (int32_t)(tl_rng_u64(&rng) % 262144u) - 131072
                                                    : ((i & 3u) == 0u ? TL_TAPS_COEF_MIN : TL_TAPS_COEF_MAX);
                        assert_int_equal(tl_pfb_init(a, t, (tl_rounding)mode), TL_OK);
                        assert_int_equal(tl_pfb_init(b, t, (tl_rounding)mode), TL_OK);
                        for (uint32_t fr = 0; fr < P + 2u; fr++) {
                            int16_t *xa = tl_pfb_next_frame(a), *xb = tl_pfb_next_frame(b);
                            for (uint32_t n = 0; n < N; n++) {
                                const uint64_t r = tl_rng_u64(&rng);
                                xa[n] = kind == 0u ? (int16_t)(r & 0xFFFFu)
                                                   : (int16_t)(((n >> 1) & 1u) ? -32768 : 32767);
                                xb[n] = xa[n];
                            }
                            uint32_t sa = 0, sb = 0;
                            tl_simd_x86_enable(1);
                            const int oa = tl_pfb_commit(a, ya, &sa);
                            tl_simd_x86_enable(0);
                            const int ob = tl_pfb_commit(b, yb, &sb);
                            tl_simd_x86_enable(1);
                            assert_int_equal(oa, ob);
                            if (!oa)
                                continue;
                            for (uint32_t n = 0; n < N; n++)
                                if (ya[n] != yb[n])
                                    fail_msg("N %u P %u shift %u mode %d input %u frame %u: y[%u] AVX2 %d portable %d",
                                             N, P, t->shift, mode, kind, fr, n, ya[n], yb[n]);
                            if (sa != sb)
                                fail_msg("N %u P %u shift %u mode %d input %u: saturations AVX2 %u portable %u", N, P,
                                         t->shift, mode, kind, sa, sb);
                            saturating += sa != 0u;
                            frames_compared++;
                        }
                    }
    assert_true(saturating > 20u);
    assert_true(tl_simd_x86_calls() - calls0 > 500u);
    printf("simd_x86: pfb, %u output frames identical on both paths, %u with saturations\n", frames_compared,
           saturating);
    free(t);
    free(a);
    free(b);
    free(ya);
    free(yb);
}

/* Detection: every shift 0 .. 63 and mode, channel counts that leave a
 * remainder after the four-channel vectors, extreme and random words. */
static void test_detect_both_paths(void **state)
{
    if (!have_avx2(state))
        skip();
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("simd_detect", 20261205u));
    enum { CH = 1031 };
    int32_t *X = malloc(sizeof(int32_t) * 2u * CH);
    uint64_t *Pv = malloc(sizeof(uint64_t) * CH), *Pp = malloc(sizeof(uint64_t) * CH);
    assert_true(X && Pv && Pp);
    static const int32_t edge[] = { INT32_MAX, -INT32_MAX, INT32_MIN, 0, 1, -1, 46341, -46341, 65535, 1 << 30 };
    for (uint32_t i = 0; i < 2u * CH; i++)
        X[i] = i < 2u * 100u ? edge[(i * 7u + i / 10u) % 10u] : (int32_t)(uint32_t)tl_rng_u64(&rng);
    static const uint32_t chans[] = { 1, 3, 4, 5, 8, 1000, CH };
    unsigned compared = 0;
    const uint64_t calls0 = tl_simd_x86_calls();
    for (unsigned ci = 0; ci < sizeof chans / sizeof chans[0]; ci++)
        for (unsigned shift = 0; shift <= 63u; shift++)
            for (int mode = TL_ROUND_TRUNCATE; mode <= TL_ROUND_HALF_EVEN; mode++) {
                tl_simd_x86_enable(1);
                tl_detect_power(X, chans[ci], shift, (tl_rounding)mode, Pv);
                tl_simd_x86_enable(0);
                tl_detect_power(X, chans[ci], shift, (tl_rounding)mode, Pp);
                tl_simd_x86_enable(1);
                for (uint32_t k = 0; k < chans[ci]; k++)
                    if (Pv[k] != Pp[k])
                        fail_msg("channels %u shift %u mode %d: P[%u] AVX2 %llu portable %llu", chans[ci], shift,
                                 mode, k, (unsigned long long)Pv[k], (unsigned long long)Pp[k]);
                compared++;
            }
    assert_int_equal(tl_simd_x86_calls() - calls0, compared);
    printf("simd_x86: detection, %u calls identical on both paths\n", compared);
    free(X);
    free(Pv);
    free(Pp);
}

/* Integration: the AVX2 twins of tl_integrate_power and tl_integrate_cross
 * against the portable loops (whose saturating sums test_integrate checks
 * against exact arithmetic). Ten spectra of random terms, a third of them
 * near the top of their range so that channels saturate at different
 * spectra in every lane position, for channel counts that leave a
 * remainder; the whole integrator (sums, flags, counts) must be
 * byte-identical, and every kind of saturation must have happened. */
static void test_integrate_both_paths(void **state)
{
    if (!have_avx2(state))
        skip();
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("simd_integrate", 20261202u));
    tl_integrator *iv = calloc(1, sizeof *iv), *ip = calloc(1, sizeof *ip);
    uint64_t *P = malloc(sizeof(uint64_t) * (TL_MAX_CHANNELS + 1u)); /* input 1 reads from P + 1 */
    int64_t *re = malloc(sizeof(int64_t) * TL_MAX_CHANNELS), *im = malloc(sizeof(int64_t) * TL_MAX_CHANNELS);
    assert_true(iv && ip && P && re && im);
    static const uint32_t chans[] = { 1, 3, 4, 5, 8, 1000, 1031, TL_MAX_CHANNELS };
    uint32_t seen[4] = { 0, 0, 0, 0 };
    unsigned calls = 0;
    const uint64_t calls0 = tl_simd_x86_calls();
    for (unsigned ci = 0; ci < sizeof chans / sizeof chans[0]; ci++) {
        tl_integrate_reset(iv, chans[ci]);
        tl_integrate_reset(ip, chans[ci]);
        for (unsigned sp = 0; sp < 10u; sp++) {
            for (uint32_t k = 0; k < chans[ci]; k++) {
                const uint64_t r = tl_rng_u64(&rng);
                /* a third of the terms near the top (a quarter of the range on
                 * average), so a sum saturates after a few of them; each
                 * channel's cross sums drift one way */
                const int big = (r % 3u) == 0u;
                const int64_t dir = (k & 1u) ? -1 : 1;
                P[k + 1u] = P[k] = big ? (tl_rng_u64(&rng) >> 1) : (tl_rng_u64(&rng) >> 40);
                re[k] = big ? dir * (int64_t)(tl_rng_u64(&rng) >> 2)
                            : (int64_t)(tl_rng_u64(&rng) >> 40) - (int64_t)(UINT64_C(1) << 23);
                im[k] = big ? -dir * (int64_t)(tl_rng_u64(&rng) >> 2) : (int64_t)(tl_rng_u64(&rng) >> 41);
            }
            for (int path = 1; path >= 0; path--) {
                tl_simd_x86_enable(path);
                tl_integrator *it = path ? iv : ip;
                tl_integrate_power(it, 0u, P);
                tl_integrate_power(it, 1u, P + (sp % 2u)); /* the other input, shifted by one channel */
                tl_integrate_cross(it, re, im);
            }
            tl_simd_x86_enable(1);
            calls += 3u;
            if (memcmp(iv, ip, sizeof *iv) != 0)
                fail_msg("channels %u spectrum %u: the AVX2 integrator differs from the portable one", chans[ci], sp);
        }
        for (unsigned q = 0; q < 4u; q++)
            seen[q] += ip->sat_channels[q];
    }
    assert_int_equal(tl_simd_x86_calls() - calls0, calls);
    printf("simd_x86: integration, %u calls identical on both paths; saturated channels auto0 %u, auto1 %u, "
           "cross re %u, cross im %u\n", calls, seen[0], seen[1], seen[2], seen[3]);
    for (unsigned q = 0; q < 4u; q++)
        assert_true(seen[q] > 100u);
    free(iv);
    free(ip);
    free(P);
    free(re);
    free(im);
}

/* The chain's input copy and ADC statistics: the AVX2 twin against the
 * portable loop of tl_chain.c copy_in written out here (exact integer
 * counts): every drop 0 .. 15 with its clip code, lengths that leave a
 * remainder and lengths past the 4096-sample chunk of the lane
 * counters, every sample in one bin (the byte counters' largest count), random words and the edges (INT16_MIN, INT16_MAX, the clip
 * code and one below). */
static void test_adc_both_paths(void **state)
{
    if (!have_avx2(state))
        skip();
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("simd_adc", 20261206u));
    enum { NMAX = 70000 };
    int16_t *src = malloc(sizeof(int16_t) * NMAX), *dv = malloc(sizeof(int16_t) * NMAX),
            *dp = malloc(sizeof(int16_t) * NMAX);
    assert_true(src && dv && dp);
    static const uint32_t lens[] = { 0, 1, 15, 16, 17, 1000, 16384, 16399, 65536, NMAX };
    unsigned compared = 0;
    uint64_t clipped = 0;
    for (unsigned drop = 0; drop <= 15u; drop++) {
        const unsigned bits = 16u - drop;
        const int16_t hi = (int16_t)(uint16_t)(bits >= 2u ? (((1u << (bits - 1u)) - 1u) << drop) : 1u);
        for (unsigned li = 0; li < sizeof lens / sizeof lens[0]; li++) {
            const uint32_t n = lens[li];
            for (uint32_t i = 0; i < n; i++) {
                const uint64_t r = tl_rng_u64(&rng);
                switch (r & 7u) {
                case 0: src[i] = INT16_MIN; break;
                case 1: src[i] = INT16_MAX; break;
                case 2: src[i] = hi; break;
                case 3: src[i] = (int16_t)(hi - 1); break;
                default: src[i] = (int16_t)(uint16_t)(r >> 16); break;
                }
            }
            uint32_t cv = 0, cp = 0, hv[16] = { 0 }, hp[16] = { 0 };
            uint64_t sv = 0, sp = 0;
            tl_adc_copy_avx2(src, dv, n, hi, drop, &cv, hv, &sv);
            for (uint32_t i = 0; i < n; i++) { /* tl_chain.c copy_in, portable */
                const int16_t v = src[i];
                cp += (uint32_t)(v >= hi) + (uint32_t)(v == INT16_MIN);
                hp[(uint32_t)((int32_t)v + 32768) >> 12]++;
                const uint32_t mag = (uint32_t)(v < 0 ? -(int32_t)v : (int32_t)v) >> drop;
                sp += (uint64_t)mag * mag;
                dp[i] = v;
            }
            if (cv != cp || sv != sp || memcmp(hv, hp, sizeof hv) != 0 || memcmp(dv, dp, sizeof(int16_t) * n) != 0)
                fail_msg("drop %u n %u: clips %u vs %u, sum of squares %llu vs %llu, histogram or copy differs", drop,
                         n, cv, cp, (unsigned long long)sv, (unsigned long long)sp);
            clipped += cp;
            compared++;
        }
    }
    assert_true(clipped > 1000u);
    /* every sample in one bin: each byte counter of the AVX2 histogram
     * reaches its largest count (128 per chunk of 4096 samples) */
    for (uint32_t bin = 0; bin < 16u; bin++) {
        const uint32_t n = 3u * 4096u + 40u;
        for (uint32_t i = 0; i < n; i++)
            src[i] = (int16_t)((int32_t)(bin * 4096u) - 32768 + (int32_t)((i * 37u) % 4096u));
        uint32_t cv = 0, hv[16] = { 0 };
        uint64_t sv = 0;
        tl_adc_copy_avx2(src, dv, n, INT16_MAX, 0u, &cv, hv, &sv);
        for (uint32_t b = 0; b < 16u; b++)
            if (hv[b] != (b == bin ? n : 0u))
                fail_msg("all %u samples in bin %u: the AVX2 histogram has %u in bin %u", n, bin, hv[b], b);
        compared++;
    }
    printf("simd_x86: ADC copy and statistics, %u blocks identical to the portable loop\n", compared);
    free(src);
    free(dv);
    free(dp);
}

/* CRC-32C: the SSE4.2 twin and the portable nibble table give the same
 * register value for every length 0 .. 200 at every start offset 0 .. 7
 * (chained from random initial values), and the catalogue check value of
 * "123456789", 0xE3069283 (RevEng CRC catalogue, CRC-32/ISCSI, as cited in
 * tests/test_crc32c.c), on both paths. */
static void test_crc32c_both_paths(void **state)
{
    if (!have_avx2(state))
        skip();
    tl_rng rng;
    tl_rng_seed(&rng, tl_test_seed("simd_crc", 20261207u));
    uint8_t buf[216];
    for (size_t i = 0; i < sizeof buf; i++)
        buf[i] = (uint8_t)tl_rng_u64(&rng);
    unsigned compared = 0;
    for (size_t off = 0; off < 8u; off++)
        for (size_t len = 0; len <= 200u; len++) {
            const uint32_t init = (uint32_t)tl_rng_u64(&rng);
            tl_simd_x86_enable(1);
            const uint32_t a = tl_crc32c_update(init, buf + off, len);
            tl_simd_x86_enable(0);
            const uint32_t b = tl_crc32c_update(init, buf + off, len);
            tl_simd_x86_enable(1);
            if (a != b)
                fail_msg("offset %zu length %zu: SSE4.2 0x%08x portable 0x%08x", off, len, a, b);
            assert_int_equal(a, tl_crc32c_update_sse42(init, buf + off, len));
            compared++;
        }
    static const uint8_t check[9] = { '1', '2', '3', '4', '5', '6', '7', '8', '9' };
    for (int on = 1; on >= 0; on--) {
        tl_simd_x86_enable(on);
        assert_int_equal(tl_crc32c(check, sizeof check), 0xE3069283u);
    }
    tl_simd_x86_enable(1);
    printf("simd_x86: CRC-32C, %u buffers identical on both paths\n", compared);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_vectors_both_paths),
        cmocka_unit_test(test_fft_both_paths),
        cmocka_unit_test(test_pfb_both_paths),
        cmocka_unit_test(test_detect_both_paths),
        cmocka_unit_test(test_integrate_both_paths),
        cmocka_unit_test(test_adc_both_paths),
        cmocka_unit_test(test_crc32c_both_paths),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

#else
static void test_not_x86(void **state)
{
    (void)state;
    printf("simd_x86: not an x86-64 GCC/Clang build: no AVX2 twins to compare\n");
    skip();
}

int main(void)
{
    const struct CMUnitTest tests[] = { cmocka_unit_test(test_not_x86) };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
#endif
