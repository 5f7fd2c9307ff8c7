/* cph_tune_layer as a whole (qualification, the race on trials, the choice,
 * the runner-up and the margin) on invented algorithms timed by an invented
 * clock (timing.h's test seam): each invented algorithm computes the layer
 * through the registry's `direct` and then advances the clock by its own cost,
 * so every measured time, the choice, the runner-up and the margin are known
 * exactly in advance.  Expectations are worked by hand from the rules in
 * tuner.h and timing.h (common practice, no outside source). */
#include <math.h>
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
/* The input buffers' offsets within a page that quick's runs saw. */
static uintptr_t seen_offsets[64];
static size_t nseen;
static cp_status quick_run(const cp_run_args *a) {
    const uintptr_t off = (uintptr_t)a->x % 4096;
    int known = 0;
    for (size_t i = 0; i < nseen; i++) known |= seen_offsets[i] == off;
    if (!known && nseen < 64) seen_offsets[nseen++] = off;
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
 * settings (trials of 1 warm-up run and 5 samples; the race drops from round
 * 6 at alpha 0.05 split over the candidates left) and the budget given in
 * ticks.  The plan is round-robin (candidates.c): quick(4), steady, sloppy,
 * then quick(3), quick(2); absent is unsupported.  Every trial of a candidate
 * is exactly its cost, so its trial medians are equal. */
static void tune_invented(double budget_ticks, int place, volatile sig_atomic_t *stop, tuned *t) {
    static const cp_algo *const algos[] = {&quick, &steady, &sloppy, &absent};
    cph_tune_opts o;
    cph_tune_defaults(&o);
    o.budget_seconds = budget_ticks * TICK;
    o.place = place;
    nseen = 0;
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

/* What one tuning of the invented layer must give: candidates raced and
 * skipped by the budget, rounds, the choice (quick with `ticks`), the
 * runner-up (steady) at `margin`, whether the margin is in noise, and the
 * invented time the layer took.  Always: 5 planned, sloppy disqualified,
 * absent unsupported, nothing failed. */
typedef struct {
    int measured, skipped, dropped;
    size_t rounds;
    const char *ended_by;
    int64_t ticks;
    double margin;
    int in_noise;
    double spent_ticks;
} expected;

static void tune_and_check(double budget_ticks, const expected *x) {
    tuned t;
    tune_invented(budget_ticks, 1, NULL, &t);
    if (t.st != CP_OK) fail_msg("%s", t.msg);
    assert_int_equal(t.rep.planned, 5);
    assert_int_equal(t.rep.measured, x->measured);
    assert_int_equal(t.rep.skipped, x->skipped);
    assert_int_equal(t.rep.dropped, x->dropped);
    assert_int_equal(t.rep.rounds, x->rounds);
    assert_string_equal(t.rep.ended_by, x->ended_by);
    assert_int_equal(t.rep.disqualified, 1);
    assert_int_equal(t.rep.unsupported, 1);
    assert_int_equal(t.rep.failed, 0);
    assert_int_equal(t.e.ncandidates, (size_t)x->measured + 1);
    assert_ptr_equal(t.e.algo, &quick);
    assert_int_equal(t.e.params.v[0], x->ticks);
    assert_true(t.e.timing.median == (double)x->ticks * TICK);
    assert_int_equal(t.e.timing.samples, x->rounds); /* one trial median per round */
    assert_ptr_equal(t.e.runner_up, &steady);
    /* exp(log(b) - log(a)) may differ from b / a in the last bits. */
    assert_true(fabs(t.e.margin - x->margin) < 1e-12);
    assert_int_equal(t.e.margin_in_noise, x->in_noise);
    if (x->in_noise) {
        /* Too few rounds for an interval: recorded as unknown. */
        assert_true(isnan(t.e.margin_lo) && isnan(t.e.margin_hi));
    } else {
        /* Equal trials: the interval is the point itself. */
        assert_true(fabs(t.e.margin_lo - x->margin) < 1e-12 &&
                    fabs(t.e.margin_hi - x->margin) < 1e-12);
    }
    assert_true(t.rep.seconds == x->spent_ticks * TICK);
    cph_tune_entry_free(&t.e);
    cph_tune_report_free(&t.rep);
}

static void test_tune_layer_invented_clock(void **state) {
    (void)state;
    /* A budget that never runs out.  Qualification runs each candidate once:
     * 4 + 5 + 1 + 3 + 2 = 15 ticks (sloppy is disqualified).  The race:
     * every trial is 6 runs (1 warm-up + 5 samples), a round 6 * (4+5+3+2) =
     * 84 ticks.  After round 6, each other candidate's 6 paired log-ratios to
     * quick(2) are equal and positive: the exact one-sided signed-rank p is
     * 2^-6 = 0.0156 < 0.05 / 3, so all three are dropped at once and the race
     * ends with one left: 15 + 6 * 84 = 519 ticks.  Runner-up: steady, the
     * fastest other algorithm (not quick's own 3), ratio 5 / 2: margin 1.5;
     * at n = 6 the 95 % interval's rank is k = 1 (P(T+ <= 0) = 1/64 <=
     * 0.025 < P(T+ <= 1) = 2/64), all Walsh averages equal: [2.5, 2.5], so
     * the margin is confident. */
    const expected x = {4, 0, 3, 6, "one left", 2, 1.5, 0, 519};
    tune_and_check(1e6, &x);
    /* The notes say what the race did with each candidate, in the entry's
     * candidate order: quick(4), steady, sloppy, quick(3), quick(2). */
    tuned t;
    tune_invented(1e6, 1, NULL, &t);
    assert_int_equal(t.e.ncandidates, 5);
    assert_string_equal(t.rep.candidate_notes[0],
                        "dropped after round 6: 2.000x the leader, p = 0.016");
    /* sloppy's error is whatever one wrong output gives: only the form. */
    assert_memory_equal(t.rep.candidate_notes[2], "disqualified: error ", 20);
    assert_non_null(strstr(t.rep.candidate_notes[2], " above 0.0001"));
    assert_string_equal(t.rep.candidate_notes[4], "raced 6 rounds");
    cph_tune_entry_free(&t.e);
    cph_tune_report_free(&t.rep);
}

static void test_tune_layer_budget_ends_race(void **state) {
    (void)state;
    /* Budget 100: qualification takes 15 (all candidates: the 4th starts at
     * 10 < 100 / 4), the race gets 85: round 1 (84) leaves budget, round 2
     * spends it: 2 rounds, nothing dropped (min 6 rounds), quick(2) leads;
     * the margin 1.5 has no 95 % interval with 2 pairs: in noise.
     * 15 + 2 * 84 = 183 ticks. */
    const expected x = {4, 0, 0, 2, "budget", 2, 1.5, 1, 183};
    tune_and_check(100, &x);
}

static void test_tune_layer_budget_spent_on_defaults(void **state) {
    (void)state;
    /* Budget 30: the defaults (4 + 5 + 1 = 10 ticks) are qualified whatever
     * the budget; quick(3) would start at 10 >= 30 / 4: it and quick(2) are
     * skipped.  The race gets 20: one round (6 * (4 + 5) = 54).  quick(4)
     * wins, margin 5 / 4 - 1, in noise.  10 + 54 = 64 ticks. */
    const expected x = {2, 2, 0, 1, "budget", 4, 0.25, 1, 64};
    tune_and_check(30, &x);
}

/* Layout randomisation: with placement on, quick's trials see its input at
 * several offsets within a page, all multiples of 64; with it off, at one. */
static void test_trial_buffers_placed(void **state) {
    (void)state;
    tuned t;
    tune_invented(1e6, 1, NULL, &t);
    assert_int_equal(t.st, CP_OK);
    cph_tune_entry_free(&t.e);
    cph_tune_report_free(&t.rep);
    assert_true(nseen >= 4);
    for (size_t i = 0; i < nseen; i++) assert_int_equal(seen_offsets[i] % 64, 0);
    tune_invented(1e6, 0, NULL, &t);
    assert_int_equal(t.st, CP_OK);
    cph_tune_entry_free(&t.e);
    cph_tune_report_free(&t.rep);
    /* Qualification runs on the tuner's own tensors (64-byte aligned), every
     * trial on a page-aligned buffer: at most those two offsets. */
    assert_true(nseen <= 2);
}

static void test_tune_layer_stop(void **state) {
    (void)state;
    tuned t;
    volatile sig_atomic_t stop = 1;
    tune_invented(1e6, 1, &stop, &t);
    assert_int_equal(t.st, CP_OK);
    assert_int_equal(t.rep.interrupted, 1);
    assert_int_equal(t.rep.measured, 0);
    assert_null(t.e.algo);
    cph_tune_report_free(&t.rep);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_tune_layer_invented_clock),
        cmocka_unit_test(test_tune_layer_budget_ends_race),
        cmocka_unit_test(test_tune_layer_budget_spent_on_defaults),
        cmocka_unit_test(test_trial_buffers_placed),
        cmocka_unit_test(test_tune_layer_stop),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
