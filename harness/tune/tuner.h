/* The tuner: for one layer shape x mode x thread count, time every applicable
 * algorithm and a budgeted set of its parameter candidates, check each against
 * the oracle once, and choose the fastest that is accurate enough.
 *
 * It computes no convolution itself: candidates run through cp_plan_run, the
 * reference through cp_oracle_run. */
#ifndef CONVPICK_TUNER_H
#define CONVPICK_TUNER_H

#include <signal.h>

#include "convpick/convpick.h"
#include "harness/select/select.h"
#include "harness/measure/timing.h"

typedef struct cph_tune_opts {
    cph_timing_opts timing;  /* per candidate measurement (max_seconds is a cap) */
    double budget_seconds;   /* per layer x mode x threads, all candidates together */
    double max_rel_err;      /* candidates above it are disqualified */
    uint64_t seed;           /* test data */
    int max_candidates;      /* per algorithm, including its defaults */
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
    int measured;      /* measured within the budget */
    int skipped;       /* left unmeasured when the budget ran out */
    int disqualified;  /* above max_rel_err */
    int failed;        /* plan creation or run failed */
    int unsupported;   /* algorithms that do not support the shape */
    double seconds;    /* wall time for the layer */
    int interrupted;   /* *stop was set: the entry is not complete */
} cph_tune_report;

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

/* The choice among measured candidates (exposed for tests): the fastest by
 * median among those not disqualified; the runner-up is the fastest
 * qualified candidate of another algorithm (or, if none, the second fastest
 * of the same); margin = runner-up median / chosen median - 1; in noise when
 * the two confidence intervals overlap.  Returns the chosen index or -1. */
int cph_tune_choose(const cp_candidate *c, size_t n, int *runner_up, double *margin,
                    int *in_noise);

#endif
