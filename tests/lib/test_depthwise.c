/* Tests of the depthwise algorithm beyond the generic suites (the oracle grid
 * in test_algos_grid.c and SciPy's per-channel correlate2d / convolve2d in
 * test_scipy.c already run it with its default, run-time chosen kernel).
 *
 *  - The portable row kernel through the whole algorithm (kernels=1) against
 *    the fp64 oracle (convpick/oracle.h, itself checked against SciPy), both
 *    orientations, strides 1..3, dilation, asymmetric pads, batch 3.
 *  - The AVX2 row kernel against the portable one on every row length 1..70
 *    (every tail of the masked store): dyadic data make every product and
 *    partial sum exact in float32, so the two must agree bit for bit whatever
 *    the summation and fusing (common practice, no source).
 *  - What supports() claims and refuses. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "algos/kernels/depthwise_row.h"
#include "convpick/algo.h"
#include "convpick/oracle.h"
#include "tests/support/conv.h"

static const cp_algo *dw(void) {
    const cp_algo *a = cp_algo_find("depthwise");
    assert_non_null(a);
    return a;
}

static void test_portable_vs_oracle(void **state) {
    (void)state;
    /* n c h w mult r s stride dil pads(t l b r) */
    static const int64_t shapes[][13] = {
        {1, 3, 29, 31, 1, 3, 3, 1, 1, 1, 1, 1, 1},
        {3, 2, 16, 33, 2, 3, 3, 2, 1, 0, 1, 1, 0},
        {1, 4, 19, 23, 1, 5, 5, 3, 1, 2, 2, 2, 2},
        {1, 2, 21, 40, 1, 3, 3, 1, 2, 2, 2, 0, 1},
    };
    cp_params p;
    memset(&p, 0, sizeof p);
    p.v[0] = 1; /* kernels = portable */
    for (size_t i = 0; i < sizeof shapes / sizeof shapes[0]; i++) {
        const int64_t *g = shapes[i];
        cp_shape s = cpt_shape(g[0], g[1], g[2], g[3], g[1] * g[4], g[5], g[6]);
        s.groups = g[1];
        s.stride_h = s.stride_w = g[7];
        s.dil_h = s.dil_w = g[8];
        s.pad_top = g[9]; s.pad_left = g[10]; s.pad_bottom = g[11]; s.pad_right = g[12];
        char msg[256];
        assert_int_equal(cp_shape_validate(&s, msg, sizeof msg), CP_SHAPE_OK);
        for (int m = 0; m < 2; m++) {
            cp_error e;
            assert_int_equal(cpt_check_random(dw(), &s, m ? CP_CONV : CP_XCORR, &p, 11 + 3 * i,
                                              &e, msg, sizeof msg), CP_OK);
            if (e.nonfinite || e.rel_err > dw()->tolerance)
                fail_msg("portable depthwise, shape %zu flip %d: rel_err %.3g nonfinite %zu", i,
                         m, e.rel_err, e.nonfinite);
        }
    }
}

static void test_avx2_rows_match_portable(void **state) {
    (void)state;
    if (cpa_dw_row_select(0) == cpa_dw_row_ref) skip(); /* no AVX2 here: exit 77 */
    enum { MAXQ = 70, STEP = MAXQ + 8 + CPA_DW_PAD, ROWS = 3 };
    static float buf[25][ROWS * STEP], y0[ROWS * MAXQ + 1], y1[ROWS * MAXQ + 1];
    float wts[25];
    const float *src[25];
    for (int t = 0; t < 25; t++) {
        for (int j = 0; j < ROWS * STEP; j++) buf[t][j] = (float)((t * 7 + j * 5) % 13 - 6) * 0.5f;
        wts[t] = (float)((t * 3) % 7 - 3) * 0.25f;
        src[t] = buf[t] + t % 3;
    }
    const int ntaps[] = {9, 5, 25, 1};
    for (size_t nt = 0; nt < sizeof ntaps / sizeof ntaps[0]; nt++)
        for (int64_t rows = 1; rows <= ROWS; rows += 2) /* one row, and rows sharing vectors */
            for (int64_t q = 1; q <= MAXQ; q++) {
                cpa_dw_row r = {.q = q, .nrows = rows, .src_step = STEP, .ntap = ntaps[nt],
                                .src = src, .w = wts, .bias = 0.75f};
                const size_t n = (size_t)(rows * q);
                for (size_t i = 0; i <= n; i++) y0[i] = y1[i] = 12345.0f;
                r.y = y0;
                cpa_dw_row_ref(&r);
                r.y = y1;
                cpa_dw_row_avx2(&r);
                if (memcmp(y0, y1, (n + 1) * sizeof(float)) != 0)
                    fail_msg("ntap %d rows %lld q %lld: AVX2 differs from portable", ntaps[nt],
                             (long long)rows, (long long)q);
                assert_true(y1[n] == 12345.0f); /* the float past the rows stays untouched */
                assert_true(y0[0] != 12345.0f); /* the portable kernel wrote */
            }
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
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_portable_vs_oracle),
        cmocka_unit_test(test_avx2_rows_match_portable),
        cmocka_unit_test(test_supports),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
