/* A pool of worker threads pinned one per physical core (hwloc), exposed to
 * the algorithms as a cp_exec.  Also owns OpenBLAS's thread count: while a
 * pool is in use, OpenBLAS is set to one thread, because the GEMM-based
 * algorithms split their products over the pool's workers (algos/core/gemm_split.h)
 * and OpenBLAS threads of its own would land, unpinned and spinning after each
 * call, on the cores the workers are pinned to.  The previous count is
 * restored when the pool is destroyed. */
#ifndef CONVPICK_POOL_H
#define CONVPICK_POOL_H

#include "convpick/exec.h"
#include "harness/machine/machine.h"

typedef struct cph_pool cph_pool;

/* nthreads workers (worker 0 is the calling thread), pinned to the first
 * nthreads physical cores of m (nthreads <= m->cores).  Pinning failures (a
 * synthetic topology, a restricted cpuset) are reported in msg as a warning
 * and the pool still works unpinned: *pinned tells which happened. */
cp_status cph_pool_create(const cph_machine *m, int nthreads, cph_pool **out, int *pinned,
                          char *msg, size_t cap);
/* The executor to hand to cp_plan_run (valid while the pool lives).  Its
 * parallel_for is called from the thread that created the pool, one call at a
 * time, never from inside a task. */
cp_exec cph_pool_exec(cph_pool *p);
int cph_pool_threads(const cph_pool *p);
/* The physical core index each worker is bound to (-1 when unpinned). */
int cph_pool_core_of(const cph_pool *p, int worker);
void cph_pool_destroy(cph_pool *p);

/* Which cores a pool of n workers uses on topology t (a hwloc_topology_t):
 * the first n physical cores in hwloc's logical order (compact placement:
 * fills a package, and so its last-level cache, before the next).  Writes
 * each worker's core logical index and the OS index of the PU it is bound to
 * (the core's first PU).  Pure: reads the topology only.  Returns n, or -1
 * when n is outside [1, cores]. */
int cph_pool_choose_cores(void *topology, int n, int *core_logical, int *pu_os);

/* Parses "--threads" values: "1,2", "all" (every physical core), "1-4", or a
 * comma-separated mix ("1,2-3,all").  Repeated counts are kept once, in the
 * order first given.  Writes at most max counts, each in [1, cores]; returns
 * how many, or -1 with a message. */
int cph_parse_threads(const char *arg, int cores, int *out, int max, char *msg, size_t cap);

#endif
