/*
 * tl_packet.h - CCSDS space packets (CCSDS 133.0-B-2): the writer on board
 * and the parser the ground shares with it.
 *
 * A telemetry packet of this instrument, all fields big-endian:
 *
 *   octet  size  field
 *   0      6     primary header (CCSDS 133.0-B-2):
 *                  word at 0: version 3 bits (000) | type 1 bit (0 telemetry)
 *                             | secondary header flag 1 bit (1) | APID 11 bits
 *                  word at 2: sequence flags 2 bits (11 unsegmented)
 *                             | sequence count 14 bits (per APID, mod 16384)
 *                  word at 4: packet data length = octets in the data field - 1
 *   6      7     secondary header: CUC time (tl_cuc.h), P-field 0x1E
 *   13     n     user data (opaque to this module; n = 0 .. max_len - 15)
 *   13+n   2     packet error control: CRC-16 (tl_crc16.h) of octets 0 .. 12+n
 *
 * The data field is octets 6 .. 14+n, so the data length field holds
 * 7 + n + 2 - 1 = n + 8 and the whole packet is n + 15 octets.
 *
 * Packet length cap: a configured maximum of 64 .. 4095 octets. 4095 keeps
 * the CRC-protected span (packet minus the 2 CRC octets, 4093 octets =
 * 32744 bits) within the 32751 data bits over which polynomial 0x1021 has
 * Hamming distance 4 (every 1-, 2- and 3-bit error detected).
 *
 * Idle packets (APID 2047, for fill) have no secondary header and no CRC:
 * primary header (type 0, secondary header flag 0, unsegmented, their own
 * 14-bit count) followed by 1 .. 65536 octets of TL_PACKET_IDLE_OCTET.
 *
 * docs/icd.md draws the same layout as a bit diagram.
 */
#ifndef TL_PACKET_H
#define TL_PACKET_H

#include <stddef.h>
#include <stdint.h>
#include "tl_crc16.h"
#include "tl_cuc.h"
#include "tl_status.h"

/* ---- sizes (octets) ----------------------------------------------------- */
#define TL_PACKET_PRIMARY_OCTETS 6u
#define TL_PACKET_SECONDARY_OCTETS TL_CUC_OCTETS   /* 7 */
#define TL_PACKET_PEC_OCTETS TL_CRC16_OCTETS       /* 2 */
/* Octets a telemetry packet adds to its user data: 6 + 7 + 2 = 15. */
#define TL_PACKET_OVERHEAD (TL_PACKET_PRIMARY_OCTETS + TL_PACKET_SECONDARY_OCTETS + TL_PACKET_PEC_OCTETS)
/* Range of the configured maximum packet length (whole packet). */
#define TL_PACKET_MIN_MAX_LEN 64u
#define TL_PACKET_MAX_LEN 4095u
/* Largest user data per packet for a configured maximum packet length. */
#define TL_PACKET_MAX_USER(max_len) ((size_t)(max_len) - (size_t)TL_PACKET_OVERHEAD)
/* Whole packet length for `user_len` octets of user data. */
#define TL_PACKET_LEN(user_len) ((size_t)(user_len) + (size_t)TL_PACKET_OVERHEAD)
/* Any space packet: 7 .. 65542 octets (a data field of 1 .. 65536). */
#define TL_PACKET_ANY_MIN_LEN 7u
#define TL_PACKET_ANY_MAX_LEN 65542u

/* ---- field offsets and masks -------------------------------------------- */
#define TL_PACKET_OFF_ID 0u        /* 16-bit word: version, type, sec. header flag, APID */
#define TL_PACKET_OFF_SEQ 2u       /* 16-bit word: sequence flags, sequence count */
#define TL_PACKET_OFF_LENGTH 4u    /* 16-bit word: packet data length */
#define TL_PACKET_OFF_TIME 6u      /* 7-octet CUC secondary header */
#define TL_PACKET_OFF_USER 13u     /* user data */
#define TL_PACKET_VERSION_MASK 0xE000u
#define TL_PACKET_VERSION_SHIFT 13u
#define TL_PACKET_TYPE_MASK 0x1000u
#define TL_PACKET_TYPE_SHIFT 12u
#define TL_PACKET_SEC_FLAG_MASK 0x0800u
#define TL_PACKET_SEC_FLAG_SHIFT 11u
#define TL_PACKET_APID_MASK 0x07FFu
#define TL_PACKET_SEQ_FLAGS_MASK 0xC000u
#define TL_PACKET_SEQ_FLAGS_SHIFT 14u
#define TL_PACKET_COUNT_MASK 0x3FFFu

/* ---- field values --------------------------------------------------------- */
#define TL_PACKET_VERSION 0u          /* version number 000 */
#define TL_PACKET_TYPE_TM 0u          /* telemetry */
#define TL_PACKET_TYPE_TC 1u          /* telecommand */
#define TL_PACKET_SEQ_CONTINUATION 0u
#define TL_PACKET_SEQ_FIRST 1u
#define TL_PACKET_SEQ_LAST 2u
#define TL_PACKET_SEQ_UNSEGMENTED 3u
#define TL_PACKET_COUNT_MODULUS 16384u
#define TL_PACKET_APID_MAX 2046u      /* largest APID of a data packet */
#define TL_PACKET_APID_IDLE 2047u     /* idle packets (all ones) */
#define TL_PACKET_IDLE_OCTET 0x55u    /* content of an idle packet's data field */

/* APIDs a writer keeps sequence counters for (a build may change it). */
#ifndef TL_PACKET_MAX_APIDS
#define TL_PACKET_MAX_APIDS 8u
#endif
#if TL_PACKET_MAX_APIDS < 1 || TL_PACKET_MAX_APIDS > 2047
#error "TL_PACKET_MAX_APIDS must be from 1 to 2047"
#endif

/* The fields of a primary header, each in its own integer (right-aligned). */
typedef struct tl_packet_header {
    uint8_t version;    /* 0 .. 7 */
    uint8_t type;       /* TL_PACKET_TYPE_* */
    uint8_t sec_flag;   /* 0 or 1 */
    uint16_t apid;      /* 0 .. 2047 */
    uint8_t seq_flags;  /* TL_PACKET_SEQ_* */
    uint16_t count;     /* 0 .. 16383 */
    uint16_t data_len;  /* the field itself: octets in the data field minus 1 */
} tl_packet_header;

/* Write the 6 primary header octets for *h at dst (dst_cap bytes).
 * Returns TL_OK, TL_E_NULL, TL_E_SPACE (dst_cap < 6) or TL_E_FIELD_RANGE (a field
 * wider than its width: version > 7, type or sec_flag > 1, apid > 2047,
 * seq_flags > 3, count > 16383). Writes nothing on error; never writes past
 * dst + 6. */
tl_status tl_packet_header_encode(const tl_packet_header *h, uint8_t *dst, size_t dst_cap);

/* Read the 6 primary header octets at src (avail bytes) into *h. Every bit
 * pattern is a header, so this only fails on TL_E_NULL or TL_E_SPACE
 * (avail < 6). Reads at most 6 bytes. */
tl_status tl_packet_header_decode(const uint8_t *src, size_t avail, tl_packet_header *h);

/*
 * Writer: per-APID sequence counters and the configured maximum length.
 * Caller-owned, fixed size (8 + 4 * TL_PACKET_MAX_APIDS octets: 40 by
 * default). A counter slot is taken by the first packet written for an APID
 * and its count starts at 0.
 */
typedef struct tl_packet_writer {
    uint32_t max_len;                       /* whole packet octets; 0 before init */
    uint32_t apids;                         /* counter slots in use */
    uint16_t apid[TL_PACKET_MAX_APIDS];     /* APID of each slot */
    uint16_t count[TL_PACKET_MAX_APIDS];    /* next sequence count of each slot */
} tl_packet_writer;

/* Configure a writer: max_len = largest whole packet in octets,
 * TL_PACKET_MIN_MAX_LEN .. TL_PACKET_MAX_LEN (64 .. 4095). Forgets every
 * counter. Returns TL_OK, TL_E_NULL or TL_E_PACKET_LEN; on error *w is not
 * written. */
tl_status tl_packet_writer_init(tl_packet_writer *w, uint32_t max_len);

/* Forget every APID and counter (as after init); max_len stays. w must
 * not be NULL. */
void tl_packet_writer_reset(tl_packet_writer *w);

/*
 * Write one telemetry packet: APID `apid`, time stamp `time`, user data
 * `user` (len octets, copied as is), into dst (dst_cap bytes). The
 * sequence count is the APID's next count (0 for an APID not seen before),
 * then the count advances mod 16384. The packet is TL_PACKET_LEN(len) octets;
 * on TL_OK *written (if written is not NULL) receives that length.
 *
 * Returns
 *   TL_OK
 *   TL_E_NULL        w or dst NULL, or user NULL with len > 0
 *   TL_E_NOT_INIT    w was not initialised (max_len not in 64 .. 4095)
 *   TL_E_APID        apid > 2046
 *   TL_E_APID_FULL   apid is new and all TL_PACKET_MAX_APIDS counter slots
 *                    are taken
 *   TL_E_PACKET_LEN  TL_PACKET_LEN(len) > the configured maximum
 *                    (len > TL_PACKET_MAX_USER(max_len))
 *   TL_E_SPACE       dst_cap < TL_PACKET_LEN(len)
 * in that order of checking. On error nothing is written to dst, *written
 * is untouched and no counter moves. Never writes past dst + TL_PACKET_LEN(len).
 * user may not overlap dst.
 */
tl_status tl_packet_write(tl_packet_writer *w, uint16_t apid, tl_cuc time, const uint8_t *user, size_t len,
                          uint8_t *dst, size_t dst_cap, size_t *written);

/*
 * Write one idle packet of exactly len octets (7 .. 65542) at dst: APID
 * 2047, type 0, no secondary header, unsegmented, sequence count *count,
 * data field of len - 6 octets of TL_PACKET_IDLE_OCTET, no CRC. *count is
 * the caller's idle counter: it is used modulo 16384 and then advanced.
 * Returns TL_OK, TL_E_NULL (count or dst NULL), TL_E_PACKET_LEN (len outside
 * 7 .. 65542) or TL_E_SPACE (dst_cap < len). On error nothing is written and
 * *count is unchanged; never writes past dst + len.
 */
tl_status tl_packet_write_idle(uint16_t *count, size_t len, uint8_t *dst, size_t dst_cap);

/* What tl_packet_parse found. Pointers point into the parsed buffer. */
typedef struct tl_packet_view {
    size_t packet_len;     /* whole packet octets; on TL_E_SPACE: octets needed in all (> avail) */
    uint16_t apid;         /* 0 .. 2046, or 2047 for an idle packet */
    uint8_t type;          /* always TL_PACKET_TYPE_TM on TL_OK */
    uint8_t sec_flag;      /* 1 for a telemetry packet, 0 for an idle packet */
    uint8_t seq_flags;
    uint16_t count;
    tl_cuc time;           /* the secondary header; zero for an idle packet */
    const uint8_t *user;   /* user data (idle packet: its idle data) */
    size_t user_len;
} tl_packet_view;

/*
 * Check and take apart the packet that starts at bytes[0] (avail bytes
 * readable). Accepted are
 *  - telemetry packets as drawn above: version 0, type 0, secondary header
 *    flag 1, APID 0 .. 2046, 15 .. 4095 octets, CUC P-field 0x1E, and a CRC
 *    that checks out (any sequence flags);
 *  - idle packets: version 0, type 0, secondary header flag 0, APID 2047,
 *    7 .. 65542 octets (no CRC to check).
 * Returns
 *   TL_OK        *view holds the fields; the packet is view->packet_len octets
 *   TL_E_NULL    bytes or view NULL
 *   TL_E_SPACE   the header looks right so far but the packet is not all in
 *                the buffer: view->packet_len is the number of octets needed
 *                in all (6 while the primary header is incomplete), so
 *                view->packet_len - avail more octets are needed
 *   TL_E_FORMAT  not a packet of this format (a header field, the length,
 *                the P-field or the CRC)
 * The header is checked before the length against avail, so a wrong version,
 * type, flag or length gives TL_E_FORMAT even in a short buffer. Never reads
 * beyond bytes + avail (nor beyond the packet); never writes anything but
 * *view. On TL_E_SPACE only view->packet_len is meaningful, on TL_E_FORMAT
 * nothing in *view is.
 */
tl_status tl_packet_parse(const uint8_t *bytes, size_t avail, tl_packet_view *view);

/*
 * Cheap test whether bytes[0] could start a telemetry packet of a writer
 * configured for max_len, from its first 7 octets only (no CRC): version 0,
 * type 0, secondary header flag 1, APID not 2047, sequence flags 11, whole
 * length 15 .. min(max_len, 4095), P-field 0x1E. Returns 1 if so, 0 if not
 * or if avail < 7 or bytes is NULL. Reads at most 7 bytes.
 */
int tl_packet_plausible(const uint8_t *bytes, size_t avail, uint32_t max_len);

/*
 * Resynchronise in a raw packet stream: find the first offset p, from 0, at
 * which a plausible header (tl_packet_plausible) starts a packet that parses
 * (tl_packet_parse, CRC included).
 * Returns
 *   TL_OK       a whole valid packet starts at *offset
 *   TL_E_SPACE  none found yet: bytes before *offset can be dropped; from
 *               *offset on, a packet may still start once more bytes arrive
 *               (either fewer than 7 octets are left there, or a plausible
 *               header there announces a packet longer than what is left)
 *   TL_E_NULL   bytes or offset NULL
 * Reads nothing beyond bytes + avail; cost at most avail plausibility tests
 * and one CRC per plausible header.
 */
tl_status tl_packet_resync(const uint8_t *bytes, size_t avail, uint32_t max_len, size_t *offset);

#endif
