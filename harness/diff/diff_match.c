/* Pairing the items of two results files and comparing each pair
 * (diff_report.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/diff/diff_report.h"
#include "harness/measure/paired.h"
#include "harness/measure/stats.h"
#include "harness/select/selection.h"

/* occ[i] = how many earlier items of r are the same point as item i. */
static size_t *occurrences(const cph_results *r) {
    size_t *occ = calloc(r->nitems ? r->nitems : 1, sizeof *occ);
    if (!occ) return NULL;
    for (size_t i = 0; i < r->nitems; i++)
        for (size_t j = 0; j < i; j++)
            if (cph_result_same_point(&r->items[i], &r->items[j])) occ[i]++;
    return occ;
}

static double sort_ratio(const cph_diff_pair *p) {
    if (p->compared) return p->cmp.ratio;
    return isfinite(p->cmp.median_ratio) ? p->cmp.median_ratio : 0.0;
}

static int cmp_pairs(const void *a, const void *b) {
    const cph_diff_pair *x = a, *y = b;
    if (x->verdict != y->verdict) return (int)x->verdict - (int)y->verdict;
    const double rx = sort_ratio(x), ry = sort_ratio(y);
    if (rx != ry) return rx < ry ? 1 : -1;
    return strcmp(x->base->layer, y->base->layer);
}

/* Rounds on both sides: round r of BASE against round r of NEW. */
static void compare_paired(const cph_diff *d, cph_diff_pair *p) {
    const cph_result_item *b = p->base, *n = p->next;
    const size_t k = b->nsamples < n->nsamples ? b->nsamples : n->nsamples;
    cph_paired_cmp pc;
    if (cph_compare_paired(b->samples, n->samples, k, d->alpha, &pc)) {
        snprintf(p->note, sizeof p->note, "not compared: a trial of 0 s (or too many rounds)");
        return;
    }
    cph_shift_cmp *c = &p->cmp;
    c->m = c->n = k;
    c->ratio = pc.ratio;
    c->ratio_lo = pc.ratio_lo;
    c->ratio_hi = pc.ratio_hi;
    c->coverage = pc.coverage;
    c->bounded = pc.bounded;
    c->mwu.p = pc.test.p;
    c->mwu.u1 = pc.test.statistic;
    c->mwu.exact = pc.test.exact;
    p->compared = 1;
    p->verdict = cph_shift_verdict_of(c, d->alpha, d->tol);
    if (!c->bounded)
        snprintf(p->note, sizeof p->note, "too few rounds for a %.0f %% interval",
                 100.0 * (1.0 - d->alpha));
}

/* Whether an item takes part (CPH_DIFF_CHOSEN_ONLY keeps tables' choices and,
 * when both bench results hold a table's choice, the chosen rows). */
static int takes_part(const cph_diff *d, const cph_results *r, const cph_result_item *it) {
    if (!(d->flags & CPH_DIFF_CHOSEN_ONLY)) return 1;
    if (r->kind == CPH_RESULTS_TABLE) return it->chosen;
    return !d->chosen_rows_only || it->kind == CPH_ITEM_CHOSEN;
}

/* The network's time on both sides: chosen medians of the entries both hold. */
static void totals(cph_diff *d) {
    const cph_results *b = d->base, *n = d->next;
    for (size_t i = 0; i < b->nchoices; i++)
        for (size_t j = 0; j < n->nchoices; j++) {
            const cph_result_choice *cb = &b->choices[i], *cn = &n->choices[j];
            if (cb->flip != cn->flip || cb->threads != cn->threads ||
                !cp_shape_equal(&cb->shape, &cn->shape))
                continue;
            d->total_base += cb->median;
            d->total_next += cn->median;
            d->total_entries++;
            if (cb->confident) {
                d->confident_base++;
                const int same_algo = strcmp(cb->algo, cn->algo) == 0;
                d->confident_same_algo += (size_t)same_algo;
                d->confident_same += (size_t)(same_algo && strcmp(cb->params, cn->params) == 0);
            }
            break;
        }
}

/* What BASE's changed choices cost, measured in NEW. */
static void changed_cost(cph_diff *d) {
    d->changed_cost_max = d->changed_cost_median = NAN;
    double *r = malloc((d->nchanges ? d->nchanges : 1) * sizeof *r);
    if (!r) return;
    size_t n = 0;
    for (size_t i = 0; i < d->nchanges; i++) {
        const cph_choice_change *ch = &d->changes[i];
        if (ch->old_in_new && ch->next->median > 0) r[n++] = ch->old_in_new->median / ch->next->median;
    }
    if (n) {
        cph_sort_doubles(r, n);
        d->changed_cost_max = r[n - 1];
        d->changed_cost_median = cph_median_sorted(r, n);
    }
    free(r);
}

static void compare_pair(const cph_diff *d, cph_diff_pair *p) {
    const cph_result_item *b = p->base, *n = p->next;
    p->cmp.base_median = b->median;
    p->cmp.new_median = n->median;
    /* 1 unless the control drifted, times the layer's own correction */
    const double f = d->control.factor * p->local;
    p->cmp.median_ratio = b->median > 0 ? n->median / f / b->median : NAN;
    p->cmp.m = b->nsamples;
    p->cmp.n = n->nsamples;
    p->verdict = CPH_SHIFT_INCONCLUSIVE;
    if (!b->nsamples || !n->nsamples) {
        snprintf(p->note, sizeof p->note, "no samples recorded in %s",
                 !b->nsamples && !n->nsamples ? "BASE and NEW" : !b->nsamples ? "BASE" : "NEW");
        return;
    }
    if (d->flags & CPH_DIFF_PAIRED) {
        compare_paired(d, p);
        return;
    }
    cph_shift_cmp c;
    double *y = malloc(n->nsamples * sizeof *y); /* NEW's samples, drift-corrected */
    if (y)
        for (size_t i = 0; i < n->nsamples; i++) y[i] = n->samples[i] / f;
    if (!y || cph_compare_samples(b->samples, b->nsamples, y, n->nsamples, d->alpha, &c)) {
        free(y);
        snprintf(p->note, sizeof p->note, "not compared: a sample of 0 s (or out of memory)");
        return;
    }
    free(y);
    c.new_median = n->median; /* shown as measured; the ratios are corrected */
    c.median_ratio = p->cmp.median_ratio;
    p->cmp = c;
    p->compared = 1;
    p->verdict = cph_shift_verdict_of(&c, d->alpha, d->tol);
    if (!c.bounded)
        snprintf(p->note, sizeof p->note, "too few samples for a %.0f %% interval",
                 100.0 * (1.0 - d->alpha));
    else if (p->local != 1.0)
        snprintf(p->note, sizeof p->note, "layer moved %.3fx (%zu of other algorithms): /%.3f",
                 p->layer_shift, p->layer_others, p->local);
}

static void choice_changes(cph_diff *d) {
    const cph_results *b = d->base, *n = d->next;
    for (size_t i = 0; i < b->nchoices; i++) {
        const cph_result_choice *cb = &b->choices[i];
        for (size_t j = 0; j < n->nchoices; j++) {
            const cph_result_choice *cn = &n->choices[j];
            if (cb->flip != cn->flip || cb->threads != cn->threads ||
                !cp_shape_equal(&cb->shape, &cn->shape))
                continue;
            if (strcmp(cb->algo, cn->algo) || strcmp(cb->params, cn->params)) {
                cph_choice_change *ch = &d->changes[d->nchanges++];
                ch->base = cb;
                ch->next = cn;
                ch->old_in_new = NULL;
                for (size_t k = 0; k < n->nitems; k++) {
                    const cph_result_item *it = &n->items[k];
                    if (it->entry == j && strcmp(it->algo, cb->algo) == 0 &&
                        strcmp(it->params, cb->params) == 0) {
                        ch->old_in_new = it;
                        break;
                    }
                }
            }
            break;
        }
    }
}

int cph_diff_build(const cph_results *base, const cph_results *next, double alpha, double tol,
                   unsigned flags, cph_diff *out) {
    memset(out, 0, sizeof *out);
    out->base = base;
    out->next = next;
    out->alpha = alpha;
    out->tol = tol;
    out->flags = flags;
    out->other_device = strcmp(base->fingerprint, next->fingerprint) != 0;
    out->chosen_rows_only = (flags & CPH_DIFF_CHOSEN_ONLY) && base->kind == CPH_RESULTS_BENCH &&
                            next->kind == CPH_RESULTS_BENCH && base->nchosen_rows &&
                            next->nchosen_rows;
    size_t *ob = occurrences(base), *on = occurrences(next);
    char *used = calloc(next->nitems ? next->nitems : 1, 1);
    const size_t nb = base->nitems ? base->nitems : 1, nn = next->nitems ? next->nitems : 1;
    out->pairs = calloc(nb, sizeof *out->pairs);
    out->only_base = calloc(nb, sizeof *out->only_base);
    out->only_next = calloc(nn, sizeof *out->only_next);
    out->changes = calloc(base->nchoices ? base->nchoices : 1, sizeof *out->changes);
    if (!ob || !on || !used || !out->pairs || !out->only_base || !out->only_next ||
        !out->changes) {
        free(ob);
        free(on);
        free(used);
        cph_diff_free(out);
        return -1;
    }
    for (size_t j = 0; j < next->nitems; j++)
        if (!takes_part(out, next, &next->items[j])) used[j] = 1;
    for (size_t i = 0; i < base->nitems; i++) {
        if (!takes_part(out, base, &base->items[i])) continue;
        size_t match = next->nitems;
        for (size_t j = 0; j < next->nitems && match == next->nitems; j++)
            if (!used[j] && on[j] == ob[i] && cph_result_same_point(&base->items[i], &next->items[j]))
                match = j;
        if (match == next->nitems) {
            out->only_base[out->nonly_base++] = &base->items[i];
            continue;
        }
        used[match] = 1;
        cph_diff_pair *p = &out->pairs[out->npairs++];
        p->base = &base->items[i];
        p->next = &next->items[match];
    }
    /* the rows' common shift, the control (whether the rows are judged
     * drift-corrected), then each layer's own shift */
    if (cph_diff_rows_shift(out) || cph_diff_control_compare(out) || cph_diff_layer_shifts(out)) {
        free(ob);
        free(on);
        free(used);
        cph_diff_free(out);
        return -1;
    }
    for (size_t i = 0; i < out->npairs; i++) {
        compare_pair(out, &out->pairs[i]);
        out->counts[out->pairs[i].verdict]++;
        out->nlocal += out->pairs[i].local != 1.0;
    }
    for (size_t j = 0; j < next->nitems; j++)
        if (!used[j]) out->only_next[out->nonly_next++] = &next->items[j];
    free(ob);
    free(on);
    free(used);
    choice_changes(out);
    totals(out);
    changed_cost(out);
    cph_diff_network_compare(out);
    qsort(out->pairs, out->npairs, sizeof *out->pairs, cmp_pairs);
    return 0;
}

void cph_diff_free(cph_diff *d) {
    free(d->pairs);
    free(d->only_base);
    free(d->only_next);
    free(d->changes);
    memset(d, 0, sizeof *d);
}

void cph_diff_item_label(const cph_result_item *it, char *buf, size_t cap) {
    snprintf(buf, cap, "%s flip=%s t=%d %s%s%s%s%s%s", it->layer, cph_flip_word(it->flip),
             it->threads, it->algo, it->chosen_algo[0] ? "=" : "", it->chosen_algo,
             it->params[0] ? " [" : "", it->params, it->params[0] ? "]" : "");
}

void cph_diff_pair_figures(const cph_diff *d, const cph_diff_pair *p, char *buf, size_t cap) {
    const cph_shift_cmp *c = &p->cmp;
    if (!p->compared) {
        snprintf(buf, cap, "ratio of medians %.4f, base %.6g ms, new %.6g ms: %s",
                 c->median_ratio, 1e3 * c->base_median, 1e3 * c->new_median, p->note);
        return;
    }
    char ci[96];
    if (c->bounded)
        snprintf(ci, sizeof ci, "%.1f %% CI %.4f..%.4f", 100.0 * c->coverage, c->ratio_lo,
                 c->ratio_hi);
    else
        snprintf(ci, sizeof ci, "no %.0f %% CI: too few samples", 100.0 * (1.0 - d->alpha));
    if (d->flags & CPH_DIFF_PAIRED) {
        snprintf(buf, cap,
                 "ratio %.4f (paired Hodges-Lehmann %.4f, %s), Wilcoxon signed-rank p = %.3g "
                 "(statistic %.1f, %s), base %.6g ms, new %.6g ms (%zu rounds), tolerance %.3g %%, "
                 "alpha %.3g",
                 c->median_ratio, c->ratio, ci, c->mwu.p, c->mwu.u1,
                 c->mwu.exact ? "exact" : "normal approx.", 1e3 * c->base_median,
                 1e3 * c->new_median, c->m, 100.0 * d->tol, d->alpha);
        return;
    }
    snprintf(buf, cap,
             "ratio %.4f (Hodges-Lehmann %.4f, %s), Mann-Whitney p = %.3g (U = %.1f, %s), "
             "base %.6g ms (n=%zu), new %.6g ms (n=%zu), tolerance %.3g %%, alpha %.3g",
             c->median_ratio, c->ratio, ci, c->mwu.p, c->mwu.u1,
             c->mwu.exact ? "exact" : "normal approx.", 1e3 * c->base_median, c->m,
             1e3 * c->new_median, c->n, 100.0 * d->tol, d->alpha);
}
