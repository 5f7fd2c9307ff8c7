/* F(4x4,3x3) against F(2x2,3x3) on the ResNet-50 suite (He et al., "Deep
 * Residual Learning for Image Recognition", CVPR 2016; the suite's own
 * layers): on every 3x3 stride-1 layer both run on the same random tensors
 * (uniform in [-1, 1)) in both orientations and are measured against the
 * fp64 oracle.  Expected, from Barabasz, Anderson, Soodhalter & Gregg, "Error
 * Analysis and Improving the Accuracy of Winograd Convolution for Deep Neural
 * Networks", ACM TOMS 2020: the larger tile has the larger error (its
 * transforms have larger entries and more terms), and each stays within its
 * own tolerance. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

#include <cmocka.h>

#include "convpick/algo.h"
#include "convpick/oracle.h"
#include "harness/measure/data.h"
#include "harness/select/suites.h"
#include "tests/support/conv.h"

static void test_resnet50_error_order(void **state) {
    (void)state;
    const cp_algo *w2 = cp_algo_find("winograd_2x2_3x3"), *w4 = cp_algo_find("winograd_4x4_3x3");
    assert_non_null(w2);
    assert_non_null(w4);
    cph_layer_list layers = {0};
    char msg[256];
    assert_int_equal(cph_suite_load("resnet50", &layers, msg, sizeof msg), CP_OK);
    size_t compared = 0;
    for (size_t i = 0; i < layers.n; i++) {
        const cp_shape *s = &layers.v[i].shape;
        if (!w2->supports(s, CP_XCORR, NULL, 0) || !w4->supports(s, CP_XCORR, NULL, 0))
            continue;
        const size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
        float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
        assert_true(x && w);
        cph_fill_uniform(x, nx, 7 + i);
        cph_fill_uniform(w, nw, 17 + i);
        for (int m = 0; m < 2; m++) {
            const cp_flip flip = m ? CP_CONV : CP_XCORR;
            cp_error e2, e4;
            assert_int_equal(cpt_check_vs_oracle(w2, s, flip, x, w, NULL, NULL, &e2, msg,
                                                 sizeof msg), CP_OK);
            assert_int_equal(cpt_check_vs_oracle(w4, s, flip, x, w, NULL, NULL, &e4, msg,
                                                 sizeof msg), CP_OK);
            printf("%-16s %s  F(2x2,3x3) rel_err %.3g  F(4x4,3x3) rel_err %.3g (%.1fx)\n",
                   layers.v[i].name, m ? "conv " : "xcorr", e2.rel_err, e4.rel_err,
                   e4.rel_err / e2.rel_err);
            if (!(e4.rel_err > e2.rel_err))
                fail_msg("%s: F(4x4,3x3) error %.3g is not larger than F(2x2,3x3)'s %.3g",
                         layers.v[i].name, e4.rel_err, e2.rel_err);
            if (e4.nonfinite || e4.rel_err > w4->tolerance)
                fail_msg("%s: F(4x4,3x3) error %.3g above its tolerance %.3g", layers.v[i].name,
                         e4.rel_err, w4->tolerance);
            if (e2.nonfinite || e2.rel_err > w2->tolerance)
                fail_msg("%s: F(2x2,3x3) error %.3g above its tolerance %.3g", layers.v[i].name,
                         e2.rel_err, w2->tolerance);
            compared++;
        }
        free(x);
        free(w);
    }
    cph_layers_free(&layers);
    assert_true(compared >= 8); /* four 3x3 stride-1 shapes, two orientations */
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_resnet50_error_order),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
