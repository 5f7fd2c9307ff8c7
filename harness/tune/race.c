/* Racing on paired, interleaved trials (contract in race.h). */
#include "harness/tune/race.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "harness/measure/data.h"
#include "harness/measure/stats.h"

void cph_race_defaults(cph_race_opts *o) {
    memset(o, 0, sizeof *o);
    o->min_rounds = 6;
    o->max_rounds = 40;
    o->alpha = 0.05;
    o->budget_seconds = 10.0;
    o->seed = 1;
}

void cph_race_free(cph_race_result *r) {
    if (!r || !r->cand) return;
    for (size_t i = 0; i < r->ncand; i++) free(r->cand[i].trials);
    free(r->cand);
    r->cand = NULL;
}

double cph_race_median(const cph_race_result *r, size_t c) {
    return cph_median_of(r->cand[c].trials, r->cand[c].ntrials);
}

int cph_race_compare(const cph_race_result *r, size_t a, size_t b, double alpha,
                     cph_paired_cmp *out) {
    const size_t n = r->cand[a].ntrials < r->cand[b].ntrials ? r->cand[a].ntrials
                                                              : r->cand[b].ntrials;
    if (n == 0) return -1;
    return cph_compare_paired(r->cand[a].trials, r->cand[b].trials, n, alpha, out);
}

/* The candidate in the race with the lowest median of trial medians. */
static int leader(const cph_race_result *r) {
    int best = -1;
    double best_m = INFINITY;
    for (size_t i = 0; i < r->ncand; i++) {
        if (r->cand[i].state != CPH_RACE_IN || r->cand[i].ntrials == 0) continue;
        const double m = cph_race_median(r, i);
        if (m < best_m) {
            best_m = m;
            best = (int)i;
        }
    }
    return best;
}

static size_t in_race(const cph_race_result *r) {
    size_t n = 0;
    for (size_t i = 0; i < r->ncand; i++) n += r->cand[i].state == CPH_RACE_IN;
    return n;
}

/* Drops every candidate slower than the leader with confidence. */
static void eliminate(const cph_race_opts *o, cph_race_result *r) {
    const int lead = leader(r);
    const size_t left = in_race(r);
    if (lead < 0 || left < 2) return;
    const size_t n = r->cand[lead].ntrials;
    double *d = malloc(n * sizeof *d);
    if (!d) return;
    for (size_t i = 0; i < r->ncand; i++) {
        cph_race_cand *c = &r->cand[i];
        if ((int)i == lead || c->state != CPH_RACE_IN) continue;
        for (size_t t = 0; t < n; t++) d[t] = log(c->trials[t]) - log(r->cand[lead].trials[t]);
        cph_wsr w;
        if (cph_wsr_test(d, n, CPH_GREATER, &w) != 0) continue; /* all ratios exactly 1 */
        if (w.p < o->alpha / (double)(left - 1)) {
            cph_paired_cmp pc;
            c->state = CPH_RACE_DROPPED;
            c->left_round = r->rounds;
            c->drop_p = w.p;
            c->drop_ratio = cph_race_compare(r, (size_t)lead, i, o->alpha, &pc) == 0 ? pc.ratio : NAN;
        }
    }
    free(d);
}

/* Reorders the shuffled idx[0..n) so that each group's members are
 * consecutive: groups in the order their first member comes, members in
 * their shuffled order (so both are random).  tmp holds n. */
static void gather_groups(size_t *idx, size_t n, const size_t *group, size_t *tmp) {
    size_t m = 0;
    for (size_t i = 0; i < n; i++) {
        const size_t g = group[idx[i]];
        int seen = 0;
        for (size_t j = 0; j < i && !seen; j++) seen = group[idx[j]] == g;
        if (seen) continue;
        for (size_t j = i; j < n; j++)
            if (group[idx[j]] == g) tmp[m++] = idx[j];
    }
    memcpy(idx, tmp, n * sizeof *idx);
}

/* Fisher-Yates shuffle of idx[0..n) with the seeded generator. */
static void shuffle(size_t *idx, size_t n, uint64_t *rng) {
    for (size_t i = n; i > 1; i--) {
        const size_t j = (size_t)(cph_rng_next(rng) % i);
        const size_t t = idx[i - 1];
        idx[i - 1] = idx[j];
        idx[j] = t;
    }
}

int cph_race_run(const cph_race_opts *o, size_t ncand, cph_trial_fn fn, void *arg,
                 cph_race_result *out) {
    memset(out, 0, sizeof *out);
    out->chosen = -1;
    out->chosen_median = NAN;
    size_t max_rounds = o->max_rounds ? o->max_rounds : 1;
    if (max_rounds > CPH_PAIRED_MAX) max_rounds = CPH_PAIRED_MAX;
    out->cand = calloc(ncand ? ncand : 1, sizeof *out->cand);
    size_t *order = malloc((ncand ? ncand : 1) * sizeof *order);
    size_t *tmp = malloc((ncand ? ncand : 1) * sizeof *tmp);
    if (!out->cand || !order || !tmp) {
        free(order);
        free(tmp);
        free(out->cand);
        out->cand = NULL;
        return -1;
    }
    out->ncand = ncand;
    for (size_t i = 0; i < ncand; i++) {
        out->cand[i].trials = malloc(max_rounds * sizeof(double));
        if (!out->cand[i].trials) {
            free(order);
            free(tmp);
            cph_race_free(out);
            return -1;
        }
    }
    uint64_t rng = o->seed ^ 0x9e3779b97f4a7c15ull;
    out->ended_by = "max rounds";
    while (out->rounds < max_rounds) {
        if (in_race(out) == 0) break;
        if (out->rounds > 0 && in_race(out) == 1) {
            out->ended_by = "one left";
            break;
        }
        if (out->rounds > 0 && out->seconds >= o->budget_seconds) {
            out->ended_by = "budget";
            break;
        }
        if (o->stop && *o->stop) {
            out->ended_by = "stopped";
            break;
        }
        size_t n = 0;
        for (size_t i = 0; i < ncand; i++)
            if (out->cand[i].state == CPH_RACE_IN) order[n++] = i;
        shuffle(order, n, &rng);
        if (o->group) gather_groups(order, n, o->group, tmp);
        const size_t control_at = o->control ? (size_t)(cph_rng_next(&rng) % (n + 1)) : n + 1;
        for (size_t k = 0; k <= n; k++) {
            if (k == control_at) o->control(o->control_arg, out->rounds);
            if (k == n) break;
            cph_race_cand *c = &out->cand[order[k]];
            double med = NAN, wall = 0.0;
            const int rc = fn(arg, order[k], out->rounds, &med, &wall);
            out->seconds += wall;
            if (rc != 0 || !(med > 0.0) || !isfinite(med)) {
                c->state = CPH_RACE_FAILED;
                c->left_round = out->rounds + 1;
                continue;
            }
            c->trials[c->ntrials++] = med;
        }
        out->rounds++;
        /* A candidate that failed this round has one trial fewer than the
         * others: rounds stay aligned because it takes no further part. */
        if (out->rounds >= o->min_rounds) eliminate(o, out);
    }
    if (in_race(out) == 0) out->ended_by = "all failed";
    free(order);
    free(tmp);
    out->chosen = leader(out);
    if (out->chosen >= 0) out->chosen_median = cph_race_median(out, (size_t)out->chosen);
    return 0;
}
