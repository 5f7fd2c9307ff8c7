/* Does a process carry a speed of its own?  One process times one plan in
 * TRIALS trials (harness/tune/trial.c, the tuner's own trial) and prints each
 * trial's median, with the buffers and the plan's memory either
 *   heap    from the C library's heap (what tune did before the placer), or
 *   placer  at random offsets on huge-page regions (harness/measure/placer.h).
 * scripts/process-experiment runs many such processes, the two modes
 * alternating, and asks what an unpaired comparison of two processes' trials
 * (the same-build diff) concludes in each mode.
 *
 * Not part of the product: built as cp_process_experiment, findings in
 * docs/measurement.md. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "convpick/convpick.h"
#include "harness/machine/machine.h"
#include "harness/machine/pool.h"
#include "harness/measure/data.h"
#include "harness/select/shape_spec.h"
#include "harness/measure/control.h"
#include "harness/tune/trial.h"

int main(int argc, char **argv) {
    if (argc != 8) {
        fprintf(stderr, "usage: %s SHAPE ALGO PARAMS|- THREADS heap|placer TRIALS SEED\n", argv[0]);
        return 2;
    }
    cp_shape s;
    char msg[512];
    if (cph_parse_shape(argv[1], "shape", &s, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "%s\n", msg);
        return 2;
    }
    const cp_algo *algo = cp_algo_find(argv[2]);
    const int threads = atoi(argv[4]), trials = atoi(argv[6]);
    const int placed = strcmp(argv[5], "placer") == 0;
    const uint64_t seed = strtoull(argv[7], NULL, 10);
    if (!algo || threads < 1 || trials < 1 || (!placed && strcmp(argv[5], "heap") != 0)) {
        fprintf(stderr, "bad algorithm, threads, mode or trials\n");
        return 2;
    }
    cph_machine m;
    if (cph_machine_detect(&m, NULL, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "%s\n", msg);
        return 1;
    }
    const cp_cache_sizes caches = cph_machine_caches(&m);
    cp_params params;
    cp_algo_defaults(algo, &s, &caches, &params);
    if (strcmp(argv[3], "-") != 0) {
        /* "kb=5,cb=256": each name=value over the defaults */
        char spec[256];
        snprintf(spec, sizeof spec, "%s", argv[3]);
        for (char *tok = strtok(spec, ","); tok; tok = strtok(NULL, ",")) {
            char *eq = strchr(tok, '=');
            const int idx = eq ? (*eq = 0, cp_algo_param_index(algo, tok)) : -1;
            if (idx < 0) {
                fprintf(stderr, "parameter '%s' unknown to %s\n", tok, algo->name);
                return 2;
            }
            params.v[idx] = atoi(eq + 1);
        }
    }
    cph_pool *pool = NULL;
    int pinned = 0;
    cp_exec exec = cp_exec_serial();
    if (threads > 1) {
        if (cph_pool_create(&m, threads, &pool, &pinned, msg, sizeof msg) != CP_OK) {
            fprintf(stderr, "%s\n", msg);
            return 1;
        }
        exec = cph_pool_exec(pool);
    }
    const size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
    float *bias = malloc((size_t)s.k * sizeof *bias);
    cph_fill_uniform(x, nx, 1);
    cph_fill_uniform(w, nw, 2);
    cph_fill_uniform(bias, (size_t)s.k, 3);
    cph_placer *pl = placed ? cph_placer_create(CPH_PLACE_SPAN_DEFAULT, seed) : NULL;
    cph_trial_setup t = {&s, CP_XCORR, threads, &caches, &exec, x, w, bias, {0}, pl};
    cph_timing_defaults(&t.timing);
    t.timing.warmup = 1;
    t.timing.min_samples = t.timing.max_samples = 5;
    cph_control ctl;
    if (cph_control_init(&ctl, m.avx512f, m.avx2 && m.fma) != CP_OK) {
        fprintf(stderr, "out of memory for the control\n");
        return 1;
    }
    int rc = 0;
    for (int i = 0; i < trials && rc == 0; i++) {
        double med, wall, fma, gemm;
        if (cph_trial_run(&t, algo, &params, &med, &wall, msg, sizeof msg) != 0) {
            fprintf(stderr, "%s\n", msg);
            rc = 1;
        } else {
            cph_control_trial(&ctl, 5, &fma, &gemm);
            printf("%s,%d,%.9g,%.9g,%.9g\n", argv[5], i, med, fma, gemm);
        }
    }
    cph_control_free(&ctl);
    if (pl) {
        cph_placer_stats st;
        cph_placer_stats_get(pl, &st);
        fprintf(stderr, "placer: %zu regions, %zu MiB mapped, %zu MiB on huge pages\n", st.regions,
                st.mapped_bytes >> 20, st.huge_bytes >> 20);
    }
    cph_placer_destroy(pl);
    free(x);
    free(w);
    free(bias);
    if (pool) cph_pool_destroy(pool);
    cph_machine_free(&m);
    return rc;
}
