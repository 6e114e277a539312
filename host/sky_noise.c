/* sky_noise.c - switched, shaped, quantized Gaussian voltages (see sky_noise.h). */
#include "sky_noise.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "rng.h"

#define FIR_MIN 2047u
#define FIR_MAX 16383u
#define WHITE_HOP 8192u      /* samples per block when nothing is filtered */
#define DESIGN_PASSES 4      /* pre-compensation passes at most */
#define EDGE_BINS 8.0        /* edge bands, in units of fs / (L + 1), left out of the tolerance */
#define ZIG_LAYERS 256
#define NONE INT64_MIN       /* no hop */

/* White streams, per input: sky, receiver, load, noise source. Input 1's
 * sky is coherence x (input 0's sky stream) + sqrt(1 - coherence^2) x its
 * own, so the two skies correlate with coefficient `coherence`. */
enum { ST_SKY, ST_RX, ST_LOAD, ST_NS, ST_KINDS };
enum { KEY_CARRIER = 16, KEY_BURST = 17 };   /* seed keys of the interferers' phases */

typedef struct stream {
    double *w;       /* L-1 history samples, then HOP new ones */
    int64_t hop;     /* hop whose input w holds, NONE: none */
    unsigned id, input;
} stream;

struct tl_sky {
    tl_sky_params p;
    size_t L, hop_len, os_len;   /* FIR taps, new samples per hop, transform size (L - 1 + hop_len) */
    unsigned filtered;           /* 0 in white mode */
    double *fir[2];              /* sky, bandpass taps (L each) */
    double design_rel, design_floor, design_edge;
    double gain;                 /* codes per unit filtered stream */
    fftw_complex *hsky, *hbp;    /* FIR spectra x gain / os_len */
    stream st[2 * ST_KINDS];     /* per input */
    double *tin;                 /* transform input */
    fftw_complex *spa, *spb;
    double *tout;
    double *intf;                /* interferers of the current hop (codes), NULL: none */
    fftw_plan fwd_a, fwd_b, inv;
    double *out[TL_SKY_STATES][2];  /* codes, before the DC offset, of the current hop */
    int64_t out_hop[TL_SKY_STATES];
    int64_t cur_hop;
    size_t pos;                  /* next sample within the current hop */
    unsigned state;
    uint64_t clipped[2];
    /* interferers: amplitude (codes), cycles per sample, phase (cycles) */
    unsigned ncar;
    double car_amp[TL_SKY_MAX_CARRIERS + 1], car_cps[TL_SKY_MAX_CARRIERS + 1], car_ph[TL_SKY_MAX_CARRIERS + 1];
    uint64_t burst_period, burst_on, burst_offset;
    /* ziggurat tables */
    double zx[ZIG_LAYERS + 1], zf[ZIG_LAYERS + 1];
};

/* ---- randomness ------------------------------------------------------------ */

/* The output function of splitmix64 as in host/rng.c (Vigna's splitmix64.c,
 * after Steele, Lea and Flood, OOPSLA 2014): a bijective 64-bit mixer. */
static uint64_t mix64(uint64_t z)
{
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

static void seed_block(tl_rng *r, uint64_t seed, unsigned id, unsigned input, int64_t block)
{
    uint64_t k = mix64(seed + 0x9E3779B97F4A7C15ull);
    k = mix64(k + (((uint64_t)id << 8) | input) + 0x9E3779B97F4A7C15ull);
    k = mix64(k + (uint64_t)block + 0x9E3779B97F4A7C15ull);
    tl_rng_seed(r, k);
}

/* Ziggurat for the standard normal, 256 layers of equal area V; the base
 * layer is the rectangle up to R plus the tail beyond R (Marsaglia and
 * Tsang 2000, constants R and V from their paper; the base layer's width
 * V / f(R) as in Doornik's ZIGNOR, 2005, from memory). Bits 0-7 of one
 * 64-bit draw pick the layer, bit 8 the sign, bits 11-63 the abscissa. */
#define ZIG_R 3.6541528853610088
#define ZIG_V 0.00492867323399

static void zig_init(tl_sky *s)
{
    double *x = s->zx, *f = s->zf;
    f[1] = exp(-0.5 * ZIG_R * ZIG_R);
    x[0] = ZIG_V / f[1];
    x[1] = ZIG_R;
    f[0] = 0.0;
    for (int i = 2; i < ZIG_LAYERS; i++) {
        x[i] = sqrt(-2.0 * log(ZIG_V / x[i - 1] + f[i - 1]));
        f[i] = exp(-0.5 * x[i] * x[i]);
    }
    x[ZIG_LAYERS] = 0.0;
    f[ZIG_LAYERS] = 1.0;
}

/* uniform in (0, 1] */
static double unit_open0(tl_rng *r)
{
    return (double)((tl_rng_u64(r) >> 11) + 1u) * 0x1.0p-53;
}

/* v with its sign bit flipped when bit 8 of u is set (branch-free: the
 * sign is a coin toss, which a branch would mispredict half the time) */
static double with_sign(double v, uint64_t u)
{
    uint64_t b;
    memcpy(&b, &v, sizeof b);
    b ^= (u & 0x100u) << 55;
    memcpy(&v, &b, sizeof v);
    return v;
}

static double zig_normal(const tl_sky *s, tl_rng *r)
{
    const double *x = s->zx, *f = s->zf;
    for (;;) {
        const uint64_t u = tl_rng_u64(r);
        const unsigned i = (unsigned)(u & 0xFFu);
        const double v = (double)(u >> 11) * 0x1.0p-53 * x[i];
        if (v < x[i + 1])
            return with_sign(v, u);
        if (i == 0) { /* tail beyond R (Marsaglia 1964) */
            double a, b;
            do {
                a = -log(unit_open0(r)) / ZIG_R;
                b = -log(unit_open0(r));
            } while (2.0 * b < a * a);
            return with_sign(ZIG_R + a, u);
        }
        /* wedge between layers i and i+1 */
        if (f[i] + tl_rng_uniform(r) * (f[i + 1] - f[i]) < exp(-0.5 * v * v))
            return with_sign(v, u);
    }
}

static void white_block(const tl_sky *s, const stream *q, int64_t block, double *dst, size_t n)
{
    tl_rng r;
    seed_block(&r, s->p.seed, q->id, q->input, block);
    for (size_t j = 0; j < n; j++)
        dst[j] = zig_normal(s, &r);
}

/* Make q hold the white input of hop h: the last L-1 samples of block h,
 * then block h+1 (block j holds white samples [(j-1) HOP, j HOP)). */
static void stream_to(tl_sky *s, stream *q, int64_t h)
{
    const size_t hist = s->L - 1u, hop = s->hop_len;
    if (q->hop == h)
        return;
    if (q->hop == NONE || q->hop != h - 1)
        white_block(s, q, h, q->w + hist, hop);
    if (hist > 0)
        memmove(q->w, q->w + hop, sizeof(double) * hist);
    white_block(s, q, h + 1, q->w + hist, hop);
    q->hop = h;
}

/* ---- filter design ----------------------------------------------------------- */

static double target_power(const tl_sky_params *p, unsigned which, double f)
{
    const double g = tl_sky_bandpass(p, f);
    if (which == TL_SKY_FIR_BANDPASS)
        return g;
    const double t = tl_sky_antenna_k(p, f) * g;
    return t > 0.0 ? t : 0.0;
}

/* Inside the band where the tolerance holds? Within EDGE_BINS x fs/(L+1) of
 * DC and of half the sample rate a sampled spectrum must flatten (it is
 * symmetric about both, so its slope there is zero), and a slope in the
 * model cannot be followed. */
static int inside(const tl_sky_params *p, size_t L, double f)
{
    const double edge = EDGE_BINS * p->sample_rate_hz / (double)(L + 1u);
    return f >= edge && f <= p->sample_rate_hz / 2.0 - edge;
}

/* Linear-phase FIR of L taps with |H|^2 close to target_power: frequency
 * sampling on D = 8 L (rounded up to a power of two) points, Blackman
 * window, then up to DESIGN_PASSES passes that scale the sampled amplitude
 * by target / realised where the target is above 1e-3 of its peak (factor
 * kept within 0.5 .. 2), stopping when the realised power is within 1e-7
 * of the target outside the edge bands. Returns 0, or -1 out of memory. */
static int design_fir(const tl_sky_params *p, unsigned which, size_t L, double *taps)
{
    size_t D = 1;
    while (D < 8u * L)
        D *= 2u;
    const size_t nb = D / 2u + 1u;
    double *tgt = malloc(sizeof(double) * nb), *amp = malloc(sizeof(double) * nb);
    double *h = fftw_malloc(sizeof(double) * D), *g = fftw_malloc(sizeof(double) * D);
    fftw_complex *A = fftw_malloc(sizeof(fftw_complex) * nb), *H = fftw_malloc(sizeof(fftw_complex) * nb);
    int rc = -1;
    if (!tgt || !amp || !h || !g || !A || !H)
        goto out;
    fftw_plan pinv = fftw_plan_dft_c2r_1d((int)D, A, h, FFTW_ESTIMATE);
    fftw_plan pfwd = fftw_plan_dft_r2c_1d((int)D, g, H, FFTW_ESTIMATE);
    double peak = 0.0;
    for (size_t k = 0; k < nb; k++) {
        tgt[k] = sqrt(target_power(p, which, p->sample_rate_hz * (double)k / (double)D));
        amp[k] = tgt[k];
        if (tgt[k] > peak)
            peak = tgt[k];
    }
    const long half = (long)(L / 2u);
    for (int pass = 0;; pass++) {
        for (size_t k = 0; k < nb; k++) {
            A[k][0] = amp[k];
            A[k][1] = 0.0;
        }
        fftw_execute(pinv); /* zero-phase impulse response, circular, times D */
        memset(g, 0, sizeof(double) * D);
        for (long n = -half; n <= half; n++) {
            const double x = (double)(n + half) / (double)(L - 1u);
            const double w = 0.42 - 0.5 * cos(2.0 * M_PI * x) + 0.08 * cos(4.0 * M_PI * x);
            g[(size_t)((n + (long)D) % (long)D)] = h[(size_t)((n + (long)D) % (long)D)] / (double)D * w;
        }
        fftw_execute(pfwd); /* realised zero-phase amplitude (real) */
        double worst = 0.0;
        for (size_t k = 0; k < nb; k++)
            if (tgt[k] > 1e-3 * peak && inside(p, L, p->sample_rate_hz * (double)k / (double)D)) {
                const double e = fabs(H[k][0] * H[k][0] / (tgt[k] * tgt[k]) - 1.0);
                worst = e > worst ? e : worst;
            }
        if (pass == DESIGN_PASSES || worst < 1e-7)
            break;
        for (size_t k = 0; k < nb; k++)
            if (tgt[k] > 1e-3 * peak && H[k][0] > 0.0) {
                double c = tgt[k] / H[k][0];
                c = c > 2.0 ? 2.0 : c < 0.5 ? 0.5 : c;
                amp[k] *= c;
            }
    }
    for (long n = -half; n <= half; n++) /* causal: delay (L-1)/2 */
        taps[n + half] = g[(size_t)((n + (long)D) % (long)D)];
    fftw_destroy_plan(pinv);
    fftw_destroy_plan(pfwd);
    rc = 0;
out:
    free(tgt);
    free(amp);
    fftw_free(h);
    fftw_free(g);
    fftw_free(A);
    fftw_free(H);
    return rc;
}

/* Taps needed for the narrowest feature: 16 design bins across it. */
static size_t fir_length(const tl_sky_params *p)
{
    double feat = p->highpass_hz;
    if (p->trough_depth_k > 0.0 && p->trough_width_hz / p->trough_flatness < feat)
        feat = p->trough_width_hz / p->trough_flatness;
    if (p->resonance_hz > 0.0 && p->resonance_hz / p->resonance_q < feat)
        feat = p->resonance_hz / p->resonance_q;
    size_t L = FIR_MIN;
    while (L < FIR_MAX && p->sample_rate_hz / (double)(L + 1u) > feat / 16.0)
        L = 2u * L + 1u;
    return L;
}

/* Realised-vs-model of states 0 and 1 on the design grid (sky_noise.h). */
static int check_design(tl_sky *s)
{
    const size_t L = s->L;
    size_t D = 1;
    while (D < 8u * L)
        D *= 2u;
    const size_t nb = D / 2u + 1u;
    double *g = fftw_malloc(sizeof(double) * D);
    fftw_complex *H[2] = { fftw_malloc(sizeof(fftw_complex) * nb), fftw_malloc(sizeof(fftw_complex) * nb) };
    if (!g || !H[0] || !H[1]) {
        fftw_free(g);
        fftw_free(H[0]);
        fftw_free(H[1]);
        return -1;
    }
    for (int c = 0; c < 2; c++) {
        memset(g, 0, sizeof(double) * D);
        memcpy(g, s->fir[c], sizeof(double) * L);
        fftw_plan pf = fftw_plan_dft_r2c_1d((int)D, g, H[c], FFTW_ESTIMATE);
        fftw_execute(pf);
        fftw_destroy_plan(pf);
    }
    s->design_rel = s->design_floor = s->design_edge = 0.0;
    for (unsigned state = 0; state < 2; state++) {
        const double tsrc = state == 0 ? 0.0 : s->p.load_k;
        double peak = 0.0;
        for (size_t k = 0; k < nb; k++) {
            const double m = tl_sky_temperature_state(&s->p, state, s->p.sample_rate_hz * (double)k / (double)D);
            peak = m > peak ? m : peak;
        }
        for (size_t k = 0; k < nb; k++) {
            const double m = tl_sky_temperature_state(&s->p, state, s->p.sample_rate_hz * (double)k / (double)D);
            const double ps = H[0][k][0] * H[0][k][0] + H[0][k][1] * H[0][k][1];
            const double pb = H[1][k][0] * H[1][k][0] + H[1][k][1] * H[1][k][1];
            const double r = (state == 0 ? ps : tsrc * pb) + s->p.receiver_k * pb;
            if (m >= 1e-3 * peak) {
                const double e = fabs(r / m - 1.0);
                double *worst = inside(&s->p, L, s->p.sample_rate_hz * (double)k / (double)D) ? &s->design_rel
                                                                                                : &s->design_edge;
                *worst = e > *worst ? e : *worst;
            } else {
                const double e = fabs(r - m) / peak;
                s->design_floor = e > s->design_floor ? e : s->design_floor;
            }
        }
    }
    fftw_free(g);
    fftw_free(H[0]);
    fftw_free(H[1]);
    return 0;
}

/* ---- open / close -------------------------------------------------------------- */

static int list_ok(const tl_sky_list *l, double lo, double hi)
{
    if (l->n > TL_SKY_MAX_CARRIERS)
        return 0;
    for (unsigned i = 0; i < l->n; i++)
        if (!(l->v[i] >= lo && l->v[i] <= hi))
            return 0;
    return 1;
}

static int params_ok(const tl_sky_params *p)
{
    const double nyq = p->sample_rate_hz / 2.0;
    if (!(p->sample_rate_hz > 0.0) || p->inputs < 1 || p->inputs > 2 || p->adc_bits < 8 || p->adc_bits > 16 ||
        !(p->rms_fs > 0.0) || !(p->coherence >= 0.0 && p->coherence <= 1.0) || !(p->sky_t0_k >= 0.0) ||
        !(p->receiver_k >= 0.0) || !(p->load_k >= 0.0) || !(p->noise_excess_k >= 0.0) ||
        !(fabs(p->dc_offset_lsb) <= 32768.0))
        return 0;
    if (!p->white && (!(p->sky_f0_hz > 0.0) || !(p->highpass_hz > 0.0) || !(p->lowpass_hz > p->highpass_hz) ||
                      p->highpass_order < 1 || p->lowpass_order < 1 || !(p->turnover_hz >= 0.0) ||
                      !(p->trough_depth_k >= 0.0) || !(p->resonance_hz >= 0.0)))
        return 0;
    if (!p->white && p->trough_depth_k > 0.0 && (!(p->trough_width_hz > 0.0) || !(p->trough_flatness >= 1.0)))
        return 0;
    if (!p->white && p->resonance_hz > 0.0 && !(p->resonance_q > 0.0))
        return 0;
    if (!p->white && p->trough_depth_k > 0.0 && tl_sky_antenna_min_k(p, NULL) < 0.0)
        return 0; /* a trough deeper than the sky */
    if (p->carrier_hz.n != p->carrier_dbfs.n || !list_ok(&p->carrier_hz, 1e-300, nyq * (1.0 - 1e-12)) ||
        !list_ok(&p->carrier_dbfs, -400.0, 40.0))
        return 0;
    if (p->burst_hz > 0.0 && (!(p->burst_hz < nyq) || !(p->burst_duty >= 0.0 && p->burst_duty <= 1.0) ||
                              !(p->burst_period_us * 1e-6 * p->sample_rate_hz >= 2.0) || !(p->burst_dbfs <= 40.0)))
        return 0;
    return 1;
}

void tl_sky_close(tl_sky *s)
{
    if (s == NULL)
        return;
    if (s->fwd_a)
        fftw_destroy_plan(s->fwd_a);
    if (s->fwd_b)
        fftw_destroy_plan(s->fwd_b);
    if (s->inv)
        fftw_destroy_plan(s->inv);
    for (int c = 0; c < 2; c++)
        fftw_free(s->fir[c]);
    fftw_free(s->hsky);
    fftw_free(s->hbp);
    for (size_t i = 0; i < sizeof s->st / sizeof s->st[0]; i++)
        fftw_free(s->st[i].w);
    fftw_free(s->tin);
    fftw_free(s->spa);
    fftw_free(s->spb);
    fftw_free(s->tout);
    fftw_free(s->intf);
    for (unsigned k = 0; k < TL_SKY_STATES; k++)
        for (int i = 0; i < 2; i++)
            fftw_free(s->out[k][i]);
    free(s);
}

static stream *stream_of(tl_sky *s, unsigned id, unsigned input)
{
    return &s->st[ST_KINDS * input + id];
}

/* FIR spectrum on the overlap-save grid, times gain / os_len. */
static void fir_spectrum(tl_sky *s, const double *taps, fftw_complex *dst)
{
    memset(s->tin, 0, sizeof(double) * s->os_len);
    memcpy(s->tin, taps, sizeof(double) * s->L);
    fftw_execute(s->fwd_a);
    for (size_t k = 0; k <= s->os_len / 2u; k++) {
        dst[k][0] = s->spa[k][0] * s->gain / (double)s->os_len;
        dst[k][1] = s->spa[k][1] * s->gain / (double)s->os_len;
    }
}

static void interferers_init(tl_sky *s)
{
    const tl_sky_params *p = &s->p;
    const double fs = ldexp(1.0, (int)p->adc_bits - 1);
    tl_rng r;
    seed_block(&r, p->seed, KEY_CARRIER, 0, 0);
    s->ncar = p->carrier_hz.n;
    for (unsigned c = 0; c < s->ncar; c++) {
        s->car_amp[c] = fs * pow(10.0, p->carrier_dbfs.v[c] / 20.0);
        s->car_cps[c] = p->carrier_hz.v[c] / p->sample_rate_hz;
        s->car_ph[c] = tl_rng_uniform(&r);
    }
    if (p->burst_hz > 0.0) { /* the burst is the last entry, gated */
        s->car_amp[s->ncar] = fs * pow(10.0, p->burst_dbfs / 20.0);
        s->car_cps[s->ncar] = p->burst_hz / p->sample_rate_hz;
        s->car_ph[s->ncar] = tl_rng_uniform(&r);
        s->burst_period = (uint64_t)llround(p->burst_period_us * 1e-6 * p->sample_rate_hz);
        s->burst_on = (uint64_t)llround(p->burst_duty * (double)s->burst_period);
        tl_rng rb;
        seed_block(&rb, p->seed, KEY_BURST, 0, 0);
        s->burst_offset = tl_rng_u64(&rb) % s->burst_period;
    }
}

tl_sky *tl_sky_open(const tl_sky_params *p)
{
    if (p == NULL || !params_ok(p))
        return NULL;
    tl_sky *s = calloc(1, sizeof *s);
    if (s == NULL)
        return NULL;
    s->p = *p;
    zig_init(s);
    s->filtered = !p->white;
    s->L = s->filtered ? fir_length(p) : 1u;
    s->os_len = 1;
    while (s->os_len < 4u * (s->L + 1u))
        s->os_len *= 2u;
    if (!s->filtered)
        s->os_len = WHITE_HOP;
    s->hop_len = s->os_len - (s->L - 1u);
    const size_t nb = s->os_len / 2u + 1u;
    int ok = 1;
    for (int c = 0; c < 2; c++)
        ok &= (s->fir[c] = fftw_malloc(sizeof(double) * s->L)) != NULL;
    s->hsky = fftw_malloc(sizeof(fftw_complex) * nb);
    s->hbp = fftw_malloc(sizeof(fftw_complex) * nb);
    s->tin = fftw_malloc(sizeof(double) * s->os_len);
    s->tout = fftw_malloc(sizeof(double) * s->os_len);
    s->spa = fftw_malloc(sizeof(fftw_complex) * nb);
    s->spb = fftw_malloc(sizeof(fftw_complex) * nb);
    ok &= s->hsky && s->hbp && s->tin && s->tout && s->spa && s->spb;
    for (unsigned i = 0; i < sizeof s->st / sizeof s->st[0]; i++) {
        s->st[i].hop = NONE;
        s->st[i].id = i % ST_KINDS;
        s->st[i].input = i / ST_KINDS;
        ok &= (s->st[i].w = fftw_malloc(sizeof(double) * s->os_len)) != NULL;
    }
    for (unsigned k = 0; k < TL_SKY_STATES; k++) {
        s->out_hop[k] = NONE;
        for (int i = 0; i < 2; i++)
            ok &= (s->out[k][i] = fftw_malloc(sizeof(double) * s->hop_len)) != NULL;
    }
    if (!ok) {
        tl_sky_close(s);
        return NULL;
    }
    s->fwd_a = fftw_plan_dft_r2c_1d((int)s->os_len, s->tin, s->spa, FFTW_ESTIMATE);
    s->fwd_b = fftw_plan_dft_r2c_1d((int)s->os_len, s->tin, s->spb, FFTW_ESTIMATE);
    s->inv = fftw_plan_dft_c2r_1d((int)s->os_len, s->spa, s->tout, FFTW_ESTIMATE);
    if (s->filtered) {
        if (design_fir(p, TL_SKY_FIR_SKY, s->L, s->fir[0]) != 0 ||
            design_fir(p, TL_SKY_FIR_BANDPASS, s->L, s->fir[1]) != 0 || check_design(s) != 0) {
            tl_sky_close(s);
            return NULL;
        }
    } else {
        s->fir[0][0] = sqrt(p->sky_t0_k);
        s->fir[1][0] = 1.0;
    }
    /* the automatic level: antenna-state noise at rms_fs of full scale */
    double esky = 0.0, ebp = 0.0;
    for (size_t n = 0; n < s->L; n++) {
        esky += s->fir[0][n] * s->fir[0][n];
        ebp += s->fir[1][n] * s->fir[1][n];
    }
    const double power = esky + p->receiver_k * ebp;
    if (!(power > 0.0)) {
        tl_sky_close(s);
        return NULL;
    }
    s->gain = p->rms_fs * ldexp(1.0, (int)p->adc_bits - 1) / sqrt(power);
    if (s->filtered) {
        fir_spectrum(s, s->fir[0], s->hsky);
        fir_spectrum(s, s->fir[1], s->hbp);
    }
    interferers_init(s);
    if (s->ncar > 0 || p->burst_hz > 0.0) {
        s->intf = fftw_malloc(sizeof(double) * s->hop_len);
        if (s->intf == NULL) {
            tl_sky_close(s);
            return NULL;
        }
    }
    s->cur_hop = 0;
    s->pos = 0;
    s->state = TL_SKY_ANTENNA;
    return s;
}

/* ---- synthesis ------------------------------------------------------------------ */

/* Carriers and burst for samples [n0, n0 + n), added to dst (codes). The
 * oscillator is re-anchored with cos/sin every 1024 samples. */
static void add_interferers(const tl_sky *s, uint64_t n0, double *dst, size_t n)
{
    const unsigned total = s->ncar + (s->p.burst_hz > 0.0 ? 1u : 0u);
    for (unsigned c = 0; c < total; c++) {
        const int gated = c == s->ncar;
        const double step = 2.0 * M_PI * s->car_cps[c], cs = cos(step), sn = sin(step);
        double re = 0.0, im = 0.0;
        for (size_t j = 0; j < n; j++) {
            const uint64_t idx = n0 + j;
            if ((j & 1023u) == 0) {
                const double cyc = fmod(s->car_cps[c] * (double)idx + s->car_ph[c], 1.0);
                re = cos(2.0 * M_PI * cyc);
                im = sin(2.0 * M_PI * cyc);
            }
            if (!gated || (idx + s->burst_offset) % s->burst_period < s->burst_on)
                dst[j] += s->car_amp[c] * re;
            const double t = re * cs - im * sn;
            im = im * cs + re * sn;
            re = t;
        }
    }
}

/* Compute the state's output of the current hop, both inputs. */
static void make_state(tl_sky *s, unsigned state)
{
    const int64_t h = s->cur_hop;
    if (s->out_hop[state] == h)
        return;
    const tl_sky_params *p = &s->p;
    const size_t hist = s->L - 1u, hop = s->hop_len, nb = s->os_len / 2u + 1u;
    const double a = p->coherence, b = sqrt(1.0 - p->coherence * p->coherence);
    const double srx = sqrt(p->receiver_k), sld = sqrt(p->load_k), sns = sqrt(p->noise_excess_k);
    const double *w0 = stream_of(s, ST_SKY, 0)->w; /* input 0's sky, mixed into input 1's */
    if (state == TL_SKY_ANTENNA && s->intf != NULL) { /* the same at both inputs */
        memset(s->intf, 0, sizeof(double) * hop);
        add_interferers(s, (uint64_t)h * hop, s->intf, hop);
    }
    for (unsigned i = 0; i < p->inputs; i++) {
        const int mix = i == 1 && p->coherence > 0.0;
        stream *rx = stream_of(s, ST_RX, i);
        stream_to(s, rx, h);
        const stream *sky = NULL, *ld = NULL, *ns = NULL;
        if (state == TL_SKY_ANTENNA) {
            stream_to(s, stream_of(s, ST_SKY, i), h);
            sky = stream_of(s, ST_SKY, i);
        } else {
            stream_to(s, stream_of(s, ST_LOAD, i), h);
            ld = stream_of(s, ST_LOAD, i);
            if (state == TL_SKY_LOAD_NOISE) {
                stream_to(s, stream_of(s, ST_NS, i), h);
                ns = stream_of(s, ST_NS, i);
            }
        }
        double *dst = s->out[state][i];
        const double sky_amp = s->fir[0][0]; /* white mode: sqrt(sky_t0_k) */
        if (!s->filtered) {
            for (size_t j = 0; j < hop; j++) {
                double v = srx * rx->w[j];
                if (sky != NULL)
                    v += sky_amp * (mix ? a * w0[j] + b * sky->w[j] : sky->w[j]);
                if (ld != NULL)
                    v += sld * ld->w[j];
                if (ns != NULL)
                    v += sns * ns->w[j];
                dst[j] = s->gain * v;
            }
        } else {
            /* bandpass-shaped sum: receiver (+ load (+ noise source)) */
            for (size_t j = 0; j < s->os_len; j++) {
                double v = srx * rx->w[j];
                if (ld != NULL)
                    v += sld * ld->w[j];
                if (ns != NULL)
                    v += sns * ns->w[j];
                s->tin[j] = v;
            }
            fftw_execute(s->fwd_a);
            for (size_t k = 0; k < nb; k++) {
                const double xr = s->spa[k][0], xi = s->spa[k][1];
                s->spa[k][0] = xr * s->hbp[k][0] - xi * s->hbp[k][1];
                s->spa[k][1] = xr * s->hbp[k][1] + xi * s->hbp[k][0];
            }
            if (sky != NULL) {
                for (size_t j = 0; j < s->os_len; j++)
                    s->tin[j] = mix ? a * w0[j] + b * sky->w[j] : sky->w[j];
                fftw_execute(s->fwd_b);
                for (size_t k = 0; k < nb; k++) {
                    const double xr = s->spb[k][0], xi = s->spb[k][1];
                    s->spa[k][0] += xr * s->hsky[k][0] - xi * s->hsky[k][1];
                    s->spa[k][1] += xr * s->hsky[k][1] + xi * s->hsky[k][0];
                }
            }
            fftw_execute(s->inv);
            memcpy(dst, s->tout + hist, sizeof(double) * hop);
        }
        if (state == TL_SKY_ANTENNA && s->intf != NULL)
            for (size_t j = 0; j < hop; j++)
                dst[j] += s->intf[j];
    }
    s->out_hop[state] = h;
}

static int16_t quantize(tl_sky *s, unsigned input, double v)
{
    const unsigned bits = s->p.adc_bits;
    const long hi = (1L << (bits - 1u)) - 1L, lo = -(1L << (bits - 1u));
    const double x = v + s->p.dc_offset_lsb;
    long code;
    if (x >= (double)hi) /* also keeps lrint in range for any input */
        code = hi;
    else if (x <= (double)lo)
        code = lo;
    else
        code = lrint(x); /* nearest, ties to even (the default rounding mode) */
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
        if (s->pos == s->hop_len) {
            s->cur_hop++;
            s->pos = 0;
        }
        make_state(s, s->state);
        size_t take = s->hop_len - s->pos;
        if (take > n - done)
            take = n - done;
        const double *o0 = s->out[s->state][0] + s->pos, *o1 = s->out[s->state][1] + s->pos;
        for (size_t j = 0; j < take; j++)
            in0[done + j] = quantize(s, 0, o0[j]);
        if (s->p.inputs == 2 && in1 != NULL)
            for (size_t j = 0; j < take; j++)
                in1[done + j] = quantize(s, 1, o1[j]);
        s->pos += take;
        done += take;
    }
}

void tl_sky_set_state(tl_sky *s, unsigned state)
{
    if (state < TL_SKY_STATES)
        s->state = state;
}

unsigned tl_sky_state(const tl_sky *s)
{
    return s->state;
}

uint64_t tl_sky_position(const tl_sky *s)
{
    return (uint64_t)s->cur_hop * s->hop_len + s->pos;
}

uint64_t tl_sky_clipped(const tl_sky *s, unsigned input)
{
    return input < 2 ? s->clipped[input] : 0;
}

const double *tl_sky_fir(const tl_sky *s, unsigned which, size_t *len)
{
    if (which > TL_SKY_FIR_BANDPASS)
        return NULL;
    if (len != NULL)
        *len = s->L;
    return s->fir[which];
}

double tl_sky_gain(const tl_sky *s)
{
    return s->gain;
}

double tl_sky_psd_per_kelvin(const tl_sky *s)
{
    return 2.0 * s->gain * s->gain / s->p.sample_rate_hz;
}

int tl_sky_white(const tl_sky *s, unsigned kind, unsigned input, int64_t first, size_t n, double *dst)
{
    if (kind >= ST_KINDS || input >= s->p.inputs || first < -(int64_t)(s->L - 1u) || s->hop_len == 0u)
        return -1;
    const int64_t hop = (int64_t)s->hop_len;
    const stream *q = &s->st[ST_KINDS * input + kind];
    double *blk = calloc(s->hop_len, sizeof(double));
    if (blk == NULL)
        return -1;
    int64_t have = NONE;
    for (size_t j = 0; j < n; j++) {
        const int64_t m = first + (int64_t)j;
        /* block b holds [(b-1) hop, b hop): floor division for m < 0 */
        const int64_t b = (m >= 0 ? m / hop : -((-m + hop - 1) / hop)) + 1;
        if (b != have) {
            white_block(s, q, b, blk, s->hop_len);
            have = b;
        }
        dst[j] = blk[m - (b - 1) * hop];
    }
    free(blk);
    return 0;
}

void tl_sky_design_error(const tl_sky *s, double *rel, double *floor_frac, double *edge_rel)
{
    if (rel != NULL)
        *rel = s->design_rel;
    if (floor_frac != NULL)
        *floor_frac = s->design_floor;
    if (edge_rel != NULL)
        *edge_rel = s->design_edge;
}

double tl_sky_edge_hz(const tl_sky *s)
{
    return EDGE_BINS * s->p.sample_rate_hz / (double)(s->L + 1u);
}
