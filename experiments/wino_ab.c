/* Same-run comparison of algorithms with given parameters on one layer, one
 * thread, serial: the equal-terms Winograd runs of results/algos/README.md
 * (bench times each algorithm with its defaults only).
 *   cp_wino_ab SHAPE ROUNDS SPEC...     SPEC = algo or algo:name=v,name=v
 * Each round times every spec once (a batch of 5 runs, its fastest), in
 * the order given, rotated by one each round so that no spec always runs
 * first; the result per spec is the median and the fastest of its round
 * values, and every spec's ratio to the first spec's.  Parameters not given
 * are the algorithm's defaults for this machine's caches.  Not part of the
 * product; run it under flock /work/bench.lock like any timing run. */
#define _POSIX_C_SOURCE 200809L
#include <cblas.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "convpick/convpick.h"
#include "harness/machine/machine.h"
#include "harness/measure/data.h"
#include "harness/measure/stats.h"
#include "harness/measure/timing.h"
#include "harness/select/shape_spec.h"

#define MAX_SPECS 16
#define BATCH 5

typedef struct {
    const cp_algo *a;
    cp_params p;
    cp_plan *plan;
    char text[160];
    double *t;
} spec;

static int parse_spec(const char *arg, const cp_shape *s, const cp_cache_sizes *c, spec *o) {
    char name[64];
    const char *colon = strchr(arg, ':');
    const size_t n = colon ? (size_t)(colon - arg) : strlen(arg);
    if (n >= sizeof name) return -1;
    memcpy(name, arg, n);
    name[n] = '\0';
    if (!(o->a = cp_algo_find(name))) return fprintf(stderr, "unknown algorithm %s\n", name), -1;
    cp_algo_defaults(o->a, s, c, &o->p);
    for (const char *q = colon ? colon + 1 : NULL; q && *q;) {
        char key[64];
        long long v;
        int used = 0;
        if (sscanf(q, "%63[^=]=%lld%n", key, &v, &used) != 2)
            return fprintf(stderr, "bad parameters in %s\n", arg), -1;
        const int i = cp_algo_param_index(o->a, key);
        if (i < 0) return fprintf(stderr, "%s has no parameter %s\n", name, key), -1;
        o->p.v[i] = v;
        q += used;
        if (*q == ',') q++;
    }
    char pt[128] = "";
    cp_params_format(o->a, &o->p, pt, sizeof pt);
    snprintf(o->text, sizeof o->text, "%s %s", o->a->name, pt);
    return 0;
}

int main(int argc, char **argv) {
    if (argc < 4) {
        fprintf(stderr, "usage: cp_wino_ab SHAPE ROUNDS SPEC...\n");
        return 2;
    }
    char msg[512];
    cp_shape s;
    if (cph_parse_shape(argv[1], "shape", &s, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "%s\n", msg);
        return 2;
    }
    const int rounds = atoi(argv[2]);
    const int ns = argc - 3;
    if (rounds < 1 || ns > MAX_SPECS) return 2;
    cph_machine m;
    if (cph_machine_detect(&m, NULL, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "%s\n", msg);
        return 1;
    }
    const cp_cache_sizes caches = cph_machine_caches(&m);
    openblas_set_num_threads(1); /* gemm=0 rows: one thread, as bench's pool sets it */
    const size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s),
                 ny = cp_shape_output_elems(&s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w), *b = malloc((size_t)s.k * 4),
          *y = malloc(ny * sizeof *y);
    if (!x || !w || !b || !y) return 1;
    cph_fill_uniform(x, nx, 1);
    cph_fill_uniform(w, nw, 2);
    cph_fill_uniform(b, (size_t)s.k, 3);
    spec sp[MAX_SPECS];
    memset(sp, 0, sizeof sp);
    for (int i = 0; i < ns; i++) {
        if (parse_spec(argv[3 + i], &s, &caches, &sp[i])) return 2;
        if (cp_plan_create(sp[i].a, &s, CP_XCORR, &sp[i].p, &caches, 1, w, &sp[i].plan, msg,
                           sizeof msg) != CP_OK) {
            fprintf(stderr, "%s: %s\n", sp[i].text, msg);
            return 1;
        }
        if (!(sp[i].t = malloc((size_t)rounds * sizeof(double)))) return 1;
    }
    for (int r = 0; r < rounds; r++)
        for (int j = 0; j < ns; j++) {
            spec *o = &sp[(j + r) % ns];
            double best = 1e30;
            cp_plan_run(o->plan, x, b, y, NULL); /* warm-up */
            for (int k = 0; k < BATCH; k++) {
                const double t0 = cph_now();
                cp_plan_run(o->plan, x, b, y, NULL);
                const double t = cph_now() - t0;
                if (t < best) best = t;
            }
            o->t[r] = best;
        }
    printf("shape %s, %d rounds of a %d-run batch (its fastest), one thread, serial; %s\n",
           argv[1], rounds, BATCH, m.model);
    double base_med = 0, base_min = 0;
    for (int i = 0; i < ns; i++) {
        cph_sort_doubles(sp[i].t, (size_t)rounds);
        const double med = cph_median_sorted(sp[i].t, (size_t)rounds), mn = sp[i].t[0];
        if (i == 0) base_med = med, base_min = mn;
        printf("  %-60s median %8.4f ms  fastest %8.4f ms  ratio to first: %.3f (median) "
               "%.3f (fastest)\n",
               sp[i].text, med * 1e3, mn * 1e3, base_med / med, base_min / mn);
        cp_plan_destroy(sp[i].plan);
        free(sp[i].t);
    }
    free(x);
    free(w);
    free(b);
    free(y);
    cph_machine_free(&m);
    return 0;
}
