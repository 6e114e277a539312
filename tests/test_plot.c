/*
 * test_plot.c - the chart module (host/plot.h) and the channel response
 * of run_figures.h.
 *
 * A written PNG must be a PNG by the specification (signature and IHDR
 * first: PNG, ISO/IEC 15948 / W3C PNG specification, section 5), decode
 * with cairo_image_surface_create_from_png at the stated size, hold a
 * drawing (neither blank nor filled), and use gray levels only, so it reads
 * in black and white. The SVG is XML with an <svg> root.
 */
#include <cairo/cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "plot.h"
#include "run_figures.h"
#include "taps_design.h"
#include "tl_test.h"

static long file_size(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0 ? (long)st.st_size : -1;
}

static uint32_t be32(const unsigned char *p)
{
    return (uint32_t)p[0] << 24 | (uint32_t)p[1] << 16 | (uint32_t)p[2] << 8 | p[3];
}

/* Check one PNG file; returns the fraction of non-white pixels. */
static double check_png(const char *path)
{
    unsigned char head[33];
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    assert_int_equal(fread(head, 1, sizeof head, f), sizeof head);
    fclose(f);
    /* PNG signature 89 50 4E 47 0D 0A 1A 0A, then the IHDR chunk: length
     * 13, type "IHDR", width, height (big-endian) - PNG specification 5.2, 11.2.2 */
    static const unsigned char sig[8] = { 0x89, 'P', 'N', 'G', 0x0D, 0x0A, 0x1A, 0x0A };
    assert_memory_equal(head, sig, 8);
    assert_int_equal(be32(head + 8), 13);
    assert_memory_equal(head + 12, "IHDR", 4);
    assert_int_equal(be32(head + 16), TL_PLOT_WIDTH);
    assert_int_equal(be32(head + 20), TL_PLOT_HEIGHT);
    const long size = file_size(path);
    assert_true(size > 4000 && size < 4000000);
    cairo_surface_t *img = cairo_image_surface_create_from_png(path);
    assert_int_equal(cairo_surface_status(img), CAIRO_STATUS_SUCCESS);
    assert_int_equal(cairo_image_surface_get_width(img), TL_PLOT_WIDTH);
    assert_int_equal(cairo_image_surface_get_height(img), TL_PLOT_HEIGHT);
    cairo_surface_flush(img);
    const unsigned char *px = cairo_image_surface_get_data(img);
    const int stride = cairo_image_surface_get_stride(img);
    long ink = 0, colour = 0;
    for (int y = 0; y < TL_PLOT_HEIGHT; y++)
        for (int x = 0; x < TL_PLOT_WIDTH; x++) {
            const uint32_t v = *(const uint32_t *)(px + (size_t)y * stride + 4u * (unsigned)x);
            const unsigned r = (v >> 16) & 255u, g = (v >> 8) & 255u, b = v & 255u;
            ink += r < 250u || g < 250u || b < 250u;
            colour += r != g || g != b;
        }
    cairo_surface_destroy(img);
    assert_int_equal(colour, 0); /* gray levels only: reads in black and white */
    return (double)ink / ((double)TL_PLOT_WIDTH * TL_PLOT_HEIGHT);
}

static void check_svg(const char *path)
{
    char buf[256] = "";
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    const size_t n = fread(buf, 1, sizeof buf - 1, f);
    fclose(f);
    buf[n] = '\0';
    assert_non_null(strstr(buf, "<?xml"));
    assert_non_null(strstr(buf, "<svg"));
    assert_true(file_size(path) > 2000);
}

static void test_line_chart(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_plot_XXXXXX", base[256], png[300], svg[300];
    assert_non_null(mkdtemp(dir));
    snprintf(base, sizeof base, "%s/lines", dir);
    enum { N = 200 };
    double x[N], y1[N], y2[N], lo[N], hi[N];
    for (int i = 0; i < N; i++) {
        x[i] = 1.0 + i * 0.2;
        y1[i] = 1000.0 * pow(x[i], -2.5);
        y2[i] = 500.0 * pow(x[i], -2.0);
        lo[i] = 0.8 * y1[i];
        hi[i] = 1.2 * y1[i];
    }
    y2[50] = NAN; /* a gap, not a failure */
    const tl_plot_series ser[] = {
        { "power law -2.5", x, y1, N, TL_DASH_SOLID, TL_MARK_CIRCLE, 20, 0.0, 2.0 },
        { "power law -2", x, y2, N, TL_DASH_DASHED, TL_MARK_SQUARE, 25, 0.4, 1.5 },
    };
    const tl_plot_chart c = { "test chart", "frequency (MHz)", "temperature (K)", TL_PLOT_LOG, TL_PLOT_LOG, 1, 1,
                              0, 0, 0, 0, ser, 2, x, lo, hi, N, "+-20 %", "a note" };
    char err[512];
    assert_int_equal(tl_plot_lines(base, &c, err, sizeof err), 0);
    snprintf(png, sizeof png, "%s.png", base);
    snprintf(svg, sizeof svg, "%s.svg", base);
    const double ink = check_png(png);
    printf("    line chart: %ld octets PNG, %ld SVG, %.1f%% of pixels drawn\n", file_size(png), file_size(svg),
           100.0 * ink);
    assert_true(ink > 0.01 && ink < 0.6);
    check_svg(svg);
    unlink(png);
    unlink(svg);
    rmdir(dir);
}

static void test_bar_chart(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_plot_XXXXXX", base[256], png[300], svg[300];
    assert_non_null(mkdtemp(dir));
    snprintf(base, sizeof base, "%s/bars", dir);
    const tl_plot_bar bars[] = { { "downlink", 12.0, 20.0, "MB" },
                                 { "link time", 0.42, 1.0, "h" },
                                 { "over budget", 30.0, 20.0, "MB" } };
    char err[512];
    assert_int_equal(tl_plot_bars(base, "budgets", "used (% of allocation)", bars, 3, TL_BARS_FRACTION, err,
                                  sizeof err),
                     0);
    snprintf(png, sizeof png, "%s.png", base);
    snprintf(svg, sizeof svg, "%s.svg", base);
    const double ink = check_png(png);
    assert_true(ink > 0.01 && ink < 0.6);
    check_svg(svg);
    /* the one-line bad-input errors name the file */
    const tl_plot_bar bad[] = { { "negative", -1.0, 1.0, "MB" } };
    assert_int_equal(tl_plot_bars(base, "t", "x", bad, 1, TL_BARS_ABSOLUTE, err, sizeof err), -1);
    printf("    %s\n", err);
    assert_non_null(strstr(err, "bars.png"));
    assert_non_null(strstr(err, ">= 0"));
    assert_int_equal(tl_plot_bars(base, "t", "x", bars, 0, TL_BARS_ABSOLUTE, err, sizeof err), -1);
    assert_non_null(strstr(err, "1 to 32"));
    unlink(png);
    unlink(svg);
    rmdir(dir);
}

/* A folder that does not exist: -1, one line naming the file, nothing left. */
static void test_unwritable(void **state)
{
    (void)state;
    double x[2] = { 0, 1 }, y[2] = { 0, 1 };
    const tl_plot_series ser[] = { { "a", x, y, 2, TL_DASH_SOLID, TL_MARK_NONE, 0, 0.0, 1.0 } };
    const tl_plot_chart c = { "t", "x (1)", "y (1)", TL_PLOT_LINEAR, TL_PLOT_LINEAR, 1, 1, 0, 0, 0, 0, ser, 1,
                              NULL, NULL, NULL, 0, NULL, NULL };
    char err[512];
    assert_int_equal(tl_plot_lines("/nonexistent-tl-dir/plot", &c, err, sizeof err), -1);
    printf("    %s\n", err);
    assert_non_null(strstr(err, "/nonexistent-tl-dir/plot.png"));
    assert_null(strchr(err, '\n'));
    assert_true(file_size("/nonexistent-tl-dir/plot.png") < 0);
}

/* The channel response against closed forms: a plain FFT's scalloping loss
 * halfway between channels is 3.922 dB (rectangular) and 1.424 dB (Hann),
 * sources.md, Harris 1978 Table I [computed for N = 4096]; and the
 * rectangular response is the Dirichlet kernel
 * (sin(pi d) / (N sin(pi d / N)))^2 (common practice, no source). */
static void test_channel_response(void **state)
{
    (void)state;
    const uint32_t N = 4096;
    double *rect = malloc(N * sizeof *rect), *hann = malloc(N * sizeof *hann);
    for (uint32_t i = 0; i < N; i++)
        rect[i] = 1.0;
    assert_int_equal(tl_window_fill(TL_WINDOW_HANN, N, hann), 0);
    const double d[3] = { 0.5, 0.25, 2.5 };
    double dbr[3], dbh[3];
    tl_figures_channel_response(rect, N, N, d, 3, dbr);
    tl_figures_channel_response(hann, N, N, d, 3, dbh);
    printf("    scalloping: rectangular %.3f dB, Hann %.3f dB\n", -dbr[0], -dbh[0]);
    TL_ASSERT_NEAR(-dbr[0], 3.922, 0.001);
    TL_ASSERT_NEAR(-dbh[0], 1.424, 0.001);
    for (int i = 0; i < 3; i++) {
        const double k = sin(M_PI * d[i]) / (N * sin(M_PI * d[i] / N));
        TL_ASSERT_NEAR(dbr[i], 10.0 * log10(k * k), 1e-6);
    }
    free(rect);
    free(hann);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_line_chart),
        cmocka_unit_test(test_bar_chart),
        cmocka_unit_test(test_unwritable),
        cmocka_unit_test(test_channel_response),
    };
    return cmocka_run_group_tests_name("plot", tests, NULL, NULL);
}
