/*
 * vectors.h - golden vectors: small inputs and the exact transfer frame
 * stream the firmware must send for them, on every target.
 *
 * A vector folder DIR/NAME holds
 *   scenario.ini  the scenario the input was made from (as resolved)
 *   setup.bin     the run setup record (firmware/tl_link.h)
 *   taps.bin      the coefficient table image (absent: the built-in table)
 *   samples.bin   ADC words, int16 big-endian, inputs interleaved
 *   frames.bin    the expected frame stream: sync marker + transfer frame,
 *                 back to back (firmware/tl_frame.h), the last frame
 *                 completed by tl_frame_flush
 * and DIR/manifest.json lists every vector: name, purpose, scenario, seed,
 * arithmetic spec version, geometry, the targets whose maxima hold it, and
 * the length and SHA-256 of every file.
 *
 * The definitions are in vectors.c. Inputs come from the simulator
 * (sky_noise.h), switched frame by frame as the chain asks; the expected
 * frames come from the firmware in this process (tl_chain, tl_downlink,
 * tl_frame), fed the setup record as a target decodes it. Everything is
 * deterministic: the same tree regenerates the same bytes.
 */
#ifndef TL_HOST_VECTORS_H
#define TL_HOST_VECTORS_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

/* Maxima of the Cortex-M7 build (hil/targets.mk sets the same numbers;
 * tests/test_cross.c fails if the two disagree). */
#define TL_VECTORS_M7_MAX_POINTS 4096u
#define TL_VECTORS_M7_MAX_TAPS 4u

#define TL_VECTORS_MANIFEST "manifest.json"
#define TL_VECTORS_FORMAT "tidelock golden vectors 1"

/* Number of vectors and the name of vector i (NULL past the end). */
size_t tl_vectors_count(void);
const char *tl_vectors_name(size_t i);

/* Write every vector and the manifest into dir (created if missing; each
 * file written whole or not at all). progress (may be NULL) gets one line
 * per vector. Returns 0, or -1 with one line in err. */
int tl_vectors_make(const char *dir, FILE *progress, char *err, size_t cap);

/* Regenerate into a temporary folder and compare with dir byte for byte.
 * Prints one line per mismatch to out (a file that differs, is missing or
 * is not expected), naming the file and, for a frame stream, the first
 * differing frame, packet, field and channel. Returns the number of
 * mismatches (0: identical), or -1 with one line in err when the
 * regeneration itself failed. */
long tl_vectors_check(const char *dir, FILE *out, char *err, size_t cap);

/* One line describing where frame stream `got` first differs from
 * `expect` (frame_len: transfer frame length without the sync marker):
 * frame, field, and inside the data field the packet, its field and, for
 * a science payload, the channel and both values. */
void tl_vectors_describe(const uint8_t *expect, size_t expect_len, const uint8_t *got, size_t got_len,
                         uint32_t frame_len, char *out, size_t cap);

#endif
