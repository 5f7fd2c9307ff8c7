/* The results reader's parts (results_read.h is their interface):
 *   results_read.c     the entry point: file, JSON, which format
 *   results_bench.c    bench results -> items
 *   results_table.c    tuning tables -> items and choices
 *   results_migrate.c  bench results version 1 -> current
 *   results_items.c    what both share: the item list, params as text, rel_err
 * Field access and messages: loader/json_get.h; the shared objects:
 * loader/codec.h. */
#ifndef CONVPICK_RESULTS_IMPL_H
#define CONVPICK_RESULTS_IMPL_H

#include "harness/io/results_read.h"
#include "loader/codec.h"

typedef struct cph_rctx {
    cpl_jctx j;
    cph_results *r;
    size_t items_cap;
} cph_rctx;

cp_status cph_results_push(cph_rctx *c, const cph_result_item *it);
/* A "control" object (bench results at the top, a table in each entry's
 * "tried"): each piece's trial medians ("gemm_s", "fma_s"), appended to
 * r->control in file order.  ctl NULL: none (written before the control).
 * where: its JSON path for messages. */
cp_status cph_results_read_control(cph_rctx *c, const json_t *ctl, const char *where);
/* The run's cache state: the first value seen, -1 once two differ. */
void cph_results_note_cold(cph_results *r, int cold, int *first);
double cph_results_median(const double *v, size_t n);
/* obj.params {"kt": 4, "kb": 64} -> "kb=64,kt=4": in algo's declaration order
 * (as everywhere parameters are printed); names it does not declare (the
 * SGEMM reference rows' m, k, n, ...) after, in the order the writer wrote them. */
cp_status cph_results_params_text(const cpl_jctx *c, const json_t *obj, const char *where,
                                  const char *algo, char *out, size_t cap);

/* obj.rel_err, the error against the fp64 oracle as both formats spell it
 * (a bench row, a table candidate): a number >= 0, or NaN when absent (files
 * written before bench measured it) or null (not measured, not finite). */
cp_status cph_results_rel_err(const cpl_jctx *c, const json_t *obj, const char *where,
                              double *out);

cp_status cph_results_read_bench(cph_rctx *c, json_t *root);
cp_status cph_results_read_table(cph_rctx *c, json_t *root);
/* Bench results of an older version -> the current spelling, in place. */
cp_status cph_bench_migrate(const cpl_jctx *c, json_t *root);

/* results_evidence.c: 1 when the document data (read from path) is a lean
 * table naming an evidence file; out: that file's path (beside path). */
int cph_results_evidence_path(const char *path, const char *data, size_t len, char *out,
                              size_t cap);

#endif
