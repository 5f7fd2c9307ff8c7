/* The experiments' shared set-up (exp_layer.h). */
#include "experiments/exp_layer.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/measure/data.h"
#include "harness/select/shape_spec.h"

int exp_layer_open(exp_layer *e, const char *shape, const char *algo, int threads) {
    memset(e, 0, sizeof *e);
    char msg[512];
    if (cph_parse_shape(shape, "shape", &e->s, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "%s\n", msg);
        return 2;
    }
    e->algo = cp_algo_find(algo);
    e->threads = threads;
    if (!e->algo || threads < 1) {
        fprintf(stderr, "unknown algorithm '%s' or threads %d below 1\n", algo, threads);
        return 2;
    }
    if (cph_machine_detect(&e->m, NULL, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "%s\n", msg);
        return 1;
    }
    e->caches = cph_machine_caches(&e->m);
    /* A pool at one thread too, as tune and bench make it: it pins the
     * workers and holds OpenBLAS at one thread (pool.h). */
    int pinned = 0;
    if (cph_pool_create(&e->m, threads, &e->pool, &pinned, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "%s\n", msg);
        cph_machine_free(&e->m);
        return 1;
    }
    e->exec = cph_pool_exec(e->pool);
    const size_t nx = cp_shape_input_elems(&e->s), nw = cp_shape_weight_elems(&e->s);
    e->x = malloc(nx * sizeof *e->x);
    e->w = malloc(nw * sizeof *e->w);
    e->bias = malloc((size_t)e->s.k * sizeof *e->bias);
    if (!e->x || !e->w || !e->bias) {
        fprintf(stderr, "out of memory for the layer's tensors\n");
        exp_layer_close(e);
        return 1;
    }
    cph_fill_uniform(e->x, nx, 1);
    cph_fill_uniform(e->w, nw, 2);
    cph_fill_uniform(e->bias, (size_t)e->s.k, 3);
    return 0;
}

void exp_layer_close(exp_layer *e) {
    free(e->x);
    free(e->w);
    free(e->bias);
    if (e->pool) cph_pool_destroy(e->pool);
    cph_machine_free(&e->m);
    memset(e, 0, sizeof *e);
}
