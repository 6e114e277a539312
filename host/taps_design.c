/* taps_design.c - windows, prototypes and their quantization (see taps_design.h). */
#include "taps_design.h"

#include <math.h>
#include <string.h>

static const struct {
    const char *name;
    unsigned id;
    unsigned terms;
    double a[4];
} windows[] = {
    /* coefficients: Harris 1978, Table I and eq. (30)-(33) */
    { "rectangular", TL_WINDOW_RECTANGULAR, 1, { 1.0, 0, 0, 0 } },
    { "hann", TL_WINDOW_HANN, 2, { 0.5, 0.5, 0, 0 } },
    { "hamming", TL_WINDOW_HAMMING, 2, { 0.54, 0.46, 0, 0 } },
    { "blackman", TL_WINDOW_BLACKMAN, 3, { 0.42, 0.50, 0.08, 0 } },
    { "blackman-harris4", TL_WINDOW_BLACKMAN_HARRIS4, 4, { 0.35875, 0.48829, 0.14128, 0.01168 } },
};
#define NWINDOWS (sizeof windows / sizeof windows[0])

int tl_window_from_name(const char *name)
{
    for (unsigned i = 0; i < NWINDOWS; i++)
        if (strcmp(name, windows[i].name) == 0)
            return (int)windows[i].id;
    return -1;
}

const char *tl_window_name(unsigned window)
{
    for (unsigned i = 0; i < NWINDOWS; i++)
        if (windows[i].id == window)
            return windows[i].name;
    return "other";
}

int tl_window_fill(unsigned window, uint32_t len, double *w)
{
    for (unsigned i = 0; i < NWINDOWS; i++) {
        if (windows[i].id != window)
            continue;
        for (uint32_t n = 0; n < len; n++) {
            double v = 0.0, sign = 1.0;
            for (unsigned k = 0; k < windows[i].terms; k++) {
                v += sign * windows[i].a[k] * cos(2.0 * M_PI * (double)k * (double)n / (double)len);
                sign = -sign;
            }
            w[n] = v;
        }
        return 0;
    }
    return -1;
}

int tl_prototype_design(unsigned window, uint32_t taps, uint32_t points, double *h)
{
    const uint32_t len = taps * points;
    if (tl_window_fill(window, len, h) != 0)
        return -1;
    if (taps >= 2u) {
        for (uint32_t n = 0; n < len; n++) {
            const double x = ((double)n - (double)len / 2.0) / (double)points;
            h[n] *= (x == 0.0) ? 1.0 : sin(M_PI * x) / (M_PI * x);
        }
    }
    return 0;
}

int tl_taps_design(unsigned window, uint32_t taps, uint32_t points, tl_taps *t, double *h_ideal)
{
    if (taps < 1u || taps > TL_MAX_TAPS || points < TL_MIN_POINTS || points > TL_MAX_POINTS ||
        (points & (points - 1u)) != 0u)
        return -1;
    const uint32_t len = taps * points;
    static double h[TL_TAPS_MAX_COEFS];
    if (tl_prototype_design(window, taps, points, h) != 0)
        return -1;
    double peak = 0.0;
    for (uint32_t n = 0; n < len; n++)
        if (fabs(h[n]) > peak)
            peak = fabs(h[n]);
    int shift = 0;
    while (shift < (int)TL_TAPS_MAX_SHIFT && ldexp(peak, shift + 1) <= (double)TL_TAPS_COEF_MAX)
        shift++;
    if (shift < (int)TL_TAPS_MIN_SHIFT)
        shift = (int)TL_TAPS_MIN_SHIFT; /* cannot happen for the windows above (peak <= 1) */
    memset(t, 0, sizeof *t);
    t->points = points;
    t->taps = taps;
    t->shift = (uint32_t)shift;
    t->window = window;
    for (uint32_t n = 0; n < len; n++) {
        const double v = ldexp(h[n], shift);
        t->coef[n] = (int32_t)lround(v);
        if (h_ideal != NULL)
            h_ideal[n] = v;
    }
    t->crc = tl_taps_image_crc(t);
    return 0;
}
