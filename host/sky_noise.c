/* sky_noise.c - shaped, quantized Gaussian voltages (see sky_noise.h). */
#include "sky_noise.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "rng.h"

#define FIR_LEN 2047u
#define DESIGN_LEN 2048u
#define OS_LEN 8192u                     /* overlap-save transform */
#define HOP (OS_LEN - FIR_LEN + 1u)      /* new outputs per transform */

struct tl_sky {
    tl_sky_params p;
    tl_rng rng[3];                       /* common, input 0, input 1 */
    double *gf_re, *gf_im;               /* FIR spectrum, OS_LEN/2+1 */
    double *in[2];                       /* overlap-save input, OS_LEN */
    double *out[2];                      /* shaped outputs of the current hop */
    double *tbuf;
    fftw_complex *spec;
    fftw_plan fwd[2], inv;
    size_t avail, pos;                   /* shaped samples ready / read */
    uint64_t clipped[2];
    double scale;                        /* RMS in ADC codes */
};

void tl_sky_default(tl_sky_params *p)
{
    memset(p, 0, sizeof *p);
    p->sample_rate_hz = 102.4e6;
    p->sky_t0_k = 180.0;
    p->sky_f0_hz = 180e6;
    p->sky_index = 2.6;
    p->receiver_k = 300.0;
    p->highpass_hz = 5e6;
    p->highpass_order = 4;
    p->lowpass_hz = 45e6;
    p->lowpass_order = 8;
    p->white = 0;
    p->coherence = 0.5;
    p->rms_fs = 1.0 / 8.0;
    p->adc_bits = 14;
    p->inputs = 2;
    p->seed = 1;
}

double tl_sky_temperature(const tl_sky_params *p, double f)
{
    if (p->white)
        return 1.0;
    if (f <= 0.0)
        return 0.0;
    const double tsky = p->sky_t0_k * pow(f / p->sky_f0_hz, -p->sky_index);
    const double xh = pow(f / p->highpass_hz, 2.0 * p->highpass_order);
    const double ghp = xh / (1.0 + xh);
    const double glp = 1.0 / (1.0 + pow(f / p->lowpass_hz, 2.0 * p->lowpass_order));
    return (tsky + p->receiver_k) * ghp * glp;
}

/* Linear-phase FIR with |G(f)|^2 proportional to T(f), unit energy. */
static void design_fir(const tl_sky_params *p, double *g)
{
    double amp[DESIGN_LEN / 2u + 1u];
    for (unsigned i = 0; i <= DESIGN_LEN / 2u; i++)
        amp[i] = sqrt(tl_sky_temperature(p, p->sample_rate_hz * i / DESIGN_LEN));
    const int half = (int)(FIR_LEN / 2u);
    double energy = 0.0;
    for (int n = -half; n <= half; n++) {
        double v = amp[0];
        for (unsigned i = 1; i < DESIGN_LEN / 2u; i++)
            v += 2.0 * amp[i] * cos(2.0 * M_PI * i * n / DESIGN_LEN);
        v += amp[DESIGN_LEN / 2u] * cos(M_PI * n);
        v /= DESIGN_LEN;
        const double x = (double)(n + half) / (FIR_LEN - 1u); /* Blackman taper */
        v *= 0.42 - 0.5 * cos(2.0 * M_PI * x) + 0.08 * cos(4.0 * M_PI * x);
        g[n + half] = v;
        energy += v * v;
    }
    for (unsigned n = 0; n < FIR_LEN; n++)
        g[n] /= sqrt(energy);
}

tl_sky *tl_sky_open(const tl_sky_params *p)
{
    if (p == NULL || p->inputs < 1 || p->inputs > 2 || p->adc_bits < 8 || p->adc_bits > 16 || !(p->rms_fs > 0.0) ||
        !(p->coherence >= 0.0 && p->coherence <= 1.0) || !(p->sample_rate_hz > 0.0))
        return NULL;
    tl_sky *s = calloc(1, sizeof *s);
    if (s == NULL)
        return NULL;
    s->p = *p;
    for (int i = 0; i < 3; i++)
        tl_rng_seed(&s->rng[i], p->seed * 3u + (uint64_t)i);
    s->scale = p->rms_fs * ldexp(1.0, (int)p->adc_bits - 1);
    s->gf_re = fftw_malloc(sizeof(double) * (OS_LEN / 2u + 1u));
    s->gf_im = fftw_malloc(sizeof(double) * (OS_LEN / 2u + 1u));
    s->tbuf = fftw_malloc(sizeof(double) * OS_LEN);
    s->spec = fftw_malloc(sizeof(fftw_complex) * (OS_LEN / 2u + 1u));
    for (int i = 0; i < 2; i++) {
        s->in[i] = fftw_malloc(sizeof(double) * OS_LEN);
        s->out[i] = fftw_malloc(sizeof(double) * OS_LEN);
    }
    if (!s->gf_re || !s->gf_im || !s->tbuf || !s->spec || !s->in[0] || !s->in[1] || !s->out[0] || !s->out[1]) {
        tl_sky_close(s);
        return NULL;
    }
    /* FIR spectrum on the overlap-save grid */
    memset(s->tbuf, 0, sizeof(double) * OS_LEN);
    design_fir(p, s->tbuf);
    fftw_plan pg = fftw_plan_dft_r2c_1d((int)OS_LEN, s->tbuf, s->spec, FFTW_ESTIMATE);
    fftw_execute(pg);
    fftw_destroy_plan(pg);
    for (unsigned k = 0; k <= OS_LEN / 2u; k++) {
        s->gf_re[k] = s->spec[k][0] / OS_LEN;
        s->gf_im[k] = s->spec[k][1] / OS_LEN;
    }
    for (int i = 0; i < 2; i++) {
        memset(s->in[i], 0, sizeof(double) * OS_LEN);
        s->fwd[i] = fftw_plan_dft_r2c_1d((int)OS_LEN, s->in[i], s->spec, FFTW_ESTIMATE);
    }
    s->inv = fftw_plan_dft_c2r_1d((int)OS_LEN, s->spec, s->tbuf, FFTW_ESTIMATE);
    /* prime the filter memory so the first outputs are already stationary */
    const unsigned ni = p->inputs;
    const double a = sqrt(p->coherence), b = sqrt(1.0 - p->coherence);
    for (unsigned n = 0; n < FIR_LEN - 1u; n++) {
        const double wc = (ni == 2) ? tl_rng_normal(&s->rng[0]) : 0.0;
        for (unsigned i = 0; i < ni; i++)
            s->in[i][OS_LEN - (FIR_LEN - 1u) + n] = (ni == 2) ? a * wc + b * tl_rng_normal(&s->rng[1 + i]) : tl_rng_normal(&s->rng[1]);
    }
    return s;
}

void tl_sky_close(tl_sky *s)
{
    if (s == NULL)
        return;
    for (int i = 0; i < 2; i++) {
        if (s->fwd[i])
            fftw_destroy_plan(s->fwd[i]);
        fftw_free(s->in[i]);
        fftw_free(s->out[i]);
    }
    if (s->inv)
        fftw_destroy_plan(s->inv);
    fftw_free(s->gf_re);
    fftw_free(s->gf_im);
    fftw_free(s->tbuf);
    fftw_free(s->spec);
    free(s);
}

/* Draw HOP new white samples per input and filter them. */
static void next_hop(tl_sky *s)
{
    const unsigned ni = s->p.inputs;
    const double a = sqrt(s->p.coherence), b = sqrt(1.0 - s->p.coherence);
    for (unsigned i = 0; i < ni; i++)
        memmove(s->in[i], s->in[i] + HOP, sizeof(double) * (FIR_LEN - 1u));
    for (unsigned n = 0; n < HOP; n++) {
        const double wc = (ni == 2) ? tl_rng_normal(&s->rng[0]) : 0.0;
        for (unsigned i = 0; i < ni; i++)
            s->in[i][FIR_LEN - 1u + n] = (ni == 2) ? a * wc + b * tl_rng_normal(&s->rng[1 + i]) : tl_rng_normal(&s->rng[1]);
    }
    for (unsigned i = 0; i < ni; i++) {
        if (s->p.white) {
            memcpy(s->out[i], s->in[i] + FIR_LEN - 1u, sizeof(double) * HOP);
            continue;
        }
        fftw_execute(s->fwd[i]);
        for (unsigned k = 0; k <= OS_LEN / 2u; k++) {
            const double xr = s->spec[k][0], xi = s->spec[k][1];
            s->spec[k][0] = xr * s->gf_re[k] - xi * s->gf_im[k];
            s->spec[k][1] = xr * s->gf_im[k] + xi * s->gf_re[k];
        }
        fftw_execute(s->inv);
        memcpy(s->out[i], s->tbuf + FIR_LEN - 1u, sizeof(double) * HOP);
    }
    s->avail = HOP;
    s->pos = 0;
}

static int16_t quantize(tl_sky *s, unsigned input, double v)
{
    const unsigned bits = s->p.adc_bits;
    const long hi = (1L << (bits - 1u)) - 1L, lo = -(1L << (bits - 1u));
    long code = lround(v * s->scale);
    if (code >= hi || code <= lo) { /* at a rail: the firmware's definition of a clip */
        s->clipped[input]++;
        code = code > hi ? hi : code < lo ? lo : code;
    }
    return (int16_t)(code * (1L << (16u - bits)));
}

void tl_sky_fill(tl_sky *s, int16_t *in0, int16_t *in1, size_t n)
{
    size_t done = 0;
    while (done < n) {
        if (s->pos == s->avail)
            next_hop(s);
        size_t take = s->avail - s->pos;
        if (take > n - done)
            take = n - done;
        for (size_t j = 0; j < take; j++) {
            in0[done + j] = quantize(s, 0, s->out[0][s->pos + j]);
            if (s->p.inputs == 2 && in1 != NULL)
                in1[done + j] = quantize(s, 1, s->out[1][s->pos + j]);
        }
        s->pos += take;
        done += take;
    }
}

uint64_t tl_sky_clipped(const tl_sky *s, unsigned input)
{
    return input < 2 ? s->clipped[input] : 0;
}
