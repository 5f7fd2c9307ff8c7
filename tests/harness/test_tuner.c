/* The tuner's choice rule on invented candidate lists (tuner.h documents the
 * rule; the figures here are chosen so each branch of it decides the result). */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "harness/tune/tuner.h"

static cp_candidate cand(const char *algo, double med, double lo, double hi, int disq) {
    cp_candidate c;
    memset(&c, 0, sizeof c);
    strncpy(c.algo, algo, sizeof c.algo - 1);
    c.timing.median = med;
    c.timing.ci_lo = lo;
    c.timing.ci_hi = hi;
    c.timing.samples = disq ? 0 : 20;
    c.disqualified = disq;
    return c;
}

static void test_fastest_wins_runner_up_other_algo(void **state) {
    (void)state;
    cp_candidate c[4] = {
        cand("direct", 10.0, 9.9, 10.1, 0),
        cand("blocked", 2.0, 1.98, 2.02, 0),
        cand("blocked", 2.2, 2.18, 2.22, 0),   /* same algorithm: not the runner-up */
        cand("im2col_gemm", 3.0, 2.9, 3.1, 0),
    };
    int ru, noise;
    double margin;
    int best = cph_tune_choose(c, 4, &ru, &margin, &noise);
    assert_int_equal(best, 1);
    assert_int_equal(ru, 3);
    assert_true(margin > 0.499 && margin < 0.501); /* 3.0 / 2.0 - 1 */
    assert_int_equal(noise, 0);
}

static void test_disqualified_never_chosen(void **state) {
    (void)state;
    cp_candidate c[2] = {
        cand("winograd_2x2_3x3", 1.0, 0.9, 1.1, 1), /* fastest but inaccurate */
        cand("direct", 5.0, 4.9, 5.1, 0),
    };
    int ru, noise;
    double margin;
    assert_int_equal(cph_tune_choose(c, 2, &ru, &margin, &noise), 1);
    assert_int_equal(ru, -1);
    assert_true(margin == 0.0);
}

static void test_overlapping_intervals_are_in_noise(void **state) {
    (void)state;
    cp_candidate c[2] = {
        cand("im2col_gemm", 1.00, 0.95, 1.05, 0),
        cand("blocked", 1.02, 0.99, 1.06, 0),
    };
    int ru, noise;
    double margin;
    assert_int_equal(cph_tune_choose(c, 2, &ru, &margin, &noise), 0);
    assert_int_equal(ru, 1);
    assert_int_equal(noise, 1);
}

static void test_same_algo_runner_up_when_alone(void **state) {
    (void)state;
    cp_candidate c[2] = {
        cand("blocked", 2.0, 1.9, 2.1, 0),
        cand("blocked", 1.5, 1.4, 1.6, 0),
    };
    int ru, noise;
    double margin;
    assert_int_equal(cph_tune_choose(c, 2, &ru, &margin, &noise), 1);
    assert_int_equal(ru, 0);
}

static void test_nothing_qualified(void **state) {
    (void)state;
    cp_candidate c[1] = {cand("direct", 1.0, 1.0, 1.0, 1)};
    int ru, noise;
    double margin;
    assert_int_equal(cph_tune_choose(c, 1, &ru, &margin, &noise), -1);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fastest_wins_runner_up_other_algo),
        cmocka_unit_test(test_disqualified_never_chosen),
        cmocka_unit_test(test_overlapping_intervals_are_in_noise),
        cmocka_unit_test(test_same_algo_runner_up_when_alone),
        cmocka_unit_test(test_nothing_qualified),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
