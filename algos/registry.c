/* The registry: one static table of every algorithm, in the order of reports.
 * Adding an algorithm is a new file in algos/ that defines
 * `const cp_algo cpa_NAME = {...}` and one X(cpa_NAME) line in CPA_ALGOS
 * below: the list both declares the variables and fills the table, so no
 * header needs to know them. */
#include <string.h>

#include "algos/core/cpa.h"

#define CPA_ALGOS(X)          \
    X(cpa_direct)             \
    X(cpa_direct_flipidx)     \
    X(cpa_im2col_gemm)        \
    X(cpa_winograd_2x2_3x3)   \
    X(cpa_winograd_4x4_3x3)   \
    X(cpa_blocked)            \
    X(cpa_blocked_flipidx)    \
    X(cpa_depthwise)

#define CPA_DECLARE(v) extern const cp_algo v;
#define CPA_ENTRY(v) &v,
CPA_ALGOS(CPA_DECLARE)
static const cp_algo *const registry[] = {CPA_ALGOS(CPA_ENTRY)};
#undef CPA_DECLARE
#undef CPA_ENTRY

size_t cp_algo_count(void) { return sizeof registry / sizeof registry[0]; }

const cp_algo *cp_algo_at(size_t i) { return i < cp_algo_count() ? registry[i] : NULL; }

const cp_algo *cp_algo_find(const char *name) {
    if (!name) return NULL;
    for (size_t i = 0; i < cp_algo_count(); i++)
        if (strcmp(registry[i]->name, name) == 0) return registry[i];
    return NULL;
}
