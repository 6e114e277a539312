/* rng.c - xoshiro256** and polar normals (see rng.h). */
#include "rng.h"

#include <math.h>

static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

void tl_rng_seed(tl_rng *r, uint64_t seed)
{
    for (int i = 0; i < 4; i++)
        r->s[i] = splitmix64(&seed);
    r->has_spare = 0;
    r->spare = 0.0;
}

static uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

uint64_t tl_rng_u64(tl_rng *r)
{
    uint64_t *s = r->s;
    const uint64_t result = rotl(s[1] * 5u, 7) * 9u;
    const uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

double tl_rng_uniform(tl_rng *r)
{
    return (double)(tl_rng_u64(r) >> 11) * 0x1.0p-53;
}

double tl_rng_normal(tl_rng *r)
{
    if (r->has_spare) {
        r->has_spare = 0;
        return r->spare;
    }
    double u, v, s;
    do {
        u = 2.0 * tl_rng_uniform(r) - 1.0;
        v = 2.0 * tl_rng_uniform(r) - 1.0;
        s = u * u + v * v;
    } while (s >= 1.0 || s == 0.0);
    const double f = sqrt(-2.0 * log(s) / s);
    r->spare = v * f;
    r->has_spare = 1;
    return u * f;
}
