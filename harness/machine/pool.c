/* The thread pool behind the harness's cp_exec.
 *
 * Workers 1..n-1 are threads; worker 0 is the caller.  A parallel_for
 * publishes a job and bumps a generation counter; each worker runs its
 * contiguous range (or nothing, when count < n) and every worker acknowledges
 * every generation, so the job is never rewritten while a worker may still
 * read it.  Waiting spins briefly on the atomics (a job often follows the last
 * within microseconds) and then sleeps on a condition variable; the counters
 * change under the mutex whenever a sleeper may depend on them, so no wake-up
 * is lost. */
#define _GNU_SOURCE
#include "harness/machine/pool.h"

#include <cblas.h>
#include <ctype.h>
#include <hwloc.h>
#include <limits.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define SPIN_ITERS 4000 /* ~ tens of microseconds of pause instructions */

struct cph_pool;

typedef struct worker {
    struct cph_pool *pool;
    int id;
    pthread_t thread;
    int started;
} worker;

struct cph_pool {
    int n;
    worker *workers;
    int *cores;     /* core logical index per worker, -1 when unpinned */
    int *pus;
    hwloc_topology_t topo;
    int pinned;
    hwloc_bitmap_t caller_set; /* the caller's binding before the pool */
    int caller_saved;
    int blas_threads_before;

    pthread_mutex_t mu;
    pthread_cond_t start_cv, done_cv;
    atomic_uint_fast64_t generation;
    atomic_int remaining;
    atomic_int stop;
    int bind_failures;   /* under mu */
    /* The job of the current generation (written by the caller before the
     * generation is bumped, read by workers after they see it). */
    int64_t count;
    cp_task_fn fn;
    void *arg;
};

static inline void cpu_relax(void) {
#if defined(__x86_64__) || defined(__i386__)
    __builtin_ia32_pause();
#endif
}

static void run_range(cph_pool *p, int id) {
    const int64_t count = p->count, n = p->n;
    const int64_t begin = count * id / n, end = count * (id + 1) / n;
    if (begin < end) p->fn(p->arg, begin, end, id);
}

static int bind_self(cph_pool *p, int id) {
    if (!p->pinned) return 0;
    hwloc_bitmap_t set = hwloc_bitmap_alloc();
    if (!set) return -1;
    hwloc_bitmap_only(set, (unsigned)p->pus[id]);
    const int rc = hwloc_set_cpubind(p->topo, set, HWLOC_CPUBIND_THREAD);
    hwloc_bitmap_free(set);
    return rc;
}

static void *worker_main(void *argp) {
    worker *w = argp;
    cph_pool *p = w->pool;
    if (bind_self(p, w->id) != 0) {
        pthread_mutex_lock(&p->mu);
        p->bind_failures++;
        pthread_mutex_unlock(&p->mu);
    }
    uint_fast64_t seen = 0;
    for (;;) {
        uint_fast64_t g = atomic_load_explicit(&p->generation, memory_order_acquire);
        for (int i = 0; g == seen && i < SPIN_ITERS; i++) {
            cpu_relax();
            g = atomic_load_explicit(&p->generation, memory_order_acquire);
        }
        if (g == seen) {
            pthread_mutex_lock(&p->mu);
            while ((g = atomic_load_explicit(&p->generation, memory_order_acquire)) == seen &&
                   !atomic_load_explicit(&p->stop, memory_order_acquire))
                pthread_cond_wait(&p->start_cv, &p->mu);
            pthread_mutex_unlock(&p->mu);
        }
        if (atomic_load_explicit(&p->stop, memory_order_acquire)) break;
        seen = g;
        run_range(p, w->id);
        if (atomic_fetch_sub_explicit(&p->remaining, 1, memory_order_acq_rel) == 1) {
            pthread_mutex_lock(&p->mu);
            pthread_cond_signal(&p->done_cv);
            pthread_mutex_unlock(&p->mu);
        }
    }
    return NULL;
}

static void pool_parallel_for(void *pv, int64_t count, cp_task_fn fn, void *arg) {
    cph_pool *p = pv;
    if (count <= 0) return;
    if (p->n == 1) {
        fn(arg, 0, count, 0);
        return;
    }
    pthread_mutex_lock(&p->mu);
    p->count = count;
    p->fn = fn;
    p->arg = arg;
    atomic_store_explicit(&p->remaining, p->n - 1, memory_order_relaxed);
    atomic_fetch_add_explicit(&p->generation, 1, memory_order_release);
    pthread_cond_broadcast(&p->start_cv);
    pthread_mutex_unlock(&p->mu);

    run_range(p, 0);

    for (int i = 0; i < SPIN_ITERS; i++) {
        if (atomic_load_explicit(&p->remaining, memory_order_acquire) == 0) return;
        cpu_relax();
    }
    pthread_mutex_lock(&p->mu);
    while (atomic_load_explicit(&p->remaining, memory_order_acquire) != 0)
        pthread_cond_wait(&p->done_cv, &p->mu);
    pthread_mutex_unlock(&p->mu);
}

int cph_pool_choose_cores(void *topology, int n, int *core_logical, int *pu_os) {
    hwloc_topology_t t = topology;
    const int cores = hwloc_get_nbobjs_by_type(t, HWLOC_OBJ_CORE);
    const int have_cores = cores > 0;
    const int units = have_cores ? cores : hwloc_get_nbobjs_by_type(t, HWLOC_OBJ_PU);
    if (n < 1 || n > units) return -1;
    for (int i = 0; i < n; i++) {
        hwloc_obj_t c = hwloc_get_obj_by_type(t, have_cores ? HWLOC_OBJ_CORE : HWLOC_OBJ_PU,
                                              (unsigned)i);
        hwloc_obj_t pu = hwloc_get_obj_inside_cpuset_by_type(t, c->cpuset, HWLOC_OBJ_PU, 0);
        core_logical[i] = (int)c->logical_index;
        pu_os[i] = pu ? (int)pu->os_index : -1;
    }
    return n;
}

static void pool_free(cph_pool *p) {
    free(p->workers);
    free(p->cores);
    free(p->pus);
    if (p->caller_set) hwloc_bitmap_free(p->caller_set);
    free(p);
}

cp_status cph_pool_create(const cph_machine *m, int nthreads, cph_pool **out, int *pinned,
                          char *msg, size_t cap) {
    *out = NULL;
    if (pinned) *pinned = 0;
    if (msg && cap) msg[0] = '\0';
    if (nthreads < 1 || nthreads > m->cores) {
        if (msg && cap)
            snprintf(msg, cap, "threads: %d is outside [1, %d] (physical cores)", nthreads,
                     m->cores);
        return CP_EINVAL;
    }
    cph_pool *p = calloc(1, sizeof *p);
    if (!p) return CP_ENOMEM;
    p->n = nthreads;
    p->topo = m->topology;
    p->workers = calloc((size_t)nthreads, sizeof *p->workers);
    p->cores = calloc((size_t)nthreads, sizeof *p->cores);
    p->pus = calloc((size_t)nthreads, sizeof *p->pus);
    p->caller_set = hwloc_bitmap_alloc();
    if (!p->workers || !p->cores || !p->pus || !p->caller_set) {
        pool_free(p);
        return CP_ENOMEM;
    }
    cph_pool_choose_cores(p->topo, nthreads, p->cores, p->pus);
    p->pinned = !m->synthetic && hwloc_topology_is_thissystem(p->topo);
    if (!p->pinned && msg && cap)
        snprintf(msg, cap, "threads not pinned: the topology is not this machine's (synthetic)");
    if (p->pinned) {
        p->caller_saved = hwloc_get_cpubind(p->topo, p->caller_set, HWLOC_CPUBIND_THREAD) == 0;
        if (bind_self(p, 0) != 0) p->bind_failures++;
    }
    pthread_mutex_init(&p->mu, NULL);
    pthread_cond_init(&p->start_cv, NULL);
    pthread_cond_init(&p->done_cv, NULL);
    atomic_init(&p->generation, 0);
    atomic_init(&p->remaining, 0);
    atomic_init(&p->stop, 0);

    for (int i = 1; i < nthreads; i++) {
        worker *w = &p->workers[i];
        w->pool = p;
        w->id = i;
        const int rc = pthread_create(&w->thread, NULL, worker_main, w);
        if (rc != 0) {
            if (msg && cap) snprintf(msg, cap, "threads: cannot start worker %d: %s", i, strerror(rc));
            cph_pool_destroy(p);
            return CP_ENOMEM;
        }
        w->started = 1;
    }
    /* Every worker binds itself first thing; one empty job makes sure all did
     * before the pinning is reported. */
    if (nthreads > 1) {
        pthread_mutex_lock(&p->mu);
        p->count = 0;
        p->fn = NULL;
        atomic_store_explicit(&p->remaining, p->n - 1, memory_order_relaxed);
        atomic_fetch_add_explicit(&p->generation, 1, memory_order_release);
        pthread_cond_broadcast(&p->start_cv);
        while (atomic_load_explicit(&p->remaining, memory_order_acquire) != 0)
            pthread_cond_wait(&p->done_cv, &p->mu);
        pthread_mutex_unlock(&p->mu);
    }
    pthread_mutex_lock(&p->mu);
    const int failures = p->bind_failures;
    pthread_mutex_unlock(&p->mu);
    if (p->pinned && failures > 0) {
        if (msg && cap)
            snprintf(msg, cap, "threads not pinned: hwloc could not bind %d of %d workers",
                     failures, nthreads);
        p->pinned = 0;
    }
    if (!p->pinned)
        for (int i = 0; i < nthreads; i++) p->cores[i] = -1;
    p->blas_threads_before = openblas_get_num_threads();
    openblas_set_num_threads(1); /* the workers share GEMMs out themselves (pool.h) */
    if (pinned) *pinned = p->pinned;
    *out = p;
    return CP_OK;
}

cp_exec cph_pool_exec(cph_pool *p) {
    cp_exec e = {p->n, pool_parallel_for, p};
    return e;
}

int cph_pool_threads(const cph_pool *p) { return p->n; }

int cph_pool_core_of(const cph_pool *p, int worker_id) {
    if (worker_id < 0 || worker_id >= p->n) return -1;
    return p->cores[worker_id];
}

void cph_pool_destroy(cph_pool *p) {
    if (!p) return;
    pthread_mutex_lock(&p->mu);
    atomic_store_explicit(&p->stop, 1, memory_order_release);
    pthread_cond_broadcast(&p->start_cv);
    pthread_mutex_unlock(&p->mu);
    for (int i = 1; i < p->n; i++)
        if (p->workers[i].started) pthread_join(p->workers[i].thread, NULL);
    if (p->caller_saved) hwloc_set_cpubind(p->topo, p->caller_set, HWLOC_CPUBIND_THREAD);
    if (p->blas_threads_before > 0) openblas_set_num_threads(p->blas_threads_before);
    pthread_cond_destroy(&p->start_cv);
    pthread_cond_destroy(&p->done_cv);
    pthread_mutex_destroy(&p->mu);
    pool_free(p);
}

/* --- --threads ------------------------------------------------------------ */

static int parse_count(const char *s, const char *end, long *out) {
    if (s == end) return -1;
    long v = 0;
    for (const char *c = s; c < end; c++) {
        if (!isdigit((unsigned char)*c)) return -1;
        v = v * 10 + (*c - '0');
        if (v > INT_MAX) return -1;
    }
    *out = v;
    return 0;
}

static int add_count(int *out, int *n, int max, int v, int cores, char *msg, size_t cap) {
    if (v < 1 || v > cores) {
        if (msg && cap)
            snprintf(msg, cap, "threads: %d is outside [1, %d] (physical cores)", v, cores);
        return -1;
    }
    for (int i = 0; i < *n; i++)
        if (out[i] == v) return 0;
    if (*n >= max) {
        if (msg && cap) snprintf(msg, cap, "threads: more than %d thread counts given", max);
        return -1;
    }
    out[(*n)++] = v;
    return 0;
}

int cph_parse_threads(const char *arg, int cores, int *out, int max, char *msg, size_t cap) {
    int n = 0;
    if (!arg || !*arg) {
        if (msg && cap) snprintf(msg, cap, "threads: empty value (give e.g. 1,2 or 1-4 or all)");
        return -1;
    }
    const char *s = arg;
    for (;;) {
        const char *end = strchr(s, ',');
        if (!end) end = s + strlen(s);
        const size_t len = (size_t)(end - s);
        const char *dash = memchr(s, '-', len);
        long lo, hi;
        if (len == 3 && strncmp(s, "all", 3) == 0) {
            lo = hi = cores;
        } else if (dash ? (parse_count(s, dash, &lo) != 0 || parse_count(dash + 1, end, &hi) != 0)
                        : parse_count(s, end, &lo) != 0) {
            if (msg && cap)
                snprintf(msg, cap, "threads: '%.*s' in '%s' is not a count, a range a-b or 'all'",
                         (int)len, s, arg);
            return -1;
        } else if (!dash) {
            hi = lo;
        }
        if (lo > hi) {
            if (msg && cap)
                snprintf(msg, cap, "threads: range '%.*s' runs backwards", (int)len, s);
            return -1;
        }
        for (long v = lo; v <= hi; v++)
            if (add_count(out, &n, max, (int)v, cores, msg, cap) != 0) return -1;
        if (!*end) break;
        s = end + 1;
    }
    return n;
}
