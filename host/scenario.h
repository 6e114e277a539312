/*
 * scenario.h - an instrument and an observation, described once.
 *
 * A scenario file is INI (parsed with Debian's inih), one section per
 * concern: [scenario], [instrument], [integration], [sky], [interference],
 * [fidelity], [switching], [fit], [flagging], [downlink], [budget], [processor], [sensitivity], [output]. Every key is optional (the built-in default fills
 * it in), every given key is checked for type and range, and unknown
 * sections or keys, repeated keys, indented continuation lines, lines
 * longer than 199 characters, text after a section header, "key: value",
 * and " ;" inside a value (which the INI library would take as a comment
 * and cut) are errors.
 * Integers are decimal (masks may be 0x hex); numbers are decimal. The first
 * error in the file is reported, as one line:
 *     FILE:LINE: [section] key = 'value': must be ... (unit)
 *
 * The built-in default is a demo scenario of our own: the "Hushfield"
 * far-side lander carrying the HLS-1 low-band spectrometer (both invented).
 * `tidelock scenario --print` writes it with every key commented, and
 * docs/scenario-default.ini is that output (tests/test_scenario.c compares).
 */
#ifndef TL_HOST_SCENARIO_H
#define TL_HOST_SCENARIO_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include "sky_noise.h"
#include "tl_chain.h"

#define TL_SCENARIO_NAME_MAX 64
#define TL_SCENARIO_TEXT_MAX 160
#define TL_SCENARIO_PATH_MAX 181  /* folder: up to 180 characters, so its line fits */
#define TL_SCENARIO_LINE_MAX 199  /* longest line of a scenario file */

typedef struct tl_scenario {
    char name[TL_SCENARIO_NAME_MAX];
    char description[TL_SCENARIO_TEXT_MAX];
    tl_config cfg;            /* firmware configuration (points = 2 x channels) */
    unsigned window;          /* tl_window of the coefficient table */
    double adc_full_scale_v;  /* volts at the ADC's positive full scale */
    tl_sky_params sky;        /* voltages at the ADC; sky.sample_rate_hz is the ADC rate */
    double drive_db;          /* RMS relative to sky.rms_fs, dB */
    uint32_t spectra;         /* spectra per integration (M) */
    uint32_t blocks;          /* blocks for the standard errors (J) */
    uint32_t flight_spectra;  /* integration length to extrapolate to (M'), 0 = none */
    double band_lo_hz, band_hi_hz; /* science band */
    char folder[TL_SCENARIO_PATH_MAX]; /* output folder */
    unsigned write_csv, write_npy;
    uint32_t fit_order;       /* log-polynomial order of the foreground under a trough */
    /* [downlink]: packets and frames (firmware/tl_downlink.h, tl_frame.h) */
    unsigned dl_encoding;     /* 0 lossless, 1 noise-bounded */
    double dl_fraction;       /* noise fraction f of the bounded encoding */
    uint32_t dl_block;        /* channels per step of the bounded encoding */
    unsigned dl_transpose;    /* 0 byte shuffle, 1 bit planes */
    uint32_t dl_max_packet;   /* octets */
    uint32_t dl_frame_len;    /* octets, ASM excluded */
    uint32_t dl_apid_science, dl_apid_hk, dl_apid_sk, dl_scid, dl_vcid, dl_mode;
    /* [flagging]: spectral kurtosis (cfg.sk_spectra is the block) */
    double sk_false_alarm;    /* two-sided false-alarm probability per channel and block */
    /* [budget]: the link and storage the downlink must fit */
    double bud_rate_bps;      /* relay link rate while in contact */
    double bud_contact_h;     /* hours between relay contacts (storage must last) */
    double bud_pass_h;        /* contact time per pass */
    double bud_alloc_bytes_day; /* data volume allocated to the instrument per Earth day */
    double bud_storage_bytes; /* onboard storage for the instrument */
    double bud_night_fraction, bud_day_fraction; /* observing time per lunar night / day */
    /* [processor]: the processor-speed model (acquisition.h, docs/acquisition.md) */
    unsigned proc_model;      /* 1: `tidelock run` drives the chain through the model */
    double proc_clock_hz;     /* processor clock */
    double proc_cpi;          /* cycles per instruction */
    uint32_t proc_block;      /* capture block, samples per input (a multiple of 2 x channels) */
    uint32_t proc_buffers;    /* capture buffers */
    double proc_ips[6];       /* instructions per sample instant (all inputs) by stage: filterbank, fft,
                               * detection, integration, encoding, packets */
    /* [sensitivity]: the co-added observation the sensitivity budget is for (sensitivity.h) */
    double sens_hours;        /* co-added observing time, h */
    double sens_duty;         /* fraction of that time the spectrometer integrates */
} tl_scenario;

/* The built-in default (docs/scenario-default.ini): the dark-ages band of
 * the invented far-side lander, a sky with its low-frequency turnover, a
 * 40 mK trough at 17 MHz, and switched-load calibration. */
void tl_scenario_default(tl_scenario *s);

/* The chain-fidelity configuration (docs/scenario-nominal.ini): antenna
 * only, 4096 spectra, a plain power-law sky, science band 10 to 40 MHz.
 * The fidelity figures of docs/validation.md are measured on it. */
void tl_scenario_nominal(tl_scenario *s);

/* Read FILE over the defaults in *s (call tl_scenario_default first).
 * Returns 0, or -1 with one line in err (cap bytes): file, line, section,
 * key, value and the allowed range. *s may be partly updated on error. */
int tl_scenario_load(const char *path, tl_scenario *s, char *err, size_t cap);

/* Check the whole scenario (ranges and the relations between keys).
 * `path` names the file in messages (NULL: "scenario"). Returns 0 or -1
 * with one line in err. tl_scenario_load calls it. */
int tl_scenario_check(const tl_scenario *s, const char *path, char *err, size_t cap);

/* Set one key from its text, as a file line "key = value" in [section]
 * would (same parsing and range check), then the fields it determines.
 * Relations between keys are not checked: call tl_scenario_check after the
 * last key. Returns 0, or -1 with one line in err: "[section] key =
 * 'value': must be ..." or, for an unknown section or key, the list of
 * allowed ones. */
int tl_scenario_set(tl_scenario *s, const char *section, const char *key, const char *value, char *err, size_t cap);

/* Write s as a scenario file, every key with its unit, range and default
 * in a comment. Returns 0, or -1 on a write error. */
int tl_scenario_write(FILE *out, const tl_scenario *s);

/* Channel index range [lo, hi) of the science band. */
void tl_scenario_band(const tl_scenario *s, uint32_t *lo, uint32_t *hi);

/* Channel width in Hz. */
/* The generator of s's voltages as every command sets it up: s->sky with
 * the drive applied to the RMS, the ADC bits and inputs of the
 * configuration. NULL on bad parameters or out of memory; tl_sky_close it. */
tl_sky *tl_scenario_sky(const tl_scenario *s);

/* The coefficient table image of s, CRC-checked as the firmware loads it:
 * designed from s's window, taps and points (malloc'd into *img). When
 * always is 0 and s asks for the firmware's built-in table, *img is NULL
 * (the chain's default). Returns 0, or -1 when the design fails. */
int tl_scenario_taps_image(const tl_scenario *s, int always, uint8_t **img, size_t *img_len);

double tl_scenario_channel_hz(const tl_scenario *s);

#endif
