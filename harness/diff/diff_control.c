/* The fixed control and the network total of a comparison (diff_report.h,
 * docs/diff.md "The control"). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/diff/diff_report.h"

/* The control of one side as one series: trial r is the geometric mean of
 * the series' trials r (over the series the side has; the shorter length
 * when a series lost a trial).  *n = 0 when there is none. */
static double *combined(const cph_results *r, size_t *n) {
    size_t len = 0;
    int have = 0;
    for (int s = 0; s < CPH_RESULTS_CONTROL_SERIES; s++) {
        if (!r->control[s].n) continue;
        len = have ? (r->control[s].n < len ? r->control[s].n : len) : r->control[s].n;
        have = 1;
    }
    *n = 0;
    if (!len) return NULL;
    double *v = malloc(len * sizeof *v);
    if (!v) return NULL;
    for (size_t i = 0; i < len; i++) {
        double lsum = 0.0;
        int k = 0;
        for (int s = 0; s < CPH_RESULTS_CONTROL_SERIES; s++)
            if (r->control[s].n) {
                lsum += log(r->control[s].v[i]);
                k++;
            }
        v[i] = exp(lsum / k);
    }
    *n = len;
    return v;
}

int cph_diff_control_compare(cph_diff *d) {
    cph_diff_control *c = &d->control;
    memset(c, 0, sizeof *c);
    c->factor = 1.0;
    c->verdict = CPH_SHIFT_INCONCLUSIVE;
    c->sides = d->base->has_control + d->next->has_control;
    if (c->sides < 2 || (d->flags & CPH_DIFF_PAIRED)) return 0;
    for (int s = 0; s < CPH_RESULTS_CONTROL_SERIES; s++) {
        const cph_result_series *b = &d->base->control[s], *n = &d->next->control[s];
        c->series_compared[s] =
            b->n && n->n && cph_compare_samples(b->v, b->n, n->v, n->n, d->alpha, &c->series[s]) == 0;
    }
    size_t nb, nn;
    double *vb = combined(d->base, &nb), *vn = combined(d->next, &nn);
    int rc = 0;
    if ((nb && !vb) || (nn && !vn)) {
        rc = -1;
    } else if (nb && nn && cph_compare_samples(vb, nb, vn, nn, d->alpha, &c->cmp) == 0) {
        c->present = c->compared = 1;
        c->verdict = cph_shift_verdict_of(&c->cmp, d->alpha, d->tol);
        c->moved = c->verdict == CPH_SHIFT_SLOWER || c->verdict == CPH_SHIFT_FASTER;
        /* corroborated: the rows moved the control's way, at least half as far */
        const double lc = log(c->cmp.ratio), lr = log(d->rows_shift);
        c->drift = c->moved && isfinite(lr) && lc * lr > 0.0 && fabs(lr) >= 0.5 * fabs(lc);
        if (c->drift) c->factor = c->cmp.ratio;
    }
    free(vb);
    free(vn);
    return rc;
}

static void ratio_text(const cph_shift_cmp *c, double alpha, char *buf, size_t cap) {
    if (c->bounded)
        snprintf(buf, cap, "%.3fx, %.1f %% CI %.3f..%.3f, p = %.2g", c->ratio, 100.0 * c->coverage,
                 c->ratio_lo, c->ratio_hi, c->mwu.p);
    else
        snprintf(buf, cap, "%.3fx, no %.0f %% CI: too few trials, p = %.2g", c->ratio,
                 100.0 * (1.0 - alpha), c->mwu.p);
}

void cph_diff_control_text(const cph_diff *d, char *buf, size_t cap) {
    const cph_diff_control *c = &d->control;
    buf[0] = '\0';
    if (c->sides == 0) return;
    if (d->flags & CPH_DIFF_PAIRED) {
        snprintf(buf, cap, "control: not used with --paired (the rounds pair BASE with NEW)");
        return;
    }
    if (c->sides == 1) {
        snprintf(buf, cap,
                 "note: only %s carries a control: a machine-wide drift cannot be told from a "
                 "regression; rows judged as measured",
                 d->base->has_control ? "BASE" : "NEW");
        return;
    }
    if (!c->compared) {
        snprintf(buf, cap, "note: the controls hold no trials to compare; rows judged as measured");
        return;
    }
    char all[160], series[256] = "";
    ratio_text(&c->cmp, d->alpha, all, sizeof all);
    size_t len = 0;
    for (int s = 0; s < CPH_RESULTS_CONTROL_SERIES && len < sizeof series; s++)
        if (c->series_compared[s]) {
            const int w = snprintf(series + len, sizeof series - len, "%s%s %.3fx",
                                   len ? ", " : "; ", cph_results_control_names[s],
                                   c->series[s].ratio);
            if (w > 0) len += (size_t)w;
        }
    const double r = c->cmp.ratio;
    if (c->drift)
        snprintf(buf, cap,
                 "the control ran %.2fx %s in NEW (%s%s), the rows' common shift %.3fx: "
                 "machine-wide drift; rows judged on drift-corrected ratios (each NEW time "
                 "divided by %.4f)",
                 r >= 1.0 ? r : 1.0 / r, r >= 1.0 ? "slower" : "faster", all, series,
                 d->rows_shift, c->factor);
    else if (c->moved)
        snprintf(buf, cap,
                 "the control ran %.2fx %s in NEW (%s%s), but the rows' common shift is %.3fx "
                 "(the median row ratio): a drift the rows did not go through is not corrected; "
                 "rows judged as measured",
                 r >= 1.0 ? r : 1.0 / r, r >= 1.0 ? "slower" : "faster", all, series,
                 d->rows_shift);
    else
        snprintf(buf, cap, "the control is %s in NEW (%s%s): %s; rows judged as measured",
                 cph_shift_verdict_name(c->verdict), all, series,
                 c->verdict == CPH_SHIFT_UNCHANGED ? "no machine-wide drift beyond the tolerance"
                                                   : "a drift beyond the tolerance is not "
                                                     "established");
}

static int weight(const cph_result_item *it) { return it->count > 0 ? it->count : 1; }

void cph_diff_network_compare(cph_diff *d) {
    cph_diff_network *w = &d->network;
    memset(w, 0, sizeof *w);
    w->verdict = CPH_SHIFT_INCONCLUSIVE;
    if (!d->chosen_rows_only) return;
    size_t mb = 0, mn = 0;
    int same = 1;
    for (size_t i = 0; i < d->npairs; i++) {
        const cph_diff_pair *p = &d->pairs[i];
        if (p->base->kind != CPH_ITEM_CHOSEN) continue;
        if (!w->rows) {
            mb = p->base->nsamples;
            mn = p->next->nsamples;
        }
        same &= p->base->nsamples == mb && p->next->nsamples == mn;
        w->rows++;
        w->base += weight(p->base) * p->base->median;
        w->next += weight(p->next) * p->next->median / d->control.factor;
    }
    if (!w->rows || !same || !mb || !mn || (d->flags & CPH_DIFF_PAIRED)) return;
    double *vb = calloc(mb, sizeof *vb), *vn = calloc(mn, sizeof *vn);
    if (vb && vn) {
        for (size_t i = 0; i < d->npairs; i++) {
            const cph_diff_pair *p = &d->pairs[i];
            if (p->base->kind != CPH_ITEM_CHOSEN) continue;
            for (size_t r = 0; r < mb; r++) vb[r] += weight(p->base) * p->base->samples[r];
            for (size_t r = 0; r < mn; r++)
                vn[r] += weight(p->next) * p->next->samples[r] / d->control.factor;
        }
        if (cph_compare_samples(vb, mb, vn, mn, d->alpha, &w->cmp) == 0) {
            w->compared = 1;
            w->verdict = cph_shift_verdict_of(&w->cmp, d->alpha, d->tol);
        }
    }
    free(vb);
    free(vn);
}
