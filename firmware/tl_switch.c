/* tl_switch.c - the calibration switch sequence (see tl_switch.h). */
#include "tl_switch.h"

tl_status tl_switch_check(uint32_t steps, const uint8_t *state, const uint32_t *dwell, uint32_t discard)
{
    if (steps > TL_MAX_SWITCH_STEPS || (steps == 0u && discard != 0u))
        return TL_E_SWITCH;
    if (steps > 0u && (state == NULL || dwell == NULL))
        return TL_E_NULL;
    for (uint32_t i = 0; i < steps; i++)
        if (state[i] >= TL_STATES || dwell[i] < 1u || dwell[i] > TL_MAX_INTEGRATION || discard >= dwell[i])
            return TL_E_SWITCH;
    return TL_OK;
}

tl_status tl_switch_init(tl_switch *sw, uint32_t steps, const uint8_t *state, const uint32_t *dwell,
                         uint32_t discard)
{
    if (sw == NULL)
        return TL_E_NULL;
    const tl_status st = tl_switch_check(steps, state, dwell, discard);
    if (st != TL_OK)
        return st;
    sw->steps = steps;
    for (uint32_t i = 0; i < TL_MAX_SWITCH_STEPS; i++) {
        sw->state[i] = (i < steps) ? state[i] : (uint8_t)TL_STATE_ANTENNA;
        sw->dwell[i] = (i < steps) ? dwell[i] : 0u;
    }
    sw->discard = discard;
    tl_switch_reset(sw);
    return TL_OK;
}

void tl_switch_reset(tl_switch *sw)
{
    sw->step = 0;
    sw->in_step = 0;
    sw->in_state = 0;
}

uint32_t tl_switch_state(const tl_switch *sw)
{
    /* bounded whatever a flipped bit left in step (tl_chain repairs it) */
    return (sw->steps == 0u || sw->step >= TL_MAX_SWITCH_STEPS) ? TL_STATE_ANTENNA : sw->state[sw->step];
}

int tl_switch_keep(const tl_switch *sw)
{
    return sw->in_state >= sw->discard;
}

void tl_switch_advance(tl_switch *sw)
{
    if (sw->in_state < UINT32_MAX)
        sw->in_state++;
    if (sw->steps == 0u)
        return;
    if (++sw->in_step < sw->dwell[sw->step])
        return;
    const uint32_t before = sw->state[sw->step];
    sw->step = (sw->step + 1u) % sw->steps;
    sw->in_step = 0;
    if (sw->state[sw->step] != before)
        sw->in_state = 0;
}
