/* The tuner (contract in tuner.h). */
#include "harness/tune/tuner.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "harness/measure/data.h"

void cph_tune_defaults(cph_tune_opts *o) {
    memset(o, 0, sizeof *o);
    cph_timing_defaults(&o->timing);
    o->timing.max_seconds = 1.0;
    o->budget_seconds = 10.0;
    o->max_rel_err = 1e-4;
    o->seed = 1;
    o->max_candidates = 16;
}

void cph_tune_entry_free(cp_table_entry *e) {
    if (!e) return;
    for (size_t i = 0; i < e->ncandidates; i++) free(e->candidates[i].samples);
    free(e->candidates);
    e->candidates = NULL;
    e->ncandidates = 0;
}

static int cis_overlap(const cp_timing *a, const cp_timing *b) {
    return a->ci_lo <= b->ci_hi && b->ci_lo <= a->ci_hi;
}

int cph_tune_choose(const cp_candidate *c, size_t n, int *runner_up, double *margin,
                    int *in_noise) {
    int best = -1;
    for (size_t i = 0; i < n; i++) {
        if (c[i].disqualified || c[i].timing.samples == 0) continue;
        if (best < 0 || c[i].timing.median < c[best].timing.median) best = (int)i;
    }
    *runner_up = -1;
    *margin = 0.0;
    *in_noise = 0;
    if (best < 0) return -1;
    int other = -1, same = -1;
    for (size_t i = 0; i < n; i++) {
        if ((int)i == best || c[i].disqualified || c[i].timing.samples == 0) continue;
        int *slot = strcmp(c[i].algo, c[best].algo) != 0 ? &other : &same;
        if (*slot < 0 || c[i].timing.median < c[*slot].timing.median) *slot = (int)i;
    }
    int ru = other >= 0 ? other : same;
    if (ru >= 0) {
        *runner_up = ru;
        *margin = c[ru].timing.median / c[best].timing.median - 1.0;
        *in_noise = cis_overlap(&c[ru].timing, &c[best].timing);
    }
    return best;
}

typedef struct {
    const cp_algo *algo;
    cp_params params;
} planned;

static int same_params(const cp_algo *a, const cp_params *x, const cp_params *y) {
    for (int i = 0; i < a->nparams; i++)
        if (x->v[i] != y->v[i]) return 0;
    return 1;
}

/* Round-robin over algorithms: every algorithm's defaults first, then each
 * one's next candidate in turn, so a short budget still compares algorithms. */
static size_t build_plan(const cph_tune_opts *o, const cp_shape *s, cp_flip flip,
                         const cp_algo *const *algos, size_t nalgos, const cp_cache_sizes *caches,
                         planned *out, size_t max, int *unsupported) {
    enum { PER = 64 };
    cp_params *lists = calloc(nalgos * PER, sizeof *lists);
    int *counts = calloc(nalgos, sizeof *counts);
    size_t n = 0;
    *unsupported = 0;
    if (!lists || !counts) goto done;
    int per = o->max_candidates < 1 ? 1 : (o->max_candidates > PER ? PER : o->max_candidates);
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

typedef struct {
    cp_plan *plan;
    const float *x, *bias;
    float *y;
    const cp_exec *exec;
} run_ctx;

static int run_once(void *arg) {
    run_ctx *r = arg;
    return cp_plan_run(r->plan, r->x, r->bias, r->y, r->exec) == CP_OK ? 0 : 1;
}

/* The layer's seeded test tensors and the oracle's answer for them. */
typedef struct {
    float *x, *w, *bias, *y;
    double *ref, *mag;
    size_t ny;
} tensors;

static void tensors_free(tensors *t) {
    free(t->x);
    free(t->w);
    free(t->bias);
    free(t->y);
    free(t->ref);
    free(t->mag);
}

static int tensors_make(tensors *t, const cp_shape *s, cp_flip flip, uint64_t seed) {
    const size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
    t->ny = cp_shape_output_elems(s);
    t->x = malloc(nx * sizeof *t->x);
    t->w = malloc(nw * sizeof *t->w);
    t->bias = malloc((size_t)s->k * sizeof *t->bias);
    t->y = malloc(t->ny * sizeof *t->y);
    t->ref = malloc(t->ny * sizeof *t->ref);
    t->mag = malloc(t->ny * sizeof *t->mag);
    if (!t->x || !t->w || !t->bias || !t->y || !t->ref || !t->mag) return -1;
    cph_fill_uniform(t->x, nx, seed);
    cph_fill_uniform(t->w, nw, seed + 1);
    cph_fill_uniform(t->bias, (size_t)s->k, seed + 2);
    cp_oracle_run(s, flip, t->x, t->w, t->bias, t->ref, t->mag);
    return 0;
}

typedef enum { TRY_FAILED, TRY_DISQUALIFIED, TRY_MEASURED } try_outcome;

/* Checks one planned candidate against the oracle and, if accurate enough,
 * times it with at most max_seconds; fills *c. */
static try_outcome try_candidate(const cph_tune_request *rq, const planned *pl, tensors *t,
                                 double max_seconds, cp_candidate *c) {
    const cp_shape *s = &rq->layer->shape;
    cp_plan *plan = NULL;
    char why[256];
    if (cp_plan_create(pl->algo, s, rq->flip, &pl->params, rq->caches, rq->threads, t->w, &plan,
                       why, sizeof why) != CP_OK)
        return TRY_FAILED;
    snprintf(c->algo, sizeof c->algo, "%s", pl->algo->name);
    c->params = pl->params;
    for (size_t k = 0; k < t->ny; k++) t->y[k] = NAN;
    run_ctx rc = {plan, t->x, t->bias, t->y, rq->exec};
    if (run_once(&rc) != 0) {
        cp_plan_destroy(plan);
        return TRY_FAILED;
    }
    c->rel_err = cp_error_measure(t->y, t->ref, t->mag, t->ny).rel_err;
    if (!(c->rel_err <= rq->opts->max_rel_err)) {
        c->disqualified = 1;
        cp_plan_destroy(plan);
        return TRY_DISQUALIFIED;
    }
    cph_timing_opts to = rq->opts->timing;
    to.max_seconds = max_seconds;
    cph_measurement m;
    const int rcode = cph_measure(&to, run_once, &rc, &m);
    cp_plan_destroy(plan);
    if (rcode != 0) {
        cph_measurement_free(&m);
        return TRY_FAILED;
    }
    c->timing.median = m.stats.median;
    c->timing.ci_lo = m.stats.ci_lo;
    c->timing.ci_hi = m.stats.ci_hi;
    c->timing.samples = (uint32_t)m.n;
    c->timing.noisy = m.stats.noisy;
    c->samples = m.samples; /* ownership moves to the candidate */
    c->nsamples = m.n;
    return TRY_MEASURED;
}

cp_status cph_tune_layer(const cph_tune_request *rq, cp_table_entry *entry,
                         cph_tune_report *report, char *msg, size_t cap) {
    const cph_tune_opts *o = rq->opts;
    const cph_layer *layer = rq->layer;
    const cp_shape *s = &layer->shape;
    memset(entry, 0, sizeof *entry);
    memset(report, 0, sizeof *report);
    const double t0 = cph_now();
    enum { MAXPLAN = 256 };
    planned *plan = calloc(MAXPLAN, sizeof *plan);
    tensors t = {0};
    cp_candidate *cands = NULL;
    const cp_algo **calgo = NULL; /* the algorithm of each recorded candidate */
    size_t np = 0, nc = 0;
    cp_status st = CP_OK;
    if (!plan || tensors_make(&t, s, rq->flip, o->seed) != 0) {
        st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for test tensors", layer->name);
        goto out;
    }
    const cp_cache_sizes fallback = cp_cache_sizes_fallback();
    np = build_plan(o, s, rq->flip, rq->algos, rq->nalgos, rq->caches ? rq->caches : &fallback,
                    plan, MAXPLAN, &report->unsupported);
    report->planned = (int)np;
    if (np == 0) {
        st = cpa_fail(CP_EUNSUPPORTED, msg, cap, "%s: no selected algorithm supports this layer",
                      layer->name);
        goto out;
    }
    cands = calloc(np, sizeof *cands);
    calgo = calloc(np, sizeof *calgo);
    if (!cands || !calgo) {
        st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for candidates", layer->name);
        goto out;
    }

    /* Every algorithm's defaults are measured even past the budget: without
     * them the comparison between algorithms would be meaningless.  The plan
     * is round-robin, so they are its first entries, one per supported
     * algorithm. */
    size_t nfirst = rq->nalgos - (size_t)report->unsupported;
    if (nfirst > np) nfirst = np;
    for (size_t i = 0; i < np; i++) {
        if (rq->stop && *rq->stop) {
            report->interrupted = 1;
            goto out;
        }
        const double spent = cph_now() - t0;
        const double left = o->budget_seconds - spent;
        if (i >= nfirst && left <= 0.0) {
            report->skipped = (int)(np - i);
            break;
        }
        if (rq->progress) {
            char pbuf[128];
            cp_params_format(plan[i].algo, &plan[i].params, pbuf, sizeof pbuf);
            cph_tune_progress pr = {layer->name, plan[i].algo->name, pbuf, (int)i + 1, (int)np,
                                    spent};
            rq->progress(rq->progress_arg, &pr);
        }
        double cap_s = o->timing.max_seconds;
        if (i >= nfirst && left < cap_s) cap_s = left > 0.05 ? left : 0.05;
        memset(&cands[nc], 0, sizeof cands[nc]);
        switch (try_candidate(rq, &plan[i], &t, cap_s, &cands[nc])) {
        case TRY_FAILED:
            report->failed++;
            break;
        case TRY_DISQUALIFIED:
            report->disqualified++;
            calgo[nc++] = plan[i].algo;
            break;
        case TRY_MEASURED:
            report->measured++;
            calgo[nc++] = plan[i].algo;
            break;
        }
    }
    int ru, in_noise;
    double margin;
    const int best = cph_tune_choose(cands, nc, &ru, &margin, &in_noise);
    if (best < 0) {
        st = cpa_fail(CP_ENOTFOUND, msg, cap,
                      "%s: no candidate qualified (%d disqualified, %d failed)", layer->name,
                      report->disqualified, report->failed);
        goto out;
    }
    snprintf(entry->name, sizeof entry->name, "%s", layer->name);
    entry->shape = *s;
    entry->flip = rq->flip;
    entry->threads = rq->threads;
    entry->algo = calgo[best];
    entry->params = cands[best].params;
    entry->timing = cands[best].timing;
    entry->runner_up = ru >= 0 ? calgo[ru] : NULL;
    if (ru >= 0) entry->runner_up_params = cands[ru].params;
    entry->margin = margin;
    entry->margin_in_noise = in_noise;
    entry->ncandidates = nc;
    entry->candidates = cands;
    cands = NULL;
out:
    report->seconds = cph_now() - t0;
    if (cands) {
        for (size_t i = 0; i < np; i++) free(cands[i].samples);
        free(cands);
    }
    free(calgo);
    free(plan);
    tensors_free(&t);
    return st;
}
