/* JSON for measurements: what bench writes in each result's "measurement".
 *
 * A measurement object (cph_json_measurement), format convpick-bench-results
 * version 2:
 *   {
 *     "settings": {timing settings, codec_encode.h: "warmup", "min_samples",
 *                  "max_samples", "target_rel_ci", "confidence", "max_seconds",
 *                  "cold", "flush_bytes"},
 *     "clock": "CLOCK_MONOTONIC_RAW", "clock_resolution_s": 1e-09,
 *     "stop": "converged" | "max_samples" | "time_cap" | "error" | "rounds" (trials, below),
 *     "converged": true, "warmup_runs": 2, "flushes": 0, "checks": 1,
 *     "wall_seconds": 0.0123, "timed_seconds": 0.0101,
 *     "stats": {"n": 10, "median": ..., "ci_lo": ..., "ci_hi": ..., "confidence": 0.95,
 *               "coverage": 0.9785, "ci_exact": true, "ci_rank_lo": 1, "ci_rank_hi": 8,
 *               "rel_ci": ..., "mean": ..., "stddev": ..., "min": ..., "max": ...,
 *               "q1": ..., "q3": ..., "noisy": false},
 *     "samples": [seconds, ... in run order]
 *   }
 * It is the shared timing object ({"stats", "samples"}, loader/codec.h) with
 * more fields, so the readers decode both with one function.  Times are
 * seconds.  Non-finite numbers (rel_ci of an empty measurement) are written as
 * null.  Numbers carry 17 significant digits, so samples read back bit for
 * bit.  The shared objects (shape, params, ...) are in codec_encode.h. */
#ifndef CONVPICK_REPORT_JSON_H
#define CONVPICK_REPORT_JSON_H

#include <stddef.h>

#include <jansson.h>

#include "convpick/convpick.h"
#include "harness/io/codec_encode.h"
#include "harness/measure/timing.h"

/* Each returns a new reference (NULL only when out of memory). */
json_t *cph_json_stats(const cph_stats *s);
json_t *cph_json_measurement(const cph_measurement *m);

/* A measurement whose samples are TRIAL MEDIANS (bench's rows): the same
 * object, with
 *   "settings": the settings of ONE trial (warmup, min_samples = max_samples =
 *               the batch, max_seconds = the cap on one trial, cold,
 *               flush_bytes) plus "samples_are": "trial_medians",
 *               "rounds": rounds run, "placed": trial memory from a placer,
 *   "stop": "rounds", "converged": false, "warmup_runs": per trial,
 *   "flushes": 0 and "checks": 0 (not counted over trials), "timed_seconds":
 *   null, "wall_seconds": every trial's wall time, set-up included,
 *   "stats": of the trial medians (s), "samples": the trial medians in round
 *   order. */
json_t *cph_json_trials(const double *trials, size_t n, const cph_stats *s,
                        const cph_timing_opts *per_trial, size_t rounds, int placed, double wall);

/* Writes root to path atomically: a temporary file in the same directory,
 * fsync, rename over path, fsync of the directory.  On failure path is left
 * as it was and the temporary file is removed.  CP_EIO with a message naming
 * the file and the failing step.  (The JSON text of cph_write_atomic in
 * rawfile.h, which does the replacing.) */
cp_status cph_json_write_atomic(const json_t *root, const char *path, char *msg, size_t cap);

#endif
