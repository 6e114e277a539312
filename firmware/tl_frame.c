/* tl_frame.c - TM transfer frame builder, parser and ASM search (see tl_frame.h). */
#include "tl_frame.h"

#include <string.h>
#include "tl_bytes.h"
#include "tl_packet.h"

_Static_assert(TL_FRAME_DATA_LEN(TL_FRAME_MAX_LEN) < TL_FRAME_FHP_IDLE, "FHP values above any offset");
_Static_assert(TL_FRAME_DATA_LEN(TL_FRAME_MIN_LEN) > TL_PACKET_ANY_MIN_LEN, "a flush fits an idle packet or fill");

static const uint8_t frame_asm[TL_FRAME_ASM_OCTETS] = {
    (uint8_t)(TL_FRAME_ASM >> 24), (uint8_t)(TL_FRAME_ASM >> 16), (uint8_t)(TL_FRAME_ASM >> 8), (uint8_t)TL_FRAME_ASM
};

static int builder_ready(const tl_frame_builder *fb)
{
    return fb->frame_len >= TL_FRAME_MIN_LEN && fb->frame_len <= TL_FRAME_MAX_LEN && fb->sink != NULL;
}

/* Start of the frame (first header octet) inside buf. */
static uint8_t *frame_start(tl_frame_builder *fb)
{
    return fb->buf + TL_FRAME_ASM_OCTETS;
}

static uint8_t *data_field(tl_frame_builder *fb)
{
    return frame_start(fb) + TL_FRAME_OFF_DATA;
}

tl_status tl_frame_builder_check(uint32_t frame_len, uint32_t scid, uint32_t vcid)
{
    if (frame_len < TL_FRAME_MIN_LEN || frame_len > TL_FRAME_MAX_LEN)
        return TL_E_FRAME_LEN;
    if (scid > TL_FRAME_SCID_MAX || vcid > TL_FRAME_VCID_MAX)
        return TL_E_FIELD_RANGE;
    return TL_OK;
}

tl_status tl_frame_builder_init(tl_frame_builder *fb, uint32_t frame_len, uint16_t scid, uint8_t vcid,
                                tl_frame_sink sink, void *user)
{
    if (fb == NULL || sink == NULL)
        return TL_E_NULL;
    const tl_status st = tl_frame_builder_check(frame_len, scid, vcid);
    if (st != TL_OK)
        return st;
    fb->frame_len = frame_len;
    fb->scid = scid;
    fb->vcid = vcid;
    fb->sink = sink;
    fb->user = user;
    tl_frame_builder_reset(fb);
    return TL_OK;
}

void tl_frame_builder_reset(tl_frame_builder *fb)
{
    fb->mc_count = 0;
    fb->vc_count = 0;
    fb->idle_count = 0;
    fb->fill = 0;
    fb->fhp = TL_FRAME_FHP_NONE;
    fb->frames = 0;
    memset(fb->buf, 0, sizeof fb->buf);
    memcpy(fb->buf, frame_asm, TL_FRAME_ASM_OCTETS);
}

/* The data field is full: write header and FECF, hand the frame over, start the next. */
static void emit_frame(tl_frame_builder *fb)
{
    uint8_t *f = frame_start(fb);
    const uint32_t id = ((uint32_t)TL_FRAME_VERSION << TL_FRAME_VERSION_SHIFT)
                        | ((uint32_t)fb->scid << TL_FRAME_SCID_SHIFT) | ((uint32_t)fb->vcid << TL_FRAME_VCID_SHIFT);
    /* OCF flag, secondary header, sync and packet order flags all 0 */
    const uint32_t status = ((uint32_t)TL_FRAME_SEG_ID_NONE << TL_FRAME_SEG_ID_SHIFT) | (fb->fhp & TL_FRAME_FHP_MASK);
    tl_put_be16(f + TL_FRAME_OFF_ID, (uint16_t)id);
    f[TL_FRAME_OFF_MC_COUNT] = fb->mc_count;
    f[TL_FRAME_OFF_VC_COUNT] = fb->vc_count;
    tl_put_be16(f + TL_FRAME_OFF_STATUS, (uint16_t)status);
    const size_t fecf_at = (size_t)fb->frame_len - TL_FRAME_FECF_OCTETS;
    tl_put_be16(f + fecf_at, tl_crc16(f, fecf_at));
    fb->sink(fb->user, fb->buf, TL_FRAME_WIRE_LEN(fb->frame_len));
    fb->mc_count = (uint8_t)(fb->mc_count + 1u);
    fb->vc_count = (uint8_t)(fb->vc_count + 1u);
    fb->frames++;
    fb->fill = 0;
    fb->fhp = TL_FRAME_FHP_NONE;
}

tl_status tl_frame_put_packet(tl_frame_builder *fb, const uint8_t *pkt, size_t len)
{
    if (fb == NULL || pkt == NULL)
        return TL_E_NULL;
    if (!builder_ready(fb))
        return TL_E_NOT_INIT;
    if (len < TL_PACKET_ANY_MIN_LEN || len > TL_PACKET_ANY_MAX_LEN
        || (size_t)TL_PACKET_PRIMARY_OCTETS + (size_t)tl_get_be16(pkt + TL_PACKET_OFF_LENGTH) + 1u != len)
        return TL_E_FORMAT;
    const size_t data_len = TL_FRAME_DATA_LEN(fb->frame_len);
    if (fb->fhp == TL_FRAME_FHP_NONE)
        fb->fhp = fb->fill; /* the first packet to start in this frame; fill < data_len here */
    size_t done = 0;
    while (done < len) {
        size_t n = data_len - fb->fill;
        if (n > len - done)
            n = len - done;
        memcpy(data_field(fb) + fb->fill, pkt + done, n);
        fb->fill += (uint32_t)n;
        done += n;
        if (fb->fill == data_len)
            emit_frame(fb);
    }
    return TL_OK;
}

tl_status tl_frame_flush(tl_frame_builder *fb)
{
    if (fb == NULL)
        return TL_E_NULL;
    if (!builder_ready(fb))
        return TL_E_NOT_INIT;
    if (fb->fill == 0u)
        return TL_OK;
    const size_t left = TL_FRAME_DATA_LEN(fb->frame_len) - fb->fill;
    uint8_t *at = data_field(fb) + fb->fill;
    if (left >= TL_PACKET_ANY_MIN_LEN) {
        if (fb->fhp == TL_FRAME_FHP_NONE)
            fb->fhp = fb->fill;
        (void)tl_packet_write_idle(&fb->idle_count, left, at, left); /* cannot fail: 7 <= left <= 2040 */
    } else {
        memset(at, TL_FRAME_FILL_OCTET, left);
    }
    emit_frame(fb);
    return TL_OK;
}

tl_status tl_frame_put_idle_frame(tl_frame_builder *fb)
{
    const tl_status st = tl_frame_flush(fb);
    if (st != TL_OK)
        return st;
    memset(data_field(fb), TL_FRAME_FILL_OCTET, TL_FRAME_DATA_LEN(fb->frame_len));
    fb->fhp = TL_FRAME_FHP_IDLE;
    emit_frame(fb);
    return TL_OK;
}

tl_status tl_frame_parse(const uint8_t *bytes, size_t avail, uint32_t frame_len, tl_frame_view *view)
{
    if (bytes == NULL || view == NULL)
        return TL_E_NULL;
    if (frame_len < TL_FRAME_MIN_LEN || frame_len > TL_FRAME_MAX_LEN)
        return TL_E_FRAME_LEN;
    if (avail < TL_FRAME_WIRE_LEN(frame_len))
        return TL_E_SPACE;
    if (memcmp(bytes, frame_asm, TL_FRAME_ASM_OCTETS) != 0)
        return TL_E_FORMAT;
    const uint8_t *f = bytes + TL_FRAME_ASM_OCTETS;
    const uint32_t id = tl_get_be16(f + TL_FRAME_OFF_ID);
    const uint32_t status = tl_get_be16(f + TL_FRAME_OFF_STATUS);
    if (((id & TL_FRAME_VERSION_MASK) >> TL_FRAME_VERSION_SHIFT) != TL_FRAME_VERSION
        || (id & TL_FRAME_OCF_FLAG_MASK) != 0u || (status & TL_FRAME_SEC_FLAG_MASK) != 0u)
        return TL_E_FORMAT;
    if (tl_crc16(f, frame_len) != 0u) /* residue over the frame and its FECF */
        return TL_E_FORMAT;
    view->scid = (uint16_t)((id & TL_FRAME_SCID_MASK) >> TL_FRAME_SCID_SHIFT);
    view->vcid = (uint8_t)((id & TL_FRAME_VCID_MASK) >> TL_FRAME_VCID_SHIFT);
    view->mc_count = f[TL_FRAME_OFF_MC_COUNT];
    view->vc_count = f[TL_FRAME_OFF_VC_COUNT];
    view->sync_flag = (uint8_t)((status & TL_FRAME_SYNC_FLAG_MASK) != 0u);
    view->order_flag = (uint8_t)((status & TL_FRAME_ORDER_FLAG_MASK) != 0u);
    view->seg_id = (uint8_t)((status & TL_FRAME_SEG_ID_MASK) >> TL_FRAME_SEG_ID_SHIFT);
    view->fhp = (uint16_t)(status & TL_FRAME_FHP_MASK);
    view->data = f + TL_FRAME_OFF_DATA;
    view->data_len = TL_FRAME_DATA_LEN(frame_len);
    return TL_OK;
}

tl_status tl_frame_find_asm(const uint8_t *bytes, size_t avail, size_t *offset)
{
    if (bytes == NULL || offset == NULL)
        return TL_E_NULL;
    for (size_t p = 0; p < avail; p++) {
        size_t k = 0;
        while (k < TL_FRAME_ASM_OCTETS && p + k < avail && bytes[p + k] == frame_asm[k])
            k++;
        if (k == TL_FRAME_ASM_OCTETS) {
            *offset = p;
            return TL_OK;
        }
        if (p + k == avail) { /* the tail from p is a proper prefix of the ASM */
            *offset = p;
            return TL_E_SPACE;
        }
    }
    *offset = avail;
    return TL_E_SPACE;
}
