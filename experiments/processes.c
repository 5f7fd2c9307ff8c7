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
#include "experiments/exp_layer.h"
#include "harness/measure/control.h"
#include "harness/tune/trial.h"

int main(int argc, char **argv) {
    if (argc != 8) {
        fprintf(stderr, "usage: %s SHAPE ALGO PARAMS|- THREADS heap|placer TRIALS SEED\n", argv[0]);
        return 2;
    }
    const int threads = atoi(argv[4]), trials = atoi(argv[6]);
    const int placed = strcmp(argv[5], "placer") == 0;
    const uint64_t seed = strtoull(argv[7], NULL, 10);
    if (trials < 1 || (!placed && strcmp(argv[5], "heap") != 0)) {
        fprintf(stderr, "bad mode or trials\n");
        return 2;
    }
    exp_layer L;
    const int orc = exp_layer_open(&L, argv[1], argv[2], threads);
    if (orc) return orc;
    cp_params params;
    cp_algo_defaults(L.algo, &L.s, &L.caches, &params);
    if (strcmp(argv[3], "-") != 0) {
        /* "kb=5,cb=256": each name=value over the defaults */
        char spec[256];
        snprintf(spec, sizeof spec, "%s", argv[3]);
        for (char *tok = strtok(spec, ","); tok; tok = strtok(NULL, ",")) {
            char *eq = strchr(tok, '=');
            const int idx = eq ? (*eq = 0, cp_algo_param_index(L.algo, tok)) : -1;
            if (idx < 0) {
                fprintf(stderr, "parameter '%s' unknown to %s\n", tok, L.algo->name);
                exp_layer_close(&L);
                return 2;
            }
            params.v[idx] = atoi(eq + 1);
        }
    }
    cph_placer *pl = placed ? cph_placer_create(CPH_PLACE_SPAN_DEFAULT, seed) : NULL;
    cph_trial_setup t = {&L.s, CP_XCORR, threads, &L.caches, &L.exec, L.x, L.w, L.bias, {0}, pl};
    cph_timing_defaults(&t.timing);
    t.timing.warmup = 1;
    t.timing.min_samples = t.timing.max_samples = 5;
    cph_control ctl;
    if (cph_control_init(&ctl, L.m.avx512f, L.m.avx2 && L.m.fma) != CP_OK) {
        fprintf(stderr, "out of memory for the control\n");
        exp_layer_close(&L);
        return 1;
    }
    int rc = 0;
    char msg[512];
    for (int i = 0; i < trials && rc == 0; i++) {
        double med, wall, fma, gemm;
        if (cph_trial_run(&t, L.algo, &params, &med, &wall, msg, sizeof msg) != 0) {
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
    exp_layer_close(&L);
    return rc;
}
