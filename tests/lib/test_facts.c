/* Facts of the trade every algorithm and the oracle must agree with, and the
 * oracle on examples worked by hand. */
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
#include "harness/measure/data.h"
#include "tests/support/conv.h"

/* A flip written here, independent of cp_weights_flip, so that the identity
 * tests do not lean on the function tested below. */
static void local_flip(const cp_shape *s, const float *w, float *wf) {
    const int64_t planes = s->k * (s->c / s->groups), R = s->r, S = s->s;
    for (int64_t pl = 0; pl < planes; pl++)
        for (int64_t r = 0; r < R; r++)
            for (int64_t t = 0; t < S; t++)
                wf[(pl * R + r) * S + t] = w[(pl * R + (R - 1 - r)) * S + (S - 1 - t)];
}

static cp_shape fact_shape(int i) {
    cp_shape s;
    switch (i) {
    case 0: /* 3x3 stride 1 same: the shape every fast algorithm takes */
        s = cpt_shape(1, 8, 13, 13, 8, 3, 3);
        cp_shape_set_padding(&s, CP_PAD_SAME);
        return s;
    case 1: /* non-square kernel, strides 2x3, asymmetric pads */
        s = cpt_shape(2, 3, 13, 17, 4, 2, 3);
        s.stride_h = 2; s.stride_w = 3;
        s.pad_top = 1; s.pad_right = 2;
        return s;
    case 2: /* depthwise, dilation 2 */
        s = cpt_shape(1, 6, 17, 17, 6, 3, 3);
        s.groups = 6; s.dil_h = s.dil_w = 2;
        cp_shape_set_padding(&s, CP_PAD_SAME);
        return s;
    case 3: /* 5x5 full, groups 2 */
        s = cpt_shape(1, 4, 7, 13, 2, 5, 5);
        s.groups = 2;
        cp_shape_set_padding(&s, CP_PAD_FULL);
        return s;
    default: /* 3x3 valid, odd sizes */
        s = cpt_shape(3, 5, 13, 7, 3, 3, 3);
        return s;
    }
}
enum { N_FACT_SHAPES = 5 };


/* Checks algorithm a's output y against ref/mag (2x tolerance when ref is
 * itself another float32 result of a). */
static void expect_close(const cp_algo *a, const float *y, const double *ref, const double *mag,
                         size_t ny, double tol, const char *what, int shape) {
    cp_error e = cp_error_measure(y, ref, mag, ny);
    if (e.nonfinite || e.rel_err > tol)
        fail_msg("%s, shape %d, %s: rel_err %.3g > %.3g (nonfinite %zu)", a->name, shape, what,
                 e.rel_err, tol, e.nonfinite);
}

/* Runs CONV with weights wc and XCORR with weights wx = flip(wc) and checks
 * they agree: exactly for the oracle (the same products in the same order),
 * for every registered algorithm within its tolerance, and for direct exactly
 * (it flips the weights once, then runs the cross-correlation loops).  With
 * symmetric set, wc is made symmetric under 180-degree rotation first, so
 * that wx = wc: the same weights give the same output in both modes. */
static void check_mode_identity(int symmetric, size_t *checked) {
    const char *what = symmetric ? "symmetric kernel, conv = xcorr" : "conv(w) = xcorr(flip(w))";
    for (int si = 0; si < N_FACT_SHAPES; si++) {
        const cp_shape s = fact_shape(si);
        assert_int_equal(cp_shape_validate(&s, NULL, 0), CP_SHAPE_OK);
        const size_t nx = cp_shape_input_elems(&s), ny = cp_shape_output_elems(&s);
        const size_t nw = cp_shape_weight_elems(&s);
        float *x = malloc(nx * sizeof *x), *yc = malloc(ny * sizeof *yc);
        float *yx = malloc(ny * sizeof *yx), *wc = malloc(nw * sizeof *wc);
        float *wx = malloc(nw * sizeof *wx);
        double *rc = malloc(ny * sizeof *rc), *rx = malloc(ny * sizeof *rx);
        double *mag = malloc(ny * sizeof *mag), *d = malloc(ny * sizeof *d);
        assert_true(x && yc && yx && wc && wx && rc && rx && mag && d);
        cph_fill_uniform(x, nx, 11 + (uint64_t)si);
        cph_fill_uniform(wc, nw, 21 + (uint64_t)si);
        local_flip(&s, wc, wx);
        if (symmetric) {
            /* (a + b) / 2 == (b + a) / 2 exactly, so wc becomes symmetric. */
            for (size_t i = 0; i < nw; i++) wc[i] = (wc[i] + wx[i]) * 0.5f;
            local_flip(&s, wc, wx);
            assert_memory_equal(wc, wx, nw * sizeof *wc);
        }
        cp_oracle_run(&s, CP_CONV, x, wc, NULL, rc, mag);
        cp_oracle_run(&s, CP_XCORR, x, wx, NULL, rx, NULL);
        for (size_t i = 0; i < ny; i++)
            if (rc[i] != rx[i])
                fail_msg("oracle, shape %d, %s: element %zu %.17g vs %.17g", si, what, i, rc[i],
                         rx[i]);
        char msg[256];
        for (size_t ai = 0; ai < cp_algo_count(); ai++) {
            const cp_algo *a = cp_algo_at(ai);
            const int sc = a->supports(&s, CP_CONV, NULL, 0);
            const int sx = a->supports(&s, CP_XCORR, NULL, 0);
            if (sc && cpt_run_plan(a, &s, CP_CONV, x, wc, NULL, yc, msg, sizeof msg) != CP_OK)
                fail_msg("%s: %s", a->name, msg);
            if (sx && cpt_run_plan(a, &s, CP_XCORR, x, wx, NULL, yx, msg, sizeof msg) != CP_OK)
                fail_msg("%s: %s", a->name, msg);
            if (sc && sx) {
                /* Both sides carry this algorithm's rounding: twice its tolerance. */
                for (size_t i = 0; i < ny; i++) d[i] = (double)yx[i];
                expect_close(a, yc, d, mag, ny, 2.0 * a->tolerance, what, si);
                if (strcmp(a->name, "direct") == 0) assert_memory_equal(yc, yx, ny * sizeof *yc);
            }
            /* Each mode also meets the other formulation through the oracle, so
             * an algorithm with one mode only is checked too. */
            if (sc) expect_close(a, yc, rx, mag, ny, a->tolerance, what, si);
            if (sx) expect_close(a, yx, rc, mag, ny, a->tolerance, what, si);
            if (sc || sx) checked[ai]++;
        }
        free(x); free(yc); free(yx); free(wc); free(wx); free(rc); free(rx); free(mag); free(d);
    }
    for (size_t ai = 0; ai < cp_algo_count(); ai++)
        if (!checked[ai])
            fail_msg("%s was checked on no shape (%s)", cp_algo_at(ai)->name, what);
}

#define MAX_ALGOS 64

/* conv(x, w) = xcorr(x, flip(w)) (common practice, no source). */
static void test_conv_is_xcorr_of_flipped(void **state) {
    (void)state;
    size_t checked[MAX_ALGOS] = {0};
    assert_in_range(cp_algo_count(), 1, MAX_ALGOS);
    check_mode_identity(0, checked);
}

/* A kernel symmetric under 180-degree rotation gives the same output in both
 * modes (common practice, no source). */
static void test_symmetric_kernel_same_in_both_modes(void **state) {
    (void)state;
    size_t checked[MAX_ALGOS] = {0};
    assert_in_range(cp_algo_count(), 1, MAX_ALGOS);
    check_mode_identity(1, checked);
}

/* flip(flip(w)) = w (common practice, no source); cp_weights_flip agrees with
 * the local flip on a grouped, non-square kernel. */
static void test_flip_twice_is_identity(void **state) {
    (void)state;
    cp_shape s = cpt_shape(1, 6, 9, 9, 4, 3, 2);
    s.groups = 2;
    const size_t nw = cp_shape_weight_elems(&s);
    float *w = malloc(nw * sizeof *w), *f1 = malloc(nw * sizeof *f1);
    float *f2 = malloc(nw * sizeof *f2), *lf = malloc(nw * sizeof *lf);
    assert_true(w && f1 && f2 && lf);
    cph_fill_uniform(w, nw, 5);
    cp_weights_flip(&s, w, f1);
    local_flip(&s, w, lf);
    assert_memory_equal(f1, lf, nw * sizeof *f1);
    assert_memory_not_equal(f1, w, nw * sizeof *f1);
    cp_weights_flip(&s, f1, f2);
    assert_memory_equal(f2, w, nw * sizeof *w);
    free(w); free(f1); free(f2); free(lf);
}

/* cp_weights_flip on a worked example (by hand): two 2x3 planes
 *   [1 2 3; 4 5 6]    -> [6 5 4; 3 2 1]
 *   [7 8 9; 10 11 12] -> [12 11 10; 9 8 7]
 * each plane rotated by 180 degrees on its own. */
static void test_flip_worked_2x3(void **state) {
    (void)state;
    cp_shape s = cpt_shape(1, 1, 2, 3, 2, 2, 3);
    const float w[12] = {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12};
    const float want[12] = {6, 5, 4, 3, 2, 1, 12, 11, 10, 9, 8, 7};
    float got[12];
    cp_weights_flip(&s, w, got);
    assert_memory_equal(got, want, sizeof want);
}

/* The oracle on examples worked by hand.
 *
 * x (3x3) = [1 2 3; 4 5 6; 7 8 9], w (2x2) = [1 2; 3 -4].
 * Cross-correlation, valid (2x2 output), y[p][q] = sum x[p+r][q+t] w[r][t]:
 *   y00 = 1*1 + 2*2 + 4*3 + 5*(-4) = 1+4+12-20 = -3,  mag 1+4+12+20 = 37
 *   y01 = 2*1 + 3*2 + 5*3 + 6*(-4) = 2+6+15-24 = -1,  mag 47
 *   y10 = 4*1 + 5*2 + 7*3 + 8*(-4) = 4+10+21-32 = 3,  mag 67
 *   y11 = 5*1 + 6*2 + 8*3 + 9*(-4) = 5+12+24-36 = 5,  mag 77
 * True convolution, valid: the kernel rotated, [-4 3; 2 1]:
 *   y00 = -4*1 + 3*2 + 2*4 + 1*5 = 15,  y01 = -8+9+10+6 = 17,
 *   y10 = -16+15+14+8 = 21,             y11 = -20+18+16+9 = 23
 * With bias 0.5 each output and each magnitude grows by 0.5.
 * Cross-correlation, pad 1 on every side (4x4 output):
 *   y[0][0] = x00*w11 = -4,  y[0][3] = x02*w10 = 9,
 *   y[3][0] = x20*w01 = 14,  y[3][3] = x22*w00 = 9,  y[1][1] = -3 (valid y00)
 * Same, stride 2 (2x2 output, rows/cols 0 and 2 of the above):
 *   y00 = -4,  y01 = x01*w10 + x02*w11 = 6 - 12 = -6. */
static void test_oracle_worked(void **state) {
    (void)state;
    const float x[9] = {1, 2, 3, 4, 5, 6, 7, 8, 9};
    const float w[4] = {1, 2, 3, -4};
    const float b[1] = {0.5f};
    double ref[16], mag[16];
    cp_shape s = cpt_shape(1, 1, 3, 3, 1, 2, 2);

    cp_oracle_run(&s, CP_XCORR, x, w, NULL, ref, mag);
    const double xc[4] = {-3, -1, 3, 5}, xm[4] = {37, 47, 67, 77};
    for (int i = 0; i < 4; i++) {
        assert_true(ref[i] == xc[i]);
        assert_true(mag[i] == xm[i]);
    }
    cp_oracle_run(&s, CP_CONV, x, w, NULL, ref, NULL);
    const double cv[4] = {15, 17, 21, 23};
    for (int i = 0; i < 4; i++) assert_true(ref[i] == cv[i]);
    cp_oracle_run(&s, CP_XCORR, x, w, b, ref, mag);
    for (int i = 0; i < 4; i++) {
        assert_true(ref[i] == xc[i] + 0.5);
        assert_true(mag[i] == xm[i] + 0.5);
    }

    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = 1;
    assert_int_equal(cp_shape_output_elems(&s), 16);
    cp_oracle_run(&s, CP_XCORR, x, w, NULL, ref, NULL);
    assert_true(ref[0] == -4);
    assert_true(ref[3] == 9);
    assert_true(ref[12] == 14);
    assert_true(ref[15] == 9);
    assert_true(ref[5] == -3);

    s.stride_h = s.stride_w = 2;
    assert_int_equal(cp_shape_output_elems(&s), 4);
    cp_oracle_run(&s, CP_XCORR, x, w, NULL, ref, NULL);
    assert_true(ref[0] == -4);
    assert_true(ref[1] == -6);
}

/* Channels, groups and batch on a worked example (by hand), 1x1 kernels:
 * x: batch 0 channels [1 2; 3 4] and [5 6; 7 8], batch 1 [9 10; 11 12] and
 * [13 14; 15 16].
 *  groups 2 (depthwise), w = {2, -3}: output channel 0 = 2 * channel 0,
 *    output channel 1 = -3 * channel 1:
 *    batch 0: [2 4 6 8], [-15 -18 -21 -24]; batch 1: [18 20 22 24], [-39 -42 -45 -48]
 *  groups 1, one output channel, w = {2, -3}: 2*ch0 - 3*ch1:
 *    batch 0: [-13 -14 -15 -16]; batch 1: [-21 -22 -23 -24]. */
static void test_oracle_worked_channels(void **state) {
    (void)state;
    float x[16];
    for (int i = 0; i < 16; i++) x[i] = (float)(i + 1);
    const float w[2] = {2, -3};
    double ref[16];
    cp_shape s = cpt_shape(2, 2, 2, 2, 2, 1, 1);
    s.groups = 2;
    cp_oracle_run(&s, CP_XCORR, x, w, NULL, ref, NULL);
    const double dw[16] = {2, 4, 6, 8, -15, -18, -21, -24, 18, 20, 22, 24, -39, -42, -45, -48};
    for (int i = 0; i < 16; i++) assert_true(ref[i] == dw[i]);
    s = cpt_shape(2, 2, 2, 2, 1, 1, 1);
    cp_oracle_run(&s, CP_XCORR, x, w, NULL, ref, NULL);
    const double sum[8] = {-13, -14, -15, -16, -21, -22, -23, -24};
    for (int i = 0; i < 8; i++) assert_true(ref[i] == sum[i]);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_conv_is_xcorr_of_flipped),
        cmocka_unit_test(test_symmetric_kernel_same_in_both_modes),
        cmocka_unit_test(test_flip_twice_is_identity),
        cmocka_unit_test(test_flip_worked_2x3),
        cmocka_unit_test(test_oracle_worked),
        cmocka_unit_test(test_oracle_worked_channels),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
