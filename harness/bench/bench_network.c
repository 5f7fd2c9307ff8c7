/* bench's network totals (bench_summary.h): per flip and thread count, what
 * the whole selection costs for the table's choice, for each algorithm and
 * for the best of each layer. */
#include "harness/bench/bench_summary.h"
#include "harness/measure/network.h"

#include <math.h>

/* One flip x thread count. */
static void print_one(FILE *f, const cph_bench_recs *r, const cph_layer_list *l, cp_flip flip,
                      int threads) {
    cph_net_total t;
    cph_net_init(&t, flip, threads, l->n, cph_layers_total(l));
    for (size_t li = 0; li < l->n; li++) {
        double best = INFINITY;
        for (size_t i = 0; i < r->n; i++) {
            const cph_bench_rec *x = &r->v[i];
            if (x->layer != li || x->flip != flip || x->threads != threads) continue;
            if (x->kind != CPH_ROW_ALGO && x->kind != CPH_ROW_CHOSEN) continue;
            cph_net_add(&t, x->name, x->count, x->median);
            if (x->kind == CPH_ROW_ALGO && x->median < best) best = x->median;
        }
        if (isfinite(best)) cph_net_add(&t, "best of each", l->v[li].count, best);
    }
    cph_net_print(f, &t);
}

void cph_bench_network_print(FILE *f, const cph_bench_recs *r, const cph_layer_list *l) {
    for (size_t i = 0; i < r->n; i++) {
        int first = 1; /* the first record of its flip x threads */
        for (size_t j = 0; j < i && first; j++)
            first = !(r->v[j].flip == r->v[i].flip && r->v[j].threads == r->v[i].threads);
        if (first) print_one(f, r, l, r->v[i].flip, r->v[i].threads);
    }
}
