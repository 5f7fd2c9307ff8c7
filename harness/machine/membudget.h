/* The memory budget of verify, run, bench and tune (--max-memory): what one
 * layer needs (its tensors, the oracle's reference, the largest plan of the
 * selected algorithms) computed with overflow checks, against a budget that
 * defaults to half the memory hwloc reports.  A layer over the budget is
 * refused before anything is allocated, with the figures in the message. */
#ifndef CONVPICK_MEMBUDGET_H
#define CONVPICK_MEMBUDGET_H

#include <stddef.h>
#include <stdint.h>

#include "convpick/convpick.h"
#include "harness/select/selection.h"

#define CPH_MEM_DEFAULT_PERCENT 50 /* of the machine's memory */

/* Total memory of the machine as hwloc reports it; 0 when unknown. */
uint64_t cph_mem_machine_bytes(void);

/* Parses "BYTES" (optionally with a K, M or G suffix, powers of 1024) or
 * "NN%" (of machine_bytes).  CP_EINVAL with a message naming the value. */
cp_status cph_mem_parse(const char *arg, uint64_t machine_bytes, uint64_t *out, char *msg,
                        size_t cap);

/* The default budget: CPH_MEM_DEFAULT_PERCENT of the machine's memory, or no
 * limit (UINT64_MAX) when hwloc cannot tell. */
uint64_t cph_mem_default(void);

/* What one layer needs, in bytes; UINT64_MAX in a field means the size does
 * not fit in 64 bits (a shape that could never be allocated). */
typedef struct cph_mem_need {
    uint64_t tensors;   /* input, weights, bias, output (float32) */
    uint64_t reference; /* the oracle's reference and magnitudes (2 doubles per output), or 0 */
    uint64_t plan;      /* the largest plan: weights (copy or prepared) + workspace */
    uint64_t total;
} cph_mem_need;

/* Needs of shape s for the given algorithms and modes (those that do not
 * support the shape are skipped; default parameters for caches), plans sized
 * for nthreads workers, with_reference: the command runs the fp64 oracle. */
cph_mem_need cph_mem_layer_need(const cp_shape *s, const cp_flip *flips, int nflips,
                                const cp_algo *const *algos, size_t nalgos, int nthreads,
                                int with_reference, const cp_cache_sizes *caches);

/* CP_OK when need fits budget, else CP_ENOMEM with "WHAT needs N bytes
 * (tensors a, reference b, plan c), more than the memory budget of B bytes
 * (--max-memory)". */
cp_status cph_mem_check(const char *what, const cph_mem_need *need, uint64_t budget, char *msg,
                        size_t cap);

/* Every layer of a selection (nthreads: the most threads it will run with).
 * CP_OK when all fit, else CP_ENOMEM with the first refusal in msg. */
cp_status cph_mem_check_selection(const cph_selection *sel, int nthreads, int with_reference,
                                  uint64_t budget, char *msg, size_t cap);

#endif
