/*
 * test_replay_threads.c - the segmented, parallel replay (host/replay_threads.h)
 * gives exactly the product of one chain fed the whole recording, byte for
 * byte, with 1, 2 and 3 threads, with and without switching; and refuses,
 * with one line, the cases that cannot be split exactly.
 *
 * The reference is the firmware chain itself (tl_chain.h: "a stream cut into
 * any pieces gives the same products byte for byte"), fed serially from its
 * own reader: an internal comparison, no outside source needed.
 */
#include <stddef.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "replay_threads.h"
#include "scenario.h"
#include "sigmf.h"
#include "tl_test.h"


enum { POINTS = 512, TAPS = 4, SPECTRA = 101 }; /* 101: prime, so segments end mid-step */

typedef struct noise_src {
    uint64_t x;
    uint64_t n; /* samples written so far */
} noise_src;

static int16_t code14(noise_src *z, uint64_t i)
{
    z->x ^= z->x << 13;
    z->x ^= z->x >> 7;
    z->x ^= z->x << 17;
    /* a level that changes every 3 frames, and a rail now and then (ADC clip counts) */
    const int level = 1 + (int)((i / (3u * POINTS)) % 4u);
    if ((z->x & 0x3FFu) == 7u)
        return (int16_t)(((1 << 13) - 1) << 2);
    int v = ((int)(z->x >> 52) - 2048) * level / 2;
    return (int16_t)(v * 4); /* 14-bit code left-aligned: low 2 bits zero */
}

static void noise_source(void *state, int16_t *in0, int16_t *in1, size_t n)
{
    noise_src *z = state;
    for (size_t i = 0; i < n; i++) {
        in0[i] = code14(z, z->n + i);
        if (in1 != NULL)
            in1[i] = code14(z, z->n + i);
    }
    z->n += n;
}

static void make_recording(const char *base, unsigned inputs, uint64_t seed)
{
    tl_sigmf_desc d;
    memset(&d, 0, sizeof d);
    d.sample_rate_hz = 102.4e6;
    d.inputs = inputs;
    d.adc_bits = 14;
    d.samples = (uint64_t)(TAPS - 1 + SPECTRA) * POINTS;
    d.seed = seed;
    noise_src z = { seed | 1u, 0 };
    char err[2048];
    if (tl_sigmf_write(base, &d, noise_source, &z, err, sizeof err) != 0)
        fail_msg("%s", err);
}

static void scenario(tl_scenario *s, unsigned inputs)
{
    tl_scenario_default(s);
    s->cfg.points = POINTS;
    s->cfg.taps = TAPS;
    s->cfg.inputs = inputs;
    s->cfg.adc_bits = 14;
    s->cfg.switch_steps = 0;
    s->cfg.switch_discard = 0;
    s->cfg.sk_spectra = 0;
    s->cfg.det_shift = TL_DET_SHIFT_AUTO;
    s->spectra = SPECTRA;
}

/* One chain, the whole recording, in pieces of 1000 samples. */
static void serial(const char *meta, const tl_scenario *s, tl_product *out)
{
    char err[2048];
    tl_sigmf_reader *rd = tl_sigmf_open(meta, 0, err, sizeof err);
    if (rd == NULL)
        fail_msg("%s", err);
    assert_int_equal(tl_sigmf_set_adc_bits(rd, s->cfg.adc_bits), 0);
    uint8_t *img = NULL;
    size_t img_len = 0;
    assert_int_equal(tl_scenario_taps_image(s, 0, &img, &img_len), 0);
    tl_config cfg = s->cfg;
    cfg.integration = s->spectra;
    tl_chain *c = tl_test_chain();
    assert_int_equal(tl_chain_init(c, &cfg, img, img_len), TL_OK);
    enum { PIECE = 1000 };
    int16_t a[PIECE], b[PIECE];
    int16_t *const o[2] = { a, s->cfg.inputs == 2u ? b : NULL };
    uint64_t left = (uint64_t)(TAPS - 1 + SPECTRA) * POINTS;
    while (left > 0) {
        const size_t n = left < PIECE ? (size_t)left : PIECE;
        if (tl_sigmf_read(rd, o, n, err, sizeof err) != 0)
            fail_msg("%s", err);
        size_t used = 0;
        assert_int_equal(tl_chain_push(c, a, o[1], n, &used), TL_OK);
        assert_int_equal(used, n);
        left -= n;
    }
    assert_true(tl_chain_ready(c));
    assert_int_equal(tl_chain_take(c, out), TL_OK);
    free(c);
    free(img);
    tl_sigmf_close(rd);
}

static void expect_identical(const char *meta, const tl_scenario *s, const char *what)
{
    tl_product *want = calloc(1, sizeof *want);
    assert_non_null(want);
    serial(meta, s, want);
    /* the case is not trivial: samples clipped, and with switching, spectra discarded in every state */
    assert_true(want->stats.adc_clips[0] > 0u);
    if (s->cfg.switch_steps > 0u) {
        assert_true(want->discarded > 0u);
        assert_true(want->cal[0].spectra > 0u && want->cal[1].spectra > 0u);
    }
    for (unsigned threads = 1; threads <= 3u; threads++) {
        tl_product *got = calloc(1, sizeof *got);
        assert_non_null(got);
        char err[2048] = "";
        const int rc = tl_replay_threads_product(meta, 0, s, threads, got, err, sizeof err);
        if (rc != 0)
            fail_msg("%s, %u threads: %s", what, threads, err);
        printf("    %s, %u thread%s: spectra %u (antenna %u, load %u, noise %u, discarded %u), clips %u\n", what,
               threads, threads == 1 ? "" : "s", got->spectra, got->antenna_spectra, got->cal[0].spectra,
               got->cal[1].spectra, got->discarded, got->stats.adc_clips[0]);
        assert_int_equal(got->spectra, want->spectra);
        assert_int_equal(got->antenna_spectra, want->antenna_spectra);
        assert_int_equal(got->discarded, want->discarded);
        assert_int_equal(got->stats.adc_clips[0], want->stats.adc_clips[0]);
        assert_true(got->stats.adc_sumsq[0] == want->stats.adc_sumsq[0]);
        for (uint32_t k = 0; k < TL_MAX_CHANNELS; k++)
            if (got->auto_power[0][k] != want->auto_power[0][k])
                fail_msg("%s, %u threads: channel %u auto0 %llu, serial %llu", what, threads, k,
                         (unsigned long long)got->auto_power[0][k], (unsigned long long)want->auto_power[0][k]);
        /* every byte of the product up to the scrub counters, which each
         * segment's chain keeps for its own table walk */
        assert_memory_equal(got, want, offsetof(tl_product, upset));
        assert_int_equal(got->upset, want->upset);
        assert_memory_equal(got->scrub.mismatches, want->scrub.mismatches, sizeof got->scrub.mismatches);
        assert_int_equal(got->scrub.state_faults, want->scrub.state_faults);
        free(got);
    }
    free(want);
}

static void with_recording(unsigned inputs, void (*body)(const char *meta, unsigned inputs))
{
    char dir[] = "/tmp/tl_replay_threads_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char base[256], meta[300], data[300];
    snprintf(base, sizeof base, "%s/rec", dir);
    snprintf(meta, sizeof meta, "%s.sigmf-meta", base);
    snprintf(data, sizeof data, "%s.sigmf-data", base);
    make_recording(base, inputs, tl_test_seed("replay threads", 2024));
    body(meta, inputs);
    remove(meta);
    remove(data);
    rmdir(dir);
}

static void body_plain(const char *meta, unsigned inputs)
{
    tl_scenario s;
    scenario(&s, inputs);
    expect_identical(meta, &s, inputs == 2u ? "2 inputs, no switching" : "1 input, no switching");
}

static void body_switching(const char *meta, unsigned inputs)
{
    tl_scenario s;
    scenario(&s, inputs);
    /* antenna 10, load 7, load + noise 5 frames; 3 discarded after each change */
    s.cfg.switch_steps = 3;
    s.cfg.switch_state[0] = TL_STATE_ANTENNA;
    s.cfg.switch_dwell[0] = 10;
    s.cfg.switch_state[1] = TL_STATE_LOAD;
    s.cfg.switch_dwell[1] = 7;
    s.cfg.switch_state[2] = TL_STATE_NOISE;
    s.cfg.switch_dwell[2] = 5;
    s.cfg.switch_discard = 3;
    expect_identical(meta, &s, "switching 10/7/5, discard 3");
    /* the last step's state is the first's: no change (no discard) at the wrap,
     * but one at the start; a segment must not restart the discard window */
    s.cfg.switch_steps = 4;
    s.cfg.switch_state[0] = TL_STATE_ANTENNA;
    s.cfg.switch_dwell[0] = 6;
    s.cfg.switch_state[1] = TL_STATE_LOAD;
    s.cfg.switch_dwell[1] = 9;
    s.cfg.switch_state[2] = TL_STATE_NOISE;
    s.cfg.switch_dwell[2] = 4;
    s.cfg.switch_state[3] = TL_STATE_ANTENNA;
    s.cfg.switch_dwell[3] = 5;
    s.cfg.switch_discard = 3;
    expect_identical(meta, &s, "switching 6/9/4/5 (antenna at both ends), discard 3");
}

static void test_plain_two_inputs(void **state)
{
    (void)state;
    with_recording(2, body_plain);
}

static void test_plain_one_input(void **state)
{
    (void)state;
    with_recording(1, body_plain);
}

static void test_switching(void **state)
{
    (void)state;
    with_recording(2, body_switching);
}

static void expect_refused(const char *meta, const tl_scenario *s, unsigned threads, const char *words)
{
    tl_product *got = calloc(1, sizeof *got);
    assert_non_null(got);
    char err[2048] = "";
    assert_int_equal(tl_replay_threads_product(meta, 0, s, threads, got, err, sizeof err), -1);
    printf("    refused: %s\n", err);
    assert_non_null(strstr(err, words));
    assert_null(strchr(err, '\n')); /* one line */
    free(got);
}

static void body_refusals(const char *meta, unsigned inputs)
{
    tl_scenario s;
    scenario(&s, inputs);
    /* spectral kurtosis blocks would be cut by the segments */
    s.cfg.sk_spectra = 16;
    s.cfg.sk_accumulate = 1;
    expect_refused(meta, &s, 2, "spectral kurtosis");
    /* a detection shift below ceil(log2 101) = 7 lets a sum saturate */
    scenario(&s, inputs);
    s.cfg.det_shift = 6;
    expect_refused(meta, &s, 3, "detection shift 6");
    /* with one thread nothing is split: both run as the serial chain */
    tl_product *got = calloc(1, sizeof *got), *want = calloc(1, sizeof *want);
    assert_non_null(got);
    assert_non_null(want);
    char err[2048];
    assert_int_equal(tl_replay_threads_product(meta, 0, &s, 1, got, err, sizeof err), 0);
    serial(meta, &s, want);
    assert_memory_equal(got, want, sizeof *got);
    free(got);
    free(want);
    scenario(&s, inputs);
    expect_refused(meta, &s, 0, "--threads 0");
    expect_refused(meta, &s, TL_REPLAY_MAX_THREADS + 1u, "must be from 1 to");
}

static void test_refusals(void **state)
{
    (void)state;
    with_recording(2, body_refusals);
}

/* The stated memory bound does not depend on the recording's length. */
static void test_memory_bound(void **state)
{
    (void)state;
    const size_t one = tl_replay_threads_bytes(1, 0), two = tl_replay_threads_bytes(2, 0);
    printf("    memory: %zu bytes for 1 thread, %zu for 2\n", one, two);
    assert_true(two == 2u * one);
    assert_true(one >= sizeof(tl_chain) + sizeof(tl_product) + TL_SIGMF_BLOCK_DEFAULT);
}

/* The command: `replay --threads 3` writes the same spectra files, byte for
 * byte, as the serial `replay` (chain, references and all) of a recording
 * made by `simulate` (default scenario: switching with discards); and it
 * refuses spectral kurtosis with one line and exit status 1. */
static const char *argv0;

static int same_file(const char *a, const char *b)
{
    char cmd[1200], out[64];
    snprintf(cmd, sizeof cmd, "cmp -s '%s' '%s' && echo same", a, b);
    return tl_test_shell(cmd, out, sizeof out) == 0 && strncmp(out, "same", 4) == 0;
}

static void test_cli(void **state)
{
    (void)state;
    char tool[4200], probe[4096];
    snprintf(probe, sizeof probe, "%s", argv0);
    char *slash = strrchr(probe, '/');
    if (slash != NULL)
        *slash = '\0';
    snprintf(tool, sizeof tool, "%s/tidelock", slash != NULL ? probe : ".");
    if (access(tool, X_OK) != 0) {
        printf("    %s not built: the command's test is skipped (make builds it)\n", tool);
        skip();
    }
    char dir[] = "/tmp/tl_replay_threads_cli_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char ini[300], args[2048], out[16384];
    snprintf(ini, sizeof ini, "%s/s.ini", dir);
    FILE *f = fopen(ini, "w");
    assert_non_null(f);
    fprintf(f, "[instrument]\nchannels = 512\n[integration]\nspectra = 320\n[fidelity]\nextrapolate_to = 0\n");
    fclose(f);
    snprintf(args, sizeof args, "simulate %s -q -o %s/rec", ini, dir);
    assert_int_equal(tl_test_tool(argv0, args, out, sizeof out), 0);
    snprintf(args, sizeof args, "replay %s/rec.sigmf-meta -q -o %s/serial", dir, dir);
    const int rc = tl_test_tool(argv0, args, out, sizeof out);
    assert_true(rc == 0 || rc == 1); /* the verdict does not matter here */
    snprintf(args, sizeof args, "replay %s/rec.sigmf-meta --threads 3 -o %s/par", dir, dir);
    assert_int_equal(tl_test_tool(argv0, args, out, sizeof out), 0);
    printf("    %s", out);
    static const char *const files[] = { "auto0.npy", "auto1.npy", "cross.npy", "flags.npy", "auto0.csv",
                                         "auto1.csv", "cross.csv" };
    for (size_t i = 0; i < sizeof files / sizeof files[0]; i++) {
        char a[400], b[400];
        snprintf(a, sizeof a, "%s/serial/%s", dir, files[i]);
        snprintf(b, sizeof b, "%s/par/%s", dir, files[i]);
        if (!same_file(a, b))
            fail_msg("%s differs between replay and replay --threads 3", files[i]);
    }
    f = fopen(ini, "a");
    assert_non_null(f);
    fprintf(f, "[flagging]\nsk_block = 32\n");
    fclose(f);
    snprintf(args, sizeof args, "replay %s/rec.sigmf-meta %s --threads 2 -q -o %s/sk", dir, ini, dir);
    assert_int_equal(tl_test_tool(argv0, args, out, sizeof out), 1);
    printf("    %s", out);
    assert_int_equal(tl_test_lines(out), 1);
    assert_non_null(strstr(out, "spectral kurtosis"));
    snprintf(args, sizeof args, "rm -rf '%s'", dir);
    assert_int_equal(tl_test_shell(args, out, sizeof out), 0);
}

int main(int argc, char **argv)
{
    (void)argc;
    argv0 = argv[0];
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_plain_two_inputs),
        cmocka_unit_test(test_plain_one_input),
        cmocka_unit_test(test_switching),
        cmocka_unit_test(test_refusals),
        cmocka_unit_test(test_memory_bound),
        cmocka_unit_test(test_cli),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
