/*
 * bench_main.c - `make bench`: speed and memory, one table and one JSON.
 *
 * Figures, all measured in this one run on this machine:
 *   synthesis   the sky simulator's Msamples/s (default scenario, 2 inputs)
 *   chain       the fixed-point firmware chain (filterbank, FFT, detection,
 *               integration) in Msamples/s per input on one core, beside
 *               the FFTW double reference chain run on the same samples
 *               in the same run, and their ratio, for several channel counts
 *   encoder     the downlink's lossless encoding (delta, zigzag, bit planes,
 *               our LZ4) in MB/s of 64-bit sums, its LZ4 stage against
 *               liblz4's LZ4_compress_default on the same transposed bytes
 *               (speed and size), and the ground's payload decoder
 *   replay      a recording of about --replay-gib GiB (default 2) simulated
 *               to a temporary folder and replayed through `tidelock
 *               replay`: wall time, Msamples/s, peak resident memory (the
 *               streaming bound), then deleted; 0 skips it.
 * Timings are never pass/fail: they depend on the machine. Only ratios
 * against a reference measured in the same run are meant to be compared
 * between machines.
 *
 * usage: tl-bench [--json PATH] [--replay-gib X] [--tidelock PATH] [--tmp DIR]
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

#include "reference.h"
#include "run.h"
#include "spectral_decode.h"
#include "tl_encode.h"
#include "scenario.h"
#include "sky_noise.h"
#include "taps_design.h"
#include "tl_chain.h"

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

/* ---- fixed chain against the FFTW reference --------------------------------- */

static void bench_chain(json_t *arr, uint32_t channels)
{
    const uint32_t points = 2u * channels, taps = 4u;
    tl_taps *t = xmalloc(sizeof *t);
    if (tl_taps_design(TL_WINDOW_HANN, taps, points, t, NULL) != 0) {
        fprintf(stderr, "tl-bench: taps for %u channels\n", channels);
        exit(1);
    }
    const size_t img_cap = TL_TAPS_IMAGE_BYTES(taps, points);
    uint8_t *img = xmalloc(img_cap);
    size_t img_len = 0;
    if (tl_taps_write_image(t, img, img_cap, &img_len) != TL_OK) {
        fprintf(stderr, "tl-bench: table image for %u channels\n", channels);
        exit(1);
    }
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.points = points;
    cfg.taps = taps;
    cfg.inputs = 1u;
    cfg.integration = 1u << 20; /* never finishes during the bench */
    tl_chain *c = xmalloc(sizeof *c);
    if (tl_chain_init(c, &cfg, img, img_len) != TL_OK) {
        fprintf(stderr, "tl-bench: chain init for %u channels\n", channels);
        exit(1);
    }
    double *coef = xmalloc(sizeof(double) * taps * points);
    for (size_t n = 0; n < (size_t)taps * points; n++)
        coef[n] = t->coef[n];
    tl_ref *ref = tl_ref_open(coef, taps, points, t->shift, 1u, c->fft.total_shift, tl_config_det_shift(&cfg));
    if (ref == NULL) {
        fprintf(stderr, "tl-bench: reference for %u channels\n", channels);
        exit(1);
    }
    /* Gaussian-like samples at 1/8 of full scale: the data do not change
     * the fixed chain's work, only the reference's denormal-free path */
    const size_t frames = (size_t)((1u << 24) / points), n = frames * points;
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
        v *= 2; /* sum of 4 uniforms: RMS about 2365 x 2, 1/7 of full scale */
        x[i] = (int16_t)v;
    }
    size_t used = 0;
    double best_fix = INFINITY, best_ref = INFINITY;
    for (int rep = 0; rep < 3; rep++) {
        double t0 = now_s();
        if (tl_chain_push(c, x, NULL, n, &used) != TL_OK || used != n) {
            fprintf(stderr, "tl-bench: chain push for %u channels\n", channels);
            exit(1);
        }
        double dt = now_s() - t0;
        if (dt < best_fix)
            best_fix = dt;
        t0 = now_s();
        for (size_t f = 0; f < frames; f++)
            tl_ref_push_frame(ref, x + f * points, NULL);
        dt = now_s() - t0;
        if (dt < best_ref)
            best_ref = dt;
    }
    const double fix = (double)n / best_fix / 1e6, flt = (double)n / best_ref / 1e6;
    printf("chain       %5u channels, %u taps, 1 input: fixed %7.1f Msample/s (%5.2f ns/sample), FFTW double "
           "reference %6.1f Msample/s, fixed/reference %.2f\n",
           channels, taps, fix, 1e3 / fix, flt, fix / flt);
    json_t *o = json_object();
    json_object_set_new(o, "channels", json_integer(channels));
    json_object_set_new(o, "taps", json_integer(taps));
    json_object_set_new(o, "fixed_msamples_per_s", json_real(fix));
    json_object_set_new(o, "fixed_ns_per_sample", json_real(1e3 / fix));
    json_object_set_new(o, "reference_msamples_per_s", json_real(flt));
    json_object_set_new(o, "fixed_over_reference", json_real(fix / flt));
    json_array_append_new(arr, o);
    tl_ref_close(ref);
    free(x);
    free(coef);
    free(c);
    free(img);
    free(t);
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
           chunks, n, mb / t_ours, (double)raw / ours, mb / t_ref, (double)raw / theirs,
           (double)ours / (double)theirs, mb / t_dec);
    json_t *o = json_object();
    json_object_set_new(o, "encode_mb_per_s", json_real(mb / t_ours));
    json_object_set_new(o, "ratio", json_real((double)raw / ours));
    json_object_set_new(o, "liblz4_mb_per_s", json_real(mb / t_ref));
    json_object_set_new(o, "liblz4_ratio", json_real((double)raw / theirs));
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
    json_object_set_new(root, "replay", o);
    char cmd[4400];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    return system(cmd) == 0 ? 0 : -1;
}

int main(int argc, char **argv)
{
    const char *json_path = NULL, *tool = "build/rel/tidelock", *tmp = "/tmp";
    double gib = 2.0;
    for (int i = 1; i < argc; i++) {
        if (strcmp(argv[i], "--json") == 0 && i + 1 < argc)
            json_path = argv[++i];
        else if (strcmp(argv[i], "--replay-gib") == 0 && i + 1 < argc)
            gib = strtod(argv[++i], NULL);
        else if (strcmp(argv[i], "--tidelock") == 0 && i + 1 < argc)
            tool = argv[++i];
        else if (strcmp(argv[i], "--tmp") == 0 && i + 1 < argc)
            tmp = argv[++i];
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
    printf("tidelock bench (one core; timings depend on the machine, ratios are measured in this run)\n");
    bench_synthesis(root);
    json_t *arr = json_array();
    const uint32_t ch[] = { 1024u, 4096u, 8192u };
    for (size_t i = 0; i < sizeof ch / sizeof ch[0]; i++)
        bench_chain(arr, ch[i]);
    json_object_set_new(root, "chain", arr);
    bench_encoder(root);
    int rc = 0;
    if (gib > 0.0 && bench_replay(root, tool, tmp, gib) != 0)
        rc = 1;
    if (json_path != NULL && json_dump_file(root, json_path, JSON_INDENT(2) | JSON_REAL_PRECISION(6)) != 0) {
        fprintf(stderr, "tl-bench: %s: cannot write\n", json_path);
        rc = 1;
    } else if (json_path != NULL) {
        printf("wrote %s\n", json_path);
    }
    json_decref(root);
    return rc;
}
