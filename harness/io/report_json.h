/* JSON for measurements: what bench writes, and what the tuning table and a
 * result comparison reuse, so that one measurement reads the same everywhere.
 *
 * A measurement object (cph_json_measurement), stable within format version 1
 * of every file that embeds it:
 *   {
 *     "settings": {"warmup": 2, "min_samples": 10, "max_samples": 1000,
 *                  "target_rel_ci": 0.02, "confidence": 0.95, "max_seconds": 2.0,
 *                  "cold": false, "flush_bytes": 0},
 *     "clock": "CLOCK_MONOTONIC_RAW", "clock_resolution_s": 1e-09,
 *     "stop": "converged" | "max_samples" | "time_cap" | "error",
 *     "converged": true, "warmup_runs": 2, "flushes": 0, "checks": 1,
 *     "wall_seconds": 0.0123, "timed_seconds": 0.0101,
 *     "stats": {"n": 10, "median": ..., "ci_lo": ..., "ci_hi": ..., "confidence": 0.95,
 *               "coverage": 0.9785, "ci_exact": true, "ci_rank_lo": 1, "ci_rank_hi": 8,
 *               "rel_ci": ..., "mean": ..., "stddev": ..., "min": ..., "max": ...,
 *               "q1": ..., "q3": ..., "noisy": false},
 *     "samples": [seconds, ... in run order]
 *   }
 * Times are seconds.  Non-finite numbers (rel_ci of an empty measurement) are
 * written as null.  Numbers carry 17 significant digits, so samples read back
 * bit for bit.
 *
 * A shape object (cph_json_shape): the cp_shape fields by name (n c h w k r s
 * stride_h stride_w pad_top pad_left pad_bottom pad_right dil_h dil_w groups)
 * plus "spec", the canonical text form cp_shape_format writes. */
#ifndef CONVPICK_REPORT_JSON_H
#define CONVPICK_REPORT_JSON_H

#include <stddef.h>

#include <jansson.h>

#include "convpick/convpick.h"
#include "harness/measure/timing.h"

/* Each returns a new reference (NULL only when out of memory). */
json_t *cph_json_timing_opts(const cph_timing_opts *o);
json_t *cph_json_stats(const cph_stats *s);
json_t *cph_json_measurement(const cph_measurement *m);
json_t *cph_json_shape(const cp_shape *s);
/* {"name": value, ...} in the algorithm's parameter order. */
json_t *cph_json_params(const cp_algo *a, const cp_params *p);
/* A double, or null when not finite. */
json_t *cph_json_number(double x);

/* Reads a measurement object back: settings, samples and the recorded fields;
 * the statistics are recomputed from the samples.  where names the object in
 * messages ("results[3].measurement").  CP_EFORMAT with "where.field: ..." on
 * a missing or mistyped field. */
cp_status cph_json_read_measurement(const json_t *obj, const char *where, cph_measurement *out,
                                    char *msg, size_t cap);

/* Writes root to path atomically: a temporary file in the same directory,
 * fsync, rename over path, fsync of the directory.  On failure path is left
 * as it was and the temporary file is removed.  CP_EIO with a message naming
 * the file and the failing step.  (The JSON text of cph_write_atomic in
 * rawfile.h, which does the replacing.) */
cp_status cph_json_write_atomic(const json_t *root, const char *path, char *msg, size_t cap);

#endif
