/*
 * test_acquisition.c - capture blocks, gaps and the processor-speed model
 * (firmware/tl_chain.h tl_chain_gap / tl_chain_block_kept,
 * host/acquisition.h, docs/acquisition.md), the housekeeping acquisition
 * block, the processing budget, and the Cortex-M7 instruction counts.
 */
#include <libgen.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "acquisition.h"
#include "tl_downlink.h"
#include "tl_test.h"

static char hil_dir[4200];

/* ---- the closed form against hand-worked timelines ---------------------- */

static void model_of(tl_acq_model *m, uint64_t T, uint64_t S, uint32_t K)
{
    memset(m, 0, sizeof *m);
    m->T = T;
    m->S = S;
    m->buffers = K;
}

static uint64_t simulate(const tl_acq_model *m, uint64_t n, char *pattern)
{
    tl_acq_sim q;
    tl_acq_sim_start(&q, m);
    for (uint64_t k = 0; k < n; k++) {
        const int keep = tl_acq_sim_next(&q);
        if (pattern != NULL)
            pattern[k] = keep ? 'P' : 'd';
    }
    if (pattern != NULL)
        pattern[n] = '\0';
    return q.kept;
}

static void closed_form_by_hand(void **state)
{
    (void)state;
    tl_acq_model m;
    char pat[64];
    /* Worked by hand on a time line (exact integer arithmetic, no source
     * needed): T = 2, S = 3 (rho = 1.5), 2 buffers. Block k arrives at
     * 2(k+1). Block 0 runs [2,5), 1 waits, 1 runs [5,8) and 2 waits from 6,
     * 3 arrives at 8 as 2 starts (the freed buffer takes it), 4 at 10 finds
     * both taken (2 running, 3 waiting): dropped; 3 runs [11,14), 5 waits
     * from 12, 6 arrives at 14 as 5 starts, 7 at 16 is dropped. */
    model_of(&m, 2, 3, 2);
    assert_int_equal(simulate(&m, 8, pat), 6);
    assert_string_equal(pat, "PPPPdPPd");
    assert_int_equal(tl_acq_predicted_kept(&m, 8), 6);
    /* one buffer: a block is taken only when the processor is idle: blocks
     * 0, 2, 4, 6 (m = ceil(1.5) = 2) */
    model_of(&m, 2, 3, 1);
    assert_int_equal(simulate(&m, 8, pat), 4);
    assert_string_equal(pat, "PdPdPdPd");
    assert_int_equal(tl_acq_predicted_kept(&m, 8), 4);
    /* exactly at the limit: S = T keeps everything with one buffer (a
     * buffer freed at an arrival's instant is free for it) */
    model_of(&m, 5, 5, 1);
    assert_int_equal(simulate(&m, 100, NULL), 100);
    assert_int_equal(tl_acq_predicted_kept(&m, 100), 100);
    /* rho = 2, K = 1: every other block */
    model_of(&m, 5, 10, 1);
    assert_int_equal(simulate(&m, 101, NULL), 51);
    assert_int_equal(tl_acq_predicted_kept(&m, 101), 51);
}

static void closed_form_sweep(void **state)
{
    (void)state;
    /* The simulation against the closed form of acquisition.h over loads
     * 0.5 .. 4 and 1 .. 5 buffers, every prefix length up to 600 blocks. */
    unsigned cases = 0;
    for (uint64_t S = 10; S <= 80; S += 3)
        for (uint32_t K = 1; K <= 5; K++) {
            tl_acq_model m;
            model_of(&m, 20, S, K);
            tl_acq_sim q;
            tl_acq_sim_start(&q, &m);
            for (uint64_t n = 1; n <= 600; n++) {
                tl_acq_sim_next(&q);
                if (q.kept != tl_acq_predicted_kept(&m, n))
                    fail_msg("T 20, S %llu, K %u, n %llu: simulated %llu, closed form %llu", (unsigned long long)S, K,
                             (unsigned long long)n, (unsigned long long)q.kept,
                             (unsigned long long)tl_acq_predicted_kept(&m, n));
                cases++;
            }
            /* the steady state: |kept/n - duty| <= (K + 1) / n */
            TL_ASSERT_NEAR((double)q.kept / 600.0, tl_acq_predicted_duty(&m), (K + 1.0) / 600.0);
        }
    print_message("[ INFO     ] %u prefixes agree with the closed form\n", cases);
}

/* ---- gaps in the chain ---------------------------------------------------- */

#define GP 1024u /* points */
#define GFRAMES 40u

static int16_t gx[2][GFRAMES * GP];

static void fill_noise(uint64_t seed)
{
    uint64_t s = seed | 1u;
    for (uint32_t i = 0; i < 2u; i++)
        for (size_t n = 0; n < GFRAMES * GP; n++) {
            int32_t v = 0;
            for (int k = 0; k < 4; k++) {
                s ^= s << 13;
                s ^= s >> 7;
                s ^= s << 17;
                v += (int32_t)(s >> 54) - 512;
            }
            gx[i][n] = (int16_t)(v * 4);
        }
}

static tl_config gap_config(uint32_t integration)
{
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.points = GP;
    cfg.integration = integration;
    cfg.det_shift = 6u; /* fixed: the pieces and the whole must use the same shift */
    return cfg;
}

/* Frames [f0, f1) through a fresh chain of `spectra` spectra. */
static void piece(uint32_t f0, uint32_t f1, uint32_t spectra, tl_product *p, const uint8_t *img, size_t img_len)
{
    tl_chain *c = tl_test_chain();
    tl_config cfg = gap_config(spectra);
    assert_int_equal(tl_chain_init(c, &cfg, img, img_len), TL_OK);
    size_t used = 0;
    assert_int_equal(tl_chain_push(c, gx[0] + (size_t)f0 * GP, gx[1] + (size_t)f0 * GP, (size_t)(f1 - f0) * GP, &used),
                     TL_OK);
    assert_int_equal(used, (size_t)(f1 - f0) * GP);
    assert_true(tl_chain_ready(c));
    assert_int_equal(tl_chain_take(c, p), TL_OK);
    free(c);
}

static uint8_t *table_image(size_t *len)
{
    /* the built-in table is for 8192 points: the scenario's design for 1024 */
    tl_scenario sc;
    tl_scenario_default(&sc);
    sc.cfg.points = GP;
    uint8_t *img = NULL;
    assert_int_equal(tl_scenario_taps_image(&sc, 1, &img, len), 0);
    assert_non_null(img);
    return img;
}

static void gap_equals_pieces(void **state)
{
    (void)state;
    fill_noise(tl_test_seed("gap_equals_pieces", 17));
    size_t img_len = 0;
    uint8_t *img = table_image(&img_len);
    const uint32_t P = 4u, a = 12u, G = 5u, L2 = GFRAMES - a - G; /* frames: piece 1, gap, piece 2 */
    const uint32_t s1 = a - (P - 1u), s2 = L2 - (P - 1u);        /* spectra each piece makes alone */
    tl_product *p1 = tl_test_product(), *p2 = tl_test_product(), *w = tl_test_product();
    piece(0, a, s1, p1, img, img_len);
    piece(a + G, GFRAMES, s2, p2, img, img_len);

    /* the whole stream with the gap: a chain that sees spectra s1 + L2 (the
     * first P - 1 of piece 2 computed and discarded) */
    tl_chain *c = tl_test_chain();
    tl_config cfg = gap_config(s1 + L2);
    assert_int_equal(tl_chain_init(c, &cfg, img, img_len), TL_OK);
    size_t used = 0;
    /* piece 1 in uneven pushes, the last a partial frame that the gap abandons */
    assert_int_equal(tl_chain_push(c, gx[0], gx[1], (size_t)a * GP, &used), TL_OK);
    assert_int_equal(tl_chain_block_kept(c), TL_OK);
    assert_int_equal(tl_chain_push(c, gx[0] + (size_t)a * GP, gx[1] + (size_t)a * GP, 300u, &used), TL_OK);
    assert_int_equal(tl_chain_gap(c, 2u, (uint64_t)G * GP - 300u), TL_OK);
    assert_int_equal(tl_chain_push(c, gx[0] + (size_t)(a + G) * GP, gx[1] + (size_t)(a + G) * GP, (size_t)L2 * GP, &used),
                     TL_OK);
    assert_int_equal(used, (size_t)L2 * GP);
    assert_int_equal(tl_chain_block_kept(c), TL_OK);
    assert_true(tl_chain_ready(c));
    assert_int_equal(tl_chain_gap(c, 1u, 10u), TL_E_BUSY); /* a product waits */
    assert_int_equal(tl_chain_take(c, w), TL_OK);

    /* counts: exact integer bookkeeping of the stream above */
    assert_int_equal(w->spectra, s1 + L2);
    assert_int_equal(w->antenna_spectra, s1 + s2);
    assert_int_equal(w->discarded, P - 1u);
    assert_int_equal(w->acq.gap_discarded, P - 1u);
    assert_int_equal(w->acq.abandoned, 300u);
    assert_int_equal(w->acq.blocks_kept, 2u);
    assert_int_equal(w->acq.blocks_lost, 2u);
    assert_int_equal(w->acq.samples_lost, (uint64_t)G * GP - 300u);
    assert_int_equal(w->acq.gaps, 1u);
    assert_int_equal(tl_acq_duty_ppm(&w->acq), 500000u);
    /* time: the first spectrum's newest frame is frame P - 1 either way */
    assert_int_equal(w->first_frame, P - 1u);

    /* the sums are the two pieces' sums added (exact integers) */
    for (uint32_t k = 0; k < GP / 2u; k++) {
        for (uint32_t i = 0; i < 2u; i++)
            if (w->auto_power[i][k] != p1->auto_power[i][k] + p2->auto_power[i][k])
                fail_msg("auto%u channel %u: %llu, pieces %llu + %llu", i, k, (unsigned long long)w->auto_power[i][k],
                         (unsigned long long)p1->auto_power[i][k], (unsigned long long)p2->auto_power[i][k]);
        assert_true(w->cross_re[k] == p1->cross_re[k] + p2->cross_re[k]);
        assert_true(w->cross_im[k] == p1->cross_im[k] + p2->cross_im[k]);
    }
    /* the sums are not trivially equal to the whole stream without the gap */
    assert_true(w->auto_power[0][100] != 0u);

    /* after a gap of whole frames the time advances by those frames: the
     * next integration's first spectrum is frame a + G + L2 + (gap) ... */
    assert_int_equal(tl_chain_gap(c, 1u, 3u * GP), TL_OK);
    assert_int_equal(c->frames, (uint64_t)GFRAMES + 3u);
    assert_int_equal(c->acq.blocks_lost, 1u); /* counts restart with the integration */
    free(c);
    free(p1);
    free(p2);
    free(w);
    free(img);
}

static void gap_arguments(void **state)
{
    (void)state;
    assert_int_equal(tl_chain_gap(NULL, 1u, 1u), TL_E_NULL);
    assert_int_equal(tl_chain_block_kept(NULL), TL_E_NULL);
    tl_chain *c = tl_test_chain();
    assert_int_equal(tl_chain_gap(c, 1u, 1u), TL_E_NOT_INIT);
    assert_int_equal(tl_chain_block_kept(c), TL_E_NOT_INIT);
    tl_config cfg;
    tl_config_default(&cfg);
    assert_int_equal(tl_chain_init(c, &cfg, NULL, 0), TL_OK);
    /* an empty gap counts nothing but the (zero) blocks */
    assert_int_equal(tl_chain_gap(c, 0u, 0u), TL_OK);
    assert_int_equal(c->acq.gaps, 0u);
    assert_int_equal(c->gap_hold, 0u);
    assert_int_equal(tl_acq_duty_ppm(&c->acq), 1000000u); /* nothing reported: nothing lost */
    /* counters saturate */
    c->acq.blocks_lost = UINT32_MAX - 1u;
    c->acq.samples_lost = UINT64_MAX - 5u;
    assert_int_equal(tl_chain_gap(c, 7u, 100u), TL_OK);
    assert_int_equal(c->acq.blocks_lost, UINT32_MAX);
    assert_true(c->acq.samples_lost == UINT64_MAX);
    tl_acq_counts a = { 1u, 2u, 0u, 0u, 0u, 0u };
    assert_int_equal(tl_acq_duty_ppm(&a), 333333u); /* floor(10^6 / 3) */
    assert_int_equal(tl_acq_duty_ppm(NULL), 0u);
    /* a gap as long as the counter allows: the frame count saturates, no wrap */
    const uint64_t f0 = c->frames; /* 1: the 100 samples above took one frame slot */
    assert_int_equal(f0, 1u);
    assert_int_equal(tl_chain_gap(c, 1u, UINT64_MAX), TL_OK);
    assert_true(c->frames == f0 + UINT64_MAX / 8192u);
    c->frames = UINT64_MAX - 5u;
    assert_int_equal(tl_chain_gap(c, 1u, 8192u * 10u), TL_OK);
    assert_true(c->frames == UINT64_MAX);
    free(c);
}

/* ---- housekeeping acquisition block ---------------------------------------- */

typedef struct hk_catch {
    uint8_t user[4096];
    size_t len;
} hk_catch;

static void catch_hk(void *u, const uint8_t *packet, size_t len)
{
    hk_catch *h = u;
    tl_packet_view v;
    if (tl_packet_parse(packet, len, &v) == TL_OK && v.apid == 0x102u) {
        memcpy(h->user, v.user, v.user_len);
        h->len = v.user_len;
    }
}

static void hk_block(void **state)
{
    (void)state;
    tl_product *p = tl_test_product();
    p->points = 512u;
    p->channels = 256u;
    p->inputs = 1u;
    p->fft_stages = 4u;
    p->spectra = 10u;
    p->antenna_spectra = 7u;
    p->discarded = 3u;
    p->acq = (tl_acq_counts){ 30u, 10u, 10u * 65536u, 4u, 3u, 123u };
    static tl_downlink d;
    tl_downlink_config dc;
    tl_downlink_config_default(&dc);
    assert_int_equal(tl_downlink_init(&d, &dc), TL_OK);
    hk_catch h = { { 0 }, 0 };
    assert_int_equal(tl_downlink_product(&d, p, 1, catch_hk, &h), TL_OK);
    assert_int_equal(h.len, TL_DL_HK_OCTETS(5u));
    /* layout (docs/icd.md 6.4): version 2, the block at the end, big-endian */
    assert_int_equal(h.user[0], 2);
    const uint8_t *b = h.user + TL_DL_HK_V1_OCTETS(5u);
    assert_int_equal(b[3], 40);                              /* seen = 30 + 10 */
    assert_int_equal(b[7], 30);                              /* processed */
    assert_int_equal(b[11], 10);                             /* dropped */
    assert_int_equal(b[12 + 5], 0x0Au);                      /* 655360 = 0x0A0000 */
    assert_int_equal(((uint32_t)b[22] << 8) | b[23], 750000u & 0xFFFFu); /* duty 750000 ppm = 0x0B71B0 */
    assert_int_equal(b[21], 0x0Bu);
    tl_dl_hk hk;
    assert_int_equal(tl_downlink_parse_hk(h.user, h.len, &hk), TL_OK);
    assert_int_equal(hk.has_acq, 1);
    assert_int_equal(hk.blocks_seen, 40u);
    assert_int_equal(hk.blocks_processed, 30u);
    assert_int_equal(hk.blocks_dropped, 10u);
    assert_true(hk.samples_dropped == 655360u);
    assert_int_equal(hk.duty_ppm, 750000u);
    assert_int_equal(hk.gap_discarded, 3u);
    assert_int_equal(hk.abandoned, 123u);
    /* version 1 (no block) is still read; a wrong length or version is refused */
    uint8_t v1[4096];
    memcpy(v1, h.user, TL_DL_HK_V1_OCTETS(5u));
    v1[0] = 1u;
    assert_int_equal(tl_downlink_parse_hk(v1, TL_DL_HK_V1_OCTETS(5u), &hk), TL_OK);
    assert_int_equal(hk.has_acq, 0);
    assert_int_equal(hk.blocks_seen, 0u);
    assert_int_equal(tl_downlink_parse_hk(v1, TL_DL_HK_OCTETS(5u), &hk), TL_E_FORMAT);
    assert_int_equal(tl_downlink_parse_hk(h.user, TL_DL_HK_V1_OCTETS(5u), &hk), TL_E_FORMAT);
    h.user[0] = 3u;
    assert_int_equal(tl_downlink_parse_hk(h.user, h.len, &hk), TL_E_FORMAT);
    free(p);
}

/* ---- the model driving the chain ------------------------------------------ */

static void small_scenario(tl_scenario *s)
{
    tl_scenario_default(s);
    s->cfg.points = 1024u;
    s->spectra = s->cfg.integration = 600u;
    s->cfg.switch_steps = 0u;
    s->cfg.switch_discard = 0u;
    s->cfg.sk_spectra = 0u;
    s->proc_block = 4096u; /* 4 frames */
    /* a test processor that keeps up (load 0.647): the stage costs and the
     * clock are the fixture's own, not the defaults (which model one
     * 600 MHz core that cannot keep up, docs/acquisition.md) */
    s->proc_model = 1;
    s->proc_clock_hz = 200e9;
    s->proc_cpi = 1.0;
    s->proc_ips[0] = 248.112;
    s->proc_ips[1] = 901.176;
    s->proc_ips[2] = 82.018;
    s->proc_ips[3] = 31.010;
    s->proc_ips[4] = 0.332;
    s->proc_ips[5] = 1.846;
    s->band_lo_hz = 10e6;
    s->band_hi_hz = 40e6;
}

static void run_keeps_up(void **state)
{
    (void)state;
    tl_scenario s;
    small_scenario(&s);
    tl_acq_model m;
    assert_int_equal(tl_acq_model_init(&m, &s), 0);
    /* the fixture's processor: load = fs x I x CPI / f_clk (acquisition.h) */
    const double I = 248.112 + 901.176 + 82.018 + 31.010 + 0.332 + 1.846;
    TL_ASSERT_NEAR(tl_acq_load(&m), 102.4e6 * I / 200e9, 1e-12);
    assert_true(tl_acq_load(&m) < 1.0);
    tl_product *p = tl_test_product();
    tl_acq_report r;
    assert_int_equal(tl_acq_run(&s, p, &r), TL_OK);
    assert_int_equal(r.dropped, 0u);
    /* 600 spectra + 3 history frames = 603 frames = 151 blocks of 4 (the last partly used) */
    assert_int_equal(r.blocks, 151u);
    assert_int_equal(p->acq.blocks_kept, 151u);
    assert_int_equal(tl_acq_duty_ppm(&p->acq), 1000000u);
    assert_int_equal(p->antenna_spectra, 600u);
    free(p);
}

static void run_half_clock(void **state)
{
    (void)state;
    tl_scenario s;
    small_scenario(&s);
    s.proc_clock_hz /= 2.0; /* half the clock: load 1.295 */
    tl_acq_model m;
    assert_int_equal(tl_acq_model_init(&m, &s), 0);
    const double rho = tl_acq_load(&m);
    assert_true(rho > 1.29 && rho < 1.30);
    tl_product *p = tl_test_product();
    tl_acq_report r;
    assert_int_equal(tl_acq_run(&s, p, &r), TL_OK);
    /* the experienced drops equal the closed form's, block for block count */
    assert_true(r.blocks > 151u);
    assert_int_equal(r.kept, tl_acq_predicted_kept(&m, r.blocks));
    assert_int_equal(r.kept, (uint64_t)(s.proc_buffers + (unsigned __int128)(r.blocks - 1u) * m.T / m.S));
    /* and the chain counted what the model decided */
    assert_int_equal(p->acq.blocks_kept, r.kept);
    assert_int_equal(p->acq.blocks_lost, r.dropped);
    assert_true(p->acq.samples_lost == r.dropped * s.proc_block);
    /* the dropped fraction is 1 - 1/rho up to the start-up (K + 1 blocks) */
    const double frac = (double)r.dropped / (double)r.blocks;
    TL_ASSERT_NEAR(frac, 1.0 - 1.0 / rho, (s.proc_buffers + 1.0) / (double)r.blocks);
    print_message("[ INFO     ] half clock: load %.4f, %llu of %llu blocks dropped (%.4f; closed form %.4f)\n", rho,
                  (unsigned long long)r.dropped, (unsigned long long)r.blocks, frac, 1.0 - 1.0 / rho);
    /* spectra: every kept spectrum of the integration is antenna or discarded at a gap */
    assert_int_equal(p->antenna_spectra + p->acq.gap_discarded, 600u);
    assert_true(p->acq.gap_discarded > 0u && p->acq.gap_discarded % 3u == 0u); /* P - 1 = 3 per gap */
    assert_int_equal(p->acq.gap_discarded, 3u * p->acq.gaps);
    assert_int_equal(tl_acq_duty_ppm(&p->acq), (uint32_t)(r.kept * 1000000u / r.blocks));
    free(p);
}

static void shipped_slow_scenario(void **state)
{
    (void)state;
    /* docs/scenario-slow-processor.ini: a processor a little too slow (load about 1.3) */
    tl_scenario s;
    tl_scenario_default(&s);
    char err[512] = "";
    char path[4400];
    snprintf(path, sizeof path, "%s/../../docs/scenario-slow-processor.ini", hil_dir);
    if (tl_scenario_load(path, &s, err, sizeof err) != 0)
        fail_msg("%s", err);
    assert_int_equal(s.proc_model, 1);
    tl_acq_model m;
    assert_int_equal(tl_acq_model_init(&m, &s), 0);
    assert_true(tl_acq_load(&m) > 1.2 && tl_acq_load(&m) < 1.4);
    tl_product *p = tl_test_product();
    tl_acq_report r;
    assert_int_equal(tl_acq_run(&s, p, &r), TL_OK);
    /* the blocks processed are the closed form's for the blocks that arrived */
    assert_int_equal(r.kept, tl_acq_predicted_kept(&m, r.blocks));
    /* pinned figures of this file (a regression check, not an outside
     * value): 257 of 331 blocks processed, as docs/acquisition.md shows */
    assert_int_equal(r.kept, 257u);
    assert_int_equal(r.blocks, 331u);
    assert_int_equal(p->acq.blocks_lost, 74u);
    assert_int_equal(p->antenna_spectra + p->acq.gap_discarded, 1024u);
    TL_ASSERT_NEAR((double)r.dropped / (double)r.blocks, 1.0 - tl_acq_predicted_duty(&m), 3.0 / 331.0);
    free(p);
}

/* ---- the Cortex-M7 counts repeat and are the committed ones ---------------- */

static int read_costs(const char *text, const char *name, unsigned long long *total, unsigned long long *per)
{
    char key[64];
    snprintf(key, sizeof key, "cost %s ", name);
    const char *p = strstr(text, key);
    return p != NULL && sscanf(p + strlen(key), "%llu %llu", total, per) == 2 ? 0 : -1;
}

static void m7_counts_repeat(void **state)
{
    (void)state;
    char elf[4400];
    snprintf(elf, sizeof elf, "%s/m7cost/stage-cost.elf", hil_dir);
    static char out[2][8192];
    if (tl_test_shell("command -v qemu-system-arm >/dev/null 2>&1 && echo yes", out[0], sizeof out[0]) != 0 ||
        strstr(out[0], "yes") == NULL) {
        print_message("[ SKIPPED  ] qemu-system-arm is not installed here: the Cortex-M7 instruction counts were NOT "
                      "checked (CI installs it)\n");
        skip();
    }
    if (access(elf, R_OK) != 0)
        fail_msg("%s missing: build it with make processing-budget (the Makefile builds it before this test)", elf);
    for (int run = 0; run < 2; run++) {
        char cmd[9000];
        snprintf(cmd, sizeof cmd,
                 "timeout 600 qemu-system-arm -M mps2-an500 -icount shift=0 -semihosting-config enable=on,target=native "
                 "-display none -monitor none -serial none -nodefaults -kernel %s 2>&1 >/dev/null | grep '^cost '",
                 elf);
        assert_int_equal(tl_test_shell(cmd, out[run], sizeof out[run]), 0);
    }
    /* two runs of deterministic virtual time: identical, to the instruction */
    assert_string_equal(out[0], out[1]);
    unsigned long long cal = 0, ipt = 0;
    assert_int_equal(read_costs(out[0], "calibration_ticks", &cal, &ipt), 0);
    assert_int_equal(ipt, 40u); /* QEMU's mps2-an500 SysTick at 25 MHz, 1 ns per instruction (from memory; measured) */
    /* the committed figures (docs/m7-stage-cost.txt) are this firmware's */
    char path[4400], committed[8192];
    snprintf(path, sizeof path, "cat %s/../../docs/m7-stage-cost.txt", hil_dir);
    assert_int_equal(tl_test_shell(path, committed, sizeof committed), 0);
    if (strcmp(committed, out[0]) != 0)
        fail_msg("docs/m7-stage-cost.txt is stale: run make processing-budget and update the [processor] defaults\n"
                 "committed:\n%s\nmeasured:\n%s",
                 committed, out[0]);
    /* and the scenario's defaults are those figures */
    tl_scenario s;
    tl_scenario_default(&s);
    static const char *const per_sample[] = { "filterbank", "fft", "detection", "integration" };
    for (int i = 0; i < 4; i++) {
        unsigned long long tot = 0, per = 0;
        assert_int_equal(read_costs(out[0], per_sample[i], &tot, &per), 0);
        TL_ASSERT_NEAR(s.proc_ips[i], (double)per / 1000.0, 0.0005);
    }
    unsigned long long tot = 0, per = 0;
    const double samples = 8192.0 * 8192.0; /* the default integration: spectra x points */
    assert_int_equal(read_costs(out[0], "encoding_per_product", &tot, &per), 0);
    TL_ASSERT_NEAR(s.proc_ips[4], (double)tot / samples, 0.0005);
    assert_int_equal(read_costs(out[0], "packets_per_product", &tot, &per), 0);
    TL_ASSERT_NEAR(s.proc_ips[5], (double)tot / samples, 0.0005);
}

int main(int argc, char **argv)
{
    (void)argc;
    char self[4096];
    snprintf(self, sizeof self, "%s", argv[0]);
    snprintf(hil_dir, sizeof hil_dir, "%s/../hil", dirname(self));
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(closed_form_by_hand), cmocka_unit_test(closed_form_sweep),
        cmocka_unit_test(gap_equals_pieces),   cmocka_unit_test(gap_arguments),
        cmocka_unit_test(hk_block),            cmocka_unit_test(run_keeps_up),
        cmocka_unit_test(run_half_clock),      cmocka_unit_test(shipped_slow_scenario),
        cmocka_unit_test(m7_counts_repeat),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
