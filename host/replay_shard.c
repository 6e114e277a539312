/* replay_shard.c - sharded long replays (replay_shard.h). */
#include "replay_shard.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "replay_threads.h"
#include "run_outputs.h"
#include "sha256.h"
#include "spectra_out.h"
#include "version.h"

int tl_replay_shard_job(const char *meta, const char *datatype, uint64_t samples, const tl_scenario *s,
                        uint8_t job[32], char *err, size_t cap)
{
    tl_sha256 h;
    tl_sha256_init(&h);
    char line[256];
    int n = snprintf(line, sizeof line, "tidelock replay job 1\ntool %s\narith %u\n", TL_TOOL_VERSION,
                     (unsigned)TL_ARITH_VERSION);
    tl_sha256_update(&h, line, (size_t)n);
    char *text = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&text, &len);
    if (m == NULL) {
        snprintf(err, cap, "out of memory");
        return -1;
    }
    const int bad = tl_scenario_write(m, s) != 0;
    if (fclose(m) != 0 || bad) {
        free(text);
        snprintf(err, cap, "out of memory");
        return -1;
    }
    tl_sha256_update(&h, text, len);
    free(text);
    FILE *f = fopen(meta, "rb");
    if (f == NULL) {
        snprintf(err, cap, "%s: cannot open: %s", meta, strerror(errno));
        return -1;
    }
    uint8_t buf[4096];
    size_t got;
    while ((got = fread(buf, 1, sizeof buf, f)) > 0)
        tl_sha256_update(&h, buf, got);
    const int rerr = ferror(f);
    fclose(f);
    if (rerr) {
        snprintf(err, cap, "%s: read error", meta);
        return -1;
    }
    n = snprintf(line, sizeof line, "\ndata %s %llu\n", datatype, (unsigned long long)samples);
    tl_sha256_update(&h, line, (size_t)n);
    tl_sha256_final(&h, job);
    return 0;
}

/* ---- the product, field by field ---------------------------------------------- */

static void put_sums(tl_bytebuf *b, uint32_t channels, uint64_t (*ap)[TL_MAX_CHANNELS], const int64_t *re,
                     const int64_t *im, const uint8_t *fl)
{
    for (uint32_t k = 0; k < channels; k++) {
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            tl_shard_put_u64(b, ap[i][k]);
        tl_shard_put_u64(b, (uint64_t)re[k]);
        tl_shard_put_u64(b, (uint64_t)im[k]);
        tl_bytebuf_put(b, &fl[k], 1);
    }
}

static void get_sums(tl_shard_cursor *c, uint32_t channels, uint64_t (*ap)[TL_MAX_CHANNELS], int64_t *re,
                     int64_t *im, uint8_t *fl)
{
    for (uint32_t k = 0; k < channels && !c->failed; k++) {
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            ap[i][k] = tl_shard_get_u64(c);
        re[k] = (int64_t)tl_shard_get_u64(c);
        im[k] = (int64_t)tl_shard_get_u64(c);
        if (c->len - c->at < 1u || c->failed) {
            c->failed = 1;
            return;
        }
        fl[k] = c->p[c->at++];
    }
}

/* The product's header fields, in payload order (replay_shard.h). */
static uint32_t *header_u32(tl_product *p, unsigned k)
{
    uint32_t *const f[] = { &p->arith_version, &p->index,     &p->spectra,        &p->antenna_spectra,
                            &p->discarded,     &p->sk_blocks, &p->sk_dropped,     &p->switch_steps,
                            &p->points,        &p->taps,      &p->inputs,         &p->channels,
                            &p->fft_stages,    &p->fft_scale_mask, &p->fft_total_shift, &p->det_shift,
                            &p->rounding,      &p->window,    &p->taps_shift,     &p->taps_crc };
    return k < sizeof f / sizeof f[0] ? f[k] : NULL;
}
#define HEADER_U32 20u /* 8 before first_frame, 12 after */

static void put_product(tl_bytebuf *b, tl_product *p) /* p is only read */
{
    for (unsigned k = 0; k < HEADER_U32; k++) {
        if (k == 8u)
            tl_shard_put_u64(b, p->first_frame);
        tl_shard_put_u32(b, *header_u32(p, k));
    }
    const tl_stats *st = &p->stats;
    for (uint32_t i = 0; i < TL_MAX_INPUTS; i++) {
        tl_shard_put_u32(b, st->adc_clips[i]);
        tl_shard_put_u64(b, st->adc_sumsq[i]);
        for (uint32_t h = 0; h < TL_ADC_HIST_BINS; h++)
            tl_shard_put_u32(b, st->adc_hist[i][h]);
        tl_shard_put_u32(b, st->pfb_sat[i]);
        for (uint32_t k = 0; k <= TL_MAX_FFT_STAGES; k++)
            tl_shard_put_u32(b, st->fft_sat[i][k]);
    }
    for (uint32_t q = 0; q < 4u; q++)
        tl_shard_put_u32(b, st->acc_sat[q]);
    put_sums(b, p->channels, (uint64_t(*)[TL_MAX_CHANNELS])p->auto_power, p->cross_re, p->cross_im, p->flags);
    for (uint32_t s = 0; s + 1u < TL_STATES; s++) {
        const tl_cal_sums *c = &p->cal[s];
        tl_shard_put_u32(b, c->spectra);
        for (uint32_t q = 0; q < 4u; q++)
            tl_shard_put_u32(b, c->acc_sat[q]);
        put_sums(b, p->channels, (uint64_t(*)[TL_MAX_CHANNELS])c->auto_power, c->cross_re, c->cross_im, c->flags);
    }
}

static void get_product(tl_shard_cursor *c, tl_product *p)
{
    memset(p, 0, sizeof *p);
    for (unsigned k = 0; k < HEADER_U32; k++) {
        if (k == 8u)
            p->first_frame = tl_shard_get_u64(c);
        *header_u32(p, k) = tl_shard_get_u32(c);
    }
    if (c->failed || p->channels < 1u || p->channels > TL_MAX_CHANNELS || p->points != 2u * p->channels ||
        p->inputs < 1u || p->inputs > TL_MAX_INPUTS) {
        c->failed = 1;
        return;
    }
    tl_stats *st = &p->stats;
    for (uint32_t i = 0; i < TL_MAX_INPUTS; i++) {
        st->adc_clips[i] = tl_shard_get_u32(c);
        st->adc_sumsq[i] = tl_shard_get_u64(c);
        for (uint32_t h = 0; h < TL_ADC_HIST_BINS; h++)
            st->adc_hist[i][h] = tl_shard_get_u32(c);
        st->pfb_sat[i] = tl_shard_get_u32(c);
        for (uint32_t k = 0; k <= TL_MAX_FFT_STAGES; k++)
            st->fft_sat[i][k] = tl_shard_get_u32(c);
    }
    for (uint32_t q = 0; q < 4u; q++)
        st->acc_sat[q] = tl_shard_get_u32(c);
    get_sums(c, p->channels, p->auto_power, p->cross_re, p->cross_im, p->flags);
    for (uint32_t s = 0; s + 1u < TL_STATES; s++) {
        tl_cal_sums *cs = &p->cal[s];
        cs->spectra = tl_shard_get_u32(c);
        for (uint32_t q = 0; q < 4u; q++)
            cs->acc_sat[q] = tl_shard_get_u32(c);
        get_sums(c, p->channels, cs->auto_power, cs->cross_re, cs->cross_im, cs->flags);
    }
}

int tl_replay_shard_run(const char *meta, size_t block_bytes, const tl_scenario *s, const uint8_t job[32],
                        uint32_t i, uint32_t n, const char *dir, char *path_out, size_t cap_path, tl_product *scratch,
                        char *err, size_t cap)
{
    if (tl_replay_segment_product(meta, block_bytes, s, i, n, scratch, err, cap) != 0)
        return -1;
    const uint32_t M = s->spectra;
    tl_bytebuf b = { 0 };
    tl_shard_put_f64(&b, s->sky.sample_rate_hz);
    tl_shard_put_u32(&b, s->write_csv);
    tl_shard_put_u32(&b, s->write_npy);
    tl_shard_put_u32(&b, M);
    tl_shard_put_u32(&b, (uint32_t)((uint64_t)M * i / n));
    tl_shard_put_u32(&b, (uint32_t)((uint64_t)M * (i + 1u) / n - (uint64_t)M * i / n));
    tl_shard_put_u32(&b, TL_MAX_INPUTS);
    tl_shard_put_u32(&b, TL_ADC_HIST_BINS);
    tl_shard_put_u32(&b, TL_MAX_FFT_STAGES + 1u);
    tl_shard_put_u32(&b, TL_STATES - 1u);
    put_product(&b, scratch);
    if (b.failed) {
        free(b.p);
        snprintf(err, cap, "out of memory");
        return -1;
    }
    tl_shard sh;
    memset(&sh, 0, sizeof sh);
    sh.kind = TL_SHARD_REPLAY;
    memcpy(sh.job, job, 32);
    sh.index = i;
    sh.count = n;
    sh.payload = b.p;
    sh.len = b.len;
    tl_shard_path(path_out, cap_path, dir, i, n);
    const int rc = tl_shard_write(path_out, &sh, err, cap);
    free(b.p);
    return rc;
}

int tl_replay_shard_merge(const char *const *paths, const tl_shard *sh, size_t nfiles, const char *dir, char *err,
                          size_t cap)
{
    tl_product *out = malloc(sizeof *out), *p = malloc(sizeof *p);
    int rc = -1;
    double rate = 0.0;
    uint32_t csv = 0, npy = 0, M = 0;
    if (out == NULL || p == NULL) {
        snprintf(err, cap, "out of memory");
        goto done;
    }
    /* shards in index order */
    for (uint32_t want = 0; want < sh[0].count; want++) {
        size_t f = 0;
        while (f < nfiles && sh[f].index != want)
            f++;
        if (f == nfiles) { /* tl_shard_check_set rules this out */
            snprintf(err, cap, "shard %u of %u is missing", want, sh[0].count);
            goto done;
        }
        tl_shard_cursor c = { sh[f].payload, sh[f].len, 0, 0 };
        const double r = tl_shard_get_f64(&c);
        const uint32_t cv = tl_shard_get_u32(&c), nv = tl_shard_get_u32(&c), m = tl_shard_get_u32(&c);
        const uint32_t first = tl_shard_get_u32(&c), count = tl_shard_get_u32(&c);
        const uint32_t d0 = tl_shard_get_u32(&c), d1 = tl_shard_get_u32(&c), d2 = tl_shard_get_u32(&c),
                       d3 = tl_shard_get_u32(&c);
        if (!c.failed && (d0 != TL_MAX_INPUTS || d1 != TL_ADC_HIST_BINS || d2 != TL_MAX_FFT_STAGES + 1u ||
                          d3 != TL_STATES - 1u)) {
            snprintf(err, cap, "%s: dimensions %u/%u/%u/%u: this tidelock's are %u/%u/%u/%u (inputs, histogram bins, "
                     "FFT stages + 1, calibration states); merge with the build that ran the replay",
                     paths[f], d0, d1, d2, d3, TL_MAX_INPUTS, TL_ADC_HIST_BINS, TL_MAX_FFT_STAGES + 1u,
                     TL_STATES - 1u);
            goto done;
        }
        get_product(&c, want == 0 ? out : p);
        if (c.failed || c.at != c.len) {
            snprintf(err, cap, "%s: payload: the accumulators are cut short, followed by extra octets, or give "
                     "channels, points or inputs out of range", paths[f]);
            goto done;
        }
        const uint32_t n = sh[f].count;
        if (m < n || first != (uint32_t)((uint64_t)m * want / n) ||
            count != (uint32_t)((uint64_t)m * (want + 1u) / n) - first) {
            snprintf(err, cap, "%s: segment [%u, %u) of %u spectra is not shard %u of %u's", paths[f], first,
                     first + count, m, want, n);
            goto done;
        }
        if (want == 0 && !(r > 0.0 && r < 1e12)) {
            snprintf(err, cap, "%s: sample rate = %g Hz: must be above 0 and below 1e12", paths[f], r);
            goto done;
        }
        if (want == 0) {
            rate = r;
            csv = cv;
            npy = nv;
            M = m;
        } else if (m != M || r != rate || cv != csv || nv != npy) {
            snprintf(err, cap, "%s: spectra, sample rate or output flags differ from shard 0's", paths[f]);
            goto done;
        } else if (p->channels != out->channels || p->inputs != out->inputs || p->det_shift != out->det_shift ||
                   p->taps_crc != out->taps_crc) {
            snprintf(err, cap, "%s: channels, inputs, detection shift or table differ from shard 0's", paths[f]);
            goto done;
        } else if (tl_replay_add_product(out, p) != 0) {
            snprintf(err, cap, "%s: a sum overflowed while adding the shards", paths[f]);
            goto done;
        }
    }
    if (tl_run_outputs_folder(dir, err, cap) != 0 ||
        tl_spectra_write(dir, out, rate, (int)csv, (int)npy, err, cap) != 0)
        goto done;
    rc = 0;
done:
    free(out);
    free(p);
    return rc;
}
