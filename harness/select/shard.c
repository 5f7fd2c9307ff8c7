/* The deterministic FLOP-balanced partition of a layer list (shard.h). */
#include <stdlib.h>

#include "algos/core/cpa.h"
#include "harness/select/shard.h"

typedef struct weighted {
    double flops;
    size_t idx;
} weighted;

static int heavier_first(const void *pa, const void *pb) {
    const weighted *a = pa, *b = pb;
    if (a->flops != b->flops) return a->flops > b->flops ? -1 : 1;
    return (a->idx > b->idx) - (a->idx < b->idx);
}

cp_status cph_shard_assign(const cph_layer_list *l, int nshards, int *out, char *msg, size_t cap) {
    if (nshards < 1) return cpa_fail(CP_EINVAL, msg, cap, "shard count %d: must be >= 1", nshards);
    weighted *w = malloc((l->n ? l->n : 1) * sizeof *w);
    double *load = calloc((size_t)nshards, sizeof *load);
    if (!w || !load) {
        free(w);
        free(load);
        return cpa_fail(CP_ENOMEM, msg, cap, "shard: out of memory");
    }
    for (size_t i = 0; i < l->n; i++) {
        w[i].flops = cp_shape_flops(&l->v[i].shape);
        w[i].idx = i;
    }
    qsort(w, l->n, sizeof *w, heavier_first);
    for (size_t i = 0; i < l->n; i++) {
        int best = 0;
        for (int s = 1; s < nshards; s++)
            if (load[s] < load[best]) best = s;
        load[best] += w[i].flops;
        out[w[i].idx] = best;
    }
    free(w);
    free(load);
    return CP_OK;
}

cp_status cph_shard_keep(cph_layer_list *l, int index, int nshards, char *msg, size_t cap) {
    if (index < 0 || index >= nshards)
        return cpa_fail(CP_EINVAL, msg, cap, "shard %d of %d: out of range", index + 1, nshards);
    int *to = malloc((l->n ? l->n : 1) * sizeof *to);
    if (!to) return cpa_fail(CP_ENOMEM, msg, cap, "shard: out of memory");
    cp_status st = cph_shard_assign(l, nshards, to, msg, cap);
    size_t k = 0;
    for (size_t i = 0; st == CP_OK && i < l->n; i++) {
        if (to[i] == index) {
            l->v[k++] = l->v[i];
        } else {
            free(l->v[i].names); /* the layer leaves the list: its joined names too */
            l->v[i].names = NULL;
        }
    }
    if (st == CP_OK) l->n = k;
    free(to);
    return st;
}
