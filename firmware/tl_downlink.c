/* tl_downlink.c - products and housekeeping into space packets (tl_downlink.h). */
#include "tl_downlink.h"

#include <string.h>
#include "tl_bytes.h"
#include "tl_crc32c.h"
#include "tl_integrate.h"

void tl_downlink_config_default(tl_downlink_config *cfg)
{
    if (cfg == NULL)
        return;
    memset(cfg, 0, sizeof *cfg);
    cfg->apid_science = 0x101u;
    cfg->apid_hk = 0x102u;
    cfg->apid_sk = 0x103u;
    cfg->max_packet = TL_PACKET_MAX_LEN;
    cfg->encoding = TL_ENCODE_ID_LOSSLESS;
    cfg->transpose = TL_ENCODE_BIT_PLANES;
    cfg->fraction_q16 = 8192u; /* f = 1/8 */
    cfg->block = 32u;
    cfg->sample_rate_hz = 102400000u;
}

uint32_t tl_downlink_config_id(const tl_config *cfg, uint32_t taps_crc)
{
    if (cfg == NULL)
        return 0u;
    const tl_config r = *cfg;
    uint32_t c = TL_CRC32C_INIT;
    const uint32_t words[] = { r.points, r.taps, r.inputs, r.adc_bits, r.integration, r.fft_scale_mask,
                               r.rounding, r.det_shift, r.switch_steps, r.switch_discard, taps_crc };
    for (uint32_t i = 0; i < sizeof words / sizeof words[0]; i++)
        c = tl_crc32c_update_be32(c, words[i]);
    for (uint32_t i = 0; i < r.switch_steps && i < TL_MAX_SWITCH_STEPS; i++) {
        c = tl_crc32c_update_be32(c, r.switch_state[i]);
        c = tl_crc32c_update_be32(c, r.switch_dwell[i]);
    }
    return tl_crc32c_final(c);
}

tl_status tl_downlink_config_check(const tl_downlink_config *cfg)
{
    if (cfg == NULL)
        return TL_E_NULL;
    if (cfg->apid_science > TL_PACKET_APID_MAX || cfg->apid_hk > TL_PACKET_APID_MAX
        || cfg->apid_sk > TL_PACKET_APID_MAX || cfg->apid_science == cfg->apid_hk
        || cfg->apid_sk == cfg->apid_science || cfg->apid_sk == cfg->apid_hk)
        return TL_E_APID;
    if (cfg->max_packet < TL_DL_MIN_PACKET || cfg->max_packet > TL_PACKET_MAX_LEN)
        return TL_E_PACKET_LEN;
    if ((cfg->encoding != TL_ENCODE_ID_LOSSLESS && cfg->encoding != TL_ENCODE_ID_BOUNDED)
        || (cfg->transpose != TL_ENCODE_BYTE_SHUFFLE && cfg->transpose != TL_ENCODE_BIT_PLANES))
        return TL_E_ENCODING;
    if (cfg->encoding == TL_ENCODE_ID_BOUNDED) {
        if (cfg->block < 1u || cfg->block > 255u)
            return TL_E_ENCODING;
        if (cfg->fraction_q16 < TL_ENCODE_FRACTION_MIN_Q16 || cfg->fraction_q16 > TL_ENCODE_FRACTION_MAX_Q16)
            return TL_E_NOISE_FRACTION;
    }
    if (cfg->sample_rate_hz == 0u)
        return TL_E_TIME_RANGE;
    return TL_OK;
}

tl_status tl_downlink_init(tl_downlink *d, const tl_downlink_config *cfg)
{
    if (d == NULL || cfg == NULL)
        return TL_E_NULL;
    /* checked before *d is written: a refused configuration leaves a running downlink as it was */
    tl_status st = tl_downlink_config_check(cfg);
    if (st != TL_OK)
        return st;
    st = tl_packet_writer_init(&d->pw, cfg->max_packet); /* cannot fail: 512 .. 4095 is inside its range */
    if (st != TL_OK)
        return st;
    d->cfg = *cfg;
    memset(&d->stats, 0, sizeof d->stats);
    d->initialised = TL_DOWNLINK_MAGIC;
    return TL_OK;
}

static void add32(uint32_t *c, uint32_t n)
{
    *c = (UINT32_MAX - *c < n) ? UINT32_MAX : *c + n;
}

static void add64(uint64_t *c, uint64_t n)
{
    *c = (UINT64_MAX - *c < n) ? UINT64_MAX : *c + n;
}

/* One section: the sums of one quantity in one switch state. */
typedef struct section {
    uint32_t state, qty, spectra;
    const uint64_t *u;       /* auto-power, or NULL */
    const int64_t *s;        /* cross-power, or NULL */
    const uint64_t *ref0;    /* cross: the two autos for the noise reference */
    const uint64_t *ref1;
    const uint8_t *flags;
} section;

/* Write the science header for channels [first, first + n) into d->user;
 * returns the octets used by the header and the bitmap. */
static size_t put_header(tl_downlink *d, const tl_product *p, const section *sc, uint32_t first, uint32_t n,
                         uint16_t base_flags)
{
    uint8_t *u = d->user;
    const uint8_t bit = (uint8_t)(1u << sc->qty); /* TL_FLAG_SAT_* of the quantity */
    uint16_t flags = base_flags;
    for (uint32_t k = 0; k < n; k++)
        if (sc->flags[first + k] & bit) {
            flags |= TL_DL_F_BITMAP;
            break;
        }
    u[TL_DL_OFF_VERSION] = (uint8_t)TL_DL_VERSION;
    u[TL_DL_OFF_KIND] = (uint8_t)TL_DL_KIND_SPECTRUM;
    u[TL_DL_OFF_MODE] = d->cfg.mode;
    u[TL_DL_OFF_STATE] = (uint8_t)sc->state;
    u[TL_DL_OFF_QTY] = (uint8_t)sc->qty;
    u[TL_DL_OFF_ARITH] = (uint8_t)p->arith_version;
    u[TL_DL_OFF_DET_SHIFT] = (uint8_t)p->det_shift;
    u[TL_DL_OFF_FFT_SHIFT] = (uint8_t)p->fft_total_shift;
    tl_put_be32(u + TL_DL_OFF_CONFIG_ID, d->cfg.config_id);
    tl_put_be32(u + TL_DL_OFF_INDEX, p->index);
    tl_put_be32(u + TL_DL_OFF_STATE_SPECTRA, sc->spectra);
    tl_put_be32(u + TL_DL_OFF_SPECTRA, p->spectra);
    tl_put_be32(u + TL_DL_OFF_DISCARDED, p->discarded);
    tl_put_be16(u + TL_DL_OFF_CHANNELS, (uint16_t)p->channels);
    tl_put_be16(u + TL_DL_OFF_FIRST, (uint16_t)first);
    tl_put_be16(u + TL_DL_OFF_COUNT, (uint16_t)n);
    tl_put_be16(u + TL_DL_OFF_FLAGS, flags);
    tl_put_be32(u + TL_DL_OFF_TAPS_CRC, p->taps_crc);
    size_t used = TL_DL_HEADER_OCTETS;
    if (flags & TL_DL_F_BITMAP) {
        const size_t b = (n + 7u) / 8u;
        memset(u + used, 0, b);
        for (uint32_t k = 0; k < n; k++)
            if (sc->flags[first + k] & bit)
                u[used + k / 8u] = (uint8_t)(u[used + k / 8u] | (0x80u >> (k % 8u)));
        used += b;
    }
    return used;
}

/* Encode channels [first, first + n) after the header; TL_E_SPACE if they
 * do not fit the packet. */
static tl_status try_encode(tl_downlink *d, const tl_product *p, const section *sc, uint32_t first, uint32_t n,
                            uint16_t base_flags, size_t *user_len)
{
    const size_t head = put_header(d, p, sc, first, n, base_flags);
    const size_t cap = TL_PACKET_MAX_USER(d->cfg.max_packet) - head;
    uint8_t *dst = d->user + head;
    size_t w = 0;
    tl_status st;
    if (d->cfg.encoding == TL_ENCODE_ID_LOSSLESS) {
        st = sc->u ? tl_encode_lossless_u64(&d->enc, sc->u + first, n, d->cfg.transpose, dst, cap, &w)
                   : tl_encode_lossless_i64(&d->enc, sc->s + first, n, d->cfg.transpose, dst, cap, &w);
    } else {
        tl_bound_cfg bc;
        bc.spectra = sc->spectra > 0u ? sc->spectra : 1u;
        bc.fraction_q16 = d->cfg.fraction_q16;
        bc.block = d->cfg.block;
        bc.transpose = d->cfg.transpose;
        if (sc->u) {
            st = tl_encode_bounded_u64(&d->enc, sc->u + first, NULL, n, &bc, dst, cap, &w);
        } else {
            for (uint32_t k = 0; k < n; k++) {
                const uint64_t a = sc->ref0[first + k], b = sc->ref1[first + k];
                d->ref[k] = a < b ? a : b;
            }
            st = tl_encode_bounded_i64(&d->enc, sc->s + first, d->ref, n, &bc, dst, cap, &w);
        }
    }
    *user_len = head + w;
    return st;
}

static tl_status emit(tl_downlink *d, uint16_t apid, tl_cuc t, size_t user_len, tl_downlink_sink sink, void *user)
{
    size_t len = 0;
    const tl_status st = tl_packet_write(&d->pw, apid, t, d->user, user_len, d->packet, sizeof d->packet, &len);
    if (st != TL_OK)
        return st;
    sink(user, d->packet, len);
    return TL_OK;
}

/* Encode channels [first, first + n) into d->user: TL_OK with the user
 * data length, TL_E_SPACE when they do not fit a packet. */
typedef tl_status (*try_fn)(tl_downlink *d, const void *ctx, uint32_t first, uint32_t n, size_t *len);

/* How many channels from `first` fit one packet, with d->user holding
 * their user data (*len octets) on return. The count is searched: from a
 * guess, halve until it fits, then bisect between the largest fit and the
 * smallest misfit, at most TL_DL_MAX_TRIES encodings, and at most `top`. */
static tl_status fit_channels(tl_downlink *d, try_fn try_enc, const void *ctx, uint32_t first, uint32_t top,
                              uint32_t guess, uint32_t *count, size_t *len)
{
    uint32_t lo = 0, hi = top + 1u, n = guess < top ? guess : top, last_ok = 0;
    for (uint32_t tries = 0; tries < TL_DL_MAX_TRIES && hi - lo > 1u; tries++) {
        const tl_status st = try_enc(d, ctx, first, n, len);
        if (st == TL_OK) {
            lo = n;
            last_ok = n;
        } else if (st == TL_E_SPACE) {
            hi = n;
            last_ok = 0;
        } else {
            return st;
        }
        if (hi - lo <= 1u || (lo > 0u && hi - lo <= hi / 32u))
            break;
        n = (lo == 0u) ? (n / 2u > 0u ? n / 2u : 1u) : lo + (hi - lo) / 2u;
    }
    if (lo == 0u) {
        /* not even the halving reached a fit within the tries: one channel */
        lo = 1u;
        last_ok = 0u;
    }
    if (last_ok != lo) {
        const tl_status st = try_enc(d, ctx, first, lo, len);
        if (st != TL_OK)
            return st; /* one channel always fits TL_DL_MIN_PACKET */
    }
    *count = lo;
    return TL_OK;
}

typedef struct section_ctx {
    const tl_product *p;
    const section *sc;
    uint16_t base_flags;
} section_ctx;

static tl_status try_section(tl_downlink *d, const void *ctx, uint32_t first, uint32_t n, size_t *len)
{
    const section_ctx *c = ctx;
    return try_encode(d, c->p, c->sc, first, n, c->base_flags, len);
}

/* Split one section into packets (fit_channels), the next guess the last
 * packet's count plus an eighth. */
static tl_status emit_section(tl_downlink *d, const tl_product *p, const section *sc, tl_cuc t, uint16_t base_flags,
                              tl_downlink_sink sink, void *user)
{
    const uint32_t channels = p->channels;
    const section_ctx ctx = { p, sc, base_flags };
    uint32_t guess = TL_ENCODE_MAX_CHANNELS;
    for (uint32_t first = 0; first < channels;) {
        const uint32_t left = channels - first;
        const uint32_t top = left < TL_ENCODE_MAX_CHANNELS ? left : TL_ENCODE_MAX_CHANNELS;
        uint32_t n = 0;
        size_t len = 0;
        tl_status st = fit_channels(d, try_section, &ctx, first, top, guess, &n, &len);
        if (st != TL_OK)
            return st;
        if ((st = emit(d, d->cfg.apid_science, t, len, sink, user)) != TL_OK)
            return st;
        add32(&d->stats.packets_science, 1u);
        add64(&d->stats.octets_science, TL_PACKET_LEN(len));
        add64(&d->stats.octets_raw, 8u * (uint64_t)n);
        add32(&d->stats.channels_sent, n);
        first += n;
        guess = n + n / 8u + 1u;
    }
    return TL_OK;
}

static size_t put_hk(tl_downlink *d, const tl_product *p, int taps_ok)
{
    uint8_t *u = d->user;
    const uint32_t s = p->fft_stages + 1u;
    memset(u, 0, TL_DL_HK_OCTETS(s));
    u[0] = (uint8_t)TL_DL_HK_VERSION;
    u[1] = (uint8_t)TL_DL_KIND_HOUSEKEEPING;
    u[2] = d->cfg.mode;
    u[3] = (uint8_t)p->inputs;
    tl_put_be32(u + 4, d->cfg.config_id);
    tl_put_be32(u + 8, p->index);
    tl_put_be32(u + 12, TL_DL_FIRMWARE_VERSION);
    tl_put_be32(u + 16, p->taps_crc);
    u[20] = (uint8_t)(taps_ok ? 0u : 1u);
    u[21] = (uint8_t)s;
    tl_put_be16(u + 22, (uint16_t)p->switch_steps);
    tl_put_be32(u + 24, p->spectra);
    tl_put_be32(u + 28, p->discarded);
    tl_put_be32(u + 32, p->antenna_spectra);
    tl_put_be32(u + 36, p->cal[0].spectra);
    tl_put_be32(u + 40, p->cal[1].spectra);
    size_t o = 44u;
    /* samples per input: every frame since the integration began,
     * including the filterbank's history frames of the first one */
    for (uint32_t i = 0; i < TL_MAX_INPUTS; i++) {
        const int on = i < p->inputs;
        uint64_t samples = 0;
        for (uint32_t b = 0; on && b < TL_ADC_HIST_BINS; b++)
            samples += p->stats.adc_hist[i][b];
        tl_put_be32(u + o, on ? p->stats.adc_clips[i] : 0u);
        tl_put_be64(u + o + 4u, on ? p->stats.adc_sumsq[i] : 0u);
        tl_put_be64(u + o + 12u, samples);
        tl_put_be32(u + o + 20u, on ? p->stats.pfb_sat[i] : 0u);
        o += 24u;
        for (uint32_t k = 0; k < s; k++, o += 4u)
            tl_put_be32(u + o, on ? p->stats.fft_sat[i][k] : 0u);
        for (uint32_t b = 0; b < TL_ADC_HIST_BINS; b++, o += 4u)
            tl_put_be32(u + o, on ? p->stats.adc_hist[i][b] : 0u);
    }
    for (uint32_t q = 0; q < 4u; q++, o += 4u)
        tl_put_be32(u + o, p->stats.acc_sat[q]);
    for (uint32_t c = 0; c < 2u; c++)
        for (uint32_t q = 0; q < 4u; q++, o += 4u)
            tl_put_be32(u + o, p->cal[c].acc_sat[q]);
    const tl_acq_counts *a = &p->acq;
    const uint64_t seen = (uint64_t)a->blocks_kept + a->blocks_lost;
    tl_put_be32(u + o, seen > UINT32_MAX ? UINT32_MAX : (uint32_t)seen);
    tl_put_be32(u + o + 4u, a->blocks_kept);
    tl_put_be32(u + o + 8u, a->blocks_lost);
    tl_put_be64(u + o + 12u, a->samples_lost);
    tl_put_be32(u + o + 20u, tl_acq_duty_ppm(a));
    tl_put_be32(u + o + 24u, a->gap_discarded);
    tl_put_be32(u + o + 28u, a->abandoned);
    o += TL_DL_HK_ACQ_OCTETS;
    /* scrub block */
    tl_put_be32(u + o, p->scrub.passes);
    o += 4u;
    for (uint32_t r = 0; r < TL_SCRUB_REGIONS; r++, o += 4u)
        tl_put_be32(u + o, p->scrub.mismatches[r]);
    for (uint32_t r = 0; r < TL_SCRUB_REGIONS; r++, o += 4u)
        tl_put_be32(u + o, p->scrub.restores[r]);
    tl_put_be32(u + o, p->scrub.state_faults);
    u[o + 4u] = (uint8_t)(p->scrub.last_bad <= TL_SCRUB_LAST_STATE ? p->scrub.last_bad : TL_SCRUB_LAST_STATE);
    u[o + 5u] = (uint8_t)(p->upset ? 1u : 0u);
    o += 8u; /* and 2 reserved */
    return o;
}

tl_status tl_downlink_product(tl_downlink *d, const tl_product *p, int taps_ok, tl_downlink_sink sink, void *user)
{
    if (d == NULL || p == NULL || sink == NULL)
        return TL_E_NULL;
    if (d->initialised != TL_DOWNLINK_MAGIC)
        return TL_E_NOT_INIT;
    if (p->channels == 0u || p->channels > TL_MAX_CHANNELS || p->inputs < 1u || p->inputs > TL_MAX_INPUTS
        || p->fft_stages > TL_MAX_FFT_STAGES)
        return TL_E_POINTS;
    if (p->points != 0u && p->first_frame > UINT64_MAX / p->points)
        return TL_E_TIME_RANGE;
    tl_cuc t;
    tl_status st = tl_cuc_from_samples(d->cfg.epoch, p->first_frame * p->points, d->cfg.sample_rate_hz, &t);
    if (st != TL_OK)
        return st;
    uint16_t base = d->cfg.encoding == TL_ENCODE_ID_BOUNDED ? (uint16_t)TL_DL_F_BOUNDED : 0u;
    int overflow = 0, clipped = 0;
    for (uint32_t i = 0; i < p->inputs; i++) {
        clipped |= p->stats.adc_clips[i] != 0u;
        overflow |= p->stats.pfb_sat[i] != 0u;
        for (uint32_t k = 0; k <= p->fft_stages; k++)
            overflow |= p->stats.fft_sat[i][k] != 0u;
    }
    if (clipped)
        base |= TL_DL_F_ADC_CLIP;
    if (overflow)
        base |= TL_DL_F_OVERFLOW;
    if (p->upset)
        base |= TL_DL_F_UPSET;
    const uint32_t states = p->switch_steps > 0u ? TL_STATES : 1u;
    for (uint32_t s = 0; s < states; s++) {
        const uint64_t *a0 = s == 0u ? p->auto_power[0] : p->cal[s - 1u].auto_power[0];
        const uint64_t *a1 = s == 0u ? p->auto_power[1] : p->cal[s - 1u].auto_power[1];
        const int64_t *re = s == 0u ? p->cross_re : p->cal[s - 1u].cross_re;
        const int64_t *im = s == 0u ? p->cross_im : p->cal[s - 1u].cross_im;
        const uint8_t *fl = s == 0u ? p->flags : p->cal[s - 1u].flags;
        const uint32_t n = s == 0u ? p->antenna_spectra : p->cal[s - 1u].spectra;
        section sc[4] = {
            { s, TL_DL_QTY_AUTO0, n, a0, NULL, NULL, NULL, fl },
            { s, TL_DL_QTY_AUTO1, n, a1, NULL, NULL, NULL, fl },
            { s, TL_DL_QTY_CROSS_RE, n, NULL, re, a0, a1, fl },
            { s, TL_DL_QTY_CROSS_IM, n, NULL, im, a0, a1, fl },
        };
        const uint32_t nq = p->inputs == 2u ? 4u : 1u;
        for (uint32_t q = 0; q < nq; q++)
            if ((st = emit_section(d, p, &sc[q], t, base, sink, user)) != TL_OK)
                return st;
    }
    const size_t hk = put_hk(d, p, taps_ok);
    if ((st = emit(d, d->cfg.apid_hk, t, hk, sink, user)) != TL_OK)
        return st;
    add32(&d->stats.packets_hk, 1u);
    add64(&d->stats.octets_hk, TL_PACKET_LEN(hk));
    return TL_OK;
}

tl_status tl_downlink_parse_science(const uint8_t *user, size_t len, tl_dl_science *v)
{
    if (user == NULL || v == NULL)
        return TL_E_NULL;
    if (len < TL_DL_HEADER_OCTETS + 1u)
        return TL_E_FORMAT;
    tl_dl_science r;
    r.version = user[TL_DL_OFF_VERSION];
    r.kind = user[TL_DL_OFF_KIND];
    r.mode = user[TL_DL_OFF_MODE];
    r.state = user[TL_DL_OFF_STATE];
    r.qty = user[TL_DL_OFF_QTY];
    r.arith = user[TL_DL_OFF_ARITH];
    r.det_shift = user[TL_DL_OFF_DET_SHIFT];
    r.fft_shift = user[TL_DL_OFF_FFT_SHIFT];
    r.config_id = tl_get_be32(user + TL_DL_OFF_CONFIG_ID);
    r.index = tl_get_be32(user + TL_DL_OFF_INDEX);
    r.state_spectra = tl_get_be32(user + TL_DL_OFF_STATE_SPECTRA);
    r.spectra = tl_get_be32(user + TL_DL_OFF_SPECTRA);
    r.discarded = tl_get_be32(user + TL_DL_OFF_DISCARDED);
    r.channels = tl_get_be16(user + TL_DL_OFF_CHANNELS);
    r.first = tl_get_be16(user + TL_DL_OFF_FIRST);
    r.count = tl_get_be16(user + TL_DL_OFF_COUNT);
    r.flags = tl_get_be16(user + TL_DL_OFF_FLAGS);
    r.taps_crc = tl_get_be32(user + TL_DL_OFF_TAPS_CRC);
    if (r.version != TL_DL_VERSION || r.kind != TL_DL_KIND_SPECTRUM || r.state >= 3u || r.qty >= 4u
        || r.channels == 0u || r.channels > 32768u || r.count == 0u
        || (uint32_t)r.first + (uint32_t)r.count > (uint32_t)r.channels)
        return TL_E_FORMAT;
    size_t o = TL_DL_HEADER_OCTETS;
    r.bitmap = NULL;
    if (r.flags & TL_DL_F_BITMAP) {
        const size_t b = ((size_t)r.count + 7u) / 8u;
        if (len - o < b + 1u)
            return TL_E_FORMAT;
        r.bitmap = user + o;
        o += b;
    }
    r.payload = user + o;
    r.payload_len = len - o;
    *v = r;
    return TL_OK;
}

tl_status tl_downlink_parse_hk(const uint8_t *user, size_t len, tl_dl_hk *h)
{
    if (user == NULL || h == NULL)
        return TL_E_NULL;
    if (len < 44u)
        return TL_E_FORMAT;
    const uint32_t s = user[21];
    const uint32_t v = user[0];
    if ((v != 1u && v != TL_DL_HK_VERSION) || user[1] != TL_DL_KIND_HOUSEKEEPING || user[3] < 1u ||
        user[3] > TL_MAX_INPUTS || s < 1u || s > TL_MAX_FFT_STAGES + 1u ||
        len != (v == 1u ? TL_DL_HK_V1_OCTETS(s) : TL_DL_HK_OCTETS(s)))
        return TL_E_FORMAT;
    tl_dl_hk r;
    memset(&r, 0, sizeof r);
    r.version = user[0];
    r.kind = user[1];
    r.mode = user[2];
    r.inputs = user[3];
    r.config_id = tl_get_be32(user + 4);
    r.index = tl_get_be32(user + 8);
    r.firmware_version = tl_get_be32(user + 12);
    r.taps_crc = tl_get_be32(user + 16);
    r.table_status = user[20];
    r.fft_counters = (uint8_t)s;
    r.switch_steps = tl_get_be16(user + 22);
    r.spectra = tl_get_be32(user + 24);
    r.discarded = tl_get_be32(user + 28);
    for (uint32_t k = 0; k < 3u; k++)
        r.state_spectra[k] = tl_get_be32(user + 32 + 4u * k);
    size_t o = 44u;
    for (uint32_t i = 0; i < TL_MAX_INPUTS; i++) {
        tl_dl_hk_input *in = &r.in[i];
        in->adc_clips = tl_get_be32(user + o);
        in->adc_sumsq = tl_get_be64(user + o + 4u);
        in->adc_samples = tl_get_be64(user + o + 12u);
        in->pfb_sat = tl_get_be32(user + o + 20u);
        o += 24u;
        for (uint32_t k = 0; k < s; k++, o += 4u)
            in->fft_sat[k] = tl_get_be32(user + o);
        for (uint32_t b = 0; b < TL_ADC_HIST_BINS; b++, o += 4u)
            in->adc_hist[b] = tl_get_be32(user + o);
    }
    for (uint32_t st = 0; st < 3u; st++)
        for (uint32_t q = 0; q < 4u; q++, o += 4u)
            r.acc_sat[st][q] = tl_get_be32(user + o);
    if (v == TL_DL_HK_VERSION) {
        r.has_acq = 1u;
        r.blocks_seen = tl_get_be32(user + o);
        r.blocks_processed = tl_get_be32(user + o + 4u);
        r.blocks_dropped = tl_get_be32(user + o + 8u);
        r.samples_dropped = tl_get_be64(user + o + 12u);
        r.duty_ppm = tl_get_be32(user + o + 20u);
        r.gap_discarded = tl_get_be32(user + o + 24u);
        r.abandoned = tl_get_be32(user + o + 28u);
        o += TL_DL_HK_ACQ_OCTETS;
        r.scrub.passes = tl_get_be32(user + o);
        o += 4u;
        for (uint32_t g = 0; g < TL_SCRUB_REGIONS; g++, o += 4u)
            r.scrub.mismatches[g] = tl_get_be32(user + o);
        for (uint32_t g = 0; g < TL_SCRUB_REGIONS; g++, o += 4u)
            r.scrub.restores[g] = tl_get_be32(user + o);
        r.scrub.state_faults = tl_get_be32(user + o);
        r.scrub.last_bad = user[o + 4u];
        r.upset = user[o + 5u];
        if (r.scrub.last_bad > TL_SCRUB_LAST_STATE || r.upset > 1u)
            return TL_E_FORMAT;
    }
    *h = r;
    return TL_OK;
}

/* ---- spectral kurtosis blocks ------------------------------------------- */

typedef struct sk_ctx {
    const tl_sk_block *b;
    uint32_t input;
    uint32_t s2_shift;
} sk_ctx;

static uint64_t s2_shifted(const tl_sk_block *b, uint32_t input, uint32_t k, uint32_t shift)
{
    const uint64_t hi = b->s2_hi[input][k], lo = b->s2_lo[input][k];
    if (shift == 0u)
        return lo;
    return (hi << (64u - shift)) | (lo >> shift);
}

static tl_status try_sk(tl_downlink *d, const void *ctx, uint32_t first, uint32_t n, size_t *len)
{
    const sk_ctx *c = ctx;
    const tl_sk_block *b = c->b;
    uint8_t *u = d->user;
    u[TL_DL_OFF_VERSION] = (uint8_t)TL_DL_VERSION;
    u[TL_DL_OFF_KIND] = (uint8_t)TL_DL_KIND_SK;
    u[TL_DL_OFF_MODE] = d->cfg.mode;
    u[TL_DL_SK_OFF_INPUT] = (uint8_t)c->input;
    u[TL_DL_SK_OFF_ARITH] = (uint8_t)TL_ARITH_VERSION;
    u[TL_DL_SK_OFF_DET_SHIFT] = (uint8_t)b->det_shift;
    u[TL_DL_SK_OFF_S2_SHIFT] = (uint8_t)c->s2_shift;
    u[TL_DL_SK_OFF_FLAGS] = (uint8_t)(b->sat ? TL_DL_SK_F_SAT : 0u);
    tl_put_be32(u + TL_DL_SK_OFF_CONFIG_ID, d->cfg.config_id);
    tl_put_be32(u + TL_DL_SK_OFF_INDEX, b->index);
    tl_put_be32(u + TL_DL_SK_OFF_BLOCK, b->block);
    tl_put_be32(u + TL_DL_SK_OFF_SPECTRA, b->spectra);
    tl_put_be16(u + TL_DL_SK_OFF_CHANNELS, (uint16_t)b->channels);
    tl_put_be16(u + TL_DL_SK_OFF_FIRST, (uint16_t)first);
    tl_put_be16(u + TL_DL_SK_OFF_COUNT, (uint16_t)n);
    tl_put_be16(u + TL_DL_SK_OFF_ACCUMULATE, (uint16_t)(b->accumulate - 1u));
    /* S1 of the n channels, then S2 >> s2_shift, as one payload */
    for (uint32_t k = 0; k < n; k++) {
        d->ref[k] = b->s1[c->input][first + k];
        d->ref[n + k] = s2_shifted(b, c->input, first + k, c->s2_shift);
    }
    const size_t cap = TL_PACKET_MAX_USER(d->cfg.max_packet) - TL_DL_SK_HEADER_OCTETS;
    size_t w = 0;
    const tl_status st = tl_encode_lossless_u64(&d->enc, d->ref, 2u * n, d->cfg.transpose,
                                                u + TL_DL_SK_HEADER_OCTETS, cap, &w);
    *len = TL_DL_SK_HEADER_OCTETS + w;
    return st;
}

tl_status tl_downlink_sk(tl_downlink *d, const tl_sk_block *b, tl_downlink_sink sink, void *user)
{
    if (d == NULL || b == NULL || sink == NULL)
        return TL_E_NULL;
    if (d->initialised != TL_DOWNLINK_MAGIC)
        return TL_E_NOT_INIT;
    if (b->channels == 0u || b->channels > TL_MAX_CHANNELS || b->inputs < 1u || b->inputs > TL_MAX_INPUTS)
        return TL_E_POINTS;
    if (b->accumulate < 1u || b->accumulate > TL_SK_MAX_ACCUMULATE)
        return TL_E_SK;
    if (b->first_frame > UINT64_MAX / (2u * (uint64_t)b->channels))
        return TL_E_TIME_RANGE;
    tl_cuc t;
    tl_status st = tl_cuc_from_samples(d->cfg.epoch, b->first_frame * 2u * b->channels, d->cfg.sample_rate_hz, &t);
    if (st != TL_OK)
        return st;
    for (uint32_t i = 0; i < b->inputs; i++) {
        /* one S2 shift for the whole input: the bit length of the largest high word */
        uint64_t top = 0;
        for (uint32_t k = 0; k < b->channels; k++)
            top |= b->s2_hi[i][k];
        uint32_t shift = 0;
        while (shift < 64u && (top >> shift) != 0u)
            shift++;
        const sk_ctx ctx = { b, i, shift };
        uint32_t guess = TL_DL_SK_MAX_CHANNELS;
        for (uint32_t first = 0; first < b->channels;) {
            const uint32_t left = b->channels - first;
            const uint32_t top_n = left < TL_DL_SK_MAX_CHANNELS ? left : TL_DL_SK_MAX_CHANNELS;
            uint32_t n = 0;
            size_t len = 0;
            if ((st = fit_channels(d, try_sk, &ctx, first, top_n, guess, &n, &len)) != TL_OK)
                return st;
            if ((st = emit(d, d->cfg.apid_sk, t, len, sink, user)) != TL_OK)
                return st;
            add32(&d->stats.packets_sk, 1u);
            add64(&d->stats.octets_sk, TL_PACKET_LEN(len));
            first += n;
            guess = n + n / 8u + 1u;
        }
    }
    return TL_OK;
}

tl_status tl_downlink_parse_sk(const uint8_t *user, size_t len, tl_dl_sk *v)
{
    if (user == NULL || v == NULL)
        return TL_E_NULL;
    if (len < TL_DL_SK_HEADER_OCTETS + 1u)
        return TL_E_FORMAT;
    tl_dl_sk r;
    r.version = user[TL_DL_OFF_VERSION];
    r.kind = user[TL_DL_OFF_KIND];
    r.mode = user[TL_DL_OFF_MODE];
    r.input = user[TL_DL_SK_OFF_INPUT];
    r.arith = user[TL_DL_SK_OFF_ARITH];
    r.det_shift = user[TL_DL_SK_OFF_DET_SHIFT];
    r.s2_shift = user[TL_DL_SK_OFF_S2_SHIFT];
    r.flags = user[TL_DL_SK_OFF_FLAGS];
    r.config_id = tl_get_be32(user + TL_DL_SK_OFF_CONFIG_ID);
    r.index = tl_get_be32(user + TL_DL_SK_OFF_INDEX);
    r.block = tl_get_be32(user + TL_DL_SK_OFF_BLOCK);
    r.spectra = tl_get_be32(user + TL_DL_SK_OFF_SPECTRA);
    r.channels = tl_get_be16(user + TL_DL_SK_OFF_CHANNELS);
    r.first = tl_get_be16(user + TL_DL_SK_OFF_FIRST);
    r.count = tl_get_be16(user + TL_DL_SK_OFF_COUNT);
    r.accumulate = (uint32_t)tl_get_be16(user + TL_DL_SK_OFF_ACCUMULATE) + 1u;
    if (r.version != TL_DL_VERSION || r.kind != TL_DL_KIND_SK || r.input >= TL_MAX_INPUTS || r.s2_shift > 64u ||
        r.spectra < TL_SK_MIN_SPECTRA || r.spectra > TL_SK_MAX_SPECTRA || r.channels == 0u || r.channels > 32768u ||
        r.count == 0u || r.count > TL_DL_SK_MAX_CHANNELS || (uint32_t)r.first + (uint32_t)r.count > (uint32_t)r.channels)
        return TL_E_FORMAT;
    r.payload = user + TL_DL_SK_HEADER_OCTETS;
    r.payload_len = len - TL_DL_SK_HEADER_OCTETS;
    *v = r;
    return TL_OK;
}
