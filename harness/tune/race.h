/* Racing candidates on paired, interleaved trials.
 *
 * Why: samples taken back to back share one machine state, so a confidence
 * interval from pooled samples is far narrower than the difference between
 * two runs.  The unit of evidence here is the TRIAL (a short batch of samples
 * of one candidate with a fresh plan and freshly placed buffers: the caller's
 * trial function does that), and the upper level of repetition is the ROUND:
 * every candidate still in the race runs one trial per round, in an order
 * shuffled anew each round, so that drift, neighbours and frequency changes
 * hit all candidates alike (Kalibera & Jones, "Rigorous Benchmarking in
 * Reasonable Time", ISMM 2013).  Comparisons are paired by round.
 *
 * Racing (after Birattari et al., "A Racing Algorithm for Configuring
 * Metaheuristics", GECCO 2002, with the Wilcoxon signed-rank test in place of
 * Friedman's): from min_rounds on, after each round, the leader is the
 * candidate with the lowest median of its trial medians; every other
 * candidate whose paired log-ratios to the leader are greater than zero by a
 * one-sided signed-rank test at alpha / (candidates left - 1) is dropped (the
 * Bonferroni split is ours).  The race ends when one candidate is left, at
 * max_rounds, or when the budget is spent (checked before each round; a
 * round once started is finished so that every round stays paired).
 *
 * The margin of the choice over the runner-up is the paired Hodges-Lehmann
 * ratio runner-up / chosen over their shared rounds with its 1 - alpha
 * interval (harness/measure/paired.h); the choice is CONFIDENT when the whole
 * interval lies above 1 (the runner-up is slower beyond the rounds' noise),
 * IN NOISE otherwise. */
#ifndef CONVPICK_RACE_H
#define CONVPICK_RACE_H

#include <signal.h>
#include <stddef.h>
#include <stdint.h>

#include "harness/measure/paired.h"

typedef struct cph_race_opts {
    size_t min_rounds;      /* before anything is dropped (default 6) */
    size_t max_rounds;      /* default 40; at most CPH_PAIRED_MAX */
    double alpha;           /* drop level and interval level 1 - alpha (default 0.05) */
    double budget_seconds;  /* trial wall time of the whole race (default 10) */
    uint64_t seed;          /* order of the candidates within each round */
    volatile sig_atomic_t *stop; /* checked between trials (may be NULL) */
    /* The fixed control (harness/measure/control.h), called once per round
     * at a random place among the round's trials, so that every round has on
     * record the state of the machine it ran in.  NULL: none. */
    void (*control)(void *arg, size_t round);
    void *control_arg;
    /* Candidate -> group, or NULL.  With groups, the candidates of a group
     * run back to back within each round (groups and the members of each in
     * a shuffled order), so that the trials of one group's members are taken
     * close together in time: a pair compared trial by trial shares the
     * machine's state (bench's layers, the in-process A/B check). */
    const size_t *group;
} cph_race_opts;

void cph_race_defaults(cph_race_opts *o);

/* One trial of candidate `cand` in round `round`: fills *median (seconds,
 * the trial's median sample) and *wall (seconds the trial took, setup
 * included).  Returns 0, or non-zero when the candidate failed (it leaves the
 * race, marked failed). */
typedef int (*cph_trial_fn)(void *arg, size_t cand, size_t round, double *median, double *wall);

typedef enum cph_race_state {
    CPH_RACE_IN = 0,  /* still in the race at the end */
    CPH_RACE_DROPPED, /* slower than the leader with confidence */
    CPH_RACE_FAILED   /* its trial function failed */
} cph_race_state;

typedef struct cph_race_cand {
    double *trials;        /* trial medians by round, [0, ntrials) (owned) */
    size_t ntrials;
    cph_race_state state;
    size_t left_round;     /* 1-based round after which it was dropped / failed */
    double drop_ratio;     /* dropped: paired HL ratio to the leader then */
    double drop_p;         /* dropped: the one-sided p-value then */
} cph_race_cand;

typedef struct cph_race_result {
    size_t ncand;
    cph_race_cand *cand;   /* owned */
    size_t rounds;
    double seconds;        /* sum of the trials' wall times */
    const char *ended_by;  /* "one left", "max rounds", "budget", "stopped", "all failed" */
    int chosen;            /* -1 when every candidate failed */
    double chosen_median;  /* median of the chosen one's trial medians */
} cph_race_result;

/* Runs the race.  Returns 0 (also when every candidate failed: chosen = -1),
 * or -1 when out of memory.  Free the result with cph_race_free. */
int cph_race_run(const cph_race_opts *o, size_t ncand, cph_trial_fn fn, void *arg,
                 cph_race_result *out);
void cph_race_free(cph_race_result *r);

/* Median of candidate c's trial medians (NaN without trials). */
double cph_race_median(const cph_race_result *r, size_t c);

/* Paired comparison of candidate b against a over their shared rounds:
 * ratio = b / a.  Returns 0, or -1 when they share no round. */
int cph_race_compare(const cph_race_result *r, size_t a, size_t b, double alpha,
                     cph_paired_cmp *out);

#endif
