/* The tuner's choice rule on invented candidate lists (tuner.h documents the
 * rule; the figures here are chosen so each branch of it decides the result),
 * and cph_tune_layer as a whole on invented algorithms timed by an invented
 * clock (timing.h's test seam): each invented algorithm computes the layer
 * through the registry's `direct` and then advances the clock by its own cost,
 * so every measured time, the choice, the runner-up and the margin are known
 * exactly in advance.  Expectations are worked by hand from the rules in
 * tuner.h and timing.h (common practice, no outside source). */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <signal.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "harness/measure/timing.h"
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

/* --- cph_tune_layer on an invented clock ----------------------------------- */

/* One tick = 2^-10 s: sums of ticks are exact in double, so every sample,
 * median and margin below is exact. */
#define TICK (1.0 / 1024.0)
static double fake_now;
static double fake_clock(void) { return fake_now; }

/* Computes the layer with the registry's `direct` (its defaults), then
 * advances the invented clock by `ticks`. */
static cp_status compute_and_spend(const cp_run_args *a, double ticks) {
    const cp_algo *d = cp_algo_find("direct");
    cp_params dp;
    cp_algo_defaults(d, a->shape, NULL, &dp);
    cp_run_args b = *a;
    b.params = &dp;
    const cp_status st = d->run(&b);
    fake_now += ticks * TICK;
    return st;
}

static int supports_all(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)s, (void)flip, (void)why, (void)cap;
    return 1;
}

static int supports_none(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)s, (void)flip;
    if (why && cap) snprintf(why, cap, "invented: supports nothing");
    return 0;
}

/* "quick": its cost is its parameter, in ticks; defaults 4, candidates 3, 2
 * (and a repeat of the defaults the tuner must drop). */
static const cp_param_desc quick_params[] = {{"ticks", "invented cost in ticks", 1, 50}};
static void quick_defaults(const cp_shape *s, const cp_cache_sizes *c, cp_params *out) {
    (void)s, (void)c;
    out->v[0] = 4;
}
static int quick_candidates(const cp_shape *s, const cp_cache_sizes *c, cp_params *out, int max) {
    (void)s, (void)c;
    const int64_t v[] = {3, 4, 2};
    int n = 0;
    for (; n < 3 && n < max; n++) out[n].v[0] = v[n];
    return n;
}
static cp_status quick_run(const cp_run_args *a) {
    return compute_and_spend(a, (double)a->params->v[0]);
}
/* "steady": 5 ticks, no parameters. */
static cp_status steady_run(const cp_run_args *a) { return compute_and_spend(a, 5.0); }
/* "sloppy": 1 tick but one output off by 1: must be disqualified. */
static cp_status sloppy_run(const cp_run_args *a) {
    const cp_status st = compute_and_spend(a, 1.0);
    a->y[0] += 1.0f;
    return st;
}

static const cp_algo quick = {.name = "quick", .summary = "invented", .tolerance = 1e-5,
                              .nparams = 1, .params = quick_params, .supports = supports_all,
                              .defaults = quick_defaults, .candidates = quick_candidates,
                              .run = quick_run};
static const cp_algo steady = {.name = "steady", .summary = "invented", .tolerance = 1e-5,
                               .supports = supports_all, .run = steady_run};
static const cp_algo sloppy = {.name = "sloppy", .summary = "invented", .tolerance = 1e-5,
                               .supports = supports_all, .run = sloppy_run};
static const cp_algo absent = {.name = "absent", .summary = "invented", .tolerance = 1e-5,
                               .supports = supports_none, .run = steady_run};

typedef struct {
    cp_table_entry e;
    cph_tune_report rep;
    cp_status st;
    char msg[256];
} tuned;

/* Tunes a small layer over the four invented algorithms with the default
 * settings (2 warm-up runs, at least 10 samples, 2 % CI target) and the
 * budget given in ticks.  The plan is round-robin (tuner.c): quick(4),
 * steady, sloppy, then quick(3), quick(2); absent is unsupported. */
static void tune_invented(double budget_ticks, volatile sig_atomic_t *stop, tuned *t) {
    static const cp_algo *const algos[] = {&quick, &steady, &sloppy, &absent};
    cph_tune_opts o;
    cph_tune_defaults(&o);
    o.budget_seconds = budget_ticks * TICK;
    cph_layer layer;
    memset(&layer, 0, sizeof layer);
    snprintf(layer.name, sizeof layer.name, "invented");
    layer.shape = cp_shape_init();
    layer.shape.c = 2;
    layer.shape.h = layer.shape.w = 6;
    layer.shape.k = 3;
    layer.shape.r = layer.shape.s = 3;
    const cph_tune_request rq = {&o, &layer, CP_XCORR, 1, algos, 4, NULL, NULL, stop, NULL, NULL};
    fake_now = 1000.0;
    cph_timing_set_clock(fake_clock);
    t->st = cph_tune_layer(&rq, &t->e, &t->rep, t->msg, sizeof t->msg);
    cph_timing_set_clock(NULL);
}

/* What one tuning of the invented layer must give: candidates measured and
 * skipped by the budget; the choice, quick with `ticks` (each of its samples
 * exactly that long, 10 of them: constant samples converge at min_samples);
 * the runner-up, steady, at `margin`, clearly apart (point intervals); and
 * the invented time the layer took.  Always: 5 planned, sloppy disqualified,
 * absent unsupported, nothing failed. */
typedef struct {
    int measured, skipped;
    int64_t ticks;
    double margin, spent_ticks;
} expected;

static void tune_and_check(double budget_ticks, const expected *x) {
    tuned t;
    tune_invented(budget_ticks, NULL, &t);
    if (t.st != CP_OK) fail_msg("%s", t.msg);
    assert_int_equal(t.rep.planned, 5);
    assert_int_equal(t.rep.measured, x->measured);
    assert_int_equal(t.rep.skipped, x->skipped);
    assert_int_equal(t.rep.disqualified, 1);
    assert_int_equal(t.rep.unsupported, 1);
    assert_int_equal(t.rep.failed, 0);
    assert_int_equal(t.e.ncandidates, (size_t)x->measured + 1);
    assert_ptr_equal(t.e.algo, &quick);
    assert_int_equal(t.e.params.v[0], x->ticks);
    assert_true(t.e.timing.median == (double)x->ticks * TICK);
    assert_int_equal(t.e.timing.samples, 10);
    assert_ptr_equal(t.e.runner_up, &steady);
    assert_true(t.e.margin == x->margin);
    assert_int_equal(t.e.margin_in_noise, 0);
    assert_true(t.rep.seconds == x->spent_ticks * TICK);
    cph_tune_entry_free(&t.e);
}

static void test_tune_layer_invented_clock(void **state) {
    (void)state;
    /* A budget that never runs out: all 4 accurate candidates are measured.
     * The fastest is quick with 2 ticks (sloppy, 1 tick, is disqualified);
     * the runner-up is the fastest other algorithm, steady (5 ticks), not
     * quick's own 3: margin 5 / 2 - 1.  Time: each measured candidate runs
     * 1 (oracle check) + 2 (warm-up) + 10 times, sloppy once:
     * 13 * (4 + 5 + 3 + 2) + 1 = 183 ticks. */
    const expected x = {4, 0, 2, 1.5, 183};
    tune_and_check(1e6, &x);
}

static void test_tune_layer_budget_spent_on_defaults(void **state) {
    (void)state;
    /* The defaults take 13 * 4 + 13 * 5 + 1 = 118 ticks, past a budget of
     * 100: they are all measured anyway, the other two candidates skipped;
     * quick's defaults (4 ticks) win, margin 5 / 4 - 1. */
    const expected x = {2, 2, 4, 0.25, 118};
    tune_and_check(100, &x);
}

static void test_tune_layer_stop(void **state) {
    (void)state;
    tuned t;
    volatile sig_atomic_t stop = 1;
    tune_invented(1e6, &stop, &t);
    assert_int_equal(t.st, CP_OK);
    assert_int_equal(t.rep.interrupted, 1);
    assert_int_equal(t.rep.measured, 0);
    assert_null(t.e.algo);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fastest_wins_runner_up_other_algo),
        cmocka_unit_test(test_disqualified_never_chosen),
        cmocka_unit_test(test_overlapping_intervals_are_in_noise),
        cmocka_unit_test(test_same_algo_runner_up_when_alone),
        cmocka_unit_test(test_nothing_qualified),
        cmocka_unit_test(test_tune_layer_invented_clock),
        cmocka_unit_test(test_tune_layer_budget_spent_on_defaults),
        cmocka_unit_test(test_tune_layer_stop),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
