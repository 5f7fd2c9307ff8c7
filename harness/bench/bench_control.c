/* bench's fixed control (contract in bench_control.h). */
#include "harness/bench/bench_control.h"

#include <cblas.h>
#include <stdlib.h>
#include <string.h>

#include "harness/machine/roofs.h"
#include "harness/measure/gemm_ref.h"

void cph_control_init(cph_control *c) {
    memset(c, 0, sizeof *c);
    c->fma_bits = cph_roof_fma_widest();
    c->fma_iters = (int64_t)(CPH_CONTROL_FMA_FLOPS / cph_roof_fma_flops_per_iter(c->fma_bits));
}

void cph_control_free(cph_control *c) {
    for (int s = 0; s < CPH_CONTROL_NSERIES; s++) free(c->t[s]);
    memset(c, 0, sizeof *c);
}

const char *cph_control_series_name(cph_control_series s) {
    return s == CPH_CONTROL_SGEMM ? "sgemm" : "fma";
}

typedef struct fma_work {
    int bits;
    int64_t iters;
    volatile float sink; /* keeps the loop's result alive */
} fma_work;

static int fma_run(void *arg) {
    fma_work *w = arg;
    w->sink += cph_roof_fma_run(w->bits, w->iters);
    return 0;
}

static int record(cph_control *c, cph_control_series s, const cph_control_trial *t) {
    if (c->n[s] == c->cap[s]) {
        const size_t cap = c->cap[s] ? 2 * c->cap[s] : 64;
        cph_control_trial *v = realloc(c->t[s], cap * sizeof *v);
        if (!v) return -1;
        c->t[s] = v;
        c->cap[s] = cap;
    }
    c->t[s][c->n[s]++] = *t;
    return 0;
}

int cph_control_trial_run(cph_control *c, cph_control_series s, const cph_timing_opts *to,
                          cph_placer *pl, uint64_t seed, const cph_control_trial *where,
                          double *median, double *wall) {
    const double t0 = cph_now();
    cph_measurement m;
    int rc;
    *median = 0.0;
    if (s == CPH_CONTROL_SGEMM) {
        cph_gemm_ref g;
        if (cph_gemm_ref_square(CPH_CONTROL_GEMM_SIZE, CPH_CONTROL_GEMM_SIZE,
                                CPH_CONTROL_GEMM_SIZE, seed, pl, &g) != CP_OK) {
            *wall = cph_now() - t0;
            return -1;
        }
        const int blas_before = openblas_get_num_threads();
        openblas_set_num_threads(1);
        rc = cph_measure(to, cph_gemm_ref_run, &g, &m);
        openblas_set_num_threads(blas_before);
        cph_gemm_ref_free(&g);
    } else {
        fma_work w = {c->fma_bits, c->fma_iters, 0.0f};
        rc = cph_measure(to, fma_run, &w, &m);
    }
    if (rc == 0) *median = m.stats.median;
    cph_measurement_free(&m);
    *wall = cph_now() - t0;
    if (rc != 0 || !(*median > 0.0)) return -1;
    cph_control_trial t = *where;
    t.median = *median;
    return record(c, s, &t);
}
