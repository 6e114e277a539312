/* bench_radix2.c - the bench's straightforward radix-2 baseline FFT (see bench_radix2.h). */
#include "bench_radix2.h"

#include <math.h>
#include <stdlib.h>

static int32_t q30(double v)
{
    double r = floor(v * 1073741824.0 + 0.5);
    if (r > 2147483647.0)
        r = 2147483647.0;
    return (int32_t)r;
}

int bench_radix2_init(bench_radix2 *f, uint32_t points)
{
    if (points < 8u || points > 65536u || (points & (points - 1u)) != 0u)
        return -1;
    f->points = points;
    f->size = points / 2u;
    f->log2size = 0;
    while ((1u << f->log2size) < f->size)
        f->log2size++;
    f->rev = malloc(sizeof *f->rev * f->size);
    f->tw = malloc(sizeof *f->tw * f->size);
    f->tws = malloc(sizeof *f->tws * 2u * f->size);
    f->work = malloc(sizeof *f->work * 2u * f->size);
    if (f->rev == NULL || f->tw == NULL || f->tws == NULL || f->work == NULL) {
        bench_radix2_free(f);
        return -1;
    }
    const double pi = 3.14159265358979323846;
    for (uint32_t i = 0; i < f->size; i++) {
        uint32_t r = 0;
        for (uint32_t b = 0; b < f->log2size; b++)
            r |= ((i >> b) & 1u) << (f->log2size - 1u - b);
        f->rev[i] = r;
    }
    for (uint32_t k = 0; k < f->size / 2u; k++) {
        f->tw[2u * k] = q30(cos(2.0 * pi * k / f->size));
        f->tw[2u * k + 1u] = q30(-sin(2.0 * pi * k / f->size));
    }
    for (uint32_t k = 0; k < f->size; k++) {
        f->tws[2u * k] = q30(cos(2.0 * pi * k / points));
        f->tws[2u * k + 1u] = q30(-sin(2.0 * pi * k / points));
    }
    return 0;
}

void bench_radix2_free(bench_radix2 *f)
{
    free(f->rev);
    free(f->tw);
    free(f->tws);
    free(f->work);
    f->rev = NULL;
    f->tw = f->tws = f->work = NULL;
}

/* round(v / 2^s), half up */
static inline int32_t rshr(int64_t v, unsigned s)
{
    return (int32_t)((v + ((int64_t)1 << (s - 1u))) >> s);
}

void bench_radix2_execute(bench_radix2 *f, const int32_t *y, int32_t *X)
{
    const uint32_t L = f->size;
    int32_t *w = f->work;
    for (uint32_t i = 0; i < L; i++) {
        const uint32_t r = f->rev[i];
        w[2u * i] = y[2u * r];
        w[2u * i + 1u] = y[2u * r + 1u];
    }
    for (uint32_t half = 1, step = L / 2u; half < L; half *= 2u, step /= 2u) {
        for (uint32_t base = 0; base < L; base += 2u * half) {
            for (uint32_t j = 0; j < half; j++) {
                const int64_t cr = f->tw[2u * j * step], ci = f->tw[2u * j * step + 1u];
                int32_t *a = w + 2u * (base + j), *b = w + 2u * (base + j + half);
                const int32_t tr = rshr((int64_t)b[0] * cr - (int64_t)b[1] * ci, 30u);
                const int32_t ti = rshr((int64_t)b[0] * ci + (int64_t)b[1] * cr, 30u);
                const int64_t ar = a[0], ai = a[1];
                a[0] = rshr(ar + tr, 1u);
                a[1] = rshr(ai + ti, 1u);
                b[0] = rshr(ar - tr, 1u);
                b[1] = rshr(ai - ti, 1u);
            }
        }
    }
    /* split: X[k] = (A - j W_N^k B) / 2, A = Z[k] + conj(Z[L-k]), B = Z[k] - conj(Z[L-k]) */
    for (uint32_t k = 0; k < L; k++) {
        const uint32_t m = (L - k) & (L - 1u);
        const int64_t zr = w[2u * k], zi = w[2u * k + 1u], cr = w[2u * m], ci = -(int64_t)w[2u * m + 1u];
        const int64_t Ar = zr + cr, Ai = zi + ci, Br = zr - cr, Bi = zi - ci;
        const int64_t wr = f->tws[2u * k], wi = f->tws[2u * k + 1u];
        /* -j W B = -j (wr + j wi)(Br + j Bi) = (wr Bi + wi Br) - j (wr Br - wi Bi) */
        const int64_t pr = wr * Bi + wi * Br, pi = -(wr * Br - wi * Bi);
        X[2u * k] = rshr(Ar + rshr(pr, 30u), 1u);
        X[2u * k + 1u] = rshr(Ai + rshr(pi, 30u), 1u);
    }
}
