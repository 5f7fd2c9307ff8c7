/* convpick bench: time every selected algorithm on every selected layer, mode
 * and thread count, and report the statistics without choosing.
 *
 * Each algorithm runs through a plan (cp_plan_create / cp_plan_run) with its
 * default parameters for this machine's caches; the harness only times it.
 * Beside the algorithms, in the same run and with the same statistics: the
 * bare SGEMM of the im2col products ("sgemm") and of Winograd's GEMM stage
 * ("sgemm_wino", gemm_ref.h), and with --table what the tuning table chooses
 * ("chosen", through cp_table_plan).  Then the suite summaries
 * (bench_summary.h): each performance target, PASS / MISS and by how much.
 * Thread counts are the outer loop because a pool pins its workers (the
 * calling thread included) and only one pool lives at a time.
 *
 * --json FILE writes, atomically, format "convpick-bench-results" version 2
 * (version 1 files still read: harness/io/results_migrate.c).  The shared
 * objects (shape, flipped, params, timing settings, device) are spelled as
 * in tuning tables (docs/table-format.md, "Shared objects"):
 *   {
 *     "format": "convpick-bench-results", "version": 2,
 *     "created": "2026-12-01T22:00:00Z",
 *     "convpick": {"version": "0.1.0", "git": "..."},
 *     "command_line": ["bench", ...],
 *     "device": {device object + "algorithm_caches", "llc_total_bytes", "roofs"},
 *     "roofs": null | {"peak_1core_gflops", "peak_all_gflops", "bw_1core_gbs",
 *                      "bw_all_gbs", "ridge_1core", "ridge_all", "cores_used",
 *                      "budget_seconds"},
 *     "settings": {"timing": {timing settings object},
 *                  "threads": [1, 2], "flipped": [false, true], "seed": 1,
 *                  "caches": {"l1d", "l2", "l3", "line"}},
 *     "roofs_end": null | {the same, measured after the rows},
 *     "results": [
 *       {"layer": "conv1", "layer_count": 1, "shape": {shape object},
 *        "flipped": false, "threads": 1, "pinned": true, "algo": "direct",
 *        "kind": "algorithm" | "reference" | "chosen",
 *        "chosen_algo": "blocked" (chosen rows), "flops_performed": 2mnk (SGEMM rows),
 *        "status": "ok" | "unsupported" | "error", "reason": "..." (not ok),
 *        "params": {"kb": 64}, "params_text": "kb=64", "flops": 2.3e9,
 *        "gflops": 41.2, "peak_gflops": 90.1 | null, "peak_fraction": 0.457 | null,
 *        "measurement": {measurement object, report_json.h}}      (ok only)
 *     ],
 *     "summaries": [{"id": "blocked_peak", "target_text", "comparison": ">=",
 *                    "target": 0.7, "value", "unit", "verdict": "pass"|"miss"|"n/a",
 *                    "missed_by": relative | null, "threads", "base_threads",
 *                    "flipped", "note", "layers": [{"layer", "value", "verdict"?}]}]
 *   }
 * Fields are only ever added within a version; readers ignore unknown keys.
 * The same structure as a JSON Schema: tests/data/bench_results.schema.json
 * (tests/cli_bench.sh validates every file it makes against it). */
#define _POSIX_C_SOURCE 200809L
#include <cblas.h>
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "harness/bench/bench_summary.h"
#include "harness/cli/cli.h"
#include "harness/machine/membudget.h"
#include "convpick/table.h"
#include "harness/measure/data.h"
#include "harness/measure/gemm_ref.h"
#include "harness/machine/machine.h"
#include "harness/machine/pool.h"
#include "harness/io/rawfile.h"
#include "harness/io/report_json.h"
#include "harness/select/select.h"
#include "harness/measure/timing.h"

#define BENCH_MAX_THREADS 256
/* Roofs are the best of several runs: on a shared machine more runs give
 * more chances of an undisturbed one.  They are measured again at the end,
 * and a disagreement of more than 10 % is reported (the machine's load
 * changed during the run). */
#define BENCH_ROOF_SECONDS 1.0
#define BENCH_ROOF_DRIFT 0.10

static void usage(FILE *f) {
    fprintf(f,
            "usage: convpick bench [OPTIONS]\n\n"
            "Times every selected algorithm (default parameters for this machine's caches)\n"
            "on each layer, mode and thread count, and prints the median time with its\n"
            "distribution-free confidence interval, GFLOP/s (direct-equivalent FLOPs) and\n"
            "the fraction of the measured FMA peak.  Nothing is chosen or written unless\n"
            "--json is given.\n\n"
            "options:\n%s"
            "                    (bench's default mode: xcorr)\n"
            "  --threads LIST    thread counts, e.g. 1,2 or 1-4 or all (default 1)\n"
            "  --cold            stream 2x the last-level cache before every sample\n"
            "  --target-ci PCT   stop when the 95 %% CI of the median is within +-PCT %%\n"
            "                    of it (default 2)\n"
            "  --max-seconds S   cap per measurement, warm-up included (default 2)\n"
            "  --max-samples N   cap on samples per measurement (default 1000)\n"
            "  --no-roofs        do not measure the FMA peak and bandwidth first\n"
            "  --json FILE       write every sample and setting (format\n"
            "                    convpick-bench-results, version 1)\n"
            "%s"
            "  --table FILE      also time what this tuning table chooses for each layer\n"
            "                    (through cp_table_plan, as a deploying program would): row\n"
            "                    'chosen', compared in the summaries\n"
            "  --no-sgemm        skip the bare SGEMM reference rows ('sgemm': the im2col\n"
            "                    products; 'sgemm_wino': Winograd's 16 GEMMs)\n"
            "  -h, --help        this text\n\n"
            "The peak for t threads is the all-core peak when t is the number of cores\n"
            "measured together, else the one-core peak times t.  FLOPs are those of the\n"
            "direct method, so an algorithm that does less arithmetic (Winograd) can\n"
            "exceed 100 %%.  After the rows, the suite summaries: each performance\n"
            "target with the figure measured in this run, PASS or MISS, and by how much\n"
            "it was missed (docs/benchmark.md).  'noisy' marks a\n"
            "measurement whose interquartile range exceeds 10 %% of the median or whose\n"
            "CI missed the target; 'cap' one that --max-seconds stopped.\n\n"
            "exit status: 0 done, 1 an algorithm failed to plan or run (or the results\n"
            "could not be written), 2 bad usage or input (an unwritable --json directory\n"
            "is found before anything runs)\n",
            cph_selection_help, cph_membudget_help);
}

enum {
    OPT_THREADS = 1,
    OPT_COLD,
    OPT_TARGET,
    OPT_MAXSEC,
    OPT_MAXSAMP,
    OPT_NOROOFS,
    OPT_JSON,
    OPT_TABLE,
    OPT_NOSGEMM
};

typedef struct bench_cfg {
    cph_selection sel;
    cph_timing_opts timing;
    const char *threads_arg;
    const char *json_path;
    const char *table_path;
    int roofs;
    uint64_t max_memory; /* 0: the default budget */
    int sgemm;
} bench_cfg;

typedef struct bench_run {
    cph_machine m;
    cp_cache_sizes caches;
    cph_roofs roofs;
    int have_roofs;
    cph_roofs roofs_end; /* measured again after the rows */
    int have_roofs_end;
    int threads[BENCH_MAX_THREADS];
    int nthreads;
    json_t *results; /* NULL without --json */
    cph_bench_recs recs; /* every measured row, for the summaries */
    cp_table *table;     /* --table, or NULL */
    int oom;
    int failures;
    int name_w, algo_w;
} bench_run;

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

static const char *flip_name(cp_flip m) { return m == CP_CONV ? "conv" : "xcorr"; }

static int is_winograd_algo(const cp_algo *a) { return strncmp(a->name, "winograd", 8) == 0; }

static int parse_double(const char *s, double lo, double hi, double *out) {
    char *end;
    errno = 0;
    const double v = strtod(s, &end);
    if (errno || end == s || *end || !(v >= lo && v <= hi)) return -1;
    *out = v;
    return 0;
}

/* 0 when the directory that will hold path exists and is writable, so that a
 * long run does not end in an unwritable path. */
static int check_output_dir(const char *path) {
    char msg[512];
    if (cph_check_output_dir(path, msg, sizeof msg) != CP_OK) {
        cph_err("bench: --json %s: %s", path, msg);
        return -1;
    }
    return 0;
}

/* Parses the command line; returns -1 to continue, else an exit code. */
static int parse_args(int argc, char **argv, bench_cfg *c) {
    static const struct option longopts[] = {
        CPH_SELECTION_LONGOPTS,
        {"threads", required_argument, NULL, OPT_THREADS},
        {"cold", no_argument, NULL, OPT_COLD},
        {"target-ci", required_argument, NULL, OPT_TARGET},
        {"max-seconds", required_argument, NULL, OPT_MAXSEC},
        {"max-samples", required_argument, NULL, OPT_MAXSAMP},
        {"no-roofs", no_argument, NULL, OPT_NOROOFS},
        {"json", required_argument, NULL, OPT_JSON},
        CPH_MEMBUDGET_LONGOPT,
        {"table", required_argument, NULL, OPT_TABLE},
        {"no-sgemm", no_argument, NULL, OPT_NOSGEMM},
        {"help", no_argument, NULL, 'h'},
        {NULL, 0, NULL, 0},
    };
    char msg[512];
    int opt;
    double v;
    opterr = 0;
    while ((opt = getopt_long(argc, argv, "h", longopts, NULL)) != -1) {
        switch (opt) {
        case 'h': usage(stdout); return CPH_EXIT_OK;
        case OPT_THREADS: c->threads_arg = optarg; break;
        case OPT_COLD: c->timing.cold = 1; break;
        case OPT_TARGET:
            if (parse_double(optarg, 1e-6, 100.0, &v)) {
                cph_err("bench: --target-ci '%s': expected a percentage in (0, 100]", optarg);
                return CPH_EXIT_USAGE;
            }
            c->timing.target_rel_ci = v / 100.0;
            break;
        case OPT_MAXSEC:
            if (parse_double(optarg, 1e-6, 1e6, &v)) {
                cph_err("bench: --max-seconds '%s': expected seconds > 0", optarg);
                return CPH_EXIT_USAGE;
            }
            c->timing.max_seconds = v;
            break;
        case OPT_MAXSAMP:
            if (parse_double(optarg, 1.0, 1e7, &v) || v != floor(v)) {
                cph_err("bench: --max-samples '%s': expected an integer >= 1", optarg);
                return CPH_EXIT_USAGE;
            }
            c->timing.max_samples = (size_t)v;
            if (c->timing.min_samples > c->timing.max_samples)
                c->timing.min_samples = c->timing.max_samples;
            break;
        case OPT_NOROOFS: c->roofs = 0; break;
        case OPT_JSON: c->json_path = optarg; break;
        case CPH_OPT_MAX_MEMORY:
            if (cph_mem_parse(optarg, strchr(optarg, '%') ? cph_mem_machine_bytes() : 0,
                              &c->max_memory, msg, sizeof msg) != CP_OK) {
                cph_err("bench: %s", msg);
                return CPH_EXIT_USAGE;
            }
            break;
        case OPT_TABLE: c->table_path = optarg; break;
        case OPT_NOSGEMM: c->sgemm = 0; break;
        default:
            if (opt < CPH_OPT_SHAPE) return cph_usage_error("bench");
            if (cph_selection_option(&c->sel, opt, optarg, msg, sizeof msg) != CP_OK) {
                cph_err("%s", msg);
                return CPH_EXIT_USAGE;
            }
        }
    }
    if (optind < argc) {
        cph_err("bench: unexpected argument '%s' (see convpick bench --help)", argv[optind]);
        return CPH_EXIT_USAGE;
    }
    if (c->json_path && check_output_dir(c->json_path)) return CPH_EXIT_USAGE;
    static const cp_flip xcorr[] = {CP_XCORR};
    if (cph_selection_finish(&c->sel, xcorr, 1, msg, sizeof msg) != CP_OK) {
        cph_err("bench: %s", msg);
        return CPH_EXIT_USAGE;
    }
    return -1;
}

static double peak_for(const bench_run *r, int threads) {
    if (!r->have_roofs) return 0.0;
    if (threads == r->roofs.cores_used) return r->roofs.peak_all_gflops;
    return r->roofs.peak_1core_gflops * threads;
}

/* Where one row stands: the layer, mode, thread count and what is timed. */
typedef struct row_ctx {
    const cph_layer *L;
    size_t li;
    cp_flip flip;
    int threads, pinned;
    cph_row_kind kind;
    const char *name; /* printed in the algo column */
    const char *algo; /* the algorithm behind the row, "" for SGEMM rows */
} row_ctx;

static const char *kind_name(cph_row_kind k) {
    return k == CPH_ROW_ALGO ? "algorithm" : k == CPH_ROW_CHOSEN ? "chosen" : "reference";
}

static void print_row(const bench_run *r, const row_ctx *x, const char *rest) {
    printf("%-*s  %-5s  %3d  %-*s  %s\n", r->name_w, x->L->name, flip_name(x->flip), x->threads,
           r->algo_w, x->name, rest);
}

static json_t *result_base(const row_ctx *x, const char *status) {
    json_t *o = json_pack("{s:s, s:i, s:o, s:o, s:i, s:b, s:s, s:s, s:s, s:o}", "layer",
                          x->L->name, "layer_count", x->L->count, "shape",
                          cph_json_shape(&x->L->shape), "flipped", cph_json_flipped(x->flip), "threads",
                          x->threads, "pinned", x->pinned, "algo", x->name, "kind",
                          kind_name(x->kind), "status", status, "flops",
                          cph_json_number(cp_shape_flops(&x->L->shape)));
    if (o && x->kind == CPH_ROW_CHOSEN) json_object_set_new(o, "chosen_algo", json_string(x->algo));
    return o;
}

/* A row that was not measured: printed, and in the JSON with its reason. */
static void row_not_timed(bench_run *r, const row_ctx *x, const char *status, const char *why) {
    char line[512];
    snprintf(line, sizeof line, "%s%s", strcmp(status, "unsupported") == 0 ? "n/a: " : "ERROR ",
             why);
    print_row(r, x, line);
    if (strcmp(status, "error") == 0) r->failures++;
    if (r->results) {
        json_t *res = result_base(x, status);
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
static double time_row(bench_run *r, const cph_timing_opts *to, const row_ctx *x,
                       cph_work_fn fn, void *arg, const cp_status *st, const char *ptext,
                       json_t *params, double flops_used) {
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
    snprintf(line, sizeof line, "%-26s %10.4f %10.4f %10.4f %6.2f %5zu %8.2f %6s  %s%s",
             ptext[0] ? ptext : "-", s->median * 1e3, s->ci_lo * 1e3, s->ci_hi * 1e3,
             100.0 * s->rel_ci, m.n, gflops, pk, s->noisy ? "noisy" : "",
             m.stop == CPH_STOP_TIME_CAP ? (s->noisy ? ",cap" : "cap") : "");
    print_row(r, x, line);
    if (r->results) {
        json_t *res = result_base(x, "ok");
        if (res) {
            json_object_set_new(res, "params", params ? params : json_object());
            params = NULL;
            json_object_set_new(res, "params_text", json_string(ptext));
            json_object_set_new(res, "gflops", cph_json_number(gflops));
            json_object_set_new(res, "peak_gflops", peak > 0 ? json_real(peak) : json_null());
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
static void time_plan(bench_run *r, const cph_timing_opts *to, const row_ctx *x, cp_plan *plan,
                      const float *xin, const float *bias, float *y, const cp_exec *exec) {
    const cp_algo *a = cp_plan_algo(plan);
    char ptext[128] = "", shown[192];
    cp_params_format(a, cp_plan_params(plan), ptext, sizeof ptext);
    if (x->kind == CPH_ROW_CHOSEN)
        snprintf(shown, sizeof shown, "%s%s%s", a->name, ptext[0] ? " " : "", ptext);
    else
        snprintf(shown, sizeof shown, "%s", ptext);
    work_arg wa = {plan, xin, bias, y, exec, CP_OK};
    time_row(r, to, x, run_plan, &wa, &wa.st, shown, cph_json_params(a, cp_plan_params(plan)), 0);
}

/* Plans and times one algorithm on one layer x mode x thread count; the
 * tile_block of a Winograd plan goes to *wino_tb (for its SGEMM reference). */
static void bench_algo(bench_run *r, const cph_timing_opts *to, row_ctx *x, const cp_exec *exec,
                       const cp_algo *a, const float *xin, const float *w, const float *bias,
                       float *y, int64_t *wino_tb) {
    char why[256] = "";
    x->kind = CPH_ROW_ALGO;
    x->name = x->algo = a->name;
    if (!a->supports(&x->L->shape, x->flip, why, sizeof why)) {
        row_not_timed(r, x, "unsupported", why);
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
static void bench_sgemm(bench_run *r, const cph_timing_opts *to, row_ctx *x, cph_row_kind kind,
                        int64_t tb, uint64_t seed) {
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
    time_row(r, to, x, cph_gemm_ref_run, &g, NULL, ptext, params, cph_gemm_ref_flops(&g));
    openblas_set_num_threads(blas_before);
    cph_gemm_ref_free(&g);
}

/* What the tuning table chooses for the layer, planned through cp_table_plan. */
static void bench_chosen(bench_run *r, const cph_timing_opts *to, row_ctx *x, const cp_exec *exec,
                         const float *xin, const float *w, const float *bias, float *y) {
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

/* One layer at one thread count: tensors once, then every mode x algorithm. */
static int bench_layer(bench_run *r, const bench_cfg *c, size_t li, int threads, int pinned,
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
            row_ctx rx = {L, li, c->sel.flips[mi], threads, pinned, CPH_ROW_ALGO, "", ""};
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

static json_t *roofs_json(const bench_run *r, int end) {
    if (end ? !r->have_roofs_end : !r->have_roofs) return json_null();
    const cph_roofs *f = end ? &r->roofs_end : &r->roofs;
    return json_pack("{s:o, s:o, s:o, s:o, s:o, s:o, s:i, s:o}", "peak_1core_gflops",
                     cph_json_number(f->peak_1core_gflops), "peak_all_gflops",
                     cph_json_number(f->peak_all_gflops), "bw_1core_gbs",
                     cph_json_number(f->bw_1core_gbs), "bw_all_gbs",
                     cph_json_number(f->bw_all_gbs), "ridge_1core",
                     cph_json_number(f->ridge_1core), "ridge_all", cph_json_number(f->ridge_all),
                     "cores_used", f->cores_used, "budget_seconds",
                     json_real(BENCH_ROOF_SECONDS));
}

static json_t *document(const bench_run *r, const bench_cfg *c, int argc, char **argv,
                        json_t *summaries) {
    char when[32] = "";
    const time_t now = time(NULL);
    struct tm tm;
    if (gmtime_r(&now, &tm)) strftime(when, sizeof when, "%Y-%m-%dT%H:%M:%SZ", &tm);
    json_t *cmd = json_array(), *thr = json_array(), *flips = json_array();
    for (int i = 0; i < argc; i++) json_array_append_new(cmd, json_string(argv[i]));
    for (int i = 0; i < r->nthreads; i++) json_array_append_new(thr, json_integer(r->threads[i]));
    for (int i = 0; i < c->sel.nflips; i++)
        json_array_append_new(flips, cph_json_flipped(c->sel.flips[i]));
    json_t *settings = json_pack(
        "{s:o, s:o, s:o, s:I, s:{s:I, s:I, s:I, s:I}}", "timing",
        cph_json_timing_opts(&c->timing), "threads", thr, "flipped", flips, "seed",
        (json_int_t)c->sel.seed, "caches", "l1d", (json_int_t)r->caches.l1d, "l2",
        (json_int_t)r->caches.l2, "l3", (json_int_t)r->caches.l3, "line",
        (json_int_t)r->caches.line);
    json_t *device = cph_machine_to_json(&r->m, NULL);
    return json_pack("{s:s, s:i, s:s, s:{s:s, s:s}, s:o, s:o, s:o, s:o, s:O, s:o}", "format",
                     CPH_BENCH_FORMAT, "version", CPH_BENCH_VERSION, "created", when, "convpick",
                     "version", CONVPICK_VERSION, "git", CP_GIT_REV, "command_line", cmd,
                     "device", device ? device : json_null(), "roofs", roofs_json(r, 0),
                     "settings", settings, "results", r->results, "summaries",
                     summaries ? summaries : json_null());
}

static int bench(bench_cfg *c, int argc, char **argv) {
    bench_run *r = calloc(1, sizeof *r);
    if (!r) {
        cph_err("bench: out of memory");
        return CPH_EXIT_FAIL;
    }
    char msg[512] = "";
    int rc = CPH_EXIT_OK;
    if (cph_machine_detect(&r->m, NULL, msg, sizeof msg) != CP_OK) {
        cph_err("bench: cannot describe this machine: %s", msg);
        free(r);
        return CPH_EXIT_FAIL;
    }
    r->nthreads = c->threads_arg ? cph_parse_threads(c->threads_arg, r->m.cores, r->threads,
                                                     BENCH_MAX_THREADS, msg, sizeof msg)
                                 : (r->threads[0] = 1, 1);
    if (r->nthreads < 1) {
        cph_err("bench: --threads '%s': %s", c->threads_arg, msg);
        rc = CPH_EXIT_USAGE;
        goto done;
    }
    int most = 1;
    for (int i = 0; i < r->nthreads; i++)
        if (r->threads[i] > most) most = r->threads[i];
    if (cph_mem_check_selection("bench", &c->sel, most, 0,
                                c->max_memory ? c->max_memory : cph_mem_default()) != 0) {
        rc = CPH_EXIT_USAGE;
        goto done;
    }
    r->caches = cph_machine_caches(&r->m);
    if (c->table_path) {
        if (cp_table_load(c->table_path, 0, &r->table, msg, sizeof msg) != CP_OK) {
            cph_err("bench: --table: %s", msg);
            rc = CPH_EXIT_USAGE;
            goto done;
        }
        if (!cp_table_device_matches(r->table))
            cph_warn("bench: --table %s was tuned on another device (%s)", c->table_path,
                     cp_table_fingerprint(r->table));
    }
    if (c->timing.cold) c->timing.flush_bytes = 2 * cph_machine_llc_total(&r->m);
    if (c->json_path && !(r->results = json_array())) {
        cph_err("bench: out of memory");
        rc = CPH_EXIT_FAIL;
        goto done;
    }
    printf("bench: %s, %d cores, device %s\n", r->m.model, r->m.cores, r->m.fingerprint);
    if (c->roofs) {
        if (cph_roofs_measure(&r->m, BENCH_ROOF_SECONDS, &r->roofs, msg, sizeof msg) == CP_OK) {
            r->have_roofs = 1;
            printf("roofs: FMA peak %.1f GFLOP/s (1 core), %.1f GFLOP/s (%d cores); "
                   "bandwidth %.1f / %.1f GB/s\n",
                   r->roofs.peak_1core_gflops, r->roofs.peak_all_gflops, r->roofs.cores_used,
                   r->roofs.bw_1core_gbs, r->roofs.bw_all_gbs);
            const double ratio = r->roofs.peak_all_gflops / r->roofs.peak_1core_gflops;
            if (r->roofs.cores_used > 1 && ratio < 0.9 * r->roofs.cores_used)
                printf("roofs: the %d-core peak is only %.2fx the 1-core peak: other work is "
                       "running on these cores, so multi-thread rows are slowed by it\n",
                       r->roofs.cores_used, ratio);
        } else {
            cph_warn("bench: roofs not measured (%s): no %% of peak", msg);
        }
    }
    printf("timing: %s, warm-up %d, samples %zu..%zu, target +-%.2g %% at %.0f %%, cap %.3g s%s\n",
           cph_clock_name(), c->timing.warmup, c->timing.min_samples, c->timing.max_samples,
           100.0 * c->timing.target_rel_ci, 100.0 * c->timing.confidence, c->timing.max_seconds,
           c->timing.cold ? ", cold caches" : "");
    r->name_w = 5;
    r->algo_w = 10; /* "sgemm_wino" */
    for (size_t i = 0; i < c->sel.layers.n; i++) {
        const int len = (int)strlen(c->sel.layers.v[i].name);
        if (len > r->name_w) r->name_w = len;
    }
    for (size_t i = 0; i < c->sel.nalgos; i++) {
        const int len = (int)strlen(c->sel.algos[i]->name);
        if (len > r->algo_w) r->algo_w = len;
    }
    printf("\n%-*s  %-5s  %3s  %-*s  %-26s %10s %10s %10s %6s %5s %8s %6s  %s\n", r->name_w,
           "layer", "mode", "thr", r->algo_w, "algo", "params", "median_ms", "ci_lo_ms",
           "ci_hi_ms", "+-%", "n", "GFLOP/s", "%peak", "note");
    for (int ti = 0; ti < r->nthreads && rc == CPH_EXIT_OK; ti++) {
        cph_pool *pool = NULL;
        int pinned = 0;
        msg[0] = '\0';
        if (cph_pool_create(&r->m, r->threads[ti], &pool, &pinned, msg, sizeof msg) != CP_OK) {
            cph_err("bench: cannot start %d worker(s): %s", r->threads[ti], msg);
            rc = CPH_EXIT_FAIL;
            break;
        }
        if (!pinned && msg[0]) cph_warn("bench: %s", msg);
        const cp_exec exec = cph_pool_exec(pool);
        for (size_t li = 0; li < c->sel.layers.n && rc == CPH_EXIT_OK; li++)
            if (bench_layer(r, c, li, r->threads[ti], pinned, &exec)) rc = CPH_EXIT_FAIL;
        cph_pool_destroy(pool);
    }
    if (rc == CPH_EXIT_OK && r->failures) rc = CPH_EXIT_FAIL;
    if (r->have_roofs &&
        cph_roofs_measure(&r->m, BENCH_ROOF_SECONDS, &r->roofs_end, msg, sizeof msg) == CP_OK) {
        r->have_roofs_end = 1;
        const double a = r->roofs.peak_1core_gflops, b = r->roofs_end.peak_1core_gflops;
        printf("\nroofs at the end: FMA peak %.1f GFLOP/s (1 core), %.1f GFLOP/s (%d cores)%s\n",
               b, r->roofs_end.peak_all_gflops, r->roofs_end.cores_used,
               fabs(b - a) > BENCH_ROOF_DRIFT * a ? " -- differs by more than 10 % from the "
                                                    "start: the machine's load changed"
                                              : "");
        const double aa = r->roofs.peak_all_gflops, ba = r->roofs_end.peak_all_gflops;
        if (fabs(ba - aa) > BENCH_ROOF_DRIFT * aa)
            printf("roofs: the %d-core peak moved from %.1f to %.1f GFLOP/s during the run\n",
                   r->roofs_end.cores_used, aa, ba);
    }
    cph_summary *sums = NULL, *fast = NULL;
    size_t nsums = 0;
    if (r->oom) {
        cph_err("bench: out of memory recording the rows: no summaries");
        rc = CPH_EXIT_FAIL;
    } else {
        nsums = cph_bench_summarize(&r->recs, r->have_roofs ? r->roofs.peak_1core_gflops : 0,
                                    r->m.cores, &sums);
        cph_bench_recs fr;
        size_t nfast = (size_t)-1;
        if (nsums != (size_t)-1 && cph_bench_recs_fastest(&r->recs, &fr) == CP_OK) {
            nfast = cph_bench_summarize(&fr, r->have_roofs ? r->roofs.peak_1core_gflops : 0,
                                        r->m.cores, &fast);
            cph_bench_recs_free(&fr);
        }
        if (nsums == (size_t)-1 || nfast != nsums) {
            cph_err("bench: out of memory computing the summaries");
            if (nsums != (size_t)-1) cph_summaries_free(sums, nsums);
            if (nfast != (size_t)-1) cph_summaries_free(fast, nfast);
            sums = fast = NULL;
            nsums = 0;
            rc = CPH_EXIT_FAIL;
        } else {
            cph_summaries_print(stdout, sums, fast, nsums);
        }
    }
    if (c->json_path) {
        json_t *doc = document(r, c, argc, argv, sums ? cph_summaries_json(sums, fast, nsums) : NULL);
        if (doc) json_object_set_new(doc, "roofs_end", roofs_json(r, 1));
        if (!doc) {
            cph_err("bench: out of memory building %s", c->json_path);
            rc = CPH_EXIT_FAIL;
        } else {
            if (cph_json_write_atomic(doc, c->json_path, msg, sizeof msg) != CP_OK) {
                cph_err("bench: %s", msg);
                rc = CPH_EXIT_FAIL;
            } else {
                printf("\nwrote %s\n", c->json_path);
            }
            json_decref(doc);
        }
    }
    cph_summaries_free(sums, nsums);
    cph_summaries_free(fast, nsums);
done:
    json_decref(r->results);
    cph_bench_recs_free(&r->recs);
    cp_table_free(r->table);
    cph_machine_free(&r->m);
    free(r);
    return rc;
}

int cph_cmd_bench(int argc, char **argv) {
    bench_cfg c;
    memset(&c, 0, sizeof c);
    cph_selection_init(&c.sel);
    cph_timing_defaults(&c.timing);
    c.roofs = 1;
    c.sgemm = 1;
    int rc = parse_args(argc, argv, &c);
    if (rc < 0) rc = bench(&c, argc, argv);
    cph_selection_free(&c.sel);
    return rc;
}
