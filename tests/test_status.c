/*
 * test_status.c - tl_status names and texts (firmware/tl_status.h).
 *
 * Source of the expected names: the enum in firmware/tl_status.h, which
 * numbers the values 0 .. 29 ("Append values, never renumber",
 * DEVELOPERS.md). Added for the firmware coverage gate (docs/coverage.md):
 * before it, no suite of the coverage run reached tl_status.c.
 */
#include <stdio.h>
#include <string.h>
#include "tl_status.h"
#include "tl_test.h"

static const char *const names[] = {
    "TL_OK", "TL_E_NULL", "TL_E_POINTS", "TL_E_TAPS", "TL_E_INPUTS", "TL_E_ADC_BITS", "TL_E_INTEGRATION",
    "TL_E_SCALING", "TL_E_ROUNDING", "TL_E_DET_SHIFT", "TL_E_TABLE_SIZE", "TL_E_TABLE_FORMAT", "TL_E_TABLE_CRC",
    "TL_E_TABLE_RANGE", "TL_E_TABLE_MISMATCH", "TL_E_BUSY", "TL_E_EMPTY", "TL_E_NOT_INIT", "TL_E_SWITCH",
    "TL_E_PACKET_LEN", "TL_E_APID", "TL_E_SPACE", "TL_E_FRAME_LEN", "TL_E_ENCODING", "TL_E_NOISE_FRACTION",
    "TL_E_FORMAT", "TL_E_APID_FULL", "TL_E_TIME_RANGE", "TL_E_FIELD_RANGE", "TL_E_SK",
    "TL_E_SCRUB",
};
#define N_STATUS (sizeof names / sizeof names[0])

/* Every value has its own enum name, in the header's numbering. */
static void test_names(void **state)
{
    (void)state;
    assert_int_equal(N_STATUS, 31);
    assert_int_equal(TL_E_SCRUB, 30); /* the last value of tl_status.h */
    for (unsigned i = 0; i < N_STATUS; i++)
        assert_string_equal(tl_status_name((tl_status)i), names[i]);
    /* a value outside the enum (a corrupted status) still has a name */
    assert_string_equal(tl_status_name((tl_status)N_STATUS), "TL_E_UNKNOWN");
    assert_string_equal(tl_status_name((tl_status)-1), "TL_E_UNKNOWN");
}

/* Every text is one non-empty line, different from every other. */
static void test_texts(void **state)
{
    (void)state;
    assert_string_equal(tl_status_text(TL_OK), "success");
    for (unsigned i = 0; i < N_STATUS; i++) {
        const char *t = tl_status_text((tl_status)i);
        assert_non_null(t);
        assert_true(strlen(t) > 0 && strlen(t) < 120);
        assert_null(strchr(t, '\n'));
        assert_string_not_equal(t, "unknown status");
        for (unsigned j = 0; j < i; j++)
            assert_string_not_equal(t, tl_status_text((tl_status)j));
    }
    assert_string_equal(tl_status_text((tl_status)N_STATUS), "unknown status");
    printf("    %u statuses: distinct names and one-line texts\n", (unsigned)N_STATUS);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_names),
        cmocka_unit_test(test_texts),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
