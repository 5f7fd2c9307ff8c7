/* The suite summaries of convpick bench: one figure per performance target,
 * each computed from medians measured side by side in the same run, so that
 * the machine's drift between runs cancels out of the ratio.
 *
 * Targets (docs/benchmark.md explains each):
 *  blocked_peak      blocked, one thread, on the 1x1 and 3x3 layers with
 *                    C, K >= 64: suite GFLOP/s (layer counts as weights)
 *                    >= 70 % of the one-core FMA peak measured at start;
 *  im2col_vs_sgemm   im2col_gemm suite time <= 1.25 x the suite time of the
 *                    bare SGEMM of the same products;
 *  winograd_speedup  on 3x3 stride-1 layers with C, K >= 64: best
 *                    non-Winograd time / Winograd time >= 1.3, per layer and
 *                    over the suite;
 *  chosen_vs_im2col  the tuning table's choice: suite time <= 0.8 x the
 *                    im2col_gemm suite time;
 *  scaling           all physical cores vs one thread: suite throughput of
 *                    the chosen (else the best) algorithm per layer >= 1.7x.
 * Suite time = sum over layers of count x median; every ratio uses only the
 * layers where all the rows it compares were measured.  The verdicts use the
 * medians; the same figures from the fastest samples are reported beside
 * them as the machine's noise floor, never in their place. */
#ifndef CONVPICK_BENCH_SUMMARY_H
#define CONVPICK_BENCH_SUMMARY_H

#include <stddef.h>
#include <stdio.h>

#include <jansson.h>

#include "convpick/convpick.h"
#include "harness/select/layers.h"

/* What a timed row is. */
typedef enum cph_row_kind {
    CPH_ROW_ALGO = 0,     /* a registered algorithm with its default parameters */
    CPH_ROW_SGEMM,        /* bare SGEMM of the im2col products */
    CPH_ROW_SGEMM_WINO,   /* bare SGEMM of the Winograd GEMM stage */
    CPH_ROW_CHOSEN        /* what the tuning table chooses (through cp_table_plan) */
} cph_row_kind;

/* One timed row of bench (only rows that were measured are recorded). */
typedef struct cph_bench_rec {
    size_t layer;         /* index in the layer list */
    char layer_name[64];
    int count;            /* the layer's count in its network */
    cp_shape shape;
    cp_flip flip;
    int threads;
    cph_row_kind kind;
    char name[32];        /* algorithm name, "sgemm", "sgemm_wino" or "chosen" */
    char algo[32];        /* the algorithm behind the row ("" for SGEMM rows) */
    double median;        /* seconds */
    double fastest;       /* the fastest sample, seconds */
    double flops;         /* direct-equivalent FLOPs of the layer */
} cph_bench_rec;

typedef struct cph_bench_recs {
    cph_bench_rec *v;
    size_t n, cap;
} cph_bench_recs;

cp_status cph_bench_recs_add(cph_bench_recs *r, const cph_bench_rec *rec);
void cph_bench_recs_free(cph_bench_recs *r);

typedef enum cph_target_verdict { CPH_PASS = 0, CPH_MISS, CPH_NA } cph_target_verdict;

/* One layer's figure in a summary. */
typedef struct cph_summary_layer {
    char layer[64];
    double value;
    cph_target_verdict verdict;  /* for targets checked per layer; else CPH_NA */
} cph_summary_layer;

typedef struct cph_summary {
    const char *id;       /* "blocked_peak", ... (static) */
    char what[200];       /* the target in words */
    int at_least;         /* 1: value >= target passes; 0: value <= target passes */
    double target;
    double value;         /* the suite figure (NaN when nothing was measured) */
    const char *unit;     /* "fraction of peak", "x" (static) */
    cph_target_verdict verdict;
    double missed_by;     /* relative shortfall when missed: |value - target| / target */
    int threads;          /* thread count of the rows compared */
    int base_threads;     /* scaling: the baseline thread count (1), else 0 */
    cp_flip flip;
    char note[200];       /* why n/a, or what else to know */
    size_t nlayers;
    cph_summary_layer *layers;
} cph_summary;

/* Computes every summary for every mode and thread count present.  peak_1core
 * is the one-core FMA peak in GFLOP/s (0 = unknown: blocked_peak is n/a);
 * cores is the number of physical cores (the "all cores" thread count).
 * Returns the number written to *out (caller frees with cph_summaries_free),
 * or (size_t)-1 when memory runs out. */
size_t cph_bench_summarize(const cph_bench_recs *r, double peak_1core, int cores,
                           cph_summary **out);
void cph_summaries_free(cph_summary *s, size_t n);

/* The same records with every median replaced by the fastest sample (for
 * cph_bench_summarize: the summaries at the noise floor -- on a shared
 * machine interference only ever adds time).  CP_ENOMEM on failure. */
cp_status cph_bench_recs_fastest(const cph_bench_recs *r, cph_bench_recs *out);

/* Prints the summaries as a table with PASS / MISS / n/a and the shortfall;
 * fast (NULL or the same summaries computed from the fastest samples, same
 * order) adds a column with that figure and verdict. */
void cph_summaries_print(FILE *f, const cph_summary *s, const cph_summary *fast, size_t n);
/* The summaries as a JSON array (new reference, NULL on failure); fast as
 * above adds "value_fastest" and "verdict_fastest". */
json_t *cph_summaries_json(const cph_summary *s, const cph_summary *fast, size_t n);

/* The network totals: per flip and thread count recorded, the sum over the
 * layers of count x median for "chosen", each algorithm and the best of each
 * layer (network.h), printed. */
void cph_bench_network_print(FILE *f, const cph_bench_recs *r, const cph_layer_list *l);

#endif
