/*
 * test_html_report.c - the HTML report of `tidelock run` and `tidelock
 * budget` (host/html_report.h), end to end through the command line.
 *
 * Each figure the page lists must exist as a valid PNG (signature and IHDR:
 * PNG specification 5.2 and 11.2.2; decoded by cairo_image_surface_create_
 * from_png) of a sane size, have its SVG beside it, and be in the page:
 * the PNG's exact bytes as a base64 data URI (RFC 4648) and a link to the
 * SVG. The summary table answers the newcomer's questions.
 */
#include <cairo/cairo.h>
#include <jansson.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "html_report.h"
#include "scenario.h"
#include "tl_test.h"

static const char *g_argv0;

/* RFC 4648 section 10 test vectors. */
static void test_base64_vectors(void **state)
{
    (void)state;
    static const char *const in[] = { "", "f", "fo", "foo", "foob", "fooba", "foobar" };
    static const char *const out[] = { "", "Zg==", "Zm8=", "Zm9v", "Zm9vYg==", "Zm9vYmE=", "Zm9vYmFy" };
    char buf[32];
    for (int i = 0; i < 7; i++) {
        const size_t n = tl_base64((const unsigned char *)in[i], strlen(in[i]), buf);
        assert_string_equal(buf, out[i]);
        assert_int_equal(n, strlen(out[i]));
    }
}

static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return NULL;
    fseek(f, 0, SEEK_END);
    const long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *p = malloc((size_t)n + 1u);
    assert_non_null(p);
    assert_int_equal(fread(p, 1, (size_t)n, f), (size_t)n);
    fclose(f);
    p[n] = '\0';
    if (len != NULL)
        *len = (size_t)n;
    return p;
}

static uint32_t be32(const unsigned char *p)
{
    return (uint32_t)p[0] << 24 | (uint32_t)p[1] << 16 | (uint32_t)p[2] << 8 | p[3];
}

/* Every figure NAME: DIR/NAME.png valid and in the page, DIR/NAME.svg beside it. */
static void check_figures(const char *dir, const char *html, const char *const *names, unsigned n)
{
    for (unsigned i = 0; i < n; i++) {
        char path[512];
        snprintf(path, sizeof path, "%s/%s.png", dir, names[i]);
        size_t len = 0;
        unsigned char *png = (unsigned char *)slurp(path, &len);
        if (png == NULL)
            fail_msg("%s: missing", path);
        static const unsigned char sig[8] = { 0x89, 'P', 'N', 'G', 0x0D, 0x0A, 0x1A, 0x0A };
        assert_memory_equal(png, sig, 8);
        assert_memory_equal(png + 12, "IHDR", 4);
        const uint32_t w = be32(png + 16), h = be32(png + 20);
        cairo_surface_t *img = cairo_image_surface_create_from_png(path);
        assert_int_equal(cairo_surface_status(img), CAIRO_STATUS_SUCCESS);
        assert_int_equal(cairo_image_surface_get_width(img), (int)w);
        assert_int_equal(cairo_image_surface_get_height(img), (int)h);
        cairo_surface_destroy(img);
        printf("    %-18s %4u x %3u, %7zu octets\n", names[i], w, h, len);
        /* sane: a real drawing of screen size, not a stub nor a monster */
        assert_true(w >= 400 && w <= 4000 && h >= 300 && h <= 4000);
        assert_true(len > 5000 && len < 3000000);
        /* in the page: the exact bytes, base64, and the SVG link */
        char *b64 = malloc(4u * ((len + 2u) / 3u) + 1u);
        tl_base64(png, len, b64);
        if (strstr(html, b64) == NULL)
            fail_msg("%s is not embedded in the page", path);
        free(b64);
        free(png);
        char href[128];
        snprintf(href, sizeof href, "href=\"%s.svg\"", names[i]);
        assert_non_null(strstr(html, href));
        snprintf(path, sizeof path, "%s/%s.svg", dir, names[i]);
        char *svg = slurp(path, NULL);
        assert_non_null(svg);
        assert_non_null(strstr(svg, "<svg"));
        free(svg);
    }
}

static void remove_dir(const char *dir)
{
    char cmd[600], out[64];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    tl_test_shell(cmd, out, sizeof out);
}

/* `tidelock run SMALL.ini -o DIR`: every figure and the page. */
static void test_run_report(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_html_XXXXXX", ini[600], args[1400], out[16384];
    assert_non_null(mkdtemp(dir));
    tl_scenario s;
    tl_scenario_default(&s);
    s.cfg.points = 1024;
    s.spectra = 2048;
    s.cfg.integration = 2048;
    s.blocks = 16;
    s.fit_order = 3;
    s.sky.trough_depth_k = 500.0; /* deep, so the small run has something to show */
    char err[512];
    assert_int_equal(tl_scenario_check(&s, NULL, err, sizeof err), 0);
    snprintf(ini, sizeof ini, "%s/small.ini", dir);
    FILE *f = fopen(ini, "w");
    assert_non_null(f);
    assert_int_equal(tl_scenario_write(f, &s), 0);
    fclose(f);
    snprintf(args, sizeof args, "run %s -o %s", ini, dir);
    const int rc = tl_test_tool(g_argv0, args, out, sizeof out);
    if (rc != 0)
        fail_msg("tidelock %s: exit %d: %s", args, rc, out);
    assert_non_null(strstr(out, "report: "));
    char path[700];
    snprintf(path, sizeof path, "%s/report.html", dir);
    char *html = slurp(path, NULL);
    assert_non_null(html);
    static const char *const names[] = { "sky_calibrated", "fixed_minus_float", "fit_residuals", "feature_vs_noise",
                                         "channel_response", "counters", "compression", "budget" };
    check_figures(dir, html, names, 8);
    /* the newcomer's questions, answered in the summary table */
    assert_non_null(strstr(html, "<table id=\"summary\">"));
    assert_non_null(strstr(html, "Does the scenario detect its feature?</th><td>"));
    assert_non_null(strstr(html, "How many lunar nights does a 5 sigma detection need?</th><td>"));
    assert_non_null(strstr(html, "How much of the noise does the firmware add?</th><td>"));
    assert_non_null(strstr(html, "Which budget is tightest?</th><td>"));
    /* self-contained: no script, no external resource */
    assert_null(strstr(html, "<script"));
    assert_null(strstr(html, "http://"));
    assert_null(strstr(html, "https://"));
    free(html);
    /* sensitivity.json: the per-channel snr adds up, in quadrature, to the
     * stated significance (generalized least squares: exact algebra) */
    snprintf(path, sizeof path, "%s/sensitivity.json", dir);
    json_error_t je;
    json_t *root = json_load_file(path, 0, &je);
    if (root == NULL)
        fail_msg("%s: %s", path, je.text);
    const json_t *snr = json_object_get(root, "snr"), *fq = json_object_get(root, "frequency_mhz");
    assert_true(json_is_array(snr) && json_array_size(snr) > 16u);
    assert_int_equal(json_array_size(snr), json_array_size(fq));
    double ss = 0.0;
    for (size_t i = 0; i < json_array_size(snr); i++)
        ss += pow(json_real_value(json_array_get(snr, i)), 2.0);
    const double sig = json_real_value(json_object_get(root, "significance"));
    printf("    sensitivity.json: %zu channels, significance %.4g, sqrt(sum snr^2) %.4g\n", json_array_size(snr), sig,
           sqrt(ss));
    assert_true(sig > 0.0);
    TL_ASSERT_NEAR(sqrt(ss), sig, 1e-6 * sig);
    assert_true(json_is_object(json_object_get(root, "fixed_minus_float")));
    json_decref(root);
    remove_dir(dir);
}

/* `tidelock budget -o DIR`: its own page and bars; a bad folder: one line. */
static void test_budget_report(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_html_XXXXXX", ini[600], args[1400], out[16384];
    assert_non_null(mkdtemp(dir));
    tl_scenario s;
    tl_scenario_default(&s);
    s.cfg.points = 1024;
    s.spectra = 2048;
    s.cfg.integration = 2048;
    s.blocks = 16;
    s.proc_clock_hz = 200e9; /* a processor that keeps up, so every budget closes */
    snprintf(ini, sizeof ini, "%s/small.ini", dir);
    FILE *f = fopen(ini, "w");
    assert_non_null(f);
    assert_int_equal(tl_scenario_write(f, &s), 0);
    fclose(f);
    snprintf(args, sizeof args, "budget %s -o %s", ini, dir);
    const int rc = tl_test_tool(g_argv0, args, out, sizeof out);
    if (rc != 0)
        fail_msg("tidelock %s: exit %d: %s", args, rc, out);
    char path[700];
    snprintf(path, sizeof path, "%s/budget.html", dir);
    char *html = slurp(path, NULL);
    assert_non_null(html);
    static const char *const names[] = { "budget" };
    check_figures(dir, html, names, 1);
    assert_non_null(strstr(html, "Which budget is tightest?</th><td>"));
    free(html);
    remove_dir(dir);
}

/* A page whose figure is missing: -1 and one line naming the file; the page
 * is not left behind. */
static void test_missing_figure(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_html_XXXXXX", path[600], err[512];
    assert_non_null(mkdtemp(dir));
    tl_figures figs;
    memset(&figs, 0, sizeof figs);
    figs.n = 1;
    snprintf(figs.fig[0].name, sizeof figs.fig[0].name, "absent");
    const tl_html_row rows[1] = { { "item", "value" } };
    snprintf(path, sizeof path, "%s/page.html", dir);
    assert_int_equal(tl_html_write(path, "t", NULL, rows, 1, dir, &figs, err, sizeof err), -1);
    printf("    %s\n", err);
    assert_non_null(strstr(err, "absent.png"));
    assert_null(strchr(err, '\n'));
    struct stat st;
    assert_int_equal(stat(path, &st), -1);
    remove_dir(dir);
}

int main(int argc, char **argv)
{
    (void)argc;
    g_argv0 = argv[0];
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_base64_vectors),
        cmocka_unit_test(test_run_report),
        cmocka_unit_test(test_budget_report),
        cmocka_unit_test(test_missing_figure),
    };
    return cmocka_run_group_tests_name("html report", tests, NULL, NULL);
}
