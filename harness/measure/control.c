/* The fixed control (control.h). */
#include "harness/measure/control.h"

#include <cblas.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/machine/roofs.h"
#include "harness/measure/stats.h"
#include "harness/measure/timing.h"

/* The GEMM's layer: its im2col product is 64 x 576 x 196. */
static const cp_shape control_layer = {.n = 1, .c = 64, .h = 14, .w = 14, .k = 64, .r = 3,
                                       .s = 3, .stride_h = 1, .stride_w = 1, .pad_top = 1,
                                       .pad_left = 1, .pad_bottom = 1, .pad_right = 1,
                                       .dil_h = 1, .dil_w = 1, .groups = 1};

cp_status cph_control_init(cph_control *c, int have_avx512, int have_avx2_fma) {
    memset(c, 0, sizeof *c);
    c->fma_width = have_avx512 ? 512 : have_avx2_fma ? 256 : 0;
    /* 10 MFLOP (AVX-512), 7.7 (AVX2), 3.2 (portable): 0.05-0.3 ms */
    c->fma_iters = c->fma_width == 512 ? 20000 : c->fma_width == 256 ? 40000 : 100000;
    return cph_gemm_ref_im2col(&control_layer, 0xc0117401u, &c->gemm);
}

void cph_control_free(cph_control *c) { cph_gemm_ref_free(&c->gemm); }

static volatile float control_sink;

static double time_fma(const cph_control *c) {
    const double t0 = cph_now();
    const float v = cph_roof_fma(c->fma_width, c->fma_iters);
    const double t = cph_now() - t0;
    control_sink = v;
    return t;
}

static double time_gemm(cph_control *c) {
    const double t0 = cph_now();
    cph_gemm_ref_run(&c->gemm);
    return cph_now() - t0;
}

void cph_control_trial(cph_control *c, size_t samples, double *fma_s, double *gemm_s) {
    if (samples < 1) samples = 1;
    if (samples > 64) samples = 64;
    double f[64], g[64];
    /* OpenBLAS on one thread: the control must not depend on the pool. */
    const int blas_before = openblas_get_num_threads();
    openblas_set_num_threads(1);
    (void)time_fma(c);
    (void)time_gemm(c);
    for (size_t i = 0; i < samples; i++) {
        f[i] = time_fma(c);
        g[i] = time_gemm(c);
    }
    openblas_set_num_threads(blas_before);
    cph_sort_doubles(f, samples);
    cph_sort_doubles(g, samples);
    *fma_s = cph_median_sorted(f, samples);
    *gemm_s = cph_median_sorted(g, samples);
}

void cph_control_describe(const cph_control *c, char *buf, size_t cap) {
    snprintf(buf, cap, "fma%d x %lld iterations + sgemm %lldx%lldx%lld, 1 thread",
             c->fma_width ? c->fma_width : 32, c->fma_iters, (long long)c->gemm.m,
             (long long)c->gemm.k, (long long)c->gemm.n);
}
