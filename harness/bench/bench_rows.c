/* Timing and printing the rows of bench (bench_state.h): one algorithm with
 * its default parameters, the bare SGEMM references, the table's choice. */
#define _POSIX_C_SOURCE 200809L
#include <cblas.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/bench/bench_roof.h"
#include "harness/bench/bench_state.h"
#include "harness/cli/cli.h"
#include "harness/io/report_json.h"
#include "harness/measure/data.h"
#include "harness/measure/gemm_ref.h"
#include "harness/tune/checkrun.h"

typedef struct work_arg {
    cp_plan *plan;
    const float *x, *bias;
    float *y;
    const cp_exec *exec;
    cp_status st;
} work_arg;

static int run_plan(void *p) {
    work_arg *w = p;
    w->st = cp_plan_run(w->plan, w->x, w->bias, w->y, w->exec);
    return w->st != CP_OK;
}


static int is_winograd_algo(const cp_algo *a) { return strncmp(a->name, "winograd", 8) == 0; }

static double peak_for(const cph_bench_state *r, int threads) {
    if (!r->have_roofs) return 0.0;
    if (threads == r->roofs.cores_used) return r->roofs.peak_all_gflops;
    return r->roofs.peak_1core_gflops * threads;
}


void cph_bench_print_header(const cph_bench_state *r) {
    printf("\n%-*s  %-4s  %3s  %-*s  %-26s %10s %10s %10s %6s %5s %8s %6s %-12s  %s\n",
           r->name_w, "layer", "flip", "thr", r->algo_w, "algo", "params", "median_ms",
           "ci_lo_ms", "ci_hi_ms", "+-%", "n", "GFLOP/s", "%peak", "isa", "note");
}

static void print_row(const cph_bench_state *r, const cph_bench_row *x, const char *rest) {
    printf("%-*s  %-4s  %3d  %-*s  %s\n", r->name_w, x->L->name, cph_flip_word(x->flip), x->threads,
           r->algo_w, x->name, rest);
}

/* A row that was not measured: printed, and in the JSON with its reason. */
static void row_not_timed(cph_bench_state *r, const cph_bench_row *x, const char *status,
                          const char *why) {
    char line[512];
    snprintf(line, sizeof line, "%s%s", strcmp(status, "unsupported") == 0 ? "n/a: " : "ERROR ",
             why);
    print_row(r, x, line);
    if (strcmp(status, "error") == 0) r->failures++;
    if (r->results) {
        json_t *res = cph_bench_row_json(x, status);
        if (res) json_object_set_new(res, "reason", json_string(why));
        json_array_append_new(r->results, res);
    }
    fflush(stdout);
}

/* Times fn(arg) for one row and reports it (table line, JSON, summary record).
 * params: the row's parameters as JSON (stolen; NULL = {}); ptext their text.
 * flops_used: the FLOPs the row actually does when they differ from the
 * layer's direct-equivalent FLOPs (SGEMM rows), else 0.  Returns the median,
 * or 0 when the work failed (*st tells why). */
static double time_row(cph_bench_state *r, const cph_timing_opts *to, const cph_bench_row *x,
                       cph_work_fn fn, void *arg, const cp_status *st, const char *ptext,
                       json_t *params, double flops_used, const char *isa) {
    char why[256], line[512];
    cph_measurement m;
    const int rc = cph_measure(to, fn, arg, &m);
    double median = 0;
    if (rc) {
        snprintf(why, sizeof why, "run failed: %s",
                 rc == -1 && (!st || *st == CP_OK) ? "out of memory" : cp_status_str(*st));
        row_not_timed(r, x, "error", why);
        json_decref(params);
        cph_measurement_free(&m);
        return 0;
    }
    const cph_stats *s = &m.stats;
    const double flops = cp_shape_flops(&x->L->shape);
    const double gflops = s->median > 0 ? flops / s->median * 1e-9 : 0;
    const double peak = peak_for(r, x->threads);
    char pk[16] = "-";
    if (peak > 0) snprintf(pk, sizeof pk, "%.1f", 100.0 * gflops / peak);
    snprintf(line, sizeof line, "%-26s %10.4f %10.4f %10.4f %6.2f %5zu %8.2f %6s %-12s  %s%s",
             ptext[0] ? ptext : "-", s->median * 1e3, s->ci_lo * 1e3, s->ci_hi * 1e3,
             100.0 * s->rel_ci, m.n, gflops, pk, isa, s->noisy ? "noisy" : "",
             m.stop == CPH_STOP_TIME_CAP ? (s->noisy ? ",cap" : "cap") : "");
    print_row(r, x, line);
    cph_layer_roof lr;
    const int roofed = r->have_roofs && strcmp(x->algo, "depthwise") == 0 &&
                       cph_layer_roof_of(&r->roofs, &r->caches, &x->L->shape, x->threads, &lr);
    if (roofed) /* the roof that bounds it, besides the FMA peak */
        printf("%*s  roof: %.2f MB moved at least, in %s at %.1f GB/s: %.4f ms; FMA peak: "
               "%.4f ms; bound by %s; %.1f %% of the %s roof, %.1f %% of the FMA peak\n",
               r->name_w, "", lr.bytes * 1e-6, lr.level, lr.gbs, lr.mem_s * 1e3, lr.fma_s * 1e3,
               strcmp(lr.bound, "FMA") == 0 ? "the FMA peak" : lr.level,
               100.0 * (lr.mem_s > lr.fma_s ? lr.mem_s : lr.fma_s) / s->median,
               strcmp(lr.bound, "FMA") == 0 ? "FMA" : lr.level, 100.0 * lr.fma_s / s->median);
    if (r->results) {
        json_t *res = cph_bench_row_json(x, "ok");
        if (res && roofed)
            json_object_set_new(
                res, "layer_roof",
                json_pack("{s:f, s:s, s:f, s:f, s:f, s:s, s:f}", "bytes", lr.bytes, "level",
                          lr.level, "gbs", lr.gbs, "memory_seconds", lr.mem_s, "fma_seconds",
                          lr.fma_s, "bound", lr.bound, "fraction",
                          (lr.mem_s > lr.fma_s ? lr.mem_s : lr.fma_s) / s->median));
        if (res) {
            json_object_set_new(res, "params", params ? params : json_object());
            params = NULL;
            json_object_set_new(res, "params_text", json_string(ptext));
            json_object_set_new(res, "gflops", cph_json_number(gflops));
            json_object_set_new(res, "isa", json_string(isa));
            json_object_set_new(res, "peak_gflops", peak > 0 ? json_real(peak) : json_null());
            /* which roof the fraction is against: the widest width's */
            json_object_set_new(res, "peak_bits",
                                peak > 0 ? json_integer(r->roofs.roof_bits) : json_null());
            json_object_set_new(res, "peak_fraction",
                                peak > 0 ? json_real(gflops / peak) : json_null());
            if (flops_used > 0) json_object_set_new(res, "flops_performed", json_real(flops_used));
            json_object_set_new(res, "measurement", cph_json_measurement(&m));
            json_array_append_new(r->results, res);
        }
    }
    json_decref(params);
    median = s->median;
    if (median > 0) {
        cph_bench_rec rec;
        memset(&rec, 0, sizeof rec);
        rec.layer = x->li;
        snprintf(rec.layer_name, sizeof rec.layer_name, "%s", x->L->name);
        rec.count = x->L->count;
        rec.shape = x->L->shape;
        rec.flip = x->flip;
        rec.threads = x->threads;
        rec.kind = x->kind;
        snprintf(rec.name, sizeof rec.name, "%s", x->name);
        snprintf(rec.algo, sizeof rec.algo, "%s", x->algo);
        rec.median = median;
        rec.fastest = s->min;
        rec.flops = flops;
        if (cph_bench_recs_add(&r->recs, &rec) != CP_OK) r->oom = 1;
    }
    cph_measurement_free(&m);
    fflush(stdout);
    return median;
}

/* Times an existing plan as one row. */
static void time_plan(cph_bench_state *r, const cph_timing_opts *to, const cph_bench_row *x,
                      cp_plan *plan, const float *xin, const float *bias, float *y,
                      const cp_exec *exec) {
    const cp_algo *a = cp_plan_algo(plan);
    char ptext[128] = "", shown[192];
    cp_params_format(a, cp_plan_params(plan), ptext, sizeof ptext);
    if (x->kind == CPH_ROW_CHOSEN)
        snprintf(shown, sizeof shown, "%s%s%s", a->name, ptext[0] ? " " : "", ptext);
    else
        snprintf(shown, sizeof shown, "%s", ptext);
    work_arg wa = {plan, xin, bias, y, exec, CP_OK};
    const char *isa = a->isa ? a->isa(&x->L->shape, cp_plan_params(plan)) : "-";
    time_row(r, to, x, run_plan, &wa, &wa.st, shown, cph_json_params(a, cp_plan_params(plan)), 0,
             isa);
}

/* Plans and times one algorithm on one layer x flip x thread count; the
 * tile_block of a Winograd plan goes to *wino_tb (for its SGEMM reference). */
static void bench_algo(cph_bench_state *r, const cph_timing_opts *to, cph_bench_row *x,
                       const cp_exec *exec, const cp_algo *a, const float *xin, const float *w,
                       const float *bias, float *y, int64_t *wino_tb) {
    char why[256] = "";
    x->kind = CPH_ROW_ALGO;
    x->name = x->algo = a->name;
    if (!a->supports(&x->L->shape, x->flip, why, sizeof why)) {
        row_not_timed(r, x, "unsupported", why);
        return;
    }
    /* A plugin's algorithm is checked against the oracle before it is timed. */
    const cph_check_run cr = {a, &x->L->shape, x->flip, NULL, &r->caches, x->threads, xin, w,
                              bias, exec, 0};
    if (cp_algo_plugin(a) && cph_check_against_oracle(&cr, why, sizeof why) != CP_OK) {
        char line[300];
        snprintf(line, sizeof line, "check: %s", why);
        row_not_timed(r, x, "error", line);
        return;
    }
    cp_plan *plan = NULL;
    if (cp_plan_create(a, &x->L->shape, x->flip, NULL, &r->caches, x->threads, w, &plan, why,
                       sizeof why) != CP_OK) {
        char line[300];
        snprintf(line, sizeof line, "plan: %s", why);
        row_not_timed(r, x, "error", line);
        return;
    }
    const int tbi = cp_algo_param_index(a, "tile_block");
    if (is_winograd_algo(a) && tbi >= 0) *wino_tb = cp_plan_params(plan)->v[tbi];
    time_plan(r, to, x, plan, xin, bias, y, exec);
    cp_plan_destroy(plan);
}

/* The bare SGEMM of the im2col products (kind CPH_ROW_SGEMM) or of Winograd's
 * GEMM stage with tile_block tb (CPH_ROW_SGEMM_WINO). */
static void bench_sgemm(cph_bench_state *r, const cph_timing_opts *to, cph_bench_row *x,
                        cph_row_kind kind, int64_t tb, uint64_t seed) {
    cph_gemm_ref g;
    x->kind = kind;
    x->name = kind == CPH_ROW_SGEMM ? "sgemm" : "sgemm_wino";
    x->algo = "";
    const cp_status st = kind == CPH_ROW_SGEMM ? cph_gemm_ref_im2col(&x->L->shape, seed, &g)
                                               : cph_gemm_ref_winograd(&x->L->shape, tb, seed, &g);
    if (st != CP_OK) {
        row_not_timed(r, x, "error", "cannot allocate the SGEMM operands");
        return;
    }
    char ptext[128];
    if (kind == CPH_ROW_SGEMM)
        snprintf(ptext, sizeof ptext, "%lldx%lldx%lld x%lld", (long long)g.m, (long long)g.k,
                 (long long)g.n, (long long)(g.products * g.repeats));
    else
        snprintf(ptext, sizeof ptext, "16x %lldx%lldx%lld x%lld", (long long)g.m, (long long)g.k,
                 (long long)g.n, (long long)g.repeats);
    json_t *params = json_pack("{s:I, s:I, s:I, s:I, s:I}", "m", (json_int_t)g.m, "k",
                               (json_int_t)g.k, "n", (json_int_t)g.n, "products",
                               (json_int_t)g.products, "repeats", (json_int_t)g.repeats);
    /* The bare reference is OpenBLAS threading itself over the row's cores
     * (the pool keeps it at one thread for the algorithms, pool.h). */
    const int blas_before = openblas_get_num_threads();
    openblas_set_num_threads(x->threads);
    time_row(r, to, x, cph_gemm_ref_run, &g, NULL, ptext, params, cph_gemm_ref_flops(&g), "blas");
    openblas_set_num_threads(blas_before);
    cph_gemm_ref_free(&g);
}

/* What the tuning table chooses for the layer, planned through cp_table_plan. */
static void bench_chosen(cph_bench_state *r, const cph_timing_opts *to, cph_bench_row *x,
                         const cp_exec *exec, const float *xin, const float *w, const float *bias,
                         float *y) {
    char why[256] = "";
    cp_choice choice;
    cp_plan *plan = NULL;
    x->kind = CPH_ROW_CHOSEN;
    x->name = "chosen";
    x->algo = "";
    if (cp_table_plan(r->table, &x->L->shape, x->flip, x->threads, w, &plan, &choice, why,
                      sizeof why) != CP_OK) {
        char line[300];
        snprintf(line, sizeof line, "table plan: %s", why);
        row_not_timed(r, x, "error", line);
        return;
    }
    x->algo = cp_plan_algo(plan)->name;
    if (choice.match != CP_MATCH_EXACT)
        cph_warn("bench: %s (%d threads): the table has no exact entry: %s", x->L->name,
                 x->threads, choice.why);
    time_plan(r, to, x, plan, xin, bias, y, exec);
    cp_plan_destroy(plan);
}

static uint64_t tensor_seed(uint64_t seed, size_t layer, int tensor) {
    uint64_t st = seed ^ ((uint64_t)layer << 20) ^ (uint64_t)tensor;
    return cph_rng_next(&st);
}

/* One layer at one thread count: tensors once, then every flip x algorithm. */
int cph_bench_layer(cph_bench_state *r, const cph_bench_cfg *c, size_t li, int threads, int pinned,
                       const cp_exec *exec) {
    const cph_layer *L = &c->sel.layers.v[li];
    const size_t nx = cp_shape_input_elems(&L->shape), nw = cp_shape_weight_elems(&L->shape),
                 ny = cp_shape_output_elems(&L->shape), nb = (size_t)L->shape.k;
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w), *b = malloc(nb * sizeof *b);
    float *y = malloc(ny * sizeof *y);
    int rc = 0;
    if (!x || !w || !b || !y) {
        cph_err("bench: %s: cannot allocate the tensors", L->name);
        rc = -1;
    } else {
        cph_fill_uniform(x, nx, tensor_seed(c->sel.seed, li, 0));
        cph_fill_uniform(w, nw, tensor_seed(c->sel.seed, li, 1));
        cph_fill_uniform(b, nb, tensor_seed(c->sel.seed, li, 2));
        for (int mi = 0; mi < c->sel.nflips; mi++) {
            cph_bench_row rx = {L, li, c->sel.flips[mi], threads, pinned, CPH_ROW_ALGO, "", ""};
            int64_t wino_tb = 0;
            int im2col = 0;
            for (size_t ai = 0; ai < c->sel.nalgos; ai++) {
                bench_algo(r, &c->timing, &rx, exec, c->sel.algos[ai], x, w, b, y, &wino_tb);
                im2col |= strcmp(c->sel.algos[ai]->name, "im2col_gemm") == 0;
            }
            const uint64_t gseed = tensor_seed(c->sel.seed, li, 3);
            if (c->sgemm && im2col) bench_sgemm(r, &c->timing, &rx, CPH_ROW_SGEMM, 0, gseed);
            if (c->sgemm && wino_tb > 0)
                bench_sgemm(r, &c->timing, &rx, CPH_ROW_SGEMM_WINO, wino_tb, gseed);
            if (r->table) bench_chosen(r, &c->timing, &rx, exec, x, w, b, y);
        }
    }
    free(x);
    free(w);
    free(b);
    free(y);
    return rc;
}
