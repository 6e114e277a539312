/*
 * tl_downlink.h - an integrated product into CCSDS space packets: the
 * spectra, split by channel range so that each packet decodes on its own,
 * and one housekeeping packet per integration.
 *
 * For every integration tl_downlink_product emits, in this order:
 *   for each switch state present (antenna; with switching also the
 *   reference load, then load plus noise source), for each quantity
 *   (auto0; with two inputs auto1, cross re, cross im), packets on the
 *   science APID covering channels 0 .. channels-1 in increasing,
 *   contiguous ranges; then one packet on the housekeeping APID.
 * Each packet is a tl_packet telemetry packet (primary header, CUC time,
 * user data, CRC-16). Its time is the epoch plus first_frame x points
 * samples at the configured sample rate (tl_cuc_from_samples): the start
 * of the newest frame of the integration's first spectrum.
 *
 * Science user data (all fields big-endian, octet offsets from the start of
 * the user data; docs/icd.md draws it):
 *   0   1  header version (TL_DL_VERSION = 1)
 *   1   1  kind: TL_DL_KIND_SPECTRUM (1)
 *   2   1  instrument mode (configured, 0 .. 255)
 *   3   1  switch state of the sums: 0 antenna, 1 load, 2 load + noise source
 *   4   1  quantity: 0 auto0, 1 auto1, 2 cross re, 3 cross im
 *   5   1  arithmetic spec version (TL_ARITH_VERSION)
 *   6   1  detection shift (bits)
 *   7   1  FFT total shift (bits): X = DFT / 2^shift
 *   8   4  configuration id (tl_downlink_config_id)
 *   12  4  integration index (from 0)
 *   16  4  spectra integrated into these sums (this state)
 *   20  4  spectra in the integration, all states
 *   24  4  spectra discarded after switch changes
 *   28  2  channels in the whole spectrum (N/2)
 *   30  2  first channel in this packet
 *   32  2  channel count n in this packet (>= 1)
 *   34  2  flags: TL_DL_F_* below
 *   36  4  CRC-32C of the coefficient table in use
 *   40  b  saturation bitmap, only when TL_DL_F_BITMAP: b = ceil(n / 8)
 *          octets, bit 7 of octet 0 is the first channel; a set bit means
 *          the channel's sum saturated (its TL_FLAG_SAT_* bit)
 *   40+b   tl_encode payload of the n values (tl_encode.h, docs/encoding.md):
 *          uint64 auto-power sums or int64 cross-power sums
 *
 * Housekeeping user data (kind TL_DL_KIND_HOUSEKEEPING, 2):
 *   0   1  header version      1   1  kind (2)      2   1  mode
 *   3   1  inputs              4   4  configuration id
 *   8   4  integration index   12  4  firmware version (major << 16 | minor << 8 | patch)
 *   16  4  coefficient table CRC-32C as loaded
 *   20  1  table status: 0 = the table's CRC-32C recomputed now matches, 1 = it does not
 *   21  1  FFT stages + 1 (s: the split's counter is the last)
 *   22  2  switch steps (0: none)
 *   24  4  spectra              28  4  discarded
 *   32  4  antenna spectra      36  4  load spectra      40  4  load + noise spectra
 *   44     then per input (always TL_MAX_INPUTS = 2 blocks, zeros for an absent input):
 *          4 ADC clips, 8 ADC sum of code^2, 8 ADC samples, 4 filterbank
 *          saturations, 4 x s FFT saturations per stage, 4 x 16 ADC code
 *          histogram (tl_stats.adc_hist)
 *   then   4 x 4 accumulator saturations (auto0, auto1, cross re, cross im)
 *          for the antenna, the load and the load + noise states (48 octets)
 *   then   the acquisition block (version 2 on; TL_DL_HK_ACQ_OCTETS = 32), of
 *          the integration: 4 capture blocks seen, 4 processed, 4 dropped,
 *          8 samples dropped (per input), 4 duty cycle in ppm
 *          (tl_acq_duty_ppm), 4 spectra discarded at gaps, 4 samples of
 *          frames abandoned at gaps (per input)
 *   then   the scrub block (TL_DL_HK_SCRUB_OCTETS = 36; tl_scrub.h), counters
 *          since init: 4 scrub passes completed; 4 x 3 mismatches found
 *          (coefficient table, FFT tables, configuration); 4 x 3 restores;
 *          4 running-state range faults repaired; 1 last region found bad
 *          (0 none, 1 coefficient table, 2 FFT tables, 3 configuration, 4
 *          running state); 1 this integration flagged upset (0 or 1); 2
 *          reserved, zero
 * Its length is TL_DL_HK_OCTETS(s). The header version octet of a
 * housekeeping packet is TL_DL_HK_VERSION (2: the acquisition block, then
 * the scrub block); the parser also reads version 1 (neither block,
 * TL_DL_HK_V1_OCTETS(s)).
 *
 * Splitting: each packet takes as many channels as fit the configured
 * maximum packet length (and TL_ENCODE_MAX_CHANNELS). The encoder is tried
 * with a first guess and the count is reduced until the payload fits; the
 * number of attempts per packet is bounded by TL_DL_MAX_TRIES. One channel
 * always fits in the smallest allowed packet (TL_DL_MIN_PACKET).
 */
#ifndef TL_DOWNLINK_H
#define TL_DOWNLINK_H

#include <stddef.h>
#include <stdint.h>
#include "tl_chain.h"
#include "tl_cuc.h"
#include "tl_encode.h"
#include "tl_packet.h"
#include "tl_status.h"

#define TL_DL_VERSION 1u    /* science and spectral kurtosis headers */
#define TL_DL_HK_VERSION 2u /* housekeeping: 2 appends the acquisition and the scrub blocks */
#define TL_DL_KIND_SPECTRUM 1u
#define TL_DL_KIND_HOUSEKEEPING 2u
#define TL_DL_KIND_SK 3u
#define TL_DL_FIRMWARE_VERSION 0x000300u /* 0.3.0 */

#define TL_DL_QTY_AUTO0 0u
#define TL_DL_QTY_AUTO1 1u
#define TL_DL_QTY_CROSS_RE 2u
#define TL_DL_QTY_CROSS_IM 3u

/* science header field offsets */
#define TL_DL_OFF_VERSION 0u
#define TL_DL_OFF_KIND 1u
#define TL_DL_OFF_MODE 2u
#define TL_DL_OFF_STATE 3u
#define TL_DL_OFF_QTY 4u
#define TL_DL_OFF_ARITH 5u
#define TL_DL_OFF_DET_SHIFT 6u
#define TL_DL_OFF_FFT_SHIFT 7u
#define TL_DL_OFF_CONFIG_ID 8u
#define TL_DL_OFF_INDEX 12u
#define TL_DL_OFF_STATE_SPECTRA 16u
#define TL_DL_OFF_SPECTRA 20u
#define TL_DL_OFF_DISCARDED 24u
#define TL_DL_OFF_CHANNELS 28u
#define TL_DL_OFF_FIRST 30u
#define TL_DL_OFF_COUNT 32u
#define TL_DL_OFF_FLAGS 34u
#define TL_DL_OFF_TAPS_CRC 36u
#define TL_DL_HEADER_OCTETS 40u

/* science header flags */
#define TL_DL_F_BITMAP 0x0001u    /* a saturation bitmap follows the header */
#define TL_DL_F_ADC_CLIP 0x0002u  /* the integration saw ADC clips on some input */
#define TL_DL_F_OVERFLOW 0x0004u  /* a filterbank or FFT stage saturated during the integration */
#define TL_DL_F_BOUNDED 0x0008u   /* the payload is noise-bounded (lossy within step/2) */
#define TL_DL_F_UPSET 0x0010u     /* the integration ran while a table, the configuration or the running state
                                   * was found corrupted (TL_FLAG_UPSET on every channel; tl_scrub.h) */

/* housekeeping length for s = FFT stages + 1 counters per input */
#define TL_DL_HK_INPUT_OCTETS(s) (4u + 8u + 8u + 4u + 4u * (s) + 4u * TL_ADC_HIST_BINS)
#define TL_DL_HK_V1_OCTETS(s) (44u + TL_MAX_INPUTS * TL_DL_HK_INPUT_OCTETS(s) + 48u)
#define TL_DL_HK_ACQ_OCTETS 32u
#define TL_DL_HK_SCRUB_OCTETS 36u
#define TL_DL_HK_OCTETS(s) (TL_DL_HK_V1_OCTETS(s) + TL_DL_HK_ACQ_OCTETS + TL_DL_HK_SCRUB_OCTETS)

/* Smallest allowed maximum packet length for the downlink: the header,
 * a one-octet bitmap and one channel's payload (encoding header + LZ4
 * bound of 8 octets) fit, and so does the housekeeping packet. */
#define TL_DL_MIN_PACKET 512u
#define TL_DL_MAX_TRIES 12u

/* spectral kurtosis header (kind 3) field offsets; then the payload */
#define TL_DL_SK_OFF_INPUT 3u
#define TL_DL_SK_OFF_ARITH 4u
#define TL_DL_SK_OFF_DET_SHIFT 5u
#define TL_DL_SK_OFF_S2_SHIFT 6u
#define TL_DL_SK_OFF_FLAGS 7u
#define TL_DL_SK_OFF_CONFIG_ID 8u
#define TL_DL_SK_OFF_INDEX 12u
#define TL_DL_SK_OFF_BLOCK 16u
#define TL_DL_SK_OFF_SPECTRA 20u
#define TL_DL_SK_OFF_CHANNELS 24u
#define TL_DL_SK_OFF_FIRST 26u
#define TL_DL_SK_OFF_COUNT 28u
#define TL_DL_SK_OFF_ACCUMULATE 30u /* N - 1: spectra summed into each value, minus one */
#define TL_DL_SK_HEADER_OCTETS 32u
#define TL_DL_SK_F_SAT 0x01u      /* some S1 or S2 of the block saturated */
#define TL_DL_SK_MAX_CHANNELS (TL_ENCODE_MAX_CHANNELS / 2u) /* S1 and S2 share one payload */

typedef struct tl_downlink_config {
    uint16_t apid_science;   /* 0 .. 2046 */
    uint16_t apid_hk;        /* 0 .. 2046, different from apid_science */
    uint16_t apid_sk;        /* 0 .. 2046, different from both */
    uint32_t max_packet;     /* whole packet octets, TL_DL_MIN_PACKET .. TL_PACKET_MAX_LEN */
    uint32_t encoding;       /* TL_ENCODE_ID_LOSSLESS or TL_ENCODE_ID_BOUNDED */
    uint32_t transpose;      /* TL_ENCODE_BYTE_SHUFFLE or TL_ENCODE_BIT_PLANES */
    uint32_t fraction_q16;   /* bounded only: f x 2^16, TL_ENCODE_FRACTION_MIN_Q16 .. _MAX_Q16 */
    uint32_t block;          /* bounded only: channels per step, 1 .. 255 */
    uint8_t mode;            /* instrument mode copied into every header */
    uint32_t config_id;      /* tl_downlink_config_id of the running configuration */
    tl_cuc epoch;            /* time of sample 0 */
    uint32_t sample_rate_hz; /* 1 .. 2^32 - 1, for the packet times */
} tl_downlink_config;

/* Counters since init (saturating at UINT32_MAX / UINT64_MAX). */
typedef struct tl_downlink_stats {
    uint32_t packets_science;
    uint32_t packets_hk;
    uint64_t octets_science;   /* whole packets */
    uint64_t octets_hk;
    uint64_t octets_raw;       /* 8 octets per channel value sent: the uncompressed size */
    uint32_t channels_sent;    /* channel values sent */
    uint32_t packets_sk;       /* spectral kurtosis packets */
    uint64_t octets_sk;
} tl_downlink_stats;

/* Packets go to the caller's sink, one whole packet per call; the bytes
 * are valid only during the call. */
typedef void (*tl_downlink_sink)(void *user, const uint8_t *packet, size_t len);

typedef struct tl_downlink {
    tl_downlink_config cfg;
    tl_packet_writer pw;
    tl_encode enc;
    tl_downlink_stats stats;
    uint32_t initialised;                          /* TL_DOWNLINK_MAGIC */
    uint64_t ref[TL_ENCODE_MAX_CHANNELS];          /* noise references for cross-power; S1 and S2 of a block */
    uint8_t user[TL_PACKET_MAX_LEN];               /* user data being built */
    uint8_t packet[TL_PACKET_MAX_LEN];             /* packet being written */
} tl_downlink;

#define TL_DOWNLINK_MAGIC 0x544C444Cu

/* Defaults: APIDs 0x101 (science), 0x102 (housekeeping), 0x103 (spectral
 * kurtosis), 4095-octet
 * packets, lossless with the bit-plane transpose (it compresses better
 * than byte shuffle, docs/encoding.md), f = 1/8 and blocks of 32 for the
 * bounded encoding, mode 0, config id 0, epoch 0, 102.4 MHz. */
void tl_downlink_config_default(tl_downlink_config *cfg);

/* A 32-bit identifier of everything that shapes the spectra: CRC-32C over
 * the configuration fields as 32-bit big-endian words (points, taps,
 * inputs, adc_bits, integration, fft_scale_mask, rounding, det_shift,
 * switch_steps, switch_discard, taps_crc, then state and dwell of each
 * step). Pass the configuration as the chain resolved it (tl_chain.cfg, so
 * automatic mask and shift are their values) and tl_product.taps_crc.
 * Returns 0 for a NULL cfg. */
uint32_t tl_downlink_config_id(const tl_config *cfg, uint32_t taps_crc);

/* Check cfg and nothing else (nothing written). Returns the first fault in
 * this order: TL_OK, TL_E_NULL, TL_E_APID (an APID above 2046, or two the
 * same), TL_E_PACKET_LEN (max_packet outside TL_DL_MIN_PACKET ..
 * TL_PACKET_MAX_LEN), TL_E_ENCODING (encoding or transpose not one of the
 * two; bounded only: block outside 1 .. 255), TL_E_NOISE_FRACTION (bounded
 * only), or TL_E_TIME_RANGE (sample rate 0). mode, config_id and epoch take
 * any value. */
tl_status tl_downlink_config_check(const tl_downlink_config *cfg);

/* Check cfg (tl_downlink_config_check) and start the packet writer
 * (sequence counts from 0). Returns TL_OK, TL_E_NULL or a status of
 * tl_downlink_config_check. On error *d is not written: a running downlink
 * keeps its configuration and sequence counts. */
tl_status tl_downlink_init(tl_downlink *d, const tl_downlink_config *cfg);

/* Packetise one product (tl_chain_take) and its housekeeping; `taps_ok` is
 * the outcome of the caller's table check (1 = CRC matches). Every packet
 * goes to sink(user, ...). Returns TL_OK, TL_E_NULL, TL_E_NOT_INIT,
 * TL_E_TIME_RANGE (a packet time beyond the CUC's 2^32 s), or an encoder
 * error; packets already emitted stay emitted. Never allocates; time is
 * bounded by channels x TL_DL_MAX_TRIES encoder passes. */
tl_status tl_downlink_product(tl_downlink *d, const tl_product *p, int taps_ok, tl_downlink_sink sink, void *user);

/* Packetise one spectral kurtosis block (tl_chain_take_sk) on APID
 * apid_sk: per input, packets of kind TL_DL_KIND_SK covering channels 0 ..
 * C-1 in contiguous ranges, each decodable alone. Header (32 octets,
 * big-endian): version, kind 3, mode, input, arithmetic spec, detection
 * shift, S2 shift s, flags (TL_DL_SK_F_SAT), configuration id, integration
 * index, block number, values per block M, channels C (2), first channel
 * (2), count n (2, at most TL_DL_SK_MAX_CHANNELS), N - 1 (2). Payload:
 * one lossless tl_encode payload of 2n uint64 values: S1 of the n channels,
 * then S2 / 2^s (s chosen per input as the bit length of the largest high
 * word, so every value fits 64 bits; s = 0 keeps S2 exact). The packet time
 * is the block's first spectrum. Returns as tl_downlink_product. */
tl_status tl_downlink_sk(tl_downlink *d, const tl_sk_block *b, tl_downlink_sink sink, void *user);

/* ---- the ground's view (parsers shared with the ground and the HIL) ---- */

typedef struct tl_dl_science {
    uint8_t version, kind, mode, state, qty, arith, det_shift, fft_shift;
    uint32_t config_id, index, state_spectra, spectra, discarded;
    uint16_t channels, first, count, flags;
    uint32_t taps_crc;
    const uint8_t *bitmap;   /* ceil(count / 8) octets, or NULL without TL_DL_F_BITMAP */
    const uint8_t *payload;  /* the tl_encode payload */
    size_t payload_len;
} tl_dl_science;

/* Parse the user data of a science packet (len octets at user). Checks:
 * version 1, kind 1, state < 3, quantity < 4, channels 1 .. 32768,
 * count >= 1, first + count <= channels, the bitmap inside len, at least
 * one payload octet. Returns TL_OK, TL_E_NULL, or TL_E_FORMAT; never reads
 * beyond user[len - 1]; *v is written only on TL_OK. */
tl_status tl_downlink_parse_science(const uint8_t *user, size_t len, tl_dl_science *v);

typedef struct tl_dl_hk_input {
    uint32_t adc_clips;
    uint64_t adc_sumsq, adc_samples;
    uint32_t pfb_sat;
    uint32_t fft_sat[TL_MAX_FFT_STAGES + 1u];
    uint32_t adc_hist[TL_ADC_HIST_BINS];
} tl_dl_hk_input;

typedef struct tl_dl_hk {
    uint8_t version, kind, mode, inputs;
    uint32_t config_id, index, firmware_version, taps_crc;
    uint8_t table_status, fft_counters;
    uint16_t switch_steps;
    uint32_t spectra, discarded, state_spectra[3];
    tl_dl_hk_input in[TL_MAX_INPUTS];
    uint32_t acc_sat[3][4];  /* [state][auto0, auto1, cross re, cross im] */
    uint8_t has_acq;         /* 1 when the acquisition block is present (version 2) */
    uint32_t blocks_seen, blocks_processed, blocks_dropped;
    uint64_t samples_dropped;
    uint32_t duty_ppm, gap_discarded, abandoned;
    tl_scrub_counts scrub;   /* the scrub block (all zero in a version 1 packet) */
    uint8_t upset;           /* 1: this integration is flagged upset */
} tl_dl_hk;

/* Parse the user data of a housekeeping packet. Checks: version 1 or 2,
 * kind 2, inputs 1 .. 2, FFT counters 1 .. TL_MAX_FFT_STAGES + 1, len
 * exactly TL_DL_HK_V1_OCTETS(counters) for version 1 (has_acq = 0, the
 * acquisition and scrub fields 0) and TL_DL_HK_OCTETS(counters) for
 * version 2, last region found bad 0 .. 4 and the upset octet 0 or 1.
 * Returns TL_OK, TL_E_NULL or TL_E_FORMAT;
 * never reads beyond user[len - 1]; *h is written only on TL_OK. */
tl_status tl_downlink_parse_hk(const uint8_t *user, size_t len, tl_dl_hk *h);

typedef struct tl_dl_sk {
    uint8_t version, kind, mode, input, arith, det_shift, s2_shift, flags;
    uint32_t config_id, index, block, spectra; /* spectra: M values per block */
    uint32_t accumulate;                       /* N spectra per value, 1 .. 65536 */
    uint16_t channels, first, count;
    const uint8_t *payload;
    size_t payload_len;
} tl_dl_sk;

/* Parse the user data of a spectral kurtosis packet. Checks: version 1,
 * kind 3, input < 2, S2 shift <= 64, M in TL_SK_MIN_SPECTRA ..
 * TL_SK_MAX_SPECTRA, channels 1 .. 32768, count 1 .. TL_DL_SK_MAX_CHANNELS,
 * first + count <= channels, a payload. Returns TL_OK, TL_E_NULL or
 * TL_E_FORMAT; never reads beyond user[len - 1]. */
tl_status tl_downlink_parse_sk(const uint8_t *user, size_t len, tl_dl_sk *v);

#endif
