/*
 * test_sweep.c - sweeps, shards and merges (host/sweep.h, host/shard_file.h,
 * host/replay_shard.h; `tidelock sweep`, `tidelock replay --shard`,
 * `tidelock merge`).
 *
 * The main checks:
 *   - a small sweep run as 4 shards through GNU parallel (Debian package
 *     `parallel`) and merged gives sweep.csv and sweep.json byte for byte
 *     as one run does; the same for a sharded replay against
 *     `replay --threads 1` (one chain over the whole recording). When
 *     parallel is missing the test FAILS with a line saying so: CI installs
 *     it (.ci/deps.sh).
 *   - the grid order is the documented mixed-radix order (exact integer
 *     arithmetic);
 *   - each point's seed is the documented SHA-256 prefix, recomputed with
 *     coreutils' sha256sum on the resolved scenario `tidelock scenario
 *     --check` prints: an implementation outside the project;
 *   - the shard file's header is at the offsets docs/cluster.md gives and its
 *     CRC is CRC-32C as the RevEng catalogue defines it (CRC-32/ISCSI:
 *     reflected polynomial 0x82F63B78, init and xorout 0xFFFFFFFF; check
 *     value 0xE3069283, ../shared/sources.md [computed]), recomputed here
 *     bit by bit;
 *   - a sweep row equals the figures `tidelock run` and `tidelock budget`
 *     report for the same point (an internal consistency check);
 *   - every refusal is one line, a non-zero exit and no output: a bad
 *     value, an unknown key, a Slurm variable alone or out of range, a
 *     missing, duplicate, damaged, truncated, foreign or other-version shard;
 *   - randomly damaged payloads behind a valid CRC merge or give one line,
 *     never a crash (seeded: TL_TEST_SEED reruns one).
 */
#include <jansson.h>
#include <libgen.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "replay_shard.h"
#include "scenario.h"
#include "shard_file.h"
#include "sweep.h"
#include "tl_test.h"

/* a test run inside a Slurm array task must not turn every command into a shard */
#define NOSLURM "unset SLURM_ARRAY_TASK_ID SLURM_ARRAY_TASK_COUNT; "

static char argv0[4096];
static char tool[4200]; /* the tidelock next to this test binary */
static char dir[64];    /* this run's scratch folder */
static char repo[2048]; /* the repository root, where the tests run */

static const char tiny_ini[] = "[scenario]\n"
                               "name = tiny-sweep\n"
                               "[instrument]\n"
                               "channels = 128\n"
                               "[integration]\n"
                               "spectra = 64\n"
                               "[fidelity]\n"
                               "band_low_mhz = 10\n"
                               "band_high_mhz = 40\n"
                               "blocks = 8\n"
                               "extrapolate_to = 4096\n"
                               "[switching]\n"
                               "sequence = off\n"
                               "discard = 0\n"
                               "[fit]\n"
                               "foreground_order = 3\n";

#define GRID "--vary instrument.channels=128,256 --vary downlink.encoding=lossless,bounded --vary instrument.window=hann,blackman"

static void write_text(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    assert_int_equal(fputs(text, f) >= 0, 1);
    assert_int_equal(fclose(f), 0);
}

static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        fail_msg("%s: cannot open", path);
    fseek(f, 0, SEEK_END);
    const long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *b = malloc((size_t)n + 1u);
    assert_non_null(b);
    assert_int_equal(fread(b, 1, (size_t)n, f), (size_t)n);
    b[n] = '\0';
    fclose(f);
    *len = (size_t)n;
    return b;
}

static void expect_same_file(const char *a, const char *b)
{
    size_t na, nb;
    char *x = slurp(a, &na), *y = slurp(b, &nb);
    if (na != nb || memcmp(x, y, na) != 0)
        fail_msg("%s and %s differ (%zu and %zu octets)", a, b, na, nb);
    printf("    identical: %s = %s (%zu octets)\n", a, b, na);
    free(x);
    free(y);
}

static int exists(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0;
}

/* tidelock ARGS (with the environment prefix env, may be ""): status, output in out */
static int tool_run(const char *env, const char *args, char *out, size_t cap)
{
    char cmd[8192];
    snprintf(cmd, sizeof cmd, NOSLURM "cd %s && %s %s %s 2>&1", dir, env, tool, args);
    return tl_test_shell(cmd, out, cap);
}

static void expect_refusal(const char *env, const char *args, int want_rc, const char *must_contain)
{
    char out[8192];
    const int rc = tool_run(env, args, out, sizeof out);
    printf("    %s tidelock %s -> %d: %s", env, args, rc, out);
    assert_int_equal(rc, want_rc);
    assert_int_equal(tl_test_lines(out), 1);
    if (strstr(out, must_contain) == NULL)
        fail_msg("message '%s' does not name '%s'", out, must_contain);
}

static void require_parallel(void)
{
    char out[4096];
    if (tl_test_shell("command -v parallel && parallel --version 2>&1 | head -1", out, sizeof out) != 0 ||
        strstr(out, "GNU parallel") == NULL)
        fail_msg("GNU parallel is missing (or not GNU's): install the Debian package 'parallel' "
                 "(.ci/deps.sh does); this test must not be skipped");
}

static int setup(void **state)
{
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/tl_sweep_XXXXXX");
    assert_non_null(mkdtemp(dir));
    char path[256];
    snprintf(path, sizeof path, "%s/tiny.ini", dir);
    write_text(path, tiny_ini);
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    char cmd[256], out[256];
    snprintf(cmd, sizeof cmd, "rm -rf %s", dir);
    tl_test_shell(cmd, out, sizeof out);
    return 0;
}

/* ---- the grid order and the seeds ---------------------------------------------- */

static void test_grid_order_and_seeds(void **state)
{
    (void)state;
    tl_scenario base;
    tl_scenario_default(&base);
    char err[2048], path[256];
    snprintf(path, sizeof path, "%s/tiny.ini", dir);
    assert_int_equal(tl_scenario_load(path, &base, err, sizeof err), 0);
    tl_sweep_plan *p = malloc(sizeof *p);
    assert_non_null(p);
    tl_sweep_plan_init(p, &base, path);
    assert_int_equal(tl_sweep_add_axis(p, "instrument.channels=128,256,512", err, sizeof err), 0);
    assert_int_equal(tl_sweep_add_axis(p, "downlink.encoding=lossless,bounded", err, sizeof err), 0);
    assert_int_equal(tl_sweep_add_axis(p, "sky.seed=1,2,3,4,5", err, sizeof err), 0);
    assert_int_equal(tl_sweep_plan_check(p, err, sizeof err), 0);
    assert_int_equal(p->points, 3 * 2 * 5);
    /* first axis slowest: point = (c x 2 + e) x 5 + r (exact integer arithmetic) */
    for (uint32_t c = 0; c < 3; c++)
        for (uint32_t e = 0; e < 2; e++)
            for (uint32_t r = 0; r < 5; r++) {
                tl_scenario s;
                assert_int_equal(tl_sweep_point(p, (c * 2u + e) * 5u + r, &s, err, sizeof err), 0);
                assert_int_equal(s.cfg.points, 2u * (128u << c));
                assert_int_equal(s.dl_encoding, e);
            }
    /* distinct realisations get distinct seeds; a point's seed does not depend on the others */
    tl_scenario a, b;
    assert_int_equal(tl_sweep_point(p, 0, &a, err, sizeof err), 0);
    assert_int_equal(tl_sweep_point(p, 1, &b, err, sizeof err), 0);
    assert_true(a.sky.seed != b.sky.seed);

    /* point 7 = (0 x 2 + 1) x 5 + 2: channels 128, bounded, seed 3. Its seed is
     * the first 4 octets of SHA-256("tidelock sweep seed 1\n" + resolved base +
     * the three "key=value" lines) (host/sweep.h); recomputed with coreutils'
     * sha256sum over the resolved scenario `tidelock scenario --check` prints */
    tl_scenario s7;
    assert_int_equal(tl_sweep_point(p, 7, &s7, err, sizeof err), 0);
    char cmd[8192], out[4096];
    snprintf(cmd, sizeof cmd,
             NOSLURM "cd %s && { printf 'tidelock sweep seed 1\\n'; %s scenario --check tiny.ini; printf "
             "'instrument.channels=128\\ndownlink.encoding=bounded\\nsky.seed=3\\n'; } | sha256sum | cut -c1-8",
             dir, tool);
    assert_int_equal(tl_test_shell(cmd, out, sizeof out), 0);
    const unsigned long want = strtoul(out, NULL, 16);
    printf("    point 7: seed %llu, sha256sum prefix %s", (unsigned long long)s7.sky.seed, out);
    assert_int_equal(s7.sky.seed, want);

    /* --common-noise: only the sky.seed line enters the hash, so every
     * configuration with the same sky.seed draws the same noise */
    p->common_noise = 1;
    assert_int_equal(tl_sweep_plan_check(p, err, sizeof err), 0);
    tl_scenario c0, c1;
    for (uint32_t r = 0; r < 5; r++) {
        assert_int_equal(tl_sweep_point(p, r, &c0, err, sizeof err), 0);          /* 128 channels, lossless */
        assert_int_equal(tl_sweep_point(p, 25u + r, &c1, err, sizeof err), 0);    /* 512 channels, bounded */
        assert_int_equal(c0.sky.seed, c1.sky.seed);
        if (r > 0) {
            assert_int_equal(tl_sweep_point(p, r - 1u, &c1, err, sizeof err), 0);
            assert_true(c0.sky.seed != c1.sky.seed);
        }
    }
    assert_int_equal(tl_sweep_point(p, 7, &s7, err, sizeof err), 0);
    snprintf(cmd, sizeof cmd,
             NOSLURM "cd %s && { printf 'tidelock sweep seed 1\\n'; %s scenario --check tiny.ini; printf "
             "'sky.seed=3\\n'; } | sha256sum | cut -c1-8",
             dir, tool);
    assert_int_equal(tl_test_shell(cmd, out, sizeof out), 0);
    printf("    point 7, common noise: seed %llu, sha256sum prefix %s", (unsigned long long)s7.sky.seed, out);
    assert_int_equal(s7.sky.seed, strtoul(out, NULL, 16));
    free(p);
}

/* ---- one machine against 4 shards through GNU parallel ------------------------------ */

static void test_sweep_shards_merge_byte_identical(void **state)
{
    (void)state;
    require_parallel();
    char out[16384], cmd[8192];
    assert_int_equal(tool_run("", "sweep tiny.ini " GRID " --out one -q", out, sizeof out), 0);
    /* the shipped recipe: 4 shards through GNU parallel, then its merge */
    snprintf(cmd, sizeof cmd, NOSLURM "cd %s && TIDELOCK=%s JOBS=4 bash %s/docs/cluster/sweep-parallel.sh 4 shards tiny.ini " GRID
             " 2>&1", dir, tool, repo);
    const int rc = tl_test_shell(cmd, out, sizeof out);
    if (rc != 0)
        fail_msg("docs/cluster/sweep-parallel.sh exit %d: %s", rc, out);
    char a[256], b[256];
    snprintf(a, sizeof a, "%s/one/sweep.csv", dir);
    snprintf(b, sizeof b, "%s/shards/sweep.csv", dir);
    expect_same_file(a, b);
    snprintf(a, sizeof a, "%s/one/sweep.json", dir);
    snprintf(b, sizeof b, "%s/shards/sweep.json", dir);
    expect_same_file(a, b);
    /* the merge does not depend on the order the shards are given in */
    assert_int_equal(tool_run("", "merge shards/shard-0003-of-0004.tlshard shards/shard-0000-of-0004.tlshard "
                                  "shards/shard-0002-of-0004.tlshard shards/shard-0001-of-0004.tlshard --out merged -q",
                              out, sizeof out),
                     0);
    snprintf(a, sizeof a, "%s/one/sweep.csv", dir);
    snprintf(b, sizeof b, "%s/merged/sweep.csv", dir);
    expect_same_file(a, b);
    snprintf(a, sizeof a, "%s/one/sweep.json", dir);
    snprintf(b, sizeof b, "%s/merged/sweep.json", dir);
    expect_same_file(a, b);
    /* 8 points and a header, each row with every column */
    size_t n;
    snprintf(a, sizeof a, "%s/one/sweep.csv", dir);
    char *csv = slurp(a, &n);
    assert_int_equal(tl_test_lines(csv), 9);
    uint32_t ncol;
    tl_sweep_columns(&ncol);
    int commas = 0;
    for (const char *c = csv; *c != '\n'; c++)
        commas += *c == ',';
    assert_int_equal(commas, 1 + 3 + 1 + (int)ncol - 1); /* point, 3 axes, seed, the columns */
    free(csv);

    /* --common-noise survives the shards: 2 shards merged = one run; the
     * two encodings of one window and channel count share their seed */
    assert_int_equal(tool_run("", "sweep tiny.ini " GRID " --common-noise --out cn1 -q", out, sizeof out), 0);
    assert_int_equal(tool_run("", "sweep tiny.ini " GRID " --common-noise --out cn2 --shard 0/2 -q", out, sizeof out), 0);
    assert_int_equal(tool_run("", "sweep tiny.ini " GRID " --common-noise --out cn2 --shard 1/2 -q", out, sizeof out), 0);
    assert_int_equal(tool_run("", "merge cn2/shard-0000-of-0002.tlshard cn2/shard-0001-of-0002.tlshard --out cn2 -q",
                              out, sizeof out),
                     0);
    snprintf(a, sizeof a, "%s/cn1/sweep.json", dir);
    snprintf(b, sizeof b, "%s/cn2/sweep.json", dir);
    expect_same_file(a, b);
    json_error_t je;
    json_t *cn = json_load_file(a, 0, &je);
    assert_non_null(cn);
    json_t *rows = json_object_get(cn, "rows");
    assert_int_equal(json_array_size(rows), 8);
    for (size_t k = 1; k < 8; k++) /* the sky is the same everywhere: one seed */
        assert_int_equal(json_integer_value(json_object_get(json_array_get(rows, k), "seed")),
                         json_integer_value(json_object_get(json_array_get(rows, 0), "seed")));
    json_decref(cn);
    /* and a per-point table is not mergeable with a common-noise one */
    expect_refusal("", "merge cn2/shard-0000-of-0002.tlshard cn2/shard-0001-of-0002.tlshard shards/shard-0000-of-0004.tlshard --out x", 1,
                   "job digest differs");

    /* the shipped Slurm array script, each task as Slurm starts it (bash
     * ignores the #SBATCH lines): the shards --shard gives, byte for byte */
    for (int i = 0; i < 4; i++) {
        snprintf(cmd, sizeof cmd,
                 NOSLURM "cd %s && SLURM_ARRAY_TASK_ID=%d SLURM_ARRAY_TASK_COUNT=4 TIDELOCK=%s bash %s/docs/cluster/sweep.slurm "
                 "tiny.ini slurm " GRID " 2>&1",
                 dir, i, tool, repo);
        if (tl_test_shell(cmd, out, sizeof out) != 0)
            fail_msg("docs/cluster/sweep.slurm task %d: %s", i, out);
        snprintf(a, sizeof a, "%s/slurm/shard-%04d-of-0004.tlshard", dir, i);
        snprintf(b, sizeof b, "%s/shards/shard-%04d-of-0004.tlshard", dir, i);
        expect_same_file(a, b);
    }
}

/* ---- the shard file layout -------------------------------------------------------------- */

/* CRC-32C bit by bit (CRC-32/ISCSI in the RevEng catalogue) */
static uint32_t crc32c_bitwise(const uint8_t *d, size_t n)
{
    uint32_t c = 0xFFFFFFFFu;
    for (size_t i = 0; i < n; i++) {
        c ^= d[i];
        for (int k = 0; k < 8; k++)
            c = (c >> 1) ^ (0x82F63B78u & (0u - (c & 1u)));
    }
    return c ^ 0xFFFFFFFFu;
}

static void test_shard_file_layout(void **state)
{
    (void)state;
    assert_int_equal(crc32c_bitwise((const uint8_t *)"123456789", 9), 0xE3069283u); /* sources.md [computed] */
    char out[8192];
    assert_int_equal(tool_run("", "sweep tiny.ini --vary instrument.window=hann,hamming,blackman --out lay --shard 1/2 -q",
                              out, sizeof out),
                     0);
    char path[256];
    snprintf(path, sizeof path, "%s/lay/shard-0001-of-0002.tlshard", dir);
    size_t n;
    uint8_t *f = (uint8_t *)slurp(path, &n);
    assert_true(n > 60);
    assert_memory_equal(f, "TLSH", 4);
    assert_int_equal(f[4], 1);                   /* version */
    assert_int_equal(f[5], 1);                   /* kind: sweep */
    assert_int_equal(f[6] | f[7], 0);
    const uint32_t idx = (uint32_t)f[40] << 24 | (uint32_t)f[41] << 16 | (uint32_t)f[42] << 8 | f[43];
    const uint32_t cnt = (uint32_t)f[44] << 24 | (uint32_t)f[45] << 16 | (uint32_t)f[46] << 8 | f[47];
    uint64_t len = 0;
    for (int k = 0; k < 8; k++)
        len = len << 8 | f[48 + k];
    assert_int_equal(idx, 1);
    assert_int_equal(cnt, 2);
    assert_int_equal(n, 56u + len + 4u);
    const uint32_t stored = (uint32_t)f[n - 4] << 24 | (uint32_t)f[n - 3] << 16 | (uint32_t)f[n - 2] << 8 | f[n - 1];
    assert_int_equal(stored, crc32c_bitwise(f, n - 4));
    free(f);
}

/* ---- a row against `tidelock run` and `tidelock budget` ------------------------------------ */

static double json_num(json_t *o, const char *a, const char *b)
{
    json_t *x = json_object_get(o, a);
    if (b != NULL)
        x = json_object_get(x, b);
    if (!json_is_number(x))
        fail_msg("no number at %s.%s", a, b ? b : "");
    return json_number_value(x);
}

static void test_row_matches_run_and_budget(void **state)
{
    (void)state;
    char out[16384];
    assert_int_equal(tool_run("", "sweep tiny.ini --vary downlink.encoding=lossless,bounded --out row -q", out,
                              sizeof out),
                     0);
    char path[512];
    snprintf(path, sizeof path, "%s/row/sweep.json", dir);
    json_error_t je;
    json_t *t = json_load_file(path, 0, &je);
    assert_non_null(t);
    json_t *r1 = json_array_get(json_object_get(t, "rows"), 1);
    assert_non_null(r1);
    const json_int_t seed = json_integer_value(json_object_get(r1, "seed"));
    /* the same point as a scenario file: bounded encoding and the row's seed */
    char ini[2048];
    snprintf(ini, sizeof ini, "%s[downlink]\nencoding = bounded\n[sky]\nseed = %lld\n", tiny_ini, (long long)seed);
    snprintf(path, sizeof path, "%s/point1.ini", dir);
    write_text(path, ini);
    assert_int_equal(tool_run("", "run point1.ini -o p1 -q", out, sizeof out), 0);
    const int brc = tool_run("", "budget point1.ini -o p1 -q", out, sizeof out); /* 1: the budget does not close */
    assert_true(brc == 0 || brc == 1);
    snprintf(path, sizeof path, "%s/p1/summary.json", dir);
    json_t *sum = json_load_file(path, 0, &je);
    assert_non_null(sum);
    double margin = 0.0;
    const char *prod[] = { "auto0", "auto1", "cross_re", "cross_im" };
    for (int q = 0; q < 4; q++)
        margin = fmax(margin, json_num(json_object_get(sum, "fidelity"), prod[q], "margin"));
    const double m = json_number_value(json_object_get(r1, "margin_max"));
    printf("    margin_max: sweep %.10g, run %.10g\n", m, margin);
    TL_ASSERT_NEAR(m, margin, 1e-9 * margin); /* both printed with 10 significant digits */
    const double cr = json_number_value(json_object_get(r1, "compression"));
    TL_ASSERT_NEAR(cr, json_num(sum, "downlink", "compression"), 1e-9 * cr);
    assert_int_equal(json_integer_value(json_object_get(r1, "product_octets")),
                     (json_int_t)(json_num(sum, "downlink", "octets_science") +
                                  json_num(sum, "downlink", "octets_housekeeping")));
    snprintf(path, sizeof path, "%s/p1/budget.json", dir);
    json_t *bud = json_load_file(path, 0, &je);
    if (bud == NULL)
        fail_msg("%s: %s", path, je.text);
    const double mb = json_number_value(json_object_get(r1, "downlink_mb_per_day"));
    printf("    downlink_mb_per_day: sweep %.10g, budget %.10g; budget exit %d\n", mb,
           json_num(bud, "octets_per_earth_day_peak", NULL) / 1e6, brc);
    TL_ASSERT_NEAR(mb, json_num(bud, "octets_per_earth_day_peak", NULL) / 1e6, 1e-9 * mb);
    TL_ASSERT_NEAR(json_number_value(json_object_get(r1, "link_rate_bps")), json_num(bud, "rate_bps", NULL),
                   1e-9 * json_num(bud, "rate_bps", NULL));
    TL_ASSERT_NEAR(json_number_value(json_object_get(r1, "flight_compression")), json_num(bud, "flight", "compression"),
                   1e-9 * json_num(bud, "flight", "compression"));
    TL_ASSERT_NEAR(json_number_value(json_object_get(r1, "allocation_margin")), json_num(bud, "margins", "allocation"),
                   1e-9 * fabs(json_num(bud, "margins", "allocation")));
    assert_int_equal(json_integer_value(json_object_get(r1, "budget_closed")),
                     json_is_true(json_object_get(bud, "closed")) ? 1 : 0);
    assert_int_equal(brc, json_is_true(json_object_get(bud, "closed")) ? 0 : 1);
    json_decref(bud);
    json_decref(sum);
    json_decref(t);
}

/* ---- a long replay in 4 shards through GNU parallel ---------------------------------------- */

static void test_replay_shards_merge_byte_identical(void **state)
{
    (void)state;
    require_parallel();
    char out[16384], cmd[8192];
    /* 101 spectra: prime, so the segments end at uneven places; two inputs */
    char path[256];
    snprintf(path, sizeof path, "%s/rec.ini", dir);
    char ini[2048];
    snprintf(ini, sizeof ini, "%s", tiny_ini);
    char *sp = strstr(ini, "spectra = 64");
    assert_non_null(sp);
    memcpy(sp, "spectra = 96", 12); /* a multiple of blocks = 8 */
    strcat(ini, "[sky]\nrms_fraction = 0.5\n"); /* a loud input: some samples at the rails */
    write_text(path, ini);
    assert_int_equal(tool_run("", "simulate rec.ini -o rec -q", out, sizeof out), 0);
    assert_int_equal(tool_run("", "replay rec.sigmf-meta rec.ini --threads 1 -o whole -q", out, sizeof out), 0);
    snprintf(cmd, sizeof cmd,
             NOSLURM "cd %s && parallel --will-cite --halt now,fail=1 -j 4 %s replay rec.sigmf-meta rec.ini --shard {}/4 "
             "-o rshards -q ::: 0 1 2 3 2>&1",
             dir, tool);
    const int rc = tl_test_shell(cmd, out, sizeof out);
    if (rc != 0)
        fail_msg("parallel exit %d: %s", rc, out);
    assert_int_equal(tool_run("", "merge rshards/*.tlshard --out rmerged -q", out, sizeof out), 0);
    const char *files[] = { "auto0.csv", "auto1.csv", "cross.csv", "frequency_mhz.npy", "auto0.npy",
                            "auto1.npy", "cross.npy", "flags.npy" };
    for (size_t k = 0; k < sizeof files / sizeof files[0]; k++) {
        char a[256], b[256];
        snprintf(a, sizeof a, "%s/whole/%s", dir, files[k]);
        snprintf(b, sizeof b, "%s/rmerged/%s", dir, files[k]);
        expect_same_file(a, b);
    }
    /* the shipped Slurm script for replays, each array task as Slurm starts it */
    for (int i = 0; i < 4; i++) {
        snprintf(cmd, sizeof cmd,
                 NOSLURM "cd %s && SLURM_ARRAY_TASK_ID=%d SLURM_ARRAY_TASK_COUNT=4 TIDELOCK=%s bash %s/docs/cluster/replay.slurm "
                 "rec.sigmf-meta rec.ini rslurm 2>&1",
                 dir, i, tool, repo);
        if (tl_test_shell(cmd, out, sizeof out) != 0)
            fail_msg("docs/cluster/replay.slurm task %d: %s", i, out);
        char a[256], b[256];
        snprintf(a, sizeof a, "%s/rslurm/shard-%04d-of-0004.tlshard", dir, i);
        snprintf(b, sizeof b, "%s/rshards/shard-%04d-of-0004.tlshard", dir, i);
        expect_same_file(a, b);
    }
    /* more shards than spectra: refused with one line */
    expect_refusal("", "replay rec.sigmf-meta rec.ini --shard 0/97 -o x -q", 1, "at most 96 shards");
    expect_refusal("", "replay rec.sigmf-meta rec.ini --shard 0/2 --threads 2 -o x -q", 2, "not both");
    /* a replay shard of another scenario: refused by its job digest */
    snprintf(path, sizeof path, "%s/rec2.ini", dir);
    strcat(ini, "[output]\ncsv = false\n");
    write_text(path, ini);
    assert_int_equal(tool_run("", "replay rec.sigmf-meta rec2.ini --shard 1/4 -o other -q", out, sizeof out), 0);
    expect_refusal("", "merge rshards/shard-0000-of-0004.tlshard other/shard-0001-of-0004.tlshard "
                       "rshards/shard-0002-of-0004.tlshard rshards/shard-0003-of-0004.tlshard --out y",
                   1, "job digest differs");
}

/* ---- refusals ------------------------------------------------------------------------------ */

static void test_refusals(void **state)
{
    (void)state;
    char out[16384];
    /* bad values: one line naming the key, the value and the range; nothing written */
    expect_refusal("", "sweep tiny.ini --vary instrument.channels=128,100 --out bad1", 1,
                   "[instrument] channels = '100': must be a power of two from 128 to 16384");
    expect_refusal("", "sweep tiny.ini --vary integration.spectra=64,65 --out bad1", 1,
                   "spectra = '65': must be a multiple of [fidelity] blocks = 8");
    expect_refusal("", "sweep tiny.ini --vary instrument.window=hann,kaiser --out bad1", 1,
                   "window = 'kaiser': must be one of rectangular, hann");
    /* keys that do not exist (yet): the key and the allowed keys */
    expect_refusal("", "sweep tiny.ini --vary instrument.clock_mhz=100,200 --out bad1", 1,
                   "clock_mhz: unknown key (keys of [instrument]: sample_rate_mhz");
    expect_refusal("", "sweep tiny.ini --vary coolant.flow=100 --out bad1", 1,
                   "unknown section [coolant] (sections: scenario, instrument");
    /* a processor key is an axis; out of range it is refused like any other */
    expect_refusal("", "sweep tiny.ini --vary processor.clock_mhz=0.5 --out bad1", 1, "clock_mhz");
    expect_refusal("", "sweep tiny.ini --vary channels=1 --out bad1", 1, "must be section.key=value");
    expect_refusal("", "sweep tiny.ini --vary instrument.taps=4,,8 --out bad1", 1, "value 2 is empty");
    expect_refusal("", "sweep tiny.ini --vary instrument.taps=4 --vary instrument.taps=8 --out bad1", 1,
                   "given twice");
    expect_refusal("", "sweep tiny.ini --out bad1", 2, "at least one --vary");
    expect_refusal("", "sweep tiny.ini --vary instrument.taps=4", 2, "--out DIR");
    /* shards: the argument and the Slurm environment */
    expect_refusal("", "sweep tiny.ini --vary instrument.taps=4 --out bad1 --shard 4/4", 2, "0 <= I < N");
    expect_refusal("", "sweep tiny.ini --vary instrument.taps=4 --out bad1 --shard 1", 2, "must be I/N");
    expect_refusal("SLURM_ARRAY_TASK_ID=1", "sweep tiny.ini --vary instrument.taps=4 --out bad1", 2,
                   "SLURM_ARRAY_TASK_COUNT is not");
    expect_refusal("SLURM_ARRAY_TASK_COUNT=4", "sweep tiny.ini --vary instrument.taps=4 --out bad1", 2,
                   "SLURM_ARRAY_TASK_ID is not");
    expect_refusal("SLURM_ARRAY_TASK_ID=4 SLURM_ARRAY_TASK_COUNT=4", "sweep tiny.ini --vary instrument.taps=4 --out bad1",
                   2, "SLURM_ARRAY_TASK_ID = '4': must be a whole number from 0 to 3");
    expect_refusal("SLURM_ARRAY_TASK_ID=0 SLURM_ARRAY_TASK_COUNT=zero",
                   "sweep tiny.ini --vary instrument.taps=4 --out bad1", 2, "SLURM_ARRAY_TASK_COUNT = 'zero'");
    char p[256];
    snprintf(p, sizeof p, "%s/bad1", dir);
    assert_false(exists(p)); /* nothing written by any refusal */

    /* merging: missing, duplicate, damaged, truncated, another job, another version */
    assert_int_equal(tool_run("", "sweep tiny.ini --vary instrument.taps=4,8,16 --out m --shard 0/3 -q", out,
                              sizeof out),
                     0);
    assert_int_equal(tool_run("", "sweep tiny.ini --vary instrument.taps=4,8,16 --out m --shard 1/3 -q", out,
                              sizeof out),
                     0);
    assert_int_equal(tool_run("", "sweep tiny.ini --vary instrument.taps=4,8,16 --out m --shard 2/3 -q", out,
                              sizeof out),
                     0);
    assert_int_equal(tool_run("", "sweep tiny.ini --vary instrument.taps=4,8,12 --out o --shard 2/3 -q", out,
                              sizeof out),
                     0);
    expect_refusal("", "merge m/shard-0000-of-0003.tlshard m/shard-0001-of-0003.tlshard --out mm", 1,
                   "shard 2 of 3 is missing");
    expect_refusal("", "merge m/shard-0000-of-0003.tlshard m/shard-0001-of-0003.tlshard m/shard-0001-of-0003.tlshard "
                       "m/shard-0002-of-0003.tlshard --out mm",
                   1, "shard 1 of 3 given twice");
    expect_refusal("", "merge m/shard-0000-of-0003.tlshard m/shard-0001-of-0003.tlshard o/shard-0002-of-0003.tlshard "
                       "--out mm",
                   1, "job digest differs");
    assert_int_equal(tool_run("", "sweep tiny.ini --vary instrument.taps=4,8,16 --out two --shard 1/2 -q", out,
                              sizeof out),
                     0);
    expect_refusal("", "merge m/shard-0000-of-0003.tlshard two/shard-0001-of-0002.tlshard --out mm", 1,
                   "two/shard-0001-of-0002.tlshard: shard count = 2, but m/shard-0000-of-0003.tlshard has 3");
    char cmd[1024];
    snprintf(cmd, sizeof cmd,
             NOSLURM "cd %s && cp m/shard-0002-of-0003.tlshard flip.tlshard && printf '\\001' | dd of=flip.tlshard bs=1 "
             "seek=80 conv=notrunc status=none && head -c 100 m/shard-0002-of-0003.tlshard > cut.tlshard && "
             "cp m/shard-0002-of-0003.tlshard v2.tlshard && printf '\\002' | dd of=v2.tlshard bs=1 seek=4 "
             "conv=notrunc status=none && printf 'hello' > notashard.tlshard",
             dir);
    assert_int_equal(tl_test_shell(cmd, out, sizeof out), 0);
    expect_refusal("", "merge m/shard-0000-of-0003.tlshard m/shard-0001-of-0003.tlshard flip.tlshard --out mm", 1,
                   "flip.tlshard: CRC-32C");
    expect_refusal("", "merge m/shard-0000-of-0003.tlshard m/shard-0001-of-0003.tlshard cut.tlshard --out mm", 1,
                   "cut.tlshard: length");
    expect_refusal("", "merge m/shard-0000-of-0003.tlshard m/shard-0001-of-0003.tlshard v2.tlshard --out mm", 1,
                   "v2.tlshard: version = 2");
    expect_refusal("", "merge notashard.tlshard --out mm", 1, "notashard.tlshard: magic");
    expect_refusal("", "merge --out mm", 2, "give the shard files");
    snprintf(p, sizeof p, "%s/mm/sweep.csv", dir);
    assert_false(exists(p));
    /* and the good set merges */
    assert_int_equal(tool_run("", "merge m/*.tlshard --out mm -q", out, sizeof out), 0);
    assert_true(exists(p));
}

/* ---- damaged payloads behind a valid CRC ----------------------------------------------
 * The CRC catches damage in transit; a payload that was written wrong (or
 * by hand) reaches the parsers. Random octet changes and cuts of a valid
 * sweep and replay payload must give a merge result or one error line,
 * never a crash or a read past the payload (run under ASan in make test). */

static uint64_t xorshift(uint64_t *x)
{
    *x ^= *x << 13;
    *x ^= *x >> 7;
    *x ^= *x << 17;
    return *x;
}

static void mangle_and_merge(const char *file, int replay, uint64_t *rng, unsigned rounds)
{
    char path[512], err[4096];
    snprintf(path, sizeof path, "%s/%s", dir, file);
    tl_shard good;
    assert_int_equal(tl_shard_read(path, &good, err, sizeof err), 0);
    unsigned ok = 0, refused = 0;
    for (unsigned r = 0; r < rounds; r++) {
        tl_shard sh = good;
        sh.payload = malloc(good.len);
        assert_non_null(sh.payload);
        memcpy(sh.payload, good.payload, good.len);
        const unsigned what = (unsigned)(xorshift(rng) % 4u);
        if (what == 0) {
            sh.len = (size_t)(xorshift(rng) % good.len); /* cut short */
        } else {
            for (unsigned k = 0; k <= what; k++) /* 2 to 4 octets changed */
                sh.payload[xorshift(rng) % good.len] = (uint8_t)xorshift(rng);
        }
        const char *names[1] = { path };
        char out_dir[256];
        snprintf(out_dir, sizeof out_dir, "%s/mangled", dir);
        const int rc = replay ? tl_replay_shard_merge(names, &sh, 1, out_dir, err, sizeof err)
                              : tl_sweep_merge(names, &sh, 1, out_dir, err, sizeof err);
        if (rc == 0) {
            ok++;
        } else {
            if (refused++ < 3)
                printf("    e.g. %s\n", err);
            if (strchr(err, '\n') != NULL || err[0] == '\0')
                fail_msg("round %u: the refusal is not one line: '%s'", r, err);
        }
        free(sh.payload);
    }
    printf("    %s: %u damaged payloads: %u merged, %u refused with one line\n", file, rounds, ok, refused);
    assert_true(refused > 0);
    tl_shard_free(&good);
}

static void test_damaged_payloads(void **state)
{
    (void)state;
    char out[8192];
    assert_int_equal(tool_run("", "sweep tiny.ini --vary instrument.taps=2,4 --out dmg --shard 0/1 -q", out, sizeof out),
                     0);
    assert_int_equal(tool_run("", "simulate tiny.ini -o rec -q", out, sizeof out), 0);
    assert_int_equal(tool_run("", "replay rec.sigmf-meta tiny.ini --shard 0/1 -o dmgr -q", out, sizeof out), 0);
    char m[256];
    snprintf(m, sizeof m, "%s/mangled", dir);
    assert_int_equal(mkdir(m, 0777), 0);
    uint64_t rng = tl_test_seed("test_sweep damaged payloads", 20261202u) | 1u;
    mangle_and_merge("dmg/shard-0000-of-0001.tlshard", 0, &rng, 400);
    mangle_and_merge("dmgr/shard-0000-of-0001.tlshard", 1, &rng, 100);
}

int main(int argc, char **argv)
{
    (void)argc;
    snprintf(argv0, sizeof argv0, "%s", argv[0]);
    char self[4096];
    snprintf(self, sizeof self, "%s", argv0);
    char *d = dirname(self);
    if (getcwd(repo, sizeof repo) == NULL)
        return 1;
    if (d[0] == '/')
        snprintf(tool, sizeof tool, "%s/tidelock", d);
    else
        snprintf(tool, sizeof tool, "%s/%s/tidelock", repo, d);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test_setup_teardown(test_grid_order_and_seeds, setup, teardown),
        cmocka_unit_test_setup_teardown(test_sweep_shards_merge_byte_identical, setup, teardown),
        cmocka_unit_test_setup_teardown(test_shard_file_layout, setup, teardown),
        cmocka_unit_test_setup_teardown(test_row_matches_run_and_budget, setup, teardown),
        cmocka_unit_test_setup_teardown(test_replay_shards_merge_byte_identical, setup, teardown),
        cmocka_unit_test_setup_teardown(test_refusals, setup, teardown),
        cmocka_unit_test_setup_teardown(test_damaged_payloads, setup, teardown),
    };
    return cmocka_run_group_tests_name("sweep", tests, NULL, NULL);
}
