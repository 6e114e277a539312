/*
 * test_upset.c - upset injection (host/upset.h) over 10,000 single-bit
 * flips into the live chain: every flip into the tables or the
 * configuration is detected and no downlinked spectrum changes without the
 * upset flag; every flip into the running sums, their flags, saturation
 * counts or check is found by the sums' check at release (tl_integrate.h),
 * at the rate their share of the region's bits predicts, and none changes
 * a spectrum silently (docs/faults.md); nothing hangs. Under the san build AddressSanitizer
 * checks that no flip anywhere in the context makes the firmware touch
 * memory outside it.
 */
#include "tl_test.h"

#include <jansson.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "tl_chain.h"
#include "upset.h"

static void run(uint32_t targets, uint32_t trials, uint64_t seed, tl_upset_tally t[TL_UPSET_TARGETS])
{
    tl_upset_opts o;
    tl_upset_defaults(&o);
    o.targets = targets;
    o.trials = trials;
    o.seed = seed;
    o.products = 2u;
    char err[256];
    if (tl_upset_run(&o, t, err, sizeof err) != 0)
        fail_msg("%s", err);
    tl_upset_print(stdout, &o, t);
}

static void print_tally(unsigned k, const tl_upset_tally *y)
{
    printf("    %-12s %6llu trials: detected %6llu, flagged %6llu, changed %6llu, silent %6llu, hk only %5llu, "
           "no effect %6llu, stopped %4llu, hangs %llu\n",
           tl_upset_target_name(k), (unsigned long long)y->trials, (unsigned long long)y->detected,
           (unsigned long long)y->flagged, (unsigned long long)y->changed, (unsigned long long)y->silent,
           (unsigned long long)y->hk_only, (unsigned long long)y->no_effect, (unsigned long long)y->stopped,
           (unsigned long long)y->watchdog);
}

static void ten_thousand_upsets(void **state)
{
    (void)state;
    const uint64_t seed = tl_test_seed("ten_thousand_upsets", 1u);
    tl_upset_tally a[TL_UPSET_TARGETS], b[TL_UPSET_TARGETS], c[TL_UPSET_TARGETS];
    /* 3 x 2000 into tables and configuration, 2 x 1500 into sums and
     * state, 2 x 500 into the scrubber and anywhere: 10,000 flips */
    run((1u << TL_UPSET_TAPS) | (1u << TL_UPSET_TWIDDLES) | (1u << TL_UPSET_CONFIG), 2000u, seed, a);
    run((1u << TL_UPSET_ACCUM) | (1u << TL_UPSET_STATE), 1500u, seed + 1u, b);
    run((1u << TL_UPSET_SCRUBBER) | (1u << TL_UPSET_ANYWHERE), 500u, seed + 2u, c);
    uint64_t total = 0;
    for (unsigned k = 0; k < TL_UPSET_TARGETS; k++) {
        tl_upset_tally y = a[k];
        if (b[k].trials)
            y = b[k];
        if (c[k].trials)
            y = c[k];
        print_tally(k, &y);
        total += y.injected;
        /* no flip anywhere makes the chain loop without bound */
        assert_int_equal(y.watchdog, 0u);
    }
    assert_true(total >= 10000u);
    /* tables and configuration: every flip found by the scrubber (100 %,
     * which includes every flip that would change an output), every run
     * flagged, and none changed a downlinked spectrum without the flag;
     * the table flips do change spectra (so the comparison can fail) */
    for (unsigned k = TL_UPSET_TAPS; k <= TL_UPSET_CONFIG; k++) {
        assert_int_equal(a[k].trials, 2000u);
        assert_int_equal(a[k].detected, a[k].trials);
        assert_int_equal(a[k].flagged, a[k].trials);
        assert_int_equal(a[k].silent, 0u);
        assert_int_equal(a[k].stopped, 0u);
    }
    assert_true(a[TL_UPSET_TAPS].changed > 1000u);
    assert_true(a[TL_UPSET_TWIDDLES].changed > 500u);
    /* the configuration is checked before each piece of samples is used:
     * no flip of it reaches a spectrum */
    assert_int_equal(a[TL_UPSET_CONFIG].changed, 0u);
    /* Running sums: every bank's 64-bit sums, flag octets, saturation
     * counts and their check are verified before each release. One flipped
     * bit there changes the wrapping sum by +-2^b, never 0 mod 2^64, so all
     * of them are detected and flagged; only the ADC counters (tl_stats,
     * housekeeping only) are not covered. Predicted share detected = the
     * covered bits over the region's bits (exact counts: 3 states x
     * ((2 auto + 2 cross) x 128 channels x 64 bits + 128 x 8 flag bits +
     * 4 x 32 count bits + 64 check bits), over region_bits), checked within
     * 5 binomial standard deviations (closed-form statistics); no spectrum
     * changes silently. */
    const tl_upset_tally *acc = &b[TL_UPSET_ACCUM];
    const double covered = 3.0 * (4.0 * 128.0 * 64.0 + 128.0 * 8.0 + 4.0 * 32.0 + 64.0);
    const double pred = covered / (double)acc->region_bits;
    const double meas = (double)acc->detected / (double)acc->trials;
    const double sd = sqrt(pred * (1.0 - pred) / (double)acc->trials);
    printf("    accumulators: detected %.4f measured, %.4f predicted (+-%.4f), region %llu bits\n", meas, pred, sd,
           (unsigned long long)acc->region_bits);
    assert_true(fabs(meas - pred) <= 5.0 * sd);
    assert_int_equal(acc->silent, 0u);
    assert_true(acc->changed > acc->trials / 2u); /* the flips do reach spectra: the check is what flags them */
    assert_true(acc->flagged >= acc->changed);
    /* Running state: out-of-range values are repaired and flagged; values
     * still in range (a ring position, a fill count, the filterbank's input
     * history, scratch) are not detected. Report; the scratch buffers are
     * rewritten before use, so most flips have no effect. */
    const tl_upset_tally *st = &b[TL_UPSET_STATE];
    assert_true(st->no_effect > st->trials / 2u);
    assert_true(st->detected > 0u);
    /* the scrubber's own fields: a flip there never changes a spectrum
     * (a false mismatch restores identical bytes and flags) */
    assert_int_equal(c[TL_UPSET_SCRUBBER].changed, 0u);
}

static char argv0[4096];

/* `tidelock upset`: the JSON it writes, its exit status, one-line errors. */
static void command_line(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl-upset-XXXXXX";
    assert_non_null(mkdtemp(dir));
    char args[512], out[4096];
    snprintf(args, sizeof args, "upset --trials 40 --target taps,state --seed 9 --json %s/u.json", dir);
    assert_int_equal(tl_test_tool(argv0, args, out, sizeof out), 0);
    assert_int_equal(tl_test_lines(out), 1);
    assert_non_null(strstr(out, "80 flips in 80 trials (seed 9"));
    char path[600];
    snprintf(path, sizeof path, "%s/u.json", dir);
    json_error_t je;
    json_t *j = json_load_file(path, 0, &je);
    assert_non_null(j);
    json_t *taps = json_object_get(json_object_get(j, "targets"), "taps");
    assert_int_equal(json_integer_value(json_object_get(taps, "trials")), 40);
    assert_int_equal(json_integer_value(json_object_get(taps, "detected")), 40);
    assert_int_equal(json_integer_value(json_object_get(taps, "silent")), 0);
    assert_int_equal(json_integer_value(json_object_get(taps, "region_bits")), 8 * (20 + 4 * 4 * 256));
    assert_null(json_object_get(json_object_get(j, "targets"), "config"));
    json_decref(j);
    unlink(path);
    rmdir(dir);
    assert_int_equal(tl_test_tool(argv0, "upset --trials 0", out, sizeof out), 2);
    assert_int_equal(tl_test_lines(out), 1);
    assert_non_null(strstr(out, "--trials '0': must be an integer from 1 to 10000000"));
    assert_int_equal(tl_test_tool(argv0, "upset --target bogus", out, sizeof out), 2);
    assert_int_equal(tl_test_lines(out), 1);
}

static void target_names(void **state)
{
    (void)state;
    const char *bad = NULL;
    assert_int_equal(tl_upset_parse_targets("taps,config", &bad), (1u << TL_UPSET_TAPS) | (1u << TL_UPSET_CONFIG));
    assert_int_equal(tl_upset_parse_targets("tables", &bad), (1u << TL_UPSET_TAPS) | (1u << TL_UPSET_TWIDDLES));
    assert_int_equal(tl_upset_parse_targets("all", &bad), (1u << TL_UPSET_TARGETS) - 1u);
    assert_int_equal(tl_upset_parse_targets("taps,bogus", &bad), 0u);
    assert_string_equal(bad, "bogus");
    assert_string_equal(tl_upset_target_name(TL_UPSET_ANYWHERE), "anywhere");
    assert_null(tl_upset_target_name(TL_UPSET_TARGETS));
}

int main(int argc, char **argv)
{
    (void)argc;
    snprintf(argv0, sizeof argv0, "%s", argv[0]);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(target_names),
        cmocka_unit_test(command_line),
        cmocka_unit_test(ten_thousand_upsets),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
