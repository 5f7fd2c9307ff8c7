/* tune's network totals (tune_run.h): a tuned entry adds its layer's count x
 * median to the choice's row and, per algorithm, its best candidate's. */
#include "harness/tune/tune_run.h"

#include <string.h>

void cph_tune_network_add(cph_net_total *t, const cph_layer *L, const cp_table_entry *e) {
    cph_net_add(t, "chosen", L->count, e->timing.median);
    for (size_t i = 0; i < e->ncandidates; i++) {
        const cp_candidate *c = &e->candidates[i];
        if (c->disqualified || c->failed || !(c->timing.median > 0)) continue;
        int best = 1; /* the fastest candidate of its algorithm (first on a tie) */
        for (size_t j = 0; j < e->ncandidates && best; j++) {
            const cp_candidate *d = &e->candidates[j];
            if (j == i || strcmp(d->algo, c->algo) != 0 || d->disqualified || d->failed ||
                !(d->timing.median > 0))
                continue;
            best = !(d->timing.median < c->timing.median ||
                     (d->timing.median == c->timing.median && j < i));
        }
        if (best) cph_net_add(t, c->algo, L->count, c->timing.median);
    }
}
