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

/* X when name is "<prefix>_X", else NULL. */
static const char *after_prefix(const char *name, const char *prefix) {
    const size_t n = strlen(prefix);
    return strncmp(name, prefix, n) == 0 && name[n] == '_' && name[n + 1] ? name + n + 1 : NULL;
}

/* The twin of b (a BASE row, "<bp>_X") among all's NEW rows, or NULL. */
static const cph_result_item *twin_of(const cph_results *all, const cph_result_item *b,
                                      const char *x, const char *np) {
    for (size_t i = 0; i < all->nitems; i++) {
        const cph_result_item *t = &all->items[i];
        const char *y = after_prefix(t->algo, np);
        if (!y || strcmp(x, y) != 0 || t->kind != b->kind || strcmp(t->layer, b->layer) != 0) continue;
        cph_result_item bx = *b, tx = *t;
        snprintf(bx.algo, sizeof bx.algo, "%s", x);
        snprintf(tx.algo, sizeof tx.algo, "%s", y);
        if (cph_result_same_point(&bx, &tx)) return t;
    }
    return NULL;
}

/* Appends a copy of it named x, with its samples, to r. */
static int add_renamed(cph_results *r, const cph_result_item *it, const char *x) {
    cph_result_item *o = &r->items[r->nitems];
    *o = *it;
    snprintf(o->algo, sizeof o->algo, "%s", x);
    o->samples = malloc(it->nsamples * sizeof *o->samples);
    if (!o->samples) return -1;
    memcpy(o->samples, it->samples, it->nsamples * sizeof *o->samples);
    r->nitems++;
    return 0;
}

static void side_header(cph_results *out, const cph_results *all, const char *prefix) {
    *out = *all;
    out->items = NULL;
    out->choices = NULL;
    out->nitems = out->nchoices = out->nchosen_rows = 0;
    out->nunsupported = out->nfailed = 0;
    /* the rounds pair BASE with NEW themselves: no control (and no shared pointers) */
    memset(out->control, 0, sizeof out->control);
    out->has_control = 0;
    snprintf(out->path, sizeof out->path, "%.900s (rows %s_*)", all->path, prefix);
}

int cph_results_split_within(const cph_results *all, const char *bp, const char *np,
                             cph_results *base, cph_results *next, size_t *unpaired) {
    side_header(base, all, bp);
    side_header(next, all, np);
    *unpaired = 0;
    const size_t cap = all->nitems ? all->nitems : 1;
    base->items = calloc(cap, sizeof *base->items);
    next->items = calloc(cap, sizeof *next->items);
    if (!base->items || !next->items) goto oom;
    size_t nnew = 0;
    for (size_t i = 0; i < all->nitems; i++) nnew += after_prefix(all->items[i].algo, np) != NULL;
    for (size_t i = 0; i < all->nitems; i++) {
        const cph_result_item *b = &all->items[i];
        const char *x = after_prefix(b->algo, bp);
        if (!x) continue;
        const cph_result_item *t = twin_of(all, b, x, np);
        if (!t || !b->samples || !t->samples || b->nsamples != t->nsamples || b->nsamples < 2) {
            (*unpaired)++;
            continue;
        }
        if (add_renamed(base, b, x) || add_renamed(next, t, x)) goto oom;
    }
    /* NEW rows left without a BASE twin */
    *unpaired += nnew - next->nitems;
    return 0;
oom:
    cph_results_free(base);
    cph_results_free(next);
    return -1;
}
