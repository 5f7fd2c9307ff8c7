/* What moved a whole layer (diff_report.h, docs/diff.md "A layer's own
 * control"): the rows' common shift, and for each compared pair the shift of
 * the other algorithms measured on the same layer, flip and thread count. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "harness/diff/diff_report.h"
#include "harness/measure/stats.h"

/* log(NEW median / BASE median), or NAN when either is not a positive time. */
static double log_ratio(const cph_result_item *b, const cph_result_item *n) {
    const double x = b->median, y = n->median;
    return x > 0.0 && y > 0.0 && isfinite(x) && isfinite(y) ? log(y / x) : NAN;
}

/* The common shift (log) of the pairs at a thread count (< 0: all of them):
 * the median of their log ratios; NAN without any.  scratch holds npairs. */
static double common_at(const cph_diff *d, int threads, double *scratch) {
    size_t n = 0;
    for (size_t i = 0; i < d->npairs; i++) {
        if (threads >= 0 && d->pairs[i].base->threads != threads) continue;
        const double l = log_ratio(d->pairs[i].base, d->pairs[i].next);
        if (isfinite(l)) scratch[n++] = l;
    }
    return n ? cph_median_of(scratch, n) : NAN;
}

int cph_diff_rows_shift(cph_diff *d) {
    double *v = malloc((d->npairs ? d->npairs : 1) * sizeof *v);
    if (!v) return -1;
    d->rows_shift = exp(common_at(d, -1, v));
    free(v);
    return 0;
}

/* The algorithm a row stands for: the chosen one for a bench row of a
 * table's choice. */
static const char *algo_of(const cph_result_item *it) {
    return it->kind == CPH_ITEM_CHOSEN ? it->chosen_algo : it->algo;
}

/* Same layer, shape, flip and thread count. */
static int same_layer(const cph_result_item *a, const cph_result_item *b) {
    return a->flip == b->flip && a->threads == b->threads && strcmp(a->layer, b->layer) == 0 &&
           cp_shape_equal(&a->shape, &b->shape);
}

/* NEW's item at it's point, or NULL. */
static const cph_result_item *in_next(const cph_results *n, const cph_result_item *it) {
    for (size_t j = 0; j < n->nitems; j++)
        if (cph_result_same_point(&n->items[j], it)) return &n->items[j];
    return NULL;
}

/* The pair's layer shift: the median log ratio over the candidates of the
 * other algorithms measured on its layer on both sides; NAN without any. */
static double layer_shift(const cph_diff *d, const cph_diff_pair *p, double *scratch,
                          size_t *nothers) {
    const cph_results *b = d->base;
    size_t n = 0;
    for (size_t i = 0; i < b->nitems; i++) {
        const cph_result_item *o = &b->items[i];
        if (o->kind != CPH_ITEM_ALGORITHM || !same_layer(o, p->base) ||
            strcmp(o->algo, algo_of(p->base)) == 0)
            continue;
        const cph_result_item *t = in_next(d->next, o);
        const double l = t ? log_ratio(o, t) : NAN;
        if (isfinite(l)) scratch[n++] = l;
    }
    *nothers = n;
    return n ? cph_median_of(scratch, n) : NAN;
}

int cph_diff_layer_shifts(cph_diff *d) {
    const size_t cap = d->base->nitems > d->npairs ? d->base->nitems : d->npairs;
    double *scratch = malloc((cap ? cap : 1) * sizeof *scratch);
    if (!scratch) return -1;
    for (size_t i = 0; i < d->npairs; i++) {
        cph_diff_pair *p = &d->pairs[i];
        p->layer_shift = NAN;
        p->local = 1.0;
        p->layer_others = 0;
        if (d->flags & CPH_DIFF_PAIRED) continue; /* the rounds pair BASE with NEW themselves */
        const double ls = layer_shift(d, p, scratch, &p->layer_others);
        /* per thread count: a state that slows every two-thread row is not the layer's */
        const double common = common_at(d, p->base->threads, scratch);
        if (!isfinite(ls) || !isfinite(common)) continue;
        p->layer_shift = exp(ls);
        /* The layer's movement beyond its thread count's common one, taken
         * only the way the row itself moved (as judged: after the control's
         * factor) and never past it, so that it can explain a change away
         * but never make one. */
        const double lrel = ls - common,
                     lrow = log_ratio(p->base, p->next) - log(d->control.factor);
        if (!isfinite(lrow) || lrel * lrow <= 0.0) continue;
        p->local = exp(fabs(lrel) < fabs(lrow) ? lrel : lrow);
    }
    free(scratch);
    return 0;
}
