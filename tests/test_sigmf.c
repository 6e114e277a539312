/*
 * test_sigmf.c - SigMF recordings: `tidelock simulate` writes a recording
 * that validates against the SigMF core specification v1.2.x, `tidelock
 * replay` of it gives byte-identical spectra to `tidelock run` of the same
 * scenario, every bad recording gets one error line and exit 1 with nothing
 * written, replay streams a recording larger than the process's address
 * space limit with the same result as a small-block run, and the ri8,
 * rf32_le, ri16_le and ci16_le readers give the documented values on small
 * handmade recordings.
 *
 * Sources: SigMF core specification v1.2.x (github.com/sigmf/SigMF: the
 * spec text "SigMF Dataset Format" ABNF and the v1.2 JSON schema;
 * ../shared/sources.md "SigMF core specification" [doc]); IEEE 754 binary32
 * for rf32_le; A. V. Oppenheim and R. W. Schafer, Discrete-Time Signal
 * Processing, 2nd ed., Table 7.2 (Blackman window: peak approximation error
 * -74 dB) [memory]; the complex-baseband convention z = I + jQ with positive
 * frequencies e^(+j w n) (common practice, no source).
 */
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <jansson.h>
#include <libgen.h>
#include <math.h>
#include <regex.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "scenario.h"
#include "sigmf.h"
#include "sky_noise.h"
#include "tl_test.h"

#if defined(__SANITIZE_ADDRESS__)
#define TL_ASAN 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
#define TL_ASAN 1
#endif
#endif
#ifndef TL_ASAN
#define TL_ASAN 0
#endif

static char argv0[4096];

/* ---- helpers ------------------------------------------------------------------- */

static int run(const char *args, char *out, size_t cap)
{
    return tl_test_tool(argv0, args, out, cap);
}


static void write_file(const char *path, const void *bytes, size_t n)
{
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(bytes, 1, n, f), n);
    assert_int_equal(fclose(f), 0);
}

static void write_text(const char *path, const char *text)
{
    write_file(path, text, strlen(text));
}

static unsigned char *read_all(const char *path, size_t *n)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        fail_msg("cannot open %s", path);
    fseek(f, 0, SEEK_END);
    const long len = ftell(f);
    fseek(f, 0, SEEK_SET);
    unsigned char *b = malloc((size_t)len + 1u);
    assert_non_null(b);
    assert_int_equal(fread(b, 1, (size_t)len, f), (size_t)len);
    fclose(f);
    *n = (size_t)len;
    return b;
}

static long long file_size(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0 ? (long long)st.st_size : -1;
}

static void assert_same_file(const char *a, const char *b)
{
    size_t na = 0, nb = 0;
    unsigned char *x = read_all(a, &na), *y = read_all(b, &nb);
    if (na != nb || memcmp(x, y, na) != 0)
        fail_msg("%s and %s differ (%zu and %zu bytes)", a, b, na, nb);
    free(x);
    free(y);
}

static int count_files(const char *dir)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return -1;
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        n += e->d_name[0] != '.';
    closedir(d);
    return n;
}

static void rm_rf(const char *dir)
{
    char cmd[4200];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    assert_int_equal(system(cmd), 0);
}

/* Drop every "seconds" member (wall time) from a JSON tree. */
static void drop_seconds(json_t *j)
{
    if (json_is_object(j)) {
        json_object_del(j, "seconds");
        const char *k;
        json_t *v;
        json_object_foreach(j, k, v) drop_seconds(v);
    }
}

static void assert_same_summary(const char *a, const char *b)
{
    json_error_t e;
    json_t *x = json_load_file(a, 0, &e), *y = json_load_file(b, 0, &e);
    assert_non_null(x);
    assert_non_null(y);
    drop_seconds(x);
    drop_seconds(y);
    if (!json_equal(x, y))
        fail_msg("%s and %s differ beyond the wall time", a, b);
    json_decref(x);
    json_decref(y);
}

static json_int_t summary_int(const char *path, const char *obj, const char *key)
{
    json_error_t e;
    json_t *j = json_load_file(path, 0, &e);
    assert_non_null(j);
    const json_t *o = json_object_get(j, obj);
    /* counters: an object of arrays or values; find key anywhere one level down */
    json_int_t v = -1;
    if (json_object_get(o, key) != NULL) {
        v = json_integer_value(json_object_get(o, key));
    } else {
        const char *k;
        json_t *sub;
        json_object_foreach((json_t *)o, k, sub) {
            if (json_is_array(sub) && json_array_size(sub) > 0 && json_object_get(json_array_get(sub, 0), key))
                v = json_integer_value(json_object_get(json_array_get(sub, 0), key));
        }
    }
    json_decref(j);
    return v;
}

/* A small scenario: 256 channels, 1024 spectra in 16 blocks, antenna only, +6 dB so the
 * ADC clips a few dozen samples (the counts are compared too). */
static const char *const small_ini = "[instrument]\nchannels = 256\n[integration]\nspectra = 1024\n"
                                     "[sky]\ndrive_db = 6\n[fidelity]\nblocks = 16\n[switching]\nsequence = off\ndiscard = 0\n"
                                     "[output]\ncsv = true\nnpy = true\n";

/* ---- datatype grammar ---------------------------------------------------------- */

/* Every string of prefix x component x suffix against the ABNF of SigMF
 * v1.2.x "SigMF Dataset Format": exactly the 28 core datatypes parse
 * (2 x (6 x 2 + 2) = 28, computed from the grammar), with their sizes. */
static void test_datatype_grammar(void **state)
{
    (void)state;
    const char *comp[] = { "f32", "f64", "i32", "i16", "u32", "u16", "i8", "u8" };
    const unsigned bytes[] = { 4, 8, 4, 2, 4, 2, 1, 1 };
    const char *suffix[] = { "", "_le", "_be" };
    int valid = 0;
    for (int p = 0; p < 2; p++)
        for (int c = 0; c < 8; c++)
            for (int s = 0; s < 3; s++) {
                char dt[16];
                snprintf(dt, sizeof dt, "%c%s%s", "rc"[p], comp[c], suffix[s]);
                const int byte = c >= 6; /* i8, u8 take no endianness */
                const int want = byte ? s == 0 : s != 0;
                int cx = -1;
                unsigned b = 0;
                const int got = tl_sigmf_datatype_parse(dt, &cx, &b);
                if (got != want)
                    fail_msg("%s: parse %d, grammar says %d", dt, got, want);
                if (got) {
                    assert_int_equal(cx, p);
                    assert_int_equal(b, bytes[c]);
                    valid++;
                }
            }
    assert_int_equal(valid, 28);
    const char *bad[] = { "", "xyz", "ri16", "ri8_le", "cf16_le", "rf32_LE", "Rf32_le", "ri16_le ", "ri16_lex",
                          "i16_le", "rr16_le", "cu8_be" };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
        if (tl_sigmf_datatype_parse(bad[i], NULL, NULL))
            fail_msg("'%s' parsed as a SigMF datatype", bad[i]);
}

/* ---- the written meta ------------------------------------------------------------ */

static void check_names(const json_t *obj, const regex_t *re)
{
    const char *k;
    json_t *v;
    json_object_foreach((json_t *)obj, k, v) {
        if (regexec(re, k, 0, NULL, 0) != 0)
            fail_msg("field name '%s' is not namespace:name (SigMF 1.2)", k);
    }
}

/* simulate writes a meta that a plain JSON parser finds complete and valid
 * by the core specification, and data that are the generator's samples,
 * interleaved, little-endian. */
static void test_meta_written_validates(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_sigmf_meta_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char ini[300], args[1024], out[8192], meta[300], data[300];
    snprintf(ini, sizeof ini, "%s/s.ini", dir);
    write_text(ini, small_ini);
    snprintf(args, sizeof args, "simulate %s -o %s/rec", ini, dir);
    const int rc = run(args, out, sizeof out);
    printf("    %s", out);
    assert_int_equal(rc, 0);
    snprintf(meta, sizeof meta, "%s/rec.sigmf-meta", dir);
    snprintf(data, sizeof data, "%s/rec.sigmf-data", dir);
    assert_int_equal(count_files(dir), 3); /* s.ini and the two files: no staging file left */

    json_error_t je;
    json_t *root = json_load_file(meta, JSON_REJECT_DUPLICATES, &je);
    if (root == NULL)
        fail_msg("%s:%d: %s", meta, je.line, je.text);
    /* SigMF 1.2: the top level holds exactly global, captures, annotations */
    assert_int_equal(json_object_size(root), 3);
    const json_t *g = json_object_get(root, "global"), *caps = json_object_get(root, "captures"),
                 *anns = json_object_get(root, "annotations");
    assert_true(json_is_object(g));
    assert_true(json_is_array(caps));
    assert_true(json_is_array(anns));
    /* required global fields; datatype by the ABNF written as a regular expression */
    regex_t dt_re, ver_re, name_re;
    assert_int_equal(regcomp(&dt_re, "^[rc]((f32|f64|i32|i16|u32|u16)_(le|be)|i8|u8)$", REG_EXTENDED | REG_NOSUB), 0);
    assert_int_equal(regcomp(&ver_re, "^1\\.2\\.[0-9]+$", REG_EXTENDED | REG_NOSUB), 0);
    assert_int_equal(regcomp(&name_re, "^[A-Za-z_][A-Za-z0-9_]*:[A-Za-z_][A-Za-z0-9_]*$", REG_EXTENDED | REG_NOSUB),
                     0);
    const char *dt = json_string_value(json_object_get(g, "core:datatype"));
    const char *ver = json_string_value(json_object_get(g, "core:version"));
    assert_non_null(dt);
    assert_non_null(ver);
    assert_string_equal(dt, "ri16_le");
    assert_int_equal(regexec(&dt_re, dt, 0, NULL, 0), 0);
    assert_int_equal(regexec(&ver_re, ver, 0, NULL, 0), 0);
    printf("    core:datatype %s, core:version %s\n", dt, ver);
    check_names(g, &name_re);
    TL_ASSERT_NEAR(json_number_value(json_object_get(g, "core:sample_rate")), 102.4e6, 0.0);
    assert_int_equal(json_integer_value(json_object_get(g, "core:num_channels")), 2);
    /* our namespace is listed as an optional extension (SigMF 1.2 core:extensions) */
    const json_t *ext = json_array_get(json_object_get(g, "core:extensions"), 0);
    assert_string_equal(json_string_value(json_object_get(ext, "name")), "tidelock");
    assert_true(json_is_true(json_object_get(ext, "optional")));
    assert_int_equal(json_object_size(ext), 3);
    /* captures [{core:sample_start 0}], annotations [] */
    assert_int_equal(json_array_size(caps), 1);
    check_names(json_array_get(caps, 0), &name_re);
    assert_true(json_is_integer(json_object_get(json_array_get(caps, 0), "core:sample_start")));
    assert_int_equal(json_integer_value(json_object_get(json_array_get(caps, 0), "core:sample_start")), 0);
    assert_int_equal(json_array_size(anns), 0);
    /* our fields: samples = (taps - 1 + spectra) x points = (4 - 1 + 1024) x 512 */
    const json_int_t samples = json_integer_value(json_object_get(g, "tidelock:samples"));
    assert_int_equal(samples, (4 - 1 + 1024) * 512);
    assert_int_equal(json_integer_value(json_object_get(g, "tidelock:adc_bits")), 14);
    assert_int_equal(json_integer_value(json_object_get(g, "tidelock:seed")), 1);
    const char *scen = json_string_value(json_object_get(g, "tidelock:scenario"));
    assert_non_null(scen);
    assert_non_null(strstr(scen, "\nchannels = 256\n"));
    assert_non_null(strstr(scen, "\ndrive_db = 6\n"));
    const json_t *model_sky = json_object_get(json_object_get(g, "tidelock:model"), "sky");
    assert_true(json_is_object(model_sky));
    TL_ASSERT_NEAR(json_number_value(json_object_get(model_sky, "drive_db")), 6.0, 0.0);
    /* data size: samples x 2 channels x 2 bytes */
    assert_int_equal(file_size(data), samples * 4);

    /* the data are the generator's samples, input 0 and 1 interleaved,
     * little-endian (SigMF 1.2: channels interleaved, same index serially) */
    tl_scenario s;
    tl_scenario_default(&s);
    char err[1024];
    assert_int_equal(tl_scenario_load(ini, &s, err, sizeof err), 0);
    tl_sky_params sp = s.sky;
    sp.rms_fs *= pow(10.0, s.drive_db / 20.0);
    sp.adc_bits = s.cfg.adc_bits;
    sp.inputs = s.cfg.inputs;
    tl_sky *sky = tl_sky_open(&sp);
    assert_non_null(sky);
    enum { K = 8192 };
    int16_t *a = malloc(sizeof(int16_t) * K), *b = malloc(sizeof(int16_t) * K);
    tl_sky_fill(sky, a, b, K);
    tl_sky_close(sky);
    size_t n = 0;
    unsigned char *bytes = read_all(data, &n);
    for (size_t i = 0; i < K; i++) {
        const int v0 = (int16_t)(uint16_t)(bytes[4 * i] | (bytes[4 * i + 1] << 8));
        const int v1 = (int16_t)(uint16_t)(bytes[4 * i + 2] | (bytes[4 * i + 3] << 8));
        if (v0 != a[i] || v1 != b[i])
            fail_msg("sample %zu: data %d %d, generator %d %d", i, v0, v1, a[i], b[i]);
    }
    /* every value is a 14-bit code left-aligned (low 2 bits zero) */
    for (size_t i = 0; i < n; i += 2)
        assert_int_equal(bytes[i] & 3u, 0);
    free(bytes);
    free(a);
    free(b);

    /* and our own reader agrees */
    tl_sigmf_reader *r = tl_sigmf_open(meta, 0, err, sizeof err);
    if (r == NULL)
        fail_msg("%s", err);
    const tl_sigmf_info *in = tl_sigmf_info_of(r);
    assert_int_equal(in->channels, 2);
    assert_int_equal(in->samples, (uint64_t)samples);
    assert_int_equal(in->adc_bits, 14);
    tl_sigmf_close(r);
    regfree(&dt_re);
    regfree(&ver_re);
    regfree(&name_re);
    json_decref(root);
    rm_rf(dir);
}

/* ---- round trip ---------------------------------------------------------------- */

/* simulate then replay = run of the same scenario, byte for byte: the
 * integrated spectra (.npy and CSV), the summary (all but wall time), the
 * resolved scenario; also with the scenario the recording carries. */
static void round_trip(const char *ini_text, json_int_t *clips, json_int_t *gen, int *has_cal)
{
    char dir[] = "/tmp/tl_sigmf_rt_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char ini[300], args[2048], out[16384], a[400], b[400];
    snprintf(ini, sizeof ini, "%s/s.ini", dir);
    /* [processor] model = false: a replay processes every recorded sample (no
     * processor-speed model, docs/acquisition.md), so the direct run it must
     * equal runs without the model too (the model adds its capture-block
     * counts to the housekeeping and an acquisition object to the summary) */
    char text[4096];
    snprintf(text, sizeof text, "%s[processor]\nmodel = false\n", ini_text);
    write_text(ini, text);
    snprintf(args, sizeof args, "run %s -q -o %s/direct", ini, dir);
    assert_int_equal(run(args, out, sizeof out), 0);
    snprintf(args, sizeof args, "simulate %s -q -o %s/rec", ini, dir);
    assert_int_equal(run(args, out, sizeof out), 0);
    snprintf(args, sizeof args, "replay %s/rec.sigmf-meta %s -o %s/replayed", dir, ini, dir);
    assert_int_equal(run(args, out, sizeof out), 0);
    assert_non_null(strstr(out, "verdict: PASS"));
    assert_non_null(strstr(out, "replay: "));
    snprintf(args, sizeof args, "replay %s/rec -q -o %s/carried", dir, dir); /* the scenario in the meta */
    assert_int_equal(run(args, out, sizeof out), 0);
    assert_string_equal(out, "");
    const char *files[] = { "auto0.npy", "auto1.npy", "cross.npy", "flags.npy", "frequency_mhz.npy",
                            "auto0.csv", "auto1.csv", "cross.csv", "scenario.ini" };
    for (size_t i = 0; i < sizeof files / sizeof files[0]; i++) {
        snprintf(a, sizeof a, "%s/direct/%s", dir, files[i]);
        snprintf(b, sizeof b, "%s/replayed/%s", dir, files[i]);
        assert_same_file(a, b);
        snprintf(b, sizeof b, "%s/carried/%s", dir, files[i]);
        assert_same_file(a, b);
    }
    snprintf(a, sizeof a, "%s/direct/summary.json", dir);
    snprintf(b, sizeof b, "%s/replayed/summary.json", dir);
    assert_same_summary(a, b);
    *clips = summary_int(b, "counters", "adc_clips");
    *gen = summary_int(b, "counters", "generator_clips");
    json_error_t je;
    json_t *j = json_load_file(b, 0, &je);
    assert_non_null(j);
    *has_cal = json_object_get(j, "calibration") != NULL;
    json_decref(j);
    rm_rf(dir);
}

/* At +6 dB the ADC clips a few dozen samples: the replay counts the
 * recording's rail codes as the generator's count, and both equal the
 * firmware's. With the calibration switch sequence the recording follows
 * the states frame by frame as run does, so the calibrated spectra in the
 * summary are equal too. */
static void test_round_trip_equals_run(void **state)
{
    (void)state;
    json_int_t clips = -1, gen = -2;
    int has_cal = -1;
    round_trip(small_ini, &clips, &gen, &has_cal);
    assert_int_equal(has_cal, 0);
    printf("    ADC clips input 0: firmware %lld, recording %lld\n", (long long)clips, (long long)gen);
    assert_true(clips > 0);
    assert_int_equal(clips, gen);
    round_trip("[instrument]\nchannels = 256\n[integration]\nspectra = 1024\n[fidelity]\nblocks = 16\n"
               "[switching]\nsequence = antenna 64, load 32, noise 32\ndiscard = 3\n[output]\ncsv = true\n",
               &clips, &gen, &has_cal);
    assert_int_equal(has_cal, 1);
    printf("    with switching (antenna 64, load 32, noise 32 frames): identical, calibration included\n");
}

/* ---- bad recordings --------------------------------------------------------------- */

typedef void (*edit_fn)(json_t *root);

static void set_datatype(json_t *root, const char *dt)
{
    json_object_set_new(json_object_get(root, "global"), "core:datatype", json_string(dt));
}
static void edit_cu8(json_t *root) { set_datatype(root, "cu8"); }
static void edit_rf64_be(json_t *root) { set_datatype(root, "rf64_be"); }
static void edit_xyz(json_t *root) { set_datatype(root, "xyz"); }
static void edit_no_version(json_t *root) { json_object_del(json_object_get(root, "global"), "core:version"); }
static void edit_no_datatype(json_t *root) { json_object_del(json_object_get(root, "global"), "core:datatype"); }
static void edit_no_captures(json_t *root) { json_object_del(root, "captures"); }
static void edit_version2(json_t *root)
{
    json_object_set_new(json_object_get(root, "global"), "core:version", json_string("2.0.0"));
}
static void edit_version_short(json_t *root)
{
    json_object_set_new(json_object_get(root, "global"), "core:version", json_string("1.2"));
}
static void edit_required_extension(json_t *root)
{
    json_array_append_new(json_object_get(json_object_get(root, "global"), "core:extensions"),
                          json_pack("{s:s, s:s, s:b}", "name", "antenna", "version", "1.0.0", "optional", 0));
}
static void edit_typo(json_t *root)
{
    json_object_set_new(json_object_get(root, "global"), "core:samplerate", json_real(1e6));
}
static void edit_capture_no_start(json_t *root)
{
    json_object_del(json_array_get(json_object_get(root, "captures"), 0), "core:sample_start");
}
static void edit_samples_less(json_t *root)
{
    json_t *g = json_object_get(root, "global");
    const json_int_t n = json_integer_value(json_object_get(g, "tidelock:samples"));
    json_object_set_new(g, "tidelock:samples", json_integer(n - 1));
}
static void edit_three_channels(json_t *root)
{
    json_t *g = json_object_get(root, "global");
    json_object_set_new(g, "core:num_channels", json_integer(3));
    json_object_del(g, "tidelock:samples");
}
/* a bench-style meta: no tidelock fields, an annotation past the end */
static void edit_annotation_past_end(json_t *root)
{
    json_t *g = json_object_get(root, "global");
    const json_int_t n = json_integer_value(json_object_get(g, "tidelock:samples"));
    json_object_del(g, "tidelock:samples");
    json_array_append_new(json_object_get(root, "annotations"),
                          json_pack("{s:I, s:I, s:s}", "core:sample_start", (json_int_t)1000, "core:sample_count",
                                    n, "core:label", "whole"));
}

/* Make DIR/NAME.sigmf-meta from the good recording through edit, and a copy
 * of its data cut by `cut` bytes. */
static void variant(const char *dir, const char *name, edit_fn edit, long cut)
{
    char path[600];
    snprintf(path, sizeof path, "%s/rec.sigmf-meta", dir);
    json_error_t je;
    json_t *root = json_load_file(path, 0, &je);
    assert_non_null(root);
    if (edit != NULL)
        edit(root);
    snprintf(path, sizeof path, "%s/%s.sigmf-meta", dir, name);
    assert_int_equal(json_dump_file(root, path, JSON_INDENT(1)), 0);
    json_decref(root);
    char src[600];
    size_t n = 0;
    snprintf(src, sizeof src, "%s/rec.sigmf-data", dir);
    unsigned char *bytes = read_all(src, &n);
    snprintf(path, sizeof path, "%s/%s.sigmf-data", dir, name);
    write_file(path, bytes, n - (size_t)cut);
    free(bytes);
}

/* One line, exit 1, every expected piece in it, and nothing written: the
 * output folder is not created and no file appears next to the recording. */
static void expect_refused(const char *dir, const char *args, const char *const *pieces)
{
    char out[8192], outdir[600], cmd[2048];
    snprintf(outdir, sizeof outdir, "%s/never", dir);
    const int before = count_files(dir);
    snprintf(cmd, sizeof cmd, "%s -o %s", args, outdir);
    const int rc = run(cmd, out, sizeof out);
    printf("    tidelock %.60s... -> %d: %s", args, rc, out);
    assert_int_equal(rc, 1);
    assert_int_equal(tl_test_lines(out), 1);
    for (; *pieces != NULL; pieces++)
        if (strstr(out, *pieces) == NULL)
            fail_msg("message '%s' does not name '%s'", out, *pieces);
    assert_int_equal(count_files(outdir), -1); /* no output folder */
    assert_int_equal(count_files(dir), before);
}

static void test_bad_recordings_refused(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_sigmf_bad_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char ini[300], args[2048], out[8192];
    snprintf(ini, sizeof ini, "%s/s.ini", dir);
    write_text(ini, small_ini);
    snprintf(args, sizeof args, "simulate %s -q -o %s/rec", ini, dir);
    assert_int_equal(run(args, out, sizeof out), 0);
    const long long n = (4 - 1 + 1024) * 512; /* samples per channel */
    char nbuf[64], nm1[64], bytes_m1[64];
    snprintf(nbuf, sizeof nbuf, "%lld", n);
    snprintf(nm1, sizeof nm1, "%lld", n - 1);
    snprintf(bytes_m1, sizeof bytes_m1, "%lld", 4 * n - 1);
    static const struct {
        const char *name;
        edit_fn edit;
        long cut;
        const char *pieces[6];
    } cases[] = {
        { "truncated", NULL, 4, { "truncated", "tidelock:samples", "samples per channel", NULL } },
        { "oddsize", NULL, 1, { "not a multiple of 4", "2 channels", NULL } },
        { "cu8", edit_cu8, 0, { "core:datatype", "'cu8'", "not supported", TL_SIGMF_SUPPORTED, NULL } },
        { "rf64be", edit_rf64_be, 0, { "core:datatype", "'rf64_be'", "not supported", TL_SIGMF_SUPPORTED, NULL } },
        { "xyz", edit_xyz, 0, { "core:datatype", "'xyz'", "not a SigMF datatype", TL_SIGMF_SUPPORTED, NULL } },
        { "noversion", edit_no_version, 0, { "required field core:version is missing", NULL } },
        { "nodatatype", edit_no_datatype, 0, { "required field core:datatype is missing", NULL } },
        { "nocaptures", edit_no_captures, 0, { "required top-level field captures is missing", NULL } },
        { "capnostart", edit_capture_no_start, 0, { "captures[0]", "core:sample_start is missing", NULL } },
        { "version2", edit_version2, 0, { "core:version", "'2.0.0'", "1.Y.Z", NULL } },
        { "version12", edit_version_short, 0, { "core:version", "'1.2'", "X.Y.Z", NULL } },
        { "needsext", edit_required_extension, 0, { "core:extensions[1]", "'antenna'", "does not support", NULL } },
        { "typo", edit_typo, 0, { "core:samplerate", "core namespace", NULL } },
        { "longer", edit_samples_less, 0, { "longer than stated", "tidelock:samples", NULL } },
        { "threech", edit_three_channels, 0, { "not a multiple of 6", "3 channels", NULL } },
        { "annotated", edit_annotation_past_end, 4, { "truncated", "annotations", NULL } },
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        variant(dir, cases[i].name, cases[i].edit, cases[i].cut);
        snprintf(args, sizeof args, "replay %s/%s.sigmf-meta %s", dir, cases[i].name, ini);
        expect_refused(dir, args, cases[i].pieces);
    }
    /* the sizes in the two size messages */
    {
        snprintf(args, sizeof args, "replay %s/truncated.sigmf-meta", dir);
        const char *p[] = { nm1, nbuf, NULL };
        expect_refused(dir, args, p);
        snprintf(args, sizeof args, "replay %s/oddsize.sigmf-meta", dir);
        const char *q[] = { bytes_m1, NULL };
        expect_refused(dir, args, q);
    }
    /* malformed JSON: the meta cut in the middle; line and column named */
    {
        char path[600];
        size_t len = 0;
        snprintf(path, sizeof path, "%s/rec.sigmf-meta", dir);
        unsigned char *m = read_all(path, &len);
        snprintf(path, sizeof path, "%s/cut.sigmf-meta", dir);
        write_file(path, m, 300);
        free(m);
        variant(dir, "cutdata", NULL, 0);
        snprintf(path, sizeof path, "mv %s/cutdata.sigmf-data %s/cut.sigmf-data && rm %s/cutdata.sigmf-meta", dir,
                 dir, dir);
        assert_int_equal(system(path), 0);
        snprintf(args, sizeof args, "replay %s/cut.sigmf-meta", dir);
        const char *p[] = { "cut.sigmf-meta:", "not valid JSON", NULL };
        expect_refused(dir, args, p);
    }
    /* the scenario does not fit the recording */
    {
        char ini2[300];
        snprintf(ini2, sizeof ini2, "%s/long.ini", dir);
        write_text(ini2, "[instrument]\nchannels = 256\n[integration]\nspectra = 2048\n[fidelity]\nblocks = 16\n");
        snprintf(args, sizeof args, "replay %s/rec.sigmf-meta %s", dir, ini2);
        /* needs (4 - 1 + 2048) x 512 = 1050112 samples, has 525824 */
        const char *p[] = { "525824 samples per channel", "1050112", "(taps - 1 + spectra) x points", NULL };
        expect_refused(dir, args, p);
        snprintf(ini2, sizeof ini2, "%s/rate.ini", dir);
        write_text(ini2, "[instrument]\nchannels = 256\nsample_rate_mhz = 51.2\n[integration]\nspectra = 1024\n"
                         "[fidelity]\nblocks = 16\nband_high_mhz = 25\n");
        snprintf(args, sizeof args, "replay %s/rec.sigmf-meta %s", dir, ini2);
        const char *q[] = { "core:sample_rate = 102400000", "sample_rate_mhz = 51.2", NULL };
        expect_refused(dir, args, q);
        snprintf(ini2, sizeof ini2, "%s/one.ini", dir);
        write_text(ini2, "[instrument]\nchannels = 256\ninputs = 1\n[integration]\nspectra = 1024\n"
                         "[fidelity]\nblocks = 16\n");
        snprintf(args, sizeof args, "replay %s/rec.sigmf-meta %s", dir, ini2);
        const char *r[] = { "core:num_channels = 2", "inputs = 1", NULL };
        expect_refused(dir, args, r);
    }
    /* simulate into a missing folder: one line naming the file, nothing left */
    {
        snprintf(args, sizeof args, "simulate %s -o %s/missing/rec", ini, dir);
        const int before = count_files(dir);
        const int rc = run(args, out, sizeof out);
        printf("    tidelock simulate ... -> %d: %s", rc, out);
        assert_int_equal(rc, 1);
        assert_int_equal(tl_test_lines(out), 1);
        assert_non_null(strstr(out, "missing/rec.sigmf-data"));
        assert_int_equal(count_files(dir), before);
    }
    rm_rf(dir);
}

/* ---- command line -------------------------------------------------------------------- */

static void test_help_and_usage(void **state)
{
    (void)state;
    const char *helps[] = { "simulate --help", "replay --help", "help simulate", "help replay", "replay -h" };
    char out[8192];
    for (size_t i = 0; i < sizeof helps / sizeof helps[0]; i++) {
        assert_int_equal(run(helps[i], out, sizeof out), 0);
        assert_non_null(strstr(out, "usage: tidelock "));
        assert_non_null(strstr(out, "options:"));
        if (strstr(out, "example: tidelock") == NULL)
            fail_msg("'tidelock %s' shows no example", helps[i]);
    }
    assert_int_equal(run("--help", out, sizeof out), 0);
    assert_non_null(strstr(out, "  simulate  "));
    assert_non_null(strstr(out, "  replay    "));
    const struct {
        const char *args, *piece;
    } bad[] = { { "simulate", "-o NAME" },
                { "simulate -o x --spectra 0", "from 1 to 16777216" },
                { "simulate -o x --spectra 99999999", "'99999999'" },
                { "simulate -o x --spectra 1000", "multiple of [fidelity] blocks" },
                { "simulate -o x --drive 13", "from -40 to 12" },
                { "simulate a.ini b.ini -o x", "at most one scenario file" },
                { "replay", "RECORDING.sigmf-meta" },
                { "replay a b c", "at most one scenario file" },
                { "replay a --block-kib 3", "from 4 to 65536" },
                { "replay a --bogus", "unknown option '--bogus'" } };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        const int rc = run(bad[i].args, out, sizeof out);
        printf("    tidelock %s -> %d: %s", bad[i].args, rc, out);
        assert_int_equal(rc, 2);
        assert_int_equal(tl_test_lines(out), 1);
        if (strstr(out, bad[i].piece) == NULL)
            fail_msg("message '%s' does not name '%s'", out, bad[i].piece);
    }
    const int rc = run("replay /nonexistent/r.sigmf-meta", out, sizeof out);
    assert_int_equal(rc, 1);
    assert_int_equal(tl_test_lines(out), 1);
    assert_non_null(strstr(out, "/nonexistent/r.sigmf-meta: cannot open"));
}

/* ---- streaming ----------------------------------------------------------------------- */

/* Run the tool with args under an address-space limit (0: none), output to
 * log. Returns the exit status; the child's peak RSS (wait4) and the last
 * VmPeak seen in /proc while it ran, in kB. */
static int spawn(const char *const *args, unsigned long long limit, const char *log, long *maxrss_kb,
                 long *vmpeak_kb)
{
    char self[4096], tool[4200];
    snprintf(self, sizeof self, "%s", argv0);
    snprintf(tool, sizeof tool, "%s/tidelock", dirname(self));
    char *av[16];
    int n = 0;
    av[n++] = tool;
    for (; *args != NULL && n < 15; args++)
        av[n++] = (char *)*args;
    av[n] = NULL;
    const pid_t pid = fork();
    assert_true(pid >= 0);
    if (pid == 0) {
        const int fd = open(log, O_WRONLY | O_CREAT | O_TRUNC, 0644);
        if (fd < 0 || dup2(fd, 1) < 0 || dup2(fd, 2) < 0)
            _exit(126);
        if (limit > 0) {
            struct rlimit rl = { (rlim_t)limit, (rlim_t)limit };
            if (setrlimit(RLIMIT_AS, &rl) != 0)
                _exit(125);
        }
        execv(tool, av);
        _exit(127);
    }
    long peak = 0;
    int st = 0;
    struct rusage ru;
    for (;;) {
        const pid_t w = wait4(pid, &st, WNOHANG, &ru);
        if (w == pid)
            break;
        char path[64], line[256];
        snprintf(path, sizeof path, "/proc/%d/status", (int)pid);
        FILE *f = fopen(path, "r");
        while (f != NULL && fgets(line, sizeof line, f) != NULL) {
            long v = 0;
            if (sscanf(line, "VmPeak: %ld kB", &v) == 1 && v > peak)
                peak = v;
        }
        if (f != NULL)
            fclose(f);
        const struct timespec ts = { 0, 5000000 };
        nanosleep(&ts, NULL);
    }
    *maxrss_kb = ru.ru_maxrss;
    *vmpeak_kb = peak;
    return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

static void show_log(const char *log)
{
    size_t n = 0;
    unsigned char *b = read_all(log, &n);
    printf("    | %.*s", (int)(n < 600 ? n : 600), (const char *)b);
    free(b);
}

/* A recording larger than the process's address-space limit replays under
 * that limit (setrlimit RLIMIT_AS, what `ulimit -v` sets) with the result of
 * a run reading 4 KiB blocks and no limit. The limit is measured: the
 * smallest multiple of 8 MiB, above the VmPeak of a small replay, under
 * which that small replay succeeds; the big recording is made larger than
 * it. Under AddressSanitizer (which reserves terabytes of shadow address
 * space) no limit is set and the recording is smaller. */
static void test_streaming_bounded_memory(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_sigmf_stream_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char small_ini_path[300], big_ini[300], rec_small[300], rec_big[300], meta[400], log[300], o1[300], o2[300],
        o3[300];
    snprintf(small_ini_path, sizeof small_ini_path, "%s/small.ini", dir);
    snprintf(big_ini, sizeof big_ini, "%s/big.ini", dir);
    snprintf(rec_small, sizeof rec_small, "%s/small", dir);
    snprintf(rec_big, sizeof rec_big, "%s/big", dir);
    snprintf(log, sizeof log, "%s/log.txt", dir);
    const char *common = "[instrument]\nchannels = 2048\n[fidelity]\nblocks = 16\nextrapolate_to = 0\n"
                         "[output]\ncsv = false\n";
    char text[1024];
    snprintf(text, sizeof text, "%s[integration]\nspectra = 512\n", common);
    write_text(small_ini_path, text);
    long rss = 0, vm = 0;
    {
        const char *a[] = { "simulate", small_ini_path, "-q", "-o", rec_small, NULL };
        assert_int_equal(spawn(a, 0, log, &rss, &vm), 0);
    }
    snprintf(meta, sizeof meta, "%s.sigmf-meta", rec_small);
    snprintf(o1, sizeof o1, "%s/o_small", dir);
    const char *small_replay[] = { "replay", meta, "-q", "-o", o1, NULL };
    unsigned long long limit = 0;
    if (!TL_ASAN) {
        const int rc = spawn(small_replay, 0, log, &rss, &vm);
        assert_int_equal(rc, 0);
        char small_data[320];
        snprintf(small_data, sizeof small_data, "%s.sigmf-data", rec_small);
        printf("    baseline: replay of a %lld-byte recording: VmPeak %ld kB, peak RSS %ld kB\n",
               file_size(small_data), vm, rss);
        const unsigned long long mib = 1u << 20;
        limit = ((unsigned long long)vm * 1024u / (8u * mib) + 1u) * 8u * mib;
        while (spawn(small_replay, limit, log, &rss, &vm) != 0) {
            show_log(log);
            limit += 8u * mib;
            if (limit > 1024u * mib)
                fail_msg("the small replay needs more than 1 GiB of address space");
        }
        printf("    address-space limit (RLIMIT_AS, as ulimit -v): %llu MiB; the small replay fits under it\n",
               limit / mib);
    } else {
        printf("    AddressSanitizer build: no address-space limit (ASan reserves terabytes of shadow memory); "
               "comparing block sizes on a smaller recording\n");
    }
    /* the big recording: three times the limit (2 inputs x 2 bytes x (3 + M) x 4096 samples) */
    const unsigned long long want = TL_ASAN ? (8ull << 20) : 3u * limit;
    unsigned long long m = want / (4u * 4096u) + 16u;
    m -= m % 16u;
    snprintf(text, sizeof text, "%s[integration]\nspectra = %llu\n", common, m);
    write_text(big_ini, text);
    {
        const char *a[] = { "simulate", big_ini, "-q", "-o", rec_big, NULL };
        const int rc = spawn(a, limit, log, &rss, &vm);
        if (rc != 0)
            show_log(log);
        assert_int_equal(rc, 0);
        printf("    simulate%s: VmPeak %ld kB, peak RSS %ld kB\n", TL_ASAN ? "" : " under the limit", vm, rss);
    }
    char data[320];
    snprintf(data, sizeof data, "%s.sigmf-data", rec_big);
    snprintf(meta, sizeof meta, "%s.sigmf-meta", rec_big);
    const long long size = file_size(data);
    assert_int_equal(size, (long long)(3u + m) * 4096 * 4);
    if (!TL_ASAN)
        assert_true((unsigned long long)size > limit);
    snprintf(o2, sizeof o2, "%s/o_limited", dir);
    snprintf(o3, sizeof o3, "%s/o_4k", dir);
    const char *limited[] = { "replay", meta, "-q", "-o", o2, NULL };
    const char *small_blocks[] = { "replay", meta, "-q", "--block-kib", "4", "-o", o3, NULL };
    const int rc_a = spawn(limited, limit, log, &rss, &vm);
    if (rc_a > 1)
        show_log(log);
    printf("    replay of %lld bytes (%llu spectra) under %llu MiB (0: no limit): exit %d, VmPeak %ld kB, "
           "peak RSS %ld kB\n",
           size, m, limit >> 20, rc_a, vm, rss);
    if (!TL_ASAN)
        assert_true((unsigned long long)vm * 1024u < limit);
    const int rc_b = spawn(small_blocks, 0, log, &rss, &vm);
    printf("    replay with 4 KiB blocks, no limit: exit %d, VmPeak %ld kB, peak RSS %ld kB\n", rc_b, vm, rss);
    /* both complete (exit 0 PASS or 1 FAIL, with the summary written), equal */
    assert_true(rc_a == 0 || rc_a == 1);
    assert_int_equal(rc_a, rc_b);
    const char *files[] = { "summary.json", "auto0.npy", "auto1.npy", "cross.npy", "flags.npy" };
    for (size_t i = 0; i < sizeof files / sizeof files[0]; i++) {
        char a[400], b[400];
        snprintf(a, sizeof a, "%s/%s", o2, files[i]);
        snprintf(b, sizeof b, "%s/%s", o3, files[i]);
        if (i == 0)
            assert_same_summary(a, b);
        else
            assert_same_file(a, b);
    }
    char sum[400];
    snprintf(sum, sizeof sum, "%s/summary.json", o2);
    json_error_t je;
    json_t *j = json_load_file(sum, 0, &je);
    assert_non_null(j);
    const json_int_t spectra = json_integer_value(json_object_get(json_object_get(j, "run"), "spectra"));
    json_decref(j);
    printf("    identical spectra and summary; %lld spectra integrated\n", (long long)spectra);
    assert_int_equal(spectra, (json_int_t)m);
    rm_rf(dir);
}

/* ---- readers on handmade recordings -------------------------------------------------- */

static char hand_dir[64];

/* Write DIR/NAME.sigmf-meta with the given global fields and the data bytes;
 * return the meta path (static). */
static const char *handmade(const char *name, const char *global_fields, const void *data, size_t n)
{
    static char meta[300];
    char path[300], text[2048];
    snprintf(meta, sizeof meta, "%s/%s.sigmf-meta", hand_dir, name);
    snprintf(text, sizeof text,
             "{\"global\": {\"core:version\": \"1.2.0\", %s},\n \"captures\": [{\"core:sample_start\": 0}],\n"
             " \"annotations\": []}\n",
             global_fields);
    write_text(meta, text);
    snprintf(path, sizeof path, "%s/%s.sigmf-data", hand_dir, name);
    write_file(path, data, n);
    return meta;
}

/* An error is one line even when the meta quotes a control character
 * (sigmf.h: "Every error is one line naming the file, the field and the
 * allowed values"). Reproducer from tests/fuzz/fuzz_sigmf.c: a field name
 * holding an escaped newline and tab was echoed verbatim, splitting the
 * message. */
static void test_error_one_line(void **state)
{
    (void)state;
    const int16_t v[2] = { 0, 0 };
    const char *meta =
        handmade("ctl", "\"core:datatype\": \"ri16_le\", \"core:descr\\nx\\ty\": \"seed\"", v, sizeof v);
    char err[1024];
    assert_null(tl_sigmf_open(meta, 0, err, sizeof err));
    printf("    %s\n", err);
    assert_null(strchr(err, '\n'));
    assert_null(strchr(err, '\t'));
    assert_non_null(strstr(err, "'core:descr?x?y'"));
}

static tl_sigmf_reader *open_ok(const char *meta, size_t block)
{
    char err[1024];
    tl_sigmf_reader *r = tl_sigmf_open(meta, block, err, sizeof err);
    if (r == NULL)
        fail_msg("%s", err);
    return r;
}

/* ri8: v means v x 256 (full scale 128 = ADC full scale, sigmf.h). At 14
 * bits every value is on the code grid; -128 is the negative rail. At 8
 * bits 127 is the positive rail too. */
static void test_reader_ri8(void **state)
{
    (void)state;
    const int8_t v[] = { 0, -128, 1, 127, -1, 64, -64, 2 }; /* 4 samples x 2 channels */
    const char *meta = handmade("ri8", "\"core:datatype\": \"ri8\", \"core:num_channels\": 2, "
                                       "\"core:sample_rate\": 1000000",
                                v, sizeof v);
    for (unsigned bits = 8; bits <= 14; bits += 6) {
        tl_sigmf_reader *r = open_ok(meta, 0);
        assert_int_equal(tl_sigmf_set_adc_bits(r, bits), 0);
        assert_int_equal(tl_sigmf_info_of(r)->samples, 4);
        assert_int_equal(tl_sigmf_info_of(r)->type, TL_SIGMF_RI8);
        int16_t a[4], b[4];
        int16_t *const out[2] = { a, b };
        char err[512];
        assert_int_equal(tl_sigmf_read(r, out, 4, err, sizeof err), 0);
        for (int i = 0; i < 4; i++) {
            assert_int_equal(a[i], v[2 * i] * 256);
            assert_int_equal(b[i], v[2 * i + 1] * 256);
        }
        /* rails: -128 x 256 = -32768 on channel 0 (and 127 on channel 1 at 8 bits) */
        assert_int_equal(tl_sigmf_rails(r, 0), 0);
        assert_int_equal(tl_sigmf_rails(r, 1), bits == 8 ? 2 : 1);
        assert_int_equal(tl_sigmf_rounded(r, 0) + tl_sigmf_rounded(r, 1), 0);
        assert_int_equal(tl_sigmf_clipped(r, 0) + tl_sigmf_clipped(r, 1), 0);
        /* reading past the end is an error naming the data file */
        assert_int_equal(tl_sigmf_read(r, out, 1, err, sizeof err), -1);
        assert_non_null(strstr(err, "ri8.sigmf-data"));
        tl_sigmf_close(r);
    }
}

/* tl_sigmf_skip: reading a samples, skipping m and reading on gives the
 * samples at a + m onwards, exactly as reading and dropping them does
 * (the file's own values are the oracle: sample i of channel c is a known
 * function of i), across block boundaries (4096-byte blocks = 1024 frames),
 * for ri16_le, ri8 and ci16_le (which reads and drops); skipping past the
 * end is refused with one line naming the data file. */
static void test_reader_skip(void **state)
{
    (void)state;
    enum { F = 3000 };
    static int16_t v16[2 * F];
    static int8_t v8[2 * F];
    for (int i = 0; i < F; i++) {
        v16[2 * i] = (int16_t)((i * 37) % 65536 - 32768);
        v16[2 * i + 1] = (int16_t)(-(i * 11) % 30000);
        v8[2 * i] = (int8_t)(i % 256 - 128);
        v8[2 * i + 1] = (int8_t)(-(i % 100));
    }
    char m16[300], m8[300]; /* handmade returns a static buffer */
    snprintf(m16, sizeof m16, "%s",
             handmade("skip16", "\"core:datatype\": \"ri16_le\", \"core:num_channels\": 2", v16, sizeof v16));
    snprintf(m8, sizeof m8, "%s", handmade("skip8", "\"core:datatype\": \"ri8\", \"core:num_channels\": 2", v8, sizeof v8));
    const uint64_t cases[][2] = { { 0, 0 }, { 0, 1 }, { 0, 1024 }, { 5, 1019 }, { 5, 2000 }, { 1023, 1 },
                                  { 1024, 1024 }, { 100, 2890 }, { 0, 2995 } };
    for (int type = 0; type < 2; type++) {
        for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
            tl_sigmf_reader *r = open_ok(type == 0 ? m16 : m8, 4096);
            const uint64_t a = cases[c][0], m = cases[c][1];
            int16_t x[F], y[F];
            int16_t *const out[2] = { x, y };
            char err[512];
            if (a > 0)
                assert_int_equal(tl_sigmf_read(r, out, (size_t)a, err, sizeof err), 0);
            assert_int_equal(tl_sigmf_skip(r, m, err, sizeof err), 0);
            assert_int_equal(tl_sigmf_read(r, out, 5, err, sizeof err), 0);
            for (int k = 0; k < 5; k++) {
                const uint64_t i = a + m + (uint64_t)k;
                const int16_t e0 = type == 0 ? v16[2 * i] : (int16_t)(v8[2 * i] * 256);
                const int16_t e1 = type == 0 ? v16[2 * i + 1] : (int16_t)(v8[2 * i + 1] * 256);
                if (x[k] != e0 || y[k] != e1)
                    fail_msg("type %d, read %llu, skip %llu: sample %llu is (%d, %d), the file has (%d, %d)", type,
                             (unsigned long long)a, (unsigned long long)m, (unsigned long long)i, x[k], y[k], e0, e1);
            }
            /* past the end: refused, one line naming the data file */
            assert_int_equal(tl_sigmf_skip(r, F, err, sizeof err), -1);
            assert_non_null(strstr(err, type == 0 ? "skip16.sigmf-data" : "skip8.sigmf-data"));
            assert_null(strchr(err, '\n'));
            tl_sigmf_close(r);
        }
    }
    /* ci16_le: skip = read and drop (the interpolator sees every sample) */
    static int16_t cz[2 * F];
    for (int i = 0; i < 2 * F; i++)
        cz[i] = (int16_t)((i * 97) % 20000 - 10000);
    const char *mc = handmade("skipc", "\"core:datatype\": \"ci16_le\"", cz, sizeof cz);
    tl_sigmf_reader *r1 = open_ok(mc, 4096), *r2 = open_ok(mc, 4096);
    int16_t p[2000], q[2000];
    int16_t *const o1[1] = { p }, *const o2[1] = { q };
    char err[512];
    assert_int_equal(tl_sigmf_read(r1, o1, 1500, err, sizeof err), 0);
    assert_int_equal(tl_sigmf_read(r1, o1, 100, err, sizeof err), 0);
    assert_int_equal(tl_sigmf_skip(r2, 1500, err, sizeof err), 0);
    assert_int_equal(tl_sigmf_read(r2, o2, 100, err, sizeof err), 0);
    assert_memory_equal(p, q, 100 * sizeof *p);
    tl_sigmf_close(r1);
    tl_sigmf_close(r2);
}

static void put_f32(unsigned char *p, float x)
{
    uint32_t u;
    memcpy(&u, &x, 4);
    p[0] = (unsigned char)(u & 0xFF);
    p[1] = (unsigned char)((u >> 8) & 0xFF);
    p[2] = (unsigned char)((u >> 16) & 0xFF);
    p[3] = (unsigned char)(u >> 24);
}

/* rf32_le: x means x x full scale (1.0 = ADC full scale, sigmf.h), rounded to
 * the nearest of the ADC's codes, ties away from zero, clipped at its range.
 * At 14 bits one code is 1/8192. */
static void test_reader_rf32(void **state)
{
    (void)state;
    const float x[] = { 0.0f, 0.5f, -0.5f, 0.25f, 1.0f, -1.0f, 1.5f, 0.5f / 8192, -0.5f / 8192, 1.5f / 8192, 1e-6f };
    const long code[] = { 0, 4096, -4096, 2048, 8191, -8192, 8191, 1, -1, 2, 0 };
    enum { N = sizeof x / sizeof x[0] };
    unsigned char bytes[4 * N];
    /* IEEE 754 binary32 bit patterns, little-endian: 1.0f is 0x3F800000 */
    put_f32(bytes, 1.0f);
    assert_int_equal(bytes[0] | bytes[1] | (bytes[2] ^ 0x80) | (bytes[3] ^ 0x3F), 0);
    for (int i = 0; i < N; i++)
        put_f32(bytes + 4 * i, x[i]);
    const char *meta = handmade("rf32", "\"core:datatype\": \"rf32_le\"", bytes, sizeof bytes);
    tl_sigmf_reader *r = open_ok(meta, 0);
    assert_int_equal(tl_sigmf_set_adc_bits(r, 14), 0);
    int16_t y[N];
    int16_t *const out[1] = { y };
    char err[512];
    assert_int_equal(tl_sigmf_read(r, out, N, err, sizeof err), 0);
    for (int i = 0; i < N; i++)
        if (y[i] != code[i] * 4)
            fail_msg("rf32_le %.9g: read %d, expected code %ld x 4", (double)x[i], y[i], code[i]);
    assert_int_equal(tl_sigmf_rails(r, 0), 3);   /* 1.0, -1.0, 1.5 */
    assert_int_equal(tl_sigmf_clipped(r, 0), 2); /* 1.0 (8192 > 8191), 1.5 */
    assert_int_equal(tl_sigmf_rounded(r, 0), 4); /* the three ties and 1e-6 */
    tl_sigmf_close(r);
    /* at 16 bits 0.5 is 16384 exactly */
    r = open_ok(meta, 0);
    assert_int_equal(tl_sigmf_read(r, out, 2, err, sizeof err), 0);
    assert_int_equal(y[1], 16384);
    tl_sigmf_close(r);
    /* a NaN: an error naming the sample and the channel */
    put_f32(bytes + 8, NAN);
    meta = handmade("rf32nan", "\"core:datatype\": \"rf32_le\"", bytes, sizeof bytes);
    r = open_ok(meta, 0);
    assert_int_equal(tl_sigmf_read(r, out, N, err, sizeof err), -1);
    printf("    %s\n", err);
    assert_non_null(strstr(err, "sample 2 of channel 0 is not a finite number"));
    tl_sigmf_close(r);
}

/* ri16_le at 14 bits: values off the code grid (step 4) round to the nearest
 * code, ties away from zero; 32767 rounds to 8192 and clips to 8191. */
static void test_reader_ri16(void **state)
{
    (void)state;
    const int16_t v[] = { 0, 4, 5, 6, -6, -2, 2, 32767, -32768, 8188 };
    const int16_t want[] = { 0, 4, 4, 8, -8, -4, 4, 32764, -32768, 8188 };
    enum { N = sizeof v / sizeof v[0] };
    unsigned char bytes[2 * N];
    for (int i = 0; i < N; i++) {
        bytes[2 * i] = (unsigned char)((uint16_t)v[i] & 0xFF);
        bytes[2 * i + 1] = (unsigned char)((uint16_t)v[i] >> 8);
    }
    const char *meta = handmade("ri16", "\"core:datatype\": \"ri16_le\", \"tidelock:adc_bits\": 12", bytes,
                                sizeof bytes);
    tl_sigmf_reader *r = open_ok(meta, 0);
    assert_int_equal(tl_sigmf_info_of(r)->adc_bits, 12);
    assert_int_equal(tl_sigmf_set_adc_bits(r, 14), 0);
    int16_t y[N];
    int16_t *const out[1] = { y };
    char err[512];
    assert_int_equal(tl_sigmf_read(r, out, N, err, sizeof err), 0);
    for (int i = 0; i < N; i++)
        if (y[i] != want[i])
            fail_msg("ri16_le %d at 14 bits: read %d, expected %d", v[i], y[i], want[i]);
    assert_int_equal(tl_sigmf_rounded(r, 0), 6); /* 5, 6, -6, -2, 2, 32767 */
    assert_int_equal(tl_sigmf_clipped(r, 0), 1); /* 32767 */
    assert_int_equal(tl_sigmf_rails(r, 0), 2);   /* 32764, -32768 */
    tl_sigmf_close(r);
}

/* ci16_le: the real signal at twice the rate (sigmf.h). Checked on values:
 * even outputs are (-1)^p I exactly; odd outputs of a constant Q are
 * (-1)^(p+1) Q exactly (DC gain 1); complex tones at +410/2048 and
 * -307/2048 of the rate land at real bins 1024 + 410 and 1024 - 307 of a
 * 4096-point DFT with their amplitudes, and nothing at the mirrored bins
 * (which a swapped I/Q or sign would give) above -74 dB of full scale
 * (Blackman half-band filter, -74 dB: Oppenheim and Schafer Table 7.2
 * [memory]); and the values do not depend on the block size or on how many
 * samples each read asks for. */
static void test_reader_ci16(void **state)
{
    (void)state;
    const unsigned L = TL_SIGMF_HALFBAND_L;
    /* 1. random I, constant Q */
    {
        enum { C = 1000 };
        unsigned char bytes[4 * C];
        int16_t I[C];
        uint64_t x = tl_test_seed("sigmf ci16", 7) | 1u;
        for (int n = 0; n < C; n++) {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            I[n] = (int16_t)((int)(x % 60001u) - 30000);
            const int16_t Q = 1000;
            bytes[4 * n] = (unsigned char)((uint16_t)I[n] & 0xFF);
            bytes[4 * n + 1] = (unsigned char)((uint16_t)I[n] >> 8);
            bytes[4 * n + 2] = (unsigned char)((uint16_t)Q & 0xFF);
            bytes[4 * n + 3] = (unsigned char)((uint16_t)Q >> 8);
        }
        const char *meta = handmade("ci16a", "\"core:datatype\": \"ci16_le\", \"core:sample_rate\": 1000", bytes,
                                    sizeof bytes);
        tl_sigmf_reader *r = open_ok(meta, 0);
        const uint64_t real = tl_sigmf_info_of(r)->real_samples;
        assert_int_equal(real, 2u * (C - 2u * L + 1u)); /* 2 (C - 2L + 1) = 1874 */
        int16_t *y = malloc(sizeof(int16_t) * real);
        int16_t *const out[1] = { y };
        char err[512];
        assert_int_equal(tl_sigmf_read(r, out, real, err, sizeof err), 0);
        for (uint64_t p = 0; p < real / 2u; p++) {
            const int s = (p & 1u) ? -1 : 1;
            if (y[2 * p] != s * I[p + L - 1u])
                fail_msg("even output %llu: %d, expected %d", (unsigned long long)(2 * p), y[2 * p],
                         s * I[p + L - 1u]);
            assert_int_equal(y[2 * p + 1], -s * 1000);
        }
        assert_int_equal(tl_sigmf_read(r, out, 1, err, sizeof err), -1);
        free(y);
        tl_sigmf_close(r);
    }
    /* 2. tones, two channels */
    enum { NY = 4096 };
    const unsigned C = NY / 2 + 2 * L - 1; /* gives exactly NY real samples */
    unsigned char *bytes = malloc(8u * C);
    for (unsigned n = 0; n < C; n++) {
        const double w1 = 2.0 * M_PI * 410.0 / 2048.0, w2 = 2.0 * M_PI * 307.0 / 2048.0;
        const double i0 = 0.5 * cos(w1 * n) + 0.25 * cos(-w2 * n), q0 = 0.5 * sin(w1 * n) + 0.25 * sin(-w2 * n);
        const double i1 = 0.25 * cos(w2 * n), q1 = 0.25 * sin(w2 * n);
        const double v[4] = { i0, q0, i1, q1 };
        for (int k = 0; k < 4; k++) {
            const uint16_t u = (uint16_t)(int16_t)lround(v[k] * 32767.0);
            bytes[8 * n + 2 * k] = (unsigned char)(u & 0xFF);
            bytes[8 * n + 2 * k + 1] = (unsigned char)(u >> 8);
        }
    }
    const char *meta = handmade("ci16b", "\"core:datatype\": \"ci16_le\", \"core:num_channels\": 2", bytes, 8u * C);
    free(bytes);
    tl_sigmf_reader *r = open_ok(meta, 0);
    assert_int_equal(tl_sigmf_info_of(r)->real_samples, NY);
    int16_t *y0 = malloc(sizeof(int16_t) * NY), *y1 = malloc(sizeof(int16_t) * NY);
    int16_t *const out[2] = { y0, y1 };
    char err[512];
    assert_int_equal(tl_sigmf_read(r, out, NY, err, sizeof err), 0);
    tl_sigmf_close(r);
    struct {
        const int16_t *y;
        int bin;
        double amp;
    } checks[] = { { y0, 1024 + 410, 0.5 }, { y0, 1024 - 307, 0.25 }, { y0, 1024 - 410, 0.0 },
                   { y0, 1024 + 307, 0.0 }, { y1, 1024 + 307, 0.25 }, { y1, 1024 - 307, 0.0 } };
    for (size_t c = 0; c < sizeof checks / sizeof checks[0]; c++) {
        double re = 0.0, im = 0.0;
        for (int m = 0; m < NY; m++) {
            const double ph = 2.0 * M_PI * (double)checks[c].bin * m / NY, v = checks[c].y[m] / 32768.0;
            re += v * cos(ph);
            im -= v * sin(ph);
        }
        const double amp = 2.0 * sqrt(re * re + im * im) / NY;
        printf("    ci16_le tone check: bin %d amplitude %.6f (expected %.3f)\n", checks[c].bin, amp, checks[c].amp);
        if (checks[c].amp > 0.0)
            TL_ASSERT_NEAR(amp, checks[c].amp * 32767.0 / 32768.0, 2e-3 * checks[c].amp);
        else
            assert_true(amp < 2e-4); /* -74 dB of full scale */
    }
    /* 3. block size and read size do not change a value */
    const size_t chunks[] = { 1, 7, 333 };
    int16_t *z0 = malloc(sizeof(int16_t) * NY), *z1 = malloc(sizeof(int16_t) * NY);
    for (size_t k = 0; k < 3; k++) {
        r = open_ok(meta, TL_SIGMF_BLOCK_MIN);
        size_t done = 0;
        while (done < NY) {
            const size_t n = NY - done < chunks[k] ? NY - done : chunks[k];
            int16_t *const o[2] = { z0 + done, z1 + done };
            assert_int_equal(tl_sigmf_read(r, o, n, err, sizeof err), 0);
            done += n;
        }
        assert_memory_equal(z0, y0, sizeof(int16_t) * NY);
        assert_memory_equal(z1, y1, sizeof(int16_t) * NY);
        assert_true(tl_sigmf_bytes_read(r) == 8u * C);
        tl_sigmf_close(r);
    }
    free(z0);
    free(z1);
    free(y0);
    free(y1);
    /* 4. the interpolator's odd phase sums to 1/2 per side (DC gain 1) */
    double c[TL_SIGMF_HALFBAND_L], sum = 0.0;
    tl_sigmf_halfband(c);
    for (unsigned i = 0; i < L; i++)
        sum += 2.0 * c[i];
    TL_ASSERT_NEAR(sum, 1.0, 1e-15);
    TL_ASSERT_NEAR(c[0], 2.0 / M_PI, 2e-3); /* sinc(1/2) = 2/pi; the window is 0.9988 there */
}

/* A ci16_le recording through the command line: read at twice its rate, so
 * a 51.2 Msample/s complex recording replays with a 102.4 MHz scenario and
 * is refused with a 51.2 MHz one; it needs (taps - 1 + spectra) x points / 2
 * + 2L - 1 complex samples. */
static void test_replay_complex_cli(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_sigmf_cx_XXXXXX";
    assert_non_null(mkdtemp(dir));
    const unsigned L = TL_SIGMF_HALFBAND_L;
    const unsigned need = (4 - 1 + 64) * 512; /* real samples: 256 channels, 64 spectra */
    const unsigned C = need / 2 + 2 * L - 1;
    unsigned char *bytes = malloc(4u * C);
    uint64_t x = tl_test_seed("sigmf ci16 cli", 11) | 1u;
    for (unsigned k = 0; k < 2u * C; k++) { /* sum of 4 uniforms: near-Gaussian, RMS about 0.1 of full scale */
        double v = 0.0;
        for (int j = 0; j < 4; j++) {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            v += (double)(x >> 11) / 9007199254740992.0 - 0.5;
        }
        const uint16_t u = (uint16_t)(int16_t)lround(v * 0.17 * 32768.0);
        bytes[2 * k] = (unsigned char)(u & 0xFF);
        bytes[2 * k + 1] = (unsigned char)(u >> 8);
    }
    char path[300], ini[300], args[1024], out[16384];
    snprintf(path, sizeof path, "%s/cx.sigmf-data", dir);
    write_file(path, bytes, 4u * C);
    free(bytes);
    snprintf(path, sizeof path, "%s/cx.sigmf-meta", dir);
    write_text(path, "{\"global\": {\"core:datatype\": \"ci16_le\", \"core:version\": \"1.2.0\", "
                     "\"core:sample_rate\": 51200000},\n \"captures\": [{\"core:sample_start\": 0, "
                     "\"core:frequency\": 25600000, \"core:datetime\": \"2031-01-01T00:00:00.5Z\"}],\n"
                     " \"annotations\": []}\n");
    snprintf(ini, sizeof ini, "%s/s.ini", dir);
    write_text(ini, "[instrument]\nchannels = 256\ninputs = 1\n[integration]\nspectra = 64\n[fidelity]\nblocks = 8\n"
                    "extrapolate_to = 0\n[switching]\nsequence = off\ndiscard = 0\n[output]\ncsv = false\n");
    snprintf(args, sizeof args, "replay %s/cx.sigmf-meta %s -o %s/o", dir, ini, dir);
    const int rc = run(args, out, sizeof out);
    printf("%s", out);
    assert_true(rc == 0 || rc == 1);
    assert_non_null(strstr(out, "ci16_le, 1 channel at 51.2 MHz"));
    snprintf(path, sizeof path, "%s/o/summary.json", dir);
    json_error_t je;
    json_t *j = json_load_file(path, 0, &je);
    assert_non_null(j);
    assert_int_equal(json_integer_value(json_object_get(json_object_get(j, "run"), "spectra")), 64);
    json_decref(j);
    /* one complex sample fewer is not enough */
    snprintf(path, sizeof path, "%s/cx.sigmf-data", dir);
    assert_int_equal(truncate(path, 4 * (long)(C - 1)), 0);
    snprintf(args, sizeof args, "replay %s/cx.sigmf-meta %s", dir, ini);
    const char *p[] = { "ci16_le", "complex samples per channel", "34302 real samples", "= 34304", NULL };
    expect_refused(dir, args, p);
    snprintf(ini, sizeof ini, "%s/r.ini", dir);
    write_text(ini, "[instrument]\nchannels = 256\ninputs = 1\nsample_rate_mhz = 51.2\n[integration]\nspectra = 64\n"
                    "[fidelity]\nblocks = 8\nband_high_mhz = 25\n[switching]\nsequence = off\ndiscard = 0\n");
    snprintf(args, sizeof args, "replay %s/cx.sigmf-meta %s", dir, ini);
    const char *q[] = { "core:sample_rate = 51200000 Hz (ci16_le: read at twice the rate)", "51.2", NULL };
    expect_refused(dir, args, q);
    rm_rf(dir);
}

int main(int argc, char **argv)
{
    (void)argc;
    snprintf(argv0, sizeof argv0, "%s", argv[0]);
    snprintf(hand_dir, sizeof hand_dir, "/tmp/tl_sigmf_hand_XXXXXX");
    if (mkdtemp(hand_dir) == NULL)
        return 1;
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_datatype_grammar),
        cmocka_unit_test(test_meta_written_validates),
        cmocka_unit_test(test_round_trip_equals_run),
        cmocka_unit_test(test_bad_recordings_refused),
        cmocka_unit_test(test_help_and_usage),
        cmocka_unit_test(test_error_one_line),
        cmocka_unit_test(test_reader_ri8),
        cmocka_unit_test(test_reader_rf32),
        cmocka_unit_test(test_reader_ri16),
        cmocka_unit_test(test_reader_ci16),
        cmocka_unit_test(test_reader_skip),
        cmocka_unit_test(test_replay_complex_cli),
        cmocka_unit_test(test_streaming_bounded_memory),
    };
    const int rc = cmocka_run_group_tests_name("sigmf", tests, NULL, NULL);
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", hand_dir);
    if (system(cmd) != 0)
        return 1;
    return rc;
}
