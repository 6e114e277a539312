/* run.c - scenario runner (see run.h). */
#include "run.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include "sky_model.h"
#include "sky_noise.h"
#include "spectral_kurtosis.h"
#include "taps_design.h"

static void sky_source(void *state, int16_t *in0, int16_t *in1, size_t n)
{
    tl_sky_fill((tl_sky *)state, in0, in1, n);
}

static void sky_state(void *state, uint32_t sw_state)
{
    tl_sky_set_state((tl_sky *)state, sw_state);
}

int tl_run_calibrate(const tl_scenario *s, const tl_product *p, tl_cal_report *c)
{
    return tl_run_calibrate_masked(s, p, NULL, c);
}

int tl_run_calibrate_masked(const tl_scenario *s, const tl_product *p, const uint8_t *mask, tl_cal_report *c)
{
    memset(c, 0, sizeof *c);
    tl_taps *t = malloc(sizeof *t);
    if (t == NULL)
        return -1;
    if (tl_taps_design(s->window, s->cfg.taps, s->cfg.points, t, NULL) != 0) {
        free(t);
        return -1;
    }
    c->radiometer_factor = tl_radiometer_factor(t, p->antenna_spectra > 0 ? p->antenna_spectra : 1u);
    free(t);
    const double t_load = s->sky.load_k, t_ns = s->sky.noise_excess_k;
    for (uint32_t i = 0; i < p->inputs; i++)
        if (tl_calibrate(p, i, t_load, t_ns, c->radiometer_factor, c->t_ant[i], c->sigma[i]) != 0)
            return -1;
    uint32_t lo, hi;
    tl_scenario_band(s, &lo, &hi);
    const double df = tl_scenario_channel_hz(s);
    for (uint32_t k = 0; k < p->channels; k++) {
        const double f = k * df;
        c->t_model[k] = tl_calibrate_model(tl_sky_temperature_state(&s->sky, 0, f),
                                           tl_sky_temperature_state(&s->sky, 1, f),
                                           tl_sky_temperature_state(&s->sky, 2, f), t_load, t_ns);
    }
    if (mask != NULL)
        for (uint32_t i = 0; i < p->inputs; i++)
            for (uint32_t k = 0; k < p->channels; k++)
                if (mask[k]) {
                    c->t_ant[i][k] = NAN;
                    c->sigma[i][k] = NAN;
                }
    static double fk[TL_MAX_CHANNELS], ty[TL_MAX_CHANNELS], ts[TL_MAX_CHANNELS];
    uint32_t used = 0;
    for (uint32_t k = lo; k < hi; k++)
        used += mask == NULL || !mask[k];
    c->channels = used;
    for (uint32_t i = 0; i < p->inputs; i++) {
        double chi2 = 0.0;
        uint32_t n = 0;
        for (uint32_t k = lo; k < hi; k++) {
            if (mask != NULL && mask[k])
                continue;
            const double z = (c->t_ant[i][k] - c->t_model[k]) / c->sigma[i][k];
            chi2 += z * z;
            c->beyond3[i] += fabs(z) > 3.0;
            fk[n] = k * df;
            ty[n] = c->t_ant[i][k];
            ts[n] = c->sigma[i][k];
            n++;
        }
        c->chi2_red[i] = n ? chi2 / n : NAN;
        if (s->sky.trough_depth_k > 0.0 && n > 0u) {
            const double w = s->sky.trough_width_hz;
            tl_fit_trough(fk, ty, ts, n, 0.5 * (fk[0] + fk[n - 1u]), s->fit_order, s->sky.trough_flatness,
                          fk[0] + w / 2.0, fk[n - 1u] - w / 2.0, 0.5 * w, 2.0 * w, &c->fit[i]);
        }
    }
    c->done = 1;
    return 0;
}

void tl_run_progress_bar(void *ctx, uint32_t done, uint32_t total)
{
    if (ctx == NULL || *(const int *)ctx == 0 || total == 0u)
        return;
    const int width = 30, filled = (int)((uint64_t)width * done / total);
    fprintf(stderr, "\r  [%.*s%*s] %3u%%  block %u of %u", filled, "##############################", width - filled,
            "", (unsigned)(100u * done / total), done, total);
    if (done == total)
        fprintf(stderr, "\r%*s\r", width + 40, "");
    fflush(stderr);
}

/* The chain alone on s's sky over one integration; spectral kurtosis
 * blocks (when s asks) into blocks[0 .. max_blocks-1]. */
static tl_status run_chain(const tl_scenario *s, tl_product *p, tl_sk_block *blocks, uint32_t max_blocks,
                           uint32_t *nblocks);

tl_status tl_run_firmware(const tl_scenario *s, tl_product *p)
{
    if (s->cfg.sk_spectra == 0u)
        return run_chain(s, p, NULL, 0, NULL);
    tl_scenario q = *s; /* the product does not depend on the kurtosis sums */
    q.cfg.sk_spectra = 0;
    return run_chain(&q, p, NULL, 0, NULL);
}

static tl_status run_chain(const tl_scenario *s, tl_product *p, tl_sk_block *blocks, uint32_t max_blocks,
                           uint32_t *nblocks)
{
    uint8_t *img = NULL;
    size_t img_len = 0;
    if (tl_scenario_taps_image(s, 0, &img, &img_len) != 0)
        return TL_E_TABLE_FORMAT;
    tl_sky *sky = tl_scenario_sky(s);
    tl_chain *c = malloc(sizeof *c);
    const uint32_t N = s->cfg.points;
    int16_t *a = malloc(sizeof *a * N), *b = malloc(sizeof *b * N);
    tl_status st = TL_E_NULL;
    if (sky != NULL && c != NULL && a != NULL && b != NULL) {
        tl_config cfg = s->cfg;
        cfg.integration = s->spectra;
        st = tl_chain_init(c, &cfg, img, img_len);
        if (nblocks != NULL)
            *nblocks = 0;
        while (st == TL_OK && !tl_chain_ready(c)) {
            if (s->cfg.switch_steps > 0u)
                tl_sky_set_state(sky, tl_chain_state(c));
            tl_sky_fill(sky, a, b, N);
            size_t used = 0;
            st = tl_chain_push(c, a, b, N, &used);
            if (st == TL_OK && tl_chain_sk_ready(c)) {
                if (blocks == NULL || *nblocks >= max_blocks)
                    st = TL_E_SK;
                else
                    st = tl_chain_take_sk(c, &blocks[(*nblocks)++]);
            }
        }
        if (st == TL_OK)
            st = tl_chain_take(c, p);
    }
    tl_sky_close(sky);
    free(c);
    free(a);
    free(b);
    free(img);
    return st;
}

tl_status tl_run_with_source(const tl_scenario *s, tl_fid_source source, void (*set_state)(void *, uint32_t),
                             void *source_state, tl_run_result *r, void (*progress)(void *, uint32_t, uint32_t),
                             void *progress_ctx)
{
    memset(r, 0, sizeof *r);
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    uint8_t *img = NULL;
    size_t img_len = 0;
    if (tl_scenario_taps_image(s, 0, &img, &img_len) != 0)
        return r->fid.status = TL_E_TABLE_FORMAT;
    tl_fid_setup su;
    memset(&su, 0, sizeof su);
    su.taps_image = img;
    su.taps_len = img_len;
    su.cfg = s->cfg;
    su.cfg.integration = s->spectra;
    su.cfg.sk_spectra = 0; /* the fidelity blocks are shorter than an integration: kurtosis runs apart */
    su.progress = progress;
    su.progress_ctx = progress_ctx;
    su.window = s->window;
    su.spectra = s->spectra;
    su.blocks = s->blocks;
    tl_scenario_band(s, &su.band_lo, &su.band_hi);
    su.flight_spectra = s->flight_spectra;
    su.source = source;
    su.source_state = source_state;
    su.set_state = set_state;
    tl_status st = tl_fidelity_run(&su, &r->fid);
    if (st == TL_OK && s->cfg.switch_steps > 0u && tl_run_calibrate(s, &r->fid.product, &r->cal) != 0)
        st = TL_E_SWITCH; /* a state never integrated: the sequence cannot calibrate */
    if (st == TL_OK) {
        char why[512];
        if (tl_downlink_out_make(s, &r->fid.product, &r->dl, NULL, NULL, NULL, NULL, why, sizeof why) != 0)
            st = TL_E_ENCODING;
    }
    free(img);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    r->seconds = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    return st;
}

/* The processor-speed model's pass: the chain alone through the capture
 * blocks the model keeps. Nothing dropped: the same samples through the
 * same chain give the fidelity product's sums (checked), which then
 * carries the acquisition counters. Blocks dropped: the packets carry the
 * experienced product. */
static tl_status run_acquisition(const tl_scenario *s, tl_run_result *r)
{
    tl_product *p = malloc(sizeof *p);
    if (p == NULL)
        return TL_E_NULL;
    tl_status st = tl_acq_run(s, p, &r->acq);
    if (st != TL_OK) {
        free(p);
        return st;
    }
    tl_product *out = &r->fid.product;
    if (r->acq.dropped == 0u) {
        if (memcmp(p->auto_power, out->auto_power, sizeof p->auto_power) != 0 ||
            memcmp(p->cross_re, out->cross_re, sizeof p->cross_re) != 0 || p->antenna_spectra != out->antenna_spectra) {
            free(p);
            return TL_E_FORMAT;
        }
        out->acq = p->acq;
        free(p);
    } else {
        r->experienced = p;
        out = p;
    }
    char why[512];
    if (tl_downlink_out_make_all(s, out, r->sk.blocks, r->sk.nblocks, &r->dl, NULL, NULL, NULL, NULL, why,
                                 sizeof why) != 0)
        return TL_E_ENCODING;
    return TL_OK;
}

tl_status tl_run_scenario(const tl_scenario *s, tl_run_result *r, void (*progress)(void *, uint32_t, uint32_t),
                          void *progress_ctx)
{
    memset(r, 0, sizeof *r);
    tl_sky *sky = tl_scenario_sky(s);
    if (sky == NULL)
        return r->fid.status = TL_E_NULL;
    tl_status st = tl_run_with_source(s, sky_source, s->cfg.switch_steps > 0 ? sky_state : NULL, sky, r,
                                      progress, progress_ctx);
    r->generator_clips[0] = tl_sky_clipped(sky, 0);
    r->generator_clips[1] = tl_sky_clipped(sky, 1);
    tl_sky_close(sky);
    if (st == TL_OK && s->cfg.sk_spectra > 0u) {
        tl_product *p = malloc(sizeof *p);
        st = p == NULL ? TL_E_NULL : tl_run_kurtosis(s, p, &r->sk);
        /* the same samples through the same chain: the same product */
        if (st == TL_OK && memcmp(p->auto_power, r->fid.product.auto_power, sizeof p->auto_power) != 0)
            st = TL_E_FORMAT;
        free(p);
        if (st == TL_OK && r->cal.done &&
            tl_run_calibrate_masked(s, &r->fid.product, r->sk.mask, &r->cal) != 0)
            st = TL_E_SWITCH;
        if (st == TL_OK) {
            char why[512];
            if (tl_downlink_out_make_all(s, &r->fid.product, r->sk.blocks, r->sk.nblocks, &r->dl, NULL, NULL, NULL,
                                         NULL, why, sizeof why) != 0)
                st = TL_E_ENCODING;
        }
    }
    if (st == TL_OK && s->proc_model)
        st = run_acquisition(s, r);
    return st;
}

/* Free what a kurtosis report holds and clear it. */
static void sk_release(tl_sk_report *sk)
{
    free(sk->blocks);
    for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
        free(sk->flag_count[i]);
    memset(sk, 0, sizeof *sk);
}

void tl_run_release(tl_run_result *r)
{
    if (r == NULL)
        return;
    sk_release(&r->sk);
    free(r->experienced);
    r->experienced = NULL;
}

tl_status tl_run_kurtosis(const tl_scenario *s, tl_product *p, tl_sk_report *sk)
{
    memset(sk, 0, sizeof *sk);
    const uint32_t m = s->cfg.sk_spectra, nacc = s->cfg.sk_accumulate ? s->cfg.sk_accumulate : 1u;
    const uint32_t max_blocks = s->spectra / (m ? m * nacc : 1u);
    if (m == 0u || max_blocks == 0u)
        return TL_E_SK;
    sk->blocks = calloc(max_blocks, sizeof *sk->blocks);
    for (uint32_t i = 0; i < s->cfg.inputs; i++)
        sk->flag_count[i] = calloc(s->cfg.points / 2u, sizeof *sk->flag_count[i]);
    if (sk->blocks == NULL || sk->flag_count[0] == NULL || (s->cfg.inputs == 2u && sk->flag_count[1] == NULL)) {
        sk_release(sk); /* (a tl_run_result here would put megabytes on the stack) */
        return TL_E_NULL;
    }
    const tl_status st = run_chain(s, p, sk->blocks, max_blocks, &sk->nblocks);
    if (st != TL_OK) {
        sk_release(sk);
        return st;
    }
    sk->m = m;
    sk->inputs = s->cfg.inputs;
    sk->channels = s->cfg.points / 2u;
    sk->false_alarm = s->sk_false_alarm;
    sk->dropped = p->sk_dropped;
    sk->n = nacc;
    if (tl_sk_thresholds(m, nacc, s->sk_false_alarm, &sk->lo, &sk->hi) != 0) {
        sk_release(sk);
        return TL_E_SK;
    }
    sk->mask_blocks = tl_sk_mask_blocks(sk->nblocks, s->sk_false_alarm);
    uint32_t lo, hi;
    tl_scenario_band(s, &lo, &hi);
    for (uint32_t b = 0; b < sk->nblocks; b++) {
        const tl_sk_block *blk = &sk->blocks[b];
        for (uint32_t i = 0; i < sk->inputs; i++)
            for (uint32_t k = 1; k < sk->channels; k++) { /* channel 0 (DC) carries no noise-like power */
                const double s1 = (double)blk->s1[i][k];
                const double s2 = ldexp((double)blk->s2_hi[i][k], 64) + (double)blk->s2_lo[i][k];
                const double v = tl_sk_estimate(s1, s2, m, nacc);
                const int low = v < sk->lo, high = v > sk->hi;
                sk->values[i]++;
                sk->flagged_low[i] += (uint64_t)low;
                sk->flagged_high[i] += (uint64_t)high;
                sk->flag_count[i][k] += (uint32_t)(low || high);
                if (k >= lo && k < hi) {
                    sk->band_values[i]++;
                    sk->band_flagged[i] += (uint64_t)(low || high);
                }
            }
    }
    for (uint32_t k = 0; k < sk->channels; k++) {
        int masked = 0;
        for (uint32_t i = 0; i < sk->inputs; i++)
            masked |= sk->nblocks > 0u && sk->flag_count[i][k] >= sk->mask_blocks;
        sk->mask[k] = (uint8_t)masked;
        sk->masked += (uint32_t)masked;
        sk->masked_in_band += (uint32_t)(masked && k >= lo && k < hi);
    }
    sk->done = 1;
    return TL_OK;
}
