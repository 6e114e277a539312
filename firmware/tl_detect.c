/* tl_detect.c - power and cross-power (see tl_detect.h). */
#include "tl_detect.h"

void tl_detect_power(const int32_t *X, uint32_t channels, unsigned shift, tl_rounding mode, uint64_t *P)
{
    for (uint32_t k = 0; k < channels; k++) {
        const int64_t xr = X[2u * k], xi = X[2u * k + 1u];
        const uint64_t p = (uint64_t)(xr * xr) + (uint64_t)(xi * xi);
        P[k] = tl_round_shr_u64(p, shift, mode);
    }
}

void tl_detect_cross(const int32_t *X, const int32_t *Y, uint32_t channels, unsigned shift, tl_rounding mode,
                     int64_t *re, int64_t *im)
{
    for (uint32_t k = 0; k < channels; k++) {
        const int64_t xr = X[2u * k], xi = X[2u * k + 1u];
        const int64_t yr = Y[2u * k], yi = Y[2u * k + 1u];
        re[k] = tl_round_shr_s64(xr * yr + xi * yi, shift, mode);
        im[k] = tl_round_shr_s64(xi * yr - xr * yi, shift, mode);
    }
}
