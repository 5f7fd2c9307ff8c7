/* How an algorithm runs work in parallel without knowing about threads.
 *
 * Kernels never create threads, pin them or read the clock.  They describe
 * their parallel work as "count independent chunks" and hand it to the
 * caller's parallel_for.  The harness provides one backed by a pool of threads
 * pinned one per physical core; a deploying program can provide its own or
 * pass NULL / cp_exec_serial() to run everything on the calling thread. */
#ifndef CONVPICK_EXEC_H
#define CONVPICK_EXEC_H

#include <stdint.h>

/* Runs chunks [begin, end) of a parallel loop on worker `worker`
 * (0 <= worker < nthreads).  Chunks given to different calls never overlap. */
typedef void (*cp_task_fn)(void *arg, int64_t begin, int64_t end, int worker);

typedef struct cp_exec {
    /* Number of workers that parallel_for may use (>= 1).  Algorithms size
     * per-worker workspace slices by it. */
    int nthreads;
    /* Splits [0, count) into at most nthreads contiguous ranges and calls fn
     * once per range, each on its own worker, returning when all are done.
     * NULL means: call fn(arg, 0, count, 0) on the calling thread. */
    void (*parallel_for)(void *pool, int64_t count, cp_task_fn fn, void *arg);
    void *pool;
    /* GEMM-based algorithms split their products over these workers, each
     * worker calling OpenBLAS; with nthreads > 1 the caller should set
     * OpenBLAS to one thread (the harness's pool does), else the workers' calls
     * each start OpenBLAS threads and oversubscribe the cores.  With one
     * worker a product is one OpenBLAS call on the calling thread, threaded as
     * the caller set OpenBLAS. */
} cp_exec;

/* A single-threaded executor. */
cp_exec cp_exec_serial(void);

/* Calls exec->parallel_for, or fn on the calling thread when exec is NULL or
 * has no parallel_for.  count <= 0 does nothing. */
void cp_parallel_for(const cp_exec *exec, int64_t count, cp_task_fn fn, void *arg);

/* Number of workers of exec (1 for NULL). */
int cp_exec_threads(const cp_exec *exec);

#endif
