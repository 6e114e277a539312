/* sky_model.c - noise temperatures per switch state (see sky_model.h). */
#include "sky_model.h"

#include <math.h>
#include <string.h>

void tl_sky_default(tl_sky_params *p)
{
    memset(p, 0, sizeof *p);
    p->sample_rate_hz = 102.4e6;
    p->sky_t0_k = 180.0;
    p->sky_f0_hz = 180e6;
    p->sky_index = 2.6;
    p->turnover_hz = 0.0;
    p->trough_depth_k = 0.0;
    p->trough_centre_hz = 20e6;
    p->trough_width_hz = 4e6;
    p->trough_flatness = 1.0;
    p->coherence = 0.5;
    p->receiver_k = 300.0;
    p->highpass_hz = 5e6;
    p->highpass_order = 4;
    p->lowpass_hz = 45e6;
    p->lowpass_order = 8;
    p->resonance_hz = 0.0;
    p->resonance_q = 1.0;
    p->white = 0;
    p->load_k = 300.0;
    p->noise_excess_k = 1000.0;
    p->carrier_hz.n = 0;
    p->carrier_dbfs.n = 0;
    p->burst_hz = 0.0;
    p->burst_dbfs = -40.0;
    p->burst_duty = 0.1;
    p->burst_period_us = 1000.0;
    p->rms_fs = 1.0 / 8.0;
    p->dc_offset_lsb = 0.0;
    p->adc_bits = 14;
    p->inputs = 2;
    p->seed = 1;
}

double tl_sky_antenna_k(const tl_sky_params *p, double f)
{
    if (p->white)
        return p->sky_t0_k;
    if (!(f > 0.0))
        return 0.0;
    double t = p->sky_t0_k * pow(f / p->sky_f0_hz, -p->sky_index);
    if (p->turnover_hz > 0.0) {
        /* (1 - e^-tau) / tau, accurate for small tau too */
        const double tau = pow(f / p->turnover_hz, -2.1);
        t *= -expm1(-tau) / tau;
    }
    if (p->trough_depth_k > 0.0) {
        const double x = fabs(2.0 * (f - p->trough_centre_hz) / p->trough_width_hz);
        t -= p->trough_depth_k * exp(-M_LN2 * pow(x, 2.0 * p->trough_flatness));
    }
    return t;
}

double tl_sky_bandpass(const tl_sky_params *p, double f)
{
    if (p->white)
        return 1.0;
    if (!(f > 0.0))
        return 0.0;
    /* x^2n / (1 + x^2n) written as 1 / (1 + x^-2n): no inf / inf */
    double g = 1.0 / (1.0 + pow(p->highpass_hz / f, 2.0 * p->highpass_order));
    g /= 1.0 + pow(f / p->lowpass_hz, 2.0 * p->lowpass_order);
    if (p->resonance_hz > 0.0) {
        const double y = f / p->resonance_hz - p->resonance_hz / f;
        g /= 1.0 + p->resonance_q * p->resonance_q * y * y;
    }
    return g;
}

double tl_sky_temperature_state(const tl_sky_params *p, unsigned state, double f)
{
    const double g = tl_sky_bandpass(p, f);
    if (g == 0.0)
        return 0.0;
    switch (state) {
    case TL_SKY_ANTENNA:
        return (tl_sky_antenna_k(p, f) + p->receiver_k) * g;
    case TL_SKY_LOAD:
        return (p->load_k + p->receiver_k) * g;
    case TL_SKY_LOAD_NOISE:
        return (p->load_k + p->noise_excess_k + p->receiver_k) * g;
    default:
        return 0.0;
    }
}

double tl_sky_temperature(const tl_sky_params *p, double f)
{
    return tl_sky_temperature_state(p, TL_SKY_ANTENNA, f);
}

double tl_sky_antenna_min_k(const tl_sky_params *p, double *f_hz)
{
    const unsigned n = 8192u;
    const double nyq = p->sample_rate_hz / 2.0;
    double best = tl_sky_antenna_k(p, nyq), at = nyq;
    for (unsigned i = 1; i <= n + 1u; i++) {
        /* the grid, then the trough's centre itself */
        const double f = i <= n ? nyq * i / n : p->trough_centre_hz;
        if (!(f > 0.0) || f > nyq)
            continue;
        const double t = tl_sky_antenna_k(p, f);
        if (t < best) {
            best = t;
            at = f;
        }
    }
    if (f_hz != NULL)
        *f_hz = at;
    return best;
}
