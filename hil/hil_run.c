/* hil_run.c - the target side of a run (see hil_run.h). */
#include "hil_run.h"

static void frame_out(void *user, const uint8_t *wire, size_t len)
{
    hil_run *r = user;
    r->octets_out += len;
    r->sink(r->user, wire, len);
}

static void packet_out(void *user, const uint8_t *packet, size_t len)
{
    hil_run *r = user;
    const tl_status st = tl_frame_put_packet(&r->fb, packet, len);
    if (st != TL_OK && r->frame_status == TL_OK)
        r->frame_status = st;
}

tl_status hil_run_start(hil_run *r, const tl_link_setup *s, const uint8_t *taps_image, size_t image_len,
                        tl_frame_sink sink, void *user)
{
    if (r == NULL || s == NULL || sink == NULL)
        return TL_E_NULL;
    /* The whole setup is checked before anything is written, and
     * tl_chain_init checks the table before it writes: a refused setup
     * leaves a running run exactly as it was. */
    tl_status st = tl_link_setup_check(s, NULL);
    if (st != TL_OK)
        return st;
    st = tl_chain_init(&r->chain, &s->chain, taps_image, image_len);
    if (st != TL_OK)
        return st;
    r->frame_status = TL_OK;
    r->products = 0;
    r->sk_blocks = 0;
    r->octets_out = 0;
    r->sink = sink;
    r->user = user;
    tl_downlink_config dc = s->dl;
    dc.config_id = tl_downlink_config_id(&r->chain.cfg, r->chain.taps.crc);
    st = tl_downlink_init(&r->dl, &dc);
    if (st != TL_OK)
        return st;
    return tl_frame_builder_init(&r->fb, s->frame_len, s->scid, s->vcid, frame_out, r);
}

tl_status hil_run_push(hil_run *r, const int16_t *in0, const int16_t *in1, size_t count)
{
    if (r == NULL)
        return TL_E_NULL;
    while (count > 0u) {
        size_t used = 0;
        tl_status st = tl_chain_push(&r->chain, in0, in1, count, &used);
        if (st != TL_OK)
            return st;
        in0 += used;
        if (in1 != NULL)
            in1 += used;
        count -= used;
        if (tl_chain_sk_ready(&r->chain)) {
            st = tl_chain_take_sk(&r->chain, &r->u.sk);
            if (st == TL_OK)
                st = tl_downlink_sk(&r->dl, &r->u.sk, packet_out, r);
            if (st == TL_OK)
                st = r->frame_status;
            if (st != TL_OK)
                return st;
            r->sk_blocks++;
        }
        if (tl_chain_ready(&r->chain)) {
            st = tl_chain_take(&r->chain, &r->u.product);
            if (st != TL_OK)
                return st;
            /* the table check the housekeeping reports: its CRC recomputed now */
            const int taps_ok = tl_taps_image_crc(&r->chain.taps) == r->chain.taps.crc;
            st = tl_downlink_product(&r->dl, &r->u.product, taps_ok, packet_out, r);
            if (st == TL_OK)
                st = r->frame_status;
            if (st != TL_OK)
                return st;
            r->products++;
        }
    }
    return TL_OK;
}

tl_status hil_run_finish(hil_run *r)
{
    if (r == NULL)
        return TL_E_NULL;
    if (r->frame_status != TL_OK)
        return r->frame_status;
    return tl_frame_flush(&r->fb);
}
