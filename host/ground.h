/*
 * ground.h - the ground decoder: a recorded downlink back into integrated
 * spectra (host). docs/ground-decoder.md is the long form; docs/icd.md
 * specifies the octets.
 *
 * Input, streamed in blocks of any size (tl_ground_feed):
 *   frames mode  CCSDS TM transfer frames of a fixed length L (128 .. 2048),
 *                each behind the ASM 1A CF FC 1D (firmware/tl_frame.h)
 *   raw mode     space packets back to back (firmware/tl_packet.h)
 *
 * Checks, in order: frame sync on the ASM, the frame (ASM, header, FECF),
 * the virtual channel frame count (lost / repeated / out of order), packet
 * reassembly with the first header pointer (ICD section 5.5), the packet
 * (header, CRC-16), its sequence count per APID (gaps / duplicates /
 * reordering), its user data (tl_downlink_parse_science / _hk), its payload
 * (tl_spectral_decode_u64 / _i64, count equal to the header's), and its fit
 * with the product it belongs to. Products are rebuilt per (configuration
 * id, integration index) and handed to the caller's callback when complete,
 * or, incomplete, when they can no longer complete (see TL_GROUND_DONE_*).
 *
 * Memory is bounded whatever the input: the stream buffer holds one block
 * plus one frame (frames) or one largest packet (raw, 65542 octets); one
 * packet is reassembled at a time; at most `in_flight` products (each a
 * heap tl_product and a coverage bitmap) are open; the log lists keep at
 * most `log_limit` entries each and count the rest. No length field read
 * from the input sizes an allocation.
 */
#ifndef TL_HOST_GROUND_H
#define TL_HOST_GROUND_H

#include <stddef.h>
#include <stdint.h>
#include "tl_chain.h"
#include "tl_cuc.h"
#include "tl_downlink.h"

/* Host-side flag bit in tl_product.flags / cal[].flags (beside the
 * firmware's TL_FLAG_SAT_* bits 0x01 .. 0x08): no packet carrying this
 * channel of some expected quantity of this state arrived; the missing
 * values are 0. */
#define TL_GROUND_FLAG_MISSING 0x80u

#define TL_GROUND_ANY 0xFFFFu              /* scid / vcid: take the first good frame's */
#define TL_GROUND_BLOCK 65536u             /* octets tl_ground_decode_file reads at a time */
#define TL_GROUND_MAX_IN_FLIGHT 64u        /* most products open at once */
#define TL_GROUND_DEFAULT_IN_FLIGHT 16u
#define TL_GROUND_DEFAULT_LOG_LIMIT 100000u /* entries per log list */
#define TL_GROUND_WINDOW 64u               /* frame / packet counts remembered behind the newest */
#define TL_GROUND_LAG 2u                   /* a packet of integration i + 2 closes integration i */
#define TL_GROUND_COVER_WORDS (TL_MAX_CHANNELS / 64u)

/* What happened to a frame (one log entry per ASM match examined). */
enum {
    TL_GF_OK = 0,        /* checked and in order; its data went to reassembly */
    TL_GF_REPEATED,      /* same VC count and FECF as a frame already taken: ignored */
    TL_GF_OUT_OF_ORDER,  /* VC count behind the newest, not seen before: its whole packets taken */
    TL_GF_RESTART,       /* VC count behind the newest but a different frame: the counts restarted */
    TL_GF_BAD_FECF,      /* frame error control (CRC-16) wrong: dropped */
    TL_GF_BAD_HEADER,    /* FECF right, but version, OCF/secondary header, sync/order flag or
                            segment id not this format: dropped */
    TL_GF_INCONSISTENT,  /* FECF right, but the data field contradicts the reassembly (FHP not
                            where the packets say, FHP out of range, bad fill, impossible packet
                            header): the packet in progress dropped, resumed at the FHP */
    TL_GF_OTHER_CHANNEL, /* another spacecraft id or virtual channel: skipped */
    TL_GF_TRUNCATED,     /* the input ends inside the frame */
    TL_GF_STATUSES
};

/* What happened to a packet (one log entry per packet met; idle packets
 * are only counted). The first three are decoded and used. */
enum {
    TL_GP_OK = 0,            /* in sequence (a gap before it is in missing_before) */
    TL_GP_REORDERED,         /* its count is behind the newest of its APID, not seen before */
    TL_GP_RESTART,           /* its count is behind but the packet differs: the counts restarted */
    TL_GP_DUPLICATE,         /* same count and CRC as a packet already taken: ignored */
    TL_GP_CRC,               /* plausible header, CRC-16 wrong: dropped */
    TL_GP_BAD_HEADER,        /* not a packet of this format (version, type, flags, length,
                                P-field, idle data not 0x55): dropped */
    TL_GP_TRUNCATED,         /* the input ends inside the packet */
    TL_GP_LOST_PARTIAL,      /* frames mode: dropped in progress after a lost or bad frame */
    TL_GP_OTHER_APID,        /* valid, on neither the science nor the housekeeping APID */
    TL_GP_BAD_USER_DATA,     /* kind unknown, or the science / housekeeping header fails its parser */
    TL_GP_TOO_MANY_CHANNELS, /* a spectrum of more than TL_MAX_CHANNELS channels */
    TL_GP_BAD_PAYLOAD,       /* the spectral payload does not decode, or holds another count */
    TL_GP_INCONSISTENT,      /* disagrees with earlier packets of its product (channels,
                                spectra, shifts, table CRC, a second housekeeping) */
    TL_GP_LATE,              /* its product was already handed over: not used */
    TL_GP_STATUSES
};

/* Why a product was handed over. */
enum {
    TL_GROUND_DONE_COMPLETE = 0, /* every expected channel and the housekeeping arrived */
    TL_GROUND_DONE_SUPERSEDED,   /* a packet of integration index + TL_GROUND_LAG (same config) arrived,
                                    or the science / housekeeping sequence counts restarted */
    TL_GROUND_DONE_EVICTED,      /* in_flight products were open and a new one began: the oldest went */
    TL_GROUND_DONE_END,          /* the input ended */
    TL_GROUND_DONE_REASONS
};

typedef struct tl_ground_config {
    int raw;                 /* 0: ASM + transfer frames, 1: raw space packets */
    uint32_t frame_len;      /* frames mode: L, TL_FRAME_MIN_LEN .. TL_FRAME_MAX_LEN (ASM excluded) */
    uint16_t scid;           /* frames mode: 0 .. 1023 or TL_GROUND_ANY */
    uint16_t vcid;           /* frames mode: 0 .. 7 or TL_GROUND_ANY */
    uint16_t apid_science;   /* 0 .. 2046 */
    uint16_t apid_hk;        /* 0 .. 2046, not apid_science */
    uint16_t apid_sk;        /* spectral kurtosis blocks: 0 .. 2046, not the other two */
    double sk_false_alarm;   /* flagging rate per channel and block, (0, 0.5] (spectral_kurtosis.h) */
    uint32_t in_flight;      /* 1 .. TL_GROUND_MAX_IN_FLIGHT */
    uint32_t log_limit;      /* entries kept per log list (frames, packets, products,
                                housekeeping), 0 .. 10^7; the rest are counted */
} tl_ground_config;

/* Frames of 1024 octets, any SCID/VCID, APIDs 0x101 / 0x102 / 0x103,
 * false-alarm rate 0.0027,
 * TL_GROUND_DEFAULT_IN_FLIGHT, TL_GROUND_DEFAULT_LOG_LIMIT. */
void tl_ground_config_default(tl_ground_config *c);

typedef struct tl_ground_totals {
    uint64_t bytes;                     /* input octets */
    uint64_t frames[TL_GF_STATUSES];    /* per frame status */
    uint64_t frames_idle;               /* of TL_GF_OK: data field only idle data (FHP 0x7FE) */
    uint64_t frames_missing;            /* VC counts skipped and never filled in by a late frame */
    uint64_t sync_losses;               /* locked, and the next frame was not at its place or bad */
    uint64_t bytes_skipped;             /* octets in no accepted frame (frames) or packet (raw) */
    uint64_t packets[TL_GP_STATUSES];   /* per packet status */
    uint64_t packets_idle;              /* idle packets (APID 2047) skipped */
    uint64_t resyncs;                   /* raw mode: hunts for the next valid packet */
    uint64_t seq_gaps, seq_missing, seq_duplicates, seq_reordered, seq_restarts; /* sums over APIDs */
    uint64_t hk_packets;                /* housekeeping packets decoded */
    uint64_t products_complete, products_incomplete;
    uint64_t products_done[TL_GROUND_DONE_REASONS];
    uint64_t products_bounded;          /* handed over with noise-bounded (dequantized) values */
    uint64_t products_no_spectra;       /* housekeeping only: nothing to hand over */
    uint64_t callback_failures;
} tl_ground_totals;

/* Per APID sequence counts (packets with a valid CRC, idle excluded). */
typedef struct tl_ground_apid_stats {
    uint64_t packets;      /* met, duplicates included */
    uint64_t gaps;         /* jumps forward by more than one */
    uint64_t missing;      /* counts jumped over and not filled in later */
    uint64_t duplicates, reordered, restarts;
} tl_ground_apid_stats;

typedef struct tl_ground_frame_entry {
    uint64_t offset;         /* input offset of the ASM */
    uint16_t scid;
    uint8_t vcid, mc_count, vc_count;
    uint8_t status;          /* TL_GF_* */
    uint16_t fhp;
    uint16_t missing_before; /* VC counts skipped just before this frame */
    uint8_t header_valid;    /* scid .. fhp hold this frame's header (FECF checked) */
} tl_ground_frame_entry;

typedef struct tl_ground_packet_entry {
    uint64_t offset;         /* input offset of its first octet */
    uint32_t length;         /* octets (received so far, for truncated / lost_partial) */
    uint16_t apid, count;    /* 0xFFFF when its header never arrived */
    uint8_t status;          /* TL_GP_* */
    uint8_t kind;            /* TL_DL_KIND_*, 0 when not decoded */
    uint8_t state, qty;      /* science only */
    uint32_t index;          /* integration index (science and housekeeping) */
    uint32_t config_id;
    uint16_t first, channels; /* science only: channel range [first, first + channels) */
    uint16_t missing_before; /* counts of its APID skipped just before it */
} tl_ground_packet_entry;

/* A product handed to the callback. Pointers are valid during the call only. */
typedef struct tl_ground_product_info {
    uint32_t config_id, index;
    uint32_t done;                  /* TL_GROUND_DONE_* */
    int complete;                   /* every expected channel and the housekeeping arrived */
    int has_hk;
    int bounded;                    /* some packet was noise-bounded: values are q 2^k */
    uint8_t mode;
    uint16_t dl_flags;              /* OR of the science headers' TL_DL_F_* */
    uint32_t channels;
    uint32_t states;                /* expected: 1 (antenna) or 3 (with load and noise) */
    uint32_t quantities;            /* expected: 1 (auto0) or 4 (auto0, auto1, cross re, im) */
    uint32_t missing[3][4];         /* expected channels that never arrived, [state][quantity] */
    uint64_t missing_total;
    uint32_t science_packets;       /* science packets used */
    tl_cuc time;                    /* of its first packet */
    const tl_dl_hk *hk;             /* NULL without housekeeping */
    const uint64_t *covered[3][4];  /* bit k%64 of word k/64 set: channel k arrived */
    /* spectral kurtosis blocks of this integration (none: sk_blocks 0) */
    uint32_t sk_blocks;             /* blocks seen (highest block number + 1) */
    uint32_t sk_m, sk_n;            /* M values of N spectra per block */
    double sk_lo, sk_hi;            /* thresholds for cfg.sk_false_alarm */
    uint64_t sk_flagged[2], sk_values[2]; /* channel-blocks flagged / decoded per input */
    uint32_t sk_mask_blocks;        /* tl_sk_mask_blocks(sk_blocks, rate) */
    const uint8_t *sk_mask;         /* per channel, 1 = masked (flagged in >= sk_mask_blocks on an input) */
    uint32_t sk_masked;
} tl_ground_product_info;

/* What the receiver made of a product, kept in the log beside it. */
typedef struct tl_ground_product_note {
    char folder[512];   /* where it went ("" for none) */
    char note[512];     /* anything to say ("" for nothing) */
} tl_ground_product_note;

/* Receives each product (the tl_product holds the channels that arrived,
 * missing ones 0 and flagged TL_GROUND_FLAG_MISSING). Return 0, or -1 with
 * a one-line reason in note->note to stop the decoding (tl_ground_feed and
 * tl_ground_finish then fail with that line). May be NULL. */
typedef int (*tl_ground_product_fn)(void *user, const tl_product *p, const tl_ground_product_info *info,
                                    tl_ground_product_note *note);

typedef struct tl_ground tl_ground;

/* Check cfg and start a decoder. Returns it, or NULL with one line in err
 * (cap bytes) naming the bad field and its range, or "out of memory". */
tl_ground *tl_ground_open(const tl_ground_config *cfg, tl_ground_product_fn fn, void *user, char *err,
                          size_t cap);

/* Decode the next n octets of the input (any split gives the same result).
 * Returns 0, or -1 with one line in err after the callback refused a
 * product or memory ran out; the decoder then takes nothing more. */
int tl_ground_feed(tl_ground *g, const uint8_t *bytes, size_t n, char *err, size_t cap);

/* The input ended: a partial frame or packet is reported truncated and
 * every open product is handed over. Returns as tl_ground_feed. Idempotent. */
int tl_ground_finish(tl_ground *g, char *err, size_t cap);

/* Open PATH, feed it in TL_GROUND_BLOCK blocks, finish. Returns 0, or -1
 * with one line in err ("PATH: cannot open: ...", "PATH: read error: ...",
 * or a feed failure). */
int tl_ground_decode_file(tl_ground *g, const char *path, char *err, size_t cap);

const tl_ground_totals *tl_ground_totals_of(const tl_ground *g);

/* 1 and *out filled when packets of apid (0 .. 2046) were met, else 0. */
int tl_ground_apid(const tl_ground *g, uint16_t apid, tl_ground_apid_stats *out);

/* The log lists: *n entries kept, *left_out more not kept (log_limit). */
const tl_ground_frame_entry *tl_ground_frames(const tl_ground *g, size_t *n, uint64_t *left_out);
const tl_ground_packet_entry *tl_ground_packets(const tl_ground *g, size_t *n, uint64_t *left_out);

/* 1 when nothing was lost or corrupt: no bad, missing, truncated or
 * inconsistent frame, none of another spacecraft or virtual channel (their
 * data are not decoded), no skipped octet, no packet dropped or missing from
 * its sequence, no incomplete product, no refused callback. Repeated,
 * out-of-order, duplicate and reordered arrivals alone keep it 1. */
int tl_ground_clean(const tl_ground *g);

/* Short names for the log: "ok", "bad_fecf", ... ("?" when out of range). */
const char *tl_ground_frame_status_name(unsigned status);
const char *tl_ground_packet_status_name(unsigned status);
const char *tl_ground_done_name(unsigned done);

/* The product's completeness as one compact JSON object (malloc'd, the
 * caller frees; NULL when out of memory): index, config_id, channels,
 * states, quantities, complete, done, housekeeping, bounded, and the
 * missing channel ranges per state and quantity (at most 64 ranges each,
 * then a count of the ranges left out). */
char *tl_ground_product_json(const tl_ground_product_info *info);

/* Write the decode log (JSON: input, mode, totals, per-APID counts, every
 * frame, packet, product and housekeeping entry kept) to path through
 * tl_atomic_write. `input` names the input in it. Returns 0, or -1 with one
 * line in err. */
int tl_ground_write_log(const tl_ground *g, const char *path, const char *input, char *err, size_t cap);

/* The human summary (a few lines, each ending in '\n') into out (cap
 * bytes, always NUL-terminated). Returns the length it needed. */
size_t tl_ground_summary(const tl_ground *g, const char *input, char *out, size_t cap);

void tl_ground_close(tl_ground *g);

#endif
