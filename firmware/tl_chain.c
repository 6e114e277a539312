/* tl_chain.c - the spectrometer chain (see tl_chain.h). */
#include "tl_chain.h"
#if defined(TL_SIMD_X86)
#include "x86/tl_simd_x86.h" /* host build on x86-64 only (Makefile) */
#endif
#include <stddef.h>
#include <string.h>

void tl_config_default(tl_config *cfg)
{
    cfg->points = 8192u;
    cfg->taps = 4u;
    cfg->inputs = 2u;
    cfg->adc_bits = 14u;
    cfg->integration = 1u << 20;
    cfg->fft_scale_mask = TL_FFT_SCALE_AUTO;
    cfg->rounding = (uint32_t)TL_ROUND_HALF_EVEN;
    cfg->det_shift = TL_DET_SHIFT_AUTO;
    cfg->switch_steps = 0;
    for (uint32_t i = 0; i < TL_MAX_SWITCH_STEPS; i++) {
        cfg->switch_state[i] = (uint8_t)TL_STATE_ANTENNA;
        cfg->switch_dwell[i] = 0;
    }
    cfg->switch_discard = 0;
    cfg->sk_spectra = 0;
    cfg->sk_accumulate = 1;
}

uint32_t tl_config_det_shift(const tl_config *cfg)
{
    if (cfg->det_shift != TL_DET_SHIFT_AUTO)
        return cfg->det_shift;
    uint32_t s = 0;
    while (s < 32u && ((uint64_t)1 << s) < cfg->integration)
        s++;
    return s;
}

tl_status tl_config_check(const tl_config *cfg)
{
    if (cfg == NULL)
        return TL_E_NULL;
    if (cfg->points < TL_MIN_POINTS || cfg->points > TL_MAX_POINTS || (cfg->points & (cfg->points - 1u)) != 0u)
        return TL_E_POINTS;
    if (cfg->taps < 1u || cfg->taps > TL_MAX_TAPS)
        return TL_E_TAPS;
    if (cfg->inputs < 1u || cfg->inputs > TL_MAX_INPUTS)
        return TL_E_INPUTS;
    if (cfg->adc_bits < TL_MIN_ADC_BITS || cfg->adc_bits > TL_MAX_ADC_BITS)
        return TL_E_ADC_BITS;
    if (cfg->integration < 1u || cfg->integration > TL_MAX_INTEGRATION)
        return TL_E_INTEGRATION;
    if (cfg->rounding > (uint32_t)TL_ROUND_HALF_EVEN)
        return TL_E_ROUNDING;
    if (cfg->det_shift != TL_DET_SHIFT_AUTO && cfg->det_shift > TL_MAX_DET_SHIFT)
        return TL_E_DET_SHIFT;
    const uint32_t skn = cfg->sk_accumulate ? cfg->sk_accumulate : 1u;
    if (skn > TL_SK_MAX_ACCUMULATE ||
        (cfg->sk_spectra != 0u && (cfg->sk_spectra < TL_SK_MIN_SPECTRA || cfg->sk_spectra > TL_SK_MAX_SPECTRA ||
                                   (uint64_t)cfg->sk_spectra * skn > cfg->integration)))
        return TL_E_SK;
    /* as tl_fft_init: bits 0 .. log2(points/2) only, i.e. below points */
    if (cfg->fft_scale_mask != TL_FFT_SCALE_AUTO && cfg->fft_scale_mask >= cfg->points)
        return TL_E_SCALING;
    return tl_switch_check(cfg->switch_steps, cfg->switch_state, cfg->switch_dwell, cfg->switch_discard);
}

static void start_integration(tl_chain *c)
{
    for (uint32_t s = 0; s < TL_STATES; s++)
        tl_integrate_reset(&c->integ[s], c->cfg.points / 2u);
    c->spectra = 0;
    c->discarded = 0;
    memset(&c->stats, 0, sizeof c->stats);
    memset(&c->acq, 0, sizeof c->acq);
    c->first_frame = 0;
    c->ready = 0;
    tl_sk_reset(&c->sk);
    c->sk_ready = 0;
    c->sk_blocks = 0;
}

/* Start pipeline and integration with the table now in c->taps. */
static tl_status start(tl_chain *c)
{
    for (uint32_t i = 0; i < c->cfg.inputs; i++) {
        const tl_status st = tl_pfb_init(&c->pfb[i], &c->taps, (tl_rounding)c->cfg.rounding);
        if (st != TL_OK)
            return st;
    }
    c->fill = 0;
    c->gap_hold = 0;
    tl_switch_reset(&c->sw);
    start_integration(c);
    return TL_OK;
}

tl_status tl_chain_init(tl_chain *c, const tl_config *cfg, const uint8_t *taps_image, size_t image_len)
{
    if (c == NULL || cfg == NULL)
        return TL_E_NULL;
    /* Everything that can be wrong is checked before *c is written, so a
     * refused configuration leaves a running chain as it was. */
    tl_status st = tl_config_check(cfg);
    if (st != TL_OK)
        return st;
    uint32_t points = tl_taps_default_points, taps = tl_taps_default_taps;
    if (taps_image != NULL) {
        st = tl_taps_check_image(taps_image, image_len, &points, &taps);
        if (st != TL_OK)
            return st;
    }
    if (points != cfg->points || taps != cfg->taps)
        return TL_E_TABLE_MISMATCH;
    /* writes c->taps only on success (the built-in table's CRC is checked first) */
    st = (taps_image == NULL) ? tl_taps_default(&c->taps) : tl_taps_load_image(&c->taps, taps_image, image_len);
    if (st != TL_OK)
        return st;
    c->initialised = 0;
    memset(&c->fft, 0, offsetof(tl_fft, work)); /* padding and unused entries too: the scrubber's CRC covers them */
    st = tl_fft_init(&c->fft, cfg->points, cfg->fft_scale_mask, (tl_rounding)cfg->rounding);
    if (st == TL_OK)
        st = tl_switch_init(&c->sw, cfg->switch_steps, cfg->switch_state, cfg->switch_dwell, cfg->switch_discard);
    if (st == TL_OK)
        st = tl_sk_init(&c->sk, cfg->sk_spectra, cfg->sk_accumulate ? cfg->sk_accumulate : 1u, cfg->points / 2u,
                        cfg->inputs);
    if (st != TL_OK)
        return st; /* not reached: tl_config_check covers these checks */
    c->cfg = *cfg;
    c->cfg.fft_scale_mask = c->fft.scale_mask;
    c->cfg.det_shift = tl_config_det_shift(cfg);
    c->clip_hi = (uint16_t)(((1u << (cfg->adc_bits - 1u)) - 1u) << (16u - cfg->adc_bits));
    c->index = 0;
    c->frames = 0;
    st = start(c);
    if (st != TL_OK)
        return st;
    st = tl_scrub_arm(&c->scrub, c, TL_SCRUB_DEFAULT_PERIOD, 0);
    if (st != TL_OK)
        return st;
    c->initialised = TL_CHAIN_MAGIC;
    return TL_OK;
}

tl_status tl_chain_load_taps(tl_chain *c, const uint8_t *taps_image, size_t image_len)
{
    if (c == NULL || taps_image == NULL)
        return TL_E_NULL;
    if (c->initialised != TL_CHAIN_MAGIC)
        return TL_E_NOT_INIT;
    uint32_t points = 0, taps = 0;
    tl_status st = tl_taps_check_image(taps_image, image_len, &points, &taps);
    if (st != TL_OK)
        return st;
    if (taps != c->cfg.taps || points != c->cfg.points)
        return TL_E_TABLE_MISMATCH;
    st = tl_taps_load_image(&c->taps, taps_image, image_len);
    if (st != TL_OK)
        return st;
    st = start(c);
    if (st != TL_OK)
        return st;
    return tl_scrub_arm(&c->scrub, c, c->scrub.period, 1);
}

tl_status tl_chain_set_scrub_period(tl_chain *c, uint32_t period)
{
    if (c == NULL)
        return TL_E_NULL;
    if (c->initialised != TL_CHAIN_MAGIC)
        return TL_E_NOT_INIT;
    if (period > TL_SCRUB_MAX_PERIOD)
        return TL_E_SCRUB;
    c->scrub.period = period == 0u ? TL_SCRUB_DEFAULT_PERIOD : period;
    c->scrub.countdown = c->scrub.period;
    return TL_OK;
}

tl_status tl_chain_reset(tl_chain *c)
{
    if (c == NULL)
        return TL_E_NULL;
    if (c->initialised != TL_CHAIN_MAGIC)
        return TL_E_NOT_INIT;
    return start(c);
}

uint32_t tl_chain_state(const tl_chain *c)
{
    return (c != NULL && c->initialised == TL_CHAIN_MAGIC) ? tl_switch_state(&c->sw) : TL_STATE_ANTENNA;
}

int tl_chain_ready(const tl_chain *c)
{
    return c != NULL && c->initialised == TL_CHAIN_MAGIC && c->ready != 0u;
}

/* ---- upset guards (tl_scrub.h) ---------------------------------------- */

static int rounding_ok(uint32_t r)
{
    return r <= (uint32_t)TL_ROUND_HALF_EVEN;
}

/* Every configuration field the processing uses as an index, a loop bound,
 * a divisor or a shift, range-checked (the CRC check finds wrong values;
 * this finds unsafe ones at once, between pieces of one frame too). */
static int params_safe(const tl_chain *c)
{
    const tl_config *g = &c->cfg;
    const uint32_t N = g->points, L = N / 2u;
    if (N < TL_MIN_POINTS || N > TL_MAX_POINTS || (N & (N - 1u)) != 0u || g->inputs < 1u ||
        g->inputs > TL_MAX_INPUTS || g->adc_bits < TL_MIN_ADC_BITS || g->adc_bits > TL_MAX_ADC_BITS ||
        g->det_shift > TL_MAX_DET_SHIFT || !rounding_ok(g->rounding) || g->integration < 1u ||
        g->integration > TL_MAX_INTEGRATION)
        return 0;
    for (uint32_t i = 0; i < g->inputs; i++) {
        const tl_pfb *p = &c->pfb[i];
        if (p->table != &c->taps || p->points != N || p->taps < 1u || p->taps > TL_MAX_TAPS ||
            p->out_shift > TL_TAPS_MAX_SHIFT + TL_PFB_INPUT_FRAC_BITS - TL_PFB_OUTPUT_FRAC_BITS ||
            !rounding_ok((uint32_t)p->rounding))
            return 0;
    }
    const tl_fft *f = &c->fft;
    if (f->size != L || f->stages < 1u || f->stages > TL_MAX_FFT_STAGES || f->split_shift > 1u ||
        !rounding_ok((uint32_t)f->rounding))
        return 0;
    uint32_t n_prev = 1u;
    for (uint32_t st = 0; st < f->stages; st++) {
        if ((f->radix[st] != 2u && f->radix[st] != 4u) || f->shift[st] > 2u)
            return 0;
        if (f->radix[st] == 4u && (f->tw_offset[st] > 2u * TL_MAX_CHANNELS ||
                                   6u * n_prev > 2u * TL_MAX_CHANNELS - f->tw_offset[st]))
            return 0;
        n_prev *= f->radix[st];
        if (n_prev > L)
            return 0;
    }
    if (n_prev != L)
        return 0;
    const tl_switch *w = &c->sw;
    if (w->steps > TL_MAX_SWITCH_STEPS)
        return 0;
    for (uint32_t i = 0; i < w->steps; i++)
        if (w->state[i] >= TL_STATES || w->dwell[i] < 1u)
            return 0;
    const tl_sk *k = &c->sk;
    if ((k->m != 0u && (k->m < TL_SK_MIN_SPECTRA || k->m > TL_SK_MAX_SPECTRA)) || k->n < 1u ||
        k->n > TL_SK_MAX_ACCUMULATE || k->channels != L || k->inputs != g->inputs)
        return 0;
    for (uint32_t s = 0; s < TL_STATES; s++)
        if (c->integ[s].channels != L)
            return 0;
    return 1;
}

/* Range-check the running state and repair what is out of range (the
 * configuration is safe here). Returns 1 if anything was repaired. */
static int repair_state(tl_chain *c)
{
    int bad = 0;
    const uint32_t N = c->cfg.points;
    if (c->fill >= N) {
        c->fill = 0u;
        bad = 1;
    }
    for (uint32_t i = 0; i < c->cfg.inputs; i++) {
        tl_pfb *p = &c->pfb[i];
        if (p->newest >= p->taps) {
            p->newest = p->taps - 1u;
            bad = 1;
        }
        if (p->frames > p->taps) {
            p->frames = p->taps;
            bad = 1;
        }
    }
    tl_switch *w = &c->sw;
    if ((w->steps == 0u && (w->step | w->in_step) != 0u) ||
        (w->steps > 0u && (w->step >= w->steps || w->in_step >= w->dwell[w->step]))) {
        w->step = 0u;
        w->in_step = 0u;
        bad = 1;
    }
    tl_sk *k = &c->sk;
    if (k->inner >= k->n || k->count > k->m || (k->m != 0u && k->count == k->m && !c->sk_ready) ||
        (k->m == 0u && (k->inner | k->count) != 0u)) {
        k->inner = 0u;
        k->count = 0u;
        bad = 1;
    }
    if (c->sk_ready > 1u || (c->sk_ready != 0u && (k->m == 0u || k->count != k->m))) {
        c->sk_ready = 0u;
        bad = 1;
    }
    uint64_t sum = c->discarded;
    for (uint32_t s = 0; s < TL_STATES; s++)
        sum += c->integ[s].spectra;
    if (sum != c->spectra || c->spectra > c->cfg.integration) {
        c->spectra = sum > c->cfg.integration ? c->cfg.integration : (uint32_t)sum;
        bad = 1;
    }
    const uint32_t due = c->spectra >= c->cfg.integration ? 1u : 0u;
    if (c->ready != due) {
        c->ready = due;
        bad = 1;
    }
    if (bad)
        tl_scrub_state_fault(&c->scrub);
    return bad;
}

/* Make the context safe and right to run: check the configuration against
 * its stored CRC (restoring it when it differs), then range-check it and
 * the running state, repairing the state. Returns 0 when the configuration
 * is still unsafe (its protected copy is bad too): the caller must not
 * process. */
static int guard(tl_chain *c)
{
    if (tl_scrub_check(&c->scrub, c, TL_SCRUB_CONFIG))
        (void)tl_scrub_check(&c->scrub, c, TL_SCRUB_FFT); /* the plan is rebuilt from it */
    if (!params_safe(c)) {
        tl_scrub_state_fault(&c->scrub);
        return 0;
    }
    (void)repair_state(c);
    return 1;
}

/* Copy n samples of one input into the frame slot, counting ADC clips. */
static void copy_in(tl_chain *c, uint32_t input, const int16_t *src, uint32_t n)
{
    int16_t *dst = tl_pfb_next_frame(&c->pfb[input]) + c->fill;
    const int16_t hi = (int16_t)c->clip_hi;
    const unsigned drop = 16u - c->cfg.adc_bits;
    uint32_t clips = 0;
    uint32_t hist[TL_ADC_HIST_BINS] = { 0 };
    uint64_t sumsq = 0; /* n <= 16384 codes of |code| <= 2^15: < 2^45 */
#if defined(TL_SIMD_X86)
    if (drop <= 15u && tl_simd_x86_active()) { /* AVX2 twin, same counts (host build) */
        tl_adc_copy_avx2(src, dst, n, hi, drop, &clips, hist, &sumsq);
    } else
#endif
    {
        for (uint32_t i = 0; i < n; i++) {
            const int16_t v = src[i];
            clips += (uint32_t)(v >= hi) + (uint32_t)(v == INT16_MIN);
            hist[(uint32_t)((int32_t)v + 32768) >> 12]++;
            /* code = v / 2^drop truncated towards zero (exact for left-aligned
             * codes); only its square is kept: |code| = |v| >> drop */
            const uint32_t mag = (uint32_t)(v < 0 ? -(int32_t)v : (int32_t)v) >> drop;
            sumsq += (uint64_t)mag * mag;
            dst[i] = v;
        }
    }
    tl_count_add(&c->stats.adc_clips[input], clips);
    for (uint32_t b = 0; b < TL_ADC_HIST_BINS; b++)
        tl_count_add(&c->stats.adc_hist[input][b], hist[b]);
    uint64_t *acc = &c->stats.adc_sumsq[input];
    *acc = (UINT64_MAX - *acc < sumsq) ? UINT64_MAX : *acc + sumsq;
}

/* A frame is complete on every input: filter, transform, detect, and
 * integrate into the bank of the frame's switch state (unless the spectrum
 * falls in the discard window after a change). */
static void process_frame(tl_chain *c)
{
    /* configuration checked whole, then one slice of the tables */
    if (!guard(c)) {
        c->frames++;
        return;
    }
    (void)tl_scrub_spectrum(&c->scrub, c);
    const uint32_t channels = c->cfg.points / 2u;
    const unsigned shift = (unsigned)c->cfg.det_shift;
    const tl_rounding mode = (tl_rounding)c->cfg.rounding;
    const uint32_t state = tl_switch_state(&c->sw);
    const int sw_keep = tl_switch_keep(&c->sw);
    const int straddles = c->gap_hold != 0u;
    const int keep = sw_keep && !straddles;
    tl_switch_advance(&c->sw);
    if (straddles)
        c->gap_hold--;
    int have = 1;
    for (uint32_t i = 0; i < c->cfg.inputs; i++) {
        if (!tl_pfb_commit(&c->pfb[i], c->y, &c->stats.pfb_sat[i])) {
            have = 0;
            continue;
        }
        tl_fft_execute(&c->fft, c->y, c->X[i], c->stats.fft_sat[i]);
    }
    c->frames++;
    if (!have)
        return;
    if (c->spectra == 0u)
        c->first_frame = c->frames - 1u;
    c->spectra++;
    if (keep) {
        tl_integrator *it = &c->integ[state];
        const int sk = state == TL_STATE_ANTENNA && c->sk.m != 0u;
        if (sk && c->sk.count == 0u && c->sk.inner == 0u)
            c->sk_first_frame = c->frames - 1u;
        for (uint32_t i = 0; i < c->cfg.inputs; i++) {
            tl_detect_power(c->X[i], channels, shift, mode, c->power);
            tl_integrate_power(it, i, c->power);
            if (sk)
                tl_sk_add(&c->sk, i, c->power);
        }
        if (sk && tl_sk_spectrum_done(&c->sk))
            c->sk_ready = 1u;
        if (c->cfg.inputs == 2u) {
            tl_detect_cross(c->X[0], c->X[1], channels, shift, mode, c->cross_re, c->cross_im);
            tl_integrate_cross(it, c->cross_re, c->cross_im);
        }
        it->spectra++;
    } else {
        c->discarded++;
        if (sw_keep)
            tl_count_add(&c->acq.gap_discarded, 1u);
    }
    if (c->spectra >= c->cfg.integration)
        c->ready = 1u;
}

tl_status tl_chain_push(tl_chain *c, const int16_t *in0, const int16_t *in1, size_t count, size_t *used)
{
    if (c == NULL || used == NULL)
        return TL_E_NULL;
    *used = 0;
    if (c->initialised != TL_CHAIN_MAGIC)
        return TL_E_NOT_INIT;
    if (count > 0u && (in0 == NULL || (c->cfg.inputs == 2u && in1 == NULL)))
        return TL_E_NULL;
    if (!guard(c))
        return TL_E_NOT_INIT;
    if (c->ready || c->sk_ready)
        return TL_E_BUSY;
    size_t done = 0;
    while (done < count && !c->ready && !c->sk_ready) {
        if (!guard(c))
            break;
        const uint32_t N = c->cfg.points;
        const size_t room = N - c->fill;
        const uint32_t n = (uint32_t)((count - done < room) ? (count - done) : room);
        copy_in(c, 0u, in0 + done, n);
        if (c->cfg.inputs == 2u)
            copy_in(c, 1u, in1 + done, n);
        c->fill += n;
        done += n;
        if (c->fill == N) {
            c->fill = 0;
            process_frame(c);
        }
    }
    *used = done;
    return TL_OK;
}

uint32_t tl_acq_duty_ppm(const tl_acq_counts *a)
{
    if (a == NULL)
        return 0u;
    const uint64_t seen = (uint64_t)a->blocks_kept + a->blocks_lost;
    if (seen == 0u)
        return 1000000u;
    return (uint32_t)((uint64_t)a->blocks_kept * 1000000u / seen);
}

tl_status tl_chain_block_kept(tl_chain *c)
{
    if (c == NULL)
        return TL_E_NULL;
    if (c->initialised != TL_CHAIN_MAGIC)
        return TL_E_NOT_INIT;
    tl_count_add(&c->acq.blocks_kept, 1u);
    return TL_OK;
}

tl_status tl_chain_gap(tl_chain *c, uint32_t blocks, uint64_t samples)
{
    if (c == NULL)
        return TL_E_NULL;
    if (c->initialised != TL_CHAIN_MAGIC)
        return TL_E_NOT_INIT;
    if (c->ready || c->sk_ready)
        return TL_E_BUSY;
    tl_count_add(&c->acq.blocks_lost, blocks);
    c->acq.samples_lost = (UINT64_MAX - c->acq.samples_lost < samples) ? UINT64_MAX : c->acq.samples_lost + samples;
    if (blocks == 0u && samples == 0u)
        return TL_OK;
    tl_count_add(&c->acq.gaps, 1u);
    tl_count_add(&c->acq.abandoned, c->fill);
    /* frame slots the abandoned frame and the lost samples cover (time) */
    const uint64_t N = c->cfg.points;
    const uint64_t span = (samples > UINT64_MAX - 2u * N) ? UINT64_MAX : samples + c->fill + N - 1u;
    const uint64_t slots = span / N;
    c->frames = (UINT64_MAX - c->frames < slots) ? UINT64_MAX : c->frames + slots;
    c->fill = 0;
    c->gap_hold = c->cfg.taps - 1u;
    return TL_OK;
}

tl_status tl_chain_take(tl_chain *c, tl_product *out)
{
    if (c == NULL || out == NULL)
        return TL_E_NULL;
    if (c->initialised != TL_CHAIN_MAGIC)
        return TL_E_NOT_INIT;
    if (!guard(c))
        return TL_E_NOT_INIT;
    if (!c->ready)
        return TL_E_EMPTY;
    if (c->sk_ready)
        return TL_E_BUSY;
    /* release check: every table and the configuration whole, so whatever
     * was corrupted during this integration is found before it leaves */
    (void)tl_scrub_all(&c->scrub, c);
    if (!guard(c))
        return TL_E_NOT_INIT;
    /* and every bank's running sums against their check (tl_integrate.h):
     * a flipped bit there cannot be repaired, so the product is flagged */
    for (uint32_t s = 0; s < TL_STATES; s++)
        if (!tl_integrate_verify(&c->integ[s]))
            tl_scrub_state_fault(&c->scrub);
    const uint32_t channels = c->cfg.points / 2u;
    const tl_integrator *ant = &c->integ[TL_STATE_ANTENNA];
    const int two = c->cfg.inputs == 2u;
    out->arith_version = TL_ARITH_VERSION;
    out->index = c->index;
    out->spectra = c->spectra;
    out->antenna_spectra = ant->spectra;
    out->discarded = c->discarded;
    out->sk_blocks = c->sk_blocks;
    out->sk_dropped = c->sk.count * c->sk.n + c->sk.inner;
    out->switch_steps = c->cfg.switch_steps;
    out->first_frame = c->first_frame;
    out->points = c->cfg.points;
    out->taps = c->cfg.taps;
    out->inputs = c->cfg.inputs;
    out->channels = channels;
    out->fft_stages = c->fft.stages;
    out->fft_scale_mask = c->fft.scale_mask;
    out->fft_total_shift = c->fft.total_shift;
    out->det_shift = c->cfg.det_shift;
    out->rounding = c->cfg.rounding;
    out->window = c->taps.window;
    out->taps_shift = c->taps.shift;
    out->taps_crc = c->taps.crc;
    out->stats = c->stats;
    out->acq = c->acq;
    for (uint32_t i = 0; i < 4u; i++)
        out->stats.acc_sat[i] = ant->sat_channels[i];
    for (uint32_t s = 1; s < TL_STATES; s++) {
        const tl_integrator *it = &c->integ[s];
        tl_cal_sums *cs = &out->cal[s - 1u];
        cs->spectra = it->spectra;
        for (uint32_t i = 0; i < 4u; i++)
            cs->acc_sat[i] = it->sat_channels[i];
    }
    for (uint32_t k = 0; k < TL_MAX_CHANNELS; k++) {
        const int in = k < channels;
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            out->auto_power[i][k] = (in && i < c->cfg.inputs) ? ant->auto_sum[i][k] : 0u;
        out->cross_re[k] = (in && two) ? ant->cross_re[k] : 0;
        out->cross_im[k] = (in && two) ? ant->cross_im[k] : 0;
        out->flags[k] = in ? ant->flags[k] : 0u;
        for (uint32_t s = 1; s < TL_STATES; s++) {
            const tl_integrator *it = &c->integ[s];
            tl_cal_sums *cs = &out->cal[s - 1u];
            for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
                cs->auto_power[i][k] = (in && i < c->cfg.inputs) ? it->auto_sum[i][k] : 0u;
            cs->cross_re[k] = (in && two) ? it->cross_re[k] : 0;
            cs->cross_im[k] = (in && two) ? it->cross_im[k] : 0;
            cs->flags[k] = in ? it->flags[k] : 0u;
        }
    }
    const uint8_t upset = (c->scrub.touched | c->scrub.touched_copy) != 0u ? (uint8_t)TL_FLAG_UPSET : 0u;
    for (uint32_t k = 0; k < channels; k++) {
        out->flags[k] = (uint8_t)(out->flags[k] | upset);
        for (uint32_t s = 0; s < TL_STATES - 1u; s++)
            out->cal[s].flags[k] = (uint8_t)(out->cal[s].flags[k] | upset);
    }
    out->upset = upset ? 1u : 0u;
    out->scrub = c->scrub.counts;
    c->scrub.touched = 0u;
    c->scrub.touched_copy = 0u;
    c->index++;
    start_integration(c);
    return TL_OK;
}

int tl_chain_sk_ready(const tl_chain *c)
{
    return c != NULL && c->initialised == TL_CHAIN_MAGIC && c->sk_ready != 0u;
}

tl_status tl_chain_take_sk(tl_chain *c, tl_sk_block *out)
{
    if (c == NULL || out == NULL)
        return TL_E_NULL;
    if (c->initialised != TL_CHAIN_MAGIC)
        return TL_E_NOT_INIT;
    if (!guard(c))
        return TL_E_NOT_INIT;
    if (!c->sk_ready)
        return TL_E_EMPTY;
    out->index = c->index;
    out->block = c->sk_blocks;
    out->spectra = c->sk.m;
    out->accumulate = c->sk.n;
    out->inputs = c->cfg.inputs;
    out->channels = c->cfg.points / 2u;
    out->det_shift = c->cfg.det_shift;
    out->sat = c->sk.sat;
    out->first_frame = c->sk_first_frame;
    memcpy(out->s1, c->sk.s1, sizeof out->s1);
    memcpy(out->s2_hi, c->sk.s2_hi, sizeof out->s2_hi);
    memcpy(out->s2_lo, c->sk.s2_lo, sizeof out->s2_lo);
    tl_sk_reset(&c->sk);
    c->sk_blocks++;
    c->sk_ready = 0u;
    return TL_OK;
}
