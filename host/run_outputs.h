/*
 * run_outputs.h - the files a run leaves in its output folder, written the
 * same way by `tidelock run` and `tidelock replay`:
 *   DIR/summary.json   the report as JSON (report.h)
 *   DIR/scenario.ini   the scenario as resolved
 *   DIR/auto<i>.csv, cross.csv, *.npy   the integrated spectra (spectra_out.h),
 *                      as the scenario's [output] csv and npy keys ask
 *   DIR/packets.bin, frames.bin   the downlink of the product (downlink_out.h)
 *   DIR/calibrated.csv, calibrated.npy   with a switch sequence: per channel
 *                      the model's antenna temperature and each input's
 *                      calibrated temperature and its noise, K
 * each through tl_atomic_write, so each appears whole or not at all.
 */
#ifndef TL_HOST_RUN_OUTPUTS_H
#define TL_HOST_RUN_OUTPUTS_H

#include <stddef.h>
#include <stdio.h>
#include "run.h"
#include "scenario.h"

/* Make sure DIR is a folder, creating it (one level) when missing.
 * Returns 0, or -1 with one line in err (cap bytes) naming DIR. */
int tl_run_outputs_folder(const char *dir, char *err, size_t cap);

/* Write every output file of r into the existing folder DIR. Returns 0, or
 * -1 with one line in err naming the file that failed; files written before
 * it stay, the failing one is left absent or as it was. */
int tl_run_outputs_write(const char *dir, const tl_scenario *s, const tl_run_result *r, char *err, size_t cap);

/* calibrated.csv / calibrated.npy (as s's [output] keys ask) from a
 * product and its calibration (tl_run_calibrate). Returns 0, or -1 with one
 * line in err naming the file. */
int tl_run_outputs_calibrated(const char *dir, const tl_scenario *s, const tl_product *p, const tl_cal_report *c,
                              char *err, size_t cap);

/* The closing line "wrote DIR/: summary.json, scenario.ini, ..." to out. */
void tl_run_outputs_say(FILE *out, const char *dir, const tl_scenario *s);

#endif
