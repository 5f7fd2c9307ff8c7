/* Every registered algorithm, in both modes, against the fp64 oracle on a
 * grid of awkward shapes.  The registry is walked generically, so an
 * algorithm added later is tested here without editing this file.
 *
 * Expected values come from cp_oracle_run (itself checked against SciPy in
 * test_scipy.c and a hand-worked example in test_facts.c); the acceptance rule
 * is the algorithm's own tolerance on the error relative to sum |x||w| + |b|
 * (convpick/oracle.h), with no non-finite output.  Outputs are pre-filled
 * with NaN so that an element an algorithm never writes is caught. */
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

enum { EXPLICIT = -1 };

typedef struct {
    const char *what;
    int64_t n, c, h, w, k, r, s, sth, stw, dh, dw, groups;
    int pad;                 /* a cp_pad_mode, or EXPLICIT */
    int64_t pt, pl, pb, pr;  /* explicit pads */
} grid_shape;

#define V CP_PAD_VALID
#define SA CP_PAD_SAME
#define F CP_PAD_FULL
static const grid_shape grid[] = {
    /* what                        n  c   h   w  k  r  s sh sw dh dw  g  pad  pt pl pb pr */
    {"1x1 image, 1x1 kernel",       1, 1,  1,  1, 1, 1, 1, 1, 1, 1, 1, 1, V, 0, 0, 0, 0},
    {"1x1 image, 3x3 same",         1, 2,  1,  1, 3, 3, 3, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
    {"1x1 image, 3x3 full",         1, 2,  1,  1, 2, 3, 3, 1, 1, 1, 1, 1, F, 0, 0, 0, 0},
    {"H < kernel, padded",          1, 2,  2,  5, 3, 3, 3, 1, 1, 1, 1, 1, EXPLICIT, 1, 0, 1, 0},
    {"W < kernel, same",            1, 2,  6,  2, 2, 3, 5, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
    {"odd 7x7, valid",              1, 3,  7,  7, 4, 3, 3, 1, 1, 1, 1, 1, V, 0, 0, 0, 0},
    {"odd 13x13, 3x3 same",         1, 4, 13, 13, 5, 3, 3, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
    {"odd 17x17, 5x5 same",         1, 2, 17, 17, 3, 5, 5, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
    {"C=1 K=1, full",               1, 1, 13, 17, 1, 3, 3, 1, 1, 1, 1, 1, F, 0, 0, 0, 0},
    {"C=1, K=8",                    1, 1,  7, 13, 8, 3, 3, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
    {"K=1, C=8",                    1, 8, 13,  7, 1, 3, 3, 1, 1, 1, 1, 1, V, 0, 0, 0, 0},
    {"depthwise groups=C=6",        1, 6, 13, 13, 6, 3, 3, 1, 1, 1, 1, 6, SA, 0, 0, 0, 0},
    {"depthwise x2 multiplier",     1, 4,  7,  7, 8, 3, 3, 2, 2, 1, 1, 4, SA, 0, 0, 0, 0},
    {"groups=2",                    1, 4,  7, 17, 6, 3, 3, 1, 1, 1, 1, 2, SA, 0, 0, 0, 0},
    {"dilation 2, same",            1, 3, 17, 13, 2, 3, 3, 1, 1, 2, 2, 1, SA, 0, 0, 0, 0},
    {"dilation 2 on H only, 2x2",   1, 2,  7,  7, 3, 2, 2, 1, 1, 2, 1, 1, V, 0, 0, 0, 0},
    {"stride 2, same",              1, 3, 13, 13, 4, 3, 3, 2, 2, 1, 1, 1, SA, 0, 0, 0, 0},
    {"stride 3, 5x5 valid",         1, 2, 17, 17, 3, 5, 5, 3, 3, 1, 1, 1, V, 0, 0, 0, 0},
    {"stride 2x3, asymmetric pads", 1, 3, 13, 17, 2, 3, 3, 2, 3, 1, 1, 1, EXPLICIT, 0, 1, 2, 1},
    {"asymmetric pads, 3x2",        1, 2,  7,  7, 3, 3, 2, 1, 1, 1, 1, 1, EXPLICIT, 2, 0, 1, 1},
    {"batch 3, same",               3, 3,  7,  7, 4, 3, 3, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
    {"1x1 stride 2 downsample",     2, 8, 13, 13, 4, 1, 1, 2, 2, 1, 1, 1, V, 0, 0, 0, 0},
    {"even 2x2 kernel, same",       1, 2,  7,  7, 2, 2, 2, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
    {"3x3 stride 1, wider",         2, 16, 17, 17, 8, 3, 3, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
    {"3x3 stride 1, valid",         1, 5, 13,  7, 3, 3, 3, 1, 1, 1, 1, 1, V, 0, 0, 0, 0},
    {"5x5 full",                    1, 2,  7, 13, 2, 5, 5, 1, 1, 1, 1, 1, F, 0, 0, 0, 0},
    {"batch 3, groups 2, stride 2", 3, 4, 13,  7, 4, 3, 3, 2, 2, 1, 1, 2, F, 0, 0, 0, 0},
    {"dilation 2, stride 2",        2, 3, 17, 17, 2, 3, 3, 2, 2, 2, 2, 1, SA, 0, 0, 0, 0},
    /* Depthwise (groups == c) on the same awkward geometry, for the depthwise kernel. */
    {"dw 1x1 image, 3x3 same",      1, 3,  1,  1, 3, 3, 3, 1, 1, 1, 1, 3, SA, 0, 0, 0, 0},
    {"dw H < kernel, padded",       1, 2,  2,  9, 2, 3, 3, 1, 1, 1, 1, 2, EXPLICIT, 1, 0, 1, 0},
    {"dw W < kernel, 3x5 same",     1, 2,  6,  2, 2, 3, 5, 1, 1, 1, 1, 2, SA, 0, 0, 0, 0},
    {"dw odd 37x19, valid",         1, 5, 37, 19, 5, 3, 3, 1, 1, 1, 1, 5, V, 0, 0, 0, 0},
    {"dw stride 2, odd 41x45 same", 1, 4, 41, 45, 4, 3, 3, 2, 2, 1, 1, 4, SA, 0, 0, 0, 0},
    {"dw stride 3, 5x5 asym pads",  1, 3, 23, 29, 3, 5, 5, 3, 3, 1, 1, 3, EXPLICIT, 2, 0, 1, 2},
    {"dw stride 2x3, dil 2x1",      1, 2, 17, 40, 2, 3, 3, 2, 3, 2, 1, 2, EXPLICIT, 0, 1, 2, 1},
    {"dw batch 3, x3 multiplier",   3, 2, 11, 35, 6, 3, 3, 1, 1, 1, 1, 2, F, 0, 0, 0, 0},
    {"single channel C=1 K=3",      1, 1,  9, 33, 3, 3, 3, 1, 1, 1, 1, 1, SA, 0, 0, 0, 0},
};
#undef V
#undef SA
#undef F

static cp_shape make_shape(const grid_shape *g) {
    cp_shape s = cpt_shape(g->n, g->c, g->h, g->w, g->k, g->r, g->s);
    s.stride_h = g->sth; s.stride_w = g->stw;
    s.dil_h = g->dh; s.dil_w = g->dw;
    s.groups = g->groups;
    if (g->pad == EXPLICIT) {
        s.pad_top = g->pt; s.pad_left = g->pl; s.pad_bottom = g->pb; s.pad_right = g->pr;
    } else {
        cp_shape_set_padding(&s, (cp_pad_mode)g->pad);
    }
    return s;
}

#define MAX_ALGOS 64

static void test_grid(void **state) {
    (void)state;
    const size_t na = cp_algo_count(), ng = sizeof grid / sizeof grid[0];
    assert_in_range(na, 1, MAX_ALGOS);
    size_t ran[MAX_ALGOS][2], refused[MAX_ALGOS][2], total = 0;
    memset(ran, 0, sizeof ran);
    memset(refused, 0, sizeof refused);
    const cp_flip flips[2] = {CP_XCORR, CP_CONV};
    for (size_t gi = 0; gi < ng; gi++) {
        const cp_shape s = make_shape(&grid[gi]);
        char msg[256];
        if (cp_shape_validate(&s, msg, sizeof msg) != CP_SHAPE_OK)
            fail_msg("grid shape \"%s\" is invalid: %s", grid[gi].what, msg);
        const size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s);
        float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w);
        float *bias = malloc((size_t)s.k * sizeof *bias);
        assert_true(x && w && bias);
        cph_fill_uniform(x, nx, 100 + gi);
        cph_fill_uniform(w, nw, 200 + gi);
        cph_fill_uniform(bias, (size_t)s.k, 300 + gi);
        int direct_ran[2] = {0, 0};
        for (int with_bias = 0; with_bias < 2; with_bias++)
            for (size_t ai = 0; ai < na; ai++) {
                const cp_algo *a = cp_algo_at(ai);
                for (int m = 0; m < 2; m++) {
                    char why[256] = "";
                    if (!a->supports(&s, flips[m], why, sizeof why)) {
                        /* A refusal always says why, and a plan refuses too. */
                        if (!why[0])
                            fail_msg("%s refuses \"%s\" mode %d without a reason", a->name,
                                     grid[gi].what, m);
                        cp_plan *p = NULL;
                        assert_int_equal(cp_plan_create(a, &s, flips[m], NULL, NULL, 1, w, &p,
                                                        msg, sizeof msg),
                                         CP_EUNSUPPORTED);
                        assert_null(p);
                        refused[ai][m]++;
                        continue;
                    }
                    cp_error e;
                    if (cpt_check_vs_oracle(a, &s, flips[m], x, w, with_bias ? bias : NULL,
                                            NULL, &e, msg, sizeof msg) != CP_OK)
                        fail_msg("%s on \"%s\": %s", a->name, grid[gi].what, msg);
                    if (e.nonfinite || e.rel_err > a->tolerance)
                        fail_msg("%s %s on \"%s\"%s: rel_err %.3g > tolerance %.3g, abs_err "
                                 "%.3g, nonfinite %zu, worst element %zu",
                                 a->name, flips[m] == CP_CONV ? "conv" : "xcorr", grid[gi].what,
                                 with_bias ? " with bias" : "", e.rel_err, a->tolerance,
                                 e.abs_err, e.nonfinite, e.worst);
                    ran[ai][m]++;
                    total++;
                    if (strcmp(a->name, "direct") == 0) direct_ran[m]++;
                }
            }
        if (direct_ran[0] != 2 || direct_ran[1] != 2)
            fail_msg("direct did not run \"%s\" in both modes", grid[gi].what);
        free(x); free(w); free(bias);
    }
    printf("grid: %zu shapes x bias/no bias, %zu (algorithm, shape, mode, bias) cases ran\n",
           ng, total);
    for (size_t ai = 0; ai < na; ai++) {
        const cp_algo *a = cp_algo_at(ai);
        printf("  %-20s xcorr ran %3zu refused %3zu | conv ran %3zu refused %3zu\n", a->name,
               ran[ai][0], refused[ai][0], ran[ai][1], refused[ai][1]);
        if (ran[ai][0] + ran[ai][1] == 0)
            fail_msg("%s ran no grid case in either mode", a->name);
    }
}

int main(void) {
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_grid),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
