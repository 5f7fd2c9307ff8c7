/* The tuner: for one layer shape x flip x thread count, check every
 * applicable algorithm and a budgeted set of its parameter candidates against
 * the oracle once, then race the accurate ones on paired, interleaved trials
 * (race.h, trial.h) and choose the fastest.
 *
 * Steps and budget (all from cph_now(), so a test can drive it on an invented
 * clock):
 *  1. Qualification: each planned candidate gets a plan and one run, judged
 *     against the fp64 oracle (max_rel_err).  Every algorithm's defaults are
 *     qualified whatever the budget; further candidates only while less than
 *     a quarter of the budget is spent (the rest are reported skipped).
 *  2. The race: what the budget has left goes to rounds of trials of the
 *     accurate candidates (race.h: at least one round; dropped candidates
 *     stop costing time).
 *  3. The choice: the race's leader.  The runner-up is the best other
 *     candidate by the paired ratio over shared rounds, preferring another
 *     algorithm; margin = that ratio - 1 with its 1 - alpha interval, and the
 *     margin is in noise unless the whole interval lies above 0.
 *  A candidate's timing is taken over its trial medians (median, the
 *  distribution-free interval of the median, noisy) and its samples ARE its
 *  trial medians: trials, not pooled samples, are the evidence the table
 *  keeps.
 *
 * It computes no convolution itself: candidates run through cp_plan_run, the
 * reference through cp_oracle_run. */
#ifndef CONVPICK_TUNER_H
#define CONVPICK_TUNER_H

#include <signal.h>

#include "convpick/convpick.h"
#include "harness/select/layers.h"
#include "harness/measure/timing.h"
#include "harness/measure/control.h"
#include "harness/tune/race.h"

typedef struct cph_tune_opts {
    cph_timing_opts timing;  /* per TRIAL: warm-up runs, the batch (min_samples = max_samples),
                                max_seconds a cap on one trial */
    double budget_seconds;   /* per layer x mode x threads, all candidates together */
    double max_rel_err;      /* candidates above it are disqualified */
    uint64_t seed;           /* test data */
    int max_candidates;      /* per algorithm, including its defaults */
    cph_race_opts race;      /* rounds and drop level; its budget and seed are set per layer */
    int place;               /* 1: every block of a trial placed by a placer (placer.h, default); 0: heap */
    int isolate;             /* 1: a plugin candidate's checking run in a child process */
    cph_control *control;    /* timed once per round beside the trials (control.h); NULL: none */
} cph_tune_opts;

void cph_tune_defaults(cph_tune_opts *o);

/* Progress callback: called before each candidate is measured. */
typedef struct cph_tune_progress {
    const char *layer;
    const char *algo;
    const char *params;      /* "kb=64,..." */
    int candidate, ncandidates; /* 1-based index into the planned list */
    double layer_elapsed;    /* seconds spent on this layer so far */
} cph_tune_progress;
typedef void (*cph_progress_fn)(void *arg, const cph_tune_progress *p);

/* What tune did for one layer, beyond the chosen entry. */
typedef struct cph_tune_report {
    int planned;       /* candidates in the plan (all algorithms) */
    int measured;      /* raced (accurate candidates that ran at least one trial) */
    int skipped;       /* left unmeasured when the budget ran out */
    int disqualified;  /* above max_rel_err */
    int failed;        /* plan creation or run failed */
    int unsupported;   /* algorithms that do not support the shape */
    double seconds;    /* wall time for the layer */
    int interrupted;   /* *stop was set: the entry is not complete */
    size_t rounds;     /* rounds of trials raced */
    int dropped;       /* candidates dropped by the race */
    const char *ended_by; /* why the race ended (race.h) */
    /* One line per candidate of the entry (same order): what the race did
     * with it ("raced 12 rounds", "dropped after round 6: 1.31x the leader,
     * p = 0.0039", "disqualified: ...").  Owned: cph_tune_report_free. */
    char (*candidate_notes)[96];
    /* The fixed control's trial medians, one per round (seconds; owned),
     * when the tuner ran one (opts->control). */
    double *control_fma, *control_gemm;
    size_t ncontrol;
} cph_tune_report;

void cph_tune_report_free(cph_tune_report *r);

/* One layer to tune and everything the tuner may use for it. */
typedef struct cph_tune_request {
    const cph_tune_opts *opts;
    const cph_layer *layer;
    cp_flip flip;
    int threads;                  /* workers of exec: plans are sized for them */
    const cp_algo *const *algos;  /* the algorithms to consider (need not be registered) */
    size_t nalgos;
    const cp_cache_sizes *caches; /* for defaults and candidates; NULL = fallback sizes */
    const cp_exec *exec;          /* the pinned pool's executor; NULL = serial */
    volatile sig_atomic_t *stop;  /* checked between candidates (a signal handler sets it);
                                     may be NULL */
    cph_progress_fn progress;     /* called before each candidate; may be NULL */
    void *progress_arg;
} cph_tune_request;

/* Tunes one layer.  When *rq->stop is set, returns CP_OK with
 * report->interrupted = 1 and the entry unfilled.  On success fills *entry
 * (candidates allocated: free with cph_tune_entry_free; entry->algo and
 * runner_up point into rq->algos).  Fails (CP_ENOTFOUND) if no candidate
 * qualified, CP_EUNSUPPORTED if no algorithm supports the layer.  Every time
 * it reads comes from cph_now(), so a test can drive it on an invented clock
 * (cph_timing_set_clock). */
cp_status cph_tune_layer(const cph_tune_request *rq, cp_table_entry *entry,
                         cph_tune_report *report, char *msg, size_t cap);

void cph_tune_entry_free(cp_table_entry *e);

#endif
