/* tune's error/time trade-off line (harness/tune/tradeoff.h) on entries made
 * by hand; the expected lines are worked out in the comments (rule in
 * tradeoff.h, no outside source). */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "harness/tune/tradeoff.h"

static cp_candidate cand(const char *algo, double err, double median) {
    cp_candidate c;
    memset(&c, 0, sizeof c);
    strcpy(c.algo, algo);
    c.rel_err = err;
    c.timing.median = median;
    return c;
}

/* (rel_err, ms): w4 (2e-6, 1.0) is fastest and least accurate.  Sorted by
 * error: direct (5e-8, 9.0) shown; w2 (1e-7, 1.5) faster, shown; im2col
 * (3e-7, 1.2) faster, shown; w4 (2e-6, 1.0) faster, shown.  The
 * disqualified blocked (5e-4) is not a timed candidate. */
static void test_fastest_least_accurate(void **state) {
    (void)state;
    cp_candidate v[5] = {
        cand("winograd_4x4_3x3", 2e-6, 1.0e-3), cand("winograd_2x2_3x3", 1e-7, 1.5e-3),
        cand("im2col_gemm", 3e-7, 1.2e-3), cand("direct", 5e-8, 9.0e-3),
        cand("blocked", 5e-4, 0.0),
    };
    v[4].disqualified = 1;
    cp_table_entry e;
    memset(&e, 0, sizeof e);
    e.candidates = v;
    e.ncandidates = 5;
    char buf[400];
    assert_int_equal(cph_tradeoff_line(&e, buf, sizeof buf), 1);
    assert_string_equal(buf, "error/time trade-off (the fastest is the least accurate): "
                             "rel_err 5e-08 9.000 ms direct | rel_err 1e-07 1.500 ms "
                             "winograd_2x2_3x3 | rel_err 3e-07 1.200 ms im2col_gemm | "
                             "rel_err 2e-06 1.000 ms winograd_4x4_3x3");
    /* A candidate beaten by a more accurate one is left out: im2col at 1.6 ms
     * is slower than w2 (1.5 ms) with more error. */
    v[2].timing.median = 1.6e-3;
    assert_int_equal(cph_tradeoff_line(&e, buf, sizeof buf), 1);
    assert_null(strstr(buf, "im2col_gemm"));
}

/* No line when the fastest is not the least accurate, or all errors tie. */
static void test_no_line(void **state) {
    (void)state;
    cp_candidate v[3] = {
        cand("a", 1e-7, 1.0e-3), cand("b", 2e-6, 1.5e-3), cand("c", 3e-7, 2.0e-3),
    };
    cp_table_entry e;
    memset(&e, 0, sizeof e);
    e.candidates = v;
    e.ncandidates = 3;
    char buf[400] = "";
    assert_int_equal(cph_tradeoff_line(&e, buf, sizeof buf), 0);
    assert_string_equal(buf, "");
    v[0].rel_err = v[1].rel_err = v[2].rel_err = 1e-7; /* one error level: no trade-off */
    assert_int_equal(cph_tradeoff_line(&e, buf, sizeof buf), 0);
    e.ncandidates = 1;
    assert_int_equal(cph_tradeoff_line(&e, buf, sizeof buf), 0);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fastest_least_accurate),
        cmocka_unit_test(test_no_line),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
