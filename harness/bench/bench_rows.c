/* Printing and recording the rows of bench (bench_state.h): one algorithm
 * with its default parameters, the bare SGEMM references, the table's choice,
 * each from its trial medians (bench_rounds.c measures them). */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/bench/bench_roof.h"
#include "harness/bench/bench_state.h"
#include "harness/cli/cli.h"
#include "harness/io/report_json.h"

static double peak_for(const cph_bench_state *r, int threads) {
    if (!r->have_roofs) return 0.0;
    if (threads == r->roofs.cores_used) return r->roofs.peak_all_gflops;
    return r->roofs.peak_1core_gflops * threads;
}

void cph_bench_print_header(const cph_bench_state *r) {
    printf("\n%-*s  %-4s  %3s  %-*s  %-26s %10s %9s %10s %10s %6s %5s %8s %6s %-12s  %s\n",
           r->name_w, "layer", "flip", "thr", r->algo_w, "algo", "params", "median_ms",
           "rel_err", "ci_lo_ms", "ci_hi_ms", "+-%", "n", "GFLOP/s", "%peak", "isa", "note");
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

void cph_bench_report_untimed(cph_bench_state *r, cph_bench_trow *w) {
    row_not_timed(r, &w->x, w->status, w->why);
    json_decref(w->params);
    w->params = NULL;
}

/* The summary record of a measured row (for the targets and the totals). */
static void record(cph_bench_state *r, const cph_bench_row *x, double median, double fastest) {
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
    rec.fastest = fastest;
    rec.flops = cp_shape_flops(&x->L->shape);
    if (cph_bench_recs_add(&r->recs, &rec) != CP_OK) r->oom = 1;
}

void cph_bench_report_trials(cph_bench_state *r, cph_bench_trow *w, const double *trials,
                             size_t n, const cph_timing_opts *to, size_t rounds, double wall) {
    const cph_bench_row *x = &w->x;
    cph_stats s;
    cph_stats_compute(trials, n, to->confidence, &s);
    const double flops = cp_shape_flops(&x->L->shape);
    const double gflops = s.median > 0 ? flops / s.median * 1e-9 : 0;
    const double peak = peak_for(r, x->threads);
    char pk[16] = "-", err[16] = "-", line[512];
    if (peak > 0) snprintf(pk, sizeof pk, "%.1f", 100.0 * gflops / peak);
    if (w->have_err) snprintf(err, sizeof err, "%.2e", w->err.rel_err);
    snprintf(line, sizeof line, "%-26s %10.4f %9s %10.4f %10.4f %6.2f %5zu %8.2f %6s %-12s  %s",
             w->shown[0] ? w->shown : "-", s.median * 1e3, err, s.ci_lo * 1e3, s.ci_hi * 1e3,
             100.0 * s.rel_ci, n, gflops, pk, w->isa, s.noisy ? "noisy" : "");
    print_row(r, x, line);
    cph_layer_roof lr;
    const int roofed = r->have_roofs && strcmp(x->algo, "depthwise") == 0 &&
                       cph_layer_roof_of(&r->roofs, &r->caches, &x->L->shape, x->threads, &lr);
    if (roofed) /* the roof that bounds it, besides the FMA peak */
        printf("%*s  roof: %.2f MB moved at least, in %s at %.1f GB/s: %.4f ms; FMA peak: "
               "%.4f ms; bound by %s; %.1f %% of the %s roof, %.1f %% of the FMA peak\n",
               r->name_w, "", lr.bytes * 1e-6, lr.level, lr.gbs, lr.mem_s * 1e3, lr.fma_s * 1e3,
               strcmp(lr.bound, "FMA") == 0 ? "the FMA peak" : lr.level,
               100.0 * (lr.mem_s > lr.fma_s ? lr.mem_s : lr.fma_s) / s.median,
               strcmp(lr.bound, "FMA") == 0 ? "FMA" : lr.level, 100.0 * lr.fma_s / s.median);
    if (r->results) {
        json_t *res = cph_bench_row_json(x, "ok");
        if (res && roofed)
            json_object_set_new(
                res, "layer_roof",
                json_pack("{s:f, s:s, s:f, s:f, s:f, s:s, s:f}", "bytes", lr.bytes, "level",
                          lr.level, "gbs", lr.gbs, "memory_seconds", lr.mem_s, "fma_seconds",
                          lr.fma_s, "bound", lr.bound, "fraction",
                          (lr.mem_s > lr.fma_s ? lr.mem_s : lr.fma_s) / s.median));
        if (res) {
            json_object_set_new(res, "params", w->params ? w->params : json_object());
            w->params = NULL;
            json_object_set_new(res, "params_text", json_string(w->shown));
            json_object_set_new(res, "gflops", cph_json_number(gflops));
            json_object_set_new(res, "isa", json_string(w->isa));
            /* null: an SGEMM row, or outputs that were not finite */
            json_object_set_new(res, "rel_err", w->have_err ? cph_json_number(w->err.rel_err)
                                                            : json_null());
            json_object_set_new(res, "peak_gflops", peak > 0 ? json_real(peak) : json_null());
            /* which roof the fraction is against: the widest width's */
            json_object_set_new(res, "peak_bits",
                                peak > 0 ? json_integer(r->roofs.roof_bits) : json_null());
            json_object_set_new(res, "peak_fraction",
                                peak > 0 ? json_real(gflops / peak) : json_null());
            if (w->flops_used > 0)
                json_object_set_new(res, "flops_performed", json_real(w->flops_used));
            json_object_set_new(res, "measurement",
                                cph_json_trials(trials, n, &s, to, rounds, r->placer != NULL, wall));
            json_array_append_new(r->results, res);
        }
    }
    json_decref(w->params);
    w->params = NULL;
    if (s.median > 0) record(r, x, s.median, s.min);
    fflush(stdout);
}
