/* Folding the rounds of one side into trials (diff_rounds.h). */
#include "harness/diff/diff_rounds.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/measure/stats.h"

/* The first item of r at the same point as it, or NULL. */
static const cph_result_item *find_point(const cph_results *r, const cph_result_item *it) {
    for (size_t i = 0; i < r->nitems; i++)
        if (cph_result_same_point(&r->items[i], it)) return &r->items[i];
    return NULL;
}

int cph_results_join(cph_results *into, cph_results *part) {
    if (strcmp(into->fingerprint, part->fingerprint) != 0) {
        cph_results_free(part);
        return 1;
    }
    if (part->nitems) {
        cph_result_item *v = realloc(into->items, (into->nitems + part->nitems) * sizeof *v);
        if (!v) {
            cph_results_free(part);
            return -1;
        }
        memcpy(v + into->nitems, part->items, part->nitems * sizeof *v);
        into->items = v;
        into->nitems += part->nitems;
        part->nitems = 0; /* the samples now belong to into */
    }
    into->nunsupported += part->nunsupported;
    into->nfailed += part->nfailed;
    if (into->cold != part->cold) into->cold = -1;
    cph_results_free(part);
    return 0;
}

int cph_results_fold_rounds(const cph_results *rounds, size_t n, cph_results *out,
                            size_t *dropped, int *other_device) {
    const cph_results *first = &rounds[0];
    *out = *first;
    out->items = NULL;
    out->choices = NULL;
    out->nitems = out->nchoices = 0;
    /* the rounds pair BASE with NEW themselves: no control (and no shared pointers) */
    memset(out->control, 0, sizeof out->control);
    out->has_control = 0;
    *dropped = 0;
    *other_device = 0;
    for (size_t r = 1; r < n; r++)
        if (strcmp(rounds[r].fingerprint, first->fingerprint) != 0) *other_device = 1;
    snprintf(out->path, sizeof out->path, "%.900s (+%zu rounds)", first->path, n - 1);
    out->items = calloc(first->nitems ? first->nitems : 1, sizeof *out->items);
    if (!out->items) return -1;
    if (first->nchoices) {
        out->choices = malloc(first->nchoices * sizeof *out->choices);
        if (!out->choices) return -1;
        memcpy(out->choices, first->choices, first->nchoices * sizeof *out->choices);
        out->nchoices = first->nchoices;
    }
    for (size_t i = 0; i < first->nitems; i++) {
        const cph_result_item *it = &first->items[i];
        if (find_point(first, it) != it) continue; /* a repeat within the round */
        double *s = malloc(n * sizeof *s);
        if (!s) return -1;
        size_t got = 0;
        for (size_t r = 0; r < n; r++) {
            const cph_result_item *m = find_point(&rounds[r], it);
            if (!m || !(m->median > 0.0)) break;
            s[got++] = m->median;
        }
        if (got < n) {
            free(s);
            (*dropped)++;
            continue;
        }
        cph_result_item *o = &out->items[out->nitems++];
        *o = *it;
        o->samples = s;
        o->nsamples = n;
        o->median = cph_median_of(s, n);
    }
    return 0;
}
