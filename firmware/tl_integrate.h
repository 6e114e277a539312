/*
 * tl_integrate.h - integration: sums of M detected spectra in 64 bits.
 *
 * Auto-powers accumulate in uint64, cross-power components in int64, each
 * add saturating (never wrapping). A channel whose sum saturated during the
 * integration gets a flag bit and is counted once per product type. The
 * sums are exact integers: integrating M spectra, or J pieces of M/J and
 * adding them, gives the same numbers unless something saturated.
 *
 * Upset check: `check` is kept equal to the wrapping (mod 2^64) sum of
 * every auto_sum, cross_re and cross_im word (as uint64), every flags
 * octet and every sat_channels count, for the channels in use, by adding
 * each change as it is made (new minus old). tl_integrate_verify sums the
 * words again: one flipped bit anywhere in them, or in `check`, changes
 * one side by +-2^b (b < 64), which is never 0 mod 2^64, so every single
 * bit upset of the running sums is found (tl_chain_take checks every bank
 * before it releases a product; docs/faults.md).
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
    uint64_t check;             /* wrapping sum of the words above (see the top of this file) */
} tl_integrator;

/* Zero every sum, flag and count for `channels` channels (<= TL_MAX_CHANNELS). */
void tl_integrate_reset(tl_integrator *it, uint32_t channels);

/* auto_sum[input][k] += P[k], saturating; input < TL_MAX_INPUTS. */
void tl_integrate_power(tl_integrator *it, uint32_t input, const uint64_t *P);

/* cross_re[k] += re[k], cross_im[k] += im[k], saturating. */
void tl_integrate_cross(tl_integrator *it, const int64_t *re, const int64_t *im);

/* 1 if `check` equals the sum of the words it covers (channels clamped to
 * TL_MAX_CHANNELS), 0 if a bit of them or of `check` has flipped. Costs
 * five 64-bit additions per channel, once per integration. */
int tl_integrate_verify(const tl_integrator *it);

#endif
