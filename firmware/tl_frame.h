/*
 * tl_frame.h - CCSDS TM transfer frames (CCSDS 132.0-B-2) behind the
 * attached sync marker (CCSDS 131.0-B): the builder on board, the parser
 * and sync search the ground shares with it.
 *
 * On the wire every frame is the 4-octet ASM 1A CF FC 1D followed by
 * frame_len octets (the "frame length" here never counts the ASM):
 *
 *   octet  size  field (big-endian)
 *   0      2     version 2 bits (00) | spacecraft id 10 bits | virtual channel
 *                id 3 bits | operational control field flag 1 bit (0)
 *   2      1     master channel frame count (mod 256)
 *   3      1     virtual channel frame count (mod 256)
 *   4      2     data field status: secondary header flag 1 bit (0) | sync
 *                flag 1 bit (0) | packet order flag 1 bit (0) | segment
 *                length id 2 bits (11) | first header pointer 11 bits
 *   6      L-8   data field: space packets, back to back, spanning frames
 *   L-2    2     frame error control field: CRC-16 (tl_crc16.h) of octets
 *                0 .. L-3
 *
 * First header pointer (FHP): offset in the data field of the first packet
 * header that starts in this frame; TL_FRAME_FHP_NONE (0x7FF) when no
 * packet starts here (the frame carries the middle of a packet);
 * TL_FRAME_FHP_IDLE (0x7FE) when the data field is only idle data.
 *
 * Frame length L: TL_FRAME_MIN_LEN .. TL_FRAME_MAX_LEN octets (128 .. 2048
 * by default; 2048 is the CCSDS 132.0-B maximum). The lower bound keeps the
 * data field (L - 8 >= 120 octets) larger than any fill the builder must
 * add. A build may lower TL_FRAME_MAX_LEN to shrink the builder.
 *
 * No OCF and no frame secondary header: the parser rejects frames that
 * announce either, since the data field would then be elsewhere.
 *
 * Fill (the end of a data field that no packet occupies) is written only by
 * tl_frame_flush and tl_frame_put_idle_frame; see there. docs/icd.md draws
 * the layout and gives the ground's reassembly rules.
 */
#ifndef TL_FRAME_H
#define TL_FRAME_H

#include <stddef.h>
#include <stdint.h>
#include "tl_crc16.h"
#include "tl_status.h"

/* ---- attached sync marker ---------------------------------------------- */
#define TL_FRAME_ASM 0x1ACFFC1Du
#define TL_FRAME_ASM_OCTETS 4u

/* ---- sizes (octets) ---------------------------------------------------- */
#define TL_FRAME_HEADER_OCTETS 6u
#define TL_FRAME_FECF_OCTETS TL_CRC16_OCTETS  /* 2 */
#define TL_FRAME_OVERHEAD (TL_FRAME_HEADER_OCTETS + TL_FRAME_FECF_OCTETS) /* 8, ASM not counted */
#define TL_FRAME_MIN_LEN 128u
#ifndef TL_FRAME_MAX_LEN
#define TL_FRAME_MAX_LEN 2048u
#endif
#if TL_FRAME_MAX_LEN < 128 || TL_FRAME_MAX_LEN > 2048
#error "TL_FRAME_MAX_LEN must be from 128 to 2048"
#endif
/* Data field octets of a frame of frame_len octets. */
#define TL_FRAME_DATA_LEN(frame_len) ((size_t)(frame_len) - (size_t)TL_FRAME_OVERHEAD)
/* Octets handed to the sink per frame: ASM + frame. */
#define TL_FRAME_WIRE_LEN(frame_len) ((size_t)(frame_len) + (size_t)TL_FRAME_ASM_OCTETS)
/* Most frames one tl_frame_put_packet call of len octets can complete. */
#define TL_FRAME_MAX_EMIT(len, frame_len) \
    (((size_t)(len) + TL_FRAME_DATA_LEN(frame_len) - 1u) / TL_FRAME_DATA_LEN(frame_len))

/* ---- header offsets, masks and values ----------------------------------- */
#define TL_FRAME_OFF_ID 0u           /* 16-bit word: version, SCID, VCID, OCF flag */
#define TL_FRAME_OFF_MC_COUNT 2u
#define TL_FRAME_OFF_VC_COUNT 3u
#define TL_FRAME_OFF_STATUS 4u       /* 16-bit word: data field status */
#define TL_FRAME_OFF_DATA 6u
#define TL_FRAME_VERSION_MASK 0xC000u
#define TL_FRAME_VERSION_SHIFT 14u
#define TL_FRAME_SCID_MASK 0x3FF0u
#define TL_FRAME_SCID_SHIFT 4u
#define TL_FRAME_VCID_MASK 0x000Eu
#define TL_FRAME_VCID_SHIFT 1u
#define TL_FRAME_OCF_FLAG_MASK 0x0001u
#define TL_FRAME_SEC_FLAG_MASK 0x8000u
#define TL_FRAME_SYNC_FLAG_MASK 0x4000u
#define TL_FRAME_ORDER_FLAG_MASK 0x2000u
#define TL_FRAME_SEG_ID_MASK 0x1800u
#define TL_FRAME_SEG_ID_SHIFT 11u
#define TL_FRAME_FHP_MASK 0x07FFu
#define TL_FRAME_VERSION 0u          /* version 1 of the TM frame: 00 */
#define TL_FRAME_SEG_ID_NONE 3u      /* 11: no segmentation (sync flag 0) */
#define TL_FRAME_SCID_MAX 1023u
#define TL_FRAME_VCID_MAX 7u
#define TL_FRAME_FHP_NONE 0x7FFu     /* no packet starts in this frame */
#define TL_FRAME_FHP_IDLE 0x7FEu     /* data field holds only idle data */
#define TL_FRAME_FILL_OCTET 0x55u    /* fill and idle data; its top 3 bits (010) are no packet version */

/* Receives every finished frame: ASM followed by the frame,
 * TL_FRAME_WIRE_LEN(frame_len) octets at `wire`, valid only during the call
 * (copy it or send it). It cannot refuse a frame: a caller whose queue can
 * fill up checks for room for TL_FRAME_MAX_EMIT(len, frame_len) frames
 * before feeding a packet of len octets (one more frame for a flush). */
typedef void (*tl_frame_sink)(void *user, const uint8_t *wire, size_t len);

/*
 * Builder: one virtual channel that owns its master channel (both frame
 * counts advance together). Caller-owned, fixed size: TL_FRAME_MAX_LEN + 48
 * octets on a 64-bit host (2096 by default), nothing else is used.
 */
typedef struct tl_frame_builder {
    uint32_t frame_len;       /* L; 0 before init */
    uint16_t scid;            /* 0 .. 1023 */
    uint8_t vcid;             /* 0 .. 7 */
    uint8_t mc_count;         /* count of the next frame */
    uint8_t vc_count;
    uint16_t idle_count;      /* sequence count of the next idle packet */
    uint32_t fill;            /* data field octets already filled in buf */
    uint32_t fhp;             /* FHP of the frame in buf so far */
    uint32_t frames;          /* frames emitted since init or reset (wraps at 2^32) */
    tl_frame_sink sink;
    void *user;
    uint8_t buf[TL_FRAME_ASM_OCTETS + TL_FRAME_MAX_LEN]; /* ASM + frame being built */
} tl_frame_builder;

/* Check builder settings without a builder (nothing written): frame_len
 * TL_FRAME_MIN_LEN .. TL_FRAME_MAX_LEN, else TL_E_FRAME_LEN; scid 0 .. 1023
 * and vcid 0 .. 7 (taken as 32-bit values, so a wider one is refused, not
 * truncated), else TL_E_FIELD_RANGE. Returns TL_OK otherwise. */
tl_status tl_frame_builder_check(uint32_t frame_len, uint32_t scid, uint32_t vcid);

/* Configure a builder: frame_len (ASM excluded) TL_FRAME_MIN_LEN ..
 * TL_FRAME_MAX_LEN, spacecraft id 0 .. 1023, virtual channel id 0 .. 7,
 * and the sink (user is passed to it as is and may be NULL). Frame counts
 * and the idle packet count start at 0.
 * Returns TL_OK, TL_E_NULL (fb or sink NULL), TL_E_FRAME_LEN, or
 * TL_E_FIELD_RANGE (scid or vcid wider than its field). On error *fb is not
 * written. */
tl_status tl_frame_builder_init(tl_frame_builder *fb, uint32_t frame_len, uint16_t scid, uint8_t vcid,
                                tl_frame_sink sink, void *user);

/* Drop any partial frame and restart the frame, idle packet and emitted
 * counts at 0; the configuration stays. fb must not be NULL. */
void tl_frame_builder_reset(tl_frame_builder *fb);

/*
 * Append one whole space packet (len octets at pkt, 7 .. 65542) to the
 * frame stream. Its octets go into the data field after the previous
 * packet's; each time a data field is full the frame is finished (header,
 * FHP, FECF) and handed to the sink, then filling goes on in the next frame.
 * The first packet to start in a frame sets its FHP. Between calls a partial
 * frame always has room left, so every packet starts in the frame being
 * built.
 * The packet's own length field must agree with len (6 + field + 1 == len);
 * nothing else in it is checked.
 * Returns TL_OK, TL_E_NULL (fb or pkt NULL), TL_E_NOT_INIT, or TL_E_FORMAT
 * (len outside 7 .. 65542, or the length field disagrees); on error nothing
 * is appended and no frame is emitted. Emits at most
 * TL_FRAME_MAX_EMIT(len, frame_len) frames; reads exactly len octets at pkt.
 */
tl_status tl_frame_put_packet(tl_frame_builder *fb, const uint8_t *pkt, size_t len);

/*
 * Finish the partial frame now, if there is one (none: nothing happens).
 * With r octets of data field left:
 *  - r >= 7: an idle packet (tl_packet_write_idle, APID 2047, the builder's
 *    idle count) of exactly r octets fills it; if no packet started in this
 *    frame before, the FHP points at the idle packet;
 *  - r = 1 .. 6: r octets of TL_FRAME_FILL_OCTET (0x55) fill it and the FHP
 *    is left as it was (0x7FF if no packet started in the frame). The
 *    ground recognises this fill: it sits where a packet header would start
 *    and its first octet's version bits are 010, not 000 (docs/icd.md).
 * The next packet then starts at offset 0 of the next frame (FHP 0).
 * Returns TL_OK, TL_E_NULL or TL_E_NOT_INIT. Emits at most one frame.
 */
tl_status tl_frame_flush(tl_frame_builder *fb);

/*
 * Emit one frame whose data field is only idle data: every octet
 * TL_FRAME_FILL_OCTET, FHP 0x7FE, same SCID/VCID, counts advance as for any
 * frame. A partial frame is flushed first (tl_frame_flush), so this emits
 * one or two frames. Returns TL_OK, TL_E_NULL or TL_E_NOT_INIT.
 */
tl_status tl_frame_put_idle_frame(tl_frame_builder *fb);

/* What tl_frame_parse found. data points into the parsed buffer. */
typedef struct tl_frame_view {
    uint16_t scid;
    uint8_t vcid;
    uint8_t mc_count;
    uint8_t vc_count;
    uint8_t sync_flag;
    uint8_t order_flag;
    uint8_t seg_id;
    uint16_t fhp;           /* 0 .. data_len-1, 0x7FE or 0x7FF (not checked further) */
    const uint8_t *data;    /* data field */
    size_t data_len;        /* frame_len - 8 */
} tl_frame_view;

/*
 * Check the frame whose ASM starts at bytes[0] (avail bytes readable), for
 * the managed frame length frame_len (ASM excluded; it is not in the
 * header, both ends must agree on it). Checks, in order: frame_len in range,
 * enough bytes, the ASM, version 00, OCF flag 0 and secondary header flag 0,
 * the FECF. Returns
 *   TL_OK            *view holds the fields; the frame occupied
 *                    TL_FRAME_WIRE_LEN(frame_len) octets
 *   TL_E_NULL        bytes or view NULL
 *   TL_E_FRAME_LEN   frame_len outside TL_FRAME_MIN_LEN .. TL_FRAME_MAX_LEN
 *   TL_E_SPACE       avail < TL_FRAME_WIRE_LEN(frame_len)
 *   TL_E_FORMAT      ASM, version, flags or FECF wrong
 * Reads at most TL_FRAME_WIRE_LEN(frame_len) octets; writes only *view
 * (and only on TL_OK).
 */
tl_status tl_frame_parse(const uint8_t *bytes, size_t avail, uint32_t frame_len, tl_frame_view *view);

/*
 * Find the first ASM (1A CF FC 1D, exact match) in bytes[0 .. avail).
 * Returns TL_OK with *offset at its first octet, or TL_E_SPACE with *offset
 * at the first octet that must be kept because an ASM may start there once
 * more bytes arrive (the longest tail that is a proper prefix of the ASM;
 * avail if none), or TL_E_NULL. Reads nothing beyond bytes + avail.
 */
tl_status tl_frame_find_asm(const uint8_t *bytes, size_t avail, size_t *offset);

#endif
