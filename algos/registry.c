/* The registry: one static table of every algorithm, in the order of reports.
 * Adding an algorithm is a new file in algos/ that defines
 * `const cp_algo cpa_NAME = {...}` and one X(cpa_NAME) line in CPA_ALGOS
 * below: the list both declares the variables and fills the table, so no
 * header needs to know them.  Plugins' algorithms (loader/plugin.c) are the
 * dynamic part at the end of the file, listed after the built-in ones. */
#include <string.h>

#include "algos/core/cpa.h"
#include "algos/core/registry.h"

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

/* The dynamic part (algos/core/registry.h): plugin algorithms, after the
 * built-in ones, each with the plugin that owns it. */
static const cp_algo *dynamic[CPA_REGISTRY_MAX_DYNAMIC];
static const void *dynamic_owner[CPA_REGISTRY_MAX_DYNAMIC];
static size_t ndynamic;

#define CPA_NBUILTIN (sizeof registry / sizeof registry[0])

size_t cp_algo_count(void) { return CPA_NBUILTIN + ndynamic; }

const cp_algo *cp_algo_at(size_t i) {
    if (i < CPA_NBUILTIN) return registry[i];
    return i - CPA_NBUILTIN < ndynamic ? dynamic[i - CPA_NBUILTIN] : NULL;
}

const cp_algo *cp_algo_find(const char *name) {
    if (!name) return NULL;
    for (size_t i = 0; i < cp_algo_count(); i++)
        if (strcmp(cp_algo_at(i)->name, name) == 0) return cp_algo_at(i);
    return NULL;
}

int cpa_registry_add(const cp_algo *const *algos, size_t n, const void *owner) {
    if (n > CPA_REGISTRY_MAX_DYNAMIC - ndynamic) return -1;
    for (size_t i = 0; i < n; i++) {
        dynamic[ndynamic] = algos[i];
        dynamic_owner[ndynamic++] = owner;
    }
    return 0;
}

const void *cpa_registry_owner(const cp_algo *a) {
    for (size_t i = 0; i < ndynamic; i++)
        if (dynamic[i] == a) return dynamic_owner[i];
    return NULL;
}

void cpa_registry_remove(const void *owner) {
    size_t kept = 0;
    for (size_t i = 0; i < ndynamic; i++) {
        if (dynamic_owner[i] == owner) continue;
        dynamic[kept] = dynamic[i];
        dynamic_owner[kept++] = dynamic_owner[i];
    }
    ndynamic = kept;
}
