/*
 * fuzz_ground.c - libFuzzer target: the ground decoder (host/ground.h) on
 * arbitrary octets, in frames mode and in raw (space packet) mode.
 *
 * Input: two control octets, then the downlink octets.
 *   octet 0  bit 0: raw mode; bits 1-3: frame length (lens[] below);
 *            bits 4-5: products in flight (1, 2, 4, 16); bit 6: log limit 4
 *   octet 1  split: the second decode feeds blocks of 1 + 61 * octet1 octets
 *
 * The input is decoded twice: in one block, and in blocks of the split
 * size. ground.h: "Decode the next n octets of the input (any split gives
 * the same result)". Checked on every input (abort() is the failure):
 *   - both decodes give the same totals and the same products (a hash of
 *     every product's info, flags and values, in the order handed over);
 *   - every product: missing_total is the sum of missing[][], at most
 *     channels x states x quantities, 0 exactly when complete (with the
 *     housekeeping);
 *   - the decoder is clean only if no frame or packet was dropped.
 */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "ground.h"

typedef struct sink {
    uint64_t hash;
    uint64_t products;
} sink;

static void mix(sink *s, const void *p, size_t n)
{
    const uint8_t *b = p;
    for (size_t i = 0; i < n; i++) {
        s->hash ^= b[i];
        s->hash *= 0x100000001B3ull; /* FNV-1a 64 */
    }
}

static int on_product(void *user, const tl_product *p, const tl_ground_product_info *info,
                      tl_ground_product_note *note)
{
    (void)note;
    sink *s = user;
    s->products++;
    uint64_t sum = 0;
    for (unsigned st = 0; st < 3; st++)
        for (unsigned q = 0; q < 4; q++)
            sum += info->missing[st][q];
    if (sum != info->missing_total)
        abort();
    if (info->channels > TL_MAX_CHANNELS || info->states > 3 || info->quantities > 4)
        abort();
    if (info->missing_total > (uint64_t)info->channels * info->states * info->quantities)
        abort();
    if (info->complete && (info->missing_total != 0 || !info->has_hk))
        abort();
    mix(s, &info->config_id, sizeof info->config_id);
    mix(s, &info->index, sizeof info->index);
    mix(s, &info->done, sizeof info->done);
    mix(s, &info->complete, sizeof info->complete);
    mix(s, &info->missing_total, sizeof info->missing_total);
    mix(s, &info->science_packets, sizeof info->science_packets);
    mix(s, &info->sk_blocks, sizeof info->sk_blocks);
    mix(s, p->flags, info->channels);
    mix(s, p->auto_power[0], info->channels * sizeof p->auto_power[0][0]);
    char *json = tl_ground_product_json(info);
    if (json == NULL)
        abort();
    free(json);
    return 0;
}

static int decode(const tl_ground_config *c, const uint8_t *d, size_t n, size_t split, sink *s,
                  tl_ground_totals *totals, int *clean)
{
    char err[256];
    memset(s, 0, sizeof *s);
    s->hash = 0xCBF29CE484222325ull;
    tl_ground *g = tl_ground_open(c, on_product, s, err, sizeof err);
    if (g == NULL)
        abort(); /* the harness's configurations are all valid */
    for (size_t at = 0; at < n; at += split) {
        const size_t k = n - at < split ? n - at : split;
        if (tl_ground_feed(g, d + at, k, err, sizeof err) != 0)
            abort(); /* the callback never refuses */
    }
    if (tl_ground_finish(g, err, sizeof err) != 0)
        abort();
    *totals = *tl_ground_totals_of(g);
    *clean = tl_ground_clean(g);
    char summary[2048];
    (void)tl_ground_summary(g, "fuzz", summary, sizeof summary);
    tl_ground_close(g);
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static const uint32_t lens[8] = { 1024, 128, 2048, 256, 512, 223, 1115, 1024 };
    static const uint32_t flight[4] = { 1, 2, 4, 16 };
    if (size < 2)
        return 0;
    const uint8_t mode = data[0];
    tl_ground_config c;
    tl_ground_config_default(&c);
    c.raw = mode & 1u;
    c.frame_len = lens[(mode >> 1) & 7u];
    c.in_flight = flight[(mode >> 4) & 3u];
    c.log_limit = (mode & 0x40u) ? 4u : 1000u;
    const uint8_t *d = data + 2;
    const size_t n = size - 2;
    const size_t split = 1u + 61u * (size_t)data[1];

    sink s1, s2;
    tl_ground_totals t1, t2;
    int clean1, clean2;
    decode(&c, d, n, n > 0 ? n : 1, &s1, &t1, &clean1);
    decode(&c, d, n, split, &s2, &t2, &clean2);
    if (memcmp(&t1, &t2, sizeof t1) != 0 || s1.hash != s2.hash || s1.products != s2.products || clean1 != clean2)
        abort(); /* the split changed the result */
    if (t1.bytes != n)
        abort();
    if (clean1 && (t1.frames[TL_GF_BAD_FECF] || t1.frames[TL_GF_TRUNCATED] || t1.packets[TL_GP_CRC] ||
                   t1.packets[TL_GP_TRUNCATED] || t1.bytes_skipped || t1.products_incomplete))
        abort();
    return 0;
}
