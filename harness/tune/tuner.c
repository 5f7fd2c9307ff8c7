/* The tuner (contract in tuner.h). */
#include "harness/tune/tuner.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "algos/core/cpa.h"
#include "harness/measure/data.h"
#include "harness/measure/stats.h"
#include "harness/tune/candidates.h"
#include "harness/tune/checkrun.h"
#include "harness/tune/trial.h"

void cph_tune_defaults(cph_tune_opts *o) {
    memset(o, 0, sizeof *o);
    cph_timing_defaults(&o->timing);
    /* A trial is a short batch: one warm-up run, five samples. */
    o->timing.warmup = 1;
    o->timing.min_samples = o->timing.max_samples = 5;
    o->timing.max_seconds = 1.0;
    o->budget_seconds = 10.0;
    o->max_rel_err = 1e-4;
    o->seed = 1;
    o->max_candidates = 16;
    cph_race_defaults(&o->race);
    o->place = 1;
}

void cph_tune_report_free(cph_tune_report *r) {
    if (!r) return;
    free(r->candidate_notes);
    free(r->control_fma);
    free(r->control_gemm);
    r->candidate_notes = NULL;
    r->control_fma = r->control_gemm = NULL;
    r->ncontrol = 0;
}

void cph_tune_entry_free(cp_table_entry *e) {
    if (!e) return;
    for (size_t i = 0; i < e->ncandidates; i++) free(e->candidates[i].samples);
    free(e->candidates);
    e->candidates = NULL;
    e->ncandidates = 0;
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

/* n elements of size bytes, 64-byte aligned (as a trial's buffers are). */
static void *alloc64(size_t n, size_t size) {
    const size_t bytes = cpa_align64(n * size);
    return aligned_alloc(64, bytes ? bytes : 64);
}

static int tensors_make(tensors *t, const cp_shape *s, cp_flip flip, uint64_t seed) {
    const size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
    t->ny = cp_shape_output_elems(s);
    t->x = alloc64(nx, sizeof *t->x);
    t->w = alloc64(nw, sizeof *t->w);
    t->bias = alloc64((size_t)s->k, sizeof *t->bias);
    t->y = alloc64(t->ny, sizeof *t->y);
    t->ref = alloc64(t->ny, sizeof *t->ref);
    t->mag = alloc64(t->ny, sizeof *t->mag);
    if (!t->x || !t->w || !t->bias || !t->y || !t->ref || !t->mag) return -1;
    cph_fill_uniform(t->x, nx, seed);
    cph_fill_uniform(t->w, nw, seed + 1);
    cph_fill_uniform(t->bias, (size_t)s->k, seed + 2);
    cp_oracle_run(s, flip, t->x, t->w, t->bias, t->ref, t->mag);
    return 0;
}

typedef enum { TRY_FAILED, TRY_DISQUALIFIED, TRY_QUALIFIED } try_outcome;

/* Checks one planned candidate against the oracle: a plan and one run. */
static try_outcome qualify(const cph_tune_request *rq, const cph_planned *pl, tensors *t,
                           cp_candidate *c, char *why, size_t cap) {
    snprintf(c->algo, sizeof c->algo, "%s", pl->algo->name);
    c->params = pl->params;
    const cph_check_run cr = {pl->algo,   &rq->layer->shape, rq->flip, &pl->params,
                              rq->caches, rq->threads,       t->x,     t->w,
                              t->bias,    rq->exec,          rq->opts->isolate};
    cp_error e;
    if (cph_check_error(&cr, t->ref, t->mag, t->y, t->ny, &e, why, cap) != CP_OK) {
        c->failed = 1;
        c->rel_err = NAN;
        return TRY_FAILED;
    }
    c->rel_err = e.rel_err;
    if (!(c->rel_err <= rq->opts->max_rel_err)) {
        c->disqualified = 1;
        return TRY_DISQUALIFIED;
    }
    return TRY_QUALIFIED;
}

/* The race's view of the qualified candidates. */
typedef struct {
    const cph_tune_request *rq;
    cph_trial_setup setup;
    const cph_planned **who; /* qualified candidates, by race index */
    cph_control *control;
    double *fma, *gemm;      /* the control's trial medians by round */
} race_ctx;

static void race_control(void *arg, size_t round) {
    race_ctx *r = arg;
    cph_control_trial(r->control, 5, &r->fma[round], &r->gemm[round]);
}

static int race_trial(void *arg, size_t cand, size_t round, double *median, double *wall) {
    race_ctx *r = arg;
    (void)round;
    char why[256];
    return cph_trial_run(&r->setup, r->who[cand]->algo, &r->who[cand]->params, median, wall, why,
                         sizeof why);
}

/* What the race did with one candidate, for the table's notes. */
static void race_note(const cph_race_cand *k, char *buf, size_t cap) {
    switch (k->state) {
    case CPH_RACE_IN: snprintf(buf, cap, "raced %zu rounds", k->ntrials); break;
    case CPH_RACE_DROPPED:
        snprintf(buf, cap, "dropped after round %zu: %.3fx the leader, p = %.2g", k->left_round,
                 k->drop_ratio, k->drop_p);
        break;
    case CPH_RACE_FAILED: snprintf(buf, cap, "failed its trial in round %zu", k->left_round); break;
    }
}

/* A candidate's timing from its trial medians; the samples it keeps are
 * those medians. */
static int timing_from_trials(const cph_race_cand *k, cp_candidate *c) {
    if (k->ntrials == 0) return 0;
    cph_stats st;
    cph_stats_compute(k->trials, k->ntrials, 0.95, &st);
    c->timing.median = st.median;
    c->timing.ci_lo = st.ci_lo;
    c->timing.ci_hi = st.ci_hi;
    c->timing.samples = (uint32_t)k->ntrials;
    c->timing.noisy = st.noisy;
    c->samples = malloc(k->ntrials * sizeof *c->samples);
    if (!c->samples) return -1;
    memcpy(c->samples, k->trials, k->ntrials * sizeof *c->samples);
    c->nsamples = k->ntrials;
    return 0;
}

/* The runner-up among the raced candidates: smallest paired ratio to the
 * chosen one over their shared rounds, another algorithm preferred.
 * Returns its race index or -1. */
static int runner_up(const cph_race_result *r, int chosen, const cph_planned *const *who,
                     double alpha, cph_paired_cmp *margin) {
    int best[2] = {-1, -1}; /* [0] other algorithm, [1] same algorithm */
    cph_paired_cmp cmp[2] = {{0}, {0}};
    for (size_t i = 0; i < r->ncand; i++) {
        if ((int)i == chosen || r->cand[i].ntrials == 0) continue;
        cph_paired_cmp c;
        if (cph_race_compare(r, (size_t)chosen, i, alpha, &c) != 0) continue;
        const int slot = who[i]->algo == who[chosen]->algo;
        if (best[slot] < 0 || c.ratio < cmp[slot].ratio) {
            best[slot] = (int)i;
            cmp[slot] = c;
        }
    }
    const int slot = best[0] >= 0 ? 0 : 1;
    if (best[slot] >= 0) *margin = cmp[slot];
    return best[slot];
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
    cph_planned *plan = calloc(MAXPLAN, sizeof *plan);
    tensors t = {0};
    cp_candidate *cands = NULL;
    const cph_planned **who = NULL; /* qualified candidates' plans, by race index */
    size_t *slot_of = NULL;         /* their slot in cands */
    cph_race_result race = {0};
    cph_placer *placer = NULL;
    size_t np = 0, nc = 0, nq = 0;
    cp_status st = CP_OK;
    if (!plan || tensors_make(&t, s, rq->flip, o->seed) != 0) {
        st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for test tensors", layer->name);
        goto out;
    }
    const cp_cache_sizes fallback = cp_cache_sizes_fallback();
    const cp_cache_sizes *caches = rq->caches ? rq->caches : &fallback;
    np = cph_tune_candidates(o->max_candidates, s, rq->flip, rq->algos, rq->nalgos, caches, plan,
                             MAXPLAN, &report->unsupported);
    report->planned = (int)np;
    if (np == 0) {
        st = cpa_fail(CP_EUNSUPPORTED, msg, cap, "%s: no selected algorithm supports this layer",
                      layer->name);
        goto out;
    }
    cands = calloc(np, sizeof *cands);
    who = calloc(np, sizeof *who);
    slot_of = calloc(np, sizeof *slot_of);
    report->candidate_notes = calloc(np, sizeof *report->candidate_notes);
    if (!cands || !who || !slot_of || !report->candidate_notes) {
        st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for candidates", layer->name);
        goto out;
    }

    /* 1. Qualification.  The plan is round-robin, so every algorithm's
     * defaults are its first entries: they are checked whatever the budget. */
    size_t nfirst = rq->nalgos - (size_t)report->unsupported;
    if (nfirst > np) nfirst = np;
    for (size_t i = 0; i < np; i++) {
        if (rq->stop && *rq->stop) {
            report->interrupted = 1;
            goto out;
        }
        const double spent = cph_now() - t0;
        if (i >= nfirst && spent >= o->budget_seconds / 4.0) {
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
        memset(&cands[nc], 0, sizeof cands[nc]);
        char why[256] = "";
        switch (qualify(rq, &plan[i], &t, &cands[nc], why, sizeof why)) {
        case TRY_FAILED:
            /* Kept in the table with why (a plugin's crash names the signal). */
            report->failed++;
            snprintf(report->candidate_notes[nc], sizeof report->candidate_notes[nc],
                     "failed: %.80s", why);
            fprintf(stderr, "convpick tune: %s: %s failed: %s\n", layer->name,
                    plan[i].algo->name, why);
            nc++;
            break;
        case TRY_DISQUALIFIED:
            report->disqualified++;
            snprintf(report->candidate_notes[nc], sizeof report->candidate_notes[nc],
                     "disqualified: error %.3g above %.3g", cands[nc].rel_err, o->max_rel_err);
            nc++;
            break;
        case TRY_QUALIFIED:
            who[nq] = &plan[i];
            slot_of[nq++] = nc++;
            break;
        }
    }
    if (nq == 0) {
        st = cpa_fail(CP_ENOTFOUND, msg, cap,
                      "%s: no candidate qualified (%d disqualified, %d failed)", layer->name,
                      report->disqualified, report->failed);
        goto out;
    }

    /* 2. The race, on what the budget has left. */
    placer = o->place ? cph_placer_create(CPH_PLACE_SPAN_DEFAULT, o->seed ^ 0x5eed) : NULL;
    if (o->place && !placer) {
        st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for the trials' buffers", layer->name);
        goto out;
    }
    cph_race_opts ro = o->race;
    const size_t max_rounds = ro.max_rounds < CPH_PAIRED_MAX ? ro.max_rounds : CPH_PAIRED_MAX;
    if (o->control) {
        report->control_fma = calloc(max_rounds ? max_rounds : 1, sizeof(double));
        report->control_gemm = calloc(max_rounds ? max_rounds : 1, sizeof(double));
        if (!report->control_fma || !report->control_gemm) {
            st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for the control", layer->name);
            goto out;
        }
        ro.control = race_control;
    }
    race_ctx rc = {rq,
                   {s, rq->flip, rq->threads, caches, rq->exec, t.x, t.w, t.bias, o->timing,
                    placer},
                   who, o->control, report->control_fma, report->control_gemm};
    ro.control_arg = &rc;
    ro.budget_seconds = o->budget_seconds - (cph_now() - t0);
    ro.seed = o->seed;
    ro.stop = rq->stop;
    if (cph_race_run(&ro, nq, race_trial, &rc, &race) != 0) {
        st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory for the race", layer->name);
        goto out;
    }
    if (rq->stop && *rq->stop) {
        report->interrupted = 1;
        goto out;
    }
    report->rounds = race.rounds;
    if (o->control) report->ncontrol = race.rounds;
    report->ended_by = race.ended_by;
    for (size_t q = 0; q < nq; q++) {
        const cph_race_cand *k = &race.cand[q];
        if (k->state == CPH_RACE_FAILED && k->ntrials == 0) report->failed++;
        if (k->state == CPH_RACE_DROPPED) report->dropped++;
        if (k->ntrials > 0) report->measured++;
        race_note(k, report->candidate_notes[slot_of[q]], sizeof report->candidate_notes[0]);
        if (timing_from_trials(k, &cands[slot_of[q]]) != 0) {
            st = cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", layer->name);
            goto out;
        }
    }
    if (race.chosen < 0) {
        st = cpa_fail(CP_ENOTFOUND, msg, cap, "%s: every accurate candidate failed its trials",
                      layer->name);
        goto out;
    }

    /* 3. The choice, the runner-up and the margin.  The leader is the
     * lowest median of trial medians; should the paired ratio say its
     * runner-up is faster after all (possible within the noise), the
     * runner-up is chosen instead, once. */
    int chosen = race.chosen;
    cph_paired_cmp m = {0};
    int ru = runner_up(&race, chosen, who, ro.alpha, &m);
    if (ru >= 0 && m.ratio < 1.0) {
        chosen = ru;
        ru = runner_up(&race, chosen, who, ro.alpha, &m);
    }
    const cp_candidate *best = &cands[slot_of[chosen]];
    snprintf(entry->name, sizeof entry->name, "%s", layer->name);
    entry->shape = *s;
    entry->flip = rq->flip;
    entry->threads = rq->threads;
    entry->algo = who[chosen]->algo;
    entry->params = best->params;
    entry->timing = best->timing;
    entry->margin_lo = entry->margin_hi = NAN;
    if (ru >= 0) {
        entry->runner_up = who[ru]->algo;
        entry->runner_up_params = who[ru]->params;
        entry->margin = m.ratio > 1.0 ? m.ratio - 1.0 : 0.0;
        if (m.bounded) {
            entry->margin_lo = m.ratio_lo - 1.0;
            entry->margin_hi = m.ratio_hi - 1.0;
        }
        entry->margin_in_noise = !(m.bounded && m.ratio_lo > 1.0);
    }
    entry->ncandidates = nc;
    entry->candidates = cands;
    cands = NULL;
out:
    report->seconds = cph_now() - t0;
    if (cands) {
        for (size_t i = 0; i < np; i++) free(cands[i].samples);
        free(cands);
    }
    cph_race_free(&race);
    cph_placer_destroy(placer);
    free(who);
    free(slot_of);
    free(plan);
    tensors_free(&t);
    return st;
}
