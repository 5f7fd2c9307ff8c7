/* What the parts of one bench run share (internal to harness/bench). */
#ifndef CONVPICK_BENCH_STATE_H
#define CONVPICK_BENCH_STATE_H

#include <jansson.h>

#include "convpick/table.h"
#include "harness/bench/bench.h"
#include "harness/measure/control.h"
#include "harness/measure/placer.h"
#include "harness/bench/bench_summary.h"
#include "harness/machine/machine.h"
#include "harness/tune/trial.h"

#define CPH_BENCH_MAX_THREADS 256
/* Roofs are the best of several runs: on a shared machine more runs give
 * more chances of an undisturbed one.  They are measured again at the end,
 * and a disagreement of more than 10 % is reported (the machine's load
 * changed during the run). */
#define CPH_BENCH_ROOF_SECONDS 1.0
#define CPH_BENCH_ROOF_DRIFT 0.10

/* One trial of the fixed control (harness/measure/control.h) and where in
 * the run it was taken. */
typedef struct cph_bench_ctl_trial {
    size_t layer;   /* index of the layer in the selection */
    cp_flip flip;
    int threads;    /* the rows' thread count in that round */
    size_t round;   /* 0-based round of that layer x flip x thread count */
    double at;      /* seconds since the rows started, at the trial's start */
    double fma, gemm; /* the trial medians of the two pieces, seconds */
} cph_bench_ctl_trial;

typedef struct cph_bench_ctl_log {
    cph_bench_ctl_trial *t;
    size_t n, cap;
} cph_bench_ctl_log;

/* Appends; 0, or -1 when out of memory. */
int cph_bench_ctl_add(cph_bench_ctl_log *l, const cph_bench_ctl_trial *t);

typedef struct cph_bench_state {
    cph_machine m;
    cp_cache_sizes caches;
    cph_roofs roofs;
    int have_roofs;
    cph_roofs roofs_end; /* measured again after the rows */
    int have_roofs_end;
    int threads[CPH_BENCH_MAX_THREADS];
    int nthreads;
    json_t *results;     /* NULL without a results document */
    cph_bench_recs recs; /* every measured row, for the targets */
    cp_table *table;     /* the table whose choice is timed, or NULL */
    cph_placer *placer;  /* where trials' buffers and plans lie; NULL: the heap */
    cph_control control; /* the fixed control (harness/measure/control.h) */
    int have_control;
    cph_bench_ctl_log ctl; /* its trials */
    double t0;           /* cph_now() when the rows started (control timestamps) */
    int oom_control;     /* a control trial could not be recorded */
    int oom;
    int failures;
    int name_w, algo_w;
} cph_bench_state;

/* Where one row stands: the layer, flip, thread count and what is timed. */
typedef struct cph_bench_row {
    const cph_layer *L;
    size_t li;
    cp_flip flip;
    int threads, pinned;
    cph_row_kind kind;
    const char *name; /* printed in the algo column */
    const char *algo; /* the algorithm behind the row, "" for SGEMM rows */
} cph_bench_row;

/* One row of a layer x flip x thread count as the rounds see it. */
typedef struct cph_bench_trow {
    cph_bench_row x;
    const char *status;   /* "ok" (raced), "unsupported" or "error" */
    char why[256];        /* not ok, or a failed trial: the reason */
    const cp_algo *a;     /* algorithm and chosen rows: what a trial plans */
    cp_params p;
    int64_t tb;           /* sgemm_wino: the Winograd plan's tile_block */
    char shown[192];      /* the params column */
    json_t *params;       /* the row's parameters as JSON (owned until reported) */
    double flops_used;    /* SGEMM rows: the FLOPs they do (2mnk), else 0 */
    const char *isa;      /* the isa column */
    int have_err;         /* algorithm and chosen rows: err measured (bench_error.c) */
    cp_error err;         /* the row's error against the fp64 oracle */
} cph_bench_trow;

/* bench_rows.c: printing and recording rows.  A row that was not measured
 * (status "unsupported" or "error", w->why), or a raced row from its trial
 * medians (trials[0..n), run order; to: the per-trial settings; wall: the
 * seconds its trials took). */
void cph_bench_report_untimed(cph_bench_state *r, cph_bench_trow *w);
void cph_bench_report_trials(cph_bench_state *r, cph_bench_trow *w, const double *trials,
                             size_t n, const cph_timing_opts *to, size_t rounds, double wall);

/* bench_rounds.c: the settings of one trial: one warm-up run, the batch
 * (trial_samples, at most max_samples), the row's cap split over its rounds. */
cph_timing_opts cph_bench_trial_timing(const cph_bench_cfg *c);

/* bench_error.c: every algorithm and chosen row's error against the fp64
 * oracle on the layer's tensors (su), before any trial; a row whose checking
 * run fails, or a plugin's row above its tolerance, becomes status "error".
 * -1 when out of memory (nothing reported). */
int cph_bench_errors(const cph_trial_setup *su, cph_bench_trow *rows, size_t nrows);

/* bench_rows.c: the table's header line.  bench_rounds.c: every layer x flip
 * at one thread count (tensors once; every algorithm and reference row of
 * every layer and a control per layer in shuffled rounds of trials over the
 * whole selection, the rows printed layer by layer when the rounds end); -1
 * when out of memory (reported). */
void cph_bench_print_header(const cph_bench_state *r);
int cph_bench_threads(cph_bench_state *r, const cph_bench_cfg *c, int threads, int pinned,
                      const cp_exec *exec);

/* bench_doc.c: one row's JSON object (status "ok", "unsupported" or "error"),
 * and the whole results document (summaries: NULL or stolen). */
json_t *cph_bench_row_json(const cph_bench_row *x, const char *status);
json_t *cph_bench_document(const cph_bench_state *r, const cph_bench_cfg *c, int argc,
                           char **argv, json_t *summaries);

#endif
