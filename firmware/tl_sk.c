/* tl_sk.c - spectral kurtosis sums (tl_sk.h). */
#include "tl_sk.h"

#include <string.h>

tl_status tl_sk_init(tl_sk *sk, uint32_t m, uint32_t n, uint32_t channels, uint32_t inputs)
{
    if (sk == NULL)
        return TL_E_NULL;
    if ((m != 0u && (m < TL_SK_MIN_SPECTRA || m > TL_SK_MAX_SPECTRA)) || n < 1u || n > TL_SK_MAX_ACCUMULATE)
        return TL_E_SK;
    if (channels < 1u || channels > TL_MAX_CHANNELS)
        return TL_E_POINTS;
    if (inputs < 1u || inputs > TL_MAX_INPUTS)
        return TL_E_INPUTS;
    sk->m = m;
    sk->n = n;
    sk->channels = channels;
    sk->inputs = inputs;
    tl_sk_reset(sk);
    return TL_OK;
}

void tl_sk_reset(tl_sk *sk)
{
    sk->count = 0;
    sk->inner = 0;
    sk->sat = 0;
    memset(sk->p, 0, sizeof sk->p);
    memset(sk->s1, 0, sizeof sk->s1);
    memset(sk->s2_hi, 0, sizeof sk->s2_hi);
    memset(sk->s2_lo, 0, sizeof sk->s2_lo);
}

void tl_sk_square(uint64_t p, uint64_t *hi, uint64_t *lo)
{
    const uint64_t a = p >> 32, b = p & 0xFFFFFFFFu;
    const uint64_t bb = b * b, ab = a * b, aa = a * a;
    /* p^2 = aa 2^64 + 2 ab 2^32 + bb; 2 ab 2^32 = (ab >> 31) 2^64 + (ab << 33) */
    const uint64_t mid_lo = ab << 33, mid_hi = ab >> 31;
    const uint64_t l = bb + mid_lo;
    *lo = l;
    *hi = aa + mid_hi + (uint64_t)(l < bb); /* < 2^64: p^2 < 2^128 */
}

/* Add the values v[k] to S1 and their squares to S2. */
static void add_values(tl_sk *sk, uint32_t input, const uint64_t *p)
{
    uint64_t *s1 = sk->s1[input], *h = sk->s2_hi[input], *l = sk->s2_lo[input];
    uint32_t sat = 0;
    for (uint32_t k = 0; k < sk->channels; k++) {
        const uint64_t v = p[k];
        if (UINT64_MAX - s1[k] < v) {
            s1[k] = UINT64_MAX;
            sat++;
        } else {
            s1[k] += v;
        }
        uint64_t qh, ql;
        tl_sk_square(v, &qh, &ql);
        const uint64_t nl = l[k] + ql;
        const uint64_t carry = (uint64_t)(nl < ql);
        if (UINT64_MAX - h[k] < qh || UINT64_MAX - h[k] - qh < carry) {
            h[k] = UINT64_MAX;
            l[k] = UINT64_MAX;
            sat++;
        } else {
            h[k] += qh + carry;
            l[k] = nl;
        }
    }
    sk->sat = (UINT32_MAX - sk->sat < sat) ? UINT32_MAX : sk->sat + sat;
}

void tl_sk_add(tl_sk *sk, uint32_t input, const uint64_t *p)
{
    if (sk->m == 0u || input >= sk->inputs)
        return;
    if (sk->n == 1u) {
        add_values(sk, input, p);
        return;
    }
    uint64_t *acc = sk->p[input];
    uint32_t sat = 0;
    for (uint32_t k = 0; k < sk->channels; k++) {
        if (UINT64_MAX - acc[k] < p[k]) {
            acc[k] = UINT64_MAX;
            sat++;
        } else {
            acc[k] += p[k];
        }
    }
    sk->sat = (UINT32_MAX - sk->sat < sat) ? UINT32_MAX : sk->sat + sat;
    if (sk->inner + 1u >= sk->n) { /* the last spectrum of this value: it is complete */
        add_values(sk, input, acc);
        for (uint32_t k = 0; k < sk->channels; k++)
            acc[k] = 0u;
    }
}

int tl_sk_spectrum_done(tl_sk *sk)
{
    if (sk->m == 0u)
        return 0;
    if (++sk->inner < sk->n)
        return 0;
    sk->inner = 0;
    sk->count++;
    return sk->count >= sk->m;
}
