/* Tests of the blocked direct convolution (blocked, blocked_flipidx): the
 * tile kernels (portable and AVX2; built again as test_blocked_avx512 with
 * CPT_ISA_ONLY=3 for the AVX-512 one, which exits 77 on a CPU without it) in
 * both modes against the fp64 oracle over a grid of awkward shapes (small planes
 * included, which take the channel-vector tile at the AVX-512 level), every tuner
 * candidate, flipped indexing against flipped packing, a multi-threaded run
 * against the serial one, and a worked example whose values come from SciPy. */
#include <math.h>
#include <pthread.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "algos/kernels/blocked_tile.h"
#include "convpick/algo.h"
#include "convpick/oracle.h"

/* The tile_isa levels every test runs (CPA_ISA_*). */
#ifdef CPT_ISA_ONLY
static const int64_t levels[] = {CPT_ISA_ONLY};
#else
static const int64_t levels[] = {CPA_ISA_PORTABLE, CPA_ISA_AVX2};
#endif
#define NLEVELS ((int64_t)(sizeof levels / sizeof levels[0]))

typedef struct {
    int64_t n, c, h, w, k, r, s, sh, sw, pt, pl, pb, pr, dh, dw, groups;
} geo;

static cp_shape mk(geo g) {
    cp_shape s = cp_shape_init();
    s.n = g.n; s.c = g.c; s.h = g.h; s.w = g.w; s.k = g.k; s.r = g.r; s.s = g.s;
    s.stride_h = g.sh; s.stride_w = g.sw;
    s.pad_top = g.pt; s.pad_left = g.pl; s.pad_bottom = g.pb; s.pad_right = g.pr;
    s.dil_h = g.dh; s.dil_w = g.dw; s.groups = g.groups;
    return s;
}

/* The grid: n c h w k r s sh sw pt pl pb pr dh dw groups. */
static const geo grid[] = {
    {1, 3, 1, 1, 5, 1, 1, 1, 1, 0, 0, 0, 0, 1, 1, 1},      /* 1x1 image, 1x1 kernel */
    {1, 4, 1, 1, 7, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1},      /* 1x1 image, 3x3 pad 1 */
    {1, 2, 2, 3, 5, 5, 5, 1, 1, 2, 2, 2, 2, 1, 1, 1},      /* image smaller than kernel */
    {1, 5, 7, 7, 13, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1},     /* odd 7, K=13 */
    {1, 3, 13, 13, 8, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1},    /* odd 13 */
    {1, 6, 17, 17, 6, 5, 5, 1, 1, 2, 2, 2, 2, 1, 1, 1},    /* odd 17, 5x5 */
    {1, 1, 9, 11, 4, 3, 3, 1, 1, 0, 0, 0, 0, 1, 1, 1},     /* C=1 */
    {1, 7, 10, 9, 1, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1},     /* K=1 */
    {1, 8, 12, 12, 8, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 8},    /* depthwise */
    {1, 8, 13, 12, 16, 3, 3, 2, 2, 1, 1, 1, 1, 1, 1, 8},   /* depthwise x2, stride 2 */
    {1, 6, 9, 9, 10, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 2},     /* groups=2, K/g=5 */
    {1, 4, 15, 13, 6, 3, 3, 1, 1, 2, 2, 2, 2, 2, 2, 1},    /* dilation 2 */
    {1, 5, 14, 15, 7, 3, 3, 2, 2, 1, 1, 1, 1, 1, 1, 1},    /* stride 2 */
    {1, 3, 16, 17, 9, 3, 3, 3, 3, 1, 1, 1, 1, 1, 1, 1},    /* stride 3 */
    {1, 4, 10, 11, 5, 3, 3, 2, 1, 0, 2, 1, 0, 1, 1, 1},    /* asymmetric pads, strides */
    {3, 6, 9, 10, 11, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1},    /* batch 3 */
    {1, 16, 14, 14, 13, 1, 1, 2, 2, 0, 0, 0, 0, 1, 1, 1},  /* 1x1 stride 2 */
    {1, 8, 15, 15, 12, 3, 3, 2, 2, 1, 1, 1, 1, 1, 1, 1},   /* 3x3 stride 2 */
    {1, 4, 19, 19, 7, 5, 5, 2, 2, 2, 2, 2, 2, 1, 1, 1},    /* 5x5 stride 2 */
    {1, 3, 23, 23, 8, 7, 7, 2, 2, 3, 3, 3, 3, 1, 1, 1},    /* 7x7 stride 2 */
    {2, 9, 7, 13, 14, 1, 1, 1, 1, 0, 0, 0, 0, 1, 1, 1},    /* x read in place, tail reads */
    {1, 12, 14, 14, 10, 1, 1, 1, 1, 0, 0, 0, 0, 1, 1, 1},  /* 1x1 flat runs across rows */
    {1, 3, 8, 9, 5, 3, 2, 1, 1, 0, 0, 0, 0, 1, 2, 1},      /* R != S, no pad, dilation w */
    /* Small planes with K/groups >= 64: at the AVX-512 level these take the
     * channel-vector tile (7x7 and 14x14 read through padded rows lose a
     * quarter of 16-lane vectors; blocked_tile.h), the other levels their
     * pixel tiles.  The first is the next-to-last entry, CV_FIRST. */
    {1, 5, 7, 7, 64, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1},     /* 7x7 3x3, one 64-channel tile */
    {1, 9, 14, 14, 120, 1, 1, 2, 2, 0, 0, 0, 0, 1, 1, 1},  /* 1x1 stride 2 -> 7x7, 56 in tile 2 */
    {1, 6, 13, 13, 64, 3, 3, 2, 2, 1, 1, 1, 1, 1, 1, 1},   /* 3x3 stride 2 -> 7x7 */
    {1, 70, 7, 7, 128, 1, 1, 1, 1, 0, 0, 0, 0, 1, 1, 1},   /* 7x7 1x1 read in place */
    {1, 4, 14, 14, 128, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 2},  /* 14x14, groups 2: rows of 7+7 */
    {2, 3, 5, 9, 64, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1},     /* batch 2, rows of 4+5 */
    {1, 160, 9, 9, 20, 3, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1},   /* several input-channel blocks */
};
enum { CV_FIRST = 23, CV_N = 6 };
#define NGRID (sizeof grid / sizeof grid[0])

static uint32_t rng_state = 12345u;
static float frand(void) { /* xorshift32, uniform in [-1, 1) */
    rng_state ^= rng_state << 13;
    rng_state ^= rng_state >> 17;
    rng_state ^= rng_state << 5;
    return (float)(rng_state >> 8) / 8388608.0f - 1.0f;
}

typedef struct {
    cp_shape s;
    float *x, *w, *b;
    double *ref, *mag;
    size_t ny;
} layer;

static void layer_make(layer *L, const cp_shape *s, cp_flip flip, int with_bias) {
    char msg[256];
    assert_int_equal(cp_shape_validate(s, msg, sizeof msg), CP_SHAPE_OK);
    L->s = *s;
    size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
    L->ny = cp_shape_output_elems(s);
    L->x = malloc(nx * sizeof(float));
    L->w = malloc(nw * sizeof(float));
    L->b = with_bias ? malloc((size_t)s->k * sizeof(float)) : NULL;
    L->ref = malloc(L->ny * sizeof(double));
    L->mag = malloc(L->ny * sizeof(double));
    assert_non_null(L->x); assert_non_null(L->w); assert_non_null(L->ref); assert_non_null(L->mag);
    for (size_t i = 0; i < nx; i++) L->x[i] = frand();
    for (size_t i = 0; i < nw; i++) L->w[i] = frand();
    if (L->b)
        for (int64_t i = 0; i < s->k; i++) L->b[i] = frand();
    cp_oracle_run(s, flip, L->x, L->w, L->b, L->ref, L->mag);
}

static void layer_free(layer *L) {
    free(L->x); free(L->w); free(L->b); free(L->ref); free(L->mag);
}

/* Runs algo on L with params p (NULL: defaults) on exec with nthreads; y is
 * pre-filled with NaN so that an output never written shows up. */
static float *run_algo(const cp_algo *a, layer *L, cp_flip flip, const cp_params *p,
                       const cp_exec *exec, int nthreads) {
    char msg[256] = "";
    cp_plan *plan = NULL;
    cp_status st = cp_plan_create(a, &L->s, flip, p, NULL, nthreads, L->w, &plan, msg, sizeof msg);
    if (st != CP_OK) fail_msg("plan_create: %s", msg);
    float *y = malloc(L->ny * sizeof(float));
    assert_non_null(y);
    for (size_t i = 0; i < L->ny; i++) y[i] = NAN;
    assert_int_equal(cp_plan_run(plan, L->x, L->b, y, exec), CP_OK);
    cp_plan_destroy(plan);
    return y;
}

static void expect_accurate(const cp_algo *a, const layer *L, const float *y, const char *what) {
    cp_error e = cp_error_measure(y, L->ref, L->mag, L->ny);
    if (e.nonfinite != 0 || !(e.rel_err <= a->tolerance)) {
        char sh[256];
        cp_shape_format(&L->s, sh, sizeof sh);
        fail_msg("%s %s [%s]: rel_err %.3g (tolerance %.3g), %zu non-finite", a->name, what, sh,
                 e.rel_err, a->tolerance, e.nonfinite);
    }
}

static cp_params defaults_with_tile_isa(const cp_algo *a, const cp_shape *s, int64_t uk) {
    cp_params p;
    cp_algo_defaults(a, s, NULL, &p);
    p.v[cp_algo_param_index(a, "tile_isa")] = uk;
    return p;
}

/* Every grid shape x kernel level x loop order x {xcorr, conv} (blocked) and
 * conv (blocked_flipidx), bias on every other shape. */
static void test_grid_vs_oracle(void **state) {
    (void)state;
    const cp_algo *blk = cp_algo_find("blocked"), *flp = cp_algo_find("blocked_flipidx");
    assert_non_null(blk); assert_non_null(flp);
    for (size_t i = 0; i < NGRID; i++) {
        const cp_shape s = mk(grid[i]);
        for (int m = 0; m < 2; m++) {
            const cp_flip flip = m ? CP_CONV : CP_XCORR;
            layer L;
            layer_make(&L, &s, flip, (int)(i % 2));
            for (int64_t e = 0; e < 2 * NLEVELS; e++) { /* level; other loop order */
                const int64_t uk = levels[e % NLEVELS];
                const char *what = cpa_isa_name(cpa_isa_resolve(uk));
                cp_params p = defaults_with_tile_isa(blk, &s, uk);
                const int oi = cp_algo_param_index(blk, "order");
                if (e >= NLEVELS) p.v[oi] = !p.v[oi];
                float *y = run_algo(blk, &L, flip, &p, NULL, 1);
                expect_accurate(blk, &L, y, what);
                free(y);
                if (flip == CP_CONV) {
                    y = run_algo(flp, &L, flip, &p, NULL, 1);
                    expect_accurate(flp, &L, y, what);
                    free(y);
                }
            }
            layer_free(&L);
        }
    }
}

/* The tuner's whole search space must compute the same layer correctly. */
static void test_candidates_all_correct(void **state) {
    (void)state;
    const cp_algo *blk = cp_algo_find("blocked");
    const size_t picks[] = {NGRID - 1, 15, 12, 9, 20, 21};
    for (size_t pi = 0; pi < sizeof picks / sizeof picks[0]; pi++) {
        const cp_shape s = mk(grid[picks[pi]]);
        cp_cache_sizes cs = cp_cache_sizes_fallback();
        cp_params cand[16];
        int nc = blk->candidates(&s, &cs, cand, 16);
        assert_true(nc >= 1);
        if (pi == 0) assert_true(nc >= 4); /* 160 channels: several distinct cb, kb, pb */
        /* Where the CPU has AVX-512 the tuner also races the AVX2 tile (issue:
         * the tuner tries each kernel the CPU has). */
        int has_avx2 = 0;
        for (int i = 0; i < nc; i++)
            has_avx2 |= cand[i].v[cp_algo_param_index(blk, "tile_isa")] == CPA_ISA_AVX2;
        assert_int_equal(has_avx2, cpa_isa_best() == CPA_ISA_AVX512);
        for (int m = 0; m < 2; m++) {
            const cp_flip flip = m ? CP_CONV : CP_XCORR;
            layer L;
            layer_make(&L, &s, flip, 1);
            for (int i = 0; i < nc; i++) {
                char msg[128];
                assert_int_equal(cp_params_check(blk, &cand[i], msg, sizeof msg), CP_OK);
                for (int64_t li = 0; li < NLEVELS; li++) {
                    cp_params p = cand[i];
                    p.v[cp_algo_param_index(blk, "tile_isa")] = levels[li];
                    float *y = run_algo(blk, &L, flip, &p, NULL, 1);
                    expect_accurate(blk, &L, y, "candidate");
                    free(y);
                }
            }
            layer_free(&L);
        }
    }
}

/* Explicit small blocks: one input channel, one channel tile, one row per block. */
static void test_smallest_blocks(void **state) {
    (void)state;
    const cp_algo *blk = cp_algo_find("blocked");
    const cp_shape s = mk(grid[NGRID - 1]);
    layer L;
    layer_make(&L, &s, CP_XCORR, 1);
    for (int64_t uk = 0; uk <= 1; uk++) {
        cp_params p = {{1, 1, 1, uk, 0, 0}};
        float *y = run_algo(blk, &L, CP_XCORR, &p, NULL, 1);
        expect_accurate(blk, &L, y, "kb=cb=pb=1");
        free(y);
    }
    layer_free(&L);
}

/* Flipped indexing (unflipped packing) equals flipped packing up to tolerance. */
static void test_flipidx_equals_blocked_conv(void **state) {
    (void)state;
    const cp_algo *blk = cp_algo_find("blocked"), *flp = cp_algo_find("blocked_flipidx");
    for (size_t i = 0; i < NGRID; i++) {
        const cp_shape s = mk(grid[i]);
        layer L;
        layer_make(&L, &s, CP_CONV, 1);
        float *y1 = run_algo(blk, &L, CP_CONV, NULL, NULL, 1);
        float *y2 = run_algo(flp, &L, CP_CONV, NULL, NULL, 1);
        for (size_t e = 0; e < L.ny; e++) {
            const double d = fabs((double)y1[e] - (double)y2[e]);
            if (!(d <= 2.0 * blk->tolerance * L.mag[e]))
                fail_msg("shape %zu element %zu: blocked %g, blocked_flipidx %g", i, e,
                         (double)y1[e], (double)y2[e]);
        }
        free(y1); free(y2);
        layer_free(&L);
    }
}

static void test_flipidx_refuses_xcorr(void **state) {
    (void)state;
    const cp_algo *flp = cp_algo_find("blocked_flipidx"), *blk = cp_algo_find("blocked");
    const cp_shape s = mk(grid[3]);
    char why[256] = "";
    assert_int_equal(flp->supports(&s, CP_XCORR, why, sizeof why), 0);
    assert_true(strlen(why) > 0);
    assert_int_equal(flp->supports(&s, CP_CONV, why, sizeof why), 1);
    assert_int_equal(blk->supports(&s, CP_XCORR, why, sizeof why), 1);
    assert_int_equal(blk->supports(&s, CP_CONV, why, sizeof why), 1);
}

/* tile_isa=1 must give the portable kernel whatever the CPU; 0 the widest the
 * CPU has; a forced level never runs above what the CPU has (common practice,
 * no source: a binary must not execute an instruction its CPU lacks). */
static void test_select_levels(void **state) {
    (void)state;
    const cpa_blocked_kernel ref = cpa_blocked_tile_select(CPA_ISA_PORTABLE);
    assert_ptr_equal(ref.fn, cpa_blocked_tile_ref_6x16);
    assert_int_equal(ref.full_reads, 0);
    const int best = cpa_isa_best();
    assert_int_equal(cpa_blocked_tile_select(CPA_ISA_BEST).isa, best);
    for (int64_t l = CPA_ISA_PORTABLE; l <= CPA_ISA_AVX512; l++) {
        const cpa_blocked_kernel k = cpa_blocked_tile_select(l);
        assert_true(k.isa <= best && k.isa <= l);
        assert_true(k.nv * k.nseg <= CPA_BLOCKED_SEGS * CPA_BLOCKED_NV_MAX);
        if (k.isa == CPA_ISA_AVX512) assert_ptr_equal(k.fn, cpa_blocked_tile_avx512_6x64);
        if (k.isa == CPA_ISA_AVX2) assert_ptr_equal(k.fn, cpa_blocked_tile_avx2_6x16);
    }
}

/* --- a tiny pthread executor: [0, count) in nthreads contiguous ranges ---- */

typedef struct {
    cp_task_fn fn;
    void *arg;
    int64_t b, e;
    int worker;
} slice;

static void *slice_main(void *p) {
    slice *s = p;
    s->fn(s->arg, s->b, s->e, s->worker);
    return NULL;
}

static void pthread_for(void *pool, int64_t count, cp_task_fn fn, void *arg) {
    const int nt = *(const int *)pool;
    pthread_t th[8];
    slice sl[8];
    int used = 0;
    for (int t = 0; t < nt; t++) {
        const int64_t b = count * t / nt, e = count * (t + 1) / nt;
        if (b == e) continue;
        sl[used] = (slice){fn, arg, b, e, t};
        assert_int_equal(pthread_create(&th[used], NULL, slice_main, &sl[used]), 0);
        used++;
    }
    for (int t = 0; t < used; t++) pthread_join(th[t], NULL);
}

static void test_threads_equal_serial(void **state) {
    (void)state;
    static int nthreads = 3;
    const cp_exec ex = {nthreads, pthread_for, &nthreads};
    const cp_algo *blk = cp_algo_find("blocked");
    const size_t picks[] = {15, 9, 20, 21, NGRID - 1, CV_FIRST + 1, CV_FIRST + 4};
    for (size_t pi = 0; pi < sizeof picks / sizeof picks[0]; pi++) {
        const cp_shape s = mk(grid[picks[pi]]);
        layer L;
        layer_make(&L, &s, CP_XCORR, 1);
        float *ys = run_algo(blk, &L, CP_XCORR, NULL, NULL, 1);
        float *yp = run_algo(blk, &L, CP_XCORR, NULL, &ex, nthreads);
        /* Same blocks, same summation order: bitwise equal. */
        assert_memory_equal(ys, yp, L.ny * sizeof(float));
        expect_accurate(blk, &L, yp, "threads");
        free(ys); free(yp);
        layer_free(&L);
    }
}

/* Worked example from SciPy 1.x (Debian python3-scipy):
 *   x = [[(3i+5j) % 7 - 3 for j in 0..5] for i in 0..4], w = [[1,-2,0],[3,1,-1],[0,2,1]]
 *   scipy.signal.correlate2d(x, w, 'valid') and convolve2d(x, w, 'valid'),
 *   correlate2d(x, w, 'same') (zero padding 1). */
static void test_scipy_worked_example(void **state) {
    (void)state;
    static const float wv[9] = {1, -2, 0, 3, 1, -1, 0, 2, 1};
    static const float xcorr_valid[12] = {-11, -7, 11, 1, 11, 1, -9, -5, -9, -5, 20, -11};
    static const float conv_valid[12] = {5, 9, -1, -11, -1, -11, 7, 11, 7, 11, -20, 5};
    static const float xcorr_same[30] = {-7, -8, 15, -4, -9, 4,  15, -11, -7, 11, 1,   -5,
                                         -3, 11, 1,  -9, -5, 17, 0,  -9,  -5, 20, -11, -3,
                                         4,  13, -12, -2, 15, -6};
    float x[30];
    for (int i = 0; i < 5; i++)
        for (int j = 0; j < 6; j++) x[i * 6 + j] = (float)((3 * i + 5 * j) % 7 - 3);
    const cp_algo *algos[2] = {cp_algo_find("blocked"), cp_algo_find("blocked_flipidx")};
    for (int pad = 0; pad <= 1; pad++) {
        cp_shape s = mk((geo){1, 1, 5, 6, 1, 3, 3, 1, 1, pad, pad, pad, pad, 1, 1, 1});
        for (int ai = 0; ai < 2; ai++)
            for (int m = 0; m < 2; m++) {
                const cp_flip flip = m ? CP_CONV : CP_XCORR;
                if (!algos[ai]->supports(&s, flip, NULL, 0)) continue;
                if (pad && flip == CP_CONV) continue;
                const float *want = pad ? xcorr_same : m ? conv_valid : xcorr_valid;
                for (int64_t li = 0; li < NLEVELS; li++) {
                    cp_params p = defaults_with_tile_isa(algos[ai], &s, levels[li]);
                    cp_plan *plan = NULL;
                    assert_int_equal(cp_plan_create(algos[ai], &s, flip, &p, NULL, 1, wv, &plan,
                                                    NULL, 0), CP_OK);
                    float y[30];
                    const size_t ny = cp_shape_output_elems(&s);
                    for (size_t e = 0; e < ny; e++) y[e] = NAN;
                    assert_int_equal(cp_plan_run(plan, x, NULL, y, NULL), CP_OK);
                    cp_plan_destroy(plan);
                    for (size_t e = 0; e < ny; e++) assert_true(y[e] == want[e]); /* small ints: exact */
                }
            }
    }
}

/* The edge shapes take the channel-vector tile exactly at the AVX-512 level:
 * its weights are panels of CPA_CV_KR channels, so the prepared size tells
 * (groups * ceil((K/groups) / 64) * 64 * C/groups * R * S floats), where the
 * pixel tiles pack 6-channel panels.  Common practice, no source: a tile that
 * keeps 49 of 64 lanes is worth replacing. */
static void test_edge_tiles_route(void **state) {
    (void)state;
    const cp_algo *blk = cp_algo_find("blocked");
    assert_int_equal(grid[CV_FIRST].k, 64);
    assert_int_equal(grid[CV_FIRST].h, 7);
    for (int64_t e = 0; e < NLEVELS; e++)
        for (size_t i = CV_FIRST; i < CV_FIRST + CV_N; i++) {
            const cp_shape s = mk(grid[i]);
            const cp_params p = defaults_with_tile_isa(blk, &s, levels[e]);
            const int64_t kg = s.k / s.groups, cg = s.c / s.groups;
            const int cv = cpa_isa_resolve(levels[e]) == CPA_ISA_AVX512;
            const int64_t pw = cv ? CPA_CV_KR : CPA_BLOCKED_MR;
            const size_t want = (size_t)(s.groups * ((kg + pw - 1) / pw) * pw * cg * s.r * s.s) *
                                sizeof(float);
            assert_int_equal(blk->prepared_size(&s, CP_XCORR, &p), want);
        }
}

/* The channel-vector tile kernels against the contract in blocked_tile.h
 * evaluated in double here (every pixel count 1..7, partial channel vectors,
 * bias or accumulate, forward and reversed taps); the AVX-512 one where the
 * CPU has it.  Outputs outside (nk, np) must stay untouched. */
static void test_cv_tile_kernels(void **state) {
    (void)state;
    enum { KR = CPA_CV_KR, NC = 5, NTAP = 3, CS = 40, YKS = 11 };
    static const int64_t off[NTAP] = {0, 1, 9};
    float x[NC * CS], w[NC * NTAP * KR], bias[KR], y0[KR * YKS];
    for (size_t i = 0; i < sizeof x / sizeof x[0]; i++) x[i] = frand();
    for (size_t i = 0; i < sizeof w / sizeof w[0]; i++) w[i] = frand();
    for (int i = 0; i < KR; i++) bias[i] = frand();
    for (int i = 0; i < KR * YKS; i++) y0[i] = frand();
    const cpa_cv_tile_fn fns[2] = {cpa_cv_tile_ref_64x7, cpa_cv_tile_avx512_64x7};
    const int nfn = cpa_isa_best() == CPA_ISA_AVX512 ? 2 : 1;
    static const int nks[] = {1, 17, 56, 64};
    for (int f = 0; f < nfn; f++)
        for (int np = 1; np <= CPA_CV_NP; np++)
            for (size_t ki = 0; ki < sizeof nks / sizeof nks[0]; ki++)
                for (int mode = 0; mode < 4; mode++) {
                    const int first = mode & 1, rev = mode >> 1;
                    float y[KR * YKS];
                    memcpy(y, y0, sizeof y);
                    cpa_cv_tile t = {NC, NTAP, CS, off, x, rev ? w + (NTAP - 1) * KR : w,
                                     rev ? -KR : KR, y, YKS, first ? bias : NULL, np, nks[ki],
                                     first};
                    fns[f](&t);
                    for (int kk = 0; kk < KR; kk++)
                        for (int j = 0; j < YKS; j++) {
                            const float got = y[kk * YKS + j];
                            if (kk >= nks[ki] || j >= np) {
                                assert_true(got == y0[kk * YKS + j]);
                                continue;
                            }
                            double acc = first ? bias[kk] : y0[kk * YKS + j], mag = fabs(acc);
                            for (int c = 0; c < NC; c++)
                                for (int tp = 0; tp < NTAP; tp++) {
                                    const int wt = rev ? NTAP - 1 - tp : tp;
                                    const double p = (double)x[c * CS + off[tp] + j] *
                                                     (double)w[(c * NTAP + wt) * KR + kk];
                                    acc += p;
                                    mag += fabs(p);
                                }
                            if (!(fabs(got - acc) <= 1e-6 * mag))
                                fail_msg("cv kernel %d np=%d nk=%d mode %d: y[%d][%d] = %g, "
                                         "want %g", f, np, nks[ki], mode, kk, j, (double)got,
                                         acc);
                        }
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
        cmocka_unit_test(test_scipy_worked_example),
        cmocka_unit_test(test_grid_vs_oracle),
        cmocka_unit_test(test_candidates_all_correct),
        cmocka_unit_test(test_smallest_blocks),
        cmocka_unit_test(test_flipidx_equals_blocked_conv),
        cmocka_unit_test(test_flipidx_refuses_xcorr),
        cmocka_unit_test(test_select_levels),
        cmocka_unit_test(test_threads_equal_serial),
        cmocka_unit_test(test_edge_tiles_route),
        cmocka_unit_test(test_cv_tile_kernels),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
