/* The accuracy-aware lookup (cp_table_lookup_bounded, convpick/table.h) on
 * tests/data/bounded.table.json: one entry made by hand for this test (device
 * and settings of tiny.table.json) whose candidates are, as (rel_err, median):
 *   winograd_4x4_3x3  2e-6, 1.0 ms   (the table's choice)
 *   winograd_2x2_3x3  1e-7, 1.5 ms
 *   im2col_gemm       3e-7, 1.2 ms
 *   direct            5e-8, 9.0 ms
 *   blocked           disqualified (5e-4), depthwise failed.
 * Expected answers worked out by hand from the rule (fastest recorded
 * candidate within the bound, the table's choice when it is within):
 *   bound 1e-4 -> winograd_4x4_3x3 (the choice; 4 within)
 *   bound 1e-6 -> im2col_gemm      (1.2 ms beats 1.5 and 9.0; 3 within)
 *   bound 2e-7 -> winograd_2x2_3x3 (2 within)
 *   bound 6e-8 -> direct           (1 within)
 *   bound 1e-8 -> none: CP_ENOTFOUND naming direct at 5e-08
 *   bound 1e-3 -> still not blocked: a disqualified candidate was never timed. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "convpick/table.h"
#include "tests/support/conv.h"

#define FIXTURE CP_TEST_DATA "/bounded.table.json"

static cp_shape layer(void) {
    cp_shape s = cpt_shape(1, 16, 14, 14, 16, 3, 3);
    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = 1;
    return s;
}

static void test_bounds(void **state) {
    (void)state;
    cp_table *t = NULL;
    char msg[256];
    assert_int_equal(cp_table_load(FIXTURE, 0, &t, msg, sizeof msg), CP_OK);
    const cp_shape s = layer();
    static const struct {
        double bound;
        const char *algo;
        double err;
    } want[] = {
        {1e-4, "winograd_4x4_3x3", 2e-6}, {1e-6, "im2col_gemm", 3e-7},
        {2e-7, "winograd_2x2_3x3", 1e-7}, {6e-8, "direct", 5e-8},
        {1e-3, "winograd_4x4_3x3", 2e-6},
    };
    for (size_t i = 0; i < sizeof want / sizeof want[0]; i++) {
        cp_choice c;
        assert_int_equal(cp_table_lookup_bounded(t, &s, CP_XCORR, 1, want[i].bound, &c, msg,
                                                 sizeof msg), CP_OK);
        if (strcmp(c.algo->name, want[i].algo) != 0)
            fail_msg("bound %g: got %s, want %s", want[i].bound, c.algo->name, want[i].algo);
        assert_int_equal(c.match, CP_MATCH_EXACT);
        assert_true(c.max_rel_err == want[i].bound); /* says which bound it used */
        assert_true(c.rel_err == want[i].err);
        assert_true(c.rel_err <= c.max_rel_err);
        assert_non_null(strstr(c.why, "bound rel_err <="));
    }
    /* Nothing recorded is that accurate: not found, naming the most accurate. */
    cp_choice c;
    assert_int_equal(cp_table_lookup_bounded(t, &s, CP_XCORR, 1, 1e-8, &c, msg, sizeof msg),
                     CP_ENOTFOUND);
    assert_non_null(strstr(msg, "most accurate is direct at 5e-08"));
    /* No exact entry (other flip): no approximate answer under a bound. */
    assert_int_equal(cp_table_lookup_bounded(t, &s, CP_CONV, 1, 1e-4, &c, msg, sizeof msg),
                     CP_ENOTFOUND);
    assert_non_null(strstr(msg, "no entry of exactly this shape"));
    /* A bound that is not a number >= 0. */
    assert_int_equal(cp_table_lookup_bounded(t, &s, CP_XCORR, 1, -1.0, &c, msg, sizeof msg),
                     CP_EINVAL);
    assert_int_equal(cp_table_lookup_bounded(t, &s, CP_XCORR, 1, NAN, &c, msg, sizeof msg),
                     CP_EINVAL);
    /* The unbounded lookup says it used no bound of its own and reports the
     * choice's recorded error. */
    assert_int_equal(cp_table_lookup(t, &s, CP_XCORR, 1, &c, msg, sizeof msg), CP_OK);
    assert_true(isinf(c.max_rel_err));
    assert_true(c.rel_err == 2e-6);
    cp_table_free(t);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_bounds),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
