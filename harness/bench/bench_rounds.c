/* The rows of every layer x flip at one thread count, measured in rounds of
 * trials over the whole selection (bench.h): every row of every layer, and
 * the fixed control (harness/measure/control.h) once per layer, once per
 * round, in an order shuffled anew each round (harness/tune/race.c with
 * nothing ever dropped).  A row's trials so span the whole run, as a tune
 * entry's span its race: a slow state of the machine lasting a few seconds
 * touches one of its trials, not all of them (docs/measurement.md).  Within
 * a round the rows of one layer x flip and its control run back to back (the
 * race's groups), so that round r of two rows of a layer is a pair taken
 * close together in time: the in-process A/B check (diff --within) compares
 * rows trial by trial.  A
 * trial of an algorithm or chosen row is harness/tune/trial.c's, a trial of
 * an SGEMM row the same for the reference GEMM.  The rows print when the
 * rounds end, layer by layer. */
#define _POSIX_C_SOURCE 200809L
#include <cblas.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/bench/bench_state.h"
#include "harness/cli/cli.h"
#include "harness/io/report_json.h"
#include "harness/measure/data.h"
#include "harness/measure/gemm_ref.h"
#include "harness/tune/race.h"
#include "harness/tune/trial.h"

/* The rows of a layer x flip, the algorithms', the references and the
 * chosen one: at most one per algorithm plus three. */
typedef struct layer_run {
    cph_bench_state *r;
    const cph_bench_cfg *c;
    cph_bench_trow *rows;
    size_t nrows;
    size_t *cand_of_row;  /* row index -> candidate of the suite's race, or SIZE_MAX */
    cph_trial_setup setup;
    uint64_t gseed;
    float *x, *w, *b;     /* the layer's tensors (owned) */
} layer_run;

/* Every layer x flip of one thread count and the race over all their rows. */
typedef struct suite_run {
    layer_run *lr;
    size_t nlr;
    size_t *cand_lr;      /* candidate -> layer run */
    size_t *cand_row;     /* candidate -> row of that run, SIZE_MAX: its control */
    double *wall;         /* candidate -> seconds its trials took */
    size_t ncand;
} suite_run;

int cph_bench_ctl_add(cph_bench_ctl_log *l, const cph_bench_ctl_trial *t) {
    if (l->n == l->cap) {
        const size_t cap = l->cap ? 2 * l->cap : 64;
        cph_bench_ctl_trial *v = realloc(l->t, cap * sizeof *v);
        if (!v) return -1;
        l->t = v;
        l->cap = cap;
    }
    l->t[l->n++] = *t;
    return 0;
}

static int is_winograd_algo(const cp_algo *a) { return strncmp(a->name, "winograd", 8) == 0; }

static uint64_t tensor_seed(uint64_t seed, size_t layer, int tensor) {
    uint64_t st = seed ^ ((uint64_t)layer << 20) ^ (uint64_t)tensor;
    return cph_rng_next(&st);
}

static void set_error(cph_bench_trow *w, const char *prefix, const char *why) {
    w->status = "error";
    snprintf(w->why, sizeof w->why, "%s%s", prefix, why);
}

/* An algorithm row with the algorithm's defaults; unsupported here, the
 * error (and a plugin's tolerance) in bench_error.c, plan failures in its
 * first trial. */
static void plan_algo(layer_run *lr, cph_bench_trow *w, const cp_algo *a, int64_t *wino_tb) {
    const cph_bench_row *x = &w->x;
    char why[256] = "";
    w->x.kind = CPH_ROW_ALGO;
    w->x.name = w->x.algo = a->name;
    w->a = a;
    if (!a->supports(&x->L->shape, x->flip, why, sizeof why)) {
        w->status = "unsupported";
        snprintf(w->why, sizeof w->why, "%s", why);
        return;
    }
    cp_algo_defaults(a, &x->L->shape, &lr->r->caches, &w->p);
    cp_params_format(a, &w->p, w->shown, sizeof w->shown);
    w->params = cph_json_params(a, &w->p);
    w->isa = a->isa ? a->isa(&x->L->shape, &w->p) : "-";
    const int tbi = cp_algo_param_index(a, "tile_block");
    if (is_winograd_algo(a) && tbi >= 0) *wino_tb = w->p.v[tbi];
}

/* An SGEMM reference row; its operands are made in each trial. */
static void plan_sgemm(cph_bench_trow *w, cph_row_kind kind, int64_t tb) {
    cph_gemm_ref g;
    w->x.kind = kind;
    w->x.name = kind == CPH_ROW_SGEMM ? "sgemm" : "sgemm_wino";
    w->x.algo = "";
    w->tb = tb;
    w->isa = "blas";
    /* The sizes only: operands of 1 float would do, but the helpers size them. */
    const cp_status st = kind == CPH_ROW_SGEMM
                             ? cph_gemm_ref_im2col(&w->x.L->shape, 1, &g)
                             : cph_gemm_ref_winograd(&w->x.L->shape, tb, 1, &g);
    if (st != CP_OK) {
        set_error(w, "", "cannot allocate the SGEMM operands");
        return;
    }
    if (kind == CPH_ROW_SGEMM)
        snprintf(w->shown, sizeof w->shown, "%lldx%lldx%lld x%lld", (long long)g.m,
                 (long long)g.k, (long long)g.n, (long long)(g.products * g.repeats));
    else
        snprintf(w->shown, sizeof w->shown, "16x %lldx%lldx%lld x%lld", (long long)g.m,
                 (long long)g.k, (long long)g.n, (long long)g.repeats);
    w->params = json_pack("{s:I, s:I, s:I, s:I, s:I}", "m", (json_int_t)g.m, "k", (json_int_t)g.k,
                          "n", (json_int_t)g.n, "products", (json_int_t)g.products, "repeats",
                          (json_int_t)g.repeats);
    w->flops_used = cph_gemm_ref_flops(&g);
    cph_gemm_ref_free(&g);
}

/* What the tuning table chooses, planned once through cp_table_plan (as a
 * deploying program would) to learn the algorithm and parameters its trials
 * plan. */
static void plan_chosen(layer_run *lr, cph_bench_trow *w) {
    const cph_bench_row *x = &w->x;
    char why[256] = "";
    cp_choice choice;
    cp_plan *plan = NULL;
    w->x.kind = CPH_ROW_CHOSEN;
    w->x.name = "chosen";
    w->x.algo = "";
    if (cp_table_plan(lr->r->table, &x->L->shape, x->flip, x->threads, lr->setup.w, &plan,
                      &choice, why, sizeof why) != CP_OK) {
        set_error(w, "table plan: ", why);
        return;
    }
    w->a = cp_plan_algo(plan);
    w->p = *cp_plan_params(plan);
    cp_plan_destroy(plan);
    w->x.algo = w->a->name;
    if (choice.match != CP_MATCH_EXACT)
        cph_warn("bench: %s (%d threads): the table has no exact entry: %s", x->L->name,
                 x->threads, choice.why);
    char ptext[128] = "";
    cp_params_format(w->a, &w->p, ptext, sizeof ptext);
    snprintf(w->shown, sizeof w->shown, "%s%s%s", w->a->name, ptext[0] ? " " : "", ptext);
    w->params = cph_json_params(w->a, &w->p);
    w->isa = w->a->isa ? w->a->isa(&x->L->shape, &w->p) : "-";
}

/* One trial of an SGEMM row: fresh operands from the placer, OpenBLAS
 * threading itself over the row's cores (the pool keeps it at one thread for
 * the algorithms, pool.h). */
static int sgemm_trial(layer_run *lr, const cph_bench_trow *w, double *median, double *wall) {
    const double t0 = cph_now();
    cph_gemm_ref g;
    cph_measurement m;
    *median = 0.0;
    const cp_status st =
        w->x.kind == CPH_ROW_SGEMM
            ? cph_gemm_ref_im2col_placed(&w->x.L->shape, lr->gseed, lr->setup.placer, &g)
            : cph_gemm_ref_winograd_placed(&w->x.L->shape, w->tb, lr->gseed, lr->setup.placer,
                                           &g);
    if (st != CP_OK) {
        *wall = cph_now() - t0;
        return -1;
    }
    const int blas_before = openblas_get_num_threads();
    openblas_set_num_threads(w->x.threads);
    const int rc = cph_measure(&lr->setup.timing, cph_gemm_ref_run, &g, &m);
    openblas_set_num_threads(blas_before);
    if (rc == 0) *median = m.stats.median;
    cph_measurement_free(&m);
    cph_gemm_ref_free(&g);
    *wall = cph_now() - t0;
    return rc;
}

static int trial(void *arg, size_t cand, size_t round, double *median, double *wall) {
    suite_run *su = arg;
    layer_run *lr = &su->lr[su->cand_lr[cand]];
    const size_t row = su->cand_row[cand];
    int rc;
    if (row == SIZE_MAX) {
        /* the control: both pieces, its batch as long as a row's */
        const cph_bench_row *x = &lr->rows[0].x;
        const double t0 = cph_now();
        double fma = 0.0, gemm = 0.0;
        cph_control_trial(&lr->r->control, lr->setup.timing.max_samples, &fma, &gemm);
        *wall = cph_now() - t0;
        const cph_bench_ctl_trial t = {x->li, x->flip, x->threads, round, t0 - lr->r->t0, fma, gemm};
        rc = cph_bench_ctl_add(&lr->r->ctl, &t);
        if (rc) lr->r->oom_control = 1;
        *median = gemm;
    } else {
        cph_bench_trow *w = &lr->rows[row];
        if (w->x.kind == CPH_ROW_SGEMM || w->x.kind == CPH_ROW_SGEMM_WINO) {
            rc = sgemm_trial(lr, w, median, wall);
            if (rc) set_error(w, "", "a trial of the SGEMM failed (out of memory)");
        } else {
            char why[256] = "";
            rc = cph_trial_run(&lr->setup, w->a, &w->p, median, wall, why, sizeof why);
            if (rc) set_error(w, "", why);
        }
    }
    su->wall[cand] += *wall;
    return rc;
}

/* The rows of one layer x flip: algorithms, references, the chosen one. */
static void plan_rows(layer_run *lr, const cph_bench_row *base) {
    cph_bench_state *r = lr->r;
    const cph_bench_cfg *c = lr->c;
    int64_t wino_tb = 0;
    int im2col = 0;
    lr->nrows = 0;
    for (size_t ai = 0; ai < c->sel.nalgos; ai++) {
        cph_bench_trow *w = &lr->rows[lr->nrows++];
        memset(w, 0, sizeof *w);
        w->x = *base;
        w->status = "ok";
        plan_algo(lr, w, c->sel.algos[ai], &wino_tb);
        im2col |= strcmp(c->sel.algos[ai]->name, "im2col_gemm") == 0;
    }
    const cph_row_kind refs[2] = {CPH_ROW_SGEMM, CPH_ROW_SGEMM_WINO};
    const int want[2] = {c->sgemm && im2col, c->sgemm && wino_tb > 0};
    for (int k = 0; k < 3; k++) {
        if (k < 2 ? !want[k] : !r->table) continue;
        cph_bench_trow *w = &lr->rows[lr->nrows++];
        memset(w, 0, sizeof *w);
        w->x = *base;
        w->status = "ok";
        if (k < 2)
            plan_sgemm(w, refs[k], wino_tb);
        else
            plan_chosen(lr, w);
    }
}

/* The rows of one layer x flip, in their order, from the suite's race. */
static void report_rows(layer_run *lr, const cph_race_result *race, const double *wall) {
    cph_bench_state *r = lr->r;
    for (size_t i = 0; i < lr->nrows; i++) {
        cph_bench_trow *w = &lr->rows[i];
        const size_t k = lr->cand_of_row[i];
        if (k == SIZE_MAX) {
            cph_bench_report_untimed(r, w);
            continue;
        }
        const cph_race_cand *rc = &race->cand[k];
        if (rc->state == CPH_RACE_FAILED || rc->ntrials == 0) {
            if (strcmp(w->status, "ok") == 0) set_error(w, "", "no trial ran");
            cph_bench_report_untimed(r, w);
        } else {
            cph_bench_report_trials(r, w, rc->trials, rc->ntrials, &lr->setup.timing,
                                    race->rounds, wall[k]);
        }
    }
}

cph_timing_opts cph_bench_trial_timing(const cph_bench_cfg *c) {
    cph_timing_opts t = c->timing;
    const size_t batch = c->trial_samples < c->timing.max_samples ? c->trial_samples
                                                                   : c->timing.max_samples;
    t.warmup = 1;
    t.min_samples = t.max_samples = batch ? batch : 1;
    t.max_seconds = c->timing.max_seconds / (double)(c->rounds ? c->rounds : 1);
    return t;
}

static void layer_run_free(layer_run *lr) {
    for (size_t i = 0; lr->rows && i < lr->nrows; i++) json_decref(lr->rows[i].params);
    free(lr->rows);
    free(lr->cand_of_row);
    free(lr->x);
    free(lr->w);
    free(lr->b);
}

/* A layer x flip's tensors and rows; -1 when out of memory. */
static int layer_run_init(layer_run *lr, cph_bench_state *r, const cph_bench_cfg *c, size_t li,
                          int flip_index, int threads, int pinned, const cp_exec *exec) {
    const cph_layer *L = &c->sel.layers.v[li];
    const size_t nx = cp_shape_input_elems(&L->shape), nw = cp_shape_weight_elems(&L->shape),
                 nb = (size_t)L->shape.k, maxrows = c->sel.nalgos + 3;
    memset(lr, 0, sizeof *lr);
    lr->r = r;
    lr->c = c;
    lr->gseed = tensor_seed(c->sel.seed, li, 3);
    lr->rows = calloc(maxrows, sizeof *lr->rows);
    lr->cand_of_row = calloc(maxrows, sizeof *lr->cand_of_row);
    lr->x = malloc(nx * sizeof *lr->x);
    lr->w = malloc(nw * sizeof *lr->w);
    lr->b = malloc(nb * sizeof *lr->b);
    if (!lr->rows || !lr->cand_of_row || !lr->x || !lr->w || !lr->b) return -1;
    cph_fill_uniform(lr->x, nx, tensor_seed(c->sel.seed, li, 0));
    cph_fill_uniform(lr->w, nw, tensor_seed(c->sel.seed, li, 1));
    cph_fill_uniform(lr->b, nb, tensor_seed(c->sel.seed, li, 2));
    const cph_bench_row base = {L, li, c->sel.flips[flip_index], threads, pinned, CPH_ROW_ALGO,
                                "", ""};
    lr->setup = (cph_trial_setup){&L->shape, base.flip, threads, &r->caches, exec, lr->x, lr->w,
                                  lr->b, cph_bench_trial_timing(c), r->placer};
    plan_rows(lr, &base);
    return cph_bench_errors(&lr->setup, lr->rows, lr->nrows);
}

int cph_bench_threads(cph_bench_state *r, const cph_bench_cfg *c, int threads, int pinned,
                      const cp_exec *exec) {
    const size_t nlr = c->sel.layers.n * (size_t)c->sel.nflips;
    if (nlr == 0) return 0;
    suite_run su = {calloc(nlr, sizeof(layer_run)), nlr, NULL, NULL, NULL, 0};
    int rc = su.lr ? 0 : -1;
    size_t made = 0;
    for (size_t li = 0; rc == 0 && li < c->sel.layers.n; li++)
        for (int mi = 0; rc == 0 && mi < c->sel.nflips; mi++) {
            rc = layer_run_init(&su.lr[made], r, c, li, mi, threads, pinned, exec);
            made++;
        }
    /* The candidates: every row to time, and one control per layer x flip,
     * so that the control is sampled all through each round. */
    size_t ncand = 0;
    for (size_t i = 0; rc == 0 && i < nlr; i++) {
        for (size_t k = 0; k < su.lr[i].nrows; k++)
            ncand += strcmp(su.lr[i].rows[k].status, "ok") == 0;
        ncand++;
    }
    if (rc == 0) {
        su.cand_lr = malloc(ncand * sizeof *su.cand_lr);
        su.cand_row = malloc(ncand * sizeof *su.cand_row);
        su.wall = calloc(ncand, sizeof *su.wall);
        if (!su.cand_lr || !su.cand_row || !su.wall) rc = -1;
    }
    for (size_t i = 0; rc == 0 && i < nlr; i++) {
        layer_run *lr = &su.lr[i];
        for (size_t k = 0; k < lr->nrows; k++) {
            lr->cand_of_row[k] = SIZE_MAX;
            if (strcmp(lr->rows[k].status, "ok") != 0) continue;
            lr->cand_of_row[k] = su.ncand;
            su.cand_lr[su.ncand] = i;
            su.cand_row[su.ncand++] = k;
        }
        su.cand_lr[su.ncand] = i;
        su.cand_row[su.ncand++] = SIZE_MAX;
    }
    cph_race_result race;
    memset(&race, 0, sizeof race);
    if (rc == 0) {
        cph_race_opts ro;
        cph_race_defaults(&ro);
        ro.max_rounds = c->rounds;
        ro.min_rounds = CPH_PAIRED_MAX + 1; /* nothing is ever dropped */
        /* Every round runs: each trial is capped at max_seconds / rounds, and
         * a trial always makes its warm-up run and one sample (timing.h), so
         * a row whose single run outlasts its share takes rounds x 2 runs. */
        ro.budget_seconds = INFINITY;
        ro.seed = tensor_seed(c->sel.seed, 0, 4) ^ ((uint64_t)threads << 8);
        ro.group = su.cand_lr; /* a layer x flip's rows and control back to back */
        if (cph_race_run(&ro, su.ncand, trial, &su, &race) != 0) rc = -1;
    }
    if (rc == 0)
        for (size_t i = 0; i < nlr; i++) report_rows(&su.lr[i], &race, su.wall);
    else
        cph_err("bench: out of memory for the tensors and rounds of %d thread(s)", threads);
    cph_race_free(&race);
    for (size_t i = 0; i < made; i++) layer_run_free(&su.lr[i]);
    free(su.lr);
    free(su.cand_lr);
    free(su.cand_row);
    free(su.wall);
    return rc;
}
