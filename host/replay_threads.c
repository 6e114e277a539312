/* replay_threads.c - segmented, parallel firmware replay (see replay_threads.h). */
#include "replay_threads.h"

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sigmf.h"

typedef struct segment {
    /* in */
    const char *meta;
    size_t block_bytes;
    const tl_scenario *s;
    const uint8_t *img;
    size_t img_len;
    uint32_t det_shift;
    uint32_t first, count; /* spectra [first, first + count) */
    /* out */
    tl_chain *chain;
    tl_product *p;
    tl_stats overlap;      /* the ADC counters of the overlap frames */
    int failed;
    char err[2048];
} segment;

size_t tl_replay_threads_bytes(unsigned threads, size_t block_bytes)
{
    const size_t block = block_bytes ? block_bytes : TL_SIGMF_BLOCK_DEFAULT;
    return (size_t)threads * (sizeof(tl_chain) + sizeof(tl_product) + block + 2u * TL_REPLAY_CHUNK * sizeof(int16_t) +
                              sizeof(segment));
}

static void *run_segment(void *arg)
{
    segment *g = arg;
    const tl_scenario *s = g->s;
    const uint32_t N = s->cfg.points, P = s->cfg.taps;
    int16_t *a = malloc(sizeof *a * TL_REPLAY_CHUNK), *b = malloc(sizeof *b * TL_REPLAY_CHUNK);
    tl_sigmf_reader *rd = NULL;
    if (a == NULL || b == NULL) {
        snprintf(g->err, sizeof g->err, "out of memory");
        goto fail;
    }
    rd = tl_sigmf_open(g->meta, g->block_bytes, g->err, sizeof g->err);
    if (rd == NULL)
        goto fail;
    if (tl_sigmf_set_adc_bits(rd, s->cfg.adc_bits) != 0) {
        snprintf(g->err, sizeof g->err, "%s: adc_bits %u out of range", g->meta, s->cfg.adc_bits);
        goto fail;
    }
    /* to the segment's first frame: one seek for the fixed-size datatypes */
    if (tl_sigmf_skip(rd, (uint64_t)g->first * N, g->err, sizeof g->err) != 0)
        goto fail;
    tl_config cfg = s->cfg;
    cfg.integration = g->count;
    cfg.det_shift = g->det_shift;
    const tl_status st = tl_chain_init(g->chain, &cfg, g->img, g->img_len);
    if (st != TL_OK) {
        snprintf(g->err, sizeof g->err, "chain: %s (%s)", tl_status_text(st), tl_status_name(st));
        goto fail;
    }
    /* the switch sequence where the serial run has it at frame `first` */
    for (uint32_t f = 0; f < g->first; f++)
        tl_switch_advance(&g->chain->sw);
    const uint64_t overlap = (uint64_t)(P - 1u) * N, total = overlap + (uint64_t)g->count * N;
    uint64_t done = 0;
    int16_t *const out[2] = { a, s->cfg.inputs == 2u ? b : NULL };
    while (done < total) {
        uint64_t n = total - done;
        if (n > TL_REPLAY_CHUNK)
            n = TL_REPLAY_CHUNK;
        if (done < overlap && done + n > overlap)
            n = overlap - done; /* stop exactly after the overlap frames */
        if (tl_sigmf_read(rd, out, (size_t)n, g->err, sizeof g->err) != 0)
            goto fail;
        size_t used = 0;
        const tl_status ps = tl_chain_push(g->chain, a, out[1], (size_t)n, &used);
        if (ps != TL_OK || used != n) {
            snprintf(g->err, sizeof g->err, "chain push: %s (%s)", tl_status_text(ps), tl_status_name(ps));
            goto fail;
        }
        done += n;
        if (done == overlap)
            g->overlap = g->chain->stats;
    }
    if (!tl_chain_ready(g->chain) || tl_chain_take(g->chain, g->p) != TL_OK) {
        snprintf(g->err, sizeof g->err, "segment at spectrum %u did not finish its integration", g->first);
        goto fail;
    }
    tl_sigmf_close(rd);
    free(a);
    free(b);
    return NULL;
fail:
    g->failed = 1;
    tl_sigmf_close(rd);
    free(a);
    free(b);
    return NULL;
}

static int add_u64(uint64_t *acc, uint64_t v)
{
    return __builtin_add_overflow(*acc, v, acc) ? -1 : 0;
}

static int add_i64(int64_t *acc, int64_t v)
{
    return __builtin_add_overflow(*acc, v, acc) ? -1 : 0;
}

/* A segment's counters without its overlap frames; -1 when one saturated. */
static int own_stats(tl_stats *st, const tl_stats *ov, uint32_t inputs)
{
    for (uint32_t i = 0; i < inputs; i++) {
        if (st->adc_clips[i] == UINT32_MAX || st->adc_sumsq[i] == UINT64_MAX || st->pfb_sat[i] == UINT32_MAX)
            return -1;
        st->adc_clips[i] -= ov->adc_clips[i];
        st->adc_sumsq[i] -= ov->adc_sumsq[i];
        for (uint32_t h = 0; h < TL_ADC_HIST_BINS; h++) {
            if (st->adc_hist[i][h] == UINT32_MAX)
                return -1;
            st->adc_hist[i][h] -= ov->adc_hist[i][h];
        }
        for (uint32_t k = 0; k <= TL_MAX_FFT_STAGES; k++)
            if (st->fft_sat[i][k] == UINT32_MAX)
                return -1;
    }
    return 0;
}

static void sum_stats(tl_stats *acc, const tl_stats *v)
{
    for (uint32_t i = 0; i < TL_MAX_INPUTS; i++) {
        tl_count_add(&acc->adc_clips[i], v->adc_clips[i]);
        acc->adc_sumsq[i] = (UINT64_MAX - acc->adc_sumsq[i] < v->adc_sumsq[i]) ? UINT64_MAX
                                                                               : acc->adc_sumsq[i] + v->adc_sumsq[i];
        for (uint32_t h = 0; h < TL_ADC_HIST_BINS; h++)
            tl_count_add(&acc->adc_hist[i][h], v->adc_hist[i][h]);
        tl_count_add(&acc->pfb_sat[i], v->pfb_sat[i]);
        for (uint32_t k = 0; k <= TL_MAX_FFT_STAGES; k++)
            tl_count_add(&acc->fft_sat[i][k], v->fft_sat[i][k]);
    }
}

/* out += p (sums of segment p); -1 on an overflow (cannot happen with the
 * detection shift checked, kept as a guard). */
static int merge(tl_product *out, const tl_product *p)
{
    out->spectra += p->spectra;
    out->antenna_spectra += p->antenna_spectra;
    out->discarded += p->discarded;
    sum_stats(&out->stats, &p->stats);
    for (uint32_t i = 0; i < 4u; i++)
        tl_count_add(&out->stats.acc_sat[i], p->stats.acc_sat[i]);
    /* scrub counters (tl_scrub.h): summed over the segments' chains; each
     * walks its own tables, so `passes` is not the serial run's count */
    tl_count_add(&out->scrub.passes, p->scrub.passes);
    tl_count_add(&out->scrub.state_faults, p->scrub.state_faults);
    for (uint32_t r = 0; r < TL_SCRUB_REGIONS; r++) {
        tl_count_add(&out->scrub.mismatches[r], p->scrub.mismatches[r]);
        tl_count_add(&out->scrub.restores[r], p->scrub.restores[r]);
    }
    if (p->scrub.last_bad != TL_SCRUB_LAST_NONE)
        out->scrub.last_bad = p->scrub.last_bad;
    out->upset |= p->upset;
    int bad = 0;
    for (uint32_t k = 0; k < TL_MAX_CHANNELS; k++) {
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            bad |= add_u64(&out->auto_power[i][k], p->auto_power[i][k]);
        bad |= add_i64(&out->cross_re[k], p->cross_re[k]);
        bad |= add_i64(&out->cross_im[k], p->cross_im[k]);
        out->flags[k] |= p->flags[k];
    }
    for (uint32_t s = 0; s + 1u < TL_STATES; s++) {
        tl_cal_sums *o = &out->cal[s];
        const tl_cal_sums *q = &p->cal[s];
        o->spectra += q->spectra;
        for (uint32_t i = 0; i < 4u; i++)
            tl_count_add(&o->acc_sat[i], q->acc_sat[i]);
        for (uint32_t k = 0; k < TL_MAX_CHANNELS; k++) {
            for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
                bad |= add_u64(&o->auto_power[i][k], q->auto_power[i][k]);
            bad |= add_i64(&o->cross_re[k], q->cross_re[k]);
            bad |= add_i64(&o->cross_im[k], q->cross_im[k]);
            o->flags[k] |= q->flags[k];
        }
    }
    return bad ? -1 : 0;
}

/* A recording's integration splits into segments with exactly the serial
 * result only when no spectral kurtosis block spans them and no sum can
 * saturate (saturation is not exact across segments). Returns 1 with one
 * line in err when it cannot be split; `what` names the option. */
/* The detection shift of the whole integration (every segment uses it). */
static uint32_t whole_det_shift(const tl_scenario *s)
{
    tl_config whole = s->cfg;
    whole.integration = s->spectra;
    return tl_config_det_shift(&whole);
}

static int split_refused(const tl_scenario *s, const char *what, const char *remedy, char *err, size_t cap)
{
    if (s->cfg.sk_spectra != 0u) {
        snprintf(err, cap, "%s: spectral kurtosis blocks ([flagging] sk_block = %u) cannot be split "
                 "exactly across segments; %s", what, s->cfg.sk_spectra, remedy);
        return 1;
    }
    const uint32_t det = whole_det_shift(s);
    tl_config whole = s->cfg;
    whole.integration = s->spectra;
    whole.det_shift = TL_DET_SHIFT_AUTO;
    const uint32_t safe = tl_config_det_shift(&whole);
    if (det < safe) {
        snprintf(err, cap, "%s: detection shift %u is below ceil(log2 %u spectra) = %u, so a sum could "
                 "saturate, and saturation is not exact across segments; %s", what, det, s->spectra, safe, remedy);
        return 1;
    }
    return 0;
}

int tl_replay_threads_product(const char *meta, size_t block_bytes, const tl_scenario *s, unsigned threads,
                              tl_product *out, char *err, size_t cap)
{
    const uint32_t M = s->spectra;
    if (threads < 1u || threads > TL_REPLAY_MAX_THREADS) {
        snprintf(err, cap, "--threads %u: must be from 1 to %u", threads, TL_REPLAY_MAX_THREADS);
        return -1;
    }
    char what[48];
    snprintf(what, sizeof what, "--threads %u", threads);
    if (threads > 1u && split_refused(s, what, "use --threads 1", err, cap))
        return -1;
    const uint32_t det = whole_det_shift(s);
    if (M < 1u) {
        snprintf(err, cap, "no spectra to integrate");
        return -1;
    }
    const uint32_t nseg = threads < M ? threads : M;
    uint8_t *img = NULL;
    size_t img_len = 0;
    if (tl_scenario_taps_image(s, 0, &img, &img_len) != 0) {
        snprintf(err, cap, "the coefficient table cannot be designed");
        return -1;
    }
    segment *g = calloc(nseg, sizeof *g);
    pthread_t *tid = calloc(nseg, sizeof *tid);
    int rc = -1;
    uint32_t started = 0;
    if (g == NULL || tid == NULL) {
        snprintf(err, cap, "out of memory");
        goto done;
    }
    for (uint32_t k = 0; k < nseg; k++) {
        g[k].meta = meta;
        g[k].block_bytes = block_bytes;
        g[k].s = s;
        g[k].img = img;
        g[k].img_len = img_len;
        g[k].det_shift = det;
        g[k].first = (uint32_t)((uint64_t)M * k / nseg);
        g[k].count = (uint32_t)((uint64_t)M * (k + 1u) / nseg) - g[k].first;
        g[k].chain = malloc(sizeof *g[k].chain);
        g[k].p = k == 0 ? out : malloc(sizeof *g[k].p);
        if (g[k].chain == NULL || g[k].p == NULL) {
            snprintf(err, cap, "out of memory");
            goto done;
        }
    }
    for (; started < nseg; started++) {
        if (nseg == 1u) {
            run_segment(&g[0]);
        } else if (pthread_create(&tid[started], NULL, run_segment, &g[started]) != 0) {
            snprintf(err, cap, "cannot start thread %u", started + 1u);
            goto done;
        }
    }
    rc = 0;
done:
    if (nseg > 1u)
        for (uint32_t k = 0; k < started; k++)
            pthread_join(tid[k], NULL);
    if (rc == 0) {
        for (uint32_t k = 0; k < nseg && rc == 0; k++)
            if (g[k].failed) {
                snprintf(err, cap, "%s", g[k].err);
                rc = -1;
            }
        for (uint32_t k = 1; k < nseg && rc == 0; k++) {
            if (own_stats(&g[k].p->stats, &g[k].overlap, s->cfg.inputs) != 0 || merge(out, g[k].p) != 0) {
                snprintf(err, cap, "--threads %u: a counter or sum saturated in a segment, which is not exact "
                         "across segments; use --threads 1", threads);
                rc = -1;
            }
        }
    }
    if (g != NULL)
        for (uint32_t k = 0; k < nseg; k++) {
            free(g[k].chain);
            if (k > 0)
                free(g[k].p);
        }
    free(g);
    free(tid);
    free(img);
    return rc;
}

/* ---- one segment at a time (replay --shard, replay_shard.h) -------------------- */

int tl_replay_segment_product(const char *meta, size_t block_bytes, const tl_scenario *s, uint32_t k, uint32_t n,
                              tl_product *out, char *err, size_t cap)
{
    const uint32_t M = s->spectra;
    if (n < 1u || k >= n || n > M) {
        snprintf(err, cap, "--shard %u/%u: the recording's integration of %u spectra splits into at most %u shards",
                 k, n, M, M);
        return -1;
    }
    char what[48];
    snprintf(what, sizeof what, "--shard %u/%u", k, n);
    if (n > 1u && split_refused(s, what, "use one shard", err, cap))
        return -1;
    const uint32_t det = whole_det_shift(s);
    uint8_t *img = NULL;
    size_t img_len = 0;
    if (tl_scenario_taps_image(s, 0, &img, &img_len) != 0) {
        snprintf(err, cap, "the coefficient table cannot be designed");
        return -1;
    }
    segment g;
    memset(&g, 0, sizeof g);
    g.meta = meta;
    g.block_bytes = block_bytes;
    g.s = s;
    g.img = img;
    g.img_len = img_len;
    g.det_shift = det;
    g.first = (uint32_t)((uint64_t)M * k / n);
    g.count = (uint32_t)((uint64_t)M * (k + 1u) / n) - g.first;
    g.chain = malloc(sizeof *g.chain);
    g.p = out;
    int rc = -1;
    if (g.chain == NULL) {
        snprintf(err, cap, "out of memory");
    } else {
        run_segment(&g);
        if (g.failed)
            snprintf(err, cap, "%s", g.err);
        else if (k > 0u && own_stats(&out->stats, &g.overlap, s->cfg.inputs) != 0)
            snprintf(err, cap, "--shard %u/%u: a counter saturated in the segment, which is not exact across "
                     "segments; use one shard",
                     k, n);
        else
            rc = 0;
    }
    free(g.chain);
    free(img);
    return rc;
}

int tl_replay_add_product(tl_product *out, const tl_product *p)
{
    return merge(out, p);
}
