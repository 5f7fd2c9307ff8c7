/* Tests of winograd_4x4_3x3 beyond the oracle grid (test_algos_grid.c).
 *
 * Outside references:
 *  - Lavin & Gray, "Fast Algorithms for Convolutional Neural Networks", CVPR
 *    2016: the matrices of F(4x4,3x3) (section 4.2, kept as matrices in
 *    tests/support/winograd_tile.c) and the multiply counts: (m+r-1)^2 = 36
 *    general multiplications per 4x4 output tile against m^2 r^2 = 144 for the
 *    direct sum (section 4).
 *  - The direct sum of a 6x6 tile written out here, and the fp64 oracle
 *    (convpick/oracle.h, checked against SciPy in test_scipy.c). */
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
#include "algos/kernels/winograd4_kernels.h"
#include "convpick/algo.h"
#include "convpick/oracle.h"
#include "tests/support/conv.h"
#include "tests/support/winograd_tile.h"

/* The `kernels` levels the tests force (CPA_ISA_*); built again as
 * test_winograd4_avx512 with CPT_ISA_ONLY=3, which exits 77 without AVX-512. */
#ifdef CPT_ISA_ONLY
static const int64_t levels[] = {CPT_ISA_ONLY};
#else
static const int64_t levels[] = {CPA_ISA_BEST, CPA_ISA_PORTABLE, CPA_ISA_AVX2, CPA_ISA_AVX512};
#endif
#define NLEVELS ((int)(sizeof levels / sizeof levels[0]))

/* 1 when the level runs as asked here (BEST always does). */
static int level_runs(int64_t level) {
    return level == CPA_ISA_BEST || cpa_isa_resolve(level) == level;
}

static const cp_algo *wino4(void) {
    const cp_algo *a = cp_algo_find("winograd_4x4_3x3");
    assert_non_null(a);
    return a;
}

/* 6x6 input d[i][j] = (4i + 3j) mod 7 - 3 and filter g = [1 2 0; 0 1 -1; 2 0 1]. */
static void tile_data(float d[36], float g[9]) {
    static const float gx[9] = {1, 2, 0, 0, 1, -1, 2, 0, 1};
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++) d[i * 6 + j] = (float)((4 * i + 3 * j) % 7 - 3);
    memcpy(g, gx, sizeof gx);
}

/* The tile reference against the direct sum, and its multiply count against
 * the paper's 36 (direct: 144, counted in the loop below). */
static void test_tile_vs_direct_and_count(void **state) {
    (void)state;
    float d[36], g[9], y[16], direct[16];
    tile_data(d, g);
    long direct_mults = 0;
    for (int i = 0; i < 4; i++)
        for (int j = 0; j < 4; j++) {
            float acc = 0.0f;
            for (int r = 0; r < 3; r++)
                for (int s = 0; s < 3; s++, direct_mults++)
                    acc += d[(i + r) * 6 + j + s] * g[r * 3 + s];
            direct[i * 4 + j] = acc;
        }
    long mults = 0;
    cpt_wino_f4x4_3x3_tile(d, g, y, &mults);
    assert_int_equal(mults, 36);         /* Lavin & Gray 2016: (4 + 3 - 1)^2 */
    assert_int_equal(direct_mults, 144); /* 4^2 * 3^2 */
    /* G holds 1/6 and 1/24 (not exact in float): agree to rounding.  The
     * integer data give outputs of at most 9*3*2 = 54 in magnitude. */
    for (int i = 0; i < 16; i++)
        if (fabsf(y[i] - direct[i]) > 1e-4f)
            fail_msg("tile output %d: Winograd %.7g, direct %.7g", i, (double)y[i],
                     (double)direct[i]);
}

/* The algorithm on one 6x6 image, valid padding (a single tile), against the
 * matrix form of the tile: the unrolled transforms are the paper's matrices. */
static void test_algorithm_is_the_tile(void **state) {
    (void)state;
    float d[36], g[9], ref[16], y[16];
    tile_data(d, g);
    cpt_wino_f4x4_3x3_tile(d, g, ref, NULL);
    const cp_shape s = cpt_shape(1, 1, 6, 6, 1, 3, 3);
    char msg[256];
    for (int li = 0; li < NLEVELS; li++)
        for (int gemm = 0; gemm < 2; gemm++) {
            const int kernels = (int)levels[li];
            if (!level_runs(kernels)) continue;
            cp_params p;
            memset(&p, 0, sizeof p);
            cp_algo_defaults(wino4(), &s, NULL, &p);
            p.v[1] = kernels;
            p.v[2] = gemm;
            cp_plan *plan = NULL;
            assert_int_equal(cp_plan_create(wino4(), &s, CP_XCORR, &p, NULL, 1, g, &plan, msg,
                                            sizeof msg), CP_OK);
            assert_int_equal(cp_plan_run(plan, d, NULL, y, NULL), CP_OK);
            cp_plan_destroy(plan);
            for (int i = 0; i < 16; i++)
                if (fabsf(y[i] - ref[i]) > 1e-4f)
                    fail_msg("kernels=%d gemm=%d output %d: %.7g, tile reference %.7g", kernels,
                             gemm, i, (double)y[i], (double)ref[i]);
        }
}

/* Every parameter combination (each transform level the CPU has, OpenBLAS and
 * packed GEMM, blocks smaller than a tile row) against the oracle on shapes
 * with partial edge tiles in both directions and asymmetric pads; rows of 18
 * and 33 tiles reach the AVX-512 loops' 16-tile blocks and their tails. */
static void test_params_vs_oracle(void **state) {
    (void)state;
    /* n c h w k pads(t l b r) */
    static const int64_t shapes[][9] = {
        {3, 5, 13, 11, 7, 1, 1, 1, 1},
        {1, 8, 10, 23, 13, 2, 0, 1, 2},
        {2, 3, 5, 6, 4, 0, 2, 2, 0},
        {1, 4, 9, 70, 5, 1, 1, 1, 1},
        {1, 3, 6, 131, 2, 1, 0, 0, 1},
    };
    const int64_t blocks[] = {1, 5, 64};
    for (size_t i = 0; i < sizeof shapes / sizeof shapes[0]; i++) {
        const int64_t *v = shapes[i];
        cp_shape s = cpt_shape(v[0], v[1], v[2], v[3], v[4], 3, 3);
        s.pad_top = v[5]; s.pad_left = v[6]; s.pad_bottom = v[7]; s.pad_right = v[8];
        char msg[256];
        assert_int_equal(cp_shape_validate(&s, msg, sizeof msg), CP_SHAPE_OK);
        for (int combo = 0; combo < 12 * NLEVELS; combo++) {
            const int m = combo % 2;
            cp_params p;
            memset(&p, 0, sizeof p);
            p.v[0] = blocks[(combo / 2) % 3];
            p.v[2] = (combo / 6) % 2;
            p.v[1] = levels[combo / 12];
            if (!level_runs(p.v[1])) continue;
            cp_error e;
            assert_int_equal(cpt_check_random(wino4(), &s, m ? CP_CONV : CP_XCORR, &p, 41 + 3 * i,
                                              &e, msg, sizeof msg), CP_OK);
            if (e.nonfinite || e.rel_err > wino4()->tolerance)
                fail_msg("shape %zu flip %d block %lld kernels %lld gemm %lld: rel_err %.3g "
                         "nonfinite %zu", i, m, (long long)p.v[0], (long long)p.v[1],
                         (long long)p.v[2], e.rel_err, e.nonfinite);
        }
    }
}

/* Each ISA build of the transforms against the portable build on 1..40 tiles
 * (in_rows on the 4 nt + 2 columns of as many tiles)
 * (every 16-tile block and tail): small-integer data keep every sum and
 * product of B^T and A^T (entries 0, +-1, 2, 4, 5, 8) exact in float32, so
 * the builds must agree bit for bit whatever the order and fusing (common
 * practice, no source). */
static void test_builds_match_portable(void **state) {
    (void)state;
    enum { MAXT = 40, LEN = 4 * MAXT + 2, VS = 48 };
    static float rows[LEN], v0[36 * VS], v1[36 * VS], m[36 * VS], o0[4 * LEN], o1[4 * LEN];
    for (int i = 0; i < LEN; i++) rows[i] = (float)((i * 5) % 11 - 5);
    for (int i = 0; i < 36 * VS; i++) m[i] = (float)((i * 7) % 13 - 6);
    const cpa_wino4_kernels *ref = cpa_wino4_kernels_select(CPA_ISA_PORTABLE);
    int ran = 0;
    for (int li = 0; li < NLEVELS; li++) {
        if (levels[li] < CPA_ISA_AVX2 || !level_runs(levels[li])) continue;
        const cpa_wino4_kernels *k = cpa_wino4_kernels_select(levels[li]);
        for (int64_t nt = 1; nt <= MAXT; nt++) {
            float r0[6 * LEN], r1[6 * LEN]; /* in_rows on six rows of 4 nt + 2 */
            const int64_t len = 4 * nt + 2;
            for (int i = 0; i < 6 * LEN; i++) r0[i] = r1[i] = (float)((i * 3) % 7 - 3);
            ref->in_rows(r0, len);
            k->in_rows(r1, len);
            if (memcmp(r0, r1, sizeof r0) != 0)
                fail_msg("level %lld in_rows, %lld columns: differs from portable",
                         (long long)levels[li], (long long)len);
            for (int i = 0; i < 36 * VS; i++) v0[i] = v1[i] = -1.5f;
            ref->in_cols(rows, v0, VS, nt);
            k->in_cols(rows, v1, VS, nt);
            if (memcmp(v0, v1, sizeof v0) != 0)
                fail_msg("level %lld in_cols, %lld tiles: differs from portable",
                         (long long)levels[li], (long long)nt);
            for (int i = 0; i < 4 * LEN; i++) o0[i] = o1[i] = -1.5f;
            ref->out_tiles(m, VS, 0.5f, o0, LEN, nt);
            k->out_tiles(m, VS, 0.5f, o1, LEN, nt);
            if (memcmp(o0, o1, sizeof o0) != 0)
                fail_msg("level %lld out_tiles, %lld tiles: differs from portable",
                         (long long)levels[li], (long long)nt);
            assert_true(o0[4 * nt] == -1.5f && o0[0] != -1.5f); /* wrote the tiles, no more */
        }
        ran++;
    }
    if (!ran) skip(); /* no ISA build runs here: exit 77 */
}

static void test_refusals(void **state) {
    (void)state;
    char why[256];
    cp_shape s = cpt_shape(1, 4, 9, 9, 4, 3, 3);
    s.groups = 2;
    assert_int_equal(wino4()->supports(&s, CP_XCORR, why, sizeof why), 0);
    assert_non_null(strstr(why, "groups"));
    s.groups = 1;
    s.stride_h = 2;
    assert_int_equal(wino4()->supports(&s, CP_XCORR, why, sizeof why), 0);
    assert_non_null(strstr(why, "F(4x4,3x3) needs stride 1"));
    s.stride_h = 1;
    assert_int_equal(wino4()->supports(&s, CP_CONV, why, sizeof why), 1);
}

int main(void) {
#ifdef CPT_ISA_ONLY
    if (cpa_isa_best() < CPT_ISA_ONLY) {
        printf("skipped: the CPU (or OS) lacks %s\n", cpa_isa_name(CPT_ISA_ONLY));
        return 77;
    }
#endif
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_tile_vs_direct_and_count),
        cmocka_unit_test(test_algorithm_is_the_tile),
        cmocka_unit_test(test_params_vs_oracle),
        cmocka_unit_test(test_builds_match_portable),
        cmocka_unit_test(test_refusals),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
