/* One bench run (bench.h): the machine and its roofs, the rows per thread
 * count (bench_rows.c), the roofs again, the targets when asked for, the
 * results document.  Thread counts are the outer loop because a pool pins
 * its workers (the calling thread included) and only one pool lives at a
 * time. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/bench/bench_state.h"
#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/io/rawfile.h"
#include "harness/io/report_json.h"
#include "harness/machine/membudget.h"
#include "harness/machine/pool.h"
#include "harness/measure/stats.h"

/* The machine, the thread counts, the memory check, the table; the exit code
 * of a failure, or -1. */
static int setup(cph_bench_state *r, cph_bench_cfg *c) {
    char msg[512] = "";
    if (cph_machine_detect(&r->m, NULL, msg, sizeof msg) != CP_OK) {
        cph_err("bench: cannot describe this machine: %s", msg);
        return CPH_EXIT_FAIL;
    }
    r->nthreads = c->threads ? cph_opt_threads_read("bench", c->threads, r->m.cores, r->threads,
                                                    CPH_BENCH_MAX_THREADS)
                             : (r->threads[0] = 1, 1);
    if (r->nthreads < 1) return CPH_EXIT_USAGE;
    int most = 1;
    for (int i = 0; i < r->nthreads; i++)
        if (r->threads[i] > most) most = r->threads[i];
    /* with the oracle's reference: every row's error is measured (bench_error.c) */
    if (cph_mem_check_selection(&c->sel, most, 1, c->max_memory ? c->max_memory : cph_mem_default(),
                                msg, sizeof msg) != CP_OK) {
        cph_err("bench: %s", msg);
        return CPH_EXIT_USAGE;
    }
    r->caches = cph_machine_caches(&r->m);
    if (c->table_path) {
        if (cp_table_load(c->table_path, 0, &r->table, msg, sizeof msg) != CP_OK) {
            cph_err("bench: --table: %s", msg);
            return CPH_EXIT_USAGE;
        }
        if (!cp_table_device_matches(r->table))
            cph_warn("bench: --table %s was tuned on another device (%s)", c->table_path,
                     cp_table_fingerprint(r->table));
    }
    if (c->timing.cold) c->timing.flush_bytes = 2 * cph_machine_llc_total(&r->m);
    if (cph_control_init(&r->control, r->m.avx512f, r->m.avx2 && r->m.fma) != CP_OK) {
        cph_err("bench: out of memory for the control");
        return CPH_EXIT_FAIL;
    }
    r->have_control = 1;
    if (c->place && !(r->placer = cph_placer_create(CPH_PLACE_SPAN_DEFAULT, c->sel.seed ^ 0x5eed))) {
        cph_err("bench: out of memory for the trials' buffers");
        return CPH_EXIT_FAIL;
    }
    if (c->json_path && !(r->results = json_array())) {
        cph_err("bench: out of memory");
        return CPH_EXIT_FAIL;
    }
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
    return -1;
}

static void roofs_start(cph_bench_state *r) {
    char msg[512] = "";
    if (cph_roofs_measure(&r->m, CPH_BENCH_ROOF_SECONDS, &r->roofs, msg, sizeof msg) != CP_OK) {
        cph_warn("bench: roofs not measured (%s): no %% of peak", msg);
        return;
    }
    r->have_roofs = 1;
    printf("roofs: FMA peak %.1f GFLOP/s (1 core), %.1f GFLOP/s (%d cores) at %d bits, the "
           "device roof every %%peak is against; bandwidth %.1f / %.1f GB/s\n",
           r->roofs.peak_1core_gflops, r->roofs.peak_all_gflops, r->roofs.cores_used,
           r->roofs.roof_bits, r->roofs.bw_1core_gbs, r->roofs.bw_all_gbs);
    if (r->roofs.bw_l2_1core_gbs > 0)
        printf("roofs: L2 bandwidth %.1f / %.1f GB/s, L3 %.1f / %.1f GB/s (1 core / %d cores; "
               "triad on arrays sized for the level)\n",
               r->roofs.bw_l2_1core_gbs, r->roofs.bw_l2_all_gbs, r->roofs.bw_l3_1core_gbs,
               r->roofs.bw_l3_all_gbs, r->roofs.cores_used);
    for (int i = 1; i < r->roofs.nwidths; i++)
        printf("roofs: FMA peak %.1f GFLOP/s (1 core), %.1f GFLOP/s (%d cores) at %d bits (%s)\n",
               r->roofs.widths[i].peak_1core_gflops, r->roofs.widths[i].peak_all_gflops,
               r->roofs.cores_used, r->roofs.widths[i].bits, r->roofs.widths[i].isa);
    if (r->roofs.ratio_512_256 > 0)
        printf("roofs: 512/256-bit ratio %.2f\n", r->roofs.ratio_512_256);
    else
        printf("roofs: the widest vector width here is %d bits\n", r->roofs.roof_bits);
    printf("isa column: the kernels each row ran (\"blas\": OpenBLAS, kernel type %s)\n",
           r->m.blas_core);
    const double ratio = r->roofs.peak_all_gflops / r->roofs.peak_1core_gflops;
    if (r->roofs.cores_used > 1 && ratio < 0.9 * r->roofs.cores_used)
        printf("roofs: the %d-core peak is only %.2fx the 1-core peak: other work is "
               "running on these cores, so multi-thread rows are slowed by it\n",
               r->roofs.cores_used, ratio);
}

static void roofs_end(cph_bench_state *r) {
    char msg[512] = "";
    if (!r->have_roofs ||
        cph_roofs_measure(&r->m, CPH_BENCH_ROOF_SECONDS, &r->roofs_end, msg, sizeof msg) != CP_OK)
        return;
    r->have_roofs_end = 1;
    const double a = r->roofs.peak_1core_gflops, b = r->roofs_end.peak_1core_gflops;
    printf("\nroofs at the end: FMA peak %.1f GFLOP/s (1 core), %.1f GFLOP/s (%d cores)%s\n", b,
           r->roofs_end.peak_all_gflops, r->roofs_end.cores_used,
           fabs(b - a) > CPH_BENCH_ROOF_DRIFT * a ? " -- differs by more than 10 % from the "
                                                    "start: the machine's load changed"
                                                  : "");
    const double aa = r->roofs.peak_all_gflops, ba = r->roofs_end.peak_all_gflops;
    if (fabs(ba - aa) > CPH_BENCH_ROOF_DRIFT * aa)
        printf("roofs: the %d-core peak moved from %.1f to %.1f GFLOP/s during the run\n",
               r->roofs_end.cores_used, aa, ba);
}

/* Every thread count x layer; the exit code so far. */
static int rows(cph_bench_state *r, const cph_bench_cfg *c) {
    char msg[512];
    int rc = CPH_EXIT_OK;
    cph_bench_print_header(r);
    r->t0 = cph_now();
    for (int ti = 0; ti < r->nthreads && rc == CPH_EXIT_OK; ti++) {
        cph_pool *pool = NULL;
        int pinned = 0;
        msg[0] = '\0';
        if (cph_pool_create(&r->m, r->threads[ti], &pool, &pinned, msg, sizeof msg) != CP_OK) {
            cph_err("bench: cannot start %d worker(s): %s", r->threads[ti], msg);
            return CPH_EXIT_FAIL;
        }
        if (!pinned && msg[0]) cph_warn("bench: %s", msg);
        const cp_exec exec = cph_pool_exec(pool);
        if (cph_bench_threads(r, c, r->threads[ti], pinned, &exec)) rc = CPH_EXIT_FAIL;
        cph_pool_destroy(pool);
    }
    return rc == CPH_EXIT_OK && r->failures ? CPH_EXIT_FAIL : rc;
}

/* The control's trials in one line per piece: their spread over the run
 * says how much the machine moved while the rows ran. */
static void control_print(const cph_bench_state *r) {
    const size_t n = r->ctl.n;
    double *v = malloc((n ? n : 1) * sizeof *v);
    if (!n || !v) {
        free(v);
        return;
    }
    for (int piece = 0; piece < 2; piece++) {
        for (size_t i = 0; i < n; i++) v[i] = piece ? r->ctl.t[i].gemm : r->ctl.t[i].fma;
        cph_sort_doubles(v, n);
        printf("%scontrol %-4s %zu trials: median %.4f ms, fastest %.4f ms, slowest %.4f ms "
               "(%.2fx the fastest)\n",
               piece ? "" : "\n", piece ? "gemm" : "fma", n, 1e3 * cph_median_sorted(v, n),
               1e3 * v[0], 1e3 * v[n - 1], v[n - 1] / v[0]);
    }
    free(v);
    if (r->oom_control) printf("control: some trials could not be recorded (out of memory)\n");
}

/* The project's performance targets over the recorded rows: printed, and
 * returned as JSON for the document (NULL when out of memory: reported). */
static json_t *targets(const cph_bench_state *r) {
    if (r->oom) {
        cph_err("bench: out of memory recording the rows: no targets");
        return NULL;
    }
    const double peak = r->have_roofs ? r->roofs.peak_1core_gflops : 0;
    cph_summary *sums = NULL, *fast = NULL;
    const size_t nsums = cph_bench_summarize(&r->recs, peak, r->m.cores, &sums);
    size_t nfast = (size_t)-1;
    cph_bench_recs fr;
    if (nsums != (size_t)-1 && cph_bench_recs_fastest(&r->recs, &fr) == CP_OK) {
        nfast = cph_bench_summarize(&fr, peak, r->m.cores, &fast);
        cph_bench_recs_free(&fr);
    }
    json_t *j = NULL;
    if (nsums == (size_t)-1 || nfast != nsums) {
        cph_err("bench: out of memory computing the targets");
    } else {
        cph_summaries_print(stdout, sums, fast, nsums);
        j = cph_summaries_json(sums, fast, nsums);
    }
    if (nsums != (size_t)-1) cph_summaries_free(sums, nsums);
    if (nfast != (size_t)-1) cph_summaries_free(fast, nfast);
    return j;
}

static int write_document(const cph_bench_state *r, const cph_bench_cfg *c, int argc,
                          char **argv, json_t *summaries) {
    char msg[512];
    json_t *doc = cph_bench_document(r, c, argc, argv, summaries);
    if (!doc) {
        cph_err("bench: out of memory building %s", c->json_path);
        return CPH_EXIT_FAIL;
    }
    int rc = CPH_EXIT_OK;
    if (cph_json_write_atomic(doc, c->json_path, msg, sizeof msg) != CP_OK) {
        cph_err("bench: %s", msg);
        rc = CPH_EXIT_FAIL;
    } else {
        printf("\nwrote %s\n", c->json_path);
    }
    json_decref(doc);
    return rc;
}

int cph_bench_run(cph_bench_cfg *c, int argc, char **argv) {
    char msg[512];
    if (c->json_path && cph_check_output_dir(c->json_path, msg, sizeof msg) != CP_OK) {
        cph_err("bench: --json %s: %s", c->json_path, msg);
        return CPH_EXIT_USAGE;
    }
    cph_bench_state *r = calloc(1, sizeof *r);
    if (!r) {
        cph_err("bench: out of memory");
        return CPH_EXIT_FAIL;
    }
    int rc = setup(r, c);
    if (rc < 0) {
        printf("bench: %s, %d cores, device %s\n", r->m.model, r->m.cores, r->m.fingerprint);
        if (c->roofs) roofs_start(r);
        char what[160];
        cph_control_describe(&r->control, what, sizeof what);
        printf("timing: %s; every row in %zu rounds of trials, shuffled each round, with the "
               "control (%s); a trial = fresh plan and "
               "buffers%s, 1 warm-up run, %zu samples, its median; cap %.4g ms a trial (%.4g ms "
               "a row); median and %.0f %% CI of the trial medians%s\n",
               cph_clock_name(), c->rounds, what,
               c->place ? " at random offsets on huge-page regions" : "",
               c->trial_samples < c->timing.max_samples ? c->trial_samples
                                                        : c->timing.max_samples,
               1e3 * c->timing.max_seconds / (double)c->rounds, 1e3 * c->timing.max_seconds,
               100.0 * c->timing.confidence, c->timing.cold ? ", cold caches" : "");
        printf("layers: %zu shape(s), %lld layer(s) in the network\n", c->sel.layers.n,
               cph_layers_total(&c->sel.layers));
        cph_layers_print(stdout, &c->sel.layers);
        rc = rows(r, c);
        control_print(r);
        roofs_end(r);
        if (!r->oom) cph_bench_network_print(stdout, &r->recs, &c->sel.layers);
        json_t *sums = NULL;
        if (c->targets && !(sums = targets(r))) rc = CPH_EXIT_FAIL;
        if (c->json_path && write_document(r, c, argc, argv, sums) != CPH_EXIT_OK)
            rc = CPH_EXIT_FAIL;
        else if (!c->json_path)
            json_decref(sums);
    }
    json_decref(r->results);
    cph_placer_destroy(r->placer);
    if (r->have_control) cph_control_free(&r->control);
    free(r->ctl.t);
    cph_bench_recs_free(&r->recs);
    cp_table_free(r->table);
    cph_machine_free(&r->m);
    free(r);
    return rc;
}
