/* The loader benchmark (not a test; speed is never asserted): loads a full
 * table and its lean form (scripts/gen_big_table.py writes both) a few times
 * each through cp_table_load, and the lean form once more with the entry
 * reader off (CPT_LOAD_TREES: each entry a jansson tree, the loader as it was
 * before loader/table_read.c), and prints the median wall time of each and
 * the ratios, all measured in this one run.  Run it alone on the machine:
 * flock /work/bench.lock.
 *
 * usage: cp_table_load_bench FULL.json LEAN.json [REPEATS] */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "convpick/table.h"
#include "loader/table_impl.h" /* CPT_LOAD_TREES */

static double now(void) {
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int dbl_cmp(const void *a, const void *b) {
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Median seconds of `repeats` loads of path; -1 on a load error. */
static double time_loads(const char *path, unsigned flags, int repeats, size_t *entries) {
    double t[16];
    char msg[512];
    for (int i = 0; i < repeats; i++) {
        cp_table *tab;
        const double t0 = now();
        if (cp_table_load(path, flags, &tab, msg, sizeof msg) != CP_OK) {
            fprintf(stderr, "cp_table_load_bench: %s\n", msg);
            return -1;
        }
        *entries = cp_table_count(tab);
        cp_table_free(tab);
        t[i] = now() - t0;
    }
    qsort(t, (size_t)repeats, sizeof t[0], dbl_cmp);
    return t[repeats / 2];
}

int main(int argc, char **argv) {
    if (argc < 3 || argc > 4) {
        fputs("usage: cp_table_load_bench FULL.json LEAN.json [REPEATS (1..16, default 3)]\n",
              stderr);
        return 2;
    }
    int repeats = argc == 4 ? atoi(argv[3]) : 3;
    if (repeats < 1 || repeats > 16) repeats = 3;
    size_t nf = 0, nl = 0, nt = 0;
    const double full = time_loads(argv[1], 0, repeats, &nf);
    const double lean = time_loads(argv[2], 0, repeats, &nl);
    const double trees = time_loads(argv[2], CPT_LOAD_TREES, repeats, &nt);
    if (full < 0 || lean < 0 || trees < 0) return 2;
    printf("full table: %zu entries, median of %d loads %.3f s (%s)\n", nf, repeats, full, argv[1]);
    printf("lean table: %zu entries, median of %d loads %.3f s (%s)\n", nl, repeats, lean, argv[2]);
    printf("lean table, entries as jansson trees (the loader before the entry reader): %zu "
           "entries, median of %d loads %.3f s\n",
           nt, repeats, trees);
    printf("lean / full: %.3f (full is %.1fx the lean load time)\n", lean / full, full / lean);
    printf("lean, reader / trees: %.3f (the entry reader is %.1fx faster)\n", lean / trees,
           trees / lean);
    return 0;
}
