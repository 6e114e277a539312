/*
 * hil_run.h - the target side of a run: samples in, transfer frames out.
 *
 * One run is a setup record (firmware/tl_link.h), an optional coefficient
 * table image, and a stream of samples. hil_run_start initialises the chain,
 * the downlink (its configuration id computed from the chain as resolved)
 * and the frame builder; hil_run_push feeds samples in pieces of any size,
 * taking each finished spectral kurtosis block and integration (a block
 * first when both end on the same spectrum) and turning it into packets
 * and frames; hil_run_finish flushes the last partial frame. Every frame
 * (sync marker and frame, tl_frame.h) goes to the caller's sink as it is
 * completed.
 *
 * Built unchanged for every target (host, Cortex-M7, PowerPC): C11, no
 * allocation, no floating point, no library calls but memcpy/memset. The
 * caller owns the context (it holds the chain and a product: about 800 kB
 * at the Cortex-M7 maxima, several MB at the host's), normally static.
 */
#ifndef HIL_RUN_H
#define HIL_RUN_H

#include <stddef.h>
#include <stdint.h>
#include "tl_chain.h"
#include "tl_downlink.h"
#include "tl_frame.h"
#include "tl_link.h"

typedef struct hil_run {
    tl_chain chain;
    /* The table image is needed only until hil_run_start has copied it into
     * the chain; a product or a spectral kurtosis block only from its take
     * until it is packetised: they share their memory. */
    union {
        tl_product product;
        tl_sk_block sk;
        uint8_t taps_image[TL_TAPS_IMAGE_BYTES(TL_MAX_TAPS, TL_MAX_POINTS)];
    } u;
    tl_downlink dl;
    tl_frame_builder fb;
    tl_status frame_status;   /* first error of tl_frame_put_packet, if any */
    uint32_t products;        /* integrations sent */
    uint32_t sk_blocks;       /* spectral kurtosis blocks sent */
    uint64_t octets_out;      /* frame octets handed to the sink, sync markers included */
    tl_frame_sink sink;
    void *user;
} hil_run;

/* Start a run. taps_image NULL uses the built-in table; it may point to
 * r->u.taps_image (the image is copied before the product is written).
 * Returns TL_OK, TL_E_NULL, the status of tl_link_setup_check (chain,
 * downlink, frames, in that order) or a table status of tl_chain_init.
 * Everything is checked before *r is written: on error a running run goes
 * on with its old setup, byte for byte. */
tl_status hil_run_start(hil_run *r, const tl_link_setup *s, const uint8_t *taps_image, size_t image_len,
                        tl_frame_sink sink, void *user);

/* Feed count samples per input (in1 NULL for one input). Every integration
 * the samples complete is sent. Returns TL_OK or the first error of the
 * chain, the downlink or the frame builder. */
tl_status hil_run_push(hil_run *r, const int16_t *in0, const int16_t *in1, size_t count);

/* End of the stream: send the partial frame (tl_frame_flush). Samples of an
 * unfinished integration are dropped. Returns TL_OK or the flush error. */
tl_status hil_run_finish(hil_run *r);

#endif
