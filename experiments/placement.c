/* The "two speeds" experiment: what moves one plan between a fast and a slow
 * speed on this machine?  A controlled grid over what the harness does not
 * hold fixed today:
 *   yoff   the output buffer's offset modulo 4 KiB relative to the input's
 *          (aliasing between the input and output streams);
 *   thp    madvise(MADV_HUGEPAGE) on the buffers or MADV_NOHUGEPAGE
 *          (transparent huge pages are madvise-only on our machines);
 *   alloc  fresh buffers (and a fresh plan) every trial, or the same ones
 *          reused for every trial of the configuration;
 *   pin    (one thread only) the calling thread pinned to one CPU or free.
 * Trials of all configurations run interleaved in a shuffled order, so that
 * drift hits every configuration alike.  One trial = a plan (fresh or
 * reused), warm-up runs, then `samples` timed runs; its median is recorded.
 *
 * Not part of the product: built as cp_placement_experiment, run by
 * scripts/placement-experiment, findings in docs/measurement.md. */
#define _GNU_SOURCE
#include <errno.h>
#include <math.h>
#include <sched.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include "convpick/convpick.h"
#include "experiments/exp_layer.h"
#include "harness/measure/data.h"
#include "harness/measure/plan_work.h"
#include "harness/measure/stats.h"
#include "harness/measure/timing.h"

#define HUGE_PAGE ((size_t)2 << 20)

static const size_t YOFFS[] = {0, 64, 1024, 2048, 3072, 4032};
enum { NYOFF = sizeof YOFFS / sizeof YOFFS[0] };

typedef struct {
    size_t yoff;
    int thp, fresh, pin;
} config;

typedef struct {
    void *map;
    size_t len;
    float *p;
} region;

/* A buffer of n floats at byte offset `off` from a 2 MiB boundary. */
static int region_alloc(region *r, size_t n, size_t off, int thp) {
    const size_t need = n * sizeof(float) + off;
    r->len = (need + 2 * HUGE_PAGE - 1) / HUGE_PAGE * HUGE_PAGE + HUGE_PAGE;
    r->map = mmap(NULL, r->len, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    if (r->map == MAP_FAILED) return -1;
    uintptr_t base = ((uintptr_t)r->map + HUGE_PAGE - 1) & ~(uintptr_t)(HUGE_PAGE - 1);
    madvise((void *)base, r->len - HUGE_PAGE, thp ? MADV_HUGEPAGE : MADV_NOHUGEPAGE);
    r->p = (float *)(base + off);
    return 0;
}

static void region_free(region *r) {
    if (r->map && r->map != MAP_FAILED) munmap(r->map, r->len);
    memset(r, 0, sizeof *r);
}

typedef struct {
    region x, y;
    cp_plan *plan;
} buffers;

static int set_pin(int pin) {
    cpu_set_t set;
    CPU_ZERO(&set);
    if (pin) {
        CPU_SET(0, &set);
    } else {
        for (size_t i = 0; i < (size_t)CPU_SETSIZE; i++) CPU_SET(i, &set);
    }
    return sched_setaffinity(0, sizeof set, &set);
}

int main(int argc, char **argv) {
    if (argc != 7) {
        fprintf(stderr, "usage: %s SHAPE ALGO THREADS TRIALS SAMPLES OUT.csv\n", argv[0]);
        return 2;
    }
    const int threads = atoi(argv[3]), trials = atoi(argv[4]), samples = atoi(argv[5]);
    if (trials < 1 || samples < 1) {
        fprintf(stderr, "bad trials or samples\n");
        return 2;
    }
    exp_layer L;
    const int orc = exp_layer_open(&L, argv[1], argv[2], threads);
    if (orc) return orc;
    FILE *out = fopen(argv[6], "w");
    if (!out) {
        fprintf(stderr, "%s: %s\n", argv[6], strerror(errno));
        exp_layer_close(&L);
        return 2;
    }
    char msg[512];
    const cp_shape s = L.s;
    const cp_algo *algo = L.algo;
    const size_t nx = cp_shape_input_elems(&s), ny = cp_shape_output_elems(&s);
    const float *x0 = L.x, *w = L.w, *bias = L.bias;
    const cp_cache_sizes caches = L.caches;
    /* One thread: on the calling thread, whose pinning is a factor here (the
     * pool still holds OpenBLAS at one thread). */
    cp_exec exec = threads == 1 ? cp_exec_serial() : L.exec;

    /* The grid; pinning varies only at one thread (the pool pins its workers). */
    config cfg[NYOFF * 8];
    size_t ncfg = 0;
    for (size_t i = 0; i < NYOFF; i++)
        for (int thp = 0; thp < 2; thp++)
            for (int fresh = 0; fresh < 2; fresh++)
                for (int pin = 0; pin < (threads == 1 ? 2 : 1); pin++)
                    cfg[ncfg++] = (config){YOFFS[i], thp, fresh, threads == 1 ? pin : 1};
    buffers *kept = calloc(ncfg, sizeof *kept);
    size_t *order = malloc(ncfg * sizeof *order);
    fprintf(out, "trial,yoff,thp,fresh,pin,median_s,xmod4k,ymod4k\n");
    uint64_t rng = 12345;
    cph_timing_opts to;
    cph_timing_defaults(&to);
    to.warmup = 2;
    to.min_samples = (size_t)samples;
    to.max_samples = (size_t)samples;
    to.max_seconds = 5.0;
    for (int t = 0; t < trials; t++) {
        for (size_t i = 0; i < ncfg; i++) order[i] = i;
        for (size_t i = ncfg; i > 1; i--) {
            const size_t j = (size_t)(cph_rng_next(&rng) % i), tmp = order[i - 1];
            order[i - 1] = order[j];
            order[j] = tmp;
        }
        for (size_t k = 0; k < ncfg; k++) {
            const config *c = &cfg[order[k]];
            buffers *b = &kept[order[k]], fresh_b = {0};
            if (c->fresh) b = &fresh_b;
            if (!b->plan) {
                if (region_alloc(&b->x, nx, 0, c->thp) || region_alloc(&b->y, ny, c->yoff, c->thp)) {
                    fprintf(stderr, "mmap failed\n");
                    return 1;
                }
                memcpy(b->x.p, x0, nx * sizeof *x0);
                memset(b->y.p, 0, ny * sizeof(float));
                if (cp_plan_create(algo, &s, CP_XCORR, NULL, &caches, threads, w, &b->plan, msg,
                                   sizeof msg) != CP_OK) {
                    fprintf(stderr, "%s\n", msg);
                    return 1;
                }
            }
            if (threads == 1 && set_pin(c->pin) != 0) perror("sched_setaffinity");
            cph_plan_work ra = {b->plan, b->x.p, bias, b->y.p, &exec};
            cph_measurement me;
            if (cph_measure(&to, cph_plan_work_run, &ra, &me) != 0) {
                fprintf(stderr, "run failed\n");
                return 1;
            }
            fprintf(out, "%d,%zu,%d,%d,%d,%.9g,%zu,%zu\n", t, c->yoff, c->thp, c->fresh, c->pin,
                    me.stats.median, (size_t)((uintptr_t)b->x.p % 4096),
                    (size_t)((uintptr_t)b->y.p % 4096));
            cph_measurement_free(&me);
            if (c->fresh) {
                cp_plan_destroy(b->plan);
                region_free(&b->x);
                region_free(&b->y);
            }
        }
    }
    for (size_t i = 0; i < ncfg; i++) {
        if (kept[i].plan) cp_plan_destroy(kept[i].plan);
        region_free(&kept[i].x);
        region_free(&kept[i].y);
    }
    fclose(out);
    free(kept);
    free(order);
    exp_layer_close(&L);
    return 0;
}
