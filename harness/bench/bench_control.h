/* bench's fixed control: work that does not change from build to build,
 * timed in every round beside the rows, so that a machine-wide drift between
 * two runs (another tenant, a lower clock, a hypervisor's neighbour) shows in
 * the control as well as in the rows, and `convpick diff` can tell it from a
 * regression (docs/diff.md, "The control").
 *
 * Two series, each trial like a row's (one warm-up run, a short batch, its
 * median), both on the calling thread alone:
 *  - "gemm": one dense 256 x 256 x 256 SGEMM (OpenBLAS at one thread), its
 *    operands fresh from the placer each trial (memory, caches and FMA units);
 *  - "fma": the FMA loop of the roofs (harness/machine/roofs.h) at the widest
 *    width the CPU and the OS run, a fixed 2^26 FLOPs (the core alone).
 * Neither computes a convolution. */
#ifndef CONVPICK_BENCH_CONTROL_H
#define CONVPICK_BENCH_CONTROL_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/convpick.h"
#include "harness/measure/placer.h"
#include "harness/measure/timing.h"

#define CPH_CONTROL_GEMM_SIZE 256
#define CPH_CONTROL_FMA_FLOPS ((double)((int64_t)1 << 26))

typedef enum cph_control_series { CPH_CONTROL_SGEMM = 0, CPH_CONTROL_FMA = 1 } cph_control_series;
#define CPH_CONTROL_NSERIES 2

/* One trial of a series: when and where in the run it was taken. */
typedef struct cph_control_trial {
    size_t layer;   /* index of the layer in the selection */
    cp_flip flip;
    int threads;    /* the rows' thread count in that round */
    size_t round;   /* 0-based round of that layer x flip x thread count */
    double at;      /* seconds since the run started, at the trial's start */
    double median;  /* seconds */
} cph_control_trial;

typedef struct cph_control {
    int fma_bits;          /* 512, 256 or 0 (portable) */
    int64_t fma_iters;     /* iterations of that loop per run */
    cph_control_trial *t[CPH_CONTROL_NSERIES];
    size_t n[CPH_CONTROL_NSERIES], cap[CPH_CONTROL_NSERIES];
} cph_control;

/* Chooses the FMA width and length (no allocation). */
void cph_control_init(cph_control *c);
void cph_control_free(cph_control *c);
/* "sgemm" or "fma". */
const char *cph_control_series_name(cph_control_series s);

/* One trial of series s with the per-trial timing to (operands from pl, NULL:
 * the heap).  Fills *median and *wall (seconds, set-up included) and records
 * it with its place (tr: layer, flip, threads, round, at; median is filled
 * here).  Returns 0, or -1 (out of memory). */
int cph_control_trial_run(cph_control *c, cph_control_series s, const cph_timing_opts *to,
                          cph_placer *pl, uint64_t seed, const cph_control_trial *where,
                          double *median, double *wall);

#endif
