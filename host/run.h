/*
 * run.h - run a scenario: sky voltages through the firmware chain and the
 * references, and the fidelity figures (used by `tidelock run` and tests).
 */
#ifndef TL_HOST_RUN_H
#define TL_HOST_RUN_H

#include "fidelity.h"
#include "scenario.h"

typedef struct tl_run_result {
    tl_fid_result fid;
    uint64_t generator_clips[2];  /* samples the sky generator clipped, per input */
    double seconds;               /* wall time of the run */
} tl_run_result;

/* Run s at its drive level. progress (may be NULL) is called after each
 * block with (ctx, done, total). Returns TL_OK or the first error. */
tl_status tl_run_scenario(const tl_scenario *s, tl_run_result *r, void (*progress)(void *, uint32_t, uint32_t),
                          void *progress_ctx);

#endif
