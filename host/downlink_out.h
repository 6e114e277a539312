/*
 * downlink_out.h - the downlink of a run: its product packetised as the
 * scenario's [downlink] section says (firmware/tl_downlink.h), the packets
 * carried in transfer frames (firmware/tl_frame.h), and the counts.
 *
 * Files a run writes (tl_downlink_out_write), each atomically:
 *   DIR/packets.bin   the space packets, back to back (a raw packet stream)
 *   DIR/frames.bin    the same packets in transfer frames, each preceded by
 *                     the sync marker: what a ground station hands over
 * `tidelock decode DIR/frames.bin` rebuilds the spectra from either.
 */
#ifndef TL_HOST_DOWNLINK_OUT_H
#define TL_HOST_DOWNLINK_OUT_H

#include <stddef.h>
#include <stdint.h>
#include "scenario.h"
#include "tl_chain.h"
#include "tl_downlink.h"

typedef struct tl_dl_result {
    int done;
    uint32_t config_id;
    uint32_t packets_science, packets_hk;
    uint64_t octets_science, octets_hk; /* whole packets */
    uint64_t octets_raw;                /* 8 octets per channel value: the size without compression */
    uint32_t frames;                    /* transfer frames, the last one completed with idle data */
    uint64_t octets_frames;             /* frames with their sync markers */
    uint32_t packets_sk;                /* spectral kurtosis packets */
    uint64_t octets_sk;
} tl_dl_result;

/* The downlink configuration of s, the epoch at 0 s. The configuration id
 * is computed from s->cfg with the product's resolved FFT mask and
 * detection shift and its table CRC. Returns 0, or -1 with one line in err. */
int tl_downlink_out_config(const tl_scenario *s, const tl_product *p, tl_downlink_config *out, char *err,
                           size_t cap);

/* Packetise p; packets and frames go to malloc'd buffers the caller frees
 * (either pointer pair may be NULL when not wanted). Returns 0, or -1 with
 * one line in err (an encoder or packet error names its status). */
int tl_downlink_out_make(const tl_scenario *s, const tl_product *p, tl_dl_result *res, uint8_t **packets,
                         size_t *packets_len, uint8_t **frames, size_t *frames_len, char *err, size_t cap);

/* The same with the integration's spectral kurtosis blocks (nblocks of
 * them, may be 0): their packets come first, in block order, as the
 * firmware sends them while the integration runs. */
int tl_downlink_out_make_all(const tl_scenario *s, const tl_product *p, const tl_sk_block *blocks, uint32_t nblocks,
                             tl_dl_result *res, uint8_t **packets, size_t *packets_len, uint8_t **frames,
                             size_t *frames_len, char *err, size_t cap);

/* tl_downlink_out_make_all, then DIR/packets.bin and DIR/frames.bin.
 * Returns 0 or -1 with one line in err naming the file. */
int tl_downlink_out_write(const char *dir, const tl_scenario *s, const tl_product *p, const tl_sk_block *blocks,
                          uint32_t nblocks, tl_dl_result *res, char *err, size_t cap);

#endif
