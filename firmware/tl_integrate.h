/*
 * tl_integrate.h - integration: sums of M detected spectra in 64 bits.
 *
 * Auto-powers accumulate in uint64, cross-power components in int64, each
 * add saturating (never wrapping). A channel whose sum saturated during the
 * integration gets a flag bit and is counted once per product type. The
 * sums are exact integers: integrating M spectra, or J pieces of M/J and
 * adding them, gives the same numbers unless something saturated.
 */
#ifndef TL_INTEGRATE_H
#define TL_INTEGRATE_H

#include <stdint.h>
#include "tl_limits.h"

/* Per-channel flag bits in tl_integrator.flags and tl_product.flags. */
#define TL_FLAG_SAT_AUTO0 0x01u  /* input 0 auto-power sum saturated */
#define TL_FLAG_SAT_AUTO1 0x02u  /* input 1 auto-power sum saturated */
#define TL_FLAG_SAT_CROSS_RE 0x04u
#define TL_FLAG_SAT_CROSS_IM 0x08u
#define TL_FLAG_UPSET 0x10u      /* the integration ran while a table, the configuration or the chain's
                                  * running state was found corrupted (tl_scrub.h): do not trust it */

typedef struct tl_integrator {
    uint32_t channels;
    uint32_t spectra;           /* spectra added since the last reset */
    uint32_t sat_channels[4];   /* channels saturated: auto0, auto1, cross re, cross im */
    uint64_t auto_sum[TL_MAX_INPUTS][TL_MAX_CHANNELS];
    int64_t cross_re[TL_MAX_CHANNELS];
    int64_t cross_im[TL_MAX_CHANNELS];
    uint8_t flags[TL_MAX_CHANNELS];
} tl_integrator;

/* Zero every sum, flag and count for `channels` channels (<= TL_MAX_CHANNELS). */
void tl_integrate_reset(tl_integrator *it, uint32_t channels);

/* auto_sum[input][k] += P[k], saturating; input < TL_MAX_INPUTS. */
void tl_integrate_power(tl_integrator *it, uint32_t input, const uint64_t *P);

/* cross_re[k] += re[k], cross_im[k] += im[k], saturating. */
void tl_integrate_cross(tl_integrator *it, const int64_t *re, const int64_t *im);

#endif
