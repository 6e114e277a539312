/*
 * tl_switch.h - the calibration switch sequence the firmware follows.
 *
 * The front end has three switch states: the antenna, a reference load, and
 * the load plus a noise source (Dicke-style switching; Skou and Le Vine,
 * Microwave Radiometer Systems, ch. 10). The firmware steps through a
 * repeating sequence of (state, dwell) steps, dwell counted in frames of N
 * samples (one frame per spectrum once the filterbank is full). Each
 * spectrum belongs to the state of its newest frame. After every change of
 * state the first `discard` spectra are not integrated: with P taps the
 * first P-1 spectra after a change still hold frames of the previous state,
 * so discard >= P-1 keeps the states apart. The sequence also counts as
 * changed at start and after a reset.
 *
 * With no steps every spectrum is the antenna's and none is discarded.
 */
#ifndef TL_SWITCH_H
#define TL_SWITCH_H

#include <stddef.h>
#include <stdint.h>
#include "tl_limits.h"
#include "tl_status.h"

#define TL_STATE_ANTENNA 0u
#define TL_STATE_LOAD 1u
#define TL_STATE_NOISE 2u /* load plus noise source */
#define TL_STATES 3u
#define TL_MAX_SWITCH_STEPS 8u

typedef struct tl_switch {
    uint32_t steps;                          /* 0: no switching */
    uint8_t state[TL_MAX_SWITCH_STEPS];      /* TL_STATE_* of each step */
    uint32_t dwell[TL_MAX_SWITCH_STEPS];     /* frames in each step, >= 1 */
    uint32_t discard;                        /* spectra dropped after each change */
    uint32_t step;                           /* current step */
    uint32_t in_step;                        /* frames already in the current step */
    uint32_t in_state;                       /* frames since the state last changed (saturates) */
} tl_switch;

/* Check a sequence without starting it: the checks of tl_switch_init,
 * nothing written. Returns TL_OK, TL_E_NULL (arrays NULL with steps > 0)
 * or TL_E_SWITCH. */
tl_status tl_switch_check(uint32_t steps, const uint8_t *state, const uint32_t *dwell, uint32_t discard);

/* Check and start a sequence. steps 0..TL_MAX_SWITCH_STEPS; each state
 * < TL_STATES; each dwell 1..TL_MAX_INTEGRATION; discard below every dwell
 * (0 when steps is 0). Returns TL_OK, TL_E_NULL (arrays NULL with steps > 0)
 * or TL_E_SWITCH; on error *sw is not written. */
tl_status tl_switch_init(tl_switch *sw, uint32_t steps, const uint8_t *state, const uint32_t *dwell,
                         uint32_t discard);

/* Back to the first step, as at start (counts as a change). */
void tl_switch_reset(tl_switch *sw);

/* State of the frame being received now. */
uint32_t tl_switch_state(const tl_switch *sw);

/* 1 if a spectrum whose newest frame is the current frame is integrated,
 * 0 if it falls in the discard window after a change. */
int tl_switch_keep(const tl_switch *sw);

/* The current frame is complete: move the sequence on by one frame. */
void tl_switch_advance(tl_switch *sw);

#endif
