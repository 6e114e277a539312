/* tl_twiddle.c - quadrant folding of the quarter-wave table. */
#include "tl_twiddle.h"

void tl_twiddle(uint32_t t, int32_t *re, int32_t *im)
{
    const uint32_t q = TL_TWIDDLE_QUARTER;
    t %= TL_TWIDDLE_TURN;
    const uint32_t quadrant = t / q;
    const uint32_t r = t % q;
    int32_t c, s; /* cos and sin of theta */
    switch (quadrant) {
    case 0u: c = tl_twiddle_cos[r];      s = tl_twiddle_cos[q - r];  break;
    case 1u: c = -tl_twiddle_cos[q - r]; s = tl_twiddle_cos[r];      break;
    case 2u: c = -tl_twiddle_cos[r];     s = -tl_twiddle_cos[q - r]; break;
    default: c = tl_twiddle_cos[q - r];  s = -tl_twiddle_cos[r];     break;
    }
    *re = c;
    *im = -s;
}
