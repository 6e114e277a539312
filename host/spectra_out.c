/* spectra_out.c - CSV and .npy files of one integration (see spectra_out.h). */
#include "spectra_out.h"

#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "atomic_file.h"
#include "npy.h"

typedef struct table_job {
    const tl_product *p;
    double sample_rate_hz;
    uint32_t input; /* auto table: which input; TL_MAX_INPUTS: the cross table */
} table_job;

/* Channel k's centre frequency in MHz; the CSV and .npy axes use this one expression. */
static double channel_mhz(const tl_product *p, double sample_rate_hz, uint32_t k)
{
    return (double)k * sample_rate_hz / (double)p->points / 1e6;
}

static int write_table(FILE *f, void *ctx)
{
    const table_job *j = ctx;
    const tl_product *p = j->p;
    if (j->input < TL_MAX_INPUTS) {
        const uint8_t bit = (uint8_t)(TL_FLAG_SAT_AUTO0 << j->input);
        if (fputs("frequency_mhz,power,saturated\n", f) == EOF)
            return -1;
        for (uint32_t k = 0; k < p->channels; k++)
            if (fprintf(f, "%.6f,%" PRIu64 ",%d\n", channel_mhz(p, j->sample_rate_hz, k), p->auto_power[j->input][k],
                        (p->flags[k] & bit) != 0) < 0)
                return -1;
    } else {
        const uint8_t bits = (uint8_t)(TL_FLAG_SAT_CROSS_RE | TL_FLAG_SAT_CROSS_IM);
        if (fputs("frequency_mhz,re,im,saturated\n", f) == EOF)
            return -1;
        for (uint32_t k = 0; k < p->channels; k++)
            if (fprintf(f, "%.6f,%" PRId64 ",%" PRId64 ",%d\n", channel_mhz(p, j->sample_rate_hz, k), p->cross_re[k],
                        p->cross_im[k], (p->flags[k] & bits) != 0) < 0)
                return -1;
    }
    return 0;
}

/* dir/name into out; -1 with a message when it does not fit. */
static int join(char *out, size_t n, const char *dir, const char *name, char *err, size_t cap)
{
    if (snprintf(out, n, "%s/%s", dir, name) >= (int)n) {
        snprintf(err, cap, "%s/%s: path too long", dir, name);
        return -1;
    }
    return 0;
}

static int write_csv(const char *dir, const tl_product *p, double sample_rate_hz, char *err, size_t cap)
{
    char path[4096], name[32];
    /* tables 0 .. inputs-1 are the auto-powers; table `inputs` (two inputs only) the cross-power */
    const uint32_t tables = p->inputs == 2u ? 3u : 1u;
    for (uint32_t t = 0; t < tables; t++) {
        const int cross = t == p->inputs;
        if (cross)
            snprintf(name, sizeof name, "cross.csv");
        else
            snprintf(name, sizeof name, "auto%u.csv", t);
        if (join(path, sizeof path, dir, name, err, cap) != 0)
            return -1;
        table_job job = {p, sample_rate_hz, cross ? TL_MAX_INPUTS : t};
        if (tl_atomic_write(path, write_table, &job, err, cap) != 0)
            return -1;
    }
    return 0;
}

static int write_npy(const char *dir, const tl_product *p, double sample_rate_hz, char *err, size_t cap)
{
    char path[4096], name[32];
    const size_t n = p->channels;
    int rc = -1;
    double *freq = malloc(n * sizeof *freq);
    int64_t *cross = malloc(2u * n * sizeof *cross);
    if (freq == NULL || cross == NULL) {
        snprintf(err, cap, "%s/frequency_mhz.npy: out of memory", dir);
        goto done;
    }
    for (uint32_t k = 0; k < p->channels; k++) {
        freq[k] = channel_mhz(p, sample_rate_hz, k);
        cross[2u * k] = p->cross_re[k];
        cross[2u * k + 1u] = p->cross_im[k];
    }
    if (join(path, sizeof path, dir, "frequency_mhz.npy", err, cap) != 0 ||
        tl_npy_write(path, "<f8", n, 0, freq, err, cap) != 0)
        goto done;
    for (uint32_t i = 0; i < p->inputs; i++) {
        snprintf(name, sizeof name, "auto%u.npy", i);
        if (join(path, sizeof path, dir, name, err, cap) != 0 ||
            tl_npy_write(path, "<u8", n, 0, p->auto_power[i], err, cap) != 0)
            goto done;
    }
    if (p->inputs == 2u && (join(path, sizeof path, dir, "cross.npy", err, cap) != 0 ||
                            tl_npy_write(path, "<i8", n, 2, cross, err, cap) != 0))
        goto done;
    if (join(path, sizeof path, dir, "flags.npy", err, cap) != 0 ||
        tl_npy_write(path, "|u1", n, 0, p->flags, err, cap) != 0)
        goto done;
    rc = 0;
done:
    free(freq);
    free(cross);
    return rc;
}

int tl_spectra_write(const char *dir, const tl_product *p, double sample_rate_hz, int want_csv, int want_npy, char *err,
                     size_t cap)
{
    if (dir == NULL || p == NULL) {
        snprintf(err, cap, "%s: no spectra to write", dir ? dir : "(null folder)");
        return -1;
    }
    if (p->channels == 0 || p->channels > TL_MAX_CHANNELS || p->inputs < 1u || p->inputs > TL_MAX_INPUTS ||
        p->points == 0) {
        snprintf(err, cap, "%s: product has %u channels, %u inputs, %u points; want 1..%u channels, 1..%u inputs",
                 dir, p->channels, p->inputs, p->points, (unsigned)TL_MAX_CHANNELS, (unsigned)TL_MAX_INPUTS);
        return -1;
    }
    if (!isfinite(sample_rate_hz) || sample_rate_hz <= 0.0) {
        snprintf(err, cap, "%s: sample rate %g Hz is not a positive number", dir, sample_rate_hz);
        return -1;
    }
    if (want_csv && write_csv(dir, p, sample_rate_hz, err, cap) != 0)
        return -1;
    if (want_npy && write_npy(dir, p, sample_rate_hz, err, cap) != 0)
        return -1;
    return 0;
}
