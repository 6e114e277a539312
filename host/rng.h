/*
 * rng.h - seeded, reproducible random numbers for the host (never firmware).
 *
 * xoshiro256** (Blackman and Vigna, "Scrambled linear pseudorandom number
 * generators", ACM TOMS 47(4), 2021) seeded through splitmix64; normal
 * deviates by the Marsaglia polar method. The same seed gives the same
 * sequence on every machine (integer core; the polar method's log and sqrt
 * are IEEE double and glibc's correctly rounded sqrt).
 */
#ifndef TL_HOST_RNG_H
#define TL_HOST_RNG_H

#include <stdint.h>

typedef struct tl_rng {
    uint64_t s[4];
    double spare;
    int has_spare;
} tl_rng;

void tl_rng_seed(tl_rng *r, uint64_t seed);
uint64_t tl_rng_u64(tl_rng *r);
double tl_rng_uniform(tl_rng *r);   /* [0, 1) with 53 random bits */
double tl_rng_normal(tl_rng *r);    /* zero mean, unit variance */

#endif
