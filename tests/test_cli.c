/*
 * test_cli.c - the `tidelock` command line: bad input gets one clear line,
 * a non-zero exit (2 for usage, 1 for failures), and no lost or half-written
 * output; --help on every command with an example; --version; -q. Runs the
 * tidelock binary built next to this test (build/rel/, build/san/).
 */
#include <dirent.h>
#include <jansson.h>
#include <libgen.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "tl_test.h"

static char argv0[4096];

/* Run tidelock with args; stderr+stdout into out; the exit status. */
static int run(const char *args, char *out, size_t cap)
{
    return tl_test_tool(argv0, args, out, cap);
}


static void expect_one_line(const char *args, int want_rc, const char *must_contain)
{
    char out[8192];
    const int rc = run(args, out, sizeof out);
    printf("    tidelock %s -> %d: %s", args, rc, out);
    assert_int_equal(rc, want_rc);
    assert_int_equal(tl_test_lines(out), 1);
    if (strstr(out, must_contain) == NULL)
        fail_msg("message '%s' does not name '%s'", out, must_contain);
}

static void test_bad_commands_and_options(void **state)
{
    (void)state;
    expect_one_line("frobnicate", 2, "frobnicate");
    expect_one_line("run --bogus", 2, "unknown option '--bogus'");
    expect_one_line("run --drive abc", 2, "from -40 to 12");
    expect_one_line("run --drive 13", 2, "'13'");
    expect_one_line("run --drive -41", 2, "'-41'");
    expect_one_line("run a.ini b.ini", 2, "at most one scenario file");
    expect_one_line("run -o", 2, "-o needs a value");
    expect_one_line("run --drive", 2, "--drive needs a value");
    expect_one_line("tables nonsense", 2, "exactly one of -o FILE");
    expect_one_line("tables -o a --twiddle-source b", 2, "exactly one of");
    expect_one_line("scenario", 2, "exactly one of --print or --check");
    expect_one_line("scenario --print extra", 2, "unexpected argument 'extra'");
    expect_one_line("run /nonexistent/s.ini -o /tmp", 1, "/nonexistent/s.ini: cannot open");
    char out[8192];
    assert_int_equal(run("", out, sizeof out), 2); /* usage on stderr */
    assert_non_null(strstr(out, "usage: tidelock"));
}

/* --help on every command (with an example, exit 0), help COMMAND, --version. */
static void test_help_and_version(void **state)
{
    (void)state;
    const char *cmds[] = { "--help", "run --help", "scenario --help", "tables --help", "help run", "help tables",
                           "run -h" };
    char out[8192];
    for (size_t i = 0; i < sizeof cmds / sizeof cmds[0]; i++) {
        assert_int_equal(run(cmds[i], out, sizeof out), 0);
        assert_non_null(strstr(out, "usage: tidelock"));
        if (strstr(out, "example: tidelock") == NULL)
            fail_msg("'tidelock %s' shows no example", cmds[i]);
        assert_true(strstr(out, "options:") != NULL || strstr(out, "commands:") != NULL);
    }
    assert_int_equal(run("--version", out, sizeof out), 0);
    assert_int_equal(tl_test_lines(out), 1);
    assert_non_null(strstr(out, "tidelock "));
    assert_non_null(strstr(out, "arithmetic spec 1"));
}

/* An output folder that cannot be made: one line naming it, exit 1, nothing written. */
static void test_unwritable_output(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_cli_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char blocker[256], args[512];
    snprintf(blocker, sizeof blocker, "%s/file", dir);
    FILE *f = fopen(blocker, "w");
    fputs("x", f);
    fclose(f);
    snprintf(args, sizeof args, "run -o %s/sub", blocker); /* a folder below a file */
    expect_one_line(args, 1, blocker);
    struct stat st;
    char target[512];
    snprintf(target, sizeof target, "%s/sub/summary.json", blocker);
    assert_int_not_equal(stat(target, &st), 0);
    /* tables into a missing folder: no file, no temporary left behind */
    snprintf(args, sizeof args, "tables --twiddle-source %s/missing/t.c", dir);
    expect_one_line(args, 1, "missing/t.c");
    remove(blocker);
    rmdir(dir);
}

/* The generator behind the CLI writes exactly the committed twiddle table. */
static void test_tables_regenerate(void **state)
{
    (void)state;
    char path[] = "/tmp/tl_cli_tw_XXXXXX";
    const int fd = mkstemp(path);
    assert_true(fd >= 0);
    close(fd);
    char args[256], out[4096];
    snprintf(args, sizeof args, "tables --twiddle-source %s", path);
    assert_int_equal(run(args, out, sizeof out), 0);
    FILE *a = fopen(path, "rb"), *b = fopen("firmware/tl_twiddle_table.c", "rb");
    assert_non_null(a);
    assert_non_null(b);
    int ca, cb;
    do {
        ca = fgetc(a);
        cb = fgetc(b);
        assert_int_equal(ca, cb);
    } while (ca != EOF);
    fclose(a);
    fclose(b);
    remove(path);
}

/* `tables [SCENARIO] -o FILE`: the image the firmware loads. Without a
 * scenario it is the built-in default table, byte for byte; with one, its
 * geometry and window, and the chain accepts it. */
static void test_tables_image(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_cli_tab_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char args[1024], out[4096], img_path[300], ini[300];
    snprintf(img_path, sizeof img_path, "%s/default.bin", dir);
    snprintf(args, sizeof args, "tables -o %s", img_path);
    assert_int_equal(run(args, out, sizeof out), 0);
    tl_taps *t = malloc(sizeof *t);
    assert_int_equal(tl_taps_default(t), TL_OK);
    const size_t cap = TL_TAPS_IMAGE_BYTES(t->taps, t->points);
    uint8_t *want = malloc(cap), *got = malloc(cap + 1u);
    size_t len = 0;
    assert_int_equal(tl_taps_write_image(t, want, cap, &len), TL_OK);
    FILE *f = fopen(img_path, "rb");
    assert_non_null(f);
    assert_int_equal(fread(got, 1, cap + 1u, f), cap);
    fclose(f);
    assert_memory_equal(got, want, cap);
    /* a scenario with other geometry */
    snprintf(ini, sizeof ini, "%s/s.ini", dir);
    f = fopen(ini, "w");
    fputs("[instrument]\nchannels = 1024\ntaps = 8\nwindow = blackman\n", f);
    fclose(f);
    snprintf(img_path, sizeof img_path, "%s/b.bin", dir);
    snprintf(args, sizeof args, "tables %s -o %s", ini, img_path);
    assert_int_equal(run(args, out, sizeof out), 0);
    f = fopen(img_path, "rb");
    const size_t n = fread(got, 1, cap, f);
    fclose(f);
    uint32_t points = 0, taps = 0;
    assert_int_equal(tl_taps_check_image(got, n, &points, &taps), TL_OK);
    assert_int_equal(points, 2048);
    assert_int_equal(taps, 8);
    assert_int_equal(got[5], TL_WINDOW_BLACKMAN);
    tl_config cfg;
    tl_config_default(&cfg);
    cfg.points = 2048;
    cfg.taps = 8;
    tl_chain *c = tl_test_chain();
    assert_int_equal(tl_chain_init(c, &cfg, got, n), TL_OK);
    free(c);
    free(t);
    free(want);
    free(got);
    remove(img_path);
    snprintf(img_path, sizeof img_path, "%s/default.bin", dir);
    remove(img_path);
    remove(ini);
    rmdir(dir);
}

/* Not a terminal: no progress bar (no carriage return), no escape codes;
 * the printed tables carry their units. A small scenario keeps it fast. */
static void test_plain_output_with_units(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_cli_small_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char ini[300], args[1024], out[16384];
    snprintf(ini, sizeof ini, "%s/small.ini", dir);
    FILE *f = fopen(ini, "w");
    fputs("[instrument]\nchannels = 512\n[integration]\nspectra = 512\n[output]\ncsv = false\nnpy = false\n", f);
    fclose(f);
    snprintf(args, sizeof args, "run %s -o %s", ini, dir);
    assert_int_equal(run(args, out, sizeof out), 0);
    assert_null(strchr(out, '\r'));
    assert_null(strchr(out, '\033'));
    const char *must[] = { "verdict: PASS", "[noise]", "[rel]", "kHz", "MHz", "LSB^2", "samples", "dB" };
    for (size_t i = 0; i < sizeof must / sizeof must[0]; i++)
        if (strstr(out, must[i]) == NULL)
            fail_msg("run output lacks '%s'", must[i]);
    snprintf(args, sizeof args, "rm -rf %s", dir);
    assert_int_equal(system(args), 0);
}

/* The user's path: copy the example scenario, change the channel count,
 * run it, load the spectra in numpy (Debian's python3-numpy when present;
 * otherwise the .npy header is checked against the format). */
static void test_copy_example_change_channels_load_in_numpy(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_cli_user_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char cmd[2048], out[16384];
    snprintf(cmd, sizeof cmd,
             "sed -e 's/^channels = 4096$/channels = 1024/' -e 's/^spectra = 8192$/spectra = 1024/' "
             "docs/scenario-default.ini > %s/mine.ini && grep -c '^channels = 1024$' %s/mine.ini",
             dir, dir);
    FILE *p = popen(cmd, "r");
    assert_int_equal(fread(out, 1, sizeof out - 1, p) > 0, 1);
    assert_int_equal(pclose(p), 0);
    snprintf(cmd, sizeof cmd, "run %s/mine.ini -q -o %s/out", dir, dir);
    assert_int_equal(run(cmd, out, sizeof out), 0);
    if (system("/usr/bin/python3 -c 'import numpy' >/dev/null 2>&1") == 0) {
        snprintf(cmd, sizeof cmd,
                 "/usr/bin/python3 -c \"import numpy as n; a = n.load('%s/out/auto0.npy'); "
                 "f = n.load('%s/out/frequency_mhz.npy'); c = n.load('%s/out/cross.npy'); "
                 "print(a.dtype, a.shape, c.dtype, c.shape, '%%.6f' %% f[1], int(a[100]))\"",
                 dir, dir, dir);
        p = popen(cmd, "r");
        const size_t n = fread(out, 1, sizeof out - 1, p);
        out[n] = '\0';
        assert_int_equal(pclose(p), 0);
        printf("    numpy: %s", out);
        /* channel width 102.4 MHz / 2048 points = 0.05 MHz */
        assert_non_null(strstr(out, "uint64 (1024,) int64 (1024, 2) 0.050000 "));
        /* the value numpy reads is the CSV's value for channel 100 */
        char csv[512], line[256];
        snprintf(csv, sizeof csv, "%s/out/auto0.csv", dir);
        FILE *f = fopen(csv, "r");
        for (int i = 0; i <= 101; i++)
            assert_non_null(fgets(line, sizeof line, f));
        fclose(f);
        const char *value = strchr(line, ',') + 1;
        char want[64];
        snprintf(want, sizeof want, "%.*s", (int)(strchr(value, ',') - value), value);
        assert_non_null(strstr(out, want));
    } else {
        printf("    numpy absent: checking the .npy header bytes instead\n");
        char path[512];
        snprintf(path, sizeof path, "%s/out/auto0.npy", dir);
        FILE *f = fopen(path, "rb");
        unsigned char h[128];
        assert_int_equal(fread(h, 1, sizeof h, f), sizeof h);
        fclose(f);
        assert_memory_equal(h, "\x93NUMPY\x01\x00", 8);
        assert_non_null(strstr((const char *)h + 10, "'shape': (1024,)"));
    }
    snprintf(cmd, sizeof cmd, "rm -rf %s", dir);
    assert_int_equal(system(cmd), 0);
}

/* The whole default run: exit 0, a summary that parses, carries the
 * verdict and the figures, the resolved scenario, the spectra, the
 * calibrated spectra against the model, and no
 * temporary file left in the folder; -q prints nothing. */
static void test_run_writes_outputs(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_cli_run_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char args[2048], out[16384], path[512];
    snprintf(args, sizeof args, "run -q -o %s", dir);
    assert_int_equal(run(args, out, sizeof out), 0);
    assert_string_equal(out, ""); /* -q: nothing on stdout or stderr */
    snprintf(path, sizeof path, "%s/summary.json", dir);
    char path_summary[512];
    snprintf(path_summary, sizeof path_summary, "%s", path);
    json_error_t jerr;
    json_t *root = json_load_file(path, 0, &jerr);
    if (root == NULL)
        fail_msg("%s: %s", path, jerr.text);
    assert_string_equal(json_string_value(json_object_get(json_object_get(root, "verdict"), "result")), "PASS");
    const json_t *auto0 = json_object_get(json_object_get(root, "fidelity"), "auto0");
    const double margin = json_real_value(json_object_get(auto0, "margin"));
    const double ext = json_real_value(json_object_get(auto0, "margin_extrapolated"));
    printf("    summary.json: auto0 margin %.3e, extrapolated %.3e\n", margin, ext);
    assert_true(margin > 0.0 && margin < 0.01);
    assert_true(ext > 0.0 && ext < 0.01);
    assert_int_equal(json_integer_value(json_object_get(json_object_get(root, "config"), "channels")), 4096);
    /* the default switches: each input's calibrated spectrum against the
     * model, chi2 per channel near 1 (2000 channels: 1 +- 3 sqrt(2/2000)) */
    const json_t *cal_in = json_object_get(json_object_get(root, "calibration"), "inputs");
    assert_int_equal(json_array_size(cal_in), 2);
    double chi2_summary = 0.0;
    for (size_t i = 0; i < 2; i++) {
        const double c2 = json_real_value(json_object_get(json_array_get(cal_in, i), "chi2_per_channel"));
        printf("    calibration input %zu: chi2/channel %.4f\n", i, c2);
        assert_true(fabs(c2 - 1.0) < 3.0 * sqrt(2.0 / 2000.0));
        if (i == 0)
            chi2_summary = c2;
    }
    json_decref(root);
    /* calibrated.csv holds the same numbers: recompute input 0's chi2 over
     * the science band, 5 to 30 MHz = channels 400 .. 2399 of 12.5 kHz */
    snprintf(path, sizeof path, "%s/calibrated.csv", dir);
    FILE *cf = fopen(path, "r");
    assert_non_null(cf);
    char line[512];
    assert_non_null(fgets(line, sizeof line, cf));
    assert_string_equal(line, "frequency_mhz,t_model_k,t_ant0_k,sigma0_k,t_ant1_k,sigma1_k\n");
    double chi2 = 0.0;
    unsigned rows = 0;
    while (fgets(line, sizeof line, cf) != NULL) {
        double fr, tm, ta, sg;
        assert_int_equal(sscanf(line, "%lf,%lf,%lf,%lf", &fr, &tm, &ta, &sg), 4);
        if (rows >= 400u && rows < 2400u)
            chi2 += (ta - tm) * (ta - tm) / (sg * sg);
        rows++;
    }
    fclose(cf);
    assert_int_equal(rows, 4096);
    TL_ASSERT_NEAR(chi2 / 2000.0, chi2_summary, 1e-6);
    /* the downlink files have the sizes the summary states: frames of
     * 1024 + 4 octets (CCSDS 131.0-B sync marker + CCSDS 132.0-B frame) */
    root = json_load_file(path_summary, 0, &jerr);
    assert_non_null(root);
    const json_t *dl = json_object_get(root, "downlink");
    const json_int_t pk = json_integer_value(json_object_get(dl, "octets_science")) +
                          json_integer_value(json_object_get(dl, "octets_housekeeping"));
    const json_int_t fr = json_integer_value(json_object_get(dl, "octets_frames"));
    assert_int_equal(json_integer_value(json_object_get(dl, "frames")) * 1028, fr);
    struct stat sb;
    snprintf(path, sizeof path, "%s/packets.bin", dir);
    assert_int_equal(stat(path, &sb), 0);
    assert_int_equal(sb.st_size, pk);
    snprintf(path, sizeof path, "%s/frames.bin", dir);
    assert_int_equal(stat(path, &sb), 0);
    assert_int_equal(sb.st_size, fr);
    printf("    downlink: %lld packet octets in %lld frame octets\n", (long long)pk, (long long)fr);
    json_decref(root);
    /* the ground rebuilds exactly what run wrote, from the frames and from
     * the raw packet stream (lossless encoding: byte for byte) */
    const char *same[] = { "auto0.npy", "auto1.npy", "cross.npy", "flags.npy", "auto0.csv", "cross.csv",
                           "calibrated.csv" };
    for (int raw = 0; raw < 2; raw++) {
        char dec[200];
        snprintf(dec, sizeof dec, "%s/decoded%d", dir, raw);
        snprintf(args, sizeof args, "decode %s/%s %s -q -o %s", dir, raw ? "packets.bin --raw" : "frames.bin",
                 "docs/scenario-default.ini", dec);
        assert_int_equal(run(args, out, sizeof out), 0);
        for (size_t i = 0; i < sizeof same / sizeof same[0]; i++) {
            char cmd[1600];
            snprintf(cmd, sizeof cmd, "cmp -s %s/%s %s/integration-000000/%s", dir, same[i], dec, same[i]);
            if (system(cmd) != 0)
                fail_msg("decode%s: %s differs from run's", raw ? " --raw" : "", same[i]);
        }
        snprintf(args, sizeof args, "rm -rf %s", dec);
        assert_int_equal(system(args), 0);
    }
    printf("    decode of frames.bin and of packets.bin: spectra and calibrated.csv byte-identical to run's\n");
    const char *expected[] = { "summary.json",  "scenario.ini", "auto0.csv",         "auto1.csv",
                               "cross.csv",     "auto0.npy",    "auto1.npy",         "cross.npy",
                               "flags.npy",     "frequency_mhz.npy", "calibrated.csv", "calibrated.npy",
                               "packets.bin",   "frames.bin",
                               /* the report (html_report.h): the page and each figure as PNG and SVG */
                               "report.html", "sensitivity.json", "sky_calibrated.png", "sky_calibrated.svg", "fixed_minus_float.png",
                               "fixed_minus_float.svg", "fit_residuals.png", "fit_residuals.svg",
                               "feature_vs_noise.png", "feature_vs_noise.svg", "channel_response.png",
                               "channel_response.svg", "counters.png", "counters.svg", "compression.png",
                               "compression.svg", "budget.png", "budget.svg" };
    const size_t nexp = sizeof expected / sizeof expected[0];
    DIR *d = opendir(dir);
    struct dirent *e;
    size_t files = 0;
    while ((e = readdir(d)) != NULL) {
        if (e->d_name[0] == '.')
            continue;
        int known = 0;
        for (size_t i = 0; i < nexp; i++)
            known |= strcmp(e->d_name, expected[i]) == 0;
        if (!known)
            fail_msg("unexpected file %s in the output folder (a temporary left behind?)", e->d_name);
        files++;
    }
    closedir(d);
    assert_int_equal(files, nexp);
    /* the resolved scenario reproduces the run: it checks clean */
    snprintf(args, sizeof args, "scenario --check %s/scenario.ini -q", dir);
    assert_int_equal(run(args, out, sizeof out), 0);
    for (size_t i = 0; i < nexp; i++) {
        snprintf(path, sizeof path, "%s/%s", dir, expected[i]);
        remove(path);
    }
    rmdir(dir);
}

int main(int argc, char **argv)
{
    (void)argc;
    snprintf(argv0, sizeof argv0, "%s", argv[0]);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_bad_commands_and_options),
        cmocka_unit_test(test_unwritable_output),
        cmocka_unit_test(test_tables_regenerate),
        cmocka_unit_test(test_help_and_version),
        cmocka_unit_test(test_tables_image),
        cmocka_unit_test(test_plain_output_with_units),
        cmocka_unit_test(test_copy_example_change_channels_load_in_numpy),
        cmocka_unit_test(test_run_writes_outputs),
    };
    return cmocka_run_group_tests_name("cli", tests, NULL, NULL);
}
