/* Timing a piece of work the same way every time.
 * Monotonic clock, warm-up runs, every sample kept, repetitions grow until the
 * confidence interval of the median is within target_rel_ci of it or the time
 * cap is reached.  Cold-cache mode streams a buffer larger than the last-level
 * cache before each sample (outside the timed region). */
#ifndef CONVPICK_TIMING_H
#define CONVPICK_TIMING_H

#include <stddef.h>

#include "stats.h"

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

void cph_timing_defaults(cph_timing_opts *o);

/* Seconds from a monotonic clock (CLOCK_MONOTONIC_RAW where available). */
double cph_now(void);

/* The work being timed.  Returns 0 on success; non-zero aborts the measurement. */
typedef int (*cph_work_fn)(void *arg);

typedef struct cph_measurement {
    double *samples;       /* every timed sample, seconds, in run order (owned) */
    size_t n;
    cph_stats stats;
    int converged;         /* CI target met (else the cap or max_samples stopped it) */
    double wall_seconds;   /* total time spent, warm-up and flushes included */
} cph_measurement;

/* Times fn(arg).  Returns 0, or the work's non-zero status. */
int cph_measure(const cph_timing_opts *o, cph_work_fn fn, void *arg, cph_measurement *out);
void cph_measurement_free(cph_measurement *m);

#endif
