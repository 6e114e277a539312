/*
 * bench_main.c - `make bench`: speed and memory, one table and one JSON.
 *
 * Figures, all measured in this one run on this machine (each timing the
 * median of several runs, with min and max):
 *   synthesis   the sky simulator's Msamples/s (default scenario, 2 inputs)
 *   chain       for 1024, 4096, 8192 and 16384 channels, 4 taps, 1 input: the fixed
 *               chain (tl_chain_push) in Msamples/s on one core beside the
 *               FFTW double reference chain on the same samples, and their
 *               ratio; ns/sample by stage, each stage function called directly
 *               in a loop on the same data (tl_pfb_commit, tl_fft_execute,
 *               tl_detect_power, tl_integrate_power); the FFT stage against
 *               the straightforward radix-2 int32 FFT of bench_radix2.c (speed
 *               ratio, instruction ratio, and both SQNRs against FFTW double)
 *   callgrind   instructions per sample by stage, the baseline and the whole
 *               chain: this program re-runs itself (--callgrind-workload
 *               CHANNELS, a fixed 16-frame workload) under valgrind's
 *               callgrind, twice, and reads each loop's inclusive Ir from
 *               callgrind_annotate; both runs are printed (they must agree)
 *   encoder     the downlink's lossless encoding (delta, zigzag, bit planes,
 *               our LZ4) in MB/s of 64-bit sums, its LZ4 stage against
 *               liblz4's LZ4_compress_default on the same transposed bytes
 *               (speed and size), and the ground's payload decoder
 *   replay      a recording of about --replay-gib GiB (default 2) simulated
 *               to a temporary folder and replayed through `tidelock
 *               replay`: wall time, Msample/s, peak resident memory (the
 *               streaming bound); then the firmware chain alone through
 *               `replay --threads 1` and `--threads 2` (scaling, identity of
 *               the spectra files, peak RSS); then deleted; 0 skips it.
 * Timings are never pass/fail: they depend on the machine. Only ratios
 * against a reference measured in the same run are meant to be compared
 * between machines.
 *
 * Paths: on x86-64 with AVX2, the chain, stage and callgrind figures are
 * given twice, for the portable firmware ("portable", the AVX2 twins turned
 * off with tl_simd_x86_enable(0)) and with the AVX2 twins of
 * firmware/x86/ ("avx2"); both give the same bytes (tests/test_simd_x86.c).
 * The replay runs the CLI, which uses the AVX2 twins when the CPU has them.
 *
 * usage: tl-bench [--json PATH] [--replay-gib X] [--tidelock PATH] [--tmp DIR]
 *        tl-bench [--portable] --callgrind-workload CHANNELS   (what callgrind runs)
 */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <jansson.h>
#include <lz4.h>

#include <fftw3.h>

#include "bench_radix2.h"
#include "reference.h"
#include "replay_threads.h"
#include "run.h"
#include "spectral_decode.h"
#include "tl_encode.h"
#if defined(__x86_64__) && defined(__GNUC__)
#include "x86/tl_simd_x86.h"
#define BENCH_SIMD 1
#else
#define BENCH_SIMD 0
#endif
#include "scenario.h"
#include "sky_noise.h"
#include "taps_design.h"
#include "tl_chain.h"
#include "tl_downlink.h"

static double now_s(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static void *xmalloc(size_t n)
{
    void *p = malloc(n);
    if (p == NULL) {
        fprintf(stderr, "tl-bench: out of memory (%zu bytes)\n", n);
        exit(1);
    }
    return p;
}

/* ---- synthesis ---------------------------------------------------------------- */

static double bench_synthesis(json_t *root)
{
    tl_scenario s;
    tl_scenario_default(&s);
    tl_sky *sky = tl_sky_open(&s.sky);
    if (sky == NULL) {
        fprintf(stderr, "tl-bench: the default sky does not open\n");
        exit(1);
    }
    const size_t block = 1u << 16, total = (size_t)1 << 23; /* 8 Msamples per input */
    int16_t *a = xmalloc(block * sizeof *a), *b = xmalloc(block * sizeof *b);
    tl_sky_fill(sky, a, b, block); /* warm up: plans, caches */
    const double t0 = now_s();
    for (size_t done = 0; done < total; done += block)
        tl_sky_fill(sky, a, b, block);
    const double dt = now_s() - t0;
    tl_sky_close(sky);
    free(a);
    free(b);
    const double rate = 2.0 * (double)total / dt / 1e6;
    printf("synthesis   default sky, 2 inputs: %.1f Msample/s (both inputs together; %.1f per input)\n", rate,
           rate / 2.0);
    json_object_set_new(root, "synthesis_msamples_per_s", json_real(rate));
    return rate;
}

/* ---- statistics of repeated timings -------------------------------------------- */

#define BENCH_REPS 5 /* every timed figure: median of 5 runs, with min and max */

typedef struct stat3 {
    double med, min, max;
} stat3;

static int cmp_double(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* v[0 .. n-1] sorted in place; n odd */
static stat3 stat_of(double *v, int n)
{
    qsort(v, (size_t)n, sizeof *v, cmp_double);
    stat3 s = { v[n / 2], v[0], v[n - 1] };
    return s;
}

static json_t *json_stat(stat3 s)
{
    json_t *o = json_object();
    json_object_set_new(o, "median", json_real(s.med));
    json_object_set_new(o, "min", json_real(s.min));
    json_object_set_new(o, "max", json_real(s.max));
    return o;
}

/* ---- the chain and its stages: shared set-up ----------------------------------- */

typedef struct chain_setup {
    uint32_t channels, points, taps;
    tl_taps *t;
    uint8_t *img;
    size_t img_len;
    tl_config cfg;
} chain_setup;

static void setup_chain(chain_setup *cs, uint32_t channels)
{
    cs->channels = channels;
    cs->points = 2u * channels;
    cs->taps = 4u;
    cs->t = xmalloc(sizeof *cs->t);
    if (tl_taps_design(TL_WINDOW_HANN, cs->taps, cs->points, cs->t, NULL) != 0) {
        fprintf(stderr, "tl-bench: taps for %u channels\n", channels);
        exit(1);
    }
    const size_t img_cap = TL_TAPS_IMAGE_BYTES(cs->taps, cs->points);
    cs->img = xmalloc(img_cap);
    if (tl_taps_write_image(cs->t, cs->img, img_cap, &cs->img_len) != TL_OK) {
        fprintf(stderr, "tl-bench: table image for %u channels\n", channels);
        exit(1);
    }
    tl_config_default(&cs->cfg);
    cs->cfg.points = cs->points;
    cs->cfg.taps = cs->taps;
    cs->cfg.inputs = 1u;
    cs->cfg.integration = 1u << 20; /* never finishes during the bench */
}

static void free_setup(chain_setup *cs)
{
    free(cs->img);
    free(cs->t);
}

static tl_chain *open_chain(const chain_setup *cs)
{
    tl_chain *c = xmalloc(sizeof *c);
    if (tl_chain_init(c, &cs->cfg, cs->img, cs->img_len) != TL_OK) {
        fprintf(stderr, "tl-bench: chain init for %u channels\n", cs->channels);
        exit(1);
    }
    return c;
}

/* Gaussian-like samples at about 1/7 of full scale (sum of 4 uniforms) */
static int16_t *make_samples(size_t n)
{
    int16_t *x = xmalloc(n * sizeof *x);
    uint64_t st = 0x9E3779B97F4A7C15u;
    for (size_t i = 0; i < n; i++) {
        int v = 0;
        for (int j = 0; j < 4; j++) {
            st ^= st << 13;
            st ^= st >> 7;
            st ^= st << 17;
            v += (int)(st >> 52) - 2048;
        }
        x[i] = (int16_t)(v * 2);
    }
    return x;
}

/* The stages, each over `frames` frames, called directly as the chain calls
 * them. External and noipa so that callgrind reports each loop under its own
 * name (inclusive of the stage function it calls). */
typedef struct stage_data {
    uint32_t points, channels, frames;
    unsigned det_shift;
    tl_pfb *pfb;
    tl_fft *fft;
    tl_integrator *it;
    bench_radix2 r2;
    const int16_t *x; /* frames x points samples */
    int32_t *y;       /* frames x points: filterbank output */
    int32_t *X;       /* frames x points: FFT output */
    int32_t *X2;      /* frames x points: baseline FFT output */
    uint64_t *P;      /* frames x channels: detected power */
    uint32_t sat, fft_sat[TL_MAX_FFT_STAGES + 1u];
} stage_data;

__attribute__((noipa)) void bench_stage_pfb(stage_data *d);
__attribute__((noipa)) void bench_stage_fft(stage_data *d);
__attribute__((noipa)) void bench_stage_detect(stage_data *d);
__attribute__((noipa)) void bench_stage_integrate(stage_data *d);
__attribute__((noipa)) void bench_stage_radix2(stage_data *d);
__attribute__((noipa)) void bench_stage_chain(tl_chain *c, const int16_t *x, size_t n);
__attribute__((noipa)) void bench_stage_encode(const tl_product *p, tl_encode *e, uint8_t *out, size_t cap);
__attribute__((noipa)) void bench_stage_downlink(const tl_product *p, tl_downlink *d);

void bench_stage_pfb(stage_data *d)
{
    const size_t N = d->points;
    for (uint32_t f = 0; f < d->frames; f++) {
        memcpy(tl_pfb_next_frame(d->pfb), d->x + f * N, N * sizeof *d->x);
        if (!tl_pfb_commit(d->pfb, d->y + f * N, &d->sat)) {
            fprintf(stderr, "tl-bench: the filterbank was not primed\n");
            exit(1);
        }
    }
}

void bench_stage_fft(stage_data *d)
{
    const size_t N = d->points;
    for (uint32_t f = 0; f < d->frames; f++)
        tl_fft_execute(d->fft, d->y + f * N, d->X + f * N, d->fft_sat);
}

void bench_stage_detect(stage_data *d)
{
    const size_t N = d->points;
    for (uint32_t f = 0; f < d->frames; f++)
        tl_detect_power(d->X + f * N, d->channels, d->det_shift, TL_ROUND_HALF_EVEN, d->P + f * (size_t)d->channels);
}

void bench_stage_integrate(stage_data *d)
{
    for (uint32_t f = 0; f < d->frames; f++)
        tl_integrate_power(d->it, 0u, d->P + f * (size_t)d->channels);
}

void bench_stage_radix2(stage_data *d)
{
    const size_t N = d->points;
    for (uint32_t f = 0; f < d->frames; f++)
        bench_radix2_execute(&d->r2, d->y + f * N, d->X2 + f * N);
}

void bench_stage_chain(tl_chain *c, const int16_t *x, size_t n)
{
    size_t used = 0;
    if (tl_chain_push(c, x, NULL, n, &used) != TL_OK || used != n) {
        fprintf(stderr, "tl-bench: chain push\n");
        exit(1);
    }
}

/* Encoding: the product's auto-power sums (one input) in pieces of
 * TL_ENCODE_MAX_CHANNELS, lossless with bit planes as the default downlink. */
void bench_stage_encode(const tl_product *p, tl_encode *e, uint8_t *out, size_t cap)
{
    for (uint32_t c0 = 0; c0 < p->channels; c0 += TL_ENCODE_MAX_CHANNELS) {
        const uint32_t n = p->channels - c0 < TL_ENCODE_MAX_CHANNELS ? p->channels - c0 : TL_ENCODE_MAX_CHANNELS;
        size_t w = 0;
        if (tl_encode_lossless_u64(e, &p->auto_power[0][c0], n, TL_ENCODE_BIT_PLANES, out, cap, &w) != TL_OK) {
            fprintf(stderr, "tl-bench: encode\n");
            exit(1);
        }
    }
}

static void null_sink(void *user, const uint8_t *packet, size_t len)
{
    (void)packet;
    *(size_t *)user += len;
}

/* The whole downlink of the product: encoding, headers, CRC-16, time. */
void bench_stage_downlink(const tl_product *p, tl_downlink *d)
{
    size_t octets = 0;
    if (tl_downlink_product(d, p, 1, null_sink, &octets) != TL_OK) {
        fprintf(stderr, "tl-bench: downlink\n");
        exit(1);
    }
}

static void open_stages(stage_data *d, const chain_setup *cs, const int16_t *x, uint32_t frames)
{
    memset(d, 0, sizeof *d);
    d->points = cs->points;
    d->channels = cs->channels;
    d->frames = frames;
    d->det_shift = (unsigned)tl_config_det_shift(&cs->cfg);
    d->x = x;
    d->pfb = xmalloc(sizeof *d->pfb);
    d->fft = xmalloc(sizeof *d->fft);
    d->it = xmalloc(sizeof *d->it);
    if (tl_pfb_init(d->pfb, cs->t, TL_ROUND_HALF_EVEN) != TL_OK ||
        tl_fft_init(d->fft, cs->points, TL_FFT_SCALE_AUTO, TL_ROUND_HALF_EVEN) != TL_OK ||
        bench_radix2_init(&d->r2, cs->points) != 0) {
        fprintf(stderr, "tl-bench: stage init for %u channels\n", cs->channels);
        exit(1);
    }
    tl_integrate_reset(d->it, cs->channels);
    /* prime the filterbank with taps - 1 frames so that every timed frame gives output */
    int32_t *scratch = xmalloc(sizeof *scratch * cs->points);
    for (uint32_t f = 0; f + 1u < cs->taps; f++) {
        memcpy(tl_pfb_next_frame(d->pfb), x + (size_t)f * cs->points, cs->points * sizeof *x);
        (void)tl_pfb_commit(d->pfb, scratch, &d->sat);
    }
    free(scratch);
    const size_t n = (size_t)frames * cs->points;
    d->y = xmalloc(n * sizeof *d->y);
    d->X = xmalloc(n * sizeof *d->X);
    d->X2 = xmalloc(n * sizeof *d->X2);
    d->P = xmalloc((size_t)frames * cs->channels * sizeof *d->P);
}

static void close_stages(stage_data *d)
{
    bench_radix2_free(&d->r2);
    free(d->pfb);
    free(d->fft);
    free(d->it);
    free(d->y);
    free(d->X);
    free(d->X2);
    free(d->P);
}

/* SQNR in dB of X (scaled 2^-shift against the exact DFT) over `frames`
 * frames of y, against FFTW's double r2c transform of the same y. */
static double sqnr_db(const int32_t *y, const int32_t *X, uint32_t points, uint32_t frames, uint32_t shift)
{
    double *in = fftw_malloc(sizeof(double) * points);
    fftw_complex *out = fftw_malloc(sizeof(fftw_complex) * (points / 2u + 1u));
    fftw_plan p = fftw_plan_dft_r2c_1d((int)points, in, out, FFTW_ESTIMATE);
    const double scale = ldexp(1.0, -(int)shift);
    double sig = 0.0, err = 0.0;
    for (uint32_t f = 0; f < frames; f++) {
        for (uint32_t i = 0; i < points; i++)
            in[i] = y[(size_t)f * points + i];
        fftw_execute(p);
        for (uint32_t k = 0; k < points / 2u; k++) {
            const double rr = out[k][0] * scale, ri = out[k][1] * scale;
            const double er = X[(size_t)f * points + 2u * k] - rr, ei = X[(size_t)f * points + 2u * k + 1u] - ri;
            sig += rr * rr + ri * ri;
            err += er * er + ei * ei;
        }
    }
    fftw_destroy_plan(p);
    fftw_free(in);
    fftw_free(out);
    return 10.0 * log10(sig / err);
}

/* ---- instructions per sample from callgrind ------------------------------------ */

/* `tl-bench --callgrind-workload CHANNELS`: the fixed workload valgrind runs.
 * CG_FRAMES frames through each stage loop and through the whole chain. */
#define CG_FRAMES 16u

/* 1: the AVX2 twins (when the CPU has them), 0: the portable firmware. */
static void set_path(int simd)
{
#if BENCH_SIMD
    tl_simd_x86_enable(simd);
#else
    (void)simd;
#endif
}

static const char *path_name(int simd)
{
    return simd ? "avx2" : "portable";
}

static int callgrind_workload(uint32_t channels, int simd)
{
    set_path(simd);
    chain_setup cs;
    setup_chain(&cs, channels);
    const uint32_t warm = cs.taps - 1u;
    const size_t n = (size_t)(warm + CG_FRAMES) * cs.points;
    int16_t *x = make_samples(n);
    stage_data d;
    open_stages(&d, &cs, x, CG_FRAMES);
    d.x = x + (size_t)warm * cs.points;
    bench_stage_pfb(&d);
    bench_stage_fft(&d);
    bench_stage_detect(&d);
    bench_stage_integrate(&d);
    bench_stage_radix2(&d);
    tl_chain *c = open_chain(&cs);
    size_t used = 0; /* prime the chain's filterbank outside the measured call */
    if (tl_chain_push(c, x, NULL, (size_t)warm * cs.points, &used) != TL_OK) {
        free(c);
        close_stages(&d);
        free(x);
        free_setup(&cs);
        return 1;
    }
    bench_stage_chain(c, x + (size_t)warm * cs.points, (size_t)CG_FRAMES * cs.points);
    /* the product of the same frames, then its encoding and its downlink */
    chain_setup ps = cs;
    ps.cfg.integration = CG_FRAMES;
    ps.cfg.det_shift = tl_config_det_shift(&cs.cfg);
    tl_chain *pc = open_chain(&ps);
    tl_product *prod = xmalloc(sizeof *prod);
    tl_encode *enc = xmalloc(sizeof *enc);
    const size_t cap = TL_ENCODE_LOSSLESS_BOUND(TL_ENCODE_MAX_CHANNELS);
    uint8_t *out = xmalloc(cap);
    tl_downlink *dl = xmalloc(sizeof *dl);
    tl_downlink_config dc;
    tl_downlink_config_default(&dc);
    int rc = 1;
    if (tl_chain_push(pc, x, NULL, n, &used) == TL_OK && tl_chain_ready(pc) && tl_chain_take(pc, prod) == TL_OK &&
        tl_downlink_init(dl, &dc) == TL_OK) {
        bench_stage_encode(prod, enc, out, cap);
        bench_stage_downlink(prod, dl);
        rc = 0;
    }
    free(dl);
    free(out);
    free(enc);
    free(prod);
    free(pc);
    free(c);
    close_stages(&d);
    free(x);
    free_setup(&cs);
    return rc;
}

static const char *const cg_names[] = { "bench_stage_pfb",       "bench_stage_fft",   "bench_stage_detect",
                                        "bench_stage_integrate", "bench_stage_radix2", "bench_stage_chain",
                                        "bench_stage_encode",    "bench_stage_downlink" };
#define CG_N 8

/* Run the workload under callgrind once; Ir per function (inclusive) into ir[]. */
static int callgrind_once(const char *self, const char *dir, uint32_t channels, int simd, int run,
                          double ir[CG_N])
{
    char out[4400], cmd[16384];
    snprintf(out, sizeof out, "%s/cg.%u.%s.%d.out", dir, channels, path_name(simd), run);
    snprintf(cmd, sizeof cmd,
             "valgrind --tool=callgrind -q --callgrind-out-file='%s' '%s' %s--callgrind-workload %u >/dev/null 2>&1 "
             "&& callgrind_annotate --inclusive=yes --threshold=100 '%s' 2>/dev/null",
             out, self, simd ? "" : "--portable ", channels, out);
/* NOLINTNEXTLINE(cert-env33-c): the bench runs valgrind, cmp and the built tool on paths it made */
    FILE *p = popen(cmd, "r");
    if (p == NULL)
        return -1;
    for (int i = 0; i < CG_N; i++)
        ir[i] = -1.0;
    char line[8192];
    while (fgets(line, sizeof line, p) != NULL) {
        for (int i = 0; i < CG_N; i++) {
            char key[64];
            snprintf(key, sizeof key, ":%s ", cg_names[i]);
            if (strstr(line, key) == NULL)
                continue;
            double v = 0.0;
            for (const char *q = line; *q == ' ' || *q == ',' || (*q >= '0' && *q <= '9'); q++)
                if (*q >= '0' && *q <= '9')
                    v = v * 10.0 + (*q - '0');
            ir[i] = v;
        }
    }
    const int rc = pclose(p);
    for (int i = 0; i < CG_N; i++)
        if (ir[i] < 0.0)
            return -1;
    return rc == 0 ? 0 : -1;
}

/* ---- fixed chain, its stages, the FFTW reference and the radix-2 baseline ------ */

typedef struct chain_row {
    uint32_t channels;
    int simd;                     /* 1: AVX2 twins, 0: portable firmware */
    stat3 fix, ref, ratio;        /* Msample/s, Msample/s, fixed / reference */
    stat3 ns[4];                  /* ns/sample: pfb, fft, detect, integrate */
    stat3 r2ns, fft_speedup;      /* baseline FFT ns/sample; baseline time / our FFT time */
    double sqnr_fft, sqnr_r2;     /* dB against FFTW double */
    int have_ir;
    double ir[2][CG_N];           /* instructions per sample, two callgrind runs */
} chain_row;

static void bench_chain(chain_row *row, uint32_t channels, int simd)
{
    set_path(simd);
    chain_setup cs;
    setup_chain(&cs, channels);
    const uint32_t points = cs.points, taps = cs.taps;
    tl_chain *c = open_chain(&cs);
    double *coef = xmalloc(sizeof(double) * taps * points);
    for (size_t n = 0; n < (size_t)taps * points; n++)
        coef[n] = cs.t->coef[n];
    tl_ref *ref = tl_ref_open(coef, taps, points, cs.t->shift, 1u, c->fft.total_shift, tl_config_det_shift(&cs.cfg));
    if (ref == NULL) {
        fprintf(stderr, "tl-bench: reference for %u channels\n", channels);
        exit(1);
    }
    /* whole chain: 2^24 samples per run; stages: 2^22 samples per run */
    const size_t frames = (size_t)((1u << 24) / points), n = frames * points;
    int16_t *x = make_samples(n);
    const uint32_t sframes = (1u << 22) / points;
    stage_data d;
    open_stages(&d, &cs, x, sframes);
    d.x = x + (size_t)(taps - 1u) * points;
    double tf[BENCH_REPS], tr[BENCH_REPS], rt[BENCH_REPS], ts[4][BENCH_REPS], t2[BENCH_REPS], sp[BENCH_REPS];
    for (int rep = -1; rep < BENCH_REPS; rep++) { /* rep -1: warm-up (first touch of the buffers), not kept */
        if (rep < 0) {
            bench_stage_chain(c, x, n);
            for (size_t f = 0; f < frames; f++)
                tl_ref_push_frame(ref, x + f * points, NULL);
            bench_stage_pfb(&d);
            bench_stage_fft(&d);
            bench_stage_detect(&d);
            bench_stage_integrate(&d);
            bench_stage_radix2(&d);
            continue;
        }
        double t0 = now_s();
        bench_stage_chain(c, x, n);
        tf[rep] = (double)n / (now_s() - t0) / 1e6;
        t0 = now_s();
        for (size_t f = 0; f < frames; f++)
            tl_ref_push_frame(ref, x + f * points, NULL);
        tr[rep] = (double)n / (now_s() - t0) / 1e6;
        rt[rep] = tf[rep] / tr[rep];
        void (*const stage[4])(stage_data *) = { bench_stage_pfb, bench_stage_fft, bench_stage_detect,
                                                 bench_stage_integrate };
        const double ns = (double)sframes * points;
        for (int s = 0; s < 4; s++) {
            t0 = now_s();
            stage[s](&d);
            ts[s][rep] = (now_s() - t0) * 1e9 / ns;
        }
        t0 = now_s();
        bench_stage_radix2(&d);
        t2[rep] = (now_s() - t0) * 1e9 / ns;
        sp[rep] = t2[rep] / ts[1][rep];
    }
    row->channels = channels;
    row->simd = simd;
    row->fix = stat_of(tf, BENCH_REPS);
    row->ref = stat_of(tr, BENCH_REPS);
    row->ratio = stat_of(rt, BENCH_REPS);
    for (int s = 0; s < 4; s++)
        row->ns[s] = stat_of(ts[s], BENCH_REPS);
    row->r2ns = stat_of(t2, BENCH_REPS);
    row->fft_speedup = stat_of(sp, BENCH_REPS);
    const uint32_t qf = sframes < 64u ? sframes : 64u;
    row->sqnr_fft = sqnr_db(d.y, d.X, points, qf, d.fft->total_shift);
    row->sqnr_r2 = sqnr_db(d.y, d.X2, points, qf, d.r2.log2size);
    close_stages(&d);
    tl_ref_close(ref);
    free(x);
    free(coef);
    free(c);
    free_setup(&cs);
}

static void bench_instructions(chain_row *rows, int nrows, const char *self, const char *tmp)
{
    char dir[4096];
    snprintf(dir, sizeof dir, "%s/tl-bench-cg-XXXXXX", tmp);
/* NOLINTNEXTLINE(cert-env33-c): the bench runs valgrind, cmp and the built tool on paths it made */
    if (system("valgrind --version >/dev/null 2>&1 && command -v callgrind_annotate >/dev/null 2>&1") != 0 ||
        mkdtemp(dir) == NULL) {
        printf("callgrind   valgrind or callgrind_annotate missing: instructions per sample NOT measured\n");
        return;
    }
    for (int i = 0; i < nrows; i++) {
        rows[i].have_ir = 1;
        const double samples = (double)CG_FRAMES * 2.0 * rows[i].channels;
        for (int run = 0; run < 2; run++) {
            if (callgrind_once(self, dir, rows[i].channels, rows[i].simd, run, rows[i].ir[run]) != 0) {
                fprintf(stderr, "tl-bench: callgrind run failed for %u channels (files in %s)\n", rows[i].channels, dir);
                rows[i].have_ir = 0;
                break;
            }
            for (int k = 0; k < CG_N; k++)
                rows[i].ir[run][k] /= samples;
        }
    }
    char cmd[4200];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
/* NOLINTNEXTLINE(cert-env33-c): the bench runs valgrind, cmp and the built tool on paths it made */
    if (system(cmd) != 0)
        fprintf(stderr, "tl-bench: cannot remove %s\n", dir);
}

static void print_chain(json_t *root, const chain_row *rows, int nrows)
{
    static const char *const sname[4] = { "filterbank", "fft", "detection", "integration" };
    printf("\nchain: 1 input, 4 taps, Hann; every time the median of %d runs [min max] in this run\n", BENCH_REPS);
    printf("%-9s %-9s %-26s %-26s %-22s\n", "channels", "path", "fixed Msample/s", "FFTW double ref Msample/s",
           "fixed/ref");
    for (int i = 0; i < nrows; i++)
        printf("%-9u %-9s %7.1f [%7.1f %7.1f]   %7.1f [%7.1f %7.1f]   %5.2f [%5.2f %5.2f]\n", rows[i].channels,
               path_name(rows[i].simd),
               rows[i].fix.med, rows[i].fix.min, rows[i].fix.max, rows[i].ref.med, rows[i].ref.min, rows[i].ref.max,
               rows[i].ratio.med, rows[i].ratio.min, rows[i].ratio.max);
    printf("\nns/sample by stage (stage functions called directly on the same data, 2^22 samples per run)\n");
    printf("%-9s %-9s", "channels", "path");
    for (int s = 0; s < 4; s++)
        printf(" %-22s", sname[s]);
    printf(" %-10s %-10s\n", "sum", "chain");
    for (int i = 0; i < nrows; i++) {
        printf("%-9u %-9s", rows[i].channels, path_name(rows[i].simd));
        double sum = 0.0;
        for (int s = 0; s < 4; s++) {
            printf(" %5.2f [%5.2f %5.2f]    ", rows[i].ns[s].med, rows[i].ns[s].min, rows[i].ns[s].max);
            sum += rows[i].ns[s].med;
        }
        printf(" %-10.2f %-10.2f\n", sum, 1e3 / rows[i].fix.med);
    }
    printf("\nFFT stage against the radix-2 int32 baseline (host/bench_radix2.c), same y, same size\n");
    printf("%-9s %-9s %-24s %-24s %-12s %-12s %-12s %-12s\n", "channels", "path", "baseline ns/sample", "speed ours/baseline",
           "Ir ours", "Ir baseline", "Ir ratio", "SQNR ours/baseline dB");
    for (int i = 0; i < nrows; i++) {
        char irs[3][32];
        if (rows[i].have_ir) {
            snprintf(irs[0], sizeof irs[0], "%.2f", rows[i].ir[0][1]);
            snprintf(irs[1], sizeof irs[1], "%.2f", rows[i].ir[0][4]);
            snprintf(irs[2], sizeof irs[2], "%.3f", rows[i].ir[0][1] / rows[i].ir[0][4]);
        } else {
            for (int k = 0; k < 3; k++)
                snprintf(irs[k], sizeof irs[k], "not measured");
        }
        printf("%-9u %-9s %5.2f [%5.2f %5.2f]     %5.2fx [%5.2f %5.2f]     %-12s %-12s %-12s %.1f / %.1f\n",
               rows[i].channels, path_name(rows[i].simd), rows[i].r2ns.med, rows[i].r2ns.min, rows[i].r2ns.max, rows[i].fft_speedup.med,
               rows[i].fft_speedup.min, rows[i].fft_speedup.max, irs[0], irs[1], irs[2], rows[i].sqnr_fft,
               rows[i].sqnr_r2);
    }
    printf("\ninstructions per input sample (callgrind Ir, %u frames, inclusive; run 1 | run 2)\n", CG_FRAMES);
    printf("%-9s %-9s", "channels", "path");
    for (int s = 0; s < 4; s++)
        printf(" %-19s", sname[s]);
    printf(" %-19s %-19s %s\n", "radix-2 baseline", "whole chain", "repeat");
    for (int i = 0; i < nrows; i++) {
        printf("%-9u %-9s", rows[i].channels, path_name(rows[i].simd));
        if (!rows[i].have_ir) {
            printf(" not measured\n");
            continue;
        }
        int same = 1;
        for (int k = 0; k < CG_N; k++) {
            if (k < 6)
                printf(" %8.3f | %8.3f", rows[i].ir[0][k], rows[i].ir[1][k]);
            same &= rows[i].ir[0][k] == rows[i].ir[1][k];
        }
        printf(" %s\n", same ? "identical" : "DIFFERENT");
        /* encoding and packets: per sample of the product of the CG_FRAMES frames
         * (a longer integration spreads them over more samples) */
        printf("%-19s encoding %8.3f | %8.3f, packets (downlink - encoding) %8.3f | %8.3f per sample of a %u-frame "
               "product\n",
               "", rows[i].ir[0][6], rows[i].ir[1][6], rows[i].ir[0][7] - rows[i].ir[0][6],
               rows[i].ir[1][7] - rows[i].ir[1][6], CG_FRAMES);
    }
    json_t *arr = json_array();
    for (int i = 0; i < nrows; i++) {
        json_t *o = json_object();
        json_object_set_new(o, "channels", json_integer(rows[i].channels));
        json_object_set_new(o, "path", json_string(path_name(rows[i].simd)));
        json_object_set_new(o, "taps", json_integer(4));
        json_object_set_new(o, "inputs", json_integer(1));
        json_object_set_new(o, "fixed_msamples_per_s", json_stat(rows[i].fix));
        json_object_set_new(o, "reference_msamples_per_s", json_stat(rows[i].ref));
        json_object_set_new(o, "fixed_over_reference", json_stat(rows[i].ratio));
        json_t *st = json_object();
        for (int s = 0; s < 4; s++)
            json_object_set_new(st, sname[s], json_stat(rows[i].ns[s]));
        json_object_set_new(o, "stage_ns_per_sample", st);
        json_object_set_new(o, "radix2_fft_ns_per_sample", json_stat(rows[i].r2ns));
        json_object_set_new(o, "fft_speed_over_radix2", json_stat(rows[i].fft_speedup));
        json_object_set_new(o, "fft_sqnr_db", json_real(rows[i].sqnr_fft));
        json_object_set_new(o, "radix2_sqnr_db", json_real(rows[i].sqnr_r2));
        if (rows[i].have_ir) {
            json_t *ir = json_array();
            for (int run = 0; run < 2; run++) {
                json_t *r = json_object();
                for (int k = 0; k < CG_N; k++)
                    json_object_set_new(r, cg_names[k] + strlen("bench_stage_"), json_real(rows[i].ir[run][k]));
                json_array_append_new(ir, r);
            }
            json_object_set_new(o, "instructions_per_sample_two_runs", ir);
            json_object_set_new(o, "fft_instructions_over_radix2", json_real(rows[i].ir[0][1] / rows[i].ir[0][4]));
        } else {
            json_object_set_new(o, "instructions_per_sample_two_runs", json_null());
        }
        json_array_append_new(arr, o);
    }
    json_object_set_new(root, "chain", arr);
}

/* ---- the downlink encoder against liblz4 ------------------------------------- */

static void bench_encoder(json_t *root)
{
    tl_scenario s;
    tl_scenario_default(&s);
    s.spectra = 1024;
    s.cfg.integration = 1024;
    s.blocks = 16;
    tl_product *p = xmalloc(sizeof *p);
    if (tl_run_firmware(&s, p) != TL_OK) {
        fprintf(stderr, "tl-bench: the default scenario does not run\n");
        exit(1);
    }
    tl_encode *e = xmalloc(sizeof *e);
    const uint32_t n = TL_ENCODE_MAX_CHANNELS, chunks = p->channels / n;
    uint8_t *dst = xmalloc(TL_ENCODE_LOSSLESS_BOUND(TL_ENCODE_MAX_CHANNELS));
    char *ref = xmalloc((size_t)LZ4_compressBound((int)(8u * n)));
    static uint64_t back[TL_ENCODE_MAX_CHANNELS];
    size_t ours = 0, theirs = 0, raw = 0, w = 0;
    double t_ours = 0.0, t_ref = 0.0, t_dec = 0.0;
    const int reps = 200;
    for (uint32_t c = 0; c < chunks; c++) {
        const uint64_t *v = p->auto_power[0] + (size_t)c * n;
        double t0 = now_s();
        for (int r = 0; r < reps; r++)
            tl_encode_lossless_u64(e, v, n, TL_ENCODE_BIT_PLANES, dst, TL_ENCODE_LOSSLESS_BOUND(n), &w);
        t_ours += now_s() - t0;
        ours += w;
        raw += 8u * n;
        /* e->shuffled now holds the transposed words our LZ4 compressed */
        int got = 0;
        t0 = now_s();
        for (int r = 0; r < reps; r++)
            got = LZ4_compress_default((const char *)e->shuffled, ref, (int)(8u * n), LZ4_compressBound((int)(8u * n)));
        t_ref += now_s() - t0;
        theirs += (size_t)got + TL_ENCODE_HEADER_BYTES;
        t0 = now_s();
        for (int r = 0; r < reps; r++)
            tl_spectral_decode_u64(dst, w, back, NULL, n, NULL);
        t_dec += now_s() - t0;
    }
    const double mb = (double)raw * reps / 1e6;
    printf("encoder     lossless, bit planes, %u x %u channels of auto0: %.1f MB/s of sums, x%.3f; "
           "liblz4 LZ4_compress_default on the same transposed bytes: %.1f MB/s (LZ4 stage only), x%.3f "
           "(ours/liblz4 size %.4f); ground decoder %.1f MB/s\n",
           chunks, n, mb / t_ours, (double)raw / (double)ours, mb / t_ref, (double)raw / (double)theirs,
           (double)ours / (double)theirs, mb / t_dec);
    json_t *o = json_object();
    json_object_set_new(o, "encode_mb_per_s", json_real(mb / t_ours));
    json_object_set_new(o, "ratio", json_real((double)raw / (double)ours));
    json_object_set_new(o, "liblz4_mb_per_s", json_real(mb / t_ref));
    json_object_set_new(o, "liblz4_ratio", json_real((double)raw / (double)theirs));
    json_object_set_new(o, "size_ours_over_liblz4", json_real((double)ours / (double)theirs));
    json_object_set_new(o, "decode_mb_per_s", json_real(mb / t_dec));
    json_object_set_new(root, "encoder", o);
    free(ref);
    free(dst);
    free(e);
    free(p);
}

/* ---- a large replay through the CLI ------------------------------------------ */

/* Run argv with stdout/stderr to `log`; wall time and the child's peak RSS. */
static int spawn(char *const argv[], const char *log, double *wall, long *rss_kb)
{
    const double t0 = now_s();
    const pid_t pid = fork();
    if (pid < 0)
        return -1;
    if (pid == 0) {
        const int fd = open(log, O_WRONLY | O_CREAT | O_TRUNC, 0644);
        if (fd >= 0) {
            dup2(fd, 1);
            dup2(fd, 2);
        }
        execv(argv[0], argv);
        _exit(127);
    }
    int status = 0;
    struct rusage ru;
    if (wait4(pid, &status, 0, &ru) < 0)
        return -1;
    *wall = now_s() - t0;
    *rss_kb = ru.ru_maxrss;
    return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

static int bench_replay(json_t *root, const char *tool, const char *tmp, double gib)
{
    /* the default scenario with enough spectra for the size asked:
     * 2 inputs x 2 bytes x 8192 points per spectrum */
    const double bytes_per_spectrum = 2.0 * 2.0 * 8192.0;
    uint64_t spectra = (uint64_t)ceil(gib * 1073741824.0 / bytes_per_spectrum / 64.0) * 64u;
    if (spectra < 128u)
        spectra = 128u;
    char dir[4096], ini[4200], rec[4200], meta[4300], data[4300], out[4200], log[4200];
    snprintf(dir, sizeof dir, "%s/tl-bench-XXXXXX", tmp);
    if (mkdtemp(dir) == NULL) {
        fprintf(stderr, "tl-bench: %s: cannot make a temporary folder: %s\n", tmp, strerror(errno));
        return -1;
    }
    snprintf(ini, sizeof ini, "%s/big.ini", dir);
    snprintf(rec, sizeof rec, "%s/big", dir);
    snprintf(meta, sizeof meta, "%s.sigmf-meta", rec);
    snprintf(data, sizeof data, "%s.sigmf-data", rec);
    snprintf(out, sizeof out, "%s/out", dir);
    snprintf(log, sizeof log, "%s/log.txt", dir);
    FILE *f = fopen(ini, "w");
    if (f == NULL)
        return -1;
    fprintf(f, "[integration]\nspectra = %llu\n[fidelity]\nextrapolate_to = 0\n[output]\ncsv = false\n",
            (unsigned long long)spectra);
    fclose(f);
    double t_sim = 0.0, t_rep = 0.0;
    long rss_sim = 0, rss_rep = 0;
    char *sim_argv[] = { (char *)tool, "simulate", ini, "-q", "-o", rec, NULL };
    int rc = spawn(sim_argv, log, &t_sim, &rss_sim);
    struct stat sb;
    if (rc != 0 || stat(data, &sb) != 0) {
        fprintf(stderr, "tl-bench: simulate failed (exit %d), see %s\n", rc, log);
        return -1;
    }
    char *rep_argv[] = { (char *)tool, "replay", meta, "-q", "-o", out, NULL };
    rc = spawn(rep_argv, log, &t_rep, &rss_rep);
    if (rc != 0 && rc != 1) { /* 1: a FAIL verdict still replays every sample */
        fprintf(stderr, "tl-bench: replay failed (exit %d), see %s\n", rc, log);
        return -1;
    }
    const double samples = (double)sb.st_size / 2.0; /* int16 values, both inputs */
    printf("replay      %.2f GiB recording (%llu spectra, default scenario): simulate %.1f s (%.1f Msample/s), "
           "replay %.1f s (%.1f Msample/s, chain + 2 references + calibration), peak RSS %.1f MiB\n",
           (double)sb.st_size / 1073741824.0, (unsigned long long)spectra, t_sim, samples / t_sim / 1e6, t_rep,
           samples / t_rep / 1e6, (double)rss_rep / 1024.0);
    json_t *o = json_object();
    json_object_set_new(o, "bytes", json_integer((json_int_t)sb.st_size));
    json_object_set_new(o, "spectra", json_integer((json_int_t)spectra));
    json_object_set_new(o, "simulate_s", json_real(t_sim));
    json_object_set_new(o, "replay_s", json_real(t_rep));
    json_object_set_new(o, "replay_msamples_per_s", json_real(samples / t_rep / 1e6));
    json_object_set_new(o, "replay_peak_rss_kib", json_integer(rss_rep));
    json_object_set_new(o, "simulate_peak_rss_kib", json_integer(rss_sim));
    /* the firmware chain alone through `replay --threads N`: 1 and 2 threads,
     * median of 3 runs each, and the spectra files compared byte for byte */
    double tt[2][3];
    long rss_t[2] = { 0, 0 };
    char outs[2][4300];
    for (int k = 0; k < 2; k++) {
        snprintf(outs[k], sizeof outs[k], "%s/out-t%d", dir, k + 1);
        char targ[8];
        snprintf(targ, sizeof targ, "%d", k + 1);
        for (int rep = 0; rep < 3; rep++) {
            long rk = 0;
            char *t_argv[] = { (char *)tool, "replay", meta, "--threads", targ, "-q", "-o", outs[k], NULL };
            rc = spawn(t_argv, log, &tt[k][rep], &rk);
            if (rc != 0) {
                fprintf(stderr, "tl-bench: replay --threads %d failed (exit %d), see %s\n", k + 1, rc, log);
                return -1;
            }
            if (rk > rss_t[k])
                rss_t[k] = rk;
        }
    }
    char cmp[40000];
    snprintf(cmp, sizeof cmp, "cmp -s '%s/auto0.npy' '%s/auto0.npy' && cmp -s '%s/auto1.npy' '%s/auto1.npy' && "
             "cmp -s '%s/cross.npy' '%s/cross.npy' && cmp -s '%s/auto0.npy' '%s/auto0.npy'",
             outs[0], outs[1], outs[0], outs[1], outs[0], outs[1], out, outs[1]);
/* NOLINTNEXTLINE(cert-env33-c): the bench runs valgrind, cmp and the built tool on paths it made */
    const int same = system(cmp) == 0;
    const stat3 t1 = stat_of(tt[0], 3), t2 = stat_of(tt[1], 3);
    const double speedup = t1.med / t2.med;
    printf("replay      firmware chain only (replay --threads N, same recording, median of 3 [min max]): 1 thread "
           "%.2f s [%.2f %.2f] (%.1f Msample/s), 2 threads %.2f s [%.2f %.2f] (%.1f Msample/s): x%.2f, efficiency "
           "%.0f%%; spectra identical to 1 thread and to the serial replay: %s; peak RSS %.1f / %.1f MiB (bound "
           "%.1f / %.1f MiB + the product)\n",
           t1.med, t1.min, t1.max, samples / t1.med / 1e6, t2.med, t2.min, t2.max, samples / t2.med / 1e6, speedup,
           100.0 * speedup / 2.0, same ? "yes" : "NO", (double)rss_t[0] / 1024.0, (double)rss_t[1] / 1024.0,
           (double)tl_replay_threads_bytes(1, 0) / 1048576.0, (double)tl_replay_threads_bytes(2, 0) / 1048576.0);
    json_t *th = json_object();
    json_object_set_new(th, "one_thread_s", json_stat(t1));
    json_object_set_new(th, "two_threads_s", json_stat(t2));
    json_object_set_new(th, "speedup_2_over_1", json_real(speedup));
    json_object_set_new(th, "efficiency", json_real(speedup / 2.0));
    json_object_set_new(th, "identical", json_boolean(same));
    json_object_set_new(th, "peak_rss_kib_1", json_integer(rss_t[0]));
    json_object_set_new(th, "peak_rss_kib_2", json_integer(rss_t[1]));
    json_object_set_new(th, "bound_bytes_1", json_integer((json_int_t)tl_replay_threads_bytes(1, 0)));
    json_object_set_new(th, "bound_bytes_2", json_integer((json_int_t)tl_replay_threads_bytes(2, 0)));
    json_object_set_new(o, "threads", th);
    json_object_set_new(root, "replay", o);
    char cmd[4400];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
/* NOLINTNEXTLINE(cert-env33-c): the bench runs valgrind, cmp and the built tool on paths it made */
    return system(cmd) == 0 ? 0 : -1;
}

/* The 1-minute load average (other work on the machine while timing), or -1. */
static double load_average(void)
{
    double l = -1.0;
    FILE *f = fopen("/proc/loadavg", "r");
    if (f != NULL) {
        char line[128];
        char *end = NULL;
        if (fgets(line, sizeof line, f) != NULL) {
            const double v = strtod(line, &end);
            if (end != line)
                l = v;
        }
        fclose(f);
    }
    return l;
}

int main(int argc, char **argv)
{
    const char *json_path = NULL, *tool = "build/rel/tidelock", *tmp = "/tmp";
    double gib = 2.0;
    int simd_cg = 1;
    for (int i = 1; i < argc; i++) {
        if (strcmp(argv[i], "--json") == 0 && i + 1 < argc)
            json_path = argv[++i];
        else if (strcmp(argv[i], "--replay-gib") == 0 && i + 1 < argc)
            gib = strtod(argv[++i], NULL);
        else if (strcmp(argv[i], "--tidelock") == 0 && i + 1 < argc)
            tool = argv[++i];
        else if (strcmp(argv[i], "--tmp") == 0 && i + 1 < argc)
            tmp = argv[++i];
        else if (strcmp(argv[i], "--portable") == 0)
            simd_cg = 0;
        else if (strcmp(argv[i], "--callgrind-workload") == 0 && i + 1 < argc)
            return callgrind_workload((uint32_t)strtoul(argv[++i], NULL, 10), simd_cg);
        else {
            fprintf(stderr, "tl-bench: unknown option '%s' (options: --json PATH, --replay-gib X from 0 to 64, "
                            "--tidelock PATH, --tmp DIR)\n", argv[i]);
            return 2;
        }
    }
    if (!(gib >= 0.0 && gib <= 64.0)) {
        fprintf(stderr, "tl-bench: --replay-gib must be from 0 to 64\n");
        return 2;
    }
    json_t *root = json_object();
    const long cpus = sysconf(_SC_NPROCESSORS_ONLN);
    const double load0 = load_average();
    printf("tidelock bench (one core; timings depend on the machine, ratios are measured in this run)\n");
    printf("machine     %ld online CPUs, 1-minute load average %.2f at start\n", cpus, load0);
    json_object_set_new(root, "online_cpus", json_integer(cpus));
    json_object_set_new(root, "load_average_start", json_real(load0));
    bench_synthesis(root);
    const uint32_t ch[] = { 1024u, 4096u, 8192u, 16384u };
    enum { NCH = sizeof ch / sizeof ch[0] };
    /* the portable firmware, and the AVX2 twins when this CPU has them */
    int npath = 1;
#if BENCH_SIMD
    tl_simd_x86_enable(1);
    npath = tl_simd_x86_active() ? 2 : 1;
    printf("paths       portable%s\n", npath == 2 ? " and avx2 (firmware/x86/, same bytes)"
                                                   : " only (this CPU has no AVX2)");
#endif
    chain_row rows[2 * NCH];
    memset(rows, 0, sizeof rows);
    int nrows = 0;
    for (int i = 0; i < NCH; i++)
        for (int p = 0; p < npath; p++)
            bench_chain(&rows[nrows++], ch[i], p);
    set_path(1);
    char self[4096];
    const ssize_t sl = readlink("/proc/self/exe", self, sizeof self - 1u);
    if (sl > 0) {
        self[sl] = '\0';
        bench_instructions(rows, nrows, self, tmp);
    } else {
        printf("callgrind   /proc/self/exe unreadable: instructions per sample NOT measured\n");
    }
    print_chain(root, rows, nrows);
    printf("\n");
    bench_encoder(root);
    int rc = 0;
    if (gib > 0.0 && bench_replay(root, tool, tmp, gib) != 0)
        rc = 1;
    const double load1 = load_average();
    printf("machine     1-minute load average %.2f at the end (above 0 means other work shared the cores)\n", load1);
    json_object_set_new(root, "load_average_end", json_real(load1));
    if (json_path != NULL && json_dump_file(root, json_path, JSON_INDENT(2) | JSON_REAL_PRECISION(6)) != 0) {
        fprintf(stderr, "tl-bench: %s: cannot write\n", json_path);
        rc = 1;
    } else if (json_path != NULL) {
        printf("wrote %s\n", json_path);
    }
    json_decref(root);
    return rc;
}
