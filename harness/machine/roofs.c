/* Roofs measured on the spot: the FP32 FMA peak and the triad bandwidth, on
 * one core and on every physical core, and the ridge point between them
 * (FLOP/byte at which a kernel stops being bandwidth-bound; Williams, Waterman
 * & Patterson 2009, "Roofline").  Conventions are stated in machine.h. */
#define _GNU_SOURCE
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "loader/cpuid.h"
#include "harness/machine/machine.h"
#include "harness/machine/pool.h"
#include "harness/machine/roofs.h"

#define MIN_RUNS 3
#define MAX_WORKERS 256

static double clock_s(void) {
    struct timespec ts;
#ifdef CLOCK_MONOTONIC_RAW
    clock_gettime(CLOCK_MONOTONIC_RAW, &ts);
#else
    clock_gettime(CLOCK_MONOTONIC, &ts);
#endif
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

float cph_roof_fma_portable(int64_t iters) {
    float x[16];
    for (int j = 0; j < 16; j++) x[j] = 1.0f + 0.1f * (float)j;
    const float a = 0.999999f, b = 1e-7f;
    for (int64_t i = 0; i < iters; i++)
        for (int j = 0; j < 16; j++) x[j] = x[j] * a + b;
    float t = 0.0f;
    for (int j = 0; j < 16; j++) t += x[j];
    return t;
}

void cph_roof_triad(float *a, const float *b, const float *c, float s, size_t begin, size_t end) {
    for (size_t i = begin; i < end; i++) a[i] = b[i] + s * c[i];
}

/* --- peak ------------------------------------------------------------------ */

typedef struct peak_job {
    int bits; /* 512, 256 or 0 (portable) */
    int64_t iters;
    float sink[MAX_WORKERS * 16]; /* one cache line per worker */
} peak_job;

float cph_roof_fma(int bits, int64_t iters) {
    return bits == 512   ? cph_roof_fma_avx512(iters)
           : bits == 256 ? cph_roof_fma_avx2(iters)
                         : cph_roof_fma_portable(iters);
}

static void peak_task(void *arg, int64_t begin, int64_t end, int worker) {
    peak_job *j = arg;
    for (int64_t i = begin; i < end; i++)
        j->sink[(worker % MAX_WORKERS) * 16] += cph_roof_fma(j->bits, j->iters);
}

/* GFLOP/s of the best run of `workers` cores running the loop at once. */
static double peak_gflops(const cp_exec *ex, int workers, peak_job *j, double budget) {
    const double per_iter = j->bits == 512   ? CPH_ROOF_AVX512_FLOPS_PER_ITER
                            : j->bits == 256 ? CPH_ROOF_AVX2_FLOPS_PER_ITER
                                             : CPH_ROOF_PORTABLE_FLOPS_PER_ITER;
    /* One run's length: short (at most 2 ms, under a scheduler time slice), so
     * that on a shared machine some runs land in a window where nothing else
     * runs on the cores; the best run is kept. */
    const double target = fmin(fmax(budget / 10.0, 1e-3), 0.002);
    j->iters = 1 << 14;
    double t = 0.0;
    for (;;) { /* calibrate: grow the run until it lasts `target` */
        const double t0 = clock_s();
        cp_parallel_for(ex, workers, peak_task, j);
        t = clock_s() - t0;
        if (t >= target || j->iters > ((int64_t)1 << 40)) break;
        j->iters *= 2;
    }
    double best = t;
    const double stop = clock_s() + budget;
    for (int run = 0; run < MIN_RUNS || clock_s() < stop; run++) {
        const double t0 = clock_s();
        cp_parallel_for(ex, workers, peak_task, j);
        const double dt = clock_s() - t0;
        if (dt < best) best = dt;
    }
    return per_iter * (double)j->iters * workers / best * 1e-9;
}

/* --- triad ----------------------------------------------------------------- */

typedef struct triad_job {
    float *a, *b, *c;
    int init;
} triad_job;

static void triad_task(void *arg, int64_t begin, int64_t end, int worker) {
    (void)worker;
    triad_job *j = arg;
    if (j->init) { /* first touch by the worker that will stream the range */
        for (int64_t i = begin; i < end; i++) {
            j->a[i] = 0.0f;
            j->b[i] = 1.0f;
            j->c[i] = 2.0f;
        }
        return;
    }
    cph_roof_triad(j->a, j->b, j->c, 0.5f, (size_t)begin, (size_t)end);
}

static double triad_gbs(const cp_exec *ex, triad_job *j, size_t n, double budget) {
    j->init = 0;
    cp_parallel_for(ex, (int64_t)n, triad_task, j); /* warm-up: page tables, TLB */
    double best = INFINITY;
    const double stop = clock_s() + budget;
    for (int run = 0; run < MIN_RUNS || clock_s() < stop; run++) {
        const double t0 = clock_s();
        cp_parallel_for(ex, (int64_t)n, triad_task, j);
        const double dt = clock_s() - t0;
        if (dt < best) best = dt;
    }
    return 12.0 * (double)n / best * 1e-9;
}

/* Floats per array of the cache-level triads for one core (0: not measured):
 * L2: the three arrays fill half of one core's L2; L3: they fill 4x L2, and
 * all cores' arrays together at most half of L3. */
static size_t triad_level_floats(const cph_machine *m, int level, int cores) {
    const cp_cache_sizes cs = cph_machine_caches(m);
    if (cs.l2 == 0) return 0;
    size_t bytes = level == 2 ? cs.l2 / 6 : 4 * cs.l2 / 3;
    if (level == 3 && (cs.l3 == 0 || 3 * bytes * (size_t)cores > cs.l3 / 2)) return 0;
    return (bytes & ~(size_t)63) / sizeof(float);
}

static size_t triad_array_bytes(const cph_machine *m) {
    size_t bytes = 4 * cph_machine_llc_total(m);
    if (bytes < ((size_t)64 << 20)) bytes = (size_t)64 << 20;
    if (m->memory_bytes && bytes > m->memory_bytes / 8) bytes = m->memory_bytes / 8;
    return bytes & ~(size_t)63;
}

cp_status cph_roofs_measure(const cph_machine *m, double seconds, cph_roofs *out, char *msg,
                            size_t cap) {
    memset(out, 0, sizeof *out);
    if (msg && cap) msg[0] = '\0';
    if (m->synthetic) {
        if (msg && cap) snprintf(msg, cap, "roofs: a synthetic machine cannot be measured");
        return CP_EINVAL;
    }
    if (!(seconds > 0.0) || !isfinite(seconds)) {
        if (msg && cap) snprintf(msg, cap, "roofs: time budget %g s is not positive", seconds);
        return CP_EINVAL;
    }
    const double start = clock_s();
    const int cores = m->cores < MAX_WORKERS ? m->cores : MAX_WORKERS;
    cph_pool *pool = NULL;
    int pinned = 0;
    char pmsg[256];
    cp_status st = cph_pool_create(m, cores, &pool, &pinned, pmsg, sizeof pmsg);
    if (st != CP_OK) {
        if (msg && cap) snprintf(msg, cap, "roofs: %s", pmsg);
        return st;
    }
    const cp_exec all = cph_pool_exec(pool), one = cp_exec_serial();

    cpl_cpu_id id;
    cpl_cpuid_read(&id);
    peak_job *pj = calloc(1, sizeof *pj);
    const size_t bytes = triad_array_bytes(m), n = bytes / sizeof(float);
    triad_job tj = {aligned_alloc(64, bytes), aligned_alloc(64, bytes), aligned_alloc(64, bytes), 1};
    if (!pj || !tj.a || !tj.b || !tj.c) {
        free(pj);
        free(tj.a);
        free(tj.b);
        free(tj.c);
        cph_pool_destroy(pool);
        if (msg && cap) snprintf(msg, cap, "roofs: cannot allocate 3 x %zu bytes", bytes);
        return CP_ENOMEM;
    }
    /* The widths to measure, widest first: what cpuid and xgetbv say the CPU
     * and the OS support (avx512f is set only with the ZMM state saved). */
    if (id.avx512f) out->widths[out->nwidths++] = (cph_roof_width){512, "avx512f", 0, 0};
    if (id.avx2 && id.fma && id.os_avx)
        out->widths[out->nwidths++] = (cph_roof_width){256, "avx2_fma", 0, 0};
    if (out->nwidths == 0) out->widths[out->nwidths++] = (cph_roof_width){0, "portable", 0, 0};
    out->portable_peak = out->widths[0].bits == 0;
    out->roof_bits = out->widths[0].bits;
    out->pinned = pinned;
    out->cores_used = cores;
    out->triad_bytes = bytes;

    for (int w = 0; w < out->nwidths; w++) {
        cph_roof_width *rw = &out->widths[w];
        pj->bits = rw->bits;
        rw->peak_1core_gflops = peak_gflops(&one, 1, pj, 0.2 * seconds / out->nwidths);
        rw->peak_all_gflops = peak_gflops(&all, cores, pj, 0.2 * seconds / out->nwidths);
    }
    out->peak_1core_gflops = out->widths[0].peak_1core_gflops;
    out->peak_all_gflops = out->widths[0].peak_all_gflops;
    if (out->nwidths == 2 && out->widths[1].bits == 256)
        out->ratio_512_256 = out->widths[0].peak_1core_gflops / out->widths[1].peak_1core_gflops;
    cp_parallel_for(&all, (int64_t)n, triad_task, &tj); /* first touch */
    out->bw_1core_gbs = triad_gbs(&one, &tj, n, 0.3 * seconds);
    out->bw_all_gbs = triad_gbs(&all, &tj, n, 0.3 * seconds);
    for (int level = 2; level <= 3; level++) { /* arrays inside the DRAM ones */
        const size_t nl = triad_level_floats(m, level, cores);
        if (nl == 0 || nl * (size_t)cores > n) continue;
        const double one_gbs = triad_gbs(&one, &tj, nl, 0.1 * seconds);
        const double all_gbs = triad_gbs(&all, &tj, nl * (size_t)cores, 0.1 * seconds);
        if (level == 2) {
            out->bw_l2_1core_gbs = one_gbs;
            out->bw_l2_all_gbs = all_gbs;
            out->l2_triad_bytes = nl * sizeof(float);
        } else {
            out->bw_l3_1core_gbs = one_gbs;
            out->bw_l3_all_gbs = all_gbs;
            out->l3_triad_bytes = nl * sizeof(float);
        }
    }
    out->ridge_1core = out->peak_1core_gflops / out->bw_1core_gbs;
    out->ridge_all = out->peak_all_gflops / out->bw_all_gbs;

    volatile float keep = pj->sink[0] + tj.a[n / 2];
    (void)keep;
    free(pj);
    free(tj.a);
    free(tj.b);
    free(tj.c);
    cph_pool_destroy(pool);
    out->seconds_spent = clock_s() - start;
    if (!pinned && msg && cap) snprintf(msg, cap, "roofs: %s", pmsg);
    return CP_OK;
}
