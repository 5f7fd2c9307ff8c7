/* convpick bench's work: time every selected algorithm on every selected
 * layer, flip and thread count, and report the statistics without choosing.
 *
 * Each algorithm runs through a plan (cp_plan_create / cp_plan_run) with its
 * default parameters for this machine's caches; the harness only times it.
 * Every row of a layer x flip x thread count is measured in ROUNDS: each
 * round runs one trial of every row and of the fixed control
 * (harness/measure/control.h), in an order shuffled anew each round (seeded); a trial
 * is a fresh plan and buffers from a placer, one warm-up run and a short
 * batch, and its median is the row's sample (harness/tune/trial.h).
 * Beside the algorithms, in the same run and with the same statistics: the
 * bare SGEMM of the im2col products ("sgemm") and of Winograd's GEMM stage
 * ("sgemm_wino", gemm_ref.h), and with a table what it chooses ("chosen",
 * through cp_table_plan).  With targets set (the project's benchmark script,
 * scripts/bench), the project's performance targets follow the rows
 * (bench_summary.h): PASS / MISS and by how much.
 *
 * Files: bench.c (the run), bench_rows.c (the rows of one layer in rounds,
 * printed, and the control's trials), bench_rows.c (printing and recording
 * a row), bench_doc.c (the results document). */
#ifndef CONVPICK_BENCH_H
#define CONVPICK_BENCH_H

#include <stdint.h>

#include "harness/measure/timing.h"
#include "harness/select/selection.h"

typedef struct cph_bench_cfg {
    cph_selection sel;      /* finished */
    cph_timing_opts timing; /* max_seconds: what one row may take over all its rounds (each
                               trial gets max_seconds / rounds); max_samples caps
                               trial_samples; cold and flush_bytes apply to every sample */
    size_t rounds;          /* trials of every row per layer x flip x thread count */
    size_t trial_samples;   /* timed samples per trial, after one warm-up run */
    int place;              /* 1: trial buffers and plans from a placer (placer.h) */
    const char *threads;    /* --threads list, syntax already checked; NULL = 1 */
    const char *json_path;  /* results document to write, or NULL */
    const char *table_path; /* tuning table whose choice is timed too, or NULL */
    int roofs;              /* measure the FMA peak and bandwidth first */
    int sgemm;              /* time the bare SGEMM reference rows */
    int targets;            /* evaluate the project's performance targets */
    uint64_t max_memory;    /* 0: the default budget */
} cph_bench_cfg;

/* Defaults of the trial settings (rounds, trial_samples, place). */
#define CPH_BENCH_ROUNDS_DEFAULT 8
#define CPH_BENCH_TRIAL_SAMPLES_DEFAULT 5

/* Runs the benchmark; reports any error once (one line on stderr) and returns
 * the exit code: 0 done, 1 an algorithm failed to plan or run or the results
 * could not be written, 2 bad input.  argv is recorded in the document. */
int cph_bench_run(cph_bench_cfg *c, int argc, char **argv);

#endif
