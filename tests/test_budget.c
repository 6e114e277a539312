/*
 * test_budget.c - the downlink budget (host/budget.h): its volumes follow
 * from the measured packets by the CCSDS frame layout and the calendar;
 * the simulated product's packets are the ones `run` writes; the flight
 * product has the flight length and noise; the command's exit status and
 * JSON agree with the table.
 */
#include "tl_test.h"

#include <jansson.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "budget.h"
#include "run.h"

static char argv0[4096];

/* A small switched scenario: 512 channels, 1024 spectra. */
static void small(tl_scenario *s)
{
    tl_scenario_default(s);
    s->cfg.points = 1024;
    s->spectra = 1024;
    s->cfg.integration = 1024;
    s->blocks = 16;
    s->flight_spectra = 1u << 20;
    s->band_lo_hz = 5e6;
    s->band_hi_hz = 30e6;
}

static void test_volumes_follow_from_packets(void **state)
{
    (void)state;
    tl_scenario s;
    small(&s);
    tl_budget b;
    char err[512];
    assert_int_equal(tl_budget_compute(&s, &b, err, sizeof err), 0);
    const double pk = (double)(b.flight.octets_science + b.flight.octets_hk);
    /* frames: 4-octet sync marker (CCSDS 131.0-B) + 6-octet primary header
     * + 2-octet frame error control (CCSDS 132.0-B) around L - 8 data
     * octets [doc] */
    const double L = s.dl_frame_len;
    TL_ASSERT_NEAR(b.frame_efficiency, (L - 8.0) / (L + 4.0), 1e-12);
    TL_ASSERT_NEAR(b.link_octets, pk * (L + 4.0) / (L - 8.0), 1e-6);
    /* one flight integration: M' spectra of N samples at the ADC rate */
    TL_ASSERT_NEAR(b.product_s, 1048576.0 * 1024.0 / 102.4e6, 1e-9);
    TL_ASSERT_NEAR(b.per_hour, b.link_octets * 3600.0 / b.product_s, 1e-6);
    /* half a synodic month of 29.530589 days (common practice, no source) */
    TL_ASSERT_NEAR(b.per_night, b.link_octets / b.product_s * 14.7652945 * 86400.0, 1e-3);
    TL_ASSERT_NEAR(b.per_day, 0.0, 0.0);
    TL_ASSERT_NEAR(b.peak_per_earth_day, b.link_octets / b.product_s * 86400.0, 1e-6);
    TL_ASSERT_NEAR(b.mean_per_earth_day, b.per_lunation / 29.530589, 1e-6);
    /* one 1-hour pass a day at 64 kbit/s: 28.8 MB */
    TL_ASSERT_NEAR(b.capacity_per_earth_day, 28.8e6, 1e-3);
    TL_ASSERT_NEAR(b.link_hours_needed, b.peak_per_earth_day * 8.0 / 64e3 / 3600.0, 1e-12);
    TL_ASSERT_NEAR(b.storage_needed, b.peak_per_earth_day, 1e-6); /* a pass every 24 h */
    TL_ASSERT_NEAR(b.margin_allocation, (20e6 - b.peak_per_earth_day) / 20e6, 1e-12);
    assert_int_equal(b.closed, b.margin_allocation >= 0 && b.margin_link >= 0 && b.margin_storage >= 0);
    /* the flight product: M' spectra, every channel of 3 states x 4
     * quantities sent once, and never more octets than the raw sums */
    assert_int_equal(b.flight_spectra, 1u << 20);
    assert_int_equal(b.flight.octets_raw, 8u * 512u * 12u);
    assert_true(b.flight.octets_science < b.flight.octets_raw);
    printf("    512 channels: simulated %llu octets (x%.2f), flight %llu octets (x%.2f), %.1f bit/s, %.2f MB/day\n",
           (unsigned long long)(b.sim.octets_science + b.sim.octets_hk),
           (double)b.sim.octets_raw / (double)b.sim.octets_science,
           (unsigned long long)(b.flight.octets_science + b.flight.octets_hk),
           (double)b.flight.octets_raw / (double)b.flight.octets_science, b.rate_bps, b.peak_per_earth_day / 1e6);
    /* halving the night fraction halves the night's volume and the peak */
    tl_budget h;
    s.bud_night_fraction = 0.5;
    assert_int_equal(tl_budget_compute(&s, &h, err, sizeof err), 0);
    TL_ASSERT_NEAR(h.per_night, 0.5 * b.per_night, 1e-3);
    TL_ASSERT_NEAR(h.peak_per_earth_day, 0.5 * b.peak_per_earth_day, 1e-3);
}

/* Lossless: a flight integration 1024 times longer has sums with about
 * 0.5 log2(1024) = 5 fewer noise bits per value relative to the signal;
 * where the channel-to-channel differences are noise-dominated the payload
 * shrinks. The noise-bounded encoding at f = 1/8 keeps about log2(sqrt(2) /
 * f) + 2 = 5.5 bits of each difference (the entropy of a quantized
 * Gaussian, docs/encoding.md) against up to 64 lossless: less than half. */
static void test_flight_length_effect(void **state)
{
    (void)state;
    tl_scenario s;
    small(&s);
    s.cfg.switch_steps = 0;
    s.cfg.switch_discard = 0;
    tl_budget lossless, bounded;
    char err[512];
    assert_int_equal(tl_budget_compute(&s, &lossless, err, sizeof err), 0);
    s.dl_encoding = 1;
    assert_int_equal(tl_budget_compute(&s, &bounded, err, sizeof err), 0);
    const double ls = (double)lossless.sim.octets_science, lf = (double)lossless.flight.octets_science;
    const double bs = (double)bounded.sim.octets_science, bf = (double)bounded.flight.octets_science;
    printf("    lossless: simulated %.0f, flight %.0f octets; bounded f = 1/8: simulated %.0f, flight %.0f\n", ls, lf,
           bs, bf);
    assert_true(lf < ls);
    assert_true(bs < ls / 2.0);
    assert_true(bf < lf / 2.0);
}

/* The simulated product's packets are exactly those `run` writes. */
static void test_same_packets_as_run(void **state)
{
    (void)state;
    tl_scenario s;
    small(&s);
    tl_budget b;
    char err[512];
    assert_int_equal(tl_budget_compute(&s, &b, err, sizeof err), 0);
    tl_run_result *r = malloc(sizeof *r);
    assert_int_equal(tl_run_scenario(&s, r, NULL, NULL), TL_OK);
    assert_int_equal(r->dl.packets_science, b.sim.packets_science);
    assert_true(r->dl.octets_science == b.sim.octets_science);
    assert_true(r->dl.octets_hk == b.sim.octets_hk);
    free(r);
}

/* The processing budget: stage costs x sample rate x CPI against the clock
 * (exact arithmetic on the scenario's own values; definitions in budget.h). */
static void test_processing_budget(void **state)
{
    (void)state;
    tl_scenario s;
    tl_scenario_default(&s);
    tl_budget b;
    memset(&b, 0, sizeof b);
    tl_budget_processing(&s, &b);
    const double I = 131.763 + 522.925 + 68.014 + 33.016 + 0.332 + 1.846; /* the [processor] defaults */
    TL_ASSERT_NEAR(b.ips_total, I, 1e-9);
    TL_ASSERT_NEAR(b.instr_per_s, I * 102.4e6, 1e-3);
    TL_ASSERT_NEAR(b.cycles_per_s, I * 102.4e6, 1e-3);
    /* the default processor, one core at 600 MHz, CPI 1, does not keep up */
    TL_ASSERT_NEAR(b.load, I * 102.4e6 / 600e6, 1e-9);
    TL_ASSERT_NEAR(b.headroom, 1.0 - I * 102.4e6 / 600e6, 1e-9);
    TL_ASSERT_NEAR(b.realtime_fraction, 600e6 / (I * 102.4e6), 1e-15);
    /* a processor that keeps up: the whole stream, headroom left */
    s.proc_clock_hz = 200e9;
    tl_budget_processing(&s, &b);
    TL_ASSERT_NEAR(b.load, I * 102.4e6 / 200e9, 1e-12);
    TL_ASSERT_NEAR(b.headroom, 1.0 - I * 102.4e6 / 200e9, 1e-12);
    TL_ASSERT_NEAR(b.realtime_fraction, 1.0, 0.0);
    /* one Cortex-M7 at 600 MHz: the fraction it sustains, and no headroom */
    s.proc_clock_hz = 600e6;
    s.proc_cpi = 1.5;
    tl_budget_processing(&s, &b);
    TL_ASSERT_NEAR(b.cycles_per_s, I * 102.4e6 * 1.5, 1e-3);
    TL_ASSERT_NEAR(b.realtime_fraction, 600e6 / (I * 102.4e6 * 1.5), 1e-15);
    assert_true(b.headroom < 0.0);
}

static void test_cli(void **state)
{
    (void)state;
    char dir[] = "/tmp/tl_budget_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char ini[300], args[1024], out[16384], path[400];
    snprintf(ini, sizeof ini, "%s/b.ini", dir);
    FILE *f = fopen(ini, "w");
    fputs("[instrument]\nchannels = 512\n[integration]\nspectra = 1024\n[fidelity]\nblocks = 16\n"
          "extrapolate_to = 1048576\n[budget]\nallocation_mb_per_day = 1000\nlink_rate_kbps = 1000\nstorage_mb = 1000\n"
          "[processor]\nclock_mhz = 200000\n",
          f);
    fclose(f);
    snprintf(args, sizeof args, "budget %s -o %s/o", ini, dir);
    assert_int_equal(tl_test_tool(argv0, args, out, sizeof out), 0);
    assert_non_null(strstr(out, "budget: CLOSED"));
    snprintf(path, sizeof path, "%s/o/budget.json", dir);
    json_error_t je;
    json_t *j = json_load_file(path, 0, &je);
    assert_non_null(j);
    assert_true(json_is_true(json_object_get(j, "closed")));
    assert_int_equal(json_integer_value(json_object_get(j, "flight_spectra")), 1048576);
    json_t *pr = json_object_get(j, "processing");
    assert_non_null(pr);
    TL_ASSERT_NEAR(json_real_value(json_object_get(pr, "headroom")),
                   1.0 - 757.896 * 102.4e6 / 200e9, 1e-9); /* the default stage costs at 200 GHz */
    json_decref(j);
    /* a processor too slow for the sample rate opens the budget */
    f = fopen(ini, "w");
    fputs("[instrument]\nchannels = 512\n[integration]\nspectra = 1024\n[fidelity]\nblocks = 16\n"
          "extrapolate_to = 1048576\n[budget]\nallocation_mb_per_day = 1000\nlink_rate_kbps = 1000\nstorage_mb = 1000\n"
          "[processor]\nclock_mhz = 600\n",
          f);
    fclose(f);
    snprintf(args, sizeof args, "budget %s", ini);
    assert_int_equal(tl_test_tool(argv0, args, out, sizeof out), 1);
    assert_non_null(strstr(out, "sustainable real-time fraction 0.0077")); /* 600e6 / (757.896 x 102.4e6) = 0.00773 */
    assert_non_null(strstr(out, "budget: OPEN"));
    /* an allocation of 1 kB per day cannot close: exit 1, OPEN, a negative margin */
    f = fopen(ini, "w");
    fputs("[instrument]\nchannels = 512\n[integration]\nspectra = 1024\n[fidelity]\nblocks = 16\n"
          "[budget]\nallocation_mb_per_day = 0.001\n",
          f);
    fclose(f);
    snprintf(args, sizeof args, "budget %s", ini);
    assert_int_equal(tl_test_tool(argv0, args, out, sizeof out), 1);
    assert_non_null(strstr(out, "budget: OPEN"));
    /* a bad key: one line naming the file, section and range */
    f = fopen(ini, "w");
    fputs("[budget]\nlink_rate_kbps = 0\n", f);
    fclose(f);
    assert_int_equal(tl_test_tool(argv0, args, out, sizeof out), 1);
    assert_int_equal(tl_test_lines(out), 1);
    assert_non_null(strstr(out, "[budget] link_rate_kbps = '0': must be a number from 0.1 to 100000 kbit/s"));
    assert_int_equal(tl_test_tool(argv0, "budget --bogus", out, sizeof out), 2);
    snprintf(args, sizeof args, "rm -rf %s", dir);
    assert_int_equal(system(args), 0);
}

int main(int argc, char **argv)
{
    (void)argc;
    snprintf(argv0, sizeof argv0, "%s", argv[0]);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_volumes_follow_from_packets),
        cmocka_unit_test(test_flight_length_effect),
        cmocka_unit_test(test_same_packets_as_run),
        cmocka_unit_test(test_processing_budget),
        cmocka_unit_test(test_cli),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
