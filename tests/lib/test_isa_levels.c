/* Each instruction-set level forced in turn on the same layers: blocked's tile
 * kernel (tile_isa) and Winograd's transforms and GEMM tile (kernels) at the
 * AVX2 and AVX-512 levels against the portable level and the fp64 oracle.
 * A level the CPU (or OS) lacks is skipped (cpt_skip; the suite exits 77 only
 * if every level skipped), never passed.  Outputs of two levels may differ by
 * rounding only (FMA against separate multiply and add, and a different
 * blocking of the sums): each is within the algorithm's tolerance of the
 * oracle, so two levels are within twice that of each other (common
 * practice, no source). */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>

#include <cmocka.h>

#include "tests/support/suite.h"

#include "algos/kernels/blocked_tile.h"
#include "convpick/algo.h"
#include "convpick/oracle.h"

/* Runs algo with its defaults and param = level on s; y gets the output. */
static void run_at(const cp_algo *a, const char *param, int64_t level, const cp_shape *s,
                   cp_flip flip, const float *x, const float *w, const float *b, float *y,
                   size_t ny) {
    cp_params p;
    cp_algo_defaults(a, s, NULL, &p);
    const int pi = cp_algo_param_index(a, param);
    assert_true(pi >= 0);
    p.v[pi] = level;
    char msg[256] = "";
    cp_plan *plan = NULL;
    if (cp_plan_create(a, s, flip, &p, NULL, 1, w, &plan, msg, sizeof msg) != CP_OK)
        fail_msg("%s: %s", a->name, msg);
    for (size_t i = 0; i < ny; i++) y[i] = NAN;
    assert_int_equal(cp_plan_run(plan, x, b, y, NULL), CP_OK);
    cp_plan_destroy(plan);
}

static float frand(uint32_t *st) { /* LCG, uniform in [-1, 1) */
    *st = *st * 1664525u + 1013904223u;
    return (float)(*st >> 8) / 8388608.0f - 1.0f;
}

/* The level against the portable one and the oracle on shape s, both modes. */
static void compare_level(const char *algo, const char *param, int64_t level, cp_shape s) {
    const cp_algo *a = cp_algo_find(algo);
    assert_non_null(a);
    /* The level really runs (not resolved down): the CPU has it. */
    assert_int_equal(cpa_blocked_tile_select(level).isa, level);
    const size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s);
    const size_t ny = cp_shape_output_elems(&s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
    float *b = malloc((size_t)s.k * sizeof *b);
    float *y0 = malloc(ny * sizeof *y0), *y1 = malloc(ny * sizeof *y1);
    double *ref = malloc(ny * sizeof *ref), *mag = malloc(ny * sizeof *mag);
    assert_true(x && w && b && y0 && y1 && ref && mag);
    uint32_t st = 2024u;
    for (size_t i = 0; i < nx; i++) x[i] = frand(&st);
    for (size_t i = 0; i < nw; i++) w[i] = frand(&st);
    for (int64_t i = 0; i < s.k; i++) b[i] = frand(&st);
    for (int m = 0; m < 2; m++) {
        const cp_flip flip = m ? CP_CONV : CP_XCORR;
        cp_oracle_run(&s, flip, x, w, b, ref, mag);
        run_at(a, param, CPA_ISA_PORTABLE, &s, flip, x, w, b, y0, ny);
        run_at(a, param, level, &s, flip, x, w, b, y1, ny);
        const cp_error e = cp_error_measure(y1, ref, mag, ny);
        if (e.nonfinite || !(e.rel_err <= a->tolerance))
            fail_msg("%s %s: rel_err %.3g against the oracle (tolerance %.3g)", algo,
                     cpa_isa_name((int)level), e.rel_err, a->tolerance);
        for (size_t i = 0; i < ny; i++)
            if (!(fabs((double)y1[i] - (double)y0[i]) <= 2.0 * a->tolerance * mag[i]))
                fail_msg("%s %s vs portable, output %zu: %.9g vs %.9g (mag %.3g)", algo,
                         cpa_isa_name((int)level), i, (double)y1[i], (double)y0[i], mag[i]);
    }
    free(x); free(w); free(b); free(y0); free(y1); free(ref); free(mag);
}

/* 3x3 pad 1 on a 7x7 plane (the edge-tile case: run segments across padded
 * rows at 16 lanes), odd channel counts; a 1x1 layer on 14x14. */
static cp_shape shape_3x3(void) {
    cp_shape s = cp_shape_init();
    s.n = 1; s.c = 37; s.k = 19; s.h = 7; s.w = 7; s.r = 3; s.s = 3;
    s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = 1;
    return s;
}

static cp_shape shape_1x1(void) {
    cp_shape s = cp_shape_init();
    s.n = 1; s.c = 29; s.k = 13; s.h = 14; s.w = 14; s.r = 1; s.s = 1;
    return s;
}

static void level_test(int64_t level) {
    if (cpa_isa_best() < level) cpt_skip();
    compare_level("blocked", "tile_isa", level, shape_3x3());
    compare_level("blocked", "tile_isa", level, shape_1x1());
    compare_level("winograd_2x2_3x3", "kernels", level, shape_3x3());
}

static void test_avx2_level(void **state) {
    (void)state;
    level_test(CPA_ISA_AVX2);
}

static void test_avx512_level(void **state) {
    (void)state;
    level_test(CPA_ISA_AVX512);
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_avx2_level),
        cmocka_unit_test(test_avx512_level),
    };
    return cpt_suite_status(cmocka_run_group_tests(tests, NULL, NULL),
                            sizeof tests / sizeof tests[0]);
}
