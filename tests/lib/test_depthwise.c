/* Tests of the depthwise algorithm beyond the generic suites (the oracle grid
 * in test_algos_grid.c and SciPy's per-channel correlate2d / convolve2d in
 * test_scipy.c already run it with its default, run-time chosen kernels).
 * Built twice: every level the CPU has (portable, AVX2, AVX-512), and again as
 * test_depthwise_avx512 with CPT_ISA_ONLY=3, which exits 77 on a CPU or OS
 * without AVX-512 (a skip, never a pass).
 *
 *  - Each level forced through the whole algorithm (kernels = level) against
 *    the fp64 oracle (convpick/oracle.h, itself checked against SciPy), both
 *    orientations, on an awkward grid: 1x1 images, H and W below the kernel
 *    with padding, odd sizes, strides 1..3, left pads of both parities under
 *    stride 2, dilation, asymmetric pads, batch 3, a channel multiplier, the
 *    MobileNet v1 geometry (112x112 stride 1 and 2, 14x14, 7x7).  Each shape
 *    under path 0 (the shape's choice) and each path forced: phase planes,
 *    the in-place rows and the flat plane (depthwise_plane.h; AVX-512, and
 *    at the AVX2 level the rows form for 3x3 shapes with strides 1 and 2),
 *    with shapes for their cases -- 'same'-width planes padded on one side
 *    only, P != H, 5x5, dilation 2, exactly 16 vectors, stride 2x1 and 1x2,
 *    rows with interior vectors under stride 2, 1x7 and 7x1 kernels; the
 *    test fails if the in-place forms ran fewer shapes than listed for them
 *    (AVX-512 and AVX2 each).
 *  - Each ISA row kernel against the portable one on every row length 1..70
 *    and row steps q .. q+3 (every tail, rows shorter than a vector, vectors
 *    spanning several rows), and each ISA fill against the portable fill
 *    (strides 1..3, left pads 0..2, widths 1..40): dyadic data make every
 *    product and partial sum exact in float32, so the two must agree bit for
 *    bit whatever the summation and fusing (common practice, no source).
 *  - What supports() claims and refuses.
 *  - The tuner's candidates: the shape's choice first, then each other form
 *    the widest kernels here run, once each, each checked against the oracle. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "algos/kernels/blocked_tile.h"
#include "algos/kernels/depthwise_plane.h"
#include "algos/kernels/depthwise_row.h"
#include "convpick/algo.h"
#include "convpick/oracle.h"
#include "tests/support/conv.h"

static const cp_algo *dw(void) {
    const cp_algo *a = cp_algo_find("depthwise");
    assert_non_null(a);
    return a;
}

#ifdef CPT_ISA_ONLY
static const int64_t levels[] = {CPT_ISA_ONLY};
#else
static const int64_t levels[] = {CPA_ISA_PORTABLE, CPA_ISA_AVX2, CPA_ISA_AVX512};
#endif
#define NLEVELS (sizeof levels / sizeof levels[0])

/* 1 when level really runs here (not resolved down to a narrower one). */
static int level_runs(int64_t level) { return cpa_dw_kernels_select(level).isa == level; }

static void test_levels_vs_oracle(void **state) {
    (void)state;
    /* n c h w mult r s stride_h stride_w dil pads(t l b r) */
    static const int64_t shapes[][14] = {
        {1, 3, 29, 31, 1, 3, 3, 1, 1, 1, 1, 1, 1, 1},
        {3, 2, 16, 33, 2, 3, 3, 2, 2, 1, 0, 1, 1, 0},
        {1, 4, 19, 23, 1, 5, 5, 3, 3, 1, 2, 2, 2, 2},
        {1, 2, 21, 40, 1, 3, 3, 1, 1, 2, 2, 2, 0, 1},
        {1, 3, 1, 1, 1, 3, 3, 1, 1, 1, 1, 1, 1, 1},   /* 1x1 image */
        {1, 2, 2, 9, 1, 3, 3, 1, 1, 1, 1, 0, 1, 0},   /* H below the kernel */
        {1, 2, 6, 2, 1, 3, 5, 1, 1, 1, 1, 2, 1, 2},   /* W below the kernel */
        {1, 2, 41, 45, 1, 3, 3, 2, 2, 1, 1, 1, 1, 1}, /* stride 2, odd, left pad 1 */
        {1, 2, 40, 37, 1, 3, 3, 2, 2, 1, 0, 0, 1, 1}, /* stride 2, left pad 0 */
        {1, 2, 17, 40, 1, 3, 3, 2, 3, 2, 0, 1, 2, 1}, /* stride 2x3, dilation 2 */
        {1, 2, 23, 29, 1, 5, 5, 3, 3, 1, 2, 0, 1, 2}, /* stride 3, asymmetric pads */
        {2, 3, 112, 112, 1, 3, 3, 1, 1, 1, 1, 1, 1, 1}, /* MobileNet v1 conv2.dw */
        {1, 3, 112, 112, 1, 3, 3, 2, 2, 1, 1, 1, 1, 1}, /* conv3.dw, stride 2 */
        {1, 5, 7, 7, 1, 3, 3, 1, 1, 1, 1, 1, 1, 1},     /* conv14.dw, 7x7 */
        {1, 4, 14, 14, 1, 3, 3, 2, 2, 1, 1, 1, 1, 1},   /* conv13.dw, 14 -> 7 */
        /* the in-place forms (path 2 rows, 3 flat; depthwise_plane.h) */
        {1, 6, 14, 14, 1, 3, 3, 1, 1, 1, 1, 1, 1, 1},   /* conv8.dw, 14x14: flat, 13 vectors */
        {2, 3, 7, 7, 2, 3, 3, 1, 1, 1, 0, 0, 2, 2},     /* flat, pads only bottom/right */
        {1, 3, 9, 11, 1, 3, 3, 1, 1, 1, 2, 2, 0, 0},    /* flat, pads only top/left */
        {1, 2, 13, 12, 1, 5, 5, 1, 1, 1, 2, 1, 2, 3},   /* flat 5x5, asymmetric */
        {1, 2, 11, 9, 1, 3, 3, 1, 1, 2, 2, 2, 2, 2},    /* flat, dilation 2 */
        {1, 2, 16, 16, 1, 3, 3, 1, 1, 1, 1, 1, 1, 1},   /* flat, exactly 16 vectors */
        {1, 2, 8, 5, 1, 3, 3, 1, 1, 1, 2, 1, 2, 1},     /* flat, P != H */
        {1, 2, 7, 7, 1, 3, 3, 2, 2, 1, 0, 0, 1, 1},     /* stride 2, pads bottom/right */
        {1, 3, 14, 14, 1, 3, 3, 2, 1, 1, 1, 1, 1, 1},   /* stride 2x1 */
        {1, 2, 15, 19, 1, 3, 3, 1, 2, 1, 1, 0, 1, 2},   /* stride 1x2, asymmetric */
        {1, 2, 9, 70, 1, 3, 3, 2, 2, 1, 1, 1, 1, 1},    /* stride 2, interior vectors */
        {1, 2, 9, 70, 1, 5, 3, 2, 2, 2, 2, 3, 1, 0},    /* stride 2, 5x3, dilation 2 */
        {1, 2, 10, 64, 1, 3, 3, 2, 2, 1, 1, 1, 1, 1},   /* stride 2, two full 16-output chunks */
        {2, 2, 11, 63, 1, 3, 3, 2, 2, 1, 2, 2, 0, 0},   /* stride 2, pads 2 top/left only */
        {1, 2, 6, 50, 1, 1, 7, 1, 1, 1, 0, 3, 0, 3},    /* 1x7 rows */
        {3, 2, 9, 45, 1, 7, 1, 1, 1, 1, 3, 0, 3, 0},    /* 7x1, batch 3 */
        {1, 2, 20, 48, 1, 3, 3, 1, 1, 1, 1, 2, 1, 1},   /* rows, Q != W */
        {1, 2, 3, 40, 1, 1, 17, 1, 1, 1, 0, 8, 0, 8},   /* S 17: too wide for rows, flat */
    };
    size_t ran = 0, forms[3] = {0, 0, 0}; /* shapes run in phase planes, rows, flat */
    size_t avx2_rows = 0;                 /* of them, rows at the AVX2 level */
    int avx2_ran = 0;
    for (size_t li = 0; li < NLEVELS; li++) {
        if (!level_runs(levels[li])) continue; /* the CPU lacks it: counted below */
        if (levels[li] == CPA_ISA_AVX2) avx2_ran = 1;
        /* path 0 (the shape's choice), then each form forced: 1 phase planes,
         * 2 in-place rows, 3 flat (a form that cannot run a shape, or a level
         * without in-place kernels, runs phase planes) */
        for (int64_t path = 0; path <= 3; path++)
        for (size_t i = 0; i < sizeof shapes / sizeof shapes[0]; i++) {
            cp_params p;
            memset(&p, 0, sizeof p);
            p.v[0] = levels[li];
            p.v[1] = path;
            const int64_t *g = shapes[i];
            cp_shape s = cpt_shape(g[0], g[1], g[2], g[3], g[1] * g[4], g[5], g[6]);
            s.groups = g[1];
            s.stride_h = g[7];
            s.stride_w = g[8];
            s.dil_h = s.dil_w = g[9];
            s.pad_top = g[10]; s.pad_left = g[11]; s.pad_bottom = g[12]; s.pad_right = g[13];
            char msg[256];
            if (cp_shape_validate(&s, msg, sizeof msg) != CP_SHAPE_OK)
                fail_msg("shape %zu: %s", i, msg);
            assert_string_equal(dw()->isa(&s, &p), cpa_isa_name((int)levels[li]));
            const cpa_dw_kernels kn = cpa_dw_kernels_select(levels[li]);
            const int rows = kn.plane && cpa_dw_plan_rows_ok(&s) &&
                             (!kn.plane_ok || kn.plane_ok(&s, CPA_DWP_ROWS)),
                      flat = kn.plane && cpa_dw_plan_flat_ok(&s) &&
                             (!kn.plane_ok || kn.plane_ok(&s, CPA_DWP_FLAT));
            if (path == 2 && rows) {
                forms[1]++;
                if (levels[li] == CPA_ISA_AVX2) avx2_rows++;
            } else if (path == 3 && flat) forms[2]++;
            else if (path == 1) forms[0]++;
            for (int m = 0; m < 2; m++) {
                cp_error e;
                assert_int_equal(cpt_check_random(dw(), &s, m ? CP_CONV : CP_XCORR, &p,
                                                  11 + 3 * i, &e, msg, sizeof msg), CP_OK);
                if (e.nonfinite || e.rel_err > dw()->tolerance)
                    fail_msg("depthwise at %s path %lld, shape %zu flip %d: rel_err %.3g "
                             "nonfinite %zu", cpa_isa_name((int)levels[li]), (long long)path, i,
                             m, e.rel_err, e.nonfinite);
            }
        }
        ran++;
    }
    if (!ran) skip(); /* no level of this build runs here: exit 77 */
    /* every form really ran some shapes where the CPU has AVX-512 */
    assert_true(forms[0] > 0);
    if (cpa_dw_kernels_select(CPA_ISA_AVX512).plane) {
        if (forms[1] < 20 || forms[2] < 8)
            fail_msg("in-place forms ran too few shapes: rows %zu, flat %zu", forms[1], forms[2]);
    }
    if (avx2_ran && cpa_dw_kernels_select(CPA_ISA_AVX2).plane) {
        /* the AVX2 rows kernel's 3x3 shapes: strides 1x1, 2x2, 2x1, 1x2 */
        if (avx2_rows < 20) fail_msg("AVX2 in-place rows ran too few shapes: %zu", avx2_rows);
    }
}

static float dyadic(int64_t i, int64_t k) { return (float)((i * 7 + k * 5) % 13 - 6) * 0.5f; }

static void test_rows_match_portable(void **state) {
    (void)state;
    enum { MAXQ = 70, STEP = MAXQ + 3, ROWS = 5, LEN = ROWS * STEP + 2 + CPA_DW_PAD };
    static float buf[25][LEN], y0[ROWS * MAXQ + 1], y1[ROWS * MAXQ + 1];
    float wts[25];
    const float *src[25];
    for (int t = 0; t < 25; t++) {
        for (int j = 0; j < LEN; j++) buf[t][j] = dyadic(t, j);
        wts[t] = (float)((t * 3) % 7 - 3) * 0.25f;
        src[t] = buf[t] + t % 3;
    }
    size_t ran = 0;
    for (size_t li = 0; li < NLEVELS; li++) {
        if (levels[li] == CPA_ISA_PORTABLE || !level_runs(levels[li])) continue;
        const cpa_dw_row_fn fn = cpa_dw_kernels_select(levels[li]).row;
        const int ntaps[] = {9, 5, 25, 1};
        for (size_t nt = 0; nt < sizeof ntaps / sizeof ntaps[0]; nt++)
            for (int64_t rows = 1; rows <= ROWS; rows += 2)
                for (int64_t q = 1; q <= MAXQ; q++)
                    for (int64_t step = q; step <= q + 3; step++) {
                        cpa_dw_row r = {.q = q, .nrows = rows, .src_step = step,
                                        .ntap = ntaps[nt], .src = src, .w = wts, .bias = 0.75f};
                        const size_t n = (size_t)(rows * q);
                        for (size_t i = 0; i <= n; i++) y0[i] = y1[i] = 12345.0f;
                        r.y = y0;
                        cpa_dw_row_ref(&r);
                        r.y = y1;
                        fn(&r);
                        if (memcmp(y0, y1, (n + 1) * sizeof(float)) != 0)
                            fail_msg("%s ntap %d rows %lld q %lld step %lld: differs from "
                                     "portable", cpa_isa_name((int)levels[li]), ntaps[nt],
                                     (long long)rows, (long long)q, (long long)step);
                        assert_true(y1[n] == 12345.0f); /* the float past the rows untouched */
                        assert_true(y0[0] != 12345.0f); /* the portable kernel wrote */
                    }
        ran++;
    }
    if (!ran) skip(); /* no ISA row kernel here: exit 77 */
}

static void test_fill_matches_portable(void **state) {
    (void)state;
    enum { H = 3, MAXW = 40, LEN = 4096 };
    static float x[H * MAXW], b0[LEN], b1[LEN];
    for (int i = 0; i < H * MAXW; i++) x[i] = dyadic(i, 1) + 0.25f; /* never 0 */
    size_t ran = 0;
    for (size_t li = 0; li < NLEVELS; li++) {
        if (!level_runs(levels[li])) continue;
        const cpa_dw_fill_fn fn = cpa_dw_kernels_select(levels[li]).fill;
        for (int64_t st = 1; st <= 3; st++)
            for (int64_t pl = 0; pl <= 2; pl++)
                for (int64_t w = 1; w <= MAXW; w++) {
                    const int64_t ld = (w + pl + 1 + st - 1) / st, plane = (H + 1 + st) / st * ld;
                    cpa_dw_fill f = {.x = x, .h = H, .w = w, .sh = st, .sw = st, .pt = 1,
                                     .pl = pl, .ld = ld, .plane = plane};
                    for (int i = 0; i < LEN; i++) b0[i] = b1[i] = -99.0f;
                    f.buf = b0;
                    cpa_dw_fill_ref(&f);
                    f.buf = b1;
                    fn(&f);
                    if (memcmp(b0, b1, sizeof b0) != 0)
                        fail_msg("%s fill, stride %lld pad %lld w %lld: differs from portable",
                                 cpa_isa_name((int)levels[li]), (long long)st, (long long)pl,
                                 (long long)w);
                    /* the portable fill put every input element somewhere */
                    int64_t written = 0;
                    for (int i = 0; i < LEN; i++) written += b0[i] != -99.0f;
                    assert_int_equal(written, H * w);
                }
        ran++;
    }
    if (!ran) skip();
}

/* The tuner's candidates: path 0 first, then each other form the widest
 * kernels here run for the shape, once each (the forms per level are in
 * depthwise_plane.h and algos/depthwise.c: a fact of this code, no outside
 * source).  Every candidate is also checked against the oracle. */
static size_t candidates_of(const cp_shape *s, cp_params *out, int max) {
    const cp_cache_sizes c = {48 * 1024, 2 * 1024 * 1024, 32 * 1024 * 1024, 64};
    const int n = dw()->candidates(s, &c, out, max);
    assert_true(n >= 1 && n <= max);
    assert_int_equal(out[0].v[1], 0); /* the shape's choice first */
    for (int i = 0; i < n; i++) {
        assert_int_equal(out[i].v[0], 0); /* the widest kernels */
        for (int j = 0; j < i; j++) assert_true(out[i].v[1] != out[j].v[1]);
        char msg[256];
        cp_error e;
        assert_int_equal(cpt_check_random(dw(), s, CP_XCORR, &out[i], 5u + (unsigned)i, &e, msg,
                                          sizeof msg),
                         CP_OK);
        assert_true(e.rel_err <= dw()->tolerance);
    }
    return (size_t)n;
}

static void test_candidates(void **state) {
    (void)state;
    cp_params out[8];
    const int level = cpa_dw_kernels_select(0).isa;
    cp_shape s5 = cpt_shape(1, 8, 56, 56, 8, 3, 3); /* conv5.dw's geometry, 8 channels */
    s5.groups = 8;
    s5.stride_h = s5.stride_w = 2;
    s5.pad_top = s5.pad_left = s5.pad_bottom = s5.pad_right = 1;
    cp_shape s8 = s5; /* conv8.dw's: 14x14 stride 1 */
    s8.h = s8.w = 14;
    s8.stride_h = s8.stride_w = 1;
    cp_shape s3 = cpt_shape(1, 2, 23, 29, 2, 5, 5); /* 5x5 stride 3: no in-place form */
    s3.groups = 2;
    s3.stride_h = s3.stride_w = 3;
    s3.pad_top = s3.pad_left = 2;
    const size_t n5 = candidates_of(&s5, out, 8), n8 = candidates_of(&s8, out, 8),
                 n17 = candidates_of(&s3, out, 8);
    assert_int_equal(n17, 1); /* phase planes only: path 0 is them */
    if (level == CPA_ISA_AVX512) {
        assert_int_equal(n5, 2); /* rows (path 0), phase */
        assert_int_equal(n8, 3); /* flat (path 0), phase, rows */
    } else if (level == CPA_ISA_AVX2) {
        assert_int_equal(n5, 2); /* rows (path 0), phase */
        assert_int_equal(n8, 2); /* rows (path 0), phase: no AVX2 flat */
    } else {
        assert_int_equal(n5, 1);
        assert_int_equal(n8, 1);
    }
    assert_int_equal(candidates_of(&s8, out, 1), 1); /* max honoured */
}

static void test_supports(void **state) {
    (void)state;
    char why[256];
    cp_shape s = cpt_shape(1, 8, 9, 9, 8, 3, 3);
    assert_int_equal(dw()->supports(&s, CP_XCORR, why, sizeof why), 0); /* groups 1, c 8 */
    assert_non_null(strstr(why, "groups == c"));
    s.groups = 4; /* two input channels per output */
    assert_int_equal(dw()->supports(&s, CP_CONV, why, sizeof why), 0);
    s.groups = 8;
    assert_int_equal(dw()->supports(&s, CP_CONV, why, sizeof why), 1);
    s.k = 24; /* channel multiplier 3 */
    assert_int_equal(dw()->supports(&s, CP_XCORR, why, sizeof why), 1);
}

int main(void) {
#ifdef CPT_ISA_ONLY
    if (cpa_isa_best() < CPT_ISA_ONLY) {
        printf("skipped: the CPU (or OS) lacks %s\n", cpa_isa_name(CPT_ISA_ONLY));
        return 77;
    }
#endif
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_levels_vs_oracle),
        cmocka_unit_test(test_rows_match_portable),
        cmocka_unit_test(test_fill_matches_portable),
        cmocka_unit_test(test_supports),
        cmocka_unit_test(test_candidates),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
