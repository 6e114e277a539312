/*
 * test_calibration_run.c - switching, calibration and the trough fit, end to
 * end: simulated sky voltages with the three switch states through the
 * firmware chain, two-point calibration on the ground, comparison with the
 * model's antenna temperature, and a trough fit.
 *
 * Expectations: residuals (T_cal - T_model) / sigma are unit normals, so the
 * reduced chi-squared is 1 within sqrt(2/K) per unit and the count beyond
 * 3 sigma is binomial with p = 0.0027 (normal tail; common practice, no
 * source); the calibration equation is Skou and Le Vine, Microwave
 * Radiometer Systems, ch. 10. The trough is made deep enough to be seen at
 * 10 sigma or more in this integration, as the test's own premise.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "run.h"
#include "tl_test.h"

static void switched_scenario(tl_scenario *s)
{
    tl_scenario_default(s);
    s->cfg.points = 2048;
    s->spectra = 8192;
    s->cfg.integration = 8192;
    s->cfg.switch_steps = 3;
    s->cfg.switch_state[0] = TL_STATE_ANTENNA;
    s->cfg.switch_state[1] = TL_STATE_LOAD;
    s->cfg.switch_state[2] = TL_STATE_NOISE;
    s->cfg.switch_dwell[0] = 64;
    s->cfg.switch_dwell[1] = 32;
    s->cfg.switch_dwell[2] = 32;
    s->cfg.switch_discard = 3; /* taps - 1 */
    s->sky.noise_excess_k = 30000.0;
    s->sky.trough_depth_k = 6000.0;
    s->sky.trough_centre_hz = 25e6;
    s->sky.trough_width_hz = 6e6;
    s->sky.trough_flatness = 1.0;
    s->sky.seed = tl_test_seed("calibration", 2);
}

static void test_calibrated_matches_model(void **state)
{
    (void)state;
    tl_scenario s;
    switched_scenario(&s);
    char err[512];
    assert_int_equal(tl_scenario_check(&s, NULL, err, sizeof err), 0);
    tl_run_result *r = calloc(1, sizeof *r);
    assert_int_equal(tl_run_scenario(&s, r, NULL, NULL), TL_OK);
    const tl_product *p = &r->fid.product;
    const tl_cal_report *c = &r->cal;
    assert_true(c->done);
    printf("    spectra: antenna %u, load %u, noise %u, discarded %u\n", p->antenna_spectra, p->cal[0].spectra,
           p->cal[1].spectra, p->discarded);
    assert_int_equal(p->antenna_spectra + p->cal[0].spectra + p->cal[1].spectra + p->discarded, 8192);
    const double K = c->channels, expect3 = K * 0.0027;
    for (unsigned i = 0; i < 2; i++) {
        const tl_trough_fit *f = &c->fit[i];
        printf("    input %u: %u channels, chi2/channel %.3f, beyond 3 sigma %u (expected %.1f); trough %.0f +- %.0f K "
               "(%.1f sigma, model %.0f K), centre %.3f +- %.3f MHz (model %.3f MHz)\n",
               i, c->channels, c->chi2_red[i], c->beyond3[i], expect3, f->depth, f->depth_sigma, f->significance,
               s.sky.trough_depth_k, f->centre / 1e6, f->centre_sigma / 1e6, s.sky.trough_centre_hz / 1e6);
        /* reduced chi-squared of K unit normals: 1 +- sqrt(2/K); allow 4 of those */
        TL_ASSERT_NEAR(c->chi2_red[i], 1.0, 4.0 * sqrt(2.0 / K));
        /* binomial count beyond 3 sigma: mean K p, sd sqrt(K p (1-p)); allow 3 sd */
        assert_true(c->beyond3[i] <= expect3 + 3.0 * sqrt(expect3 * (1.0 - 0.0027)) + 1.0);
        /* the trough: seen at 10 sigma or more, depth and centre within 3 sigma */
        assert_true(f->ok);
        assert_true(f->significance >= 10.0);
        TL_ASSERT_NEAR(f->depth, s.sky.trough_depth_k, 3.0 * f->depth_sigma);
        TL_ASSERT_NEAR(f->centre, s.sky.trough_centre_hz, 3.0 * f->centre_sigma);
    }
    /* the fidelity of the antenna state is still measured and passes */
    assert_int_equal(tl_fidelity_verdict(&r->fid, NULL, 0), 0);
    free(r);
}

/* A sequence without a load or noise state cannot calibrate: the scenario
 * check says so in one line. */
static void test_sequence_must_visit_all_states(void **state)
{
    (void)state;
    tl_scenario s;
    switched_scenario(&s);
    s.cfg.switch_state[2] = TL_STATE_LOAD;
    char err[512];
    assert_int_equal(tl_scenario_check(&s, "x.ini", err, sizeof err), -1);
    printf("    %s\n", err);
    assert_non_null(strstr(err, "[switching] sequence"));
    assert_non_null(strstr(err, "antenna, load and noise"));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_calibrated_matches_model),
        cmocka_unit_test(test_sequence_must_visit_all_states),
    };
    return cmocka_run_group_tests_name("calibration run", tests, NULL, NULL);
}
