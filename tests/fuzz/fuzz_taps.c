/*
 * fuzz_taps.c - libFuzzer target: the coefficient table loader
 * (firmware/tl_taps.h, tl_taps_check_image / tl_taps_load_image).
 *
 * Input: one mode octet, then the image. Mode bit 0 set: the harness
 * rewrites the last four octets with the image's CRC-32C first, so the
 * fuzzer reaches the coefficient range check behind the CRC.
 *
 * Checked on every input (abort() is the failure libFuzzer reports):
 *   - check_image and load_image return the same status;
 *   - on an error the destination is not written (tl_taps.h: "On any
 *     error *dst is not written"): a sentinel survives;
 *   - on TL_OK, tl_taps_write_image gives back exactly the input image.
 */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "tl_bytes.h"
#include "tl_crc32c.h"
#include "tl_taps.h"

static tl_taps dst;
static uint8_t img[TL_TAPS_IMAGE_BYTES(TL_MAX_TAPS, TL_MAX_POINTS)];
static uint8_t out[TL_TAPS_IMAGE_BYTES(TL_MAX_TAPS, TL_MAX_POINTS)];

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1 || size - 1 > sizeof img)
        return 0;
    const uint8_t mode = data[0];
    const size_t len = size - 1;
    memcpy(img, data + 1, len);
    if ((mode & 1u) && len >= 4) {
        const uint32_t crc = tl_crc32c(img, len - 4);
        img[len - 4] = (uint8_t)(crc >> 24);
        img[len - 3] = (uint8_t)(crc >> 16);
        img[len - 2] = (uint8_t)(crc >> 8);
        img[len - 1] = (uint8_t)crc;
    }
    uint32_t points = 0, taps = 0;
    const tl_status st_check = tl_taps_check_image(img, len, &points, &taps);
    dst.points = 0xDEADBEEFu;
    dst.crc = 0xA5A5A5A5u;
    dst.coef[0] = 0x7EADBEEF;
    const tl_status st_load = tl_taps_load_image(&dst, img, len);
    if (st_check != st_load)
        abort();
    if (st_load != TL_OK) {
        if (dst.points != 0xDEADBEEFu || dst.crc != 0xA5A5A5A5u || dst.coef[0] != 0x7EADBEEF)
            abort(); /* written on error */
        return 0;
    }
    if (dst.points != points || dst.taps != taps)
        abort();
    size_t wlen = 0;
    if (tl_taps_write_image(&dst, out, sizeof out, &wlen) != TL_OK || wlen != len || memcmp(out, img, len) != 0)
        abort(); /* a loaded table does not write back as the image it came from */
    if (tl_taps_image_crc(&dst) != dst.crc)
        abort();
    return 0;
}
