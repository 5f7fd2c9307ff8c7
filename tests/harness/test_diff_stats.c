/* The statistics of convpick diff (harness/diff/diff_stats.h) and its pairing of
 * results files (harness/diff/diff_report.h).
 *
 * Outside references:
 *  - SciPy 1.10.1 scipy.stats.mannwhitneyu (two-sided; methods asymptotic,
 *    exact, auto) and NumPy 1.24.2 numpy.median of pairwise differences, on the
 *    sample arrays of tests/data/diff_fixtures.txt, written by
 *    scripts/gen_diff_fixtures.py; the interval ranks there come from an
 *    enumeration of the null distribution in Python (exact) and from
 *    scipy.stats.norm.isf (normal), not from this code.
 *  - Standard normal quantiles 1.959964 (0.975) and 2.575829 (0.995): published
 *    in every normal table (common practice, no source).
 *  - Synthetic samples with known shifts and spread from a seeded generator:
 *    the verdicts follow from the documented rules (docs/diff.md), and the
 *    false-alarm rate and interval coverage from the test's nominal levels. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/diff/diff_report.h"
#include "harness/diff/diff_stats.h"
#include "harness/io/results_read.h"

#define FIXTURES CP_TEST_DATA "/diff_fixtures.txt"

/* ---- fixtures of SciPy --------------------------------------------------- */

typedef struct fx_case {
    char name[64];
    double *x, *y;
    size_t m, n;
} fx_case;

static int cmp_d(const void *a, const void *b) {
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double *read_array(const char *line, const char *tag, size_t *count, const char *where) {
    const size_t tl = strlen(tag);
    if (strncmp(line, tag, tl) != 0 || line[tl] != ' ') fail_msg("%s: expected a %s line", where, tag);
    char *end;
    const char *p = line + tl;
    const unsigned long n = strtoul(p, &end, 10);
    if (end == p || n == 0) fail_msg("%s: bad count", where);
    double *v = malloc(n * sizeof *v);
    assert_non_null(v);
    p = end;
    for (unsigned long i = 0; i < n; i++) {
        v[i] = strtod(p, &end);
        if (end == p) fail_msg("%s: %s has fewer than %lu numbers", where, tag, n);
        p = end;
    }
    *count = n;
    return v;
}

static double rel_diff(double a, double b) {
    if (a == b) return 0.0;
    return fabs(a - b) / fmax(fabs(a), fabs(b));
}

static void check_case_line(const fx_case *c, const char *line, int lineno, int *checks) {
    char where[128];
    snprintf(where, sizeof where, "%s:%d (%s)", FIXTURES, lineno, c->name);
    char method[16], kind[16];
    double u, p, alpha, lo, hi, shift;
    int auto_exact;
    unsigned long k;
    if (sscanf(line, "mwu %15s %lf %lf %d", method, &u, &p, &auto_exact) >= 3) {
        cph_mwu r;
        const cph_mwu_method mm = strcmp(method, "exact") == 0        ? CPH_MWU_EXACT
                                  : strcmp(method, "asymptotic") == 0 ? CPH_MWU_ASYMPTOTIC
                                                                      : CPH_MWU_AUTO;
        assert_int_equal(cph_mwu_test(c->x, c->m, c->y, c->n, mm, &r), 0);
        if (r.u1 != u) fail_msg("%s: U1 %.17g, SciPy %.17g", where, r.u1, u);
        if (rel_diff(r.p, p) > 1e-9)
            fail_msg("%s: %s p %.17g, SciPy %.17g", where, method, r.p, p);
        if (mm == CPH_MWU_AUTO && r.exact != auto_exact)
            fail_msg("%s: auto chose %s, SciPy %s", where, r.exact ? "exact" : "asymptotic",
                     auto_exact ? "exact" : "asymptotic");
        (*checks)++;
    } else if (sscanf(line, "hl %lf", &shift) == 1) {
        double *xs = malloc(c->m * sizeof *xs), *ys = malloc(c->n * sizeof *ys);
        memcpy(xs, c->x, c->m * sizeof *xs);
        memcpy(ys, c->y, c->n * sizeof *ys);
        qsort(xs, c->m, sizeof *xs, cmp_d);
        qsort(ys, c->n, sizeof *ys, cmp_d);
        const double got = cph_hl_shift(xs, c->m, ys, c->n);
        if (fabs(got - shift) > 1e-15 * fmax(1.0, fabs(shift)))
            fail_msg("%s: HL shift %.17g, NumPy %.17g", where, got, shift);
        free(xs);
        free(ys);
        (*checks)++;
    } else if (sscanf(line, "ci %15s %lf %lu %lf %lf", kind, &alpha, &k, &lo, &hi) == 5) {
        double cov;
        const size_t got = cph_hl_ci_rank(c->m, c->n, alpha, strcmp(kind, "exact") == 0, &cov);
        if (got != k) fail_msg("%s: %s rank at alpha %g: %zu, reference %lu", where, kind, alpha, got, k);
        double *xs = malloc(c->m * sizeof *xs), *ys = malloc(c->n * sizeof *ys);
        memcpy(xs, c->x, c->m * sizeof *xs);
        memcpy(ys, c->y, c->n * sizeof *ys);
        qsort(xs, c->m, sizeof *xs, cmp_d);
        qsort(ys, c->n, sizeof *ys, cmp_d);
        const double glo = cph_kth_pairwise_diff(xs, c->m, ys, c->n, got);
        const double ghi = cph_kth_pairwise_diff(xs, c->m, ys, c->n, c->m * c->n + 1 - got);
        if (glo != lo || ghi != hi)
            fail_msg("%s: D(k) %.17g, D(mn+1-k) %.17g; NumPy order statistics %.17g, %.17g",
                     where, glo, ghi, lo, hi);
        if (!(cov >= 1.0 - alpha)) fail_msg("%s: coverage %g below %g", where, cov, 1 - alpha);
        free(xs);
        free(ys);
        (*checks)++;
    } else {
        fail_msg("%s: unknown line '%.40s'", where, line);
    }
}

/* Every line of every case of the SciPy fixture file. */
static void test_against_scipy(void **state) {
    (void)state;
    FILE *f = fopen(FIXTURES, "r");
    if (!f) fail_msg("cannot open %s", FIXTURES);
    static char line[1 << 17];
    fx_case c;
    memset(&c, 0, sizeof c);
    int lineno = 0, cases = 0, checks = 0;
    while (fgets(line, sizeof line, f)) {
        lineno++;
        line[strcspn(line, "\n")] = '\0';
        if (line[0] == '#' || !line[0]) continue;
        char where[128];
        snprintf(where, sizeof where, "%s:%d", FIXTURES, lineno);
        if (strncmp(line, "case ", 5) == 0) {
            snprintf(c.name, sizeof c.name, "%.60s", line + 5);
        } else if (line[0] == 'x' && line[1] == ' ') {
            c.x = read_array(line, "x", &c.m, where);
        } else if (line[0] == 'y' && line[1] == ' ') {
            c.y = read_array(line, "y", &c.n, where);
        } else if (strcmp(line, "end") == 0) {
            free(c.x);
            free(c.y);
            memset(&c, 0, sizeof c);
            cases++;
        } else {
            if (!c.x || !c.y) fail_msg("%s: a check before the samples", where);
            check_case_line(&c, line, lineno, &checks);
        }
    }
    fclose(f);
    assert_int_equal(cases, 6);
    assert_true(checks >= 30);
}

/* ---- pieces with their own references ------------------------------------- */

static void test_normal_quantiles(void **state) {
    (void)state;
    /* two-sided 95 % and 99 % points of the standard normal (normal tables) */
    assert_true(fabs(cph_normal_isf(0.025) - 1.959964) < 5e-7);
    assert_true(fabs(cph_normal_isf(0.005) - 2.575829) < 5e-7);
    assert_true(fabs(cph_normal_isf(0.5)) < 1e-12);
    assert_true(isnan(cph_normal_isf(0.0)));
}

/* The exact null distribution of U for m = n = 2: the 6 splits of ranks
 * {1,2,3,4} give U = 0,1,2,2,3,4 (enumerated by hand). */
static void test_exact_cdf_by_hand(void **state) {
    (void)state;
    double cdf[5];
    assert_int_equal(cph_mwu_exact_cdf(2, 2, cdf), 0);
    const double want[5] = {1.0 / 6, 2.0 / 6, 4.0 / 6, 5.0 / 6, 1.0};
    for (int u = 0; u < 5; u++) assert_true(fabs(cdf[u] - want[u]) < 1e-15);
}


/* The exact path's limits: 8 against 1000 untied values is counted (SciPy's
 * auto rule picks exact there too); a forced exact test of 1000 against 1000
 * is refused rather than allocating a table of 10^9 counts. */
static void test_exact_limits(void **state) {
    (void)state;
    static double x[1000], y[1000];
    for (int i = 0; i < 1000; i++) {
        x[i] = 1.0 + i * 1e-3;
        y[i] = 1.0005 + i * 1e-3;
    }
    cph_mwu r;
    assert_int_equal(cph_mwu_test(x, 8, y, 1000, CPH_MWU_AUTO, &r), 0);
    assert_true(r.exact);
    assert_true(r.p > 0.0 && r.p <= 1.0);
    assert_int_equal(cph_mwu_test(x, 1000, y, 1000, CPH_MWU_EXACT, &r), -1);
    assert_int_equal(cph_mwu_test(x, 1000, y, 1000, CPH_MWU_AUTO, &r), 0);
    assert_false(r.exact);
}

static uint64_t rng_state;
static uint64_t splitmix(void) {
    uint64_t z = (rng_state += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}
static double uniform01(void) { return ((double)(splitmix() >> 11) + 0.5) / 9007199254740992.0; }
static double gauss(void) {
    return sqrt(-2.0 * log(uniform01())) * cos(6.283185307179586 * uniform01());
}

/* The k-th pairwise difference against sorting all of them, with ties. */
static void test_kth_against_sorting(void **state) {
    (void)state;
    rng_state = 7;
    for (int trial = 0; trial < 50; trial++) {
        const size_t m = 1 + (size_t)(splitmix() % 13), n = 1 + (size_t)(splitmix() % 11);
        double xs[13], ys[11], all[143];
        for (size_t i = 0; i < m; i++) xs[i] = (double)(splitmix() % 7) * 0.25;
        for (size_t j = 0; j < n; j++) ys[j] = (double)(splitmix() % 7) * 0.25 - 0.5;
        qsort(xs, m, sizeof *xs, cmp_d);
        qsort(ys, n, sizeof *ys, cmp_d);
        for (size_t i = 0; i < m; i++)
            for (size_t j = 0; j < n; j++) all[i * n + j] = ys[j] - xs[i];
        qsort(all, m * n, sizeof *all, cmp_d);
        for (size_t k = 1; k <= m * n; k++)
            if (cph_kth_pairwise_diff(xs, m, ys, n, k) != all[k - 1])
                fail_msg("trial %d m=%zu n=%zu k=%zu: %g, sorted %g", trial, m, n, k,
                         cph_kth_pairwise_diff(xs, m, ys, n, k), all[k - 1]);
    }
}

/* ---- verdicts on synthetic samples ---------------------------------------- */

/* n log-normal samples of median med and log-spread sd. */
static void synth(double *v, size_t n, double med, double sd) {
    for (size_t i = 0; i < n; i++) v[i] = med * exp(sd * gauss());
}

static cph_shift_verdict verdict_for(double shift, double sd, size_t m, size_t n, uint64_t seed,
                               cph_shift_cmp *c) {
    double base[400], next[400];
    rng_state = seed;
    synth(base, m, 1e-3, sd);
    synth(next, n, 1e-3 * (1.0 + shift), sd);
    assert_int_equal(cph_compare_samples(base, m, next, n, 0.01, c), 0);
    return cph_shift_verdict_of(c, 0.01, 0.05);
}

/* Default alpha 0.01 and tolerance 5 %, 40 samples a side, 1 % log-spread:
 * the 99 % interval is about +-0.6 % wide, so 0 % and 3 % are unchanged,
 * +-10 % slower / faster, for every seed. */
static void test_known_shifts(void **state) {
    (void)state;
    static const struct {
        double shift;
        cph_shift_verdict want;
    } cases[] = {
        {0.00, CPH_SHIFT_UNCHANGED},
        {0.03, CPH_SHIFT_UNCHANGED},
        {0.10, CPH_SHIFT_SLOWER},
        {-0.10, CPH_SHIFT_FASTER},
    };
    for (size_t ci = 0; ci < sizeof cases / sizeof cases[0]; ci++)
        for (uint64_t seed = 1; seed <= 20; seed++) {
            cph_shift_cmp c;
            const cph_shift_verdict v = verdict_for(cases[ci].shift, 0.01, 40, 40, seed, &c);
            if (v != cases[ci].want)
                fail_msg("shift %+.0f %% seed %llu: %s (ratio %.4f [%.4f, %.4f], p %.3g), want %s",
                         100 * cases[ci].shift, (unsigned long long)seed, cph_shift_verdict_name(v),
                         c.ratio, c.ratio_lo, c.ratio_hi, c.mwu.p,
                         cph_shift_verdict_name(cases[ci].want));
            /* the estimate lands near the true ratio: within 4 interval half-widths */
            assert_true(fabs(c.ratio - (1.0 + cases[ci].shift)) < 0.012);
        }
}

/* Four samples a side can never be significant at 0.01 (the smallest exact
 * two-sided p is 2/70) nor give a bounded 99 % interval (P(U = 0) = 1/70 >
 * 0.005): inconclusive whatever the shift. */
static void test_too_few_samples(void **state) {
    (void)state;
    for (uint64_t seed = 1; seed <= 20; seed++) {
        cph_shift_cmp c;
        assert_int_equal(verdict_for(0.5, 0.01, 4, 4, seed, &c), CPH_SHIFT_INCONCLUSIVE);
        assert_true(c.mwu.exact);
        assert_true(fabs(c.mwu.p - 2.0 / 70.0) < 1e-12); /* complete separation */
        assert_int_equal(c.bounded, 0);
    }
}

/* 20 % log-spread, 30 a side, a true 3 % slowdown: the interval (about +-13 %)
 * reaches past the tolerance, so mostly inconclusive; never faster. */
static void test_noisy_is_inconclusive(void **state) {
    (void)state;
    int inconclusive = 0;
    for (uint64_t seed = 1; seed <= 20; seed++) {
        cph_shift_cmp c;
        const cph_shift_verdict v = verdict_for(0.03, 0.2, 30, 30, seed, &c);
        assert_int_not_equal(v, CPH_SHIFT_FASTER);
        assert_int_not_equal(v, CPH_SHIFT_UNCHANGED);
        inconclusive += v == CPH_SHIFT_INCONCLUSIVE;
    }
    assert_true(inconclusive >= 18);
}

/* No change, 5 % spread, 20 a side, 1000 seeds: the test's false-alarm rate
 * is near alpha = 1 %, regressions (also needing > 5 %) rarer still, and the
 * 99 % interval covers the true ratio about 99 % of the time. */
static void test_error_rates(void **state) {
    (void)state;
    int rejected = 0, slower = 0, covered = 0;
    for (uint64_t seed = 1000; seed < 2000; seed++) {
        cph_shift_cmp c;
        const cph_shift_verdict v = verdict_for(0.0, 0.05, 20, 20, seed, &c);
        rejected += c.mwu.p < 0.01;
        slower += v == CPH_SHIFT_SLOWER;
        covered += c.bounded && c.ratio_lo <= 1.0 && c.ratio_hi >= 1.0;
    }
    print_message("false alarms %d / 1000, regressions %d, covered %d\n", rejected, slower, covered);
    assert_true(rejected <= 25);
    assert_true(slower <= 3);
    assert_true(covered >= 975);
}

/* ---- whole files ------------------------------------------------------------ */

static void self_diff(const char *path, size_t min_items) {
    cph_results a, b;
    char msg[512];
    if (cph_results_read(path, &a, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    if (cph_results_read(path, &b, msg, sizeof msg) != CP_OK) fail_msg("%s", msg);
    assert_true(a.nitems >= min_items);
    cph_diff d;
    assert_int_equal(cph_diff_build(&a, &b, 0.01, 0.05, 0, &d), 0);
    assert_int_equal(d.npairs, a.nitems);
    assert_int_equal(d.nonly_base + d.nonly_next, 0);
    assert_int_equal(d.counts[CPH_SHIFT_SLOWER], 0);
    assert_int_equal(d.counts[CPH_SHIFT_FASTER], 0);
    assert_int_equal(d.nchanges, 0);
    /* Both fixtures record every sample, so every pair must be compared (a
     * pair without samples would be skipped silently and prove nothing). */
    size_t with_samples = 0, compared = 0;
    for (size_t i = 0; i < a.nitems; i++) with_samples += a.items[i].nsamples > 0;
    assert_int_equal(with_samples, a.nitems);
    for (size_t i = 0; i < d.npairs; i++)
        if (d.pairs[i].compared) {
            assert_true(d.pairs[i].cmp.ratio == 1.0);
            assert_true(d.pairs[i].cmp.mwu.p == 1.0);
            compared++;
        }
    assert_int_equal(compared, a.nitems);
    cph_diff_free(&d);
    cph_results_free(&a);
    cph_results_free(&b);
}

static void test_self_diff_bench(void **state) {
    (void)state;
    self_diff(CP_TEST_DATA "/diff_base.bench.json", 4);
}

static void test_self_diff_table(void **state) {
    (void)state;
    self_diff(CP_TEST_DATA "/diff_base.table.json", 4);
}

/* Escaping for XML attributes and text. */
static void test_xml_escape(void **state) {
    (void)state;
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    assert_non_null(f);
    cph_xml_escape(f, "a<b>&\"c'\x01\td");
    fclose(f);
    assert_string_equal(buf, "a&lt;b&gt;&amp;&quot;c&apos;?\td");
    free(buf);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_against_scipy),
        cmocka_unit_test(test_normal_quantiles),
        cmocka_unit_test(test_exact_cdf_by_hand),
        cmocka_unit_test(test_exact_limits),
        cmocka_unit_test(test_kth_against_sorting),
        cmocka_unit_test(test_known_shifts),
        cmocka_unit_test(test_too_few_samples),
        cmocka_unit_test(test_noisy_is_inconclusive),
        cmocka_unit_test(test_error_rates),
        cmocka_unit_test(test_self_diff_bench),
        cmocka_unit_test(test_self_diff_table),
        cmocka_unit_test(test_xml_escape),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
