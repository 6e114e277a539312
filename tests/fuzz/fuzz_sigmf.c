/*
 * fuzz_sigmf.c - libFuzzer target: the SigMF metadata reader
 * (host/sigmf.h, tl_sigmf_open) on arbitrary text as a .sigmf-meta.
 *
 * A private temporary folder holds r.sigmf-data (DATA_BYTES octets of a
 * fixed pattern, written once); each input is written as r.sigmf-meta and
 * opened. Checked on every input (abort() is the failure):
 *   - a refusal is one non-empty line;
 *   - an accepted meta gives a datatype of the supported list, 1 .. 1000
 *     channels, frame_bytes = channels x octets per sample, and samples x
 *     frame_bytes = DATA_BYTES (the data file is whole frames);
 *   - then up to 64 samples of every channel are read (ri16_le, ri8, rf32_le,
 *     and the ci16_le interpolator), or one line says why not.
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "fuzz_common.h"
#include "sigmf.h"

#define DATA_BYTES 8192u

static char meta[300];

static void setup(void)
{
    if (meta[0] != '\0')
        return;
    char data[300];
    const char *dir = fuzz_dir_get();
    snprintf(meta, sizeof meta, "%s/r.sigmf-meta", dir);
    snprintf(data, sizeof data, "%s/r.sigmf-data", dir);
    static uint8_t pattern[DATA_BYTES];
    for (unsigned i = 0; i < DATA_BYTES; i++) /* small values; as rf32_le they are finite */
        pattern[i] = (uint8_t)((i % 4u == 3u) ? 0x3Cu : (i * 37u) & 0x7Fu);
    fuzz_write(data, pattern, sizeof pattern);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    setup();
    fuzz_write(meta, data, size);
    char err[1024];
    err[0] = '\0';
    tl_sigmf_reader *r = tl_sigmf_open(meta, 0, err, sizeof err);
    if (r == NULL) {
        if (err[0] == '\0' || strchr(err, '\n') != NULL)
            abort();
        return 0;
    }
    const tl_sigmf_info *in = tl_sigmf_info_of(r);
    static const unsigned octets[] = { 2, 4, 1, 4 }; /* per sample of each tl_sigmf_type */
    if ((unsigned)in->type > 3u || in->channels < 1 || in->channels > TL_SIGMF_MAX_CHANNELS)
        abort();
    if (in->frame_bytes != in->channels * octets[in->type] || in->samples * in->frame_bytes != DATA_BYTES)
        abort();
    const uint64_t avail = in->is_complex ? in->real_samples : in->samples;
    const size_t n = avail < 64u ? (size_t)avail : 64u;
    int16_t **out = calloc(in->channels, sizeof *out);
    if (out == NULL)
        abort();
    for (unsigned c = 0; c < in->channels && c < 4u; c++) { /* the rest are read and dropped */
        out[c] = calloc(64, sizeof **out);
        if (out[c] == NULL)
            abort();
    }
    if (n > 0 && tl_sigmf_read(r, out, n, err, sizeof err) != 0 && (err[0] == '\0' || strchr(err, '\n') != NULL))
        abort();
    for (unsigned c = 0; c < in->channels && c < 4u; c++)
        free(out[c]);
    free(out);
    tl_sigmf_close(r);
    return 0;
}
