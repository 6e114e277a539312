/*
 * tl_link.h - the link between a test rig and a target build of the
 * firmware, over any byte stream (a pipe, a TCP port, a serial line):
 * the frame codec both ends share, and the run setup record (the body of
 * the configuration message, and the setup.bin file of every golden
 * vector). docs/icd.md, section "Link protocol", is the long form.
 *
 * Link frame. A message is the body
 *
 *   0    1  protocol version (TL_LINK_VERSION = 1)
 *   1    1  type (TL_LINK_T_*)
 *   2    2  sequence number (per direction, mod 65536)
 *   4    2  payload length n (0 .. TL_LINK_MAX_PAYLOAD)
 *   6    n  payload
 *   6+n  4  CRC-32C (tl_crc32c.h) of octets 0 .. 5+n
 *
 * sent COBS-encoded (Cheshire and Baker, "Consistent Overhead Byte
 * Stuffing", 1999: no 0x00 inside) and followed by one 0x00 delimiter. A
 * receiver splits the stream at 0x00, so garbage on the line costs at most
 * the frame it touches; the CRC, the COBS structure and the length field
 * reject a damaged frame.
 *
 * A setup record fixes everything that shapes the bytes a target sends for
 * a stream of samples: the chain configuration (tl_chain.h), the downlink
 * (tl_downlink.h) and the transfer frames (tl_frame.h). It is
 * TL_LINK_SETUP_OCTETS octets, every field a 32-bit big-endian word
 * (octet offsets; docs/icd.md "Link protocol" draws the same table):
 *
 *   0    record version (TL_LINK_SETUP_VERSION = 1)
 *   4    points            8    taps             12   inputs
 *   16   adc_bits          20   integration      24   fft_scale_mask
 *   28   rounding          32   det_shift        36   switch_steps
 *   40   switch_discard
 *   44   8 switch steps of 8 octets: state (word), dwell (word)
 *   108  apid_science      112  apid_hk          116  max_packet
 *   120  encoding          124  transpose        128  fraction_q16
 *   132  block             136  mode             140  sample_rate_hz
 *   144  epoch coarse s    148  epoch fine (2^-16 s)
 *   152  frame_len         156  scid             160  vcid
 *   164  sk_spectra        168  apid_sk          172  sk_accumulate
 *
 * Decoding checks only what the record itself can get wrong: the version,
 * and that each value fits the integer it goes into (a switch state, an
 * APID, the mode, the epoch's fine time, the SCID and the VCID are
 * narrower than 32 bits). Whether the values make a valid configuration is
 * for tl_link_setup_check to say (the checks tl_chain_init,
 * tl_downlink_init and tl_frame_builder_init run first), each with its own
 * status and the offset of the field at fault. Every field of tl_config and tl_downlink_config
 * is in the record (tl_link.c asserts their sizes at compile time, so a new
 * field cannot be forgotten: add it here, in docs/icd.md 8.4, and
 * regenerate the vectors). The configuration id is not in the record: a
 * target computes it (tl_downlink_config_id) from the chain as resolved.
 */
#ifndef TL_LINK_H
#define TL_LINK_H

#include <stddef.h>
#include <stdint.h>
#include "tl_chain.h"
#include "tl_downlink.h"
#include "tl_status.h"

/* ---- link frames ---------------------------------------------------------- */

#define TL_LINK_VERSION 1u
#define TL_LINK_HEADER_OCTETS 6u
#define TL_LINK_CRC_OCTETS 4u
#define TL_LINK_MAX_PAYLOAD 4096u
#define TL_LINK_MAX_BODY (TL_LINK_HEADER_OCTETS + TL_LINK_MAX_PAYLOAD + TL_LINK_CRC_OCTETS)
/* COBS adds one octet per 254 and one more; then the delimiter. */
#define TL_COBS_BOUND(n) ((size_t)(n) + (size_t)(n) / 254u + 1u)
#define TL_LINK_MAX_WIRE (TL_COBS_BOUND(TL_LINK_MAX_BODY) + 1u)

/* Message types: rig to target */
#define TL_LINK_T_HELLO 0x01u    /* ask for the target's status; no payload */
#define TL_LINK_T_TABLE 0x02u    /* a piece of a table image: offset (4), total (4), octets */
#define TL_LINK_T_CONFIG 0x03u   /* table length (4; 0 = built-in table), setup record */
#define TL_LINK_T_SAMPLES 0x04u  /* int16 big-endian samples, inputs interleaved, whole sample sets */
#define TL_LINK_T_END 0x05u      /* end of the stream: flush the frames; no payload */
#define TL_LINK_T_RESET 0x06u    /* forget the run and the table; no payload */
/* target to rig */
#define TL_LINK_T_STATUS 0x81u   /* answer to HELLO, or unasked at start-up (see TL_LINK_STATUS_*) */
#define TL_LINK_T_ACK 0x82u      /* done: acked sequence (2), integrations (4), frames (4) */
#define TL_LINK_T_NAK 0x83u      /* damaged or out of order: expected sequence (2), reason (1) */
#define TL_LINK_T_FRAMES 0x84u   /* transfer frames out (sync marker + frame, back to back) */
#define TL_LINK_T_ERROR 0x85u    /* refused: acked sequence (2), tl_status (2), detail (4) */

/* NAK reasons */
#define TL_LINK_NAK_FRAME 1u     /* CRC, COBS, length or version wrong */
#define TL_LINK_NAK_SEQUENCE 2u  /* not the next sequence number */
#define TL_LINK_NAK_TYPE 3u      /* unknown message type */

/* STATUS payload: acked sequence (2; 0xFFFF when unasked), protocol
 * version (1), mode (1), start-up flag (1), reserved (1), firmware version
 * (4), arithmetic spec (4), max points (4), max taps (4), max payload (4),
 * table capacity (4): TL_LINK_STATUS_OCTETS. */
#define TL_LINK_STATUS_OCTETS 30u
#define TL_LINK_MODE_BENCH 0u    /* a bench unit: vectors may be run */
#define TL_LINK_MODE_FLIGHT 1u   /* flight software state: a rig must not touch it */
#define TL_LINK_MODE_LOCKED 2u   /* locked by its operator */
#define TL_LINK_NO_SEQUENCE 0xFFFFu

/* COBS: encode n octets of src into dst (cap octets). Returns the encoded
 * length (at most TL_COBS_BOUND(n), no 0x00 in it, no delimiter), or 0
 * when cap is too small (nothing useful written then). */
size_t tl_cobs_encode(const uint8_t *src, size_t n, uint8_t *dst, size_t cap);

/* COBS: decode n octets (no delimiter) into dst (cap octets). Returns
 * TL_OK with *out_len, TL_E_FORMAT (a 0x00 inside, or a code pointing past
 * the end), TL_E_SPACE (cap too small), TL_E_NULL. Never writes past
 * dst + cap. */
tl_status tl_cobs_decode(const uint8_t *src, size_t n, uint8_t *dst, size_t cap, size_t *out_len);

/* Build a whole link frame (COBS body and the 0x00 delimiter) into wire
 * (cap octets). Returns TL_OK with *wire_len, TL_E_NULL, TL_E_FORMAT
 * (n above TL_LINK_MAX_PAYLOAD) or TL_E_SPACE. `work` is scratch of at
 * least TL_LINK_HEADER_OCTETS + n + TL_LINK_CRC_OCTETS octets. */
tl_status tl_link_encode(uint8_t type, uint16_t seq, const uint8_t *payload, size_t n, uint8_t *work,
                         size_t work_cap, uint8_t *wire, size_t cap, size_t *wire_len);

/* A received message; payload points into the caller's work buffer. */
typedef struct tl_link_msg {
    uint8_t type;
    uint16_t seq;
    const uint8_t *payload;
    size_t len;
} tl_link_msg;

/* Check and take apart one received frame: n octets between delimiters
 * (delimiter excluded), decoded into work (work_cap octets). Returns
 * TL_OK, TL_E_NULL, or TL_E_FORMAT (COBS, version, length field against
 * the octets received, CRC). *m is written only on TL_OK. */
tl_status tl_link_decode(const uint8_t *frame, size_t n, uint8_t *work, size_t work_cap, tl_link_msg *m);

/* Receiver: collects the octets of one frame up to its delimiter. */
typedef struct tl_link_rx {
    size_t fill;          /* octets of the current frame so far */
    uint32_t overlong;    /* 1 while discarding a frame longer than buf; 2 after delivering one */
    uint8_t buf[TL_LINK_MAX_WIRE];
} tl_link_rx;

/* Forget any partial frame. */
void tl_link_rx_reset(tl_link_rx *rx);

/* Feed one octet. Returns 1 when it was the delimiter of a frame that fits
 * (rx->buf[0 .. rx->fill) holds it until the next call), else 0. Empty
 * frames and frames longer than TL_LINK_MAX_WIRE are dropped. */
int tl_link_rx_put(tl_link_rx *rx, uint8_t octet);

/* ---- run setup record --------------------------------------------------------- */

#define TL_LINK_SETUP_VERSION 1u
#define TL_LINK_SETUP_OCTETS 176u

/* Field offsets (octets from the start of the record). */
#define TL_LINK_SETUP_OFF_VERSION 0u
#define TL_LINK_SETUP_OFF_POINTS 4u
#define TL_LINK_SETUP_OFF_TAPS 8u
#define TL_LINK_SETUP_OFF_INPUTS 12u
#define TL_LINK_SETUP_OFF_ADC_BITS 16u
#define TL_LINK_SETUP_OFF_INTEGRATION 20u
#define TL_LINK_SETUP_OFF_SCALE_MASK 24u
#define TL_LINK_SETUP_OFF_ROUNDING 28u
#define TL_LINK_SETUP_OFF_DET_SHIFT 32u
#define TL_LINK_SETUP_OFF_SWITCH_STEPS 36u
#define TL_LINK_SETUP_OFF_SWITCH_DISCARD 40u
#define TL_LINK_SETUP_OFF_SWITCH 44u  /* step i: state at 44 + 8i, dwell at 48 + 8i */
#define TL_LINK_SETUP_OFF_APID_SCIENCE 108u
#define TL_LINK_SETUP_OFF_APID_HK 112u
#define TL_LINK_SETUP_OFF_MAX_PACKET 116u
#define TL_LINK_SETUP_OFF_ENCODING 120u
#define TL_LINK_SETUP_OFF_TRANSPOSE 124u
#define TL_LINK_SETUP_OFF_FRACTION 128u
#define TL_LINK_SETUP_OFF_BLOCK 132u
#define TL_LINK_SETUP_OFF_MODE 136u
#define TL_LINK_SETUP_OFF_SAMPLE_RATE 140u
#define TL_LINK_SETUP_OFF_EPOCH_COARSE 144u
#define TL_LINK_SETUP_OFF_EPOCH_FINE 148u
#define TL_LINK_SETUP_OFF_FRAME_LEN 152u
#define TL_LINK_SETUP_OFF_SCID 156u
#define TL_LINK_SETUP_OFF_VCID 160u
#define TL_LINK_SETUP_OFF_SK_SPECTRA 164u
#define TL_LINK_SETUP_OFF_APID_SK 168u
#define TL_LINK_SETUP_OFF_SK_ACCUMULATE 172u

/* A run setup, as plain values. */
typedef struct tl_link_setup {
    tl_config chain;          /* as tl_chain_init takes it */
    tl_downlink_config dl;    /* config_id is ignored: the target computes it */
    uint32_t frame_len;       /* transfer frame length, ASM excluded */
    uint16_t scid;            /* spacecraft id */
    uint8_t vcid;             /* virtual channel id */
} tl_link_setup;

/* Write *s as a record into dst (cap octets). Returns TL_OK, TL_E_NULL,
 * TL_E_SPACE (cap < TL_LINK_SETUP_OCTETS) or TL_E_FIELD_RANGE (a switch
 * state above 255: tl_config holds them in octets, so never). Writes
 * exactly TL_LINK_SETUP_OCTETS octets on TL_OK and nothing on error. */
tl_status tl_link_setup_encode(const tl_link_setup *s, uint8_t *dst, size_t cap);

/*
 * Read a record of len octets at src into *s.
 * Returns
 *   TL_OK             *s holds the values (dl.config_id is 0)
 *   TL_E_NULL         src or s NULL
 *   TL_E_FORMAT       len is not TL_LINK_SETUP_OCTETS, or the version is
 *                     not TL_LINK_SETUP_VERSION (*bad_field = 0)
 *   TL_E_FIELD_RANGE  a value wider than the integer it goes into
 * On an error other than TL_E_NULL, *bad_field (if bad_field is not NULL)
 * receives the offset of the field at fault, and tl_link_setup_field_name
 * and tl_link_setup_field_max name it and its largest value. *s is written
 * only on TL_OK. Reads at most len octets.
 */
tl_status tl_link_setup_decode(const uint8_t *src, size_t len, tl_link_setup *s, uint32_t *bad_field);

/*
 * Check that a decoded setup makes a valid run, without starting one
 * (nothing written but *bad_field): the chain configuration
 * (tl_config_check), the downlink configuration (tl_downlink_config_check;
 * config_id is not checked: the target computes it) and the transfer
 * frames (tl_frame_builder_check), in that order. The coefficient table is
 * not part of the record: tl_chain_init checks it against points and taps.
 * Returns TL_OK, TL_E_NULL (s NULL), or the first status of those checks;
 * on an error other than TL_E_NULL, *bad_field (if not NULL) receives the
 * record offset (TL_LINK_SETUP_OFF_*) of the field at fault: for a
 * relation between fields (an APID repeated, the spectral kurtosis block
 * longer than the integration, a discard not below a dwell) the field
 * checked last, i.e. the later one in the order of tl_config and
 * tl_downlink_config.
 */
tl_status tl_link_setup_check(const tl_link_setup *s, uint32_t *bad_field);

/* Name of the field at `offset` ("points", "switch_dwell", ...); "?" for
 * an offset inside no field. Never NULL. */
const char *tl_link_setup_field_name(uint32_t offset);

/* Largest value the field at `offset` can hold in the record (the width
 * of the integer it goes into, not the configuration's range). */
uint32_t tl_link_setup_field_max(uint32_t offset);

#endif
