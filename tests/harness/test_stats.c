/* Statistics of timing samples (harness/measure/stats.c) against outside values:
 * SciPy / NumPy reference values in tests/data/stats_fixtures.txt (written by
 * scripts/gen_stats_fixtures.py) and a worked example checkable by hand. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/measure/stats.h"

#define FIXTURE CP_TEST_DATA "/stats_fixtures.txt"
#define LINE_MAX_CHARS (1 << 16)

static int close_rel(double a, double b, double rel) {
    if (a == b) return 1;
    return fabs(a - b) <= rel * fmax(fabs(a), fabs(b));
}

static FILE *open_fixture(void) {
    FILE *f = fopen(FIXTURE, "r");
    if (!f) fail_msg("cannot open %s", FIXTURE);
    return f;
}

/* Ranks: every (n, confidence) SciPy computed, n = 1..61, 99..101, 1e3..1e5. */
static void test_ranks_match_scipy(void **state) {
    (void)state;
    FILE *f = open_fixture();
    char *line = malloc(LINE_MAX_CHARS);
    assert_non_null(line);
    int checked = 0, none = 0;
    while (fgets(line, LINE_MAX_CHARS, f)) {
        unsigned long n;
        double conf, cov;
        long lo, hi;
        if (sscanf(line, "ranks %lu %lf %ld %ld %lf", &n, &conf, &lo, &hi, &cov) != 5) continue;
        size_t l = 12345, h = 12345;
        const int ok = cph_median_ci_ranks((size_t)n, conf, &l, &h);
        if (lo < 0) {
            if (ok) fail_msg("n=%lu conf=%.2f: SciPy finds no ranks, we found %zu %zu", n, conf, l, h);
            none++;
        } else {
            if (!ok) fail_msg("n=%lu conf=%.2f: no ranks, SciPy has %ld %ld", n, conf, lo, hi);
            if ((long)l != lo || (long)h != hi)
                fail_msg("n=%lu conf=%.2f: ranks %zu %zu, SciPy %ld %ld", n, conf, l, h, lo, hi);
            const double ours = 1.0 - 2.0 * exp(cph_binom_half_logcdf((size_t)n, l));
            if (!close_rel(ours, cov, 1e-9))
                fail_msg("n=%lu conf=%.2f: coverage %.17g, SciPy %.17g", n, conf, ours, cov);
            assert_true(ours >= conf);
        }
        checked++;
    }
    free(line);
    fclose(f);
    assert_true(checked >= 200); /* the fixture has 67 sizes x 3 confidences */
    assert_true(none > 0);       /* and small n where no interval exists */
}

static void test_logcdf_matches_scipy(void **state) {
    (void)state;
    FILE *f = open_fixture();
    char line[512];
    int checked = 0;
    while (fgets(line, sizeof line, f)) {
        unsigned long n, k;
        double v;
        if (sscanf(line, "logcdf %lu %lu %lf", &n, &k, &v) != 3) continue;
        const double ours = cph_binom_half_logcdf((size_t)n, (size_t)k);
        if (!close_rel(ours, v, 1e-9))
            fail_msg("logcdf n=%lu k=%lu: %.17g, SciPy %.17g", n, k, ours, v);
        checked++;
    }
    fclose(f);
    assert_true(checked >= 8);
}

static int cmp_d(const void *a, const void *b) {
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Median, quartiles, mean, stddev, min, max of the committed sample arrays
 * against numpy; the CI bounds against the SciPy ranks applied to the sorted
 * array. */
static void test_sample_stats_match_numpy(void **state) {
    (void)state;
    FILE *f = open_fixture();
    char *line = malloc(LINE_MAX_CHARS);
    assert_non_null(line);
    double *v = NULL;
    size_t nv = 0;
    char name[64] = "";
    int checked = 0;
    while (fgets(line, LINE_MAX_CHARS, f)) {
        char nm[64];
        unsigned long n;
        int used;
        if (sscanf(line, "sample %63s %lu%n", nm, &n, &used) == 2) {
            free(v);
            v = malloc(n * sizeof *v);
            assert_non_null(v);
            char *p = line + used;
            for (size_t i = 0; i < n; i++) {
                char *end;
                v[i] = strtod(p, &end);
                assert_true(end != p);
                p = end;
            }
            nv = n;
            snprintf(name, sizeof name, "%s", nm);
            continue;
        }
        double med, q1, q3, mean, sd, mn, mx;
        if (sscanf(line, "stats %63s %lf %lf %lf %lf %lf %lf %lf", nm, &med, &q1, &q3, &mean, &sd,
                   &mn, &mx) != 8)
            continue;
        assert_string_equal(nm, name);
        cph_stats st;
        cph_stats_compute(v, nv, 0.95, &st);
        assert_int_equal(st.n, nv);
        if (!close_rel(st.median, med, 1e-14)) fail_msg("%s: median %.17g numpy %.17g", nm, st.median, med);
        if (!close_rel(st.q1, q1, 1e-12)) fail_msg("%s: q1 %.17g numpy %.17g", nm, st.q1, q1);
        if (!close_rel(st.q3, q3, 1e-12)) fail_msg("%s: q3 %.17g numpy %.17g", nm, st.q3, q3);
        if (!close_rel(st.mean, mean, 1e-12)) fail_msg("%s: mean %.17g numpy %.17g", nm, st.mean, mean);
        if (!close_rel(st.stddev, sd, 1e-9)) fail_msg("%s: stddev %.17g numpy %.17g", nm, st.stddev, sd);
        assert_true(st.min == mn && st.max == mx);

        double *s = malloc(nv * sizeof *s);
        assert_non_null(s);
        memcpy(s, v, nv * sizeof *s);
        qsort(s, nv, sizeof *s, cmp_d);
        size_t lo, hi;
        if (cph_median_ci_ranks(nv, 0.95, &lo, &hi)) {
            assert_true(st.ci_exact);
            assert_true(st.ci_lo == s[lo] && st.ci_hi == s[hi]);
        } else {
            assert_false(st.ci_exact);
            assert_true(st.ci_lo == s[0] && st.ci_hi == s[nv - 1]);
        }
        assert_true(st.ci_lo <= st.median && st.median <= st.ci_hi);
        const double rel = fmax(st.median - st.ci_lo, st.ci_hi - st.median) / st.median;
        assert_true(close_rel(st.rel_ci, rel, 1e-15));
        free(s);
        checked++;
    }
    free(v);
    free(line);
    fclose(f);
    assert_int_equal(checked, 8);
}

/* Worked by hand: n = 10, 95 %.  P(B <= 1) = (C(10,0) + C(10,1)) / 2^10 =
 * 11/1024 = 0.0107 <= 0.025, P(B <= 2) = 56/1024 = 0.0547 > 0.025, so the
 * interval is [x_(2), x_(9)] (1-based), 0-based ranks 1 and 8, coverage
 * 1 - 22/1024 = 0.978515625.  Le Boudec (2010) tabulates the same ranks
 * (from memory). */
static void test_worked_example_n10(void **state) {
    (void)state;
    size_t lo, hi;
    assert_true(cph_median_ci_ranks(10, 0.95, &lo, &hi));
    assert_int_equal(lo, 1);
    assert_int_equal(hi, 8);
    assert_true(fabs(exp(cph_binom_half_logcdf(10, 1)) - 11.0 / 1024.0) < 1e-15);
    assert_true(fabs(exp(cph_binom_half_logcdf(10, 2)) - 56.0 / 1024.0) < 1e-15);

    const double t[10] = {7, 3, 10, 1, 5, 9, 2, 8, 4, 6};
    cph_stats st;
    cph_stats_compute(t, 10, 0.95, &st);
    assert_true(st.median == 5.5);
    assert_true(st.ci_lo == 2.0 && st.ci_hi == 9.0);
    assert_true(fabs(st.coverage - 1002.0 / 1024.0) < 1e-12);
    assert_true(fabs(st.rel_ci - 3.5 / 5.5) < 1e-15);
    assert_true(st.mean == 5.5);
    /* sum of squared deviations from 5.5 over 1..10 is 82.5; / 9 */
    assert_true(fabs(st.stddev - sqrt(82.5 / 9.0)) < 1e-14);
    assert_true(st.min == 1.0 && st.max == 10.0);
    /* quartiles by linear interpolation: h = 9/4 = 2.25 -> 3.25; h = 6.75 -> 7.75 */
    assert_true(fabs(st.q1 - 3.25) < 1e-15 && fabs(st.q3 - 7.75) < 1e-15);
    assert_true(st.noisy); /* IQR 4.5 is 82 % of the median */
}

/* 2^-5 = 0.03125 > 0.025: five samples cannot give a 95 % interval; the
 * [min, max] fallback covers with probability 1 - 2/32. */
static void test_small_n_falls_back_to_range(void **state) {
    (void)state;
    size_t lo, hi;
    assert_false(cph_median_ci_ranks(5, 0.95, &lo, &hi));
    assert_true(cph_median_ci_ranks(6, 0.95, &lo, &hi)); /* 2^-6 = 0.0156 */
    assert_int_equal(lo, 0);
    assert_int_equal(hi, 5);
    assert_false(cph_median_ci_ranks(7, 0.99, &lo, &hi)); /* 2^-7 = 0.0078 > 0.005 */
    assert_true(cph_median_ci_ranks(8, 0.99, &lo, &hi));  /* 2^-8 = 0.0039 */
    assert_false(cph_median_ci_ranks(100, 1.0, &lo, &hi));

    const double t[5] = {1.0, 1.1, 0.9, 1.05, 1.2};
    cph_stats st;
    cph_stats_compute(t, 5, 0.95, &st);
    assert_false(st.ci_exact);
    assert_true(st.ci_lo == 0.9 && st.ci_hi == 1.2);
    assert_true(fabs(st.coverage - 0.9375) < 1e-15);
    assert_true(fabs(st.rel_ci - 0.15 / 1.05) < 1e-12);
}

/* The noise rule: IQR / median > 0.10. */
static void test_noise_rule(void **state) {
    (void)state;
    cph_stats st;
    double calm[20];
    for (int i = 0; i < 20; i++) calm[i] = 1.0 + 0.004 * (double)(i % 5); /* IQR 0.008 */
    cph_stats_compute(calm, 20, 0.95, &st);
    assert_false(st.noisy);
    double wild[20];
    for (int i = 0; i < 20; i++) wild[i] = 1.0 + 0.1 * (double)(i % 5); /* IQR 0.2 of 1.2 */
    cph_stats_compute(wild, 20, 0.95, &st);
    assert_true(st.noisy);

    cph_stats_compute(NULL, 0, 0.95, &st);
    assert_int_equal(st.n, 0);
    assert_true(isinf(st.rel_ci));
    assert_true(st.noisy);

    const double one = 3e-3;
    cph_stats_compute(&one, 1, 0.95, &st);
    assert_true(st.median == one && st.ci_lo == one && st.ci_hi == one && st.rel_ci == 0.0);
    assert_true(st.stddev == 0.0);
}

/* Large n: the log-space CDF must not underflow or lose the ranks.  Normal
 * approximation (common practice, no source): lo ~ n/2 - 1.96 sqrt(n)/2. */
static void test_large_n_is_sane(void **state) {
    (void)state;
    size_t lo, hi;
    assert_true(cph_median_ci_ranks(100000, 0.95, &lo, &hi));
    const double approx = 50000.0 - 1.959964 * sqrt(100000.0) / 2.0;
    assert_true(fabs((double)lo - approx) < 3.0);
    assert_int_equal(lo + hi, 99999);
    const double l = cph_binom_half_logcdf(100000, 10000);
    assert_true(isfinite(l) && l < -10000.0);
    assert_true(cph_binom_half_logcdf(100000, 100000) == 0.0);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_ranks_match_scipy),
        cmocka_unit_test(test_logcdf_matches_scipy),
        cmocka_unit_test(test_sample_stats_match_numpy),
        cmocka_unit_test(test_worked_example_n10),
        cmocka_unit_test(test_small_n_falls_back_to_range),
        cmocka_unit_test(test_noise_rule),
        cmocka_unit_test(test_large_n_is_sane),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
