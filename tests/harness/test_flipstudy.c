/* The variants of the cache study (harness/cache/cache_study.h) compute what they
 * claim: true convolution by flipped indexing equals true convolution with
 * pre-flipped weights, the pre-flipped weights are the originals flipped
 * along both spatial axes, both loop orders of direct agree, and the traced
 * copies compute the same outputs as the plain algorithms.
 *
 * Outside references: examples worked by hand (shown beside each), and the
 * fp64 oracle's definition of true convolution (convpick/shape.h), which
 * test_facts and test_scipy tie to SciPy. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "harness/cache/cache_study.h"
#include "harness/cache/cache_traced.h"
#include "convpick/convpick.h"
#include "harness/measure/data.h"
#include "tests/support/conv.h"

/* The params of variant v for shape s: defaults with order / tile_isa set. */
static cp_params variant_params(const cp_algo *a, const cph_variant *v, const cp_shape *s) {
    cp_params p;
    const cp_cache_sizes c = cp_cache_sizes_fallback();
    cp_algo_defaults(a, s, &c, &p);
    const int i = cp_algo_param_index(a, v->param);
    assert_true(i >= 0);
    p.v[i] = v->param_value;
    return p;
}

static void run_with(const cp_algo *a, const cph_variant *v, const cp_shape *s, const float *x,
                     const float *w, float *y) {
    cp_params p = variant_params(cp_algo_find(v->algo), v, s);
    cp_plan *plan = NULL;
    char msg[256];
    if (cp_plan_create(a, s, v->flip, &p, NULL, 1, w, &plan, msg, sizeof msg) != CP_OK)
        fail_msg("%s: %s", v->id, msg);
    const size_t ny = cp_shape_output_elems(s);
    for (size_t i = 0; i < ny; i++) y[i] = NAN;
    assert_int_equal(cp_plan_run(plan, x, NULL, y, NULL), CP_OK);
    cp_plan_destroy(plan);
}

/* Worked by hand: x = [1 2 3; 4 5 6; 7 8 9], w = [1 2; 3 4], valid.
 *   cross-correlation y[p][q] = sum x[p+r][q+s] w[r][s]:
 *     y00 = 1*1 + 2*2 + 4*3 + 5*4 = 37, y01 = 2 + 6 + 15 + 24 = 47,
 *     y10 = 4 + 10 + 21 + 32 = 67,     y11 = 5 + 12 + 24 + 36 = 77.
 *   true convolution, w read flipped (w[1-r][1-s] = [4 3; 2 1]):
 *     y00 = 1*4 + 2*3 + 4*2 + 5*1 = 23, y01 = 8 + 9 + 10 + 6 = 33,
 *     y10 = 16 + 15 + 14 + 8 = 53,     y11 = 20 + 18 + 16 + 9 = 63.
 * Small integers: every variant must give them exactly. */
static void test_worked_example_every_variant(void **st) {
    (void)st;
    const cp_shape s = cpt_shape(1, 1, 3, 3, 1, 2, 2);
    const float x[9] = {1, 2, 3, 4, 5, 6, 7, 8, 9}, w[4] = {1, 2, 3, 4};
    const float want_x[4] = {37, 47, 67, 77}, want_c[4] = {23, 33, 53, 63};
    for (size_t i = 0; i < cph_variant_count(); i++) {
        const cph_variant *v = cph_variant_at(i);
        const float *want = v->flip == CP_XCORR ? want_x : want_c;
        float y[4];
        run_with(cp_algo_find(v->algo), v, &s, x, w, y);
        for (int j = 0; j < 4; j++)
            if (y[j] != want[j]) fail_msg("%s: y[%d] = %g, want %g", v->id, j, y[j], want[j]);
        if (v->traced) {
            run_with(v->traced, v, &s, x, w, y);
            for (int j = 0; j < 4; j++)
                if (y[j] != want[j])
                    fail_msg("%s traced: y[%d] = %g, want %g", v->id, j, y[j], want[j]);
        }
    }
}

/* Pre-flipped weights.  Worked by hand for K = 1, C = 2, R = 2, S = 3:
 *   channel 0 [1 2 3; 4 5 6] flipped along both axes is [6 5 4; 3 2 1],
 *   channel 1 [7 8 9; 10 11 12] is [12 11 10; 9 8 7].
 * direct's prepare() for CP_CONV must write exactly that; blocked packs, so
 * its CP_CONV packing must equal its CP_XCORR packing of the hand-flipped
 * weights. */
static void test_preflipped_weights(void **st) {
    (void)st;
    const cp_shape s = cpt_shape(1, 2, 4, 5, 1, 2, 3);
    const float w[12] = {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12};
    const float flipped[12] = {6, 5, 4, 3, 2, 1, 12, 11, 10, 9, 8, 7};
    const cp_algo *d = cp_algo_find("direct");
    cp_params p;
    cp_algo_defaults(d, &s, NULL, &p);
    assert_int_equal(d->prepared_size(&s, CP_CONV, &p), sizeof w);
    float out[12];
    assert_int_equal(d->prepare(&s, CP_CONV, &p, w, out), CP_OK);
    assert_memory_equal(out, flipped, sizeof out);

    const cp_algo *b = cp_algo_find("blocked");
    const cp_cache_sizes c = cp_cache_sizes_fallback();
    cp_algo_defaults(b, &s, &c, &p);
    const size_t nb = b->prepared_size(&s, CP_CONV, &p);
    assert_int_equal(nb, b->prepared_size(&s, CP_XCORR, &p));
    float *pc = malloc(nb), *px = malloc(nb);
    assert_non_null(pc);
    assert_non_null(px);
    assert_int_equal(b->prepare(&s, CP_CONV, &p, w, pc), CP_OK);
    assert_int_equal(b->prepare(&s, CP_XCORR, &p, flipped, px), CP_OK);
    assert_memory_equal(pc, px, nb);
    free(pc);
    free(px);
}

/* Random layers (3x3 same, 7x7 stride 2 pad 3 as in the ResNet-50 stem,
 * 2x5 with stride 2x1 and asymmetric pads): flipidx equals preflip within
 * the algorithm's tolerance relative to sum|x||w| (the oracle's measure),
 * both pass the oracle, direct's orders 0 and 1 agree bit for bit (same
 * summation order, see algos/direct_loops.h), and each traced copy gives
 * bit-identical outputs to its plain algorithm (same source). */
static void test_flipped_equals_preflipped(void **st) {
    (void)st;
    cp_shape shapes[3];
    shapes[0] = cpt_shape(1, 5, 11, 9, 7, 3, 3);
    cp_shape_set_padding(&shapes[0], CP_PAD_SAME);
    shapes[1] = cpt_shape(1, 3, 21, 19, 8, 7, 7);
    shapes[1].stride_h = shapes[1].stride_w = 2;
    shapes[1].pad_top = shapes[1].pad_left = shapes[1].pad_bottom = shapes[1].pad_right = 3;
    shapes[2] = cpt_shape(2, 4, 9, 12, 5, 2, 5);
    shapes[2].stride_h = 2;
    shapes[2].pad_top = 1;
    shapes[2].pad_right = 2;
    for (int si = 0; si < 3; si++) {
        const cp_shape *s = &shapes[si];
        const size_t nx = cp_shape_input_elems(s), nw = cp_shape_weight_elems(s);
        const size_t ny = cp_shape_output_elems(s);
        float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
        float *y = malloc(ny * sizeof *y), *yt = malloc(ny * sizeof *y);
        float *ypre = malloc(ny * sizeof *y), *yo0[2] = {malloc(ny * sizeof *y), malloc(ny * sizeof *y)};
        double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
        assert_true(x && w && y && yt && ypre && yo0[0] && yo0[1] && ref && mag);
        cph_fill_uniform(x, nx, 11 + (uint64_t)si);
        cph_fill_uniform(w, nw, 21 + (uint64_t)si);
        cp_oracle_run(s, CP_CONV, x, w, NULL, ref, mag);
        for (size_t i = 0; i < cph_variant_count(); i++) {
            const cph_variant *v = cph_variant_at(i);
            if (v->flip != CP_CONV) continue;
            const cp_algo *a = cp_algo_find(v->algo);
            run_with(a, v, s, x, w, y);
            const cp_error e = cp_error_measure(y, ref, mag, ny);
            if (e.nonfinite || e.rel_err > a->tolerance)
                fail_msg("shape %d %s: rel_err %.3e > %.1e", si, v->id, e.rel_err, a->tolerance);
            if (v->kind == CPH_FLIP_KIND_PREFLIP) {
                memcpy(ypre, y, ny * sizeof *y);
            } else {
                double worst = 0.0;
                for (size_t j = 0; j < ny; j++) {
                    const double d = fabs((double)y[j] - (double)ypre[j]) / mag[j];
                    if (d > worst) worst = d;
                }
                if (worst > a->tolerance)
                    fail_msg("shape %d %s: differs from preflip by %.3e", si, v->id, worst);
            }
            if (strncmp(v->family, "direct", 6) == 0) {
                const int fl = v->kind == CPH_FLIP_KIND_FLIPIDX;
                if (v->param_value == 0)
                    memcpy(yo0[fl], y, ny * sizeof *y);
                else
                    assert_memory_equal(y, yo0[fl], ny * sizeof *y);
            }
            if (v->traced) {
                run_with(v->traced, v, s, x, w, yt);
                assert_memory_equal(yt, y, ny * sizeof *y);
            }
        }
        free(x); free(w); free(y); free(yt); free(ypre); free(yo0[0]); free(yo0[1]);
        free(ref); free(mag);
    }
}

/* The variant table names algorithms that exist, and every family has its
 * three kinds, preflip listed before flipidx (the study compares them). */
static void test_variant_table(void **st) {
    (void)st;
    for (size_t i = 0; i < cph_variant_count(); i++) {
        const cph_variant *v = cph_variant_at(i);
        const cp_algo *a = cp_algo_find(v->algo);
        assert_non_null(a);
        assert_true(cp_algo_param_index(a, v->param) >= 0);
        assert_ptr_equal(cph_variant_find(v->id), v);
        if (v->kind == CPH_FLIP_KIND_FLIPIDX) {
            assert_true(i > 0);
            const cph_variant *pre = cph_variant_at(i - 1);
            assert_int_equal(pre->kind, CPH_FLIP_KIND_PREFLIP);
            assert_string_equal(pre->family, v->family);
        }
    }
    assert_null(cph_variant_find("direct.o2.xcorr"));
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_worked_example_every_variant),
        cmocka_unit_test(test_preflipped_weights),
        cmocka_unit_test(test_flipped_equals_preflipped),
        cmocka_unit_test(test_variant_table),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
