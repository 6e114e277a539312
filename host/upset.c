/* upset.c - upset injection into a live chain (upset.h). */
#include "upset.h"

#include <jansson.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "bytebuf.h"
#include "rng.h"
#include "taps_design.h"
#include "tl_chain.h"
#include "tl_downlink.h"

#define POINTS 256u
#define TAPS 4u
#define CHUNK (POINTS / 4u)
#define MAX_PRODUCTS 16u
#define MAX_SPANS 96u
#define MAX_FLIPS 64u

static const char *const target_names[TL_UPSET_TARGETS] = { "taps",  "twiddles", "config",  "accumulators",
                                                            "state", "scrubber", "anywhere" };

const char *tl_upset_target_name(unsigned t)
{
    return t < TL_UPSET_TARGETS ? target_names[t] : NULL;
}

uint32_t tl_upset_parse_targets(const char *list, const char **bad)
{
    uint32_t m = 0;
    const char *p = list;
    while (p != NULL && *p != '\0') {
        const char *e = strchr(p, ',');
        const size_t n = e != NULL ? (size_t)(e - p) : strlen(p);
        uint32_t bit = 0;
        if (n == 3u && strncmp(p, "all", 3) == 0)
            bit = (1u << TL_UPSET_TARGETS) - 1u;
        else if (n == 6u && strncmp(p, "tables", 6) == 0)
            bit = (1u << TL_UPSET_TAPS) | (1u << TL_UPSET_TWIDDLES);
        for (unsigned t = 0; bit == 0u && t < TL_UPSET_TARGETS; t++)
            if (strlen(target_names[t]) == n && strncmp(p, target_names[t], n) == 0)
                bit = 1u << t;
        if (bit == 0u) {
            if (bad != NULL)
                *bad = p;
            return 0;
        }
        m |= bit;
        p = e != NULL ? e + 1 : NULL;
    }
    return m;
}

void tl_upset_defaults(tl_upset_opts *o)
{
    o->trials = 2000u;
    o->targets = (1u << TL_UPSET_TARGETS) - 1u;
    o->seed = 1u;
    o->flips = 1u;
    o->period = 0u;
    o->integration = 16u;
    o->products = 3u;
}

/* ---- target regions: octet spans of tl_chain -------------------------------- */

typedef struct span {
    size_t off, len;
} span;

typedef struct spans {
    span s[MAX_SPANS];
    uint32_t n;
    uint64_t bits;
} spans;

static void add(spans *v, size_t off, size_t len)
{
    if (v->n < MAX_SPANS && len > 0u) {
        v->s[v->n++] = (span){ off, len };
        v->bits += 8u * (uint64_t)len;
    }
}

#define CH(member) offsetof(tl_chain, member)
#define INTEG(s, member) (CH(integ) + (size_t)(s) * sizeof(tl_integrator) + offsetof(tl_integrator, member))
#define PFB(i, member) (CH(pfb) + (size_t)(i) * sizeof(tl_pfb) + offsetof(tl_pfb, member))

static void target_spans(const tl_chain *c, unsigned t, spans *v)
{
    memset(v, 0, sizeof *v);
    const size_t N = POINTS, L = N / 2u, ch = L, P = TAPS;
    switch (t) {
    case TL_UPSET_TAPS:
        add(v, CH(taps), offsetof(tl_taps, coef) + 4u * P * N);
        break;
    case TL_UPSET_TWIDDLES:
        add(v, CH(fft) + offsetof(tl_fft, perm), 2u * L);
        add(v, CH(fft) + offsetof(tl_fft, tw), 4u * (size_t)c->scrub.tw_used);
        add(v, CH(fft) + offsetof(tl_fft, split_tw), 4u * (L + 2u));
        break;
    case TL_UPSET_CONFIG: /* as tl_scrub.c's CONFIG region */
        add(v, CH(cfg), sizeof(tl_config));
        add(v, CH(clip_hi), sizeof(uint16_t));
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            add(v, PFB(i, table), offsetof(tl_pfb, newest));
        add(v, CH(fft), offsetof(tl_fft, perm));
        add(v, CH(sw), offsetof(tl_switch, step));
        add(v, CH(sk) + offsetof(tl_sk, m), 8u);
        add(v, CH(sk) + offsetof(tl_sk, channels), 8u);
        for (uint32_t s = 0; s < TL_STATES; s++)
            add(v, INTEG(s, channels), sizeof(uint32_t));
        break;
    case TL_UPSET_ACCUM:
        for (uint32_t s = 0; s < TL_STATES; s++) {
            for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
                add(v, INTEG(s, auto_sum) + (size_t)i * TL_MAX_CHANNELS * 8u, 8u * ch);
            add(v, INTEG(s, cross_re), 8u * ch);
            add(v, INTEG(s, cross_im), 8u * ch);
            add(v, INTEG(s, flags), ch);
            add(v, INTEG(s, sat_channels), 4u * sizeof(uint32_t));
            add(v, INTEG(s, check), sizeof(uint64_t));
        }
        add(v, CH(stats), sizeof(tl_stats));
        break;
    case TL_UPSET_STATE:
        add(v, CH(initialised), sizeof(uint32_t));
        add(v, CH(fill), sizeof(uint32_t));
        add(v, CH(ready), sizeof(uint32_t));
        add(v, CH(sk_ready), sizeof(uint32_t));
        add(v, CH(sk_blocks), sizeof(uint32_t));
        add(v, CH(sk_first_frame), sizeof(uint64_t));
        add(v, CH(index), sizeof(uint32_t));
        add(v, CH(frames), sizeof(uint64_t));
        add(v, CH(first_frame), sizeof(uint64_t));
        add(v, CH(spectra), sizeof(uint32_t));
        add(v, CH(discarded), sizeof(uint32_t));
        for (uint32_t s = 0; s < TL_STATES; s++)
            add(v, INTEG(s, spectra), sizeof(uint32_t));
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++) {
            add(v, PFB(i, newest), 2u * sizeof(uint32_t));
            add(v, PFB(i, history), 2u * P * N);
        }
        add(v, CH(sw) + offsetof(tl_switch, step), 3u * sizeof(uint32_t));
        add(v, CH(sk) + offsetof(tl_sk, inner), sizeof(uint32_t));
        add(v, CH(sk) + offsetof(tl_sk, count), 2u * sizeof(uint32_t));
        add(v, CH(fft) + offsetof(tl_fft, work), 8u * L);
        add(v, CH(y), 4u * N);
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            add(v, CH(X) + (size_t)i * TL_MAX_POINTS * 4u, 4u * N);
        add(v, CH(power), 8u * ch);
        add(v, CH(cross_re), 8u * ch);
        add(v, CH(cross_im), 8u * ch);
        break;
    case TL_UPSET_SCRUBBER:
        add(v, CH(scrub), offsetof(tl_scrub, config_copy) + TL_SCRUB_CONFIG_OCTETS);
        add(v, CH(scrub) + offsetof(tl_scrub, taps_copy), offsetof(tl_taps, coef) + 4u * P * N);
        break;
    case TL_UPSET_ANYWHERE:
        add(v, 0u, sizeof(tl_chain));
        break;
    default:
        break;
    }
}

/* Bit b of the target: flip it in the live chain. */
static void flip(tl_chain *c, const spans *v, uint64_t b)
{
    uint8_t *base = (uint8_t *)c;
    for (uint32_t i = 0; i < v->n; i++) {
        const uint64_t n = 8u * (uint64_t)v->s[i].len;
        if (b < n) {
            base[v->s[i].off + b / 8u] ^= (uint8_t)(1u << (b % 8u));
            return;
        }
        b -= n;
    }
}

/* ---- runs --------------------------------------------------------------------- */

typedef struct sinkbuf {
    tl_bytebuf sci, hk;
} sinkbuf;

static void sink(void *user, const uint8_t *pkt, size_t len)
{
    sinkbuf *b = user;
    const uint32_t apid = len >= 2u ? (((uint32_t)pkt[0] & 7u) << 8 | pkt[1]) : 0u;
    tl_bytebuf_put(apid == 0x102u ? &b->hk : &b->sci, pkt, len);
}

typedef struct harness {
    const tl_upset_opts *o;
    tl_config cfg;
    uint8_t *img;
    size_t img_len;
    int16_t *in0, *in1;
    size_t total;          /* samples per input */
    uint32_t events;       /* pushes plus takes of a clean run */
    tl_chain *c;
    tl_product *p;
    tl_downlink *d;
    tl_product *clean[MAX_PRODUCTS];
    sinkbuf clean_pk[MAX_PRODUCTS];
} harness;

typedef struct flip_at {
    uint32_t event;
    uint64_t bit;
} flip_at;

typedef struct outcome {
    uint32_t products;
    int stopped, watchdog, changed, silent, flagged, sci_same, hk_same, detected;
} outcome;

/* Downlinked spectrum and header fields equal? Of the per-channel flags
 * only the saturation bits are downlinked (the science packets' bitmap);
 * the upset flag is the detection itself. */
static int spectrum_equal(const tl_product *a, const tl_product *b)
{
    if (a->index != b->index || a->spectra != b->spectra || a->antenna_spectra != b->antenna_spectra ||
        a->discarded != b->discarded || a->first_frame != b->first_frame || a->channels != b->channels ||
        a->inputs != b->inputs || a->fft_total_shift != b->fft_total_shift || a->det_shift != b->det_shift ||
        a->taps_crc != b->taps_crc || a->switch_steps != b->switch_steps || a->cal[0].spectra != b->cal[0].spectra ||
        a->cal[1].spectra != b->cal[1].spectra)
        return 0;
    const uint8_t keep = (uint8_t)(TL_FLAG_SAT_AUTO0 | TL_FLAG_SAT_AUTO1 | TL_FLAG_SAT_CROSS_RE | TL_FLAG_SAT_CROSS_IM);
    for (uint32_t k = 0; k < a->channels && k < TL_MAX_CHANNELS; k++) {
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            if (a->auto_power[i][k] != b->auto_power[i][k])
                return 0;
        if (a->cross_re[k] != b->cross_re[k] || a->cross_im[k] != b->cross_im[k] ||
            (a->flags[k] & keep) != (b->flags[k] & keep))
            return 0;
        for (uint32_t s = 0; s < 2u; s++) {
            const tl_cal_sums *x = &a->cal[s], *y = &b->cal[s];
            if (x->auto_power[0][k] != y->auto_power[0][k] || x->auto_power[1][k] != y->auto_power[1][k] ||
                x->cross_re[k] != y->cross_re[k] || x->cross_im[k] != y->cross_im[k] ||
                (x->flags[k] & keep) != (y->flags[k] & keep))
                return 0;
        }
    }
    return 1;
}

static int same_bytes(const tl_bytebuf *a, const tl_bytebuf *b)
{
    return a->len == b->len && (a->len == 0u || memcmp(a->p, b->p, a->len) == 0);
}

/* One run with the flips (sorted by event) of target v; clean when n = 0. */
static int run_once(harness *h, const spans *v, const flip_at *fl, uint32_t n, outcome *out, char *err, size_t cap)
{
    const tl_upset_opts *o = h->o;
    tl_chain *c = h->c;
    memset(out, 0, sizeof *out);
    out->sci_same = out->hk_same = 1;
    if (tl_chain_init(c, &h->cfg, h->img, h->img_len) != TL_OK || tl_chain_set_scrub_period(c, o->period) != TL_OK) {
        snprintf(err, cap, "upset: the chain does not start with the harness configuration");
        return -1;
    }
    tl_downlink_config dc;
    tl_downlink_config_default(&dc);
    dc.config_id = tl_downlink_config_id(&c->cfg, c->taps.crc);
    if (tl_downlink_init(h->d, &dc) != TL_OK) {
        snprintf(err, cap, "upset: the downlink does not start");
        return -1;
    }
    const int clean = n == 0u;
    size_t off = 0;
    uint32_t ev = 0, fi = 0, stall = 0;
    /* watchdog: twice the events of a clean run (pushes of a quarter frame and takes) */
    const uint32_t limit = 2u * (uint32_t)(h->total / CHUNK + o->products) + 64u;
    while (out->products < o->products) {
        if (ev > limit) {
            out->watchdog = 1;
            break;
        }
        while (v != NULL && fl != NULL && fi < n && fl[fi].event == ev)
            flip(c, v, fl[fi++].bit);
        ev++;
        if (tl_chain_sk_ready(c)) {
            static tl_sk_block blk;
            if (tl_chain_take_sk(c, &blk) != TL_OK) {
                out->stopped = 1;
                break;
            }
            continue;
        }
        if (tl_chain_ready(c)) {
            if (tl_chain_take(c, h->p) != TL_OK) {
                out->stopped = 1;
                break;
            }
            const uint32_t j = out->products++;
            sinkbuf pk = { { NULL, 0, 0, 0 }, { NULL, 0, 0, 0 } };
            const int ok = tl_downlink_product(h->d, h->p, 1, sink, &pk) == TL_OK && !pk.sci.failed && !pk.hk.failed;
            if (clean) {
                if (!ok) {
                    free(pk.sci.p);
                    free(pk.hk.p);
                    snprintf(err, cap, "upset: the clean run's downlink failed");
                    return -1;
                }
                memcpy(h->clean[j], h->p, sizeof *h->p);
                h->clean_pk[j] = pk;
                continue;
            }
            const int eq = spectrum_equal(h->p, h->clean[j]);
            out->flagged |= h->p->upset != 0u;
            out->changed |= !eq;
            out->silent |= !eq && h->p->upset == 0u;
            out->sci_same &= ok && same_bytes(&pk.sci, &h->clean_pk[j].sci);
            out->hk_same &= ok && same_bytes(&pk.hk, &h->clean_pk[j].hk);
            free(pk.sci.p);
            free(pk.hk.p);
            continue;
        }
        if (off >= h->total) {
            if (++stall > 2u)
                break; /* input used up before the products came: fewer products */
            continue;
        }
        const size_t k = h->total - off < CHUNK ? h->total - off : CHUNK;
        size_t used = 0;
        const tl_status st = tl_chain_push(c, h->in0 + off, h->in1 + off, k, &used);
        if (st != TL_OK && st != TL_E_BUSY) {
            out->stopped = 1;
            break;
        }
        off += used;
    }
    if (out->products < o->products)
        out->stopped = 1;
    const tl_scrub_counts *sc = &c->scrub.counts;
    out->detected = sc->state_faults != 0u;
    for (uint32_t r = 0; r < TL_SCRUB_REGIONS; r++)
        out->detected |= sc->mismatches[r] != 0u;
    if (clean) {
        if (out->products != o->products || out->detected || out->watchdog) {
            snprintf(err, cap, "upset: the clean run did not give %u clean products", o->products);
            return -1;
        }
        h->events = ev;
    }
    return 0;
}

static int cmp_flip(const void *a, const void *b)
{
    const flip_at *x = a, *y = b;
    return x->event < y->event ? -1 : x->event > y->event;
}

static void release(harness *h)
{
    free(h->img);
    free(h->in0);
    free(h->in1);
    free(h->c);
    free(h->p);
    free(h->d);
    for (uint32_t j = 0; j < MAX_PRODUCTS; j++) {
        free(h->clean[j]);
        free(h->clean_pk[j].sci.p);
        free(h->clean_pk[j].hk.p);
    }
}

static int setup(harness *h, const tl_upset_opts *o, char *err, size_t cap)
{
    memset(h, 0, sizeof *h);
    h->o = o;
    if (o->trials < 1u || o->trials > 10000000u || o->flips < 1u || o->flips > MAX_FLIPS ||
        o->integration < 16u || o->integration > 4096u || o->products < 1u || o->products > MAX_PRODUCTS ||
        o->period > TL_SCRUB_MAX_PERIOD || o->targets == 0u || (o->targets >> TL_UPSET_TARGETS) != 0u) {
        snprintf(err, cap, "upset: options out of range (trials 1..10000000, flips 1..%u, integration 16..4096, "
                           "products 1..%u, period 0..%u)", MAX_FLIPS, MAX_PRODUCTS, TL_SCRUB_MAX_PERIOD);
        return -1;
    }
    tl_config_default(&h->cfg);
    h->cfg.points = POINTS;
    h->cfg.taps = TAPS;
    h->cfg.inputs = 2u;
    h->cfg.adc_bits = 14u;
    h->cfg.integration = o->integration;
    h->cfg.switch_steps = 3u;
    h->cfg.switch_state[0] = (uint8_t)TL_STATE_ANTENNA;
    h->cfg.switch_state[1] = (uint8_t)TL_STATE_LOAD;
    h->cfg.switch_state[2] = (uint8_t)TL_STATE_NOISE;
    h->cfg.switch_dwell[0] = 8u;
    h->cfg.switch_dwell[1] = 4u;
    h->cfg.switch_dwell[2] = 4u;
    h->cfg.switch_discard = TAPS - 1u;
    tl_taps *t = malloc(sizeof *t);
    h->img_len = TL_TAPS_IMAGE_BYTES(TAPS, POINTS);
    h->img = malloc(h->img_len);
    h->total = (size_t)(TAPS - 1u + o->products * o->integration) * POINTS;
    h->in0 = malloc(h->total * sizeof *h->in0);
    h->in1 = malloc(h->total * sizeof *h->in1);
    h->c = calloc(1, sizeof *h->c);
    h->p = calloc(1, sizeof *h->p);
    h->d = calloc(1, sizeof *h->d);
    int bad = t == NULL || h->img == NULL || h->in0 == NULL || h->in1 == NULL || h->c == NULL || h->p == NULL ||
              h->d == NULL;
    for (uint32_t j = 0; j < o->products && !bad; j++)
        bad = (h->clean[j] = calloc(1, sizeof *h->clean[j])) == NULL;
    size_t len = 0;
    if (bad || tl_taps_design(TL_WINDOW_HANN, TAPS, POINTS, t, NULL) != 0 ||
        tl_taps_write_image(t, h->img, h->img_len, &len) != TL_OK || len != h->img_len) {
        free(t);
        release(h);
        snprintf(err, cap, "upset: out of memory or no %u x %u table", TAPS, POINTS);
        return -1;
    }
    free(t);
    tl_rng r;
    tl_rng_seed(&r, o->seed ^ 0x5EEDu);
    const double rms = 0.125 * 8192.0;
    for (size_t i = 0; i < h->total; i++) {
        for (int k = 0; k < 2; k++) {
            double v = nearbyint(rms * tl_rng_normal(&r));
            v = v > 8191.0 ? 8191.0 : (v < -8192.0 ? -8192.0 : v);
            (k == 0 ? h->in0 : h->in1)[i] = (int16_t)((int32_t)v * 4);
        }
    }
    return 0;
}

int tl_upset_run(const tl_upset_opts *o, tl_upset_tally tally[TL_UPSET_TARGETS], char *err, size_t cap)
{
    harness h;
    if (setup(&h, o, err, cap) != 0)
        return -1;
    memset(tally, 0, TL_UPSET_TARGETS * sizeof *tally);
    outcome out;
    if (run_once(&h, NULL, NULL, 0u, &out, err, cap) != 0) {
        release(&h);
        return -1;
    }
    if (h.events == 0u) {
        snprintf(err, cap, "upset: the clean run offered no point to inject at");
        release(&h);
        return -1;
    }
    tl_rng r;
    tl_rng_seed(&r, o->seed);
    flip_at fl[MAX_FLIPS];
    for (unsigned t = 0; t < TL_UPSET_TARGETS; t++) {
        if (((o->targets >> t) & 1u) == 0u)
            continue;
        spans v;
        target_spans(h.c, t, &v);
        tl_upset_tally *y = &tally[t];
        y->region_bits = v.bits;
        if (v.bits == 0u)
            continue; /* an empty region: nothing to flip */
        for (uint32_t k = 0; k < o->trials; k++) {
            for (uint32_t f = 0; f < o->flips; f++) {
                fl[f].event = (uint32_t)(tl_rng_u64(&r) % h.events);
                fl[f].bit = tl_rng_u64(&r) % v.bits;
            }
            qsort(fl, o->flips, sizeof fl[0], cmp_flip);
            if (run_once(&h, &v, fl, o->flips, &out, err, cap) != 0) {
                release(&h);
                return -1;
            }
            y->trials++;
            y->injected += o->flips;
            y->detected += (uint64_t)out.detected;
            y->flagged += (uint64_t)out.flagged;
            y->changed += (uint64_t)out.changed;
            y->silent += (uint64_t)out.silent;
            y->stopped += (uint64_t)out.stopped;
            y->watchdog += (uint64_t)out.watchdog;
            const int full = !out.stopped && !out.watchdog;
            y->no_effect += (uint64_t)(full && out.sci_same && out.hk_same && !out.flagged);
            y->hk_only += (uint64_t)(full && out.sci_same && !out.hk_same && !out.flagged && !out.changed);
        }
    }
    release(&h);
    return 0;
}

static double pct(uint64_t a, uint64_t b)
{
    return b > 0u ? 100.0 * (double)a / (double)b : 0.0;
}

void tl_upset_print(FILE *f, const tl_upset_opts *o, const tl_upset_tally tally[TL_UPSET_TARGETS])
{
    tl_upset_tally tc, all;
    memset(&tc, 0, sizeof tc);
    memset(&all, 0, sizeof all);
    for (unsigned t = 0; t < TL_UPSET_TARGETS; t++) {
        const tl_upset_tally *y = &tally[t];
        tl_upset_tally *d = t <= TL_UPSET_CONFIG ? &tc : NULL;
        for (int k = 0; k < 2; k++) {
            tl_upset_tally *z = k == 0 ? &all : d;
            if (z == NULL)
                continue;
            z->trials += y->trials;
            z->injected += y->injected;
            z->detected += y->detected;
            z->changed += y->changed;
            z->silent += y->silent;
            z->watchdog += y->watchdog;
        }
    }
    fprintf(f,
            "upset: %llu flips in %llu trials (seed %llu, %u per trial); tables+config: %llu trials, %.2f %% detected, "
            "%llu changed a spectrum, %llu silently; all targets: %llu silent, %llu hangs\n",
            (unsigned long long)all.injected, (unsigned long long)all.trials, (unsigned long long)o->seed, o->flips,
            (unsigned long long)tc.trials, pct(tc.detected, tc.trials), (unsigned long long)tc.changed,
            (unsigned long long)tc.silent, (unsigned long long)all.silent, (unsigned long long)all.watchdog);
}

int tl_upset_write_json(FILE *f, const tl_upset_opts *o, const tl_upset_tally tally[TL_UPSET_TARGETS])
{
    json_t *root = json_object(), *opts = json_object(), *tg = json_object();
    json_object_set_new(opts, "trials_per_target", json_integer(o->trials));
    json_object_set_new(opts, "seed", json_integer((json_int_t)o->seed));
    json_object_set_new(opts, "flips_per_trial", json_integer(o->flips));
    json_object_set_new(opts, "scrub_period", json_integer(o->period == 0u ? TL_SCRUB_DEFAULT_PERIOD : o->period));
    json_object_set_new(opts, "integration", json_integer(o->integration));
    json_object_set_new(opts, "products", json_integer(o->products));
    json_object_set_new(opts, "points", json_integer(POINTS));
    json_object_set_new(opts, "taps", json_integer(TAPS));
    json_object_set_new(root, "options", opts);
    for (unsigned t = 0; t < TL_UPSET_TARGETS; t++) {
        const tl_upset_tally *y = &tally[t];
        if (y->trials == 0u)
            continue;
        json_t *e = json_object();
        json_object_set_new(e, "region_bits", json_integer((json_int_t)y->region_bits));
        json_object_set_new(e, "trials", json_integer((json_int_t)y->trials));
        json_object_set_new(e, "injected", json_integer((json_int_t)y->injected));
        json_object_set_new(e, "detected", json_integer((json_int_t)y->detected));
        json_object_set_new(e, "flagged", json_integer((json_int_t)y->flagged));
        json_object_set_new(e, "changed", json_integer((json_int_t)y->changed));
        json_object_set_new(e, "silent", json_integer((json_int_t)y->silent));
        json_object_set_new(e, "hk_only", json_integer((json_int_t)y->hk_only));
        json_object_set_new(e, "no_effect", json_integer((json_int_t)y->no_effect));
        json_object_set_new(e, "stopped", json_integer((json_int_t)y->stopped));
        json_object_set_new(e, "watchdog", json_integer((json_int_t)y->watchdog));
        json_object_set_new(tg, target_names[t], e);
    }
    json_object_set_new(root, "targets", tg);
    const int r = json_dumpf(root, f, JSON_INDENT(2)) == 0 && fputc('\n', f) != EOF ? 0 : -1;
    json_decref(root);
    return r;
}
