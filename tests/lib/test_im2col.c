/* im2col_gemm against a SciPy worked example and, on a grid of shapes, against
 * the fp64 oracle; plus the 1x1 fast path, row blocking, split lowering and
 * the parameter metadata. */
#include <math.h>
#include <pthread.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "convpick/algo.h"
#include "convpick/oracle.h"
#include "algos/core/cpa.h"
#include "harness/measure/data.h"
#include "algos/core/im2col_lower.h"

/* An input for shape s, filled from a fixed seed (kept until exit). */
static const float *fixed_input(const cp_shape *s) {
    static float buf[4096];
    const size_t n = cp_shape_input_elems(s);
    assert_true(n <= sizeof buf / sizeof buf[0]);
    cph_fill_uniform(buf, n, 66);
    return buf;
}

static const cp_algo *algo(void) {
    const cp_algo *a = cp_algo_find("im2col_gemm");
    assert_non_null(a);
    return a;
}

/* A shape from the sizes; strides, pads, dilation 1/0 and groups 1 unless set. */
static cp_shape mk(int64_t n, int64_t c, int64_t h, int64_t w, int64_t k, int64_t r, int64_t s) {
    cp_shape sh = cp_shape_init();
    sh.n = n, sh.c = c, sh.h = h, sh.w = w, sh.k = k, sh.r = r, sh.s = s;
    return sh;
}

static cp_shape pad(cp_shape sh, int64_t t, int64_t l, int64_t b, int64_t r) {
    sh.pad_top = t, sh.pad_left = l, sh.pad_bottom = b, sh.pad_right = r;
    return sh;
}

static cp_shape strd(cp_shape sh, int64_t h, int64_t w) {
    sh.stride_h = h, sh.stride_w = w;
    return sh;
}

static cp_shape dil(cp_shape sh, int64_t h, int64_t w) {
    sh.dil_h = h, sh.dil_w = w;
    return sh;
}

static cp_shape grp(cp_shape sh, int64_t g) {
    sh.groups = g;
    return sh;
}

/* Splits [0, count) into nthreads ranges and runs them last first on the
 * calling thread: the partition a pool would make, without threads, and in an
 * order that would expose any dependence between ranges. */
static void split_reverse(void *pool, int64_t count, cp_task_fn fn, void *arg) {
    const int64_t parts = *(const int *)pool;
    for (int64_t i = parts - 1; i >= 0; i--) {
        const int64_t b = count * i / parts, e = count * (i + 1) / parts;
        if (b < e) fn(arg, b, e, (int)i);
    }
}

static int split_parts = 3;

/* Runs the layer through a plan and compares with the oracle.  y starts as
 * NaN so that any element run() leaves unwritten shows up as nonfinite.
 * Returns the measured rel_err. */
static double check(const cp_shape *s, cp_flip flip, int with_bias, const cp_params *params,
                    const cp_exec *exec) {
    char msg[256];
    assert_int_equal(cp_shape_validate(s, msg, sizeof msg), CP_SHAPE_OK);
    const size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
    const size_t ny = cp_shape_output_elems(s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
    float *b = malloc((size_t)s->k * sizeof *b), *y = malloc(ny * sizeof *y);
    double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
    assert_true(x && w && b && y && ref && mag);
    cph_fill_uniform(x, nx, 11);
    cph_fill_uniform(w, nw, 22);
    cph_fill_uniform(b, (size_t)s->k, 33);
    for (size_t i = 0; i < ny; i++) y[i] = NAN;

    cp_plan *plan = NULL;
    const int nthreads = exec ? cp_exec_threads(exec) : 1;
    cp_status st = cp_plan_create(algo(), s, flip, params, NULL, nthreads, w, &plan, msg,
                                  sizeof msg);
    if (st != CP_OK) fail_msg("plan: %s", msg);
    assert_int_equal(cp_plan_run(plan, x, with_bias ? b : NULL, y, exec), CP_OK);
    cp_oracle_run(s, flip, x, w, with_bias ? b : NULL, ref, mag);
    const cp_error e = cp_error_measure(y, ref, mag, ny);
    assert_int_equal(e.nonfinite, 0);
    if (!(e.rel_err <= algo()->tolerance)) {
        cp_shape_format(s, msg, sizeof msg);
        fail_msg("%s mode=%d bias=%d: rel_err %.3g > tolerance %.3g", msg, (int)flip, with_bias,
                 e.rel_err, algo()->tolerance);
    }
    cp_plan_destroy(plan);
    free(x), free(w), free(b), free(y), free(ref), free(mag);
    return e.rel_err;
}

static void check_all_modes(const cp_shape *s) {
    for (int flip = 0; flip < 2; flip++)
        for (int bias = 0; bias < 2; bias++) check(s, (cp_flip)flip, bias, NULL, NULL);
}

/* Worked example from SciPy 1.10.1 (Debian python3-scipy, run with /usr/bin/python3):
 *   x = np.arange(1, 21).reshape(4, 5); w = [[1,0,-1],[2,1,0],[0,-2,3]]
 *   scipy.signal.correlate2d(x, w, mode='full')  and  convolve2d(x, w, mode='full')
 * 'full' is padding 2 on every side.  Integer data: the results are exact. */
static void test_scipy_full(void **state) {
    (void)state;
    static const double xcorr[6][7] = {
        {3, 4, 5, 6, 7, -10, 0},     {18, 10, 14, 18, 22, -7, 10}, {32, 18, 32, 36, 40, 2, 25},
        {42, 23, 52, 56, 60, 12, 40}, {-11, 4, 47, 50, 53, 72, 55}, {-16, -17, -2, -2, -2, 19, 20}};
    static const double conv[6][7] = {
        {1, 2, 2, 2, 2, -4, -5},     {8, 12, 10, 13, 16, -4, -10}, {23, 30, 24, 28, 32, -2, 0},
        {38, 40, 44, 48, 52, 3, 10}, {32, 28, 62, 66, 70, 32, 45}, {0, -32, 14, 15, 16, 17, 60}};
    const float wv[9] = {1, 0, -1, 2, 1, 0, 0, -2, 3};
    float xv[20], y[42];
    for (int i = 0; i < 20; i++) xv[i] = (float)(i + 1);
    cp_shape s = pad(mk(1, 1, 4, 5, 1, 3, 3), 2, 2, 2, 2);
    for (int flip = 0; flip < 2; flip++) {
        cp_plan *plan = NULL;
        char msg[256];
        assert_int_equal(cp_plan_create(algo(), &s, (cp_flip)flip, NULL, NULL, 1, wv, &plan, msg,
                                        sizeof msg),
                         CP_OK);
        for (int i = 0; i < 42; i++) y[i] = NAN;
        assert_int_equal(cp_plan_run(plan, xv, NULL, y, NULL), CP_OK);
        const double(*want)[7] = flip == CP_CONV ? conv : xcorr;
        for (int p = 0; p < 6; p++)
            for (int q = 0; q < 7; q++) assert_true((double)y[p * 7 + q] == want[p][q]);
        cp_plan_destroy(plan);
    }
}

/* The grid the contract asks every algorithm to survive. */
static void test_grid(void **state) {
    (void)state;
    const cp_shape grid[] = {
        mk(1, 3, 1, 1, 4, 1, 1),                          /* 1x1 image, 1x1 kernel */
        pad(mk(1, 2, 1, 1, 3, 3, 3), 1, 1, 1, 1),         /* 1x1 image, 3x3 kernel, padded */
        pad(mk(1, 2, 2, 3, 2, 5, 5), 2, 2, 2, 2),         /* H, W smaller than the kernel */
        pad(mk(1, 4, 7, 7, 5, 3, 3), 1, 1, 1, 1),         /* odd sizes */
        mk(1, 3, 13, 13, 4, 3, 3),
        pad(mk(1, 2, 17, 17, 3, 5, 5), 2, 2, 2, 2),
        pad(mk(1, 1, 9, 11, 3, 3, 3), 1, 1, 1, 1),        /* C = 1 */
        pad(mk(1, 5, 9, 8, 1, 3, 3), 1, 1, 1, 1),         /* K = 1 */
        grp(pad(mk(1, 6, 9, 9, 6, 3, 3), 1, 1, 1, 1), 6), /* depthwise */
        grp(pad(mk(1, 6, 8, 9, 12, 3, 3), 1, 1, 1, 1), 6), /* depthwise, multiplier 2 */
        grp(pad(mk(1, 4, 9, 9, 6, 3, 3), 1, 1, 1, 1), 2), /* groups = 2 */
        dil(pad(mk(1, 3, 13, 13, 4, 3, 3), 2, 2, 2, 2), 2, 2), /* dilation 2 */
        dil(mk(1, 2, 13, 11, 3, 3, 2), 2, 3),             /* unequal dilation */
        strd(pad(mk(1, 3, 13, 13, 4, 3, 3), 1, 1, 1, 1), 2, 2), /* stride 2 */
        strd(pad(mk(1, 3, 17, 16, 4, 3, 3), 1, 1, 1, 1), 3, 3), /* stride 3 */
        strd(mk(1, 3, 13, 17, 2, 2, 3), 2, 3),            /* unequal strides, even kernel */
        pad(mk(1, 3, 7, 13, 4, 3, 3), 0, 2, 1, 0),        /* asymmetric padding */
        pad(mk(1, 2, 8, 8, 3, 4, 4), 1, 2, 2, 1),         /* even kernel, asymmetric pad */
        pad(mk(3, 3, 7, 9, 4, 3, 3), 1, 1, 1, 1),         /* batch 3 */
        strd(pad(mk(1, 3, 224 / 8, 224 / 8, 8, 7, 7), 3, 3, 3, 3), 2, 2), /* stem-like 7x7/2 */
        mk(1, 16, 7, 13, 8, 1, 1),                        /* 1x1 fast path */
        mk(3, 8, 5, 7, 6, 1, 1),                          /* 1x1 fast path, batch 3 */
        grp(mk(2, 8, 5, 5, 12, 1, 1), 4),                 /* 1x1 fast path, groups 4 */
        strd(mk(2, 8, 9, 9, 4, 1, 1), 2, 2),              /* 1x1 stride 2: lowered */
        dil(mk(1, 4, 5, 5, 3, 1, 1), 2, 2),               /* 1x1 dilated: still the fast path */
    };
    for (size_t i = 0; i < sizeof grid / sizeof grid[0]; i++) check_all_modes(&grid[i]);
}

/* 1x1 at stride 1 without padding: no lowering, so no workspace; the flip is
 * the identity, so no prepared weights either.  Any other shape lowers. */
static void test_pointwise_path(void **state) {
    (void)state;
    const cp_algo *a = algo();
    cp_params p;
    cp_shape s = grp(mk(2, 8, 5, 5, 12, 1, 1), 4);
    cp_algo_defaults(a, &s, NULL, &p);
    assert_int_equal(a->workspace_size(&s, CP_XCORR, &p, 2), 0);
    assert_int_equal(a->workspace_size(&s, CP_CONV, &p, 2), 0);
    assert_int_equal(a->prepared_size(&s, CP_CONV, &p), 0);
    check(&s, CP_CONV, 1, &p, NULL);

    cp_shape strided = strd(mk(2, 8, 9, 9, 4, 1, 1), 2, 2);
    cp_algo_defaults(a, &strided, NULL, &p);
    assert_true(a->workspace_size(&strided, CP_XCORR, &p, 1) > 0);
    cp_shape dilated = dil(mk(1, 8, 9, 9, 4, 1, 1), 2, 3);
    cp_algo_defaults(a, &dilated, NULL, &p);
    assert_int_equal(a->workspace_size(&dilated, CP_XCORR, &p, 1), 0);

    cp_shape k3 = pad(mk(1, 4, 9, 9, 4, 3, 3), 1, 1, 1, 1);
    cp_algo_defaults(a, &k3, NULL, &p);
    assert_int_equal(a->prepared_size(&k3, CP_XCORR, &p), 0);
    assert_int_equal(a->prepared_size(&k3, CP_CONV, &p), cp_shape_weight_elems(&k3) * sizeof(float));
}

/* Output rows lowered a few at a time, including blocks that do not divide P
 * and a block larger than P. */
static void test_row_blocks(void **state) {
    (void)state;
    cp_shape s = grp(strd(pad(mk(2, 4, 13, 11, 6, 3, 3), 1, 2, 1, 0), 1, 2), 2);
    const int64_t blocks[] = {1, 2, 5, 12, 13, 1000};
    for (size_t i = 0; i < sizeof blocks / sizeof blocks[0]; i++) {
        cp_params p;
        memset(&p, 0, sizeof p);
        p.v[0] = blocks[i];
        check(&s, CP_XCORR, 1, &p, NULL);
        check(&s, CP_CONV, 0, &p, NULL);
    }
    /* A smaller block needs less workspace (bounded workspace for big layers). */
    cp_params one = {{1}}, all = {{13}};
    assert_true(algo()->workspace_size(&s, CP_XCORR, &one, 1) <
                algo()->workspace_size(&s, CP_XCORR, &all, 1));
}

/* Big enough that the lowering is split over workers (see LOWER_PARALLEL_MIN),
 * run through an executor that hands the ranges out in reverse order. */
static void test_split_lowering(void **state) {
    (void)state;
    cp_exec ex = {split_parts, split_reverse, &split_parts};
    cp_shape s = pad(mk(2, 16, 32, 32, 8, 3, 3), 1, 1, 1, 1);
    check(&s, CP_XCORR, 1, NULL, &ex);
    check(&s, CP_CONV, 1, NULL, &ex);
    cp_params p = {{5}};
    check(&s, CP_CONV, 0, &p, &ex);
}

/* A real threaded executor: threads started per call, worker 0 is the
 * calling thread, contiguous ranges as a pool would hand out. */
enum { THREADS = 3 };
typedef struct {
    cp_task_fn fn;
    void *arg;
    int64_t b, e;
    int worker;
} thread_range;

static void *thread_main(void *p) {
    const thread_range *t = p;
    t->fn(t->arg, t->b, t->e, t->worker);
    return NULL;
}

static void threads_for(void *pool, int64_t count, cp_task_fn fn, void *arg) {
    (void)pool;
    thread_range tr[THREADS];
    pthread_t th[THREADS];
    for (int i = 0; i < THREADS; i++) {
        tr[i] = (thread_range){fn, arg, count * i / THREADS, count * (i + 1) / THREADS, i};
        if (i > 0) assert_int_equal(pthread_create(&th[i], NULL, thread_main, &tr[i]), 0);
    }
    thread_main(&tr[0]);
    for (int i = 1; i < THREADS; i++) assert_int_equal(pthread_join(th[i], NULL), 0);
}

/* Lowering on three threads gives bit-for-bit the serial result: the rows
 * are independent and the GEMM is the same call. */
static void test_threaded_lowering(void **state) {
    (void)state;
    const cp_algo *a = algo();
    cp_exec ex = {THREADS, threads_for, NULL}, serial = cp_exec_serial();
    const cp_shape s = strd(pad(mk(2, 24, 45, 43, 6, 3, 5), 1, 2, 1, 2), 1, 1);
    const size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s);
    const size_t ny = cp_shape_output_elems(&s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w), *b = malloc(6 * sizeof *b);
    float *y1 = malloc(ny * sizeof *y1), *y3 = malloc(ny * sizeof *y3);
    assert_true(x && w && b && y1 && y3);
    cph_fill_uniform(x, nx, 77);
    cph_fill_uniform(w, nw, 88);
    cph_fill_uniform(b, 6, 99);
    const int64_t blocks[] = {1, 7, 45};
    for (size_t bi = 0; bi < sizeof blocks / sizeof blocks[0]; bi++)
        for (int flip = 0; flip < 2; flip++) {
            cp_params p = {{blocks[bi]}};
            cp_plan *plan = NULL;
            char msg[256];
            assert_int_equal(cp_plan_create(a, &s, (cp_flip)flip, &p, NULL, THREADS, w, &plan,
                                            msg, sizeof msg),
                             CP_OK);
            assert_int_equal(cp_plan_run(plan, x, b, y1, &serial), CP_OK);
            assert_int_equal(cp_plan_run(plan, x, b, y3, &ex), CP_OK);
            assert_memory_equal(y1, y3, ny * sizeof *y1);
            cp_plan_destroy(plan);
        }
    free(x), free(w), free(b), free(y1), free(y3);
}

/* run() called directly with a workspace full of NaN: every column element
 * the GEMM reads must have been written (contents are undefined on entry).
 * Top padding 2 with one output row per block puts a row's first valid output
 * row beyond the block; reverse-order split ranges would expose a write past
 * a row's block into the next row's (already lowered) data. */
static void test_dirty_workspace(void **state) {
    (void)state;
    const cp_algo *a = algo();
    cp_exec ex = {split_parts, split_reverse, &split_parts};
    const cp_shape shapes[] = {
        pad(mk(1, 48, 64, 64, 2, 5, 5), 2, 2, 2, 2), /* 1200 x 64 per block: split */
        strd(dil(pad(mk(2, 30, 41, 37, 4, 3, 3), 4, 1, 3, 2), 2, 1), 1, 2),
        pad(mk(1, 3, 9, 9, 4, 3, 3), 2, 0, 0, 2),
    };
    const int64_t blocks[] = {1, 2, 1000};
    for (size_t i = 0; i < sizeof shapes / sizeof shapes[0]; i++)
        for (size_t bi = 0; bi < sizeof blocks / sizeof blocks[0]; bi++)
            for (int flip = 0; flip < 2; flip++) {
                const cp_shape *s = &shapes[i];
                assert_int_equal(cp_shape_validate(s, NULL, 0), CP_SHAPE_OK);
                cp_params p = {{blocks[bi]}};
                const size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
                const size_t ny = cp_shape_output_elems(s);
                const size_t ws = a->workspace_size(s, (cp_flip)flip, &p, split_parts);
                const size_t ps = a->prepared_size(s, (cp_flip)flip, &p);
                float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
                float *y = malloc(ny * sizeof *y), *work = aligned_alloc(64, cpa_align64(ws));
                void *prep = ps ? aligned_alloc(64, cpa_align64(ps)) : NULL;
                double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
                assert_true(x && w && y && work && ref && mag && (prep || !ps));
                cph_fill_uniform(x, nx, 44);
                cph_fill_uniform(w, nw, 55);
                for (size_t j = 0; j < ws / sizeof(float); j++) work[j] = NAN;
                for (size_t j = 0; j < ny; j++) y[j] = NAN;
                if (ps) assert_int_equal(a->prepare(s, (cp_flip)flip, &p, w, prep), CP_OK);
                cp_run_args ra = {s, (cp_flip)flip, &p, x, ps ? prep : (const void *)w, NULL,
                                  y, work, &ex};
                assert_int_equal(a->run(&ra), CP_OK);
                cp_oracle_run(s, (cp_flip)flip, x, w, NULL, ref, mag);
                const cp_error e = cp_error_measure(y, ref, mag, ny);
                assert_int_equal(e.nonfinite, 0);
                assert_true(e.rel_err <= a->tolerance);
                free(x), free(w), free(y), free(work), free(prep), free(ref), free(mag);
            }
}

/* The lowering of one column-matrix row writes exactly that row's columns of
 * the block, nothing before or after (workers lower neighbouring rows at the
 * same time).  Large top padding with one-row blocks puts a row's first valid
 * output row beyond the block. */
static void test_lower_writes_own_row(void **state) {
    (void)state;
    const cp_shape shapes[] = {
        dil(pad(mk(1, 2, 12, 16, 1, 3, 1), 4, 0, 4, 0), 2, 1),
        strd(pad(mk(1, 2, 11, 9, 1, 5, 5), 4, 3, 2, 1), 2, 3),
        pad(mk(1, 1, 3, 3, 1, 3, 3), 2, 2, 2, 2),
    };
    for (size_t i = 0; i < sizeof shapes / sizeof shapes[0]; i++) {
        const cp_shape *s = &shapes[i];
        assert_int_equal(cp_shape_validate(s, NULL, 0), CP_SHAPE_OK);
        const int64_t P = cp_shape_out_h(s), Q = cp_shape_out_w(s), rows = s->c * s->r * s->s;
        for (int64_t rb = 1; rb <= P; rb++)
            for (int64_t p0 = 0; p0 < P; p0 += rb) {
                const int64_t p1 = p0 + rb < P ? p0 + rb : P, cols = (p1 - p0) * Q;
                const int64_t ld = cols + 3;
                const size_t total = (size_t)(rows * ld + 16);
                float *col = malloc(total * sizeof *col);
                assert_non_null(col);
                for (int64_t row = 0; row < rows; row++) {
                    for (size_t j = 0; j < total; j++) col[j] = -7.0f; /* not in [-1, 1) */
                    cpa_im2col_lower_rows(s, (const float *)fixed_input(s), p0, p1, col, ld,
                                          row, row + 1);
                    for (int64_t j = 0; j < (int64_t)total; j++) {
                        const int mine = j >= row * ld && j < row * ld + cols;
                        if (mine)
                            assert_true(col[j] >= -1.0f && col[j] < 1.0f);
                        else
                            assert_true(col[j] == -7.0f);
                    }
                }
                free(col);
            }
    }
}

/* Defaults and every candidate pass the range check, the default comes first,
 * and a workspace from the defaults fits in half the L2 given unless that
 * leaves the GEMM fewer than 512 columns. */
static void test_params(void **state) {
    (void)state;
    const cp_algo *a = algo();
    char msg[256];
    assert_int_equal(a->nparams, 1);
    assert_int_equal(cp_algo_param_index(a, "row_block"), 0);
    cp_params bad = {{0}};
    assert_int_equal(cp_params_check(a, &bad, msg, sizeof msg), CP_EINVAL);
    assert_non_null(strstr(msg, "row_block"));

    cp_cache_sizes small = {32u << 10, 512u << 10, 1u << 20, 64u};
    cp_shape s = pad(mk(1, 64, 56, 56, 64, 3, 3), 1, 1, 1, 1);
    cp_params d, cand[8];
    cp_algo_defaults(a, &s, &small, &d);
    assert_int_equal(cp_params_check(a, &d, msg, sizeof msg), CP_OK);
    /* Half of L2 (256 KiB) holds 2 rows' columns (576 x 112 floats = 252 KiB),
     * so the 512-column floor binds: 10 rows (560 columns); equal blocks of
     * ceil(56 / ceil(56 / 10)) = 10 rows. */
    assert_int_equal(d.v[0], 10);
    cp_cache_sizes big = {32u << 10, 4u << 20, 32u << 20, 64u};
    cp_params db;
    cp_algo_defaults(a, &s, &big, &db);
    /* 2 MiB holds 16 rows (576 x 896 floats = 2016 KiB): 4 equal blocks of 14
     * rows, within half of L2 */
    assert_int_equal(db.v[0], 14);
    assert_true(a->workspace_size(&s, CP_XCORR, &db, 1) <= big.l2 / 2);
    const int n = a->candidates(&s, &small, cand, 8);
    assert_true(n >= 2 && n <= 8);
    assert_int_equal(cand[0].v[0], d.v[0]);
    for (int i = 0; i < n; i++) {
        assert_int_equal(cp_params_check(a, &cand[i], msg, sizeof msg), CP_OK);
        for (int j = 0; j < i; j++) assert_true(cand[i].v[0] != cand[j].v[0]);
    }
    assert_int_equal(a->candidates(&s, &small, cand, 1), 1);
    /* Every candidate computes the right thing (on a smaller layer). */
    cp_shape t = pad(mk(1, 8, 19, 19, 4, 3, 3), 1, 1, 1, 1);
    const int nt = a->candidates(&t, &small, cand, 8);
    for (int i = 0; i < nt; i++) check(&t, CP_XCORR, 1, &cand[i], NULL);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_scipy_full),   cmocka_unit_test(test_grid),
        cmocka_unit_test(test_pointwise_path), cmocka_unit_test(test_row_blocks),
        cmocka_unit_test(test_split_lowering), cmocka_unit_test(test_dirty_workspace),
        cmocka_unit_test(test_lower_writes_own_row), cmocka_unit_test(test_threaded_lowering),
        cmocka_unit_test(test_params),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
