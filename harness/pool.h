/* A pool of worker threads pinned one per physical core (hwloc), exposed to
 * the algorithms as a cp_exec.  Also owns OpenBLAS's thread count: while a
 * pool of n workers is in use, OpenBLAS is set to n threads, so GEMM calls made
 * from the calling thread never oversubscribe the cores the harness uses. */
#ifndef CONVPICK_POOL_H
#define CONVPICK_POOL_H

#include "convpick/exec.h"
#include "machine.h"

typedef struct cph_pool cph_pool;

/* nthreads workers (worker 0 is the calling thread), pinned to the first
 * nthreads physical cores of m (nthreads <= m->cores).  Pinning failures (a
 * synthetic topology, a restricted cpuset) are reported in msg as a warning
 * and the pool still works unpinned: *pinned tells which happened. */
cp_status cph_pool_create(const cph_machine *m, int nthreads, cph_pool **out, int *pinned,
                          char *msg, size_t cap);
/* The executor to hand to cp_plan_run (valid while the pool lives). */
cp_exec cph_pool_exec(cph_pool *p);
int cph_pool_threads(const cph_pool *p);
/* The physical core index each worker is bound to (-1 when unpinned). */
int cph_pool_core_of(const cph_pool *p, int worker);
void cph_pool_destroy(cph_pool *p);

/* Parses "--threads" values: "1,2", "all" (every physical core), "1-4".
 * Writes at most max counts, each in [1, cores]; returns how many, or -1 with
 * a message. */
int cph_parse_threads(const char *arg, int cores, int *out, int max, char *msg, size_t cap);

#endif
