/* tl_packet.c - CCSDS space packet writer and parser (see tl_packet.h). */
#include "tl_packet.h"

#include <string.h>
#include "tl_bytes.h"

_Static_assert(TL_PACKET_OVERHEAD == 15u, "6 primary + 7 secondary + 2 CRC octets");
_Static_assert(TL_PACKET_OFF_USER == TL_PACKET_OFF_TIME + TL_PACKET_SECONDARY_OCTETS, "layout");
_Static_assert(TL_PACKET_APID_IDLE == TL_PACKET_APID_MASK, "idle APID is all ones");

/* Octets in the data field of a telemetry packet besides the user data. */
#define TL_PACKET_DATA_FIELD_EXTRA (TL_PACKET_SECONDARY_OCTETS + TL_PACKET_PEC_OCTETS)

tl_status tl_packet_header_encode(const tl_packet_header *h, uint8_t *dst, size_t dst_cap)
{
    if (h == NULL || dst == NULL)
        return TL_E_NULL;
    if (dst_cap < TL_PACKET_PRIMARY_OCTETS)
        return TL_E_SPACE;
    if (h->version > 7u || h->type > 1u || h->sec_flag > 1u || h->apid > TL_PACKET_APID_MASK
        || h->seq_flags > 3u || h->count > TL_PACKET_COUNT_MASK)
        return TL_E_FIELD_RANGE;
    const uint32_t id = ((uint32_t)h->version << TL_PACKET_VERSION_SHIFT)
                        | ((uint32_t)h->type << TL_PACKET_TYPE_SHIFT)
                        | ((uint32_t)h->sec_flag << TL_PACKET_SEC_FLAG_SHIFT) | (uint32_t)h->apid;
    const uint32_t seq = ((uint32_t)h->seq_flags << TL_PACKET_SEQ_FLAGS_SHIFT) | (uint32_t)h->count;
    tl_put_be16(dst + TL_PACKET_OFF_ID, (uint16_t)id);
    tl_put_be16(dst + TL_PACKET_OFF_SEQ, (uint16_t)seq);
    tl_put_be16(dst + TL_PACKET_OFF_LENGTH, h->data_len);
    return TL_OK;
}

tl_status tl_packet_header_decode(const uint8_t *src, size_t avail, tl_packet_header *h)
{
    if (src == NULL || h == NULL)
        return TL_E_NULL;
    if (avail < TL_PACKET_PRIMARY_OCTETS)
        return TL_E_SPACE;
    const uint32_t id = tl_get_be16(src + TL_PACKET_OFF_ID);
    const uint32_t seq = tl_get_be16(src + TL_PACKET_OFF_SEQ);
    h->version = (uint8_t)((id & TL_PACKET_VERSION_MASK) >> TL_PACKET_VERSION_SHIFT);
    h->type = (uint8_t)((id & TL_PACKET_TYPE_MASK) >> TL_PACKET_TYPE_SHIFT);
    h->sec_flag = (uint8_t)((id & TL_PACKET_SEC_FLAG_MASK) >> TL_PACKET_SEC_FLAG_SHIFT);
    h->apid = (uint16_t)(id & TL_PACKET_APID_MASK);
    h->seq_flags = (uint8_t)((seq & TL_PACKET_SEQ_FLAGS_MASK) >> TL_PACKET_SEQ_FLAGS_SHIFT);
    h->count = (uint16_t)(seq & TL_PACKET_COUNT_MASK);
    h->data_len = tl_get_be16(src + TL_PACKET_OFF_LENGTH);
    return TL_OK;
}

/* Whole packet length announced by a decoded header. */
static size_t packet_len_of(const tl_packet_header *h)
{
    return (size_t)TL_PACKET_PRIMARY_OCTETS + (size_t)h->data_len + 1u;
}

tl_status tl_packet_writer_init(tl_packet_writer *w, uint32_t max_len)
{
    if (w == NULL)
        return TL_E_NULL;
    if (max_len < TL_PACKET_MIN_MAX_LEN || max_len > TL_PACKET_MAX_LEN)
        return TL_E_PACKET_LEN;
    w->max_len = max_len;
    tl_packet_writer_reset(w);
    return TL_OK;
}

void tl_packet_writer_reset(tl_packet_writer *w)
{
    w->apids = 0;
    for (uint32_t i = 0; i < TL_PACKET_MAX_APIDS; i++) {
        w->apid[i] = 0;
        w->count[i] = 0;
    }
}

/* Slot of apid, or TL_PACKET_MAX_APIDS if it has none and none is free. */
static uint32_t writer_slot(const tl_packet_writer *w, uint16_t apid)
{
    const uint32_t used = w->apids <= TL_PACKET_MAX_APIDS ? w->apids : TL_PACKET_MAX_APIDS;
    for (uint32_t i = 0; i < used; i++)
        if (w->apid[i] == apid)
            return i;
    return used; /* the next free slot, or TL_PACKET_MAX_APIDS when full */
}

tl_status tl_packet_write(tl_packet_writer *w, uint16_t apid, tl_cuc time, const uint8_t *user, size_t len,
                          uint8_t *dst, size_t dst_cap, size_t *written)
{
    if (w == NULL || dst == NULL || (user == NULL && len > 0u))
        return TL_E_NULL;
    if (w->max_len < TL_PACKET_MIN_MAX_LEN || w->max_len > TL_PACKET_MAX_LEN)
        return TL_E_NOT_INIT;
    if (apid > TL_PACKET_APID_MAX)
        return TL_E_APID;
    const uint32_t slot = writer_slot(w, apid);
    if (slot >= TL_PACKET_MAX_APIDS)
        return TL_E_APID_FULL;
    if (len > TL_PACKET_MAX_USER(w->max_len))
        return TL_E_PACKET_LEN;
    const size_t total = TL_PACKET_LEN(len);
    if (dst_cap < total)
        return TL_E_SPACE;

    if (slot == w->apids) { /* first packet of this APID: take the free slot */
        w->apid[slot] = apid;
        w->count[slot] = 0;
        w->apids = slot + 1u;
    }
    const tl_packet_header h = {
        .version = TL_PACKET_VERSION,
        .type = TL_PACKET_TYPE_TM,
        .sec_flag = 1u,
        .apid = apid,
        .seq_flags = TL_PACKET_SEQ_UNSEGMENTED,
        .count = (uint16_t)(w->count[slot] & TL_PACKET_COUNT_MASK),
        .data_len = (uint16_t)(len + TL_PACKET_DATA_FIELD_EXTRA - 1u),
    };
    (void)tl_packet_header_encode(&h, dst, TL_PACKET_PRIMARY_OCTETS); /* fields valid by construction */
    (void)tl_cuc_encode(time, dst + TL_PACKET_OFF_TIME, TL_CUC_OCTETS);
    if (len > 0u)
        memcpy(dst + TL_PACKET_OFF_USER, user, len);
    const size_t crc_at = total - TL_PACKET_PEC_OCTETS;
    tl_put_be16(dst + crc_at, tl_crc16(dst, crc_at));

    w->count[slot] = (uint16_t)((w->count[slot] + 1u) & TL_PACKET_COUNT_MASK);
    if (written != NULL)
        *written = total;
    return TL_OK;
}

tl_status tl_packet_write_idle(uint16_t *count, size_t len, uint8_t *dst, size_t dst_cap)
{
    if (count == NULL || dst == NULL)
        return TL_E_NULL;
    if (len < TL_PACKET_ANY_MIN_LEN || len > TL_PACKET_ANY_MAX_LEN)
        return TL_E_PACKET_LEN;
    if (dst_cap < len)
        return TL_E_SPACE;
    const tl_packet_header h = {
        .version = TL_PACKET_VERSION,
        .type = TL_PACKET_TYPE_TM,
        .sec_flag = 0u,
        .apid = TL_PACKET_APID_IDLE,
        .seq_flags = TL_PACKET_SEQ_UNSEGMENTED,
        .count = (uint16_t)(*count & TL_PACKET_COUNT_MASK),
        .data_len = (uint16_t)(len - TL_PACKET_PRIMARY_OCTETS - 1u),
    };
    (void)tl_packet_header_encode(&h, dst, TL_PACKET_PRIMARY_OCTETS);
    memset(dst + TL_PACKET_PRIMARY_OCTETS, TL_PACKET_IDLE_OCTET, len - TL_PACKET_PRIMARY_OCTETS);
    *count = (uint16_t)((*count + 1u) & TL_PACKET_COUNT_MASK);
    return TL_OK;
}

tl_status tl_packet_parse(const uint8_t *bytes, size_t avail, tl_packet_view *view)
{
    if (bytes == NULL || view == NULL)
        return TL_E_NULL;
    tl_packet_header h;
    if (tl_packet_header_decode(bytes, avail, &h) != TL_OK) {
        view->packet_len = TL_PACKET_PRIMARY_OCTETS;
        return TL_E_SPACE;
    }
    if (h.version != TL_PACKET_VERSION || h.type != TL_PACKET_TYPE_TM)
        return TL_E_FORMAT;
    const size_t total = packet_len_of(&h);
    const int idle = h.apid == TL_PACKET_APID_IDLE;
    if (idle) {
        if (h.sec_flag != 0u)
            return TL_E_FORMAT; /* idle packets carry no secondary header; length is always valid */
    } else if (h.sec_flag != 1u || total < TL_PACKET_OVERHEAD || total > TL_PACKET_MAX_LEN) {
        return TL_E_FORMAT;
    }
    if (avail < total) {
        view->packet_len = total;
        return TL_E_SPACE;
    }
    tl_cuc time = { 0u, 0u };
    const uint8_t *user = bytes + TL_PACKET_PRIMARY_OCTETS;
    size_t user_len = total - TL_PACKET_PRIMARY_OCTETS;
    if (!idle) {
        if (tl_crc16(bytes, total) != 0u) /* residue over data and CRC */
            return TL_E_FORMAT;
        if (tl_cuc_decode(bytes + TL_PACKET_OFF_TIME, TL_CUC_OCTETS, &time) != TL_OK)
            return TL_E_FORMAT;
        user = bytes + TL_PACKET_OFF_USER;
        user_len = total - TL_PACKET_OVERHEAD;
    }
    view->packet_len = total;
    view->apid = h.apid;
    view->type = h.type;
    view->sec_flag = h.sec_flag;
    view->seq_flags = h.seq_flags;
    view->count = h.count;
    view->time = time;
    view->user = user;
    view->user_len = user_len;
    return TL_OK;
}

int tl_packet_plausible(const uint8_t *bytes, size_t avail, uint32_t max_len)
{
    if (bytes == NULL || avail < TL_PACKET_PRIMARY_OCTETS + 1u)
        return 0;
    tl_packet_header h;
    (void)tl_packet_header_decode(bytes, avail, &h);
    const size_t total = packet_len_of(&h);
    const size_t cap = max_len < TL_PACKET_MAX_LEN ? (size_t)max_len : (size_t)TL_PACKET_MAX_LEN;
    return h.version == TL_PACKET_VERSION && h.type == TL_PACKET_TYPE_TM && h.sec_flag == 1u
           && h.apid != TL_PACKET_APID_IDLE && h.seq_flags == TL_PACKET_SEQ_UNSEGMENTED
           && total >= TL_PACKET_OVERHEAD && total <= cap && bytes[TL_PACKET_OFF_TIME] == TL_CUC_PFIELD;
}

tl_status tl_packet_resync(const uint8_t *bytes, size_t avail, uint32_t max_len, size_t *offset)
{
    if (bytes == NULL || offset == NULL)
        return TL_E_NULL;
    const size_t need = TL_PACKET_PRIMARY_OCTETS + 1u; /* header + P-field */
    size_t p = 0;
    for (; avail - p >= need; p++) {
        if (!tl_packet_plausible(bytes + p, avail - p, max_len))
            continue;
        tl_packet_view v;
        const tl_status st = tl_packet_parse(bytes + p, avail - p, &v);
        if (st == TL_OK || st == TL_E_SPACE) {
            *offset = p;
            return st;
        }
    }
    *offset = p;
    return TL_E_SPACE;
}
