/* The timing loop: monotonic clock, warm-up, every sample kept, stop on a
 * confidence-interval target or a cap (see timing.h for the procedure). */
#define _GNU_SOURCE /* getrusage's ru_nivcsw */
#include "harness/measure/timing.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#ifdef CLOCK_MONOTONIC_RAW
#define CPH_CLOCK CLOCK_MONOTONIC_RAW
#define CPH_CLOCK_NAME "CLOCK_MONOTONIC_RAW"
#else
#define CPH_CLOCK CLOCK_MONOTONIC
#define CPH_CLOCK_NAME "CLOCK_MONOTONIC"
#endif

static double (*clock_override)(void);
static size_t total_samples, total_disturbed;

void cph_timing_totals(size_t *samples, size_t *disturbed) {
    *samples = total_samples;
    *disturbed = total_disturbed;
}

static double mono_now(void) {
    struct timespec ts;
    clock_gettime(CPH_CLOCK, &ts);
    return (double)ts.tv_sec + (double)ts.tv_nsec * 1e-9;
}

double cph_now(void) { return clock_override ? clock_override() : mono_now(); }

/* Involuntary context switches of the whole process so far (all its
 * threads): the scheduler took a CPU from one of them for another task.
 * Under an invented clock (tests) there is nothing to tell: 0. */
static long (*preempt_override)(void);

void cph_timing_set_preemptions(long (*count_fn)(void)) { preempt_override = count_fn; }

static long preemptions(void) {
    if (preempt_override) return preempt_override();
    if (clock_override) return 0;
    struct rusage ru;
    return getrusage(RUSAGE_SELF, &ru) == 0 ? ru.ru_nivcsw : 0;
}

void cph_timing_set_clock(double (*clock_fn)(void)) { clock_override = clock_fn; }

const char *cph_clock_name(void) { return clock_override ? "test clock" : CPH_CLOCK_NAME; }

double cph_clock_resolution(void) {
    struct timespec ts;
    if (clock_getres(CPH_CLOCK, &ts) != 0) return 0.0;
    return (double)ts.tv_sec + (double)ts.tv_nsec * 1e-9;
}

const char *cph_stop_name(cph_stop s) {
    switch (s) {
    case CPH_STOP_CONVERGED: return "converged";
    case CPH_STOP_MAX_SAMPLES: return "max_samples";
    case CPH_STOP_TIME_CAP: return "time_cap";
    case CPH_STOP_ERROR: return "error";
    }
    return "unknown";
}

void cph_timing_defaults(cph_timing_opts *o) {
    memset(o, 0, sizeof *o);
    o->warmup = 2;
    o->min_samples = 10;
    o->max_samples = 1000;
    o->target_rel_ci = 0.02;
    o->confidence = 0.95;
    o->max_seconds = 2.0;
    o->cold = 0;
    o->flush_bytes = 0;
}

/* Streams the buffer: writes every word, then reads every word back, so that
 * both the written and the read lines displace whatever the work left in the
 * caches.  The sink keeps the reads from being optimised away. */
static volatile uint64_t flush_sink;

static void flush_caches(uint64_t *buf, size_t words, uint64_t round) {
    for (size_t i = 0; i < words; i++) buf[i] = (uint64_t)i ^ round;
    uint64_t sum = 0;
    for (size_t i = 0; i < words; i++) sum += buf[i];
    flush_sink = sum;
}

/* Next sample count at which the CI is evaluated: +10 %, at least +4. */
static size_t next_check(size_t n) {
    size_t step = n / 10;
    return n + (step < 4 ? 4 : step);
}

/* Room for one more sample and its disturbed flag (the two arrays share a
 * capacity). */
static int grow(cph_measurement *m, size_t *cap, size_t limit) {
    if (m->n < *cap) return 0;
    size_t nc = *cap ? *cap * 2 : 64;
    if (nc > limit) nc = limit;
    double *v = realloc(m->samples, nc * sizeof *v);
    if (!v) return -1;
    m->samples = v;
    unsigned char *f = realloc(m->disturbed_flags, nc);
    if (!f) return -1;
    m->disturbed_flags = f;
    *cap = nc;
    return 0;
}

/* The statistics of the samples no other task interrupted, when there are
 * any and some were interrupted; else of all samples. */
static void final_stats(cph_measurement *m, double confidence) {
    size_t clean = 0;
    if (m->disturbed && m->disturbed < m->n) {
        double *v = malloc(m->n * sizeof *v);
        if (v) {
            for (size_t i = 0; i < m->n; i++)
                if (!m->disturbed_flags[i]) v[clean++] = m->samples[i];
            cph_stats_compute(v, clean, confidence, &m->stats);
            free(v);
            m->stats_of_undisturbed = 1;
            return;
        }
    }
    cph_stats_compute(m->samples, m->n, confidence, &m->stats);
}

int cph_measure(const cph_timing_opts *o, cph_work_fn fn, void *arg, cph_measurement *out) {
    memset(out, 0, sizeof *out);
    cph_timing_opts opt = *o;
    if (opt.min_samples == 0) opt.min_samples = 1;
    if (opt.max_samples < opt.min_samples) opt.max_samples = opt.min_samples;
    if (opt.warmup < 0) opt.warmup = 0;
    if (opt.cold && opt.flush_bytes == 0) opt.flush_bytes = CPH_FLUSH_FALLBACK_BYTES;
    if (!opt.cold) opt.flush_bytes = 0;
    out->opts = opt;

    const double t_start = cph_now();
    uint64_t *flush = NULL;
    const size_t words = opt.flush_bytes / sizeof(uint64_t);
    int rc = 0;
    if (opt.cold && words) {
        flush = malloc(words * sizeof *flush);
        if (!flush) {
            out->stop = CPH_STOP_ERROR;
            return -1;
        }
    }

    for (int i = 0; i < opt.warmup; i++) {
        if (i > 0 && cph_now() - t_start >= opt.max_seconds / 4.0) break;
        rc = fn(arg);
        if (rc) goto done;
        out->warmup_runs++;
    }

    size_t cap = 0, check_at = opt.min_samples;
    out->stop = CPH_STOP_MAX_SAMPLES;
    for (;;) {
        if (out->n >= opt.max_samples) {
            out->stop = CPH_STOP_MAX_SAMPLES;
            break;
        }
        if (out->n > 0 && cph_now() - t_start >= opt.max_seconds) {
            out->stop = CPH_STOP_TIME_CAP;
            break;
        }
        if (grow(out, &cap, opt.max_samples)) {
            rc = -1;
            goto done;
        }
        if (flush) {
            flush_caches(flush, words, (uint64_t)out->flushes);
            out->flushes++;
        }
        const long p0 = preemptions();
        const double t0 = cph_now();
        rc = fn(arg);
        const double t1 = cph_now();
        const long p1 = preemptions();
        if (rc) goto done;
        out->disturbed_flags[out->n] = p1 != p0;
        out->disturbed += p1 != p0;
        total_disturbed += p1 != p0;
        total_samples++;
        out->samples[out->n++] = t1 - t0;
        out->timed_seconds += t1 - t0;

        if (out->n >= check_at) {
            cph_stats st;
            cph_stats_compute(out->samples, out->n, opt.confidence, &st);
            out->checks++;
            check_at = next_check(out->n);
            if (st.ci_exact && st.rel_ci <= opt.target_rel_ci) {
                out->converged = 1;
                out->stop = CPH_STOP_CONVERGED;
                break;
            }
        }
    }

done:
    free(flush);
    if (rc) out->stop = CPH_STOP_ERROR;
    final_stats(out, opt.confidence);
    /* Noise rule, second half: the CI target was not met by all samples. */
    if (!out->stats.ci_exact || out->stats.rel_ci > opt.target_rel_ci) out->stats.noisy = 1;
    out->wall_seconds = cph_now() - t_start;
    return rc;
}

void cph_measurement_free(cph_measurement *m) {
    free(m->samples);
    free(m->disturbed_flags);
    m->samples = NULL;
    m->disturbed_flags = NULL;
    m->n = 0;
}
