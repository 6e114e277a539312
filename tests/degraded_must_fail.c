/*
 * degraded_must_fail.c - the fidelity test on a deliberately degraded build.
 *
 * Built only as build/deg/test_degraded, with the firmware compiled with
 * -DTL_FFT_DATA_BITS=16: the FFT keeps only 16 significant bits of every
 * stage's output, like a 16-bit data path. The same measurement as
 * test_fidelity.c must then FAIL its limits, which shows the fidelity test
 * can fail. (General-purpose 16-bit fixed-point FFT paths reach only about
 * 32 dB SQNR on noise: figure quoted in the chain issue, from measurement.)
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "run.h"
#include "tl_fft.h"
#include "tl_test.h"

#if TL_FFT_DATA_BITS != 16
#error "degraded_must_fail.c belongs to the TL_FFT_DATA_BITS=16 build (make test-deg)"
#endif

static void test_sixteen_bit_data_path_fails(void **state)
{
    (void)state;
    tl_scenario s;
    tl_scenario_nominal(&s);
    s.spectra = 1024u; /* the failure is gross; a shorter run shows it */
    s.blocks = 16u;
    tl_run_result *r = calloc(1, sizeof *r);
    assert_int_equal(tl_run_scenario(&s, r, NULL, NULL), TL_OK);
    const tl_fid_metrics *m = &r->fid.main[TL_FID_AUTO0];
    char why[4096];
    const int fails = tl_fidelity_verdict(&r->fid, why, sizeof why);
    printf("    16-bit data path: margin %.3g (limit %.2g), bias %.3g (limit %.0e), %d failed checks:\n%s", m->margin,
           TL_FID_MARGIN_MAX, m->bias, TL_FID_BIAS_MAX, fails, why);
    assert_true(fails > 0);
    assert_true(m->margin > TL_FID_MARGIN_MAX);
    assert_true(fabs(m->bias) > TL_FID_BIAS_MAX);
    free(r);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_sixteen_bit_data_path_fails),
    };
    return cmocka_run_group_tests_name("degraded build must fail", tests, NULL, NULL);
}
