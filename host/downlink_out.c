/* downlink_out.c - packets and frames of a run (downlink_out.h). */
#include "downlink_out.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "atomic_file.h"
#include "bytebuf.h"
#include "tl_downlink.h"
#include "tl_frame.h"

typedef struct sink_ctx {
    tl_bytebuf packets, frames;
    tl_frame_builder *fb;
    tl_status frame_st;
} sink_ctx;

static void frame_sink(void *user, const uint8_t *wire, size_t len)
{
    tl_bytebuf_put(&((sink_ctx *)user)->frames, wire, len);
}

static void packet_sink(void *user, const uint8_t *pkt, size_t len)
{
    sink_ctx *c = user;
    tl_bytebuf_put(&c->packets, pkt, len);
    const tl_status st = tl_frame_put_packet(c->fb, pkt, len);
    if (st != TL_OK && c->frame_st == TL_OK)
        c->frame_st = st;
}

int tl_downlink_out_config(const tl_scenario *s, const tl_product *p, tl_downlink_config *dc, char *err, size_t cap)
{
    tl_downlink_config_default(dc);
    dc->apid_science = (uint16_t)s->dl_apid_science;
    dc->apid_hk = (uint16_t)s->dl_apid_hk;
    dc->apid_sk = (uint16_t)s->dl_apid_sk;
    dc->max_packet = s->dl_max_packet;
    dc->encoding = s->dl_encoding ? TL_ENCODE_ID_BOUNDED : TL_ENCODE_ID_LOSSLESS;
    dc->transpose = s->dl_transpose ? TL_ENCODE_BIT_PLANES : TL_ENCODE_BYTE_SHUFFLE;
    dc->fraction_q16 = (uint32_t)(s->dl_fraction * 65536.0 + 0.5);
    dc->block = s->dl_block;
    dc->mode = (uint8_t)s->dl_mode;
    tl_config c = s->cfg;
    c.fft_scale_mask = p->fft_scale_mask;
    c.det_shift = p->det_shift;
    dc->config_id = tl_downlink_config_id(&c, p->taps_crc);
    dc->sample_rate_hz = (uint32_t)(s->sky.sample_rate_hz + 0.5);
    if (dc->sample_rate_hz == 0u) {
        snprintf(err, cap, "downlink: sample rate %g Hz is below 1 Hz", s->sky.sample_rate_hz);
        return -1;
    }
    return 0;
}

int tl_downlink_out_make(const tl_scenario *s, const tl_product *p, tl_dl_result *res, uint8_t **packets,
                         size_t *packets_len, uint8_t **frames, size_t *frames_len, char *err, size_t cap)
{
    return tl_downlink_out_make_all(s, p, NULL, 0, res, packets, packets_len, frames, frames_len, err, cap);
}

int tl_downlink_out_make_all(const tl_scenario *s, const tl_product *p, const tl_sk_block *blocks, uint32_t nblocks,
                             tl_dl_result *res, uint8_t **packets, size_t *packets_len, uint8_t **frames,
                             size_t *frames_len, char *err, size_t cap)
{
    memset(res, 0, sizeof *res);
    tl_downlink_config dc;
    if (tl_downlink_out_config(s, p, &dc, err, cap) != 0)
        return -1;
    tl_downlink *d = malloc(sizeof *d);
    tl_frame_builder *fb = malloc(sizeof *fb);
    sink_ctx ctx;
    memset(&ctx, 0, sizeof ctx);
    ctx.fb = fb;
    int rc = -1;
    if (d == NULL || fb == NULL) {
        snprintf(err, cap, "downlink: out of memory");
        goto out;
    }
    tl_status st = tl_downlink_init(d, &dc);
    if (st == TL_OK)
        st = tl_frame_builder_init(fb, s->dl_frame_len, (uint16_t)s->dl_scid, (uint8_t)s->dl_vcid, frame_sink, &ctx);
    for (uint32_t b = 0; st == TL_OK && b < nblocks; b++)
        st = tl_downlink_sk(d, &blocks[b], packet_sink, &ctx);
    if (st == TL_OK)
        st = tl_downlink_product(d, p, 1, packet_sink, &ctx);
    if (st == TL_OK)
        st = ctx.frame_st;
    if (st == TL_OK)
        st = tl_frame_flush(fb);
    if (st != TL_OK) {
        snprintf(err, cap, "downlink: %s (%s)", tl_status_text(st), tl_status_name(st));
        goto out;
    }
    if (ctx.packets.failed || ctx.frames.failed) {
        snprintf(err, cap, "downlink: out of memory");
        goto out;
    }
    res->done = 1;
    res->config_id = dc.config_id;
    res->packets_science = d->stats.packets_science;
    res->packets_hk = d->stats.packets_hk;
    res->octets_science = d->stats.octets_science;
    res->octets_hk = d->stats.octets_hk;
    res->octets_raw = d->stats.octets_raw;
    res->packets_sk = d->stats.packets_sk;
    res->octets_sk = d->stats.octets_sk;
    res->frames = fb->frames;
    res->octets_frames = ctx.frames.len;
    if (packets != NULL) {
        *packets = ctx.packets.p;
        *packets_len = ctx.packets.len;
        ctx.packets.p = NULL;
    }
    if (frames != NULL) {
        *frames = ctx.frames.p;
        *frames_len = ctx.frames.len;
        ctx.frames.p = NULL;
    }
    rc = 0;
out:
    free(ctx.packets.p);
    free(ctx.frames.p);
    free(d);
    free(fb);
    return rc;
}

typedef struct bytes {
    const uint8_t *p;
    size_t n;
} bytes;

static int write_bytes(FILE *f, void *ctx)
{
    const bytes *b = ctx;
    return fwrite(b->p, 1, b->n, f) == b->n ? 0 : -1;
}

int tl_downlink_out_write(const char *dir, const tl_scenario *s, const tl_product *p, const tl_sk_block *blocks,
                          uint32_t nblocks, tl_dl_result *res, char *err, size_t cap)
{
    uint8_t *pk = NULL, *fr = NULL;
    size_t pl = 0, fl = 0;
    if (tl_downlink_out_make_all(s, p, blocks, nblocks, res, &pk, &pl, &fr, &fl, err, cap) != 0)
        return -1;
    char path[4400];
    bytes b = { pk, pl };
    snprintf(path, sizeof path, "%s/packets.bin", dir);
    int rc = tl_atomic_write(path, write_bytes, &b, err, cap);
    if (rc == 0) {
        b.p = fr;
        b.n = fl;
        snprintf(path, sizeof path, "%s/frames.bin", dir);
        rc = tl_atomic_write(path, write_bytes, &b, err, cap);
    }
    free(pk);
    free(fr);
    return rc;
}
