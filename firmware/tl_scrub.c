/* tl_scrub.c - table and configuration scrubbing (see tl_scrub.h). */
#include "tl_scrub.h"
#include <string.h>
#include "tl_chain.h"
#include "tl_crc32c.h"

#define SPANS_MAX 12u

typedef struct span {
    size_t off; /* octets from the start of tl_chain */
    size_t len;
} span;

static uint32_t clamp(uint32_t v, uint32_t lo, uint32_t hi)
{
    return v < lo ? lo : (v > hi ? hi : v);
}

static void count(uint32_t *c)
{
    if (*c < UINT32_MAX)
        (*c)++;
}

/* The spans of region r, from compile-time offsets and the armed geometry
 * clamped to the maxima: every span lies inside its array whatever the
 * scrubber's own fields hold. Returns the number of spans. */
static uint32_t spans(const tl_scrub *s, uint32_t r, span *sp)
{
    const uint32_t N = clamp(s->points, TL_MIN_POINTS, TL_MAX_POINTS);
    const uint32_t P = clamp(s->taps, 1u, TL_MAX_TAPS);
    const uint32_t L = N / 2u;
    uint32_t n = 0;
    switch (r) {
    case TL_SCRUB_TAPS:
        sp[n++] = (span){ offsetof(tl_chain, taps), offsetof(tl_taps, coef) + 4u * (size_t)P * N };
        break;
    case TL_SCRUB_FFT:
        sp[n++] = (span){ offsetof(tl_chain, fft) + offsetof(tl_fft, perm), 2u * (size_t)L };
        sp[n++] = (span){ offsetof(tl_chain, fft) + offsetof(tl_fft, tw),
                          4u * (size_t)clamp(s->tw_used, 0u, 2u * TL_MAX_CHANNELS) };
        sp[n++] = (span){ offsetof(tl_chain, fft) + offsetof(tl_fft, split_tw), 4u * ((size_t)L + 2u) };
        break;
    case TL_SCRUB_CONFIG:
        sp[n++] = (span){ offsetof(tl_chain, cfg), sizeof(tl_config) };
        sp[n++] = (span){ offsetof(tl_chain, clip_hi), sizeof(uint16_t) };
        for (uint32_t i = 0; i < TL_MAX_INPUTS; i++)
            sp[n++] = (span){ offsetof(tl_chain, pfb) + i * sizeof(tl_pfb), offsetof(tl_pfb, newest) };
        sp[n++] = (span){ offsetof(tl_chain, fft), offsetof(tl_fft, perm) };
        sp[n++] = (span){ offsetof(tl_chain, sw), offsetof(tl_switch, step) };
        sp[n++] = (span){ offsetof(tl_chain, sk) + offsetof(tl_sk, m), 2u * sizeof(uint32_t) };
        sp[n++] = (span){ offsetof(tl_chain, sk) + offsetof(tl_sk, channels), 2u * sizeof(uint32_t) };
        for (uint32_t st = 0; st < TL_STATES; st++)
            sp[n++] = (span){ offsetof(tl_chain, integ) + st * sizeof(tl_integrator) + offsetof(tl_integrator, channels),
                              sizeof(uint32_t) };
        break;
    default:
        break;
    }
    return n;
}

static size_t region_len(const tl_scrub *s, uint32_t r)
{
    span sp[SPANS_MAX];
    const uint32_t n = spans(s, r, sp);
    size_t t = 0;
    for (uint32_t i = 0; i < n; i++)
        t += sp[i].len;
    return t;
}

/* Fold octets [from, to) of region r (spans concatenated) into crc. */
static uint32_t fold(const tl_scrub *s, const tl_chain *c, uint32_t r, size_t from, size_t to, uint32_t crc)
{
    span sp[SPANS_MAX];
    const uint32_t n = spans(s, r, sp);
    const uint8_t *base = (const uint8_t *)c;
    size_t at = 0;
    for (uint32_t i = 0; i < n && at < to; i++) {
        const size_t a = from > at ? from - at : 0u;
        const size_t b = to - at < sp[i].len ? to - at : sp[i].len;
        if (a < b)
            crc = tl_crc32c_update(crc, base + sp[i].off + a, b - a);
        at += sp[i].len;
    }
    return crc;
}

uint32_t tl_scrub_region_crc(const tl_scrub *s, const tl_chain *c, uint32_t r)
{
    if (s == NULL || c == NULL || r >= TL_SCRUB_REGIONS)
        return 0u;
    return tl_crc32c_final(fold(s, c, r, 0u, region_len(s, r), TL_CRC32C_INIT));
}

/* CRC-32C of the protected copy (TAPS octets then CONFIG octets). */
static uint32_t copy_crc(const tl_scrub *s)
{
    uint32_t crc = tl_crc32c_update(TL_CRC32C_INIT, s->taps_copy, region_len(s, TL_SCRUB_TAPS));
    crc = tl_crc32c_update(crc, s->config_copy, region_len(s, TL_SCRUB_CONFIG));
    return tl_crc32c_final(crc);
}

/* Copy region r of the chain into buf. */
static void save(const tl_scrub *s, const tl_chain *c, uint32_t r, uint8_t *buf)
{
    span sp[SPANS_MAX];
    const uint32_t n = spans(s, r, sp);
    const uint8_t *base = (const uint8_t *)c;
    size_t at = 0;
    for (uint32_t i = 0; i < n; i++) {
        memcpy(buf + at, base + sp[i].off, sp[i].len);
        at += sp[i].len;
    }
}

/* Copy buf back over region r of the chain. */
static void load(const tl_scrub *s, tl_chain *c, uint32_t r, const uint8_t *buf)
{
    span sp[SPANS_MAX];
    const uint32_t n = spans(s, r, sp);
    uint8_t *base = (uint8_t *)c;
    size_t at = 0;
    for (uint32_t i = 0; i < n; i++) {
        memcpy(base + sp[i].off, buf + at, sp[i].len);
        at += sp[i].len;
    }
}

/* radix-4 twiddle words of a plan: 6 per k < n_prev per radix-4 stage */
static uint32_t twiddles_used(const tl_fft *f)
{
    uint32_t n_prev = 1u, words = 0u;
    for (uint32_t i = 0; i < f->stages && i < TL_MAX_FFT_STAGES; i++) {
        if (f->radix[i] == 4u)
            words += 6u * n_prev;
        n_prev *= f->radix[i];
    }
    return words;
}

tl_status tl_scrub_arm(tl_scrub *s, const tl_chain *c, uint32_t period, int keep_counts)
{
    if (s == NULL || c == NULL)
        return TL_E_NULL;
    if (period > TL_SCRUB_MAX_PERIOD)
        return TL_E_SCRUB;
    s->period = period == 0u ? TL_SCRUB_DEFAULT_PERIOD : period;
    s->countdown = s->period;
    s->region = TL_SCRUB_TAPS;
    s->offset = 0u;
    s->crc = TL_CRC32C_INIT;
    s->touched = 0u;
    s->touched_copy = 0u;
    s->points = c->cfg.points;
    s->taps = c->cfg.taps;
    s->tw_used = twiddles_used(&c->fft);
    for (uint32_t r = 0; r < TL_SCRUB_REGIONS; r++)
        s->ref[r] = tl_scrub_region_crc(s, c, r);
    save(s, c, TL_SCRUB_TAPS, s->taps_copy);
    save(s, c, TL_SCRUB_CONFIG, s->config_copy);
    s->copy_crc = copy_crc(s);
    if (!keep_counts)
        memset(&s->counts, 0, sizeof s->counts);
    return TL_OK;
}

/* Restore region r; 1 when it holds the protected bytes afterwards. If it
 * does and its CRC still differs from the stored one, the stored CRC was
 * the corrupted word: it is re-derived from the restored region (which is
 * the protected copy, checked by its own CRC, or the plan rebuilt from
 * flash and the checked configuration). */
static int restore(tl_scrub *s, tl_chain *c, uint32_t r)
{
    if (r == TL_SCRUB_FFT) {
        /* rebuild the plan from the constant twiddle table and the
         * (already checked) configuration; the plan's scalars come out as
         * they were, so CONFIG stays good */
        memset(&c->fft, 0, offsetof(tl_fft, work));
        if (tl_fft_init(&c->fft, c->cfg.points, c->cfg.fft_scale_mask, (tl_rounding)c->cfg.rounding) != TL_OK)
            return 0;
    } else {
        if (copy_crc(s) != s->copy_crc)
            return 0; /* the protected copy is bad too: refuse */
        load(s, c, r, r == TL_SCRUB_TAPS ? s->taps_copy : s->config_copy);
    }
    s->ref[r] = tl_scrub_region_crc(s, c, r);
    return 1;
}

static void found_bad(tl_scrub *s, tl_chain *c, uint32_t r)
{
    count(&s->counts.mismatches[r]);
    s->counts.last_bad = 1u + r;
    s->touched = 1u;
    s->touched_copy = 1u;
    if (restore(s, c, r))
        count(&s->counts.restores[r]);
}

int tl_scrub_check(tl_scrub *s, tl_chain *c, uint32_t r)
{
    if (s == NULL || c == NULL || r >= TL_SCRUB_REGIONS)
        return 0;
    if (tl_scrub_region_crc(s, c, r) == s->ref[r])
        return 0;
    found_bad(s, c, r);
    return 1;
}

/* One slice of the table walk. Returns the bad-region mask. */
static uint32_t slice(tl_scrub *s, tl_chain *c)
{
    if (s->region != TL_SCRUB_TAPS && s->region != TL_SCRUB_FFT) {
        s->region = TL_SCRUB_TAPS; /* a flipped cursor: start the walk again */
        s->offset = 0u;
        s->crc = TL_CRC32C_INIT;
    }
    const uint32_t r = s->region;
    const size_t len = region_len(s, r);
    if (s->offset > len) {
        s->offset = 0u;
        s->crc = TL_CRC32C_INIT;
    }
    const size_t to = len - s->offset < TL_SCRUB_SLICE_OCTETS ? len : s->offset + TL_SCRUB_SLICE_OCTETS;
    s->crc = fold(s, c, r, s->offset, to, s->crc);
    s->offset = (uint32_t)to;
    if (to < len)
        return 0u;
    uint32_t bad = 0u;
    if (tl_crc32c_final(s->crc) != s->ref[r]) {
        found_bad(s, c, r);
        bad = 1u << r;
    }
    s->offset = 0u;
    s->crc = TL_CRC32C_INIT;
    if (r == TL_SCRUB_FFT) {
        s->region = TL_SCRUB_TAPS;
        count(&s->counts.passes);
    } else {
        s->region = TL_SCRUB_FFT;
    }
    return bad;
}

uint32_t tl_scrub_spectrum(tl_scrub *s, tl_chain *c)
{
    if (s == NULL || c == NULL)
        return 0u;
    if (s->countdown > 1u && s->countdown <= TL_SCRUB_MAX_PERIOD) {
        s->countdown--;
        return 0u;
    }
    s->countdown = clamp(s->period, 1u, TL_SCRUB_MAX_PERIOD);
    return slice(s, c);
}

uint32_t tl_scrub_all(tl_scrub *s, tl_chain *c)
{
    if (s == NULL || c == NULL)
        return 0u;
    uint32_t bad = 0u;
    /* CONFIG first: the FFT restore rebuilds from the configuration */
    if (tl_scrub_check(s, c, TL_SCRUB_CONFIG))
        bad |= 1u << TL_SCRUB_CONFIG;
    if (tl_scrub_check(s, c, TL_SCRUB_TAPS))
        bad |= 1u << TL_SCRUB_TAPS;
    if (tl_scrub_check(s, c, TL_SCRUB_FFT))
        bad |= 1u << TL_SCRUB_FFT;
    return bad;
}

void tl_scrub_state_fault(tl_scrub *s)
{
    if (s == NULL)
        return;
    count(&s->counts.state_faults);
    s->counts.last_bad = TL_SCRUB_LAST_STATE;
    s->touched = 1u;
    s->touched_copy = 1u;
}

_Static_assert(sizeof(tl_config) + sizeof(uint16_t) + TL_MAX_INPUTS * offsetof(tl_pfb, newest) + offsetof(tl_fft, perm)
                       + offsetof(tl_switch, step) + 4u * sizeof(uint32_t) + TL_STATES * sizeof(uint32_t)
                   <= TL_SCRUB_CONFIG_OCTETS,
               "TL_SCRUB_CONFIG_OCTETS too small for the CONFIG region");
_Static_assert(offsetof(tl_taps, coef) + 4u * (size_t)TL_TAPS_MAX_COEFS <= sizeof(((tl_scrub *)0)->taps_copy),
               "taps copy too small");
