/* Tests of winograd_2x2_3x3 and its single-tile reference (tests/support/winograd_tile.h).
 *
 * Outside references:
 *  - Lavin & Gray, "Fast Algorithms for Convolutional Neural Networks", CVPR
 *    2016: the matrices B^T, G, A^T of F(2,3) (section 4.1) and the count of
 *    (m+r-1)^2 general multiplications for F(m x m, r x r) (section 4).
 *  - Worked examples computed by hand below (the arithmetic is in the comments),
 *    checked against the direct sum.
 *  - The fp64 oracle (convpick/oracle.h) on a grid of awkward shapes. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "convpick/algo.h"
#include "convpick/oracle.h"
#include "algos/core/cpa.h"
#include "algos/kernels/blocked_tile.h"
#include "algos/kernels/winograd_kernels.h"
#include "tests/support/winograd_tile.h"

static const cp_algo *wino(void) {
    const cp_algo *a = cp_algo_find("winograd_2x2_3x3");
    assert_non_null(a);
    return a;
}

/* (1) F(2,3), hand example.  d = [1 2 3 4], g = [1 2 3].
 * Direct: y0 = 1*1 + 2*2 + 3*3 = 14, y1 = 2*1 + 3*2 + 4*3 = 20.
 * Winograd: G g = [g0, (g0+g1+g2)/2, (g0-g1+g2)/2, g2] = [1, 3, 1, 3];
 *           B^T d = [d0-d2, d1+d2, d2-d1, d1-d3] = [-2, 5, 1, -2];
 *           m = [-2, 15, 1, -6];  A^T m = [m0+m1+m2, m1-m2-m3] = [14, 20]. */
static void test_f2_3_worked(void **state) {
    (void)state;
    const float d[4] = {1, 2, 3, 4}, g[3] = {1, 2, 3};
    float direct[2];
    for (int i = 0; i < 2; i++) direct[i] = d[i] * g[0] + d[i + 1] * g[1] + d[i + 2] * g[2];
    assert_true(direct[0] == 14.0f && direct[1] == 20.0f);
    float y[2];
    long mults = 0;
    cpt_wino_f2_3(d, g, y, &mults);
    assert_true(y[0] == 14.0f);
    assert_true(y[1] == 20.0f);
    /* Lavin & Gray 2016: F(m, r) needs m + r - 1 = 4 multiplies, direct m*r = 6. */
    assert_int_equal(mults, 4);
}

/* (1) F(2x2,3x3), hand example.  d[i][j] = 4i + j + 1 (1..16 row-major),
 * g = [1 2 0; 0 1 -1; 2 0 1].
 * Direct: y00 = 1+4+0 + 0+6-7 + 18+0+11 = 33,  y01 = 2+6 + 7-8 + 20+12 = 39,
 *         y10 = 5+12 + 10-11 + 26+15 = 57,      y11 = 6+14 + 11-12 + 28+16 = 63.
 * V = B^T d B: B^T d has rows d0-d2 = [-8 -8 -8 -8], d1+d2 = [14 16 18 20],
 *   d2-d1 = [4 4 4 4], d1-d3 = [-8 -8 -8 -8]; then on each row
 *   [t0-t2, t1+t2, t2-t1, t1-t3]:
 *   V = [0 -16 0 0; -4 34 2 -4; 0 8 0 0; 0 -16 0 0].
 * U = G g G^T: G g has rows [1 2 0], [1.5 1.5 0], [1.5 0.5 1], [2 0 1]; then on
 *   each row [a, (a+b+c)/2, (a-b+c)/2, c]:
 *   U = [1 1.5 -0.5 0; 1.5 1.5 0 0; 1.5 1.5 1 1; 2 1.5 1.5 1].
 * M = U .* V = [0 -24 0 0; -6 51 0 0; 0 12 0 0; 0 -24 0 0].
 * A^T M: [m0+m1+m2] = [-6 39 0 0], [m1-m2-m3] = [-6 63 0 0]; then
 *   [s0+s1+s2, s1-s2-s3]: Y = [33 39; 57 63], equal to the direct sum. */
static const float ex_d[16] = {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16};
static const float ex_g[9] = {1, 2, 0, 0, 1, -1, 2, 0, 1};
static const float ex_u[16] = {1, 1.5f, -0.5f, 0, 1.5f, 1.5f, 0, 0,
                               1.5f, 1.5f, 1, 1, 2, 1.5f, 1.5f, 1};
static const float ex_v[16] = {0, -16, 0, 0, -4, 34, 2, -4, 0, 8, 0, 0, 0, -16, 0, 0};
static const float ex_y[4] = {33, 39, 57, 63};

static void test_f2x2_3x3_worked(void **state) {
    (void)state;
    float direct[4];
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++) {
            float acc = 0.0f;
            for (int r = 0; r < 3; r++)
                for (int s = 0; s < 3; s++) acc += ex_d[(i + r) * 4 + j + s] * ex_g[r * 3 + s];
            direct[i * 2 + j] = acc;
        }
    float u[16], v[16], y[4];
    cpt_wino_filter_tx(ex_g, u);
    cpt_wino_input_tx(ex_d, v);
    for (int i = 0; i < 16; i++) {
        assert_true(u[i] == ex_u[i]);
        assert_true(v[i] == ex_v[i]);
    }
    cpt_wino_f2x2_3x3_tile(ex_d, ex_g, y, NULL);
    for (int i = 0; i < 4; i++) {
        assert_true(direct[i] == ex_y[i]);
        assert_true(y[i] == ex_y[i]);
    }
}

/* The layer code on the same example: one 4x4 image, one channel, no padding.
 * The prepared weights are U (16 matrices of 1 x 1), the output is Y exactly
 * (small integers and halves: every operation is exact in float). */
static void test_layer_worked(void **state) {
    (void)state;
    cp_shape s = cp_shape_init();
    s.n = s.c = s.k = 1;
    s.h = s.w = 4;
    s.r = s.s = 3;
    const cp_algo *a = wino();
    cp_params p;
    cp_algo_defaults(a, &s, NULL, &p);
    p.v[2] = 0; /* U as 16 plain K x C matrices */
    assert_int_equal(a->prepared_size(&s, CP_XCORR, &p), 16 * sizeof(float));
    float u[16];
    assert_int_equal(a->prepare(&s, CP_XCORR, &p, ex_g, u), CP_OK);
    for (int i = 0; i < 16; i++) assert_true(u[i] == ex_u[i]);
    /* True convolution with the flipped kernel is the same layer. */
    float gf[9], uf[16];
    for (int i = 0; i < 9; i++) gf[i] = ex_g[8 - i];
    assert_int_equal(a->prepare(&s, CP_CONV, &p, gf, uf), CP_OK);
    for (int i = 0; i < 16; i++) assert_true(uf[i] == ex_u[i]);
    /* Packed for the tile kernel: per point one 6-channel panel of C = 1,
     * channel 0 first and five zero channels (blocked_tile.h order). */
    p.v[2] = 1;
    assert_int_equal(a->prepared_size(&s, CP_XCORR, &p), 16 * 6 * sizeof(float));
    float up[96];
    assert_int_equal(a->prepare(&s, CP_XCORR, &p, ex_g, up), CP_OK);
    for (int i = 0; i < 16; i++) {
        assert_true(up[6 * i] == ex_u[i]);
        for (int kk = 1; kk < 6; kk++) assert_true(up[6 * i + kk] == 0.0f);
    }

    cp_plan *plan = NULL;
    char msg[256];
    assert_int_equal(cp_plan_create(a, &s, CP_XCORR, NULL, NULL, 1, ex_g, &plan, msg, sizeof msg),
                     CP_OK);
    float y[4];
    assert_int_equal(cp_plan_run(plan, ex_d, NULL, y, NULL), CP_OK);
    for (int i = 0; i < 4; i++) assert_true(y[i] == ex_y[i]);
    cp_plan_destroy(plan);
}

/* (2) Multiplication count per 2x2 output tile of a 3x3 filter: Lavin & Gray
 * 2016, F(m x m, r x r) needs (m+r-1)^2 = 16 general multiplications; the
 * direct method needs m^2 r^2 = 36 (counted here from the direct loops). */
static void test_mult_count(void **state) {
    (void)state;
    const int m = 2, r = 3;
    long direct = 0;
    float ydirect[4];
    for (int i = 0; i < m; i++)
        for (int j = 0; j < m; j++) {
            float acc = 0.0f;
            for (int a = 0; a < r; a++)
                for (int b = 0; b < r; b++) {
                    acc += ex_d[(i + a) * 4 + j + b] * ex_g[a * 3 + b];
                    direct++;
                }
            ydirect[i * 2 + j] = acc;
        }
    assert_int_equal(direct, 36);
    long mults = 0;
    float y[4];
    cpt_wino_f2x2_3x3_tile(ex_d, ex_g, y, &mults);
    assert_int_equal(mults, (m + r - 1) * (m + r - 1));
    assert_int_equal(mults, 16);
    for (int i = 0; i < 4; i++) assert_true(y[i] == ydirect[i]);
    /* Counts add up over tiles: 10 tiles, 160 multiplies. */
    mults = 0;
    for (int t = 0; t < 10; t++) cpt_wino_f2x2_3x3_tile(ex_d, ex_g, y, &mults);
    assert_int_equal(mults, 160);
}

/* The transform loops (portable and, when the CPU has it, AVX2) against the
 * matrix-form reference of winograd_tile.c, tile by tile.  The loops do the
 * same additions in the same order as the matrix products (whose other terms
 * are exact multiplications by 0 and +-1), so the results are equal exactly. */
static float lcg(uint32_t *st);

static void check_kernel_set(const cpa_wino_kernels *kern) {
    enum { NT = 19, LEN = 2 * NT + 2 };
    uint32_t st = 99;
    float rows[4][LEN], img[4][LEN], v[16][NT], m[16][NT], o[2][2 * NT], o1[2 * NT];
    for (int i = 0; i < 4; i++)
        for (int u = 0; u < LEN; u++) img[i][u] = rows[i][u] = lcg(&st);
    kern->in_rows(rows[0], rows[1], rows[2], rows[3], LEN);
    for (int i = 0; i < 4; i++)
        kern->in_cols(rows[i], v[4 * i], v[4 * i + 1], v[4 * i + 2], v[4 * i + 3], NT);
    for (int xi = 0; xi < 16; xi++)
        for (int t = 0; t < NT; t++) m[xi][t] = lcg(&st);
    const float bias = 0.25f;
    kern->out_2rows(&m[0][0], NT, bias, o[0], o[1], NT);
    kern->out_1row(&m[0][0], NT, bias, o1, NT);
    for (int t = 0; t < NT; t++) {
        float d[16], vr[16], mt[16], yr[4];
        for (int i = 0; i < 4; i++)
            for (int j = 0; j < 4; j++) d[i * 4 + j] = img[i][2 * t + j];
        cpt_wino_input_tx(d, vr);
        for (int xi = 0; xi < 16; xi++) {
            assert_true(v[xi][t] == vr[xi]);
            mt[xi] = m[xi][t];
        }
        cpt_wino_output_tx(mt, yr);
        for (int i = 0; i < 2; i++)
            for (int j = 0; j < 2; j++) assert_true(o[i][2 * t + j] == yr[i * 2 + j] + bias);
        assert_true(o1[2 * t] == o[0][2 * t] && o1[2 * t + 1] == o[0][2 * t + 1]);
    }
}

static void test_kernel_sets(void **state) {
    (void)state;
    const int best = cpa_isa_best();
    check_kernel_set(&cpa_wino_kernels_ref);
    assert_ptr_equal(cpa_wino_kernels_select(CPA_ISA_PORTABLE), &cpa_wino_kernels_ref);
    if (best >= CPA_ISA_AVX2) check_kernel_set(&cpa_wino_kernels_avx2);
    if (best >= CPA_ISA_AVX512) check_kernel_set(&cpa_wino_kernels_avx512);
    const cpa_wino_kernels *widest = best == CPA_ISA_AVX512 ? &cpa_wino_kernels_avx512
                                     : best == CPA_ISA_AVX2 ? &cpa_wino_kernels_avx2
                                                            : &cpa_wino_kernels_ref;
    assert_ptr_equal(cpa_wino_kernels_select(CPA_ISA_BEST), widest);
    assert_ptr_equal(cpa_wino_kernels_select(CPA_ISA_AVX512), widest);
}

/* --- (3) against the oracle ------------------------------------------------ */

static float lcg(uint32_t *st) {
    *st = *st * 1664525u + 1013904223u;
    return (float)((*st >> 8) & 0xffffu) / 32768.0f - 1.0f;
}

/* A serial executor that still splits the range over two workers, so that the
 * per-worker scratch slices are exercised (and checked by the sanitizer build). */
static void two_worker_for(void *pool, int64_t count, cp_task_fn fn, void *arg) {
    (void)pool;
    const int64_t half = count / 2;
    if (half > 0) fn(arg, 0, half, 0);
    fn(arg, half, count, 1);
}

typedef struct {
    int64_t n, c, k, h, w, pt, pl, pb, pr;
} grid_case;

static const grid_case grid[] = {
    {1, 3, 4, 7, 7, 1, 1, 1, 1},     /* odd H, W */
    {1, 2, 3, 13, 17, 1, 1, 1, 1},   /* odd H, W */
    {1, 2, 2, 17, 13, 0, 0, 0, 0},   /* odd, pad 0 */
    {1, 3, 2, 2, 5, 1, 1, 1, 1},     /* H < 3 with padding */
    {1, 2, 3, 5, 1, 1, 1, 1, 1},     /* W < 3 with padding */
    {1, 2, 3, 1, 1, 1, 1, 1, 1},     /* 1x1 image, pad 1 */
    {1, 2, 2, 2, 2, 2, 2, 2, 2},     /* pad 2, 2x2 image */
    {1, 3, 3, 10, 10, 2, 2, 2, 2},   /* pad 2 */
    {1, 3, 4, 9, 11, 0, 2, 1, 0},    /* asymmetric */
    {1, 2, 3, 8, 6, 2, 1, 0, 2},     /* asymmetric */
    {3, 2, 3, 7, 13, 1, 1, 1, 1},    /* batch 3 */
    {2, 1, 5, 6, 7, 1, 0, 1, 0},     /* C = 1 */
    {2, 5, 1, 7, 6, 0, 1, 0, 1},     /* K = 1 */
    {1, 1, 1, 3, 3, 0, 0, 0, 0},     /* a single output */
    {1, 16, 20, 15, 15, 1, 1, 1, 1}, /* more channels */
};

#define GUARD 8
static const float guard_val = 12345.0f;

static void check_case(const grid_case *gc, cp_flip flip, int with_bias) {
    const cp_algo *a = wino();
    cp_shape s = cp_shape_init();
    s.n = gc->n; s.c = gc->c; s.k = gc->k; s.h = gc->h; s.w = gc->w;
    s.r = s.s = 3;
    s.pad_top = gc->pt; s.pad_left = gc->pl; s.pad_bottom = gc->pb; s.pad_right = gc->pr;
    char msg[256];
    assert_int_equal(cp_shape_validate(&s, msg, sizeof msg), CP_SHAPE_OK);
    assert_true(a->supports(&s, flip, msg, sizeof msg));
    const size_t ni = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s);
    const size_t no = cp_shape_output_elems(&s);
    float *x = malloc(ni * sizeof *x), *w = malloc(nw * sizeof *w);
    float *b = malloc((size_t)s.k * sizeof *b), *y = malloc((no + GUARD) * sizeof *y);
    double *ref = malloc(no * sizeof *ref), *mag = malloc(no * sizeof *mag);
    assert_true(x && w && b && y && ref && mag);
    uint32_t st = (uint32_t)(s.n * 131 + s.c * 17 + s.k * 7 + s.h * 3 + s.w);
    for (size_t i = 0; i < ni; i++) x[i] = lcg(&st);
    for (size_t i = 0; i < nw; i++) w[i] = lcg(&st);
    for (int64_t i = 0; i < s.k; i++) b[i] = lcg(&st);
    const float *bias = with_bias ? b : NULL;
    cp_oracle_run(&s, flip, x, w, bias, ref, mag);

    const cp_exec serial = cp_exec_serial();
    const cp_exec two = {2, two_worker_for, NULL};
    cp_params defaults;
    cp_algo_defaults(a, &s, NULL, &defaults);
    const int64_t blocks[] = {defaults.v[0], 1, 3, 16};
    for (size_t bi = 0; bi < sizeof blocks / sizeof blocks[0]; bi++)
        for (int e = 0; e < 8; e++) { /* bit 0: two workers; bit 1: the other kernel
                                         level; bit 2: the other GEMM (OpenBLAS / packed) */
#ifdef CPT_ISA_ONLY
            if (e & 2) continue; /* one level only: AVX-512 */
            const int64_t lv[2] = {CPT_ISA_ONLY, CPT_ISA_ONLY};
#else
            const int64_t lv[2] = {CPA_ISA_AVX2, CPA_ISA_PORTABLE};
#endif
            cp_params p = defaults;
            p.v[0] = blocks[bi];
            p.v[1] = lv[(e >> 1) & 1];
            p.v[2] = (e >> 2) ? !defaults.v[2] : defaults.v[2];
            cp_plan *plan = NULL;
            assert_int_equal(cp_plan_create(a, &s, flip, &p, NULL, (e & 1) ? 2 : 1, w, &plan, msg,
                                            sizeof msg),
                             CP_OK);
            for (size_t i = 0; i < no; i++) y[i] = NAN; /* every output must be written */
            for (size_t i = 0; i < GUARD; i++) y[no + i] = guard_val;
            assert_int_equal(cp_plan_run(plan, x, bias, y, (e & 1) ? &two : &serial), CP_OK);
            cp_error err = cp_error_measure(y, ref, mag, no);
            if (err.nonfinite || err.rel_err > a->tolerance)
                fail_msg("n=%lld c=%lld k=%lld h=%lld w=%lld pads=%lld,%lld,%lld,%lld mode=%d "
                         "bias=%d tile_block=%lld kernels=%lld gemm=%lld workers=%d: rel_err %.3g "
                         "(tolerance %.3g), %zu non-finite, worst index %zu",
                         (long long)s.n, (long long)s.c, (long long)s.k, (long long)s.h,
                         (long long)s.w, (long long)s.pad_top, (long long)s.pad_left,
                         (long long)s.pad_bottom, (long long)s.pad_right, (int)flip, with_bias,
                         (long long)p.v[0], (long long)p.v[1], (long long)p.v[2], (e & 1) ? 2 : 1,
                         err.rel_err,
                         a->tolerance, err.nonfinite, err.worst);
            for (size_t i = 0; i < GUARD; i++) assert_true(y[no + i] == guard_val);
            cp_plan_destroy(plan);
        }
    free(x); free(w); free(b); free(y); free(ref); free(mag);
}

static void test_oracle_grid(void **state) {
    (void)state;
    for (size_t i = 0; i < sizeof grid / sizeof grid[0]; i++)
        for (int flip = 0; flip < 2; flip++)
            for (int bias = 0; bias < 2; bias++) check_case(&grid[i], (cp_flip)flip, bias);
}

/* --- (4) refusals, parameters, workspace ----------------------------------- */

static cp_shape base_shape(void) {
    cp_shape s = cp_shape_init();
    s.n = 1; s.c = 4; s.k = 4; s.h = 8; s.w = 8; s.r = 3; s.s = 3;
    return s;
}

static void expect_refusal(const cp_shape *s, const char *word) {
    char why[256] = "";
    assert_int_equal(wino()->supports(s, CP_XCORR, why, sizeof why), 0);
    assert_non_null(strstr(why, word));
    assert_int_equal(wino()->supports(s, CP_CONV, NULL, 0), 0); /* why may be NULL */
}

static void test_refusals(void **state) {
    (void)state;
    cp_shape s = base_shape();
    assert_true(wino()->supports(&s, CP_XCORR, NULL, 0));
    assert_true(wino()->supports(&s, CP_CONV, NULL, 0));
    s.stride_h = s.stride_w = 2;
    expect_refusal(&s, "stride 1 (got 2x2)");
    s = base_shape();
    s.dil_h = s.dil_w = 2;
    expect_refusal(&s, "dilation 1 (got 2x2)");
    s = base_shape();
    s.r = s.s = 5;
    expect_refusal(&s, "3x3 kernel (got 5x5)");
    s = base_shape();
    s.groups = 2;
    expect_refusal(&s, "groups=2");
}

/* The workspace depends on the block, not on the image: two layers that
 * differ only in H and W (both wider than a block) need the same bytes. */
static void test_workspace_bounded(void **state) {
    (void)state;
    const cp_algo *a = wino();
    cp_shape s = base_shape();
    s.c = s.k = 64;
    cp_params p;
    memset(&p, 0, sizeof p);
    p.v[0] = 64;
    s.h = s.w = 224;
    const size_t small = a->workspace_size(&s, CP_XCORR, &p, 2);
    s.h = s.w = 1024;
    assert_int_equal(a->workspace_size(&s, CP_XCORR, &p, 2), small);
    /* 16 V + 16 M matrices of 64 x 64 floats, plus two workers' row buffers. */
    assert_true(small >= (size_t)(16 * 2 * 64 * 64 * 4));
    assert_true(small < (size_t)(16 * 2 * 64 * 64 * 4) + 8192);
}

/* Defaults and candidates stay in range; the first candidate is the default. */
static void test_candidates(void **state) {
    (void)state;
    const cp_algo *a = wino();
    const cp_cache_sizes caches = cp_cache_sizes_fallback();
    const int64_t chans[] = {1, 64, 256, 512};
    for (size_t i = 0; i < 4; i++) {
        cp_shape s = base_shape();
        s.c = s.k = chans[i];
        s.h = s.w = 56;
        cp_params d, cand[8];
        cp_algo_defaults(a, &s, &caches, &d);
        char msg[256];
        assert_int_equal(cp_params_check(a, &d, msg, sizeof msg), CP_OK);
        const int n = a->candidates(&s, &caches, cand, 8);
        assert_true(n >= 2 && n <= 8);
        assert_true(cand[0].v[0] == d.v[0] && cand[0].v[2] == d.v[2]);
        for (int j = 0; j < n; j++) {
            assert_int_equal(cp_params_check(a, &cand[j], msg, sizeof msg), CP_OK);
            for (int k = 0; k < j; k++)
                assert_true(cand[j].v[0] != cand[k].v[0] || cand[j].v[1] != cand[k].v[1] ||
                            cand[j].v[2] != cand[k].v[2]);
        }
        assert_int_equal(a->candidates(&s, &caches, cand, 1), 1);
    }
}

int main(void) {
#ifdef CPT_ISA_ONLY
    if (cpa_isa_best() < CPT_ISA_ONLY) {
        printf("skipped: the CPU (or OS) lacks %s\n", cpa_isa_name(CPT_ISA_ONLY));
        return 77;
    }
#endif
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_f2_3_worked),      cmocka_unit_test(test_f2x2_3x3_worked),
        cmocka_unit_test(test_layer_worked),     cmocka_unit_test(test_mult_count),
        cmocka_unit_test(test_kernel_sets),
        cmocka_unit_test(test_oracle_grid),      cmocka_unit_test(test_refusals),
        cmocka_unit_test(test_workspace_bounded), cmocka_unit_test(test_candidates),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
