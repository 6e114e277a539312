/*
 * scenario.h - an instrument and an observation, described once.
 *
 * The built-in default is a demo scenario of our own: the "Hushfield" far-side
 * lander carrying the HLS-1 low-band spectrometer (both invented). Scenario
 * files come later; until then every command uses tl_scenario_default.
 */
#ifndef TL_HOST_SCENARIO_H
#define TL_HOST_SCENARIO_H

#include <stdint.h>
#include "sky_noise.h"
#include "tl_chain.h"

typedef struct tl_scenario {
    const char *name;
    const char *description;
    tl_config cfg;            /* firmware configuration */
    unsigned window;          /* of the coefficient table (tl_window) */
    tl_sky_params sky;        /* voltages at the ADC */
    double drive_db;          /* RMS relative to the nominal sky.rms_fs, dB */
    uint32_t spectra;         /* spectra measured (M) */
    uint32_t blocks;          /* blocks for the standard errors (J) */
    uint32_t flight_spectra;  /* integration length to extrapolate to (M') */
    double band_lo_hz, band_hi_hz; /* science band */
} tl_scenario;

void tl_scenario_default(tl_scenario *s);

/* Channel index range [lo, hi) of the science band. */
void tl_scenario_band(const tl_scenario *s, uint32_t *lo, uint32_t *hi);

/* Channel width in Hz. */
double tl_scenario_channel_hz(const tl_scenario *s);

#endif
