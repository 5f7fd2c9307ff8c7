/* Timing a piece of work the same way every time.
 * Monotonic clock, warm-up runs, every sample kept, repetitions grow until the
 * confidence interval of the median is within target_rel_ci of it or the time
 * cap is reached.  Cold-cache mode streams a buffer larger than the last-level
 * cache before each sample (outside the timed region). */
#ifndef CONVPICK_TIMING_H
#define CONVPICK_TIMING_H

#include <stddef.h>

#include "harness/measure/stats.h"

typedef struct cph_timing_opts {
    int warmup;             /* untimed runs first (default 2) */
    size_t min_samples;     /* default 10 */
    size_t max_samples;     /* default 1000 */
    double target_rel_ci;   /* default 0.02 (+-2 % of the median) */
    double confidence;      /* default 0.95 */
    double max_seconds;     /* cap on one measurement, warm-up included (default 2.0) */
    int cold;               /* 1: flush caches before each sample */
    size_t flush_bytes;     /* cold mode: bytes to stream (default 2x LLC given by caller) */
} cph_timing_opts;

/* Cold mode with flush_bytes == 0 streams this much (twice the 32 MiB L3 of
 * the machines we target; callers that know the LLC pass 2x its size). */
#define CPH_FLUSH_FALLBACK_BYTES ((size_t)64 << 20)

void cph_timing_defaults(cph_timing_opts *o);

/* Seconds from a monotonic clock (CLOCK_MONOTONIC_RAW where available). */
double cph_now(void);
/* Name of the clock cph_now reads, and its resolution in seconds
 * (clock_getres). */
const char *cph_clock_name(void);
double cph_clock_resolution(void);

/* The work being timed.  Returns 0 on success; non-zero aborts the measurement. */
typedef int (*cph_work_fn)(void *arg);

/* Why the repetitions stopped. */
typedef enum cph_stop {
    CPH_STOP_CONVERGED = 0, /* rel_ci <= target_rel_ci with at least min_samples */
    CPH_STOP_MAX_SAMPLES,   /* max_samples reached first */
    CPH_STOP_TIME_CAP,      /* max_seconds reached first */
    CPH_STOP_ERROR          /* the work returned non-zero (or memory ran out) */
} cph_stop;

/* "converged", "max_samples", "time_cap", "error". */
const char *cph_stop_name(cph_stop s);

typedef struct cph_measurement {
    double *samples;       /* every timed sample, seconds, in run order (owned) */
    size_t n;
    cph_stats stats;
    int converged;         /* CI target met (else the cap or max_samples stopped it) */
    double wall_seconds;   /* total time spent, warm-up and flushes included */
    /* What else is recorded about the measurement. */
    cph_timing_opts opts;  /* the settings used (flush_bytes resolved) */
    cph_stop stop;
    int warmup_runs;       /* untimed runs actually made (fewer than opts.warmup if the cap hit) */
    size_t flushes;        /* cache flushes made (cold mode: one before each sample) */
    size_t checks;         /* times the CI was evaluated before stopping */
    double timed_seconds;  /* sum of samples */
    /* Samples during which the scheduler preempted one of the process's
     * threads for another task (an involuntary context switch, getrusage):
     * they timed the machine's other work as much as this one.  When some
     * samples are clean, stats are those of the clean samples alone
     * (stats_of_undisturbed); samples[] keeps every sample. */
    size_t disturbed;
    unsigned char *disturbed_flags; /* per sample, 1 = disturbed (owned) */
    int stats_of_undisturbed;
} cph_measurement;

/* Times fn(arg).  Returns 0, or the work's non-zero status (-1: out of memory).
 *
 * Procedure: opts.warmup untimed runs (stopping early once a quarter of
 * max_seconds is used); then samples, each optionally preceded by a flush.
 * From min_samples on, the CI of the median is evaluated at geometrically
 * spaced sample counts (every 10 %, at least every 4 samples); it stops when
 * rel_ci <= target_rel_ci, at max_samples, or when the elapsed time (warm-up
 * included) reaches max_seconds.  The cap is checked before each sample and
 * at least one sample is always taken, so a single run longer than the cap
 * overruns it by at most that run.  On stop, stats are computed from all
 * samples (the undisturbed ones when some samples were preempted and some
 * not, see `disturbed` above) and stats.noisy is also set when their CI misses the target (or is
 * only the [min, max] fallback).  Convergence needs a distribution-free
 * interval (n >= 6 at 95 %, n >= 8 at 99 %).
 * min_samples = 0 is taken as 1; max_samples < min_samples as min_samples. */
int cph_measure(const cph_timing_opts *o, cph_work_fn fn, void *arg, cph_measurement *out);
void cph_measurement_free(cph_measurement *m);

/* Samples taken by cph_measure in this process so far, and how many of them
 * were disturbed (preempted): what the machine's other work did to the
 * measurements, for the notes of a run.  Not synchronised (one measuring
 * thread). */
void cph_timing_totals(size_t *samples, size_t *disturbed);

/* Test seam: replaces the count of the process's involuntary context
 * switches cph_measure reads around each sample (NULL restores getrusage;
 * under an invented clock without it nothing is ever disturbed). */
void cph_timing_set_preemptions(long (*count_fn)(void));

/* Test seam: replaces the clock cph_measure and cph_now read (NULL restores
 * the monotonic clock).  Not thread-safe; tests only. */
void cph_timing_set_clock(double (*clock_fn)(void));

#endif
