/* The timing loop (harness/measure/timing.c).  Most checks run on a test clock that
 * the work itself advances, so counts and stop reasons are exact; a few run
 * on the real clock with nanosleep, asserting only lower bounds POSIX
 * guarantees ("nanosleep suspends for at least the time requested") and
 * generous caps, never speed. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <time.h>

#include <cmocka.h>

#include "harness/measure/timing.h"

static double fake_t;
static double fake_clock(void) { return fake_t; }

typedef struct work {
    int calls;
    int fail_at;          /* call number that returns an error (0: never) */
    double dt[2];         /* test clock advance, alternating */
    double sleep_s;       /* real clock: nanosleep this long */
} work;

static int fake_work(void *arg) {
    work *w = arg;
    w->calls++;
    if (w->fail_at && w->calls == w->fail_at) return 7;
    fake_t += w->dt[w->calls % 2];
    return 0;
}

static int sleep_work(void *arg) {
    work *w = arg;
    w->calls++;
    struct timespec ts = {0, (long)(w->sleep_s * 1e9)};
    while (nanosleep(&ts, &ts) != 0) {
    }
    return 0;
}

static int setup_fake(void **state) {
    (void)state;
    fake_t = 1000.0;
    cph_timing_set_clock(fake_clock);
    return 0;
}
static int teardown_fake(void **state) {
    (void)state;
    cph_timing_set_clock(NULL);
    return 0;
}

/* Preempted samples (what the loop reads in the product: getrusage's
 * ru_nivcsw, the involuntary context switches of the process, Linux
 * getrusage(2), from memory): an invented count of such switches that
 * rises during samples 3 and 7 (which also take 100x as long, as a sample
 * sharing its CPU with another task would).  The statistics are those of the
 * eight others; every sample is kept.  With every sample preempted, the
 * statistics are of all of them. */
static long fake_switches;
static int preempt_every; /* 0: samples 3 and 7; 1: every sample */
static long fake_preemptions(void) { return fake_switches; }

static int preempted_work(void *arg) {
    work *w = arg;
    w->calls++;
    const int sample = w->calls - 2; /* after 2 warm-up runs, 1-based */
    const int hit = preempt_every ? sample >= 1 : (sample == 3 || sample == 7);
    if (hit) fake_switches++;
    fake_t += hit ? 0.1 : 0.001 * (1.0 + 0.01 * (sample % 3));
    return 0;
}

static void test_preempted_samples_left_out(void **state) {
    (void)state;
    cph_timing_set_preemptions(fake_preemptions);
    cph_timing_opts o;
    cph_timing_defaults(&o);
    o.min_samples = o.max_samples = 10;
    work w = {0};
    preempt_every = 0;
    cph_measurement m;
    assert_int_equal(cph_measure(&o, preempted_work, &w, &m), 0);
    assert_int_equal(m.n, 10);
    assert_int_equal(m.disturbed, 2);
    assert_int_equal(m.disturbed_flags[2], 1); /* sample 3 */
    assert_int_equal(m.disturbed_flags[6], 1); /* sample 7 */
    assert_int_equal(m.stats_of_undisturbed, 1);
    assert_true(m.stats.max < 0.0011); /* no 0.1 s sample in the stats */
    assert_int_equal(m.stats.n, 8);
    cph_measurement_free(&m);

    preempt_every = 1;
    w.calls = 0;
    assert_int_equal(cph_measure(&o, preempted_work, &w, &m), 0);
    assert_int_equal(m.disturbed, 10);
    assert_int_equal(m.stats_of_undisturbed, 0);
    assert_int_equal(m.stats.n, 10);
    assert_true(fabs(m.stats.median - 0.1) < 1e-9);
    cph_measurement_free(&m);
    cph_timing_set_preemptions(NULL);
}

static void test_defaults(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    assert_int_equal(o.warmup, 2);
    assert_int_equal(o.min_samples, 10);
    assert_int_equal(o.max_samples, 1000);
    assert_true(o.target_rel_ci == 0.02 && o.confidence == 0.95 && o.max_seconds == 2.0);
    assert_int_equal(o.cold, 0);
}

/* Constant work: the first check (at min_samples) already meets the target. */
static void test_constant_work_converges_at_min(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    work w = {.dt = {1.0 / 1024, 1.0 / 1024}};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 0);
    assert_int_equal(m.n, 10);
    assert_int_equal(w.calls, 12); /* 2 warm-up runs + 10 samples */
    assert_int_equal(m.warmup_runs, 2);
    assert_true(m.converged);
    assert_int_equal(m.stop, CPH_STOP_CONVERGED);
    assert_int_equal(m.checks, 1);
    for (size_t i = 0; i < m.n; i++) assert_true(m.samples[i] == 1.0 / 1024);
    assert_true(m.stats.median == 1.0 / 1024 && m.stats.rel_ci == 0.0);
    assert_false(m.stats.noisy);
    assert_true(m.timed_seconds == 10.0 / 1024);
    assert_true(m.wall_seconds == 12.0 / 1024);
    assert_int_equal(m.flushes, 0);
    cph_measurement_free(&m);
    assert_null(m.samples);
}

/* Alternating 1 and 2 units: the CI of the median spans both values and
 * never shrinks to 2 %, so max_samples stops it and it is marked noisy. */
static void test_bimodal_work_hits_max_samples(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    o.max_samples = 50;
    o.max_seconds = 1e9;
    work w = {.dt = {1.0 / 1024, 2.0 / 1024}};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 0);
    assert_int_equal(m.n, 50);
    assert_false(m.converged);
    assert_int_equal(m.stop, CPH_STOP_MAX_SAMPLES);
    assert_true(m.stats.noisy);
    assert_true(m.stats.rel_ci > o.target_rel_ci);
    /* samples in run order: warm-up used calls 1 and 2, so sample i is call i + 3 */
    for (size_t i = 0; i < m.n; i++) assert_true(m.samples[i] == w.dt[(i + 3) % 2]);
    assert_true(m.checks >= 3);
    cph_measurement_free(&m);
}

/* Time cap with dyadic steps (exact arithmetic): 0.125 s per run, cap 1 s.
 * Warm-up: run 1 at elapsed 0, run 2 at 0.125 (< cap/4); samples start at
 * 0.25 and the cap is reached after 6 of them. */
static void test_time_cap(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    o.max_seconds = 1.0;
    work w = {.dt = {0.125, 0.125}};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 0);
    assert_int_equal(m.warmup_runs, 2);
    assert_int_equal(m.n, 6);
    assert_int_equal(m.stop, CPH_STOP_TIME_CAP);
    assert_false(m.converged);
    assert_true(m.wall_seconds == 1.0);
    /* fewer than min_samples, but the six equal samples' 95 % interval
     * (ranks 0 and 5) has width 0: not noisy */
    assert_true(m.stats.ci_exact);
    assert_false(m.stats.noisy);
    cph_measurement_free(&m);
}

/* A run longer than the cap: one warm-up (the second would start after a
 * quarter of the cap), one sample, then stop. */
static void test_slow_work_still_gives_one_sample(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    o.max_seconds = 1.0;
    work w = {.dt = {0.5, 0.5}};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 0);
    assert_int_equal(m.warmup_runs, 1);
    assert_int_equal(m.n, 1);
    assert_int_equal(w.calls, 2);
    assert_int_equal(m.stop, CPH_STOP_TIME_CAP);
    assert_true(m.stats.noisy); /* one sample: no distribution-free interval */
    cph_measurement_free(&m);
}

static void test_work_error_aborts(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    work w = {.fail_at = 6, .dt = {0.001, 0.001}};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 7);
    assert_int_equal(m.stop, CPH_STOP_ERROR);
    assert_int_equal(m.n, 3); /* calls 3, 4, 5 were samples */
    assert_int_equal(w.calls, 6);
    cph_measurement_free(&m);

    w = (work){.fail_at = 1, .dt = {0.001, 0.001}};
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 7);
    assert_int_equal(m.n, 0);
    assert_int_equal(m.warmup_runs, 0);
    cph_measurement_free(&m);
}

/* Cold mode: one flush before each sample (none before warm-up runs), with
 * the fallback size when the caller gave none; off otherwise. */
static void test_cold_mode_flushes(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    o.cold = 1;
    o.flush_bytes = 1 << 20;
    o.max_samples = 15;
    work w = {.dt = {1.0 / 1024, 2.0 / 1024}};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 0);
    assert_int_equal(m.n, 15);
    assert_int_equal(m.flushes, 15);
    assert_int_equal(m.opts.flush_bytes, 1 << 20);
    cph_measurement_free(&m);

    o.flush_bytes = 0;
    o.max_samples = 10;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 0);
    assert_int_equal(m.flushes, m.n);
    assert_int_equal(m.opts.flush_bytes, CPH_FLUSH_FALLBACK_BYTES);
    cph_measurement_free(&m);

    o.cold = 0;
    o.flush_bytes = 1 << 20;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 0);
    assert_int_equal(m.flushes, 0);
    assert_int_equal(m.opts.flush_bytes, 0);
    cph_measurement_free(&m);
}

static void test_sample_bounds_clamped(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    o.min_samples = 0;
    o.max_samples = 0;
    o.warmup = -3;
    work w = {.dt = {0.001, 0.001}};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, fake_work, &w, &m), 0);
    assert_int_equal(m.n, 1);
    assert_int_equal(m.warmup_runs, 0);
    assert_int_equal(m.opts.min_samples, 1);
    cph_measurement_free(&m);
}

/* ---- real clock ---------------------------------------------------------- */

static void test_clock_is_monotonic(void **state) {
    (void)state;
    assert_string_not_equal(cph_clock_name(), "test clock");
    const double r = cph_clock_resolution();
    assert_true(r > 0.0 && r < 1e-3);
    double prev = cph_now();
    for (int i = 0; i < 1000; i++) {
        const double t = cph_now();
        assert_true(t >= prev);
        prev = t;
    }
    work w = {.sleep_s = 2e-3};
    const double t0 = cph_now();
    sleep_work(&w);
    /* MONOTONIC_RAW is not slewed by NTP; allow 1 % for the rate difference. */
    assert_true(cph_now() - t0 >= 0.99 * 2e-3);
}

static void test_real_sleep_measurement(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    o.max_seconds = 0.4;
    o.max_samples = 100;
    work w = {.sleep_s = 1e-3};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, sleep_work, &w, &m), 0);
    assert_true(m.n >= 1 && m.n <= o.max_samples);
    if (m.stop != CPH_STOP_TIME_CAP) assert_true(m.n >= o.min_samples);
    assert_int_equal(m.warmup_runs, 2);
    assert_int_equal((size_t)w.calls, m.n + 2);
    for (size_t i = 0; i < m.n; i++) assert_true(m.samples[i] >= 0.99e-3);
    if (m.converged) {
        assert_int_equal(m.stop, CPH_STOP_CONVERGED);
        assert_true(m.stats.rel_ci <= o.target_rel_ci);
    } else {
        assert_true(m.stop == CPH_STOP_TIME_CAP || m.stop == CPH_STOP_MAX_SAMPLES);
    }
    assert_true(m.wall_seconds >= m.timed_seconds);
    assert_true(m.wall_seconds < o.max_seconds + 2.0); /* generous: one late sample */
    assert_true(m.stats.median >= 0.99e-3);
    cph_measurement_free(&m);
}

static void test_real_cold_measurement(void **state) {
    (void)state;
    cph_timing_opts o;
    cph_timing_defaults(&o);
    o.cold = 1;
    o.flush_bytes = 4u << 20;
    o.max_samples = 12;
    o.max_seconds = 1.0;
    work w = {.sleep_s = 2e-4};
    cph_measurement m;
    assert_int_equal(cph_measure(&o, sleep_work, &w, &m), 0);
    assert_true(m.n >= 1 && m.n <= 12);
    assert_int_equal(m.flushes, m.n);
    for (size_t i = 0; i < m.n; i++) assert_true(m.samples[i] >= 0.99 * 2e-4);
    /* the flushes happen outside the timed region, inside the wall time */
    assert_true(m.wall_seconds > m.timed_seconds);
    cph_measurement_free(&m);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_defaults),
        cmocka_unit_test_setup_teardown(test_preempted_samples_left_out, setup_fake, teardown_fake),
        cmocka_unit_test_setup_teardown(test_constant_work_converges_at_min, setup_fake, teardown_fake),
        cmocka_unit_test_setup_teardown(test_bimodal_work_hits_max_samples, setup_fake, teardown_fake),
        cmocka_unit_test_setup_teardown(test_time_cap, setup_fake, teardown_fake),
        cmocka_unit_test_setup_teardown(test_slow_work_still_gives_one_sample, setup_fake, teardown_fake),
        cmocka_unit_test_setup_teardown(test_work_error_aborts, setup_fake, teardown_fake),
        cmocka_unit_test_setup_teardown(test_cold_mode_flushes, setup_fake, teardown_fake),
        cmocka_unit_test_setup_teardown(test_sample_bounds_clamped, setup_fake, teardown_fake),
        cmocka_unit_test(test_clock_is_monotonic),
        cmocka_unit_test(test_real_sleep_measurement),
        cmocka_unit_test(test_real_cold_measurement),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
