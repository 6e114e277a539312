/*
 * test_cli.c - the `tidelock` command line: bad input gets one clear line,
 * a non-zero exit, and no lost or half-written output. Runs the tidelock
 * binary built next to this test (build/rel/tidelock, build/san/tidelock).
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

static char tool[4096];

/* Run a command line; capture stderr+stdout into out; return the exit status. */
static int run(const char *args, char *out, size_t cap)
{
    char cmd[8192];
    snprintf(cmd, sizeof cmd, "%s %s 2>&1", tool, args);
    FILE *p = popen(cmd, "r");
    assert_non_null(p);
    size_t n = fread(out, 1, cap - 1, p);
    out[n] = '\0';
    const int st = pclose(p);
    return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

static int lines(const char *s)
{
    int n = 0;
    for (; *s; s++)
        n += *s == '\n';
    return n;
}

static void expect_one_line(const char *args, int want_rc, const char *must_contain)
{
    char out[8192];
    const int rc = run(args, out, sizeof out);
    printf("    tidelock %s -> %d: %s", args, rc, out);
    assert_int_equal(rc, want_rc);
    assert_int_equal(lines(out), 1);
    if (strstr(out, must_contain) == NULL)
        fail_msg("message '%s' does not name '%s'", out, must_contain);
}

static void test_bad_commands_and_options(void **state)
{
    (void)state;
    expect_one_line("frobnicate", 2, "frobnicate");
    expect_one_line("run --bogus", 2, "--bogus");
    expect_one_line("run --drive abc", 2, "from -40 to 12");
    expect_one_line("run --drive 13", 2, "'13'");
    expect_one_line("run --drive -41", 2, "'-41'");
    expect_one_line("tables nonsense", 2, "twiddle-source FILE");
    expect_one_line("run -o", 2, "-o needs a value");
    expect_one_line("run --drive", 2, "--drive needs a value");
    char out[8192];
    assert_int_equal(run("", out, sizeof out), 2); /* usage on stderr */
    assert_non_null(strstr(out, "usage: tidelock"));
    assert_int_equal(run("help", out, sizeof out), 0);
    assert_non_null(strstr(out, "run [-o DIR]"));
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
    snprintf(args, sizeof args, "tables twiddle-source %s/missing/t.c", dir);
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
    snprintf(args, sizeof args, "tables twiddle-source %s", path);
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

/* The whole default run: exit 0, a summary that parses, carries the
 * verdict and the figures, and no temporary file left in the folder. */
static void test_run_writes_summary(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_cli_run_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char args[256], out[16384], path[512];
    snprintf(args, sizeof args, "run -o %s", dir);
    assert_int_equal(run(args, out, sizeof out), 0);
    assert_non_null(strstr(out, "verdict: PASS"));
    snprintf(path, sizeof path, "%s/summary.json", dir);
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
    json_decref(root);
    DIR *d = opendir(dir);
    struct dirent *e;
    int files = 0;
    while ((e = readdir(d)) != NULL) {
        if (e->d_name[0] == '.')
            continue;
        files++;
        assert_string_equal(e->d_name, "summary.json");
    }
    closedir(d);
    assert_int_equal(files, 1);
    remove(path);
    rmdir(dir);
}

int main(int argc, char **argv)
{
    (void)argc;
    char self[4096];
    snprintf(self, sizeof self, "%s", argv[0]);
    snprintf(tool, sizeof tool, "%s/tidelock", dirname(self));
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_bad_commands_and_options),
        cmocka_unit_test(test_unwritable_output),
        cmocka_unit_test(test_tables_regenerate),
        cmocka_unit_test(test_run_writes_summary),
    };
    return cmocka_run_group_tests_name("cli", tests, NULL, NULL);
}
