/* The registry: one static table of every algorithm, in the order of reports.
 * Adding an algorithm is a new file in algos/ that defines
 * `const cp_algo cpa_NAME = {...}` and one X(cpa_NAME) line in CPA_ALGOS
 * below: the list both declares the variables and fills the table, so no
 * header needs to know them.  Plugins' algorithms (loader/plugin.c) are the
 * dynamic part at the end of the file, listed after the built-in ones. */
#ifdef CP_TEST_SLOWDOWN_ALGO
#define _POSIX_C_SOURCE 200809L /* clock_gettime, test-only build */
#include <pthread.h>
#include <time.h>
#endif
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

#ifdef CP_TEST_SLOWDOWN_ALGO
/* Test-only (CMake -DCP_TEST_SLOWDOWN=ALGO:PERCENT; never in a product
 * build): the registry hands out a copy of ALGO whose run() spins, after the
 * real run, for PERCENT % of the time it took, so that the build is reliably
 * that much slower on that algorithm wherever the algorithm is run from: a
 * plan of this library, or another library's plan of this one's algorithms
 * (tools/revision_plugin/).  The only place in the library that reads a
 * clock, and only in that build. */
static const cp_algo *slowed_real;
static cp_algo slowed_copy;
static pthread_once_t slowed_once = PTHREAD_ONCE_INIT;

static double slowdown_now(void) {
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static cp_status slowed_run(const cp_run_args *a) {
    const double t0 = slowdown_now();
    const cp_status st = slowed_real->run(a);
    const double until = slowdown_now() + (slowdown_now() - t0) * CP_TEST_SLOWDOWN_PCT / 100.0;
    while (slowdown_now() < until) {
    }
    return st;
}

static void slowed_init(void) {
    for (size_t i = 0; i < CPA_NBUILTIN; i++)
        if (strcmp(registry[i]->name, CP_TEST_SLOWDOWN_ALGO) == 0) slowed_real = registry[i];
    if (!slowed_real) return;
    slowed_copy = *slowed_real;
    slowed_copy.run = slowed_run;
}

static const cp_algo *builtin(size_t i) {
    pthread_once(&slowed_once, slowed_init);
    return registry[i] == slowed_real ? &slowed_copy : registry[i];
}
#else
static const cp_algo *builtin(size_t i) { return registry[i]; }
#endif

size_t cp_algo_count(void) { return CPA_NBUILTIN + ndynamic; }

const cp_algo *cp_algo_at(size_t i) {
    if (i < CPA_NBUILTIN) return builtin(i);
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
