/* run.c - scenario runner (see run.h). */
#include "run.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include "sky_noise.h"
#include "taps_design.h"

static void sky_source(void *state, int16_t *in0, int16_t *in1, size_t n)
{
    tl_sky_fill((tl_sky *)state, in0, in1, n);
}

tl_status tl_run_scenario(const tl_scenario *s, tl_run_result *r, void (*progress)(void *, uint32_t, uint32_t),
                          void *progress_ctx)
{
    memset(r, 0, sizeof *r);
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    tl_sky_params sp = s->sky;
    sp.rms_fs *= pow(10.0, s->drive_db / 20.0);
    sp.adc_bits = s->cfg.adc_bits;
    sp.inputs = s->cfg.inputs;
    tl_sky *sky = tl_sky_open(&sp);
    if (sky == NULL)
        return r->fid.status = TL_E_NULL;
    /* the firmware's built-in table when the scenario asks for it, else
     * one designed from the scenario, passed as a CRC-checked image */
    uint8_t *img = NULL;
    size_t img_len = 0;
    if (s->cfg.points != tl_taps_default_points || s->cfg.taps != tl_taps_default_taps ||
        s->window != tl_taps_default_window) {
        tl_taps *t = malloc(sizeof *t);
        img = malloc(TL_TAPS_IMAGE_BYTES(s->cfg.taps, s->cfg.points));
        if (t == NULL || img == NULL || tl_taps_design(s->window, s->cfg.taps, s->cfg.points, t, NULL) != 0 ||
            tl_taps_write_image(t, img, TL_TAPS_IMAGE_BYTES(s->cfg.taps, s->cfg.points), &img_len) != TL_OK) {
            free(t);
            free(img);
            tl_sky_close(sky);
            return r->fid.status = TL_E_TABLE_FORMAT;
        }
        free(t);
    }
    tl_fid_setup su;
    memset(&su, 0, sizeof su);
    su.taps_image = img;
    su.taps_len = img_len;
    su.cfg = s->cfg;
    su.cfg.integration = s->spectra;
    su.progress = progress;
    su.progress_ctx = progress_ctx;
    su.window = s->window;
    su.spectra = s->spectra;
    su.blocks = s->blocks;
    tl_scenario_band(s, &su.band_lo, &su.band_hi);
    su.flight_spectra = s->flight_spectra;
    su.source = sky_source;
    su.source_state = sky;
    const tl_status st = tl_fidelity_run(&su, &r->fid);
    r->generator_clips[0] = tl_sky_clipped(sky, 0);
    r->generator_clips[1] = tl_sky_clipped(sky, 1);
    tl_sky_close(sky);
    free(img);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    r->seconds = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    return st;
}
