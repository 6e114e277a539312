/* reference.c - FFTW double reference chain (see reference.h). */
#include "reference.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

struct tl_ref {
    uint32_t taps, points, channels, inputs;
    double *coef;          /* already divided by 2^(S-15) */
    double *hist[2];       /* ring of P frames (double samples) */
    uint32_t newest, frames;
    double *y;
    fftw_complex *spec;
    fftw_plan plan;
    double *X[2];          /* last spectrum per input, firmware units, interleaved */
    double xscale, pscale; /* 2^-T and 2^-s */
    double *acc[3][4];     /* per switch state: auto0, auto1, cross re, cross im */
    uint32_t spectra[3];
};

tl_ref *tl_ref_open(const double *coef, uint32_t taps, uint32_t points, uint32_t coef_shift, uint32_t inputs,
                    uint32_t fft_total_shift, uint32_t det_shift)
{
    if (coef == NULL || taps < 1 || points < 2 || inputs < 1 || inputs > 2 || coef_shift < 15)
        return NULL;
    tl_ref *r = calloc(1, sizeof *r);
    if (r == NULL)
        return NULL;
    r->taps = taps;
    r->points = points;
    r->channels = points / 2u;
    r->inputs = inputs;
    r->coef = malloc(sizeof(double) * taps * points);
    r->y = fftw_malloc(sizeof(double) * points);
    r->spec = fftw_malloc(sizeof(fftw_complex) * (points / 2u + 1u));
    int ok = r->coef && r->y && r->spec;
    for (int i = 0; i < 2; i++) {
        r->hist[i] = calloc((size_t)taps * points, sizeof(double));
        r->X[i] = calloc(points, sizeof(double));
        ok = ok && r->hist[i] && r->X[i];
    }
    for (int b = 0; b < 3; b++)
        for (int i = 0; i < 4; i++) {
            r->acc[b][i] = calloc(r->channels, sizeof(double));
            ok = ok && r->acc[b][i];
        }
    if (!ok) {
        tl_ref_close(r);
        return NULL;
    }
    const double cs = ldexp(1.0, -(int)(coef_shift - 15u));
    for (size_t n = 0; n < (size_t)taps * points; n++)
        r->coef[n] = coef[n] * cs;
    r->plan = fftw_plan_dft_r2c_1d((int)points, r->y, r->spec, FFTW_ESTIMATE);
    r->xscale = ldexp(1.0, -(int)fft_total_shift);
    r->pscale = ldexp(1.0, -(int)det_shift);
    r->newest = taps - 1u;
    return r;
}

void tl_ref_close(tl_ref *r)
{
    if (r == NULL)
        return;
    if (r->plan)
        fftw_destroy_plan(r->plan);
    free(r->coef);
    fftw_free(r->y);
    fftw_free(r->spec);
    for (int i = 0; i < 2; i++) {
        free(r->hist[i]);
        free(r->X[i]);
    }
    for (int b = 0; b < 3; b++)
        for (int i = 0; i < 4; i++)
            free(r->acc[b][i]);
    free(r);
}

int tl_ref_push_frame(tl_ref *r, const int16_t *in0, const int16_t *in1)
{
    return tl_ref_push_frame_state(r, in0, in1, 0u, 1);
}

int tl_ref_push_frame_state(tl_ref *r, const int16_t *in0, const int16_t *in1, unsigned bank, int keep)
{
    if (bank > 2u)
        bank = 0u;
    const uint32_t P = r->taps, N = r->points;
    r->newest = (r->newest + 1u) % P;
    const int16_t *src[2] = { in0, in1 };
    for (uint32_t i = 0; i < r->inputs; i++) {
        double *dst = &r->hist[i][(size_t)r->newest * N];
        for (uint32_t n = 0; n < N; n++)
            dst[n] = src[i][n];
    }
    if (r->frames < P)
        r->frames++;
    if (r->frames < P)
        return 0;
    for (uint32_t i = 0; i < r->inputs; i++) {
        for (uint32_t n = 0; n < N; n++) {
            double acc = 0.0;
            for (uint32_t p = 0; p < P; p++)
                acc += r->coef[(size_t)p * N + n] * r->hist[i][(size_t)((r->newest + 1u + p) % P) * N + n];
            r->y[n] = acc;
        }
        fftw_execute(r->plan);
        for (uint32_t k = 0; k < r->channels; k++) {
            r->X[i][2u * k] = r->spec[k][0] * r->xscale;
            r->X[i][2u * k + 1u] = r->spec[k][1] * r->xscale;
        }
    }
    if (!keep)
        return 1;
    double *const *acc = r->acc[bank];
    for (uint32_t i = 0; i < r->inputs; i++) {
        const double *X = r->X[i];
        for (uint32_t k = 0; k < r->channels; k++)
            acc[i][k] += (X[2u * k] * X[2u * k] + X[2u * k + 1u] * X[2u * k + 1u]) * r->pscale;
    }
    if (r->inputs == 2u) {
        const double *X = r->X[0], *Y = r->X[1];
        for (uint32_t k = 0; k < r->channels; k++) {
            const double xr = X[2u * k], xi = X[2u * k + 1u], yr = Y[2u * k], yi = Y[2u * k + 1u];
            acc[2][k] += (xr * yr + xi * yi) * r->pscale;
            acc[3][k] += (xi * yr - xr * yi) * r->pscale;
        }
    }
    r->spectra[bank]++;
    return 1;
}

uint32_t tl_ref_take(tl_ref *r, double *auto0, double *auto1, double *cross_re, double *cross_im)
{
    return tl_ref_take_state(r, 0u, auto0, auto1, cross_re, cross_im);
}

uint32_t tl_ref_take_state(tl_ref *r, unsigned bank, double *auto0, double *auto1, double *cross_re,
                           double *cross_im)
{
    if (bank > 2u)
        return 0;
    double *dst[4] = { auto0, auto1, cross_re, cross_im };
    for (int i = 0; i < 4; i++) {
        if (dst[i] != NULL)
            memcpy(dst[i], r->acc[bank][i], sizeof(double) * r->channels);
        memset(r->acc[bank][i], 0, sizeof(double) * r->channels);
    }
    const uint32_t m = r->spectra[bank];
    r->spectra[bank] = 0;
    return m;
}

const double *tl_ref_last_spectrum(const tl_ref *r, uint32_t input)
{
    return r->X[input < 2u ? input : 0u];
}
