/*
 * test_pfb.c - polyphase filterbank (firmware/tl_pfb.h) against an
 * independent host computation of the documented arithmetic:
 *     acc[n] = sum_p c[p N + n] f_p[n]   (frame 0 = oldest, exact)
 *     y[n]   = sat32(round(acc[n] / 2^(S - 15)))
 * with the rounding done by integer division and the saturation by
 * comparison, and the frames kept in the test's own linear history.
 */
#include "tl_test.h"

#include <stdlib.h>
#include <string.h>
#include "rng.h"
#include "taps_design.h"
#include "tl_pfb.h"

#define M31 2147483647 /* 2^31 - 1 */
#define Y_CANARY 0x13579BDF

static const tl_rounding modes[3] = { TL_ROUND_TRUNCATE, TL_ROUND_HALF_UP, TL_ROUND_HALF_EVEN };

static int64_t ref_round(int64_t v, unsigned s, tl_rounding mode)
{
    if (s == 0u)
        return v;
    const int64_t d = (int64_t)1 << s;
    const int64_t q = (v >= 0) ? v / d : -((-v + d - 1) / d); /* floor */
    const int64_t r = v - q * d;
    if (mode == TL_ROUND_TRUNCATE || 2 * r < d)
        return q;
    if (2 * r > d || mode == TL_ROUND_HALF_UP)
        return q + 1;
    return (q % 2 == 0) ? q : q + 1;
}

/* Output for the frames hist[newest - P + 1 .. newest]; returns the number
 * of outputs clamped. */
static uint32_t ref_output(const tl_taps *t, int16_t *const *hist, size_t newest, tl_rounding mode, int32_t *y)
{
    const uint32_t P = t->taps, N = t->points;
    const unsigned out_shift = t->shift - 15u;
    uint32_t clamped = 0;
    for (uint32_t n = 0; n < N; n++) {
        int64_t acc = 0;
        for (uint32_t p = 0; p < P; p++)
            acc += (int64_t)t->coef[(size_t)p * N + n] * hist[newest - (P - 1u) + p][n];
        int64_t v = ref_round(acc, out_shift, mode);
        if (v > M31 || v < -M31) {
            v = (v > 0) ? M31 : -M31;
            clamped++;
        }
        y[n] = (int32_t)v;
    }
    return clamped;
}

static int16_t rand_q15(tl_rng *r)
{
    return (int16_t)((int32_t)(tl_rng_u64(r) % 65536u) - 32768);
}

static int16_t rand_full_scale(tl_rng *r)
{
    return (tl_rng_u64(r) & 1u) ? (int16_t)32767 : (int16_t)-32768;
}

static tl_pfb *new_pfb(void)
{
    tl_pfb *p = calloc(1, sizeof *p);
    assert_non_null(p);
    return p;
}

static tl_taps *new_taps(void)
{
    tl_taps *t = calloc(1, sizeof *t);
    assert_non_null(t);
    return t;
}

/* A history of F frames of N samples, owned by the test. */
typedef struct frames {
    size_t count;
    int16_t **f;
} frames;

static frames frames_new(size_t count, uint32_t N)
{
    frames h = { count, calloc(count, sizeof(int16_t *)) };
    assert_non_null(h.f);
    for (size_t i = 0; i < count; i++) {
        h.f[i] = calloc(N, sizeof(int16_t));
        assert_non_null(h.f[i]);
    }
    return h;
}

static void frames_free(frames *h)
{
    for (size_t i = 0; i < h->count; i++)
        free(h->f[i]);
    free(h->f);
}

/* Push frames h.f[first .. first + n - 1]; `since_reset` counts the frames
 * already pushed since init/reset. Checks every commit against the
 * reference; returns the total number of clamps the reference predicts. */
static uint32_t push_and_check(tl_pfb *pfb, const tl_taps *t, frames *h, size_t first, size_t n,
                               size_t since_reset, tl_rounding mode, uint32_t *sat)
{
    const uint32_t N = t->points, P = t->taps;
    int32_t *y = malloc((N + 1u) * sizeof *y), *want = malloc(N * sizeof *want);
    assert_non_null(y);
    assert_non_null(want);
    uint32_t clamps = 0;
    for (size_t i = first; i < first + n; i++) {
        memcpy(tl_pfb_next_frame(pfb), h->f[i], N * sizeof(int16_t));
        for (uint32_t k = 0; k <= N; k++)
            y[k] = Y_CANARY;
        const uint32_t sat_before = *sat;
        const int out = tl_pfb_commit(pfb, y, sat);
        const size_t held = since_reset + (i - first) + 1u;
        if (held < P) {
            /* still filling: no output, y untouched, nothing counted */
            if (out != 0)
                fail_msg("frame %zu of %u after reset gave an output", held, (unsigned)P);
            for (uint32_t k = 0; k <= N; k++)
                assert_int_equal(y[k], Y_CANARY);
            assert_int_equal(*sat, sat_before);
            continue;
        }
        assert_int_equal(out, 1);
        const uint32_t c = ref_output(t, h->f, i, mode, want);
        for (uint32_t k = 0; k < N; k++)
            if (y[k] != want[k])
                fail_msg("frame %zu, sample %u (P=%u N=%u S=%u mode %d): y = %ld, expected %ld", i, (unsigned)k,
                         (unsigned)P, (unsigned)N, (unsigned)t->shift, (int)mode, (long)y[k], (long)want[k]);
        assert_int_equal(y[N], Y_CANARY); /* nothing past N */
        assert_int_equal(*sat - sat_before, c);
        clamps += c;
    }
    free(y);
    free(want);
    return clamps;
}

static void designed_tables_match_reference(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("pfb_designed_tables", 0x9FB00001u));
    const struct { unsigned window; uint32_t taps, points; } designs[] = {
        { TL_WINDOW_HANN, 4, 256 },
        { TL_WINDOW_HANN, 1, 256 },
        { TL_WINDOW_BLACKMAN_HARRIS4, 16, 256 },
        { TL_WINDOW_HAMMING, 8, 1024 },
    };
    tl_taps *t = new_taps();
    tl_pfb *pfb = new_pfb();
    for (size_t d = 0; d < sizeof designs / sizeof designs[0]; d++) {
        assert_int_equal(tl_taps_design(designs[d].window, designs[d].taps, designs[d].points, t, NULL), 0);
        const size_t F = designs[d].taps + 5u;
        frames h = frames_new(F, designs[d].points);
        for (size_t i = 0; i < F; i++)
            for (uint32_t n = 0; n < designs[d].points; n++)
                h.f[i][n] = rand_q15(&r);
        for (unsigned m = 0; m < 3u; m++) {
            assert_int_equal(tl_pfb_init(pfb, t, modes[m]), TL_OK);
            assert_int_equal(pfb->out_shift, t->shift - 15u);
            uint32_t sat = 0;
            const uint32_t clamps = push_and_check(pfb, t, &h, 0, F, 0, modes[m], &sat);
            assert_int_equal(sat, clamps);
        }
        frames_free(&h);
    }
    free(pfb);
    free(t);
}

static void default_table_matches_reference(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("pfb_default_table", 0x9FB00002u));
    tl_taps *t = new_taps();
    tl_pfb *pfb = new_pfb();
    assert_int_equal(tl_taps_default(t), TL_OK);
    frames h = frames_new(6, t->points);
    for (size_t i = 0; i < h.count; i++)
        for (uint32_t n = 0; n < t->points; n++)
            h.f[i][n] = rand_q15(&r);
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_OK);
    uint32_t sat = 0;
    assert_int_equal(push_and_check(pfb, t, &h, 0, h.count, 0, TL_ROUND_HALF_EVEN, &sat), sat);
    frames_free(&h);
    free(pfb);
    free(t);
}

/* Constant frames 1, 2, 3, ... and taps block p all equal to p + 1, S = 15
 * (no rounding): the output tells the frame order apart.
 * Oldest frame times block 0: 1*1 + 2*2 + 3*3 + 4*4 = 30; reversed would be 20. */
static void frame_order_hand_worked(void **state)
{
    (void)state;
    enum { P = 4, N = 256 };
    tl_taps *t = new_taps();
    t->points = N;
    t->taps = P;
    t->shift = 15;
    t->window = TL_WINDOW_OTHER;
    for (uint32_t p = 0; p < P; p++)
        for (uint32_t n = 0; n < N; n++)
            t->coef[p * N + n] = (int32_t)(p + 1u);
    tl_pfb *pfb = new_pfb();
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_OK);
    const int32_t want[] = { 0, 0, 0, 30, 40, 50, 60 }; /* frames k+1..k+4: sum (p+1)(k+1+p) = 30 + 10k */
    int32_t y[N];
    uint32_t sat = 0;
    for (int16_t f = 1; f <= 7; f++) {
        int16_t *dst = tl_pfb_next_frame(pfb);
        for (uint32_t n = 0; n < N; n++)
            dst[n] = f;
        for (uint32_t n = 0; n < N; n++)
            y[n] = Y_CANARY;
        const int out = tl_pfb_commit(pfb, y, &sat);
        assert_int_equal(out, (f >= P) ? 1 : 0);
        for (uint32_t n = 0; n < N; n++)
            assert_int_equal(y[n], (f >= P) ? want[f - 1] : Y_CANARY);
    }
    /* with S = 17 the same sums are divided by 4 (rounding by 2 bits) */
    t->shift = 17;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_OK);
    for (int16_t f = 1; f <= 6; f++) {
        int16_t *dst = tl_pfb_next_frame(pfb);
        for (uint32_t n = 0; n < N; n++)
            dst[n] = f;
        (void)tl_pfb_commit(pfb, y, &sat);
    }
    /* last output used frames 3..6: 1*3 + 2*4 + 3*5 + 4*6 = 50 -> 12.5 -> 12 (even) */
    assert_int_equal(y[0], 12);
    assert_int_equal(y[N - 1], 12);
    assert_int_equal(sat, 0);
    free(pfb);
    free(t);
}

static void reset_restarts_fill(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("pfb_reset_restarts_fill", 0x9FB00003u));
    tl_taps *t = new_taps();
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, 4, 256, t, NULL), 0);
    tl_pfb *pfb = new_pfb();
    const size_t F = 20;
    frames h = frames_new(F, 256);
    for (size_t i = 0; i < F; i++)
        for (uint32_t n = 0; n < 256u; n++)
            h.f[i][n] = rand_q15(&r);
    for (unsigned m = 0; m < 3u; m++) {
        assert_int_equal(tl_pfb_init(pfb, t, modes[m]), TL_OK);
        uint32_t sat = 0;
        (void)push_and_check(pfb, t, &h, 0, 6, 0, modes[m], &sat); /* 3 outputs */
        tl_pfb_reset(pfb);
        /* after a reset at a different ring position: P-1 silent frames,
         * then outputs from the new frames only */
        (void)push_and_check(pfb, t, &h, 6, 7, 0, modes[m], &sat);
        tl_pfb_reset(pfb);
        tl_pfb_reset(pfb); /* twice is the same as once */
        (void)push_and_check(pfb, t, &h, 13, 7, 0, modes[m], &sat);
        assert_int_equal(sat, 0);
    }
    frames_free(&h);
    free(pfb);
    free(t);
}

static void init_rejections(void **state)
{
    (void)state;
    tl_taps *t = new_taps();
    assert_int_equal(tl_taps_design(TL_WINDOW_HANN, 4, 256, t, NULL), 0);
    tl_pfb *pfb = new_pfb();
    assert_int_equal(tl_pfb_init(NULL, t, TL_ROUND_HALF_EVEN), TL_E_NULL);
    assert_int_equal(tl_pfb_init(pfb, NULL, TL_ROUND_HALF_EVEN), TL_E_NULL);
    assert_int_equal(tl_pfb_init(pfb, t, (tl_rounding)3), TL_E_ROUNDING);
    assert_int_equal(tl_pfb_init(pfb, t, (tl_rounding)-1), TL_E_ROUNDING);
    t->shift = 14;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_E_TABLE_FORMAT);
    t->shift = 41;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_E_TABLE_FORMAT);
    /* the shift bounds are accepted, and S - 15 bits are dropped */
    t->shift = 15;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_OK);
    assert_int_equal(pfb->out_shift, 0);
    t->shift = 40;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_OK);
    assert_int_equal(pfb->out_shift, 25);
    t->shift = 16;
    /* geometry out of range (statuses from tl_status.h) */
    t->taps = 0;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_E_TAPS);
    t->taps = TL_MAX_TAPS + 1u;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_E_TAPS);
    t->taps = 4;
    t->points = 128;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_E_POINTS);
    t->points = 2u * TL_MAX_POINTS;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_E_POINTS);
    free(pfb);
    free(t);
}

/* 18-bit extreme coefficients and full-scale inputs: the branch gain far
 * exceeds the one bit of headroom, so outputs clamp symmetrically and the
 * counter equals the number of clamps computed independently. */
static void saturation_counted(void **state)
{
    (void)state;
    tl_rng r;
    tl_rng_seed(&r, tl_test_seed("pfb_saturation_counted", 0x9FB00004u));
    enum { P = 4, N = 256 };
    tl_taps *t = new_taps();
    t->points = N;
    t->taps = P;
    t->window = TL_WINDOW_OTHER;
    for (uint32_t i = 0; i < P * N; i++) {
        const uint32_t n = i % N;
        if (n % 4u == 0u)       /* the 18-bit extremes */
            t->coef[i] = (tl_rng_u64(&r) & 1u) ? TL_TAPS_COEF_MAX : TL_TAPS_COEF_MIN;
        else if (n % 4u == 1u)  /* large, random */
            t->coef[i] = (int32_t)(tl_rng_u64(&r) % 262144u) - 131072;
        else                    /* small: never clamps */
            t->coef[i] = (int32_t)(tl_rng_u64(&r) % 2001u) - 1000;
    }
    const size_t F = 12;
    frames h = frames_new(F, N);
    for (size_t i = 0; i < F; i++)
        for (uint32_t n = 0; n < N; n++)
            h.f[i][n] = rand_full_scale(&r);
    tl_pfb *pfb = new_pfb();
    const uint32_t shifts[] = { 15, 16, 17, 20 };
    for (size_t s = 0; s < sizeof shifts / sizeof shifts[0]; s++)
        for (unsigned m = 0; m < 3u; m++) {
            t->shift = shifts[s];
            assert_int_equal(tl_pfb_init(pfb, t, modes[m]), TL_OK);
            uint32_t sat = 1000; /* the commit adds to the caller's count */
            const uint32_t clamps = push_and_check(pfb, t, &h, 0, F, 0, modes[m], &sat);
            assert_int_equal(sat, 1000u + clamps);
            /* Each term c f of an extreme channel has |c f| in
             * [131071 * 32767, 2^32]. If the four signs do not cancel
             * (probability 5/8) |acc| >= 3 * 131071 * 32767 - 2^32 > 2^33 - 2^19,
             * so |y| > 2^31 at S <= 16 and the channel clamps. At S = 17 only
             * four equal signs (probability 1/8) are sure to clamp. At S = 20,
             * |acc| <= 4 * 2^17 * 2^15 = 2^34 gives |y| <= 2^29: never. */
            const uint32_t outputs = (uint32_t)(F - P + 1u), extreme = N / 4u;
            if (shifts[s] <= 16u)
                assert_true(clamps >= outputs * extreme / 2u);   /* expect 5/8 of them */
            else if (shifts[s] == 17u)
                assert_true(clamps >= outputs * extreme / 32u);  /* expect 1/8 of them */
            else
                assert_int_equal(clamps, 0);
            if (shifts[s] <= 17u)
                assert_true(clamps < outputs * N);  /* the small channels never clamp */
        }
    /* the caller's counter saturates instead of wrapping */
    t->shift = 15;
    assert_int_equal(tl_pfb_init(pfb, t, TL_ROUND_HALF_EVEN), TL_OK);
    uint32_t sat = UINT32_MAX - 3u;
    int32_t *y = malloc(N * sizeof *y), *want = malloc(N * sizeof *want);
    assert_non_null(y);
    assert_non_null(want);
    for (size_t i = 0; i < P; i++) {
        memcpy(tl_pfb_next_frame(pfb), h.f[i], N * sizeof(int16_t));
        (void)tl_pfb_commit(pfb, y, &sat);
    }
    assert_true(ref_output(t, h.f, P - 1u, TL_ROUND_HALF_EVEN, want) > 3u); /* more than the headroom left */
    assert_true(sat == UINT32_MAX);
    assert_memory_equal(y, want, N * sizeof *y);
    free(want);
    /* and no output is ever -2^31 */
    for (uint32_t n = 0; n < N; n++)
        assert_true(y[n] >= -M31);
    free(y);
    frames_free(&h);
    free(pfb);
    free(t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(designed_tables_match_reference),
        cmocka_unit_test(default_table_matches_reference),
        cmocka_unit_test(frame_order_hand_worked),
        cmocka_unit_test(reset_restarts_fill),
        cmocka_unit_test(init_rejections),
        cmocka_unit_test(saturation_counted),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
