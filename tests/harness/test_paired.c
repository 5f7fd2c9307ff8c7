/* Paired-trial statistics (harness/measure/paired.c) against outside values:
 * SciPy 1.10's scipy.stats.wilcoxon and its exact null table, and NumPy's
 * median of the Walsh averages, in tests/data/paired_fixtures.txt (written by
 * scripts/gen_paired_fixtures.py, which also checks each interval end against
 * SciPy's exact test), plus a case worked by hand. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/measure/paired.h"

#define FIXTURE CP_TEST_DATA "/paired_fixtures.txt"
#define LINE_CHARS (1 << 16)
#define MAXN 512

static int close_rel(double a, double b, double rel) {
    if (a == b) return 1;
    return fabs(a - b) <= rel * fmax(fabs(a), fabs(b));
}

/* Reads the n values that follow *pos in line. */
static size_t read_values(const char *pos, double *v, size_t n) {
    size_t got = 0;
    char *end;
    while (got < n) {
        const double x = strtod(pos, &end);
        if (end == pos) break;
        v[got++] = x;
        pos = end;
    }
    return got;
}

static cph_alternative alt_of(const char *s) {
    if (strcmp(s, "greater") == 0) return CPH_GREATER;
    if (strcmp(s, "less") == 0) return CPH_LESS;
    assert_string_equal(s, "two-sided");
    return CPH_TWO_SIDED;
}

/* Every scipy.stats.wilcoxon case: statistic, p-value and exact/approx path. */
static void test_wsr_matches_scipy(void **state) {
    (void)state;
    FILE *f = fopen(FIXTURE, "r");
    assert_non_null(f);
    char *line = malloc(LINE_CHARS);
    double *d = malloc(MAXN * sizeof *d);
    assert_non_null(line);
    assert_non_null(d);
    int checked = 0, exact = 0, approx = 0;
    while (fgets(line, LINE_CHARS, f)) {
        char name[64], alt[16];
        int ex, used;
        double stat, p;
        unsigned long n;
        if (sscanf(line, "wsr %63s %15s %d %lf %lf %lu %n", name, alt, &ex, &stat, &p, &n, &used) != 6)
            continue;
        assert_true(n <= MAXN);
        assert_int_equal(read_values(line + used, d, n), n);
        cph_wsr r;
        assert_int_equal(cph_wsr_test(d, n, alt_of(alt), &r), 0);
        if (r.exact != ex) fail_msg("%s %s: exact=%d, SciPy took %d", name, alt, r.exact, ex);
        if (!close_rel(r.statistic, stat, 1e-12))
            fail_msg("%s %s: statistic %.17g, SciPy %.17g", name, alt, r.statistic, stat);
        if (!close_rel(r.p, p, 1e-9)) fail_msg("%s %s: p %.17g, SciPy %.17g", name, alt, r.p, p);
        checked++;
        exact += ex;
        approx += !ex;
    }
    free(line);
    free(d);
    fclose(f);
    assert_true(checked >= 30 && exact >= 15 && approx >= 9);
}

/* The exact null distribution against SciPy's own table. */
static void test_pmf_matches_scipy(void **state) {
    (void)state;
    FILE *f = fopen(FIXTURE, "r");
    assert_non_null(f);
    char *line = malloc(LINE_CHARS);
    assert_non_null(line);
    int checked = 0;
    while (fgets(line, LINE_CHARS, f)) {
        unsigned long n;
        int used;
        if (sscanf(line, "pmf %lu %n", &n, &used) != 1) continue;
        const size_t top = n * (n + 1) / 2;
        double *want = malloc((top + 1) * sizeof *want), *got = malloc((top + 1) * sizeof *got);
        assert_non_null(want);
        assert_non_null(got);
        assert_int_equal(read_values(line + used, want, top + 1), top + 1);
        assert_int_equal(cph_wsr_exact_pmf(n, got), 0);
        for (size_t r = 0; r <= top; r++)
            if (!close_rel(got[r], want[r], 1e-12))
                fail_msg("n=%lu r=%zu: %.17g, SciPy %.17g", n, r, got[r], want[r]);
        free(want);
        free(got);
        checked++;
    }
    free(line);
    fclose(f);
    assert_int_equal(checked, 6);
}

/* The Hodges-Lehmann ratio and its interval on b = exp(d), a = 1. */
static void test_hl_matches_numpy_and_scipy(void **state) {
    (void)state;
    FILE *f = fopen(FIXTURE, "r");
    assert_non_null(f);
    char *line = malloc(LINE_CHARS);
    double *d = malloc(MAXN * sizeof *d), *a = malloc(MAXN * sizeof *a), *b = malloc(MAXN * sizeof *b);
    assert_non_null(line);
    assert_non_null(d);
    assert_non_null(a);
    assert_non_null(b);
    int bounded = 0, unbounded = 0;
    while (fgets(line, LINE_CHARS, f)) {
        char name[64];
        double alpha, ratio, lo, hi;
        unsigned long n;
        int used;
        if (sscanf(line, "hl %63s %lf %lf %lf %lf %lu %n", name, &alpha, &ratio, &lo, &hi, &n, &used) != 6)
            continue;
        assert_int_equal(read_values(line + used, d, n), n);
        for (size_t i = 0; i < n; i++) {
            a[i] = 1.0;
            b[i] = exp(d[i]);
        }
        cph_paired_cmp c;
        assert_int_equal(cph_compare_paired(a, b, n, alpha, &c), 0);
        assert_int_equal(c.n, n);
        if (ratio == 0.0) {
            if (c.bounded) fail_msg("%s alpha=%g: bounded, SciPy's table allows no interval", name, alpha);
            unbounded++;
            continue;
        }
        if (!c.bounded) fail_msg("%s alpha=%g: unbounded", name, alpha);
        if (!close_rel(c.ratio, ratio, 1e-12)) fail_msg("%s: ratio %.17g, NumPy %.17g", name, c.ratio, ratio);
        if (!close_rel(c.ratio_lo, lo, 1e-12) || !close_rel(c.ratio_hi, hi, 1e-12))
            fail_msg("%s alpha=%g: [%.17g, %.17g], want [%.17g, %.17g]", name, alpha, c.ratio_lo,
                     c.ratio_hi, lo, hi);
        assert_true(c.coverage >= 1.0 - alpha);
        bounded++;
    }
    free(line);
    free(d);
    free(a);
    free(b);
    fclose(f);
    assert_true(bounded >= 8 && unbounded >= 1);
}

/* Worked by hand: d = log 2 for three pairs.  R+ = 1+2+3 = 6 (ties: midrank
 * 2 each), n = 3 <= 50 and no zero, so exact; P(R+ >= 6) = 1/8 = 0.125 (one
 * of 2^3 sign patterns), two-sided min(R+, R-) = 0, p = 2 * 1/8 = 0.25.  All
 * Walsh averages are log 2, so the ratio is exactly 2. */
static void test_worked_example(void **state) {
    (void)state;
    const double a[3] = {1.0, 2.0, 4.0}, b[3] = {2.0, 4.0, 8.0};
    cph_paired_cmp c;
    assert_int_equal(cph_compare_paired(a, b, 3, 0.05, &c), 0);
    assert_true(close_rel(c.ratio, 2.0, 1e-15));
    assert_true(c.test.exact);
    assert_true(close_rel(c.test.statistic, 0.0, 0.0));
    assert_true(close_rel(c.test.p, 0.25, 1e-15));
    assert_false(c.bounded); /* 2^-3 = 0.125 > 0.025: no interval at 95 % */
    cph_wsr g;
    const double d[3] = {log(2.0), log(2.0), log(2.0)};
    assert_int_equal(cph_wsr_test(d, 3, CPH_GREATER, &g), 0);
    assert_true(close_rel(g.p, 0.125, 1e-15));
}

/* Bad input: empty, non-positive, NaN, all-zero differences. */
static void test_refuses_bad_input(void **state) {
    (void)state;
    const double one[2] = {1.0, 1.0}, bad[2] = {1.0, -1.0}, zero[2] = {0.0, 0.0};
    cph_paired_cmp c;
    cph_wsr w;
    assert_int_equal(cph_compare_paired(one, one, 0, 0.05, &c), -1);
    assert_int_equal(cph_compare_paired(one, bad, 2, 0.05, &c), -1);
    assert_int_equal(cph_wsr_test(zero, 2, CPH_TWO_SIDED, &w), -1);
    const double nan2[2] = {NAN, 1.0};
    assert_int_equal(cph_wsr_test(nan2, 2, CPH_TWO_SIDED, &w), -1);
    /* Identical times: no test, ratio 1, p 1. */
    assert_int_equal(cph_compare_paired(one, one, 2, 0.05, &c), 0);
    assert_true(c.ratio == 1.0 && c.test.p == 1.0 && c.test.n_used == 0);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_wsr_matches_scipy),
        cmocka_unit_test(test_pmf_matches_scipy),
        cmocka_unit_test(test_hl_matches_numpy_and_scipy),
        cmocka_unit_test(test_worked_example),
        cmocka_unit_test(test_refuses_bad_input),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
