/* Racing on paired trials (harness/tune/race.c) on an invented machine: trial
 * times come from a model with a known truth, a common drift and per-round
 * neighbour noise that hits every candidate of a round alike, and a bimodal
 * candidate.  The checks: the truly fastest candidate is chosen, the clearly
 * slower ones are dropped, the margin's interval brackets the true ratio.
 * The truths are ours (the model below); the statistics under the race are
 * checked against SciPy in test_paired. */
#include <math.h>
#include <setjmp.h>
#include <signal.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/tune/race.h"

typedef struct {
    uint64_t s;
    size_t round_seen;
    double round_factor; /* drift x neighbour noise of the current round */
    double truth[4];
    int bimodal;         /* index of the bimodal candidate, -1 none */
    int fail_at;         /* candidate that fails in round 2, -1 none */
    double wall;         /* wall seconds per trial */
} model;

static double uniform(uint64_t *s) {
    uint64_t z = (*s += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    z ^= z >> 31;
    return ((double)(z >> 11) + 0.5) / 9007199254740992.0;
}

static double gauss(uint64_t *s) {
    return sqrt(-2.0 * log(uniform(s))) * cos(6.283185307179586 * uniform(s));
}

static int trial(void *arg, size_t cand, size_t round, double *median, double *wall) {
    model *m = arg;
    if (round + 1 != m->round_seen) {
        /* A new round: drift of 1 % per round and a neighbour's load that
         * slows the whole round by a lognormal factor (sigma 10 %). */
        m->round_seen = round + 1;
        m->round_factor = (1.0 + 0.01 * (double)round) * exp(0.10 * gauss(&m->s));
    }
    *wall = m->wall;
    if ((int)cand == m->fail_at && round == 2) return -1;
    double t = m->truth[cand];
    /* Bimodal: a fast placement one trial in three, a slow one otherwise, so
     * its typical (median) trial is the slow one. */
    if ((int)cand == m->bimodal) t = uniform(&m->s) < 1.0 / 3.0 ? 0.90 : 1.30;
    *median = t * m->round_factor * exp(0.01 * gauss(&m->s));
    return 0;
}

static model make_model(uint64_t seed) {
    model m = {.s = seed * 7919u + 1u, .truth = {1.00, 1.04, 0.0, 1.5}, .bimodal = 2,
               .fail_at = -1, .wall = 0.01};
    return m;
}

/* Twenty seeds: A (truth 1.00) wins every race over B (1.04), the bimodal C
 * (median 1.30) and D (1.5); D and C are dropped; the A-B margin's interval
 * contains the true ratio 1.04 in nearly every race (95 % intervals). */
static void test_picks_truly_fastest_under_drift(void **state) {
    (void)state;
    int covered = 0, confident = 0;
    for (uint64_t seed = 1; seed <= 20; seed++) {
        model m = make_model(seed);
        cph_race_opts o;
        cph_race_defaults(&o);
        o.seed = seed;
        o.budget_seconds = 1e9;
        cph_race_result r;
        assert_int_equal(cph_race_run(&o, 4, trial, &m, &r), 0);
        if (r.chosen != 0) fail_msg("seed %lu: chose %d", (unsigned long)seed, r.chosen);
        assert_int_equal(r.cand[3].state, CPH_RACE_DROPPED);
        assert_int_equal(r.cand[2].state, CPH_RACE_DROPPED);
        assert_true(r.cand[3].left_round >= o.min_rounds);
        cph_paired_cmp c;
        assert_int_equal(cph_race_compare(&r, 0, 1, 0.05, &c), 0);
        covered += c.bounded && c.ratio_lo <= 1.04 && 1.04 <= c.ratio_hi;
        confident += c.bounded && c.ratio_lo > 1.0;
        cph_race_free(&r);
    }
    assert_true(covered >= 17);
    assert_true(confident >= 17);
}

/* Without pairing, the same model's pooled trial medians mislead: the
 * neighbour noise (10 %) swamps the 4 % difference in some races.  This
 * checks that the model is hard enough for the test above to mean something. */
static void test_model_defeats_unpaired_choice(void **state) {
    (void)state;
    int wrong = 0;
    for (uint64_t seed = 1; seed <= 20; seed++) {
        model m = make_model(seed);
        /* Unpaired: six trials of A, then six of B, as back-to-back runs do. */
        double a = 0, b = 0, med, wall;
        for (size_t r = 0; r < 6; r++) {
            trial(&m, 0, r, &med, &wall);
            a += log(med);
        }
        for (size_t r = 6; r < 12; r++) {
            trial(&m, 1, r, &med, &wall);
            b += log(med);
        }
        wrong += b < a;
    }
    assert_true(wrong >= 1);
}

static void test_budget_stops_between_rounds(void **state) {
    (void)state;
    model m = make_model(3);
    m.wall = 1.0;
    cph_race_opts o;
    cph_race_defaults(&o);
    o.budget_seconds = 10.0; /* 4 candidates x 1 s: 3 rounds reach 12 s */
    cph_race_result r;
    assert_int_equal(cph_race_run(&o, 4, trial, &m, &r), 0);
    assert_string_equal(r.ended_by, "budget");
    assert_int_equal(r.rounds, 3);
    for (size_t i = 0; i < 4; i++) assert_int_equal(r.cand[i].ntrials, 3);
    assert_true(r.chosen >= 0);
    cph_race_free(&r);
}

/* The control hook: called once in every round, at a place among the
 * round's trials that varies from round to round (the race's own shuffle). */
typedef struct {
    model *m;
    size_t calls, last_round;
    int rounds_seen[64];
    size_t trials_before[64]; /* trials of the round run before the control */
    size_t trials_in_round;
} control_log;

static control_log *the_log;

static int logged_trial(void *arg, size_t cand, size_t round, double *median, double *wall) {
    control_log *l = the_log;
    (void)arg;
    if (round != l->last_round) {
        l->last_round = round;
        l->trials_in_round = 0;
    }
    l->trials_in_round++;
    return trial(l->m, cand, round, median, wall);
}

static void log_control(void *arg, size_t round) {
    control_log *l = arg;
    if (round != l->last_round) {
        l->last_round = round;
        l->trials_in_round = 0;
    }
    l->rounds_seen[round]++;
    l->trials_before[round] = l->trials_in_round;
    l->calls++;
}

static void test_control_once_per_round(void **state) {
    (void)state;
    model m = make_model(5);
    m.truth[3] = 1.01; /* nothing is dropped early: 4 candidates in every round */
    m.bimodal = -1;
    m.truth[2] = 1.02;
    control_log l = {&m, 0, (size_t)-1, {0}, {0}, 0};
    the_log = &l;
    cph_race_opts o;
    cph_race_defaults(&o);
    o.max_rounds = 12;
    o.min_rounds = 12;
    o.budget_seconds = 1e9;
    o.control = log_control;
    o.control_arg = &l;
    cph_race_result r;
    assert_int_equal(cph_race_run(&o, 4, logged_trial, &m, &r), 0);
    assert_int_equal(r.rounds, 12);
    assert_int_equal(l.calls, 12);
    int places[5] = {0};
    for (size_t i = 0; i < 12; i++) {
        assert_int_equal(l.rounds_seen[i], 1);
        assert_true(l.trials_before[i] <= 4);
        places[l.trials_before[i]]++;
    }
    int distinct = 0;
    for (int k = 0; k < 5; k++) distinct += places[k] > 0;
    assert_true(distinct >= 3); /* 12 draws from 5 places */
    cph_race_free(&r);
}

/* Groups: each round runs a group's members back to back, and the order of
 * the groups and of the members varies between rounds (our rule,
 * harness/tune/race.h; the check is of the order itself). */
typedef struct {
    size_t seq[40][6];
    size_t n[40];
} order_log;

static int ordered_trial(void *arg, size_t cand, size_t round, double *median, double *wall) {
    order_log *l = arg;
    l->seq[round][l->n[round]++] = cand;
    *median = 1.0 + 0.01 * (double)cand; /* nothing is dropped: min_rounds is the max */
    *wall = 0.001;
    return 0;
}

static void test_groups_run_back_to_back(void **state) {
    (void)state;
    static const size_t group[6] = {0, 1, 2, 0, 1, 2}; /* pairs {0,3} {1,4} {2,5} */
    order_log l;
    memset(&l, 0, sizeof l);
    cph_race_opts o;
    cph_race_defaults(&o);
    o.max_rounds = o.min_rounds = 40;
    o.budget_seconds = 1e9;
    o.group = group;
    cph_race_result r;
    assert_int_equal(cph_race_run(&o, 6, ordered_trial, &l, &r), 0);
    assert_int_equal(r.rounds, 40);
    int first_seen[6] = {0}, member_first[6] = {0};
    for (size_t k = 0; k < 40; k++) {
        assert_int_equal(l.n[k], 6);
        for (size_t i = 0; i < 6; i += 2) /* positions 0-1, 2-3, 4-5 hold one group each */
            assert_int_equal(group[l.seq[k][i]], group[l.seq[k][i + 1]]);
        first_seen[group[l.seq[k][0]]]++;
        member_first[l.seq[k][0]]++;
    }
    for (int g = 0; g < 3; g++) assert_true(first_seen[g] > 0); /* groups' order varies */
    assert_true(member_first[0] > 0 && member_first[3] > 0);    /* and members' order */
    cph_race_free(&r);
}

static void test_failed_candidate_leaves(void **state) {
    (void)state;
    model m = make_model(5);
    m.fail_at = 0; /* the fastest fails in round 3 */
    cph_race_opts o;
    cph_race_defaults(&o);
    o.budget_seconds = 1e9;
    cph_race_result r;
    assert_int_equal(cph_race_run(&o, 4, trial, &m, &r), 0);
    assert_int_equal(r.cand[0].state, CPH_RACE_FAILED);
    assert_int_equal(r.cand[0].ntrials, 2);
    assert_int_equal(r.chosen, 1);
    cph_race_free(&r);
}

static void test_stop_flag(void **state) {
    (void)state;
    model m = make_model(9);
    volatile sig_atomic_t stop = 1;
    cph_race_opts o;
    cph_race_defaults(&o);
    o.stop = &stop;
    cph_race_result r;
    assert_int_equal(cph_race_run(&o, 4, trial, &m, &r), 0);
    assert_string_equal(r.ended_by, "stopped");
    assert_int_equal(r.rounds, 0);
    assert_int_equal(r.chosen, -1);
    cph_race_free(&r);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_picks_truly_fastest_under_drift),
        cmocka_unit_test(test_model_defeats_unpaired_choice),
        cmocka_unit_test(test_budget_stops_between_rounds),
        cmocka_unit_test(test_control_once_per_round),
        cmocka_unit_test(test_groups_run_back_to_back),
        cmocka_unit_test(test_failed_candidate_leaves),
        cmocka_unit_test(test_stop_flag),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
