/* scenario.c - the built-in demo scenario (see scenario.h). */
#include "scenario.h"

#include <math.h>
#include <string.h>

void tl_scenario_default(tl_scenario *s)
{
    memset(s, 0, sizeof *s);
    s->name = "hushfield-nominal";
    s->description = "Hushfield lander (invented), HLS-1 low-band spectrometer: two crossed dipoles, "
                     "14-bit ADCs at 102.4 Msample/s, 4096 channels of 12.5 kHz, 4-tap Hann PFB";
    tl_config_default(&s->cfg);
    s->cfg.integration = 4096u;
    s->window = 1u; /* Hann, as the built-in table */
    tl_sky_default(&s->sky);
    s->drive_db = 0.0;
    s->spectra = 4096u;
    s->blocks = 64u;
    s->flight_spectra = 1u << 24;
    s->band_lo_hz = 10e6;
    s->band_hi_hz = 40e6;
}

double tl_scenario_channel_hz(const tl_scenario *s)
{
    return s->sky.sample_rate_hz / s->cfg.points;
}

void tl_scenario_band(const tl_scenario *s, uint32_t *lo, uint32_t *hi)
{
    const double df = tl_scenario_channel_hz(s);
    *lo = (uint32_t)ceil(s->band_lo_hz / df);
    *hi = (uint32_t)floor(s->band_hi_hz / df);
    if (*hi > s->cfg.points / 2u)
        *hi = s->cfg.points / 2u;
}
