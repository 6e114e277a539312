/*
 * report.h - what `tidelock run` prints and writes: the configuration, every
 * counter, the fidelity figures and their verdict, as text and as JSON.
 */
#ifndef TL_HOST_REPORT_H
#define TL_HOST_REPORT_H

#include <stdio.h>
#include "run.h"
#include "scenario.h"

/* The report of a run or a replay on out; its first line names `command`
 * ("run" or "replay") and the scenario. */
void tl_report_print(FILE *out, const char *command, const tl_scenario *s, const tl_run_result *r);

/* Write the JSON summary to path atomically (temporary file, then rename).
 * Returns 0, or -1 with a one-line message in err (cap bytes). */
int tl_report_write_json(const char *path, const tl_scenario *s, const tl_run_result *r, char *err, size_t cap);

#endif
