/* ground.c - the ground decoder (ground.h, docs/ground-decoder.md). */
#include "ground.h"

#include <errno.h>
#include <jansson.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "atomic_file.h"
#include "spectral_decode.h"
#include "spectral_kurtosis.h"
#include "tl_bytes.h"
#include "tl_crc16.h"
#include "tl_frame.h"
#include "tl_integrate.h"
#include "tl_packet.h"

#define NONE_FHP ((size_t)TL_FRAME_FHP_NONE)
#define RING 256u       /* products handed over that are remembered (late packets) */
#define MAX_RANGES 64u  /* missing channel ranges listed per state and quantity */
#define APIDS 2048u

/* ---- growable log lists ------------------------------------------------------- */

typedef struct vec {
    void *a;
    size_t n, cap, size;
    uint64_t left_out;
} vec;

/* Append e (v->size bytes); beyond `limit` entries only count. Returns the
 * index of the entry, SIZE_MAX when it was not kept, or SIZE_MAX - 1 when
 * memory ran out. */
static size_t vec_push(vec *v, const void *e, uint32_t limit)
{
    if (v->n >= limit) {
        v->left_out++;
        return SIZE_MAX;
    }
    if (v->n == v->cap) {
        size_t cap = v->cap ? 2u * v->cap : 256u;
        if (cap > limit)
            cap = limit;
        void *q = realloc(v->a, cap * v->size);
        if (q == NULL)
            return SIZE_MAX - 1u;
        v->a = q;
        v->cap = cap;
    }
    memcpy((char *)v->a + v->n * v->size, e, v->size);
    return v->n++;
}

/* ---- state -------------------------------------------------------------------- */

typedef struct seq_track {
    uint8_t seen;
    uint16_t high;                   /* newest count */
    uint64_t window;                 /* bit b: count high - b was taken */
    uint16_t crc[TL_GROUND_WINDOW];  /* by count % 64: identity (PEC) of the packet taken */
    tl_ground_apid_stats st;
} seq_track;

typedef struct product {
    uint32_t config_id, index;
    uint64_t order;            /* when it was opened */
    uint32_t channels;         /* 0 until a science packet */
    int sci_set;
    uint8_t arith, det_shift, fft_shift, mode;
    uint32_t spectra, discarded, taps_crc;
    uint32_t state_spectra[3];
    uint8_t state_set;         /* bit s: state_spectra[s] came from a science header */
    uint8_t states_seen, qty_seen;
    uint16_t dl_flags;
    int bounded;
    int has_hk;
    tl_dl_hk hk;
    int time_set;
    tl_cuc time;
    uint32_t science_packets;
    uint32_t covered_n[3][4];
    uint64_t cover[3][4][TL_GROUND_COVER_WORDS];
    tl_product *p;
    /* spectral kurtosis blocks */
    uint32_t sk_channels, sk_m, sk_n, sk_blocks;
    double sk_lo, sk_hi;
    uint64_t sk_flagged[2], sk_values[2];
    uint32_t *sk_count[2];     /* per channel: blocks flagged (malloc'd) */
    uint8_t *sk_mask;          /* filled at finalize */
} product;

typedef struct key {
    uint32_t config_id, index;
} key;

struct tl_ground {
    tl_ground_config cfg;
    tl_ground_product_fn fn;
    void *user;
    int failed, finished;
    char err[1100];
    /* stream buffer: bytes [start, len) not yet taken; buf[0] is input offset base */
    uint8_t *buf;
    size_t cap, start, len;
    uint64_t base;
    int eof;
    /* frames */
    size_t wire;
    int locked;
    int have_id;
    uint16_t scid, vcid;
    int have_vc;
    uint8_t vc_high;
    uint64_t vc_window;
    uint16_t vc_fecf[TL_GROUND_WINDOW];
    /* packet reassembly (frames) */
    uint8_t *pkt;
    size_t have;
    int in_sync;
    uint64_t pkt_off;
    /* raw */
    int hunting;
    /* packets and products */
    seq_track *seq;
    uint64_t su[TL_ENCODE_FORMAT_MAX_CHANNELS];
    int64_t si[TL_ENCODE_FORMAT_MAX_CHANNELS];
    product *open[TL_GROUND_MAX_IN_FLIGHT];
    uint32_t n_open;
    uint64_t order;
    key ring[RING];
    uint32_t ring_n, ring_head;
    tl_ground_totals t;
    vec frames, packets, products, hks; /* entries; products and hks hold char * (compact JSON) */
};

static const char *const frame_names[TL_GF_STATUSES] = { "ok",           "repeated",     "out_of_order",
                                                          "count_restart", "bad_fecf",     "bad_header",
                                                          "inconsistent",  "other_channel", "truncated" };
static const char *const packet_names[TL_GP_STATUSES] = {
    "ok",           "reordered",         "count_restart", "duplicate",    "crc_error",
    "bad_header",   "truncated",         "lost_partial",  "other_apid",   "bad_user_data",
    "too_many_channels", "bad_payload",  "inconsistent",  "late"
};
static const char *const done_names[TL_GROUND_DONE_REASONS] = { "complete", "superseded", "evicted", "end_of_input" };
static const char *const state_names[3] = { "antenna", "load", "load_noise" };
static const char *const qty_names[4] = { "auto0", "auto1", "cross_re", "cross_im" };

const char *tl_ground_frame_status_name(unsigned s)
{
    return s < TL_GF_STATUSES ? frame_names[s] : "?";
}

const char *tl_ground_packet_status_name(unsigned s)
{
    return s < TL_GP_STATUSES ? packet_names[s] : "?";
}

const char *tl_ground_done_name(unsigned d)
{
    return d < TL_GROUND_DONE_REASONS ? done_names[d] : "?";
}

void tl_ground_config_default(tl_ground_config *c)
{
    memset(c, 0, sizeof *c);
    c->raw = 0;
    c->frame_len = 1024u;
    c->scid = TL_GROUND_ANY;
    c->vcid = TL_GROUND_ANY;
    c->apid_science = 0x101u;
    c->apid_hk = 0x102u;
    c->apid_sk = 0x103u;
    c->sk_false_alarm = 0.0027;
    c->in_flight = TL_GROUND_DEFAULT_IN_FLIGHT;
    c->log_limit = TL_GROUND_DEFAULT_LOG_LIMIT;
}

static void fail(tl_ground *g, const char *what)
{
    if (!g->failed)
        snprintf(g->err, sizeof g->err, "%s", what);
    g->failed = 1;
}

static void keep(tl_ground *g, size_t r)
{
    if (r == SIZE_MAX - 1u)
        fail(g, "out of memory (decode log)");
}

/* ---- opening and closing --------------------------------------------------------- */

tl_ground *tl_ground_open(const tl_ground_config *cfg, tl_ground_product_fn fn, void *user, char *err, size_t cap)
{
    if (cfg == NULL) {
        snprintf(err, cap, "no decoder configuration");
        return NULL;
    }
    if (!cfg->raw && (cfg->frame_len < TL_FRAME_MIN_LEN || cfg->frame_len > TL_FRAME_MAX_LEN)) {
        snprintf(err, cap, "frame length %u is outside %u to %u octets", cfg->frame_len, TL_FRAME_MIN_LEN,
                 TL_FRAME_MAX_LEN);
        return NULL;
    }
    if (cfg->scid != TL_GROUND_ANY && cfg->scid > TL_FRAME_SCID_MAX) {
        snprintf(err, cap, "spacecraft id %u is outside 0 to %u", cfg->scid, TL_FRAME_SCID_MAX);
        return NULL;
    }
    if (cfg->vcid != TL_GROUND_ANY && cfg->vcid > TL_FRAME_VCID_MAX) {
        snprintf(err, cap, "virtual channel %u is outside 0 to %u", cfg->vcid, TL_FRAME_VCID_MAX);
        return NULL;
    }
    if (cfg->apid_science > TL_PACKET_APID_MAX || cfg->apid_hk > TL_PACKET_APID_MAX ||
        cfg->apid_sk > TL_PACKET_APID_MAX || cfg->apid_science == cfg->apid_hk || cfg->apid_sk == cfg->apid_science ||
        cfg->apid_sk == cfg->apid_hk || !(cfg->sk_false_alarm > 0.0 && cfg->sk_false_alarm <= 0.5)) {
        snprintf(err, cap,
                 "APIDs science %u, housekeeping %u and kurtosis %u must differ and lie in 0 to %u, and the false-alarm "
                 "rate in (0, 0.5]",
                 cfg->apid_science, cfg->apid_hk, cfg->apid_sk, TL_PACKET_APID_MAX);
        return NULL;
    }
    if (cfg->in_flight < 1u || cfg->in_flight > TL_GROUND_MAX_IN_FLIGHT) {
        snprintf(err, cap, "products in flight %u is outside 1 to %u", cfg->in_flight, TL_GROUND_MAX_IN_FLIGHT);
        return NULL;
    }
    if (cfg->log_limit > 10000000u) {
        snprintf(err, cap, "log limit %u is above 10000000 entries", cfg->log_limit);
        return NULL;
    }
    tl_ground *g = calloc(1, sizeof *g);
    if (g == NULL) {
        snprintf(err, cap, "out of memory");
        return NULL;
    }
    g->cfg = *cfg;
    g->fn = fn;
    g->user = user;
    g->wire = TL_FRAME_WIRE_LEN(cfg->frame_len);
    g->cap = (size_t)TL_GROUND_BLOCK + (cfg->raw ? (size_t)TL_PACKET_ANY_MAX_LEN : g->wire);
    g->buf = malloc(g->cap);
    g->pkt = cfg->raw ? NULL : malloc(TL_PACKET_ANY_MAX_LEN);
    g->seq = calloc(APIDS, sizeof *g->seq);
    g->frames.size = sizeof(tl_ground_frame_entry);
    g->packets.size = sizeof(tl_ground_packet_entry);
    g->products.size = sizeof(char *);
    g->hks.size = sizeof(char *);
    if (g->buf == NULL || (!cfg->raw && g->pkt == NULL) || g->seq == NULL) {
        tl_ground_close(g);
        snprintf(err, cap, "out of memory");
        return NULL;
    }
    if (!cfg->raw) {
        g->have_id = cfg->scid != TL_GROUND_ANY && cfg->vcid != TL_GROUND_ANY;
        g->scid = cfg->scid;
        g->vcid = cfg->vcid;
    }
    return g;
}

static void free_strings(vec *v)
{
    for (size_t i = 0; i < v->n; i++)
        free(((char **)v->a)[i]);
    free(v->a);
}

void tl_ground_close(tl_ground *g)
{
    if (g == NULL)
        return;
    for (uint32_t i = 0; i < g->n_open; i++) {
        free(g->open[i]->p);
        free(g->open[i]);
    }
    free(g->buf);
    free(g->pkt);
    free(g->seq);
    free(g->frames.a);
    free(g->packets.a);
    free_strings(&g->products);
    free_strings(&g->hks);
    free(g);
}

/* ---- accessors ------------------------------------------------------------------- */

const tl_ground_totals *tl_ground_totals_of(const tl_ground *g)
{
    return &g->t;
}

int tl_ground_apid(const tl_ground *g, uint16_t apid, tl_ground_apid_stats *out)
{
    if (apid >= APIDS || !g->seq[apid].seen)
        return 0;
    *out = g->seq[apid].st;
    return 1;
}

const tl_ground_frame_entry *tl_ground_frames(const tl_ground *g, size_t *n, uint64_t *left_out)
{
    *n = g->frames.n;
    *left_out = g->frames.left_out;
    return g->frames.a;
}

const tl_ground_packet_entry *tl_ground_packets(const tl_ground *g, size_t *n, uint64_t *left_out)
{
    *n = g->packets.n;
    *left_out = g->packets.left_out;
    return g->packets.a;
}

int tl_ground_clean(const tl_ground *g)
{
    const tl_ground_totals *t = &g->t;
    static const unsigned bad_frames[] = { TL_GF_BAD_FECF, TL_GF_BAD_HEADER, TL_GF_INCONSISTENT, TL_GF_OTHER_CHANNEL,
                                           TL_GF_TRUNCATED };
    static const unsigned bad_packets[] = { TL_GP_CRC,          TL_GP_BAD_HEADER,        TL_GP_TRUNCATED,
                                            TL_GP_LOST_PARTIAL, TL_GP_BAD_USER_DATA,     TL_GP_TOO_MANY_CHANNELS,
                                            TL_GP_BAD_PAYLOAD,  TL_GP_INCONSISTENT,      TL_GP_LATE };
    for (size_t i = 0; i < sizeof bad_frames / sizeof bad_frames[0]; i++)
        if (t->frames[bad_frames[i]] != 0u)
            return 0;
    for (size_t i = 0; i < sizeof bad_packets / sizeof bad_packets[0]; i++)
        if (t->packets[bad_packets[i]] != 0u)
            return 0;
    return t->frames_missing == 0u && t->bytes_skipped == 0u && t->seq_missing == 0u &&
           t->products_incomplete == 0u && t->products_no_spectra == 0u && t->callback_failures == 0u && !g->failed;
}

/* ---- log entries ------------------------------------------------------------------- */

static void log_packet(tl_ground *g, const tl_ground_packet_entry *e)
{
    g->t.packets[e->status]++;
    keep(g, vec_push(&g->packets, e, g->cfg.log_limit));
}

/* A packet entry with what its first octets tell (header fields when at
 * least 4 octets are known). */
static tl_ground_packet_entry packet_entry(uint64_t off, const uint8_t *b, size_t known, size_t length, uint8_t status)
{
    tl_ground_packet_entry e;
    memset(&e, 0, sizeof e);
    e.offset = off;
    e.length = (uint32_t)length;
    e.status = status;
    e.apid = 0xFFFFu;
    e.count = 0xFFFFu;
    if (known >= 4u) {
        e.apid = (uint16_t)(tl_get_be16(b) & TL_PACKET_APID_MASK);
        e.count = (uint16_t)(tl_get_be16(b + 2) & TL_PACKET_COUNT_MASK);
    }
    return e;
}

/* ---- products ------------------------------------------------------------------------ */

static uint8_t *flags_of(tl_product *p, uint32_t s)
{
    return s == 0u ? p->flags : p->cal[s - 1u].flags;
}

static uint64_t *auto_of(tl_product *p, uint32_t s, uint32_t input)
{
    return s == 0u ? p->auto_power[input] : p->cal[s - 1u].auto_power[input];
}

static int64_t *cross_of(tl_product *p, uint32_t s, int im)
{
    if (s == 0u)
        return im ? p->cross_im : p->cross_re;
    return im ? p->cal[s - 1u].cross_im : p->cal[s - 1u].cross_re;
}

static void expected(const product *pr, uint32_t *states, uint32_t *qty)
{
    *states = ((pr->has_hk && pr->hk.switch_steps > 0u) || (pr->states_seen & 6u)) ? 3u : 1u;
    *qty = ((pr->has_hk && pr->hk.inputs == 2u) || (pr->qty_seen & 0xEu)) ? 4u : 1u;
}

static int covered(const uint64_t *bits, uint32_t k)
{
    return (int)((bits[k / 64u] >> (k % 64u)) & 1u);
}

static json_t *json_u64(uint64_t v)
{
    return v <= (uint64_t)INT64_MAX ? json_integer((json_int_t)v) : json_real((double)v);
}

char *tl_ground_product_json(const tl_ground_product_info *in)
{
    json_t *o = json_object();
    if (o == NULL)
        return NULL;
    json_object_set_new(o, "index", json_integer(in->index));
    json_object_set_new(o, "config_id", json_integer(in->config_id));
    json_object_set_new(o, "channels", json_integer(in->channels));
    json_object_set_new(o, "inputs", json_integer(in->quantities == 4u ? 2 : 1));
    json_object_set_new(o, "states", json_integer(in->states));
    json_object_set_new(o, "complete", json_boolean(in->complete));
    json_object_set_new(o, "done", json_string(tl_ground_done_name(in->done)));
    json_object_set_new(o, "housekeeping", json_boolean(in->has_hk));
    json_object_set_new(o, "bounded", json_boolean(in->bounded));
    json_object_set_new(o, "mode", json_integer(in->mode));
    json_object_set_new(o, "science_packets", json_integer(in->science_packets));
    json_object_set_new(o, "time_s", json_real((double)in->time.coarse + (double)in->time.fine / 65536.0));
    json_object_set_new(o, "missing_channels", json_u64(in->missing_total));
    if (in->sk_blocks > 0u) {
        json_t *k = json_object(), *masked = json_array();
        json_object_set_new(k, "blocks", json_integer(in->sk_blocks));
        json_object_set_new(k, "values_per_block", json_integer(in->sk_m));
        json_object_set_new(k, "spectra_per_value", json_integer(in->sk_n));
        json_object_set_new(k, "lower_threshold", json_real(in->sk_lo));
        json_object_set_new(k, "upper_threshold", isfinite(in->sk_hi) ? json_real(in->sk_hi) : json_null());
        json_object_set_new(k, "flagged", json_pack("[I, I]", (json_int_t)in->sk_flagged[0], (json_int_t)in->sk_flagged[1]));
        json_object_set_new(k, "channel_blocks", json_pack("[I, I]", (json_int_t)in->sk_values[0],
                                                           (json_int_t)in->sk_values[1]));
        json_object_set_new(k, "mask_min_blocks", json_integer(in->sk_mask_blocks));
        if (in->sk_mask != NULL)
            for (uint32_t c = 0; c < in->channels; c++)
                if (in->sk_mask[c])
                    json_array_append_new(masked, json_integer(c));
        json_object_set_new(k, "masked_channels", masked);
        json_object_set_new(o, "kurtosis", k);
    }
    json_t *miss = json_array();
    for (uint32_t s = 0; s < in->states && s < 3u; s++)
        for (uint32_t q = 0; q < in->quantities && q < 4u; q++) {
            if (in->missing[s][q] == 0u || in->covered[s][q] == NULL)
                continue;
            json_t *m = json_object(), *ranges = json_array();
            uint64_t left = 0;
            size_t nr = 0;
            for (uint32_t k = 0; k < in->channels;) {
                if (covered(in->covered[s][q], k)) {
                    k++;
                    continue;
                }
                uint32_t e = k;
                while (e + 1u < in->channels && !covered(in->covered[s][q], e + 1u))
                    e++;
                if (nr < MAX_RANGES) {
                    json_t *r = json_array();
                    json_array_append_new(r, json_integer(k));
                    json_array_append_new(r, json_integer(e));
                    json_array_append_new(ranges, r);
                    nr++;
                } else {
                    left++;
                }
                k = e + 1u;
            }
            json_object_set_new(m, "state", json_string(state_names[s]));
            json_object_set_new(m, "quantity", json_string(qty_names[q]));
            json_object_set_new(m, "channels", json_integer(in->missing[s][q]));
            json_object_set_new(m, "ranges", ranges);
            json_object_set_new(m, "ranges_left_out", json_u64(left));
            json_array_append_new(miss, m);
        }
    json_object_set_new(o, "missing", miss);
    char *s = json_dumps(o, JSON_COMPACT);
    json_decref(o);
    return s;
}

/* Copy the housekeeping counters into the product (tl_downlink.h layout). */
static void stats_from_hk(tl_product *p, const tl_dl_hk *h)
{
    const uint32_t s = h->fft_counters;
    p->fft_stages = s > 0u ? s - 1u : 0u;
    for (uint32_t i = 0; i < TL_MAX_INPUTS; i++) {
        p->stats.adc_clips[i] = h->in[i].adc_clips;
        p->stats.adc_sumsq[i] = h->in[i].adc_sumsq;
        p->stats.pfb_sat[i] = h->in[i].pfb_sat;
        for (uint32_t k = 0; k < s && k <= TL_MAX_FFT_STAGES; k++)
            p->stats.fft_sat[i][k] = h->in[i].fft_sat[k];
        for (uint32_t b = 0; b < TL_ADC_HIST_BINS; b++)
            p->stats.adc_hist[i][b] = h->in[i].adc_hist[b];
    }
    for (uint32_t q = 0; q < 4u; q++) {
        p->stats.acc_sat[q] = h->acc_sat[0][q];
        p->cal[0].acc_sat[q] = h->acc_sat[1][q];
        p->cal[1].acc_sat[q] = h->acc_sat[2][q];
    }
    if (h->has_acq) {
        p->acq.blocks_kept = h->blocks_processed;
        p->acq.blocks_lost = h->blocks_dropped;
        p->acq.samples_lost = h->samples_dropped;
        p->acq.gap_discarded = h->gap_discarded;
        p->acq.abandoned = h->abandoned;
    }
    p->scrub = h->scrub;
    p->upset = h->upset;
}

static void ring_add(tl_ground *g, uint32_t config_id, uint32_t index)
{
    g->ring[g->ring_head] = (key){ config_id, index };
    g->ring_head = (g->ring_head + 1u) % RING;
    if (g->ring_n < RING)
        g->ring_n++;
}

static int ring_has(const tl_ground *g, uint32_t config_id, uint32_t index)
{
    for (uint32_t i = 0; i < g->ring_n; i++)
        if (g->ring[i].config_id == config_id && g->ring[i].index == index)
            return 1;
    return 0;
}

/* Hand open product i over (and forget it). */
static void finalize(tl_ground *g, uint32_t i, uint32_t done)
{
    product *pr = g->open[i];
    for (uint32_t k = i + 1u; k < g->n_open; k++)
        g->open[k - 1u] = g->open[k];
    g->n_open--;
    tl_product *p = pr->p;
    uint32_t states, nq;
    expected(pr, &states, &nq);
    tl_ground_product_info in;
    memset(&in, 0, sizeof in);
    in.config_id = pr->config_id;
    in.index = pr->index;
    in.has_hk = pr->has_hk;
    in.bounded = pr->bounded;
    in.mode = pr->sci_set ? pr->mode : pr->hk.mode;
    in.dl_flags = pr->dl_flags;
    in.channels = pr->channels;
    in.states = states;
    in.quantities = nq;
    in.science_packets = pr->science_packets;
    in.time = pr->time;
    in.hk = pr->has_hk ? &pr->hk : NULL;
    for (uint32_t s = 0; s < 3u; s++)
        for (uint32_t q = 0; q < 4u; q++)
            in.covered[s][q] = pr->cover[s][q];
    for (uint32_t s = 0; s < states; s++)
        for (uint32_t q = 0; q < nq; q++) {
            in.missing[s][q] = pr->channels - pr->covered_n[s][q];
            in.missing_total += in.missing[s][q];
            if (in.missing[s][q] == 0u)
                continue;
            uint8_t *fl = flags_of(p, s);
            for (uint32_t k = 0; k < pr->channels; k++)
                if (!covered(pr->cover[s][q], k))
                    fl[k] = (uint8_t)(fl[k] | TL_GROUND_FLAG_MISSING);
        }
    if (pr->sk_blocks > 0u && pr->sk_mask != NULL) {
        in.sk_blocks = pr->sk_blocks;
        in.sk_m = pr->sk_m;
        in.sk_n = pr->sk_n;
        in.sk_lo = pr->sk_lo;
        in.sk_hi = pr->sk_hi;
        in.sk_mask_blocks = tl_sk_mask_blocks(pr->sk_blocks, g->cfg.sk_false_alarm);
        for (uint32_t inp = 0; inp < 2u; inp++) {
            in.sk_flagged[inp] = pr->sk_flagged[inp];
            in.sk_values[inp] = pr->sk_values[inp];
        }
        for (uint32_t k = 0; k < pr->sk_channels; k++) {
            int m = 0;
            for (uint32_t inp = 0; inp < 2u; inp++)
                m |= pr->sk_count[inp] != NULL && pr->sk_count[inp][k] >= in.sk_mask_blocks;
            pr->sk_mask[k] = (uint8_t)m;
            in.sk_masked += (uint32_t)m;
        }
        /* the mask must match the spectrum it applies to */
        in.sk_mask = (pr->channels == 0u || pr->channels == pr->sk_channels) ? pr->sk_mask : NULL;
    }
    in.complete = pr->has_hk && pr->channels > 0u && in.missing_total == 0u;
    in.done = in.complete ? TL_GROUND_DONE_COMPLETE : done;
    /* the product as tl_chain_take would have filled it, as far as the packets tell */
    p->arith_version = pr->arith;
    p->index = pr->index;
    p->channels = pr->channels;
    p->points = 2u * pr->channels;
    p->inputs = nq == 4u ? 2u : 1u;
    p->det_shift = pr->det_shift;
    p->fft_total_shift = pr->fft_shift;
    p->spectra = pr->sci_set ? pr->spectra : pr->hk.spectra;
    p->discarded = pr->sci_set ? pr->discarded : pr->hk.discarded;
    p->taps_crc = pr->sci_set ? pr->taps_crc : pr->hk.taps_crc;
    uint32_t ss[3];
    for (uint32_t s = 0; s < 3u; s++)
        ss[s] = (pr->state_set >> s) & 1u ? pr->state_spectra[s] : (pr->has_hk ? pr->hk.state_spectra[s] : 0u);
    p->antenna_spectra = ss[0];
    p->cal[0].spectra = ss[1];
    p->cal[1].spectra = ss[2];
    p->switch_steps = (pr->has_hk && pr->hk.switch_steps > 0u) ? pr->hk.switch_steps : (states == 3u ? 1u : 0u);
    if (pr->has_hk)
        stats_from_hk(p, &pr->hk);
    tl_ground_product_note note;
    note.folder[0] = '\0';
    note.note[0] = '\0';
    if (pr->channels == 0u) {
        g->t.products_no_spectra++;
        snprintf(note.note, sizeof note.note, "housekeeping only: no spectra to write");
    } else {
        if (in.complete)
            g->t.products_complete++;
        else
            g->t.products_incomplete++;
        g->t.products_done[in.done]++;
        if (pr->bounded)
            g->t.products_bounded++;
        if (g->fn != NULL && g->fn(g->user, p, &in, &note) != 0) {
            g->t.callback_failures++;
            fail(g, note.note[0] ? note.note : "the product could not be written");
        }
    }
    char *js = tl_ground_product_json(&in);
    if (js != NULL && (note.folder[0] || note.note[0])) {
        json_t *o = json_loads(js, 0, NULL);
        free(js);
        js = NULL;
        if (o != NULL) {
            if (note.folder[0])
                json_object_set_new(o, "folder", json_string(note.folder));
            if (note.note[0])
                json_object_set_new(o, "note", json_string(note.note));
            js = json_dumps(o, JSON_COMPACT);
            json_decref(o);
        }
    }
    if (js == NULL) {
        fail(g, "out of memory (decode log)");
    } else {
        const size_t r = vec_push(&g->products, &js, g->cfg.log_limit);
        if (r >= SIZE_MAX - 1u)
            free(js);
        keep(g, r);
    }
    ring_add(g, pr->config_id, pr->index);
    free(pr->sk_count[0]);
    free(pr->sk_count[1]);
    free(pr->sk_mask);
    free(p);
    free(pr);
}

static void check_complete(tl_ground *g, product *pr)
{
    if (!pr->has_hk || pr->channels == 0u)
        return;
    uint32_t states, nq;
    expected(pr, &states, &nq);
    for (uint32_t s = 0; s < states; s++)
        for (uint32_t q = 0; q < nq; q++)
            if (pr->covered_n[s][q] != pr->channels)
                return;
    for (uint32_t i = 0; i < g->n_open; i++)
        if (g->open[i] == pr) {
            finalize(g, i, TL_GROUND_DONE_COMPLETE);
            return;
        }
}

/* A packet of (config_id, index) arrived: products of the same
 * configuration TL_GROUND_LAG or more integrations older can no longer
 * receive anything in a stream sent in order. */
static void supersede(tl_ground *g, uint32_t config_id, uint32_t index)
{
    for (uint32_t i = 0; i < g->n_open && !g->failed;) {
        const product *pr = g->open[i];
        if (pr->config_id == config_id && (uint64_t)pr->index + TL_GROUND_LAG <= index)
            finalize(g, i, TL_GROUND_DONE_SUPERSEDED);
        else
            i++;
    }
}

enum { FOUND = 0, LATE = 1, NOMEM = 2 };

static int product_for(tl_ground *g, uint32_t config_id, uint32_t index, product **out)
{
    supersede(g, config_id, index);
    for (uint32_t i = 0; i < g->n_open; i++)
        if (g->open[i]->config_id == config_id && g->open[i]->index == index) {
            *out = g->open[i];
            return FOUND;
        }
    if (ring_has(g, config_id, index))
        return LATE;
    if (g->n_open == g->cfg.in_flight) {
        uint32_t oldest = 0;
        for (uint32_t i = 1; i < g->n_open; i++)
            if (g->open[i]->order < g->open[oldest]->order)
                oldest = i;
        finalize(g, oldest, TL_GROUND_DONE_EVICTED);
        if (g->failed)
            return NOMEM;
    }
    product *pr = calloc(1, sizeof *pr);
    tl_product *p = pr ? calloc(1, sizeof *p) : NULL;
    if (p == NULL) {
        free(pr);
        fail(g, "out of memory (product)");
        return NOMEM;
    }
    pr->p = p;
    pr->config_id = config_id;
    pr->index = index;
    pr->order = g->order++;
    g->open[g->n_open++] = pr;
    *out = pr;
    return FOUND;
}

/* ---- user data ------------------------------------------------------------------- */

static uint8_t take_science(tl_ground *g, const tl_packet_view *pv, tl_ground_packet_entry *e)
{
    tl_dl_science s;
    if (tl_downlink_parse_science(pv->user, pv->user_len, &s) != TL_OK)
        return TL_GP_BAD_USER_DATA;
    e->kind = (uint8_t)TL_DL_KIND_SPECTRUM;
    e->state = s.state;
    e->qty = s.qty;
    e->index = s.index;
    e->config_id = s.config_id;
    e->first = s.first;
    e->channels = s.count;
    if (s.channels > TL_MAX_CHANNELS)
        return TL_GP_TOO_MANY_CHANNELS;
    if (s.count > TL_ENCODE_FORMAT_MAX_CHANNELS)
        return TL_GP_BAD_PAYLOAD; /* no payload holds more */
    tl_spectral_header h;
    const tl_status st = s.qty < 2u ? tl_spectral_decode_u64(s.payload, s.payload_len, g->su, NULL, s.count, &h)
                                    : tl_spectral_decode_i64(s.payload, s.payload_len, g->si, NULL, s.count, &h);
    if (st != TL_OK || h.count != s.count)
        return TL_GP_BAD_PAYLOAD;
    product *pr = NULL;
    const int r = product_for(g, s.config_id, s.index, &pr);
    if (r == LATE)
        return TL_GP_LATE;
    if (r == NOMEM)
        return TL_GP_OK;
    if (!pr->sci_set) {
        if (pr->has_hk && (pr->hk.spectra != s.spectra || pr->hk.discarded != s.discarded || pr->hk.taps_crc != s.taps_crc))
            return TL_GP_INCONSISTENT;
        pr->sci_set = 1;
        pr->channels = s.channels;
        pr->arith = s.arith;
        pr->det_shift = s.det_shift;
        pr->fft_shift = s.fft_shift;
        pr->mode = s.mode;
        pr->spectra = s.spectra;
        pr->discarded = s.discarded;
        pr->taps_crc = s.taps_crc;
    } else if (pr->channels != s.channels || pr->spectra != s.spectra || pr->discarded != s.discarded ||
               pr->taps_crc != s.taps_crc || pr->arith != s.arith || pr->det_shift != s.det_shift ||
               pr->fft_shift != s.fft_shift) {
        return TL_GP_INCONSISTENT;
    }
    if (((pr->state_set >> s.state) & 1u) && pr->state_spectra[s.state] != s.state_spectra)
        return TL_GP_INCONSISTENT;
    pr->state_spectra[s.state] = s.state_spectra;
    pr->state_set = (uint8_t)(pr->state_set | (1u << s.state));
    pr->states_seen = (uint8_t)(pr->states_seen | (1u << s.state));
    pr->qty_seen = (uint8_t)(pr->qty_seen | (1u << s.qty));
    pr->dl_flags = (uint16_t)(pr->dl_flags | s.flags);
    pr->bounded |= h.encoding == TL_ENCODE_ID_BOUNDED;
    pr->science_packets++;
    if (!pr->time_set) {
        pr->time = pv->time;
        pr->time_set = 1;
    }
    tl_product *p = pr->p;
    uint8_t *fl = flags_of(p, s.state);
    uint64_t *cv = pr->cover[s.state][s.qty];
    const uint8_t satbit = (uint8_t)(1u << s.qty); /* TL_FLAG_SAT_AUTO0 .. _CROSS_IM */
    if (s.qty < 2u) {
        memcpy(auto_of(p, s.state, s.qty) + s.first, g->su, (size_t)s.count * sizeof g->su[0]);
    } else {
        memcpy(cross_of(p, s.state, s.qty == 3u) + s.first, g->si, (size_t)s.count * sizeof g->si[0]);
    }
    for (uint32_t k = 0; k < s.count; k++) {
        const uint32_t c = (uint32_t)s.first + k;
        if (!covered(cv, c)) {
            cv[c / 64u] |= (uint64_t)1u << (c % 64u);
            pr->covered_n[s.state][s.qty]++;
        }
        const int sat = s.bitmap != NULL && ((s.bitmap[k / 8u] >> (7u - k % 8u)) & 1u);
        fl[c] = (uint8_t)(sat ? (fl[c] | satbit) : (fl[c] & (uint8_t)~satbit));
        if (s.flags & TL_DL_F_UPSET)
            fl[c] = (uint8_t)(fl[c] | TL_FLAG_UPSET);
    }
    check_complete(g, pr);
    return TL_GP_OK;
}

/* A spectral kurtosis packet: S1 and S2 of n channels of one input and
 * block; each channel's SK against the thresholds, counted per product. */
static uint8_t take_sk(tl_ground *g, const tl_packet_view *pv, tl_ground_packet_entry *e)
{
    tl_dl_sk h;
    if (tl_downlink_parse_sk(pv->user, pv->user_len, &h) != TL_OK)
        return TL_GP_BAD_USER_DATA;
    if (h.channels > TL_MAX_CHANNELS)
        return TL_GP_TOO_MANY_CHANNELS;
    static uint64_t v[2u * TL_DL_SK_MAX_CHANNELS];
    tl_spectral_header sh;
    if (tl_spectral_decode_u64(h.payload, h.payload_len, v, NULL, 2u * TL_DL_SK_MAX_CHANNELS, &sh) != TL_OK ||
        sh.count != 2u * h.count)
        return TL_GP_BAD_PAYLOAD;
    e->kind = TL_DL_KIND_SK;
    e->index = h.index;
    e->config_id = h.config_id;
    e->state = h.input; /* kurtosis packets: the input */
    e->first = h.first;
    e->channels = h.count;
    product *pr = NULL;
    const int r = product_for(g, h.config_id, h.index, &pr);
    if (r == LATE)
        return TL_GP_LATE;
    if (r != FOUND)
        return TL_GP_INCONSISTENT;
    const uint32_t n_acc = h.accumulate;
    if (pr->sk_channels == 0u) {
        pr->sk_channels = h.channels;
        pr->sk_m = h.spectra;
        pr->sk_n = n_acc;
        for (uint32_t i = 0; i < 2u; i++)
            pr->sk_count[i] = calloc(h.channels, sizeof *pr->sk_count[i]);
        pr->sk_mask = calloc(h.channels, 1);
        if (pr->sk_count[0] == NULL || pr->sk_count[1] == NULL || pr->sk_mask == NULL) {
            fail(g, "out of memory (kurtosis)");
            return TL_GP_INCONSISTENT;
        }
        if (tl_sk_thresholds(pr->sk_m, pr->sk_n, g->cfg.sk_false_alarm, &pr->sk_lo, &pr->sk_hi) != 0) {
            pr->sk_lo = 0.0;
            pr->sk_hi = INFINITY; /* no thresholds for this M: nothing is flagged */
        }
    } else if (h.channels != pr->sk_channels || h.spectra != pr->sk_m || n_acc != pr->sk_n) {
        return TL_GP_INCONSISTENT;
    }
    if (h.block + 1u > pr->sk_blocks)
        pr->sk_blocks = h.block + 1u;
    for (uint32_t k = 0; k < h.count; k++) {
        const uint32_t ch = h.first + k;
        if (ch == 0u)
            continue; /* DC carries no noise-like power (as tl_run_kurtosis) */
        const double s1 = (double)v[k], s2 = ldexp((double)v[h.count + k], h.s2_shift);
        const double sk = tl_sk_estimate(s1, s2, pr->sk_m, pr->sk_n);
        const int flagged = sk < pr->sk_lo || sk > pr->sk_hi;
        pr->sk_values[h.input]++;
        pr->sk_flagged[h.input] += (uint64_t)flagged;
        pr->sk_count[h.input][ch] += (uint32_t)flagged;
    }
    return TL_GP_OK;
}

static void log_hk(tl_ground *g, const tl_dl_hk *h, uint64_t off)
{
    json_t *o = json_object();
    if (o == NULL) {
        fail(g, "out of memory (decode log)");
        return;
    }
    json_object_set_new(o, "offset", json_u64(off));
    json_object_set_new(o, "index", json_integer(h->index));
    json_object_set_new(o, "config_id", json_integer(h->config_id));
    char fw[32];
    snprintf(fw, sizeof fw, "%u.%u.%u", (h->firmware_version >> 16) & 0xFFu, (h->firmware_version >> 8) & 0xFFu,
             h->firmware_version & 0xFFu);
    json_object_set_new(o, "firmware_version", json_string(fw));
    json_object_set_new(o, "table_status", json_string(h->table_status == 0u ? "crc_ok" : "crc_mismatch"));
    json_object_set_new(o, "taps_crc", json_integer(h->taps_crc));
    json_object_set_new(o, "mode", json_integer(h->mode));
    json_object_set_new(o, "inputs", json_integer(h->inputs));
    json_object_set_new(o, "switch_steps", json_integer(h->switch_steps));
    json_object_set_new(o, "spectra", json_integer(h->spectra));
    json_object_set_new(o, "discarded", json_integer(h->discarded));
    json_t *ss = json_array();
    for (uint32_t s = 0; s < 3u; s++)
        json_array_append_new(ss, json_integer(h->state_spectra[s]));
    json_object_set_new(o, "state_spectra", ss);
    json_object_set_new(o, "fft_counters", json_integer(h->fft_counters));
    json_t *ins = json_array();
    for (uint32_t i = 0; i < h->inputs && i < TL_MAX_INPUTS; i++) {
        const tl_dl_hk_input *x = &h->in[i];
        json_t *io = json_object();
        json_object_set_new(io, "adc_rms_codes", x->adc_samples > 0u
                                                     ? json_real(sqrt((double)x->adc_sumsq / (double)x->adc_samples))
                                                     : json_null());
        json_object_set_new(io, "adc_samples", json_u64(x->adc_samples));
        json_object_set_new(io, "adc_sumsq", json_u64(x->adc_sumsq));
        json_object_set_new(io, "adc_clips", json_integer(x->adc_clips));
        json_object_set_new(io, "filterbank_saturations", json_integer(x->pfb_sat));
        json_t *fs = json_array(), *hist = json_array();
        for (uint32_t k = 0; k < h->fft_counters && k <= TL_MAX_FFT_STAGES; k++)
            json_array_append_new(fs, json_integer(x->fft_sat[k]));
        for (uint32_t b = 0; b < TL_ADC_HIST_BINS; b++)
            json_array_append_new(hist, json_integer(x->adc_hist[b]));
        json_object_set_new(io, "fft_saturations", fs);
        json_object_set_new(io, "adc_histogram", hist);
        json_array_append_new(ins, io);
    }
    json_object_set_new(o, "input", ins);
    json_t *acc = json_object();
    for (uint32_t s = 0; s < 3u; s++) {
        json_t *a = json_array();
        for (uint32_t q = 0; q < 4u; q++)
            json_array_append_new(a, json_integer(h->acc_sat[s][q]));
        json_object_set_new(acc, state_names[s], a);
    }
    json_object_set_new(o, "accumulator_saturations", acc);
    json_object_set_new(o, "hk_version", json_integer(h->version));
    if (h->has_acq) {
        json_t *aq = json_object();
        json_object_set_new(aq, "capture_blocks_seen", json_integer(h->blocks_seen));
        json_object_set_new(aq, "capture_blocks_processed", json_integer(h->blocks_processed));
        json_object_set_new(aq, "capture_blocks_dropped", json_integer(h->blocks_dropped));
        json_object_set_new(aq, "samples_dropped", json_u64(h->samples_dropped));
        json_object_set_new(aq, "duty_ppm", json_integer(h->duty_ppm));
        json_object_set_new(aq, "gap_discarded_spectra", json_integer(h->gap_discarded));
        json_object_set_new(aq, "abandoned_samples", json_integer(h->abandoned));
        json_object_set_new(o, "acquisition", aq);
    }
    if (h->version >= 2u) {
        static const char *const region_names[] = { "coefficient_table", "fft_tables", "configuration" };
        static const char *const last_names[] = { "none", "coefficient_table", "fft_tables", "configuration",
                                                  "running_state" };
        json_t *sc = json_object(), *mm = json_object(), *rs = json_object();
        for (uint32_t r = 0; r < TL_SCRUB_REGIONS; r++) {
            json_object_set_new(mm, region_names[r], json_integer(h->scrub.mismatches[r]));
            json_object_set_new(rs, region_names[r], json_integer(h->scrub.restores[r]));
        }
        json_object_set_new(sc, "passes", json_integer(h->scrub.passes));
        json_object_set_new(sc, "mismatches", mm);
        json_object_set_new(sc, "restores", rs);
        json_object_set_new(sc, "state_faults", json_integer(h->scrub.state_faults));
        json_object_set_new(sc, "last_bad", json_string(last_names[h->scrub.last_bad <= 4u ? h->scrub.last_bad : 4u]));
        json_object_set_new(sc, "upset", json_boolean(h->upset != 0u));
        json_object_set_new(o, "scrub", sc);
    }
    char *js = json_dumps(o, JSON_COMPACT);
    json_decref(o);
    if (js == NULL) {
        fail(g, "out of memory (decode log)");
        return;
    }
    const size_t r = vec_push(&g->hks, &js, g->cfg.log_limit);
    if (r >= SIZE_MAX - 1u)
        free(js);
    keep(g, r);
}

static uint8_t take_hk(tl_ground *g, const tl_packet_view *pv, uint64_t off, tl_ground_packet_entry *e)
{
    tl_dl_hk h;
    if (tl_downlink_parse_hk(pv->user, pv->user_len, &h) != TL_OK)
        return TL_GP_BAD_USER_DATA;
    e->kind = (uint8_t)TL_DL_KIND_HOUSEKEEPING;
    e->index = h.index;
    e->config_id = h.config_id;
    g->t.hk_packets++;
    log_hk(g, &h, off);
    product *pr = NULL;
    const int r = product_for(g, h.config_id, h.index, &pr);
    if (r == LATE)
        return TL_GP_LATE;
    if (r == NOMEM)
        return TL_GP_OK;
    if (pr->has_hk)
        return TL_GP_INCONSISTENT;
    if (pr->sci_set && (h.spectra != pr->spectra || h.discarded != pr->discarded || h.taps_crc != pr->taps_crc))
        return TL_GP_INCONSISTENT;
    pr->has_hk = 1;
    pr->hk = h;
    if (!pr->time_set) {
        pr->time = pv->time;
        pr->time_set = 1;
    }
    check_complete(g, pr);
    return TL_GP_OK;
}

/* ---- packets -------------------------------------------------------------------- */

/* Sequence count of a valid packet against its APID's history. */
static uint8_t seq_classify(tl_ground *g, uint16_t apid, uint16_t count, uint16_t id, uint16_t *missing_before)
{
    seq_track *s = &g->seq[apid];
    s->st.packets++;
    const uint32_t W = TL_GROUND_WINDOW, M = TL_PACKET_COUNT_MODULUS;
    if (!s->seen) {
        s->seen = 1;
        s->high = count;
        s->window = 1u;
        s->crc[count % W] = id;
        return TL_GP_OK;
    }
    const uint32_t d = ((uint32_t)count - s->high) & (M - 1u);
    if (d == 0u || d > M - W) {
        const uint32_t b = (M - d) & (M - 1u);
        if ((s->window >> b) & 1u) {
            if (s->crc[count % W] == id) {
                s->st.duplicates++;
                g->t.seq_duplicates++;
                return TL_GP_DUPLICATE;
            }
        } else {
            s->window |= (uint64_t)1u << b;
            s->crc[count % W] = id;
            if (s->st.missing > 0u) {
                s->st.missing--;
                g->t.seq_missing--;
            }
            s->st.reordered++;
            g->t.seq_reordered++;
            return TL_GP_REORDERED;
        }
    }
    if (d == 0u || d >= M / 2u) { /* behind, but another packet, or far behind: the counts restarted */
        s->high = count;
        s->window = 1u;
        s->crc[count % W] = id;
        s->st.restarts++;
        g->t.seq_restarts++;
        return TL_GP_RESTART;
    }
    if (d > 1u) {
        s->st.gaps++;
        s->st.missing += d - 1u;
        g->t.seq_gaps++;
        g->t.seq_missing += d - 1u;
        *missing_before = (uint16_t)(d - 1u);
    }
    s->window = d >= W ? 1u : ((s->window << d) | 1u);
    s->high = count;
    s->crc[count % W] = id;
    return TL_GP_OK;
}

/* A packet that passed tl_packet_parse (not idle). */
static void take_packet(tl_ground *g, const tl_packet_view *pv, const uint8_t *bytes, uint64_t off)
{
    tl_ground_packet_entry e = packet_entry(off, bytes, pv->packet_len, pv->packet_len, TL_GP_OK);
    const uint16_t id = tl_get_be16(bytes + pv->packet_len - 2u);
    uint8_t st = seq_classify(g, pv->apid, pv->count, id, &e.missing_before);
    if (st == TL_GP_RESTART && (pv->apid == g->cfg.apid_science || pv->apid == g->cfg.apid_hk)) {
        /* the sender started again: the products that already had packets
         * of this APID cannot grow any more, and integration indices may
         * come again */
        const int sci = pv->apid == g->cfg.apid_science;
        for (uint32_t i = 0; i < g->n_open && !g->failed;) {
            if (sci ? g->open[i]->science_packets > 0u : g->open[i]->has_hk)
                finalize(g, i, TL_GROUND_DONE_SUPERSEDED);
            else
                i++;
        }
        g->ring_n = 0;
        g->ring_head = 0;
    }
    if (st != TL_GP_DUPLICATE) {
        uint8_t use;
        if (pv->apid == g->cfg.apid_sk && pv->user_len >= 2u && pv->user[TL_DL_OFF_KIND] == TL_DL_KIND_SK)
            use = take_sk(g, pv, &e);
        else if (pv->apid != g->cfg.apid_science && pv->apid != g->cfg.apid_hk)
            use = TL_GP_OTHER_APID;
        else if (pv->user_len >= 2u && pv->user[TL_DL_OFF_KIND] == TL_DL_KIND_SPECTRUM)
            use = take_science(g, pv, &e);
        else if (pv->user_len >= 2u && pv->user[1] == TL_DL_KIND_HOUSEKEEPING)
            use = take_hk(g, pv, off, &e);
        else
            use = TL_GP_BAD_USER_DATA;
        if (use != TL_GP_OK)
            st = use;
    }
    e.status = st;
    log_packet(g, &e);
}

static int idle_data_ok(const uint8_t *b, size_t len)
{
    for (size_t i = TL_PACKET_PRIMARY_OCTETS; i < len; i++)
        if (b[i] != TL_PACKET_IDLE_OCTET)
            return 0;
    return 1;
}

/* A whole packet out of the frames: check and take it. */
static void deliver(tl_ground *g, const uint8_t *b, size_t len, uint64_t off)
{
    tl_packet_view v;
    const tl_status st = tl_packet_parse(b, len, &v);
    if (st == TL_OK && v.packet_len == len && v.apid == TL_PACKET_APID_IDLE && idle_data_ok(b, len)) {
        g->t.packets_idle++;
        return;
    }
    if (st != TL_OK || v.packet_len != len || v.apid == TL_PACKET_APID_IDLE) {
        const int crc = st == TL_E_FORMAT && tl_packet_plausible(b, len, TL_PACKET_MAX_LEN);
        tl_ground_packet_entry e = packet_entry(off, b, len, len, crc ? TL_GP_CRC : TL_GP_BAD_HEADER);
        log_packet(g, &e);
        return;
    }
    take_packet(g, &v, b, off);
}

/* ---- frames: reassembly ------------------------------------------------------------- */

static size_t packet_total(const uint8_t *h)
{
    return TL_PACKET_PRIMARY_OCTETS + (size_t)tl_get_be16(h + TL_PACKET_OFF_LENGTH) + 1u;
}

/* Could a packet with this primary header be valid here? */
static int header_possible(const uint8_t *h)
{
    const uint32_t id = tl_get_be16(h);
    if ((id & (TL_PACKET_VERSION_MASK | TL_PACKET_TYPE_MASK)) != 0u)
        return 0;
    const size_t total = packet_total(h);
    if ((id & TL_PACKET_APID_MASK) == TL_PACKET_APID_IDLE)
        return (id & TL_PACKET_SEC_FLAG_MASK) == 0u;
    return (id & TL_PACKET_SEC_FLAG_MASK) != 0u && total >= TL_PACKET_OVERHEAD && total <= TL_PACKET_MAX_LEN;
}

static void drop_partial(tl_ground *g)
{
    if (g->have > 0u) {
        tl_ground_packet_entry e = packet_entry(g->pkt_off, g->pkt, g->have, g->have, TL_GP_LOST_PARTIAL);
        log_packet(g, &e);
    }
    g->have = 0;
}

/* Where the first packet starting in this data field must be, given the
 * packet in progress: the FHP must say the same. */
static size_t expected_boundary(const tl_ground *g, const uint8_t *d, size_t n)
{
    size_t rest = 0;
    if (g->have > 0u) {
        uint8_t h[TL_PACKET_PRIMARY_OCTETS];
        const size_t from_pkt = g->have < sizeof h ? g->have : sizeof h;
        memcpy(h, g->pkt, from_pkt);
        if (from_pkt < sizeof h)
            memcpy(h + from_pkt, d, sizeof h - from_pkt); /* n >= 120 */
        rest = packet_total(h) - g->have;
    }
    if (rest >= n || (d[rest] & 0xE0u) != 0u)
        return NONE_FHP;
    return rest;
}

static int fill_ok(const uint8_t *d, size_t r)
{
    if (r >= TL_PACKET_ANY_MIN_LEN)
        return 0;
    for (size_t i = 0; i < r; i++)
        if (d[i] != TL_FRAME_FILL_OCTET)
            return 0;
    return 1;
}

/* The data field of an in-order frame (ICD section 5.5). Returns its status. */
static uint8_t reassemble(tl_ground *g, const tl_frame_view *v, uint64_t off)
{
    const uint8_t *d = v->data;
    const size_t n = v->data_len;
    const uint64_t data_off = off + TL_FRAME_ASM_OCTETS + TL_FRAME_OFF_DATA;
    uint8_t status = TL_GF_OK;
    if (v->fhp == TL_FRAME_FHP_IDLE) {
        g->t.frames_idle++;
        if (g->in_sync && g->have > 0u) { /* idle data in the middle of a packet */
            drop_partial(g);
            g->in_sync = 0;
            return TL_GF_INCONSISTENT;
        }
        return TL_GF_OK;
    }
    if (v->fhp != TL_FRAME_FHP_NONE && v->fhp >= n) {
        drop_partial(g);
        g->in_sync = 0;
        return TL_GF_INCONSISTENT;
    }
    size_t pos = 0;
    if (!g->in_sync) {
        if (v->fhp == TL_FRAME_FHP_NONE)
            return TL_GF_OK; /* the middle of a packet whose start was lost */
        pos = v->fhp;
        g->in_sync = 1;
        g->have = 0;
    } else if (expected_boundary(g, d, n) != v->fhp) {
        status = TL_GF_INCONSISTENT;
        drop_partial(g);
        if (v->fhp == TL_FRAME_FHP_NONE) {
            g->in_sync = 0;
            return status;
        }
        pos = v->fhp;
    }
    while (pos < n && !g->failed) {
        if (g->have == 0u) {
            if ((d[pos] & 0xE0u) != 0u) { /* fill to the end of the data field */
                if (!fill_ok(d + pos, n - pos)) {
                    g->in_sync = 0;
                    status = TL_GF_INCONSISTENT;
                }
                break;
            }
            g->pkt_off = data_off + pos;
        }
        const size_t before = g->have;
        size_t need = g->have < TL_PACKET_PRIMARY_OCTETS ? TL_PACKET_PRIMARY_OCTETS - g->have
                                                          : packet_total(g->pkt) - g->have;
        if (need > n - pos)
            need = n - pos;
        memcpy(g->pkt + g->have, d + pos, need);
        g->have += need;
        pos += need;
        if (before < TL_PACKET_PRIMARY_OCTETS && g->have == TL_PACKET_PRIMARY_OCTETS && !header_possible(g->pkt)) {
            tl_ground_packet_entry e = packet_entry(g->pkt_off, g->pkt, g->have, g->have, TL_GP_BAD_HEADER);
            log_packet(g, &e);
            g->have = 0;
            g->in_sync = 0; /* its length cannot be trusted: rejoin at a later FHP */
            return TL_GF_INCONSISTENT;
        }
        if (g->have >= TL_PACKET_PRIMARY_OCTETS && g->have == packet_total(g->pkt)) {
            const size_t len = g->have;
            g->have = 0;
            deliver(g, g->pkt, len, g->pkt_off);
        }
    }
    return status;
}

/* An out-of-order frame: the packets that start and end inside it. */
static void take_whole_packets(tl_ground *g, const tl_frame_view *v, uint64_t off)
{
    const uint8_t *d = v->data;
    const size_t n = v->data_len;
    const uint64_t data_off = off + TL_FRAME_ASM_OCTETS + TL_FRAME_OFF_DATA;
    if (v->fhp >= n)
        return; /* 0x7FE, 0x7FF or out of range */
    for (size_t pos = v->fhp; pos < n && !g->failed;) {
        if ((d[pos] & 0xE0u) != 0u)
            return; /* fill */
        if (n - pos < TL_PACKET_PRIMARY_OCTETS || !header_possible(d + pos) || packet_total(d + pos) > n - pos) {
            tl_ground_packet_entry e = packet_entry(data_off + pos, d + pos, n - pos, n - pos, TL_GP_LOST_PARTIAL);
            log_packet(g, &e);
            return;
        }
        const size_t len = packet_total(d + pos);
        deliver(g, d + pos, len, data_off + pos);
        pos += len;
    }
}

/* ---- frames: sync and counts --------------------------------------------------------- */

static void skip(tl_ground *g, size_t n)
{
    g->start += n;
    g->t.bytes_skipped += n;
}

static void lose_sync(tl_ground *g)
{
    if (g->locked) {
        g->t.sync_losses++;
        g->locked = 0;
    }
}

static size_t log_frame(tl_ground *g, const tl_ground_frame_entry *e)
{
    const size_t r = vec_push(&g->frames, e, g->cfg.log_limit);
    keep(g, r);
    return r;
}

static void frame_status(tl_ground *g, size_t at, uint8_t status)
{
    g->t.frames[status]++;
    if (at < g->frames.n)
        ((tl_ground_frame_entry *)g->frames.a)[at].status = status;
}

/* A frame that passed tl_frame_parse and the format checks. */
static void frame_taken(tl_ground *g, const tl_frame_view *v, uint64_t off, const uint8_t *wire)
{
    tl_ground_frame_entry e = { off, v->scid, v->vcid, v->mc_count, v->vc_count, TL_GF_OK, v->fhp, 0, 1 };
    if (!g->have_id) {
        g->scid = g->cfg.scid != TL_GROUND_ANY ? g->cfg.scid : v->scid;
        g->vcid = g->cfg.vcid != TL_GROUND_ANY ? g->cfg.vcid : v->vcid;
        g->have_id = 1;
    }
    if (v->scid != g->scid || v->vcid != g->vcid) {
        frame_status(g, log_frame(g, &e), TL_GF_OTHER_CHANNEL);
        return;
    }
    const uint16_t fecf = tl_get_be16(wire + TL_FRAME_ASM_OCTETS + g->cfg.frame_len - TL_FRAME_FECF_OCTETS);
    const uint32_t W = TL_GROUND_WINDOW, vc = v->vc_count;
    uint8_t status = TL_GF_OK;
    if (!g->have_vc) {
        g->have_vc = 1;
        g->vc_high = v->vc_count;
        g->vc_window = 1u;
    } else {
        const uint32_t d = (vc - g->vc_high) & 0xFFu;
        if (d == 0u || d > 256u - W) { /* behind the newest by b = 0 .. 63 */
            const uint32_t b = (256u - d) & 0xFFu;
            if ((g->vc_window >> b) & 1u) {
                if (g->vc_fecf[vc % W] == fecf) {
                    frame_status(g, log_frame(g, &e), TL_GF_REPEATED);
                    return;
                }
                status = TL_GF_RESTART; /* same count, another frame: the builder restarted */
                drop_partial(g);
                g->in_sync = 0;
                g->vc_high = v->vc_count;
                g->vc_window = 1u;
            } else {
                g->vc_window |= (uint64_t)1u << b;
                g->vc_fecf[vc % W] = fecf;
                if (g->t.frames_missing > 0u)
                    g->t.frames_missing--;
                const size_t at = log_frame(g, &e);
                take_whole_packets(g, v, off);
                frame_status(g, at, TL_GF_OUT_OF_ORDER);
                return;
            }
        } else {
            if (d > 1u) {
                g->t.frames_missing += d - 1u;
                e.missing_before = (uint16_t)(d - 1u);
                drop_partial(g);
                g->in_sync = 0;
            }
            g->vc_window = d >= W ? 1u : ((g->vc_window << d) | 1u);
            g->vc_high = v->vc_count;
        }
    }
    g->vc_fecf[vc % W] = fecf;
    const size_t at = log_frame(g, &e);
    const uint8_t r = reassemble(g, v, off);
    frame_status(g, at, status != TL_GF_OK ? status : r);
}

static void frames_process(tl_ground *g)
{
    const size_t W = g->wire;
    while (!g->failed) {
        const uint8_t *p = g->buf + g->start;
        const size_t avail = g->len - g->start;
        if (avail == 0u)
            return;
        size_t at = 0;
        if (tl_frame_find_asm(p, avail, &at) != TL_OK) {
            if (at > 0u) {
                lose_sync(g);
                skip(g, at);
            }
            if (g->eof)
                skip(g, g->len - g->start); /* the start of a marker, cut off */
            return;
        }
        if (at > 0u) { /* octets where a frame should have been */
            lose_sync(g);
            skip(g, at);
            continue;
        }
        const uint64_t off = g->base + g->start;
        if (avail < W) {
            if (!g->eof)
                return;
            tl_ground_frame_entry e = { off, 0, 0, 0, 0, TL_GF_TRUNCATED, 0, 0, 0 };
            frame_status(g, log_frame(g, &e), TL_GF_TRUNCATED);
            skip(g, avail);
            return;
        }
        tl_frame_view v;
        tl_status st = tl_frame_parse(p, avail, g->cfg.frame_len, &v);
        if (st == TL_OK && (v.sync_flag || v.order_flag || v.seg_id != TL_FRAME_SEG_ID_NONE))
            st = TL_E_FORMAT; /* not a packet data field as this format sends it */
        if (st != TL_OK) {
            const int crc_ok = tl_crc16(p + TL_FRAME_ASM_OCTETS, g->cfg.frame_len) == 0u;
            tl_ground_frame_entry e = { off, 0, 0, 0, 0, 0, 0, 0, 0 };
            const uint8_t fs = crc_ok ? TL_GF_BAD_HEADER : TL_GF_BAD_FECF;
            frame_status(g, log_frame(g, &e), fs);
            lose_sync(g);
            skip(g, 1); /* search on from the next octet */
            continue;
        }
        g->start += W;
        g->locked = 1;
        frame_taken(g, &v, off, p);
    }
}

/* ---- raw packets -------------------------------------------------------------------- */

static void raw_process(tl_ground *g)
{
    while (!g->failed) {
        const uint8_t *p = g->buf + g->start;
        const size_t avail = g->len - g->start;
        const uint64_t off = g->base + g->start;
        if (avail == 0u)
            return;
        /* While hunting, a packet may start only where tl_packet_resync
         * would take one: at a plausible header. Without this, the octets
         * a resync left undecided at the end of a block (fewer than 7) were
         * parsed as they came, so a header there announcing a long packet
         * stalled the decoder and the split of the input changed the
         * result (found by tests/fuzz/fuzz_ground.c; test_decode.c
         * test_raw_resync_any_split). */
        const size_t judge = TL_PACKET_PRIMARY_OCTETS + 1u;
        if (g->hunting && avail < judge && !g->eof)
            return; /* wait for the octets that decide */
        const int candidate = !g->hunting || tl_packet_plausible(p, avail, TL_PACKET_MAX_LEN);
        tl_packet_view v;
        tl_status st = candidate ? tl_packet_parse(p, avail, &v) : TL_E_FORMAT;
        if (st == TL_OK && v.apid == TL_PACKET_APID_IDLE && !idle_data_ok(p, v.packet_len))
            st = TL_E_FORMAT;
        if (st == TL_OK) {
            g->hunting = 0;
            g->start += v.packet_len;
            if (v.apid == TL_PACKET_APID_IDLE)
                g->t.packets_idle++;
            else
                take_packet(g, &v, p, off);
            continue;
        }
        if (st == TL_E_SPACE) {
            if (!g->eof)
                return; /* wait for the rest (at most a largest packet is kept) */
            if (!g->hunting || tl_packet_plausible(p, avail, TL_PACKET_MAX_LEN)) {
                tl_ground_packet_entry e = packet_entry(off, p, avail, avail, TL_GP_TRUNCATED);
                log_packet(g, &e);
            }
            skip(g, avail);
            return;
        }
        if (!g->hunting) { /* the first bad octets after a good packet: one resync */
            const int plausible = tl_packet_plausible(p, avail, TL_PACKET_MAX_LEN);
            const size_t len = plausible ? packet_total(p) : 0u;
            tl_ground_packet_entry e = packet_entry(off, p, avail, len, plausible ? TL_GP_CRC : TL_GP_BAD_HEADER);
            log_packet(g, &e);
            g->t.resyncs++;
            g->hunting = 1;
        }
        size_t o = 0;
        st = tl_packet_resync(p + 1, avail - 1u, TL_PACKET_MAX_LEN, &o);
        skip(g, 1u + o);
        if (st != TL_OK && !g->eof)
            return; /* a candidate needs more octets, or fewer than 7 are left */
    }
}

/* ---- streaming --------------------------------------------------------------------- */

static void process(tl_ground *g)
{
    if (g->cfg.raw)
        raw_process(g);
    else
        frames_process(g);
}

static int failed_out(const tl_ground *g, char *err, size_t cap)
{
    if (err != NULL && cap > 0u)
        snprintf(err, cap, "%s", g->err);
    return -1;
}

int tl_ground_feed(tl_ground *g, const uint8_t *bytes, size_t n, char *err, size_t cap)
{
    if (g->failed)
        return failed_out(g, err, cap);
    if (g->finished)
        return 0;
    while (n > 0u && !g->failed) {
        if (g->start > 0u) {
            memmove(g->buf, g->buf + g->start, g->len - g->start);
            g->len -= g->start;
            g->base += g->start;
            g->start = 0;
        }
        size_t take = g->cap - g->len;
        if (take > n)
            take = n;
        memcpy(g->buf + g->len, bytes, take);
        g->len += take;
        bytes += take;
        n -= take;
        g->t.bytes += take;
        process(g);
    }
    return g->failed ? failed_out(g, err, cap) : 0;
}

int tl_ground_finish(tl_ground *g, char *err, size_t cap)
{
    if (g->failed)
        return failed_out(g, err, cap);
    if (g->finished)
        return 0;
    g->finished = 1;
    g->eof = 1;
    process(g);
    if (!g->cfg.raw && g->have > 0u) { /* the input ended inside a packet */
        tl_ground_packet_entry e = packet_entry(g->pkt_off, g->pkt, g->have, g->have, TL_GP_TRUNCATED);
        log_packet(g, &e);
        g->have = 0;
    }
    while (g->n_open > 0u && !g->failed) {
        uint32_t oldest = 0;
        for (uint32_t i = 1; i < g->n_open; i++)
            if (g->open[i]->order < g->open[oldest]->order)
                oldest = i;
        finalize(g, oldest, TL_GROUND_DONE_END);
    }
    return g->failed ? failed_out(g, err, cap) : 0;
}

int tl_ground_decode_file(tl_ground *g, const char *path, char *err, size_t cap)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL) {
        snprintf(err, cap, "%s: cannot open: %s", path, strerror(errno));
        return -1;
    }
    uint8_t *block = malloc(TL_GROUND_BLOCK);
    if (block == NULL) {
        fclose(f);
        snprintf(err, cap, "out of memory");
        return -1;
    }
    int rc = 0;
    for (;;) {
        const size_t n = fread(block, 1, TL_GROUND_BLOCK, f);
        if (n > 0u && tl_ground_feed(g, block, n, err, cap) != 0) {
            rc = -1;
            break;
        }
        if (n < TL_GROUND_BLOCK) {
            if (ferror(f)) {
                snprintf(err, cap, "%s: read error: %s", path, strerror(errno));
                rc = -1;
            }
            break;
        }
    }
    free(block);
    fclose(f);
    if (rc == 0)
        rc = tl_ground_finish(g, err, cap);
    return rc;
}

/* ---- the log file ------------------------------------------------------------------- */

typedef struct log_ctx {
    const tl_ground *g;
    const char *input;
} log_ctx;

static json_t *totals_json(const tl_ground *g)
{
    const tl_ground_totals *t = &g->t;
    json_t *o = json_object(), *fr = json_object(), *pk = json_object(), *pr = json_object(), *done = json_object();
    json_object_set_new(o, "bytes", json_u64(t->bytes));
    for (unsigned s = 0; s < TL_GF_STATUSES; s++)
        json_object_set_new(fr, frame_names[s], json_u64(t->frames[s]));
    json_object_set_new(fr, "idle", json_u64(t->frames_idle));
    json_object_set_new(fr, "missing", json_u64(t->frames_missing));
    json_object_set_new(o, "frames", fr);
    json_object_set_new(o, "sync_losses", json_u64(t->sync_losses));
    json_object_set_new(o, "bytes_skipped", json_u64(t->bytes_skipped));
    for (unsigned s = 0; s < TL_GP_STATUSES; s++)
        json_object_set_new(pk, packet_names[s], json_u64(t->packets[s]));
    json_object_set_new(pk, "idle", json_u64(t->packets_idle));
    json_object_set_new(pk, "housekeeping", json_u64(t->hk_packets));
    json_object_set_new(o, "packets", pk);
    json_object_set_new(o, "resyncs", json_u64(t->resyncs));
    json_t *seq = json_object();
    json_object_set_new(seq, "gaps", json_u64(t->seq_gaps));
    json_object_set_new(seq, "missing", json_u64(t->seq_missing));
    json_object_set_new(seq, "duplicates", json_u64(t->seq_duplicates));
    json_object_set_new(seq, "reordered", json_u64(t->seq_reordered));
    json_object_set_new(seq, "restarts", json_u64(t->seq_restarts));
    json_object_set_new(o, "sequence", seq);
    json_object_set_new(pr, "complete", json_u64(t->products_complete));
    json_object_set_new(pr, "incomplete", json_u64(t->products_incomplete));
    for (unsigned d = 0; d < TL_GROUND_DONE_REASONS; d++)
        json_object_set_new(done, done_names[d], json_u64(t->products_done[d]));
    json_object_set_new(pr, "done", done);
    json_object_set_new(pr, "bounded", json_u64(t->products_bounded));
    json_object_set_new(pr, "housekeeping_only", json_u64(t->products_no_spectra));
    json_object_set_new(o, "products", pr);
    return o;
}

static int put_strings(FILE *f, const char *name, const vec *v)
{
    fprintf(f, ",\n\"%s\": [", name);
    for (size_t i = 0; i < v->n; i++)
        fprintf(f, "%s\n  %s", i ? "," : "", ((char *const *)v->a)[i]);
    fprintf(f, "%s],\n\"%s_left_out\": %llu", v->n ? "\n" : "", name, (unsigned long long)v->left_out);
    return 0;
}

static int write_log(FILE *f, void *ctx)
{
    const log_ctx *lc = ctx;
    const tl_ground *g = lc->g;
    json_t *head = json_object();
    json_object_set_new(head, "input", json_string(lc->input ? lc->input : ""));
    json_object_set_new(head, "mode", json_string(g->cfg.raw ? "raw" : "frames"));
    if (!g->cfg.raw) {
        json_object_set_new(head, "frame_length", json_integer(g->cfg.frame_len));
        json_object_set_new(head, "spacecraft_id", g->have_id ? json_integer(g->scid) : json_null());
        json_object_set_new(head, "virtual_channel", g->have_id ? json_integer(g->vcid) : json_null());
    }
    json_object_set_new(head, "apid_science", json_integer(g->cfg.apid_science));
    json_object_set_new(head, "apid_housekeeping", json_integer(g->cfg.apid_hk));
    json_object_set_new(head, "clean", json_boolean(tl_ground_clean(g)));
    json_object_set_new(head, "totals", totals_json(g));
    json_t *apids = json_array();
    for (uint32_t a = 0; a < APIDS; a++) {
        const seq_track *s = &g->seq[a];
        if (!s->seen)
            continue;
        json_t *o = json_object();
        json_object_set_new(o, "apid", json_integer(a));
        json_object_set_new(o, "packets", json_u64(s->st.packets));
        json_object_set_new(o, "gaps", json_u64(s->st.gaps));
        json_object_set_new(o, "missing", json_u64(s->st.missing));
        json_object_set_new(o, "duplicates", json_u64(s->st.duplicates));
        json_object_set_new(o, "reordered", json_u64(s->st.reordered));
        json_object_set_new(o, "restarts", json_u64(s->st.restarts));
        json_array_append_new(apids, o);
    }
    json_object_set_new(head, "apids", apids);
    /* the head object without its closing brace, then the long lists */
    char *hs = json_dumps(head, JSON_INDENT(1) | JSON_PRESERVE_ORDER);
    json_decref(head);
    if (hs == NULL)
        return -1;
    size_t hl = strlen(hs);
    while (hl > 0u && hs[hl - 1u] != '}')
        hl--;
    if (hl == 0u) {
        free(hs);
        return -1;
    }
    hl--;
    while (hl > 0u && (hs[hl - 1u] == '\n' || hs[hl - 1u] == ' '))
        hl--;
    hs[hl] = '\0';
    fputs(hs, f);
    free(hs);
    fputs(",\n\"frames\": [", f);
    const tl_ground_frame_entry *fe = g->frames.a;
    for (size_t i = 0; i < g->frames.n; i++) {
        const tl_ground_frame_entry *e = &fe[i];
        fprintf(f, "%s\n  {\"offset\":%llu,\"status\":\"%s\"", i ? "," : "", (unsigned long long)e->offset,
                frame_names[e->status]);
        if (e->header_valid)
            fprintf(f, ",\"scid\":%u,\"vcid\":%u,\"mc_count\":%u,\"vc_count\":%u,\"fhp\":%u,\"missing_before\":%u",
                    e->scid, e->vcid, e->mc_count, e->vc_count, e->fhp, e->missing_before);
        fputc('}', f);
    }
    fprintf(f, "%s],\n\"frames_left_out\": %llu", g->frames.n ? "\n" : "", (unsigned long long)g->frames.left_out);
    fputs(",\n\"packets\": [", f);
    const tl_ground_packet_entry *pe = g->packets.a;
    for (size_t i = 0; i < g->packets.n; i++) {
        const tl_ground_packet_entry *e = &pe[i];
        fprintf(f, "%s\n  {\"offset\":%llu,\"length\":%u,\"status\":\"%s\"", i ? "," : "",
                (unsigned long long)e->offset, e->length, packet_names[e->status]);
        if (e->apid != 0xFFFFu)
            fprintf(f, ",\"apid\":%u,\"count\":%u,\"missing_before\":%u", e->apid, e->count, e->missing_before);
        if (e->kind == TL_DL_KIND_SPECTRUM)
            fprintf(f, ",\"kind\":\"spectrum\",\"config_id\":%u,\"index\":%u,\"state\":\"%s\",\"quantity\":\"%s\","
                       "\"first\":%u,\"channels\":%u",
                    e->config_id, e->index, state_names[e->state % 3u], qty_names[e->qty % 4u], e->first,
                    e->channels);
        else if (e->kind == TL_DL_KIND_HOUSEKEEPING)
            fprintf(f, ",\"kind\":\"housekeeping\",\"config_id\":%u,\"index\":%u", e->config_id, e->index);
        fputc('}', f);
    }
    fprintf(f, "%s],\n\"packets_left_out\": %llu", g->packets.n ? "\n" : "", (unsigned long long)g->packets.left_out);
    put_strings(f, "products", &g->products);
    put_strings(f, "housekeeping", &g->hks);
    fputs("\n}\n", f);
    return ferror(f) ? -1 : 0;
}

int tl_ground_write_log(const tl_ground *g, const char *path, const char *input, char *err, size_t cap)
{
    log_ctx lc = { g, input };
    return tl_atomic_write(path, write_log, &lc, err, cap);
}

/* ---- the summary ---------------------------------------------------------------------- */

typedef struct text {
    char *out;
    size_t cap, len;
} text;

static void say(text *t, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void say(text *t, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    const size_t room = t->len < t->cap ? t->cap - t->len : 0u;
    const int n = vsnprintf(room ? t->out + t->len : NULL, room, fmt, ap);
    va_end(ap);
    if (n > 0)
        t->len += (size_t)n;
}

size_t tl_ground_summary(const tl_ground *g, const char *input, char *out, size_t cap)
{
    text t = { out, cap, 0 };
    if (cap > 0u)
        out[0] = '\0';
    const tl_ground_totals *s = &g->t;
    typedef unsigned long long ull;
    if (g->cfg.raw) {
        say(&t, "decode: %s: %llu octets of raw space packets\n", input, (ull)s->bytes);
    } else {
        say(&t, "decode: %s: %llu octets of transfer frames of %u octets", input, (ull)s->bytes, g->cfg.frame_len);
        if (g->have_id)
            say(&t, " (spacecraft %u, virtual channel %u)", g->scid, g->vcid);
        say(&t, "\n  frames: %llu ok (%llu idle), %llu bad FECF, %llu bad header, %llu inconsistent, %llu missing, "
                "%llu repeated, %llu out of order",
            (ull)s->frames[TL_GF_OK], (ull)s->frames_idle, (ull)s->frames[TL_GF_BAD_FECF],
            (ull)s->frames[TL_GF_BAD_HEADER], (ull)s->frames[TL_GF_INCONSISTENT], (ull)s->frames_missing,
            (ull)s->frames[TL_GF_REPEATED], (ull)s->frames[TL_GF_OUT_OF_ORDER]);
        if (s->frames[TL_GF_TRUNCATED])
            say(&t, ", %llu truncated", (ull)s->frames[TL_GF_TRUNCATED]);
        if (s->frames[TL_GF_RESTART])
            say(&t, ", %llu count restarts", (ull)s->frames[TL_GF_RESTART]);
        if (s->frames[TL_GF_OTHER_CHANNEL])
            say(&t, ", %llu of other channels", (ull)s->frames[TL_GF_OTHER_CHANNEL]);
        say(&t, "; %llu sync losses, %llu octets skipped\n", (ull)s->sync_losses, (ull)s->bytes_skipped);
    }
    const uint64_t used = s->packets[TL_GP_OK] + s->packets[TL_GP_REORDERED] + s->packets[TL_GP_RESTART];
    const uint64_t contents = s->packets[TL_GP_BAD_USER_DATA] + s->packets[TL_GP_TOO_MANY_CHANNELS] +
                              s->packets[TL_GP_BAD_PAYLOAD] + s->packets[TL_GP_INCONSISTENT] + s->packets[TL_GP_LATE];
    say(&t, "  packets: %llu decoded, %llu CRC errors, %llu bad headers, %llu bad contents, %llu cut short, "
            "%llu idle",
        (ull)used, (ull)s->packets[TL_GP_CRC], (ull)s->packets[TL_GP_BAD_HEADER], (ull)contents,
        (ull)s->packets[TL_GP_TRUNCATED] + s->packets[TL_GP_LOST_PARTIAL], (ull)s->packets_idle);
    if (g->cfg.raw)
        say(&t, ", %llu resyncs (%llu octets skipped)", (ull)s->resyncs, (ull)s->bytes_skipped);
    if (s->packets[TL_GP_OTHER_APID])
        say(&t, ", %llu on other APIDs", (ull)s->packets[TL_GP_OTHER_APID]);
    say(&t, "\n  sequence counts: %llu gaps (%llu packets missing), %llu duplicates, %llu reordered",
        (ull)s->seq_gaps, (ull)s->seq_missing, (ull)s->seq_duplicates, (ull)s->seq_reordered);
    if (s->seq_restarts)
        say(&t, ", %llu restarts", (ull)s->seq_restarts);
    say(&t, "\n  products: %llu complete, %llu incomplete", (ull)s->products_complete, (ull)s->products_incomplete);
    if (s->products_bounded)
        say(&t, ", %llu noise-bounded (dequantized values)", (ull)s->products_bounded);
    if (s->products_done[TL_GROUND_DONE_EVICTED])
        say(&t, ", %llu closed early (more than %u open)", (ull)s->products_done[TL_GROUND_DONE_EVICTED],
            g->cfg.in_flight);
    if (s->products_no_spectra)
        say(&t, ", %llu housekeeping only", (ull)s->products_no_spectra);
    say(&t, "\n");
    return t.len;
}
