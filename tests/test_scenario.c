/*
 * test_scenario.c - scenario files: the committed default, a round trip of
 * every key, every key's range at both ends, malformed files with their
 * exact one-line messages, tl_scenario_check on structs built in code, and
 * the same errors through the tidelock command line (the binary built next
 * to this test, as in test_cli.c).
 *
 * There is no outside standard for this file format: every check here is of
 * the project's own documented contract, namely the key table keys[] in
 * host/scenario.c (ranges, range texts, units, defaults) and the rules in
 * host/scenario.h (errors are one line "FILE:LINE: [section] key = 'value':
 * must be ..."; unknown sections and keys, repeated keys, indented lines and
 * lines longer than 199 characters are errors). The INI syntax underneath is
 * what Debian's inih reads.
 *
 * Temporary files are made with mkstemp under /tmp and removed right after
 * loading; the tests run from the repository root.
 */
#include <dirent.h>
#include <libgen.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "scenario.h"
#include "tl_test.h"

#define TMP_PATH 64
#define ERR_CAP 1024

static char tool[4096];

/* ---- helpers ------------------------------------------------------------- */

/* Write `len` bytes of text to a new file under /tmp; its name goes to path. */
static void write_tmp(char path[TMP_PATH], const char *text, size_t len)
{
    snprintf(path, TMP_PATH, "/tmp/tl_scn_XXXXXX");
    const int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *f = fdopen(fd, "wb");
    assert_non_null(f);
    const size_t put = fwrite(text, 1, len, f);
    assert_int_equal(fclose(f), 0);
    if (put != len) {
        remove(path);
        fail_msg("%s: wrote %zu of %zu bytes", path, put, len);
    }
}

/* Load text over the nominal scenario (a fixed base for these tests) from a temporary file (removed before return). */
static int load_text(const char *text, size_t len, tl_scenario *s, char path[TMP_PATH], char *err, size_t cap)
{
    write_tmp(path, text, len);
    tl_scenario_nominal(s);
    err[0] = '\0';
    const int rc = tl_scenario_load(path, s, err, cap);
    remove(path);
    return rc;
}

static void expect_loads_n(const char *text, size_t len, tl_scenario *s)
{
    char path[TMP_PATH], err[ERR_CAP];
    if (load_text(text, len, s, path, err, sizeof err) != 0)
        fail_msg("this file should load:\n%s\ngot: %s", text, err);
}

static void expect_loads(const char *text, tl_scenario *s)
{
    expect_loads_n(text, strlen(text), s);
}

/* The file must be rejected with exactly "PATH" followed by suffix, one line. */
static void expect_error_n(const char *text, size_t len, const char *suffix)
{
    char path[TMP_PATH], err[ERR_CAP], want[ERR_CAP + TMP_PATH];
    tl_scenario s;
    const int rc = load_text(text, len, &s, path, err, sizeof err);
    snprintf(want, sizeof want, "%s%s", path, suffix);
    if (rc != -1)
        fail_msg("this file should be rejected with '%s' but loaded (rc %d):\n%s", want, rc, text);
    if (strchr(err, '\n') != NULL)
        fail_msg("the message is more than one line: '%s'", err);
    if (strcmp(err, want) != 0)
        fail_msg("file:\n%s\nmessage:  '%s'\nexpected: '%s'", text, err, want);
}

static void expect_error(const char *text, const char *suffix)
{
    expect_error_n(text, strlen(text), suffix);
}

/* What tl_scenario_write makes of s, as a malloc'd string. */
static char *written(const tl_scenario *s)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_non_null(f);
    assert_int_equal(tl_scenario_write(f, s), 0);
    assert_int_equal(fclose(f), 0);
    return buf;
}

/* Lines that differ between two texts (a missing line counts as differing). */
static int differing_lines(const char *a, const char *b)
{
    int n = 0;
    while (*a != '\0' || *b != '\0') {
        const char *ea = strchr(a, '\n'), *eb = strchr(b, '\n');
        const size_t la = ea ? (size_t)(ea - a) : strlen(a), lb = eb ? (size_t)(eb - b) : strlen(b);
        n += la != lb || memcmp(a, b, la < lb ? la : lb) != 0;
        a += la + (ea != NULL);
        b += lb + (eb != NULL);
    }
    return n;
}

static int count_char(const char *s, char c)
{
    int n = 0;
    for (; *s; s++)
        n += *s == c;
    return n;
}

#define SAME_U(f)                                                                                                     \
    do {                                                                                                              \
        if (a->f != b->f)                                                                                             \
            fail_msg("%s: %s = %llu, expected %llu", what, #f, (unsigned long long)a->f, (unsigned long long)b->f);   \
    } while (0)
#define SAME_D(f)                                                                                                     \
    do {                                                                                                              \
        if (!(a->f == b->f))                                                                                          \
            fail_msg("%s: %s = %.17g, expected %.17g", what, #f, a->f, b->f);                                         \
    } while (0)
#define SAME_S(f)                                                                                                     \
    do {                                                                                                              \
        if (strcmp(a->f, b->f) != 0)                                                                                  \
            fail_msg("%s: %s = '%s', expected '%s'", what, #f, a->f, b->f);                                           \
    } while (0)

/* Field by field (not memcmp: padding and bytes after the strings' NULs
 * carry no meaning). Doubles must be equal exactly: every value used here
 * has at most 10 significant digits, which the writer's %.10g keeps. */
static void assert_scenario_equal(const tl_scenario *a, const tl_scenario *b, const char *what)
{
    SAME_S(name);
    SAME_S(description);
    SAME_U(cfg.points);
    SAME_U(cfg.taps);
    SAME_U(cfg.inputs);
    SAME_U(cfg.adc_bits);
    SAME_U(cfg.integration);
    SAME_U(cfg.fft_scale_mask);
    SAME_U(cfg.rounding);
    SAME_U(cfg.det_shift);
    SAME_U(window);
    SAME_D(adc_full_scale_v);
    SAME_D(sky.sample_rate_hz);
    SAME_D(sky.sky_t0_k);
    SAME_D(sky.sky_f0_hz);
    SAME_D(sky.sky_index);
    SAME_D(sky.receiver_k);
    SAME_D(sky.highpass_hz);
    SAME_U(sky.highpass_order);
    SAME_D(sky.lowpass_hz);
    SAME_U(sky.lowpass_order);
    SAME_U(sky.white);
    SAME_D(sky.coherence);
    SAME_D(sky.rms_fs);
    SAME_U(sky.adc_bits);
    SAME_U(sky.inputs);
    SAME_U(sky.seed);
    SAME_D(drive_db);
    SAME_U(spectra);
    SAME_U(blocks);
    SAME_U(flight_spectra);
    SAME_D(band_lo_hz);
    SAME_D(band_hi_hz);
    SAME_S(folder);
    SAME_U(write_csv);
    SAME_U(write_npy);
    SAME_U(proc_model);
    SAME_D(proc_clock_hz);
    SAME_D(proc_cpi);
    SAME_U(proc_block);
    SAME_U(proc_buffers);
    for (int i_ = 0; i_ < 6; i_++)
        SAME_D(proc_ips[i_]);
    SAME_D(sens_hours);
    SAME_D(sens_duty);
}

/* ---- 1. the committed default file ---------------------------------------- */

static int write_default(FILE *out)
{
    tl_scenario s;
    tl_scenario_default(&s);
    return tl_scenario_write(out, &s);
}

static void test_default_file_matches_writer(void **state)
{
    (void)state;
    tl_test_generated_matches("docs/scenario-default.ini", write_default, 4000);
}

static void test_default_file_loads_as_default(void **state)
{
    (void)state;
    tl_scenario def, s;
    char err[ERR_CAP] = "";
    tl_scenario_default(&def);
    tl_scenario_default(&s);
    if (tl_scenario_load("docs/scenario-default.ini", &s, err, sizeof err) != 0)
        fail_msg("docs/scenario-default.ini: %s", err);
    assert_scenario_equal(&s, &def, "docs/scenario-default.ini");
    /* and the default passes its own check */
    assert_int_equal(tl_scenario_check(&def, NULL, err, sizeof err), 0);
    /* loading over a different starting point still lands on the default:
     * the file names every key */
    tl_scenario_default(&s);
    s.cfg.taps = 9;
    s.write_npy = 0;
    snprintf(s.name, sizeof s.name, "other");
    assert_int_equal(tl_scenario_load("docs/scenario-default.ini", &s, err, sizeof err), 0);
    assert_scenario_equal(&s, &def, "docs/scenario-default.ini over a changed start");
}

/* ---- 2. round trip ------------------------------------------------------------ */

/* Every key away from its default, all still valid together: 80 MHz gives a
 * 40 MHz Nyquist above band_high 35; 2048 channels allow masks up to 0xFFF;
 * 2048 spectra are 64 blocks of 32; extrapolate_to 0 means none. */
static void modified(tl_scenario *s)
{
    tl_scenario_nominal(s);
    snprintf(s->name, sizeof s->name, "round-trip_2.test");
    snprintf(s->description, sizeof s->description,
             "Round trip: every key changed; commas, (brackets) = signs & 100%%");
    s->sky.sample_rate_hz = 80e6;
    s->cfg.adc_bits = 12;
    s->adc_full_scale_v = 0.5;
    s->cfg.inputs = 1;
    s->cfg.points = 2u * 2048u;
    s->cfg.taps = 8;
    s->window = 3; /* blackman */
    s->cfg.fft_scale_mask = 0xABCu;
    s->cfg.rounding = 0; /* truncate */
    s->cfg.det_shift = 17;
    s->spectra = 2048;
    s->sky.seed = 4000000000u;
    s->sky.white = 1;
    s->sky.rms_fs = 0.25;
    s->drive_db = -20.0;
    s->sky.sky_t0_k = 250.5;
    s->sky.sky_f0_hz = 150e6;
    s->sky.sky_index = 2.55;
    s->sky.receiver_k = 120.0;
    s->sky.highpass_hz = 3.5e6;
    s->sky.highpass_order = 2;
    s->sky.lowpass_hz = 38e6;
    s->sky.lowpass_order = 6;
    s->sky.coherence = 0.25;
    s->band_lo_hz = 5e6;
    s->band_hi_hz = 35e6;
    s->blocks = 32;
    s->flight_spectra = 0;
    snprintf(s->folder, sizeof s->folder, "/tmp/tidelock out.d");
    s->write_csv = 0;
    s->write_npy = 0;
    s->dl_encoding = 1;
    s->dl_fraction = 0.0625;
    s->dl_block = 16;
    s->dl_transpose = 0;
    s->dl_max_packet = 2048;
    s->dl_frame_len = 256;
    s->dl_apid_science = 17;
    s->dl_apid_hk = 18;
    s->dl_apid_sk = 19;
    s->cfg.sk_spectra = 64;
    s->cfg.sk_accumulate = 2;
    s->sk_false_alarm = 0.01;
    s->dl_scid = 1023;
    s->dl_vcid = 7;
    s->dl_mode = 3;
    s->bud_rate_bps = 8e3;
    s->bud_contact_h = 12.5;
    s->bud_pass_h = 0.5;
    s->bud_alloc_bytes_day = 5e6;
    s->bud_storage_bytes = 64e6;
    s->bud_night_fraction = 0.75;
    s->bud_day_fraction = 0.25;
    s->proc_model = 1;
    s->proc_clock_hz = 480e6;
    s->proc_cpi = 1.25;
    s->proc_block = 16384u;
    s->proc_buffers = 4u;
    for (int i = 0; i < 6; i++)
        s->proc_ips[i] = 10.5 + i;
    s->sens_hours = 250.5;
    s->sens_duty = 0.625;
    /* fields that follow their keys, as tl_scenario_load sets them */
    s->cfg.integration = s->spectra;
    s->sky.adc_bits = s->cfg.adc_bits;
    s->sky.inputs = s->cfg.inputs;
}

static void test_round_trip_every_key(void **state)
{
    (void)state;
    tl_scenario mod, back, def;
    char err[ERR_CAP] = "";
    modified(&mod);
    tl_scenario_nominal(&def);
    assert_int_equal(tl_scenario_check(&mod, NULL, err, sizeof err), 0);
    char *text = written(&mod);
    char *deftext = written(&def);
    /* every one of the 68 key lines differs from the default file */
    assert_int_equal(differing_lines(text, deftext), 68);
    expect_loads(text, &back);
    assert_scenario_equal(&back, &mod, "round trip");
    free(text);
    free(deftext);
}

/* ---- 3. every key at both ends of its range ---------------------------------- */

/* 63 = 26 + 26 + 8 + 3 characters of the allowed set */
#define NAME63 "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ01234567._-"
#define TEN "ten chars "
#define DESC159 TEN TEN TEN TEN TEN TEN TEN TEN TEN TEN TEN TEN TEN TEN TEN "last-nine"
#define FOLDER10 "folder/ab/"
#define FOLDER180                                                                                                     \
    FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10     \
        FOLDER10 FOLDER10 FOLDER10 FOLDER10 FOLDER10 "end-tenth."
_Static_assert(sizeof NAME63 == 64, "NAME63 has 63 characters");
_Static_assert(sizeof DESC159 == 160, "DESC159 has 159 characters");
_Static_assert(sizeof FOLDER180 == 181, "FOLDER180 has 180 characters");

typedef struct bound {
    const char *section, *key;
    const char *lo, *lo_with; /* lowest valid value that a file can hold, and companion lines it needs */
    const char *hi, *hi_with; /* highest, likewise */
    const char *below, *above; /* invalid (just outside, or a wrong token); NULL: none expressible */
    const char *range;        /* the range text of the error message */
} bound;

/* The documented ranges, copied from keys[] in host/scenario.c (the project's
 * own contract, no outside source). The values are written as the writer
 * formats them, so the test also finds them again in the written file.
 * Where a documented end cannot be held by any file (the relations or the
 * line limit forbid it), lo/hi is the nearest loadable value and
 * test_documented_ends_no_file_reaches shows the documented end. */
static const bound bounds[] = {
    { "scenario", "name", "a", "", NAME63, "", "", NAME63 "9", "1 to 63 of letters, digits, '.', '_', '-'" },
    { "scenario", "description", "", "", DESC159, "", NULL, DESC159 "!", "text of 0 to 159 characters" },
    { "instrument", "sample_rate_mhz", "1", "[fidelity]\nband_low_mhz = 0.1\nband_high_mhz = 0.5\n", "1000", "",
      "0.999999", "1000.000001", "a number from 1 to 1000 MHz" },
    { "instrument", "adc_bits", "8", "", "16", "", "7", "17", "an integer from 8 to 16 bits" },
    { "instrument", "adc_full_scale_v", "0.001", "", "100", "", "0.000999", "100.001",
      "a number from 0.001 to 100 V" },
    { "instrument", "inputs", "1", "", "2", "", "0", "3", "an integer from 1 to 2" },
    { "instrument", "channels", "128", "", "16384", "", "64", "32768", "a power of two from 128 to 16384" },
    { "instrument", "taps", "1", "", "16", "", "0", "17", "an integer from 1 to 16" },
    { "instrument", "window", "rectangular", "", "blackman-harris4", "", "Hann", "hanning",
      "one of rectangular, hann, hamming, blackman, blackman-harris4" },
    { "instrument", "fft_scaling", "0x0", "", "0x7FFF", "channels = 16384\n", "-1", "65536",
      "auto, or a mask from 0 to 2^(log2(channels)+1) - 1 (decimal or 0x hex)" },
    { "instrument", "rounding", "truncate", "", "half-even", "", "nearest", "HALF-EVEN",
      "one of truncate, half-up, half-even" },
    { "instrument", "detection_shift", "0", "", "40", "", "-1", "41", "auto, or an integer from 0 to 40 bits" },
    { "integration", "spectra", "8", "[fidelity]\nblocks = 8\n", "16777216", "", "0", "16777217",
      "an integer from 1 to 16777216 spectra" },
    { "sky", "seed", "0", "", "4294967295", "", "-1", "4294967296", "an integer from 0 to 4294967295" },
    { "sky", "shape", "sky", "", "white", "", "Sky", "pink", "one of sky, white" },
    { "sky", "rms_fraction", "0.0001", "", "1", "", "0.0000999", "1.0001", "a number from 0.0001 to 1 of full scale" },
    { "sky", "drive_db", "-40", "", "12", "", "-40.001", "12.001", "a number from -40 to 12 dB" },
    { "sky", "sky_t0_k", "0", "", "100000000", "", "-0.001", "100000001", "a number from 0 to 1e+08 K" },
    { "sky", "sky_f0_mhz", "0.1", "", "10000", "", "0.0999", "10000.1", "a number from 0.1 to 10000 MHz" },
    { "sky", "sky_index", "-1", "", "5", "", "-1.001", "5.001", "a number from -1 to 5" },
    { "sky", "receiver_k", "0", "", "1000000", "", "-1", "1000001", "a number from 0 to 1e+06 K" },
    { "sky", "highpass_mhz", "0.001", "", "999.999", "lowpass_mhz = 1000\n", "0.000999", "1000.001",
      "a number from 0.001 to 1000 MHz" },
    { "sky", "highpass_order", "1", "", "16", "", "0", "17", "an integer from 1 to 16" },
    { "sky", "lowpass_mhz", "0.002", "highpass_mhz = 0.001\n", "1000", "", "0.000999", "1000.001",
      "a number from 0.001 to 1000 MHz" },
    { "sky", "lowpass_order", "1", "", "16", "", "0", "17", "an integer from 1 to 16" },
    { "sky", "coherence", "0", "", "1", "", "-0.001", "1.001", "a number from 0 to 1" },
    { "fidelity", "band_low_mhz", "0", "", "39.8", "", "-0.001", "1000.001", "a number from 0 to 1000 MHz" },
    { "fidelity", "band_high_mhz", "0.2", "band_low_mhz = 0\n", "500", "[instrument]\nsample_rate_mhz = 1000\n",
      "-0.001", "1000.001", "a number from 0 to 1000 MHz" },
    { "fidelity", "blocks", "8", "", "1024", "", "7", "1025", "an integer from 8 to 1024" },
    { "fidelity", "extrapolate_to", "0", "", "16777216", "", "-1", "16777217", "an integer from 0 to 16777216 spectra" },
    { "output", "folder", "o", "", FOLDER180, "", "", FOLDER180 "x", "text of 1 to 180 characters" },
    { "output", "csv", "false", "", "true", "", "TRUE", "1", "true or false" },
    { "output", "npy", "false", "", "true", "", "yes", "0", "true or false" },
    /* simulator keys (ranges as documented in host/scenario.c) */
    { "instrument", "dc_offset_lsb", "-1000", "", "1000", "", "-1000.001", "1000.001", "a number from -1000 to 1000 LSB" },
    { "sky", "turnover_mhz", "0", "", "1000", "", "-0.001", "1000.001", "a number from 0 to 1000 MHz" },
    { "sky", "trough_depth_k", "0", "", "1000000", "sky_t0_k = 100000000\n", "-0.001", "1000001",
      "a number from 0 to 1e+06 K" },
    { "sky", "trough_centre_mhz", "0.001", "", "1000", "", "0.000999", "1000.001", "a number from 0.001 to 1000 MHz" },
    { "sky", "trough_width_mhz", "0.001", "", "1000", "", "0.000999", "1000.001", "a number from 0.001 to 1000 MHz" },
    { "sky", "trough_flatness", "1", "", "10", "", "0.999", "10.001", "a number from 1 to 10" },
    { "sky", "resonance_mhz", "0", "", "1000", "", "-0.001", "1000.001", "a number from 0 to 1000 MHz" },
    { "sky", "resonance_q", "0.1", "", "100", "", "0.0999", "100.001", "a number from 0.1 to 100" },
    { "interference", "burst_dbfs", "-150", "", "0", "", "-150.001", "0.001", "a number from -150 to 0 dBFS" },
    { "interference", "burst_duty", "0", "", "1", "", "-0.001", "1.001", "a number from 0 to 1" },
    { "interference", "burst_period_us", "0.01", "", "10000000", "", "0.00999", "10000001",
      "a number from 0.01 to 1e+07 us" },
    { "switching", "load_k", "1", "", "10000", "", "0.999", "10000.001", "a number from 1 to 10000 K" },
    { "switching", "noise_excess_k", "1", "", "10000000", "", "0.999", "10000001", "a number from 1 to 1e+07 K" },
    { "fit", "foreground_order", "1", "", "8", "", "0", "9", "an integer from 1 to 8" },
    /* the processor-speed model */
    { "processor", "model", "false", "", "true", "", "no", "2", "true or false" },
    { "processor", "clock_mhz", "1", "", "10000000", "", "0.999", "10000001", "a number from 1 to 1e+07 MHz" },
    { "processor", "cycles_per_instruction", "0.1", "", "100", "", "0.0999", "100.001", "a number from 0.1 to 100" },
    { "processor", "capture_block", "256", "[instrument]\nchannels = 128\n", "1048576", "", "255", "1048577",
      "an integer from 256 to 1048576 samples" },
    { "processor", "buffers", "1", "", "64", "", "0", "65", "an integer from 1 to 64" },
    { "processor", "filterbank_ips", "0", "", "1000000", "", "-0.001", "1000001",
      "a number from 0 to 1e+06 instructions/sample" },
    { "processor", "fft_ips", "0", "", "1000000", "", "-0.001", "1000001", "a number from 0 to 1e+06 instructions/sample" },
    { "processor", "detection_ips", "0", "", "1000000", "", "-0.001", "1000001",
      "a number from 0 to 1e+06 instructions/sample" },
    { "processor", "integration_ips", "0", "", "1000000", "", "-0.001", "1000001",
      "a number from 0 to 1e+06 instructions/sample" },
    { "processor", "encoding_ips", "0", "", "1000000", "", "-0.001", "1000001",
      "a number from 0 to 1e+06 instructions/sample" },
    { "processor", "packets_ips", "0", "", "1000000", "", "-0.001", "1000001",
      "a number from 0 to 1e+06 instructions/sample" },
    { "sensitivity", "hours", "0.001", "", "10000000", "", "0.000999", "10000001", "a number from 0.001 to 1e+07 h" },
    { "sensitivity", "duty_cycle", "0.001", "", "1", "", "0.000999", "1.001", "a number from 0.001 to 1" },
};
#define NBOUNDS (sizeof bounds / sizeof bounds[0])

/* Load "[section]\nkey = value\n" plus companions: it must load, the value
 * must come back in the written file, and no other key may change beyond
 * those the file names. */
static void check_valid_end(const bound *b, const char *value, const char *with)
{
    char text[1024], line[512];
    snprintf(text, sizeof text, "[%s]\n%s = %s\n%s", b->section, b->key, value, with);
    tl_scenario s, def;
    tl_scenario_nominal(&def);
    expect_loads(text, &s);
    char *out = written(&s), *defout = written(&def);
    snprintf(line, sizeof line, "\n%s = %s\n", b->key, value);
    if (strstr(out, line) == NULL)
        fail_msg("[%s] %s = '%s' loaded but the written file lacks '%s = %s'", b->section, b->key, value, b->key,
                 value);
    const int changed = differing_lines(out, defout), given = count_char(text, '=');
    if (changed > given)
        fail_msg("[%s] %s = '%s': %d key lines changed, the file gives only %d keys", b->section, b->key, value,
                 changed, given);
    free(out);
    free(defout);
}

static void check_invalid(const bound *b, const char *value)
{
    char text[1024], want[1024];
    snprintf(text, sizeof text, "[%s]\n%s = %s\n", b->section, b->key, value);
    snprintf(want, sizeof want, ":2: [%s] %s = '%s': must be %s", b->section, b->key, value, b->range);
    expect_error(text, want);
}

static void test_every_key_range_ends(void **state)
{
    (void)state;
    /* one row per key of keys[] (52) but the five whose grammar or limits
     * depend on other keys, tested on their own in test_interference_lists
     * and test_switching_and_fit_keys: carrier_mhz, carrier_dbfs, burst_mhz,
     * sequence, discard */
    assert_int_equal(NBOUNDS, 52 + 11 - 5 + 2); /* + the 11 [processor] keys, [sensitivity] hours, duty_cycle */
    for (size_t i = 0; i < NBOUNDS; i++) {
        const bound *b = &bounds[i];
        check_valid_end(b, b->lo, b->lo_with);
        check_valid_end(b, b->hi, b->hi_with);
        if (b->below != NULL)
            check_invalid(b, b->below);
        if (b->above != NULL)
            check_invalid(b, b->above);
    }
}

/* Documented ends that pass the key's own range check but that no file can
 * hold: a relation (or the line limit) always stops them. Reaching the
 * relation error proves the key's own range accepted the value, since
 * relations are checked only after every key has parsed. */
static void test_documented_ends_no_file_reaches(void **state)
{
    (void)state;
    /* spectra >= 1 documented, but blocks >= 8 must divide it */
    expect_error("[integration]\nspectra = 1\n[fidelity]\nblocks = 8\n",
                 ":2: [integration] spectra = '1': must be a multiple of [fidelity] blocks = 8");
    /* highpass 1000 needs lowpass above 1000, beyond lowpass's own maximum */
    expect_error("[sky]\nhighpass_mhz = 1000\nlowpass_mhz = 1000\n",
                 ":3: [sky] lowpass_mhz = '1000': must be above highpass_mhz = 1000 MHz");
    /* lowpass 0.001 needs highpass below 0.001, beyond highpass's own minimum */
    expect_error("[sky]\nlowpass_mhz = 0.001\nhighpass_mhz = 0.001\n",
                 ":2: [sky] lowpass_mhz = '0.001': must be above highpass_mhz = 0.001 MHz");
    /* band_low 1000: above any band_high the Nyquist limit allows */
    expect_error("[fidelity]\nband_low_mhz = 1000\n",
                 ":2: [fidelity] band_low_mhz = '1000': must be below band_high_mhz = 40 MHz");
    /* band_high 0: no band_low below it */
    expect_error("[fidelity]\nband_high_mhz = 0\n",
                 ": [fidelity] band_low_mhz = '10' (default): must be below band_high_mhz = 0 MHz");
    /* band_high 1000 needs a 2000 MHz rate; the rate stops at 1000 */
    expect_error("[fidelity]\nband_high_mhz = 1000\n[instrument]\nsample_rate_mhz = 1000\n",
                 ":2: [fidelity] band_high_mhz = '1000': must be at most half the sample rate, 500 MHz");
    /* fft_scaling 65535 needs 32768 channels; channels stop at 16384 */
    expect_error("[instrument]\nfft_scaling = 65535\nchannels = 16384\n",
                 ":2: [instrument] fft_scaling = '0xFFFF': must be auto or at most 0x7FFF for 16384 channels (one bit "
                 "per binary stage plus the split)");
    /* the longest folder (180 characters) still fits a line: it loads and
     * its written form reads back */
    tl_scenario s;
    char err[ERR_CAP] = "";
    tl_scenario_nominal(&s);
    memset(s.folder, 'f', 180);
    s.folder[180] = '\0';
    if (tl_scenario_check(&s, NULL, err, sizeof err) != 0)
        fail_msg("a folder of 180 characters is in the documented range: %s", err);
}

/* Every choice, boolean and 'auto' token is stored as documented. */
static void test_choices_booleans_auto(void **state)
{
    (void)state;
    static const char *const windows[] = { "rectangular", "hann", "hamming", "blackman", "blackman-harris4" };
    static const char *const roundings[] = { "truncate", "half-up", "half-even" };
    char text[256];
    tl_scenario s;
    for (unsigned i = 0; i < 5; i++) {
        snprintf(text, sizeof text, "[instrument]\nwindow = %s\n", windows[i]);
        expect_loads(text, &s);
        assert_int_equal(s.window, i);
    }
    for (unsigned i = 0; i < 3; i++) {
        snprintf(text, sizeof text, "[instrument]\nrounding = %s\n", roundings[i]);
        expect_loads(text, &s);
        assert_int_equal(s.cfg.rounding, i);
    }
    expect_loads("[sky]\nshape = white\n", &s);
    assert_int_equal(s.sky.white, 1);
    expect_loads("[sky]\nshape = sky\n", &s);
    assert_int_equal(s.sky.white, 0);
    expect_loads("[output]\ncsv = false\nnpy = true\n", &s);
    assert_int_equal(s.write_csv, 0);
    assert_int_equal(s.write_npy, 1);
    expect_loads("[output]\ncsv = true\nnpy = false\n", &s);
    assert_int_equal(s.write_csv, 1);
    assert_int_equal(s.write_npy, 0);
    static const char *const not_bool[] = { "True", "1", "0", "yes", "no", "on", "" };
    for (unsigned i = 0; i < sizeof not_bool / sizeof not_bool[0]; i++) {
        char want[256];
        snprintf(text, sizeof text, "[output]\nnpy = %s\n", not_bool[i]);
        snprintf(want, sizeof want, ":2: [output] npy = '%s': must be true or false", not_bool[i]);
        expect_error(text, want);
    }
    /* auto, decimal and hex masks */
    expect_loads("[instrument]\nfft_scaling = 0x15\ndetection_shift = 12\n", &s);
    assert_int_equal(s.cfg.fft_scale_mask, 0x15u);
    assert_int_equal(s.cfg.det_shift, 12u);
    expect_loads("[instrument]\nfft_scaling = auto\ndetection_shift = auto\n", &s);
    assert_int_equal(s.cfg.fft_scale_mask, TL_FFT_SCALE_AUTO);
    assert_int_equal(s.cfg.det_shift, TL_DET_SHIFT_AUTO);
    expect_loads("[instrument]\nfft_scaling = 8191\n", &s);
    assert_int_equal(s.cfg.fft_scale_mask, 0x1FFFu);
    expect_loads("[instrument]\nfft_scaling = 0x1fff\n", &s);
    assert_int_equal(s.cfg.fft_scale_mask, 0x1FFFu);
    expect_error("[instrument]\nfft_scaling = Auto\n", ":2: [instrument] fft_scaling = 'Auto': must be auto, or a mask "
                                                       "from 0 to 2^(log2(channels)+1) - 1 (decimal or 0x hex)");
    expect_error("[instrument]\ndetection_shift = AUTO\n",
                 ":2: [instrument] detection_shift = 'AUTO': must be auto, or an integer from 0 to 40 bits");
    expect_error("[instrument]\ndetection_shift = 0x10\n",
                 ":2: [instrument] detection_shift = '0x10': must be auto, or an integer from 0 to 40 bits");
    /* channels: a power of two, stored as points = 2 x channels */
    expect_loads("[instrument]\nchannels = 1024\n", &s);
    assert_int_equal(s.cfg.points, 2048u);
    expect_error("[instrument]\nchannels = 3000\n",
                 ":2: [instrument] channels = '3000': must be a power of two from 128 to 16384");
}

/* Text keys: the name's character set, free description text, folder. */
static void test_text_keys(void **state)
{
    (void)state;
    tl_scenario s;
    expect_loads("[scenario]\nname = A.b_c-9\n", &s);
    assert_string_equal(s.name, "A.b_c-9");
    expect_loads("[scenario]\nname = " NAME63 "\n", &s);
    assert_string_equal(s.name, NAME63);
    static const char *const bad_names[] = {
        "a b", "x/y", "semi;colon", "plus+", "\xc3\xbc" /* U+00FC in UTF-8, RFC 3629 */, "\"quoted\"",
    };
    for (unsigned i = 0; i < sizeof bad_names / sizeof bad_names[0]; i++) {
        char text[256], want[256];
        snprintf(text, sizeof text, "[scenario]\nname = %s\n", bad_names[i]);
        snprintf(want, sizeof want, ":2: [scenario] name = '%s': must be 1 to 63 of letters, digits, '.', '_', '-'",
                 bad_names[i]);
        expect_error(text, want);
    }
    /* description: any text, stripped at both ends; empty is allowed */
    expect_loads("[scenario]\ndescription =   Two dipoles, 14-bit ADCs: [test] #1 = ok   \n", &s);
    assert_string_equal(s.description, "Two dipoles, 14-bit ADCs: [test] #1 = ok");
    expect_loads("[scenario]\ndescription =\n", &s);
    assert_string_equal(s.description, "");
    expect_loads("[scenario]\ndescription = " DESC159 "\n", &s);
    assert_string_equal(s.description, DESC159);
    /* folder: spaces inside are kept */
    expect_loads("[output]\nfolder = my runs/2024 a\n", &s);
    assert_string_equal(s.folder, "my runs/2024 a");
    expect_loads("[output]\nfolder = " FOLDER180 "\n", &s);
    assert_string_equal(s.folder, FOLDER180);
    expect_error("[output]\nfolder =\n", ":2: [output] folder = '': must be text of 1 to 180 characters");
}

/* ---- 4. malformed and odd files ------------------------------------------------ */

typedef struct case_ {
    const char *what, *text;
    const char *suffix; /* expected message after the path; NULL: loads */
} case_;

#define SECTIONS "(sections: scenario, instrument, integration, sky, interference, fidelity, switching, fit, flagging, downlink, budget, processor, sensitivity, output)"
#define INSTRUMENT_KEYS                                                                                               \
    "(keys of [instrument]: sample_rate_mhz, adc_bits, adc_full_scale_v, dc_offset_lsb, inputs, channels, taps, window, "            \
    "fft_scaling, rounding, detection_shift)"

static const case_ cases[] = {
    { "unknown section", "# typo\n[instrumnet]\nchannels = 2048\n", ":2: [instrumnet]: unknown section " SECTIONS },
    { "unknown section, empty name", "[]\n", ":1: []: unknown section " SECTIONS },
    { "unknown key", "[instrument]\ntaps = 4\nchanels = 2048\n",
      ":3: [instrument] chanels: unknown key " INSTRUMENT_KEYS },
    { "key in the wrong section", "[sky]\nchannels = 2048\n",
      ":2: [sky] channels: unknown key (keys of [sky]: seed, shape, rms_fraction, drive_db, sky_t0_k, sky_f0_mhz, "
      "sky_index, turnover_mhz, trough_depth_k, trough_centre_mhz, trough_width_mhz, trough_flatness, receiver_k, "
      "highpass_mhz, highpass_order, lowpass_mhz, lowpass_order, resonance_mhz, resonance_q, coherence)" },
    { "key given twice", "[instrument]\nchannels = 2048\ntaps = 2\nchannels = 1024\n",
      ":4: [instrument] channels: given twice (first on line 2)" },
    { "key given twice, section repeated", "[sky]\nseed = 1\n\n[output]\ncsv = true\n[sky]\nseed = 2\n",
      ":7: [sky] seed: given twice (first on line 2)" },
    { "value out of range", "[instrument]\nadc_bits = 20\n",
      ":2: [instrument] adc_bits = '20': must be an integer from 8 to 16 bits" },
    { "non-numeric: 12abc", "[instrument]\ntaps = 12abc\n",
      ":2: [instrument] taps = '12abc': must be an integer from 1 to 16" },
    { "non-numeric: empty", "[instrument]\ntaps =\n", ":2: [instrument] taps = '': must be an integer from 1 to 16" },
    { "non-numeric: 1e400", "[sky]\ndrive_db = 1e400\n",
      ":2: [sky] drive_db = '1e400': must be a number from -40 to 12 dB" },
    { "non-numeric: nan", "[sky]\ncoherence = nan\n", ":2: [sky] coherence = 'nan': must be a number from 0 to 1" },
    { "non-numeric: inf", "[sky]\nreceiver_k = inf\n",
      ":2: [sky] receiver_k = 'inf': must be a number from 0 to 1e+06 K" },
    { "'#' is no inline comment", "[instrument]\nchannels = 2048 # note\n",
      ":2: [instrument] channels = '2048 # note': must be a power of two from 128 to 16384" },
    { "negative unsigned", "[sky]\nseed = -1\n", ":2: [sky] seed = '-1': must be an integer from 0 to 4294967295" },
    { "negative unsigned, blocks", "[fidelity]\nblocks = -8\n",
      ":2: [fidelity] blocks = '-8': must be an integer from 8 to 1024" },
    { "signed unsigned", "[instrument]\ninputs = +1\n",
      ":2: [instrument] inputs = '+1': must be an integer from 1 to 2" },
    { "neither key = value nor section", "[instrument]\nchannels 2048\n",
      ":2: expected 'key = value', '[section]' or a '#' comment" },
    { "indented continuation", "[scenario]\ndescription = first part\n  second part\n",
      ":3: indented line: continuation lines are not allowed (start every key at the first column)" },
    { "indented key (tab)", "[scenario]\n\tname = x\n",
      ":2: indented line: continuation lines are not allowed (start every key at the first column)" },
    { "key before any section", "channels = 2048\n[instrument]\n",
      ":1: channels: key outside any section " SECTIONS },
    { "relation: band above Nyquist", "[instrument]\ntaps = 4\n[fidelity]\nband_high_mhz = 60\n",
      ":4: [fidelity] band_high_mhz = '60': must be at most half the sample rate, 51.2 MHz" },
    { "relation: spectra not a multiple of blocks", "[fidelity]\nblocks = 64\n[integration]\nspectra = 100\n",
      ":4: [integration] spectra = '100': must be a multiple of [fidelity] blocks = 64" },
    { "relation: fft_scaling too wide", "[instrument]\nchannels = 4096\nfft_scaling = 0x2000\n",
      ":3: [instrument] fft_scaling = '0x2000': must be auto or at most 0x1FFF for 4096 channels (one bit per binary "
      "stage plus the split)" },
    { "relation: lowpass below highpass", "[sky]\nhighpass_mhz = 5\nlowpass_mhz = 4\n",
      ":3: [sky] lowpass_mhz = '4': must be above highpass_mhz = 5 MHz" },
    { "relation: one APID for both", "[downlink]\napid_housekeeping = 257\n",
      ":2: [downlink] apid_housekeeping = '257': must differ from apid_science = 257" },
    { "relation: kurtosis APID taken", "[downlink]\napid_kurtosis = 258\n",
      ":2: [downlink] apid_kurtosis = '258': must differ from apid_science = 257 and apid_housekeeping = 258" },
    { "relation: SK block below 16", "[flagging]\nsk_block = 15\n",
      ":2: [flagging] sk_block = '15': must be 0 (off) or at least 16 spectra" },
    { "relation: no SK thresholds", "[flagging]\nsk_block = 64\nsk_accumulate = 14\n",
      ":2: [flagging] sk_block = '64': no flagging thresholds exist for M = 64 values of N = 14 spectra (N = 1 needs "
      "M >= 24; docs/spectral-kurtosis.md lists the limits)" },
    { "relation: SK block above the integration", "[flagging]\nsk_block = 8192\n",
      ":2: [flagging] sk_block = '8192': times sk_accumulate = 1 must be at most [integration] spectra = 4096" },
    { "range: packet below the downlink minimum", "[downlink]\nmax_packet = 511\n",
      ":2: [downlink] max_packet = '511': must be an integer from 512 to 4095 octets" },
    { "relation: extrapolate_to below spectra", "[fidelity]\nextrapolate_to = 4095\n",
      ":2: [fidelity] extrapolate_to = '4095': must be 0 or at least [integration] spectra = 4096" },
    { "relation: band_low not below band_high", "[fidelity]\nband_low_mhz = 40\n",
      ":2: [fidelity] band_low_mhz = '40': must be below band_high_mhz = 40 MHz" },
    { "relation: band of 15 channels", "[fidelity]\nband_low_mhz = 10\nband_high_mhz = 10.1875\n",
      ":3: [fidelity] band_high_mhz = '10.1875': the band must span at least 16 channels of 12.5 kHz (it spans 15)" },
    { "relation on a default key: rate", "[instrument]\nsample_rate_mhz = 60\n",
      ": [fidelity] band_high_mhz = '40' (default): must be at most half the sample rate, 30 MHz" },
    { "relation on a default key: highpass", "[sky]\nhighpass_mhz = 50\n",
      ": [sky] lowpass_mhz = '45' (default): must be above highpass_mhz = 50 MHz" },
    /* just inside the relations */
    { "relation: band just above Nyquist", "[fidelity]\nband_high_mhz = 51.2001\n",
      ":2: [fidelity] band_high_mhz = '51.2001': must be at most half the sample rate, 51.2 MHz" },
    { "band_high at Nyquist", "[fidelity]\nband_high_mhz = 51.2\n", NULL },
    { "band of 16 channels", "[fidelity]\nband_low_mhz = 10\nband_high_mhz = 10.2\n", NULL },
    { "extrapolate_to = spectra", "[fidelity]\nextrapolate_to = 4096\n", NULL },
    { "spectra 65 blocks", "[integration]\nspectra = 4160\n", NULL },
    { "fft_scaling 0x1FFF for 4096 channels", "[instrument]\nfft_scaling = 0x1FFF\n", NULL },
    { "lowpass just above highpass", "[sky]\nlowpass_mhz = 5.000001\n", NULL },
    /* valid oddities */
    { "empty file", "", NULL },
    { "comments and blank lines only", "# one\n\n# two\n\n\n#\n", NULL },
    { "indented comment and blank line", "[scenario]\n   # note\n \t\nname = x\n", NULL },
    { "no newline at the end", "[instrument]\nchannels = 1024", NULL },
};
#define NCASES (sizeof cases / sizeof cases[0])

static void test_malformed_files(void **state)
{
    (void)state;
    for (size_t i = 0; i < NCASES; i++) {
        tl_scenario s;
        if (cases[i].suffix == NULL) {
            expect_loads(cases[i].text, &s);
            printf("    %-44s loads\n", cases[i].what);
        } else {
            expect_error(cases[i].text, cases[i].suffix);
            printf("    %-44s PATH%s\n", cases[i].what, cases[i].suffix);
        }
    }
}

static void test_empty_and_comment_files_are_default(void **state)
{
    (void)state;
    tl_scenario s, def;
    tl_scenario_nominal(&def);
    expect_loads("", &s);
    assert_scenario_equal(&s, &def, "empty file");
    expect_loads("# only a comment\n\n", &s);
    assert_scenario_equal(&s, &def, "comment file");
}

/* A UTF-8 byte-order mark before the first section is skipped. The mark is
 * U+FEFF encoded as EF BB BF (RFC 3629, section 6); editors that add it are
 * common practice, no source. */
static void test_bom(void **state)
{
    (void)state;
    tl_scenario s;
    expect_loads("\xEF\xBB\xBF[scenario]\nname = bom\n", &s);
    assert_string_equal(s.name, "bom");
    expect_loads("\xEF\xBB\xBF# comment first\n[instrument]\ntaps = 2\n", &s);
    assert_int_equal(s.cfg.taps, 2u);
    /* after the mark, the first line is checked like any other */
    expect_error("\xEF\xBB\xBF[instrumnet]\n", ":1: [instrumnet]: unknown section " SECTIONS);
    expect_error("\xEF\xBB\xBF name = x\n",
                 ":1: indented line: continuation lines are not allowed (start every key at the first column)");
    /* a mark anywhere else is not skipped */
    expect_error("[scenario]\n\xEF\xBB\xBFname = bom\n",
                 ":2: [scenario] \xEF\xBB\xBFname: unknown key (keys of [scenario]: name, description)");
}

/* CRLF line endings, as Windows editors save them (common practice, no
 * source). Found by experiment: they load, and the carriage return is not
 * part of any value, section name or line count (inih strips trailing
 * whitespace, '\r' included). The line limit then counts the '\r'. */
static void test_crlf(void **state)
{
    (void)state;
    tl_scenario s;
    expect_loads("[scenario]\r\nname = crlf\r\ndescription = with CR LF \r\n\r\n# c\r\n[instrument]\r\nchannels = "
                 "2048\r\nwindow = hamming\r\n[output]\r\ncsv = false\r\n",
                 &s);
    assert_string_equal(s.name, "crlf");
    assert_string_equal(s.description, "with CR LF");
    assert_int_equal(s.cfg.points, 4096u);
    assert_int_equal(s.window, 2u);
    assert_int_equal(s.write_csv, 0u);
    expect_loads("\xEF\xBB\xBF[instrument]\r\ntaps = 3\r\n", &s);
    assert_int_equal(s.cfg.taps, 3u);
    expect_error("[instrument]\r\n\r\nchanels = 1\r\n", ":3: [instrument] chanels: unknown key " INSTRUMENT_KEYS);
    expect_error("[output]\r\nnpy = yes\r\n", ":2: [output] npy = 'yes': must be true or false");
}

/* A file that cannot be opened. */
static void test_missing_file(void **state)
{
    (void)state;
    char path[TMP_PATH], err[ERR_CAP], want[ERR_CAP];
    write_tmp(path, "", 0);
    remove(path);
    tl_scenario s;
    tl_scenario_nominal(&s);
    assert_int_equal(tl_scenario_load(path, &s, err, sizeof err), -1);
    snprintf(want, sizeof want, "%s: cannot open: No such file or directory", path);
    assert_string_equal(err, want);
    /* a folder is no scenario file either */
    assert_int_equal(tl_scenario_load("/tmp", &s, err, sizeof err), -1);
    if (strncmp(err, "/tmp: ", 6) != 0 || strchr(err, '\n') != NULL)
        fail_msg("unexpected message for a folder: '%s'", err);
}

/* A small message buffer truncates the line; it never overflows. */
static void test_small_error_buffer(void **state)
{
    (void)state;
    char path[TMP_PATH], err[24], full[ERR_CAP];
    tl_scenario s;
    memset(err, 'Z', sizeof err);
    assert_int_equal(load_text("[sky]\nseed = -1\n", 16, &s, path, err, 20), -1);
    snprintf(full, sizeof full, "%s:2: [sky] seed = '-1'", path);
    assert_int_equal(strlen(err), 19u);
    assert_memory_equal(err, full, 19);
    assert_int_equal(err[20], 'Z');
}

/* Lines: "at most 199 characters per line" (the header of every written
 * file); a line of 199 characters loads, one of 200 does not. */
static void test_line_length_limit(void **state)
{
    (void)state;
    char text[512];
    for (int len = 198; len <= 200; len++) {
        int n = snprintf(text, sizeof text, "[scenario]\n#");
        while (n < 11 + len)
            text[n++] = 'x';
        n += snprintf(text + n, sizeof text - (size_t)n, "\nname = long%d\n", len);
        tl_scenario s;
        if (len <= 199) {
            expect_loads_n(text, (size_t)n, &s);
            char want[32];
            snprintf(want, sizeof want, "long%d", len);
            assert_string_equal(s.name, want);
        } else {
            expect_error_n(text, (size_t)n, ":2: line longer than 199 characters");
        }
    }
    /* far too long: a 250-character description line */
    memset(text, 0, sizeof text);
    int n = snprintf(text, sizeof text, "[scenario]\nname = x\ndescription = ");
    while (n < 21 + 250)
        text[n++] = 'd';
    text[n++] = '\n';
    expect_error_n(text, (size_t)n, ":3: line longer than 199 characters");
}

/* The first error of the file is the one reported. */
static void test_first_error_is_reported(void **state)
{
    (void)state;
    /* a section header without its ']' is the error, not the key below it */
    expect_error("[instrument\nchannels = 2048\n", ":1: expected 'key = value', '[section]' or a '#' comment");
    expect_error("[instrument]\ngarbage\nchanels = 1\n", ":2: expected 'key = value', '[section]' or a '#' comment");
}

/* An unknown section is an error however long its name. */
static void test_long_unknown_section(void **state)
{
    (void)state;
    char name[71], text[128], want[256];
    memset(name, 'q', 70);
    name[70] = '\0';
    snprintf(text, sizeof text, "[%s]\n", name);
    snprintf(want, sizeof want, ":1: [%s]: unknown section " SECTIONS, name);
    expect_error(text, want);
}

/* ---- 5. tl_scenario_check on structs built in code ------------------------------- */

static void check_fails(const tl_scenario *s, const char *path, const char *want)
{
    char err[ERR_CAP] = "";
    assert_int_equal(tl_scenario_check(s, path, err, sizeof err), -1);
    assert_string_equal(err, want);
}

static void test_check_struct(void **state)
{
    (void)state;
    tl_scenario s;
    char err[ERR_CAP] = "";
    tl_scenario_nominal(&s);
    assert_int_equal(tl_scenario_check(&s, NULL, err, sizeof err), 0);
    assert_int_equal(tl_scenario_check(&s, "x.ini", err, sizeof err), 0);

    tl_scenario_nominal(&s);
    s.cfg.adc_bits = 20;
    check_fails(&s, NULL, "scenario: [instrument] adc_bits = '20': must be an integer from 8 to 16 bits");
    tl_scenario_nominal(&s);
    s.sky.coherence = 1.5;
    check_fails(&s, "my.ini", "my.ini: [sky] coherence = '1.5': must be a number from 0 to 1");
    tl_scenario_nominal(&s);
    s.sky.sample_rate_hz = 0.0;
    check_fails(&s, NULL,
                "scenario: [instrument] sample_rate_mhz = '0': must be a number from 1 to 1000 MHz");
    tl_scenario_nominal(&s);
    s.proc_block = 65536u + 1024u; /* not a multiple of 2 x 4096 channels */
    check_fails(&s, NULL, "scenario: [processor] capture_block = '66560': must be a multiple of 2 x channels = 8192 "
                          "samples");
    tl_scenario_nominal(&s);
    s.window = 9;
    check_fails(&s, NULL,
                "scenario: [instrument] window = '?': must be one of rectangular, hann, hamming, blackman, "
                "blackman-harris4");
    tl_scenario_nominal(&s);
    s.cfg.points = 128;
    check_fails(&s, NULL, "scenario: [instrument] channels = '64': must be a power of two from 128 to 16384");
    tl_scenario_nominal(&s);
    s.cfg.det_shift = 41;
    check_fails(&s, NULL,
                "scenario: [instrument] detection_shift = '41': must be auto, or an integer from 0 to 40 bits");
    tl_scenario_nominal(&s);
    s.sky.seed = 1ull << 32;
    check_fails(&s, NULL, "scenario: [sky] seed = '4294967296': must be an integer from 0 to 4294967295");
    tl_scenario_nominal(&s);
    s.sky.seed = UINT64_MAX;
    check_fails(&s, NULL,
                "scenario: [sky] seed = '18446744073709551615': must be an integer from 0 to 4294967295");
    tl_scenario_nominal(&s);
    snprintf(s.name, sizeof s.name, "has space");
    check_fails(&s, NULL,
                "scenario: [scenario] name = 'has space': must be 1 to 63 of letters, digits, '.', '_', '-'");
    tl_scenario_nominal(&s);
    s.folder[0] = '\0';
    check_fails(&s, NULL, "scenario: [output] folder = '': must be text of 1 to 180 characters");
    /* the first key of the table that is out of range is named */
    tl_scenario_nominal(&s);
    s.cfg.taps = 0;
    s.blocks = 2;
    check_fails(&s, NULL, "scenario: [instrument] taps = '0': must be an integer from 1 to 16");
    /* relations, after every key is in range */
    tl_scenario_nominal(&s);
    s.blocks = 100;
    check_fails(&s, NULL,
                "scenario: [integration] spectra = '4096': must be a multiple of [fidelity] blocks = 100");
    tl_scenario_nominal(&s);
    s.cfg.fft_scale_mask = 0x2000;
    check_fails(&s, "c.ini",
                "c.ini: [instrument] fft_scaling = '0x2000': must be auto or at most 0x1FFF for 4096 "
                "channels (one bit per binary stage plus the split)");
}

/* ---- 6. through the command line ------------------------------------------------- */

/* Fail early, before any temporary file exists, when the tool is missing. */
static void need_tool(void)
{
    if (access(tool, X_OK) != 0)
        fail_msg("%s is not built (the CLI tests run the tidelock next to this test)", tool);
}

static char argv0[4096];

/* Run the tool; stderr+stdout into out; the exit status. */
static int run_tool(const char *args, char *out, size_t cap)
{
    return tl_test_tool(argv0, args, out, cap);
}

static int dir_entries(const char *dir)
{
    DIR *d = opendir(dir);
    assert_non_null(d);
    int n = 0;
    const struct dirent *e;
    while ((e = readdir(d)) != NULL)
        n += strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
    closedir(d);
    return n;
}

static void test_cli_check_bad_file(void **state)
{
    (void)state;
    need_tool();
    char path[TMP_PATH], args[256], out[8192], want[1024];
    write_tmp(path, "[instrument]\nchanels = 2048\n", 28);
    snprintf(args, sizeof args, "scenario --check %s", path);
    const int rc = run_tool(args, out, sizeof out);
    remove(path);
    snprintf(want, sizeof want, "tidelock scenario: %s:2: [instrument] chanels: unknown key " INSTRUMENT_KEYS "\n",
             path);
    printf("    tidelock %s -> %d: %s", args, rc, out);
    assert_int_equal(rc, 1);
    assert_string_equal(out, want);
    /* a good file with -q: exit 0, nothing printed */
    assert_int_equal(run_tool("scenario --check docs/scenario-default.ini -q", out, sizeof out), 0);
    assert_string_equal(out, "");
}

static void test_cli_print_is_default_file(void **state)
{
    (void)state;
    need_tool();
    static char out[65536], doc[65536];
    assert_int_equal(run_tool("scenario --print", out, sizeof out), 0);
    FILE *f = fopen("docs/scenario-default.ini", "rb");
    assert_non_null(f);
    const size_t n = fread(doc, 1, sizeof doc - 1, f);
    doc[n] = '\0';
    fclose(f);
    assert_true(n > 4000);
    assert_string_equal(out, doc);
    /* and --check of the default file prints the same resolved scenario */
    assert_int_equal(run_tool("scenario --check docs/scenario-default.ini", out, sizeof out), 0);
    assert_string_equal(out, doc);
}

static void test_cli_run_bad_file_writes_nothing(void **state)
{
    (void)state;
    need_tool();
    char path[TMP_PATH], dir[] = "/tmp/tl_scn_run_XXXXXX", args[512], out[2][8192], want[1024];
    assert_non_null(mkdtemp(dir));
    write_tmp(path, "[sky]\nseed = -1\n", 16);
    /* into an existing empty folder, and into one that does not exist yet */
    snprintf(args, sizeof args, "run %s -o %s", path, dir);
    const int rc0 = run_tool(args, out[0], sizeof out[0]);
    const int left0 = dir_entries(dir);
    printf("    tidelock %s -> %d: %s", args, rc0, out[0]);
    snprintf(args, sizeof args, "run %s -o %s/new", path, dir);
    const int rc1 = run_tool(args, out[1], sizeof out[1]);
    const int left1 = dir_entries(dir);
    remove(path);
    char sub[128];
    snprintf(sub, sizeof sub, "%s/new", dir);
    rmdir(sub); /* only if the tool wrongly made it */
    const int removed = rmdir(dir);
    snprintf(want, sizeof want, "tidelock run: %s:2: [sky] seed = '-1': must be an integer from 0 to 4294967295\n",
             path);
    assert_int_equal(rc0, 1);
    assert_string_equal(out[0], want);
    assert_int_equal(left0, 0);
    assert_int_equal(rc1, 1);
    assert_string_equal(out[1], want);
    assert_int_equal(left1, 0);
    assert_int_equal(removed, 0);
}

/* What the INI library underneath would accept silently, the reader
 * rejects (the project's contract: a file means exactly what it says). */
static void test_strict_syntax(void **state)
{
    (void)state;
    tl_scenario s;
    /* inih treats ' ;' as an inline comment and would cut the value */
    expect_error("[scenario]\ndescription = keep this ; lost\n",
                 ":2: ' ;' inside a value would start a comment; remove the ';'");
    /* ';' not after a space is ordinary text, and round-trips */
    expect_loads("[scenario]\ndescription = a;b, c; d\n", &s);
    assert_string_equal(s.description, "a;b, c; d");
    /* inih also accepts ':' as the delimiter */
    expect_error("[instrument]\nchannels: 2048\n", ":2: expected 'key = value', '[section]' or a '#' comment");
    /* text after a section header */
    expect_error("[output] anything here\n", ":1: text after the section header '[output]'");
    expect_loads("[output] # a comment is fine\n", &s);
    /* masks are decimal or 0x hex, never octal */
    expect_loads("[instrument]\nfft_scaling = 010\n", &s);
    assert_int_equal(s.cfg.fft_scale_mask, 10u);
    expect_loads("[instrument]\nfft_scaling = 0x10\n", &s);
    assert_int_equal(s.cfg.fft_scale_mask, 16u);
    /* numbers are decimal: no hexadecimal floating point */
    expect_error("[instrument]\nsample_rate_mhz = 0x50\n",
                 ":2: [instrument] sample_rate_mhz = '0x50': must be a number from 1 to 1000 MHz");
    /* the first error in the file is the one reported */
    expect_error("[instrument\nchannels = 2048\n", ":1: expected 'key = value', '[section]' or a '#' comment");
    /* a section name of any length is checked */
    expect_error("[qqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqq]\n",
                 ":1: [qqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqqq]: unknown section "
                 "(sections: scenario, instrument, integration, sky, interference, fidelity, switching, fit, flagging, downlink, budget, processor, sensitivity, output)");
}

/* Numbers are written so that they read back exactly. */
static void test_reals_round_trip_exactly(void **state)
{
    (void)state;
    tl_scenario a, b;
    char err[ERR_CAP] = "";
    tl_scenario_nominal(&a);
    a.sky.sky_index = 2.123456789012345;
    a.sky.coherence = 0.1 + 0.2; /* not 0.3 in binary */
    char *text = written(&a);
    expect_loads(text, &b);
    assert_true(b.sky.sky_index == a.sky.sky_index);
    assert_true(b.sky.coherence == a.sky.coherence);
    assert_int_equal(tl_scenario_check(&b, NULL, err, sizeof err), 0);
    free(text);
}

/* [switching] and [fit]: ranges and relations (the documented contract in
 * host/scenario.c; the sequence grammar is "off" or "state frames" steps). */
static void test_switching_and_fit_keys(void **state)
{
    (void)state;
    tl_scenario s;
    expect_loads("[switching]\nsequence = antenna 64, load 32, noise 32\ndiscard = 3\n", &s);
    assert_int_equal(s.cfg.switch_steps, 3);
    assert_int_equal(s.cfg.switch_state[1], TL_STATE_LOAD);
    assert_int_equal(s.cfg.switch_dwell[2], 32);
    assert_int_equal(s.cfg.switch_discard, 3);
    expect_loads("[switching]\nsequence = noise 1,antenna 2 , load 1\n", &s);
    assert_int_equal(s.cfg.switch_steps, 3);
    expect_loads("[switching]\nsequence = off\n", &s);
    assert_int_equal(s.cfg.switch_steps, 0);
    const char *range = "must be off, or 1 to 8 steps 'antenna|load|noise FRAMES' (1 to 16777216) separated by commas";
    char want[400];
    snprintf(want, sizeof want, ":2: [switching] sequence = 'antenna 0, load 1, noise 1': %s", range);
    expect_error("[switching]\nsequence = antenna 0, load 1, noise 1\n", want);
    snprintf(want, sizeof want, ":2: [switching] sequence = 'sky 4, load 1, noise 1': %s", range);
    expect_error("[switching]\nsequence = sky 4, load 1, noise 1\n", want);
    snprintf(want, sizeof want, ":2: [switching] sequence = 'antenna 4; load 1': %s", range);
    expect_error("[switching]\nsequence = antenna 4; load 1\n", want);
    snprintf(want, sizeof want,
             ":2: [switching] sequence = 'antenna 1, load 1, noise 1, antenna 1, load 1, noise 1, antenna 1, load "
             "1, noise 1': %s",
             range);
    expect_error("[switching]\nsequence = antenna 1, load 1, noise 1, antenna 1, load 1, noise 1, antenna 1, "
                 "load 1, noise 1\n",
                 want);
    /* relations */
    expect_error("[switching]\nsequence = antenna 64, load 32\n",
                 ":2: [switching] sequence = 'antenna 64, load 32': must visit antenna, load and noise "
                 "(calibration needs all three)");
    expect_error("[switching]\nsequence = antenna 64, load 32, noise 32\ndiscard = 32\n",
                 ":3: [switching] discard = '32': must be below the shortest dwell, 32 frames");
    expect_error("[switching]\ndiscard = 2\n", ":2: [switching] discard = '2': must be 0 when the sequence is off");
    expect_error("[switching]\nsequence = antenna 4000, load 100, noise 100\n",
                 ": [integration] spectra = '4096' (default): must cover a whole switch cycle: at least 4204 spectra");
    /* temperatures and the fit order */
    expect_loads("[switching]\nload_k = 1\nnoise_excess_k = 10000000\n[fit]\nforeground_order = 8\n", &s);
    assert_true(s.sky.load_k == 1.0 && s.sky.noise_excess_k == 1e7 && s.fit_order == 8);
    expect_error("[switching]\nload_k = 0\n", ":2: [switching] load_k = '0': must be a number from 1 to 10000 K");
    expect_error("[fit]\nforeground_order = 9\n", ":2: [fit] foreground_order = '9': must be an integer from 1 to 8");
}

/* [interference] lists: one power per carrier, below Nyquist, at most 4. */
static void test_interference_lists(void **state)
{
    (void)state;
    tl_scenario s;
    expect_loads("[interference]\ncarrier_mhz = 10, 20.5\ncarrier_dbfs = -30, -40\nburst_mhz = 51.1\n", &s);
    expect_error("[interference]\ncarrier_mhz = 10, 20\ncarrier_dbfs = -30\n",
                 ":3: [interference] carrier_dbfs = '-30': must give one power per carrier: 2 for carrier_mhz");
    expect_error("[interference]\ncarrier_mhz = 60\ncarrier_dbfs = -30\n",
                 ":2: [interference] carrier_mhz = '60': every carrier must be below half the sample rate, 51.2 MHz");
    expect_error("[interference]\ncarrier_mhz = 1,2,3,4,5\n",
                 ":2: [interference] carrier_mhz = '1,2,3,4,5': must be none, or 1 to 4 comma-separated numbers from "
                 "0.001 to 1000 MHz");
    expect_error("[interference]\ncarrier_mhz = abc\n",
                 ":2: [interference] carrier_mhz = 'abc': must be none, or 1 to 4 comma-separated numbers from 0.001 "
                 "to 1000 MHz");
    expect_error("[interference]\nburst_mhz = 60\n",
                 ":2: [interference] burst_mhz = '60': must be below half the sample rate, 51.2 MHz (or 0 for none)");
}

/* The scenarios shipped under docs/ stay valid as the keys evolve. */
static void test_shipped_scenarios_load(void **state)
{
    (void)state;
    const char *files[] = { "docs/scenario-default.ini", "docs/scenario-ground.ini", "docs/scenario-nominal.ini" };
    for (size_t i = 0; i < sizeof files / sizeof files[0]; i++) {
        tl_scenario s;
        char err[ERR_CAP] = "";
        tl_scenario_default(&s);
        if (tl_scenario_load(files[i], &s, err, sizeof err) != 0)
            fail_msg("%s does not load: %s", files[i], err);
        if (i < 2) { /* the default and the ground example switch and carry a trough */
            assert_int_equal(s.cfg.switch_steps, 3);
            assert_true(s.sky.trough_depth_k > 0.0);
        } else { /* the chain-fidelity file is exactly tl_scenario_nominal */
            tl_scenario nom;
            tl_scenario_nominal(&nom);
            assert_scenario_equal(&s, &nom, files[i]);
        }
    }
}

int main(int argc, char **argv)
{
    (void)argc;
    snprintf(argv0, sizeof argv0, "%s", argv[0]);
    char self[4096];
    snprintf(self, sizeof self, "%s", argv[0]);
    snprintf(tool, sizeof tool, "%s/tidelock", dirname(self));
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_default_file_matches_writer),
        cmocka_unit_test(test_default_file_loads_as_default),
        cmocka_unit_test(test_round_trip_every_key),
        cmocka_unit_test(test_every_key_range_ends),
        cmocka_unit_test(test_documented_ends_no_file_reaches),
        cmocka_unit_test(test_choices_booleans_auto),
        cmocka_unit_test(test_text_keys),
        cmocka_unit_test(test_malformed_files),
        cmocka_unit_test(test_empty_and_comment_files_are_default),
        cmocka_unit_test(test_bom),
        cmocka_unit_test(test_crlf),
        cmocka_unit_test(test_missing_file),
        cmocka_unit_test(test_small_error_buffer),
        cmocka_unit_test(test_line_length_limit),
        cmocka_unit_test(test_first_error_is_reported),
        cmocka_unit_test(test_long_unknown_section),
        cmocka_unit_test(test_check_struct),
        cmocka_unit_test(test_strict_syntax),
        cmocka_unit_test(test_switching_and_fit_keys),
        cmocka_unit_test(test_interference_lists),
        cmocka_unit_test(test_shipped_scenarios_load),
        cmocka_unit_test(test_reals_round_trip_exactly),
        cmocka_unit_test(test_cli_check_bad_file),
        cmocka_unit_test(test_cli_print_is_default_file),
        cmocka_unit_test(test_cli_run_bad_file_writes_nothing),
    };
    return cmocka_run_group_tests_name("scenario", tests, NULL, NULL);
}
