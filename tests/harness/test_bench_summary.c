/* The suite summaries of bench (harness/bench/bench_summary.c) on invented rows
 * whose figures are worked out by hand below (worked examples: sums of
 * count x median and their ratios, written out in each comment). */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "harness/bench/bench_summary.h"
#include "harness/select/shape_spec.h"

/* Relative agreement to 1e-12 (the sums are of a handful of terms). */
#define assert_near(a, b)                                                   \
    do {                                                                    \
        const double a_ = (a), b_ = (b);                                    \
        if (!(fabs(a_ - b_) <= 1e-12 * fabs(b_)))                           \
            fail_msg("%s = %.17g, expected %.17g", #a, a_, b_);             \
    } while (0)

static cp_shape shape(const char *spec) {
    cp_shape s;
    char msg[256] = "";
    if (cph_parse_shape(spec, NULL, &s, msg, sizeof msg) != CP_OK) fail_msg("%s: %s", spec, msg);
    return s;
}

static void add(cph_bench_recs *r, size_t layer, const char *lname, int count, const char *spec,
                double flops, int threads, cph_row_kind kind, const char *name, double ms) {
    cph_bench_rec e;
    memset(&e, 0, sizeof e);
    e.layer = layer;
    snprintf(e.layer_name, sizeof e.layer_name, "%s", lname);
    e.count = count;
    e.shape = shape(spec);
    e.flip = CP_XCORR;
    e.threads = threads;
    e.kind = kind;
    snprintf(e.name, sizeof e.name, "%s", name);
    e.median = ms * 1e-3;
    e.fastest = 0.9 * ms * 1e-3; /* every row's fastest sample 10 % below its median */
    e.flops = flops;
    assert_int_equal(cph_bench_recs_add(r, &e), CP_OK);
}

static const cph_summary *get(const cph_summary *s, size_t n, const char *id, int threads) {
    for (size_t i = 0; i < n; i++)
        if (strcmp(s[i].id, id) == 0 && s[i].threads == threads) return &s[i];
    fail_msg("no summary %s at %d threads", id, threads);
    return NULL;
}

#define L0 "n=1,c=64,h=56,w=56,k=64,r=3,pad=1" /* 3x3 stride 1: every summary */
#define L1 "n=1,c=256,h=56,w=56,k=64,r=1"      /* 1x1: not a Winograd layer */
#define L2 "n=1,c=3,h=224,w=224,k=64,r=7,stride=2,pad=3" /* stem: C < 64, 7x7 */

/* Layer 0 (count 3, 1e8 FLOPs), layer 1 (count 2, 5e7 FLOPs), layer 2 (count
 * 1, 2e8 FLOPs; outside the blocked and Winograd filters), times in ms. */
static void fill(cph_bench_recs *r, int with_chosen) {
    /* threads 1 */
    add(r, 0, "l0", 3, L0, 1e8, 1, CPH_ROW_ALGO, "blocked", 2.0);
    add(r, 0, "l0", 3, L0, 1e8, 1, CPH_ROW_ALGO, "im2col_gemm", 3.0);
    add(r, 0, "l0", 3, L0, 1e8, 1, CPH_ROW_ALGO, "winograd_2x2_3x3", 1.0);
    add(r, 0, "l0", 3, L0, 1e8, 1, CPH_ROW_SGEMM, "sgemm", 2.5);
    add(r, 1, "l1", 2, L1, 5e7, 1, CPH_ROW_ALGO, "blocked", 1.0);
    add(r, 1, "l1", 2, L1, 5e7, 1, CPH_ROW_ALGO, "im2col_gemm", 0.8);
    add(r, 1, "l1", 2, L1, 5e7, 1, CPH_ROW_SGEMM, "sgemm", 0.75);
    add(r, 2, "l2", 1, L2, 2e8, 1, CPH_ROW_ALGO, "blocked", 1.0);
    /* threads 2 */
    add(r, 0, "l0", 3, L0, 1e8, 2, CPH_ROW_ALGO, "blocked", 1.0);
    add(r, 0, "l0", 3, L0, 1e8, 2, CPH_ROW_ALGO, "im2col_gemm", 1.6);
    add(r, 0, "l0", 3, L0, 1e8, 2, CPH_ROW_ALGO, "winograd_2x2_3x3", 0.9);
    add(r, 0, "l0", 3, L0, 1e8, 2, CPH_ROW_SGEMM, "sgemm", 1.5);
    add(r, 1, "l1", 2, L1, 5e7, 2, CPH_ROW_ALGO, "blocked", 0.55);
    add(r, 1, "l1", 2, L1, 5e7, 2, CPH_ROW_ALGO, "im2col_gemm", 0.45);
    add(r, 1, "l1", 2, L1, 5e7, 2, CPH_ROW_SGEMM, "sgemm", 0.4);
    add(r, 2, "l2", 1, L2, 2e8, 2, CPH_ROW_ALGO, "blocked", 0.5);
    if (with_chosen) {
        add(r, 0, "l0", 3, L0, 1e8, 1, CPH_ROW_CHOSEN, "chosen", 1.1);
        add(r, 1, "l1", 2, L1, 5e7, 1, CPH_ROW_CHOSEN, "chosen", 0.8);
        add(r, 0, "l0", 3, L0, 1e8, 2, CPH_ROW_CHOSEN, "chosen", 0.6);
        add(r, 1, "l1", 2, L1, 5e7, 2, CPH_ROW_CHOSEN, "chosen", 0.45);
    }
}

static void worked_example(void **state) {
    (void)state;
    cph_bench_recs r = {0};
    fill(&r, 1);
    cph_summary *s = NULL;
    const size_t n = cph_bench_summarize(&r, 100.0, 2, &s);
    /* blocked_peak(1) + im2col, winograd, chosen at 1 and 2 threads + scaling */
    assert_int_equal(n, 8);

    /* blocked: l0 1e8 / 2 ms = 50 GFLOP/s, l1 5e7 / 1 ms = 50 GFLOP/s (l2 is
     * 7x7 with C = 3: left out); suite (3e8 + 1e8) / (6 + 2 ms) = 50 GFLOP/s
     * = 0.5 of 100; missed by (0.7 - 0.5) / 0.7. */
    const cph_summary *b = get(s, n, "blocked_peak", 1);
    assert_int_equal(b->nlayers, 2);
    assert_near(b->value, 0.5);
    assert_int_equal(b->verdict, CPH_MISS);
    assert_near(b->missed_by, 0.2 / 0.7);

    /* im2col, 1 thread: (3 x 3.0 + 2 x 0.8) / (3 x 2.5 + 2 x 0.75) = 10.6 / 9.0 */
    const cph_summary *i1 = get(s, n, "im2col_vs_sgemm", 1);
    assert_near(i1->value, 10.6 / 9.0);
    assert_int_equal(i1->verdict, CPH_PASS);
    /* 2 threads: (4.8 + 0.9) / (4.5 + 0.8) = 5.7 / 5.3 = 1.0755 */
    assert_near(get(s, n, "im2col_vs_sgemm", 2)->value, 5.7 / 5.3);

    /* Winograd, only l0: 1 thread best other 2.0 / 1.0 = 2 (pass); 2 threads
     * 1.0 / 0.9 = 1.111, missed by (1.3 - 1.111) / 1.3. */
    const cph_summary *w1 = get(s, n, "winograd_speedup", 1);
    assert_int_equal(w1->nlayers, 1);
    assert_near(w1->value, 2.0);
    assert_int_equal(w1->verdict, CPH_PASS);
    const cph_summary *w2 = get(s, n, "winograd_speedup", 2);
    assert_near(w2->value, 1.0 / 0.9);
    assert_int_equal(w2->verdict, CPH_MISS);
    assert_int_equal(w2->layers[0].verdict, CPH_MISS);
    assert_near(w2->missed_by, (1.3 - 1.0 / 0.9) / 1.3);

    /* chosen, 1 thread: (3.3 + 1.6) / (9.0 + 1.6) = 4.9 / 10.6 */
    assert_near(get(s, n, "chosen_vs_im2col", 1)->value, 4.9 / 10.6);
    /* 2 threads: (1.8 + 0.9) / (4.8 + 0.9) = 2.7 / 5.7 */
    assert_near(get(s, n, "chosen_vs_im2col", 2)->value, 2.7 / 5.7);

    /* scaling by the chosen rows: (3.3 + 1.6) / (1.8 + 0.9) = 4.9 / 2.7 = 1.815,
     * and l2 (no chosen row) by its best algorithm: 1.0 / 0.5; suite
     * (4.9 + 1.0) / (2.7 + 0.5) = 5.9 / 3.2 = 1.84375 */
    const cph_summary *sc = get(s, n, "scaling", 2);
    assert_int_equal(sc->base_threads, 1);
    assert_int_equal(sc->nlayers, 3);
    assert_near(sc->value, 5.9 / 3.2);
    assert_int_equal(sc->verdict, CPH_PASS);

    json_t *j = cph_summaries_json(s, NULL, n);
    assert_non_null(j);
    assert_int_equal(json_array_size(j), n);
    json_decref(j);
    cph_summaries_free(s, n);
    cph_bench_recs_free(&r);
}

/* Without chosen rows or roofs those targets are n/a, never a pass. */
static void missing_rows_are_na(void **state) {
    (void)state;
    cph_bench_recs r = {0};
    fill(&r, 0);
    cph_summary *s = NULL;
    const size_t n = cph_bench_summarize(&r, 0.0, 2, &s);
    assert_int_equal(get(s, n, "blocked_peak", 1)->verdict, CPH_NA);
    assert_int_equal(get(s, n, "chosen_vs_im2col", 1)->verdict, CPH_NA);
    assert_true(isnan(get(s, n, "chosen_vs_im2col", 2)->value));
    /* scaling falls back to the best algorithm per layer: l0 1.0 (Winograd)
     * -> 0.9 (Winograd), l1 0.8 -> 0.45, l2 1.0 -> 0.5: suite
     * (3.0 + 1.6 + 1.0) / (2.7 + 0.9 + 0.5) = 5.6 / 4.1 */
    assert_near(get(s, n, "scaling", 2)->value, 5.6 / 4.1);
    cph_summaries_free(s, n);
    cph_bench_recs_free(&r);
}

/* The noise-floor summaries: every row 10 % faster scales throughput by 1/0.9
 * and leaves every ratio of times unchanged. */
static void fastest_samples(void **state) {
    (void)state;
    cph_bench_recs r = {0}, f = {0};
    fill(&r, 1);
    assert_int_equal(cph_bench_recs_fastest(&r, &f), CP_OK);
    assert_int_equal(f.n, r.n);
    cph_summary *s = NULL;
    const size_t n = cph_bench_summarize(&f, 100.0, 2, &s);
    assert_near(get(s, n, "blocked_peak", 1)->value, 0.5 / 0.9);
    assert_near(get(s, n, "im2col_vs_sgemm", 1)->value, 10.6 / 9.0);
    assert_near(get(s, n, "scaling", 2)->value, 5.9 / 3.2);
    cph_summaries_free(s, n);
    cph_bench_recs_free(&f);
    cph_bench_recs_free(&r);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(worked_example),
        cmocka_unit_test(missing_rows_are_na),
        cmocka_unit_test(fastest_samples),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
