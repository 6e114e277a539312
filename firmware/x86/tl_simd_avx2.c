/* tl_simd_avx2.c - AVX2 twins of the filterbank, FFT radix-4 stage and
 * power detection (x86-64 host build only; see tl_simd_x86.h). Every value
 * is computed as in the portable twin: 32 x 32 -> 64-bit signed products
 * (_mm256_mul_epi32, exact), 64-bit sums that wrap exactly like the
 * portable uint64/int64 arithmetic (they never wrap within the documented
 * ranges), the rounding of tl_round_offset_s64 (offset binary, one bias,
 * logical shifts only), the in-range test of tl_round_sat_s32_group, and,
 * for a group with any value out of range, the portable
 * tl_round_sat_s32_fast on each value (same clamp, same count). */
#include "tl_simd_x86.h"
#include <stddef.h>
#include "tl_twiddle.h"

#if defined(__x86_64__) && defined(__GNUC__)

#include <immintrin.h>

#define TL_AVX2 __attribute__((target("avx2")))

static int simd_cpu = -1;    /* -1: not asked yet, 0: no AVX2, 1: AVX2 */
static int simd_enabled = 1; /* tl_simd_x86_enable */
static uint64_t simd_calls;  /* kernel calls, for the tests */

uint64_t tl_simd_x86_calls(void)
{
    return __atomic_load_n(&simd_calls, __ATOMIC_RELAXED);
}

static void count_call(void)
{
    __atomic_fetch_add(&simd_calls, 1u, __ATOMIC_RELAXED);
}

int tl_simd_x86_active(void)
{
    int cpu = __atomic_load_n(&simd_cpu, __ATOMIC_RELAXED);
    if (cpu < 0) {
        __builtin_cpu_init();
        cpu = (__builtin_cpu_supports("avx2") && __builtin_cpu_supports("sse4.2")) ? 1 : 0;
        __atomic_store_n(&simd_cpu, cpu, __ATOMIC_RELAXED);
    }
    return cpu != 0 && __atomic_load_n(&simd_enabled, __ATOMIC_RELAXED) != 0;
}

void tl_simd_x86_enable(int on)
{
    __atomic_store_n(&simd_enabled, on != 0 ? 1 : 0, __ATOMIC_RELAXED);
}

/* The rounding constants of tl_round_offset_s64 in vector form. */
typedef struct {
    __m256i add_max; /* rb.add_max in every lane */
    __m256i odd;     /* rb.odd_mask */
    __m128i s;       /* shift count */
    __m256i one;     /* 1 */
    __m256i hi;      /* bits 32 .. 63 */
    __m256i max32;   /* MAX in every 32-bit lane */
} vround;

static inline TL_AVX2 vround vround_make(const tl_round_bias *rb)
{
    vround r;
    r.add_max = _mm256_set1_epi64x((long long)rb->add_max);
    r.odd = _mm256_set1_epi64x((long long)rb->odd_mask);
    r.s = _mm_cvtsi32_si128((int)rb->s);
    r.one = _mm256_set1_epi64x(1);
    r.hi = _mm256_set1_epi64x((long long)0xFFFFFFFF00000000ull);
    r.max32 = _mm256_set1_epi32(TL_S32_SAT_MAX);
    return r;
}

/* D = ((v + add_max + ((v >> s) & odd)) mod 2^64) >> s, per 64-bit lane
 * (tl_round_offset_s64). */
static inline TL_AVX2 __m256i vround_offset(__m256i v, const vround *r)
{
    const __m256i odd = _mm256_and_si256(_mm256_srl_epi64(v, r->s), r->odd);
    return _mm256_srl_epi64(_mm256_add_epi64(_mm256_add_epi64(v, r->add_max), odd), r->s);
}

/* Low 32 bits of D - MAX for lanes (lo of a, lo of b) interleaved:
 * out32[2i] = a_i, out32[2i+1] = b_i. */
static inline TL_AVX2 __m256i vround_pack(__m256i a, __m256i b, const vround *r)
{
    return _mm256_sub_epi32(_mm256_blend_epi32(a, _mm256_slli_epi64(b, 32), 0xAA), r->max32);
}

/* ---- filterbank ---------------------------------------------------------- */
static inline __attribute__((always_inline)) TL_AVX2 void filter_k(const int16_t *const *frame,
                                                                   const int32_t *const *coef, uint32_t N, uint32_t P,
                                                                   const tl_round_bias *rb, int32_t *y, uint32_t *ovf)
{
    const vround r = vround_make(rb);
    for (uint32_t n = 0; n < N; n += 8u) {
        /* even outputs n, n+2, n+4, n+6 and odd outputs n+1, ... in 64-bit lanes */
        __m256i ae = _mm256_setzero_si256(), ao = _mm256_setzero_si256();
#pragma GCC unroll 4
        for (uint32_t p = 0; p < P; p++) {
            const __m256i c = _mm256_loadu_si256((const __m256i *)(const void *)&coef[p][n]);
            const __m256i f =
                _mm256_cvtepi16_epi32(_mm_loadu_si128((const __m128i *)(const void *)&frame[p][n]));
            ae = _mm256_add_epi64(ae, _mm256_mul_epi32(c, f));
            ao = _mm256_add_epi64(ao, _mm256_mul_epi32(_mm256_srli_epi64(c, 32), _mm256_srli_epi64(f, 32)));
        }
        const __m256i de = vround_offset(ae, &r), d_o = vround_offset(ao, &r);
        const __m256i any = _mm256_or_si256(_mm256_add_epi64(de, r.one), _mm256_add_epi64(d_o, r.one));
        if (_mm256_testz_si256(any, r.hi)) {
            _mm256_storeu_si256((__m256i *)(void *)&y[n], vround_pack(de, d_o, &r));
        } else {
            int64_t ve[4], vo[4];
            _mm256_storeu_si256((__m256i *)(void *)ve, ae);
            _mm256_storeu_si256((__m256i *)(void *)vo, ao);
            for (unsigned i = 0; i < 4u; i++) {
                y[n + 2u * i] = tl_round_sat_s32_fast(ve[i], *rb, ovf);
                y[n + 2u * i + 1u] = tl_round_sat_s32_fast(vo[i], *rb, ovf);
            }
        }
    }
}

/* Instantiated for P = 4 (the default table; the tap loop unrolled, the
 * frame and coefficient pointers in registers) and for any P. */
static TL_AVX2 void filter_p4(const int16_t *const *frame, const int32_t *const *coef, uint32_t N,
                              const tl_round_bias *rb, int32_t *y, uint32_t *ovf)
{
    const int16_t *const f4[4] = { frame[0], frame[1], frame[2], frame[3] };
    const int32_t *const c4[4] = { coef[0], coef[1], coef[2], coef[3] };
    filter_k(f4, c4, N, 4u, rb, y, ovf);
}

static TL_AVX2 void filter_any(const int16_t *const *frame, const int32_t *const *coef, uint32_t N, uint32_t P,
                               const tl_round_bias *rb, int32_t *y, uint32_t *ovf)
{
    filter_k(frame, coef, N, P, rb, y, ovf);
}

void tl_pfb_filter_avx2(const int16_t *const *frame, const int32_t *const *coef, uint32_t N, uint32_t P,
                        const tl_round_bias *rb, int32_t *y, uint32_t *ovf)
{
    count_call();
    if (P == 4u)
        filter_p4(frame, coef, N, rb, y, ovf);
    else
        filter_any(frame, coef, N, P, rb, y, ovf);
}

/* ---- FFT radix-4 stage --------------------------------------------------- */
/* (a_r + j a_i)(w_r + j w_i) exactly, four butterflies in 64-bit lanes;
 * a and w hold (re, im) int32 pairs per lane. */
static inline TL_AVX2 void cmul(__m256i a, __m256i w, __m256i *re, __m256i *im)
{
    const __m256i ai = _mm256_srli_epi64(a, 32), wi = _mm256_srli_epi64(w, 32);
    *re = _mm256_sub_epi64(_mm256_mul_epi32(a, w), _mm256_mul_epi32(ai, wi));
    *im = _mm256_add_epi64(_mm256_mul_epi32(a, wi), _mm256_mul_epi32(ai, w));
}

static TL_AVX2 void radix4_body(int32_t *w, uint32_t size, uint32_t n_prev, const int32_t *tw,
                                const tl_round_bias *rb, uint32_t *ovf)
{
    const vround r = vround_make(rb);
    const __m256i one29 = _mm256_set1_epi64x((long long)TL_TWIDDLE_ONE);
    const uint32_t n_cur = 4u * n_prev;
    const size_t q = 2u * (size_t)n_prev; /* words between the four inputs */
    for (uint32_t base = 0; base < size; base += n_cur) {
        int32_t *p0 = &w[2u * base];
        const int32_t *t = tw;
        for (uint32_t j = 0; j < n_prev; j += 4u, p0 += 8, t += 24) {
            int32_t *p1 = p0 + q, *p2 = p0 + 2u * q, *p3 = p0 + 3u * q;
            const __m256i a0 = _mm256_loadu_si256((const __m256i *)(void *)p0);
            const __m256i a1 = _mm256_loadu_si256((const __m256i *)(void *)p1);
            const __m256i a2 = _mm256_loadu_si256((const __m256i *)(void *)p2);
            const __m256i a3 = _mm256_loadu_si256((const __m256i *)(void *)p3);
            /* twiddles of k .. k+3: 12 (re, im) pairs e0 .. e11 in the table's
             * order (w1, w2, w3 per k); W_q = (e_{q-1}, e_{q+2}, e_{q+5}, e_{q+8}) */
            const __m256i tA = _mm256_loadu_si256((const __m256i *)(const void *)t);
            const __m256i tB = _mm256_loadu_si256((const __m256i *)(const void *)(t + 8));
            const __m256i tC = _mm256_loadu_si256((const __m256i *)(const void *)(t + 16));
            const __m256i w1 = _mm256_permute4x64_epi64(
                _mm256_blend_epi32(_mm256_blend_epi32(tA, tB, 0x30), tC, 0x0C), _MM_SHUFFLE(1, 2, 3, 0));
            const __m256i w2 = _mm256_permute4x64_epi64(
                _mm256_blend_epi32(_mm256_blend_epi32(tB, tA, 0x0C), tC, 0x30), _MM_SHUFFLE(2, 3, 0, 1));
            const __m256i w3 = _mm256_permute4x64_epi64(
                _mm256_blend_epi32(_mm256_blend_epi32(tC, tB, 0x0C), tA, 0x30), _MM_SHUFFLE(3, 0, 1, 2));
            const __m256i t0r = _mm256_mul_epi32(a0, one29);
            const __m256i t0i = _mm256_mul_epi32(_mm256_srli_epi64(a0, 32), one29);
            __m256i t1r, t1i, t2r, t2i, t3r, t3i;
            cmul(a1, w1, &t1r, &t1i);
            cmul(a2, w2, &t2r, &t2i);
            cmul(a3, w3, &t3r, &t3i);
            const __m256i s02r = _mm256_add_epi64(t0r, t2r), s02i = _mm256_add_epi64(t0i, t2i);
            const __m256i d02r = _mm256_sub_epi64(t0r, t2r), d02i = _mm256_sub_epi64(t0i, t2i);
            const __m256i s13r = _mm256_add_epi64(t1r, t3r), s13i = _mm256_add_epi64(t1i, t3i);
            const __m256i d13r = _mm256_sub_epi64(t1r, t3r), d13i = _mm256_sub_epi64(t1i, t3i);
            __m256i v[8];
            v[0] = _mm256_add_epi64(s02r, s13r); /* out_0 */
            v[1] = _mm256_add_epi64(s02i, s13i);
            v[2] = _mm256_add_epi64(d02r, d13i); /* out_1 = d02 - j d13 */
            v[3] = _mm256_sub_epi64(d02i, d13r);
            v[4] = _mm256_sub_epi64(s02r, s13r); /* out_2 */
            v[5] = _mm256_sub_epi64(s02i, s13i);
            v[6] = _mm256_sub_epi64(d02r, d13i); /* out_3 = d02 + j d13 */
            v[7] = _mm256_add_epi64(d02i, d13r);
            __m256i d[8];
            __m256i any = _mm256_setzero_si256();
#pragma GCC unroll 8
            for (unsigned i = 0; i < 8u; i++) { /* unrolled: v[] and d[] stay in registers */
                d[i] = vround_offset(v[i], &r);
                any = _mm256_or_si256(any, _mm256_add_epi64(d[i], r.one));
            }
            int32_t *out[4] = { p0, p1, p2, p3 };
            if (_mm256_testz_si256(any, r.hi)) {
#pragma GCC unroll 4
                for (unsigned o = 0; o < 4u; o++)
                    _mm256_storeu_si256((__m256i *)(void *)out[o], vround_pack(d[2u * o], d[2u * o + 1u], &r));
            } else {
                int64_t vs[8][4];
                for (unsigned i = 0; i < 8u; i++)
                    _mm256_storeu_si256((__m256i *)(void *)vs[i], v[i]);
                for (unsigned o = 0; o < 4u; o++)
                    for (unsigned l = 0; l < 4u; l++) {
                        out[o][2u * l] = tl_round_sat_s32_fast(vs[2u * o][l], *rb, ovf);
                        out[o][2u * l + 1u] = tl_round_sat_s32_fast(vs[2u * o + 1u][l], *rb, ovf);
                    }
            }
        }
    }
}

void tl_fft_radix4_avx2(int32_t *w, uint32_t size, uint32_t n_prev, const int32_t *tw, const tl_round_bias *rb,
                        uint32_t *ovf)
{
    count_call();
    radix4_body(w, size, n_prev, tw, rb, ovf);
}

/* ---- odd log2 L: the radix-4 stage with n_prev = 2 and the radix-2 first
 * stage ------------------------------------------------------------------ */
/* The butterfly of radix4_body on four lanes: v[] the eight exact sums,
 * d[] their offset values; returns nonzero if all are in range. */
static inline __attribute__((always_inline)) TL_AVX2 int bfly4(__m256i a0, __m256i a1, __m256i a2, __m256i a3,
                                                             __m256i w1, __m256i w2, __m256i w3, __m256i one29,
                                                             const vround *r, __m256i v[8], __m256i d[8])
{
    const __m256i t0r = _mm256_mul_epi32(a0, one29);
    const __m256i t0i = _mm256_mul_epi32(_mm256_srli_epi64(a0, 32), one29);
    __m256i t1r, t1i, t2r, t2i, t3r, t3i;
    cmul(a1, w1, &t1r, &t1i);
    cmul(a2, w2, &t2r, &t2i);
    cmul(a3, w3, &t3r, &t3i);
    const __m256i s02r = _mm256_add_epi64(t0r, t2r), s02i = _mm256_add_epi64(t0i, t2i);
    const __m256i d02r = _mm256_sub_epi64(t0r, t2r), d02i = _mm256_sub_epi64(t0i, t2i);
    const __m256i s13r = _mm256_add_epi64(t1r, t3r), s13i = _mm256_add_epi64(t1i, t3i);
    const __m256i d13r = _mm256_sub_epi64(t1r, t3r), d13i = _mm256_sub_epi64(t1i, t3i);
    v[0] = _mm256_add_epi64(s02r, s13r); /* out_0 */
    v[1] = _mm256_add_epi64(s02i, s13i);
    v[2] = _mm256_add_epi64(d02r, d13i); /* out_1 = d02 - j d13 */
    v[3] = _mm256_sub_epi64(d02i, d13r);
    v[4] = _mm256_sub_epi64(s02r, s13r); /* out_2 */
    v[5] = _mm256_sub_epi64(s02i, s13i);
    v[6] = _mm256_sub_epi64(d02r, d13i); /* out_3 = d02 + j d13 */
    v[7] = _mm256_add_epi64(d02i, d13r);
    __m256i any = _mm256_setzero_si256();
#pragma GCC unroll 8
    for (unsigned i = 0; i < 8u; i++) {
        d[i] = vround_offset(v[i], r);
        any = _mm256_or_si256(any, _mm256_add_epi64(d[i], r->one));
    }
    return _mm256_testz_si256(any, r->hi);
}

/* Radix-4 stage with n_prev = 2 (groups of 8 points, k = 0, 1): lanes
 * (group g, k 0), (g, k 1), (g+1, k 0), (g+1, k 1); the six twiddle pairs
 * are the same for every group. */
static TL_AVX2 void radix4_np2_body(int32_t *w, uint32_t size, const int32_t *tw, const tl_round_bias *rb,
                                    uint32_t *ovf)
{
    const vround r = vround_make(rb);
    const __m256i one29 = _mm256_set1_epi64x((long long)TL_TWIDDLE_ONE);
    long long e[6]; /* (re, im) pairs: k 0: w1 w2 w3, k 1: w1 w2 w3 */
    for (unsigned i = 0; i < 6u; i++)
        e[i] = (long long)(((uint64_t)(uint32_t)tw[2u * i + 1u] << 32) | (uint32_t)tw[2u * i]);
    const __m256i w1 = _mm256_set_epi64x(e[3], e[0], e[3], e[0]);
    const __m256i w2 = _mm256_set_epi64x(e[4], e[1], e[4], e[1]);
    const __m256i w3 = _mm256_set_epi64x(e[5], e[2], e[5], e[2]);
    for (uint32_t base = 0; base < size; base += 16u) {
        int32_t *g0 = &w[2u * base], *g1 = &w[2u * (base + 8u)];
        __m256i a[4];
        for (unsigned q = 0; q < 4u; q++)
            a[q] = _mm256_inserti128_si256(
                _mm256_castsi128_si256(_mm_loadu_si128((const __m128i *)(const void *)(g0 + 4u * q))),
                _mm_loadu_si128((const __m128i *)(const void *)(g1 + 4u * q)), 1);
        __m256i v[8], d[8];
        if (bfly4(a[0], a[1], a[2], a[3], w1, w2, w3, one29, &r, v, d)) {
#pragma GCC unroll 4
            for (unsigned q = 0; q < 4u; q++) {
                const __m256i o = vround_pack(d[2u * q], d[2u * q + 1u], &r);
                _mm_storeu_si128((__m128i *)(void *)(g0 + 4u * q), _mm256_castsi256_si128(o));
                _mm_storeu_si128((__m128i *)(void *)(g1 + 4u * q), _mm256_extracti128_si256(o, 1));
            }
        } else {
            int64_t vs[8][4];
            for (unsigned i = 0; i < 8u; i++)
                _mm256_storeu_si256((__m256i *)(void *)vs[i], v[i]);
            for (unsigned l = 0; l < 4u; l++) {
                int32_t *g = (l < 2u ? g0 : g1) + 2u * (l & 1u);
                for (unsigned q = 0; q < 4u; q++) {
                    g[4u * q] = tl_round_sat_s32_fast(vs[2u * q][l], *rb, ovf);
                    g[4u * q + 1u] = tl_round_sat_s32_fast(vs[2u * q + 1u][l], *rb, ovf);
                }
            }
        }
    }
}

void tl_fft_radix4_np2_avx2(int32_t *w, uint32_t size, const int32_t *tw, const tl_round_bias *rb, uint32_t *ovf)
{
    count_call();
    radix4_np2_body(w, size, tw, rb, ovf);
}

/* First stage, radix-2, fused with the digit-reversed load (tl_fft.c
 * first_radix2_k): butterflies b, b+2, b+4, b+6; z_a = z[perm[b + 2j]],
 * z_b = z[perm[b + 2j + 1]] (masked as in C) by two gathers. */
static TL_AVX2 void first2_body(int32_t *w, const int32_t *y, const uint16_t *perm, uint32_t size, int64_t one,
                                const tl_round_bias *rb, uint32_t *ovf)
{
    const vround r = vround_make(rb);
    const __m256i onev = _mm256_set1_epi64x((long long)one);
    const __m256i maskv = _mm256_set1_epi32((int)(size - 1u));
    const __m256i evenodd = _mm256_setr_epi32(0, 2, 4, 6, 1, 3, 5, 7);
    const long long *yz = (const long long *)(const void *)y;
    for (uint32_t b = 0; b < size; b += 8u) {
        const __m256i idx = _mm256_permutevar8x32_epi32(
            _mm256_and_si256(_mm256_cvtepu16_epi32(_mm_loadu_si128((const __m128i *)(const void *)&perm[b])), maskv),
            evenodd);
        const __m256i za = _mm256_i32gather_epi64(yz, _mm256_castsi256_si128(idx), 8);
        const __m256i zb = _mm256_i32gather_epi64(yz, _mm256_extracti128_si256(idx, 1), 8);
        const __m256i ar = _mm256_mul_epi32(za, onev), ai = _mm256_mul_epi32(_mm256_srli_epi64(za, 32), onev);
        const __m256i br = _mm256_mul_epi32(zb, onev), bi = _mm256_mul_epi32(_mm256_srli_epi64(zb, 32), onev);
        const __m256i v0 = _mm256_add_epi64(ar, br), v1 = _mm256_add_epi64(ai, bi);
        const __m256i v2 = _mm256_sub_epi64(ar, br), v3 = _mm256_sub_epi64(ai, bi);
        const __m256i d0 = vround_offset(v0, &r), d1 = vround_offset(v1, &r);
        const __m256i d2 = vround_offset(v2, &r), d3 = vround_offset(v3, &r);
        const __m256i any = _mm256_or_si256(_mm256_or_si256(_mm256_add_epi64(d0, r.one), _mm256_add_epi64(d1, r.one)),
                                            _mm256_or_si256(_mm256_add_epi64(d2, r.one), _mm256_add_epi64(d3, r.one)));
        int32_t *out = &w[2u * b];
        if (_mm256_testz_si256(any, r.hi)) {
            const __m256i o0 = vround_pack(d0, d1, &r), o1 = vround_pack(d2, d3, &r);
            const __m256i lo = _mm256_unpacklo_epi64(o0, o1), hi = _mm256_unpackhi_epi64(o0, o1);
            _mm256_storeu_si256((__m256i *)(void *)out, _mm256_permute2x128_si256(lo, hi, 0x20));
            _mm256_storeu_si256((__m256i *)(void *)(out + 8), _mm256_permute2x128_si256(lo, hi, 0x31));
        } else {
            int64_t vs[4][4];
            _mm256_storeu_si256((__m256i *)(void *)vs[0], v0);
            _mm256_storeu_si256((__m256i *)(void *)vs[1], v1);
            _mm256_storeu_si256((__m256i *)(void *)vs[2], v2);
            _mm256_storeu_si256((__m256i *)(void *)vs[3], v3);
            for (unsigned j = 0; j < 4u; j++)
                for (unsigned i = 0; i < 4u; i++)
                    out[4u * j + i] = tl_round_sat_s32_fast(vs[i][j], *rb, ovf);
        }
    }
}

void tl_fft_first2_avx2(int32_t *w, const int32_t *y, const uint16_t *perm, uint32_t size, int64_t one,
                        const tl_round_bias *rb, uint32_t *ovf)
{
    count_call();
    first2_body(w, y, perm, size, one, rb, ovf);
}

/* ---- first FFT stage, radix-4, fused with the digit-reversed load ------- */
/* tl_fft.c first_radix4_k for four butterflies b, b+4, b+8, b+12 at a time:
 * the 16 permutation entries are transposed so that gather q collects
 * z[perm[b + 4j + q] & (L-1)] for j = 0 .. 3 (the same masked index as the
 * portable loop), every value is multiplied by `one` (1 or 2^29; also the
 * sign extension to 64 bits) and the sums are formed as in the portable
 * loop ((a + b) one = a one + b one exactly). The four outputs of each
 * butterfly are transposed back to the portable layout. */
static TL_AVX2 void first4_body(int32_t *w, const int32_t *y, const uint16_t *perm, uint32_t size, int64_t one,
                                const tl_round_bias *rb, uint32_t *ovf)
{
    const vround r = vround_make(rb);
    const __m256i onev = _mm256_set1_epi64x((long long)one);
    const __m256i maskv = _mm256_set1_epi32((int)(size - 1u));
    const __m256i shuf = _mm256_setr_epi8(0, 1, 8, 9, 2, 3, 10, 11, 4, 5, 12, 13, 6, 7, 14, 15, /* */
                                          0, 1, 8, 9, 2, 3, 10, 11, 4, 5, 12, 13, 6, 7, 14, 15);
    const __m256i pairs = _mm256_setr_epi32(0, 4, 1, 5, 2, 6, 3, 7);
    const long long *yz = (const long long *)(const void *)y; /* complex z[n] = 64-bit element n */
    for (uint32_t b = 0; b < size; b += 16u) {
        /* perm[b + 4j + q] -> order q-major: q0 j0..3, q1 j0..3, q2 .., q3 .. */
        const __m256i pm = _mm256_permutevar8x32_epi32(
            _mm256_shuffle_epi8(_mm256_loadu_si256((const __m256i *)(const void *)&perm[b]), shuf), pairs);
        const __m256i i01 = _mm256_and_si256(_mm256_cvtepu16_epi32(_mm256_castsi256_si128(pm)), maskv);
        const __m256i i23 = _mm256_and_si256(_mm256_cvtepu16_epi32(_mm256_extracti128_si256(pm, 1)), maskv);
        const __m256i z0 = _mm256_i32gather_epi64(yz, _mm256_castsi256_si128(i01), 8);
        const __m256i z1 = _mm256_i32gather_epi64(yz, _mm256_extracti128_si256(i01, 1), 8);
        const __m256i z2 = _mm256_i32gather_epi64(yz, _mm256_castsi256_si128(i23), 8);
        const __m256i z3 = _mm256_i32gather_epi64(yz, _mm256_extracti128_si256(i23, 1), 8);
        const __m256i z0r = _mm256_mul_epi32(z0, onev), z0i = _mm256_mul_epi32(_mm256_srli_epi64(z0, 32), onev);
        const __m256i z1r = _mm256_mul_epi32(z1, onev), z1i = _mm256_mul_epi32(_mm256_srli_epi64(z1, 32), onev);
        const __m256i z2r = _mm256_mul_epi32(z2, onev), z2i = _mm256_mul_epi32(_mm256_srli_epi64(z2, 32), onev);
        const __m256i z3r = _mm256_mul_epi32(z3, onev), z3i = _mm256_mul_epi32(_mm256_srli_epi64(z3, 32), onev);
        const __m256i s02r = _mm256_add_epi64(z0r, z2r), s02i = _mm256_add_epi64(z0i, z2i);
        const __m256i d02r = _mm256_sub_epi64(z0r, z2r), d02i = _mm256_sub_epi64(z0i, z2i);
        const __m256i s13r = _mm256_add_epi64(z1r, z3r), s13i = _mm256_add_epi64(z1i, z3i);
        const __m256i d13r = _mm256_sub_epi64(z1r, z3r), d13i = _mm256_sub_epi64(z1i, z3i);
        __m256i v[8];
        v[0] = _mm256_add_epi64(s02r, s13r); /* out_0 */
        v[1] = _mm256_add_epi64(s02i, s13i);
        v[2] = _mm256_add_epi64(d02r, d13i); /* out_1 = d02 - j d13 */
        v[3] = _mm256_sub_epi64(d02i, d13r);
        v[4] = _mm256_sub_epi64(s02r, s13r); /* out_2 */
        v[5] = _mm256_sub_epi64(s02i, s13i);
        v[6] = _mm256_sub_epi64(d02r, d13i); /* out_3 = d02 + j d13 */
        v[7] = _mm256_add_epi64(d02i, d13r);
        __m256i d[8];
        __m256i any = _mm256_setzero_si256();
#pragma GCC unroll 8
        for (unsigned i = 0; i < 8u; i++) { /* unrolled: v[] and d[] stay in registers */
            d[i] = vround_offset(v[i], &r);
            any = _mm256_or_si256(any, _mm256_add_epi64(d[i], r.one));
        }
        int32_t *out = &w[2u * b];
        if (_mm256_testz_si256(any, r.hi)) {
            const __m256i o0 = vround_pack(d[0], d[1], &r), o1 = vround_pack(d[2], d[3], &r);
            const __m256i o2 = vround_pack(d[4], d[5], &r), o3 = vround_pack(d[6], d[7], &r);
            const __m256i t0 = _mm256_unpacklo_epi64(o0, o1), t1 = _mm256_unpackhi_epi64(o0, o1);
            const __m256i t2 = _mm256_unpacklo_epi64(o2, o3), t3 = _mm256_unpackhi_epi64(o2, o3);
            _mm256_storeu_si256((__m256i *)(void *)out, _mm256_permute2x128_si256(t0, t2, 0x20));
            _mm256_storeu_si256((__m256i *)(void *)(out + 8), _mm256_permute2x128_si256(t1, t3, 0x20));
            _mm256_storeu_si256((__m256i *)(void *)(out + 16), _mm256_permute2x128_si256(t0, t2, 0x31));
            _mm256_storeu_si256((__m256i *)(void *)(out + 24), _mm256_permute2x128_si256(t1, t3, 0x31));
        } else {
            int64_t vs[8][4];
            for (unsigned i = 0; i < 8u; i++)
                _mm256_storeu_si256((__m256i *)(void *)vs[i], v[i]);
            for (unsigned j = 0; j < 4u; j++)
                for (unsigned i = 0; i < 8u; i++)
                    out[8u * j + i] = tl_round_sat_s32_fast(vs[i][j], *rb, ovf);
        }
    }
}

void tl_fft_first4_avx2(int32_t *w, const int32_t *y, const uint16_t *perm, uint32_t size, int64_t one,
                        const tl_round_bias *rb, uint32_t *ovf)
{
    count_call();
    first4_body(w, y, perm, size, one, rb, ovf);
}

/* ---- real-FFT split ----------------------------------------------------- */
/* tl_fft.c split_k for k = 1 .. kend - 1, four k at a time, with Z[L-k]
 * read as reversed vectors. The spec's sums are formed from 32 x 32-bit
 * products only (the same integers: a_r 2^29 = z_r 2^29 + m_r 2^29 and
 * P = c b_i - s b_r = c (z_i + M_i) + t (z_r - M_r), t = tw_im = -s,
 * Q = c (z_r - M_r) - t (z_i + M_i), with M = Z[L-k]; every term and sum
 * below 2^62 in magnitude, so nothing wraps). */
static TL_AVX2 uint32_t split_body(const int32_t *Z, int32_t *X, uint32_t L, const int32_t *tw,
                                   const tl_round_bias *rb, uint32_t *ovf)
{
    const vround r = vround_make(rb);
    const __m256i one29 = _mm256_set1_epi64x((long long)TL_TWIDDLE_ONE);
    uint32_t k = 1;
    for (; k + 4u <= L / 2u; k += 4u) {
        const uint32_t km = L - k - 3u; /* lanes of the mirror, reversed: L-k .. L-k-3 */
        const __m256i z = _mm256_loadu_si256((const __m256i *)(const void *)&Z[2u * k]);
        const __m256i m = _mm256_permute4x64_epi64(
            _mm256_loadu_si256((const __m256i *)(const void *)&Z[2u * km]), _MM_SHUFFLE(0, 1, 2, 3));
        const __m256i w = _mm256_loadu_si256((const __m256i *)(const void *)&tw[2u * k]);
        const __m256i zi = _mm256_srli_epi64(z, 32), mi = _mm256_srli_epi64(m, 32), ti = _mm256_srli_epi64(w, 32);
        const __m256i ar29 = _mm256_add_epi64(_mm256_mul_epi32(z, one29), _mm256_mul_epi32(m, one29));
        const __m256i ai29 = _mm256_sub_epi64(_mm256_mul_epi32(zi, one29), _mm256_mul_epi32(mi, one29));
        const __m256i cz_i = _mm256_add_epi64(_mm256_mul_epi32(w, zi), _mm256_mul_epi32(w, mi));  /* c b_i */
        const __m256i tz_r = _mm256_sub_epi64(_mm256_mul_epi32(ti, z), _mm256_mul_epi32(ti, m));  /* t b_r */
        const __m256i cz_r = _mm256_sub_epi64(_mm256_mul_epi32(w, z), _mm256_mul_epi32(w, m));    /* c b_r */
        const __m256i tz_i = _mm256_add_epi64(_mm256_mul_epi32(ti, zi), _mm256_mul_epi32(ti, mi)); /* t b_i */
        const __m256i P = _mm256_add_epi64(cz_i, tz_r), Q = _mm256_sub_epi64(cz_r, tz_i);
        const __m256i v0 = _mm256_add_epi64(ar29, P), v1 = _mm256_sub_epi64(ai29, Q);
        const __m256i v2 = _mm256_sub_epi64(ar29, P);
        const __m256i v3 = _mm256_sub_epi64(_mm256_sub_epi64(_mm256_setzero_si256(), ai29), Q);
        const __m256i d0 = vround_offset(v0, &r), d1 = vround_offset(v1, &r);
        const __m256i d2 = vround_offset(v2, &r), d3 = vround_offset(v3, &r);
        const __m256i any = _mm256_or_si256(_mm256_or_si256(_mm256_add_epi64(d0, r.one), _mm256_add_epi64(d1, r.one)),
                                            _mm256_or_si256(_mm256_add_epi64(d2, r.one), _mm256_add_epi64(d3, r.one)));
        if (_mm256_testz_si256(any, r.hi)) {
            _mm256_storeu_si256((__m256i *)(void *)&X[2u * k], vround_pack(d0, d1, &r));
            _mm256_storeu_si256((__m256i *)(void *)&X[2u * km],
                                _mm256_permute4x64_epi64(vround_pack(d2, d3, &r), _MM_SHUFFLE(0, 1, 2, 3)));
        } else {
            int64_t vs[4][4];
            _mm256_storeu_si256((__m256i *)(void *)vs[0], v0);
            _mm256_storeu_si256((__m256i *)(void *)vs[1], v1);
            _mm256_storeu_si256((__m256i *)(void *)vs[2], v2);
            _mm256_storeu_si256((__m256i *)(void *)vs[3], v3);
            for (uint32_t l = 0; l < 4u; l++) {
                X[2u * (k + l)] = tl_round_sat_s32_fast(vs[0][l], *rb, ovf);
                X[2u * (k + l) + 1u] = tl_round_sat_s32_fast(vs[1][l], *rb, ovf);
                X[2u * (L - k - l)] = tl_round_sat_s32_fast(vs[2][l], *rb, ovf);
                X[2u * (L - k - l) + 1u] = tl_round_sat_s32_fast(vs[3][l], *rb, ovf);
            }
        }
    }
    return k;
}

uint32_t tl_fft_split_avx2(const int32_t *Z, int32_t *X, uint32_t L, const int32_t *tw, const tl_round_bias *rb,
                           uint32_t *ovf)
{
    count_call();
    return split_body(Z, X, L, tw, rb, ovf);
}

/* ---- power detection ----------------------------------------------------- */
static TL_AVX2 void power_body(const int32_t *X, uint32_t channels, unsigned shift, uint64_t add, uint64_t odd,
                               uint64_t *P)
{
    const __m256i addv = _mm256_set1_epi64x((long long)add), oddv = _mm256_set1_epi64x((long long)odd);
    const __m128i s = _mm_cvtsi32_si128((int)shift);
    uint32_t k = 0;
    for (; k + 4u <= channels; k += 4u) {
        const __m256i x = _mm256_loadu_si256((const __m256i *)(const void *)&X[2u * k]);
        const __m256i xi = _mm256_srli_epi64(x, 32);
        const __m256i p = _mm256_add_epi64(_mm256_mul_epi32(x, x), _mm256_mul_epi32(xi, xi));
        const __m256i o = _mm256_and_si256(_mm256_srl_epi64(p, s), oddv);
        _mm256_storeu_si256((__m256i *)(void *)&P[k],
                            _mm256_srl_epi64(_mm256_add_epi64(_mm256_add_epi64(p, addv), o), s));
    }
    for (; k < channels; k++) {
        const int64_t xr = X[2u * k], xi = X[2u * k + 1u];
        const uint64_t p = (uint64_t)(xr * xr) + (uint64_t)(xi * xi);
        P[k] = (p + add + ((p >> shift) & odd)) >> shift;
    }
}

void tl_detect_power_avx2(const int32_t *X, uint32_t channels, unsigned shift, uint64_t add, uint64_t odd,
                          uint64_t *P)
{
    count_call();
    power_body(X, channels, shift, add, odd, P);
}

/* ---- integration ---------------------------------------------------------- */
/* Flag and count channel k as tl_integrate.c mark does (check grows by
 * bit + 1). Reached only when a sum saturates. */
static void mark_one(uint32_t k, uint8_t *flags, uint8_t bit, uint32_t *count, uint64_t *check)
{
    if ((flags[k] & bit) == 0u) {
        flags[k] = (uint8_t)(flags[k] | bit);
        (*count)++;
        *check += (uint64_t)bit + 1u;
    }
}

static void mark_lanes(unsigned mask, uint32_t k, uint8_t *flags, uint8_t bit, uint32_t *count, uint64_t *check)
{
    for (unsigned l = 0; l < 4u; l++)
        if ((mask >> l) & 1u)
            mark_one(k + l, flags, bit, count, check);
}

static inline TL_AVX2 uint64_t sum_u64_lanes(__m256i v)
{
    uint64_t q[4];
    _mm256_storeu_si256((__m256i *)(void *)q, v);
    return q[0] + q[1] + q[2] + q[3];
}

/* Unsigned r = a + p wrapped iff r < p, tested as signed after flipping
 * the sign bits (AVX2 has only the signed 64-bit compare); a wrapped lane
 * is set to all ones, UINT64_MAX. Eight channels per step; the lanes are
 * looked at one by one only when one of them saturated. The change of
 * each word (new minus old, mod 2^64) is summed per lane for the check. */
static inline TL_AVX2 __m256i sat_add_u64(__m256i a, __m256i p, __m256i sign, __m256i *wrap)
{
    const __m256i r = _mm256_add_epi64(a, p);
    *wrap = _mm256_cmpgt_epi64(_mm256_xor_si256(p, sign), _mm256_xor_si256(r, sign));
    return _mm256_or_si256(r, *wrap);
}

static TL_AVX2 void power_sum_body(uint64_t *acc, const uint64_t *P, uint32_t n, uint8_t *flags, uint8_t bit,
                                   uint32_t *count, uint64_t *check)
{
    const __m256i sign = _mm256_set1_epi64x(INT64_MIN);
    __m256i grew = _mm256_setzero_si256();
    size_t k = 0;
    for (; k + 8u <= n; k += 8u) {
        __m256i w0, w1;
        const __m256i a0 = _mm256_loadu_si256((const __m256i *)(const void *)&acc[k]);
        const __m256i a1 = _mm256_loadu_si256((const __m256i *)(const void *)&acc[k + 4u]);
        const __m256i r0 = sat_add_u64(a0, _mm256_loadu_si256((const __m256i *)(const void *)&P[k]), sign, &w0);
        const __m256i r1 = sat_add_u64(a1, _mm256_loadu_si256((const __m256i *)(const void *)&P[k + 4u]), sign, &w1);
        _mm256_storeu_si256((__m256i *)(void *)&acc[k], r0);
        _mm256_storeu_si256((__m256i *)(void *)&acc[k + 4u], r1);
        grew = _mm256_add_epi64(grew, _mm256_add_epi64(_mm256_sub_epi64(r0, a0), _mm256_sub_epi64(r1, a1)));
        if (!_mm256_testz_si256(_mm256_or_si256(w0, w1), _mm256_or_si256(w0, w1))) {
            mark_lanes((unsigned)_mm256_movemask_pd(_mm256_castsi256_pd(w0)), (uint32_t)k, flags, bit, count, check);
            mark_lanes((unsigned)_mm256_movemask_pd(_mm256_castsi256_pd(w1)), (uint32_t)k + 4u, flags, bit, count,
                       check);
        }
    }
    uint64_t g = sum_u64_lanes(grew);
    for (; k < n; k++) {
        uint32_t sat = 0;
        const uint64_t old = acc[k];
        acc[k] = tl_sat_add_u64(old, P[k], &sat);
        g += acc[k] - old;
        if (sat != 0u)
            mark_one((uint32_t)k, flags, bit, count, check);
    }
    *check += g;
}

void tl_integrate_power_avx2(uint64_t *acc, const uint64_t *P, uint32_t n, uint8_t *flags, uint8_t bit,
                             uint32_t *count, uint64_t *check)
{
    count_call();
    power_sum_body(acc, P, n, flags, bit, count, check);
}

/* Signed r = a + b overflows iff a and b share a sign that r lacks:
 * (~(a ^ b) & (a ^ r)) < 0; the saturated value is INT64_MAX xor (a < 0
 * ? all ones : 0), which is INT64_MIN for negative a (tl_sat_add_s64). */
static inline TL_AVX2 __m256i sat_add_s64(__m256i a, __m256i b, __m256i *ovm)
{
    const __m256i zero = _mm256_setzero_si256(), max = _mm256_set1_epi64x(INT64_MAX);
    const __m256i r = _mm256_add_epi64(a, b);
    const __m256i ov = _mm256_andnot_si256(_mm256_xor_si256(a, b), _mm256_xor_si256(a, r));
    *ovm = _mm256_cmpgt_epi64(zero, ov);
    return _mm256_blendv_epi8(r, _mm256_xor_si256(_mm256_cmpgt_epi64(zero, a), max), *ovm);
}

static TL_AVX2 void cross_sum_body(int64_t *acc_re, int64_t *acc_im, const int64_t *re, const int64_t *im,
                                   uint32_t n, uint8_t *flags, uint8_t bit_re, uint8_t bit_im, uint32_t count[2],
                                   uint64_t *check)
{
    __m256i grew = _mm256_setzero_si256();
    size_t k = 0;
    for (; k + 4u <= n; k += 4u) {
        __m256i mr, mi;
        const __m256i ar = _mm256_loadu_si256((const __m256i *)(const void *)&acc_re[k]);
        const __m256i ai = _mm256_loadu_si256((const __m256i *)(const void *)&acc_im[k]);
        const __m256i r = sat_add_s64(ar, _mm256_loadu_si256((const __m256i *)(const void *)&re[k]), &mr);
        const __m256i i = sat_add_s64(ai, _mm256_loadu_si256((const __m256i *)(const void *)&im[k]), &mi);
        _mm256_storeu_si256((__m256i *)(void *)&acc_re[k], r);
        _mm256_storeu_si256((__m256i *)(void *)&acc_im[k], i);
        grew = _mm256_add_epi64(grew, _mm256_add_epi64(_mm256_sub_epi64(r, ar), _mm256_sub_epi64(i, ai)));
        if (!_mm256_testz_si256(_mm256_or_si256(mr, mi), _mm256_or_si256(mr, mi))) {
            mark_lanes((unsigned)_mm256_movemask_pd(_mm256_castsi256_pd(mr)), (uint32_t)k, flags, bit_re, &count[0],
                       check);
            mark_lanes((unsigned)_mm256_movemask_pd(_mm256_castsi256_pd(mi)), (uint32_t)k, flags, bit_im, &count[1],
                       check);
        }
    }
    uint64_t g = sum_u64_lanes(grew);
    for (; k < n; k++) {
        uint32_t sr = 0, si = 0;
        const uint64_t old = (uint64_t)acc_re[k] + (uint64_t)acc_im[k];
        acc_re[k] = tl_sat_add_s64(acc_re[k], re[k], &sr);
        acc_im[k] = tl_sat_add_s64(acc_im[k], im[k], &si);
        g += (uint64_t)acc_re[k] + (uint64_t)acc_im[k] - old;
        if (sr != 0u)
            mark_one((uint32_t)k, flags, bit_re, &count[0], check);
        if (si != 0u)
            mark_one((uint32_t)k, flags, bit_im, &count[1], check);
    }
    *check += g;
}

void tl_integrate_cross_avx2(int64_t *acc_re, int64_t *acc_im, const int64_t *re, const int64_t *im, uint32_t n,
                             uint8_t *flags, uint8_t bit_re, uint8_t bit_im, uint32_t count[2], uint64_t *check)
{
    count_call();
    cross_sum_body(acc_re, acc_im, re, im, n, flags, bit_re, bit_im, count, check);
}

/* ---- ADC statistics and copy (tl_chain.c copy_in) --------------------- */
/* The samples go in chunks of up to ADC_CHUNK (a multiple of 32); the
 * vector part covers n rounded down to 32, the rest is done as tl_chain.c.
 * First pass, 16 samples per vector: the copy, clips = #(v >= hi) +
 * #(v == INT16_MIN) (v >= hi counted as n - #(hi > v)) in 16-bit lane
 * counters (at most ADC_CHUNK / 16 = 256 per lane per chunk), and |v| >>
 * drop as an unsigned 16-bit value (_mm256_abs_epi16 gives 0x8000 for
 * INT16_MIN, read as 32768) squared through _mm256_madd_epi16: the signed
 * product of 0x8000 with itself is also 2^30, and the sum of two squares
 * (<= 2^31) is exact as an unsigned 32-bit value, widened to 64 bits before
 * it is added. Then the histogram, bin = (v + 32768) >> 12 = (v xor 0x8000)
 * >> 12, in two passes of 8 bins over the chunk (still in the L1 cache),
 * so that the counters stay in registers: 32 bins packed into bytes per
 * step, byte counters (at most ADC_CHUNK / 32 = 128 per lane per chunk)
 * summed with _mm256_sad_epu8 at the end of the chunk. */
#define ADC_CHUNK 4096u

static inline TL_AVX2 uint32_t sum_u16_lanes(__m256i v)
{
    uint16_t lane[16];
    _mm256_storeu_si256((__m256i *)(void *)lane, v);
    uint32_t t = 0;
    for (unsigned l = 0; l < 16u; l++)
        t += lane[l];
    return t;
}

static inline TL_AVX2 uint32_t sum_u8_lanes(__m256i v)
{
    uint64_t q[4];
    _mm256_storeu_si256((__m256i *)(void *)q, _mm256_sad_epu8(v, _mm256_setzero_si256()));
    return (uint32_t)(q[0] + q[1] + q[2] + q[3]);
}

/* The histogram of src[0 .. len-1] (len a multiple of 32, at most
 * ADC_CHUNK) for bins first .. first + 7, added to hist. */
static inline TL_AVX2 void adc_hist8(const int16_t *src, uint32_t len, unsigned first, uint32_t hist[16])
{
    const __m256i sign = _mm256_set1_epi16(INT16_MIN);
    __m256i h[8], key[8];
    for (unsigned b = 0; b < 8u; b++) {
        h[b] = _mm256_setzero_si256();
        key[b] = _mm256_set1_epi8((char)(first + b));
    }
    for (uint32_t i = 0; i < len; i += 32u) {
        const __m256i a = _mm256_srli_epi16(
            _mm256_xor_si256(_mm256_loadu_si256((const __m256i *)(const void *)&src[i]), sign), 12);
        const __m256i c = _mm256_srli_epi16(
            _mm256_xor_si256(_mm256_loadu_si256((const __m256i *)(const void *)&src[i + 16u]), sign), 12);
        const __m256i bins = _mm256_packus_epi16(a, c); /* 32 bins 0 .. 15, order irrelevant */
#pragma GCC unroll 8
        for (unsigned b = 0; b < 8u; b++)
            h[b] = _mm256_sub_epi8(h[b], _mm256_cmpeq_epi8(bins, key[b]));
    }
    for (unsigned b = 0; b < 8u; b++)
        hist[first + b] += sum_u8_lanes(h[b]);
}

static TL_AVX2 void adc_body(const int16_t *src, int16_t *dst, uint32_t n, int16_t hi, unsigned drop,
                             uint32_t *clips, uint32_t hist[16], uint64_t *sumsq)
{
    const __m256i hiv = _mm256_set1_epi16(hi), minv = _mm256_set1_epi16(INT16_MIN);
    const __m128i dr = _mm_cvtsi32_si128((int)drop);
    const uint32_t nv = n & ~31u;
    uint64_t below = 0, mins = 0;
    __m256i sq = _mm256_setzero_si256();
    for (uint32_t c0 = 0; c0 < nv; c0 += ADC_CHUNK) {
        const uint32_t len = nv - c0 < ADC_CHUNK ? nv - c0 : ADC_CHUNK;
        __m256i lt = _mm256_setzero_si256(), mn = _mm256_setzero_si256();
        for (uint32_t i = c0; i < c0 + len; i += 16u) {
            const __m256i v = _mm256_loadu_si256((const __m256i *)(const void *)&src[i]);
            _mm256_storeu_si256((__m256i *)(void *)&dst[i], v);
            lt = _mm256_sub_epi16(lt, _mm256_cmpgt_epi16(hiv, v));
            mn = _mm256_sub_epi16(mn, _mm256_cmpeq_epi16(v, minv));
            const __m256i mag = _mm256_srl_epi16(_mm256_abs_epi16(v), dr);
            const __m256i p = _mm256_madd_epi16(mag, mag); /* 8 x uint32 */
            sq = _mm256_add_epi64(sq, _mm256_cvtepu32_epi64(_mm256_castsi256_si128(p)));
            sq = _mm256_add_epi64(sq, _mm256_cvtepu32_epi64(_mm256_extracti128_si256(p, 1)));
        }
        below += sum_u16_lanes(lt);
        mins += sum_u16_lanes(mn);
        adc_hist8(src + c0, len, 0u, hist);
        adc_hist8(src + c0, len, 8u, hist);
    }
    uint64_t q[4];
    _mm256_storeu_si256((__m256i *)(void *)q, sq);
    uint64_t ssum = q[0] + q[1] + q[2] + q[3];
    uint32_t c = (uint32_t)(nv - below + mins);
    for (uint32_t i = nv; i < n; i++) { /* the rest as tl_chain.c */
        const int16_t v = src[i];
        c += (uint32_t)(v >= hi) + (uint32_t)(v == INT16_MIN);
        hist[(uint32_t)((int32_t)v + 32768) >> 12]++;
        const uint32_t mag = (uint32_t)(v < 0 ? -(int32_t)v : (int32_t)v) >> drop;
        ssum += (uint64_t)mag * mag;
        dst[i] = v;
    }
    *clips = c;
    *sumsq = ssum;
}

void tl_adc_copy_avx2(const int16_t *src, int16_t *dst, uint32_t n, int16_t hi, unsigned drop, uint32_t *clips,
                      uint32_t hist[16], uint64_t *sumsq)
{
    count_call();
    adc_body(src, dst, n, hi, drop, clips, hist, sumsq);
}

/* ---- CRC-32C (the scrubber) --------------------------------------------- */
/* The SSE4.2 crc32 instruction is one reflected CRC-32C step (polynomial
 * 0x82F63B78) on the register value, without the initial and final
 * inversion, as tl_crc32c_update: eight bytes per step in memory order
 * (little-endian load), then byte by byte. */
static __attribute__((target("sse4.2"))) uint32_t crc_body(uint32_t crc, const uint8_t *data, size_t len)
{
    uint64_t c = crc;
    for (; len >= 8u; len -= 8u, data += 8) {
        uint64_t w;
        __builtin_memcpy(&w, data, 8u);
        c = _mm_crc32_u64(c, w);
    }
    uint32_t c32 = (uint32_t)c;
    for (; len > 0u; len--, data++)
        c32 = _mm_crc32_u8(c32, *data);
    return c32;
}

uint32_t tl_crc32c_update_sse42(uint32_t crc, const uint8_t *data, size_t len)
{
    return crc_body(crc, data, len);
}

#else
typedef int tl_simd_x86_not_built; /* not x86-64 GCC/Clang: nothing here */
#endif
