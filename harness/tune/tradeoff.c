/* The error/time trade-off line of tune (see tradeoff.h). */
#include "harness/tune/tradeoff.h"

#include <stdio.h>
#include <stdlib.h>

static int by_err(const void *a, const void *b) {
    const cp_candidate *x = *(const cp_candidate *const *)a, *y = *(const cp_candidate *const *)b;
    if (x->rel_err != y->rel_err) return x->rel_err < y->rel_err ? -1 : 1;
    return (x->timing.median > y->timing.median) - (x->timing.median < y->timing.median);
}

int cph_tradeoff_line(const cp_table_entry *e, char *buf, size_t cap) {
    const cp_candidate **v = malloc((e->ncandidates ? e->ncandidates : 1) * sizeof *v);
    if (!v) return 0;
    size_t n = 0;
    for (size_t i = 0; i < e->ncandidates; i++)
        if (cp_candidate_timed(&e->candidates[i])) v[n++] = &e->candidates[i];
    int shown = 0;
    if (n >= 2) {
        qsort(v, n, sizeof *v, by_err);
        const cp_candidate *fastest = v[0];
        for (size_t i = 1; i < n; i++)
            if (v[i]->timing.median < fastest->timing.median) fastest = v[i];
        /* least accurate: no candidate has a larger error, and one has a smaller */
        if (fastest->rel_err >= v[n - 1]->rel_err && v[0]->rel_err < fastest->rel_err) {
            size_t len = (size_t)snprintf(buf, cap, "error/time trade-off (the fastest is the "
                                                    "least accurate):");
            double best_time = 0.0;
            for (size_t i = 0; i < n && len < cap; i++) {
                if (i > 0 && v[i]->timing.median >= best_time) continue; /* beaten */
                best_time = v[i]->timing.median;
                len += (size_t)snprintf(buf + len, cap - len, "%s rel_err %.2g %.3f ms %s",
                                        i ? " |" : "", v[i]->rel_err, v[i]->timing.median * 1e3,
                                        v[i]->algo);
            }
            shown = 1;
        }
    }
    free(v);
    return shown;
}
