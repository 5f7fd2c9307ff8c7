/* Encoding the objects every convpick format shares (shape, flipped, params,
 * timing, timing settings), the counterpart of the loader's decoders
 * (loader/codec.h, which documents the spelling).  The device object is
 * cph_device_json (harness/machine/machine.h).  Each returns a new reference
 * (NULL only when out of memory). */
#ifndef CONVPICK_CODEC_ENCODE_H
#define CONVPICK_CODEC_ENCODE_H

#include <stddef.h>

#include <jansson.h>

#include "convpick/convpick.h"
#include "harness/measure/timing.h"

/* The bench results format (harness/cli/cmd_bench.c). */
#define CPH_BENCH_FORMAT "convpick-bench-results"
#define CPH_BENCH_VERSION 2 /* the version written; 1 is still read (results_migrate.c) */

/* A double, or null when not finite. */
json_t *cph_json_number(double x);
/* The shape object: the 16 integer fields, "layout" and "spec" (the
 * canonical text cp_shape_format writes). */
json_t *cph_json_shape(const cp_shape *s);
/* false for cross-correlation, true for true convolution. */
json_t *cph_json_flipped(cp_flip f);
/* {"name": value, ...} in the algorithm's parameter order ({} for NULL). */
json_t *cph_json_params(const cp_algo *a, const cp_params *p);
/* Adds "plugin": {"name", "hash"} to obj (an algorithm object of a table:
 * choice, runner_up, a candidate) when a is a plugin's; obj itself is
 * returned (NULL stays NULL; NULL also when out of memory). */
json_t *cph_json_add_plugin(json_t *obj, const cp_algo *a);
/* The timing object of a table: {"stats": {"n", "median", "ci_lo", "ci_hi",
 * "noisy"}, "samples": [...] (only when samples && n)}; a bench measurement
 * (report_json.h) is the same object with more fields. */
json_t *cph_json_timing(const cp_timing *t, const double *samples, size_t n);
/* The timing settings object ("settings.timing" of tables and bench
 * results): warmup, min_samples, max_samples, target_rel_ci, confidence,
 * max_seconds, cold, flush_bytes. */
json_t *cph_json_timing_opts(const cph_timing_opts *o);

#endif
