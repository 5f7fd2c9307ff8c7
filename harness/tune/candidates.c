/* The tuner's candidate list (contract in candidates.h). */
#include "harness/tune/candidates.h"

#include <stdlib.h>
#include <string.h>

static int same_params(const cp_algo *a, const cp_params *x, const cp_params *y) {
    for (int i = 0; i < a->nparams; i++)
        if (x->v[i] != y->v[i]) return 0;
    return 1;
}

size_t cph_tune_candidates(int max_candidates, const cp_shape *s, cp_flip flip,
                           const cp_algo *const *algos, size_t nalgos,
                           const cp_cache_sizes *caches, cph_planned *out, size_t max,
                           int *unsupported) {
    enum { PER = 64 };
    cp_params *lists = calloc(nalgos * PER, sizeof *lists);
    int *counts = calloc(nalgos, sizeof *counts);
    size_t n = 0;
    *unsupported = 0;
    if (!lists || !counts) goto done;
    int per = max_candidates < 1 ? 1 : (max_candidates > PER ? PER : max_candidates);
    for (size_t a = 0; a < nalgos; a++) {
        if (!algos[a]->supports(s, flip, NULL, 0)) {
            (*unsupported)++;
            continue;
        }
        cp_params *l = lists + a * PER;
        cp_algo_defaults(algos[a], s, caches, &l[0]);
        counts[a] = 1;
        if (algos[a]->candidates) {
            cp_params tmp[PER];
            memset(tmp, 0, sizeof tmp);
            int got = algos[a]->candidates(s, caches, tmp, PER);
            for (int i = 0; i < got && counts[a] < per; i++) {
                int dup = 0;
                if (cp_params_check(algos[a], &tmp[i], NULL, 0) != CP_OK) continue;
                for (int j = 0; j < counts[a]; j++)
                    if (same_params(algos[a], &tmp[i], &l[j])) dup = 1;
                if (!dup) l[counts[a]++] = tmp[i];
            }
        }
    }
    for (int round = 0; round < PER; round++)
        for (size_t a = 0; a < nalgos; a++)
            if (round < counts[a] && n < max) {
                out[n].algo = algos[a];
                out[n].params = lists[a * PER + (size_t)round];
                n++;
            }
done:
    free(lists);
    free(counts);
    return n;
}

